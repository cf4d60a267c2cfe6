//! The per-cycle half: coherent amplitude, panel rules, baseline, noise,
//! decision and faults for every channel, from one [`Cycle`] a mains cycle,
//! whichever front end made it.

use super::amplitude::{self, diff_gain_q8};
use super::cycle::Cycle;
use super::window::{self, NoWindow, WindowStage};
use crate::baseline::{BaselineState, BaselineTuning};
use crate::config::{Config, MAX_CHANNELS, MAX_HARMONICS};
use crate::decision::{
    ratio_q8, DecisionState, DecisionTuning, Evidence, Verdict, WindowThresholds,
};
use crate::demod::Iq;
use crate::error::ConfigError;
use crate::event::Event;
use crate::fault::{FaultInput, FaultState, FaultTuning, SIGNAL_FAULTS};
use crate::panel::{strongest, PanelTuning};

/// Per-channel state of the per-cycle half. In declaration order, with the
/// decision state (nonzero when built) between the averages and the
/// baseline: a back end built of one long run of zeros is cleared by a call
/// that links `__aeabi_memclr8` (158 bytes) on a Cortex-M0.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
#[repr(C)]
pub(super) struct ChannelBack<const H: usize> {
    pub(super) avg: Iq,
    pub(super) decision: DecisionState,
    pub(super) avg_h: [Iq; H],
    pub(super) amp_q8: u32,
    pub(super) baseline: BaselineState,
    pub(super) faults: FaultState,
}

/// Per-cycle half of the pipeline: coherent averaging, amplitude, panel
/// rules, baseline, noise, decision and faults for `N` channels with `H`
/// extra harmonic bins, and the window stage `Win` ([`NoWindow`], or the
/// field profile's [`SlidingWindow`](super::SlidingWindow)).
#[derive(Clone, Debug)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Backend<const N: usize, const H: usize, Win: WindowStage = NoWindow> {
    pub(super) ch: [ChannelBack<H>; N],
    win: Win,
    pub(super) baseline_t: BaselineTuning,
    pub(super) decision_t: DecisionTuning,
    panel_t: PanelTuning,
    fault_t: FaultTuning,
    avg_shift: u8,
    diff_gain_q8: u32,
    pub(super) last_sample: u64,
}

impl<const N: usize, const H: usize, Win: WindowStage> Backend<N, H, Win> {
    /// Validates `cfg` and builds the back end. Never panics.
    pub fn new(cfg: &Config) -> Result<Self, ConfigError> {
        cfg.validate(H)?;
        Win::check(cfg)?;
        Ok(Self::build(cfg))
    }

    /// Builds the back end from a validated `cfg` (by value, so it can be
    /// built in its final place).
    #[inline(always)]
    pub(super) fn build(cfg: &Config) -> Self {
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
            win: Win::build(cfg),
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
            diff_gain_q8: diff_gain_q8(cfg.avg_shift),
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
        // The window stage, when there is one: its memory per channel, the
        // slot this cycle writes, and the thresholds it gives.
        let mut win = if Win::MEMORY { self.win.parts() } else { None };
        let mut head = 0usize;
        let mut wlen = 0usize;
        if let Some(p) = win.as_mut().filter(|_| Win::MEMORY) {
            wlen = p.t.cycles(cycle.samples);
            let slots = p.words.saturating_sub(2).max(1);
            head = usize::from(*p.head).min(slots - 1);
            if usize::from(*p.w) != wlen {
                // The mains system changed the window's length: sum afresh.
                if *p.w != 0 {
                    for (c, m) in self.ch.iter_mut().zip(p.mem.chunks_exact(p.words)) {
                        window::resum(m, &mut c.avg, head, wlen);
                    }
                }
                *p.w = wlen as u8;
            }
            *p.head = if head + 1 >= slots { 0 } else { head + 1 } as u8;
        }
        let mut inputs = self
            .ch
            .iter_mut()
            .zip(cycle.fund.iter().zip(cycle.harm.iter()));
        let mut chn = 0usize;
        let bt = &self.baseline_t;
        let noise: [(u32, u32); N] = core::array::from_fn(|_| {
            let Some((c, (f, h))) = inputs.next() else {
                return (0, 0);
            };
            if let Some(p) = win.as_mut() {
                let ch = chn;
                chn += 1;
                let words = p.words;
                let m = p
                    .mem
                    .get_mut(ch * words..(ch + 1) * words)
                    .unwrap_or(&mut []);
                // The ambient step rule, on a channel that decides.
                let step = (c.baseline.settled(bt)
                    && !c.faults.present().intersects(SIGNAL_FAULTS))
                .then(|| window::StepRule {
                    noise_q8: c.baseline.noise_q8(),
                    idle: !c.decision.active(),
                });
                let out = window::push(m, &mut c.avg, f, head, wlen, cycle.samples, p.t, step);
                let idle_step = out.idle_step;
                let r = amplitude::with_window(&mut c.avg_h, &mut c.amp_q8, out, h, k);
                if idle_step {
                    c.baseline.relearn(c.amp_q8);
                }
                return r;
            }
            amplitude::update(&mut c.avg, &mut c.avg_h, &mut c.amp_q8, (f, h), k, gain)
        });
        // The panel rules: the ambient rule (three channels or more) first,
        // as it may rescale the baselines; then the strongest-pad rule
        // (two or more, unless pads are independent) from the rises over
        // the baselines as they stand now, computed only if a channel asks
        // for permission to turn on (mostly never: dividing is costly on
        // small cores). One channel alone is always its own strongest pad.
        if N >= 3 {
            ambient_rule(&mut self.ch, &self.baseline_t, &self.panel_t, win.as_mut());
        }
        let rise_in = rise_inputs(&self.ch, &self.baseline_t, &self.panel_t);
        let mut winner: Option<Option<u8>> = None;
        let mut active_mask: u32 = 0;
        for (i, c) in self.ch.iter().enumerate() {
            if c.decision.active() {
                active_mask |= 1 << i;
            }
        }
        let pt = self.panel_t;
        let extras = cycle
            .dc
            .iter()
            .zip(cycle.flat.iter())
            .zip(noise.iter().zip(cycle.dc_step.iter()));
        for (channel, (c, ((dc, flat), ((d, previous), dc_step)))) in
            (0u8..).zip(self.ch.iter_mut().zip(extras))
        {
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
                let evidence = Evidence {
                    dc_step: *dc_step,
                    previous_q8: *previous,
                };
                let (e, verdict) = match win.as_ref() {
                    Some(p) if Win::MEMORY => {
                        let words = p.words;
                        let ch = usize::from(channel);
                        let m = p.mem.get(ch * words..(ch + 1) * words).unwrap_or(&[]);
                        let amb = window::ambient_q8(m, p.t);
                        let (on, off) = p.t.thresholds(n, amb, cycle.samples);
                        let th = WindowThresholds {
                            on_q8: on,
                            off_q8: off,
                            level_base_q8: p.t.level_base(on),
                        };
                        // Not in a cycle that may begin an ambient step.
                        let may_on = move || {
                            let mut others = may_on;
                            !window::step_may_begin(m, head, n, cycle.samples, p.t) && others()
                        };
                        c.decision
                            .step_with(amp, b, n, evidence, th, may_on, &self.decision_t)
                    }
                    _ => c
                        .decision
                        .step_with(amp, b, n, evidence, (), may_on, &self.decision_t),
                };
                match verdict {
                    // A cycle without hum (a supply interruption, a dropout
                    // shorter than the no-hum fault) says nothing about the
                    // untouched hum level: learning from it would make the
                    // hum's return look like a touch.
                    Verdict::Learn if amp < self.fault_t.nohum_q8() => {}
                    Verdict::Learn => learn = true,
                    Verdict::Freeze => {}
                    Verdict::Relearn => {
                        c.baseline.relearn(amp);
                        if let (true, Some(p)) = (Win::MEMORY, win.as_mut()) {
                            let words = p.words;
                            let ch = usize::from(channel);
                            if let Some(m) = p.mem.get_mut(ch * words..(ch + 1) * words) {
                                window::relearn_ambient(m, &c.avg, cycle.samples, p.t);
                            }
                        }
                    }
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
            if Win::MEMORY && learn {
                // The window's ambient: the window's own mean while the
                // baseline learns fast (start-up, after a fault: the
                // baseline's count is below `startup_cycles` or just
                // reached it), then the slow average. Behind `Win::MEMORY`
                // (a compile-time fact), so a detector without a window
                // carries none of it.
                if let Some(p) = win.as_mut() {
                    let fast = c.baseline.learning(&self.baseline_t);
                    let words = p.words;
                    let ch = usize::from(channel);
                    if let Some(m) = p.mem.get_mut(ch * words..(ch + 1) * words) {
                        if fast {
                            window::relearn_ambient(m, &c.avg, cycle.samples, p.t);
                        } else {
                            window::learn_ambient(m, head);
                        }
                    }
                }
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
        if Win::MEMORY {
            if let Some(p) = win.as_mut() {
                // The tracker's floor from the quietest settled channel.
                let bt = &self.baseline_t;
                let n = self
                    .ch
                    .iter()
                    .filter(|c| c.baseline.settled(bt))
                    .map(|c| c.baseline.noise_q8())
                    .min()
                    .unwrap_or(0);
                *p.floor = p.t.tracking_floor(n, cycle.samples);
            }
        }
    }

    /// The window's on and off thresholds for channel `ch` (snapshots).
    pub(super) fn window_thresholds(&self, ch: usize, n: u32) -> Option<(u32, u32)> {
        self.win.thresholds(ch, n)
    }

    /// The least per-cycle `|i| + |q|` the mains tracker should learn from
    /// (see [`WindowStage::tracking_floor`]).
    #[inline(always)]
    pub fn tracking_floor(&self) -> u32 {
        self.win.tracking_floor()
    }
}

/// Amplitude and effective baseline (at least the decision floor) of
/// each channel, both Q8, for the panel rules; baseline 0 for channels
/// not deciding (learning or faulted).
fn rise_inputs<const N: usize, const H: usize>(
    ch: &[ChannelBack<H>; N],
    bt: &BaselineTuning,
    pt: &PanelTuning,
) -> [(u32, u32); N] {
    let mut chs = ch.iter();
    core::array::from_fn(|_| {
        let Some(c) = chs.next() else {
            return (0, 0);
        };
        let deciding = c.baseline.settled(bt) && !c.faults.present().intersects(SIGNAL_FAULTS);
        if !deciding {
            return (c.amp_q8, 0);
        }
        (c.amp_q8, c.baseline.baseline_q8().max(pt.floor_q8))
    })
}

/// The ambient rule: rescale every settled baseline (and the window's
/// ambient estimates) by the common ratio when the panel rose or fell
/// together. The rises are divided out only when a division-free count
/// says the rule may fire ([`PanelTuning::may_be_ambient`]).
fn ambient_rule<const N: usize, const H: usize>(
    ch: &mut [ChannelBack<H>; N],
    bt: &BaselineTuning,
    pt: &PanelTuning,
    win: Option<&mut window::WindowParts<'_>>,
) {
    let inputs = rise_inputs(ch, bt, pt);
    let deciding = inputs.iter().copied().filter(|&(_, b)| b != 0);
    if !pt.may_be_ambient(deciding) {
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
    let Some(factor) = pt.common_ratio(eligible) else {
        return;
    };
    for c in ch.iter_mut() {
        if c.baseline.settled(bt) {
            c.baseline.rescale(factor);
        }
    }
    if let Some(p) = win {
        for m in p.mem.chunks_exact_mut(p.words) {
            window::rescale_ambient(m, factor);
        }
    }
}
