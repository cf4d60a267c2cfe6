//! The on-target tests' signal generator (`tests/cortexm/gen.rs`) against
//! its own docs, on the host.
#![allow(
    clippy::unwrap_used,
    clippy::expect_used,
    clippy::indexing_slicing,
    clippy::panic
)]

#[path = "cortexm/gen.rs"]
#[allow(dead_code)]
mod gen;

#[test]
fn integer_sine_is_within_its_documented_error() {
    // Reference: f64::sin (Rust std), scaled to Q15, at 2^22 phases evenly
    // spread over the turn (every 1 024th phase step) and at the quadrant
    // ends. The docs' bound: within 6.2 Q15 codes, peak ±32 764.
    let mut worst = 0.0f64;
    let mut peak = 0i32;
    let phases = (0..1u64 << 22).map(|k| (k << 10) as u32).chain([
        0x3fff_ffff,
        0x4000_0000,
        0x4000_0001,
        0xbfff_ffff,
        0xc000_0000,
        u32::MAX,
    ]);
    for p in phases {
        let s = gen::sin_q15(p);
        let want = 32_768.0 * (core::f64::consts::TAU * f64::from(p) / 4_294_967_296.0).sin();
        worst = worst.max((f64::from(s) - want).abs());
        peak = peak.max(s.abs());
    }
    println!("worst {worst:.3} codes, peak {peak}");
    assert!(worst < 6.2, "worst {worst} codes");
    assert_eq!(peak, 32_764);
}

/// A clean one-channel source: bias 0, wide rails, no noise or spikes.
fn clean(mains_mhz: u32, drift_mhz: u32, drift_ms: u32, third: i32, fifth: i32) -> gen::Source<1> {
    const KNOTS: &[gen::Knot] = &[gen::k(0, 10_000)];
    let spec = gen::SignalSpec {
        rate_hz: 2_000,
        mains_mhz,
        bias: 0,
        lo: -32_768,
        hi: 32_767,
        spike_ms: 0,
        drift_mhz,
        drift_ms,
        seed: 1,
    };
    let chans = [gen::ChannelSpec {
        phase: 0,
        knots: KNOTS,
        third_q8: third,
        fifth_q8: fifth,
        noise_x16: 0,
    }];
    gen::Source::new(spec, &chans)
}

#[test]
fn drift_follows_the_documented_triangle() {
    // Reference: the phase of a linear frequency sweep, f(t) = f0 + r·t,
    // is ∫f = f0·t + r·t²/2 (calculus; a triangle is two such sweeps).
    // 49.9 → 50.1 Hz over the first 4 s (r = 0.05 Hz/s), back down over
    // the next 4 s. The k-th rising zero crossing of the sine lies where
    // that integral reaches k turns; crossings are interpolated linearly
    // between samples. Tolerance: 0.1 ms (a fifth of a sample).
    let mut src = clean(50_000, 100, 8_000, 0, 0);
    let rate = 2_000.0f64;
    let mut prev = src.frame()[0];
    let mut crossings = std::vec::Vec::new();
    for n in 1..16_000u32 {
        let x = src.frame()[0];
        if prev < 0 && x >= 0 {
            let frac = f64::from(-prev) / f64::from(x - prev);
            crossings.push((f64::from(n - 1) + frac) / rate);
        }
        prev = x;
    }
    let turns_at = |t: f64| -> f64 {
        if t <= 4.0 {
            49.9 * t + 0.025 * t * t
        } else {
            let u = t - 4.0;
            (49.9 * 4.0 + 0.025 * 16.0) + 50.1 * u - 0.025 * u * u
        }
    };
    // Crossing k (from 1) is turn k: the sine starts at phase 0 rising.
    let mut worst = 0.0f64;
    for (k, &t) in crossings.iter().enumerate() {
        let want = (k + 1) as f64;
        // Time error from the turn error at the local frequency.
        let err = (turns_at(t) - want) / 50.0;
        worst = worst.max(err.abs());
    }
    println!("{} crossings, worst {:.6} s", crossings.len(), worst);
    assert!(
        crossings.len() >= 399 && crossings.len() <= 400,
        "{}",
        crossings.len()
    );
    assert!(worst < 1e-4, "worst {worst} s");
}

#[test]
fn harmonics_have_their_documented_fractions() {
    // Reference: rustfft 6 (general-purpose FFT crate from the registry) on
    // one second of a clean 50 Hz source (bins of 1 Hz): the third and
    // fifth harmonics at 8/256 and 5/256 of the fundamental, within 0.1
    // percentage point (the integer sine's error is below 6.2/32 768).
    use rustfft::{num_complex::Complex, FftPlanner};
    let mut src = clean(50_000, 0, 0, 8, 5);
    let mut buf: std::vec::Vec<Complex<f64>> = (0..2_000)
        .map(|_| Complex::new(f64::from(src.frame()[0]), 0.0))
        .collect();
    FftPlanner::new()
        .plan_fft_forward(buf.len())
        .process(&mut buf);
    let mag = |bin: usize| buf[bin].norm();
    let (f1, f3, f5) = (mag(50), mag(150), mag(250));
    println!("third {:.5} fifth {:.5}", f3 / f1, f5 / f1);
    assert!((f3 / f1 - 8.0 / 256.0).abs() < 1e-3, "third {}", f3 / f1);
    assert!((f5 / f1 - 5.0 / 256.0).abs() < 1e-3, "fifth {}", f5 / f1);
}
