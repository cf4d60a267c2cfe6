//! The mains period in timer ticks, tracked from the intervals between
//! pulse centres (acquire, track, lock, pin), with the ADC tracker's health
//! semantics.

use crate::config::{Config, MainsMode, RANGE_50, RANGE_60};
use crate::mains::{MainsHealth, MainsSystem};

use super::divide::div_u64_u32;

/// Whether the period is being acquired or tracked.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub(super) enum Stage {
    Acquire,
    Track,
}

/// Windows in a row that agree within 1/32 before the period is taken.
pub const ACQUIRE_WINDOWS: u8 = 4;
/// Windows in a row within 1/256 (plus two ticks) before lock.
pub const LOCK_WINDOWS: u8 = 8;
/// Windows in a row with edges but no coherent interval before the lock is
/// dropped and the period acquired again.
pub const UNLOCK_WINDOWS: u8 = 8;

/// The mains period in timer ticks, from the intervals between pulse
/// centres: the edge input's counterpart of [`MainsTracker`](crate::mains::MainsTracker),
/// with the same health semantics ([`MainsHealth`]).
///
/// - **acquire**: intervals within 25–100 Hz are averaged per window; when
///   [`ACQUIRE_WINDOWS`] windows in a row agree within 1/32, the apparent
///   frequency is formed. Within the system's range (in automatic mode:
///   44–66 Hz, then below 55 Hz is 50 Hz, else 60 Hz, and the range narrows
///   to that system's) it becomes the period and tracking starts; outside
///   it the tracker is **pinned** and counts the window.
/// - **track**: intervals within 1/16 of the period are averaged per
///   window, and `P ← P + (m − P)/4`, clamped to the range (pinned when the
///   mean lies outside the range by more than 1/64). **Locked** after
///   [`LOCK_WINDOWS`] windows in a row with `|m − P| ≤ P/256 + 2` ticks;
///   after [`UNLOCK_WINDOWS`] windows in a row with edges but no coherent
///   interval, unlocked and acquiring again.
///
/// A window without any edge on any channel carries no information and
/// changes nothing: a pin at rest does not unlock, lose or pin the
/// reference. `MainsHealth::Lost` after `mains_lost_cycles` windows with
/// edges while unlocked; `OutOfRange` / `RateMismatch` after
/// `mains_lost_cycles` pinned windows, with the apparent frequency inside or
/// outside 44–66 Hz.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct EdgeMains {
    tick_hz: u32,
    /// Period, ticks · 256.
    pub(super) period_q8: u32,
    /// Period limits of the system (both systems before the automatic
    /// choice), ticks · 256.
    min_q8: u32,
    max_q8: u32,
    /// Interval bounds for the per-edge check, ticks.
    pub(super) accept: (u32, u32),
    pub(super) stage: Stage,
    system: MainsSystem,
    locked: bool,
    good: u8,
    bad: u8,
    streak: u8,
    prev_mean_q8: u32,
    unlocked_cycles: u16,
    pinned_cycles: u16,
    apparent_mhz: u32,
    lost_after: u16,
}

/// `tick_hz · 256 000 / mhz`: a period in ticks · 256 (saturating).
pub(super) const fn period_q8_of(tick_hz: u32, mhz: u32) -> u32 {
    let q = div_u64_u32(tick_hz as u64 * 256_000, mhz);
    if q > u32::MAX as u64 {
        u32::MAX
    } else {
        q as u32
    }
}

impl EdgeMains {
    /// A tracker for `tick_hz` and `cfg`'s mains mode and
    /// `mains_lost_cycles`.
    pub(super) fn new(tick_hz: u32, cfg: &Config) -> Self {
        let (system, start_mhz, stage) = match cfg.mains {
            MainsMode::Auto => (MainsSystem::Unknown, 55_000, Stage::Acquire),
            MainsMode::Hz50 => (MainsSystem::Hz50, 50_000, Stage::Track),
            MainsMode::Hz60 => (MainsSystem::Hz60, 60_000, Stage::Track),
        };
        let (lo, hi) = cfg.tracking_range_mhz();
        let mut m = Self {
            tick_hz,
            period_q8: period_q8_of(tick_hz, start_mhz),
            min_q8: period_q8_of(tick_hz, hi),
            max_q8: period_q8_of(tick_hz, lo),
            accept: (0, 0),
            stage,
            system,
            locked: false,
            good: 0,
            bad: 0,
            streak: 0,
            prev_mean_q8: 0,
            unlocked_cycles: 0,
            pinned_cycles: 0,
            apparent_mhz: 0,
            lost_after: cfg.mains_lost_cycles,
        };
        m.set_accept();
        m
    }

    fn set_accept(&mut self) {
        self.accept = match self.stage {
            Stage::Acquire => (
                period_q8_of(self.tick_hz, 100_000) >> 8,
                period_q8_of(self.tick_hz, 25_000) >> 8,
            ),
            Stage::Track => {
                let p = self.period_q8 >> 8;
                (p - (p >> 4), p.saturating_add(p >> 4))
            }
        };
    }

    /// Learns from one window: `sum` and `n` of the pulse-centre intervals
    /// accepted in it (ticks), `active` whether any channel had an edge.
    pub(super) fn end_window(&mut self, sum: u64, n: u32, active: bool) {
        if !active && n == 0 {
            return;
        }
        let mean_q8 = if n == 0 {
            0
        } else {
            div_u64_u32(sum << 8, n).min(u64::from(u32::MAX)) as u32
        };
        match self.stage {
            Stage::Track => self.track(mean_q8),
            Stage::Acquire => self.acquire(mean_q8),
        }
        self.unlocked_cycles = if self.locked {
            0
        } else {
            self.unlocked_cycles.saturating_add(1)
        };
        self.set_accept();
    }

    fn track(&mut self, m: u32) {
        if m == 0 {
            self.good = 0;
            self.bad = self.bad.saturating_add(1);
            if self.bad >= UNLOCK_WINDOWS {
                self.locked = false;
                self.stage = Stage::Acquire;
                self.bad = 0;
                self.streak = 0;
                self.pinned_cycles = 0;
            }
            return;
        }
        self.bad = 0;
        let p = self.period_q8;
        let e = m.abs_diff(p);
        if e <= (p >> 8) + 2 * 256 {
            self.good = self.good.saturating_add(1);
            if self.good >= LOCK_WINDOWS {
                self.locked = true;
            }
        } else {
            self.good = 0;
        }
        let wanted = if m >= p {
            p + ((m - p) >> 2)
        } else {
            p - ((p - m) >> 2)
        };
        let clamped = wanted.max(self.min_q8).min(self.max_q8);
        let outside = m < self.min_q8.saturating_sub(p >> 6) || m > self.max_q8 + (p >> 6);
        self.pin(outside, m);
        self.period_q8 = clamped;
    }

    fn acquire(&mut self, m: u32) {
        if m == 0 {
            self.streak = 0;
            self.pinned_cycles = 0;
            return;
        }
        let prev = self.prev_mean_q8;
        self.prev_mean_q8 = m;
        if self.streak > 0 && m.abs_diff(prev) <= (prev >> 5) + 2 * 256 {
            self.streak = self.streak.saturating_add(1);
        } else {
            self.streak = 1;
            self.pinned_cycles = 0;
            return;
        }
        if self.streak < ACQUIRE_WINDOWS {
            return;
        }
        if self.system == MainsSystem::Unknown && (self.min_q8..=self.max_q8).contains(&m) {
            let ((lo, hi), system) = if m > period_q8_of(self.tick_hz, 55_000) {
                (RANGE_50, MainsSystem::Hz50)
            } else {
                (RANGE_60, MainsSystem::Hz60)
            };
            self.system = system;
            self.min_q8 = period_q8_of(self.tick_hz, hi);
            self.max_q8 = period_q8_of(self.tick_hz, lo);
        }
        if (self.min_q8..=self.max_q8).contains(&m) {
            self.period_q8 = m;
            self.stage = Stage::Track;
            self.good = 0;
            self.bad = 0;
            self.pinned_cycles = 0;
        } else {
            self.pin(true, m);
        }
    }

    /// Counts a pinned window (or resets the count), with the apparent
    /// frequency of mean interval `m` (ticks · 256).
    fn pin(&mut self, pinned: bool, m: u32) {
        if pinned {
            self.pinned_cycles = self.pinned_cycles.saturating_add(1);
            let mhz = div_u64_u32(u64::from(self.tick_hz) * 256_000, m.max(1));
            self.apparent_mhz = mhz.min(u64::from(u32::MAX)) as u32;
        } else {
            self.pinned_cycles = 0;
        }
    }

    /// Health of the reference, as [`MainsTracker::health`](crate::mains::MainsTracker::health).
    pub fn health(&self) -> MainsHealth {
        if self.pinned_cycles >= self.lost_after {
            if (44_000..=66_000).contains(&self.apparent_mhz) {
                return MainsHealth::OutOfRange;
            }
            return MainsHealth::RateMismatch;
        }
        if self.unlocked_cycles >= self.lost_after {
            return MainsHealth::Lost;
        }
        MainsHealth::Ok
    }

    /// Present period in ticks · 256.
    pub const fn period_q8(&self) -> u32 {
        self.period_q8
    }

    /// Present mains frequency in hertz (diagnostics; uses `f32`).
    pub fn frequency_hz(&self) -> f32 {
        self.tick_hz as f32 * 256.0 / self.period_q8.max(1) as f32
    }

    /// Whether the tracker is locked.
    pub const fn locked(&self) -> bool {
        self.locked
    }

    /// The mains system chosen or configured.
    pub const fn system(&self) -> MainsSystem {
        self.system
    }

    /// Apparent frequency of the last pinned window, mHz (0 before any).
    pub const fn apparent_mhz(&self) -> u32 {
        self.apparent_mhz
    }
}
