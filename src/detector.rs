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

use crate::baseline::{BaselineState, BaselineTuning};
use crate::config::Config;
use crate::decision::{DecisionState, DecisionTuning, Verdict};
use crate::demod::{DemodState, Iq};
use crate::error::ConfigError;
use crate::event::Event;
use crate::fixed::isqrt_u64;
use crate::impulse::ImpulseState;
use crate::mains::{MainsSystem, MainsTracker};

/// An integer ADC sample type the detector accepts.
pub trait AdcSample: Copy {
    /// The code as `i32`.
    fn code(self) -> i32;
}

impl AdcSample for u16 {
    #[inline(always)]
    fn code(self) -> i32 {
        i32::from(self)
    }
}

impl AdcSample for i16 {
    #[inline(always)]
    fn code(self) -> i32 {
        i32::from(self)
    }
}

/// Largest channel count.
pub const MAX_CHANNELS: usize = 32;
/// Largest number of extra harmonic bins (orders 2 to 5).
pub const MAX_HARMONICS: usize = 4;

/// What the front end produces at the end of each mains cycle.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Cycle<const N: usize, const H: usize> {
    /// Index of the sample (per channel, 0-based) that completed the cycle.
    pub end_sample: u64,
    /// Samples in the cycle.
    pub samples: u32,
    /// Fundamental I/Q per channel, Q8 codes.
    pub fund: [Iq; N],
    /// Harmonic I/Q per channel (orders 2 to H + 1), Q8 codes.
    pub harm: [[Iq; H]; N],
}

/// Per-sample half of the pipeline: impulse gate, demodulator and the shared
/// mains tracker, for `N` channels with `H` extra harmonic bins.
#[derive(Clone, Debug)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Frontend<const N: usize, const H: usize> {
    tracker: MainsTracker,
    impulse: [ImpulseState; N],
    demod: [DemodState<H>; N],
    next_sample: u64,
    spike_max_len: u8,
    spike_floor: u16,
}

impl<const N: usize, const H: usize> Frontend<N, H> {
    /// Validates `cfg` and builds the front end. Never panics.
    pub fn new(cfg: &Config) -> Result<Self, ConfigError> {
        const { assert!(N >= 1 && N <= MAX_CHANNELS && H <= MAX_HARMONICS) };
        cfg.validate(H)?;
        Ok(Self {
            tracker: MainsTracker::new(cfg),
            impulse: [ImpulseState::new(); N],
            demod: [DemodState::new(); N],
            next_sample: 0,
            spike_max_len: cfg.spike_max_len,
            spike_floor: cfg.spike_floor_codes,
        })
    }

    /// Takes one sample per channel. Returns the cycle's I/Q when this
    /// sample completed a mains cycle. Never panics.
    #[inline]
    pub fn push_frame<S: AdcSample>(&mut self, frame: &[S; N]) -> Option<Cycle<N, H>> {
        let phase = self.tracker.phase();
        let max_len = self.spike_max_len;
        for ((x, gate), dem) in frame
            .iter()
            .zip(self.impulse.iter_mut())
            .zip(self.demod.iter_mut())
        {
            let v = gate.filter(x.code(), max_len);
            dem.push(v, phase);
        }
        let index = self.next_sample;
        self.next_sample = index.wrapping_add(1);
        let n = self.tracker.advance();
        if n == 0 {
            return None;
        }
        Some(self.end_cycle(index, n))
    }

    #[inline(never)]
    fn end_cycle(&mut self, index: u64, n: u32) -> Cycle<N, H> {
        let mut cycle = Cycle {
            end_sample: index,
            samples: n,
            fund: [Iq::default(); N],
            harm: [[Iq::default(); H]; N],
        };
        let chans = self.demod.iter_mut().zip(self.impulse.iter_mut());
        for (((dem, gate), f), h) in chans.zip(cycle.fund.iter_mut()).zip(cycle.harm.iter_mut()) {
            (*f, *h) = dem.end_cycle(n);
            gate.end_cycle(self.spike_max_len, self.spike_floor);
        }
        self.tracker.end_cycle(cycle.fund.iter().copied());
        cycle
    }

    /// The shared mains tracker.
    pub const fn tracker(&self) -> &MainsTracker {
        &self.tracker
    }

    /// Samples taken per channel so far.
    pub const fn samples_seen(&self) -> u64 {
        self.next_sample
    }

    /// Mean input level of channel `ch` over its last cycle, ADC codes, or
    /// `None` past the last channel.
    pub fn dc(&self, ch: usize) -> Option<i32> {
        self.demod.get(ch).map(DemodState::dc)
    }
}

/// Per-channel state of the per-cycle half.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
struct ChannelBack<const H: usize> {
    avg: Iq,
    avg_h: [Iq; H],
    amp_q8: u32,
    baseline: BaselineState,
    decision: DecisionState,
}

/// A read-only view of one channel after its latest cycle.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
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
    /// Whether the channel is active.
    pub active: bool,
    /// Present level (see [`DecisionState::level`]).
    pub level: u8,
}

/// Per-cycle half of the pipeline: coherent averaging, amplitude, baseline,
/// noise and decision for `N` channels with `H` extra harmonic bins.
#[derive(Clone, Debug)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Backend<const N: usize, const H: usize> {
    ch: [ChannelBack<H>; N],
    baseline_t: BaselineTuning,
    decision_t: DecisionTuning,
    avg_shift: u8,
}

impl<const N: usize, const H: usize> Backend<N, H> {
    /// Validates `cfg` and builds the back end. Never panics.
    pub fn new(cfg: &Config) -> Result<Self, ConfigError> {
        const { assert!(N >= 1 && N <= MAX_CHANNELS && H <= MAX_HARMONICS) };
        cfg.validate(H)?;
        let fresh = ChannelBack {
            avg: Iq::default(),
            avg_h: [Iq::default(); H],
            amp_q8: 0,
            baseline: BaselineState::new(),
            decision: DecisionState::new(),
        };
        Ok(Self {
            ch: [fresh; N],
            baseline_t: BaselineTuning {
                rise_shift: cfg.baseline_rise_shift,
                fall_shift: cfg.baseline_fall_shift,
                noise_shift: cfg.noise_shift,
                startup_cycles: cfg.startup_cycles,
            },
            decision_t: DecisionTuning::new(cfg),
            avg_shift: cfg.avg_shift,
        })
    }

    /// Decides one cycle on every channel; calls `emit` for each event
    /// (at most one per channel). Never panics.
    pub fn process(&mut self, cycle: &Cycle<N, H>, mut emit: impl FnMut(Event)) {
        let k = self.avg_shift;
        let items = self
            .ch
            .iter_mut()
            .zip(cycle.fund.iter())
            .zip(cycle.harm.iter());
        for (channel, ((c, f), h)) in (0u8..).zip(items) {
            average(&mut c.avg, f, k);
            let mut power = c.avg.power();
            for (a, z) in c.avg_h.iter_mut().zip(h.iter()) {
                average(a, z, k);
                power = power.saturating_add(a.power());
            }
            let amp = isqrt_u64(power);
            c.amp_q8 = amp;
            if !c.baseline.settled(&self.baseline_t) {
                // Start-up: learn only, decide nothing.
                c.baseline.update(amp, &self.baseline_t);
                continue;
            }
            let b = c.baseline.baseline_q8();
            let n = c.baseline.noise_q8();
            let (event, verdict) = c.decision.step(amp, b, n, &self.decision_t);
            match verdict {
                Verdict::Learn => c.baseline.update(amp, &self.baseline_t),
                Verdict::Freeze => {}
                Verdict::Relearn => c.baseline.relearn(amp),
            }
            if let Some(kind) = event {
                emit(Event {
                    channel,
                    kind,
                    sample: cycle.end_sample,
                    amplitude_q8: amp,
                    baseline_q8: b,
                });
            }
        }
    }

    /// A view of channel `ch`, or `None` past the last channel.
    pub fn snapshot(&self, ch: usize) -> Option<ChannelSnapshot> {
        let c = self.ch.get(ch)?;
        let b = c.baseline.baseline_q8();
        let (on_q8, off_q8) = self.decision_t.thresholds(b, c.baseline.noise_q8());
        Some(ChannelSnapshot {
            amplitude_q8: c.amp_q8,
            baseline_q8: b,
            noise_q8: c.baseline.noise_q8(),
            on_q8,
            off_q8,
            active: c.decision.active(),
            level: c.decision.level(),
        })
    }
}

/// Complex exponential average `a += (z − a) >> k` (k = 0: `a = z`).
#[inline]
fn average(a: &mut Iq, z: &Iq, k: u8) {
    a.i = a.i.saturating_add(z.i.saturating_sub(a.i) >> k);
    a.q = a.q.saturating_add(z.q.saturating_sub(a.q) >> k);
}

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
pub struct Detector<const N: usize = 1, const H: usize = 0> {
    front: Frontend<N, H>,
    back: Backend<N, H>,
    carry: [i32; N],
    carry_len: u8,
}

impl<const N: usize, const H: usize> Detector<N, H> {
    /// Validates `config` and builds the detector; the error names the
    /// field that is wrong. Never panics.
    pub fn new(config: Config) -> Result<Self, ConfigError> {
        Ok(Self {
            front: Frontend::new(&config)?,
            back: Backend::new(&config)?,
            carry: [0; N],
            carry_len: 0,
        })
    }

    /// Takes one sample per channel; calls `emit` for each event (at most
    /// one per channel per mains cycle). Never panics.
    #[inline]
    pub fn push_frame<S: AdcSample>(&mut self, frame: &[S; N], emit: impl FnMut(Event)) {
        if let Some(cycle) = self.front.push_frame(frame) {
            self.back.process(&cycle, emit);
        }
    }

    /// Takes a block of interleaved samples (`ch0, ch1, …, ch0, ch1, …`),
    /// for example a DMA buffer; calls `emit` for each event. A trailing
    /// partial frame is kept and completed by the next call, so block
    /// lengths need not be multiples of `N`. Never panics, never allocates.
    pub fn push_block<S: AdcSample>(&mut self, samples: &[S], mut emit: impl FnMut(Event)) {
        let mut rest = samples;
        // Complete a partial frame left by the previous call.
        while self.carry_len > 0 {
            let Some((first, tail)) = rest.split_first() else {
                return;
            };
            if let Some(slot) = self.carry.get_mut(usize::from(self.carry_len)) {
                *slot = first.code();
            }
            rest = tail;
            self.carry_len += 1;
            if usize::from(self.carry_len) == N {
                self.carry_len = 0;
                let frame = self.carry;
                self.push_frame(&frame.map(Code), &mut emit);
            }
        }
        let mut chunks = rest.chunks_exact(N);
        for chunk in &mut chunks {
            if let Ok(frame) = <&[S; N]>::try_from(chunk) {
                self.push_frame(frame, &mut emit);
            }
        }
        for (slot, x) in self.carry.iter_mut().zip(chunks.remainder()) {
            *slot = x.code();
            self.carry_len += 1;
        }
    }

    /// A view of channel `ch` after its latest cycle, or `None` past the
    /// last channel.
    pub fn snapshot(&self, ch: usize) -> Option<ChannelSnapshot> {
        self.back.snapshot(ch)
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
    pub fn backend(&self) -> &Backend<N, H> {
        &self.back
    }
}

impl<const H: usize> Detector<1, H> {
    /// Takes one sample of a single-channel detector; returns the event it
    /// caused, if any (most calls return `None`, cheaply). Never panics.
    #[inline]
    pub fn push<S: AdcSample>(&mut self, sample: S) -> Option<Event> {
        let mut out = None;
        self.push_frame(&[sample], |e| out = Some(e));
        out
    }
}

/// A carried code already in `i32`.
#[derive(Clone, Copy)]
struct Code(i32);

impl AdcSample for Code {
    #[inline(always)]
    fn code(self) -> i32 {
        self.0
    }
}
