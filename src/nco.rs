//! Numerically controlled oscillator: the phase format and the sine table.
//!
//! The phase is a `u32` in turns (2^32 = one turn). Its top ten bits pick
//! one of 1024 phase bins per turn; the table holds the Q14 sine at the
//! centre of each bin for three quarters of a turn (768 entries, 1.5 KiB of
//! flash). A half turn later sine and cosine both change sign, so for a
//! phase `θ` with bin `k` (`0 ≤ k < 1024`):
//!
//! `sin θ ≈ σ · T[k mod 512]`, `cos θ ≈ σ · T[k mod 512 + 256]`,
//! `σ = −1` when `θ ≥ ½ turn` (the phase's top bit), else `+1`.
//!
//! A sine/cosine pair is a bit-field extract, two loads and the sign from
//! the top bit; the demodulator applies `σ` to its input sample instead of
//! to both table values ([`half_turn`]). No division, no float, no search.
//! (One and a quarter turns would save the sign at 1 KiB more flash.)
//!
//! Truncating the phase to 10 bits leaves at most half a table step
//! (π/1024 rad) of phase error in the reference (the table holds bin
//! centres, so the error has zero mean). A 256-entry table was tried first:
//! its ±π/256 steps, in some alignments of the sampling pattern, moved the
//! harmonic bins by 0.3 % next to a strong fundamental; ten bits bring that
//! below 0.05 %.
//!
//! Q14 (peak 16 383) rather than Q15 keeps the product of a pair sum of
//! 16-bit samples less its DC (at most 131 070 in magnitude) and a table
//! value inside `i32`: 131 070 · 16 383 < 2^31. The table's own rounding
//! (±½ in 16 383) is far below the phase quantisation.

/// Phase bins per turn.
pub const TABLE_LEN: usize = 1024;
const INDEX_SHIFT: u32 = 22;
const QUARTER: usize = 256;
const HALF: u32 = 512;
/// Entries stored: three quarters of a turn.
pub const TABLE_ENTRIES: usize = 768;
/// Peak value of the table (the Q14 "one", less one LSB).
pub const TABLE_PEAK: i32 = 16_383;

/// Q14 sine at the centre of each of 1024 phase bins per turn, over three
/// quarters of a turn: `SINE_Q14[k] = round(16383 · sin(2π(k + ½)/1024))`
/// for k = 0..768.
///
/// Indexing by the truncated phase therefore returns the sine at the middle
/// of the bin the phase falls in: the reference has no phase bias, only a
/// uniform error of at most ±π/1024 rad.
#[rustfmt::skip]
pub const SINE_Q14: [i16; TABLE_ENTRIES] = [
    50, 151, 251, 352, 452, 553, 653, 754, 854, 954, 1055, 1155, 1255, 1356, 1456, 1556,
    1656, 1756, 1856, 1956, 2055, 2155, 2255, 2354, 2454, 2553, 2652, 2751, 2850, 2949, 3048, 3147,
    3245, 3344, 3442, 3540, 3639, 3737, 3834, 3932, 4029, 4127, 4224, 4321, 4418, 4515, 4611, 4708,
    4804, 4900, 4996, 5091, 5187, 5282, 5377, 5472, 5567, 5661, 5755, 5849, 5943, 6037, 6130, 6223,
    6316, 6409, 6501, 6593, 6685, 6777, 6868, 6959, 7050, 7141, 7231, 7321, 7411, 7500, 7590, 7679,
    7767, 7856, 7944, 8031, 8119, 8206, 8293, 8379, 8466, 8552, 8637, 8722, 8807, 8892, 8976, 9060,
    9144, 9227, 9310, 9392, 9475, 9556, 9638, 9719, 9800, 9880, 9960, 10040, 10119, 10198, 10276, 10354,
    10432, 10509, 10586, 10663, 10739, 10815, 10890, 10965, 11039, 11113, 11187, 11260, 11333, 11405, 11477, 11549,
    11620, 11691, 11761, 11831, 11900, 11969, 12037, 12105, 12173, 12240, 12306, 12372, 12438, 12503, 12568, 12632,
    12696, 12759, 12822, 12884, 12946, 13008, 13069, 13129, 13189, 13248, 13307, 13365, 13423, 13481, 13538, 13594,
    13650, 13705, 13760, 13814, 13868, 13921, 13974, 14026, 14078, 14129, 14180, 14230, 14279, 14328, 14377, 14425,
    14472, 14519, 14565, 14611, 14656, 14701, 14745, 14788, 14831, 14874, 14916, 14957, 14998, 15038, 15078, 15117,
    15155, 15193, 15230, 15267, 15303, 15339, 15374, 15408, 15442, 15475, 15508, 15540, 15572, 15603, 15633, 15663,
    15692, 15721, 15749, 15776, 15803, 15829, 15855, 15880, 15904, 15928, 15951, 15974, 15996, 16017, 16038, 16058,
    16078, 16097, 16115, 16133, 16150, 16167, 16183, 16198, 16213, 16227, 16241, 16254, 16266, 16278, 16289, 16299,
    16309, 16318, 16327, 16335, 16342, 16349, 16355, 16361, 16366, 16370, 16374, 16377, 16379, 16381, 16382, 16383,
    16383, 16382, 16381, 16379, 16377, 16374, 16370, 16366, 16361, 16355, 16349, 16342, 16335, 16327, 16318, 16309,
    16299, 16289, 16278, 16266, 16254, 16241, 16227, 16213, 16198, 16183, 16167, 16150, 16133, 16115, 16097, 16078,
    16058, 16038, 16017, 15996, 15974, 15951, 15928, 15904, 15880, 15855, 15829, 15803, 15776, 15749, 15721, 15692,
    15663, 15633, 15603, 15572, 15540, 15508, 15475, 15442, 15408, 15374, 15339, 15303, 15267, 15230, 15193, 15155,
    15117, 15078, 15038, 14998, 14957, 14916, 14874, 14831, 14788, 14745, 14701, 14656, 14611, 14565, 14519, 14472,
    14425, 14377, 14328, 14279, 14230, 14180, 14129, 14078, 14026, 13974, 13921, 13868, 13814, 13760, 13705, 13650,
    13594, 13538, 13481, 13423, 13365, 13307, 13248, 13189, 13129, 13069, 13008, 12946, 12884, 12822, 12759, 12696,
    12632, 12568, 12503, 12438, 12372, 12306, 12240, 12173, 12105, 12037, 11969, 11900, 11831, 11761, 11691, 11620,
    11549, 11477, 11405, 11333, 11260, 11187, 11113, 11039, 10965, 10890, 10815, 10739, 10663, 10586, 10509, 10432,
    10354, 10276, 10198, 10119, 10040, 9960, 9880, 9800, 9719, 9638, 9556, 9475, 9392, 9310, 9227, 9144,
    9060, 8976, 8892, 8807, 8722, 8637, 8552, 8466, 8379, 8293, 8206, 8119, 8031, 7944, 7856, 7767,
    7679, 7590, 7500, 7411, 7321, 7231, 7141, 7050, 6959, 6868, 6777, 6685, 6593, 6501, 6409, 6316,
    6223, 6130, 6037, 5943, 5849, 5755, 5661, 5567, 5472, 5377, 5282, 5187, 5091, 4996, 4900, 4804,
    4708, 4611, 4515, 4418, 4321, 4224, 4127, 4029, 3932, 3834, 3737, 3639, 3540, 3442, 3344, 3245,
    3147, 3048, 2949, 2850, 2751, 2652, 2553, 2454, 2354, 2255, 2155, 2055, 1956, 1856, 1756, 1656,
    1556, 1456, 1356, 1255, 1155, 1055, 954, 854, 754, 653, 553, 452, 352, 251, 151, 50,
    -50, -151, -251, -352, -452, -553, -653, -754, -854, -954, -1055, -1155, -1255, -1356, -1456, -1556,
    -1656, -1756, -1856, -1956, -2055, -2155, -2255, -2354, -2454, -2553, -2652, -2751, -2850, -2949, -3048, -3147,
    -3245, -3344, -3442, -3540, -3639, -3737, -3834, -3932, -4029, -4127, -4224, -4321, -4418, -4515, -4611, -4708,
    -4804, -4900, -4996, -5091, -5187, -5282, -5377, -5472, -5567, -5661, -5755, -5849, -5943, -6037, -6130, -6223,
    -6316, -6409, -6501, -6593, -6685, -6777, -6868, -6959, -7050, -7141, -7231, -7321, -7411, -7500, -7590, -7679,
    -7767, -7856, -7944, -8031, -8119, -8206, -8293, -8379, -8466, -8552, -8637, -8722, -8807, -8892, -8976, -9060,
    -9144, -9227, -9310, -9392, -9475, -9556, -9638, -9719, -9800, -9880, -9960, -10040, -10119, -10198, -10276, -10354,
    -10432, -10509, -10586, -10663, -10739, -10815, -10890, -10965, -11039, -11113, -11187, -11260, -11333, -11405, -11477, -11549,
    -11620, -11691, -11761, -11831, -11900, -11969, -12037, -12105, -12173, -12240, -12306, -12372, -12438, -12503, -12568, -12632,
    -12696, -12759, -12822, -12884, -12946, -13008, -13069, -13129, -13189, -13248, -13307, -13365, -13423, -13481, -13538, -13594,
    -13650, -13705, -13760, -13814, -13868, -13921, -13974, -14026, -14078, -14129, -14180, -14230, -14279, -14328, -14377, -14425,
    -14472, -14519, -14565, -14611, -14656, -14701, -14745, -14788, -14831, -14874, -14916, -14957, -14998, -15038, -15078, -15117,
    -15155, -15193, -15230, -15267, -15303, -15339, -15374, -15408, -15442, -15475, -15508, -15540, -15572, -15603, -15633, -15663,
    -15692, -15721, -15749, -15776, -15803, -15829, -15855, -15880, -15904, -15928, -15951, -15974, -15996, -16017, -16038, -16058,
    -16078, -16097, -16115, -16133, -16150, -16167, -16183, -16198, -16213, -16227, -16241, -16254, -16266, -16278, -16289, -16299,
    -16309, -16318, -16327, -16335, -16342, -16349, -16355, -16361, -16366, -16370, -16374, -16377, -16379, -16381, -16382, -16383,
];

/// Table sine and cosine of the half turn `phase` falls in, and the sign
/// of that half turn as a mask (`0` for the first half, `−1` for the
/// second): `sin θ = (s ^ m) − m` and `cos θ = (c ^ m) − m` in Q14. The
/// hot loops apply the mask to their sample instead (one sign change for
/// both products).
#[inline(always)]
pub fn half_turn(phase: u32) -> (i16, i16, i32) {
    let k = ((phase >> INDEX_SHIFT) & (HALF - 1)) as usize;
    // `k < 512` and `k + 256 < 768` by construction, so the fallbacks are
    // never taken and the compiler removes the checks.
    let s = match SINE_Q14.get(k) {
        Some(v) => *v,
        None => 0,
    };
    let c = match SINE_Q14.get(k + QUARTER) {
        Some(v) => *v,
        None => 0,
    };
    (s, c, (phase as i32) >> 31)
}

/// Sine and cosine of a `u32` phase in Q14 (16 383 = +1.0), from the
/// table.
#[inline(always)]
pub fn sin_cos_q14(phase: u32) -> (i16, i16) {
    let (s, c, m) = half_turn(phase);
    // `m` is 0 or −1 and |s|, |c| ≤ 16 383: no overflow.
    let m = m as i16;
    ((s ^ m) - m, (c ^ m) - m)
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
                (16383.0 * (core::f64::consts::TAU * (k as f64 + 0.5) / 1024.0).sin()).round();
            assert_eq!(f64::from(*v), want, "entry {k}");
        }
    }

    #[test]
    fn every_bin_against_std_sine_and_cosine() {
        // Reference: std's f64 sin/cos at each bin centre, over the full
        // turn (the second half through the sign rule).
        for k in 0..TABLE_LEN as u32 {
            let centre = core::f64::consts::TAU * (f64::from(k) + 0.5) / 1024.0;
            for phase in [k << INDEX_SHIFT, (k << INDEX_SHIFT) | 0x3f_ffff] {
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
    fn quadrature_lookup() {
        // Bin 0 is centred on half a step: sin(π/1024) and cos(π/1024).
        assert_eq!(sin_cos_q14(0), (50, 16383));
        assert_eq!(sin_cos_q14(1 << 30).0, 16383);
        assert_eq!(sin_cos_q14(1 << 31).1, -16383);
        // The last bin before the wrap: sin(−π/1024), cos(−π/1024).
        assert_eq!(sin_cos_q14(u32::MAX), (-50, 16383));
        assert_eq!(half_turn(u32::MAX).2, -1);
        assert_eq!(half_turn(0x7fff_ffff).2, 0);
    }
}
