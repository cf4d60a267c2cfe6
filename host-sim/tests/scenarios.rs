//! Scenario format, built-ins, labels and streaming.

use humsim::builtin;
use humsim::labels::LabelKind;
use humsim::scenario::{RenderOptions, Scenario, ScenarioError};

fn render_all(s: &Scenario, seconds: Option<f64>, seed: Option<u64>) -> Vec<u16> {
    let mut r = s.render(&RenderOptions { seconds, seed }).unwrap();
    let mut all = Vec::new();
    let mut block = vec![0u16; 1024 * r.channels()];
    loop {
        let n = r.fill(&mut block);
        if n == 0 {
            break;
        }
        all.extend_from_slice(&block[..n * r.channels()]);
    }
    all
}

const GOOD: &str = r#"
name = "bench-test"
description = "a test scenario"
duration_s = 2.0
seed = 3

[mains]
preset = "120v-60hz"
harmonics = [{ order = 3, percent = 2.0 }]

[adc]
bits = 10
rate_hz = 2300.0

[frontend]
kind = "comparator"
threshold_v = 0.2
hysteresis_v = 0.02

[[channel]]
name = "left"

[[channel]]
name = "right"
skin = true

[[lamp]]
name = "desk"
coupling_pf = 0.001

[[conductor]]
name = "lead"
shape = "fixed"
coupling_pf = 0.01
channels = ["right"]

[[event]]
kind = "touch"
at_s = 0.5
channel = "right"
hold_s = 0.3

[[event]]
kind = "lamp-on"
at_s = 1.0
lamp = "desk"
"#;

#[test]
fn good_file_round_trips() {
    let s = Scenario::from_toml_str(GOOD, "good.toml").unwrap();
    assert_eq!(s.channel_names(), vec!["left", "right"]);
    assert_eq!(s.adc.bits, 10);
    assert_eq!(s.mains.frequency_hz, 60.0);
    let text = s.to_toml().unwrap();
    let back = Scenario::from_toml_str(&text, "round-trip").unwrap();
    assert_eq!(back.file, s.file);
    assert_eq!(render_all(&back, None, None), render_all(&s, None, None));
}

#[test]
fn every_builtin_round_trips_and_renders() {
    assert!(builtin::names().len() >= 10);
    for name in builtin::names() {
        let s = Scenario::builtin(name).unwrap();
        assert_eq!(s.name(), name, "file name and `name` key agree");
        assert!(!s.description().is_empty());
        let back = Scenario::from_toml_str(&s.to_toml().unwrap(), "rt").unwrap();
        assert_eq!(back.file, s.file, "{name}");
        let codes = render_all(&s, None, None);
        let frames = (s.duration_s() * s.adc.rate_hz).round() as usize;
        assert_eq!(codes.len(), frames * s.channels.len(), "{name}");
        let max = s.adc.max_code();
        assert!(codes.iter().all(|&c| c <= max), "{name}");
    }
}

/// Expects an error whose text names the file, the key and the line.
fn expect_err(src: &str, key: &str, line: usize, words: &str) -> ScenarioError {
    let e = Scenario::from_toml_str(src, "bad.toml").unwrap_err();
    let text = e.to_string();
    assert_eq!(e.key.as_deref(), Some(key), "{text}");
    assert_eq!(e.line, Some(line), "{text}");
    assert!(text.starts_with(&format!("bad.toml:{line}")), "{text}");
    assert!(text.contains(&format!("`{key}`")), "{text}");
    assert!(text.contains(words), "{text}");
    e
}

const HEAD: &str = "name = \"x\"\nduration_s = 1.0\n[[channel]]\nname = \"a\"\n";

#[test]
fn bad_files_name_key_and_line() {
    expect_err(
        "name = \"x\"\nduration_s = 1.0\n[adc]\nbitz = 12\n[[channel]]\nname = \"a\"\n",
        "adc.bitz",
        4,
        "expected one of `bits`",
    );
    expect_err(
        "name = \"x\"\nduration_s = 1.0\n[adc]\nrate_hz = \"fast\"\n[[channel]]\nname = \"a\"\n",
        "adc.rate_hz",
        4,
        "expected f64",
    );
    expect_err(
        "name = \"x\"\nduration_s = 1.0\n[adc]\nbits = 20\n[[channel]]\nname = \"a\"\n",
        "adc.bits",
        4,
        "8..=16",
    );
    expect_err(
        &format!("{HEAD}[[event]]\nkind = \"touch\"\nat_s = 0.1\nhold_s = 0.3\nchannel = \"b\"\n"),
        "event[0].channel",
        9,
        "unknown channel `b`",
    );
    expect_err(
        &format!("{HEAD}[[event]]\nkind = \"touch\"\nat_s = 0.1\nchannel = \"a\"\n"),
        "event[0].hold_s",
        5,
        "needs hold_s",
    );
    expect_err(
        &format!(
            "{HEAD}[[event]]\nkind = \"dip\"\nat_s = 0.1\nduration_s = 0.1\nresidual_percent = 95.0\n"
        ),
        "event[0].residual_percent",
        9,
        "below 90 %",
    );
    expect_err(
        &format!("{HEAD}[[event]]\nkind = \"esd\"\nat_s = 0.1\nkv = 4.0\n[[event]]\nkind = \"touch\"\nat_s = 0.5\nchannel = \"a\"\nhold_s = 0.2\nkv = 3.0\n"),
        "event[1].kv",
        14,
        "does not apply",
    );
    expect_err(
        &format!("{HEAD}[[event]]\nkind = \"tuch\"\nat_s = 0.1\n"),
        "event[0].kind",
        6,
        "unknown variant `tuch`",
    );
    expect_err(
        "name = \"x\"\nduration_s = 1.0\n[frontend]\nkind = \"comparator\"\nrf_ohm = 3.0\nthreshold_v = 0.1\n[[channel]]\nname = \"a\"\n",
        "frontend.rf_ohm",
        5,
        "does not apply",
    );
    expect_err(
        "name = \"x\"\nduration_s = 1.0\n[mains]\nfrequency_hz = 60.0\n[[channel]]\nname = \"a\"\n",
        "mains.frequency_hz",
        4,
        "inside range_hz",
    );
    expect_err(
        "duration_s = 1.0\n[[channel]]\nname = \"a\"\n",
        "name",
        1,
        "missing field `name`",
    );
    // A syntax error still gives file and line.
    let e = Scenario::from_toml_str("name = \"x\"\n[[channel]\n", "bad.toml").unwrap_err();
    assert_eq!(e.line, Some(2), "{e}");
    // No channels at all.
    let e = Scenario::from_toml_str("name = \"x\"\nduration_s = 1.0\n", "bad.toml").unwrap_err();
    assert!(e.to_string().contains("[[channel]]"), "{e}");
}

#[test]
fn keys_are_located_by_the_parsers_spans() {
    // Line and column of the key (1-based, in characters), however the
    // file writes it: indented, quoted either way, in an inline table, in
    // a later array-of-tables element.
    let at = |src: &str| {
        let e = Scenario::from_toml_str(src, "bad.toml").unwrap_err();
        (
            e.key.clone().unwrap_or_default(),
            e.line,
            e.column,
            e.to_string(),
        )
    };
    let cases: [(&str, &str, usize, usize); 7] = [
        (
            "name = \"x\"\nduration_s = 1.0\n[adc]\n  bits = 20\n[[channel]]\nname = \"a\"\n",
            "adc.bits",
            4,
            3,
        ),
        (
            "name = \"x\"\nduration_s = 1.0\n[adc]\n'bits' = 20\n[[channel]]\nname = \"a\"\n",
            "adc.bits",
            4,
            1,
        ),
        (
            "name = \"x\"\nduration_s = 1.0\n[adc]\n\"rate_hz\" = 5.0\n[[channel]]\nname = \"a\"\n",
            "adc.rate_hz",
            4,
            1,
        ),
        (
            "name = \"x\"\nduration_s = 1.0\nadc = { noise_v = 0.0, bits = 20 }\n[[channel]]\nname = \"a\"\n",
            "adc.bits",
            3,
            24,
        ),
        (
            "name = \"x\"\nduration_s = 1.0\n[[channel]]\nname = \"a\"\n[[channel]]\nname = \"time_s\"\n",
            "channel[1].name",
            6,
            1,
        ),
        // A parse error: the key from the error's span.
        (
            "name = \"x\"\nduration_s = 1.0\nadc = { bits = \"twelve\" }\n[[channel]]\nname = \"a\"\n",
            "adc.bits",
            3,
            16,
        ),
        // A missing key: its table's header.
        (
            "name = \"x\"\nduration_s = 1.0\n[[channel]]\nname = \"a\"\n[[channel]]\nstray_pf = 1.0\n",
            "channel[1].name",
            5,
            1,
        ),
    ];
    for (src, key, line, column) in cases {
        let (k, l, c, text) = at(src);
        assert_eq!(
            (k.as_str(), l, c),
            (key, Some(line), Some(column)),
            "{src:?}: {text}"
        );
        assert!(
            text.starts_with(&format!("bad.toml:{line}:{column}: key `{key}`")),
            "{text}"
        );
    }
    // Dotted keys carry no spans in the parser's output: the error still
    // names the key, without a line.
    let (k, l, _, text) = at(
        "name = \"x\"\nduration_s = 1.0\nmains.frequency_hz = 70.0\n[[channel]]\nname = \"a\"\n",
    );
    assert_eq!((k.as_str(), l), ("mains.frequency_hz", None), "{text}");
    // A syntax error: line and column, no key.
    let e = Scenario::from_toml_str("name = \"x\"\nduration_s = = 1.0\n", "bad.toml").unwrap_err();
    assert_eq!(
        (e.line, e.column, e.key.as_deref()),
        (Some(2), Some(14), None),
        "{e}"
    );
}

#[test]
fn unknown_builtin_and_missing_file_are_clear() {
    let e = Scenario::load("no-such-thing").unwrap_err();
    assert!(e.to_string().contains("no-such-thing"));
    assert!(
        e.to_string().contains("kitchen-panel"),
        "lists the built-ins: {e}"
    );
    let e = Scenario::from_file(std::path::Path::new("/nonexistent/x.toml")).unwrap_err();
    assert!(
        e.to_string()
            .starts_with("/nonexistent/x.toml: cannot read"),
        "{e}"
    );
}

#[test]
fn labels_are_sane() {
    for name in builtin::names() {
        let s = Scenario::builtin(name).unwrap();
        let d = s.duration_s();
        let labels = s.labels(d);
        let names = s.channel_names();
        for l in &labels {
            assert!(l.start_s < l.end_s, "{name}: {l:?}");
            assert!(l.start_s >= 0.0 && l.end_s <= d + 1e-9, "{name}: {l:?}");
            assert!(names.contains(&l.channel), "{name}: {l:?}");
        }
        let touches = s
            .file
            .events
            .iter()
            .filter(|e| e.kind == humsim::scenario::TimelineKind::Touch)
            .count();
        let n_touch = labels.iter().filter(|l| l.kind == LabelKind::Touch).count();
        assert_eq!(n_touch, touches, "{name}");
        let n_field = labels.iter().filter(|l| l.kind == LabelKind::Field).count();
        match name {
            "wall-scan" => assert_eq!(n_field, 2, "two passes: {labels:?}"),
            "mains-events" => assert_eq!(n_field, 1, "{labels:?}"),
            "field-lamp-step" => assert_eq!(n_field, 3, "three approaches: {labels:?}"),
            _ => assert_eq!(n_field, 0, "{name}"),
        }
    }
    // wall-scan: each pass is centred on the moment the probe is over the
    // cable (8 s; and 20-22 s, where it rests), symmetric by the geometry.
    let s = Scenario::builtin("wall-scan").unwrap();
    let f: Vec<_> = s
        .labels(30.0)
        .into_iter()
        .filter(|l| l.kind == LabelKind::Field)
        .collect();
    assert!(
        ((f[0].start_s + f[0].end_s) / 2.0 - 8.0).abs() < 0.01,
        "{f:?}"
    );
    assert!(
        ((f[1].start_s + f[1].end_s) / 2.0 - 21.0).abs() < 0.01,
        "{f:?}"
    );
}

#[test]
fn repeat_extends_the_timeline() {
    let s = Scenario::builtin("esd-bench").unwrap();
    let one = s.plan(60.0).discharges.len();
    let ten = s.plan(600.0).discharges.len();
    assert_eq!(one, 3 + 1 + 2 + 5);
    assert_eq!(ten, 10 * one);
    assert!(s.labels(600.0).is_empty(), "ambient only: no labels");
}

#[test]
fn deterministic_given_seed() {
    let s = Scenario::builtin("kitchen-panel").unwrap();
    let a = render_all(&s, Some(1.0), Some(7));
    let b = render_all(&s, Some(1.0), Some(7));
    let c = render_all(&s, Some(1.0), Some(8));
    assert_eq!(a, b);
    assert_ne!(a, c);
}

/// Standard deviations (codes) of the 100 ms windows of channel `c` that
/// end by `until_s`: those inside one of its touch labels, `margin_s` clear
/// of both ends (so no press or release ramp falls in them), and those
/// 50 ms clear of every label.
fn window_levels(
    s: &Scenario,
    codes: &[u16],
    c: usize,
    margin_s: f64,
    until_s: f64,
) -> (Vec<f64>, Vec<f64>) {
    let nch = s.channels.len();
    let rate = s.adc.rate_hz;
    let win = (rate * 0.1) as usize;
    let x: Vec<f64> = codes
        .iter()
        .skip(c)
        .step_by(nch)
        .map(|&v| f64::from(v))
        .collect();
    let labels = s.labels(s.duration_s());
    let name = &s.channels[c].name;
    let (mut inside, mut clear) = (Vec::new(), Vec::new());
    for w0 in (0..x.len().saturating_sub(win)).step_by(win) {
        let seg = &x[w0..w0 + win];
        let m = seg.iter().sum::<f64>() / win as f64;
        let sd = (seg.iter().map(|v| (v - m).powi(2)).sum::<f64>() / win as f64).sqrt();
        let (t0, t1) = (w0 as f64 / rate, (w0 + win) as f64 / rate);
        if t1 > until_s {
            break;
        }
        let mine = |l: &&humsim::labels::Label| &l.channel == name;
        if labels
            .iter()
            .filter(mine)
            .any(|l| l.start_s + margin_s <= t0 && l.end_s - margin_s >= t1)
        {
            inside.push(sd);
        } else if !labels
            .iter()
            .any(|l| l.start_s < t1 + 0.05 && l.end_s > t0 - 0.05)
        {
            clear.push(sd);
        }
    }
    (inside, clear)
}

fn median(mut v: Vec<f64>) -> f64 {
    v.sort_by(f64::total_cmp);
    v.get(v.len() / 2).copied().unwrap_or(f64::NAN)
}

/// Touch-to-ambient hum ratio at the sense node from the coupling formulas
/// of DESIGN.md §1 (standard circuit theory: a capacitive divider and
/// series capacitances), from the scenario file's values: the finger as a
/// parallel plate through the overlay, `C_f = ε0·εr·A/d` (ε0 from CODATA
/// 2022), in series with the body's source capacitance `C_bg + C_bm`, at
/// the body's hum `V·C_bm/(C_bm + C_bg)`, in parallel with the ambient
/// coupling at `V`. With a floating board every coupling is in series with
/// the board's capacitance to earth `C_ge`, and the board itself sits at
/// `V·C_gm/(C_gm + C_ge)`. Both currents come from the same mains
/// waveform (harmonics included), so the ratio of their sums is the ratio
/// of the hum's RMS values. Valid for a linear front end and a node whose
/// corner is far above the mains frequency (10 MΩ, 10 pF: the finger's
/// extra 1 pF changes the node's gain by 0.01 % at 50 Hz).
///
/// `extra_f` is ambient coupling at `V` beyond the file's own (farads).
fn coupling_ratio(s: &Scenario, c: usize, floating: bool, extra_f: f64) -> f64 {
    const EPS0: f64 = 8.854_187_818_8e-12; // F/m, CODATA 2022
    let f = &s.file;
    let ch = &f.channels[c];
    let c_f = EPS0 * ch.overlay_eps_r * f.body.finger_area_mm2 * 1e-6 / (ch.overlay_mm * 1e-3);
    let c_src = (f.body.ground_pf + f.body.mains_pf) * 1e-12;
    let c_b = c_f * c_src / (c_f + c_src);
    let h_body = f.body.mains_pf / (f.body.ground_pf + f.body.mains_pf);
    let c_a = ch.ambient_pf.unwrap_or(f.ambient.coupling_pf) * 1e-12 + extra_f;
    let (c_ge, h_g) = if floating {
        let g = &f.ground;
        (g.earth_pf * 1e-12, g.mains_pf / (g.mains_pf + g.earth_pf))
    } else {
        (f64::INFINITY, 0.0)
    };
    let series = |c: f64| {
        if c_ge.is_finite() {
            c * c_ge / (c + c_ge)
        } else {
            c
        }
    };
    1.0 + series(c_b) * (h_body - h_g) / (series(c_a) * (1.0 - h_g))
}

/// Time of a scenario's first event other than a touch (a lamp, a dip, the
/// ground changing, a conductor moving): up to there only touches change
/// the hum.
fn quiet_until(s: &Scenario) -> f64 {
    use humsim::scenario::TimelineKind;
    s.file
        .events
        .iter()
        .filter(|e| e.kind != TimelineKind::Touch)
        .map(|e| e.at_s)
        .fold(s.duration_s(), f64::min)
}

// Touch amplitudes follow from the physics. For the linear front ends the
// median hum of the 100 ms windows inside touches (full contact: 50 ms
// clear of the label's ends, past the press and release ramps of at most
// 40 ms; the one touch at 0.6 pressure, in kitchen-panel, has too few
// windows to move the median), over the median of the untouched windows,
// before anything but a touch changes the hum, must be the coupling
// formulas' ratio (`coupling_ratio`) within 1 %. What that 1 % covers: the
// ambient's slow drift (3 % SD, 120 s time constant), which moves the
// untouched median against the ambient under the touches (the largest
// deviation, −0.74 %, is on drift-50hz, the longest run: 120 s), ADC and
// node noise (0.7 code RMS against tens of codes: below 0.1 %) and the
// node's loading by the finger (0.01 %). Measured: −0.74 % (drift-50hz)
// to +0.52 % (battery-float).
#[test]
fn builtin_touches_raise_the_hum_as_the_coupling_formulas_say() {
    // (scenario, board floating until its first other event)
    let linear: &[(&str, bool)] = &[
        ("kitchen-panel", false),
        ("workshop-60hz", false),
        ("battery-float", true),
        ("thick-overlay", false),
        ("odd-rate", false),
        ("drift-50hz", false),
        ("mains-events", false),
    ];
    for &(name, floating) in linear {
        let s = Scenario::builtin(name).unwrap();
        assert_eq!(s.file.ground.floating, floating, "{name}");
        let codes = render_all(&s, None, None);
        let until = quiet_until(&s);
        let mut checked = 0;
        for c in 0..s.channels.len() {
            let (inside, clear) = window_levels(&s, &codes, c, 0.05, until);
            if inside.is_empty() {
                continue;
            }
            checked += 1;
            let ratio = median(inside) / median(clear);
            // A live conductor in the room adds to the ambient coupling at
            // its starting distance (mains-events: a 400 mm² plug at
            // 500 mm, 0.09 fF, 4.5 % of the pad's own ambient). That term
            // is the project's own far-field model (`coupling::
            // plate_facing`), not an outside formula: self-consistency.
            let extra: f64 = s
                .conductors
                .iter()
                .filter(|k| k.channels.contains(&c))
                .map(|k| k.geometry.capacitance(k.depth_m.hypot(k.start_m)))
                .sum();
            let want = coupling_ratio(&s, c, floating, extra);
            assert!(
                (ratio / want - 1.0).abs() < 0.01,
                "{name}/{c}: ratio {ratio:.3}, formula {want:.3}"
            );
        }
        assert!(checked > 0, "{name}: no touch before {until} s");
    }
}

// The non-linear front ends, whose window statistics the formulas above do
// not give, against the figures measured on their renders (seeded, so
// deterministic; the 2 % allows for the platform's libm, whose last-bit
// differences in sin, exp and ln reach the codes only through rounding).
// What the figures mean: clipping-amp's touch is a 0/3.3 V square (RMS
// about 2 048 codes, the half-swing) over a half-wave ambient (69 codes
// RMS); the comparator's RC level and the followers' dead band leave the
// ambient at the ADC's noise (0.3 code RMS is the floor taken), so their
// ratios are the touch's level in codes over that floor. Measured with
// this test's windows: 28.86, 1 546 and 4 318.
#[test]
fn builtin_touches_through_non_linear_front_ends_match_their_measured_ratios() {
    let expect: &[(&str, f64)] = &[
        ("clipping-amp", 28.86),
        ("comparator-pad", 1_546.0),
        ("follower-chain", 4_318.0),
    ];
    for &(name, want) in expect {
        let s = Scenario::builtin(name).unwrap();
        let codes = render_all(&s, None, None);
        let (inside, clear) = window_levels(&s, &codes, 0, 0.05, quiet_until(&s));
        let ratio = median(inside) / median(clear).max(0.3);
        assert!(
            (ratio / want - 1.0).abs() < 0.02,
            "{name}: ratio {ratio:.2}, measured before {want}"
        );
    }
}

// ESD (DESIGN.md §1: "at the ADC, a few saturated samples"): every discharge
// in esd-bench shows as 1–4 samples far (> 1000 codes) from mid-scale on the
// channels it reaches, and nothing else in the run comes near that.
#[test]
fn esd_shows_as_a_few_large_samples() {
    let s = Scenario::builtin("esd-bench").unwrap();
    let codes = render_all(&s, None, None);
    let plan = s.plan(s.duration_s());
    let rate = s.adc.rate_hz;
    let nch = s.channels.len();
    for c in 0..nch {
        let big: Vec<usize> = codes
            .iter()
            .skip(c)
            .step_by(nch)
            .enumerate()
            .filter(|(_, &v)| (f64::from(v) - 2048.0).abs() > 1000.0)
            .map(|(k, _)| k)
            .collect();
        let mut expected = 0;
        for (d, target) in &plan.discharges {
            if target.is_some_and(|t| t != c) {
                continue;
            }
            expected += 1;
            let k0 = (d.at_s * rate).floor() as usize;
            let n = big.iter().filter(|&&k| k >= k0 && k <= k0 + 10).count();
            assert!(
                (1..=4).contains(&n),
                "channel {c}, discharge at {}: {n} large samples",
                d.at_s
            );
        }
        let near_any = |k: usize| {
            plan.discharges.iter().any(|(d, _)| {
                let k0 = (d.at_s * rate).floor() as usize;
                k >= k0 && k <= k0 + 10
            })
        };
        assert!(
            big.iter().all(|&k| near_any(k)),
            "channel {c}: large samples away from ESD"
        );
        assert!(expected > 0);
    }
}

// A floating (battery) board sees a touch through its small capacitance to
// earth and from a ground that itself hums, so touches are weaker while it
// floats than while it sits on its earthed charger (DESIGN.md §1: "the board's
// own ground floating on battery power (everything scales)").
#[test]
fn floating_ground_weakens_touches() {
    let s = Scenario::builtin("battery-float").unwrap();
    let codes = render_all(&s, None, None);
    let rate = s.adc.rate_hz;
    let level = |c: usize, t0: f64| {
        let k0 = ((t0 + 0.1) * rate) as usize;
        let seg: Vec<f64> = codes
            .iter()
            .skip(c)
            .step_by(2)
            .skip(k0)
            .take(400)
            .map(|&v| f64::from(v))
            .collect();
        let m = seg.iter().sum::<f64>() / seg.len() as f64;
        (seg.iter().map(|v| (v - m).powi(2)).sum::<f64>() / seg.len() as f64).sqrt()
    };
    // "on" touched at 3 s (floating) and 13 s (earthed); "off" at 6 and 16 s.
    let (on_f, on_e) = (level(0, 3.0), level(0, 13.0));
    let (off_f, off_e) = (level(1, 6.0), level(1, 16.0));
    assert!(
        on_e > 1.5 * on_f,
        "on: floating {on_f:.1}, earthed {on_e:.1}"
    );
    assert!(
        off_e > 1.5 * off_f,
        "off: floating {off_f:.1}, earthed {off_e:.1}"
    );
}

#[test]
fn huge_repeated_timelines_are_refused() {
    expect_err(
        "name = \"x\"\nduration_s = 1.0\nrepeat_s = 0.5\n[[channel]]\nname = \"a\"\n",
        "repeat_s",
        3,
        "at least 1 second",
    );
    let s = Scenario::from_toml_str(
        "name = \"x\"\nduration_s = 1.0\nrepeat_s = 1.0\n[[channel]]\nname = \"a\"\n[[event]]\nkind = \"esd\"\nat_s = 0.5\nkv = 4.0\n",
        "x.toml",
    )
    .unwrap();
    let e = s
        .render(&RenderOptions {
            seconds: Some(9e6),
            seed: None,
        })
        .err()
        .unwrap();
    assert_eq!(e.key.as_deref(), Some("repeat_s"), "{e}");
    assert_eq!(e.line, Some(3), "{e}");
    assert!(s
        .render(&RenderOptions {
            seconds: Some(100.0),
            seed: None
        })
        .is_ok());
}
