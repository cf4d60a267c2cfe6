//! Detector configuration: plain data with documented defaults per profile,
//! validated once by [`Detector::new`](crate::Detector::new).
//!
//! Thresholds are given in human units (noise units, ratios, ADC codes);
//! construction checks them and converts them to the fixed-point forms the
//! hot path uses in integer arithmetic on their IEEE bits, which gives the
//! same bits on every target and links no soft-float routine.

use crate::error::{ConfigError, ConfigValue};

/// Largest channel count.
pub const MAX_CHANNELS: usize = 32;
/// Largest number of extra harmonic bins (orders 2 to 5).
pub const MAX_HARMONICS: usize = 4;
use crate::fixed::{div_rem_u32, f32_mul_pow2};

/// Which mains system to demodulate.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum MainsMode {
    /// Start between the two systems (55 Hz) and pull in to 50 or 60 Hz from
    /// the first strong cycles; then track within that system's range.
    Auto,
    /// 50 Hz systems: tracked from 46 to 54 Hz.
    Hz50,
    /// 60 Hz systems: tracked from 55.2 to 64.8 Hz.
    Hz60,
}

/// What the decision stage reports.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum Profile {
    /// Fast binary events for a touch pad: `TouchOn` / `TouchOff`.
    Touch,
    /// Slower, more sensitive events for a non-contact field indicator:
    /// `FieldOn` / `FieldOff` plus graded `Level` changes.
    Field,
}

/// How the channels of a multi-pad panel share touches.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum PanelMode {
    /// Only the pad with the largest rise relative to its own baseline may
    /// turn on, and only while no other pad is on: a finger leaking into its
    /// neighbours through a shared overlay is one touch.
    StrongestPad,
    /// Every pad decides for itself (multi-touch layouts).
    Independent,
}

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
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Config {
    /// ADC sample rate per channel in hertz, 400 to 50 000. Need not be a
    /// multiple of the mains frequency. With `H` harmonic bins it must be
    /// at least 4.4 · f_top · (H + 1) (f_top the top of the tracking range:
    /// 66 Hz in automatic mode), as samples are demodulated in pairs.
    pub sample_rate_hz: u32,
    /// ADC resolution in bits, 8 to 16. Codes are `0..2^bits` for `u16`
    /// input and `-2^(bits-1)..2^(bits-1)` for `i16` input.
    pub adc_bits: u8,
    /// Mains system: automatic 50/60 choice or fixed.
    pub mains: MainsMode,
    /// Touch or field events.
    pub profile: Profile,
    /// Longest spike, in samples, that impulse rejection removes (0 turns
    /// rejection off, at most 8). Longer disturbances pass through. The
    /// gate works on pairs of samples and holds up to `⌊len/2⌋ + 1` pairs,
    /// which covers a spike of `len` samples wherever it falls.
    pub spike_max_len: u8,
    /// Smallest sample-to-sample step, in ADC codes, that can count as a
    /// spike, whatever the signal (0 to 65 535).
    pub spike_floor_codes: u16,
    /// Smallest per-cycle amplitude, in ADC codes, from which the mains
    /// tracker learns the frequency (0 to 10 000).
    pub track_min_codes: f32,
    /// Coherent averaging over about 2^shift mains cycles (0 to 4; 0 is
    /// none): a complex exponential average of the per-cycle I/Q, gaining
    /// 10·log10(2^(shift+1) − 1) dB in white noise.
    pub avg_shift: u8,
    /// Mains cycles of fast baseline learning after start-up and after an
    /// input fault ends (1 to 65 535). During them the channel decides
    /// nothing: no on, off or level event; fault events (and a queue's
    /// overflow report) can still be reported.
    pub startup_cycles: u16,
    /// Baseline time constant while the amplitude is above it (1 to 16).
    pub baseline_rise_shift: u8,
    /// Baseline time constant while the amplitude is below it (1 to 16, not
    /// above `baseline_rise_shift`): the baseline falls faster than it rises.
    pub baseline_fall_shift: u8,
    /// Noise estimate time constant (1 to 16): about 2^shift cycles. The
    /// noise estimate is an exponential average of the change of amplitude
    /// from one cycle to the next, scaled so that for white noise its mean
    /// is the amplitude's mean absolute deviation, and clipped at four times
    /// the estimate plus one code (see [`baseline`](crate::baseline)); it is
    /// not the deviation from the baseline, so a slow ramp or drift of the
    /// amplitude does not raise it.
    pub noise_shift: u8,
    /// On threshold in noise units above the baseline (0.5 to 1000).
    pub on_noise: f32,
    /// Off threshold in noise units above the baseline (0 to 1000, below
    /// `on_noise`).
    pub off_noise: f32,
    /// On threshold as a ratio of amplitude to baseline (1.01 to 1000).
    pub on_ratio: f32,
    /// Off threshold as a ratio of amplitude to baseline (1.0 to 1000, below
    /// `on_ratio`).
    pub off_ratio: f32,
    /// Least rise, in ADC codes of amplitude, that can count as "on",
    /// whatever the noise and baseline (0 to 10 000). The off threshold uses
    /// half of it.
    pub floor_codes: f32,
    /// Consecutive cycles above the on threshold before an on event (1 to 255).
    pub debounce_on: u8,
    /// Consecutive cycles below the off threshold before an off event
    /// (1 to 255).
    pub debounce_off: u8,
    /// Shortest active time in cycles: no off event before it (0 to 65 535,
    /// and at most `max_active_cycles` unless that is 0).
    pub min_active_cycles: u16,
    /// Longest active time in cycles before the channel is declared stuck:
    /// an off event, and the baseline re-learns from the present amplitude
    /// (0 = never; at most 65 535, 21 minutes at 50 Hz).
    pub max_active_cycles: u16,
    /// Number of graded levels in the field profile (1 to 16; the touch
    /// profile ignores it).
    pub levels: u8,
    /// Ratio between successive levels, in dB (0.5 to 20).
    pub level_step_db: f32,
    /// Hysteresis below each level boundary before the level drops, in dB
    /// (0 to 20, below `level_step_db`).
    pub level_hysteresis_db: f32,
    /// Multi-channel panels: strongest pad only, or independent pads.
    pub panel: PanelMode,
    /// Multi-channel panels of three or more channels: when the weakest
    /// quarter of the channels (the smallest, for four) all rise or fall by
    /// at least this ratio together, the change is ambient (a lamp, the
    /// device picked up, the ground reference moving): every baseline and
    /// noise estimate is rescaled by the common ratio at once, so no touch
    /// follows from it and a touch on top of it still stands out
    /// (1.05 to 100; 100 turns the rule off in practice).
    pub ambient_ratio: f32,
    /// Cycles of saturation, while not active, before a
    /// [`Fault::Saturated`](crate::Fault::Saturated) (1 to 65 535).
    pub fault_saturation_cycles: u16,
    /// Cycles of an input that does not move (every sample at one code)
    /// before a [`Fault::Stuck`](crate::Fault::Stuck) (1 to 65 535).
    pub fault_stuck_cycles: u16,
    /// Amplitude, in ADC codes, below which a cycle counts as without hum
    /// (0 to 10 000); the fault clears above twice this.
    pub nohum_codes: f32,
    /// Cycles without hum before a [`Fault::NoHum`](crate::Fault::NoHum)
    /// (1 to 65 535).
    pub nohum_cycles: u16,
    /// Cycles unlocked before a [`Fault::MainsLost`](crate::Fault::MainsLost),
    /// and pinned at a range limit before an out-of-range or rate-mismatch
    /// fault (1 to 65 535).
    pub mains_lost_cycles: u16,
}

impl Config {
    /// Defaults for a touch pad on a 12-bit ADC at 2 kHz, automatic mains.
    ///
    /// On at 2.8x the baseline (+8.9 dB) or 8 noise units, whichever is
    /// higher, for two consecutive cycles; off below 1.8x (+5.1 dB) and 4
    /// noise units for three. A 2x ambient step stays below the on ratio and
    /// a touch of 4x over ambient (thick overlay) clears it with 3 dB to spare.
    pub const fn touch() -> Self {
        Self {
            sample_rate_hz: 2_000,
            adc_bits: 12,
            mains: MainsMode::Auto,
            profile: Profile::Touch,
            spike_max_len: 3,
            spike_floor_codes: 8,
            track_min_codes: 2.0,
            avg_shift: 0,
            startup_cycles: 25,
            baseline_rise_shift: 7,
            baseline_fall_shift: 4,
            noise_shift: 6,
            on_noise: 8.0,
            off_noise: 4.0,
            on_ratio: 2.8,
            off_ratio: 1.8,
            floor_codes: 2.0,
            debounce_on: 2,
            debounce_off: 3,
            min_active_cycles: 2,
            max_active_cycles: 3_000,
            levels: 1,
            level_step_db: 3.0,
            level_hysteresis_db: 1.0,
            panel: PanelMode::StrongestPad,
            ambient_ratio: 1.3,
            fault_saturation_cycles: 50,
            fault_stuck_cycles: 25,
            nohum_codes: 1.0,
            nohum_cycles: 1_500,
            mains_lost_cycles: 250,
        }
    }

    /// Defaults for a non-contact field indicator on a 12-bit ADC at 2 kHz.
    ///
    /// Coherent averaging over about 4 cycles, on at 1.5x the baseline
    /// (+3.5 dB) or 6 noise units for five cycles, off below 1.25x and 3
    /// noise units for ten; a baseline that rises with a time constant of
    /// 2048 cycles (41 s at 50 Hz) so a slow approach is not swallowed;
    /// 8 levels 3 dB apart with 1 dB of hysteresis.
    pub const fn field() -> Self {
        Self {
            profile: Profile::Field,
            avg_shift: 2,
            startup_cycles: 50,
            baseline_rise_shift: 11,
            baseline_fall_shift: 5,
            noise_shift: 7,
            on_noise: 6.0,
            off_noise: 3.0,
            on_ratio: 1.5,
            off_ratio: 1.25,
            floor_codes: 1.0,
            debounce_on: 5,
            debounce_off: 10,
            min_active_cycles: 10,
            max_active_cycles: 30_000,
            levels: 8,
            ..Self::touch()
        }
    }

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

    /// Field `i` of [`RULES`]: an integer field as it is, an `f32` field as
    /// its IEEE bits (0 past the end). One short case per field, in flash
    /// about as much as a table of values would take on the stack.
    #[inline(never)]
    fn raw(&self, i: usize) -> u32 {
        match i {
            0 => self.sample_rate_hz,
            1 => self.adc_bits.into(),
            2 => self.spike_max_len.into(),
            3 => self.avg_shift.into(),
            4 => self.startup_cycles.into(),
            5 => self.baseline_rise_shift.into(),
            6 => self.baseline_fall_shift.into(),
            7 => self.noise_shift.into(),
            8 => self.debounce_on.into(),
            9 => self.debounce_off.into(),
            10 => self.levels.into(),
            11 => self.fault_saturation_cycles.into(),
            12 => self.fault_stuck_cycles.into(),
            13 => self.nohum_cycles.into(),
            14 => self.mains_lost_cycles.into(),
            15 => self.track_min_codes.to_bits(),
            16 => self.on_noise.to_bits(),
            17 => self.off_noise.to_bits(),
            18 => self.on_ratio.to_bits(),
            19 => self.off_ratio.to_bits(),
            20 => self.floor_codes.to_bits(),
            21 => self.level_step_db.to_bits(),
            22 => self.level_hysteresis_db.to_bits(),
            23 => self.ambient_ratio.to_bits(),
            24 => self.nohum_codes.to_bits(),
            _ => 0,
        }
    }

    /// Checks every field; `harmonics` is the number of extra harmonic bins
    /// the detector was built with.
    ///
    /// Table-driven (one loop over [`RULES`] instead of one call per
    /// field: flash on small cores) and integer only: `f32` fields are
    /// compared by their [`order_key`]s, so no soft-float routine is
    /// linked.
    pub(crate) fn validate(&self, harmonics: usize) -> Result<(), ConfigError> {
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

/// How many of [`RULES`] (the first ones) check integer fields.
const INT_RULES: usize = 15;

/// Every range check: the integer fields, then the `f32` fields (the
/// ranges documented on each field of [`Config`]).
static RULES: [Rule; 25] = [
    Rule::int("sample_rate_hz", 400, 50_000),
    Rule::int("adc_bits", 8, 16),
    Rule::int("spike_max_len", 0, 8),
    Rule::int("avg_shift", 0, 4),
    Rule::int("startup_cycles", 1, 65_535),
    Rule::int("baseline_rise_shift", 1, 16),
    Rule::int("baseline_fall_shift", 1, 16),
    Rule::int("noise_shift", 1, 16),
    Rule::int("debounce_on", 1, 255),
    Rule::int("debounce_off", 1, 255),
    Rule::int("levels", 1, 16),
    Rule::int("fault_saturation_cycles", 1, 65_535),
    Rule::int("fault_stuck_cycles", 1, 65_535),
    Rule::int("nohum_cycles", 1, 65_535),
    Rule::int("mains_lost_cycles", 1, 65_535),
    Rule::float("track_min_codes", 0.0, 10_000.0),
    Rule::float("on_noise", 0.5, 1000.0),
    Rule::float("off_noise", 0.0, 1000.0),
    Rule::float("on_ratio", 1.01, 1000.0),
    Rule::float("off_ratio", 1.0, 1000.0),
    Rule::float("floor_codes", 0.0, 10_000.0),
    Rule::float("level_step_db", 0.5, 20.0),
    Rule::float("level_hysteresis_db", 0.0, 20.0),
    Rule::float("ambient_ratio", 1.05, 100.0),
    Rule::float("nohum_codes", 0.0, 10_000.0),
];

/// `f32` fields that must stay strictly below another, as indices into
/// [`RULES`] (checked by a unit test): `off_noise` < `on_noise`,
/// `off_ratio` < `on_ratio`,
/// `level_hysteresis_db` < `level_step_db`.
const BELOW: [(usize, usize); 3] = [(17, 16), (19, 18), (22, 21)];

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
        for (small, big) in BELOW {
            assert!(small >= INT_RULES && big >= INT_RULES);
            let pair = (names[small], names[big]);
            assert!(
                [
                    ("off_noise", "on_noise"),
                    ("off_ratio", "on_ratio"),
                    ("level_hysteresis_db", "level_step_db"),
                ]
                .contains(&pair),
                "{pair:?}"
            );
        }
        // Integer rules first, then the f32 fields.
        assert_eq!(names[INT_RULES - 1], "mains_lost_cycles");
        assert_eq!(names[INT_RULES], "track_min_codes");
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
}
