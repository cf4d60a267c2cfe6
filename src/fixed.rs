//! Fixed-point formats and integer helpers shared by every stage.
//!
//! Formats used across the crate (the name says the format):
//! - **Q14** sine values (`nco`'s table): `i16`, 16 383 = +1.0 less one
//!   LSB (Q14 rather than Q15 so that a pair sum times a table value fits
//!   `i32`; see [`nco`](crate::nco)).
//! - **Q8 amplitudes** (`…_q8`): `u32` or `i32`, 256 = one ADC code of
//!   amplitude (peak, not RMS).
//! - **Q12 state** (`…_q12`): `u32`, 4096 = one ADC code; used where an
//!   exponential average needs fraction bits below Q8.
//! - **Phase** (`u32`): 2^32 = one turn; it wraps, and wrapping is the point.
//!
//! Every helper here is total: it returns a value for every input and never
//! panics.

/// One turn of phase in the `u32` phase format, as `u64` (2^32).
pub const TURN: u64 = 1 << 32;

/// Phase step per sample, in `u32` turns (2^32 = one turn), for a tone of
/// `freq_mhz` millihertz sampled at `rate_hz` hertz.
///
/// `step = round(freq · 2^32 / rate)`. Usable in `const` context, so the
/// 50 Hz and 60 Hz steps for a fixed rate are compile-time constants.
/// Returns 0 when `rate_hz` is 0 and saturates at `u32::MAX` when the tone is
/// at or above the sample rate (neither happens with a validated config).
///
/// ```
/// use humsense::fixed::phase_step;
/// // 50 Hz at 2 kHz: exactly 40 samples per cycle, 2^32 / 40.
/// const STEP: u32 = phase_step(50_000, 2_000);
/// assert_eq!(STEP, 107_374_182);
/// ```
pub const fn phase_step(freq_mhz: u32, rate_hz: u32) -> u32 {
    if rate_hz == 0 {
        return 0;
    }
    let den = mul_wide(rate_hz, 1000);
    let num = ((freq_mhz as u64) << 32) + den / 2;
    let step = div_u64(num, den);
    if step > u32::MAX as u64 {
        u32::MAX
    } else {
        step as u32
    }
}

/// `num / den` (`den > 0`) by restoring long division: shifts by one,
/// compares and subtractions only, so no 64-bit division routine (0.9 KiB
/// on Cortex-M0) and no variable 64-bit shift (a library call there) is
/// linked into firmware. Used at construction and at the 50/60 Hz choice,
/// never per sample or per cycle.
const fn div_u64(num: u64, den: u64) -> u64 {
    let mut q = 0u64;
    let mut r = 0u64;
    let mut n = num;
    let mut i = 0;
    while i < 64 {
        // r < den < 2^63 before the shift, so it cannot overflow; the
        // dividend's bits enter from the top, one a step.
        r = (r << 1) | (n >> 63);
        n <<= 1;
        q <<= 1;
        if r >= den {
            r -= den;
            q |= 1;
        }
        i += 1;
    }
    q
}

/// Whether the target is an ARMv6-M core (Cortex-M0/M0+, thumbv6m;
/// recognised as in [`mul_wide`]): no divide instruction (so
/// [`div_rem_u32`] is a loop) and no 32 × 32 → 64-bit multiply (so
/// [`mul_wide`] is four multiplies). Callers use it to pick a 32-bit short
/// path where one exists; the result is the same either way.
pub const ARMV6M: bool = cfg!(humsense_armv6m);

/// Whether to take the 32-bit short paths that stand in for wide products
/// on ARMv6-M: there, and in this crate's unit tests, so that the host
/// checks them against the wide paths (which the integration tests and the
/// other targets take).
pub(crate) const SHORT_PATHS: bool = ARMV6M || cfg!(test);

/// `(n / d, n % d)` for `d > 0`; `d = 0` gives `(u32::MAX, n)`.
///
/// Cortex-M0/M0+ (thumbv6m, recognised as in [`mul_wide`]) has no divide
/// instruction, and `/` or `%` on a runtime `u32` there links the
/// `compiler_builtins` division routine (about 400 bytes). On those cores
/// this is restoring (shift-subtract) division instead: the divisor is
/// shifted up under the dividend's top bit, then one compare and at most
/// one subtraction per quotient bit, so a quotient below 2^k costs about
/// 2k short steps (a ratio of a few units, a handful). Elsewhere (one
/// `udiv` on Cortex-M3/M4/M7, and the host) it is the plain operators.
/// Both give the same bits (unit and property tests on the host, golden
/// vectors on both emulated cores). Usable in `const` context.
///
/// ```
/// use humsense::fixed::div_rem_u32;
/// assert_eq!(div_rem_u32(1_000, 7), (142, 6));
/// assert_eq!(div_rem_u32(5, 0), (u32::MAX, 5));
/// ```
#[inline]
pub const fn div_rem_u32(n: u32, d: u32) -> (u32, u32) {
    if d == 0 {
        return (u32::MAX, n);
    }
    #[cfg(humsense_armv6m)]
    {
        div_rem_shift(n, d)
    }
    #[cfg(not(humsense_armv6m))]
    {
        (n / d, n % d)
    }
}

/// [`div_rem_u32`] by restoring division, `d > 0`. Compiled on every
/// target so the host tests check it against `/` and `%`; out of line on
/// ARMv6-M (one copy for every caller).
#[cfg_attr(not(humsense_armv6m), allow(dead_code))]
#[cfg_attr(humsense_armv6m, inline(never))]
const fn div_rem_shift(n: u32, d: u32) -> (u32, u32) {
    let mut r = n;
    let mut q = 0u32;
    // Align: the largest d · 2^k ≤ n. `dd ≤ r / 2` before each doubling,
    // so `dd` cannot overflow.
    let mut dd = d;
    let mut bit = 1u32;
    while dd <= r >> 1 {
        dd <<= 1;
        bit <<= 1;
    }
    // One quotient bit per step, from 2^k down; r < 2 · dd throughout.
    while bit != 0 {
        if r >= dd {
            r -= dd;
            q |= bit;
        }
        dd >>= 1;
        bit >>= 1;
    }
    (q, r)
}

/// Frequency in hertz that a phase step represents at `rate_hz`
/// (`step · rate / 2^32`). Per-cycle or diagnostic use only (floating point).
pub fn step_to_hz(step: u32, rate_hz: u32) -> f32 {
    // f64 is avoided to keep the Cortex-M0 soft-float cost small; f32 holds
    // 24 bits, enough for 0.001 Hz resolution at mains frequencies.
    (step as f32) * (rate_hz as f32) / (TURN as f32)
}

/// Floor of the square root of a `u32`, exact (bit-by-bit method, 16 steps).
/// Out of line on Cortex-M0, where it serves both amplitude paths of the
/// back end.
#[cfg_attr(humsense_armv6m, inline(never))]
pub const fn isqrt_u32(v: u32) -> u32 {
    let mut rem = v;
    let mut res: u32 = 0;
    let mut bit: u32 = 1 << 30;
    while bit > rem {
        bit >>= 2;
    }
    while bit != 0 {
        if rem >= res + bit {
            rem -= res + bit;
            res = (res >> 1) + bit;
        } else {
            res >>= 1;
        }
        bit >>= 2;
    }
    res
}

/// Floor of the square root of a `u32`, exact, by integer Newton steps
/// from `guess` (any value: the previous cycle's amplitude makes it two or
/// three steps). Gives exactly [`isqrt_u32`]'s result. On cores with a
/// hardware divide (Cortex-M3/M4/M7) each step is a few instructions; on
/// Cortex-M0, which has none, it falls back to the bit-by-bit method.
pub fn isqrt_u32_from(v: u32, guess: u32) -> u32 {
    #[cfg(humsense_armv6m)]
    {
        let _ = guess;
        isqrt_u32(v)
    }
    #[cfg(not(humsense_armv6m))]
    {
        if v == 0 {
            return 0;
        }
        let x0 = guess.clamp(1, 65_535);
        // One step from any start lands at or above the floor of the root
        // (arithmetic and geometric means); from there the steps fall to
        // it and stop.
        let mut x = ((u64::from(x0) + u64::from(v / x0)) >> 1) as u32;
        loop {
            // x ≥ 1 here (v ≥ 1), and x + v/x < 2^18 once x ≥ √v − 1.
            let y = (x + v / x.max(1)) >> 1;
            if y >= x {
                return x;
            }
            x = y;
        }
    }
}

/// Square root of a `u64`, as `u32`.
///
/// Exact (floor) below 2^32; above, the argument is shifted right by an even
/// number of bits until it fits 32 bits, so the result keeps at least 16
/// significant bits (relative error below 2^-15) and is rounded down.
pub const fn isqrt_u64(v: u64) -> u32 {
    if v <= u32::MAX as u64 {
        return isqrt_u32(v as u32);
    }
    // Bits above 32, rounded up to an even count (2 to 32): counted two at
    // a time (at most 16 steps), as `leading_zeros` is a library call on
    // Cortex-M0, and the shift done on 32-bit halves (a variable 64-bit
    // shift is a library call there too).
    let (lo, hi) = (v as u32, (v >> 32) as u32);
    let mut high = hi;
    let mut shift = 0;
    while high != 0 {
        high >>= 2;
        shift += 2;
    }
    let top = if shift >= 32 {
        hi
    } else {
        (lo >> shift) | (hi << (32 - shift))
    };
    isqrt_u32(top) << (shift / 2)
}

/// CORDIC arctangent table: atan(2^-i) in `u32` turns, i = 0..16
/// (computed: round(atan(2^-i) / 2π · 2^32)).
const ATAN_TURNS: [u32; 16] = [
    536_870_912,
    316_933_406,
    167_458_907,
    85_004_756,
    42_667_331,
    21_354_465,
    10_679_838,
    5_340_245,
    2_670_163,
    1_335_087,
    667_544,
    333_772,
    166_886,
    83_443,
    41_722,
    20_861,
];

/// [`ATAN_TURNS`] summed four iterations at a time: entry `k` of nibble
/// `b` is `Σ ±atan(2^-i)` over `i = 4k..4k + 4`, `+` where bit `i − 4k` of
/// `b` is set (a step taken with `y > 0`) and `−` elsewhere, in wrapping
/// `u32` turns (computed at compile time from the table above: an index
/// out of range would be a build error, never a run-time panic).
#[cfg(not(humsense_armv6m))]
#[allow(clippy::indexing_slicing)]
const ATAN_NIBBLES: [[u32; 16]; 4] = {
    let mut t = [[0u32; 16]; 4];
    let mut k = 0;
    while k < 4 {
        let mut b = 0;
        while b < 16 {
            let mut sum = 0u32;
            let mut j = 0;
            while j < 4 {
                let a = ATAN_TURNS[4 * k + j];
                sum = if (b >> j) & 1 == 1 {
                    sum.wrapping_add(a)
                } else {
                    sum.wrapping_sub(a)
                };
                j += 1;
            }
            t[k][b] = sum;
            b += 1;
        }
        k += 1;
    }
    t
};

/// Angle of the vector (x, y) in `u32` turns (2^32 = one turn, 0 along +x,
/// a quarter turn along +y), by 16 CORDIC vectoring iterations.
///
/// Accuracy, for a vector of magnitude `m` with both components within
/// ±2^28: the error is below `1.25/m + 5·10^-6` turn, which is 3.1·10^-4
/// turn (0.11°) at `m = 2^12`, 2.4·10^-5 at 2^16 and 6.2·10^-6 from 2^20
/// up. The `1/m` term is the truncation of the shifts (it dominates below
/// about 2^18, so more iterations would not help there); the constant is
/// the residual after the last step, atan(2^-15) = 4.86·10^-6 turn. The
/// bound is measured, not proven: against `f64::atan2` on 3·10^6 random
/// vectors an octave, the worst `1/m` coefficient seen was 0.92 (from
/// 2^8 to 2^20; e.g. 1.9·10^-4 turn near 2^12). Larger components are
/// clamped to ±2^28 first so the CORDIC gain (1.647) cannot overflow, and
/// the angle is then that of the clamped vector. (0, 0) returns 0.
///
/// Two forms with the same bits: on Cortex-M0 each step adds its
/// `±atan(2^-i)` as it is taken (the textbook form; the smaller code);
/// elsewhere the steps record their directions as the bits of a mask and
/// the angle is summed from it afterwards, four directions per lookup in
/// a 4 × 16 table of nibble sums (the same wrapping sum: addition modulo
/// 2^32 does not depend on the order), a bit set per step instead of a
/// constant chosen and added.
pub fn atan2_turns(y: i32, x: i32) -> u32 {
    #[cfg(humsense_armv6m)]
    {
        atan2_steps(y, x)
    }
    #[cfg(not(humsense_armv6m))]
    {
        atan2_nibbles(y, x)
    }
}

/// The vector clamped to ±2^28 and rotated into the right half plane, with
/// the rotation's angle.
#[inline(always)]
fn cordic_start(y: i32, x: i32) -> (i32, i32, u32) {
    const LIM: i32 = 1 << 28;
    let x = x.clamp(-LIM, LIM);
    let y = y.clamp(-LIM, LIM);
    if x < 0 {
        // Rotate by half a turn.
        (-x, -y, 1 << 31)
    } else {
        (x, y, 0)
    }
}

/// [`atan2_turns`] step by step (Volder's CORDIC as usually written).
#[cfg(any(humsense_armv6m, test))]
fn atan2_steps(y: i32, x: i32) -> u32 {
    let (mut x, mut y, mut angle) = cordic_start(y, x);
    for (i, a) in ATAN_TURNS.into_iter().enumerate() {
        let dx = x >> i;
        let dy = y >> i;
        if y > 0 {
            x += dy;
            y -= dx;
            angle = angle.wrapping_add(a);
        } else {
            x -= dy;
            y += dx;
            angle = angle.wrapping_sub(a);
        }
    }
    angle
}

/// [`atan2_turns`] with the directions as a mask, summed by nibbles.
#[cfg(not(humsense_armv6m))]
fn atan2_nibbles(y: i32, x: i32) -> u32 {
    let (mut x, mut y, mut angle) = cordic_start(y, x);
    let mut up: u32 = 0;
    for i in 0..16 {
        let dx = x >> i;
        let dy = y >> i;
        if y > 0 {
            x += dy;
            y -= dx;
            up |= 1 << i;
        } else {
            x -= dy;
            y += dx;
        }
    }
    for (k, sums) in ATAN_NIBBLES.iter().enumerate() {
        let b = ((up >> (4 * k)) & 15) as usize;
        // `b < 16`: the fallback is never taken and the check is removed.
        angle = angle.wrapping_add(match sums.get(b) {
            Some(s) => *s,
            None => 0,
        });
    }
    angle
}

/// The full 64-bit product of two `u32`, exact.
///
/// Cortex-M0/M0+ (thumbv6m) has no long multiply: a `u64` product there
/// is a call to the 64 × 64-bit `__aeabi_lmul` (about 40 instructions).
/// On those cores (`cfg(humsense_armv6m)`, set by `build.rs` for ARM
/// targets without 32-bit compare-and-swap atomics: no stable `cfg` names
/// the architecture version) this builds the product from four 16 × 16-bit products
/// instead, in one out-of-line copy; elsewhere (one `umull` on
/// Cortex-M3/M4/M7) it is the plain product, inline. Both give the same
/// bits (checked by a unit test on the host and by the golden vectors on
/// both emulated cores).
#[inline(always)]
pub const fn mul_wide(a: u32, b: u32) -> u64 {
    #[cfg(humsense_armv6m)]
    {
        mul_wide_v6m(a, b)
    }
    #[cfg(not(humsense_armv6m))]
    {
        a as u64 * b as u64
    }
}

/// [`mul_wide`] on ARMv6-M: four 16 × 16-bit products, out of line (one
/// copy of its 15 instructions serves every caller; it runs a few times a
/// cycle, never per sample).
#[cfg(humsense_armv6m)]
#[inline(never)]
const fn mul_wide_v6m(a: u32, b: u32) -> u64 {
    {
        let (al, ah) = (a & 0xffff, a >> 16);
        let (bl, bh) = (b & 0xffff, b >> 16);
        let (mid, c1) = (al * bh).overflowing_add(ah * bl);
        let (lo, c2) = (al * bl).overflowing_add(mid << 16);
        let hi = ah * bh + (mid >> 16) + ((c1 as u32) << 16) + c2 as u32;
        ((hi as u64) << 32) | lo as u64
    }
}

/// `a · b` for a `u64` and a `u32`, wrapping, from two 32-bit products
/// (see [`mul_wide`]): exact while the product fits 64 bits. For
/// construction-time arithmetic, so that no 64-bit multiply routine is
/// linked on Cortex-M0.
pub const fn mul_u64_u32(a: u64, b: u32) -> u64 {
    let high = ((a >> 32) as u32).wrapping_mul(b) as u64;
    mul_wide(a as u32, b).wrapping_add(high << 32)
}

/// `a · b` for a signed `a`, exact (see [`mul_wide`]).
#[inline(always)]
pub const fn mul_wide_signed(a: i32, b: u32) -> i64 {
    #[cfg(humsense_armv6m)]
    {
        mul_wide_signed_v6m(a, b)
    }
    #[cfg(not(humsense_armv6m))]
    {
        a as i64 * b as i64
    }
}

/// [`mul_wide_signed`] on ARMv6-M: the magnitude's product, negated for
/// a negative `a`; out of line like [`mul_wide`] there.
#[cfg(humsense_armv6m)]
#[inline(never)]
const fn mul_wide_signed_v6m(a: i32, b: u32) -> i64 {
    let m = mul_wide(a.unsigned_abs(), b) as i64;
    if a < 0 {
        -m
    } else {
        m
    }
}

/// `(a · b) >> 8` for a Q8 factor `b`, saturating at `u32::MAX`.
#[inline]
pub const fn mul_q8(a: u32, b: u32) -> u32 {
    mul_shr(a, b, 8)
}

/// `(a · b) >> 4` for a Q4 factor `b`, saturating at `u32::MAX`.
#[inline]
pub const fn mul_q4(a: u32, b: u32) -> u32 {
    mul_shr(a, b, 4)
}

/// `(a · b) >> s` for `s` from 1 to 31, saturating at `u32::MAX`, shifting
/// the product's 32-bit halves (a variable 64-bit shift is a library call
/// on Cortex-M0). There it is one out-of-line copy for [`mul_q8`] and
/// [`mul_q4`], with a short path for the common case of two factors below
/// 2^16 (one 32-bit multiply instead of four); elsewhere it is inline (one
/// long multiply).
#[cfg_attr(humsense_armv6m, inline(never))]
#[cfg_attr(not(humsense_armv6m), inline)]
const fn mul_shr(a: u32, b: u32, s: u32) -> u32 {
    if SHORT_PATHS && (a | b) >> 16 == 0 {
        // The product fits 32 bits: nothing to saturate.
        return (a * b) >> (s & 31);
    }
    let p = mul_wide(a, b);
    let (hi, lo) = ((p >> 32) as u32, p as u32);
    let s = s & 31;
    if hi >> s != 0 {
        return u32::MAX;
    }
    (lo >> s) | (hi << ((32 - s) & 31))
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
    fn phase_step_matches_closed_form() {
        // 2^32 · f / fs, computed by hand: 50 Hz at 1 kHz is 2^32/20.
        assert_eq!(phase_step(50_000, 1_000), 214_748_365);
        assert_eq!(phase_step(60_000, 2_000), 128_849_019);
        assert_eq!(phase_step(50_000, 0), 0);
        assert_eq!(phase_step(60_000, 10), u32::MAX);
        let hz = step_to_hz(phase_step(50_000, 2_000), 2_000);
        assert!((hz - 50.0).abs() < 1e-4, "{hz}");
    }

    #[test]
    fn shift_division_matches_the_operators() {
        // Reference: Rust's own `/` and `%` on u32 (common practice).
        let edges = [
            0u32,
            1,
            2,
            3,
            7,
            255,
            256,
            65_535,
            65_536,
            (1 << 24) - 1,
            1 << 24,
            0x7fff_ffff,
            0x8000_0000,
            0x8000_0001,
            u32::MAX - 1,
            u32::MAX,
        ];
        for n in edges {
            for d in edges {
                if d == 0 {
                    assert_eq!(div_rem_u32(n, 0), (u32::MAX, n));
                    continue;
                }
                assert_eq!(div_rem_shift(n, d), (n / d, n % d), "{n} / {d}");
                assert_eq!(div_rem_u32(n, d), (n / d, n % d), "{n} / {d}");
            }
        }
        // Every divisor against dividends around each of its multiples.
        for d in 1..=2_000u32 {
            for m in [0u32, 1, 2, 3, 17, 1_000, 65_537, u32::MAX / d] {
                let base = m.saturating_mul(d);
                for n in [base.saturating_sub(1), base, base.saturating_add(1)] {
                    assert_eq!(div_rem_shift(n, d), (n / d, n % d), "{n} / {d}");
                }
            }
        }
    }

    proptest::proptest! {
        #[test]
        fn shift_division_matches_the_operators_anywhere(n: u32, d in 1u32..) {
            // Reference: Rust's `/` and `%` (common practice).
            proptest::prop_assert_eq!(div_rem_shift(n, d), (n / d, n % d));
            let small = d >> (d % 31);
            if small != 0 {
                proptest::prop_assert_eq!(div_rem_shift(n, small), (n / small, n % small));
            }
        }
    }

    #[test]
    fn isqrt_is_exact_floor_for_u32() {
        for v in [
            0u32,
            1,
            2,
            3,
            4,
            15,
            16,
            17,
            99,
            100,
            65_535,
            65_536,
            u32::MAX,
        ] {
            let r = isqrt_u32(v) as u64;
            assert!(r * r <= v as u64 && (r + 1) * (r + 1) > v as u64, "{v}");
        }
    }

    #[test]
    fn newton_sqrt_matches_bit_by_bit() {
        let vals = [
            0u32,
            1,
            2,
            3,
            4,
            15,
            16,
            17,
            99,
            65_535,
            65_536,
            1 << 24,
            26_214_400,
            u32::MAX - 1,
            u32::MAX,
        ];
        for v in vals {
            for g in [0u32, 1, 2, 100, 5_120, 65_535, 65_536, u32::MAX] {
                assert_eq!(isqrt_u32_from(v, g), isqrt_u32(v), "{v} from {g}");
            }
        }
    }

    #[test]
    fn phase_step_long_division_matches_u64_division() {
        // Reference: Rust's u64 `/` on the host (common practice), for the
        // shift-subtract division `phase_step` uses.
        for (f, r) in [
            (50_000u32, 2_000u32),
            (44_000, 50_000),
            (66_000, 400),
            (55_200, 1_234),
            (1, 1),
        ] {
            let den = u64::from(r) * 1000;
            let want = ((u64::from(f) << 32) + den / 2) / den;
            assert_eq!(u64::from(phase_step(f, r)), want.min(u64::from(u32::MAX)));
        }
    }

    #[test]
    fn isqrt_u64_relative_error_is_small() {
        for v in [
            1u64 << 40,
            (1 << 50) + 12_345,
            u64::MAX,
            3 << 33,
            987_654_321_012,
        ] {
            let exact = (v as f64).sqrt();
            let got = isqrt_u64(v) as f64;
            assert!(got <= exact + 1.0, "{v}");
            assert!(
                (exact - got) / exact < 1.0 / 32_768.0,
                "{v}: {got} vs {exact}"
            );
        }
    }

    #[test]
    fn cordic_sums_by_nibbles_as_it_would_step_by_step() {
        // Self-consistency, not an external reference: the crate's two
        // forms of the same iterations (the nibble sums used off ARMv6-M,
        // the step-by-step form used on it) agree bit for bit, at the edges
        // and on 10^5 random vectors of every magnitude, so the accuracy
        // checked against f64::atan2 below holds for both targets.
        let mut seed = 0x2545_f491_u32;
        let mut rand = move || {
            seed ^= seed << 13;
            seed ^= seed >> 17;
            seed ^= seed << 5;
            seed as i32
        };
        let edges = [
            0,
            1,
            -1,
            4096,
            -4096,
            1 << 28,
            -(1 << 28),
            i32::MAX,
            i32::MIN,
        ];
        for x in edges {
            for y in edges {
                assert_eq!(atan2_nibbles(y, x), atan2_steps(y, x), "{x} {y}");
            }
        }
        for _ in 0..100_000 {
            let (x, y) = (rand() >> (rand() & 15), rand() >> (rand() & 15));
            assert_eq!(atan2_nibbles(y, x), atan2_steps(y, x), "{x} {y}");
        }
    }

    #[test]
    fn cordic_matches_std_atan2() {
        // Reference: f64::atan2, Rust std (host only), on the integer
        // vector itself, so only the CORDIC's own error is measured. The
        // bound asserted is the documented one, 1.25/m + 5e-6 turn, for
        // magnitudes m from 2^12 (the doc's range starts there; 2^8 to
        // 2^12 is checked too, as the mains tracker reads phases down to
        // its 2-code floor) to 2^28, on a 5° grid at fixed magnitudes and
        // on random vectors at log-uniform magnitudes.
        let err = |x: i32, y: i32| {
            let got = atan2_turns(y, x) as f64 / TURN as f64;
            let want = (y as f64)
                .atan2(x as f64)
                .rem_euclid(core::f64::consts::TAU)
                / core::f64::consts::TAU;
            let mut d = got - want;
            d -= d.round();
            d.abs()
        };
        let bound = |m: f64| 1.25 / m + 5e-6;
        for e in [8, 12, 16, 20, 24, 28] {
            let r = f64::from(1u32 << e);
            for k in 0..72 {
                let a = f64::from(k) * 5.0_f64.to_radians() + 0.01;
                let (x, y) = ((r * a.cos()).round() as i32, (r * a.sin()).round() as i32);
                let m = f64::from(x).hypot(f64::from(y));
                assert!(err(x, y) < bound(m), "2^{e}, {a} rad: {}", err(x, y));
            }
        }
        let mut seed = 0x9e37_79b9_7f4a_7c15u64;
        let mut unit = move || {
            // xorshift64 (13, 7, 17), top 53 bits as a fraction.
            seed ^= seed << 13;
            seed ^= seed >> 7;
            seed ^= seed << 17;
            (seed >> 11) as f64 / (1u64 << 53) as f64
        };
        for _ in 0..200_000 {
            let r = 2f64.powf(8.0 + 20.0 * unit()).min(f64::from(1u32 << 28));
            let a = unit() * core::f64::consts::TAU;
            let (x, y) = ((r * a.cos()).round() as i32, (r * a.sin()).round() as i32);
            let m = f64::from(x).hypot(f64::from(y));
            assert!(err(x, y) < bound(m), "({x}, {y}), m {m}: {}", err(x, y));
        }
    }

    #[test]
    fn wide_products_are_exact() {
        let vals = [
            0u32,
            1,
            0xffff,
            0x1_0000,
            0x1234_5678,
            0x8000_0000,
            u32::MAX,
        ];
        for a in vals {
            for b in vals {
                assert_eq!(mul_wide(a, b), u64::from(a) * u64::from(b), "{a} {b}");
            }
        }
        assert_eq!(mul_wide_signed(-3, 7), -21);
        assert_eq!(
            mul_wide_signed(i32::MIN, u32::MAX),
            i64::from(i32::MIN) * i64::from(u32::MAX)
        );
        // Reference: the u128 product on the host.
        for a in [0u64, 1, 0xffff_ffff, 1 << 32, 0xff_1234_5678, (1 << 40) - 1] {
            for b in [0u32, 1, 7, 0xf_ffff, 0xffff_ffff] {
                let want = u128::from(a) * u128::from(b);
                if want <= u128::from(u64::MAX) {
                    assert_eq!(u128::from(mul_u64_u32(a, b)), want, "{a} {b}");
                }
            }
        }
    }

    #[test]
    fn q_products_match_wide_shifts() {
        // Reference: the u64 product shifted and saturated on the host
        // (common practice).
        let vals = [
            0u32,
            1,
            15,
            16,
            255,
            256,
            724,
            0xffff,
            0x1_0000,
            0x00ff_ffff,
            0x8000_0000,
            u32::MAX,
        ];
        for a in vals {
            for b in vals {
                let p = u64::from(a) * u64::from(b);
                for s in 1..32 {
                    let want = (p >> s).min(u64::from(u32::MAX)) as u32;
                    assert_eq!(mul_shr(a, b, s), want, "{a} {b} {s}");
                }
                assert_eq!(mul_q8(a, b), (p >> 8).min(u64::from(u32::MAX)) as u32);
                assert_eq!(mul_q4(a, b), (p >> 4).min(u64::from(u32::MAX)) as u32);
            }
        }
    }

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
