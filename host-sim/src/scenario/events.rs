//! Each timeline event's keys, checked and turned into an [`Action`].

use super::error::{non_negative, positive, Ctx};
use super::*;

impl Scenario {
    #[allow(clippy::too_many_lines)]
    pub(super) fn event(
        ctx: &Ctx,
        i: usize,
        e: &EventSection,
        f: &ScenarioFile,
        channels: &[Channel],
        mains: &MainsConfig,
    ) -> Result<Action, ScenarioError> {
        let p = |k: &'static str| KeyPath::item("event", i, k);
        let given: [(&'static str, bool); 17] = [
            ("channel", e.channel.is_some()),
            ("hold_s", e.hold_s.is_some()),
            ("ramp_ms", e.ramp_ms.is_some()),
            ("release_ms", e.release_ms.is_some()),
            ("pressure", e.pressure.is_some()),
            ("area_mm2", e.area_mm2.is_some()),
            ("conductor", e.conductor.is_some()),
            ("to_mm", e.to_mm.is_some()),
            ("duration_s", e.duration_s.is_some()),
            ("lamp", e.lamp.is_some()),
            ("firing_deg", e.firing_deg.is_some()),
            ("kv", e.kv.is_some()),
            ("count", e.count.is_some()),
            ("interval_s", e.interval_s.is_some()),
            ("to_hz", e.to_hz.is_some()),
            ("residual_percent", e.residual_percent.is_some()),
            ("magnitude_percent", e.magnitude_percent.is_some()),
        ];
        let allowed: &[&str] = match e.kind {
            TimelineKind::Touch => &[
                "channel",
                "hold_s",
                "ramp_ms",
                "release_ms",
                "pressure",
                "area_mm2",
            ],
            TimelineKind::Approach | TimelineKind::Retreat => &["conductor", "to_mm", "duration_s"],
            TimelineKind::LampOn => &["lamp", "firing_deg"],
            TimelineKind::LampOff => &["lamp"],
            TimelineKind::Esd => &["kv", "count", "interval_s", "channel"],
            TimelineKind::FrequencyStep => &["to_hz"],
            TimelineKind::Dip => &["duration_s", "residual_percent"],
            TimelineKind::Swell => &["duration_s", "magnitude_percent"],
            TimelineKind::MainsOff
            | TimelineKind::MainsOn
            | TimelineKind::GroundFloat
            | TimelineKind::GroundEarth => &[],
        };
        let kind = event_kind_name(e.kind);
        for (k, g) in given {
            if g && !allowed.contains(&k) {
                return Err(ctx.err(
                    p(k),
                    format!(
                        "does not apply to a `{kind}` event; expected only kind, at_s{}{}",
                        if allowed.is_empty() { "" } else { ", " },
                        allowed.join(", ")
                    ),
                ));
            }
        }
        let at = non_negative(ctx, p("at_s"), e.at_s, "a time in seconds")?;
        let need = |v: Option<f64>, k: &'static str, what: &str| -> Result<f64, ScenarioError> {
            v.ok_or_else(|| ctx.err(p(k), format!("a `{kind}` event needs {k} ({what})")))
        };
        let channel = |name: &Option<String>| -> Result<Option<usize>, ScenarioError> {
            match name {
                None => Ok(None),
                Some(n) => channels
                    .iter()
                    .position(|c| &c.name == n)
                    .map(Some)
                    .ok_or_else(|| {
                        ctx.err(
                            p("channel"),
                            format!(
                                "unknown channel `{n}`; expected one of: {}",
                                channels
                                    .iter()
                                    .map(|c| c.name.as_str())
                                    .collect::<Vec<_>>()
                                    .join(", ")
                            ),
                        )
                    }),
            }
        };
        let named = |v: &Option<String>,
                     list: Vec<&str>,
                     k: &'static str|
         -> Result<usize, ScenarioError> {
            let n = v
                .as_ref()
                .ok_or_else(|| ctx.err(p(k), format!("a `{kind}` event needs {k} (a name)")))?;
            list.iter().position(|x| x == n).ok_or_else(|| {
                ctx.err(
                    p(k),
                    format!("unknown {k} `{n}`; expected one of: {}", list.join(", ")),
                )
            })
        };
        Ok(match e.kind {
            TimelineKind::Touch => {
                let ch = channel(&e.channel)?.ok_or_else(|| {
                    ctx.err(
                        p("channel"),
                        "a `touch` event needs channel (a channel name)",
                    )
                })?;
                let hold = positive(
                    ctx,
                    p("hold_s"),
                    need(e.hold_s, "hold_s", "contact duration in seconds")?,
                    "a duration in seconds",
                )?;
                let ramp =
                    non_negative(ctx, p("ramp_ms"), e.ramp_ms.unwrap_or(15.0), "a ramp in ms")?
                        * 1e-3;
                let release = non_negative(
                    ctx,
                    p("release_ms"),
                    e.release_ms.unwrap_or(ramp * 1e3),
                    "a ramp in ms",
                )? * 1e-3;
                if ramp + release > hold {
                    return Err(ctx.err(
                        p("hold_s"),
                        format!(
                            "expected hold_s >= ramp_ms + release_ms ({} s)",
                            ramp + release
                        ),
                    ));
                }
                let pressure = e.pressure.unwrap_or(1.0);
                if !(pressure.is_finite() && pressure > 0.0 && pressure <= 1.0) {
                    return Err(ctx.err(
                        p("pressure"),
                        "expected a fraction of full contact, 0 < pressure <= 1",
                    ));
                }
                let area = positive(
                    ctx,
                    p("area_mm2"),
                    e.area_mm2.unwrap_or(f.body.finger_area_mm2),
                    "an area in mm²",
                )?;
                Action::Touch {
                    channel: ch,
                    touch: Touch {
                        start_s: at,
                        hold_s: hold,
                        ramp_s: ramp,
                        release_s: release,
                        pressure,
                    },
                    area_m2: area * 1e-6,
                }
            }
            TimelineKind::Approach | TimelineKind::Retreat => {
                let c = named(
                    &e.conductor,
                    f.conductors.iter().map(|c| c.name.as_str()).collect(),
                    "conductor",
                )?;
                let to = need(e.to_mm, "to_mm", "target offset in mm")?;
                if !to.is_finite() {
                    return Err(ctx.err(p("to_mm"), "expected a finite offset in mm"));
                }
                let d = non_negative(
                    ctx,
                    p("duration_s"),
                    need(e.duration_s, "duration_s", "motion time in seconds")?,
                    "a duration in seconds",
                )?;
                Action::Move {
                    conductor: c,
                    at_s: at,
                    duration_s: d,
                    to_m: to * MM,
                }
            }
            TimelineKind::LampOn | TimelineKind::LampOff => {
                let l = named(
                    &e.lamp,
                    f.lamps.iter().map(|l| l.name.as_str()).collect(),
                    "lamp",
                )?;
                let on = if e.kind == TimelineKind::LampOn {
                    let deg = e
                        .firing_deg
                        .unwrap_or_else(|| f.lamps.get(l).map_or(0.0, |x| x.firing_deg));
                    if !(deg.is_finite() && (0.0..180.0).contains(&deg)) {
                        return Err(ctx.err(
                            p("firing_deg"),
                            "expected a firing angle in degrees, 0 <= angle < 180",
                        ));
                    }
                    Some(deg)
                } else {
                    None
                };
                Action::Lamp {
                    lamp: l,
                    at_s: at,
                    on,
                }
            }
            TimelineKind::Esd => {
                let kv = need(e.kv, "kv", "charging voltage in kV, e.g. 4")?;
                if !(kv.is_finite() && kv != 0.0 && kv.abs() <= 30.0) {
                    return Err(ctx.err(p("kv"), "expected a charging voltage in kV, 0 < |kv| <= 30 (contact levels are 2, 4, 6, 8)"));
                }
                let count = e.count.unwrap_or(1);
                if count == 0 || count > 10_000 {
                    return Err(ctx.err(p("count"), "expected 1..=10000 discharges"));
                }
                let interval = positive(
                    ctx,
                    p("interval_s"),
                    e.interval_s.unwrap_or(1.0),
                    "an interval in seconds",
                )?;
                Action::Esd {
                    at_s: at,
                    kv,
                    count,
                    interval_s: interval,
                    channel: channel(&e.channel)?,
                }
            }
            TimelineKind::FrequencyStep => {
                let to = need(e.to_hz, "to_hz", "new nominal frequency in Hz")?;
                if !(to >= mains.range_hz.0 && to <= mains.range_hz.1) {
                    return Err(ctx.err(
                        p("to_hz"),
                        format!(
                            "expected a frequency inside mains.range_hz [{}, {}]",
                            mains.range_hz.0, mains.range_hz.1
                        ),
                    ));
                }
                Action::Mains(MainsEvent::FrequencyStep {
                    at_s: at,
                    to_hz: to,
                })
            }
            TimelineKind::Dip => {
                let d = positive(
                    ctx,
                    p("duration_s"),
                    need(e.duration_s, "duration_s", "seconds")?,
                    "a duration in seconds",
                )?;
                let r = need(
                    e.residual_percent,
                    "residual_percent",
                    "residual voltage in percent of nominal",
                )?;
                if !(r.is_finite() && (0.0..90.0).contains(&r)) {
                    return Err(ctx.err(p("residual_percent"), "expected a residual voltage 0 <= percent < 90 (EN 50160: a dip is below 90 %)"));
                }
                Action::Mains(MainsEvent::Dip {
                    at_s: at,
                    duration_s: d,
                    residual: r / 100.0,
                })
            }
            TimelineKind::Swell => {
                let d = positive(
                    ctx,
                    p("duration_s"),
                    need(e.duration_s, "duration_s", "seconds")?,
                    "a duration in seconds",
                )?;
                let m = need(
                    e.magnitude_percent,
                    "magnitude_percent",
                    "voltage in percent of nominal",
                )?;
                if !(m.is_finite() && m > 110.0 && m <= 200.0) {
                    return Err(ctx.err(
                        p("magnitude_percent"),
                        "expected 110 < percent <= 200 (EN 50160: a swell is above 110 %)",
                    ));
                }
                Action::Mains(MainsEvent::Swell {
                    at_s: at,
                    duration_s: d,
                    magnitude: m / 100.0,
                })
            }
            TimelineKind::MainsOff => Action::Mains(MainsEvent::Off { at_s: at }),
            TimelineKind::MainsOn => Action::Mains(MainsEvent::On { at_s: at }),
            TimelineKind::GroundFloat => Action::Ground {
                at_s: at,
                floating: true,
            },
            TimelineKind::GroundEarth => Action::Ground {
                at_s: at,
                floating: false,
            },
        })
    }
}

fn event_kind_name(k: TimelineKind) -> &'static str {
    match k {
        TimelineKind::Touch => "touch",
        TimelineKind::Approach => "approach",
        TimelineKind::Retreat => "retreat",
        TimelineKind::LampOn => "lamp-on",
        TimelineKind::LampOff => "lamp-off",
        TimelineKind::Esd => "esd",
        TimelineKind::FrequencyStep => "frequency-step",
        TimelineKind::Dip => "dip",
        TimelineKind::Swell => "swell",
        TimelineKind::MainsOff => "mains-off",
        TimelineKind::MainsOn => "mains-on",
        TimelineKind::GroundFloat => "ground-float",
        TimelineKind::GroundEarth => "ground-earth",
    }
}
