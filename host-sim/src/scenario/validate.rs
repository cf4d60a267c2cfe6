//! From the parsed file to the validated model: every table but the
//! timeline's events, and the front end's keys.

use super::error::{non_negative, positive, Ctx};
use super::*;

/// Longest run a scenario may ask for, seconds (`duration_s`, `--seconds`).
pub const MAX_RUN_S: f64 = 1e7;

/// Why `name` cannot be a channel (a column of a CSV log that replay reads
/// back), or `None` when it can: not empty and not only spaces, no comma,
/// quote or control character, not `time_s` (replay's time column), not a
/// number (replay takes a header cell that is a number for a data row), and
/// not longer than 64 bytes.
pub fn bad_column_name(name: &str) -> Option<&'static str> {
    if name.trim().is_empty() {
        Some("expected a non-empty name")
    } else if name.contains([',', '"']) || name.chars().any(char::is_control) {
        Some("expected a name without commas, quotes or control characters")
    } else if name.trim() != name {
        Some("expected a name without spaces at either end (CSV readers trim them)")
    } else if name == "time_s" {
        Some("`time_s` is the name of replay's time column; choose another")
    } else if name.parse::<f64>().is_ok() {
        Some("a name that reads as a number would be taken for a data row; choose another")
    } else if name.len() > 64 {
        Some("expected a name of at most 64 bytes")
    } else {
        None
    }
}

impl Scenario {
    #[allow(clippy::too_many_lines)]
    pub(super) fn validate(
        f: ScenarioFile,
        src: &str,
        file: &str,
    ) -> Result<Scenario, ScenarioError> {
        let ctx = Ctx { src, file };
        positive(
            &ctx,
            KeyPath::top("duration_s"),
            f.duration_s,
            "a duration in seconds",
        )?;
        if f.duration_s > MAX_RUN_S {
            return Err(ctx.err(
                KeyPath::top("duration_s"),
                format!(
                    "expected at most {MAX_RUN_S:e} s (about 116 days), got {}",
                    crate::text::num(f.duration_s)
                ),
            ));
        }
        if let Some(p) = f.repeat_s {
            if !(p.is_finite() && p >= 1.0) {
                return Err(ctx.err(
                    KeyPath::top("repeat_s"),
                    format!("expected a period of at least 1 second, got {p}"),
                ));
            }
        }

        // mains
        let mut mains = match f.mains.preset {
            MainsPreset::V230Hz50 => MainsConfig::preset_230v_50hz(),
            MainsPreset::V120Hz60 => MainsConfig::preset_120v_60hz(),
        };
        let m = &f.mains;
        if let Some(v) = m.rms_v {
            mains.rms_v = v;
        }
        if let Some(v) = m.frequency_hz {
            mains.frequency_hz = v;
        }
        if let Some([lo, hi]) = m.range_hz {
            mains.range_hz = (lo, hi);
        }
        if let Some(v) = m.wander_hz {
            mains.wander_hz = v;
        }
        if let Some(v) = m.wander_tau_s {
            mains.wander_tau_s = v;
        }
        if let Some(v) = m.sweep_hz {
            mains.sweep_hz = v;
        }
        if let Some(v) = m.sweep_period_s {
            mains.sweep_period_s = v;
        }
        mains.harmonics = m
            .harmonics
            .iter()
            .map(|h| Harmonic {
                order: h.order,
                percent: h.percent,
                phase_deg: h.phase_deg,
            })
            .collect();
        if let Err(e) = mains.validate() {
            return Err(ctx.err(KeyPath::table("mains", e.field), e.message));
        }

        // adc
        let a = &f.adc;
        let adc = Adc {
            bits: a.bits,
            vref_v: a.vref_v,
            rate_hz: a.rate_hz,
            noise_v: a.noise_v,
            jitter_s: a.jitter_s,
        };
        if let Err(e) = adc.validate() {
            return Err(ctx.err(KeyPath::table("adc", e.field), e.message));
        }
        let nyquist = adc.rate_hz / 2.0;
        if mains.range_hz.1 >= nyquist {
            return Err(ctx.err(
                KeyPath::table("adc", "rate_hz"),
                format!(
                    "expected a sample rate above twice the highest mains frequency ({} Hz)",
                    mains.range_hz.1
                ),
            ));
        }

        let frontend = Self::frontend(&ctx, &f.frontend)?;

        // ambient, body, ground, labels
        let am = &f.ambient;
        non_negative(
            &ctx,
            KeyPath::table("ambient", "coupling_pf"),
            am.coupling_pf,
            "a capacitance in pF",
        )?;
        non_negative(
            &ctx,
            KeyPath::table("ambient", "noise_v"),
            am.noise_v,
            "a noise level in volts RMS",
        )?;
        if !(am.drift.is_finite() && (0.0..=1.0).contains(&am.drift)) {
            return Err(ctx.err(
                KeyPath::table("ambient", "drift"),
                "expected a relative deviation in 0..=1",
            ));
        }
        positive(
            &ctx,
            KeyPath::table("ambient", "drift_tau_s"),
            am.drift_tau_s,
            "a time in seconds",
        )?;
        if !(am.esd_charge_fraction.is_finite() && (0.0..=1.0).contains(&am.esd_charge_fraction)) {
            return Err(ctx.err(
                KeyPath::table("ambient", "esd_charge_fraction"),
                "expected a fraction in 0..=1",
            ));
        }
        let b = &f.body;
        positive(
            &ctx,
            KeyPath::table("body", "ground_pf"),
            b.ground_pf,
            "a capacitance in pF",
        )?;
        non_negative(
            &ctx,
            KeyPath::table("body", "mains_pf"),
            b.mains_pf,
            "a capacitance in pF",
        )?;
        positive(
            &ctx,
            KeyPath::table("body", "finger_area_mm2"),
            b.finger_area_mm2,
            "an area in mm²",
        )?;
        if !(b.spill.is_finite() && (0.0..=1.0).contains(&b.spill)) {
            return Err(ctx.err(
                KeyPath::table("body", "spill"),
                "expected a fraction in 0..=1",
            ));
        }
        positive(
            &ctx,
            KeyPath::table("ground", "earth_pf"),
            f.ground.earth_pf,
            "a capacitance in pF",
        )?;
        non_negative(
            &ctx,
            KeyPath::table("ground", "mains_pf"),
            f.ground.mains_pf,
            "a capacitance in pF",
        )?;
        positive(
            &ctx,
            KeyPath::table("labels", "field_ratio"),
            f.labels.field_ratio,
            "a ratio",
        )?;
        let body = Body {
            c_ground_f: b.ground_pf * PF,
            c_mains_f: b.mains_pf * PF,
        };

        // channels
        if f.channels.is_empty() {
            return Err(ScenarioError {
                file: file.to_string(),
                line: None,
                column: None,
                key: Some("channel".into()),
                message: "expected at least one [[channel]] table with a name".into(),
            });
        }
        let mut channels = Vec::new();
        for (i, c) in f.channels.iter().enumerate() {
            if let Some(why) = bad_column_name(&c.name) {
                return Err(ctx.err(
                    KeyPath::item("channel", i, "name"),
                    format!("`{}`: {why}", crate::text::show(&c.name)),
                ));
            }
            if channels.iter().any(|x: &Channel| x.name == c.name) {
                return Err(ctx.err(
                    KeyPath::item("channel", i, "name"),
                    format!("duplicate channel name `{}`", c.name),
                ));
            }
            positive(
                &ctx,
                KeyPath::item("channel", i, "input_mohm"),
                c.input_mohm,
                "a resistance in MΩ",
            )?;
            non_negative(
                &ctx,
                KeyPath::item("channel", i, "stray_pf"),
                c.stray_pf,
                "a capacitance in pF",
            )?;
            let amb = c.ambient_pf.unwrap_or(am.coupling_pf);
            non_negative(
                &ctx,
                KeyPath::item("channel", i, "ambient_pf"),
                amb,
                "a capacitance in pF",
            )?;
            positive(
                &ctx,
                KeyPath::item("channel", i, "overlay_mm"),
                c.overlay_mm,
                "a thickness in mm",
            )?;
            if !(c.overlay_eps_r.is_finite() && c.overlay_eps_r >= 1.0) {
                return Err(ctx.err(
                    KeyPath::item("channel", i, "overlay_eps_r"),
                    "expected a relative permittivity >= 1",
                ));
            }
            if c.stray_pf + amb <= 0.0 {
                return Err(ctx.err(
                    KeyPath::item("channel", i, "stray_pf"),
                    "expected stray_pf + ambient coupling > 0",
                ));
            }
            channels.push(Channel {
                name: c.name.clone(),
                node: SenseNode {
                    r_ohm: c.input_mohm * 1e6,
                    c_stray_f: c.stray_pf * PF,
                },
                ambient_f: amb * PF,
                contact: if c.skin {
                    Contact::Skin
                } else {
                    Contact::Overlay {
                        thickness_m: c.overlay_mm * MM,
                        eps_r: c.overlay_eps_r,
                    }
                },
            });
        }
        let channel_index = |name: &str| channels.iter().position(|c| c.name == name);

        // lamps
        let mut lamps = Vec::new();
        for (i, l) in f.lamps.iter().enumerate() {
            if f.lamps.iter().take(i).any(|x| x.name == l.name) {
                return Err(ctx.err(
                    KeyPath::item("lamp", i, "name"),
                    format!("duplicate lamp name `{}`", l.name),
                ));
            }
            non_negative(
                &ctx,
                KeyPath::item("lamp", i, "coupling_pf"),
                l.coupling_pf,
                "a capacitance in pF",
            )?;
            if !(l.firing_deg.is_finite() && (0.0..180.0).contains(&l.firing_deg)) {
                return Err(ctx.err(
                    KeyPath::item("lamp", i, "firing_deg"),
                    "expected a firing angle in degrees, 0 <= angle < 180",
                ));
            }
            lamps.push(Lamp {
                coupling_f: l.coupling_pf * PF,
                firing_deg: l.firing_deg,
            });
        }

        // conductors
        let mut conductors = Vec::new();
        for (i, c) in f.conductors.iter().enumerate() {
            if f.conductors.iter().take(i).any(|x| x.name == c.name) {
                return Err(ctx.err(
                    KeyPath::item("conductor", i, "name"),
                    format!("duplicate conductor name `{}`", c.name),
                ));
            }
            if !(c.eps_r.is_finite() && c.eps_r >= 1.0) {
                return Err(ctx.err(
                    KeyPath::item("conductor", i, "eps_r"),
                    "expected a relative permittivity >= 1",
                ));
            }
            non_negative(
                &ctx,
                KeyPath::item("conductor", i, "depth_mm"),
                c.depth_mm,
                "a depth in mm",
            )?;
            if !c.start_mm.is_finite() {
                return Err(ctx.err(
                    KeyPath::item("conductor", i, "start_mm"),
                    "expected a finite offset in mm",
                ));
            }
            let geometry = match c.shape {
                ConductorShape::Wire => Geometry::Wire {
                    eps_r: c.eps_r,
                    radius_m: positive(
                        &ctx,
                        KeyPath::item("conductor", i, "radius_mm"),
                        c.radius_mm,
                        "a radius in mm",
                    )? * MM,
                    length_m: positive(
                        &ctx,
                        KeyPath::item("conductor", i, "length_mm"),
                        c.length_mm,
                        "a length in mm",
                    )? * MM,
                    width_m: positive(
                        &ctx,
                        KeyPath::item("conductor", i, "width_mm"),
                        c.width_mm,
                        "a width in mm",
                    )? * MM,
                },
                ConductorShape::Plate => {
                    let area = c.area_mm2.ok_or_else(|| {
                        ctx.err(
                            KeyPath::item("conductor", i, "area_mm2"),
                            "a plate conductor needs area_mm2 (mm²)",
                        )
                    })?;
                    Geometry::Plate {
                        eps_r: c.eps_r,
                        area_m2: positive(
                            &ctx,
                            KeyPath::item("conductor", i, "area_mm2"),
                            area,
                            "an area in mm²",
                        )? * 1e-6,
                    }
                }
                ConductorShape::Fixed => {
                    let pf = c.coupling_pf.ok_or_else(|| {
                        ctx.err(
                            KeyPath::item("conductor", i, "coupling_pf"),
                            "a fixed conductor needs coupling_pf (pF)",
                        )
                    })?;
                    Geometry::Fixed(
                        non_negative(
                            &ctx,
                            KeyPath::item("conductor", i, "coupling_pf"),
                            pf,
                            "a capacitance in pF",
                        )? * PF,
                    )
                }
            };
            let mut idx = Vec::new();
            for name in &c.channels {
                match channel_index(name) {
                    Some(k) => idx.push(k),
                    None => {
                        return Err(ctx.err(
                            KeyPath::item("conductor", i, "channels"),
                            format!(
                                "unknown channel `{name}`; expected one of the [[channel]] names"
                            ),
                        ))
                    }
                }
            }
            if idx.is_empty() {
                idx = (0..channels.len()).collect();
            }
            conductors.push(Conductor {
                name: c.name.clone(),
                geometry,
                depth_m: c.depth_mm * MM,
                start_m: c.start_mm * MM,
                channels: idx,
            });
        }

        // events
        let mut actions = Vec::new();
        for (i, e) in f.events.iter().enumerate() {
            actions.push(Self::event(&ctx, i, e, &f, &channels, &mains)?);
        }
        if f.repeat_s.is_none() {
            for (i, e) in f.events.iter().enumerate() {
                if e.at_s >= f.duration_s {
                    return Err(ctx.err(
                        KeyPath::item("event", i, "at_s"),
                        format!(
                            "the event starts at {} s, after the scenario ends (duration_s = \
                             {} s): it would never happen",
                            crate::text::num(e.at_s),
                            crate::text::num(f.duration_s)
                        ),
                    ));
                }
            }
        }
        if let Some(period) = f.repeat_s {
            for (i, e) in f.events.iter().enumerate() {
                let end = e.at_s + e.duration_s.unwrap_or(0.0) + e.hold_s.unwrap_or(0.0);
                if end > period {
                    return Err(ctx.err(KeyPath::item("event", i, "at_s"), format!("event ends at {end} s, after repeat_s = {period} s; expected every event inside one period")));
                }
            }
        }
        // overlapping moves of one conductor make no physical sense
        for (i, a) in actions.iter().enumerate() {
            if let Action::Move {
                conductor,
                at_s,
                duration_s,
                ..
            } = *a
            {
                for b in actions.iter().skip(i + 1) {
                    if let Action::Move {
                        conductor: c2,
                        at_s: t2,
                        duration_s: d2,
                        ..
                    } = *b
                    {
                        if c2 == conductor && t2 < at_s + duration_s && at_s < t2 + d2 {
                            return Err(ctx.err(KeyPath::item("event", i, "at_s"), "two approach/retreat events of one conductor overlap in time; expected one motion at a time"));
                        }
                    }
                }
            }
        }

        Ok(Scenario {
            origin: file.to_string(),
            source: src.to_string(),
            mains,
            adc,
            frontend,
            body,
            channels,
            lamps,
            conductors,
            actions,
            drift: Drift {
                sigma: am.drift,
                tau_s: am.drift_tau_s,
            },
            file: f,
        })
    }

    pub(super) fn frontend(
        ctx: &Ctx,
        s: &FrontEndSection,
    ) -> Result<AnalogFrontEnd, ScenarioError> {
        let p = |k: &'static str| KeyPath::table("frontend", k);
        let given: [(&'static str, bool); 17] = [
            ("supply_v", s.supply_v.is_some()),
            ("rf_ohm", s.rf_ohm.is_some()),
            ("rg_ohm", s.rg_ohm.is_some()),
            ("bias_v", s.bias_v.is_some()),
            ("swing_low_v", s.swing_low_v.is_some()),
            ("swing_high_v", s.swing_high_v.is_some()),
            ("stages", s.stages.is_some()),
            ("beta", s.beta.is_some()),
            ("vbe_v", s.vbe_v.is_some()),
            ("vce_sat_v", s.vce_sat_v.is_some()),
            ("load_ohm", s.load_ohm.is_some()),
            ("threshold_v", s.threshold_v.is_some()),
            ("hysteresis_v", s.hysteresis_v.is_some()),
            ("rc_ohm", s.rc_ohm.is_some()),
            ("rc_nf", s.rc_nf.is_some()),
            ("pin_threshold_v", s.pin_threshold_v.is_some()),
            ("pin_hysteresis_v", s.pin_hysteresis_v.is_some()),
        ];
        let allowed: &[&str] = match s.kind {
            FrontEndKind::Amplifier => &[
                "supply_v",
                "rf_ohm",
                "rg_ohm",
                "bias_v",
                "swing_low_v",
                "swing_high_v",
            ],
            FrontEndKind::Follower => &[
                "supply_v",
                "stages",
                "beta",
                "vbe_v",
                "vce_sat_v",
                "load_ohm",
            ],
            FrontEndKind::Comparator => &[
                "supply_v",
                "threshold_v",
                "hysteresis_v",
                "rc_ohm",
                "rc_nf",
                "pin_threshold_v",
                "pin_hysteresis_v",
            ],
        };
        for (k, g) in given {
            if g && !allowed.contains(&k) {
                return Err(ctx.err(
                    p(k),
                    format!(
                        "does not apply to kind = \"{}\"; expected one of: {}",
                        kind_name(s.kind),
                        allowed.join(", ")
                    ),
                ));
            }
        }
        let supply = positive(
            ctx,
            p("supply_v"),
            s.supply_v.unwrap_or(3.3),
            "a supply in volts",
        )?;
        Ok(match s.kind {
            FrontEndKind::Amplifier => {
                let rf = non_negative(
                    ctx,
                    p("rf_ohm"),
                    s.rf_ohm.unwrap_or(200e3),
                    "a resistance in ohms",
                )?;
                let rg = positive(
                    ctx,
                    p("rg_ohm"),
                    s.rg_ohm.unwrap_or(10e3),
                    "a resistance in ohms",
                )?;
                let bias = non_negative(
                    ctx,
                    p("bias_v"),
                    s.bias_v.unwrap_or(supply / 2.0),
                    "a bias in volts",
                )?;
                let lo = non_negative(
                    ctx,
                    p("swing_low_v"),
                    s.swing_low_v.unwrap_or(0.0),
                    "a voltage",
                )?;
                let hi = s.swing_high_v.unwrap_or(supply);
                if !(hi.is_finite() && hi > lo && hi <= supply) {
                    return Err(ctx.err(
                        p("swing_high_v"),
                        format!("expected swing_low_v < swing_high_v <= supply_v ({supply} V)"),
                    ));
                }
                AnalogFrontEnd::Amplifier(Amplifier {
                    rf_ohm: rf,
                    rg_ohm: rg,
                    bias_v: bias,
                    swing_low_v: lo,
                    swing_high_v: hi,
                })
            }
            FrontEndKind::Follower => {
                let stages = s.stages.unwrap_or(2);
                if !(1..=4).contains(&stages) {
                    return Err(
                        ctx.err(p("stages"), format!("expected 1..=4 stages, got {stages}"))
                    );
                }
                AnalogFrontEnd::Follower(FollowerChain {
                    stages,
                    beta: positive(ctx, p("beta"), s.beta.unwrap_or(150.0), "a current gain")?,
                    vbe_v: non_negative(ctx, p("vbe_v"), s.vbe_v.unwrap_or(0.65), "a voltage")?,
                    supply_v: supply,
                    vce_sat_v: non_negative(
                        ctx,
                        p("vce_sat_v"),
                        s.vce_sat_v.unwrap_or(0.2),
                        "a voltage",
                    )?,
                    load_ohm: positive(
                        ctx,
                        p("load_ohm"),
                        s.load_ohm.unwrap_or(10e3),
                        "a resistance in ohms",
                    )?,
                })
            }
            FrontEndKind::Comparator => {
                let th = s.threshold_v.ok_or_else(|| {
                    ctx.err(p("threshold_v"), "a comparator needs threshold_v (volts)")
                })?;
                if !th.is_finite() {
                    return Err(ctx.err(p("threshold_v"), "expected a finite threshold in volts"));
                }
                let rc =
                    match (s.rc_ohm, s.rc_nf) {
                        (None, None) => None,
                        (Some(r), Some(c)) => Some((
                            positive(ctx, p("rc_ohm"), r, "a resistance in ohms")?,
                            positive(ctx, p("rc_nf"), c, "a capacitance in nF")? * 1e-9,
                        )),
                        (Some(_), None) => {
                            return Err(ctx
                                .err(p("rc_ohm"), "expected rc_nf too (the RC filter needs both)"))
                        }
                        (None, Some(_)) => {
                            return Err(ctx
                                .err(p("rc_nf"), "expected rc_ohm too (the RC filter needs both)"))
                        }
                    };
                AnalogFrontEnd::Comparator(Comparator {
                    threshold_v: th,
                    hysteresis_v: non_negative(
                        ctx,
                        p("hysteresis_v"),
                        s.hysteresis_v.unwrap_or(0.0),
                        "a width in volts",
                    )?,
                    supply_v: supply,
                    rc,
                    pin_threshold_v: {
                        let v = s.pin_threshold_v.unwrap_or(supply / 2.0);
                        if !(v.is_finite() && v > 0.0 && v < supply) {
                            return Err(ctx.err(
                                p("pin_threshold_v"),
                                format!("expected a logic threshold above 0 V and below supply_v ({supply} V)"),
                            ));
                        }
                        v
                    },
                    pin_hysteresis_v: non_negative(
                        ctx,
                        p("pin_hysteresis_v"),
                        s.pin_hysteresis_v.unwrap_or(0.0),
                        "a width in volts",
                    )?,
                })
            }
        })
    }
}

fn kind_name(k: FrontEndKind) -> &'static str {
    match k {
        FrontEndKind::Amplifier => "amplifier",
        FrontEndKind::Follower => "follower",
        FrontEndKind::Comparator => "comparator",
    }
}
