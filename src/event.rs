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
    /// A fault began on the channel (see [`Fault`]).
    Fault(Fault),
    /// The fault ended.
    FaultClear(Fault),
    /// The event queue was full and this many events were lost; reported
    /// as soon as space returns, in the place of the lost events.
    /// `channel` is [`Event::ALL_CHANNELS`].
    Overflow(u32),
}

/// What can be wrong with a channel or its mains reference.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
#[non_exhaustive]
pub enum Fault {
    /// The input sits at the top rail, or swings into both rails, for
    /// `fault_saturation_cycles` while the channel is not active. A strong
    /// touch that saturates only while the finger is there is a touch.
    Saturated,
    /// The input does not move (every sample at one code), for
    /// `fault_stuck_cycles` cycles in a row.
    Stuck,
    /// The hum amplitude stayed below `nohum_codes` for `nohum_cycles`
    /// cycles: an open or disconnected electrode.
    NoHum,
    /// The mains tracker has been unlocked for `mains_lost_cycles` cycles.
    MainsLost,
    /// The mains frequency lies outside the configured system's tracking
    /// range (for example a 60 Hz supply with `MainsMode::Hz50`).
    MainsOutOfRange,
    /// The hum's apparent frequency lies outside every mains system: the
    /// configured sample rate disagrees with the real one by more than the
    /// tracker can absorb.
    RateMismatch,
}

impl Fault {
    /// Every fault, in bit order.
    pub const ALL: [Fault; 6] = [
        Fault::Saturated,
        Fault::Stuck,
        Fault::NoHum,
        Fault::MainsLost,
        Fault::MainsOutOfRange,
        Fault::RateMismatch,
    ];

    /// The fault's bit in [`Faults`].
    pub const fn bit(self) -> u8 {
        match self {
            Fault::Saturated => 1 << 0,
            Fault::Stuck => 1 << 1,
            Fault::NoHum => 1 << 2,
            Fault::MainsLost => 1 << 3,
            Fault::MainsOutOfRange => 1 << 4,
            Fault::RateMismatch => 1 << 5,
        }
    }

    /// The name used in logs and replay output (`saturated`, `stuck`, …).
    pub const fn name(self) -> &'static str {
        match self {
            Fault::Saturated => "saturated",
            Fault::Stuck => "stuck",
            Fault::NoHum => "no-hum",
            Fault::MainsLost => "mains-lost",
            Fault::MainsOutOfRange => "mains-out-of-range",
            Fault::RateMismatch => "rate-mismatch",
        }
    }
}

/// A set of [`Fault`]s, one bit each.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Faults(pub u8);

impl Faults {
    /// No fault.
    pub const NONE: Faults = Faults(0);

    /// Whether `f` is in the set.
    pub const fn contains(self, f: Fault) -> bool {
        self.0 & f.bit() != 0
    }

    /// The set with `f` added or removed.
    pub const fn with(self, f: Fault, on: bool) -> Faults {
        if on {
            Faults(self.0 | f.bit())
        } else {
            Faults(self.0 & !f.bit())
        }
    }

    /// Whether the two sets share a fault.
    pub const fn intersects(self, other: Faults) -> bool {
        self.0 & other.0 != 0
    }

    /// Whether the set is empty.
    pub const fn is_empty(self) -> bool {
        self.0 == 0
    }

    /// The first fault in bit order that is in `self` but not in `other`.
    pub fn first_not_in(self, other: Faults) -> Option<Fault> {
        let new = self.0 & !other.0;
        if new == 0 {
            // Nothing to find (every cycle without a change): no search.
            return None;
        }
        // By reference: iterating the array by value would copy it (a
        // `memcpy` call on small cores).
        Fault::ALL.iter().copied().find(|f| new & f.bit() != 0)
    }
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
            Self::Fault(_) => "fault",
            Self::FaultClear(_) => "fault-clear",
            Self::Overflow(_) => "overflow",
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
    /// The `channel` of events that concern no single channel.
    pub const ALL_CHANNELS: u8 = u8::MAX;

    /// An event, for tools that produce or replay them.
    pub const fn new(
        channel: u8,
        kind: EventKind,
        sample: u64,
        amplitude_q8: u32,
        baseline_q8: u32,
    ) -> Self {
        Self {
            channel,
            kind,
            sample,
            amplitude_q8,
            baseline_q8,
        }
    }

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
