//! The per-channel pipeline put together: [`Frontend`] (per sample) feeds
//! [`Cycle`]s to [`Backend`] (per mains cycle); [`Detector`] owns both.
//!
//! ```text
//! samples ─▶ impulse gate ─▶ I/Q accumulate ─┐ (per sample, integer)
//!            shared oscillator phase ────────┘
//!   cycle end ─▶ Cycle { i, q per channel } ─▶ mains tracker (frequency)
//!            ─▶ coherent average ─▶ amplitude ─▶ decision ─▶ Event
//!                                        └─▶ baseline, noise (per cycle)
//! ```
//!
//! The split lets a host tool record the [`Cycle`]s of a log once and run
//! many [`Backend`] configurations over them: the events are the same as a
//! full run's, because a full run is exactly this composition.
//!
//! Above the per-channel decisions sit the panel rules (three or more
//! channels: a common ambient change rescales every baseline; two or more:
//! only the strongest pad may turn on, unless pads are independent) and the
//! fault logic. Each channel reports at most one event per mains cycle: a
//! decision event first, else the next change of its fault set.

//!
//! The stages live in files of their own, importing only downward:
//! `cycle.rs` (the sample types and the [`Cycle`] record), `frontend.rs`
//! (per sample), `amplitude.rs` (coherent averaging, amplitude and the
//! noise sample, per cycle), `backend.rs` (panel rules, baseline, decision,
//! faults, per cycle), `snapshot.rs` (the read-only view); this file holds
//! the [`Detector`] that owns both halves.

mod amplitude;
mod backend;
mod cycle;
mod frontend;
mod snapshot;
mod window;

pub use backend::Backend;
pub use cycle::{AdcSample, Cycle};
pub use frontend::Frontend;
pub use snapshot::{ChannelSnapshot, ChannelState};
pub use window::{
    per_decision_pfa, NoWindow, SlidingWindow, WindowParts, WindowStage, WindowTuning,
    FIELD_WINDOW_WORDS,
};

pub use crate::config::{MAX_CHANNELS, MAX_HARMONICS};

use crate::config::Config;
use crate::error::ConfigError;
use crate::event::Event;
use crate::mains::MainsSystem;

/// The whole detector for `N` channels (default 1) with `H` extra harmonic
/// bins (default 0; 2 measures the 2nd and 3rd harmonics too, for clipped
/// or distorted input).
///
/// ```
/// use humsense::{Config, Detector, EventKind};
/// let mut det: Detector = Detector::new(Config::touch()).unwrap();
/// // 12-bit codes around mid-rail: 50 Hz hum of 20 codes, 2 kHz sampling.
/// let mut touches = 0;
/// for n in 0..4_000u32 {
///     let amp = if (1_000..3_000).contains(&n) { 400.0 } else { 20.0 };
///     let x = 2048.0 + amp * (core::f32::consts::TAU * n as f32 / 40.0).sin();
///     if let Some(e) = det.push(x as u16) {
///         if e.kind == EventKind::TouchOn { touches += 1; }
///     }
/// }
/// assert_eq!(touches, 1);
/// ```
///
/// Never panics, for any sample value and any configuration that
/// [`Detector::new`] accepted.
#[derive(Clone, Debug)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Detector<const N: usize = 1, const H: usize = 0, Win: WindowStage = NoWindow> {
    front: Frontend<N, H>,
    back: Backend<N, H, Win>,
}

/// A detector with window memory for the field profile's sliding window
/// (`window_ms` up to 0.5 s at 60 Hz: [`FIELD_WINDOW_WORDS`] words, 128
/// bytes, per channel). With the touch profile (no window) it works as a
/// [`Detector`] and the memory idles.
///
/// ```
/// use humsense::{Config, EventKind, FieldDetector, MainsMode};
/// let mut det: FieldDetector = FieldDetector::new(Config::field().with_mains(MainsMode::Hz50)).unwrap();
/// // A 50 Hz field approached from 5 s on, 60 codes after a quarter of a
/// // second (2 kHz, 12 bits). (One that appears within a mains cycle or
/// // two is taken as an ambient step: a lamp switched on nearby.)
/// let mut on = None;
/// for n in 0..12_000u32 {
///     let amp = 60.0 * ((n as f32 - 10_000.0) / 500.0).clamp(0.0, 1.0);
///     let x = 2048.0 + amp * (core::f32::consts::TAU * n as f32 / 40.0).sin()
///         + 3.0 * (n as f32 * 1.7).sin(); // a little of something else
///     if let Some(e) = det.push(x as u16) {
///         if e.kind == EventKind::FieldOn { on = Some(e.sample); }
///     }
/// }
/// // Reported within the 0.5 s window of the onset.
/// let at = on.unwrap();
/// assert!(at >= 10_000 && at < 11_000, "{at}");
/// ```
pub type FieldDetector<const N: usize = 1, const H: usize = 0> =
    Detector<N, H, SlidingWindow<N, FIELD_WINDOW_WORDS>>;

impl<const N: usize, const H: usize, Win: WindowStage> Detector<N, H, Win> {
    /// Validates `config` and builds the detector; the error names the
    /// field that is wrong. Never panics.
    pub fn new(config: Config) -> Result<Self, ConfigError> {
        // Validated once; both halves are built in place.
        config.validate(H)?;
        Win::check(&config)?;
        Ok(Self {
            front: Frontend::build(&config),
            back: Backend::build(&config),
        })
    }

    /// Takes one sample per channel; calls `emit` for each event (at most
    /// one per channel per mains cycle). Never panics.
    #[inline]
    pub fn push_frame<S: AdcSample>(&mut self, frame: &[S; N], emit: impl FnMut(Event)) {
        let back = &mut self.back;
        self.front
            .push_frame_with(frame, |cycle| back.process(cycle, emit));
        if Win::MEMORY {
            self.front.set_tracking_floor(self.back.tracking_floor());
        }
    }

    /// Takes a block of interleaved samples (`ch0, ch1, …, ch0, ch1, …`),
    /// for example a DMA buffer; calls `emit` for each event. Returns how
    /// many trailing samples it did not take because they do not make a
    /// whole frame (0 when the block length is a multiple of `N`, as DMA
    /// buffers of a scanning ADC are): nothing is dropped silently, and the
    /// caller can hand them over again at the front of the next block.
    /// Never panics, never allocates.
    pub fn push_block<S: AdcSample>(
        &mut self,
        samples: &[S],
        mut emit: impl FnMut(Event),
    ) -> usize {
        let back = &mut self.back;
        let left = self
            .front
            .push_block(samples, |cycle| back.process(cycle, &mut emit));
        if Win::MEMORY {
            // Set after the block: the floor a block's later cycles see is
            // the one before it (a block is short against the noise
            // estimate's time constant).
            self.front.set_tracking_floor(self.back.tracking_floor());
        }
        left
    }

    /// A view of channel `ch` after its latest cycle (amplitude, baseline,
    /// noise, SNR, state, level, faults, mains frequency and lock, samples
    /// processed), or `None` past the last channel. Costs nothing until
    /// called. Never panics.
    pub fn snapshot(&self, ch: usize) -> Option<ChannelSnapshot> {
        let mut s = self.back.snapshot(ch)?;
        s.mains_hz = self.mains_hz();
        s.mains_locked = self.mains_locked();
        s.samples = self.samples_seen();
        Some(s)
    }

    /// Present mains reference frequency in hertz.
    pub fn mains_hz(&self) -> f32 {
        self.front.tracker().frequency_hz()
    }

    /// Whether the mains tracker is locked.
    pub fn mains_locked(&self) -> bool {
        self.front.tracker().locked()
    }

    /// The mains system chosen or configured.
    pub fn mains_system(&self) -> MainsSystem {
        self.front.tracker().system()
    }

    /// Samples taken per channel so far.
    pub fn samples_seen(&self) -> u64 {
        self.front.samples_seen()
    }

    /// The per-sample half, for tools that record [`Cycle`]s.
    pub fn frontend(&self) -> &Frontend<N, H> {
        &self.front
    }

    /// The per-cycle half.
    pub fn backend(&self) -> &Backend<N, H, Win> {
        &self.back
    }
}

impl<const H: usize, Win: WindowStage> Detector<1, H, Win> {
    /// Takes one sample of a single-channel detector; returns the event it
    /// caused, if any (most calls return `None`, cheaply). Never panics.
    #[inline]
    pub fn push<S: AdcSample>(&mut self, sample: S) -> Option<Event> {
        let mut out = None;
        self.push_frame(&[sample], |e| out = Some(e));
        out
    }
}
