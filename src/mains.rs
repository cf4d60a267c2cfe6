//! Mains frequency: the shared reference oscillator, the automatic 50/60 Hz
//! choice and a frequency-locked loop that tracks drift.
//!
//! Per sample the tracker only advances its phase: `θ += step` (wrapping
//! `u32`, 2^32 = one turn); the wrap marks the end of a mains cycle. Once per
//! cycle it takes the fundamental's phase on the strongest channel,
//! `φ_k = atan2(−q, i)` (phase of the signal relative to the reference), and
//! its change over one reference cycle, `e_k = φ_k − φ_{k−1}` (turns), which
//! equals `(f_mains − f_ref) / f_ref`. The loop then sets
//!
//! `step ← step + g · e_k · step`, clamped to the tracking range,
//!
//! with `g = 1/2` while acquiring and `1/8` once locked (frequency error
//! shrinks by 1 − g per cycle). It learns only from cycles whose amplitude is
//! at least `track_min_codes`; weaker cycles hold the frequency.
//!
//! Lock: `|e| < 1/256` turn (0.4 % of the frequency) for 6 learning cycles in
//! a row; lost after 8 in a row with `|e| > 1/64` turn. In [`MainsMode::Auto`]
//! the reference starts at 55 Hz between the two systems; at first lock the
//! system is chosen (below 55 Hz: 50 Hz) and the range narrows to it.

use crate::config::{Config, MainsMode, RANGE_50, RANGE_60};
use crate::demod::Iq;
use crate::fixed::{atan2_turns, phase_step, step_to_hz};

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

const LOCK_E: u32 = 1 << 24; // 1/256 turn
const UNLOCK_E: u32 = 1 << 26; // 1/64 turn
const LOCK_CYCLES: u8 = 6;
const UNLOCK_CYCLES: u8 = 8;

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
    /// Phase of the previous learning cycle, and on which channel.
    prev_phi: u32,
    prev_ref: u8,
    /// Least per-cycle |i| + |q| (Q8 codes) that the loop learns from.
    min_l1: u32,
    good: u8,
    bad: u8,
    locked: bool,
    system: MainsSystem,
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
        Self {
            phase: 0,
            step: phase_step(start_mhz, rate),
            min_step: phase_step(lo, rate),
            max_step: phase_step(hi, rate),
            rate_hz: rate,
            count: 0,
            prev_phi: 0,
            prev_ref: u8::MAX,
            min_l1,
            good: 0,
            bad: 0,
            locked: false,
            system,
        }
    }

    /// Reference phase for the present sample (before [`advance`](Self::advance)).
    #[inline(always)]
    pub const fn phase(&self) -> u32 {
        self.phase
    }

    /// Advances one sample; returns the number of samples in the cycle when
    /// this sample completed one, else 0.
    #[inline(always)]
    pub fn advance(&mut self) -> u32 {
        let (p, wrapped) = self.phase.overflowing_add(self.step);
        self.phase = p;
        self.count += 1;
        if wrapped {
            let n = self.count;
            self.count = 0;
            n
        } else {
            0
        }
    }

    /// Learns from the cycle just ended. `fund` yields each channel's
    /// fundamental; the strongest channel (by |i| + |q|) is the reference.
    /// Per cycle.
    pub fn end_cycle(&mut self, fund: impl Iterator<Item = Iq>) {
        let mut best: Option<(u8, Iq, u32)> = None;
        for (ch, z) in (0u8..).zip(fund) {
            let l1 = z.i.unsigned_abs().saturating_add(z.q.unsigned_abs());
            if best.is_none_or(|(_, _, b)| l1 > b) {
                best = Some((ch, z, l1));
            }
        }
        let Some((ch, z, l1)) = best else { return };
        if l1 < self.min_l1 || l1 == 0 {
            // Too weak to learn from: hold frequency, forget the phase.
            self.prev_ref = u8::MAX;
            return;
        }
        let phi = atan2_turns(z.q.saturating_neg(), z.i);
        let had_prev = self.prev_ref == ch;
        let e = phi.wrapping_sub(self.prev_phi) as i32;
        self.prev_phi = phi;
        self.prev_ref = ch;
        if !had_prev {
            return;
        }
        // Frequency error times step: e is turns·2^32.
        let full = (i64::from(e) * i64::from(self.step)) >> 32;
        let corr = if self.locked { full >> 3 } else { full >> 1 };
        let step =
            (i64::from(self.step) + corr).clamp(i64::from(self.min_step), i64::from(self.max_step));
        self.step = step as u32;
        self.update_lock(e.unsigned_abs());
    }

    fn update_lock(&mut self, e: u32) {
        if e < LOCK_E {
            self.bad = 0;
            self.good = self.good.saturating_add(1);
            if !self.locked && self.good >= LOCK_CYCLES {
                self.locked = true;
                if self.system == MainsSystem::Unknown {
                    self.choose_system();
                }
            }
        } else {
            self.good = 0;
            if e > UNLOCK_E {
                self.bad = self.bad.saturating_add(1);
                if self.bad >= UNLOCK_CYCLES {
                    self.locked = false;
                }
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
        self.step = self.step.clamp(self.min_step, self.max_step);
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
