//! Adaptive baseline and noise estimate, once per mains cycle.
//!
//! With `a` the cycle amplitude and `b` the baseline (both Q12 codes), and
//! unless the caller freezes the update (channel active or above its on
//! threshold, or, after start-up, a cycle below `nohum_codes`: no hum to
//! learn from):
//!
//! - first cycle: `b = a`;
//! - start-up (`startup_cycles`): `b += (a − b) / 4` either way;
//! - afterwards: `b += (a − b) >> rise` when `a > b`, and
//!   `b −= (b − a) >> fall` when `a < b` (fall ≤ rise: it falls faster);
//! - except through a sudden drop: a cycle below 0.7 b starts a hold in
//!   which nothing is learnt, until `a` is back above 0.85 b or 100 cycles
//!   have passed (then the new level is learnt, falling fast). A supply dip
//!   would otherwise drag a slowly rising baseline down for a long time, and
//!   the ordinary hum after it would look like a touch or a field.
//!
//! The noise estimate `σ̂` is an exponential average of a per-cycle noise
//! sample `d`, `σ̂ += (min(d, 4σ̂ + 1 code) − σ̂) >> noise_shift` (`>> 3`
//! during start-up); the clip keeps a step or a touch from inflating it at
//! once. The caller forms `d` from the change of amplitude between
//! consecutive cycles, scaled so that its mean equals the mean absolute
//! deviation of the amplitude (see `Backend`): unlike the deviation from
//! the baseline, it does not grow while the amplitude ramps slowly (an
//! approach to a conductor) or drifts.
//!
//! Start-up convergence: after `startup_cycles` cycles the baseline has
//! closed all but (3/4)^startup_cycles of its initial error (0.08 % for the
//! touch default of 25 cycles, 0.5 s at 50 Hz).

use crate::fixed::{mul_wide, SHORT_PATHS};

/// One code of amplitude in Q12.
const ONE_CODE_Q12: u32 = 1 << 12;

/// Per-channel baseline and noise state (10 bytes of data).
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct BaselineState {
    base_q12: u32,
    noise_q12: u32,
    /// Cycles learnt, saturating.
    cycles: u16,
    /// Cycles held through a sudden drop (see the module docs).
    held: u8,
}

/// A drop below this fraction of the baseline (Q8: 0.7) in one go is held
/// rather than learnt.
const HOLD_BELOW_Q8: u32 = 179;
/// The hold ends when the amplitude is back above this fraction (Q8: 0.85).
const HOLD_END_Q8: u32 = 218;
/// Longest hold, in cycles (2 s at 50 Hz); a drop that lasts longer is a
/// new level and is learnt.
const HOLD_MAX: u8 = 100;
/// `held` after a hold has run out: the new level is being learnt, and no
/// new hold starts until the amplitude is back near the baseline.
const EXPIRED: u8 = u8::MAX;

/// The baseline stage's constants (from [`Config`](crate::Config)).
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct BaselineTuning {
    /// Shift while rising.
    pub rise_shift: u8,
    /// Shift while falling.
    pub fall_shift: u8,
    /// Noise estimate shift.
    pub noise_shift: u8,
    /// Cycles of fast learning.
    pub startup_cycles: u16,
}

impl BaselineState {
    /// Nothing learnt yet.
    pub const fn new() -> Self {
        Self {
            base_q12: 0,
            noise_q12: 0,
            cycles: 0,
            held: 0,
        }
    }

    /// Baseline in Q8 codes.
    pub const fn baseline_q8(&self) -> u32 {
        self.base_q12 >> 4
    }

    /// Noise estimate in Q8 codes.
    pub const fn noise_q8(&self) -> u32 {
        self.noise_q12 >> 4
    }

    /// Whether start-up learning is over.
    pub const fn settled(&self, t: &BaselineTuning) -> bool {
        self.cycles >= t.startup_cycles
    }

    /// Whether the cycle just learnt was one of start-up's fast cycles
    /// (the count, advanced by [`update`](Self::update), has not passed
    /// `startup_cycles`).
    pub const fn learning(&self, t: &BaselineTuning) -> bool {
        self.cycles <= t.startup_cycles
    }

    /// Restarts the baseline at amplitude `amp_q8`, keeping the noise
    /// estimate and ending any hold (used after a stuck-active timeout, and
    /// after a release that landed away from the old baseline).
    pub fn relearn(&mut self, amp_q8: u32) {
        self.base_q12 = q8_to_q12(amp_q8);
        self.held = 0;
    }

    /// Starts learning again from the next cycle, with the start-up rates
    /// (after a fault on the channel has ended).
    pub fn restart(&mut self) {
        self.cycles = 0;
    }

    /// Whether to hold the baseline through this cycle: a drop to below 0.7
    /// of the baseline is held (a supply dip, EN 50160's 10 ms to 1 min,
    /// mostly under a second) until the amplitude is back above 0.85 or
    /// the drop has lasted 100 cycles and is taken as a new level.
    fn hold(&mut self, a: u32, b: u32) -> bool {
        // a ≥ 0.85 b and a < 0.7 b in Q8, exactly. On Cortex-M0 in 32 bits
        // when both are below 2^24 (amplitudes of a 12-bit converter always
        // are); else in 64 (one long multiply each on Cortex-M3 and up, a
        // library call on Cortex-M0 for huge amplitudes only).
        let (back, low) = if SHORT_PATHS && (a | b) >> 24 == 0 {
            let a = a << 8;
            (a >= b * HOLD_END_Q8, a < b * HOLD_BELOW_Q8)
        } else {
            let a = u64::from(a) << 8;
            (
                a >= mul_wide(b, HOLD_END_Q8),
                a < mul_wide(b, HOLD_BELOW_Q8),
            )
        };
        if self.held == EXPIRED {
            if back {
                self.held = 0;
            }
            return false;
        }
        if self.held > 0 {
            if back {
                self.held = 0;
                return false;
            }
            if self.held >= HOLD_MAX {
                self.held = EXPIRED;
                return false;
            }
            self.held += 1;
            return true;
        }
        if low {
            self.held = 1;
            return true;
        }
        false
    }

    /// Multiplies baseline and noise by `ratio_q8 / 256` (a common ambient
    /// change across a panel), saturating.
    pub fn rescale(&mut self, ratio_q8: u32) {
        self.base_q12 = crate::fixed::mul_q8(self.base_q12, ratio_q8);
        self.noise_q12 = crate::fixed::mul_q8(self.noise_q12, ratio_q8);
    }

    /// Learns from one cycle's amplitude and noise sample (Q8 codes).
    /// Per cycle. Inline on cores with room to spare in flash; out of line
    /// on the Cortex-M0, where the compiler otherwise copies it onto both
    /// of the back end's learning paths (about 170 bytes) for a call's
    /// worth of instructions a cycle.
    #[cfg_attr(not(humsense_armv6m), inline(always))]
    #[cfg_attr(humsense_armv6m, inline(never))]
    pub fn update(&mut self, amp_q8: u32, noise_q8: u32, t: &BaselineTuning) {
        let a = q8_to_q12(amp_q8);
        let b = self.base_q12;
        let startup = self.cycles < t.startup_cycles;
        if !startup && self.hold(a, b) {
            return;
        }
        if self.cycles == 0 {
            self.base_q12 = a;
        } else if a > b {
            let s = if startup { 2 } else { t.rise_shift };
            self.base_q12 = b + ((a - b) >> s);
        } else {
            let s = if startup { 2 } else { t.fall_shift };
            self.base_q12 = b - ((b - a) >> s);
        }
        if self.cycles > 0 {
            let clip = self
                .noise_q12
                .saturating_mul(4)
                .saturating_add(ONE_CODE_Q12);
            let dev = q8_to_q12(noise_q8).min(clip);
            let s = if startup { 3 } else { t.noise_shift };
            let n = self.noise_q12;
            self.noise_q12 = if dev > n {
                n + ((dev - n) >> s)
            } else {
                n - ((n - dev) >> s)
            };
        }
        self.cycles = self.cycles.saturating_add(1);
    }
}

/// Q8 → Q12, saturating (amplitudes stay below 2^24 Q8 for 16-bit input).
const fn q8_to_q12(v: u32) -> u32 {
    if v > (u32::MAX >> 4) {
        u32::MAX
    } else {
        v << 4
    }
}

#[cfg(test)]
mod tests {
    extern crate std;
    use super::*;

    const T: BaselineTuning = BaselineTuning {
        rise_shift: 7,
        fall_shift: 4,
        noise_shift: 6,
        startup_cycles: 25,
    };

    #[test]
    fn converges_within_startup() {
        let mut b = BaselineState::new();
        b.update(0, 0, &T);
        for _ in 0..25 {
            b.update(100 * 256, 0, &T);
        }
        // (3/4)^24 of the error left after the seeding cycle.
        let err = 100.0 * 256.0 - b.baseline_q8() as f64;
        assert!(err < 100.0 * 256.0 * 0.75f64.powi(24) + 1.0, "{err}");
    }

    #[test]
    fn falls_faster_than_it_rises() {
        let mut up = BaselineState::new();
        let mut down = BaselineState::new();
        for _ in 0..30 {
            up.update(100 * 256, 0, &T);
            down.update(100 * 256, 0, &T);
        }
        // Steps of +100 % and −20 % (a drop of more than 30 % is held:
        // see the next test).
        for _ in 0..16 {
            up.update(200 * 256, 0, &T);
            down.update(80 * 256, 0, &T);
        }
        let rise = up.baseline_q8() as f64 / 256.0 - 100.0;
        let fall = 100.0 - down.baseline_q8() as f64 / 256.0;
        // Step response of an EMA after k cycles: 1 − (1 − 2^-s)^k.
        let want_rise = 100.0 * (1.0 - (1.0 - 1.0 / 128.0f64).powi(16));
        let want_fall = 20.0 * (1.0 - (1.0 - 1.0 / 16.0f64).powi(16));
        assert!((rise - want_rise).abs() < 0.5, "{rise} vs {want_rise}");
        assert!((fall - want_fall).abs() < 0.5, "{fall} vs {want_fall}");
        // Relative to the step, the fall is faster.
        assert!(fall / 20.0 > rise / 100.0);
    }

    #[test]
    fn noise_follows_its_samples_within_the_clip() {
        let mut b = BaselineState::new();
        for _ in 0..400 {
            b.update(100 * 256, 3 * 256, &T);
        }
        // An exponential average of a constant converges to it.
        assert!(
            (b.noise_q8() as i64 - 3 * 256).abs() < 8,
            "{}",
            b.noise_q8()
        );
        // One huge sample moves it by at most (4σ + 1 code) >> shift.
        let before = b.noise_q8();
        b.update(100 * 256, 1_000 * 256, &T);
        assert!(b.noise_q8() <= before + (4 * before + 256) / 64 + 1);
    }

    #[test]
    fn holds_through_a_dip_but_learns_a_lasting_drop() {
        let mut b = BaselineState::new();
        for _ in 0..30 {
            b.update(100 * 256, 0, &T);
        }
        let before = b.baseline_q8();
        // A 10-cycle dip to 40 % (EN 50160 dip, residual 40 %): held.
        for _ in 0..10 {
            b.update(40 * 256, 0, &T);
        }
        assert_eq!(b.baseline_q8(), before);
        b.update(100 * 256, 0, &T);
        assert!(b.baseline_q8().abs_diff(100 * 256) < 16);
        // A lasting drop to half (a lamp switched off): learnt after the
        // hold, then falling with the fall rate.
        let before = b.baseline_q8();
        for _ in 0..100 {
            b.update(50 * 256, 0, &T);
        }
        assert_eq!(b.baseline_q8(), before);
        for _ in 0..64 {
            b.update(50 * 256, 0, &T);
        }
        assert!(b.baseline_q8() < 52 * 256, "{}", b.baseline_q8() / 256);
    }

    #[test]
    fn hold_thresholds_are_exact_on_both_paths() {
        // Self-consistency, not an external reference: both paths against
        // the same Q8 comparisons written in u64, with the crate's own
        // constants; values below and above 2^24 take the short and the
        // wide path. That the constants are the module docs' 0.7 and 0.85
        // is checked next: round(0.7 · 256) = 179, round(0.85 · 256) = 218
        // (to within half a Q8 step, 0.002).
        assert_eq!(HOLD_BELOW_Q8, (0.7f64 * 256.0).round() as u32);
        assert_eq!(HOLD_END_Q8, (0.85f64 * 256.0).round() as u32);
        for b in [
            0u32,
            1,
            100,
            5_120,
            81_920,
            (1 << 24) - 1,
            1 << 24,
            u32::MAX,
        ] {
            let bw = u64::from(b);
            let mut cands = std::vec![0u32, 1, b, b.saturating_add(1), u32::MAX];
            for k in [HOLD_END_Q8, HOLD_BELOW_Q8] {
                let edge = (bw * u64::from(k)) >> 8;
                for d in [0u64, 1, 2] {
                    cands.push(edge.saturating_sub(d).min(u64::from(u32::MAX)) as u32);
                    cands.push((edge + d).min(u64::from(u32::MAX)) as u32);
                }
            }
            for a in cands {
                let aw = u64::from(a) << 8;
                let back = aw >= bw * u64::from(HOLD_END_Q8);
                let low = aw < bw * u64::from(HOLD_BELOW_Q8);
                let mut fresh = BaselineState::new();
                assert_eq!(fresh.hold(a, b), low, "{a} {b}");
                let mut holding = BaselineState {
                    held: 1,
                    ..BaselineState::new()
                };
                assert_eq!(holding.hold(a, b), !back, "{a} {b}");
            }
        }
    }

    #[test]
    fn saturates_instead_of_overflowing() {
        // Self-consistency, not an external reference: the module docs'
        // start-up equations, evaluated in i64 where nothing can overflow
        // (what is checked is the saturation, not the equations): an input
        // of u32::MAX (Q8) saturates to u32::MAX in Q12, the first cycle
        // seeds b = a, then b += (a − b)/4 (division truncating toward
        // zero, as the shifts of the magnitude do) and, from the second
        // cycle, σ += (min(d, 4σ + 4096) − σ)/8. Exact: the same integer
        // steps.
        let mut b = BaselineState::new();
        let (mut base, mut noise) = (0i64, 0i64);
        for (k, a) in [u32::MAX, 0, u32::MAX, 1].into_iter().enumerate() {
            b.update(a, a, &T);
            let a12 = (i64::from(a) * 16).min(i64::from(u32::MAX));
            if k == 0 {
                base = a12;
            } else {
                base += (a12 - base) / 4;
                let dev = a12.min(4 * noise + 4096);
                noise += (dev - noise) / 8;
            }
            assert_eq!(i64::from(b.baseline_q8()), base >> 4, "cycle {k}");
            assert_eq!(i64::from(b.noise_q8()), noise >> 4, "cycle {k}");
        }
        // The last step from 0xCFFF_FFFF (Q12) towards 16: 0x9C00_0004.
        assert_eq!(b.baseline_q8(), 0x9C00_0004 >> 4);
    }
}
