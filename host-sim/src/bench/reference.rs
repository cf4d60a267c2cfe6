//! Two reference detectors that humsense is measured against, streaming,
//! per channel, on the same integer ADC codes the core crate gets.
//!
//! Both are models, computed in `f64` (no quantisation of their own state:
//! each is given its best case). Thresholds are fractions of the
//! converter's full scale (`2^bits` codes), so that one setting means the
//! same voltage on every board; time constants and debounce times are in
//! seconds or milliseconds, so that one setting serves every sample rate.
//! `T = 1 / rate` is the sample period and every one-pole stage uses the
//! exponential moving average `y[n] = y[n−1] + α·(u[n] − y[n−1])` with
//! `α = 1 − e^(−T/τ)` ([`ema_alpha`]), the exact sampled step response of
//! an RC of time constant `τ`.
//!
//! ## [`RcComparator`]: an RC filter and a comparator
//! What an analog front end with a coupling capacitor, a rectifier, an RC
//! low-pass and a comparator with hysteresis does:
//! 1. coupling (slow high-pass): `m[n] = m[n−1] + α_c·(x[n] − m[n−1])`,
//!    `h[n] = x[n] − m[n]`, `m[0] = x[0]` (the capacitor charged to the
//!    bias when the run starts);
//! 2. rectifier: `r[n] = |h[n]|` (full wave) or `max(h[n], 0)` (half wave);
//! 3. RC low-pass: `y[n] = y[n−1] + α_rc·(r[n] − y[n−1])`, `y[−1] = 0`; on a
//!    sine of amplitude `Vp` it settles at the rectified mean, `2Vp/π`
//!    (full wave) or `Vp/π` (half wave);
//! 4. comparator: on when `y[n] > on`, off when `y[n] < on·(1 − hysteresis)`.
//!
//! ## [`EmaDebounce`]: the first firmware attempt
//! An exponential moving average of `|x − mean|` against one fixed
//! threshold, debounced by consecutive counts:
//! 1. mean: `m[n] = m[n−1] + α_m·(x[n] − m[n−1])`, `m[0] = x[0]`;
//! 2. level: `e[n] = e[n−1] + α_e·(|x[n] − m[n]| − e[n−1])`, `e[−1] = 0`;
//! 3. debounce: touch-on after `on_count` consecutive samples with
//!    `e > threshold`, touch-off after `off_count` consecutive samples with
//!    `e ≤ threshold`; a sample on the other side restarts the count. The
//!    counts are configured as times (`on_ms`, `off_ms`):
//!    `count = max(1, round(ms · rate / 1000))` samples.
//!
//! Events are [`humsense::Event`]s (`touch-on`, `touch-off`, strength 0)
//! whose `sample` is the index of the sample that changed the state, so the
//! project's scorer ([`crate::score`]) scores them as it scores the core
//! crate's.

use humsense::{Event, EventKind};

/// `α = 1 − e^(−T/τ)` for a one-pole stage of time constant `tau_s` sampled
/// at `rate_hz` (`T = 1/rate_hz`): the EMA whose step response equals the
/// RC's `1 − e^(−t/τ)` at every sample instant. `tau_s = 0` gives 1 (no
/// filtering).
pub fn ema_alpha(tau_s: f64, rate_hz: f64) -> f64 {
    if tau_s <= 0.0 {
        return 1.0;
    }
    -(-1.0 / (tau_s * rate_hz)).exp_m1()
}

/// Which half-waves the rectifier passes.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Rectifier {
    /// `|h|`: a bridge or a precision full-wave rectifier.
    Full,
    /// `max(h, 0)`: one diode.
    Half,
}

impl Rectifier {
    /// `full` or `half`.
    pub fn name(self) -> &'static str {
        match self {
            Rectifier::Full => "full",
            Rectifier::Half => "half",
        }
    }
}

/// The RC-and-comparator reference's parameters (see the module docs).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RcComparatorConfig {
    /// Time constant of the coupling high-pass (the mean removed), seconds.
    pub coupling_tau_s: f64,
    /// The rectifier.
    pub rectifier: Rectifier,
    /// Time constant of the RC low-pass after the rectifier, seconds.
    pub rc_tau_s: f64,
    /// The comparator's on threshold on the low-passed level, as a fraction
    /// of full scale (`2^bits` codes).
    pub on_fraction: f64,
    /// Hysteresis: the off threshold is `on_fraction · (1 − hysteresis)`;
    /// 0 (none) up to below 1.
    pub hysteresis: f64,
}

/// The first-firmware reference's parameters (see the module docs).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct EmaDebounceConfig {
    /// Time constant of the mean's EMA, seconds.
    pub mean_tau_s: f64,
    /// Time constant of the EMA of `|x − mean|`, seconds.
    pub ema_tau_s: f64,
    /// The threshold on that EMA, as a fraction of full scale.
    pub threshold_fraction: f64,
    /// Time above the threshold that turns a touch on, milliseconds
    /// (rounded to a count of consecutive samples, at least 1).
    pub on_ms: f64,
    /// Time at or below the threshold that turns a touch off, milliseconds.
    pub off_ms: f64,
}

/// A reference detector's configuration.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Reference {
    /// An RC filter and a comparator.
    RcComparator(RcComparatorConfig),
    /// The first firmware attempt.
    EmaDebounce(EmaDebounceConfig),
}

impl Reference {
    /// The name in figures: `rc-comparator` or `ema-debounce`.
    pub fn name(&self) -> &'static str {
        match self {
            Reference::RcComparator(_) => "rc-comparator",
            Reference::EmaDebounce(_) => "ema-debounce",
        }
    }

    /// The parameters as `key=value` pairs (for a `bench:` line).
    pub fn describe(&self) -> String {
        match self {
            Reference::RcComparator(c) => format!(
                "coupling_tau_s={} rectifier={} rc_tau_ms={} on_fraction={:.5} hysteresis={}",
                c.coupling_tau_s,
                c.rectifier.name(),
                c.rc_tau_s * 1e3,
                c.on_fraction,
                c.hysteresis
            ),
            Reference::EmaDebounce(c) => format!(
                "mean_tau_s={} ema_tau_ms={} threshold_fraction={:.5} on_ms={} off_ms={}",
                c.mean_tau_s,
                c.ema_tau_s * 1e3,
                c.threshold_fraction,
                c.on_ms,
                c.off_ms
            ),
        }
    }
}

/// One channel of [`RcComparator`]: the coupling mean, the low-passed
/// level and the comparator's state.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct RcComparatorState {
    mean: Option<f64>,
    level: f64,
    on: bool,
}

impl RcComparatorState {
    /// The RC low-pass's output `y`, codes.
    pub fn level(&self) -> f64 {
        self.level
    }
}

/// An [`RcComparatorConfig`] compiled for one rate and resolution.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RcComparator {
    alpha_c: f64,
    alpha_rc: f64,
    half: bool,
    on: f64,
    off: f64,
}

impl RcComparator {
    /// The stages' coefficients at `rate_hz` and thresholds in codes of a
    /// `bits`-bit converter.
    pub fn new(c: &RcComparatorConfig, rate_hz: f64, bits: u8) -> RcComparator {
        let fs = f64::from(1u32 << bits.min(16));
        RcComparator {
            alpha_c: ema_alpha(c.coupling_tau_s, rate_hz),
            alpha_rc: ema_alpha(c.rc_tau_s, rate_hz),
            half: c.rectifier == Rectifier::Half,
            on: c.on_fraction * fs,
            off: c.on_fraction * (1.0 - c.hysteresis) * fs,
        }
    }

    /// One sample through one channel; `Some(true)` when the comparator
    /// turns on, `Some(false)` when it turns off.
    #[inline]
    pub fn push(&self, st: &mut RcComparatorState, x: i32) -> Option<bool> {
        let x = f64::from(x);
        let m = match st.mean {
            Some(m) => m + self.alpha_c * (x - m),
            None => x,
        };
        st.mean = Some(m);
        let h = x - m;
        let r = if self.half { h.max(0.0) } else { h.abs() };
        st.level += self.alpha_rc * (r - st.level);
        if !st.on && st.level > self.on {
            st.on = true;
            Some(true)
        } else if st.on && st.level < self.off {
            st.on = false;
            Some(false)
        } else {
            None
        }
    }
}

/// One channel of [`EmaDebounce`].
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct EmaDebounceState {
    mean: Option<f64>,
    level: f64,
    count: u32,
    on: bool,
}

impl EmaDebounceState {
    /// The EMA of `|x − mean|`, codes.
    pub fn level(&self) -> f64 {
        self.level
    }
}

/// An [`EmaDebounceConfig`] compiled for one rate and resolution.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct EmaDebounce {
    alpha_m: f64,
    alpha_e: f64,
    threshold: f64,
    on_count: u32,
    off_count: u32,
}

/// `max(1, round(ms · rate / 1000))`.
fn count(ms: f64, rate_hz: f64) -> u32 {
    let n = (ms * rate_hz / 1000.0).round();
    if n.is_finite() && n >= 1.0 {
        n.min(f64::from(u32::MAX)) as u32
    } else {
        1
    }
}

impl EmaDebounce {
    /// The coefficients at `rate_hz`, the threshold in codes of a
    /// `bits`-bit converter, the counts in samples.
    pub fn new(c: &EmaDebounceConfig, rate_hz: f64, bits: u8) -> EmaDebounce {
        let fs = f64::from(1u32 << bits.min(16));
        EmaDebounce {
            alpha_m: ema_alpha(c.mean_tau_s, rate_hz),
            alpha_e: ema_alpha(c.ema_tau_s, rate_hz),
            threshold: c.threshold_fraction * fs,
            on_count: count(c.on_ms, rate_hz),
            off_count: count(c.off_ms, rate_hz),
        }
    }

    /// The on and off counts, samples.
    pub fn counts(&self) -> (u32, u32) {
        (self.on_count, self.off_count)
    }

    /// One sample through one channel; `Some(true)` on touch-on,
    /// `Some(false)` on touch-off.
    #[inline]
    pub fn push(&self, st: &mut EmaDebounceState, x: i32) -> Option<bool> {
        let x = f64::from(x);
        let m = match st.mean {
            Some(m) => m + self.alpha_m * (x - m),
            None => x,
        };
        st.mean = Some(m);
        st.level += self.alpha_e * ((x - m).abs() - st.level);
        // Counting towards the other state: above while off, at or below
        // while on.
        let towards = (st.level > self.threshold) != st.on;
        if !towards {
            st.count = 0;
            return None;
        }
        st.count += 1;
        let need = if st.on { self.off_count } else { self.on_count };
        if st.count >= need {
            st.count = 0;
            st.on = !st.on;
            Some(st.on)
        } else {
            None
        }
    }
}

#[derive(Debug, Clone)]
enum Channels {
    Rc(RcComparator, Vec<RcComparatorState>),
    Ema(EmaDebounce, Vec<EmaDebounceState>),
}

/// A reference detector on every channel of an input, collecting events.
#[derive(Debug, Clone)]
pub struct RefRun {
    channels: Channels,
    frames: u64,
    events: Vec<Event>,
}

impl RefRun {
    /// `reference` on `channels` channels of `bits`-bit codes at `rate_hz`.
    pub fn new(reference: &Reference, channels: usize, rate_hz: f64, bits: u8) -> RefRun {
        let channels = match reference {
            Reference::RcComparator(c) => Channels::Rc(
                RcComparator::new(c, rate_hz, bits),
                vec![RcComparatorState::default(); channels],
            ),
            Reference::EmaDebounce(c) => Channels::Ema(
                EmaDebounce::new(c, rate_hz, bits),
                vec![EmaDebounceState::default(); channels],
            ),
        };
        RefRun {
            channels,
            frames: 0,
            events: Vec::new(),
        }
    }

    /// Interleaved frames (one code per channel each, in channel order; a
    /// trailing partial frame is ignored).
    pub fn push_frames(&mut self, codes: &[i32]) {
        let n = match &self.channels {
            Channels::Rc(_, s) => s.len(),
            Channels::Ema(_, s) => s.len(),
        };
        if n == 0 {
            return;
        }
        let frames = codes.len() / n;
        let codes = codes.get(..frames * n).unwrap_or(&[]);
        let start = self.frames;
        let before = self.events.len();
        for ch in 0..n {
            let column = codes.iter().skip(ch).step_by(n).copied();
            self.run_channel(ch, start, column);
        }
        self.frames += frames as u64;
        // Channels ran one after the other: put this block's events in
        // time order (all of them follow the earlier blocks').
        if let Some(new) = self.events.get_mut(before..) {
            new.sort_by_key(|e| (e.sample, e.channel));
        }
    }

    /// One channel's codes, all of them (a whole run: the frame counter
    /// does not advance; use either this or [`RefRun::push_frames`]).
    pub fn push_channel(&mut self, ch: usize, codes: &[i32]) {
        self.run_channel(ch, 0, codes.iter().copied());
    }

    fn run_channel(&mut self, ch: usize, start: u64, codes: impl Iterator<Item = i32>) {
        let events = &mut self.events;
        let mut emit = |i: usize, on: bool| {
            let kind = if on {
                EventKind::TouchOn
            } else {
                EventKind::TouchOff
            };
            events.push(Event::new(
                u8::try_from(ch).unwrap_or(u8::MAX - 1),
                kind,
                start + i as u64,
                0,
                0,
            ));
        };
        match &mut self.channels {
            Channels::Rc(d, states) => {
                if let Some(st) = states.get_mut(ch) {
                    for (i, x) in codes.enumerate() {
                        if let Some(on) = d.push(st, x) {
                            emit(i, on);
                        }
                    }
                }
            }
            Channels::Ema(d, states) => {
                if let Some(st) = states.get_mut(ch) {
                    for (i, x) in codes.enumerate() {
                        if let Some(on) = d.push(st, x) {
                            emit(i, on);
                        }
                    }
                }
            }
        }
    }

    /// The events so far, in time order (by sample, then channel) after
    /// [`RefRun::push_frames`]; per channel in order after
    /// [`RefRun::push_channel`].
    pub fn events(&self) -> &[Event] {
        &self.events
    }

    /// Takes the events, sorted by sample then channel.
    pub fn into_events(mut self) -> Vec<Event> {
        self.events.sort_by_key(|e| (e.sample, e.channel));
        self.events
    }
}
