//! Integer division without a divide instruction on ARMv6-M.

/// `(n / d, n % d)` for `d > 0`; `d = 0` gives `(u32::MAX, n)`.
///
/// Cortex-M0/M0+ (thumbv6m, recognised as in [`mul_wide`](super::mul_wide)) has no divide
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

#[cfg(test)]
mod tests {
    extern crate std;
    use super::*;

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
}
