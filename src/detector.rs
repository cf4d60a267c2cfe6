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

use crate::baseline::{BaselineState, BaselineTuning};
use crate::config::Config;
use crate::decision::{ratio_q8, DecisionState, DecisionTuning, Verdict};
use crate::demod::{reciprocal, CycleScale, DemodState, Iq};
use crate::error::ConfigError;
use crate::event::{Event, Faults};
use crate::fault::{FaultInput, FaultState, FaultTuning, SIGNAL_FAULTS};
use crate::fixed::{isqrt_u32_from, isqrt_u64, mul_q8};
use crate::impulse::{BlockGate, BlockHold, ImpulseState};
use crate::mains::{MainsHealth, MainsSystem, MainsTracker};
use crate::nco::ref_q14;
use crate::panel::{strongest, PanelTuning};

/// An integer ADC sample type the detector accepts.
pub trait AdcSample: Copy {
    /// Whether codes are two's complement around 0 (`i16`) rather than
    /// offset binary from 0 (`u16`); sets the rails for saturation.
    const SIGNED: bool;
    /// The code in offset binary: `u16` as it is, `i16` plus 32 768 (one
    /// instruction: the sign bit flipped). The whole pipeline works on
    /// offset-binary codes.
    fn offset_code(self) -> u16;
}

impl AdcSample for u16 {
    const SIGNED: bool = false;
    #[inline(always)]
    fn offset_code(self) -> u16 {
        self
    }
}

impl AdcSample for i16 {
    const SIGNED: bool = true;
    #[inline(always)]
    fn offset_code(self) -> u16 {
        (self as u16) ^ 0x8000
    }
}

pub use crate::config::{MAX_CHANNELS, MAX_HARMONICS};

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
    /// Mean input level per channel over the cycle, offset-binary codes
    /// (`i16` input plus 32 768).
    pub dc: [u16; N],
    /// Per channel: the cycle demodulated to exactly nothing (every group
    /// equal to the DC estimate: an input that does not move).
    pub flat: [bool; N],
    /// Health of the mains reference after this cycle.
    pub health: MainsHealth,
    /// Lowest and highest code of the ADC (the rails) in offset binary, for
    /// saturation.
    pub rails: (u16, u16),
}

impl<const N: usize, const H: usize> Cycle<N, H> {
    /// A cycle of nothing: zero samples, zero I/Q, healthy mains.
    pub const EMPTY: Self = Self {
        end_sample: 0,
        samples: 0,
        fund: [Iq { i: 0, q: 0 }; N],
        harm: [[Iq { i: 0, q: 0 }; H]; N],
        dc: [0; N],
        flat: [false; N],
        health: MainsHealth::Ok,
        rails: (0, 0),
    };
}

/// The rails of a converter of `span` codes (2^bits, bits ≤ 16 in a
/// validated config) in offset binary: from 0, or centred on 32 768 for
/// two's complement codes. Both fit u16.
const fn rails(span: u32, signed: bool) -> (u16, u16) {
    let low = if signed { 32_768 - span / 2 } else { 0 };
    (low as u16, (low + span - 1) as u16)
}

/// Per-sample half of the pipeline: impulse gate, demodulator and the shared
/// mains tracker, for `N` channels with `H` extra harmonic bins.
///
/// Samples are demodulated in pairs (see [`crate::demod`]): the first
/// sample of a pair waits in the demodulator until the second arrives, and
/// the last sample of a cycle of odd length goes alone.
#[derive(Clone, Debug)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Frontend<const N: usize, const H: usize> {
    tracker: MainsTracker,
    impulse: [ImpulseState; N],
    demod: [DemodState<H>; N],
    /// Index of the last sample of the last cycle (`u64::MAX`, that is
    /// −1, before the first).
    last_end: u64,
    /// The last cycle's scaling (sample count, reciprocal, pair
    /// correction) and the phase step it was made for, kept while both
    /// repeat (one division per change of the count, not per cycle).
    scale: CycleScale<H>,
    scale_step: u32,
    /// Groups the gate may hold in a row: `⌊spike_max_len/2⌋ + 1` pairs
    /// cover a spike of `spike_max_len` samples (0 when it is 0).
    spike_groups: u8,
    spike_floor: u16,
    /// The rails of the last input type (offset binary; unsigned until a
    /// signed sample arrives): recomputed only when `signed` changes.
    rails: (u16, u16),
    signed: bool,
}

impl<const N: usize, const H: usize> Frontend<N, H> {
    /// Validates `cfg` and builds the front end. Never panics.
    pub fn new(cfg: &Config) -> Result<Self, ConfigError> {
        cfg.validate(H)?;
        Ok(Self::build(cfg))
    }

    /// Builds the front end from a config that has been validated.
    fn build(cfg: &Config) -> Self {
        const { assert!(N >= 1 && N <= MAX_CHANNELS && H <= MAX_HARMONICS) };
        let tracker = MainsTracker::new(cfg);
        // Mid-scale of an unsigned converter; the first cycle's mean
        // replaces it.
        let mid = 1u16 << (cfg.adc_bits.clamp(1, 16) - 1);
        let spike_groups = match cfg.spike_max_len {
            0 => 0,
            len => len / 2 + 1,
        };
        Self {
            tracker,
            impulse: [ImpulseState::new(); N],
            demod: [DemodState::new(mid); N],
            last_end: u64::MAX,
            scale: CycleScale::empty(),
            // No step is u32::MAX (the empty scale is remade at the first
            // cycle end anyway). Nonzero also on purpose: Detector::new
            // then leaves no run of zeroed fields long enough for LLVM to
            // zero it by a call, which on Cortex-M0 links a 158-byte
            // `__aeabi_memclr8` (the flash budget in .ci/cortexm).
            scale_step: u32::MAX,
            spike_groups,
            spike_floor: cfg.spike_floor_codes,
            rails: rails(1 << cfg.adc_bits.clamp(1, 16), false),
            signed: false,
        }
    }

    /// Takes one sample per channel. Returns the cycle's I/Q when this
    /// sample completed a mains cycle. Never panics.
    #[inline]
    pub fn push_frame<S: AdcSample>(&mut self, frame: &[S; N]) -> Option<Cycle<N, H>> {
        let mut out = None;
        self.push_frame_with(frame, |c| out = Some(*c));
        out
    }

    /// [`push_frame`](Self::push_frame) handing the completed cycle to
    /// `on_cycle` by reference (no copy of the `Cycle`). Never panics.
    #[inline]
    pub fn push_frame_with<S: AdcSample>(
        &mut self,
        frame: &[S; N],
        on_cycle: impl FnOnce(&Cycle<N, H>),
    ) {
        self.note_type::<S>();
        let phase = self.tracker.phase();
        let step = self.tracker.step();
        let (next, wraps) = phase.overflowing_add(step);
        if self.tracker.samples_in_cycle() & 1 != 0 {
            self.pair_frame(frame, phase, step);
        } else if wraps {
            self.single_frame(frame, phase);
        } else {
            self.hold_frame(frame);
        }
        let n = self.tracker.advance_to(next, wraps);
        if n != 0 {
            let mut cycle = Cycle::EMPTY;
            self.end_cycle(n, S::SIGNED, &mut cycle);
            on_cycle(&cycle);
        }
    }

    /// The second sample of a pair per channel, at phase `phase`: the pair
    /// through the gate and the demodulator at its midpoint.
    fn pair_frame<S: AdcSample>(&mut self, frame: &[S; N], phase: u32, step: u32) {
        let mid = phase.wrapping_sub(step >> 1);
        let max_len = self.spike_groups;
        let stages = self.impulse.iter_mut().zip(self.demod.iter_mut());
        for (x, (gate, dem)) in frame.iter().zip(stages) {
            // Taking the pending sample clears it (0 whenever no pair is
            // open), so the state is the same whichever path filled it.
            let sum = u32::from(dem.take_pending()) + u32::from(x.offset_code());
            dem.push_pair(gate.gate(sum, (sum >> 1) as u16, 1, max_len), mid);
        }
    }

    /// The last sample of a cycle of odd length, alone, at phase `phase`.
    fn single_frame<S: AdcSample>(&mut self, frame: &[S; N], phase: u32) {
        let max_len = self.spike_groups;
        let stages = self.impulse.iter_mut().zip(self.demod.iter_mut());
        for (x, (gate, dem)) in frame.iter().zip(stages) {
            dem.push_single(gate.filter(x.offset_code(), max_len), phase);
        }
    }

    /// The first sample of a pair: kept until the second arrives.
    /// Before the samples of a call: a signed (`i16`) input moves the rails
    /// at once and, if nothing has been taken yet, starts the DC estimate at
    /// the signed mid-scale (code 0, offset 32 768) instead of the unsigned
    /// one, so that the first cycle is demodulated against the right level
    /// and a signed input gives the same cycles as the same codes offset
    /// to unsigned. For `u16` the test is a constant and compiles away; the
    /// way back (unsigned after signed) is taken at the cycle's end.
    #[inline(always)]
    fn note_type<S: AdcSample>(&mut self) {
        if S::SIGNED && !self.signed {
            self.enter_signed();
        }
    }

    #[cold]
    #[inline(never)]
    fn enter_signed(&mut self) {
        let fresh = self.last_end == u64::MAX && self.tracker.samples_in_cycle() == 0;
        self.signed = true;
        let span = u32::from(self.rails.1.wrapping_sub(self.rails.0)) + 1;
        self.rails = rails(span, true);
        if fresh {
            self.demod = [DemodState::new(32_768); N];
        }
    }

    fn hold_frame<S: AdcSample>(&mut self, frame: &[S; N]) {
        for (x, dem) in frame.iter().zip(self.demod.iter_mut()) {
            dem.hold_first(x.offset_code());
        }
    }

    /// Takes a block of interleaved frames (`ch0, ch1, …` repeated); calls
    /// `on_cycle` for each mains cycle completed. Returns the trailing
    /// samples it did not take (less than a frame). Gives exactly the
    /// cycles that [`push_frame`](Self::push_frame) would, frame by frame,
    /// at a lower cost: between two cycle ends the per-channel state stays
    /// in locals (registers, for a few channels) instead of memory, widened
    /// to 32-bit words, and the table is read once per pair of frames.
    /// Never panics.
    pub fn push_block<S: AdcSample>(
        &mut self,
        samples: &[S],
        mut on_cycle: impl FnMut(&Cycle<N, H>),
    ) -> usize {
        self.note_type::<S>();
        let whole = samples.len() - samples.len() % N;
        let (mut remaining, rest) = samples.split_at(whole);
        while !remaining.is_empty() {
            // The tracker may retune at every cycle end.
            let step = self.tracker.step();
            let to_wrap = self.tracker.samples_to_wrap() as usize;
            let take = (remaining.len() / N).min(to_wrap);
            let ends = take == to_wrap;
            let (run, tail) = remaining.split_at(take * N);
            remaining = tail;
            let mut phase = self.tracker.phase();
            let mut frames = run;
            // A pair begun before this run.
            if self.tracker.samples_in_cycle() & 1 != 0 {
                if let Some((frame, more)) = frames.split_first_chunk::<N>() {
                    self.pair_frame(frame, phase, step);
                    phase = phase.wrapping_add(step);
                    frames = more;
                }
            }
            let pairs = frames.len() / (2 * N);
            let (body, last) = frames.split_at(pairs * 2 * N);
            if pairs > 0 {
                phase = if N == 1 {
                    self.run_one(body, phase, step)
                } else {
                    self.run_many(body, phase, step)
                };
            }
            // One frame left: the first of a pair, or alone at the wrap.
            if let Some(frame) = last.first_chunk::<N>() {
                if ends {
                    self.single_frame(frame, phase);
                } else {
                    self.hold_frame(frame);
                }
                phase = phase.wrapping_add(step);
            }
            let n = self.tracker.finish_run(phase, take as u32, ends);
            if n != 0 {
                let mut cycle = Cycle::EMPTY;
                self.end_cycle(n, S::SIGNED, &mut cycle);
                on_cycle(&cycle);
            }
        }
        rest.len()
    }

    /// One channel: a run of whole pairs starting at phase `phase`, with
    /// the gate and accumulators in registers. Returns the phase after the
    /// run.
    #[inline(always)]
    fn run_one<S: AdcSample>(&mut self, run: &[S], phase: u32, step: u32) -> u32 {
        let (Some(gate), Some(dem)) = (self.impulse.first_mut(), self.demod.first_mut()) else {
            return phase;
        };
        let max_len = u32::from(self.spike_groups);
        let step2 = step.wrapping_mul(2);
        let to_mid = step - (step >> 1);
        let mut mid = phase.wrapping_add(to_mid);
        let dc = dem.dc();
        let (mut g, mut hold) = gate.block(mid, dc);
        let mut d = dem.lane();
        let (pairs, _) = run.as_chunks::<2>();
        for [a, b] in pairs {
            let v = u32::from(a.offset_code()) + u32::from(b.offset_code());
            let x = g.pair(&mut hold, d.centred(v), max_len, (mid, step2));
            d.push_pair(x, ref_q14(mid), mid);
            mid = mid.wrapping_add(step2);
        }
        gate.store_block(&g, &hold, mid, dc);
        dem.store(&d, pairs.len() as u32);
        mid.wrapping_sub(to_mid)
    }

    /// Several channels: a run of whole pairs of frames, per-channel state
    /// in locals.
    #[inline(always)]
    fn run_many<S: AdcSample>(&mut self, run: &[S], phase: u32, step: u32) -> u32 {
        let max_len = u32::from(self.spike_groups);
        let step2 = step.wrapping_mul(2);
        let to_mid = step - (step >> 1);
        let mut mid = phase.wrapping_add(to_mid);
        let dcs = self.demod.map(|d| d.dc());
        let mut gates = [BlockGate::default(); N];
        let mut holds = [BlockHold::default(); N];
        for (((g, h), state), dc) in gates
            .iter_mut()
            .zip(holds.iter_mut())
            .zip(self.impulse.iter())
            .zip(dcs)
        {
            (*g, *h) = state.block(mid, dc);
        }
        let mut dems = self.demod.map(|d| d.lane());
        let chunks = run.chunks_exact(2 * N);
        let pairs = chunks.len() as u32;
        for chunk in chunks {
            let table = ref_q14(mid);
            let (first, second) = chunk.split_at(N);
            let stages = gates.iter_mut().zip(holds.iter_mut()).zip(dems.iter_mut());
            for ((a, b), ((g, h), d)) in first.iter().zip(second.iter()).zip(stages) {
                let v = u32::from(a.offset_code()) + u32::from(b.offset_code());
                let x = g.pair(h, d.centred(v), max_len, (mid, step2));
                d.push_pair(x, table, mid);
            }
            mid = mid.wrapping_add(step2);
        }
        let lanes = gates.iter().zip(holds.iter()).zip(dcs);
        for (state, ((lane, hold), dc)) in self.impulse.iter_mut().zip(lanes) {
            state.store_block(lane, hold, mid, dc);
        }
        for (state, lane) in self.demod.iter_mut().zip(dems.iter()) {
            state.store(lane, pairs);
        }
        mid.wrapping_sub(to_mid)
    }

    /// Ends a mains cycle of `n` samples: writes every field of `cycle`
    /// (the caller's, so the struct is never copied), sets the gate limits
    /// and the next DC, and lets the mains tracker learn. Out of line: one
    /// copy serves the frame and the block paths.
    #[inline(never)]
    fn end_cycle(&mut self, n: u32, signed: bool, cycle: &mut Cycle<N, H>) {
        if signed != self.signed {
            self.signed = signed;
            let span = u32::from(self.rails.1.wrapping_sub(self.rails.0)) + 1;
            self.rails = rails(span, signed);
        }
        let index = self.last_end.wrapping_add(u64::from(n));
        self.last_end = index;
        cycle.end_sample = index;
        cycle.samples = n;
        cycle.rails = self.rails;
        let step = self.tracker.step();
        if n != self.scale.samples() || step != self.scale_step {
            let recip = if n == self.scale.samples() {
                self.scale.recip()
            } else {
                reciprocal(n)
            };
            self.scale = CycleScale::new(n, recip, step);
            self.scale_step = step;
        }
        let scale = &self.scale;
        let stages = self.demod.iter_mut().zip(self.impulse.iter_mut());
        let outs = cycle.fund.iter_mut().zip(cycle.harm.iter_mut());
        let extras = cycle.dc.iter_mut().zip(cycle.flat.iter_mut());
        for ((dem, gate), ((f, h), (dc, flat))) in stages.zip(outs.zip(extras)) {
            *flat = dem.quiet();
            (*f, *h) = dem.end_cycle_with(scale);
            *dc = dem.dc();
            gate.end_cycle(self.spike_groups, self.spike_floor);
        }
        self.tracker.end_cycle(&cycle.fund);
        cycle.health = self.tracker.health();
    }

    /// The shared mains tracker.
    pub const fn tracker(&self) -> &MainsTracker {
        &self.tracker
    }

    /// Samples taken per channel so far.
    pub const fn samples_seen(&self) -> u64 {
        self.last_end
            .wrapping_add(1 + self.tracker.samples_in_cycle() as u64)
    }

    /// Mean input level of channel `ch` over its last cycle, in the input's
    /// own codes, or `None` past the last channel.
    pub fn dc(&self, ch: usize) -> Option<i32> {
        let offset = if self.signed { 32_768 } else { 0 };
        self.demod.get(ch).map(|d| i32::from(d.dc()) - offset)
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
    faults: FaultState,
}

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
    /// Present level (see [`DecisionState::level`]).
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

/// Per-cycle half of the pipeline: coherent averaging, amplitude, panel
/// rules, baseline, noise, decision and faults for `N` channels with `H`
/// extra harmonic bins.
#[derive(Clone, Debug)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Backend<const N: usize, const H: usize> {
    ch: [ChannelBack<H>; N],
    baseline_t: BaselineTuning,
    decision_t: DecisionTuning,
    panel_t: PanelTuning,
    fault_t: FaultTuning,
    avg_shift: u8,
    /// Scales |a_k − a_{k−1}| to the mean absolute deviation of a:
    /// 1/√(2α) with α = 2^-avg_shift, in Q8. For white noise the change of
    /// an exponential average has variance 2α times the average's own
    /// (standard EMA result: var(y) = α/(2−α)·σ², var(Δy) = 2α²/(2−α)·σ²).
    diff_gain_q8: u32,
    last_sample: u64,
}

/// `256 · 2^(k/2) / √2` for k = 0..=4 (computed).
const DIFF_GAIN_Q8: [u32; 5] = [181, 256, 362, 512, 724];

impl<const N: usize, const H: usize> Backend<N, H> {
    /// Validates `cfg` and builds the back end. Never panics.
    pub fn new(cfg: &Config) -> Result<Self, ConfigError> {
        cfg.validate(H)?;
        Ok(Self::build(cfg))
    }

    /// Builds the back end from a validated `cfg` (by value, so it can be
    /// built in its final place).
    #[inline(always)]
    fn build(cfg: &Config) -> Self {
        const { assert!(N >= 1 && N <= MAX_CHANNELS && H <= MAX_HARMONICS) };
        let fresh = ChannelBack {
            avg: Iq::default(),
            avg_h: [Iq::default(); H],
            amp_q8: 0,
            baseline: BaselineState::new(),
            decision: DecisionState::new(),
            faults: FaultState::new(),
        };
        Self {
            ch: [fresh; N],
            baseline_t: BaselineTuning {
                rise_shift: cfg.baseline_rise_shift,
                fall_shift: cfg.baseline_fall_shift,
                noise_shift: cfg.noise_shift,
                startup_cycles: cfg.startup_cycles,
            },
            decision_t: DecisionTuning::new(cfg),
            panel_t: PanelTuning::new(cfg),
            fault_t: FaultTuning::new(cfg),
            avg_shift: cfg.avg_shift,
            diff_gain_q8: DIFF_GAIN_Q8
                .get(usize::from(cfg.avg_shift))
                .copied()
                .unwrap_or(724),
            last_sample: 0,
        }
    }

    /// Decides one cycle on every channel; calls `emit` for each event
    /// (at most one per channel). Never panics.
    ///
    /// Out of line: one copy serves the frame and the block paths.
    #[inline(never)]
    pub fn process(&mut self, cycle: &Cycle<N, H>, mut emit: impl FnMut(Event)) {
        self.last_sample = cycle.end_sample;
        let k = self.avg_shift;
        let gain = self.diff_gain_q8;
        // Built element by element (an array filled first would be a
        // `memset` call on small cores).
        let mut inputs = self
            .ch
            .iter_mut()
            .zip(cycle.fund.iter().zip(cycle.harm.iter()));
        let noise: [u32; N] = core::array::from_fn(|_| {
            let Some((c, (f, h))) = inputs.next() else {
                return 0;
            };
            average(&mut c.avg, f, k);
            let mut power = c.avg.power();
            for (a, z) in c.avg_h.iter_mut().zip(h.iter()) {
                average(a, z, k);
                power = power.saturating_add(a.power());
            }
            // Newton steps from the last amplitude where the root fits the
            // 32-bit method (the same bits as `isqrt_u64`).
            let amp = match u32::try_from(power) {
                Ok(p) => isqrt_u32_from(p, c.amp_q8),
                Err(_) => isqrt_u64(power),
            };
            // Noise sample: the change since the last cycle, scaled to a
            // mean absolute deviation (see `diff_gain_q8`).
            let d = mul_q8(amp.abs_diff(c.amp_q8), gain);
            c.amp_q8 = amp;
            d
        });
        // The panel rules: the ambient rule (three channels or more) first,
        // as it may rescale the baselines; then the strongest-pad rule
        // (two or more, unless pads are independent) from the rises over
        // the baselines as they stand now, computed only if a channel asks
        // for permission to turn on (mostly never: dividing is costly on
        // small cores). One channel alone is always its own strongest pad.
        if N >= 3 {
            self.ambient_rule();
        }
        let rise_in = self.rise_inputs();
        let mut winner: Option<Option<u8>> = None;
        let mut active_mask: u32 = 0;
        for (i, c) in self.ch.iter().enumerate() {
            if c.decision.active() {
                active_mask |= 1 << i;
            }
        }
        let pt = self.panel_t;
        let extras = cycle.dc.iter().zip(cycle.flat.iter()).zip(noise.iter());
        for (channel, (c, ((dc, flat), d))) in (0u8..).zip(self.ch.iter_mut().zip(extras)) {
            let amp = c.amp_q8;
            let bit = 1u32 << channel;
            let mut event = None;
            let b = c.baseline.baseline_q8();
            let was_faulted = c.faults.present().intersects(SIGNAL_FAULTS);
            let input = FaultInput {
                amp_q8: amp,
                dc: *dc,
                flat: *flat,
                active: c.decision.active(),
                rails: cycle.rails,
                health: cycle.health,
            };
            let present = c.faults.update(&input, &self.fault_t);
            // Whether the baseline learns from this cycle (one call below,
            // after the decision, which reads the baseline as it was).
            let mut learn = false;
            if present.intersects(SIGNAL_FAULTS) {
                // No decisions on a broken input; an active channel is
                // released first.
                event = c.decision.force_off(&self.decision_t);
                active_mask &= !bit;
            } else if was_faulted {
                // The fault has ended: learn the baseline afresh.
                c.baseline.restart();
                learn = true;
            } else if c.baseline.settled(&self.baseline_t) {
                let n = c.baseline.noise_q8();
                let others_active = active_mask & !bit != 0;
                let winner = &mut winner;
                let may_on = || {
                    if pt.independent || N == 1 {
                        return true;
                    }
                    let w = *winner.get_or_insert_with(|| {
                        strongest(
                            rise_in
                                .iter()
                                .map(|&(a, b)| (b != 0).then(|| ratio_q8(a, b))),
                        )
                    });
                    w == Some(channel) && !others_active
                };
                let (e, verdict) = c.decision.step_with(amp, b, n, may_on, &self.decision_t);
                match verdict {
                    // A cycle without hum (a supply interruption, a dropout
                    // shorter than the no-hum fault) says nothing about the
                    // untouched hum level: learning from it would make the
                    // hum's return look like a touch.
                    Verdict::Learn if amp < self.fault_t.nohum_q8() => {}
                    Verdict::Learn => learn = true,
                    Verdict::Freeze => {}
                    Verdict::Relearn => c.baseline.relearn(amp),
                }
                if c.decision.active() {
                    active_mask |= bit;
                } else {
                    active_mask &= !bit;
                }
                event = e;
            } else {
                // Start-up: learn only, decide nothing.
                learn = true;
            }
            if learn {
                c.baseline.update(amp, *d, &self.baseline_t);
            }
            if event.is_none() {
                event = c.faults.next_change();
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

    /// Amplitude and effective baseline (at least the decision floor) of
    /// each channel, both Q8, for the panel rules; baseline 0 for channels
    /// not deciding (learning or faulted).
    fn rise_inputs(&self) -> [(u32, u32); N] {
        let mut chs = self.ch.iter();
        core::array::from_fn(|_| {
            let Some(c) = chs.next() else {
                return (0, 0);
            };
            let deciding = c.baseline.settled(&self.baseline_t)
                && !c.faults.present().intersects(SIGNAL_FAULTS);
            if !deciding {
                return (c.amp_q8, 0);
            }
            (
                c.amp_q8,
                c.baseline.baseline_q8().max(self.panel_t.floor_q8),
            )
        })
    }

    /// The ambient rule: rescale every settled baseline by the common
    /// ratio when the panel rose or fell together. The rises are divided
    /// out only when a division-free count says the rule may fire
    /// ([`PanelTuning::may_be_ambient`]).
    fn ambient_rule(&mut self) {
        let inputs = self.rise_inputs();
        let deciding = inputs.iter().copied().filter(|&(_, b)| b != 0);
        if !self.panel_t.may_be_ambient(deciding) {
            return;
        }
        // The deciding channels' rises, packed at the front.
        let mut eligible = inputs
            .iter()
            .filter(|&&(_, b)| b != 0)
            .map(|&(a, b)| ratio_q8(a, b));
        let mut n = 0usize;
        let mut ratios: [u32; N] = core::array::from_fn(|_| match eligible.next() {
            Some(r) => {
                n += 1;
                r
            }
            None => 0,
        });
        let Some(eligible) = ratios.get_mut(..n) else {
            return;
        };
        let Some(factor) = self.panel_t.common_ratio(eligible) else {
            return;
        };
        for c in self.ch.iter_mut() {
            if c.baseline.settled(&self.baseline_t) {
                c.baseline.rescale(factor);
            }
        }
    }

    /// A view of channel `ch`, or `None` past the last channel.
    pub fn snapshot(&self, ch: usize) -> Option<ChannelSnapshot> {
        let c = self.ch.get(ch)?;
        let b = c.baseline.baseline_q8();
        let (on_q8, off_q8) = self.decision_t.thresholds(b, c.baseline.noise_q8());
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
}

impl<const N: usize, const H: usize> Detector<N, H> {
    /// Validates `config` and builds the detector; the error names the
    /// field that is wrong. Never panics.
    pub fn new(config: Config) -> Result<Self, ConfigError> {
        // Validated once; both halves are built in place.
        config.validate(H)?;
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
        self.front
            .push_block(samples, |cycle| back.process(cycle, &mut emit))
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
