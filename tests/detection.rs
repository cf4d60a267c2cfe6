//! Behaviour of the whole detector on synthetic signals (tests/support).
#![allow(
    clippy::unwrap_used,
    clippy::expect_used,
    clippy::indexing_slicing,
    clippy::panic
)]

mod support;

use humsense::{Config, EventKind, MainsMode};
use support::{match_presses, press, run, Signal};

const PRESSES: [(f64, f64); 5] = [
    (2.0, 2.4),
    (3.5, 4.5),
    (6.0, 6.15),
    (8.0, 11.0),
    (12.0, 12.3),
];

/// Longest on and off latencies (s) the debounce allows for a press with
/// the support's 10 ms ramps, at `rate` samples a second on `mains` Hz.
///
/// A cycle lasts at most `T = 1/mains + 1/rate` (the oscillator ends it on
/// the sample after its phase wraps). The first whole cycle that starts
/// after the ramp up ends at most 2T after the ramp's end, and each of the
/// `debounce_on` cycles it opens must be above the on threshold: on at
/// most `10 ms + (debounce_on + 1)·T` after the press starts; likewise off
/// at most `(debounce_off + 1)·T` after it ends (the ramp down ends at the
/// press's end). Valid for a rise well past the on ratio (2.8x for the
/// touch profile; the weakest here is 4x) and presses longer than
/// `min_active_cycles`. At 50 Hz and 2 kHz: 71.5 ms and 82 ms, under the
/// project's bar of a 100 ms touch-on p95.
fn latency_bounds(rate: f64, mains: f64, cfg: &Config) -> (f64, f64) {
    let t = 1.0 / mains + 1.0 / rate;
    (
        0.010 + f64::from(cfg.debounce_on + 1) * t,
        f64::from(cfg.debounce_off + 1) * t,
    )
}

fn touch_run(
    rate: f64,
    mains: f64,
    gain: f64,
    cfg: Config,
) -> Result<(Vec<f64>, Vec<f64>), String> {
    let sig = Signal::mid_rail(rate, mains);
    let x = sig.render(14.0, 7, |t| press(t, 25.0, gain, &PRESSES), |_| mains);
    let (mut on_max, off_max) = latency_bounds(rate, mains, &cfg);
    if rate / mains < 8.0 {
        // Below 8 samples a cycle a strong rise's sample-to-sample steps
        // exceed the impulse gate's limit (learnt on the untouched hum) and
        // are held, two pairs at a time, until the limit has grown: the
        // gate, not the debounce, sets the on latency there (measured at
        // 400 Hz on 60 Hz mains, 15x: 85 ms on the first press, 35 ms with
        // the gate off). The bound is then the project's bar itself, a
        // 100 ms touch-on.
        on_max = 0.100;
    }
    let ev = run(cfg, &x);
    // Every single press on and off within the debounce's bounds (see
    // `latency_bounds`), at either mains frequency.
    match_presses(
        &ev,
        &PRESSES,
        EventKind::TouchOn,
        EventKind::TouchOff,
        on_max,
        off_max,
    )
}

#[test]
fn every_touch_once_at_50_hz() {
    let r = touch_run(2000.0, 50.0, 20.0, Config::touch());
    assert!(r.is_ok(), "{r:?}");
}

#[test]
fn every_touch_once_at_60_hz() {
    let r = touch_run(2000.0, 60.0, 20.0, Config::touch());
    assert!(r.is_ok(), "{r:?}");
}

#[test]
fn thick_overlay_touches_of_4x_are_found_with_defaults() {
    for mains in [50.0, 60.0] {
        let r = touch_run(2000.0, mains, 4.0, Config::touch());
        assert!(r.is_ok(), "{mains} Hz: {r:?}");
    }
}

#[test]
fn rates_that_are_not_multiples_of_the_mains() {
    // 2.3 kHz / 50 Hz = 46 exactly, so use 2.33 kHz; 1 kHz / 60 Hz = 16.67;
    // 400 Hz / 60 Hz = 6.67; 44.1 kHz / 50 Hz = 882 (a multiple, as a check
    // of long cycles).
    for (rate, mains) in [
        (2330.0, 50.0),
        (1000.0, 60.0),
        (400.0, 60.0),
        (44_100.0, 50.0),
    ] {
        let cfg = Config::touch().with_sample_rate(rate as u32);
        let r = touch_run(rate, mains, 15.0, cfg);
        assert!(r.is_ok(), "{rate} Hz at {mains} Hz mains: {r:?}");
    }
}

#[test]
fn single_supply_half_wave_input_still_detects() {
    // Bias 0 V: the negative half-waves clip at code 0 (half-wave shape).
    let mut sig = Signal::mid_rail(2000.0, 50.0);
    sig.bias = 0.0;
    let x = sig.render(14.0, 3, |t| press(t, 25.0, 20.0, &PRESSES), |_| 50.0);
    let (on_max, off_max) = latency_bounds(2000.0, 50.0, &Config::touch());
    let ev = run(Config::touch(), &x);
    let r = match_presses(
        &ev,
        &PRESSES,
        EventKind::TouchOn,
        EventKind::TouchOff,
        on_max,
        off_max,
    );
    assert!(r.is_ok(), "{r:?}");
}

#[test]
fn ambient_only_with_drift_spikes_and_lamp_steps_gives_no_event() {
    // Ten minutes of ambient hum at 2 kHz: slow drift of ±30 % (people
    // moving), mains wandering across 49.5–50.5 Hz, a 2x ambient step every
    // 100 s (a lamp switched on nearby, off 50 s later), and spikes of one
    // to three full-scale samples every 0.37 s.
    let sig = Signal::mid_rail(2000.0, 50.0);
    let seconds = 600.0;
    let amp = |t: f64| {
        let drift = 1.0 + 0.3 * (t / 40.0).sin();
        let lamp = if (t % 100.0) > 50.0 { 2.0 } else { 1.0 };
        25.0 * drift * lamp
    };
    let freq = |t: f64| 50.0 + 0.5 * (t / 90.0).sin();
    let mut x = sig.render(seconds, 11, amp, freq);
    let mut k = 1000usize;
    let mut len = 1usize;
    while k + 3 < x.len() {
        for j in 0..len {
            x[k + j] = if (k / 740).is_multiple_of(2) { 4095 } else { 0 };
        }
        len = len % 3 + 1;
        k += 740;
    }
    let ev = run(Config::touch(), &x);
    assert!(
        ev.is_empty(),
        "{} false events: {:?}",
        ev.len(),
        &ev[..ev.len().min(5)]
    );
}

#[test]
fn slow_approach_to_a_live_conductor_is_reported_by_the_field_profile() {
    // The electrode approaches a conductor: the coupled hum rises from the
    // ambient 20 codes to 200 over 6 s (coupling grows as the distance
    // shrinks), stays 4 s, then retreats over 6 s.
    let sig = Signal::mid_rail(2000.0, 50.0);
    let amp = |t: f64| {
        let s = if t < 10.0 {
            0.0
        } else if t < 16.0 {
            (t - 10.0) / 6.0
        } else if t < 20.0 {
            1.0
        } else if t < 26.0 {
            (26.0 - t) / 6.0
        } else {
            0.0
        };
        20.0 * (1.0 + 9.0 * s * s)
    };
    let x = sig.render(34.0, 5, amp, |_| 50.0);
    let ev = run(Config::field(), &x);
    let on: Vec<_> = ev
        .iter()
        .filter(|(_, e)| e.kind == EventKind::FieldOn)
        .collect();
    let off: Vec<_> = ev
        .iter()
        .filter(|(_, e)| e.kind == EventKind::FieldOff)
        .collect();
    let levels: Vec<u8> = ev
        .iter()
        .filter_map(|(_, e)| match e.kind {
            EventKind::Level(l) => Some(l),
            _ => None,
        })
        .collect();
    assert_eq!(on.len(), 1, "{ev:?}");
    assert_eq!(off.len(), 1, "{ev:?}");
    // On during the approach (the hum reaches 1.5x at about t = 11.6 s).
    assert!(on[0].0 > 10.5 && on[0].0 < 13.0, "{:?}", on[0]);
    // Off during the retreat.
    assert!(off[0].0 > 20.0 && off[0].0 < 27.0, "{:?}", off[0]);
    // 10x over ambient is 20 dB: about six 3 dB levels above the 3.5 dB
    // on ratio; the level climbs and comes down again.
    let top = levels.iter().copied().max().unwrap_or(0);
    assert!((5..=7).contains(&top), "levels {levels:?}");
}

#[test]
fn mains_choice_and_tracking_across_the_en50160_range() {
    // EN 50160 §4.2.1 (secondary): 50 Hz ±1 % for 99.5 % of a year and
    // +4 %/−6 % (47–52 Hz) always; the same percentages at 60 Hz give
    // 56.4–62.4 Hz. The tracker must settle and lock at each.
    for (f, is50) in [
        (47.0, true),
        (49.5, true),
        (50.0, true),
        (52.0, true),
        (56.4, false),
        (60.0, false),
        (62.4, false),
    ] {
        let sig = Signal::mid_rail(2000.0, f);
        let x = sig.render(4.0, 2, |_| 30.0, |_| f);
        let mut det: humsense::Detector = humsense::Detector::new(Config::touch()).expect("valid");
        for &s in &x {
            let _ = det.push(s);
        }
        let want = if is50 {
            humsense::MainsSystem::Hz50
        } else {
            humsense::MainsSystem::Hz60
        };
        assert_eq!(det.mains_system(), want, "{f} Hz");
        assert!(det.mains_locked(), "{f} Hz not locked");
        assert!(
            (det.mains_hz() - f as f32).abs() < 0.02,
            "{f} Hz: tracked {}",
            det.mains_hz()
        );
    }
}

#[test]
fn tracking_follows_a_drift_and_stays_locked() {
    // A sweep from 47 to 52 Hz over 60 s (faster than any real grid).
    let sig = Signal::mid_rail(2000.0, 50.0);
    let f = |t: f64| 47.0 + 5.0 * t / 60.0;
    let x = sig.render(60.0, 9, |_| 30.0, f);
    let mut det: humsense::Detector =
        humsense::Detector::new(Config::touch().with_mains(MainsMode::Hz50)).expect("valid");
    let mut worst = 0.0f64;
    for (k, &s) in x.iter().enumerate() {
        let _ = det.push(s);
        let t = k as f64 / 2000.0;
        if t > 2.0 && k % 200 == 0 {
            assert!(det.mains_locked(), "lost lock at {t} s");
            worst = worst.max((f64::from(det.mains_hz()) - f(t)).abs());
        }
    }
    // 0.1 Hz is 0.2 % at 50 Hz: over the longest coherent average (about
    // 2^4 cycles) the phasor turns by 0.03 turn, a loss below 0.1 dB. The
    // ramp (0.083 Hz/s) is far faster than a grid drifts; a first-order
    // loop updating every 8 cycles lags it by about 0.03 Hz.
    assert!(worst < 0.1, "worst tracking error {worst} Hz");
}

#[test]
fn the_impulse_gate_is_what_stops_spikes() {
    // With a one-cycle debounce, spikes alone would cause events unless
    // the gate removes them; the same signal with the gate off is the
    // control that shows this test can fail.
    let sig = Signal::mid_rail(2000.0, 50.0);
    let mut x = sig.render(30.0, 21, |_| 25.0, |_| 50.0);
    let mut k = 2000usize;
    while k + 3 < x.len() {
        x[k] = 4095;
        x[k + 1] = 4095;
        x[k + 2] = 0;
        k += 1234;
    }
    let mut cfg = Config::touch();
    cfg.debounce_on = 1;
    let gated = run(cfg, &x);
    cfg.spike_max_len = 0;
    let ungated = run(cfg, &x);
    assert!(gated.is_empty(), "{gated:?}");
    assert!(
        ungated.len() > 10,
        "control: {} events without the gate",
        ungated.len()
    );
}
