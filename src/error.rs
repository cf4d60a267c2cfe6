//! Configuration errors: which field is wrong and why.

use core::fmt;

/// A field's value or limit in a [`ConfigError`], in the field's own type:
/// integer fields report integers (no conversion), `f32` fields their
/// `f32`.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum ConfigValue {
    /// The value of an integer field.
    Int(u32),
    /// The value of an `f32` field.
    Float(f32),
}

impl fmt::Display for ConfigValue {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match *self {
            Self::Int(v) => write!(f, "{v}"),
            Self::Float(v) => write!(f, "{v}"),
        }
    }
}

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
        /// The value given.
        value: ConfigValue,
        /// Smallest accepted value.
        min: ConfigValue,
        /// Largest accepted value.
        max: ConfigValue,
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
    /// The sample rate (field `sample_rate_hz`) is too low for the
    /// demodulated bins: every bin (the fundamental and the `H` extra
    /// harmonics) must lie below the Nyquist frequency at the top of the
    /// tracking range with 10 % to spare; the demodulator works on pairs
    /// of samples, so `rate ≥ 4.4 · top · (H + 1)`.
    TooFewSamplesPerCycle {
        /// The rate given, in hertz.
        sample_rate_hz: u32,
        /// The lowest rate accepted for this mains mode and bin count, in
        /// hertz.
        min_rate_hz: u32,
    },
}

impl ConfigError {
    /// The name in [`Config`](crate::Config) of the field the error is
    /// about (`sample_rate_hz` for [`Self::TooFewSamplesPerCycle`]; for
    /// [`Self::NotBelow`] the field that must be smaller).
    ///
    /// ```
    /// use humsense::Config;
    /// let e = Config { off_ratio: 3.0, ..Config::touch() }.validate(0).unwrap_err();
    /// assert_eq!(e.field(), "off_ratio");
    /// ```
    pub const fn field(&self) -> &'static str {
        match *self {
            Self::OutOfRange { field, .. }
            | Self::NotFinite { field }
            | Self::NotBelow { field, .. } => field,
            Self::TooFewSamplesPerCycle { .. } => "sample_rate_hz",
        }
    }
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
            Self::TooFewSamplesPerCycle {
                sample_rate_hz,
                min_rate_hz,
            } => write!(
                f,
                "config field `sample_rate_hz` is {sample_rate_hz}, expected at least \
                 {min_rate_hz} to demodulate every bin at the top of the mains tracking range"
            ),
        }
    }
}

impl core::error::Error for ConfigError {}
