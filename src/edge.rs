//! Comparator or GPIO input: edges (or polled levels) of a pin that is high
//! while the hum is above a threshold, turned into the same [`Cycle`]s the
//! ADC front end produces, so the one [`Backend`] decides for both.
//!
//! ```text
//! push_edge(ch, rising, timer count) ─┐            (per edge, integer, O(1))
//! push_levels / poll (InputPin) ──────┴▶ glitch filter ─▶ order and level checks
//!      ─▶ pulses: width, centre, centre-to-centre interval ─▶ window sums
//!   window end (one tracked mains period) ─▶ EdgeMains (period in ticks)
//!      ─▶ duty ─▶ amplitude in threshold units ─▶ Cycle ─▶ Backend ─▶ Event
//! ```
//!
//! # Physics
//!
//! A comparator whose output is high while `A·sin(ωt) > Vt` gives, for
//! `A > Vt`, one pulse per mains cycle with high fraction
//! `d = acos(Vt/A)/π` (standard trigonometry), so the duty measures the
//! amplitude in threshold units: `A/Vt = 1/cos(π·d)`. With a hysteresis
//! `h` the output rises at `Vt + h/2` and falls at `Vt − h/2`:
//! `d = 1/2 − (asin(u₊) + asin(u₋))/(2π)` with `u± = (1 ± η)·Vt/A` and
//! `η = h/(2·Vt)`. Writing `2β = asin(u₊) + asin(u₋)` and
//! `2γ = asin(u₊) − asin(u₋)`, the sum and difference of the sines give
//! `sin β·cos γ = Vt/A` and `tan γ = η·tan β`, which solve to
//!
//! `(A/Vt)² = 1/cos²(π·d) + η²/sin²(π·d)`,
//!
//! the inversion used here (`η = 0` gives the first form back). Below
//! `A = Vt + h/2` the pin does not move.
//!
//! # Time
//!
//! Edge times are timer counts of a free-running timer of 16 or 32 bits
//! ([`TimerWidth`]) at [`EdgeConfig::tick_hz`]. Each count is turned into a
//! 64-bit tick count by a wrapping subtraction from the latest count seen
//! (any channel); a difference of half the timer's range or more is taken
//! as a step backwards (an edge handed over late). So **two calls
//! ([`EdgeFrontend::push_edge`] or [`EdgeFrontend::advance`]) must never be
//! half a timer wrap apart or more**: with a quiet pin, call `advance` from
//! the main loop or a periodic interrupt (a 16-bit timer at 1 MHz wraps
//! every 65.5 ms: call at least every 30 ms). The polled input
//! ([`EdgeFrontend::push_levels`]) counts its own ticks and has no such
//! limit.
//!
//! # Per edge
//!
//! Integer only, no division, no loop, no allocation, no panic:
//!
//! - **order**: an edge earlier than the channel's previous one is
//!   rejected and counted ([`EdgeStats::out_of_order`]);
//! - **level**: an edge to the level the channel is already at (a
//!   duplicate, or a lost edge between them) is rejected and counted
//!   ([`EdgeStats::same_level`]), and marks the window incoherent;
//! - **glitch filter**: each edge waits until `glitch_ticks` have passed
//!   (the next edge, or a later call, confirms it); an opposite edge
//!   within that time cancels it, and both are dropped
//!   ([`EdgeStats::glitches`]), so ringing on a crossing counts as one edge
//!   at the time of the last transition of the ring;
//! - **pulse** (at a confirmed falling edge): width `w = t_fall − t_rise`,
//!   centre `t_rise + w/2`, and the interval from the previous pulse's
//!   centre. The centre of a comparator pulse sits at the crest of the
//!   sine whatever the amplitude (without hysteresis exactly, with it
//!   within `asin` of `η`), so centre intervals repeat at the mains period
//!   even while a touch widens the pulses, where rising-edge intervals
//!   shorten by up to a quarter period. A pulse is **coherent** when its
//!   centre lies one, two or three tracked periods after the last coherent
//!   pulse's centre, within 1/16 of a period, and its width is less than
//!   the period (see `confirm`); a pulse that is not marks the window
//!   incoherent and does not move the reference, unless no coherent pulse
//!   has confirmed the reference yet (the first pulse of a train).
//!
//! # Per window (one mains cycle)
//!
//! The front end cuts time into windows of one tracked mains period
//! (fractional ticks carried, so windows do not drift), independent of the
//! pulses' phase. When a window ends, each channel yields an amplitude:
//!
//! - coherent pulses and nothing incoherent: `d = Σw / (n·P)` (`n` pulses
//!   of the window, `P` the period in ticks), and the amplitude from the
//!   inversion above, in Q8 "codes" at **[`UNIT_Q8`] per threshold unit**
//!   (one `Vt` reads as 64 codes), at most [`MAX_AMPLITUDE_Q8`] (256 `Vt`,
//!   also for `d ≥ 1/2`);
//! - no edge at all: 0 if the pin was inactive (below the threshold) the
//!   whole window, [`MAX_AMPLITUDE_Q8`] if it was active the whole window;
//! - anything else (an incoherent pulse, a rejected duplicate, a window
//!   with only the start of a pulse, or pulses before the mains period is
//!   known): the channel's last amplitude is held, so chatter, bursts and
//!   a missing edge change nothing the back end sees.
//!
//! The cycle handed to the back end carries that amplitude as the
//! fundamental's `i` (`q = 0`), rails `(0, 65 535)`, and a mean level of
//! 32 768 (mid-rail), so the back end's baseline, noise, thresholds, panel
//! rules and events work as for the ADC. Two fault signals are mapped onto
//! the back end's inputs (see the README's Faults): a window with
//! [`CHATTER_EDGES`] or more edges on a channel (chatter, several times the
//! mains rate) reports the mean at the top rail, which the back end counts
//! towards [`Fault::Saturated`](crate::Fault::Saturated); a pin active for
//! more than [`EdgeConfig::stuck_high_cycles`] whole windows in a row
//! reports a flat cycle, which it counts towards
//! [`Fault::Stuck`](crate::Fault::Stuck). A pin inactive at rest is never a
//! fault.

use crate::config::{Config, MainsMode, RANGE_50, RANGE_60};
use crate::demod::Iq;
use crate::detector::{Backend, ChannelSnapshot, Cycle, MAX_CHANNELS};
use crate::error::{ConfigError, ConfigValue};
use crate::event::Event;
use crate::fixed::{div_rem_u32, isqrt_u64};
use crate::mains::{MainsHealth, MainsSystem};

/// One threshold unit (`A = Vt`) in Q8 codes: 64 codes.
pub const UNIT_Q8: u32 = 64 << 8;
/// Largest amplitude reported: 256 threshold units (16 384 codes), below the
/// back end's saturation limit for its rails (0, 65 535).
pub const MAX_AMPLITUDE_Q8: u32 = 256 * UNIT_Q8;
/// Edges of one channel in one window from which the window counts as
/// chatter (a pulse a cycle gives two).
pub const CHATTER_EDGES: u16 = 8;
/// Windows that may be closed by one call; a call later than this many
/// mains periods after the previous one skips the windows in between.
pub const MAX_CATCH_UP: u32 = 8;

/// Width of the free-running timer whose counts time the edges.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum TimerWidth {
    /// Counts `0..2^16`, then wraps.
    Bits16,
    /// Counts `0..2^32`, then wraps.
    Bits32,
}

impl TimerWidth {
    /// The largest count (`2^bits − 1`).
    pub const fn mask(self) -> u32 {
        match self {
            TimerWidth::Bits16 => 0xffff,
            TimerWidth::Bits32 => u32::MAX,
        }
    }
}

/// What the pin carries.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum EdgeInput {
    /// A comparator on the hum: one pulse per mains cycle whose duty
    /// measures the amplitude (or no pulse while the hum is below the
    /// threshold).
    Pulses,
    /// A comparator behind a heavy RC low-pass (a time constant well above
    /// a mains period): a slow "touched or not" level with no mains
    /// information. Each window reports [`MAX_AMPLITUDE_Q8`] when the pin is
    /// active at its end and 0 otherwise; `glitch_ticks` debounces the
    /// level, and the back end's `debounce_on`/`debounce_off` and
    /// `min_active_cycles` give the minimum on and off durations in
    /// windows. The windows run at the nominal mains period (50 Hz in
    /// automatic mode) and the mains reference always reports healthy.
    Level,
}

/// Configuration of the edge input (the back end keeps its own
/// [`Config`]). Validated once by [`EdgeFrontend::new`] or
/// [`EdgeDetector::new`]; the error names the field.
///
/// ```
/// use humsense::edge::{EdgeConfig, TimerWidth};
/// let e = EdgeConfig::new(1_000_000, TimerWidth::Bits16).with_hysteresis_permille(100);
/// assert_eq!(e.glitch_ticks, 200);
/// ```
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct EdgeConfig {
    /// Timer ticks per second for [`EdgeFrontend::push_edge`], or pin reads
    /// per second for [`EdgeFrontend::push_levels`] (1 000 to 100 000 000;
    /// with a 16-bit timer at most 1 441 791, so that the longest mains
    /// period, at 44 Hz, is less than half the timer's range).
    pub tick_hz: u32,
    /// Width of the timer (ignored by the polled input).
    pub timer: TimerWidth,
    /// Edges closer than this many ticks to the edge before them cancel it
    /// (0 to a tenth of the shortest mains period, `tick_hz / 660`).
    /// Default 200 µs.
    pub glitch_ticks: u32,
    /// The comparator's hysteresis `h` in thousandths of its threshold
    /// offset `Vt` (0 to 1 000): corrects the duty-to-amplitude inversion
    /// (see the module docs).
    pub hysteresis_permille: u16,
    /// The pin is low while the hum is above the threshold (an inverting
    /// comparator or an open-drain output with a pull-up).
    pub active_low: bool,
    /// Whole windows the pin may stay active before each further one
    /// reports a flat cycle (towards `Fault::Stuck`; 1 to 65 535, and more
    /// than the back end's `max_active_cycles` unless that is 0). Default
    /// 12 000 (4 minutes at 50 Hz).
    pub stuck_high_cycles: u16,
    /// Pulses or a slow level.
    pub input: EdgeInput,
}

impl EdgeConfig {
    /// Defaults for a timer at `tick_hz`: glitch filter 200 µs, no
    /// hysteresis, active high, pulses.
    pub const fn new(tick_hz: u32, timer: TimerWidth) -> Self {
        Self {
            tick_hz,
            timer,
            glitch_ticks: tick_hz / 5_000,
            hysteresis_permille: 0,
            active_low: false,
            stuck_high_cycles: 12_000,
            input: EdgeInput::Pulses,
        }
    }

    /// The same configuration with another hysteresis (thousandths of `Vt`).
    pub const fn with_hysteresis_permille(mut self, h: u16) -> Self {
        self.hysteresis_permille = h;
        self
    }

    /// The same configuration with another glitch filter, in ticks.
    pub const fn with_glitch_ticks(mut self, t: u32) -> Self {
        self.glitch_ticks = t;
        self
    }

    /// The same configuration with another input kind.
    pub const fn with_input(mut self, input: EdgeInput) -> Self {
        self.input = input;
        self
    }

    /// Checks every field against `cfg` (the back end's configuration).
    fn validate(&self, cfg: &Config) -> Result<(), ConfigError> {
        let max_tick = match self.timer {
            TimerWidth::Bits16 => 44 * (1 << 15) - 1,
            TimerWidth::Bits32 => 100_000_000,
        };
        check("tick_hz", self.tick_hz, 1_000, max_tick)?;
        check(
            "glitch_ticks",
            self.glitch_ticks,
            0,
            div_rem_u32(self.tick_hz, 660).0,
        )?;
        check(
            "hysteresis_permille",
            self.hysteresis_permille.into(),
            0,
            1_000,
        )?;
        let least = match cfg.max_active_cycles {
            0 => 1,
            m => u32::from(m) + 1,
        };
        check(
            "stuck_high_cycles",
            self.stuck_high_cycles.into(),
            least,
            65_535,
        )?;
        Ok(())
    }
}

fn check(field: &'static str, v: u32, min: u32, max: u32) -> Result<(), ConfigError> {
    if v < min || v > max {
        return Err(ConfigError::OutOfRange {
            field,
            value: ConfigValue::Int(v),
            min: ConfigValue::Int(min),
            max: ConfigValue::Int(max),
        });
    }
    Ok(())
}

/// `⌊n / d⌋` for a 64-bit `n` by restoring division (64 steps, no library
/// division); `u64::MAX` for `d = 0`. Construction and per-window code only.
const fn div_u64_u32(n: u64, d: u32) -> u64 {
    if d == 0 {
        return u64::MAX;
    }
    let d = d as u64;
    let mut q = 0u64;
    let mut r = 0u64;
    let mut i = 64;
    while i > 0 {
        i -= 1;
        r = (r << 1) | ((n >> i) & 1);
        if r >= d {
            r -= d;
            q |= 1 << i;
        }
    }
    q
}

/// `num / den` in Q16, at most 1 (65 536); 1 for `den = 0`. Both are
/// shifted right until `den` fits 16 bits, then one 32-bit division.
fn ratio_q16(mut num: u64, mut den: u64) -> u32 {
    if num >= den {
        return 1 << 16;
    }
    while den >= 1 << 16 {
        num >>= 1;
        den >>= 1;
    }
    // num < den < 2^16, so num · 2^16 fits u32.
    div_rem_u32((num as u32) << 16, den as u32).0
}

/// `sin(π·x/2)` for `x` in Q16 (0 to 65 536), Q16. Odd Taylor series to
/// the 11th power in Q30 (truncation below 6·10⁻⁸), Horner form in `i64`.
pub fn sin_half_pi_q16(x_q16: u32) -> u32 {
    // (π/2)^k / k! with alternating signs, Q30 (computed).
    const C: [i64; 6] = [
        1_686_629_713,
        -693_598_668,
        85_569_306,
        -5_026_995,
        172_272,
        -3_864,
    ];
    let x = i64::from(x_q16.min(1 << 16)) << 14;
    let z = (x * x) >> 30;
    let mut p = 0i64;
    for c in C.iter().rev() {
        p = *c + ((p * z) >> 30);
    }
    let y = (x * p) >> 30;
    // Q30 to Q16, rounded; within 0..=2^16.
    (((y + (1 << 13)) >> 14).clamp(0, 1 << 16)) as u32
}

/// Amplitude in Q8 codes ([`UNIT_Q8`] per threshold unit) from a duty `d`
/// (Q16, high fraction of the cycle) and `η = h/(2·Vt)` (Q16):
/// `A/Vt = √(1/cos²(π·d) + η²/sin²(π·d))` (module docs), at most
/// [`MAX_AMPLITUDE_Q8`]. Per window.
pub fn duty_to_amplitude_q8(duty_q16: u32, eta_q16: u32) -> u32 {
    if duty_q16 >= 1 << 15 {
        return MAX_AMPLITUDE_Q8;
    }
    // cos(π·d) = sin(π/2·(1 − 2d)), sin(π·d) = sin(π/2·2d).
    let c = sin_half_pi_q16((1 << 16) - 2 * duty_q16);
    let s = sin_half_pi_q16(2 * duty_q16);
    // 2^30 / c is 2^14 / cos in Q8 codes; below 257 it exceeds the cap.
    if c <= 256 {
        return MAX_AMPLITUDE_Q8;
    }
    let t1 = div_rem_u32(1 << 30, c).0;
    let t2 = if eta_q16 == 0 {
        0
    } else if s <= 256 {
        return MAX_AMPLITUDE_Q8;
    } else {
        // η ≤ 1/2 (2^15), so η · 2^14 fits u32.
        div_rem_u32(eta_q16.min(1 << 15) << 14, s).0
    };
    let sq = u64::from(t1) * u64::from(t1) + u64::from(t2) * u64::from(t2);
    isqrt_u64(sq).min(MAX_AMPLITUDE_Q8)
}

/// Whether the period is being acquired or tracked.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
enum Stage {
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
    period_q8: u32,
    /// Period limits of the system (both systems before the automatic
    /// choice), ticks · 256.
    min_q8: u32,
    max_q8: u32,
    /// Interval bounds for the per-edge check, ticks.
    accept: (u32, u32),
    stage: Stage,
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
const fn period_q8_of(tick_hz: u32, mhz: u32) -> u32 {
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
    fn new(tick_hz: u32, cfg: &Config) -> Self {
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
    fn end_window(&mut self, sum: u64, n: u32, active: bool) {
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

/// Counts of what one channel's input looked like, since construction
/// (each saturating).
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct EdgeStats {
    /// Edges rejected for a time before the channel's previous edge.
    pub out_of_order: u32,
    /// Edges rejected for going to the level the channel was already at.
    pub same_level: u32,
    /// Edge pairs cancelled by the glitch filter.
    pub glitches: u32,
    /// Coherent pulses measured.
    pub pulses: u32,
    /// Pulses that were not coherent (interval off the period, or too
    /// wide).
    pub incoherent_pulses: u32,
    /// Windows whose amplitude was held (incoherent or no complete pulse).
    pub held_windows: u32,
}

/// Per-channel state of the edge front end.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
struct EdgeChannel {
    /// Confirmed level: true while the hum is above the threshold.
    active: bool,
    /// An edge waiting for the glitch filter (to `!active`), and its time.
    pending: bool,
    pending_t: u64,
    /// Time of the latest edge taken (pending or not), for the order check.
    last_t: u64,
    /// Time of the latest confirmed rising (activating) edge, if any.
    rise: Option<u64>,
    /// Centre of the previous pulse, if any.
    centre: Option<u64>,
    /// Whether `centre` is a coherent pulse's (or, while acquiring, one
    /// that a fitting interval followed); an unconfirmed reference gives way
    /// to the next pulse.
    confirmed: bool,
    /// This window: confirmed edges, coherent widths and their count,
    /// and whether anything incoherent happened.
    edges: u16,
    width_sum: u64,
    widths: u8,
    bad: bool,
    /// Latest amplitude reported, Q8 codes.
    amp_q8: u32,
    /// Whole windows active in a row.
    active_run: u32,
    stats: EdgeStats,
}

impl EdgeChannel {
    const NEW: Self = Self {
        active: false,
        pending: false,
        pending_t: 0,
        last_t: 0,
        rise: None,
        centre: None,
        confirmed: false,
        edges: 0,
        width_sum: 0,
        widths: 0,
        bad: false,
        amp_q8: 0,
        active_run: 0,
        stats: EdgeStats {
            out_of_order: 0,
            same_level: 0,
            glitches: 0,
            pulses: 0,
            incoherent_pulses: 0,
            held_windows: 0,
        },
    };
}

/// The edge input's front end for `N` channels: edges or levels in,
/// [`Cycle`]s out (no harmonic bins). See the module docs.
#[derive(Clone, Debug)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct EdgeFrontend<const N: usize> {
    mains: EdgeMains,
    ch: [EdgeChannel; N],
    mask: u32,
    glitch: u64,
    eta_q16: u32,
    active_low: bool,
    level_mode: bool,
    stuck_after: u32,
    started: bool,
    last_count: u32,
    /// Latest time seen, ticks since the first call.
    now: u64,
    /// End of the present window, ticks, and its fraction (1/256 tick).
    win_end: u64,
    win_frac: u32,
    /// Pulse-centre intervals accepted in this window (all channels).
    iv_sum: u64,
    iv_n: u32,
    /// Calls with a channel index past the last.
    bad_channel: u32,
}

/// What a channel's window amounted to.
enum Window {
    Measured(u32),
    Constant,
    Held,
}

impl<const N: usize> EdgeFrontend<N> {
    /// Validates `edge` (against `cfg`, the back end's configuration, for
    /// its mains mode, `mains_lost_cycles` and `max_active_cycles`) and
    /// builds the front end. Never panics.
    pub fn new(edge: &EdgeConfig, cfg: &Config) -> Result<Self, ConfigError> {
        const { assert!(N >= 1 && N <= MAX_CHANNELS) };
        edge.validate(cfg)?;
        let mut mains = EdgeMains::new(edge.tick_hz, cfg);
        let level_mode = edge.input == EdgeInput::Level;
        if level_mode {
            let mhz = if cfg.mains == MainsMode::Hz60 {
                60_000
            } else {
                50_000
            };
            mains.period_q8 = period_q8_of(edge.tick_hz, mhz);
        }
        let period = mains.period_q8;
        Ok(Self {
            mains,
            ch: [EdgeChannel::NEW; N],
            mask: edge.timer.mask(),
            glitch: u64::from(edge.glitch_ticks),
            // η = h / (2·Vt) in Q16: permille · 2^16 / 2000.
            eta_q16: div_rem_u32(u32::from(edge.hysteresis_permille) << 16, 2_000).0,
            active_low: edge.active_low,
            level_mode,
            stuck_after: edge.stuck_high_cycles.into(),
            started: false,
            last_count: 0,
            now: 0,
            win_end: u64::from(period >> 8),
            win_frac: period & 0xff,
            iv_sum: 0,
            iv_n: 0,
            bad_channel: 0,
        })
    }

    /// Ticks (since the first call) of timer count `count`: a wrapping
    /// difference from the latest count; half the range or more is a step
    /// back. Advances the clock when forward; `None` for a time before the
    /// first call.
    #[inline]
    fn time_of(&mut self, count: u32) -> Option<u64> {
        let count = count & self.mask;
        if !self.started {
            self.started = true;
            self.last_count = count;
            return Some(self.now);
        }
        let ahead = count.wrapping_sub(self.last_count) & self.mask;
        if ahead <= self.mask >> 1 {
            self.last_count = count;
            self.now += u64::from(ahead);
            Some(self.now)
        } else {
            let back = self.last_count.wrapping_sub(count) & self.mask;
            self.now.checked_sub(u64::from(back))
        }
    }

    /// Takes one edge of channel `ch` (`rising`: the pin went high) at timer
    /// count `count`; calls `on_cycle` for each window it completes (at most
    /// [`MAX_CATCH_UP`]). Per edge O(1), integer, no division. A channel
    /// past the last is counted and ignored. Never panics.
    #[inline]
    pub fn push_edge(
        &mut self,
        ch: usize,
        rising: bool,
        count: u32,
        on_cycle: impl FnMut(&Cycle<N, 0>),
    ) {
        let t = self.time_of(count);
        self.close_windows(on_cycle);
        match t {
            Some(t) => self.take(ch, rising != self.active_low, t),
            None => {
                if let Some(c) = self.ch.get_mut(ch) {
                    c.stats.out_of_order = c.stats.out_of_order.saturating_add(1);
                }
            }
        }
    }

    /// Tells the front end the timer has reached `count` with no edge;
    /// closes the windows that ended and confirms the edges the glitch
    /// filter has cleared. Call it at least every half timer
    /// wrap while pins are quiet (module docs). Never panics.
    pub fn advance(&mut self, count: u32, on_cycle: impl FnMut(&Cycle<N, 0>)) {
        self.time_of(count);
        self.close_windows(on_cycle);
        self.confirm_due();
    }

    /// Takes one read of every pin (`true`: high), one tick after the
    /// previous read; changes become edges at this tick. Never panics.
    pub fn push_levels(&mut self, levels: &[bool; N], on_cycle: impl FnMut(&Cycle<N, 0>)) {
        if self.started {
            self.now += 1;
        }
        self.started = true;
        self.close_windows(on_cycle);
        let t = self.now;
        for (i, &high) in levels.iter().enumerate() {
            let active = high != self.active_low;
            if let Some(c) = self.ch.get(i) {
                let level = c.active != c.pending;
                if active != level {
                    self.take(i, active, t);
                }
            }
        }
    }

    /// The per-edge path: order and level checks, the glitch filter, then
    /// the edge before this one confirmed.
    #[inline]
    fn take(&mut self, ch: usize, active: bool, t: u64) {
        let (glitch, accept, period) = (self.glitch, self.mains.accept, self.mains.period_q8 >> 8);
        let tracking = self.mains.stage == Stage::Track && !self.level_mode;
        let Some(c) = self.ch.get_mut(ch) else {
            self.bad_channel = self.bad_channel.saturating_add(1);
            return;
        };
        if t < c.last_t {
            c.stats.out_of_order = c.stats.out_of_order.saturating_add(1);
            return;
        }
        let level = c.active != c.pending;
        if active == level {
            c.stats.same_level = c.stats.same_level.saturating_add(1);
            c.bad = true;
            return;
        }
        c.last_t = t;
        if c.pending {
            if t.saturating_sub(c.pending_t) < glitch {
                c.pending = false;
                c.stats.glitches = c.stats.glitches.saturating_add(1);
                return;
            }
            let pt = c.pending_t;
            if let Some((sum, n)) = confirm(c, pt, accept, period, tracking) {
                self.iv_sum += sum;
                self.iv_n += n;
            }
        }
        c.pending = true;
        c.pending_t = t;
    }

    /// Confirms the pending edges the glitch filter has cleared by now.
    fn confirm_due(&mut self) {
        let (glitch, accept, period) = (self.glitch, self.mains.accept, self.mains.period_q8 >> 8);
        let tracking = self.mains.stage == Stage::Track && !self.level_mode;
        for c in self.ch.iter_mut() {
            if c.pending && self.now.saturating_sub(c.pending_t) >= glitch {
                let pt = c.pending_t;
                if let Some((sum, n)) = confirm(c, pt, accept, period, tracking) {
                    self.iv_sum += sum;
                    self.iv_n += n;
                }
            }
        }
    }

    /// Closes every window that has ended by now (at most
    /// [`MAX_CATCH_UP`]; the rest are skipped).
    fn close_windows(&mut self, mut on_cycle: impl FnMut(&Cycle<N, 0>)) {
        let mut closed = 0;
        while self.now >= self.win_end {
            if closed == MAX_CATCH_UP {
                // Too long without a call: restart the windows now.
                let p = u64::from((self.mains.period_q8 >> 8).max(1));
                self.win_end = self.now + p;
                for c in self.ch.iter_mut() {
                    c.edges = 0;
                    c.width_sum = 0;
                    c.widths = 0;
                    c.bad = true;
                }
                self.iv_sum = 0;
                self.iv_n = 0;
                break;
            }
            closed += 1;
            let mut cycle = Cycle::EMPTY;
            self.end_window(&mut cycle);
            on_cycle(&cycle);
        }
    }

    /// Ends the present window: per-channel amplitudes, the tracker, and the
    /// next window's end. Per window.
    fn end_window(&mut self, cycle: &mut Cycle<N, 0>) {
        self.confirm_due();
        let period = self.mains.period_q8;
        let tracking = self.mains.stage == Stage::Track;
        let mut any = false;
        let outs = cycle.fund.iter_mut().zip(cycle.dc.iter_mut());
        for (c, ((f, dc), flat)) in self.ch.iter_mut().zip(outs.zip(cycle.flat.iter_mut())) {
            let quiet = c.edges == 0 && !c.pending && !c.bad;
            any |= !quiet;
            let w = if self.level_mode || quiet {
                Window::Constant
            } else if tracking && c.widths > 0 && !c.bad {
                let den = (u64::from(c.widths) * u64::from(period)) >> 8;
                Window::Measured(ratio_q16(c.width_sum, den))
            } else {
                Window::Held
            };
            match w {
                Window::Measured(d) => c.amp_q8 = duty_to_amplitude_q8(d, self.eta_q16),
                Window::Constant => {
                    c.amp_q8 = if c.active { MAX_AMPLITUDE_Q8 } else { 0 };
                }
                Window::Held => c.stats.held_windows = c.stats.held_windows.saturating_add(1),
            }
            c.active_run = if (quiet || self.level_mode) && c.active {
                c.active_run.saturating_add(1)
            } else {
                0
            };
            *flat = c.active_run > self.stuck_after;
            *dc = if c.edges >= CHATTER_EDGES {
                u16::MAX
            } else {
                1 << 15
            };
            *f = Iq {
                i: c.amp_q8.min(i32::MAX as u32) as i32,
                q: 0,
            };
            c.edges = 0;
            c.width_sum = 0;
            c.widths = 0;
            c.bad = false;
        }
        cycle.end_sample = self.win_end;
        cycle.samples = period >> 8;
        cycle.rails = (0, u16::MAX);
        if !self.level_mode {
            self.mains.end_window(self.iv_sum, self.iv_n, any);
        }
        self.iv_sum = 0;
        self.iv_n = 0;
        cycle.health = if self.level_mode {
            MainsHealth::Ok
        } else {
            self.mains.health()
        };
        let p = self.mains.period_q8;
        let frac = self.win_frac + (p & 0xff);
        self.win_end += u64::from(p >> 8) + u64::from(frac >> 8);
        self.win_frac = frac & 0xff;
    }

    /// Counts of channel `ch`'s input, or `None` past the last channel.
    pub fn stats(&self, ch: usize) -> Option<EdgeStats> {
        self.ch.get(ch).map(|c| c.stats)
    }

    /// Calls with a channel index past the last, since construction.
    pub const fn bad_channel(&self) -> u32 {
        self.bad_channel
    }

    /// The mains period tracker.
    pub const fn mains(&self) -> &EdgeMains {
        &self.mains
    }

    /// Ticks since the first call.
    pub const fn now(&self) -> u64 {
        self.now
    }
}

/// Confirms channel `c`'s pending edge at `t`: the level changes, and a
/// falling edge completes a pulse. Returns the pulse-centre interval(s) to
/// add to the tracker's sums (sum, count). Per edge: shifts, adds and
/// compares only.
///
/// While acquiring, the interval is from the previous pulse's centre and is
/// returned when it lies within `accept`. While tracking, the reference is
/// the centre of the last coherent pulse, and a pulse is coherent when its
/// centre lies `k·P` after it within `accept` (shifted by `(k − 1)·P`) for
/// `k` = 1, 2 or 3 (up to two pulses lost or incoherent in between) and its
/// width is less than `P`. An incoherent pulse leaves the reference where
/// it was, so a disturbance that shifts several pulses alike (interference
/// holding the pin past its falling edge two cycles in a row) is not taken
/// for a train of its own; once the reference is more than three periods
/// old, an incoherent pulse becomes the new reference (a train that
/// started, or whose phase moved, is followed after one more pulse). A
/// reference that no coherent pulse has confirmed (the first pulse of a
/// train, which a touch's rising hum often clips short and off the crest)
/// gives way to the next pulse at once, so a misshapen first pulse does not
/// hold a new train off for three periods.
#[inline]
fn confirm(
    c: &mut EdgeChannel,
    t: u64,
    accept: (u32, u32),
    period: u32,
    tracking: bool,
) -> Option<(u64, u32)> {
    c.pending = false;
    c.active = !c.active;
    c.edges = c.edges.saturating_add(1);
    if c.active {
        c.rise = Some(t);
        return None;
    }
    let rise = c.rise.take()?;
    let width = t.saturating_sub(rise);
    let centre = rise + (width >> 1);
    let (lo, hi) = (u64::from(accept.0), u64::from(accept.1));
    let fits = |iv: u64| iv >= lo && iv <= hi;
    if !tracking {
        c.confirmed = false;
        let interval = centre.saturating_sub(c.centre.replace(centre)?);
        return fits(interval).then_some((interval, 1));
    }
    let Some(reference) = c.centre else {
        c.centre = Some(centre);
        c.confirmed = false;
        return None;
    };
    let p = u64::from(period);
    let interval = centre.saturating_sub(reference);
    let k = if fits(interval) {
        1
    } else if fits(interval.saturating_sub(p)) {
        2
    } else if fits(interval.saturating_sub(2 * p)) {
        3
    } else {
        0
    };
    if k != 0 && width < p {
        c.centre = Some(centre);
        c.confirmed = true;
        c.width_sum += width;
        c.widths = c.widths.saturating_add(1);
        c.stats.pulses = c.stats.pulses.saturating_add(1);
        match k {
            1 => Some((interval, 1)),
            2 => Some((interval, 2)),
            _ => None,
        }
    } else {
        c.bad = true;
        c.stats.incoherent_pulses = c.stats.incoherent_pulses.saturating_add(1);
        if interval > 2 * p + hi || !c.confirmed {
            c.centre = Some(centre);
            c.confirmed = false;
        }
        None
    }
}

/// The whole detector on a comparator or GPIO input for `N` channels
/// (default 1): [`EdgeFrontend`] feeding the same [`Backend`] as the ADC's
/// [`Detector`](crate::Detector), so touch and field profiles, panel rules,
/// faults, snapshots and events are those of the ADC path.
///
/// The back end is built from the caller's [`Config`] with `nohum_codes`
/// set to 0: a comparator input at rest below its threshold reads 0 and is
/// not a fault. Its other fields keep their meaning in mains cycles (here
/// windows of one tracked mains period); `sample_rate_hz` and `adc_bits`
/// are not used (they must still be valid). [`Event::sample`] and
/// [`ChannelSnapshot::samples`] count **ticks** (timer ticks since the
/// first call, or pin reads), at the end of the window the event was
/// decided on.
///
/// ```
/// use humsense::edge::{EdgeConfig, EdgeDetector, TimerWidth};
/// use humsense::{Config, EventKind, MainsMode};
/// let edge = EdgeConfig::new(1_000_000, TimerWidth::Bits32);
/// let mut det: EdgeDetector = EdgeDetector::new(Config::touch().with_mains(MainsMode::Hz50), edge).unwrap();
/// // 50 Hz pulses of 10 % duty (A = 1.05 Vt), then 40 % (A = 3.2 Vt) for a second.
/// let mut touches = 0;
/// for k in 0..200u32 {
///     let width = if (100..150).contains(&k) { 8_000 } else { 2_000 };
///     let centre = 20_000 * k + 5_000;
///     det.push_edge(0, true, centre - width / 2, |_| {});
///     det.push_edge(0, false, centre + width / 2, |e| {
///         if e.kind == EventKind::TouchOn { touches += 1; }
///     });
/// }
/// assert_eq!(touches, 1);
/// ```
///
/// Never panics, for any edge sequence and any configuration that
/// [`EdgeDetector::new`] accepted.
#[derive(Clone, Debug)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct EdgeDetector<const N: usize = 1> {
    front: EdgeFrontend<N>,
    back: Backend<N, 0>,
}

impl<const N: usize> EdgeDetector<N> {
    /// Validates both configurations and builds the detector; the error
    /// names the field that is wrong. Never panics.
    pub fn new(config: Config, edge: EdgeConfig) -> Result<Self, ConfigError> {
        let front = EdgeFrontend::new(&edge, &config)?;
        let back = Backend::new(&Config {
            nohum_codes: 0.0,
            ..config
        })?;
        Ok(Self { front, back })
    }

    /// Takes one edge of channel `ch` (`rising`: the pin went high) at timer
    /// count `count`, for example from the pin's interrupt handler; calls
    /// `emit` for each event of the windows it completes. Never panics.
    #[inline]
    pub fn push_edge(&mut self, ch: usize, rising: bool, count: u32, mut emit: impl FnMut(Event)) {
        let back = &mut self.back;
        self.front
            .push_edge(ch, rising, count, |c| back.process(c, &mut emit));
    }

    /// The timer has reached `count` with no edge: closes the windows that
    /// ended. Call it at least every half timer wrap while the pins are
    /// quiet (see [`crate::edge`]). Never panics.
    pub fn advance(&mut self, count: u32, mut emit: impl FnMut(Event)) {
        let back = &mut self.back;
        self.front.advance(count, |c| back.process(c, &mut emit));
    }

    /// Takes one read of every pin (`true`: high) at the fixed rate
    /// [`EdgeConfig::tick_hz`]. Never panics.
    pub fn push_levels(&mut self, levels: &[bool; N], mut emit: impl FnMut(Event)) {
        let back = &mut self.back;
        self.front
            .push_levels(levels, |c| back.process(c, &mut emit));
    }

    /// Reads every pin through [`embedded_hal::digital::InputPin`] and takes
    /// the reads as one tick of [`push_levels`](Self::push_levels). If a
    /// read fails, its error is returned and the tick is not taken (the
    /// clock then runs one tick slow). Never panics.
    pub fn poll<P: embedded_hal::digital::InputPin>(
        &mut self,
        pins: &mut [P; N],
        emit: impl FnMut(Event),
    ) -> Result<(), P::Error> {
        let mut levels = [false; N];
        for (l, p) in levels.iter_mut().zip(pins.iter_mut()) {
            *l = p.is_high()?;
        }
        self.push_levels(&levels, emit);
        Ok(())
    }

    /// A view of channel `ch` after its latest window, as
    /// [`Detector::snapshot`](crate::Detector::snapshot) gives it (amplitude
    /// in Q8 codes at [`UNIT_Q8`] per threshold unit; `samples` in ticks),
    /// or `None` past the last channel. Never panics.
    pub fn snapshot(&self, ch: usize) -> Option<ChannelSnapshot> {
        let mut s = self.back.snapshot(ch)?;
        s.mains_hz = self.mains_hz();
        s.mains_locked = self.mains_locked();
        s.samples = self.front.now().wrapping_add(1);
        Some(s)
    }

    /// Counts of channel `ch`'s input (rejections, glitches, pulses), or
    /// `None` past the last channel.
    pub fn stats(&self, ch: usize) -> Option<EdgeStats> {
        self.front.stats(ch)
    }

    /// Present mains frequency in hertz.
    pub fn mains_hz(&self) -> f32 {
        self.front.mains().frequency_hz()
    }

    /// Whether the mains period tracker is locked.
    pub fn mains_locked(&self) -> bool {
        self.front.mains().locked()
    }

    /// The mains system chosen or configured.
    pub fn mains_system(&self) -> MainsSystem {
        self.front.mains().system()
    }

    /// The edge front end.
    pub fn frontend(&self) -> &EdgeFrontend<N> {
        &self.front
    }

    /// The back end.
    pub fn backend(&self) -> &Backend<N, 0> {
        &self.back
    }
}

impl EdgeDetector<1> {
    /// One read of a single-channel detector's pin (`true`: high). Never
    /// panics.
    pub fn push_level(&mut self, high: bool, emit: impl FnMut(Event)) {
        self.push_levels(&[high], emit);
    }
}

#[cfg(test)]
mod tests {
    extern crate std;
    use super::*;
    use crate::config::Config;
    use std::vec::Vec;

    /// High fraction of a comparator with threshold offset 1 (Vt) and
    /// hysteresis η = h/(2·Vt) on a sine of amplitude `a` (in Vt): rises at
    /// 1 + η, falls at 1 − η, `d = 1/2 − (asin(u₊) + asin(u₋))/(2π)` with
    /// `u± = (1 ± η)/a`; for η = 0 this is `acos(1/a)/π` (standard
    /// trigonometry).
    fn duty_closed_form(a: f64, eta: f64) -> f64 {
        let up = (1.0 + eta) / a;
        let down = (1.0 - eta) / a;
        0.5 - (up.asin() + down.asin()) / (2.0 * std::f64::consts::PI)
    }

    #[test]
    fn sin_half_pi_matches_the_sine() {
        // Reference: the host's f64 sine (IEEE 754, correctly rounded to
        // within an ulp on common libm).
        for x in (0..=65_536u32).step_by(7) {
            let want = (std::f64::consts::FRAC_PI_2 * f64::from(x) / 65_536.0).sin() * 65_536.0;
            let got = f64::from(sin_half_pi_q16(x));
            assert!((got - want).abs() <= 1.0, "x {x}: {got} vs {want}");
        }
        assert_eq!(sin_half_pi_q16(0), 0);
        assert_eq!(sin_half_pi_q16(65_536), 65_536);
    }

    #[test]
    fn duty_gives_the_amplitude_of_the_closed_form() {
        // A/Vt from 1.05 to 20; duty from the closed form (standard
        // trigonometry, see `duty_closed_form`), with and without
        // hysteresis; the amplitude back within 0.2 % (Q16 duty and Q8
        // amplitude rounding: 5·10⁻⁴ at A/Vt = 20).
        assert!((duty_closed_form(2.0, 0.0) - 1.0 / 3.0).abs() < 1e-12);
        assert!((duty_closed_form(2f64.sqrt(), 0.0) - 0.25).abs() < 1e-12);
        for permille in [0u32, 100, 500, 1_000] {
            let eta = f64::from(permille) / 2_000.0;
            let eta_q16 = div_rem_u32(permille << 16, 2_000).0;
            let mut a = 1.05f64;
            while a <= 20.0 {
                if a > 1.0 + eta {
                    let d = duty_closed_form(a, eta);
                    let d_q16 = (d * 65_536.0).round() as u32;
                    let got = f64::from(duty_to_amplitude_q8(d_q16, eta_q16)) / f64::from(UNIT_Q8);
                    let rel = (got - a).abs() / a;
                    assert!(rel < 2e-3, "A/Vt {a}, η {eta}: {got} (d {d})");
                    if permille == 500 && a < 1.5 {
                        // Ignoring the hysteresis would be far off here.
                        let plain = f64::from(duty_to_amplitude_q8(d_q16, 0)) / f64::from(UNIT_Q8);
                        assert!((plain - a).abs() / a > 0.02, "A/Vt {a}: {plain}");
                    }
                }
                a *= 1.07;
            }
        }
        // Beyond the cap, and a duty of one half or more.
        assert_eq!(duty_to_amplitude_q8(32_767, 0), MAX_AMPLITUDE_Q8);
        assert_eq!(duty_to_amplitude_q8(40_000, 0), MAX_AMPLITUDE_Q8);
        assert_eq!(duty_to_amplitude_q8(0, 0), UNIT_Q8);
        assert_eq!(duty_to_amplitude_q8(0, 3_000), MAX_AMPLITUDE_Q8);
    }

    #[test]
    fn wide_division_matches_the_operator() {
        // Reference: Rust's u64 `/` (exact).
        let mut s = 0x9e37_79b9_7f4a_7c15u64;
        for _ in 0..2_000 {
            s ^= s << 13;
            s ^= s >> 7;
            s ^= s << 17;
            let d = (s >> 40) as u32 | 1;
            assert_eq!(div_u64_u32(s, d), s / u64::from(d));
            let n = s >> (s & 31);
            let den = n.wrapping_add(s >> 50).max(1);
            let want = ((u128::from(n) << 16) / u128::from(den)).min(1 << 16) as u32;
            let got = ratio_q16(n, den);
            // den shifted to 16 bits: within 2^-15 of the exact ratio.
            assert!(got.abs_diff(want) <= 3, "{n}/{den}: {got} vs {want}");
        }
    }

    fn front(edge: EdgeConfig) -> EdgeFrontend<1> {
        let cfg = Config::touch().with_mains(MainsMode::Hz50);
        EdgeFrontend::new(&edge, &cfg).unwrap()
    }

    #[test]
    fn sixteen_bit_counts_wrap_into_one_clock() {
        let mut f = front(EdgeConfig::new(1_000_000, TimerWidth::Bits16));
        let start = 65_536 - 100;
        let mut windows = 0;
        for k in 0..400u32 {
            let t = start + 20_000 * k;
            f.push_edge(0, true, t & 0xffff, |_| windows += 1);
            f.push_edge(0, false, (t + 3_000) & 0xffff, |_| windows += 1);
        }
        // Exactly the ticks elapsed, through 121 wraps.
        assert_eq!(f.now(), 20_000 * 399 + 3_000);
        assert!((398..=400).contains(&windows), "{windows}");
        let s = f.stats(0).unwrap();
        assert_eq!((s.out_of_order, s.same_level), (0, 0));
        assert!(s.pulses > 390, "{s:?}");
    }

    #[test]
    fn rejections_are_counted() {
        let mut f = front(EdgeConfig::new(1_000_000, TimerWidth::Bits32));
        f.push_edge(0, true, 1_000, |_| {});
        f.push_edge(0, true, 2_000, |_| {}); // same level
        f.push_edge(0, false, 900, |_| {}); // before the last edge
        f.push_edge(3, false, 3_000, |_| {}); // no such channel
        f.push_edge(0, false, 3_000, |_| {});
        let s = f.stats(0).unwrap();
        assert_eq!((s.same_level, s.out_of_order), (1, 1));
        assert_eq!(f.bad_channel(), 1);
    }

    #[test]
    fn glitches_cancel_and_ringing_is_one_edge() {
        let edge = EdgeConfig::new(1_000_000, TimerWidth::Bits32).with_glitch_ticks(50);
        let mut f = front(edge);
        // A 20 µs spike: cancelled.
        f.push_edge(0, true, 1_000, |_| {});
        f.push_edge(0, false, 1_020, |_| {});
        // A ringing rise (three transitions within 30 µs), a clean fall.
        for (i, r) in [true, false, true].iter().enumerate() {
            f.push_edge(0, *r, 5_000 + 15 * i as u32, |_| {});
        }
        f.push_edge(0, false, 8_000, |_| {});
        f.advance(9_000, |_| {});
        let c = f.ch[0];
        assert_eq!(c.stats.glitches, 2);
        assert!(!c.active);
        // Both confirmed edges of the ring's pulse, none of the spike's.
        assert_eq!(c.edges, 2);
    }

    #[test]
    fn acquires_50_and_60_hz_and_locks() {
        for (hz, system) in [(50.0, MainsSystem::Hz50), (60.0, MainsSystem::Hz60)] {
            let cfg = Config::touch();
            let edge = EdgeConfig::new(1_000_000, TimerWidth::Bits32);
            let mut f: EdgeFrontend<1> = EdgeFrontend::new(&edge, &cfg).unwrap();
            let period = 1e6 / hz;
            let mut healths = Vec::new();
            for k in 0..200u32 {
                let c = f64::from(k) * period + 4_000.0;
                f.push_edge(0, true, (c - 1_500.0) as u32, |cy| healths.push(cy.health));
                f.push_edge(0, false, (c + 1_500.0) as u32, |cy| healths.push(cy.health));
            }
            let m = f.mains();
            assert_eq!(m.system(), system);
            assert!(m.locked());
            assert!(
                (m.frequency_hz() - hz as f32).abs() < 0.01,
                "{}",
                m.frequency_hz()
            );
            assert!(healths.iter().all(|h| *h == MainsHealth::Ok));
        }
    }

    #[test]
    fn a_60_hz_supply_with_50_hz_configured_is_out_of_range() {
        let cfg = Config::touch().with_mains(MainsMode::Hz50);
        let edge = EdgeConfig::new(1_000_000, TimerWidth::Bits32);
        let mut f: EdgeFrontend<1> = EdgeFrontend::new(&edge, &cfg).unwrap();
        let mut last = MainsHealth::Ok;
        for k in 0..400u32 {
            let c = f64::from(k) * 1e6 / 60.0 + 4_000.0;
            f.push_edge(0, true, (c - 1_500.0) as u32, |cy| last = cy.health);
            f.push_edge(0, false, (c + 1_500.0) as u32, |cy| last = cy.health);
        }
        assert_eq!(last, MainsHealth::OutOfRange);
        assert!((59_900..=60_100).contains(&f.mains().apparent_mhz()));
    }

    #[test]
    fn construction_errors_name_the_field() {
        let cfg = Config::touch();
        let bad = [
            (EdgeConfig::new(999, TimerWidth::Bits32), "tick_hz"),
            (EdgeConfig::new(2_000_000, TimerWidth::Bits16), "tick_hz"),
            (
                EdgeConfig::new(1_000_000, TimerWidth::Bits32).with_glitch_ticks(1_516),
                "glitch_ticks",
            ),
            (
                EdgeConfig::new(1_000_000, TimerWidth::Bits32).with_hysteresis_permille(1_001),
                "hysteresis_permille",
            ),
            (
                EdgeConfig {
                    stuck_high_cycles: 3_000,
                    ..EdgeConfig::new(1_000_000, TimerWidth::Bits32)
                },
                "stuck_high_cycles",
            ),
        ];
        for (e, field) in bad {
            match EdgeFrontend::<1>::new(&e, &cfg) {
                Err(ConfigError::OutOfRange { field: f, .. }) => assert_eq!(f, field),
                other => panic!("{field}: {other:?}"),
            }
        }
        assert!(
            EdgeFrontend::<1>::new(&EdgeConfig::new(1_000_000, TimerWidth::Bits16), &cfg).is_ok()
        );
        assert!(
            EdgeFrontend::<1>::new(&EdgeConfig::new(1_441_791, TimerWidth::Bits16), &cfg).is_ok()
        );
    }
}
