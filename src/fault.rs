//! Fault detection per channel, once per mains cycle.
//!
//! With amplitude `a` (Q8 codes), cycle mean `m` and the ADC rails
//! `lo..=hi` (span `s = hi − lo`):
//!
//! - **saturated**: `a > 0.52 · s/2` (a sine clipped at both rails; an
//!   unclipped full-scale sine has `a = s/2`) or `m ≥ hi − s/32` (sitting at
//!   the top rail), for `fault_saturation_cycles` cycles in a row while the
//!   channel is not active; cleared when `a < 0.48 · s/2` and
//!   `m < hi − s/16`, or when the channel is active. Sitting at the bottom
//!   rail is what a single-supply front end biased at 0 V does at rest, so
//!   it is not saturation (a bottom rail with no movement at all is stuck).
//! - **stuck**: the cycle demodulated to exactly nothing (every group of
//!   samples equal to the DC estimate, which a steady code reaches one or
//!   two cycles after it starts), for `fault_stuck_cycles` cycles; cleared
//!   by the first cycle that moves.
//! - **no hum**: `a < nohum_codes` for `nohum_cycles` cycles (not while
//!   stuck); cleared once `a > 2 · nohum_codes`.
//! - **mains** faults mirror [`MainsHealth`].
//!
//! Saturated, stuck and no-hum are faults of the input itself
//! ([`SIGNAL_FAULTS`]): the channel decides nothing while one is present
//! and learns its baseline afresh when it ends.

use crate::config::Config;
use crate::event::{EventKind, Fault, Faults};
use crate::fixed::f32_to_fixed;
use crate::mains::MainsHealth;

/// Faults of the input itself.
pub const SIGNAL_FAULTS: Faults =
    Faults(Fault::Saturated.bit() | Fault::Stuck.bit() | Fault::NoHum.bit());

/// The fault stage's constants (from [`Config`]).
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct FaultTuning {
    saturated_cycles: u16,
    stuck_cycles: u16,
    nohum_q8: u32,
    nohum_cycles: u16,
}

impl FaultTuning {
    /// Converts a validated config.
    pub fn new(cfg: &Config) -> Self {
        Self {
            saturated_cycles: cfg.fault_saturation_cycles,
            stuck_cycles: cfg.fault_stuck_cycles,
            // Below 2^31 (a validated config has at most 10 000 codes,
            // 2.56·10^6 in Q8), so twice it fits u32.
            nohum_q8: f32_to_fixed(cfg.nohum_codes, 8).min(i32::MAX as u32),
            nohum_cycles: cfg.nohum_cycles,
        }
    }
}

impl FaultTuning {
    /// `nohum_codes` in Q8: below it a cycle carries no hum to learn from.
    pub const fn nohum_q8(&self) -> u32 {
        self.nohum_q8
    }
}

/// What the fault stage sees of one channel's cycle.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct FaultInput {
    /// Amplitude, Q8 codes.
    pub amp_q8: u32,
    /// Mean level, offset-binary code.
    pub dc: u16,
    /// The cycle demodulated to exactly nothing (an input that does not
    /// move; see the module docs).
    pub flat: bool,
    /// The channel is active (a touch may saturate).
    pub active: bool,
    /// ADC rails (lowest and highest code), offset binary.
    pub rails: (u16, u16),
    /// The mains reference's health.
    pub health: MainsHealth,
}

/// Per-channel fault counters and sets (8 bytes).
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct FaultState {
    saturated: u16,
    stuck: u16,
    nohum: u16,
    present: Faults,
    reported: Faults,
}

impl FaultState {
    /// No fault.
    pub const fn new() -> Self {
        Self {
            saturated: 0,
            stuck: 0,
            nohum: 0,
            present: Faults::NONE,
            reported: Faults::NONE,
        }
    }

    /// Faults present after the latest cycle.
    pub const fn present(&self) -> Faults {
        self.present
    }

    /// Updates the counters from one cycle; returns the faults present now.
    /// Inline, for the same reason as the mains tracker's cycle end: one
    /// caller, the back end.
    #[inline(always)]
    pub fn update(&mut self, x: &FaultInput, t: &FaultTuning) -> Faults {
        let (lo, hi) = (u32::from(x.rails.0), u32::from(x.rails.1));
        let span = hi.saturating_sub(lo).max(1);
        // span/2 of amplitude is span·128 in Q8: 0.52 of it is span·66.6.
        // Exact: span < 2^16, so the products fit 32 bits.
        let swing_on = x.amp_q8 > span * 67;
        let swing_off = x.amp_q8 < span * 61;
        // hi ≥ span, so neither subtraction wraps (hi < lo gives span 1).
        let dc = u32::from(x.dc);
        let top_on = dc >= hi - (span >> 5);
        let top_off = dc < hi - (span >> 4);
        // The common cycle: every counter restarts and, as each threshold
        // is at least one cycle, no fault is present: the result of the
        // steps below, in fewer instructions (not on the Cortex-M0, whose
        // flash it would cost). The saturation condition is written out
        // here and below: named once in a `let`, it cost the M0's
        // block-path firmware 36 bytes (measured), which it does not have.
        #[cfg(not(humsense_armv6m))]
        if (x.active || (swing_off && top_off))
            && !x.flat
            && x.amp_q8 > t.nohum_q8 * 2
            && x.health == MainsHealth::Ok
        {
            self.saturated = 0;
            self.stuck = 0;
            self.nohum = 0;
            self.present = Faults::NONE;
            return Faults::NONE;
        }
        if x.active || (swing_off && top_off) {
            self.saturated = 0;
        } else if swing_on || top_on {
            self.saturated = self.saturated.saturating_add(1);
        }
        self.stuck = if x.flat {
            self.stuck.saturating_add(1)
        } else {
            0
        };
        if x.amp_q8 < t.nohum_q8 {
            self.nohum = self.nohum.saturating_add(1);
        } else if x.amp_q8 > t.nohum_q8 * 2 {
            self.nohum = 0;
        }
        let stuck = self.stuck >= t.stuck_cycles;
        let mut bits = match x.health {
            MainsHealth::Ok => 0,
            MainsHealth::Lost => Fault::MainsLost.bit(),
            MainsHealth::OutOfRange => Fault::MainsOutOfRange.bit(),
            MainsHealth::RateMismatch => Fault::RateMismatch.bit(),
        };
        if self.saturated >= t.saturated_cycles {
            bits |= Fault::Saturated.bit();
        }
        if stuck {
            bits |= Fault::Stuck.bit();
        } else if self.nohum >= t.nohum_cycles {
            bits |= Fault::NoHum.bit();
        }
        self.present = Faults(bits);
        self.present
    }

    /// The next fault event to report, if the present set differs from the
    /// reported one: new faults first, then clears, each in bit order.
    pub fn next_change(&mut self) -> Option<EventKind> {
        if self.present == self.reported {
            return None;
        }
        if let Some(new) = self.present.first_not_in(self.reported) {
            self.reported = self.reported.with(new, true);
            return Some(EventKind::Fault(new));
        }
        if let Some(gone) = self.reported.first_not_in(self.present) {
            self.reported = self.reported.with(gone, false);
            return Some(EventKind::FaultClear(gone));
        }
        None
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn input(amp_codes: u32, dc: u16, flat: bool) -> FaultInput {
        FaultInput {
            amp_q8: amp_codes * 256,
            dc,
            flat,
            active: false,
            rails: (0, 4095),
            health: MainsHealth::Ok,
        }
    }

    #[test]
    fn reports_one_change_per_call_in_bit_order() {
        let t = FaultTuning::new(&Config::touch());
        let mut f = FaultState::new();
        let mut x = input(0, 4095, true);
        x.health = MainsHealth::Lost;
        for _ in 0..60 {
            f.update(&x, &t);
        }
        assert_eq!(f.next_change(), Some(EventKind::Fault(Fault::Saturated)));
        assert_eq!(f.next_change(), Some(EventKind::Fault(Fault::Stuck)));
        assert_eq!(f.next_change(), Some(EventKind::Fault(Fault::MainsLost)));
        assert_eq!(f.next_change(), None);
        f.update(&input(30, 2048, false), &t);
        assert_eq!(
            f.next_change(),
            Some(EventKind::FaultClear(Fault::Saturated))
        );
        assert_eq!(f.next_change(), Some(EventKind::FaultClear(Fault::Stuck)));
        assert_eq!(
            f.next_change(),
            Some(EventKind::FaultClear(Fault::MainsLost))
        );
        assert_eq!(f.next_change(), None);
    }

    #[test]
    fn swing_and_top_limits_are_exact() {
        // Self-consistency, not an external reference: the limits restated
        // from the code as exact integer products, amp > 67·span counts,
        // amp < 61·span resets (the module docs' 0.52 and 0.48 of span/2
        // codes, span·128 in Q8, rounded to whole multiples of span:
        // 66.56 → 67, 61.44 → 61); a mean at or above hi − ⌊span/32⌋
        // counts, one below hi − ⌊span/16⌋ (with a small swing) resets.
        // The test pins the boundaries (off by one in either direction
        // fails); it does not show the fractions are the right ones. Spans
        // of a 12-bit and a 16-bit converter, offset binary and two's
        // complement (rails around 32 768).
        let t = FaultTuning::new(&Config::touch());
        for rails in [(0u16, 4_095u16), (0, 65_535), (30_720, 34_815)] {
            let (lo, hi) = (u32::from(rails.0), u32::from(rails.1));
            let span = hi - lo;
            let mid = (lo + span / 2) as u16;
            let at = |amp: u32, dc: u16, f: &mut FaultState| {
                let x = FaultInput {
                    amp_q8: amp,
                    dc,
                    flat: false,
                    active: false,
                    rails,
                    health: MainsHealth::Ok,
                };
                f.update(&x, &t);
                f.saturated
            };
            let (on, off) = (span * 67, span * 61);
            let mut f = FaultState::new();
            assert_eq!(at(on + 1, mid, &mut f), 1, "{rails:?}");
            assert_eq!(at(on, mid, &mut f), 1, "{rails:?}");
            assert_eq!(at(off, mid, &mut f), 1, "{rails:?}");
            assert_eq!(at(off - 1, mid, &mut f), 0, "{rails:?}");
            let (top_on, top_off) = ((hi - span / 32) as u16, (hi - span / 16) as u16);
            assert_eq!(at(0, top_on, &mut f), 1, "{rails:?}");
            assert_eq!(at(0, top_on - 1, &mut f), 1, "{rails:?}");
            assert_eq!(at(0, top_off, &mut f), 1, "{rails:?}");
            assert_eq!(at(0, top_off - 1, &mut f), 0, "{rails:?}");
            assert_eq!(at(0, top_on - 1, &mut f), 0, "{rails:?}");
        }
    }

    #[test]
    fn resting_at_the_bottom_rail_is_not_saturation() {
        // A single-supply front end at rest: mean a few codes above 0.
        let t = FaultTuning::new(&Config::touch());
        let mut f = FaultState::new();
        for _ in 0..1000 {
            f.update(&input(20, 6, false), &t);
        }
        assert!(f.present().is_empty(), "{:?}", f.present());
    }
}
