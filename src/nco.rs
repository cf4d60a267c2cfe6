//! Numerically controlled oscillator: the phase format and the sine table.
//!
//! The phase is a `u32` in turns (2^32 = one turn). Its top nine bits pick
//! one of 512 phase bins per turn; the table holds the Q14 sine at the
//! centre of each bin for three quarters of a turn (384 entries, 768 bytes
//! of flash): the sine is odd about half a turn, so bin `k ≥ 256` is bin
//! `k − 256` negated, and the cosine of bin `k` is entry `k + 128` with no
//! wrap-around. The demodulator applies the half turn's sign to the pair
//! value rather than to both table values ([`phase_ref`]): a shift, a mask,
//! an address and two loads a pair, no division, no float, no search. On
//! the targets with `smlawb`/`smlawt` a packed table of the whole turn is
//! read instead (one word a bin, [`PACKED_Q14`]).
//!
//! Truncating the phase to 9 bits leaves at most half a table step
//! (π/512 rad) of phase error in the reference (the table holds bin
//! centres, so the error has zero mean). For the fundamental that costs
//! nothing measurable (a uniform phase error of ±π/512 scales the
//! amplitude by 1 − (π/512)²/6, 6·10⁻⁶); it lets a strong fundamental
//! through into the optional harmonic bins by up to A₁·π/512 (tested). The
//! layout is a trade of Cortex-M0 flash against cycles: one and a quarter
//! turns (1.25 KiB) needed no sign; the half-turn fold saves 512 bytes for
//! about 3.5 instructions a sample on the M0 (measured, 1 channel: 54.4
//! against 50.9).
//!
//! Q14 (peak 16 383) rather than Q15 keeps the product of a pair sum of
//! 16-bit samples less its DC (at most 131 070 in magnitude) and a table
//! value inside `i32`: 131 070 · 16 383 < 2^31. The table's own rounding
//! (±½ in 16 383) is far below the phase quantisation.

/// Phase bins per turn.
pub const TABLE_LEN: usize = 512;
const INDEX_SHIFT: u32 = 23;
const QUARTER: usize = TABLE_LEN / 4;
const HALF: usize = TABLE_LEN / 2;
/// Entries stored: three quarters of a turn.
pub const TABLE_ENTRIES: usize = HALF + QUARTER;
/// Peak value of the table (the Q14 "one", less one LSB).
pub const TABLE_PEAK: i32 = 16_383;

/// Q14 sine at the centre of each of 512 phase bins per turn, over three
/// quarters of a turn: `SINE_Q14[k] = round(16383 · sin(2π(k + ½)/512))`
/// for k = 0..384. The second half turn is the first negated (the table is
/// exactly odd about half a turn: `sin(x + π) = −sin x`, and rounding to
/// nearest is symmetric), and the cosine of bin `k` is entry `k + 128`.
///
/// Indexing by the truncated phase therefore returns the sine at the middle
/// of the bin the phase falls in: the reference has no phase bias, only a
/// uniform error of at most ±π/512 rad.
// Indexing in a constant: it is evaluated by the compiler, so an index out
// of range would fail the build, never run.
#[allow(clippy::indexing_slicing)]
pub const SINE_Q14: [i16; TABLE_ENTRIES] = {
    let mut t = [0i16; TABLE_ENTRIES];
    let mut k = 0;
    while k < TABLE_ENTRIES {
        t[k] = SINE_TURN_Q14[k];
        k += 1;
    }
    t
};

/// The sine of the 512 bins of one turn (see [`SINE_Q14`]).
#[rustfmt::skip]
const SINE_TURN_Q14: [i16; TABLE_LEN] = [
    101, 302, 503, 703, 904, 1105, 1305, 1506, 1706, 1906, 2105, 2304, 2503, 2702, 2900, 3098,
    3295, 3491, 3688, 3883, 4078, 4273, 4466, 4659, 4852, 5044, 5234, 5425, 5614, 5802, 5990, 6177,
    6362, 6547, 6731, 6914, 7095, 7276, 7456, 7634, 7811, 7988, 8162, 8336, 8509, 8680, 8850, 9018,
    9185, 9351, 9515, 9678, 9840, 10000, 10158, 10315, 10471, 10625, 10777, 10927, 11076, 11224, 11369, 11513,
    11655, 11796, 11934, 12071, 12206, 12339, 12471, 12600, 12728, 12853, 12977, 13099, 13219, 13336, 13452, 13566,
    13678, 13787, 13895, 14000, 14104, 14205, 14304, 14401, 14496, 14588, 14679, 14767, 14853, 14936, 15018, 15097,
    15174, 15249, 15321, 15391, 15459, 15524, 15587, 15648, 15706, 15762, 15816, 15867, 15916, 15963, 16007, 16048,
    16088, 16124, 16159, 16191, 16220, 16247, 16272, 16294, 16314, 16331, 16346, 16358, 16368, 16375, 16380, 16383,
    16383, 16380, 16375, 16368, 16358, 16346, 16331, 16314, 16294, 16272, 16247, 16220, 16191, 16159, 16124, 16088,
    16048, 16007, 15963, 15916, 15867, 15816, 15762, 15706, 15648, 15587, 15524, 15459, 15391, 15321, 15249, 15174,
    15097, 15018, 14936, 14853, 14767, 14679, 14588, 14496, 14401, 14304, 14205, 14104, 14000, 13895, 13787, 13678,
    13566, 13452, 13336, 13219, 13099, 12977, 12853, 12728, 12600, 12471, 12339, 12206, 12071, 11934, 11796, 11655,
    11513, 11369, 11224, 11076, 10927, 10777, 10625, 10471, 10315, 10158, 10000, 9840, 9678, 9515, 9351, 9185,
    9018, 8850, 8680, 8509, 8336, 8162, 7988, 7811, 7634, 7456, 7276, 7095, 6914, 6731, 6547, 6362,
    6177, 5990, 5802, 5614, 5425, 5234, 5044, 4852, 4659, 4466, 4273, 4078, 3883, 3688, 3491, 3295,
    3098, 2900, 2702, 2503, 2304, 2105, 1906, 1706, 1506, 1305, 1105, 904, 703, 503, 302, 101,
    -101, -302, -503, -703, -904, -1105, -1305, -1506, -1706, -1906, -2105, -2304, -2503, -2702, -2900, -3098,
    -3295, -3491, -3688, -3883, -4078, -4273, -4466, -4659, -4852, -5044, -5234, -5425, -5614, -5802, -5990, -6177,
    -6362, -6547, -6731, -6914, -7095, -7276, -7456, -7634, -7811, -7988, -8162, -8336, -8509, -8680, -8850, -9018,
    -9185, -9351, -9515, -9678, -9840, -10000, -10158, -10315, -10471, -10625, -10777, -10927, -11076, -11224, -11369, -11513,
    -11655, -11796, -11934, -12071, -12206, -12339, -12471, -12600, -12728, -12853, -12977, -13099, -13219, -13336, -13452, -13566,
    -13678, -13787, -13895, -14000, -14104, -14205, -14304, -14401, -14496, -14588, -14679, -14767, -14853, -14936, -15018, -15097,
    -15174, -15249, -15321, -15391, -15459, -15524, -15587, -15648, -15706, -15762, -15816, -15867, -15916, -15963, -16007, -16048,
    -16088, -16124, -16159, -16191, -16220, -16247, -16272, -16294, -16314, -16331, -16346, -16358, -16368, -16375, -16380, -16383,
    -16383, -16380, -16375, -16368, -16358, -16346, -16331, -16314, -16294, -16272, -16247, -16220, -16191, -16159, -16124, -16088,
    -16048, -16007, -15963, -15916, -15867, -15816, -15762, -15706, -15648, -15587, -15524, -15459, -15391, -15321, -15249, -15174,
    -15097, -15018, -14936, -14853, -14767, -14679, -14588, -14496, -14401, -14304, -14205, -14104, -14000, -13895, -13787, -13678,
    -13566, -13452, -13336, -13219, -13099, -12977, -12853, -12728, -12600, -12471, -12339, -12206, -12071, -11934, -11796, -11655,
    -11513, -11369, -11224, -11076, -10927, -10777, -10625, -10471, -10315, -10158, -10000, -9840, -9678, -9515, -9351, -9185,
    -9018, -8850, -8680, -8509, -8336, -8162, -7988, -7811, -7634, -7456, -7276, -7095, -6914, -6731, -6547, -6362,
    -6177, -5990, -5802, -5614, -5425, -5234, -5044, -4852, -4659, -4466, -4273, -4078, -3883, -3688, -3491, -3295,
    -3098, -2900, -2702, -2503, -2304, -2105, -1906, -1706, -1506, -1305, -1105, -904, -703, -503, -302, -101,
];

/// Whether [`ref_q14`] reads [`PACKED_Q14`] (one 32-bit load a phase)
/// rather than two entries of [`SINE_Q14`]: on the targets whose
/// demodulator multiplies by a halfword of a register (`smlawb`/`smlawt`,
/// see [`crate::demod::WIDE_MAC`]). The values are the same either way.
pub const PACKED: bool = cfg!(humsense_dsp);

/// The table's sine and cosine of one phase bin in one word: the cosine in
/// the low half, the sine in the high half (each a two's-complement Q14
/// value).
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct RefQ14(u32);

impl RefQ14 {
    /// Packs a sine and a cosine.
    #[inline(always)]
    pub const fn new(sin: i16, cos: i16) -> Self {
        Self((cos as u16 as u32) | ((sin as u16 as u32) << 16))
    }

    /// The sine, Q14.
    #[inline(always)]
    pub const fn sin(self) -> i16 {
        (self.0 >> 16) as i16
    }

    /// The cosine, Q14.
    #[inline(always)]
    pub const fn cos(self) -> i16 {
        self.0 as i16
    }

    /// The packed word: cosine in bits 0..16, sine in bits 16..32.
    #[inline(always)]
    pub const fn bits(self) -> u32 {
        self.0
    }
}

/// [`SINE_Q14`] packed by phase bin: `PACKED_Q14[k]` is
/// `RefQ14::new(sin_k, cos_k)` (entries `k` and `k + 128`), 512 words
/// (2 KiB; the linker keeps only the table a target reads).
// Indexing in a constant: it is evaluated by the compiler, so an index out
// of range would fail the build, never run.
#[allow(clippy::indexing_slicing)]
pub const PACKED_Q14: [RefQ14; TABLE_LEN] = {
    let mut t = [RefQ14(0); TABLE_LEN];
    let mut k = 0;
    while k < TABLE_LEN {
        t[k] = RefQ14::new(SINE_TURN_Q14[k], SINE_TURN_Q14[(k + QUARTER) % TABLE_LEN]);
        k += 1;
    }
    t
};

/// The reference at `phase`: [`sin_cos_q14`] as one [`RefQ14`], from
/// [`PACKED_Q14`] where [`PACKED`] holds.
#[inline(always)]
pub fn ref_q14(phase: u32) -> RefQ14 {
    if PACKED {
        let k = (phase >> INDEX_SHIFT) as usize;
        // `k < 512` by construction: the fallback is never taken and the
        // check is removed.
        match PACKED_Q14.get(k) {
            Some(r) => *r,
            None => RefQ14(0),
        }
    } else {
        let (s, c) = sin_cos_q14(phase);
        RefQ14::new(s, c)
    }
}

/// What the demodulator multiplies a pair by: a table word and the sign of
/// the half turn, applied to the pair value rather than to both table
/// values (one negation instead of two; `(−x)·t = x·(−t)` exactly).
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct PhaseRef {
    /// The sine and cosine, of the phase folded into the first half turn
    /// (of the phase itself where [`PACKED`] holds).
    pub table: RefQ14,
    /// 0, or −1 (all ones) where the pair value is to be negated.
    pub neg: i32,
}

impl PhaseRef {
    /// `x` with the half turn's sign: `x` or `−x` (`x` above `i32::MIN`).
    #[inline(always)]
    pub const fn signed(self, x: i32) -> i32 {
        (x ^ self.neg).wrapping_sub(self.neg)
    }
}

/// The demodulator's reference at `phase`: `x · ref_q14(phase)` equals
/// `phase_ref(phase).signed(x) · phase_ref(phase).table`, halfword by
/// halfword. Where [`PACKED`] holds, the packed word and no sign (the
/// negation compiles away); elsewhere the folded entries of [`SINE_Q14`]
/// and the sign of the second half turn (a shift, a mask and two loads).
#[inline(always)]
pub fn phase_ref(phase: u32) -> PhaseRef {
    if PACKED {
        return PhaseRef {
            table: ref_q14(phase),
            neg: 0,
        };
    }
    let j = ((phase << 1) >> (INDEX_SHIFT + 1)) as usize;
    // `j < 256` and `j + 128 < 384` by construction, so the fallbacks are
    // never taken and the compiler removes the checks.
    let s = match SINE_Q14.get(j) {
        Some(v) => *v,
        None => 0,
    };
    let c = match SINE_Q14.get(j + QUARTER) {
        Some(v) => *v,
        None => 0,
    };
    PhaseRef {
        table: RefQ14::new(s, c),
        neg: (phase as i32) >> 31,
    }
}

/// Sine and cosine of a `u32` phase in Q14 (16 383 = +1.0) of bin
/// `k = phase >> 23`: entries `j` and `j + 128` of the table for
/// `j = k mod 256`, negated in the second half turn (`k ≥ 256`).
#[inline(always)]
pub fn sin_cos_q14(phase: u32) -> (i16, i16) {
    let j = ((phase << 1) >> (INDEX_SHIFT + 1)) as usize;
    // 0 in the first half turn, −1 (all ones) in the second: `(v ^ m) − m`
    // is `v` or `−v` (no entry is −32 768).
    let m = ((phase as i32) >> 31) as i16;
    // `j < 256` and `j + 128 < 384` by construction, so the fallbacks are
    // never taken and the compiler removes the checks.
    let s = match SINE_Q14.get(j) {
        Some(v) => *v,
        None => 0,
    };
    let c = match SINE_Q14.get(j + QUARTER) {
        Some(v) => *v,
        None => 0,
    };
    ((s ^ m).wrapping_sub(m), (c ^ m).wrapping_sub(m))
}

#[cfg(test)]
mod tests {
    extern crate std;
    use super::*;

    #[test]
    fn table_matches_std_sine() {
        // Reference: the standard library's f64 sine, rounded to Q14.
        for (k, v) in SINE_Q14.iter().enumerate() {
            let want =
                (16383.0 * (core::f64::consts::TAU * (k as f64 + 0.5) / 512.0).sin()).round();
            assert_eq!(f64::from(*v), want, "entry {k}");
        }
    }

    #[test]
    fn every_bin_against_std_sine_and_cosine() {
        // Reference: std's f64 sin/cos at each bin centre, at both ends of
        // every bin, over the full turn.
        for k in 0..TABLE_LEN as u32 {
            let centre = core::f64::consts::TAU * (f64::from(k) + 0.5) / 512.0;
            for phase in [k << INDEX_SHIFT, (k << INDEX_SHIFT) | 0x7f_ffff] {
                let (s, c) = sin_cos_q14(phase);
                assert_eq!(
                    f64::from(s),
                    (16383.0 * centre.sin()).round(),
                    "sin bin {k}"
                );
                assert_eq!(
                    f64::from(c),
                    (16383.0 * centre.cos()).round(),
                    "cos bin {k}"
                );
            }
        }
    }

    #[test]
    fn packed_reference_matches_the_table() {
        // The packed table and the halfword accessors against the two
        // table reads, at both ends of every bin.
        for k in 0..TABLE_LEN as u32 {
            for phase in [k << INDEX_SHIFT, (k << INDEX_SHIFT) | 0x7f_ffff] {
                let (s, c) = sin_cos_q14(phase);
                let r = ref_q14(phase);
                assert_eq!((r.sin(), r.cos()), (s, c), "bin {k}");
                assert_eq!(PACKED_Q14[k as usize], RefQ14::new(s, c), "bin {k}");
            }
        }
        assert_eq!(RefQ14::new(-1, 2).bits(), 0xffff_0002);
    }

    #[test]
    fn phase_ref_is_the_reference_with_the_sign_on_the_pair() {
        // Every bin, both ends, against the full-turn reference: the
        // products are equal as integers (identity of integer arithmetic).
        for k in 0..TABLE_LEN as u32 {
            for phase in [k << INDEX_SHIFT, (k << INDEX_SHIFT) | 0x7f_ffff] {
                let r = ref_q14(phase);
                let p = phase_ref(phase);
                for x in [-131_070, -1, 0, 1, 977, 131_070] {
                    let x = x << 6;
                    assert_eq!(
                        i64::from(p.signed(x)) * i64::from(p.table.sin()),
                        i64::from(x) * i64::from(r.sin()),
                        "sin bin {k}"
                    );
                    assert_eq!(
                        i64::from(p.signed(x)) * i64::from(p.table.cos()),
                        i64::from(x) * i64::from(r.cos()),
                        "cos bin {k}"
                    );
                }
            }
        }
    }

    #[test]
    fn quadrature_lookup() {
        // Bin 0 is centred on half a step: sin(π/512) and cos(π/512).
        assert_eq!(sin_cos_q14(0), (101, 16383));
        assert_eq!(sin_cos_q14(1 << 30).0, 16383);
        assert_eq!(sin_cos_q14(1 << 31).1, -16383);
        // The last bin before the wrap: sin(−π/512), cos(−π/512).
        assert_eq!(sin_cos_q14(u32::MAX), (-101, 16383));
    }
}
