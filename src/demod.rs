//! Mains-cycle-synchronous quadrature demodulation (lock-in at the mains
//! fundamental and, optionally, its harmonics).
//!
//! Per sample (integer only, no division):
//!
//! `xc[n] = x[n] − dc`,
//! `I += xc[n] · cos(θ[n])`, `Q += xc[n] · sin(θ[n])` (Q15 table values),
//! and for harmonic h: the same with `h·θ[n]`; `S += x[n]`.
//!
//! `θ[n]` is the shared oscillator phase; a cycle ends when it wraps, so
//! every window spans one whole turn of the reference at any sample rate.
//! At the end of a cycle of `n` samples (once per cycle):
//!
//! `i = 2·I / n`, `q = 2·Q / n` scaled to Q8 ADC codes, so that a sinusoid
//! `A·cos(θ + φ)` gives `i = A·cos φ`, `q = −A·sin φ` (amplitude in codes,
//! 256 = 1 code), and `dc = S / n` for the next cycle.
//!
//! Each product `xc · table` fits `i32` for any 16-bit input
//! (65 535 · 32 767 < 2^31); sums are `i64`.

use crate::fixed::bit_len;
use crate::nco::{cos_q15, sin_q15};

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
        let i = self.i as i64;
        let q = self.q as i64;
        (i * i + q * q) as u64
    }
}

/// Per-channel accumulator state for the fundamental and `H` extra
/// harmonics (orders 2 to H + 1).
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct DemodState<const H: usize> {
    acc: [i64; 2],
    harm: [[i64; 2]; H],
    /// Sum of the cycle's samples; at most 65 535 · 1 137 in magnitude, so
    /// it never wraps (wrapping add keeps even a misuse panic-free).
    sum: i32,
    /// Mean of the previous cycle, ADC codes; subtracted from each sample.
    dc: i32,
    primed: bool,
}

impl<const H: usize> Default for DemodState<H> {
    fn default() -> Self {
        Self::new()
    }
}

impl<const H: usize> DemodState<H> {
    /// Empty accumulators; the first sample seeds the DC estimate.
    pub const fn new() -> Self {
        Self {
            acc: [0; 2],
            harm: [[0; 2]; H],
            sum: 0,
            dc: 0,
            primed: false,
        }
    }

    /// Mean of the previous cycle in ADC codes (the input's DC level).
    pub const fn dc(&self) -> i32 {
        self.dc
    }

    /// Accumulates one sample `x` (ADC codes) at reference phase `phase`.
    #[inline(always)]
    pub fn push(&mut self, x: i32, phase: u32) {
        if !self.primed {
            self.dc = x;
            self.primed = true;
        }
        // Clamp keeps the product inside i32 even for codes outside the
        // configured resolution (|xc| ≤ 65 535).
        let xc = x.saturating_sub(self.dc).clamp(-65_535, 65_535);
        let [ai, aq] = &mut self.acc;
        *ai += i64::from(xc * i32::from(cos_q15(phase)));
        *aq += i64::from(xc * i32::from(sin_q15(phase)));
        for (order, [hi, hq]) in (2u32..).zip(self.harm.iter_mut()) {
            let p = phase.wrapping_mul(order);
            *hi += i64::from(xc * i32::from(cos_q15(p)));
            *hq += i64::from(xc * i32::from(sin_q15(p)));
        }
        self.sum = self.sum.wrapping_add(x);
    }

    /// Ends a cycle of `n` samples (1 ≤ n ≤ 65 535): returns the
    /// fundamental and the harmonic pairs in Q8 codes, updates the DC
    /// estimate and clears the accumulators. `n = 0` returns zeros.
    pub fn end_cycle(&mut self, n: u32) -> (Iq, [Iq; H]) {
        let mut harm = [Iq::default(); H];
        if n == 0 {
            return (Iq::default(), harm);
        }
        let norm = Normalizer::new(n);
        let fund = norm.iq(self.acc);
        for (out, acc) in harm.iter_mut().zip(self.harm.iter()) {
            *out = norm.iq(*acc);
        }
        self.dc = norm.mean(i64::from(self.sum));
        self.acc = [0; 2];
        self.harm = [[0; 2]; H];
        self.sum = 0;
        (fund, harm)
    }
}

/// Scales cycle sums by 1/n with one division per cycle.
struct Normalizer {
    /// 2^24 / n.
    recip: i64,
    /// Pre-shift that brings any sum of n products into i32.
    pre: u32,
    n: u32,
}

impl Normalizer {
    fn new(n: u32) -> Self {
        Self {
            recip: (1i64 << 24) / i64::from(n.max(1)),
            pre: bit_len(n),
            n,
        }
    }

    /// `2·acc / n` in Q8 codes: acc is in codes·Q15, so the factor is
    /// 2·256 / (32 768 · n) = 1 / (64 n). Rounded to nearest.
    fn iq(&self, acc: [i64; 2]) -> Iq {
        let [i, q] = acc;
        Iq {
            i: self.scale(i),
            q: self.scale(q),
        }
    }

    fn scale(&self, acc: i64) -> i32 {
        // |acc| < 2^31 · n < 2^(31 + pre), so acc >> pre fits i32;
        // the product with recip (< 2^24) fits i64.
        let a = acc >> self.pre;
        let shift = 30 - self.pre; // 24 + 6 − pre, pre ≤ 17
        let p = a * self.recip + (1i64 << (shift - 1));
        let v = p >> shift;
        v.clamp(i64::from(i32::MIN), i64::from(i32::MAX)) as i32
    }

    /// Mean sample, rounded to nearest.
    fn mean(&self, sum: i64) -> i32 {
        let n = i64::from(self.n.max(1));
        let v = (sum + n / 2).div_euclid(n);
        v.clamp(i64::from(i32::MIN), i64::from(i32::MAX)) as i32
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
        let mut d = DemodState::<2>::new();
        let mut phase: u32 = 0;
        let mut out = (Iq::default(), [Iq::default(); 2]);
        for _ in 0..cycles {
            for _ in 0..40 {
                let th = phase as f64 / 4_294_967_296.0 * core::f64::consts::TAU;
                let x = (amp * (th + phi).cos() + dc).round() as i32;
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
    fn extreme_codes_do_not_overflow() {
        let mut d = DemodState::<2>::new();
        let step = phase_step(47_000, 50_000);
        let mut phase = 0u32;
        for k in 0..1100 {
            let x = if k % 2 == 0 {
                i32::from(i16::MIN)
            } else {
                65_535
            };
            d.push(x, phase);
            phase = phase.wrapping_add(step);
        }
        let (f, _) = d.end_cycle(1100);
        assert!(f.i.abs() < 1 << 25 && f.q.abs() < 1 << 25);
        assert_eq!(d.end_cycle(0).0, Iq::default());
    }
}
