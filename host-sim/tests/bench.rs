//! `humsim::bench`: the reference detectors' stages against circuit and
//! filter formulas, their debounce counts, the tuner on a clean case, and
//! the `bench:` lines' form.
#![allow(
    clippy::unwrap_used,
    clippy::expect_used,
    clippy::indexing_slicing,
    clippy::panic
)]

use humsense::EventKind;
use humsim::bench::compare::CompareRow;
use humsim::bench::latency::{grid_scenario, LatencyRow};
use humsim::bench::reference::{
    ema_alpha, EmaDebounce, EmaDebounceConfig, EmaDebounceState, RcComparator, RcComparatorConfig,
    RcComparatorState, Rectifier, RefRun, Reference,
};
use humsim::bench::speed::SpeedRow;
use humsim::bench::tuner::{ema_space, rc_space, tune, Objective, TuneCase};
use humsim::scenario::Scenario;
use humsim::score::LatencyStats;

/// The RC stage alone: a coupling so slow that the mean stays at the first
/// sample, and an on threshold out of reach.
fn rc_only(rc_tau_s: f64, rectifier: Rectifier) -> RcComparatorConfig {
    RcComparatorConfig {
        coupling_tau_s: 1e9,
        rectifier,
        rc_tau_s,
        on_fraction: 10.0,
        hysteresis: 0.0,
    }
}

#[test]
fn ema_alpha_is_the_sampled_rc() {
    // shared/REFERENCES.md (computed): EMA α = 1 − e^(−T/τ); T = 1 ms,
    // τ = 10 ms → α = 0.0951626.
    assert!((ema_alpha(0.010, 1000.0) - 0.0951626).abs() < 5e-8);
    // τ = T: 1 − 1/e (standard).
    assert!((ema_alpha(0.001, 1000.0) - (1.0 - (-1.0f64).exp())).abs() < 1e-15);
    // No filtering at τ = 0 (the stage passes its input).
    assert_eq!(ema_alpha(0.0, 2000.0), 1.0);
}

#[test]
fn rc_stage_step_response_is_one_minus_exp() {
    // RC low-pass step response v(t) = V·(1 − e^(−t/τ)) (standard circuit
    // theory); sampled at T it is exactly 1 − (1 − α)^k after k samples.
    // T = 1 ms, τ = 10 ms: at k = 10 (t = τ) the level is 63.21 % of the
    // step.
    let d = RcComparator::new(&rc_only(0.010, Rectifier::Full), 1000.0, 12);
    let mut st = RcComparatorState::default();
    assert_eq!(d.push(&mut st, 2000), None); // sets the coupling's mean
    assert_eq!(st.level(), 0.0);
    let step = 500.0;
    for k in 1..=50 {
        assert_eq!(d.push(&mut st, 2500), None);
        let t = f64::from(k) * 0.001;
        let expect = step * (1.0 - (-t / 0.010).exp());
        assert!(
            (st.level() - expect).abs() < 1e-6,
            "k = {k}: {} against {expect}",
            st.level()
        );
    }
    let mut st = RcComparatorState::default();
    d.push(&mut st, 2000);
    for _ in 0..10 {
        d.push(&mut st, 2500);
    }
    assert!((st.level() / step - 0.632_120_6).abs() < 1e-6);
}

/// The low-passed level of a clean sine of `vp` codes (50 Hz sampled at
/// 20 kHz, 400 samples a cycle, codes rounded), averaged over the last 10
/// cycles of 20 s.
fn rectified_level(rectifier: Rectifier, vp: f64) -> f64 {
    let cfg = RcComparatorConfig {
        coupling_tau_s: 5.0,
        rc_tau_s: 0.5,
        ..rc_only(0.5, rectifier)
    };
    let rate = 20_000.0;
    let d = RcComparator::new(&cfg, rate, 12);
    let mut st = RcComparatorState::default();
    let n = (20.0 * rate) as usize;
    let tail = 10 * 400;
    let mut sum = 0.0;
    for i in 0..n {
        let t = i as f64 / rate;
        let x = 2048.0 + vp * (2.0 * std::f64::consts::PI * 50.0 * t).sin();
        d.push(&mut st, x.round() as i32);
        if i >= n - tail {
            sum += st.level();
        }
    }
    sum / tail as f64
}

#[test]
fn rc_stage_settles_at_the_rectified_mean() {
    // Full-wave rectified sine: mean 2Vp/π (standard tables, in
    // shared/REFERENCES.md); half-wave: Vp/π (Hayt, Kemmerly & Durbin,
    // Engineering Circuit Analysis, ch. 18). The tolerance (0.1 %) covers
    // the coupling high-pass's small loss and the rounding of the codes.
    let vp = 1000.0;
    let full = rectified_level(Rectifier::Full, vp);
    let expect = 2.0 * vp / std::f64::consts::PI;
    assert!(
        (full / expect - 1.0).abs() < 1e-3,
        "full wave {full} against {expect}"
    );
    let half = rectified_level(Rectifier::Half, vp);
    let expect = vp / std::f64::consts::PI;
    assert!(
        (half / expect - 1.0).abs() < 1e-3,
        "half wave {half} against {expect}"
    );
}

#[test]
fn comparator_hysteresis() {
    // An on threshold of 400 codes on a 12-bit converter and a hysteresis
    // of 0.5 (off below 200), the RC so fast that the level is the
    // rectified input (τ = 0: α = 1).
    let cfg = RcComparatorConfig {
        coupling_tau_s: 1e9,
        rectifier: Rectifier::Full,
        rc_tau_s: 0.0,
        on_fraction: 400.0 / 4096.0,
        hysteresis: 0.5,
    };
    let d = RcComparator::new(&cfg, 1000.0, 12);
    let mut st = RcComparatorState::default();
    let seq = [
        (2000, None),
        (2390, None),
        (2410, Some(true)),
        (2300, None), // 300: between the thresholds, stays on
        (2210, None),
        (2190, Some(false)),
        (2300, None),       // 300: below on, stays off
        (1590, Some(true)), // |−410|: full wave
    ];
    for (i, (x, want)) in seq.into_iter().enumerate() {
        assert_eq!(d.push(&mut st, x), want, "sample {i} ({x})");
    }
}

#[test]
fn debounce_counts_consecutive_samples() {
    // A consecutive-count debounce (common practice): on after 5 samples
    // above the threshold, off after 3 at or below; a sample on the other
    // side restarts the count. At 1 kHz, 5 ms and 3 ms are 5 and 3
    // samples; the EMA's τ = 0 makes its level |x − mean| itself, the mean
    // is held at the first sample by a very slow EMA.
    let cfg = EmaDebounceConfig {
        mean_tau_s: 1e9,
        ema_tau_s: 0.0,
        threshold_fraction: 100.0 / 4096.0,
        on_ms: 5.0,
        off_ms: 3.0,
    };
    let d = EmaDebounce::new(&cfg, 1000.0, 12);
    assert_eq!(d.counts(), (5, 3));
    // At 2 kHz the same times are 10 and 6 samples; below one sample, 1.
    assert_eq!(EmaDebounce::new(&cfg, 2000.0, 12).counts(), (10, 6));
    let short = EmaDebounceConfig {
        on_ms: 0.1,
        off_ms: 0.0,
        ..cfg
    };
    assert_eq!(EmaDebounce::new(&short, 1000.0, 12).counts(), (1, 1));

    let (base, high) = (2000, 2300);
    let mut x = vec![base];
    x.extend([high; 4]); // 4 above: no touch
    x.push(base);
    x.extend([high; 5]); // the 5th turns it on: index 10
    x.extend([base; 2]); // 2 below: still on
    x.push(high);
    x.extend([base; 3]); // the 3rd turns it off: index 16
    x.push(base);
    x.extend([high; 5]); // on again at index 22
    let mut st = EmaDebounceState::default();
    let events: Vec<(usize, bool)> = x
        .iter()
        .enumerate()
        .filter_map(|(i, &v)| d.push(&mut st, v).map(|on| (i, on)))
        .collect();
    assert_eq!(events, vec![(10, true), (16, false), (22, true)]);
    // At the threshold itself (exactly 100 codes) counts as at or below.
    let mut st = EmaDebounceState::default();
    d.push(&mut st, base);
    for _ in 0..10 {
        assert_eq!(d.push(&mut st, base + 100), None);
    }
}

#[test]
fn frames_and_columns_give_the_same_events() {
    // Two channels of a sine whose amplitude steps up and down, fed as
    // interleaved frames in uneven blocks and as whole columns: the same
    // events, with the frame path's indices continuing across blocks.
    let refs = [
        Reference::RcComparator(RcComparatorConfig {
            coupling_tau_s: 0.5,
            rectifier: Rectifier::Full,
            rc_tau_s: 0.01,
            on_fraction: 0.05,
            hysteresis: 0.3,
        }),
        Reference::EmaDebounce(EmaDebounceConfig {
            mean_tau_s: 0.5,
            ema_tau_s: 0.01,
            threshold_fraction: 0.05,
            on_ms: 5.0,
            off_ms: 20.0,
        }),
    ];
    let rate = 2000.0;
    let col = |phase: f64| -> Vec<i32> {
        (0..20_000)
            .map(|i| {
                let t = f64::from(i) / rate;
                let a = if (t + phase) % 2.0 > 1.2 { 600.0 } else { 30.0 };
                (2048.0 + a * (2.0 * std::f64::consts::PI * 50.0 * t).sin()).round() as i32
            })
            .collect()
    };
    let (a, b) = (col(0.0), col(0.7));
    let frames: Vec<i32> = a.iter().zip(&b).flat_map(|(&x, &y)| [x, y]).collect();
    for r in &refs {
        let mut by_col = RefRun::new(r, 2, rate, 12);
        by_col.push_channel(0, &a);
        by_col.push_channel(1, &b);
        let by_col = by_col.into_events();
        let mut by_frame = RefRun::new(r, 2, rate, 12);
        let mut at = 0;
        for (k, len) in [1usize, 777, 4096, 3, 9000].iter().cycle().enumerate() {
            if at >= frames.len() {
                break;
            }
            let end = (at + len * 2).min(frames.len());
            by_frame.push_frames(&frames[at..end]);
            at = end;
            assert!(k < 100);
        }
        let by_frame = by_frame.into_events();
        assert!(by_col.len() >= 8, "{}: {} events", r.name(), by_col.len());
        assert_eq!(by_col, by_frame, "{}", r.name());
        assert!(by_frame
            .iter()
            .all(|e| matches!(e.kind, EventKind::TouchOn | EventKind::TouchOff)));
    }
}

/// One pad, no drift, three firm touches through a 1 mm overlay.
const CLEAN: &str = r#"
name = "clean-touch"
duration_s = 8.0
seed = 5

[ambient]
drift = 0.0

[[channel]]
name = "pad"
overlay_mm = 1.0

[[event]]
kind = "touch"
at_s = 2.0
channel = "pad"
hold_s = 0.5

[[event]]
kind = "touch"
at_s = 4.0
channel = "pad"
hold_s = 0.5

[[event]]
kind = "touch"
at_s = 6.0
channel = "pad"
hold_s = 0.5
"#;

#[test]
fn tuner_finds_a_clean_touch() {
    // Tuned on one render, checked on a render with another seed: every
    // touch found once, no false event, for both references.
    let s = Scenario::from_toml_str(CLEAN, "clean").unwrap();
    let tuning = vec![TuneCase::render(&s, 8.0, 5).unwrap()];
    let check = TuneCase::render(&s, 8.0, 6).unwrap();
    for space in [rc_space(true), ema_space(true)] {
        let visited = std::sync::atomic::AtomicU64::new(0);
        let t = tune(&space, &tuning, 2, &|n| {
            visited.fetch_add(n, std::sync::atomic::Ordering::Relaxed);
        })
        .unwrap();
        let name = t.reference.name();
        assert_eq!(t.objective.errors, 0, "{name}: {}", t.bench_line());
        assert!(t.objective.latency_ms.is_finite());
        assert_eq!(
            visited.into_inner(),
            space.budget(2) as u64,
            "{name}: progress must add up to the budget"
        );
        let score = check.score(&t.reference).unwrap();
        assert_eq!(
            (score.labels(), score.detected(), score.false_events()),
            (3, 3, 0),
            "{name}: {}\n{}",
            t.bench_line(),
            score.table()
        );
    }
}

#[test]
fn objective_orders_errors_then_latency() {
    let o = |errors, latency_ms| Objective {
        errors,
        missed: errors,
        false_events: 0,
        latency_ms,
    };
    assert!(o(1, 500.0).better_than(&o(2, 10.0)));
    assert!(o(1, 40.0).better_than(&o(1, 50.0)));
    assert!(!o(1, 50.0).better_than(&o(1, 50.0)));
    assert!(o(0, 1000.0).better_than(&o(0, f64::INFINITY)));
}

/// `bench: ` then `key=value` pairs (after an optional bare word); the
/// keys in order.
fn keys(line: &str, word: Option<&str>) -> Vec<(String, String)> {
    let rest = line.strip_prefix("bench: ").expect(line);
    let mut parts = rest.split(' ');
    if let Some(w) = word {
        assert_eq!(parts.next(), Some(w), "{line}");
    }
    parts
        .map(|p| {
            let (k, v) = p
                .split_once('=')
                .unwrap_or_else(|| panic!("`{p}` in {line}"));
            assert!(!k.is_empty() && !v.is_empty() && !v.contains('='), "{line}");
            (k.to_string(), v.to_string())
        })
        .collect()
}

fn number_or_na(v: &str) -> bool {
    v == "na" || v.parse::<f64>().is_ok_and(f64::is_finite)
}

#[test]
fn bench_lines_are_key_value_pairs() {
    let row = |latency: Option<f64>, false_events| CompareRow {
        scenario: "kitchen-panel".into(),
        detector: "rc-comparator",
        labels: 8,
        missed: 2,
        false_events,
        hours: 0.5,
        latency_p50_ms: latency,
        latency_p95_ms: latency.map(|l| l + 10.0),
        latency_max_ms: latency.map(|l| l + 20.0),
    };
    for r in [row(Some(26.25), 3), row(None, 0)] {
        let kv = keys(&r.bench_line(), None);
        let names: Vec<&str> = kv.iter().map(|(k, _)| k.as_str()).collect();
        assert_eq!(
            names,
            [
                "scenario",
                "detector",
                "missed",
                "false_per_hour",
                "latency_p50_ms",
                "latency_p95_ms",
                "latency_max_ms"
            ]
        );
        assert_eq!(kv[0].1, "kitchen-panel");
        assert_eq!(kv[1].1, "rc-comparator");
        assert_eq!(kv[2].1, "2");
        assert!(kv[3..].iter().all(|(_, v)| number_or_na(v)));
    }
    // 3 false events in half an hour: 6 an hour.
    assert_eq!(row(None, 3).false_per_hour(), 6.0);
    assert!(row(None, 3).bench_line().contains(" false_per_hour=6.00 "));
    assert!(row(None, 0)
        .bench_line()
        .ends_with("latency_p50_ms=na latency_p95_ms=na latency_max_ms=na"));

    let stats = LatencyStats::of(&[20.0, 30.0, 40.0]);
    let lr = LatencyRow {
        mains_hz: 50,
        rate_hz: 2000,
        overlay_mm: 2.0,
        touches: 3,
        missed: 0,
        false_events: 0,
        on: stats,
        off: None,
    };
    let kv = keys(&lr.bench_line(), Some("latency"));
    let names: Vec<&str> = kv.iter().map(|(k, _)| k.as_str()).collect();
    assert_eq!(&names[..2], ["mains_hz", "rate_hz"]);
    for k in [
        "on_p50_ms",
        "on_p95_ms",
        "off_p50_ms",
        "off_p95_ms",
        "on_p95_cycles",
        "off_p95_cycles",
    ] {
        let v = &kv.iter().find(|(n, _)| n == k).expect(k).1;
        assert!(number_or_na(v), "{k}={v}");
    }
    // p95 of 20, 30, 40 ms by nearest rank is 40 ms: two 20 ms cycles.
    assert!(lr.bench_line().contains(" on_p95_cycles=2.00 "));
    assert!(lr.bench_line().contains(" off_p95_cycles=na"));

    let sr = SpeedRow {
        channels: 4,
        samples: 1000,
        runs: 3,
        events: 2,
        median_msamples_per_s: 480.04,
        min_msamples_per_s: 400.0,
    };
    let kv = keys(&sr.bench_line(), None);
    assert_eq!(kv[0], ("host_msamples_per_s".into(), "480.0".into()));
    assert_eq!(kv[1], ("channels".into(), "4".into()));
}

#[test]
fn latency_grid_scenario_spreads_onsets_over_the_cycle() {
    // 20 touches at 60 Hz: every onset one second after the last plus a
    // fraction frac(k·0.618…) of a 1/60 s cycle. Three-distance theorem
    // (Sós, 1958): the gaps between the points frac(kα), k < N, around the
    // circle take at most three lengths, and when three, the largest is the
    // sum of the other two.
    let s = Scenario::from_toml_str(&grid_scenario(60, 1000, 2.0, 20), "grid").unwrap();
    assert_eq!(s.adc.rate_hz, 1000.0);
    let labels = s.labels(s.duration_s());
    assert_eq!(labels.len(), 20);
    assert!(labels
        .iter()
        .all(|l| (l.end_s - l.start_s - 0.4).abs() < 1e-9));
    let mut phases: Vec<f64> = labels
        .iter()
        .enumerate()
        .map(|(k, l)| (l.start_s - 1.5 - k as f64) * 60.0)
        .collect();
    assert!(phases.iter().all(|p| (0.0..1.0).contains(p)));
    phases.sort_by(f64::total_cmp);
    let mut gaps: Vec<f64> = phases.windows(2).map(|w| w[1] - w[0]).collect();
    gaps.push(phases[0] + 1.0 - phases[19]);
    // Distinct lengths, within the 1 µs rounding of the printed onsets
    // (6e-5 of a cycle).
    gaps.sort_by(f64::total_cmp);
    let mut lengths: Vec<f64> = Vec::new();
    for g in gaps {
        if lengths.last().is_none_or(|l| g - l > 1e-3) {
            lengths.push(g);
        }
    }
    assert_eq!(lengths.len(), 3, "{lengths:?}");
    assert!(
        (lengths[0] + lengths[1] - lengths[2]).abs() < 1e-3,
        "{lengths:?}"
    );
}

#[test]
fn comparison_lines_and_ratios() {
    use humsim::bench::compare::Comparison;
    use humsim::bench::tuner::Tuned;
    let reference = Reference::RcComparator(RcComparatorConfig {
        coupling_tau_s: 1.0,
        rectifier: Rectifier::Half,
        rc_tau_s: 0.01,
        on_fraction: 0.05,
        hysteresis: 0.2,
    });
    let row = |detector, missed, false_events, p50: Option<f64>| CompareRow {
        scenario: "dock-touch".into(),
        detector,
        labels: 14,
        missed,
        false_events,
        hours: 0.01,
        latency_p50_ms: p50,
        latency_p95_ms: p50.map(|v| v * 2.0),
        latency_max_ms: p50.map(|v| v * 3.0),
    };
    let c = Comparison {
        tuned: vec![Tuned {
            reference,
            objective: Objective {
                errors: 3,
                missed: 2,
                false_events: 1,
                latency_ms: 61.5,
            },
            evaluations: 100,
            rounds: 2,
        }],
        rows: vec![
            row("humsense", 0, 0, Some(20.0)),
            row("rc-comparator", 2, 1, Some(40.0)),
        ],
    };
    let lines = c.bench_lines();
    assert_eq!(lines.len(), 4);
    let tuned = keys(&lines[0], Some("tuned"));
    assert_eq!(tuned[0], ("detector".into(), "rc-comparator".into()));
    assert!(tuned
        .iter()
        .any(|kv| kv == &("rectifier".into(), "half".into())));
    assert!(tuned
        .iter()
        .any(|kv| kv == &("rc_tau_ms".into(), "10".into())));
    keys(&lines[1], None);
    keys(&lines[2], None);
    let ratio = keys(&lines[3], Some("ratio"));
    let get = |k: &str| ratio.iter().find(|(n, _)| n == k).map(|(_, v)| v.as_str());
    // Ours over the reference's: 20/40 ms, 40/80 ms; no false event and no
    // miss of ours against 100 an hour and 2.
    assert_eq!(get("scenario"), Some("dock-touch"));
    assert_eq!(get("reference"), Some("rc-comparator"));
    assert_eq!(get("latency_p50"), Some("0.50"));
    assert_eq!(get("latency_p95"), Some("0.50"));
    assert_eq!(get("false_per_hour"), Some("0.00"));
    assert_eq!(get("missed"), Some("0.00"));
    // A reference that detected nothing or had no false event: no ratio.
    let c = Comparison {
        rows: vec![
            row("humsense", 0, 0, Some(20.0)),
            row("rc-comparator", 14, 0, None),
        ],
        ..c
    };
    let ratio = keys(&c.ratio_lines()[0], Some("ratio"));
    let values: Vec<&str> = ratio.iter().skip(2).map(|(_, v)| v.as_str()).collect();
    assert_eq!(values, ["na", "na", "na", "0.00"]);
}
