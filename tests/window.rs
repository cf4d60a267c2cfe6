//! The field profile's sliding window (`FieldDetector`): its noise estimate
//! and its Rayleigh-law threshold on white Gaussian noise, and detection
//! within the window.
#![allow(
    clippy::unwrap_used,
    clippy::expect_used,
    clippy::indexing_slicing,
    clippy::panic
)]

mod support;

use humsense::{per_decision_pfa, Config, EventKind, FieldDetector, MainsMode};
use support::Rng;

const RATE: f64 = 2_000.0;
const SIGMA: f64 = 40.0;

fn noise_run(det: &mut FieldDetector, rng: &mut Rng, seconds: f64) -> usize {
    let mut ons = 0;
    for _ in 0..(seconds * RATE) as usize {
        let x = (2048.0 + SIGMA * rng.gauss()).round().clamp(0.0, 4095.0) as u16;
        if let Some(e) = det.push(x) {
            if e.kind == EventKind::FieldOn {
                ons += 1;
            }
        }
    }
    ons
}

fn settled() -> (FieldDetector, Rng) {
    let cfg = Config::field().with_mains(MainsMode::Hz50);
    let mut det = FieldDetector::new(cfg).unwrap();
    let mut rng = Rng::new(41);
    noise_run(&mut det, &mut rng, 60.0);
    (det, rng)
}

#[test]
fn noise_estimate_is_the_window_means_sigma() {
    // One cycle of N = 40 samples of white noise σ: the amplitude estimate
    // 2|X|/N has E|2X/N|² = 4σ²/N (shared/REFERENCES.md: E|X|² = Nσ² for a
    // bin-centred DFT), so σ_z = σ·√(2/N) per component, and the mean of
    // w = 25 cycles σ_z/√w: 40·√(2/40)/5 = 1.789 codes.
    let (det, _) = settled();
    let s = det.snapshot(0).unwrap();
    let n = s.noise_q8 as f64 / 256.0;
    let want = SIGMA * (2.0f64 / 40.0).sqrt() / 5.0;
    assert!(
        (n / want - 1.0).abs() < 0.08,
        "noise {n} codes, expected {want}"
    );
}

#[test]
fn on_threshold_is_the_rayleigh_quantile_of_the_noise() {
    // Rayleigh envelope (Kay, Vol. II; shared/REFERENCES.md): under noise
    // alone P(|S| > γσ) = exp(−γ²/2); the window sets γ from the
    // per-decision probability for `false_alarms_per_hour`, and with no
    // ambient the Rayleigh term rules the on threshold.
    let (det, _) = settled();
    let s = det.snapshot(0).unwrap();
    let p = f64::from(per_decision_pfa(1.0, 50, 25));
    let gamma = (2.0 * (1.0 / p).ln()).sqrt();
    let want = gamma * s.noise_q8 as f64;
    let got = s.on_q8 as f64;
    assert!(
        (got / want - 1.0).abs() < 0.03,
        "on {got} against γσ {want} (γ {gamma})"
    );
    assert!(s.off_q8 < s.on_q8);
}

#[test]
fn a_field_of_a_few_noise_units_is_reported_within_the_window() {
    // 8 window-noise units (14 codes at σ = 40: one cycle's SNR is below
    // 2): reported within the 0.5 s window in every one of 20 trials, and
    // no report from the noise before it.
    let (base, mut rng) = settled();
    let w = std::f64::consts::TAU * 50.0 / RATE;
    for trial in 0..20 {
        let mut det = base.clone();
        assert_eq!(noise_run(&mut det, &mut rng, 0.3 + 0.01 * trial as f64), 0);
        let phase = rng.uniform() * std::f64::consts::TAU;
        let mut at = None;
        for n in 0..1_000usize {
            let x = 2048.0 + SIGMA * rng.gauss() + 14.3 * (w * n as f64 + phase).sin();
            if let Some(e) = det.push(x.round() as u16) {
                if e.kind == EventKind::FieldOn && at.is_none() {
                    at = Some(n);
                }
            }
        }
        assert!(at.is_some(), "trial {trial}: no field-on within 0.5 s");
    }
}

/// Every event of a `FieldDetector` run at 50 Hz, with its time in seconds.
fn field_run(samples: &[u16]) -> Vec<(f64, EventKind)> {
    let cfg = Config::field().with_mains(MainsMode::Hz50);
    let mut det: FieldDetector = FieldDetector::new(cfg).unwrap();
    let mut out = Vec::new();
    for &x in samples {
        if let Some(e) = det.push(x) {
            out.push((e.sample as f64 / RATE, e.kind));
        }
    }
    out
}

/// A field's coupled hum approached and withdrawn by hand: 0 before `a`,
/// rising as the square of the time to `peak` codes at `a + 4 s` (the
/// coupling grows as the distance shrinks), held 2 s, and back to 0 over
/// 4 s.
fn approach(t: f64, a: f64, peak: f64) -> f64 {
    let s = if t < a {
        0.0
    } else if t < a + 4.0 {
        (t - a) / 4.0
    } else if t < a + 6.0 {
        1.0
    } else if t < a + 10.0 {
        (a + 10.0 - t) / 4.0
    } else {
        0.0
    };
    peak * s * s
}

#[test]
fn an_ambient_step_is_not_a_field_and_a_field_under_it_is_released() {
    // Ambient 30 codes; a lamp adds 45 in phase (2.5x) within one sample,
    // at 6.013 s (inside a cycle: the step splits over two), and goes off
    // at 14.007 s; a field of 150 codes approached from 20 s, the lamp
    // switched on at 23.013 s while the field is reported, the field
    // withdrawn by 30 s with the lamp still on, the lamp off at 40.007 s.
    // Expected: no event from the lamp alone; one field-on during the
    // approach, its field-off within 1.5 s of the withdrawal's end (the
    // 0.5 s window and the off debounce, with the threshold measured from
    // the ambient under the lamp), nothing after. Before the ambient step
    // rule the lamp alone turned the field on (and held it on while the
    // lamp stayed on), and the field under it was released only when the
    // lamp went off.
    let mut sig = support::Signal::mid_rail(RATE, 50.0);
    sig.noise = 4.0;
    let lamp = |t: f64| {
        if (6.013..14.007).contains(&t) || (23.013..40.007).contains(&t) {
            45.0
        } else {
            0.0
        }
    };
    let x = sig.render(
        46.0,
        7,
        |t| 30.0 + lamp(t) + approach(t, 20.0, 150.0),
        |_| 50.0,
    );
    let ev = field_run(&x);
    let ons: Vec<f64> = ev
        .iter()
        .filter(|(_, k)| *k == EventKind::FieldOn)
        .map(|&(t, _)| t)
        .collect();
    let offs: Vec<f64> = ev
        .iter()
        .filter(|(_, k)| *k == EventKind::FieldOff)
        .map(|&(t, _)| t)
        .collect();
    assert_eq!(ons.len(), 1, "{ev:?}");
    assert!((20.0..24.0).contains(&ons[0]), "{ev:?}");
    assert_eq!(offs.len(), 1, "{ev:?}");
    assert!((26.0..31.5).contains(&offs[0]), "{ev:?}");
}

#[test]
fn a_lamp_step_on_a_field_panel_is_taken_once() {
    // Four field channels, one lamp raising every channel's hum 2.5x
    // within a cycle (at 5.013 s, off at 22.007 s), a field of 150 codes
    // approached on channel 1 under the lamp (from 9 s) and again after it
    // (from 26 s). The step rule restarts each idle channel's amplitude
    // baseline at the step, so the panel's ambient rule, which compares
    // amplitudes with those baselines, does not rescale the ambient a
    // second time (which would hide the field under the lamp, and turned a
    // channel on when the lamp went off): exactly one field-on and one
    // field-off per approach, on channel 1 only.
    let lamp = |t: f64| {
        if (5.013..22.007).contains(&t) {
            2.5
        } else {
            1.0
        }
    };
    let x = support::render_panel(4, RATE, 38.0, 9, |ch, t| {
        let field = if ch == 1 {
            approach(t, 9.0, 150.0) + approach(t, 26.0, 150.0)
        } else {
            0.0
        };
        30.0 * lamp(t) + field
    });
    let cfg = Config::field().with_mains(MainsMode::Hz50);
    let mut det: FieldDetector<4, 0> = FieldDetector::new(cfg).unwrap();
    let mut ev = Vec::new();
    det.push_block(&x, |e| ev.push((e.sample as f64 / RATE, e.channel, e.kind)));
    let onoff: Vec<_> = ev
        .iter()
        .filter(|(_, _, k)| matches!(k, EventKind::FieldOn | EventKind::FieldOff))
        .collect();
    assert_eq!(onoff.len(), 4, "{ev:?}");
    assert!(onoff.iter().all(|&&(_, ch, _)| ch == 1), "{ev:?}");
    let kinds: Vec<EventKind> = onoff.iter().map(|&&(_, _, k)| k).collect();
    assert_eq!(
        kinds,
        [
            EventKind::FieldOn,
            EventKind::FieldOff,
            EventKind::FieldOn,
            EventKind::FieldOff
        ],
        "{ev:?}"
    );
    assert!((9.0..13.0).contains(&onoff[0].0), "{ev:?}");
    assert!((26.0..30.0).contains(&onoff[2].0), "{ev:?}");
}
