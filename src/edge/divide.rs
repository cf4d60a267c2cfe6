//! The 64-bit divisions of the edge input's construction and per-window
//! code, without library division: a restoring `u64 / u32` and a Q16 ratio
//! through one 32-bit division.

use crate::fixed::div_rem_u32;

/// `⌊n / d⌋` for a 64-bit `n` by restoring division (64 steps, no library
/// division); `u64::MAX` for `d = 0`. Construction and per-window code only.
pub(super) const fn div_u64_u32(n: u64, d: u32) -> u64 {
    if d == 0 {
        return u64::MAX;
    }
    let d = d as u64;
    let mut q = 0u64;
    let mut r = 0u64;
    let mut i = 64;
    while i > 0 {
        i -= 1;
        r = (r << 1) | ((n >> i) & 1);
        if r >= d {
            r -= d;
            q |= 1 << i;
        }
    }
    q
}

/// `num / den` in Q16, at most 1 (65 536); 1 for `den = 0`. Both are
/// shifted right until `den` fits 16 bits, then one 32-bit division.
pub(super) fn ratio_q16(mut num: u64, mut den: u64) -> u32 {
    if num >= den {
        return 1 << 16;
    }
    while den >= 1 << 16 {
        num >>= 1;
        den >>= 1;
    }
    // num < den < 2^16, so num · 2^16 fits u32.
    div_rem_u32((num as u32) << 16, den as u32).0
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn wide_division_matches_the_operator() {
        // Reference: Rust's u64 `/` (exact).
        let mut s = 0x9e37_79b9_7f4a_7c15u64;
        for _ in 0..2_000 {
            s ^= s << 13;
            s ^= s >> 7;
            s ^= s << 17;
            let d = (s >> 40) as u32 | 1;
            assert_eq!(div_u64_u32(s, d), s / u64::from(d));
            let n = s >> (s & 31);
            let den = n.wrapping_add(s >> 50).max(1);
            let want = ((u128::from(n) << 16) / u128::from(den)).min(1 << 16) as u32;
            let got = ratio_q16(n, den);
            // den shifted to 16 bits: within 2^-15 of the exact ratio.
            assert!(got.abs_diff(want) <= 3, "{n}/{den}: {got} vs {want}");
        }
    }
}
