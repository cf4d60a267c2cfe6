//! Wide products (32 × 32 → 64 bits) and Q-format products.

use super::*;

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

#[cfg(test)]
mod tests {
    extern crate std;
    use super::*;

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
}
