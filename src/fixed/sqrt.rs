//! Integer square roots.

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

/// [`isqrt_u64`] by integer Newton steps from `guess` (an estimate of the
/// result, e.g. the previous cycle's amplitude): exactly the same bits,
/// for every `v` and every `guess`. Above 2^32 the same even shift as
/// [`isqrt_u64`] (from `leading_zeros`, one instruction on cores with a
/// hardware divide), then [`isqrt_u32_from`] on the top 32 bits from the
/// guess shifted to match. On Cortex-M0 it is [`isqrt_u64`].
#[inline]
pub fn isqrt_u64_from(v: u64, guess: u32) -> u32 {
    #[cfg(humsense_armv6m)]
    {
        let _ = guess;
        isqrt_u64(v)
    }
    #[cfg(not(humsense_armv6m))]
    {
        let Some(hi) = u32::try_from(v >> 32).ok().filter(|&h| h != 0) else {
            return isqrt_u32_from(v as u32, guess);
        };
        // Bits of `hi` (1 to 32) rounded up to an even count: the shift
        // `isqrt_u64` finds two bits at a time.
        let shift = (32 - hi.leading_zeros() + 1) & !1;
        let top = if shift >= 32 {
            hi
        } else {
            ((v as u32) >> shift) | (hi << (32 - shift))
        };
        isqrt_u32_from(top, guess >> (shift / 2)) << (shift / 2)
    }
}

#[cfg(test)]
mod tests {
    extern crate std;
    use super::*;

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
    fn newton_sqrt_u64_matches_the_shifted_method() {
        // Self-consistency: the two ways of computing the same bits.
        let mut vals = std::vec![0u64, 1, u32::MAX as u64, 1 << 32, (1 << 32) + 1, u64::MAX];
        for b in 32..64 {
            vals.push(1u64 << b);
            vals.push((1u64 << b) - 1);
            vals.push((1u64 << b) + 0x1234_5677);
            vals.push((3u64 << (b - 1)) | 0xffff);
        }
        let mut x = 0x9E37_79B9_7F4A_7C15u64;
        for _ in 0..2_000 {
            x ^= x << 13;
            x ^= x >> 7;
            x ^= x << 17;
            vals.push(x >> (x % 32));
        }
        for v in vals {
            let want = isqrt_u64(v);
            for g in [
                0u32,
                1,
                3,
                want / 2,
                want,
                want.saturating_add(7),
                want.saturating_mul(3),
                u32::MAX,
            ] {
                assert_eq!(isqrt_u64_from(v, g), want, "{v} from {g}");
            }
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
}
