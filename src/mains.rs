//! Mains frequency: the shared reference oscillator, the automatic 50/60 Hz
//! choice and a frequency-locked loop that tracks drift.
//!
//! Per sample the tracker only advances its phase: `θ += step` (wrapping
//! `u32`, 2^32 = one turn); the wrap marks the end of a mains cycle. Once per
//! cycle it takes the fundamental's phase on the strongest channel,
//! `φ_k = atan2(−q, i)`, the phase of the signal relative to the reference.
//! A phase advance of `e` turns per reference cycle means
//! `f_mains = f_ref · (1 + e)`, and the loop sets
//!
//! `step ← step + e · step / 2`, clamped to the tracking range.
//!
//! Two stages:
//! - **pull-in**: `e = φ_k − φ_{k−1}`, every cycle. Fast, but each phase
//!   carries a bias of up to about 1/n rad when the window of n samples is
//!   not a whole number of signal cycles, which is the usual case.
//! - **fine**: `e = (φ_k − φ_{k−8}) / 8`, every 8 cycles. The window bias
//!   does not grow with the span, so it is divided by 8; the span stays
//!   unambiguous while |e| < 1/16 turn (3 Hz at 50 Hz).
//!
//! Pull-in hands over to fine after 4 cycles in a row with
//! `|e| < 1/64` turn (1.6 %); fine is **locked** after 2 blocks in a row with
//! `|e| < 1/512` turn (0.2 %, 0.1 Hz at 50 Hz) and falls back to pull-in
//! after 2 blocks with `|e| > 1/64` turn. The loop learns only from cycles
//! whose amplitude is at least `track_min_codes`; weaker cycles hold the
//! frequency and restart the measurement, and after 50 of them in a row
//! the loop counts as unlocked and starts again with pull-in.
//!
//! In [`MainsMode::Auto`] the reference starts at 55 Hz between the two
//! systems; at the hand-over to fine the system is chosen (below 55 Hz:
//! 50 Hz) and the range narrows to it.

use crate::config::{Config, MainsMode, RANGE_50, RANGE_60};
use crate::demod::Iq;
use crate::fixed::{atan2_turns, mul_wide, mul_wide_signed, phase_step, step_to_hz};

/// Which mains system the tracker has settled on.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum MainsSystem {
    /// Not chosen yet (automatic mode before first lock).
    Unknown,
    /// 50 Hz system.
    Hz50,
    /// 60 Hz system.
    Hz60,
}

/// How well the mains reference is doing, for the fault logic.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum MainsHealth {
    /// Locked, or not unlocked for long.
    Ok,
    /// Unlocked for `mains_lost_cycles` cycles (no hum, or hum too
    /// disturbed to follow).
    Lost,
    /// Pinned at a range limit for `mains_lost_cycles` learning cycles with
    /// the hum's apparent frequency within 44–66 Hz: a real mains frequency
    /// outside the configured system's range.
    OutOfRange,
    /// Pinned at a range limit with an apparent frequency outside 44–66 Hz:
    /// no mains system looks like that, so the sample rate is wrong.
    RateMismatch,
}

/// Apparent frequencies that a real mains supply can have, mHz.
const PLAUSIBLE_MHZ: (u32, u32) = (44_000, 66_000);

/// Pull-in settles below this error (1/64 turn per cycle).
const COARSE_E: u32 = 1 << 26;
/// Fine lock below this error (1/512 turn per cycle).
const LOCK_E: u32 = 1 << 23;
/// Cycles per fine measurement block (a power of two).
const BLOCK_SHIFT: u32 = 3;
const NO_REF: u8 = u8::MAX;
/// Cycles too weak to learn from before the lock is dropped.
const WEAK_UNLOCK_CYCLES: u16 = 50;

/// Shared oscillator and frequency tracker state (one per detector).
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct MainsTracker {
    phase: u32,
    step: u32,
    min_step: u32,
    max_step: u32,
    rate_hz: u32,
    /// Samples in the present cycle.
    count: u32,
    /// Length of the present cycle in samples, set at its start from the
    /// cached quotient and remainder of (2^32 − 1) / step (see
    /// [`samples_to_wrap`](Self::samples_to_wrap)).
    cycle_len: u16,
    div_q: u16,
    div_r: u32,
    /// Phase of the previous learning cycle, and on which channel.
    prev_phi: u32,
    prev_ref: u8,
    /// Phase at the start of the fine block, and cycles into it.
    block_phi: u32,
    block_len: u8,
    /// Least per-cycle |i| + |q| (Q8 codes) that the loop learns from.
    min_l1: u32,
    /// A higher least |i| + |q| set by the detector from its noise
    /// estimate ([`set_floor`](Self::set_floor)); 0 when none is set.
    floor_l1: u32,
    good: u8,
    bad: u8,
    fine: bool,
    locked: bool,
    system: MainsSystem,
    /// Cycles since the loop was last locked, saturating.
    unlocked_cycles: u16,
    /// Cycles in a row too weak to learn from, saturating.
    weak_cycles: u16,
    /// Learning cycles in a row pinned at a range limit.
    pinned_cycles: u16,
    /// Apparent mains frequency of the last pinned cycle, mHz.
    apparent_mhz: u32,
    lost_after: u16,
}

impl MainsTracker {
    /// A tracker for `cfg` (validated by the caller).
    pub fn new(cfg: &Config) -> Self {
        let rate = cfg.sample_rate_hz;
        let (system, start_mhz) = match cfg.mains {
            MainsMode::Auto => (MainsSystem::Unknown, 55_000),
            MainsMode::Hz50 => (MainsSystem::Hz50, 50_000),
            MainsMode::Hz60 => (MainsSystem::Hz60, 60_000),
        };
        let (lo, hi) = cfg.tracking_range_mhz();
        // |i| + |q| ≥ A for any phase, so this never rejects a cycle whose
        // amplitude reaches track_min_codes.
        let min_l1 = crate::fixed::f32_to_fixed(cfg.track_min_codes, 8);
        let mut t = Self {
            phase: 0,
            step: phase_step(start_mhz, rate),
            min_step: phase_step(lo, rate),
            max_step: phase_step(hi, rate),
            rate_hz: rate,
            count: 0,
            prev_phi: 0,
            prev_ref: NO_REF,
            block_phi: 0,
            block_len: 0,
            min_l1,
            floor_l1: 0,
            good: 0,
            bad: 0,
            fine: false,
            locked: false,
            system,
            unlocked_cycles: 0,
            weak_cycles: 0,
            pinned_cycles: 0,
            apparent_mhz: 0,
            lost_after: cfg.mains_lost_cycles,
            cycle_len: 0,
            div_q: 0,
            div_r: 0,
        };
        t.retune();
        t.start_cycle();
        t
    }

    /// Caches `(2^32 − 1) = q·step + r` for the present step: one division,
    /// at construction and whenever the step changes (at cycle ends, at
    /// most once a cycle and in lock once every eight).
    fn retune(&mut self) {
        let (q, r) = crate::fixed::div_rem_u32(u32::MAX, self.step.max(1));
        self.div_q = q.min(u32::from(u16::MAX)) as u16;
        self.div_r = r;
    }

    /// Sets the length of the cycle that starts at the present phase `p`:
    /// the least `k` with `p + k·step ≥ 2^32` is `⌊(2^32 − 1 − p)/step⌋ +
    /// 1`, which for `p < step` is `q + 1` when `p ≤ r`, else `q`. After a
    /// retune the start phase (below the old step) can exceed the new step
    /// once (steps stay within the 2:3 tracking range), which shortens the
    /// cycle by one.
    fn start_cycle(&mut self) {
        let step = self.step.max(1);
        let (p, less) = if self.phase >= step {
            (self.phase - step, 1)
        } else {
            (self.phase, 0)
        };
        let q = u32::from(self.div_q);
        let k = if p <= self.div_r { q + 1 } else { q };
        self.cycle_len = k.saturating_sub(less).min(u32::from(u16::MAX)) as u16;
    }

    /// Samples taken in the present, unfinished cycle.
    pub const fn samples_in_cycle(&self) -> u32 {
        self.count
    }

    /// Reference phase for the present sample (before [`advance`](Self::advance)).
    #[inline(always)]
    pub const fn phase(&self) -> u32 {
        self.phase
    }

    /// Samples until the present cycle ends, counting the one that ends it:
    /// the least `k ≥ 1` with `phase + k·step ≥ 2^32`. No division: the
    /// cycle's length is set when it starts (see `start_cycle`).
    #[inline(always)]
    pub fn samples_to_wrap(&self) -> u32 {
        u32::from(self.cycle_len).saturating_sub(self.count).max(1)
    }

    /// Ends a run of `k` samples processed outside the tracker (the block
    /// path), leaving the phase at `phase`, which must be the phase after
    /// `k` steps; `ends_cycle` says whether the run ended the cycle (it was
    /// [`samples_to_wrap`](Self::samples_to_wrap) long). Returns the
    /// cycle's sample count when it did, else 0, exactly as `k` calls of
    /// [`advance`](Self::advance) would.
    #[inline(always)]
    pub fn finish_run(&mut self, phase: u32, k: u32, ends_cycle: bool) -> u32 {
        self.phase = phase;
        self.count = self.count.wrapping_add(k);
        if ends_cycle {
            let n = self.count;
            self.count = 0;
            n
        } else {
            0
        }
    }

    /// Advances one sample; returns the number of samples in the cycle when
    /// this sample completed one, else 0.
    #[inline(always)]
    pub fn advance(&mut self) -> u32 {
        let (p, wrapped) = self.phase.overflowing_add(self.step);
        self.advance_to(p, wrapped)
    }

    /// [`advance`](Self::advance) with its sum already formed by the
    /// caller: `(next, wrapped) = phase.overflowing_add(step)`.
    #[inline(always)]
    pub fn advance_to(&mut self, next: u32, wrapped: bool) -> u32 {
        self.phase = next;
        self.count += 1;
        if wrapped {
            let n = self.count;
            self.count = 0;
            n
        } else {
            0
        }
    }

    /// Learns from the cycle just ended. `fund` holds each channel's
    /// fundamental; the strongest channel (by |i| + |q|) is the reference.
    /// Per cycle. Inline: its one caller is the front end's cycle end, and a
    /// firmware with several front-end types (channel counts) would
    /// otherwise get a shared out-of-line copy with its call overhead.
    #[inline(always)]
    pub fn end_cycle(&mut self, fund: &[Iq]) {
        let step = self.step;
        self.learn(fund);
        self.settle_lock();
        if self.step != step {
            self.retune();
        }
        self.start_cycle();
    }

    fn settle_lock(&mut self) {
        self.unlocked_cycles = if self.locked {
            0
        } else {
            self.unlocked_cycles.saturating_add(1)
        };
    }

    /// The phase measurement and the loop filter (inline: one caller).
    #[inline(always)]
    fn learn(&mut self, fund: &[Iq]) {
        // The reference channel is sticky: another channel takes over only
        // when it is twice as strong (or the present one is gone), so that
        // pads of similar strength do not swap every cycle and restart the
        // phase measurement. By index and |i| + |q| only (the first of
        // equal strongest wins).
        let l1_of = |z: &Iq| z.i.unsigned_abs().saturating_add(z.q.unsigned_abs());
        let (mut best, mut best_l1) = (0u8, 0u32);
        let mut current: Option<u32> = None;
        for (ch, z) in (0u8..).zip(fund.iter()) {
            let l1 = l1_of(z);
            if ch == self.prev_ref {
                current = Some(l1);
            }
            if ch == 0 || l1 > best_l1 {
                (best, best_l1) = (ch, l1);
            }
        }
        let (ch, l1) = match current {
            Some(c) if best_l1 / 2 <= c => (self.prev_ref, c),
            _ => (best, best_l1),
        };
        let Some(z) = fund.get(usize::from(ch)) else {
            return;
        };
        if l1 < self.min_l1 || l1 < self.floor_l1 || l1 == 0 {
            // Too weak to learn from: hold frequency, restart measuring;
            // after a second of that the lock is no longer known and, if
            // the loop was not locked, the reference returns to the middle
            // of its range (the nominal 50 or 60 Hz; 55 Hz before the
            // automatic choice), where the next hum most likely is.
            self.prev_ref = NO_REF;
            self.weak_cycles = self.weak_cycles.saturating_add(1);
            if self.weak_cycles == WEAK_UNLOCK_CYCLES {
                if !self.locked {
                    self.step = self.min_step + (self.max_step - self.min_step) / 2;
                }
                self.locked = false;
                self.fine = false;
                self.good = 0;
            }
            return;
        }
        self.weak_cycles = 0;
        let same_ref = self.prev_ref == ch;
        self.prev_ref = ch;
        let fine = self.fine && same_ref;
        if fine {
            // Fine stage: only the block ends need the phase, so the
            // CORDIC runs once every 8 cycles while locked.
            self.block_len += 1;
            if u32::from(self.block_len) < (1 << BLOCK_SHIFT) {
                return;
            }
        }
        let phi = atan2_turns(z.q.saturating_neg(), z.i);
        let prev = self.prev_phi;
        self.prev_phi = phi;
        if fine {
            let e = (phi.wrapping_sub(self.block_phi) as i32) >> BLOCK_SHIFT;
            self.block_phi = phi;
            self.block_len = 0;
            self.correct(e);
            self.fine_verdict(e.unsigned_abs());
            return;
        }
        if !same_ref {
            self.block_phi = phi;
            self.block_len = 0;
            return;
        }
        let e = phi.wrapping_sub(prev) as i32;
        self.correct(e);
        self.coarse_verdict(e.unsigned_abs(), phi);
    }

    /// `step += e · step / 2`, clamped; counts cycles pinned at a limit.
    fn correct(&mut self, e: i32) {
        let full = mul_wide_signed(e, self.step) >> 32;
        let wanted = i64::from(self.step) + (full >> 1);
        // max/min rather than clamp: clamp asserts its bounds are ordered
        // and would link a panic path for these run-time bounds.
        let step = wanted
            .max(i64::from(self.min_step))
            .min(i64::from(self.max_step));
        let pinned = wanted != step && e.unsigned_abs() >= COARSE_E;
        if pinned {
            self.pinned_cycles = self.pinned_cycles.saturating_add(1);
            // f_mains = f_ref · (1 + e), in mHz (rate · 1000 ≤ 5·10^7 and
            // f_ref ≤ 66 000 mHz fit u32; |e| < 2^31 keeps the sum in i64).
            let ref_mhz = (mul_wide(self.step, self.rate_hz * 1000) >> 32) as u32;
            let app = i64::from(ref_mhz) + (mul_wide_signed(e, ref_mhz) >> 32);
            self.apparent_mhz = app.max(0) as u32;
        } else {
            self.pinned_cycles = 0;
        }
        self.step = step as u32;
    }

    /// Health of the reference for the fault logic. Per cycle.
    pub fn health(&self) -> MainsHealth {
        if self.pinned_cycles >= self.lost_after {
            let (lo, hi) = PLAUSIBLE_MHZ;
            if (lo..=hi).contains(&self.apparent_mhz) {
                return MainsHealth::OutOfRange;
            }
            return MainsHealth::RateMismatch;
        }
        if self.unlocked_cycles >= self.lost_after {
            return MainsHealth::Lost;
        }
        MainsHealth::Ok
    }

    fn coarse_verdict(&mut self, e: u32, phi: u32) {
        if e >= COARSE_E {
            self.good = 0;
            return;
        }
        self.good = self.good.saturating_add(1);
        if self.good >= 4 {
            self.fine = true;
            self.good = 0;
            self.bad = 0;
            self.block_phi = phi;
            self.block_len = 0;
            if self.system == MainsSystem::Unknown {
                self.choose_system();
            }
        }
    }

    fn fine_verdict(&mut self, e: u32) {
        if e < LOCK_E {
            self.bad = 0;
            self.good = self.good.saturating_add(1);
            if self.good >= 2 {
                self.locked = true;
            }
            return;
        }
        self.good = 0;
        if e > COARSE_E {
            self.bad = self.bad.saturating_add(1);
            if self.bad >= 2 {
                self.fine = false;
                self.locked = false;
                self.bad = 0;
            }
        }
    }

    fn choose_system(&mut self) {
        let mid = phase_step(55_000, self.rate_hz);
        let ((lo, hi), system) = if self.step < mid {
            (RANGE_50, MainsSystem::Hz50)
        } else {
            (RANGE_60, MainsSystem::Hz60)
        };
        self.system = system;
        self.min_step = phase_step(lo, self.rate_hz);
        self.max_step = phase_step(hi, self.rate_hz);
        self.step = self.step.max(self.min_step).min(self.max_step);
    }

    /// Sets a least per-cycle `|i| + |q|` (Q8 codes) to learn from above
    /// `track_min_codes`: a detector with a noise estimate sets it a few
    /// noise units up, so that the loop does not learn from cycles of noise
    /// alone (whose phases are random: the reference would wander over its
    /// range). 0 removes it.
    pub fn set_floor(&mut self, l1_q8: u32) {
        self.floor_l1 = l1_q8;
    }

    /// Present reference frequency in hertz (diagnostics; uses `f32`).
    pub fn frequency_hz(&self) -> f32 {
        step_to_hz(self.step, self.rate_hz)
    }

    /// Present phase step per sample (2^32 = one turn).
    pub const fn step(&self) -> u32 {
        self.step
    }

    /// Whether the loop is locked to the mains.
    pub const fn locked(&self) -> bool {
        self.locked
    }

    /// The mains system chosen (or fixed by configuration).
    pub const fn system(&self) -> MainsSystem {
        self.system
    }
}

#[cfg(test)]
mod tests {
    extern crate std;
    use super::*;
    use crate::config::Config;

    /// `samples_to_wrap` (no division) against counting `advance` calls up
    /// to the phase wrap, the definition of a cycle, over retunes at every
    /// cycle end: steps anywhere in the tracking range, up and down, from a
    /// fixed-seed generator.
    #[test]
    fn samples_to_wrap_matches_the_phase_wrap() {
        for rate in [990, 2_000, 2_500, 50_000] {
            let cfg = Config::touch().with_sample_rate(rate);
            let mut t = MainsTracker::new(&cfg);
            let mut seed = 0x2545_f491_u32;
            for _ in 0..400 {
                let want = {
                    let mut probe = t;
                    let mut k = 1;
                    while probe.advance() == 0 {
                        k += 1;
                    }
                    k
                };
                assert_eq!(t.samples_to_wrap(), want, "rate {rate}, step {}", t.step);
                // Part of the cycle, then the rest.
                let first = want / 3;
                for _ in 0..first {
                    assert_eq!(t.advance(), 0);
                }
                assert_eq!(t.samples_to_wrap(), want - first);
                let mut n = 0;
                while n == 0 {
                    n = t.advance();
                }
                assert_eq!(n, want);
                // A new step within the range, as the loop would set.
                seed ^= seed << 13;
                seed ^= seed >> 17;
                seed ^= seed << 5;
                let span = t.max_step - t.min_step;
                t.step = t.min_step + seed % span.max(1);
                t.retune();
                t.start_cycle();
            }
        }
    }
}
