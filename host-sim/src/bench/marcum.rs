//! The first-order Marcum Q-function and the optimum detector's
//! required amplitude.
//!
//! `Q1(a, b)` is the probability that the envelope of a unit-variance
//! complex Gaussian (per component) around a fixed phasor of length `a`
//! exceeds `b` (Marcum & Swerling, IRE Trans. IT-6(2), 1960). Computed here
//! from its Poisson-mixture series: with `x = a²/2` and `y = b²/2`,
//! `Q1(a, b) = Σ_k e^(−x) x^k/k! · P(Poisson(y) ≤ k)` (the noncentral
//! chi-square law with two degrees of freedom written as a Poisson mixture
//! of central ones; Johnson, Kotz & Balakrishnan, Continuous Univariate
//! Distributions Vol. 2, ch. 29, from memory). Every term is positive, so
//! the sum is accurate to the last bits for the arguments a detector needs.
//!
//! The optimum detector of a sinusoid of known frequency and unknown phase
//! in white Gaussian noise (the quadrature detector over `N` samples, Kay,
//! Fundamentals of Statistical Signal Processing Vol. II, §7.6.2):
//! `Pfa = exp(−γ²/2)` in noise units, `Pd = Q1(√λ, √(2 ln(1/Pfa)))` with
//! `λ = N·A²/(2σ²)` (shared/REFERENCES.md).

/// `Q1(a, b)` for `a, b ≥ 0` (NaN for negative or non-finite input).
pub fn q1(a: f64, b: f64) -> f64 {
    if !(a.is_finite() && b.is_finite()) || a < 0.0 || b < 0.0 {
        return f64::NAN;
    }
    let x = a * a / 2.0;
    let y = b * b / 2.0;
    // The Poisson(x) weights and the Poisson(y) cumulative sums, both
    // advanced term by term in the log domain (no overflow for large x, y).
    let ln_x = x.ln();
    let ln_y = y.ln();
    let mut ln_wx = -x; // ln(e^-x x^k / k!) at k = 0
    let mut ln_py = -y; // ln(e^-y y^j / j!) at j = 0
    let mut cdf_y = (-y).exp();
    let mut sum = 0.0;
    // Enough terms: past the Poisson(x) mean by 40 standard deviations.
    let kmax = (x + 40.0 * x.sqrt() + 60.0).ceil() as u64;
    for k in 0..=kmax {
        if k > 0 {
            let kf = k as f64;
            ln_wx += if x > 0.0 {
                ln_x - kf.ln()
            } else {
                f64::NEG_INFINITY
            };
            ln_py += if y > 0.0 {
                ln_y - kf.ln()
            } else {
                f64::NEG_INFINITY
            };
            cdf_y = (cdf_y + ln_py.exp()).min(1.0);
        }
        sum += ln_wx.exp() * cdf_y;
    }
    sum.clamp(0.0, 1.0)
}

/// Threshold `γ` (noise units) of an envelope detector with false-alarm
/// probability `pfa` under noise alone (Rayleigh: `Pfa = exp(−γ²/2)`).
pub fn rayleigh_threshold(pfa: f64) -> f64 {
    (2.0 * (1.0 / pfa).ln()).sqrt()
}

/// `√λ` at which `Q1(√λ, γ) = pd`, by bisection (Q1 rises with its first
/// argument).
pub fn required_sqrt_lambda(pd: f64, gamma: f64) -> f64 {
    let (mut lo, mut hi) = (0.0f64, gamma + 20.0);
    for _ in 0..200 {
        let mid = 0.5 * (lo + hi);
        if q1(mid, gamma) < pd {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    0.5 * (lo + hi)
}

/// The amplitude (in the noise's units) the optimum detector over `n`
/// samples of noise `sigma` needs for detection probability `pd` at
/// false-alarm probability `pfa` per decision: `A = σ·√(2λ/N)`.
pub fn optimum_amplitude(n: f64, sigma: f64, pd: f64, pfa: f64) -> f64 {
    let sl = required_sqrt_lambda(pd, rayleigh_threshold(pfa));
    sigma * (2.0 * sl * sl / n).sqrt()
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The Rician tail by direct numerical integration, an independent
    /// route: `Q1(a, b) = ∫_b^∞ x e^(−(x²+a²)/2) I0(ax) dx`, with
    /// `e^(−z)·I0(z) = (1/π)∫_0^π e^(z(cos θ − 1)) dθ` (Abramowitz & Stegun
    /// 9.6.16), both by Simpson's rule.
    fn q1_by_integral(a: f64, b: f64) -> f64 {
        let i0e = |z: f64| {
            let n = 400;
            let h = std::f64::consts::PI / n as f64;
            let f = |t: f64| (z * (t.cos() - 1.0)).exp();
            let mut s = f(0.0) + f(std::f64::consts::PI);
            for i in 1..n {
                s += f(i as f64 * h) * if i % 2 == 1 { 4.0 } else { 2.0 };
            }
            s * h / 3.0 / std::f64::consts::PI
        };
        // Integrand with the exponent combined: x e^(−(x−a)²/2) · I0e(ax).
        let g = |x: f64| x * (-(x - a) * (x - a) / 2.0).exp() * i0e(a * x);
        let top = b.max(a) + 40.0;
        let n = 4_000;
        let h = (top - b) / n as f64;
        let mut s = g(b) + g(top);
        for i in 1..n {
            s += g(b + i as f64 * h) * if i % 2 == 1 { 4.0 } else { 2.0 };
        }
        s * h / 3.0
    }

    #[test]
    fn no_signal_is_the_rayleigh_tail() {
        // Q1(0, b) = exp(−b²/2) (the Rayleigh law, Kay Vol. II §7.6.2);
        // γ/σ = 3.717 at 1e-3 and 5.257 at 1e-6 (shared/REFERENCES.md,
        // computed).
        for b in [0.0, 0.5, 1.0, 2.0, 4.0, 6.0] {
            let want = (-b * b / 2.0f64).exp();
            assert!(
                (q1(0.0, b) - want).abs() < 1e-12 * want.max(1e-300),
                "b={b}"
            );
        }
        assert!((rayleigh_threshold(1e-3) - 3.717).abs() < 5e-4);
        assert!((rayleigh_threshold(1e-6) - 5.257).abs() < 5e-4);
        assert!((rayleigh_threshold(1e-9) - 6.438).abs() < 5e-4);
    }

    #[test]
    fn series_matches_the_rician_integral() {
        for &(a, b) in &[
            (0.5, 0.5),
            (1.0, 2.0),
            (2.0, 1.0),
            (3.0, 3.7),
            (5.0, 5.257),
            (7.0, 4.0),
            (10.0, 12.0),
            (20.0, 15.0),
        ] {
            let s = q1(a, b);
            let i = q1_by_integral(a, b);
            assert!((s - i).abs() < 1e-7, "a={a} b={b}: {s} vs {i}");
        }
    }

    #[test]
    fn worked_detection_example() {
        // shared/REFERENCES.md, computed from Kay Vol. II's formulas: N =
        // 200, σ² = 1, Pfa = 1e-6: A = 0.3/0.5/0.7 give Pd = 0.0165/0.437/
        // 0.966 (λ = N A²/2σ²).
        let gamma = rayleigh_threshold(1e-6);
        for (a, pd) in [(0.3, 0.0165), (0.5, 0.437), (0.7, 0.966)] {
            let lambda: f64 = 200.0 * a * a / 2.0;
            let got = q1(lambda.sqrt(), gamma);
            // The table gives three significant figures.
            assert!(
                (got - pd).abs() <= 0.5e-3 * if pd < 0.1 { 0.1 } else { 1.0 },
                "A={a}: {got}"
            );
        }
    }

    #[test]
    fn single_sample_snr_for_pd_09_at_pfa_1e6() {
        // shared/REFERENCES.md (computed; Albersheim's equation from Tufts &
        // Cann, IEEE Trans. AES-19(4), 1983): Pd 0.9, Pfa 1e-6, N = 1 needs
        // 13.18 dB exactly and 13.11 dB by Albersheim, whose SNR is λ/2.
        let sl = required_sqrt_lambda(0.9, rayleigh_threshold(1e-6));
        let snr_db = 10.0 * (sl * sl / 2.0).log10();
        assert!((snr_db - 13.18).abs() < 0.006, "{snr_db}");
        let albersheim = {
            let (pfa, pd, n): (f64, f64, f64) = (1e-6, 0.9, 1.0);
            let a = (0.62 / pfa).ln();
            let b = (pd / (1.0 - pd)).ln();
            -5.0 * n.log10()
                + (6.2 + 4.54 / (n + 0.44).sqrt()) * (a + 0.12 * a * b + 1.7 * b).log10()
        };
        // Within the equation's stated 0.2 dB of the exact value, and at
        // the value the table gives.
        assert!((albersheim - snr_db).abs() < 0.2);
        assert!((albersheim - 13.11).abs() < 0.006, "{albersheim}");
    }
}
