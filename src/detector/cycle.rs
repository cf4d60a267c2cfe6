//! The sample types the detector takes and the record its front ends hand
//! to the back end once per mains cycle.

use crate::demod::Iq;
use crate::mains::MainsHealth;

/// An integer ADC sample type the detector accepts.
pub trait AdcSample: Copy {
    /// Whether codes are two's complement around 0 (`i16`) rather than
    /// offset binary from 0 (`u16`); sets the rails for saturation.
    const SIGNED: bool;
    /// The code in offset binary: `u16` as it is, `i16` plus 32 768 (one
    /// instruction: the sign bit flipped). The whole pipeline works on
    /// offset-binary codes.
    fn offset_code(self) -> u16;
}

impl AdcSample for u16 {
    const SIGNED: bool = false;
    #[inline(always)]
    fn offset_code(self) -> u16 {
        self
    }
}

impl AdcSample for i16 {
    const SIGNED: bool = true;
    #[inline(always)]
    fn offset_code(self) -> u16 {
        (self as u16) ^ 0x8000
    }
}

/// What the front end produces at the end of each mains cycle.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Cycle<const N: usize, const H: usize> {
    /// Index of the sample (per channel, 0-based) that completed the cycle.
    pub end_sample: u64,
    /// Samples in the cycle.
    pub samples: u32,
    /// Fundamental I/Q per channel, Q8 codes.
    pub fund: [Iq; N],
    /// Harmonic I/Q per channel (orders 2 to H + 1), Q8 codes.
    pub harm: [[Iq; H]; N],
    /// Mean input level per channel over the cycle, offset-binary codes
    /// (`i16` input plus 32 768).
    pub dc: [u16; N],
    /// Per channel: how far the mean level moved since the previous cycle,
    /// codes. Coupled hum has no DC of its own, so a touch or a field
    /// leaves the mean where it was, while an impulse of area `S` code
    /// samples moves it by `S/n` and the fundamental by at most `2S/n`: a
    /// rise of the amplitude without a move of the mean is hum. The edge
    /// input gives 0, or `u16::MAX` for a window whose amplitude is not its
    /// own measurement (held, or read as the cap).
    pub dc_step: [u16; N],
    /// Per channel: the cycle demodulated to exactly nothing (every group
    /// equal to the DC estimate: an input that does not move).
    pub flat: [bool; N],
    /// Health of the mains reference after this cycle.
    pub health: MainsHealth,
    /// Lowest and highest code of the ADC (the rails) in offset binary, for
    /// saturation.
    pub rails: (u16, u16),
}

impl<const N: usize, const H: usize> Cycle<N, H> {
    /// A cycle of nothing: zero samples, zero I/Q, healthy mains.
    pub const EMPTY: Self = Self {
        end_sample: 0,
        samples: 0,
        fund: [Iq { i: 0, q: 0 }; N],
        harm: [[Iq { i: 0, q: 0 }; H]; N],
        dc: [0; N],
        dc_step: [0; N],
        flat: [false; N],
        health: MainsHealth::Ok,
        rails: (0, 0),
    };
}

/// The rails of a converter of `span` codes (2^bits, bits ≤ 16 in a
/// validated config) in offset binary: from 0, or centred on 32 768 for
/// two's complement codes. Both fit u16.
pub(super) const fn rails(span: u32, signed: bool) -> (u16, u16) {
    let low = if signed { 32_768 - span / 2 } else { 0 };
    (low as u16, (low + span - 1) as u16)
}
