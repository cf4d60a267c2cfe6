//! The demodulator checked against sources outside the project: a
//! general-purpose FFT crate, the Fourier series of the half-wave rectified
//! sine, and the statistics of the quadrature detector in white noise.
#![allow(
    clippy::unwrap_used,
    clippy::expect_used,
    clippy::indexing_slicing,
    clippy::panic
)]

mod support;

use humsense::{Config, Cycle, Frontend, MainsMode};
use rustfft::{num_complex::Complex, FftPlanner};
use support::Rng;

const RATE: f64 = 2000.0;
const N: usize = 40; // samples per 50 Hz cycle at 2 kHz

fn fixed_50() -> Config {
    Config::touch().with_mains(MainsMode::Hz50)
}

/// Feeds `x` and returns every cycle.
fn cycles<const H: usize>(cfg: &Config, x: &[u16]) -> Vec<Cycle<1, H>> {
    let mut fe = Frontend::<1, H>::new(cfg).expect("valid config");
    x.iter().filter_map(|&s| fe.push_frame(&[s])).collect()
}

fn amp(z: humsense::demod::Iq) -> f64 {
    (z.power() as f64).sqrt() / 256.0
}

#[test]
fn amplitudes_match_rustfft_bins_on_the_same_buffer() {
    // Reference: rustfft 6 (general-purpose FFT crate from the registry).
    // For a window of n samples, the amplitude of bin k is 2|X[k]|/n.
    let mut rng = Rng::new(5);
    let x: Vec<u16> = (0..N * 200)
        .map(|k| {
            let th = std::f64::consts::TAU * 50.0 * k as f64 / RATE + 0.7;
            let v = 2048.0
                + 300.0 * th.sin()
                + 45.0 * (2.0 * th + 0.2).sin()
                + 60.0 * (3.0 * th).cos()
                + 3.0 * rng.gauss();
            v.round() as u16
        })
        .collect();
    let mut planner = FftPlanner::<f64>::new();
    // First with the tracker held (track_min_codes above any amplitude):
    // the reference stays exactly on the 50 Hz bin and every window is 40
    // samples, like for like. Then tracking, once locked: the reference
    // wanders by a few parts in 10^5, which must not matter.
    for hold in [true, false] {
        let mut cfg = fixed_50();
        if hold {
            cfg.track_min_codes = 10_000.0;
        }
        let mut fe = Frontend::<1, 2>::new(&cfg).expect("valid config");
        let mut locked: Vec<Cycle<1, 2>> = Vec::new();
        for &s in &x {
            if let Some(c) = fe.push_frame(&[s]) {
                if hold || fe.tracker().locked() {
                    locked.push(c);
                }
            }
        }
        let mut checked = 0;
        for c in locked.iter().skip(2) {
            let n = c.samples as usize;
            let end = c.end_sample as usize;
            let mut buf: Vec<Complex<f64>> = x[end + 1 - n..=end]
                .iter()
                .map(|&s| Complex::new(f64::from(s), 0.0))
                .collect();
            assert_eq!(n, N, "window at sample {end}");
            planner.plan_fft_forward(n).process(&mut buf);
            let bin = |k: usize| 2.0 * buf[k].norm() / n as f64;
            let ours = [amp(c.fund[0]), amp(c.harm[0][0]), amp(c.harm[0][1])];
            for (k, got) in ours.iter().enumerate() {
                let want = bin(k + 1);
                // Tolerance: the table's phase steps and the previous-cycle
                // DC estimate, 0.1 % plus a tenth of a code; in a harmonic
                // bin, the phase steps of its reference also let the strong
                // fundamental through: an error of up to π/512 rad (the
                // table has 512 bins a turn) in the reference at each pair
                // midpoint, so at most A₁·π/512 when they all line up;
                // while tracking, the reference sits off the bin by the
                // loop's jitter (a few parts in 10^5) and the strong
                // fundamental leaks into the weaker harmonic bins: up to
                // 0.1 % of the fundamental more.
                let steps = if k == 0 {
                    0.0
                } else {
                    bin(1) * std::f64::consts::PI / 512.0
                };
                let leak = if hold || k == 0 { 0.0 } else { 1e-3 * bin(1) };
                assert!(
                    (got - want).abs() < 1e-3 * want + 0.1 + steps + leak,
                    "bin {}: {got} vs {want}",
                    k + 1
                );
            }
            checked += 1;
        }
        assert!(checked > 150, "only {checked} windows compared");
    }
}

#[test]
fn half_wave_rectified_sine_mean_and_fundamental() {
    // Half-wave rectified sine of peak Vp: mean Vp/π, fundamental Vp/2,
    // 2nd harmonic 2Vp/(3π) = 0.21221 Vp, no 3rd (standard Fourier series;
    // Hayt, Kemmerly & Durbin, Engineering Circuit Analysis, ch. 18,
    // secondary). Here the ADC clips a sine biased at 0 V, as a
    // single-supply amplifier does.
    let vp = 2000.0;
    let x: Vec<u16> = (0..N * 30)
        .map(|k| {
            let th = std::f64::consts::TAU * 50.0 * k as f64 / RATE + 0.25;
            (vp * th.sin()).round().clamp(0.0, 4095.0) as u16
        })
        .collect();
    let cfg = fixed_50();
    let mut fe = Frontend::<1, 2>::new(&cfg).expect("valid config");
    let mut last = None;
    for &s in &x {
        if let Some(c) = fe.push_frame(&[s]) {
            last = Some(c);
        }
    }
    let c = last.expect("cycles ended");
    let mean = f64::from(fe.dc(0).expect("channel 0"));
    assert!(
        (mean - vp / std::f64::consts::PI).abs() < 0.002 * vp,
        "mean {mean}"
    );
    assert!(
        (amp(c.fund[0]) - vp / 2.0).abs() < 0.002 * vp,
        "fundamental {}",
        amp(c.fund[0])
    );
    let h2 = amp(c.harm[0][0]);
    assert!((h2 - 0.21221 * vp).abs() < 0.003 * vp, "2nd harmonic {h2}");
    assert!(
        amp(c.harm[0][1]) < 0.003 * vp,
        "3rd harmonic {}",
        amp(c.harm[0][1])
    );
}

/// Per-cycle magnitudes of white Gaussian noise of RMS `sigma` codes.
fn noise_magnitudes(cfg: &Config, sigma: f64, cycles_n: usize, seed: u64) -> Vec<f64> {
    let mut rng = Rng::new(seed);
    let x: Vec<u16> = (0..N * cycles_n)
        .map(|_| (2048.0 + sigma * rng.gauss()).round() as u16)
        .collect();
    cycles::<0>(cfg, &x)
        .iter()
        .skip(4)
        .map(|c| amp(c.fund[0]))
        .collect()
}

#[test]
fn noise_only_magnitude_is_rayleigh() {
    // Kay, Fundamentals of Statistical Signal Processing Vol. II (1998),
    // §7.6.2 (section number from memory): with unknown phase the
    // quadrature magnitude of white noise is Rayleigh, Pfa = exp(−γ²/2σ²),
    // where here σ² = 2σw²/n is the variance of each of i and q.
    // γ/σ = 2.146 gives Pfa 0.1 and 3.035 gives 0.01 (computed).
    let sigma_w = 12.0;
    // The ADC adds quantisation noise of 1/12 code² (Kester, MT-001).
    let var_w = sigma_w * sigma_w + 1.0 / 12.0;
    let s = (2.0 * var_w / N as f64).sqrt();
    let m = noise_magnitudes(&fixed_50(), sigma_w, 40_000, 17);
    let total = m.len() as f64;
    for (g, pfa) in [(2.146, 0.1), (3.035, 0.01)] {
        let p = m.iter().filter(|&&a| a > g * s).count() as f64 / total;
        // Five binomial standard deviations.
        let tol = 5.0 * (pfa * (1.0 - pfa) / total).sqrt();
        assert!(
            (p - pfa).abs() < tol,
            "γ/σ {g}: measured {p}, expected {pfa} ± {tol}"
        );
    }
}

#[test]
fn coherent_averaging_gains_as_an_exponential_average() {
    // An exponential average with α = 2^-k leaves α/(2 − α) of the white
    // noise variance (standard; REFERENCES.md, computed): k = 2 gives 1/7.
    // The mean square of the Rayleigh magnitude is 2σ², so the ratio of
    // mean squares with and without averaging must be 1/7.
    use humsense::Backend;
    let cfg0 = fixed_50();
    let mut cfg2 = cfg0;
    cfg2.avg_shift = 2;
    let mut rng = Rng::new(3);
    let x: Vec<u16> = (0..N * 30_000)
        .map(|_| (2048.0 + 12.0 * rng.gauss()).round() as u16)
        .collect();
    let cyc = cycles::<0>(&cfg0, &x);
    let mean_sq = |cfg: &Config| {
        let mut be = Backend::<1, 0>::new(cfg).expect("valid");
        let mut acc = 0.0;
        let mut n = 0.0;
        for (k, c) in cyc.iter().enumerate() {
            be.process(c, |_| {});
            if k > 100 {
                let a = f64::from(be.snapshot(0).expect("ch 0").amplitude_q8) / 256.0;
                acc += a * a;
                n += 1.0;
            }
        }
        acc / n
    };
    let ratio = mean_sq(&cfg2) / mean_sq(&cfg0);
    assert!((ratio - 1.0 / 7.0).abs() < 0.01, "variance ratio {ratio}");
}

#[test]
fn noise_estimate_is_the_mean_absolute_deviation_of_the_amplitude() {
    // The back end estimates noise from the change of amplitude between
    // cycles, scaled by 1/√(2α) for an exponential average with α = 2^-k
    // (standard EMA result: var(Δy) = 2α·var(y) for white input) and by
    // √(2/π)/(2/√π) = 1/√2 from E|Δ| to the mean absolute deviation of a
    // Gaussian. Checked against the empirical MAD of the amplitudes.
    use humsense::Detector;
    for k in [0u8, 2] {
        let mut cfg = fixed_50();
        cfg.avg_shift = k;
        let mut rng = Rng::new(u64::from(k) + 40);
        let x: Vec<u16> = (0..N * 8000)
            .map(|i| {
                let th = std::f64::consts::TAU * 50.0 * i as f64 / RATE;
                (2048.0 + 200.0 * th.sin() + 20.0 * rng.gauss()).round() as u16
            })
            .collect();
        let mut det: Detector = Detector::new(cfg).expect("valid");
        let mut amps = Vec::new();
        let mut noise_sum = 0.0;
        for (i, &s) in x.iter().enumerate() {
            let _ = det.push(s);
            if i % N == N - 1 && i > N * 500 {
                let snap = det.snapshot(0).expect("ch 0");
                amps.push(f64::from(snap.amplitude_q8) / 256.0);
                noise_sum += f64::from(snap.noise_q8) / 256.0;
            }
        }
        // The estimate's own average over the run (a single value of an
        // exponential average with α = 1/64 scatters by about 7 %).
        let noise = noise_sum / amps.len() as f64;
        let mean = amps.iter().sum::<f64>() / amps.len() as f64;
        let mad = amps.iter().map(|a| (a - mean).abs()).sum::<f64>() / amps.len() as f64;
        assert!(
            (noise / mad - 1.0).abs() < 0.05,
            "avg_shift {k}: estimate {noise}, MAD {mad}"
        );
    }
}
