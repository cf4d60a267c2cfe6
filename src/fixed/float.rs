//! `f32` fields read from their IEEE bits (no soft float at construction),
//! and the float display helpers.

use super::*;

/// Frequency in hertz that a phase step represents at `rate_hz`
/// (`step · rate / 2^32`). Per-cycle or diagnostic use only (floating point).
pub fn step_to_hz(step: u32, rate_hz: u32) -> f32 {
    // f64 is avoided to keep the Cortex-M0 soft-float cost small; f32 holds
    // 24 bits, enough for 0.001 Hz resolution at mains frequencies.
    (step as f32) * (rate_hz as f32) / (TURN as f32)
}

/// Converts a non-negative `f32` to fixed point with `frac_bits` fraction
/// bits, rounding half up and saturating at `u32::MAX` (NaN, negatives and
/// subnormals give 0). Construction-time use only.
///
/// Works on the IEEE 754 bits with integer shifts, so no floating-point
/// routine is linked on cores without an FPU, and every target gets the
/// same bits.
pub fn f32_to_fixed(v: f32, frac_bits: u32) -> u32 {
    let bits = v.to_bits();
    let exp = (bits >> 23) & 0xff;
    if bits >> 31 != 0 || exp == 0 {
        return 0;
    }
    if exp == 0xff {
        // Infinity saturates; NaN is 0.
        return if bits & 0x7f_ffff == 0 { u32::MAX } else { 0 };
    }
    let mant = (bits & 0x7f_ffff) | 0x80_0000;
    // v = mant · 2^(exp − 150), so v · 2^frac = mant · 2^(exp − 150 + frac).
    // In 32 bits (no 64-bit shift, a library call on Cortex-M0):
    // 2^23 ≤ mant < 2^24, so a left shift of 9 or more saturates, and a
    // right shift of 25 or more rounds to 0 (mant + 2^(s−1) < 2^s).
    let sh = exp as i32 - 150 + frac_bits as i32;
    if sh >= 0 {
        if sh > 8 {
            u32::MAX
        } else {
            mant << sh
        }
    } else {
        let s = sh.unsigned_abs();
        if s > 24 {
            0
        } else {
            (mant + (1 << (s - 1))) >> s
        }
    }
}

/// `v · 2^k`, exactly as the IEEE 754 product with the power of two (round
/// to nearest, ties to even, where the result is subnormal; ±infinity on
/// overflow), for `k` from −64 to 64 (clamped), by integer arithmetic on
/// the bits: no floating-point routine is linked on cores without an FPU.
/// Infinities and zeros keep their value and sign; a NaN stays a NaN
/// (quieted).
pub fn f32_mul_pow2(v: f32, k: i32) -> f32 {
    let bits = v.to_bits();
    let sign = bits & 0x8000_0000;
    let exp = ((bits >> 23) & 0xff) as i32;
    let frac = bits & 0x7f_ffff;
    if exp == 0xff {
        // Infinity stays; a NaN is returned quieted.
        return f32::from_bits(if frac == 0 { bits } else { bits | 0x40_0000 });
    }
    // v = m · 2^e with an integer significand m below 2^24.
    let (mut m, mut e) = if exp == 0 {
        (frac, -149)
    } else {
        (frac | 0x80_0000, exp - 150)
    };
    if m == 0 {
        return v;
    }
    e += k.clamp(-64, 64);
    // Normalise: the leading bit at 23 while the exponent allows.
    while m < 0x80_0000 && e > -149 {
        m <<= 1;
        e -= 1;
    }
    if e > 104 {
        // 2^24 · 2^104 = 2^128: beyond the largest finite value.
        return f32::from_bits(sign | 0x7f80_0000);
    }
    if e < -149 {
        // Subnormal: shift right, rounding half to even.
        let s = (-149 - e) as u32;
        if s > 25 {
            return f32::from_bits(sign);
        }
        let keep = m >> s;
        let rest = m & ((1 << s) - 1);
        let half = 1 << (s - 1);
        m = if rest > half || (rest == half && keep & 1 == 1) {
            keep + 1
        } else {
            keep
        };
        e = -149;
    }
    // Subnormal (exponent field 0) when m < 2^23; a rounding carry to
    // 2^23 is the smallest normal number, which the same sum encodes.
    let field = if m >= 0x80_0000 { (e + 150) as u32 } else { 0 };
    f32::from_bits(sign | ((field << 23) + (m & 0x7f_ffff)))
}

/// 2^(2^-k) in Q30 for k = 1..=16 (computed: round(2^(2^-k) · 2^30)).
const EXP2_FRAC_Q30: [u32; 16] = [
    1_518_500_250,
    1_276_901_417,
    1_170_923_762,
    1_121_280_436,
    1_097_253_708,
    1_085_434_106,
    1_079_572_136,
    1_076_653_033,
    1_075_196_443,
    1_074_468_888,
    1_074_105_294,
    1_073_923_544,
    1_073_832_680,
    1_073_787_251,
    1_073_764_537,
    1_073_753_181,
];

/// log2(10)/20 in Q32 (computed: round(0.166 096 404 744 · 2^32)).
const LOG2_10_OVER_20_Q32: u32 = 713_378_626;

/// The amplitude ratio of a level in decibels, `10^(db/20)`, in Q16
/// (65 536 = 1), for `db` from 0 to 60 (saturating above). Integer only:
/// `10^(db/20) = 2^(db · log2(10)/20)`, the fractional power of two built
/// from its bits with a 16-entry table of 2^(2^-k). Accurate to about
/// 2·10^-5 relative. Construction-time use only.
pub fn db_to_ratio_q16(db: f32) -> u32 {
    let db_q16 = f32_to_fixed(db, 16).min(60 << 16);
    // log2 of the ratio, Q16 (below 10 · 2^16).
    let y = (mul_wide(db_q16, LOG2_10_OVER_20_Q32) >> 32) as u32;
    let int = y >> 16;
    let frac = y & 0xffff;
    // 2^frac in Q30 (below 2^31).
    let mut r: u32 = 1 << 30;
    for (k, c) in EXP2_FRAC_Q30.iter().enumerate() {
        if frac & (1 << (15 - k)) != 0 {
            // r, c < 2^31: the product fits, and so does the result.
            r = (mul_wide(r, *c) >> 30) as u32;
        }
    }
    // Times 2^int, Q30 → Q16, rounding down: ⌊r · 2^int / 2^14⌋. The
    // clamp at 60 dB keeps int ≤ 9, so this is one right shift.
    r >> (14 - int.min(14))
}

#[cfg(test)]
mod tests {
    extern crate std;
    use super::*;

    #[test]
    fn power_of_two_scaling_matches_the_float_product() {
        // Reference: the host's IEEE 754 f32 multiplication by an exact
        // power of two (common practice).
        let mut vals = std::vec![
            0.0f32,
            -0.0,
            1.0,
            -1.0,
            2.0,
            0.1,
            2.8,
            10_000.0,
            f32::MAX,
            f32::MIN_POSITIVE,
            f32::MIN_POSITIVE / 3.0,
            1e-45,
            -3e-40,
            f32::INFINITY,
            f32::NEG_INFINITY,
        ];
        let mut x = 0x1234_5678u32;
        for _ in 0..3_000 {
            // xorshift32 (13, 17, 5): bit patterns over the whole range.
            x ^= x << 13;
            x ^= x >> 17;
            x ^= x << 5;
            vals.push(f32::from_bits(x));
        }
        for v in vals {
            for k in -30..=30 {
                let want = v * 2f32.powi(k);
                let got = f32_mul_pow2(v, k);
                if want.is_nan() {
                    assert!(got.is_nan(), "{v} {k}");
                } else {
                    assert_eq!(got.to_bits(), want.to_bits(), "{v:e} * 2^{k}");
                }
            }
        }
    }

    #[test]
    fn db_ratios_match_std() {
        // Reference: the standard library's f64 powf (host only).
        for tenths in 0..=600u32 {
            let db = tenths as f32 / 10.0;
            let want = 10f64.powf(f64::from(db) / 20.0) * 65_536.0;
            let got = f64::from(db_to_ratio_q16(db));
            assert!(
                (got - want).abs() <= want * 3e-5 + 1.0,
                "{db} dB: {got} vs {want}"
            );
        }
        assert_eq!(db_to_ratio_q16(0.0), 65_536);
    }

    #[test]
    fn fixed_conversions_saturate() {
        assert_eq!(f32_to_fixed(1.5, 8), 384);
        assert_eq!(f32_to_fixed(f32::NAN, 8), 0);
        assert_eq!(f32_to_fixed(1e30, 8), u32::MAX);
        assert_eq!(f32_to_fixed(f32::INFINITY, 8), u32::MAX);
        assert_eq!(f32_to_fixed(-2.0, 8), 0);
        assert_eq!(f32_to_fixed(0.0, 8), 0);
        // Round half up: 2.8 · 256 = 716.8 (f32 2.79999995 · 256 = 716.79999).
        assert_eq!(f32_to_fixed(2.8, 8), 717);
        // Exactly half: up.
        assert_eq!(f32_to_fixed(0.001_953_125, 8), 1);
        // Against the f64 reference for a spread of values.
        for k in 0..2000u32 {
            let v = k as f32 * 0.37 + 0.01;
            let want = (f64::from(v) * 16.0 + 0.5).floor() as u32;
            assert_eq!(f32_to_fixed(v, 4), want, "{v}");
        }
        assert_eq!(mul_q8(u32::MAX, 1024), u32::MAX);
        assert_eq!(mul_q4(100, 16), 100);
    }
}
