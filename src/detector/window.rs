//! The sliding coherent window of the field profile: the per-cycle I/Q of
//! the fundamental summed over the last `w` mains cycles (`window_ms`),
//! phase-continuous through the shared oscillator, and the threshold's
//! inputs that go with it.
//!
//! Detection theory (Kay, Fundamentals of Statistical Signal Processing
//! Vol. II, §7.6.2; shared/REFERENCES.md): for a sinusoid of known
//! frequency and unknown phase in white Gaussian noise, the magnitude of
//! the correlation over the whole observation is the optimum statistic;
//! under noise alone it is Rayleigh distributed, `P(|S| > γσ) =
//! exp(−γ²/2)`. A sum over the last `w` cycles, advanced every cycle, is
//! that statistic for a field present over the window, and sees a field
//! that appears mid-window as soon as the part of the window it fills is
//! strong enough. With `σ` per component of the window mean:
//!
//! - **Noise** (`σ`, the Rayleigh scale): from the change of the per-cycle
//!   I/Q between consecutive cycles, `|Δi| + |Δq|`, whose mean under white
//!   noise is `2·√2·σ_z·√(2/π) = 2.2568·σ_z` (the mean of a half-normal,
//!   standard), `σ_z` per cycle, and `σ = σ_z/√w`. A steady hum (ambient or
//!   field) cancels in the change, so the estimate stays that of the noise
//!   while a field is present or ramps slowly.
//! - **Ambient**: the coherent ambient hum, a slow complex average of the
//!   per-cycle I/Q (`2^-8` a cycle, learnt while idle). Its magnitude `B`
//!   is nearly free of noise (a complex average keeps `2^-9` of the noise
//!   power), unlike the amplitude baseline, which noise alone raises to the
//!   Rayleigh mean.
//! - **On threshold**: `max(floor, γ·σ, B + max(c·σ, (r_on − 1)·B))`, with
//!   `γ` the Rayleigh quantile and `c` the Gaussian quantile of the
//!   per-decision false-alarm probability `p` that gives
//!   `false_alarms_per_hour` (see [`per_decision_pfa`]): the Rician law's
//!   two ends (no ambient: Rayleigh; strong ambient: Gaussian around `B`),
//!   and between them the larger of the two is within a factor of about
//!   two of the exact rate. The ratio term keeps the touch profile's
//!   immunity to ambient steps.
//!
//! Memory: `W` 32-bit words per channel, the last two the ambient estimate,
//! the others one cycle each (the I/Q of a cycle in 16 bits each, in units
//! of `2^s` Q8 codes, `s = adc_bits − 8`: 1/16 code at 12 bits); the sum
//! itself lives in the channel's coherent average, which the window
//! replaces. `W = 0`: no window (the exponential average of `avg_shift`).

use crate::config::{Config, MainsMode};
use crate::demod::Iq;
use crate::error::{ConfigError, ConfigValue};
use crate::fixed::{div_rem_u32, f32_to_fixed, isqrt_u64, mul_q4, mul_q8};

/// Window words per channel of [`FieldDetector`](crate::FieldDetector):
/// 30 cycles (0.5 s at 60 Hz, the field profile's default `window_ms`)
/// and the two words of the ambient estimate.
pub const FIELD_WINDOW_WORDS: usize = 32;

/// Words of a channel's window memory that hold the ambient estimate.
const AMBIENT_WORDS: usize = 2;

/// The tracker's floor in per-cycle noise units (see
/// [`WindowTuning::tracking_floor`]).
const TRACK_FLOOR_NOISE: f32 = 6.0;

/// The ambient estimate's averaging shift (cycles: 256, about 5 s).
const AMBIENT_SHIFT: u32 = 8;

/// An ambient step must exceed this many tracker floors (six per-cycle
/// noise units each: 36 in all, see [`WindowTuning::step_floor`]).
const STEP_FLOORS: u32 = 6;

/// An ambient step must exceed `2^-STEP_LEVEL_SHIFT` of the cycle's own
/// level (`|i| + |q|`): 1/8. Measured departures from the trend (see
/// [`push`]) of the built-in approaches, as a share of the level: at most
/// 0.063 on `wall-scan` (0.022 where the trends either side agree, as a
/// step's must), 0.099 on `mains-events`' plug where they agree (0.80 at
/// the abrupt start of its withdrawal, where they do not); the lamp of
/// `field-lamp-step` departs by 0.225.
const STEP_LEVEL_SHIFT: u32 = 3;

/// Cycles a window of `ms` spans at `hz` (rounded, at least 1).
const fn cycles(ms: u16, hz: u32) -> u32 {
    let c = div_rem_u32(ms as u32 * hz + 500, 1_000).0;
    if c == 0 {
        1
    } else {
        c
    }
}

/// Checks `window_ms` against a window memory of `words` per channel.
pub(crate) fn check(cfg: &Config, words: usize) -> Result<(), ConfigError> {
    if cfg.window_ms == 0 || words == 0 {
        return Ok(());
    }
    let capacity = words.saturating_sub(AMBIENT_WORDS) as u32;
    // The longest window the memory holds at the top system's frequency.
    let hz = match cfg.mains {
        MainsMode::Hz50 => 50,
        _ => 60,
    };
    if cycles(cfg.window_ms, hz) > capacity {
        // The longest window that rounds to `capacity` cycles.
        let max_ms = div_rem_u32(capacity * 1_000 + 499, hz).0;
        return Err(ConfigError::OutOfRange {
            field: "window_ms",
            value: ConfigValue::Int(cfg.window_ms.into()),
            min: ConfigValue::Int(0),
            max: ConfigValue::Int(max_ms),
        });
    }
    Ok(())
}

/// The per-decision false-alarm probability that makes a sliding window of
/// `w` cycles, decided every cycle at `hz` cycles a second, cross its
/// threshold `rate` times an hour under noise alone.
///
/// Rice's up-crossing argument for the envelope: between two cycles the
/// statistic moves by one cycle's noise in and one out, a radial step of
/// standard deviation `δ = √(2/w)` of its scale; at a high level `u` the
/// chance of an up-crossing per step is the envelope's density there
/// times `E[step⁺] = δ/√(2π)`, `u·e^(−u²/2)·δ/√(2π) = p·u·δ/√(2π)`. Solved
/// for `p` by fixed-point iteration (`u = √(2 ln 1/p)`). The bench
/// (`humsim bench`) measures the rate this gives.
pub fn per_decision_pfa(rate_per_hour: f32, hz: u32, w: u32) -> f32 {
    let decisions = 3_600.0 * hz as f32;
    let delta = sqrt(2.0 / w.max(1) as f32);
    let per_step = rate_per_hour / decisions;
    let mut p = per_step;
    for _ in 0..8 {
        let u = sqrt(2.0 * ln(1.0 / p));
        let k = u * delta * 0.398_942_3; // 1/√(2π)
        p = (per_step / k.max(1e-3)).min(0.5);
    }
    p
}

/// Natural logarithm of `v > 0` to about 1e-7 relative (construction
/// only): `v = m·2^e`, `ln v = e·ln 2 + 2·atanh((m − 1)/(m + 1))`, the
/// series to its fifth term (`|s| ≤ 1/3`: the next term is below 1e-6).
fn ln(v: f32) -> f32 {
    if v <= 0.0 || !v.is_finite() {
        return f32::NEG_INFINITY;
    }
    let bits = v.to_bits();
    let e = ((bits >> 23) & 0xff) as i32 - 127;
    let m = f32::from_bits((bits & 0x007f_ffff) | 0x3f80_0000);
    let s = (m - 1.0) / (m + 1.0);
    let s2 = s * s;
    let series = s * (1.0 + s2 * (1.0 / 3.0 + s2 * (0.2 + s2 * (1.0 / 7.0 + s2 / 9.0))));
    e as f32 * core::f32::consts::LN_2 + 2.0 * series
}

/// Square root of `v ≥ 0` (construction only): micromath's estimate and
/// three Newton steps (each doubles the correct bits).
fn sqrt(v: f32) -> f32 {
    if v <= 0.0 {
        return 0.0;
    }
    let mut x = micromath::F32Ext::sqrt(v).max(f32::MIN_POSITIVE);
    for _ in 0..3 {
        x = 0.5 * (x + v / x);
    }
    x
}

/// `γ = √(2 ln 1/p)`: the Rayleigh quantile (noise units).
fn rayleigh_quantile(p: f32) -> f32 {
    sqrt(2.0 * ln(1.0 / p))
}

/// The Gaussian upper quantile `Φ⁻¹(1 − p)` for `p ≤ 0.5` (Abramowitz &
/// Stegun 26.2.23, error below 4.5e-4).
fn gaussian_quantile(p: f32) -> f32 {
    let t = sqrt(-2.0 * ln(p));
    t - (2.515_517 + 0.802_853 * t + 0.010_328 * t * t)
        / (1.0 + 1.432_788 * t + 0.189_269 * t * t + 0.001_308 * t * t * t)
}

/// One system's window constants.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
struct System {
    /// Cycles in the window.
    w: u8,
    /// `2^(16+s)/w`: window sum to mean in Q8 codes.
    mean_q16: u32,
    /// `2^s/(2.2568·√w)` in Q16: the L1 change to the window's σ.
    noise_q16: u32,
    /// Rayleigh quantile γ, Q4.
    gamma_q4: u32,
    /// Gaussian quantile c, Q4.
    c_q4: u32,
    /// Six per-cycle noise units in the window's σ: `6·√w`, Q8.
    floor_q8: u32,
}

/// The window's constants, from a validated [`Config`].
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct WindowTuning {
    /// Whether the channel records have window memory and `window_ms > 0`.
    pub(crate) on: bool,
    /// `s`: the storage shift from Q8 codes.
    shift: u8,
    fifty: System,
    sixty: System,
    /// Cycles longer than this many samples are 50 Hz cycles.
    split_samples: u32,
    off_noise_q4: u32,
    on_excess_q8: u32,
    off_excess_q8: u32,
    floor_q8: u32,
    /// `1/on_ratio`, Q16.
    inv_on_ratio_q16: u32,
}

impl WindowTuning {
    /// No window.
    pub(crate) const OFF: Self = Self {
        on: false,
        shift: 0,
        fifty: System {
            w: 1,
            mean_q16: 0,
            noise_q16: 0,
            gamma_q4: 0,
            c_q4: 0,
            floor_q8: 0,
        },
        sixty: System {
            w: 1,
            mean_q16: 0,
            noise_q16: 0,
            gamma_q4: 0,
            c_q4: 0,
            floor_q8: 0,
        },
        split_samples: 0,
        off_noise_q4: 0,
        on_excess_q8: 0,
        off_excess_q8: 0,
        floor_q8: 0,
        inv_on_ratio_q16: 0,
    };

    /// The constants for `cfg` (validated, `window_ms > 0`, and a window
    /// memory that holds it).
    pub(crate) fn new(cfg: &Config) -> Self {
        let shift = cfg.adc_bits.saturating_sub(8).min(8);
        let system = |hz: u32| {
            let w = cycles(cfg.window_ms, hz).min(255);
            let p = per_decision_pfa(cfg.false_alarms_per_hour, hz, w);
            let scale = (1u32 << (16 + u32::from(shift))) as f32;
            System {
                w: w as u8,
                mean_q16: div_rem_u32(1u32 << (16 + u32::from(shift)), w).0,
                noise_q16: f32_to_fixed(scale / 65_536.0 / (2.256_758_3 * sqrt(w as f32)), 16),
                gamma_q4: f32_to_fixed(rayleigh_quantile(p), 4),
                c_q4: f32_to_fixed(gaussian_quantile(p), 4),
                floor_q8: f32_to_fixed(TRACK_FLOOR_NOISE * sqrt(w as f32), 8),
            }
        };
        let on_q8 = f32_to_fixed(cfg.on_ratio, 8);
        let off_q8 = f32_to_fixed(cfg.off_ratio, 8);
        Self {
            on: true,
            shift,
            fifty: system(50),
            sixty: system(60),
            // Between the systems: samples of a 55 Hz cycle.
            split_samples: div_rem_u32(cfg.sample_rate_hz, 55).0,
            off_noise_q4: f32_to_fixed(cfg.off_noise, 4),
            on_excess_q8: on_q8.saturating_sub(256),
            off_excess_q8: off_q8.saturating_sub(256),
            floor_q8: f32_to_fixed(cfg.floor_codes, 8),
            inv_on_ratio_q16: div_rem_u32(1 << 24, on_q8.max(1)).0,
        }
    }

    /// The baseline the field levels are counted from in a window: the
    /// on threshold over `on_ratio`, so level 1 begins at the on threshold
    /// as it does without a window.
    pub(crate) fn level_base(&self, on: u32) -> u32 {
        ((u64::from(on) * u64::from(self.inv_on_ratio_q16)) >> 16) as u32
    }

    /// The system whose window a cycle of `samples` samples belongs to.
    fn system(&self, samples: u32) -> &System {
        if samples > self.split_samples {
            &self.fifty
        } else {
            &self.sixty
        }
    }

    /// The tracker's floor for window noise `n` (Q8 codes): `|i| + |q|`
    /// of noise alone exceeds `k·σ_z` with probability below
    /// `exp(−k²/4)` (`|i| + |q| ≤ √2·|z|`, Rayleigh), 1.2e-4 for six.
    pub(crate) fn tracking_floor(&self, n: u32, samples: u32) -> u32 {
        mul_q8(n, self.system(samples).floor_q8)
    }

    /// The least `|i| + |q|` (storage units) of an ambient step for window
    /// noise `n` (Q8 codes): [`STEP_FLOORS`] tracker floors, 36 per-cycle
    /// noise units. Under noise alone the departure `e` (see [`push`]) is
    /// `2z₋₁ − 2z₋₃ − z₀ + z₋₄` of independent cycles, Gaussian with
    /// `10σ_z²` a component; `|i| + |q| ≤ √2·|e|`, so it exceeds `36σ_z`
    /// with probability below `exp(−(36/√2)²/20)`, 8e-15 a cycle
    /// (Rayleigh).
    pub(crate) fn step_floor(&self, n: u32, samples: u32) -> u32 {
        self.tracking_floor(n, samples).saturating_mul(STEP_FLOORS) >> self.shift
    }

    /// Cycles in the window for a cycle of `samples` samples.
    pub(crate) fn cycles(&self, samples: u32) -> usize {
        usize::from(self.system(samples).w)
    }

    /// On and off thresholds (Q8 codes) from the noise `n` (the window's
    /// σ, Q8), the ambient `b` (Q8) for a cycle of `samples` samples.
    pub(crate) fn thresholds(&self, n: u32, b: u32, samples: u32) -> (u32, u32) {
        let s = self.system(samples);
        let on = mul_q4(n, s.gamma_q4)
            .max(self.floor_q8)
            .max(b.saturating_add(mul_q4(n, s.c_q4).max(mul_q8(b, self.on_excess_q8))));
        let off = (self.floor_q8 / 2)
            .max(b.saturating_add(mul_q4(n, self.off_noise_q4).max(mul_q8(b, self.off_excess_q8))));
        (on, off)
    }
}

/// A 16-bit store of one component (`v` in Q8 codes, shifted by `s`),
/// saturating.
#[inline(always)]
fn store(v: i32, s: u8) -> i16 {
    let x = v >> s;
    x.clamp(i32::from(i16::MIN), i32::from(i16::MAX)) as i16
}

fn pack(i: i16, q: i16) -> u32 {
    (u32::from(i as u16) << 16) | u32::from(q as u16)
}

fn unpack(w: u32) -> (i32, i32) {
    (
        i32::from((w >> 16) as u16 as i16),
        i32::from(w as u16 as i16),
    )
}

/// What one cycle through the window gives.
pub(crate) struct WindowOut {
    /// The window mean's magnitude, Q8 codes.
    pub amp_q8: u32,
    /// The noise sample (the window's σ when averaged), Q8 codes.
    pub noise_q8: u32,
    /// Whether an ambient step was taken on an idle channel (its
    /// amplitude baseline then restarts at `amp_q8`).
    pub idle_step: bool,
}

/// What the back end knows of a channel before its cycle is pushed, for
/// the ambient step rule (see [`push`]).
#[derive(Clone, Copy)]
pub(crate) struct StepRule {
    /// The window noise (Q8 codes) the step's floor is set from
    /// ([`WindowTuning::step_floor`]).
    pub noise_q8: u32,
    /// Whether the channel is idle (a step then moves the whole window).
    pub idle: bool,
}

/// Takes cycle `f` into a channel's window: `mem` its window memory,
/// `sum` the running sum (in storage units), `head` the slot this cycle
/// writes, `w` the cycles in the window (at most the slots).
///
/// **Ambient steps** (`step`: a settled channel without a fault). A lamp,
/// a charger or any appliance switched on or off near the electrode adds
/// or removes its hum within one mains cycle (two, when the switching
/// falls inside a cycle), and the hum is steady before and after; a
/// conductor approached by hand changes the coupling over many cycles, and
/// smoothly. By amplitude alone one channel cannot tell them apart (a
/// lamp's cord is a live conductor); by their speed it can. One cycle
/// late, the change over the two cycles before the last is compared with
/// the trend on either side, the changes just before and just after them:
/// a step is a departure `e` from the trend of at least
/// [`WindowTuning::step_floor`] and 1/8 of the cycle's level (`|i| + |q|`,
/// see `STEP_LEVEL_SHIFT`), with the trends on its two sides within a
/// quarter of it of each other (an accelerating approach, a one-cycle
/// outlier are not steps). It moves the ambient estimate by `e` (complex:
/// the appliance's hum adds to the rest), so a field present at the step
/// is still measured from the ambient under it and is released once the
/// conductor is withdrawn with the appliance still on; on an idle channel
/// it moves the cycles already in the window too, so the window's mean
/// takes the new level at once and the step reports nothing, and the
/// amplitude baseline restarts there (so the panel's ambient rule, which
/// compares amplitudes with those baselines, does not take the same step
/// a second time). The price: a
/// field that appears within a cycle or two (a cable near the electrode
/// switched on, a finger on the electrode) is taken as ambient; one
/// approached, or present when the detector starts, is reported. So that
/// a large step does not turn an idle channel on in the cycle before it is
/// recognised, an idle channel does not turn on in a cycle whose change
/// may begin one ([`step_may_begin`]).
#[inline]
#[allow(clippy::too_many_arguments)]
pub(crate) fn push(
    mem: &mut [u32],
    sum: &mut Iq,
    f: &Iq,
    head: usize,
    w: usize,
    samples: u32,
    t: &WindowTuning,
    step: Option<StepRule>,
) -> WindowOut {
    let slots = mem.len().saturating_sub(AMBIENT_WORDS);
    let (ring, ambient) = mem.split_at_mut(slots);
    let zi = store(f.i, t.shift);
    let zq = store(f.q, t.shift);
    let (zi32, zq32) = (i32::from(zi), i32::from(zq));
    // Slot `k` cycles before `head` (`head < slots`, `k ≤ slots`): one
    // conditional subtraction, no division (a library call on the M0).
    let at = |k: usize| -> usize {
        let i = head + slots.saturating_sub(k);
        if i >= slots {
            i - slots
        } else {
            i
        }
    };
    let (pi, pq) = ring.get(at(1)).map_or((0, 0), |&v| unpack(v));
    let (oi, oq) = ring.get(at(w)).map_or((0, 0), |&v| unpack(v));
    sum.i = sum.i.saturating_add(zi32 - oi);
    sum.q = sum.q.saturating_add(zq32 - oq);
    if let Some(slot) = ring.get_mut(head) {
        *slot = pack(zi, zq);
    }
    let (di, dq) = (zi32 - pi, zq32 - pq);
    let mut idle_step = false;
    if let Some(rule) = step {
        // The cycles three and four before this one (`pi, pq` the one
        // before): the change over the two cycles before the last, less
        // the trend on either side (the changes just after and just
        // before them).
        let read = |k: usize| ring.get(at(k)).map_or((0, 0), |&v| unpack(v));
        let (z3, z4) = (read(3), read(4));
        let d3 = (z3.0 - z4.0, z3.1 - z4.1);
        let e = (pi - z3.0 - di - d3.0, pq - z3.1 - dq - d3.1);
        let l1 = |(i, q): (i32, i32)| i.unsigned_abs().saturating_add(q.unsigned_abs());
        let size = l1(e);
        // Cheapest first: most cycles fail the level test.
        if size > l1((zi32, zq32)) >> STEP_LEVEL_SHIFT
            && l1((di - d3.0, dq - d3.1)) <= size >> 2
            && size > t.step_floor(rule.noise_q8, samples)
        {
            take_step(ring, sum, head, w, e, (di + d3.0, dq + d3.1), rule.idle);
            idle_step = rule.idle;
            if let [i, q, ..] = ambient {
                let add =
                    |a: u32, d: i32| (a as i32).saturating_add(d.saturating_mul(1 << 8)) as u32;
                *i = add(*i, e.0);
                *q = add(*q, e.1);
            }
        }
    }
    let l1 = di.unsigned_abs().saturating_add(dq.unsigned_abs());
    let s = t.system(samples);
    let mean = |v: u64| ((v * u64::from(s.mean_q16)) >> 16).min(u64::from(u32::MAX)) as u32;
    let amp_q8 = mean(u64::from(magnitude(sum)));
    let noise_q8 = ((u64::from(l1) * u64::from(s.noise_q16)) >> 16).min(u64::from(u32::MAX)) as u32;
    WindowOut {
        amp_q8,
        noise_q8,
        idle_step,
    }
}

/// Whether the cycle just pushed (slot `head`) may begin an ambient step
/// (see [`push`]): its change departs from the one before, or the last two
/// changes from twice the one before them, by at least
/// [`WindowTuning::step_floor`] for window noise `n` and 1/8 of its level.
/// Asked only when an idle channel would turn on (rarely), so it costs
/// nothing in the steady state; the step itself is known a cycle later.
pub(crate) fn step_may_begin(
    mem: &[u32],
    head: usize,
    n: u32,
    samples: u32,
    t: &WindowTuning,
) -> bool {
    let slots = mem.len().saturating_sub(AMBIENT_WORDS);
    let ring = mem.get(..slots).unwrap_or(&[]);
    let read = |k: usize| {
        let i = if k > head { head + slots - k } else { head - k };
        ring.get(i).map_or((0, 0), |&v| unpack(v))
    };
    let (z0, z1, z2, z3) = (read(0), read(1), read(2), read(3));
    let d0 = (z0.0 - z1.0, z0.1 - z1.1);
    let d1 = (z1.0 - z2.0, z1.1 - z2.1);
    let d2 = (z2.0 - z3.0, z2.1 - z3.1);
    let l1 = |(i, q): (i32, i32)| i.unsigned_abs().saturating_add(q.unsigned_abs());
    let departs =
        l1((d0.0 - d1.0, d0.1 - d1.1)).max(l1((d0.0 + d1.0 - 2 * d2.0, d0.1 + d1.1 - 2 * d2.1)));
    departs > l1(z0) >> STEP_LEVEL_SHIFT && departs > t.step_floor(n, samples)
}

/// Takes an ambient step `e` (storage units, over the two cycles before
/// the last) into a channel's ring, `trend2` twice the trend around it:
/// the cycle two before `head` is set one trend short of the cycle after
/// it, so the step is not seen again; on an idle channel the cycles before
/// that move by `e`, so the window's mean takes the new level at once. The
/// sum is taken afresh over the `w` slots up to `head`. Rare (a switching
/// appliance), so the loops over the slots cost nothing in the steady
/// state.
#[cold]
#[inline(never)]
fn take_step(
    ring: &mut [u32],
    sum: &mut Iq,
    head: usize,
    w: usize,
    e: (i32, i32),
    trend2: (i32, i32),
    idle: bool,
) {
    let slots = ring.len();
    // Slot `k` cycles before `head`.
    let at = |k: usize| if k > head { head + slots - k } else { head - k };
    let (ai, aq) = ring.get(at(1)).map_or((0, 0), |&v| unpack(v));
    if let Some(slot) = ring.get_mut(at(2)) {
        *slot = pack(store(ai - trend2.0 / 2, 0), store(aq - trend2.1 / 2, 0));
    }
    if idle {
        for k in 3..slots {
            if let Some(slot) = ring.get_mut(at(k)) {
                let (i, q) = unpack(*slot);
                *slot = pack(store(i + e.0, 0), store(q + e.1, 0));
            }
        }
    }
    let (mut si, mut sq) = (0i32, 0i32);
    for k in 0..w.min(slots) {
        let (i, q) = ring.get(at(k)).map_or((0, 0), |&v| unpack(v));
        si = si.saturating_add(i);
        sq = sq.saturating_add(q);
    }
    *sum = Iq { i: si, q: sq };
}

/// `|z|`, rounded down: the 32-bit root where the power fits 32 bits (the
/// usual case for these sums; the M0's 64-bit root is several times
/// dearer), else the 64-bit one. The same value either way.
#[inline]
fn magnitude(z: &Iq) -> u32 {
    let p = z.power();
    match u32::try_from(p) {
        Ok(p) => crate::fixed::isqrt_u32(p),
        Err(_) => isqrt_u64(p),
    }
}

/// The magnitude of a channel's ambient estimate, Q8 codes.
pub(crate) fn ambient_q8(mem: &[u32], t: &WindowTuning) -> u32 {
    let slots = mem.len().saturating_sub(AMBIENT_WORDS);
    let (bi, bq) = match mem.get(slots..) {
        Some([i, q, ..]) => (*i as i32, *q as i32),
        _ => (0, 0),
    };
    // The ambient in storage units · 2^8; its magnitude in Q8 codes.
    let b = magnitude(&Iq { i: bi, q: bq });
    b >> (8 - u32::from(t.shift))
}

/// Learns the ambient from the cycle just pushed (slot `head`).
#[inline]
pub(crate) fn learn_ambient(mem: &mut [u32], head: usize) {
    let slots = mem.len().saturating_sub(AMBIENT_WORDS);
    let (ring, ambient) = mem.split_at_mut(slots);
    let Some(&z) = ring.get(head) else {
        return;
    };
    let (zi, zq) = unpack(z);
    if let [i, q, ..] = ambient {
        let step = |a: u32, z: i32| -> u32 {
            let a = a as i32;
            a.saturating_add(((z << AMBIENT_SHIFT).saturating_sub(a)) >> AMBIENT_SHIFT) as u32
        };
        *i = step(*i, zi);
        *q = step(*q, zq);
    }
}

/// Restarts the ambient at the window's present mean (after a release
/// that landed away from the old baseline, or a stuck-active timeout).
#[inline]
pub(crate) fn relearn_ambient(mem: &mut [u32], sum: &Iq, samples: u32, t: &WindowTuning) {
    let slots = mem.len().saturating_sub(AMBIENT_WORDS);
    let s = t.system(samples);
    // sum · 2^8 / w = sum · mean_q16 >> (8 + s).
    let k = 8 + u32::from(t.shift);
    let scale = |v: i32| ((i64::from(v) * i64::from(s.mean_q16)) >> k) as i32;
    if let Some([i, q]) = mem.get_mut(slots..slots + 2) {
        *i = scale(sum.i) as u32;
        *q = scale(sum.q) as u32;
    }
}

/// Rescales a channel's ambient estimate by `ratio_q8` (the panel's
/// ambient rule).
pub(crate) fn rescale_ambient(mem: &mut [u32], ratio_q8: u32) {
    let slots = mem.len().saturating_sub(AMBIENT_WORDS);
    if let Some(amb) = mem.get_mut(slots..) {
        for v in amb {
            let x = (i64::from(*v as i32) * i64::from(ratio_q8)) >> 8;
            *v = x.clamp(i64::from(i32::MIN), i64::from(i32::MAX)) as i32 as u32;
        }
    }
}

/// Recomputes a channel's sum over the last `w` slots before `head` (when
/// the window length changes with the mains system).
pub(crate) fn resum(mem: &[u32], sum: &mut Iq, head: usize, w: usize) {
    let slots = mem.len().saturating_sub(AMBIENT_WORDS);
    let ring = mem.get(..slots).unwrap_or(&[]);
    let (mut si, mut sq) = (0i32, 0i32);
    for k in 1..=w.min(slots) {
        let idx = (head + slots - k) % slots.max(1);
        let (i, q) = ring.get(idx).map_or((0, 0), |&v| unpack(v));
        si = si.saturating_add(i);
        sq = sq.saturating_add(q);
    }
    *sum = Iq { i: si, q: sq };
}

/// The window stage of a [`Backend`](super::Backend): [`NoWindow`] (the
/// default: nothing, at no cost) or [`SlidingWindow`] (memory for the
/// field profile's window). Implemented by those two only.
pub trait WindowStage: Clone + core::fmt::Debug + sealed::Sealed {
    /// Whether the stage has window memory at all (a compile-time fact:
    /// the back end's window code is not even built without it).
    const MEMORY: bool;
    /// Checks `window_ms` against this stage's memory.
    fn check(cfg: &Config) -> Result<(), ConfigError>;
    /// Builds the stage for a validated `cfg`.
    fn build(cfg: &Config) -> Self;
    /// The memory and constants, when the window is in use.
    #[doc(hidden)]
    fn parts(&mut self) -> Option<WindowParts<'_>>;
    /// The least per-cycle `|i| + |q|` (Q8 codes) the mains tracker should
    /// learn from: six per-cycle noise units (0 without a window).
    fn tracking_floor(&self) -> u32;
    /// The on and off thresholds channel `ch` decides on with window noise
    /// `n` (Q8 codes), for a snapshot; `None` without a window in use.
    fn thresholds(&self, ch: usize, n: u32) -> Option<(u32, u32)>;
}

mod sealed {
    pub trait Sealed {}
    impl Sealed for super::NoWindow {}
    impl<const N: usize, const W: usize> Sealed for super::SlidingWindow<N, W> {}
}

/// What [`WindowStage::parts`] lends the back end for one cycle.
#[doc(hidden)]
#[derive(Debug)]
pub struct WindowParts<'a> {
    pub(crate) t: &'a WindowTuning,
    /// Every channel's memory, `words` each, one after the other.
    pub(crate) mem: &'a mut [u32],
    pub(crate) words: usize,
    /// The slot this cycle writes.
    pub(crate) head: &'a mut u8,
    /// Cycles in the window now (0 before the first cycle).
    pub(crate) w: &'a mut u8,
    /// The tracker's floor ([`WindowStage::tracking_floor`]).
    pub(crate) floor: &'a mut u32,
}

/// No window: the coherent exponential average of `avg_shift` (the touch
/// profile's way, and the field profile's without window memory). Costs
/// nothing.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct NoWindow;

impl WindowStage for NoWindow {
    const MEMORY: bool = false;
    fn check(_: &Config) -> Result<(), ConfigError> {
        Ok(())
    }
    #[inline(always)]
    fn build(_: &Config) -> Self {
        NoWindow
    }
    #[inline(always)]
    fn parts(&mut self) -> Option<WindowParts<'_>> {
        None
    }
    #[inline(always)]
    fn tracking_floor(&self) -> u32 {
        0
    }
    fn thresholds(&self, _: usize, _: u32) -> Option<(u32, u32)> {
        None
    }
}

/// Window memory for `N` channels, `W` 32-bit words each: `W − 2` cycles
/// and the ambient estimate (see the module docs). [`FIELD_WINDOW_WORDS`]
/// holds the field profile's default 0.5 s at 60 Hz.
#[derive(Clone, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct SlidingWindow<const N: usize, const W: usize> {
    mem: [[u32; W]; N],
    t: WindowTuning,
    head: u8,
    w: u8,
    floor: u32,
}

impl<const N: usize, const W: usize> WindowStage for SlidingWindow<N, W> {
    const MEMORY: bool = W > AMBIENT_WORDS;
    fn check(cfg: &Config) -> Result<(), ConfigError> {
        const { assert!(W <= 257, "at most 255 cycles and the ambient") };
        check(cfg, W)
    }
    fn build(cfg: &Config) -> Self {
        let on = cfg.window_ms > 0 && W > AMBIENT_WORDS;
        Self {
            mem: [[0; W]; N],
            t: if on {
                WindowTuning::new(cfg)
            } else {
                WindowTuning::OFF
            },
            head: 0,
            w: 0,
            floor: 0,
        }
    }
    #[inline]
    fn parts(&mut self) -> Option<WindowParts<'_>> {
        if !self.t.on {
            return None;
        }
        Some(WindowParts {
            t: &self.t,
            mem: self.mem.as_flattened_mut(),
            words: W,
            head: &mut self.head,
            w: &mut self.w,
            floor: &mut self.floor,
        })
    }
    fn tracking_floor(&self) -> u32 {
        self.floor
    }
    fn thresholds(&self, ch: usize, n: u32) -> Option<(u32, u32)> {
        if !self.t.on {
            return None;
        }
        let mem = self.mem.get(ch)?;
        // The system whose window length is in use (50 Hz before the first
        // cycle, like a cycle longer than a 55 Hz one).
        let samples = if self.w == self.t.sixty.w && self.w != self.t.fifty.w {
            0
        } else {
            u32::MAX
        };
        Some(self.t.thresholds(n, ambient_q8(mem, &self.t), samples))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn ln_and_sqrt_match_the_standard_library() {
        // Against std's correctly rounded f64 functions (the reference).
        for v in [1e-7f32, 1e-5, 0.01, 0.1, 0.5, 1.0, 1.5, 2.0, 10.0, 1e4, 1e7] {
            let l = f64::from(v).ln();
            assert!(
                (f64::from(ln(v)) - l).abs() <= 2e-6 * l.abs().max(1.0),
                "ln {v}"
            );
            let r = f64::from(v).sqrt();
            assert!((f64::from(sqrt(v)) - r).abs() <= 1e-6 * r, "sqrt {v}");
        }
    }

    #[test]
    fn gaussian_quantile_matches_tables() {
        // Standard normal table: Φ⁻¹(0.9) = 1.2816, Φ⁻¹(0.999) = 3.0902,
        // Φ⁻¹(1 − 1e-5) = 4.2649 (A&S 26.2.23's error is below 4.5e-4).
        for (p, x) in [(0.1, 1.281_6), (1e-3, 3.090_2), (1e-5, 4.264_9)] {
            assert!((gaussian_quantile(p) - x).abs() < 5e-4, "{p}");
        }
    }

    #[test]
    fn rayleigh_quantile_matches_references() {
        // shared/REFERENCES.md (computed): γ/σ = 3.717 at 1e-3, 5.257 at 1e-6.
        assert!((rayleigh_quantile(1e-3) - 3.717).abs() < 2e-3);
        assert!((rayleigh_quantile(1e-6) - 5.257).abs() < 2e-3);
    }

    #[test]
    fn per_decision_pfa_solves_its_equation() {
        // p·u·δ/√(2π) per cycle, times the cycles of an hour, is the rate.
        let (rate, hz, w) = (2.0f32, 50, 25);
        let p = per_decision_pfa(rate, hz, w);
        let u = rayleigh_quantile(p);
        let back = p * u * (2.0f32 / w as f32).sqrt() * 0.398_942_3 * 3_600.0 * hz as f32;
        assert!((back - rate).abs() < 1e-3 * rate, "{back}");
    }

    #[test]
    fn window_memory_is_checked() {
        let cfg = Config::field();
        // 0.5 s at 60 Hz is 30 cycles: 32 words hold it, 31 do not.
        assert!(check(&cfg, 32).is_ok());
        assert!(matches!(
            check(&cfg, 31),
            Err(ConfigError::OutOfRange {
                field: "window_ms",
                ..
            })
        ));
        // No memory: no window, nothing to check.
        assert!(check(&cfg, 0).is_ok());
    }
}
