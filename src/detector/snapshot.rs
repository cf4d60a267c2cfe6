//! A read-only view of one channel, computed only when asked for.

use super::backend::Backend;
use super::window::WindowStage;
use crate::event::Faults;
use crate::fault::SIGNAL_FAULTS;

/// What a channel is doing.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum ChannelState {
    /// Learning the baseline after start-up or after a fault; no decisions
    /// yet.
    Learning,
    /// The input is saturated, stuck or without hum; no decisions.
    Faulted,
    /// Below the on threshold.
    Idle,
    /// Above the on threshold, debouncing.
    Pending,
    /// Touched, or field present.
    Active,
}

/// A read-only view of one channel after its latest cycle. Computed only
/// when asked for.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
#[non_exhaustive]
pub struct ChannelSnapshot {
    /// Latest cycle's amplitude (after coherent averaging), Q8 codes.
    pub amplitude_q8: u32,
    /// Baseline, Q8 codes.
    pub baseline_q8: u32,
    /// Noise estimate (mean absolute deviation), Q8 codes.
    pub noise_q8: u32,
    /// On threshold for the next cycle, Q8 codes.
    pub on_q8: u32,
    /// Off threshold for the next cycle, Q8 codes.
    pub off_q8: u32,
    /// What the channel is doing.
    pub state: ChannelState,
    /// Present level (see [`DecisionState::level`](crate::decision::DecisionState::level)).
    pub level: u8,
    /// Faults present now.
    pub faults: Faults,
    /// Mains reference frequency in hertz (0 from a bare [`Backend`]).
    pub mains_hz: f32,
    /// Whether the mains tracker is locked (false from a bare [`Backend`]).
    pub mains_locked: bool,
    /// Samples processed per channel (from a bare [`Backend`]: up to the
    /// end of the latest cycle).
    pub samples: u64,
}

impl ChannelSnapshot {
    /// Amplitude over noise in dB, `20·log10(amplitude / noise)` (micromath,
    /// within about 0.01 dB); 0 when either is zero.
    pub fn snr_db(&self) -> f32 {
        if self.amplitude_q8 == 0 || self.noise_q8 == 0 {
            return 0.0;
        }
        20.0 * micromath::F32Ext::log10(self.amplitude_q8 as f32 / self.noise_q8 as f32)
    }

    /// Whether the channel is active.
    pub fn active(&self) -> bool {
        self.state == ChannelState::Active
    }
}

impl<const N: usize, const H: usize, Win: WindowStage> Backend<N, H, Win> {
    /// A view of channel `ch`, or `None` past the last channel.
    pub fn snapshot(&self, ch: usize) -> Option<ChannelSnapshot> {
        let c = self.ch.get(ch)?;
        let b = c.baseline.baseline_q8();
        let n = c.baseline.noise_q8();
        // With a window in use, the thresholds it decides on.
        let (on_q8, off_q8) = self
            .window_thresholds(ch, n)
            .unwrap_or_else(|| self.decision_t.thresholds(b, n));
        let state = if c.faults.present().intersects(SIGNAL_FAULTS) {
            ChannelState::Faulted
        } else if !c.baseline.settled(&self.baseline_t) {
            ChannelState::Learning
        } else if c.decision.active() {
            ChannelState::Active
        } else if c.decision.pending() {
            ChannelState::Pending
        } else {
            ChannelState::Idle
        };
        Some(ChannelSnapshot {
            amplitude_q8: c.amp_q8,
            baseline_q8: b,
            noise_q8: c.baseline.noise_q8(),
            on_q8,
            off_q8,
            state,
            level: c.decision.level(),
            faults: c.faults.present(),
            mains_hz: 0.0,
            mains_locked: false,
            samples: self.last_sample.wrapping_add(1),
        })
    }
}
