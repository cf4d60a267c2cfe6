//! The CORDIC arctangent: a phase from I/Q in shifts and adds.

use super::*;

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

#[cfg(test)]
mod tests {
    extern crate std;
    use super::*;

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
}
