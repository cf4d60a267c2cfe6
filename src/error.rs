//! Configuration errors: which field is wrong and why.

use core::fmt;

/// Why a [`Config`](crate::Config) was refused. Each variant names the
/// offending field by its name in `Config`, so a message can point at it.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
#[non_exhaustive]
pub enum ConfigError {
    /// A numeric field lies outside its documented range.
    OutOfRange {
        /// Field name in `Config`.
        field: &'static str,
        /// The value given (integers are converted exactly).
        value: f32,
        /// Smallest accepted value.
        min: f32,
        /// Largest accepted value.
        max: f32,
    },
    /// A floating-point field is NaN or infinite.
    NotFinite {
        /// Field name in `Config`.
        field: &'static str,
    },
    /// A field that must stay strictly below another does not.
    NotBelow {
        /// The field that must be smaller (for example `off_ratio`).
        field: &'static str,
        /// The field it must stay below (for example `on_ratio`).
        other: &'static str,
    },
    /// The sample rate gives too few samples per mains cycle for the
    /// quadrature demodulator (fewer than 8 at the top of the tracking range).
    TooFewSamplesPerCycle {
        /// Samples per cycle at the highest trackable mains frequency.
        samples_per_cycle: f32,
    },
}

impl fmt::Display for ConfigError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match *self {
            Self::OutOfRange {
                field,
                value,
                min,
                max,
            } => write!(
                f,
                "config field `{field}` is {value}, expected a value from {min} to {max}"
            ),
            Self::NotFinite { field } => {
                write!(f, "config field `{field}` must be a finite number")
            }
            Self::NotBelow { field, other } => write!(
                f,
                "config field `{field}` must be below `{other}` (hysteresis needs off below on)"
            ),
            Self::TooFewSamplesPerCycle { samples_per_cycle } => write!(
                f,
                "config field `sample_rate_hz` gives {samples_per_cycle} samples per mains cycle, \
                 at least 8 are needed"
            ),
        }
    }
}

impl core::error::Error for ConfigError {}
