//! The per-sample half: impulse gate, demodulator and the shared mains
//! tracker, handing a [`Cycle`] to the back end at each cycle end.

use super::cycle::{rails, AdcSample, Cycle};
use crate::config::{Config, MAX_CHANNELS, MAX_HARMONICS};
use crate::demod::{reciprocal, CycleScale, DemodState};
use crate::error::ConfigError;
use crate::fixed::ARMV6M;
use crate::impulse::{BlockGate, BlockHold, ImpulseState};
use crate::mains::MainsTracker;
use crate::nco::phase_ref;

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
    pub(super) fn build(cfg: &Config) -> Self {
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
            d.push_pair(x, phase_ref(mid), mid);
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
            let table = phase_ref(mid);
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
        // Cortex-M0: every change remade whole (the kept corrections' path
        // cost its block-path firmware 260 bytes of flash; the same values).
        if step != self.scale_step || (ARMV6M && n != self.scale.samples()) {
            let recip = if n == self.scale.samples() {
                self.scale.recip()
            } else {
                reciprocal(n)
            };
            self.scale = CycleScale::new(n, recip, step);
            self.scale_step = step;
        } else if n != self.scale.samples() {
            // Another length at the same step (a drifting mains): the
            // corrections stand.
            self.scale = self.scale.with_samples(n, reciprocal(n));
        }
        let scale = &self.scale;
        let stages = self.demod.iter_mut().zip(self.impulse.iter_mut());
        let outs = cycle.fund.iter_mut().zip(cycle.harm.iter_mut());
        let extras = cycle
            .dc
            .iter_mut()
            .zip(cycle.dc_step.iter_mut())
            .zip(cycle.flat.iter_mut());
        for ((dem, gate), ((f, h), ((dc, step), flat))) in stages.zip(outs.zip(extras)) {
            *flat = dem.quiet();
            let before = dem.dc();
            (*f, *h) = dem.end_cycle_with(scale);
            *dc = dem.dc();
            *step = dc.abs_diff(before);
            gate.end_cycle(self.spike_groups, self.spike_floor);
        }
        self.tracker.end_cycle(&cycle.fund);
        cycle.health = self.tracker.health();
    }

    /// Sets the mains tracker's floor from a back end's noise estimate
    /// ([`MainsTracker::set_floor`]).
    #[inline(always)]
    pub fn set_tracking_floor(&mut self, l1_q8: u32) {
        self.tracker.set_floor(l1_q8);
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
