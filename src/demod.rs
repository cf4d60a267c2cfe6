//! Mains-cycle-synchronous quadrature demodulation (lock-in at the mains
//! fundamental and, optionally, its harmonics).
//!
//! Per sample (integer only, no division, no clamp), with codes in offset
//! binary (`u16`):
//!
//! `xc[n] = x[n] − dc` (|xc| ≤ 65 535),
//! `I += (xc[n] · cos(θ[n])) >> 11`, `Q += (xc[n] · sin(θ[n])) >> 11`
//! (Q15 table values, arithmetic shift: floor; see [`PRODUCT_SHIFT`]), and
//! for harmonic h the same with `h·θ[n]`; `S += x[n]`.
//!
//! `θ[n]` is the shared oscillator phase; a cycle ends when it wraps, so
//! every window spans one whole turn of the reference at any sample rate.
//! At the end of a cycle of `n` samples (once per cycle), with the
//! reciprocal `r = ⌊(2^32 − 1) / n⌋` (one division, only when `n` changes:
//! see [`reciprocal`]):
//!
//! `i = ((I + ⌊n/2⌋) · r + 2^26) >> 27` (that is `32·I/n`), the same for
//! `q`, scaled to Q8 ADC codes, so that a sinusoid `A·cos(θ + φ)` gives
//! `i = A·cos φ`, `q = −A·sin φ` (amplitude in codes, 256 = 1 code); the
//! `⌊n/2⌋` returns the mean of the per-sample floors (half a unit each).
//! `dc = (S · r + 2^31) >> 32` (the rounded mean, within 1/32 code) for
//! the next cycle. The first cycle uses the mid-scale code as its DC.

use crate::fixed::{mul_wide, mul_wide_signed};
use crate::nco::sin_cos_q15;

/// One quadrature pair, Q8 ADC codes of amplitude.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Iq {
    /// In-phase component (correlation with the cosine reference).
    pub i: i32,
    /// Quadrature component (correlation with the sine reference).
    pub q: i32,
}

impl Iq {
    /// Squared magnitude, `i² + q²` (Q16 codes²), exact.
    pub const fn power(&self) -> u64 {
        let i = self.i.unsigned_abs();
        let q = self.q.unsigned_abs();
        // Each square is at most 2^62, so the sum cannot overflow.
        mul_wide(i, i) + mul_wide(q, q)
    }
}

/// Right shift of every product before it is summed (arithmetic: floor).
///
/// The longest cycle a validated config allows is 50 000 Hz / 44 Hz + 2 =
/// 1 138 samples; 65 535 · 32 767 · 1 138 < 2^31 · 2^11, so eleven bits
/// keep any cycle's sum of any `u16` codes inside `i32`. A constant lets
/// the shift fold into the add on Cortex-M3/M4 (`add r, r, p, asr #11`).
/// The floor costs a uniform error in [0, 1) units (of 2^11 codes·Q15) per
/// product; its mean of ½ is added back at the cycle end (`⌊n/2⌋`), which
/// leaves the same error as rounding every product: 2^11 · 2 / (32 767 ·
/// √(12 n)) codes of amplitude, 0.006 codes at 40 samples a cycle, 0.001 at
/// 1 000 — below the quantisation noise of the ADC itself (0.29 codes per
/// sample, 0.065 codes of amplitude at 40 samples a cycle).
pub const PRODUCT_SHIFT: u32 = 11;

/// `⌊(2^32 − 1) / n⌋`, the per-cycle reciprocal of the sample count (0 for
/// `n = 0`). Callers keep it while `n` repeats, so the division runs only
/// when the cycle length changes.
pub const fn reciprocal(n: u32) -> u32 {
    match u32::MAX.checked_div(n) {
        Some(r) => r,
        None => 0,
    }
}

/// Per-channel accumulator state for the fundamental and `H` extra
/// harmonics (orders 2 to H + 1): 14 + 8·H bytes of data.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct DemodState<const H: usize> {
    acc: [i32; 2],
    harm: [[i32; 2]; H],
    /// Sum of the cycle's samples (at most 65 535 · n_max, inside u32).
    sum: u32,
    /// Mean of the previous cycle, offset-binary code.
    dc: u16,
}

/// [`DemodState`] in registers for a run of samples (block path).
#[derive(Clone, Copy, Debug)]
pub struct DemodLane<const H: usize> {
    i: i32,
    q: i32,
    harm: [[i32; 2]; H],
    sum: u32,
    dc: i32,
}

impl<const H: usize> DemodLane<H> {
    /// Accumulates one sample `x` (offset binary, below 2^16) at phase
    /// `phase`, whose table sine and cosine are `s` and `c`.
    #[inline(always)]
    pub fn push(&mut self, x: u32, s: i16, c: i16, phase: u32) {
        let xc = x as i32 - self.dc;
        // |xc · table| ≤ 65 535 · 32 767 < 2^31; the shift keeps the
        // cycle's sum inside i32 (the wrapping add only keeps debug builds
        // panic-free should a cycle ever run longer than n_max).
        self.i = self.i.wrapping_add((xc * i32::from(c)) >> PRODUCT_SHIFT);
        self.q = self.q.wrapping_add((xc * i32::from(s)) >> PRODUCT_SHIFT);
        for (order, [hi, hq]) in (2u32..).zip(self.harm.iter_mut()) {
            let (s, c) = sin_cos_q15(phase.wrapping_mul(order));
            *hi = hi.wrapping_add((xc * i32::from(c)) >> PRODUCT_SHIFT);
            *hq = hq.wrapping_add((xc * i32::from(s)) >> PRODUCT_SHIFT);
        }
        self.sum = self.sum.wrapping_add(x);
    }
}

impl<const H: usize> DemodState<H> {
    /// Empty accumulators with the DC estimate at `mid` (mid-scale).
    pub const fn new(mid: u16) -> Self {
        Self {
            acc: [0; 2],
            harm: [[0; 2]; H],
            sum: 0,
            dc: mid,
        }
    }

    /// Mean of the previous cycle (the input's DC level), offset binary.
    pub const fn dc(&self) -> u16 {
        self.dc
    }

    /// The state in registers, for a run of samples.
    #[inline(always)]
    pub const fn lane(&self) -> DemodLane<H> {
        DemodLane {
            i: self.acc[0],
            q: self.acc[1],
            harm: self.harm,
            sum: self.sum,
            dc: self.dc as i32,
        }
    }

    /// Stores a lane back.
    #[inline(always)]
    pub fn store(&mut self, lane: &DemodLane<H>) {
        self.acc = [lane.i, lane.q];
        self.harm = lane.harm;
        self.sum = lane.sum;
    }

    /// Accumulates one sample `x` at reference phase `phase`.
    #[inline(always)]
    pub fn push(&mut self, x: u16, phase: u32) {
        let mut lane = self.lane();
        let (s, c) = sin_cos_q15(phase);
        lane.push(u32::from(x), s, c, phase);
        self.store(&lane);
    }

    /// Ends a cycle of `n` samples: returns the fundamental and the
    /// harmonic pairs in Q8 codes, updates the DC estimate and clears the
    /// accumulators. `n = 0` returns zeros.
    pub fn end_cycle(&mut self, n: u32) -> (Iq, [Iq; H]) {
        self.end_cycle_with(n, reciprocal(n))
    }

    /// [`end_cycle`](Self::end_cycle) with the reciprocal `recip =
    /// reciprocal(n)` supplied by the caller (computed once for all
    /// channels, and only when `n` changes).
    pub fn end_cycle_with(&mut self, n: u32, recip: u32) -> (Iq, [Iq; H]) {
        let mut harm = [Iq::default(); H];
        if n == 0 {
            return (Iq::default(), harm);
        }
        let bias = (n >> 1) as i32;
        let scale = |acc: i32| -> i32 {
            let v = (mul_wide_signed(acc.wrapping_add(bias), recip) + (1 << 26)) >> 27;
            v.max(i64::from(i32::MIN)).min(i64::from(i32::MAX)) as i32
        };
        let [i, q] = self.acc;
        let fund = Iq {
            i: scale(i),
            q: scale(q),
        };
        for (out, [hi, hq]) in harm.iter_mut().zip(self.harm.iter()) {
            *out = Iq {
                i: scale(*hi),
                q: scale(*hq),
            };
        }
        let mean = (mul_wide(self.sum, recip) + (1 << 31)) >> 32;
        self.dc = if mean > 0xffff { 0xffff } else { mean as u16 };
        self.acc = [0; 2];
        self.harm = [[0; 2]; H];
        self.sum = 0;
        (fund, harm)
    }
}

#[cfg(test)]
mod tests {
    extern crate std;
    use super::*;
    use crate::fixed::phase_step;

    /// Feeds `cycles` whole cycles of `amp·cos(θ + phi) + dc` at 40 samples
    /// per cycle and returns the last cycle's result.
    fn run(amp: f64, phi: f64, dc: f64, cycles: usize) -> (Iq, [Iq; 2]) {
        let step = phase_step(50_000, 2_000);
        let mut d = DemodState::<2>::new(2048);
        let mut phase: u32 = 0;
        let mut out = (Iq::default(), [Iq::default(); 2]);
        for _ in 0..cycles {
            for _ in 0..40 {
                let th = phase as f64 / 4_294_967_296.0 * core::f64::consts::TAU;
                let x = (amp * (th + phi).cos() + dc).round() as u16;
                d.push(x, phase);
                phase = phase.wrapping_add(step);
            }
            out = d.end_cycle(40);
        }
        out
    }

    #[test]
    fn amplitude_and_phase_of_a_bin_centred_sine() {
        let (f, h) = run(1000.0, 0.5, 2048.0, 3);
        let amp = (f.power() as f64).sqrt() / 256.0;
        assert!((amp - 1000.0).abs() < 0.5, "{amp}");
        // i = A cos φ, q = −A sin φ.
        // i = A cos φ, q = −A sin φ, with the phase within the table's
        // half-step of π/1024 rad.
        let phi = -(f.q as f64).atan2(f.i as f64);
        assert!((phi - 0.5).abs() < core::f64::consts::PI / 1024.0, "{phi}");
        // A pure fundamental leaves the harmonic bins (nearly) empty.
        assert!(h.iter().all(|b| b.power() < 256 * 256), "{h:?}");
    }

    #[test]
    fn shift_covers_the_longest_cycle() {
        // 50 kHz at the lowest trackable 44 Hz, plus the wrap sample.
        let n_max = 50_000u64 / 44 + 2;
        assert!(65_535 * 32_767 * n_max < (1u64 << 31) << PRODUCT_SHIFT);
    }

    #[test]
    fn extreme_codes_do_not_overflow() {
        let mut d = DemodState::<2>::new(32_768);
        let step = phase_step(44_000, 50_000);
        let mut phase = 0u32;
        for k in 0..1_140 {
            let x = if k % 2 == 0 { 0 } else { u16::MAX };
            d.push(x, phase);
            phase = phase.wrapping_add(step);
        }
        let (f, _) = d.end_cycle(1_140);
        assert!(f.i.abs() < 1 << 25 && f.q.abs() < 1 << 25);
        assert_eq!(d.end_cycle(0).0, Iq::default());
    }

    #[test]
    fn full_scale_square_wave_at_16_bits_and_50_khz() {
        // A square wave of peak-to-peak S has a fundamental of amplitude
        // (4/π)·S/2 (Fourier series of a square wave, standard).
        let mut d = DemodState::<0>::new(32_768);
        let step = phase_step(50_000, 50_000);
        let mut phase = 0u32;
        let mut last = (Iq::default(), []);
        for _ in 0..3 {
            for _ in 0..1_000 {
                let x = if phase < 1 << 31 { u16::MAX } else { 0 };
                d.push(x, phase);
                phase = phase.wrapping_add(step);
            }
            last = d.end_cycle(1_000);
        }
        let amp = (last.0.power() as f64).sqrt() / 256.0;
        let want = 4.0 / core::f64::consts::PI * 65_535.0 / 2.0;
        assert!((amp - want).abs() < 0.002 * want, "{amp} vs {want}");
    }
}
