//! Events: what the detector reports, on which channel, when, how strong.

/// What happened.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
#[non_exhaustive]
pub enum EventKind {
    /// Touch profile: a touch began (the hum rose above the on threshold for
    /// `debounce_on` cycles).
    TouchOn,
    /// Touch profile: the touch ended, or the channel was active longer than
    /// `max_active_cycles` and its baseline re-learnt.
    TouchOff,
    /// Field profile: a field source came within range.
    FieldOn,
    /// Field profile: the field fell back below the off threshold.
    FieldOff,
    /// Field profile: the graded strength level changed while on
    /// (1 = just above the on threshold, up to `levels`).
    Level(u8),
}

impl EventKind {
    /// The name used in logs and replay output (`touch-on`, `level`, …).
    pub const fn name(&self) -> &'static str {
        match self {
            Self::TouchOn => "touch-on",
            Self::TouchOff => "touch-off",
            Self::FieldOn => "field-on",
            Self::FieldOff => "field-off",
            Self::Level(_) => "level",
        }
    }
}

/// One event. Small and `Copy`; comes back from the call that caused it.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
#[non_exhaustive]
pub struct Event {
    /// Channel index, 0-based, in the order of the interleaved input.
    pub channel: u8,
    /// What happened.
    pub kind: EventKind,
    /// Index (0-based, per channel) of the sample that completed the mains
    /// cycle on which the event was decided.
    pub sample: u64,
    /// Amplitude of the hum on that cycle, Q8 ADC codes (256 = 1 code).
    pub amplitude_q8: u32,
    /// Baseline at that time, Q8 ADC codes.
    pub baseline_q8: u32,
}

impl Event {
    /// Strength in dB above the baseline, `20·log10(amplitude / baseline)`,
    /// computed with `micromath` (within about 0.01 dB; for display).
    /// Returns 0 when either is zero.
    pub fn strength_db(&self) -> f32 {
        if self.amplitude_q8 == 0 || self.baseline_q8 == 0 {
            return 0.0;
        }
        let r = self.amplitude_q8 as f32 / self.baseline_q8 as f32;
        20.0 * micromath::F32Ext::log10(r)
    }
}
