//! Each fault is triggered and cleared by a synthetic signal; a strong
//! touch that saturates the ADC is a touch, not a fault.
#![allow(
    clippy::unwrap_used,
    clippy::expect_used,
    clippy::indexing_slicing,
    clippy::panic
)]

mod support;

use humsense::{Config, Event, EventKind, Fault, MainsMode};
use support::{press, run, Signal};

fn kinds(ev: &[(f64, Event)]) -> Vec<EventKind> {
    ev.iter().map(|(_, e)| e.kind).collect()
}

/// Time of the first event of `kind`.
fn when(ev: &[(f64, Event)], kind: EventKind) -> Option<f64> {
    ev.iter().find(|(_, e)| e.kind == kind).map(|(t, _)| *t)
}

fn hum(seconds: f64, seed: u64) -> Vec<u16> {
    Signal::mid_rail(2000.0, 50.0).render(seconds, seed, |_| 25.0, |_| 50.0)
}

#[test]
fn stuck_input_is_a_fault_until_it_moves() {
    let mut x = hum(10.0, 1);
    for s in &mut x[6000..10_000] {
        *s = 1234; // 2 s at one code (3 to 5 s)
    }
    let ev = run(Config::touch(), &x);
    assert_eq!(
        kinds(&ev),
        vec![
            EventKind::Fault(Fault::Stuck),
            EventKind::FaultClear(Fault::Stuck)
        ],
        "{ev:?}"
    );
    // Raised after fault_stuck_cycles (25 cycles, 0.5 s), cleared within a
    // cycle of the input moving again.
    let on = when(&ev, EventKind::Fault(Fault::Stuck)).unwrap();
    let off = when(&ev, EventKind::FaultClear(Fault::Stuck)).unwrap();
    assert!((3.45..3.6).contains(&on), "{on}");
    assert!((5.0..5.05).contains(&off), "{off}");
}

#[test]
fn railed_input_is_saturated_not_stuck() {
    // The input pinned at the top rail with a code of noise (an amplifier
    // latched at its supply), from 3 to 6 s.
    let mut x = hum(9.0, 2);
    for (k, s) in x[6000..12_000].iter_mut().enumerate() {
        *s = 4095 - (k % 3) as u16;
    }
    let ev = run(Config::touch(), &x);
    let k = kinds(&ev);
    assert!(k.contains(&EventKind::Fault(Fault::Saturated)), "{ev:?}");
    assert!(
        k.contains(&EventKind::FaultClear(Fault::Saturated)),
        "{ev:?}"
    );
    assert!(!k.contains(&EventKind::Fault(Fault::Stuck)), "{ev:?}");
    assert!(!k.contains(&EventKind::TouchOn), "{ev:?}");
    let on = when(&ev, EventKind::Fault(Fault::Saturated)).unwrap();
    assert!((3.9..4.2).contains(&on), "after 50 cycles: {on}");
}

#[test]
fn a_strong_touch_that_saturates_is_a_touch() {
    // 300x the ambient hum: clipped at both rails while the finger is there.
    let presses = [(2.0, 4.0), (5.0, 5.5)];
    let x = Signal::mid_rail(2000.0, 50.0).render(
        7.0,
        3,
        |t| press(t, 25.0, 300.0, &presses),
        |_| 50.0,
    );
    assert!(
        x.iter().filter(|&&s| s == 4095 || s == 0).count() > 3000,
        "the test signal must clip"
    );
    let ev = run(Config::touch(), &x);
    assert_eq!(
        kinds(&ev),
        vec![
            EventKind::TouchOn,
            EventKind::TouchOff,
            EventKind::TouchOn,
            EventKind::TouchOff
        ],
        "{ev:?}"
    );
}

#[test]
fn sustained_clipping_becomes_a_fault_after_the_stuck_active_timeout() {
    // Interference clipping both rails for 10 s looks like a touch at
    // first; when the channel is released by the stuck-active timeout
    // (here 200 cycles, 4 s) and the clipping goes on, it is a fault.
    let x = Signal::mid_rail(2000.0, 50.0).render(
        16.0,
        4,
        |t| {
            if (2.0..12.0).contains(&t) {
                7000.0
            } else {
                25.0
            }
        },
        |_| 50.0,
    );
    let mut cfg = Config::touch();
    cfg.max_active_cycles = 200;
    let ev = run(cfg, &x);
    let k = kinds(&ev);
    assert_eq!(k[..2], [EventKind::TouchOn, EventKind::TouchOff], "{ev:?}");
    assert!(k.contains(&EventKind::Fault(Fault::Saturated)), "{ev:?}");
    let cleared = when(&ev, EventKind::FaultClear(Fault::Saturated)).unwrap();
    assert!((12.0..12.1).contains(&cleared), "{cleared}");
}

#[test]
fn no_hum_is_a_fault_after_its_time() {
    // An open electrode: noise only from 1 to 40 s, then hum returns.
    let sig = Signal::mid_rail(2000.0, 50.0);
    let x = sig.render(
        44.0,
        5,
        |t| if (1.0..40.0).contains(&t) { 0.0 } else { 25.0 },
        |_| 50.0,
    );
    let mut cfg = Config::touch();
    cfg.nohum_cycles = 1500;
    let ev = run(cfg, &x);
    let k = kinds(&ev);
    // The tracker loses the mains too: no hum, nothing to lock to.
    for f in [Fault::NoHum, Fault::MainsLost] {
        assert!(k.contains(&EventKind::Fault(f)), "{f:?}: {ev:?}");
        assert!(k.contains(&EventKind::FaultClear(f)), "{f:?}: {ev:?}");
    }
    let nohum = when(&ev, EventKind::Fault(Fault::NoHum)).unwrap();
    assert!((30.9..31.2).contains(&nohum), "after 1500 cycles: {nohum}");
    let lost = when(&ev, EventKind::Fault(Fault::MainsLost)).unwrap();
    assert!(
        (5.5..7.0).contains(&lost),
        "after 250 unlocked cycles: {lost}"
    );
    assert!(!k.contains(&EventKind::TouchOn), "{ev:?}");
}

#[test]
fn a_60_hz_supply_on_a_50_hz_config_is_out_of_range() {
    // Fixed 50 Hz system, but the hum is at 60 Hz for the first 12 s.
    let sig = Signal::mid_rail(2000.0, 60.0);
    let x = sig.render(20.0, 6, |_| 30.0, |t| if t < 12.0 { 60.0 } else { 50.0 });
    let ev = run(Config::touch().with_mains(MainsMode::Hz50), &x);
    let k = kinds(&ev);
    assert!(
        k.contains(&EventKind::Fault(Fault::MainsOutOfRange)),
        "{ev:?}"
    );
    assert!(
        k.contains(&EventKind::FaultClear(Fault::MainsOutOfRange)),
        "{ev:?}"
    );
    assert!(
        !k.contains(&EventKind::Fault(Fault::RateMismatch)),
        "{ev:?}"
    );
}

#[test]
fn a_wrong_sample_rate_is_a_rate_mismatch() {
    // The ADC really samples at 1.6 kHz but the config says 2 kHz: 60 Hz
    // mains then looks like 75 Hz, which no supply has. From 10 s on the
    // rate is right again (rendered at the configured rate).
    let wrong = Signal::mid_rail(1600.0, 60.0).render(10.0, 7, |_| 30.0, |_| 60.0);
    let right = Signal::mid_rail(2000.0, 60.0).render(10.0, 8, |_| 30.0, |_| 60.0);
    let x: Vec<u16> = wrong.into_iter().chain(right).collect();
    let ev = run(Config::touch(), &x);
    let k = kinds(&ev);
    assert!(k.contains(&EventKind::Fault(Fault::RateMismatch)), "{ev:?}");
    assert!(
        k.contains(&EventKind::FaultClear(Fault::RateMismatch)),
        "{ev:?}"
    );
    assert!(
        !k.contains(&EventKind::Fault(Fault::MainsOutOfRange)),
        "{ev:?}"
    );
}

#[test]
fn diagnostics_snapshot_reports_state_and_faults() {
    let mut x = hum(4.0, 9);
    for s in &mut x[5000..8000] {
        *s = 1000;
    }
    let mut det: humsense::Detector = humsense::Detector::new(Config::touch()).unwrap();
    for &s in &x[..4000] {
        let _ = det.push(s);
    }
    let snap = det.snapshot(0).unwrap();
    assert_eq!(snap.state, humsense::detector::ChannelState::Idle);
    assert!(
        snap.mains_locked && (snap.mains_hz - 50.0).abs() < 0.1,
        "{snap:?}"
    );
    assert_eq!(snap.samples, 4000);
    // 25-code hum over about one code of noise: the SNR of the amplitude
    // against its mean absolute deviation is well above 20 dB.
    assert!(snap.snr_db() > 20.0, "{}", snap.snr_db());
    assert!(
        (snap.amplitude_q8 as f64 / 256.0 - 25.0).abs() < 1.0,
        "{snap:?}"
    );
    for &s in &x[4000..] {
        let _ = det.push(s);
    }
    let snap = det.snapshot(0).unwrap();
    assert!(snap.faults.contains(Fault::Stuck));
    assert_eq!(snap.state, humsense::detector::ChannelState::Faulted);
    assert!(det.snapshot(1).is_none());
}

#[test]
fn each_cycle_carries_the_rails_of_its_input_type() {
    // Offset binary (u16) codes of a 12-bit converter run 0 to 4095; two's
    // complement (i16) ones -2048 to 2047, which the pipeline sees plus
    // 32 768: 30 720 to 34 815 (common practice for converter codes). A
    // detector fed one type and then the other switches with it.
    let cfg = Config::touch();
    let mut fe = humsense::Frontend::<1, 0>::new(&cfg).unwrap();
    let mut rails = Vec::new();
    for k in 0..400u32 {
        let x = (k % 7) as u16;
        let cycle = if k < 200 {
            fe.push_frame(&[x as i16])
        } else {
            fe.push_frame(&[x])
        };
        if let Some(c) = cycle {
            rails.push((k, c.rails));
        }
    }
    assert!(rails.len() >= 8, "{rails:?}");
    for (k, r) in rails {
        let want = if k < 200 {
            (30_720, 34_815)
        } else {
            (0, 4_095)
        };
        assert_eq!(r, want, "sample {k}");
    }
}

#[test]
fn fault_events_are_reported_during_start_up() {
    // Start-up (`startup_cycles`) suppresses decisions, not fault events:
    // an input stuck from power-on reports `Stuck` after
    // `fault_stuck_cycles` (25 cycles, 0.5 s) although start-up here lasts
    // 200 cycles (4 s), and no touch event comes before start-up ends.
    let mut cfg = Config::touch();
    cfg.startup_cycles = 200;
    let mut x = hum(8.0, 9);
    for s in &mut x[..2000] {
        *s = 1234; // the first second at one code
    }
    let ev = run(cfg, &x);
    assert_eq!(
        kinds(&ev),
        vec![
            EventKind::Fault(Fault::Stuck),
            EventKind::FaultClear(Fault::Stuck)
        ],
        "{ev:?}"
    );
    // Automatic mains mode starts its oscillator at 55 Hz, so cycles are
    // 1/55 s until it pulls in; the flat count starts with the first cycle
    // after the DC estimate settles: 25 + 1 cycles, 26/55 = 0.4727 s,
    // within a cycle (±0.018 s), long before start-up's 4 s end.
    let on = when(&ev, EventKind::Fault(Fault::Stuck)).unwrap();
    assert!((on - 26.0 / 55.0).abs() < 1.0 / 55.0, "{on}");
}

#[test]
fn signed_codes_give_the_cycles_and_events_of_the_same_codes_unsigned() {
    // A two's-complement code c and the offset-binary code c + 2^(bits-1)
    // are one converter reading (common practice for converter codes), so
    // the detector must give the same events and the same demodulated
    // cycles from the first cycle on, on the frame path and the block path,
    // at 12 and 16 bits. (Before the DC estimate started at the signed
    // mid-scale, the first signed cycle was demodulated against a level
    // 30 720 codes off and the mains tracker learnt from it.)
    for bits in [12u8, 16] {
        let cfg = Config::touch().with_adc_bits(bits);
        let half = 1i32 << (bits - 1);
        let codes: Vec<i32> = (0..12_000u32)
            .map(|n| {
                let t = f64::from(n) / 2000.0;
                let a = if (1.0..1.5).contains(&t) || (3.5..4.2).contains(&t) {
                    0.2 * f64::from(half)
                } else {
                    0.01 * f64::from(half)
                };
                (a * (core::f64::consts::TAU * 50.0 * t).sin()).round() as i32
            })
            .collect();
        let signed: Vec<i16> = codes.iter().map(|&c| c as i16).collect();
        let unsigned: Vec<u16> = codes.iter().map(|&c| (c + half) as u16).collect();
        let mut fs = humsense::Frontend::<1, 0>::new(&cfg).unwrap();
        let mut fu = humsense::Frontend::<1, 0>::new(&cfg).unwrap();
        let mut cycles = 0;
        for (s, u) in signed.iter().zip(&unsigned) {
            match (fs.push_frame(&[*s]), fu.push_frame(&[*u])) {
                (Some(a), Some(b)) => {
                    assert_eq!(a.fund, b.fund, "{bits} bits, cycle {cycles}");
                    assert_eq!(a.end_sample, b.end_sample);
                    assert_eq!(i32::from(a.dc[0]) - 32_768, i32::from(b.dc[0]) - half);
                    cycles += 1;
                }
                (None, None) => {}
                other => panic!("{bits} bits: cycle ends differ: {other:?}"),
            }
        }
        assert!(cycles > 250, "{cycles}");
        let events = |block: &dyn Fn(&mut humsense::Detector, &mut Vec<Event>)| {
            let mut det = humsense::Detector::<1, 0>::new(cfg).unwrap();
            let mut ev = Vec::new();
            block(&mut det, &mut ev);
            ev
        };
        let from_signed = events(&|d, ev| {
            d.push_block(&signed, |e| ev.push(e));
        });
        let from_unsigned = events(&|d, ev| {
            d.push_block(&unsigned, |e| ev.push(e));
        });
        let ons = from_signed
            .iter()
            .filter(|e| e.kind == EventKind::TouchOn)
            .count();
        assert_eq!(ons, 2, "{bits} bits: {from_signed:?}");
        assert_eq!(from_signed, from_unsigned, "{bits} bits");
    }
}
