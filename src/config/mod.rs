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
//!
//! Files: `fields.rs` (the descriptor types and the macros that expand the
//! table), this file (the table itself, the enums, the profiles and
//! [`Config::validate`]), `rules.rs` (the range and order rules laid out
//! from the table at compile time), `tests.rs`.

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

#[macro_use]
mod fields;
mod rules;
#[cfg(test)]
mod tests;

use fields::Check;
pub use fields::{FieldInfo, FieldKind, FieldValue};
use rules::*;

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
        /// Sliding coherent window, ms (0 to 2000; 0 is none): the per-cycle
        /// I/Q summed over the last `window_ms` of mains cycles and decided
        /// every cycle, with the on threshold from the Rayleigh law for
        /// `false_alarms_per_hour` (see [`detector`](crate::detector)'s
        /// window stage). It is the deadline a steady field is reported
        /// within: 0.5 s in the field profile. It needs a detector with
        /// window memory ([`FieldDetector`](crate::FieldDetector)); a
        /// detector without ([`NoWindow`](crate::NoWindow)) uses `avg_shift` instead, and one with
        /// too little refuses the configuration.
        window_ms: u16 = [int 0, 2_000], "ms", touch 0, field 500;
        /// With a window: false on events an hour under white noise alone,
        /// the one knob that trades sensitivity against false alarms
        /// (0.01 to 3600). Each halving costs about 0.2 dB of sensitivity
        /// (computed from the Rayleigh law near the default).
        false_alarms_per_hour: f32 = [float 0.01, 3_600.0], "per hour", touch 1.0, field 1.0;
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
        /// amplitude does not raise it. With a window (`window_ms`), the
        /// sample is the change of the per-cycle I/Q instead, scaled to the
        /// noise of the window's mean; the field profile's 2^10 cycles (20 s
        /// at 50 Hz) keep that estimate steady for its Rayleigh-law threshold.
        noise_shift: u8 = [int 1, 16], "log2 cycles", touch 6, field 10;
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
        debounce_on: u8 = [int 1, 255], "cycles", touch 2, field 1;
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
