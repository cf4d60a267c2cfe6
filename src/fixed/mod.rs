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

mod cordic;
mod divide;
mod float;
mod sqrt;
mod wide;

pub use cordic::*;
pub use divide::*;
pub use float::*;
pub use sqrt::*;
pub use wide::*;

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
}
