//! Hysteretic decision logic, once per mains cycle: thresholds from the
//! baseline and noise, debounce, minimum and maximum durations, and the
//! field profile's graded levels.
//!
//! With baseline `b`, noise `σ̂` and amplitude `a` (Q8 codes):
//!
//! `on  = b + max(k_on·σ̂,  (r_on − 1)·b,  floor)`
//! `off = b + max(k_off·σ̂, (r_off − 1)·b, floor / 2)`
//!
//! Idle → active after `debounce_on` consecutive cycles with `a > on`;
//! active → idle after `debounce_off` consecutive cycles with `a < off`,
//! but not before `min_active_cycles`; and unconditionally after
//! `max_active_cycles` (stuck: the baseline re-learns from `a`).
//! In the field profile, while active, the level rises by one when
//! `a/b ≥ r_on·s^L` and falls by one when `a/b < r_on·s^(L−1)·h`
//! (`s` the level step, `h` the hysteresis factor, `L` the present level,
//! `L ≥ 2`): level `L` begins at `r_on·s^(L−1)`, and it is left downwards
//! only once the ratio is a factor `h` below that start.

use crate::config::{Config, Profile};
use crate::event::EventKind;
use crate::fixed::{
    db_to_ratio_q16, div_rem_u32, f32_to_fixed, mul_q4, mul_q8, mul_u64_u32, ARMV6M,
};

/// Most levels a field profile can have.
pub const MAX_LEVELS: usize = 16;

/// The decision stage's constants, in fixed point (from [`Config`]).
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct DecisionTuning {
    profile: Profile,
    on_noise_q4: u32,
    off_noise_q4: u32,
    /// r − 1 in Q8.
    on_excess_q8: u32,
    off_excess_q8: u32,
    floor_q8: u32,
    debounce_on: u8,
    debounce_off: u8,
    min_active: u16,
    max_active: u16,
    levels: u8,
    /// Level hysteresis factor h in Q8 (below 256).
    hyst_q8: u32,
    /// Ratio a/b (Q8) at which level k + 1 begins: `r_on·s^k`.
    level_q8: [u32; MAX_LEVELS],
}

impl DecisionTuning {
    /// Converts a validated config.
    pub fn new(cfg: &Config) -> Self {
        // Level boundaries r_on · s^k, in Q16 integers (no floating-point
        // routine on cores without an FPU).
        // Every slot written once, in order (an array filled first and
        // then overwritten would be a `memset` call on small cores);
        // `u32::MAX` past the configured levels.
        let step_q16 = db_to_ratio_q16(cfg.level_step_db);
        let mut r_q16 = u64::from(f32_to_fixed(cfg.on_ratio, 16));
        let levels = usize::from(cfg.levels);
        let level_q8 = core::array::from_fn(|k| {
            if k >= levels {
                return u32::MAX;
            }
            let q8 = (r_q16 + 128) >> 8;
            // r < 2^40 and the step below 2^20 (20 dB at most): the
            // product fits 64 bits.
            r_q16 = (mul_u64_u32(r_q16, step_q16) >> 16).min(u64::from(u32::MAX) << 8);
            if q8 > u64::from(u32::MAX) {
                u32::MAX
            } else {
                q8 as u32
            }
        });
        let on_q8 = f32_to_fixed(cfg.on_ratio, 8);
        let off_q8 = f32_to_fixed(cfg.off_ratio, 8);
        // 10^(−h/20) in Q8 = 2^24 / 10^(h/20) in Q16, rounded.
        let h_q16 = db_to_ratio_q16(cfg.level_hysteresis_db).max(1);
        let hyst_q8 = div_rem_u32((1u32 << 24) + h_q16 / 2, h_q16).0;
        Self {
            profile: cfg.profile,
            on_noise_q4: f32_to_fixed(cfg.on_noise, 4),
            off_noise_q4: f32_to_fixed(cfg.off_noise, 4),
            on_excess_q8: on_q8.saturating_sub(256),
            off_excess_q8: off_q8.saturating_sub(256),
            floor_q8: f32_to_fixed(cfg.floor_codes, 8),
            debounce_on: cfg.debounce_on,
            debounce_off: cfg.debounce_off,
            min_active: cfg.min_active_cycles,
            max_active: cfg.max_active_cycles,
            levels: cfg.levels,
            hyst_q8,
            level_q8,
        }
    }

    /// On and off thresholds (Q8 codes) for baseline `b` and noise `n`.
    pub fn thresholds(&self, b: u32, n: u32) -> (u32, u32) {
        (self.on_threshold(b, n), self.off_threshold(b, n))
    }

    /// The on threshold alone (what an idle channel needs).
    fn on_threshold(&self, b: u32, n: u32) -> u32 {
        let on = mul_q4(n, self.on_noise_q4)
            .max(mul_q8(b, self.on_excess_q8))
            .max(self.floor_q8);
        b.saturating_add(on)
    }

    /// The off threshold alone (what an active channel needs).
    #[inline(always)]
    fn off_threshold(&self, b: u32, n: u32) -> u32 {
        let off = mul_q4(n, self.off_noise_q4)
            .max(mul_q8(b, self.off_excess_q8))
            .max(self.floor_q8 / 2);
        b.saturating_add(off)
    }

    fn level_at(&self, index: u8) -> u32 {
        match self.level_q8.get(usize::from(index)) {
            Some(v) => *v,
            None => u32::MAX,
        }
    }
}

/// What the cycles around this one say, beside its amplitude: the raw
/// inputs, read only where a decision needs them (most cycles of an idle
/// channel need neither).
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Evidence {
    /// How far the cycle's mean level moved since the previous cycle
    /// ([`Cycle::dc_step`](crate::Cycle::dc_step); the edge input gives
    /// `u16::MAX` for windows whose amplitude is not their own measurement).
    pub dc_step: u16,
    /// The previous cycle's amplitude, Q8 codes.
    pub previous_q8: u32,
}

/// Where a decision's on and off thresholds come from: `()` for the
/// baseline and noise formulas of [`DecisionTuning`], or the thresholds a
/// sliding window set ([`WindowThresholds`]). A type parameter, so a
/// detector without a window carries no test for one.
pub trait ThresholdSource: Copy {
    /// The on threshold (Q8 codes) for baseline `b` and noise `n`.
    fn on(&self, t: &DecisionTuning, b: u32, n: u32) -> u32;
    /// The off threshold.
    fn off(&self, t: &DecisionTuning, b: u32, n: u32) -> u32;
    /// What the field levels are counted from.
    fn level_base(&self, b: u32) -> u32;
}

impl ThresholdSource for () {
    #[inline(always)]
    fn on(&self, t: &DecisionTuning, b: u32, n: u32) -> u32 {
        t.on_threshold(b, n)
    }
    #[inline(always)]
    fn off(&self, t: &DecisionTuning, b: u32, n: u32) -> u32 {
        t.off_threshold(b, n)
    }
    #[inline(always)]
    fn level_base(&self, b: u32) -> u32 {
        b
    }
}

impl ThresholdSource for WindowThresholds {
    #[inline(always)]
    fn on(&self, _: &DecisionTuning, _: u32, _: u32) -> u32 {
        self.on_q8
    }
    #[inline(always)]
    fn off(&self, _: &DecisionTuning, _: u32, _: u32) -> u32 {
        self.off_q8
    }
    #[inline(always)]
    fn level_base(&self, _: u32) -> u32 {
        self.level_base_q8
    }
}

/// The thresholds of a sliding window (see
/// [`detector`](crate::detector)'s window stage), Q8 codes.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct WindowThresholds {
    /// On threshold.
    pub on_q8: u32,
    /// Off threshold.
    pub off_q8: u32,
    /// What the field levels count from (the on threshold over `on_ratio`).
    pub level_base_q8: u32,
}

impl Evidence {
    /// Nothing known beyond the cycle itself: a steady mean, and a previous
    /// cycle at least as high.
    pub const NONE: Self = Self {
        dc_step: 0,
        previous_q8: u32::MAX,
    };

    /// Whether amplitude `a` over baseline `b` rose by more than twice the
    /// move of the mean, which no impulse alone gives (it raises the
    /// amplitude by at most twice its move of the mean). Only a steady cycle
    /// may turn a channel on by itself or raise its own level.
    #[inline(always)]
    pub fn steady(&self, a: u32, b: u32) -> bool {
        (u32::from(self.dc_step) << 9) < a.saturating_sub(b)
    }

    /// The lower of `a` and the previous cycle's amplitude: the most a
    /// channel's own level rises to, so one cycle's outlier (a front end's
    /// reading of a transition, an impulse) does not set the level a
    /// release is measured from.
    #[inline(always)]
    pub fn sustained(&self, a: u32) -> u32 {
        a.min(self.previous_q8)
    }
}

/// What one cycle's decision asks of the caller.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum Verdict {
    /// Learn the baseline from this cycle.
    Learn,
    /// Do not learn (active, or above the on threshold).
    Freeze,
    /// Stuck-active timeout: restart the baseline from this cycle.
    Relearn,
}

/// Per-channel decision state (7 bytes of data: the touch level fits the
/// padding the back end's channel record had, so it costs no RAM).
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct DecisionState {
    active_cycles: u16,
    /// While active: the touch's (or field's) own level in whole codes,
    /// saturating: raised at once to what two cycles in a row reached
    /// (see [`Evidence::sustained`]), followed down
    /// by 1/8 of the gap a cycle (so a slow change of the whole signal, a
    /// board's ground or an ambient ramp, moves it along).
    level_q0: u16,
    count: u8,
    level: u8,
    mode: Mode,
}

/// Whether a channel is on, and what its baseline does next while it is
/// off.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
enum Mode {
    /// Off.
    #[default]
    Idle,
    /// On (touched, or field present).
    Active,
    /// Off since a release that landed away from the old baseline (above
    /// the off threshold, or below 0.7 of the baseline: the ambient
    /// changed while the channel was on); the next idle cycle restarts the
    /// baseline from its amplitude.
    Fresh,
}

impl DecisionState {
    /// Idle.
    pub const fn new() -> Self {
        Self {
            active_cycles: 0,
            // Set when the channel turns on; nonzero until then on purpose
            // (see the back end's channel record).
            level_q0: u16::MAX,
            count: 0,
            level: 0,
            mode: Mode::Idle,
        }
    }

    /// Whether the channel is active (touched, or field present).
    pub const fn active(&self) -> bool {
        matches!(self.mode, Mode::Active)
    }

    /// Present level (0 when idle; 1 to `levels` when active in the field
    /// profile; 1 when active in the touch profile).
    pub const fn level(&self) -> u8 {
        self.level
    }

    /// Whether the channel is above its on threshold but not yet on.
    pub const fn pending(&self) -> bool {
        !self.active() && self.count > 0
    }

    /// While active, the channel's own level in Q8 codes (whole codes, see
    /// the module docs); 0 when idle.
    pub const fn touch_level_q8(&self) -> u32 {
        if self.active() {
            (self.level_q0 as u32) << 8
        } else {
            0
        }
    }

    /// Decides one cycle with amplitude `a`, baseline `b` and noise `n`
    /// (Q8 codes). Returns the event, if any, and what to do with the
    /// baseline. `may_turn_on` is the panel's permission: without it the
    /// channel stays idle however high it is (and does not learn from it).
    /// Per cycle.
    pub fn step(
        &mut self,
        a: u32,
        b: u32,
        n: u32,
        may_turn_on: bool,
        t: &DecisionTuning,
    ) -> (Option<EventKind>, Verdict) {
        self.step_with(a, b, n, Evidence::NONE, (), || may_turn_on, t)
    }

    /// [`step`](Self::step) with the panel's permission asked only when
    /// it matters (an idle channel above its on threshold), so a costly
    /// permission (the strongest-pad rule) is mostly never computed, and
    /// with what the cycles around this one say ([`Evidence`]), and the
    /// thresholds from `th` (`()`: the baseline and noise formulas).
    /// (Eight arguments: the cycle's figures each in a register, rather
    /// than a record built and read back once a cycle.)
    #[allow(clippy::too_many_arguments)]
    pub fn step_with(
        &mut self,
        a: u32,
        b: u32,
        n: u32,
        evidence: Evidence,
        th: impl ThresholdSource,
        may_turn_on: impl FnOnce() -> bool,
        t: &DecisionTuning,
    ) -> (Option<EventKind>, Verdict) {
        let touch = t.profile == Profile::Touch;
        if !self.active() {
            // Only the threshold this state compares against is computed.
            let on = th.on(t, b, n);
            if a > on && !may_turn_on() {
                self.count = 0;
                return (None, Verdict::Freeze);
            }
            if a > on {
                // Strong evidence (the excess over the baseline twice what
                // the on threshold asks, in a cycle whose mean did not
                // move: no impulse behind it) confirms at once.
                let steady = evidence.steady(a, b);
                let strong = steady && a - on > on.saturating_sub(b);
                let add = if strong { t.debounce_on } else { 1 };
                self.count = self.count.saturating_add(add);
                if self.count >= t.debounce_on {
                    self.mode = Mode::Active;
                    self.count = 0;
                    self.active_cycles = 0;
                    self.level = 1;
                    // From a steady cycle, what two cycles reached; else
                    // no more than the on threshold (the level then rises
                    // on the steady cycles that follow).
                    let sustained = evidence.sustained(a);
                    self.level_q0 = whole_codes(if steady { sustained } else { sustained.min(on) });
                    let k = if touch {
                        EventKind::TouchOn
                    } else {
                        EventKind::FieldOn
                    };
                    return (Some(k), Verdict::Freeze);
                }
                return (None, Verdict::Freeze);
            }
            self.count = 0;
            if self.mode == Mode::Fresh {
                self.mode = Mode::Idle;
                return (None, Verdict::Relearn);
            }
            return (None, Verdict::Learn);
        }
        self.active_cycles = self.active_cycles.saturating_add(1);
        let off_kind = if touch {
            EventKind::TouchOff
        } else {
            EventKind::FieldOff
        };
        if t.max_active != 0 && self.active_cycles >= t.max_active {
            self.release();
            return (Some(off_kind), Verdict::Relearn);
        }
        let own = u32::from(self.level_q0);
        let off = th.off(t, b, n);
        // Below the off threshold, or a sharp fall from the channel's own
        // level (a finger lifting while the ambient is above the old
        // baseline), compared in whole codes (no overflow: both below 2^16).
        let below = a < off;
        let a0 = whole_codes(a);
        let fall = u32::from(a0);
        let dropped = fall * DROP < own;
        // The level follows: up at once to what two cycles in a row
        // reached, down by 1/8 of the gap.
        let up = if evidence.steady(a, b) {
            whole_codes(evidence.sustained(a))
        } else {
            0
        };
        let l = self.level_q0;
        self.level_q0 = if up > l {
            up
        } else if a0 < l {
            l - ((l - a0) >> 3)
        } else {
            l
        };
        if below || dropped {
            // Strong evidence: halfway from the off threshold down to the
            // baseline, or a fall twice as deep.
            let strong = a < b.saturating_add(off.saturating_sub(b) / 2) || fall * (2 * DROP) < own;
            let add = if strong { t.debounce_off } else { 1 };
            self.count = self.count.saturating_add(add);
            if self.count >= t.debounce_off && self.active_cycles >= t.min_active {
                self.release();
                // Landed away from the old baseline: the ambient changed
                // while the channel was on; learn it afresh.
                if !below || a < mul_q8(b, HOLD_BELOW_Q8) {
                    self.mode = Mode::Fresh;
                }
                return (Some(off_kind), Verdict::Freeze);
            }
            return (None, Verdict::Freeze);
        }
        self.count = 0;
        if touch {
            return (None, Verdict::Freeze);
        }
        (
            self.update_level(a, th.level_base(b), t)
                .map(EventKind::Level),
            Verdict::Freeze,
        )
    }

    /// Ends an active state without waiting for the signal (a fault on the
    /// channel); returns the off event if the channel was active.
    pub fn force_off(&mut self, t: &DecisionTuning) -> Option<EventKind> {
        if !self.active() {
            self.count = 0;
            return None;
        }
        self.release();
        Some(if t.profile == Profile::Touch {
            EventKind::TouchOff
        } else {
            EventKind::FieldOff
        })
    }

    fn release(&mut self) {
        self.mode = Mode::Idle;
        self.count = 0;
        self.level = 0;
        self.active_cycles = 0;
    }

    fn update_level(&mut self, a: u32, b: u32, t: &DecisionTuning) -> Option<u8> {
        let ratio = ratio_q8(a, b);
        let l = self.level;
        if l < t.levels && ratio >= t.level_at(l) {
            self.level = l + 1;
            return Some(self.level);
        }
        if l >= 2 && ratio < mul_q8(t.level_at(l - 1), t.hyst_q8) {
            self.level = l - 1;
            return Some(self.level);
        }
        None
    }
}

/// A release by a fall from the channel's own level needs the amplitude
/// below 1/`DROP` of it (strong evidence: 1/(2·`DROP`)).
pub const DROP: u32 = 3;

/// A released level below this fraction of the baseline (Q8: 0.7, as the
/// baseline's own hold) means the ambient fell while the channel was on.
const HOLD_BELOW_Q8: u32 = 179;

/// `a` in whole codes (`a` in Q8), saturating at `u16::MAX`.
#[inline(always)]
fn whole_codes(a: u32) -> u16 {
    u16::try_from(a >> 8).unwrap_or(u16::MAX)
}

/// `a / b` in Q8, saturating; `u32::MAX` when `b` is 0. Out of line: one
/// copy for the panel rules and the field levels.
#[inline(never)]
pub fn ratio_q8(a: u32, b: u32) -> u32 {
    if b == 0 {
        return u32::MAX;
    }
    // Exact, in 32-bit division (`div_rem_u32`: no division routine
    // linked on Cortex-M0, a short loop for the small ratios met here):
    // ⌊256a/b⌋ = 256⌊a/b⌋ + ⌊256(a mod b)/b⌋.
    let (q, r) = div_rem_u32(a, b);
    if q >= 1 << 24 {
        return u32::MAX;
    }
    let frac = if ARMV6M || b >= 1 << 24 {
        frac_q8(r, b)
    } else {
        // One divide instruction (r · 2^8 fits 32 bits).
        div_rem_u32(r << 8, b).0
    };
    (q << 8) | frac
}

/// `⌊2^8 · r / b⌋` for `r < b`, by eight restoring steps (shift, compare,
/// subtract), for any `b`: the bit shifted out of `r` counts in the compare.
const fn frac_q8(r: u32, b: u32) -> u32 {
    let (mut r, mut f, mut i) = (r, 0u32, 0);
    while i < 8 {
        // 2r < 2b ≤ 2^33: with the carry, `2r ≥ b` is exact, and 2r − b
        // < b fits 32 bits (wrapping arithmetic gives it exactly).
        let carry = r >> 31 != 0;
        r <<= 1;
        f <<= 1;
        if carry || r >= b {
            r = r.wrapping_sub(b);
            f |= 1;
        }
        i += 1;
    }
    f
}

#[cfg(test)]
mod tests {
    use super::*;

    fn tuning(cfg: Config) -> DecisionTuning {
        DecisionTuning::new(&cfg)
    }

    #[test]
    fn thresholds_take_the_largest_term() {
        let t = tuning(Config::touch());
        // Clean baseline of 10 codes, tiny noise: the ratio term rules.
        let (on, off) = t.thresholds(10 * 256, 16);
        assert_eq!(on, 10 * 256 + mul_q8(10 * 256, f32_to_fixed(1.8, 8)));
        assert_eq!(off, 10 * 256 + mul_q8(10 * 256, f32_to_fixed(0.8, 8)));
        // Large noise: 8 noise units rule.
        let (on, _) = t.thresholds(10 * 256, 10 * 256);
        assert_eq!(on, 10 * 256 + 80 * 256);
        // Zero baseline and noise: the absolute floor rules.
        assert_eq!(t.thresholds(0, 0), (512, 256));
    }

    #[test]
    fn ratio_matches_wide_division() {
        // Reference: u64 division on the host (common practice).
        let vals = [
            0u32,
            1,
            2,
            255,
            256,
            5_120,
            65_535,
            (1 << 24) - 1,
            1 << 24,
            (1 << 24) + 1,
            0x7fff_ffff,
            0x8000_0000,
            0xfff0_0001,
            u32::MAX,
        ];
        for a in vals {
            for b in vals {
                let want = if b == 0 {
                    u32::MAX
                } else {
                    ((u64::from(a) << 8) / u64::from(b)).min(u64::from(u32::MAX)) as u32
                };
                assert_eq!(ratio_q8(a, b), want, "{a} / {b}");
                if a < b {
                    let f = ((u64::from(a) << 8) / u64::from(b)) as u32;
                    assert_eq!(frac_q8(a, b), f, "{a} / {b}");
                }
            }
        }
        for b in 1..3_000u32 {
            for a in [0, b - 1, b, 3 * b + 1, 1_000 * b] {
                let want = ((u64::from(a) << 8) / u64::from(b)) as u32;
                assert_eq!(ratio_q8(a, b), want, "{a} / {b}");
            }
        }
    }

    #[test]
    fn debounce_and_hysteresis() {
        let t = tuning(Config::touch());
        let mut d = DecisionState::new();
        let b = 10 * 256;
        // On at 28 codes; 40 is marginal (strong from 46: twice the
        // excess), so it takes debounce_on = 2 cycles.
        assert_eq!(d.step(40 * 256, b, 0, true, &t), (None, Verdict::Freeze));
        assert_eq!(d.step(40 * 256, b, 0, true, &t).0, Some(EventKind::TouchOn));
        // Between off (18 codes) and on (28 codes): stays on.
        for _ in 0..10 {
            assert_eq!(d.step(20 * 256, b, 0, true, &t).0, None);
        }
        // 16 codes: below off, above the strong mark (14: halfway down to
        // the baseline) and not a fall to a third of the level (20 codes
        // followed): debounce_off = 3 cycles.
        assert_eq!(d.step(16 * 256, b, 0, true, &t).0, None);
        assert_eq!(d.step(16 * 256, b, 0, true, &t).0, None);
        assert_eq!(
            d.step(16 * 256, b, 0, true, &t).0,
            Some(EventKind::TouchOff)
        );
        assert!(!d.active());
        // Released near the baseline: ordinary learning goes on.
        assert_eq!(d.step(10 * 256, b, 0, true, &t), (None, Verdict::Learn));
    }

    #[test]
    fn strong_evidence_confirms_at_once() {
        let t = tuning(Config::touch());
        let b = 10 * 256;
        let mut d = DecisionState::new();
        // 47 codes: more than twice the on excess (18 codes) over 10.
        assert_eq!(d.step(47 * 256, b, 0, true, &t).0, Some(EventKind::TouchOn));
        assert_eq!(d.step(47 * 256, b, 0, true, &t).0, None);
        // min_active_cycles = 2 is met; 13 codes is below the strong mark
        // (14) of the off threshold (18): off at once.
        assert_eq!(
            d.step(13 * 256, b, 0, true, &t).0,
            Some(EventKind::TouchOff)
        );
        // One cycle short of the strong mark on: debounced.
        let mut d = DecisionState::new();
        assert_eq!(d.step(46 * 256, b, 0, true, &t).0, None);
        assert_eq!(d.step(46 * 256, b, 0, true, &t).0, Some(EventKind::TouchOn));
    }

    #[test]
    fn a_sharp_fall_releases_above_the_old_off_threshold() {
        let t = tuning(Config::touch());
        let b = 15 * 256;
        let mut d = DecisionState::new();
        assert_eq!(
            d.step(500 * 256, b, 0, true, &t).0,
            Some(EventKind::TouchOn)
        );
        for _ in 0..5 {
            assert_eq!(d.step(500 * 256, b, 0, true, &t).0, None);
        }
        assert_eq!(d.touch_level_q8(), 500 * 256);
        // The ambient doubled during the touch: the finger lifts to 30
        // codes, above the old off threshold (27), far below a sixth of
        // the touch's level: released at once, and the baseline is learnt
        // afresh from the next idle cycle.
        assert!(30 * 256 > t.thresholds(b, 0).1);
        assert_eq!(
            d.step(30 * 256, b, 0, true, &t),
            (Some(EventKind::TouchOff), Verdict::Freeze)
        );
        assert_eq!(d.step(30 * 256, b, 0, true, &t), (None, Verdict::Relearn));
        assert_eq!(
            d.step(30 * 256, 30 * 256, 0, true, &t),
            (None, Verdict::Learn)
        );
        // A fall to a quarter (below a third, above a sixth) is debounced.
        let mut d = DecisionState::new();
        d.step(400 * 256, b, 0, true, &t);
        d.step(400 * 256, b, 0, true, &t);
        assert_eq!(d.step(100 * 256, b, 0, true, &t).0, None);
        assert_eq!(d.step(100 * 256, b, 0, true, &t).0, None);
        // (the level followed down by 1/8 of the gap twice: 400 → 363 → 330)
        assert_eq!(
            d.step(100 * 256, b, 0, true, &t).0,
            Some(EventKind::TouchOff)
        );
        // A fall to half of the level is no release.
        let mut d = DecisionState::new();
        d.step(400 * 256, b, 0, true, &t);
        for _ in 0..20 {
            assert_eq!(d.step(200 * 256, b, 0, true, &t).0, None);
        }
        assert!(d.active());
    }

    #[test]
    fn a_slow_change_moves_the_level_along() {
        // Everything scales down by 2 % a cycle while touched (a floating
        // board's ground): the level follows and the touch holds, until
        // the finger lifts.
        let t = tuning(Config::touch());
        let b = 20 * 256;
        let mut d = DecisionState::new();
        let mut a = 600.0f64;
        assert_eq!(
            d.step((a * 256.0) as u32, b, 0, true, &t).0,
            Some(EventKind::TouchOn)
        );
        for _ in 0..50 {
            a *= 0.98;
            assert_eq!(d.step((a * 256.0) as u32, b, 0, true, &t).0, None);
        }
        assert!(d.active(), "{a}");
        let off = d.step((a / 10.0 * 256.0) as u32, b, 0, true, &t).0;
        assert_eq!(off, Some(EventKind::TouchOff));
    }

    #[test]
    fn a_release_below_the_old_baseline_relearns() {
        // The ambient halved during the touch: the release lands at 0.5 of
        // the old baseline, and the baseline restarts from the next cycle.
        let t = tuning(Config::touch());
        let b = 40 * 256;
        let mut d = DecisionState::new();
        d.step(800 * 256, b, 0, true, &t);
        d.step(800 * 256, b, 0, true, &t);
        assert_eq!(
            d.step(20 * 256, b, 0, true, &t).0,
            Some(EventKind::TouchOff)
        );
        assert_eq!(d.step(20 * 256, b, 0, true, &t).1, Verdict::Relearn);
    }

    #[test]
    fn stuck_channel_relearns() {
        let mut cfg = Config::touch();
        cfg.max_active_cycles = 5;
        let t = tuning(cfg);
        let mut d = DecisionState::new();
        let mut seen = None;
        for k in 0..10 {
            let (e, v) = d.step(100 * 256, 10 * 256, 0, true, &t);
            if v == Verdict::Relearn {
                seen = Some((k, e));
                break;
            }
        }
        // 100 codes over a baseline of 10 is strong evidence: on at cycle
        // 0, active for 5 cycles at cycle 5.
        assert_eq!(seen, Some((5, Some(EventKind::TouchOff))));
    }

    #[test]
    fn field_levels_step_with_hysteresis() {
        let t = tuning(Config::field());
        let mut d = DecisionState::new();
        let b = 100 * 256;
        for _ in 0..5 {
            d.step(160 * 256, b, 0, true, &t);
        }
        assert!(d.active());
        assert_eq!(d.level(), 1);
        // 3 dB above the on ratio (1.5 · 1.413 = 2.12): level 2.
        assert_eq!(
            d.step(215 * 256, b, 0, true, &t).0,
            Some(EventKind::Level(2))
        );
        // Just below the level-2 boundary but within 1 dB: stays.
        assert_eq!(d.step(200 * 256, b, 0, true, &t).0, None);
        // More than 1 dB below it: back to level 1.
        assert_eq!(
            d.step(185 * 256, b, 0, true, &t).0,
            Some(EventKind::Level(1))
        );
    }
}
