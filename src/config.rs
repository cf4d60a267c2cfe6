//! Detector configuration: plain data with documented defaults per profile,
//! validated once by [`Detector::new`](crate::Detector::new).
//!
//! Thresholds are given in human units (noise units, ratios, ADC codes);
//! construction checks them and converts them to the fixed-point forms the
//! hot path uses in integer arithmetic on their IEEE bits, which gives the
//! same bits on every target and links no soft-float routine.
//!
//! Every field of [`Config`] is declared once, in the table at the
//! `config_table!` invocation below: its type, doc, unit, checked range and
//! both profiles' defaults. The struct, [`Config::touch`], [`Config::field`],
//! the range checks of [`Config::validate`] and the descriptor list
//! [`Config::FIELDS`] (for tools and tests: name, unit, kind, range, getter
//! and setter) are all generated from it. `Config::FIELDS` is a `const`:
//! firmware that does not use it links none of it.

use crate::error::{ConfigError, ConfigValue};

/// Largest channel count.
pub const MAX_CHANNELS: usize = 32;
/// Largest number of extra harmonic bins (orders 2 to 5).
pub const MAX_HARMONICS: usize = 4;
use crate::fixed::{div_rem_u32, f32_mul_pow2};

/// An enum field of [`Config`]: its variants by their Rust names and by
/// their names in configuration files (`humsim`'s TOML, and serde with the
/// `serde` feature).
trait Choice: Copy + Sized {
    /// The type's name.
    const TYPE: &'static str;
    /// The variants' Rust names, in declaration order.
    const VARIANTS: &'static [&'static str];
    /// The variants' names in files, in the same order.
    const NAMES: &'static [&'static str];
    /// Position of `self` in [`Self::VARIANTS`].
    fn index(self) -> usize;
    /// The variant at position `i`, if any.
    fn from_index(i: usize) -> Option<Self>;
}

/// A fieldless enum of the configuration, with its names in files (serde
/// renames from the same literals) and its [`Choice`] implementation.
macro_rules! choice_enum {
    (
        $(#[$meta:meta])*
        pub enum $ty:ident {
            $( $(#[doc = $doc:literal])* $variant:ident = $file:literal, )*
        }
    ) => {
        $(#[$meta])*
        ///
        #[doc = concat!("In configuration files (and through serde with the `serde` feature):", $(" `\"", $file, "\"`"),*, ".")]
        #[derive(Clone, Copy, Debug, PartialEq, Eq)]
        #[cfg_attr(feature = "defmt", derive(defmt::Format))]
        #[cfg_attr(feature = "serde", derive(serde::Serialize, serde::Deserialize))]
        pub enum $ty {
            $( $(#[doc = $doc])* #[cfg_attr(feature = "serde", serde(rename = $file))] $variant, )*
        }

        impl Choice for $ty {
            const TYPE: &'static str = stringify!($ty);
            const VARIANTS: &'static [&'static str] = &[$(stringify!($variant)),*];
            const NAMES: &'static [&'static str] = &[$($file),*];
            fn index(self) -> usize {
                self as usize
            }
            fn from_index(i: usize) -> Option<Self> {
                [$(Self::$variant),*].get(i).copied()
            }
        }
    };
}

choice_enum! {
    /// Which mains system to demodulate.
    pub enum MainsMode {
        /// Start between the two systems (55 Hz) and pull in to 50 or 60 Hz from
        /// the first strong cycles; then track within that system's range.
        Auto = "auto",
        /// 50 Hz systems: tracked from 46 to 54 Hz.
        Hz50 = "50",
        /// 60 Hz systems: tracked from 55.2 to 64.8 Hz.
        Hz60 = "60",
    }
}

choice_enum! {
    /// What the decision stage reports.
    pub enum Profile {
        /// Fast binary events for a touch pad: `TouchOn` / `TouchOff`.
        Touch = "touch",
        /// Slower, more sensitive events for a non-contact field indicator:
        /// `FieldOn` / `FieldOff` plus graded `Level` changes.
        Field = "field",
    }
}

choice_enum! {
    /// How the channels of a multi-pad panel share touches.
    pub enum PanelMode {
        /// Only the pad with the largest rise relative to its own baseline may
        /// turn on, and only while no other pad is on: a finger leaking into its
        /// neighbours through a shared overlay is one touch.
        StrongestPad = "strongest-pad",
        /// Every pad decides for itself (multi-touch layouts).
        Independent = "independent",
    }
}

/// What a field of [`Config`] holds and the range [`Config::validate`]
/// accepts for it on its own. Rules between two fields come on top: an
/// `f32` field that must stay below another names it in
/// [`FieldInfo::below`]; `baseline_fall_shift` may not exceed
/// `baseline_rise_shift`, and `min_active_cycles` may not exceed
/// `max_active_cycles` unless that is 0 (see their docs).
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
#[non_exhaustive]
pub enum FieldKind {
    /// An unsigned integer field (`u8`, `u16` or `u32`): its type holds
    /// `0..=type_max`, validation accepts `min..=max`.
    Int {
        /// Largest value of the field's type.
        type_max: u32,
        /// Smallest accepted value.
        min: u32,
        /// Largest accepted value.
        max: u32,
    },
    /// An `f32` field: validation accepts finite values from `min` to
    /// `max` (−0.0 counts as 0).
    Float {
        /// Smallest accepted value.
        min: f32,
        /// Largest accepted value.
        max: f32,
    },
    /// An enum field; every variant is accepted.
    Choice {
        /// The enum's name in the crate (`MainsMode`).
        type_name: &'static str,
        /// Its variants' Rust names, in declaration order (`Hz50`).
        variants: &'static [&'static str],
        /// Their names in configuration files and serde, in the same order
        /// (`"50"`).
        names: &'static [&'static str],
    },
}

/// A field's value, as [`FieldInfo::get`] returns it and [`FieldInfo::set`]
/// takes it.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum FieldValue {
    /// The value of an integer field.
    Int(u32),
    /// The value of an `f32` field.
    Float(f32),
    /// An enum field's variant, by its position in
    /// [`FieldKind::Choice`]'s lists.
    Choice(usize),
}

/// One field of [`Config`], described for tools and tests: see
/// [`Config::FIELDS`].
#[derive(Clone, Copy, Debug)]
pub struct FieldInfo {
    /// The field's name in `Config` (and in configuration files).
    pub name: &'static str,
    /// Its unit, for display (`"Hz"`, `"cycles"`; empty for enums).
    pub unit: &'static str,
    /// Its doc comment, a line of text for each line of the source.
    pub doc: &'static str,
    /// Its kind and range.
    pub kind: FieldKind,
    /// For an `f32` field that must stay strictly below another: that
    /// field's name.
    pub below: Option<&'static str>,
    /// Reads the field.
    pub get: fn(&Config) -> FieldValue,
    /// Writes the field; `false` (and `Config` unchanged) when the value is
    /// of another kind or does not fit the field's type.
    pub set: fn(&mut Config, FieldValue) -> bool,
}

#[cfg(feature = "defmt")]
impl defmt::Format for FieldInfo {
    fn format(&self, f: defmt::Formatter<'_>) {
        defmt::write!(f, "FieldInfo {{ name: {=str} }}", self.name);
    }
}

/// A field's range check before the rules are laid out (private: the
/// source of [`RULES`]).
#[derive(Clone, Copy)]
enum Check {
    /// No range check of its own (every value of the type).
    None,
    /// An integer field's limits.
    Int(u32, u32),
    /// An `f32` field's limits.
    Float(f32, f32),
}

// Per-field pieces of `config_table!`, chosen by the field's check:
// `[int MIN, MAX]`, `[float MIN, MAX]` or `[float MIN, MAX, below OTHER]`,
// `[full]` (an integer, every value of its type), `[choice]` (an enum).

macro_rules! field_check {
    ([int $min:expr, $max:expr]) => {
        Check::Int($min, $max)
    };
    ([float $min:expr, $max:expr $(, below $other:ident)?]) => {
        Check::Float($min, $max)
    };
    ([full]) => {
        Check::None
    };
    ([choice]) => {
        Check::None
    };
}

macro_rules! field_below {
    ([float $min:expr, $max:expr, below $other:ident]) => {
        Some(stringify!($other))
    };
    ($check:tt) => {
        None
    };
}

macro_rules! field_kind {
    ($ty:ty, [int $min:expr, $max:expr]) => {
        FieldKind::Int {
            type_max: <$ty>::MAX as u32,
            min: $min,
            max: $max,
        }
    };
    ($ty:ty, [float $min:expr, $max:expr $(, below $other:ident)?]) => {
        FieldKind::Float {
            min: $min,
            max: $max,
        }
    };
    ($ty:ty, [full]) => {
        FieldKind::Int {
            type_max: <$ty>::MAX as u32,
            min: 0,
            max: <$ty>::MAX as u32,
        }
    };
    ($ty:ty, [choice]) => {
        FieldKind::Choice {
            type_name: <$ty as Choice>::TYPE,
            variants: <$ty as Choice>::VARIANTS,
            names: <$ty as Choice>::NAMES,
        }
    };
}

macro_rules! field_get {
    ($name:ident, $ty:ty, [float $($rest:tt)*]) => {
        |c: &Config| FieldValue::Float(c.$name)
    };
    ($name:ident, $ty:ty, [choice]) => {
        |c: &Config| FieldValue::Choice(Choice::index(c.$name))
    };
    ($name:ident, $ty:ty, $int:tt) => {
        |c: &Config| FieldValue::Int(u32::from(c.$name))
    };
}

macro_rules! field_set {
    ($name:ident, $ty:ty, [float $($rest:tt)*]) => {
        |c: &mut Config, v: FieldValue| match v {
            FieldValue::Float(x) => {
                c.$name = x;
                true
            }
            _ => false,
        }
    };
    ($name:ident, $ty:ty, [choice]) => {
        |c: &mut Config, v: FieldValue| match v {
            FieldValue::Choice(i) => match <$ty as Choice>::from_index(i) {
                Some(x) => {
                    c.$name = x;
                    true
                }
                None => false,
            },
            _ => false,
        }
    };
    ($name:ident, $ty:ty, $int:tt) => {
        |c: &mut Config, v: FieldValue| match v {
            FieldValue::Int(x) => match <$ty>::try_from(x).ok() {
                Some(x) => {
                    c.$name = x;
                    true
                }
                None => false,
            },
            _ => false,
        }
    };
}

/// The raw value [`Config::raw`] reads for a checked field (0 for the
/// others, which have no rule: their arm is the default's).
macro_rules! field_raw {
    ($c:ident, $name:ident, [int $($rest:tt)*]) => {
        u32::from($c.$name)
    };
    ($c:ident, $name:ident, [float $($rest:tt)*]) => {
        $c.$name.to_bits()
    };
    ($c:ident, $name:ident, $other:tt) => {
        0
    };
}

/// Generates [`Config`] and everything that lists its fields from one
/// table (see the module docs). Each row:
///
/// ```text
/// /// doc (unit, range in words: "MIN to MAX", what it does)
/// name: type = [check], "unit", touch DEFAULT, field DEFAULT;
/// ```
macro_rules! config_table {
    (
        $(#[$meta:meta])*
        pub struct Config {
            $(
                $(#[doc = $doc:literal])*
                $name:ident: $ty:ty = $check:tt, $unit:literal,
                touch $touch:expr, field $field:expr;
            )*
        }
        $(#[$touch_meta:meta])* pub const fn touch();
        $(#[$field_meta:meta])* pub const fn field();
    ) => {
        $(#[$meta])*
        pub struct Config {
            $(
                $(#[doc = $doc])*
                ///
                #[doc = concat!("Default: `", stringify!($touch), "` ([touch](Config::touch)), `",
                    stringify!($field), "` ([field](Config::field)).")]
                pub $name: $ty,
            )*
        }

        impl Config {
            /// Every field, in declaration order: name, unit, doc, kind and
            /// range, and a getter and setter, for tools and tests (a
            /// configuration file reader, a property test over every
            /// field). A `const`: firmware that does not use it links none
            /// of it.
            ///
            /// ```
            /// use humsense::{Config, FieldKind, FieldValue};
            /// let f = Config::FIELDS.iter().find(|f| f.name == "debounce_on").unwrap();
            /// assert!(matches!(f.kind, FieldKind::Int { min: 1, max: 255, .. }));
            /// let mut c = Config::touch();
            /// assert!((f.set)(&mut c, FieldValue::Int(4)));
            /// assert_eq!((f.get)(&c), FieldValue::Int(4));
            /// assert!(!(f.set)(&mut c, FieldValue::Int(300))); // not a u8
            /// ```
            pub const FIELDS: &'static [FieldInfo] = &[
                $(
                    FieldInfo {
                        name: stringify!($name),
                        unit: $unit,
                        doc: concat!($($doc, "\n"),*),
                        kind: field_kind!($ty, $check),
                        below: field_below!($check),
                        get: field_get!($name, $ty, $check),
                        set: field_set!($name, $ty, $check),
                    },
                )*
            ];

            // The profiles' defaults, the table's `touch` and `field`
            // columns. Struct literals, not `const` items: a literal builds
            // the value in place, a `const` item is copied from flash
            // (which links `memcpy` on a Cortex-M0).
            $(#[$touch_meta])*
            pub const fn touch() -> Self {
                Self { $($name: $touch,)* }
            }

            $(#[$field_meta])*
            pub const fn field() -> Self {
                Self { $($name: $field,)* }
            }

            /// Field `i` of [`RULES`]: an integer field as it is, an `f32`
            /// field as its IEEE bits (0 past the end). One short case per
            /// field, in flash about as much as a table of values would take
            /// on the stack. (The arms of unchecked fields all match
            /// [`NO_RULE`], with the default's value.)
            #[inline(never)]
            #[allow(unreachable_patterns)]
            fn raw(&self, i: usize) -> u32 {
                match i {
                    $(rule_of::$name => field_raw!(self, $name, $check),)*
                    _ => 0,
                }
            }
        }

        /// Every field's name and range check, in declaration order.
        const CHECKS: [(&str, Check, Option<&str>); [$(stringify!($name)),*].len()] = [
            $((stringify!($name), field_check!($check), field_below!($check)),)*
        ];

        /// Each field's index in [`RULES`] ([`NO_RULE`] for a field
        /// without a range check of its own).
        #[allow(non_upper_case_globals)]
        mod rule_of {
            $(pub(super) const $name: usize = super::rule_index(stringify!($name));)*
        }
    };
}

config_table! {
    /// Everything the detector needs to know, in the units each field names.
    ///
    /// Start from [`Config::touch`] or [`Config::field`] (defaults for a 12-bit
    /// ADC at 2 kHz) and change what differs on your board:
    ///
    /// ```
    /// use humsense::{Config, MainsMode};
    /// let cfg = Config::touch().with_sample_rate(1_000).with_adc_bits(10).with_mains(MainsMode::Hz60);
    /// assert_eq!(cfg.sample_rate_hz, 1_000);
    /// ```
    ///
    /// Time constants written as `…_shift` are powers of two in mains cycles:
    /// an exponential average with shift `s` has α = 2^-s, a time constant of
    /// about 2^s cycles (2^s / 50 seconds at 50 Hz).
    ///
    /// With the `serde` feature, `Config` and its enums implement
    /// `serde::Serialize` and `serde::Deserialize`: every field by its name
    /// (all required, unknown names refused), enums by their names in files.
    /// The crate stays `no_std` and allocation-free either way.
    #[derive(Clone, Copy, Debug, PartialEq)]
    #[cfg_attr(feature = "defmt", derive(defmt::Format))]
    #[cfg_attr(feature = "serde", derive(serde::Serialize, serde::Deserialize))]
    #[cfg_attr(feature = "serde", serde(deny_unknown_fields))]
    pub struct Config {
        /// ADC sample rate per channel in hertz, 400 to 50 000. Need not be a
        /// multiple of the mains frequency. With `H` harmonic bins it must be
        /// at least 4.4 · f_top · (H + 1) (f_top the top of the tracking range:
        /// 66 Hz in automatic mode), as samples are demodulated in pairs.
        sample_rate_hz: u32 = [int 400, 50_000], "Hz", touch 2_000, field 2_000;
        /// ADC resolution in bits, 8 to 16. Codes are `0..2^bits` for `u16`
        /// input and `-2^(bits-1)..2^(bits-1)` for `i16` input.
        adc_bits: u8 = [int 8, 16], "bits", touch 12, field 12;
        /// Mains system: automatic 50/60 choice or fixed.
        mains: MainsMode = [choice], "", touch MainsMode::Auto, field MainsMode::Auto;
        /// Touch or field events.
        profile: Profile = [choice], "", touch Profile::Touch, field Profile::Field;
        /// Longest spike, in samples, that impulse rejection removes (0 to 8;
        /// 0 turns rejection off). Longer disturbances pass through. The
        /// gate works on pairs of samples and holds up to `⌊len/2⌋ + 1` pairs,
        /// which covers a spike of `len` samples wherever it falls.
        spike_max_len: u8 = [int 0, 8], "samples", touch 3, field 3;
        /// Smallest sample-to-sample step, in ADC codes, that can count as a
        /// spike, whatever the signal (0 to 65 535).
        spike_floor_codes: u16 = [full], "ADC codes", touch 8, field 8;
        /// Smallest per-cycle amplitude, in ADC codes, from which the mains
        /// tracker learns the frequency (0 to 10 000).
        track_min_codes: f32 = [float 0.0, 10_000.0], "ADC codes", touch 2.0, field 2.0;
        /// Coherent averaging over about 2^shift mains cycles (0 to 4; 0 is
        /// none): a complex exponential average of the per-cycle I/Q, gaining
        /// 10·log10(2^(shift+1) − 1) dB in white noise.
        avg_shift: u8 = [int 0, 4], "log2 cycles", touch 0, field 2;
        /// Mains cycles of fast baseline learning after start-up and after an
        /// input fault ends (1 to 65 535). During them the channel decides
        /// nothing: no on, off or level event; fault events (and a queue's
        /// overflow report) can still be reported.
        startup_cycles: u16 = [int 1, 65_535], "cycles", touch 25, field 50;
        /// Baseline time constant while the amplitude is above it (1 to 16).
        baseline_rise_shift: u8 = [int 1, 16], "log2 cycles", touch 7, field 11;
        /// Baseline time constant while the amplitude is below it (1 to 16, not
        /// above `baseline_rise_shift`): the baseline falls faster than it rises.
        baseline_fall_shift: u8 = [int 1, 16], "log2 cycles", touch 4, field 5;
        /// Noise estimate time constant (1 to 16): about 2^shift cycles. The
        /// noise estimate is an exponential average of the change of amplitude
        /// from one cycle to the next, scaled so that for white noise its mean
        /// is the amplitude's mean absolute deviation, and clipped at four times
        /// the estimate plus one code (see [`baseline`](crate::baseline)); it is
        /// not the deviation from the baseline, so a slow ramp or drift of the
        /// amplitude does not raise it.
        noise_shift: u8 = [int 1, 16], "log2 cycles", touch 6, field 7;
        /// On threshold in noise units above the baseline (0.5 to 1000).
        on_noise: f32 = [float 0.5, 1000.0], "noise units", touch 8.0, field 6.0;
        /// Off threshold in noise units above the baseline (0 to 1000, below
        /// `on_noise`).
        off_noise: f32 = [float 0.0, 1000.0, below on_noise], "noise units", touch 4.0, field 3.0;
        /// On threshold as a ratio of amplitude to baseline (1.01 to 1000).
        on_ratio: f32 = [float 1.01, 1000.0], "ratio", touch 2.8, field 1.5;
        /// Off threshold as a ratio of amplitude to baseline (1 to 1000, below
        /// `on_ratio`).
        off_ratio: f32 = [float 1.0, 1000.0, below on_ratio], "ratio", touch 1.8, field 1.25;
        /// Least rise, in ADC codes of amplitude, that can count as "on",
        /// whatever the noise and baseline (0 to 10 000). The off threshold uses
        /// half of it.
        floor_codes: f32 = [float 0.0, 10_000.0], "ADC codes", touch 2.0, field 1.0;
        /// Consecutive cycles above the on threshold before an on event (1 to 255).
        debounce_on: u8 = [int 1, 255], "cycles", touch 2, field 5;
        /// Consecutive cycles below the off threshold before an off event
        /// (1 to 255).
        debounce_off: u8 = [int 1, 255], "cycles", touch 3, field 10;
        /// Shortest active time in cycles: no off event before it (0 to 65 535,
        /// and at most `max_active_cycles` unless that is 0).
        min_active_cycles: u16 = [full], "cycles", touch 2, field 10;
        /// Longest active time in cycles before the channel is declared stuck:
        /// an off event, and the baseline re-learns from the present amplitude
        /// (0 to 65 535; 0 = never; 65 535 is 21 minutes at 50 Hz).
        max_active_cycles: u16 = [full], "cycles", touch 3_000, field 30_000;
        /// Number of graded levels in the field profile (1 to 16; the touch
        /// profile ignores it).
        levels: u8 = [int 1, 16], "levels", touch 1, field 8;
        /// Ratio between successive levels, in dB (0.5 to 20).
        level_step_db: f32 = [float 0.5, 20.0], "dB", touch 3.0, field 3.0;
        /// Hysteresis below each level boundary before the level drops, in dB
        /// (0 to 20, below `level_step_db`).
        level_hysteresis_db: f32 = [float 0.0, 20.0, below level_step_db], "dB", touch 1.0, field 1.0;
        /// Multi-channel panels: strongest pad only, or independent pads.
        panel: PanelMode = [choice], "", touch PanelMode::StrongestPad, field PanelMode::StrongestPad;
        /// Multi-channel panels of three or more channels: when the weakest
        /// quarter of the channels (the smallest, for four) all rise or fall by
        /// at least this ratio together, the change is ambient (a lamp, the
        /// device picked up, the ground reference moving): every baseline and
        /// noise estimate is rescaled by the common ratio at once, so no touch
        /// follows from it and a touch on top of it still stands out
        /// (1.05 to 100; 100 turns the rule off in practice).
        ambient_ratio: f32 = [float 1.05, 100.0], "ratio", touch 1.3, field 1.3;
        /// Cycles of saturation, while not active, before a
        /// [`Fault::Saturated`](crate::Fault::Saturated) (1 to 65 535).
        fault_saturation_cycles: u16 = [int 1, 65_535], "cycles", touch 50, field 50;
        /// Cycles of an input that does not move (every sample at one code)
        /// before a [`Fault::Stuck`](crate::Fault::Stuck) (1 to 65 535).
        fault_stuck_cycles: u16 = [int 1, 65_535], "cycles", touch 25, field 25;
        /// Amplitude, in ADC codes, below which a cycle counts as without hum
        /// (0 to 10 000); the fault clears above twice this.
        nohum_codes: f32 = [float 0.0, 10_000.0], "ADC codes", touch 1.0, field 1.0;
        /// Cycles without hum before a [`Fault::NoHum`](crate::Fault::NoHum)
        /// (1 to 65 535).
        nohum_cycles: u16 = [int 1, 65_535], "cycles", touch 1_500, field 1_500;
        /// Cycles unlocked before a [`Fault::MainsLost`](crate::Fault::MainsLost),
        /// and pinned at a range limit before an out-of-range or rate-mismatch
        /// fault (1 to 65 535).
        mains_lost_cycles: u16 = [int 1, 65_535], "cycles", touch 250, field 250;
    }

    /// Defaults for a touch pad on a 12-bit ADC at 2 kHz, automatic mains.
    ///
    /// On at 2.8x the baseline (+8.9 dB) or 8 noise units, whichever is
    /// higher, for two consecutive cycles; off below 1.8x (+5.1 dB) and 4
    /// noise units for three. A 2x ambient step stays below the on ratio and
    /// a touch of 4x over ambient (thick overlay) clears it with 3 dB to spare.
    /// Each field's doc gives its default.
    pub const fn touch();

    /// Defaults for a non-contact field indicator on a 12-bit ADC at 2 kHz.
    ///
    /// Coherent averaging over about 4 cycles, on at 1.5x the baseline
    /// (+3.5 dB) or 6 noise units for five cycles, off below 1.25x and 3
    /// noise units for ten; a baseline that rises with a time constant of
    /// 2048 cycles (41 s at 50 Hz) so a slow approach is not swallowed;
    /// 8 levels 3 dB apart with 1 dB of hysteresis. Each field's doc gives
    /// its default.
    pub const fn field();
}

impl Config {
    /// The same configuration at another sample rate.
    pub const fn with_sample_rate(mut self, hz: u32) -> Self {
        self.sample_rate_hz = hz;
        self
    }

    /// The same configuration for another ADC resolution.
    ///
    /// The amplitude floors (`spike_floor_codes`, `track_min_codes`,
    /// `floor_codes`, `nohum_codes`) are rescaled from their values at 12 bits, so a
    /// profile keeps its meaning in volts at the ADC pin.
    ///
    /// Integer only (the scale is a power of two: the `f32` fields get
    /// exactly the bits of the product, see [`f32_mul_pow2`]), so calling
    /// it links no soft-float routine.
    pub fn with_adc_bits(mut self, bits: u8) -> Self {
        // Scale by 2^k, |k| at most 16.
        let k = (i32::from(bits) - i32::from(self.adc_bits)).clamp(-16, 16);
        let spike = u32::from(self.spike_floor_codes);
        // The product with 2^k is exact, and `as u16` saturates (up) or
        // truncates (down): a shift, saturated.
        let scaled = if k >= 0 { spike << k } else { spike >> -k };
        self.spike_floor_codes = (scaled.min(u32::from(u16::MAX)) as u16).max(1);
        self.track_min_codes = f32_mul_pow2(self.track_min_codes, k);
        self.floor_codes = f32_mul_pow2(self.floor_codes, k);
        self.nohum_codes = f32_mul_pow2(self.nohum_codes, k);
        self.adc_bits = bits;
        self
    }

    /// The same configuration with another mains mode.
    pub const fn with_mains(mut self, mains: MainsMode) -> Self {
        self.mains = mains;
        self
    }

    /// Lowest and highest mains frequency the tracker may settle on, in
    /// millihertz, for this mode (before the automatic choice: both systems).
    pub const fn tracking_range_mhz(&self) -> (u32, u32) {
        match self.mains {
            MainsMode::Auto => (44_000, 66_000),
            MainsMode::Hz50 => RANGE_50,
            MainsMode::Hz60 => RANGE_60,
        }
    }

    /// Checks every field for a detector with `harmonics` extra harmonic
    /// bins (its `H`; more than [`MAX_HARMONICS`] count as that many).
    /// Every constructor (`Detector::new`, `Backend::new`, `Frontend::new`,
    /// the edge detector's) calls it; tools call it to check a
    /// configuration without building a detector. Never panics.
    ///
    /// The first problem found is returned, naming the field: each field's
    /// own range (the ranges in [`Config::FIELDS`] and the field docs, the
    /// integer fields first), then `baseline_fall_shift` against
    /// `baseline_rise_shift`, `min_active_cycles` against
    /// `max_active_cycles`, the off thresholds below the on thresholds, and
    /// the sample rate against the bins.
    ///
    /// ```
    /// use humsense::{Config, ConfigError};
    /// assert!(Config::touch().validate(0).is_ok());
    /// let e = Config { debounce_on: 0, ..Config::touch() }.validate(0).unwrap_err();
    /// assert_eq!(e.field(), "debounce_on");
    /// assert!(matches!(
    ///     Config::touch().with_sample_rate(800).validate(2),
    ///     Err(ConfigError::TooFewSamplesPerCycle { min_rate_hz: 872, .. })
    /// ));
    /// ```
    ///
    /// Table-driven (one loop over the table's range rules instead of one
    /// call per field: flash on small cores) and integer only: `f32`
    /// fields are compared by integer keys with the order of the floats,
    /// so no soft-float routine is linked.
    pub fn validate(&self, harmonics: usize) -> Result<(), ConfigError> {
        for (i, rule) in RULES.iter().enumerate() {
            let v = self.raw(i);
            let float = i >= INT_RULES;
            let key = if float {
                if !finite(f32::from_bits(v)) {
                    return Err(ConfigError::NotFinite { field: rule.field });
                }
                order_key(f32::from_bits(v)) as u32
            } else {
                v
            };
            if key < rule.min || key > rule.max {
                return Err(rule.out_of_range(v, float));
            }
        }
        if self.baseline_fall_shift > self.baseline_rise_shift {
            // "Fall faster than rise" means a smaller or equal shift.
            return Err(ConfigError::OutOfRange {
                field: "baseline_fall_shift",
                value: ConfigValue::Int(self.baseline_fall_shift.into()),
                min: ConfigValue::Int(1),
                max: ConfigValue::Int(self.baseline_rise_shift.into()),
            });
        }
        if self.max_active_cycles != 0 && self.min_active_cycles > self.max_active_cycles {
            // The shortest active time cannot exceed the longest.
            return Err(ConfigError::OutOfRange {
                field: "min_active_cycles",
                value: ConfigValue::Int(self.min_active_cycles.into()),
                min: ConfigValue::Int(0),
                max: ConfigValue::Int(self.max_active_cycles.into()),
            });
        }
        // Off below on, in `RULES` indices (both finite by now; compared
        // by order keys, so −0.0 counts as 0).
        for (small, big) in BELOW {
            if let (Some(rs), Some(rb)) = (RULES.get(small), RULES.get(big)) {
                let key = |i| order_key(f32::from_bits(self.raw(i)));
                if key(small) >= key(big) {
                    return Err(ConfigError::NotBelow {
                        field: rs.field,
                        other: rb.field,
                    });
                }
            }
        }
        // Every demodulated bin must lie below the Nyquist frequency of the
        // demodulator's pairs (half the sample rate) at the top of the
        // tracking range, with 10 % to spare: rate ≥ 4.4 · top · (H + 1),
        // which also keeps the pair correction's series within 10⁻⁴
        // (`demod::pair_correction_q16`). In integers: rate in Hz · 10 000
        // against 44 · top in mHz · bins, both below 2^32 for validated
        // rates and at most 5 bins. (For H = 0 this is 291 Hz, below the
        // lowest rate accepted anyway.)
        let top_mhz = self.tracking_range_mhz().1;
        let bins = harmonics.min(MAX_HARMONICS) as u32 + 1;
        let need = 44 * top_mhz * bins;
        if self.sample_rate_hz * 10_000 < need {
            return Err(ConfigError::TooFewSamplesPerCycle {
                sample_rate_hz: self.sample_rate_hz,
                min_rate_hz: div_rem_u32(need + 9_999, 10_000).0,
            });
        }
        Ok(())
    }
}

impl Default for Config {
    /// The touch profile, [`Config::touch`].
    fn default() -> Self {
        Self::touch()
    }
}

/// Tracking range of 50 Hz systems in millihertz (EN 50160 allows
/// 47–52 Hz; a margin either side keeps lock at the edges).
pub(crate) const RANGE_50: (u32, u32) = (46_000, 54_000);
/// Tracking range of 60 Hz systems in millihertz (the same +4 %/−6 %
/// applied to 60 Hz is 56.4–62.4 Hz; margin either side).
pub(crate) const RANGE_60: (u32, u32) = (55_200, 64_800);

/// One field's range check: its name in `Config` and its limits, as they
/// are for integer fields and as [`order_key`]s for `f32` fields.
#[derive(Clone, Copy)]
struct Rule {
    field: &'static str,
    min: u32,
    max: u32,
}

impl Rule {
    const fn int(field: &'static str, min: u32, max: u32) -> Self {
        Self { field, min, max }
    }

    /// Limits of an `f32` field, both non-negative: their keys are their
    /// bits, and a negative value's key (as `u32`, at least 2^31) lies
    /// above every such limit, so the unsigned comparison refuses it as
    /// the signed one would.
    const fn float(field: &'static str, min: f32, max: f32) -> Self {
        Self {
            field,
            min: order_key(min) as u32,
            max: order_key(max) as u32,
        }
    }

    /// The error for raw value `v` (IEEE bits when `float`). Out of line:
    /// one copy of the error's construction.
    #[inline(never)]
    fn out_of_range(&self, v: u32, float: bool) -> ConfigError {
        let value = |x: u32| {
            if float {
                ConfigValue::Float(f32::from_bits(x))
            } else {
                ConfigValue::Int(x)
            }
        };
        ConfigError::OutOfRange {
            field: self.field,
            value: value(v),
            min: value(self.min),
            max: value(self.max),
        }
    }
}

/// [`rule_of`]'s index for a field without a range check of its own.
const NO_RULE: usize = usize::MAX;

/// How many fields have a check of kind `int` (`true`) or `float`.
const fn count_checks(int: bool) -> usize {
    let mut n = 0;
    let mut k = 0;
    while k < CHECKS.len() {
        #[expect(clippy::indexing_slicing, reason = "k < CHECKS.len()")]
        match CHECKS[k].1 {
            Check::Int(..) if int => n += 1,
            Check::Float(..) if !int => n += 1,
            _ => {}
        }
        k += 1;
    }
    n
}

/// How many of [`RULES`] (the first ones) check integer fields.
const INT_RULES: usize = count_checks(true);

/// How many fields have a range check of their own.
const RULE_COUNT: usize = INT_RULES + count_checks(false);

/// Whether two names are equal (`str` equality for `const fn`).
const fn same_name(a: &str, b: &str) -> bool {
    let (mut a, mut b) = (a.as_bytes(), b.as_bytes());
    loop {
        match (a, b) {
            ([], []) => return true,
            ([x, ra @ ..], [y, rb @ ..]) if *x == *y => {
                a = ra;
                b = rb;
            }
            _ => return false,
        }
    }
}

/// The index in [`RULES`] of field `name`: the integer checks in
/// declaration order, then the `f32` checks ([`NO_RULE`] for a field
/// without one, or an unknown name).
const fn rule_index(name: &str) -> usize {
    let (mut ints, mut floats) = (0, 0);
    let mut k = 0;
    while k < CHECKS.len() {
        #[expect(clippy::indexing_slicing, reason = "k < CHECKS.len()")]
        let (field, check, _) = CHECKS[k];
        let hit = same_name(field, name);
        match check {
            Check::Int(..) if hit => return ints,
            Check::Float(..) if hit => return INT_RULES + floats,
            Check::Int(..) => ints += 1,
            Check::Float(..) => floats += 1,
            Check::None if hit => return NO_RULE,
            Check::None => {}
        }
        k += 1;
    }
    NO_RULE
}

/// [`RULES`], laid out at compile time from [`CHECKS`].
const fn rules() -> [Rule; RULE_COUNT] {
    let mut out = [Rule::int("", 0, 0); RULE_COUNT];
    let mut k = 0;
    while k < CHECKS.len() {
        #[expect(clippy::indexing_slicing, reason = "k < CHECKS.len()")]
        let (field, check, _) = CHECKS[k];
        let i = rule_index(field);
        let rule = match check {
            Check::Int(min, max) => Rule::int(field, min, max),
            Check::Float(min, max) => Rule::float(field, min, max),
            Check::None => Rule::int(field, 0, 0),
        };
        if i < RULE_COUNT {
            #[expect(clippy::indexing_slicing, reason = "i < RULE_COUNT")]
            {
                out[i] = rule;
            }
        }
        k += 1;
    }
    out
}

/// Every range check: the integer fields, then the `f32` fields, each
/// group in declaration order (the ranges in the table of [`Config`]).
static RULES: [Rule; RULE_COUNT] = rules();

/// How many fields must stay below another.
const BELOW_COUNT: usize = {
    let (mut n, mut k) = (0, 0);
    while k < CHECKS.len() {
        #[expect(clippy::indexing_slicing, reason = "k < CHECKS.len()")]
        if CHECKS[k].2.is_some() {
            n += 1;
        }
        k += 1;
    }
    n
};

/// `f32` fields that must stay strictly below another, as indices into
/// [`RULES`], in declaration order: `off_noise` < `on_noise`,
/// `off_ratio` < `on_ratio`, `level_hysteresis_db` < `level_step_db`.
const BELOW: [(usize, usize); BELOW_COUNT] = {
    let mut out = [(0, 0); BELOW_COUNT];
    let (mut n, mut k) = (0, 0);
    while k < CHECKS.len() {
        #[expect(clippy::indexing_slicing, reason = "k < CHECKS.len()")]
        if let (field, _, Some(other)) = CHECKS[k] {
            let pair = (rule_index(field), rule_index(other));
            // Both sides `f32` rules: the check reads them as floats.
            assert!(
                pair.0 >= INT_RULES && pair.0 < RULE_COUNT,
                "`below` on a field without a float range"
            );
            assert!(
                pair.1 >= INT_RULES && pair.1 < RULE_COUNT,
                "`below` names a field without a float range"
            );
            #[expect(clippy::indexing_slicing, reason = "n < BELOW_COUNT")]
            {
                out[n] = pair;
            }
            n += 1;
        }
        k += 1;
    }
    out
};

/// Whether `v` is neither infinite nor NaN (exponent not all ones).
const fn finite(v: f32) -> bool {
    v.to_bits() & 0x7f80_0000 != 0x7f80_0000
}

/// An integer with the order of the finite `f32` values (−0.0 and +0.0
/// equal): the magnitude bits, negated for negative values.
const fn order_key(v: f32) -> i32 {
    let bits = v.to_bits();
    let magnitude = (bits & 0x7fff_ffff) as i32;
    if bits >> 31 == 1 {
        -magnitude
    } else {
        magnitude
    }
}

#[cfg(test)]
mod tests {
    extern crate std;
    use super::*;

    #[test]
    fn order_key_orders_like_the_floats() {
        let vals = [
            f32::MIN,
            -1000.0,
            -1.5,
            -f32::MIN_POSITIVE,
            -0.0,
            0.0,
            1e-40,
            0.5,
            1.01,
            2.2,
            10_000.0,
            f32::MAX,
        ];
        for a in vals {
            assert!(finite(a));
            for b in vals {
                assert_eq!(order_key(a) < order_key(b), a < b, "{a} {b}");
                assert_eq!(order_key(a) >= order_key(b), a >= b, "{a} {b}");
            }
        }
        assert!(!finite(f32::NAN) && !finite(f32::INFINITY) && !finite(f32::NEG_INFINITY));
    }

    #[test]
    fn unsigned_keys_against_non_negative_limits_order_like_the_floats() {
        // Reference: IEEE 754 ordering as the host's f32 comparison gives
        // it (common practice). Every `f32` limit is non-negative.
        let vals = [
            f32::MIN,
            -1000.0,
            -1.0,
            -f32::MIN_POSITIVE,
            -1e-40,
            -0.0,
            0.0,
            1e-40,
            0.5,
            0.999_999_9,
            1.0,
            1.01,
            1.05,
            20.0,
            100.0,
            1000.0,
            1_000.000_06,
            10_000.0,
            f32::MAX,
        ];
        for rule in RULES.iter().skip(INT_RULES) {
            let (min, max) = (f32::from_bits(rule.min), f32::from_bits(rule.max));
            assert!(min >= 0.0 && min < max, "{}", rule.field);
            for v in vals {
                let key = order_key(v) as u32;
                let inside = key >= rule.min && key <= rule.max;
                assert_eq!(inside, v >= min && v <= max, "{} {v}", rule.field);
            }
        }
    }

    #[test]
    fn adc_bits_rescale_like_the_float_products() {
        // Reference: the float formula this builder used before (host
        // f32 arithmetic with the power-of-two scale).
        for (base, spike) in [
            (Config::touch(), 1u16),
            (Config::touch(), 1_000),
            (Config::field(), 8),
            (Config::field(), u16::MAX),
        ] {
            for from in [8u8, 12, 16] {
                let start = Config {
                    adc_bits: from,
                    spike_floor_codes: spike,
                    track_min_codes: 2.3,
                    floor_codes: 1e-38,
                    nohum_codes: 3e38,
                    ..base
                };
                for bits in 0..=40u8 {
                    let scale = if bits >= from {
                        (1u32 << (bits - from).min(16)) as f32
                    } else {
                        1.0 / (1u32 << (from - bits).min(16)) as f32
                    };
                    let got = start.with_adc_bits(bits);
                    let want_spike = ((start.spike_floor_codes as f32 * scale) as u16).max(1);
                    assert_eq!(got.spike_floor_codes, want_spike, "{from} -> {bits}");
                    for (g, v) in [
                        (got.track_min_codes, start.track_min_codes),
                        (got.floor_codes, start.floor_codes),
                        (got.nohum_codes, start.nohum_codes),
                    ] {
                        assert_eq!(g.to_bits(), (v * scale).to_bits(), "{from} -> {bits}");
                    }
                    assert_eq!(got.adc_bits, bits);
                }
            }
        }
    }

    #[test]
    fn rule_table_matches_the_fields() {
        let names: std::vec::Vec<&str> = RULES.iter().map(|r| r.field).collect();
        let pairs: std::vec::Vec<(&str, &str)> = BELOW
            .iter()
            .map(|&(small, big)| {
                assert!(small >= INT_RULES && big >= INT_RULES);
                (names[small], names[big])
            })
            .collect();
        // Each `below` of the table, in declaration order.
        let declared: std::vec::Vec<(&str, &str)> = Config::FIELDS
            .iter()
            .filter_map(|f| f.below.map(|other| (f.name, other)))
            .collect();
        assert_eq!(pairs, declared);
        // The hysteresis pairs the field docs state.
        for pair in [
            ("off_noise", "on_noise"),
            ("off_ratio", "on_ratio"),
            ("level_hysteresis_db", "level_step_db"),
        ] {
            assert!(pairs.contains(&pair), "{pair:?}");
        }
        let e = Config {
            sample_rate_hz: 399,
            ..Config::touch()
        }
        .validate(0);
        assert_eq!(
            e,
            Err(ConfigError::OutOfRange {
                field: "sample_rate_hz",
                value: ConfigValue::Int(399),
                min: ConfigValue::Int(400),
                max: ConfigValue::Int(50_000),
            })
        );
        let e = Config {
            on_ratio: 1.0,
            ..Config::touch()
        }
        .validate(0);
        assert_eq!(
            e,
            Err(ConfigError::OutOfRange {
                field: "on_ratio",
                value: ConfigValue::Float(1.0),
                min: ConfigValue::Float(1.01),
                max: ConfigValue::Float(1000.0),
            })
        );
        // 3 bins up to 66 Hz: 4.4 · 66 · 3 = 871.2 Hz, so 872 Hz.
        let e = Config::touch().with_sample_rate(400).validate(2);
        assert_eq!(
            e,
            Err(ConfigError::TooFewSamplesPerCycle {
                sample_rate_hz: 400,
                min_rate_hz: 872,
            })
        );
        assert!(Config::touch().with_sample_rate(872).validate(2).is_ok());
        assert!(Config::touch().with_sample_rate(871).validate(2).is_err());
    }

    /// The field names `derive(Debug)` prints for `c`, in order (the
    /// compiler's own list of the struct's fields).
    fn debug_fields(c: &Config) -> std::vec::Vec<std::string::String> {
        let text = std::format!("{c:?}");
        let inner = text
            .strip_prefix("Config { ")
            .and_then(|t| t.strip_suffix(" }"))
            .unwrap();
        inner
            .split(", ")
            .map(|kv| std::string::String::from(kv.split(": ").next().unwrap()))
            .collect()
    }

    #[test]
    fn the_descriptors_list_every_field_in_order() {
        // Reference: the compiler-generated `Debug` of the struct names every
        // field in declaration order.
        let names: std::vec::Vec<&str> = Config::FIELDS.iter().map(|f| f.name).collect();
        assert_eq!(debug_fields(&Config::touch()), names);
    }

    #[test]
    fn each_setter_changes_its_own_field_only() {
        let debug_values = |c: &Config| {
            let text = std::format!("{c:?}");
            let inner = std::string::String::from(
                text.strip_prefix("Config { ")
                    .unwrap()
                    .strip_suffix(" }")
                    .unwrap(),
            );
            inner
                .split(", ")
                .map(std::string::String::from)
                .collect::<std::vec::Vec<_>>()
        };
        for (k, f) in Config::FIELDS.iter().enumerate() {
            let base = Config::field();
            let before = debug_values(&base);
            // A value other than the default, of the field's own kind.
            let new = match (f.kind, (f.get)(&base)) {
                (FieldKind::Int { max, .. }, FieldValue::Int(v)) => {
                    FieldValue::Int(if v == max { v - 1 } else { v + 1 })
                }
                (FieldKind::Float { .. }, FieldValue::Float(v)) => FieldValue::Float(v + 0.25),
                (FieldKind::Choice { names, .. }, FieldValue::Choice(i)) => {
                    FieldValue::Choice((i + 1) % names.len())
                }
                other => panic!("{}: kind and value disagree: {other:?}", f.name),
            };
            let mut c = base;
            assert!((f.set)(&mut c, new), "{}", f.name);
            assert_eq!((f.get)(&c), new, "{}", f.name);
            let after = debug_values(&c);
            for (j, (a, b)) in before.iter().zip(&after).enumerate() {
                assert_eq!(a != b, j == k, "setting {} changed {a} -> {b}", f.name);
            }
            // Another kind, or a value beyond the type, is refused and
            // changes nothing.
            let mut d = base;
            let wrong = match f.kind {
                FieldKind::Float { .. } => FieldValue::Int(1),
                _ => FieldValue::Float(1.0),
            };
            assert!(!(f.set)(&mut d, wrong), "{}", f.name);
            match f.kind {
                FieldKind::Int { type_max, .. } if type_max < u32::MAX => {
                    assert!(
                        !(f.set)(&mut d, FieldValue::Int(type_max + 1)),
                        "{}",
                        f.name
                    );
                    assert!((f.set)(&mut d, FieldValue::Int(type_max)), "{}", f.name);
                    d = base;
                }
                FieldKind::Choice {
                    names, variants, ..
                } => {
                    assert_eq!(names.len(), variants.len());
                    assert!(
                        !(f.set)(&mut d, FieldValue::Choice(names.len())),
                        "{}",
                        f.name
                    );
                }
                _ => {}
            }
            assert_eq!(d, base, "{}", f.name);
        }
    }

    #[test]
    fn the_integer_types_are_the_declared_ones() {
        // Reference: the primitive types' MAX (core); each field's declared
        // type is what `derive(Debug)` cannot show, so pin the type bound
        // through the setter: type_max fits, type_max + 1 does not (above).
        let max = |name: &str| match Config::FIELDS.iter().find(|f| f.name == name).unwrap().kind {
            FieldKind::Int { type_max, .. } => type_max,
            k => panic!("{k:?}"),
        };
        assert_eq!(max("sample_rate_hz"), u32::MAX);
        assert_eq!(max("adc_bits"), u32::from(u8::MAX));
        assert_eq!(max("spike_floor_codes"), u32::from(u16::MAX));
    }

    /// `v` as the field docs write numbers: shortest form, thousands
    /// separated by a space from five digits on ("50 000", "1000").
    fn doc_number(v: f64) -> std::string::String {
        let s = std::format!("{v}");
        let (int, frac) = s.split_once('.').map_or((s.as_str(), ""), |(a, b)| (a, b));
        let mut out = std::string::String::new();
        if int.len() >= 5 {
            for (i, ch) in int.chars().enumerate() {
                if i > 0 && (int.len() - i) % 3 == 0 {
                    out.push(' ');
                }
                out.push(ch);
            }
        } else {
            out.push_str(int);
        }
        if !frac.is_empty() {
            out.push('.');
            out.push_str(frac);
        }
        out
    }

    #[test]
    fn the_docs_state_the_checked_ranges() {
        // Docs are contracts: every numeric field's doc says "MIN to MAX"
        // with the limits `validate` applies, and an `f32` field kept below
        // another names that field.
        for f in Config::FIELDS {
            let (min, max) = match f.kind {
                FieldKind::Int { min, max, .. } => (f64::from(min), f64::from(max)),
                FieldKind::Float { min, max } => (f64::from(min), f64::from(max)),
                FieldKind::Choice { .. } => continue,
            };
            // The f32 limits print their shortest decimal form.
            let (min, max) = match f.kind {
                FieldKind::Float { min: a, max: b } => (
                    std::format!("{a}").parse::<f64>().unwrap(),
                    std::format!("{b}").parse::<f64>().unwrap(),
                ),
                _ => (min, max),
            };
            let want = std::format!("{} to {}", doc_number(min), doc_number(max));
            let doc = f
                .doc
                .split_whitespace()
                .collect::<std::vec::Vec<_>>()
                .join(" ");
            assert!(
                doc.contains(&want),
                "{}: doc does not say `{want}`: {doc}",
                f.name
            );
            if let Some(other) = f.below {
                assert!(
                    doc.contains(&std::format!("below `{other}`")),
                    "{}: {doc}",
                    f.name
                );
            }
            assert!(!f.unit.is_empty(), "{}", f.name);
        }
    }

    #[test]
    fn the_rules_follow_the_descriptors() {
        // Every field with a range narrower than its type, and every f32
        // field, has a rule with its limits; the integer rules come first.
        let mut expected = std::vec::Vec::new();
        for float in [false, true] {
            for f in Config::FIELDS {
                match f.kind {
                    FieldKind::Int { type_max, min, max }
                        if !float && (min > 0 || max < type_max) =>
                    {
                        expected.push((f.name, min, max));
                    }
                    FieldKind::Float { min, max } if float => {
                        expected.push((f.name, min.to_bits(), max.to_bits()));
                    }
                    _ => {}
                }
            }
        }
        let got: std::vec::Vec<_> = RULES.iter().map(|r| (r.field, r.min, r.max)).collect();
        assert_eq!(got, expected);
        for (i, rule) in RULES.iter().enumerate() {
            assert_eq!(rule_index(rule.field), i);
        }
        assert_eq!(rule_index("spike_floor_codes"), NO_RULE);
        assert_eq!(rule_index("mains"), NO_RULE);
        assert_eq!(rule_index("no_such_field"), NO_RULE);
        // `raw` reads each rule's field.
        let c = Config::field();
        for (i, rule) in RULES.iter().enumerate() {
            let f = Config::FIELDS
                .iter()
                .find(|f| f.name == rule.field)
                .unwrap();
            let want = match (f.get)(&c) {
                FieldValue::Int(v) => v,
                FieldValue::Float(v) => v.to_bits(),
                FieldValue::Choice(_) => panic!("{}", f.name),
            };
            assert_eq!(c.raw(i), want, "{}", rule.field);
        }
        assert_eq!(c.raw(RULES.len()), 0);
    }

    #[test]
    fn choices_round_trip_through_their_index() {
        for m in [MainsMode::Auto, MainsMode::Hz50, MainsMode::Hz60] {
            assert_eq!(MainsMode::from_index(m.index()), Some(m));
            assert_eq!(std::format!("{m:?}"), MainsMode::VARIANTS[m.index()]);
        }
        for p in [Profile::Touch, Profile::Field] {
            assert_eq!(Profile::from_index(p.index()), Some(p));
            assert_eq!(std::format!("{p:?}"), Profile::VARIANTS[p.index()]);
        }
        for p in [PanelMode::StrongestPad, PanelMode::Independent] {
            assert_eq!(PanelMode::from_index(p.index()), Some(p));
            assert_eq!(std::format!("{p:?}"), PanelMode::VARIANTS[p.index()]);
        }
        assert_eq!(MainsMode::NAMES, ["auto", "50", "60"]);
        assert_eq!(MainsMode::from_index(3), None);
    }
}
