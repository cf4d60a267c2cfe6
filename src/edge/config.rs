//! Configuration of the edge input: the timer, the pin, the glitch filter
//! and the hysteresis correction, validated once against the back end's
//! [`Config`].

use crate::config::Config;
use crate::error::{ConfigError, ConfigValue};
use crate::fixed::div_rem_u32;

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
    /// information. Each window reports [`MAX_AMPLITUDE_Q8`](super::MAX_AMPLITUDE_Q8) when the pin is
    /// active at its end and 0 otherwise; `glitch_ticks` debounces the
    /// level, and the back end's `debounce_on`/`debounce_off` and
    /// `min_active_cycles` give the minimum on and off durations in
    /// windows. The windows run at the nominal mains period (50 Hz in
    /// automatic mode) and the mains reference always reports healthy.
    Level,
}

/// Configuration of the edge input (the back end keeps its own
/// [`Config`]). Validated once by [`EdgeFrontend::new`](super::EdgeFrontend::new) or
/// [`EdgeDetector::new`](super::EdgeDetector::new); the error names the field.
///
/// ```
/// use humsense::edge::{EdgeConfig, TimerWidth};
/// let e = EdgeConfig::new(1_000_000, TimerWidth::Bits16).with_hysteresis_permille(100);
/// assert_eq!(e.glitch_ticks, 200);
/// ```
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct EdgeConfig {
    /// Timer ticks per second for [`EdgeFrontend::push_edge`](super::EdgeFrontend::push_edge), or pin reads
    /// per second for [`EdgeFrontend::push_levels`](super::EdgeFrontend::push_levels) (1 000 to 100 000 000;
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
    /// (see the [module docs](crate::edge)).
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
    pub(super) fn validate(&self, cfg: &Config) -> Result<(), ConfigError> {
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
