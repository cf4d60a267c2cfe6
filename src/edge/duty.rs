//! Duty to amplitude: the comparator's high fraction inverted to the hum's
//! amplitude in threshold units, hysteresis included (see the
//! [module docs](crate::edge) for the formula), in integers.

use crate::fixed::{div_rem_u32, isqrt_u64};

/// One threshold unit (`A = Vt`) in Q8 codes: 64 codes.
pub const UNIT_Q8: u32 = 64 << 8;
/// Largest amplitude reported: 256 threshold units (16 384 codes), below the
/// back end's saturation limit for its rails (0, 65 535).
pub const MAX_AMPLITUDE_Q8: u32 = 256 * UNIT_Q8;

/// `sin(π·x/2)` for `x` in Q16 (0 to 65 536), Q16. Odd Taylor series to
/// the 11th power in Q30 (truncation below 6·10⁻⁸), Horner form in `i64`.
pub fn sin_half_pi_q16(x_q16: u32) -> u32 {
    // (π/2)^k / k! with alternating signs, Q30 (computed).
    const C: [i64; 6] = [
        1_686_629_713,
        -693_598_668,
        85_569_306,
        -5_026_995,
        172_272,
        -3_864,
    ];
    let x = i64::from(x_q16.min(1 << 16)) << 14;
    let z = (x * x) >> 30;
    let mut p = 0i64;
    for c in C.iter().rev() {
        p = *c + ((p * z) >> 30);
    }
    let y = (x * p) >> 30;
    // Q30 to Q16, rounded; within 0..=2^16.
    (((y + (1 << 13)) >> 14).clamp(0, 1 << 16)) as u32
}

/// Amplitude in Q8 codes ([`UNIT_Q8`] per threshold unit) from a duty `d`
/// (Q16, high fraction of the cycle) and `η = h/(2·Vt)` (Q16):
/// `A/Vt = √(1/cos²(π·d) + η²/sin²(π·d))` ([module docs](crate::edge)), at most
/// [`MAX_AMPLITUDE_Q8`]. Per window.
pub fn duty_to_amplitude_q8(duty_q16: u32, eta_q16: u32) -> u32 {
    if duty_q16 >= 1 << 15 {
        return MAX_AMPLITUDE_Q8;
    }
    // cos(π·d) = sin(π/2·(1 − 2d)), sin(π·d) = sin(π/2·2d).
    let c = sin_half_pi_q16((1 << 16) - 2 * duty_q16);
    let s = sin_half_pi_q16(2 * duty_q16);
    // 2^30 / c is 2^14 / cos in Q8 codes; below 257 it exceeds the cap.
    if c <= 256 {
        return MAX_AMPLITUDE_Q8;
    }
    let t1 = div_rem_u32(1 << 30, c).0;
    let t2 = if eta_q16 == 0 {
        0
    } else if s <= 256 {
        return MAX_AMPLITUDE_Q8;
    } else {
        // η ≤ 1/2 (2^15), so η · 2^14 fits u32.
        div_rem_u32(eta_q16.min(1 << 15) << 14, s).0
    };
    let sq = u64::from(t1) * u64::from(t1) + u64::from(t2) * u64::from(t2);
    isqrt_u64(sq).min(MAX_AMPLITUDE_Q8)
}

#[cfg(test)]
mod tests {
    extern crate std;
    use super::*;

    /// High fraction of a comparator with threshold offset 1 (Vt) and
    /// hysteresis η = h/(2·Vt) on a sine of amplitude `a` (in Vt): rises at
    /// 1 + η, falls at 1 − η, `d = 1/2 − (asin(u₊) + asin(u₋))/(2π)` with
    /// `u± = (1 ± η)/a`; for η = 0 this is `acos(1/a)/π` (standard
    /// trigonometry).
    fn duty_closed_form(a: f64, eta: f64) -> f64 {
        let up = (1.0 + eta) / a;
        let down = (1.0 - eta) / a;
        0.5 - (up.asin() + down.asin()) / (2.0 * std::f64::consts::PI)
    }

    #[test]
    fn sin_half_pi_matches_the_sine() {
        // Reference: the host's f64 sine (IEEE 754, correctly rounded to
        // within an ulp on common libm).
        for x in (0..=65_536u32).step_by(7) {
            let want = (std::f64::consts::FRAC_PI_2 * f64::from(x) / 65_536.0).sin() * 65_536.0;
            let got = f64::from(sin_half_pi_q16(x));
            assert!((got - want).abs() <= 1.0, "x {x}: {got} vs {want}");
        }
        assert_eq!(sin_half_pi_q16(0), 0);
        assert_eq!(sin_half_pi_q16(65_536), 65_536);
    }

    #[test]
    fn duty_gives_the_amplitude_of_the_closed_form() {
        // A/Vt from 1.05 to 20; duty from the closed form (standard
        // trigonometry, see `duty_closed_form`), with and without
        // hysteresis; the amplitude back within 0.2 % (Q16 duty and Q8
        // amplitude rounding: 5·10⁻⁴ at A/Vt = 20).
        assert!((duty_closed_form(2.0, 0.0) - 1.0 / 3.0).abs() < 1e-12);
        assert!((duty_closed_form(2f64.sqrt(), 0.0) - 0.25).abs() < 1e-12);
        for permille in [0u32, 100, 500, 1_000] {
            let eta = f64::from(permille) / 2_000.0;
            let eta_q16 = div_rem_u32(permille << 16, 2_000).0;
            let mut a = 1.05f64;
            while a <= 20.0 {
                if a > 1.0 + eta {
                    let d = duty_closed_form(a, eta);
                    let d_q16 = (d * 65_536.0).round() as u32;
                    let got = f64::from(duty_to_amplitude_q8(d_q16, eta_q16)) / f64::from(UNIT_Q8);
                    let rel = (got - a).abs() / a;
                    assert!(rel < 2e-3, "A/Vt {a}, η {eta}: {got} (d {d})");
                    if permille == 500 && a < 1.5 {
                        // Ignoring the hysteresis would be far off here.
                        let plain = f64::from(duty_to_amplitude_q8(d_q16, 0)) / f64::from(UNIT_Q8);
                        assert!((plain - a).abs() / a > 0.02, "A/Vt {a}: {plain}");
                    }
                }
                a *= 1.07;
            }
        }
        // Beyond the cap, and a duty of one half or more.
        assert_eq!(duty_to_amplitude_q8(32_767, 0), MAX_AMPLITUDE_Q8);
        assert_eq!(duty_to_amplitude_q8(40_000, 0), MAX_AMPLITUDE_Q8);
        assert_eq!(duty_to_amplitude_q8(0, 0), UNIT_Q8);
        assert_eq!(duty_to_amplitude_q8(0, 3_000), MAX_AMPLITUDE_Q8);
    }
}
