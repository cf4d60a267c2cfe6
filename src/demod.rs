//! Mains-cycle-synchronous quadrature demodulation (lock-in at the mains
//! fundamental and, optionally, its harmonics), on pairs of samples.
//!
//! Samples are taken two at a time: the cycle's samples 0 and 1, 2 and 3,
//! and so on (a cycle of odd length ends with one sample alone). A pair is
//! demodulated as its sum at the reference phase of its midpoint, which
//! halves the per-sample work (one table read and two products a pair) for
//! a known, corrected loss: for a sinusoid the pair sum is
//! `2A·cos(π·s)·cos(θ_mid + φ)` with `s` the phase step in turns, so every
//! result is multiplied by `1/cos(π·s)` at the cycle end ([`CycleScale`]).
//! The cost in sensitivity is the pair's own averaging, `20·log10(cos(π·s))`
//! dB: −0.027 dB at 40 samples a cycle (2 kHz, 50 Hz), −0.11 dB at 20.
//! Harmonic order `h` has the gain `cos(π·h·s)` and its own correction.
//!
//! Per pair (integer only, no division, no clamp), with codes in offset
//! binary (`u16`), `v` the gated pair sum (below 2^17):
//!
//! `xc = v − 2·dc` (|xc| ≤ 131 070),
//! `I += (xc · T_cos(θ_mid)) >> 10`, `Q += (xc · T_sin(θ_mid)) >> 10`
//! (Q14 table values, arithmetic shift: floor; see [`PRODUCT_SHIFT`]), and
//! for harmonic h the same with `h·θ_mid`; `S += v`. A lone sample `x`
//! enters the same sums with `x − dc` at its own phase. On ARMv7E-M the
//! same products are computed as `((xc·2^6) · T) >> 16`, one `smlawb` or
//! `smlawt` each from a packed sine/cosine word ([`WIDE_MAC`]): the same
//! bits with fewer instructions.
//!
//! `θ` is the shared oscillator phase; a cycle ends when it wraps, so every
//! window spans one whole turn of the reference at any sample rate. At the
//! end of a cycle of `n` samples (`p = ⌈n/2⌉` products), with the
//! reciprocal `r = ⌊(2^32 − 1) / n⌋` (one division, only when `n` or the
//! step changes: see [`reciprocal`]) and the correction `c` (Q16):
//!
//! `i = ((I + ⌊p/2⌋) · r_c + 2^26) >> 27` with `r_c = (r · c) >> 16`
//! (that is `32·I/n·c`), the same for `q`, scaled to Q8 ADC codes, so that
//! a sinusoid `A·cos(θ + φ)` gives `i = A·cos φ`, `q = −A·sin φ` (amplitude
//! in codes, 256 = 1 code); the `⌊p/2⌋` returns the mean of the per-product
//! floors (half a unit each). `dc = (S · r + 2^31) >> 32` (the rounded
//! mean, within 1/32 code) for the next cycle. The first cycle uses the
//! mid-scale code as its DC.

use crate::fixed::{div_rem_u32, mul_wide, mul_wide_signed};
use crate::nco::{phase_ref, PhaseRef};

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
/// 1 138 samples, 569 products; a product is at most 131 070 · 16 383 <
/// 2^31, and 569 such products shifted by ten bits stay below 2^31, so any
/// cycle's sum of any `u16` codes fits `i32`. A constant lets the shift
/// fold into the add on Cortex-M3/M4 (`add r, r, p, asr #10`). The floor
/// costs a uniform error in [0, 1) units (of 2^10 codes·Q14) per product;
/// its mean of ½ is added back at the cycle end (`⌊p/2⌋`), which leaves the
/// same error as rounding every product: about 2^10 · 2 / (16 383 · √(12 p))
/// codes of amplitude, 0.009 codes at 40 samples a cycle — below the
/// quantisation noise of the ADC itself (0.29 codes per sample, 0.065 codes
/// of amplitude at 40 samples a cycle).
pub const PRODUCT_SHIFT: u32 = 10;

/// Whether the multiply-accumulate takes the "wide" form: `x` pre-scaled by
/// 2^[`LANE_SHIFT`] and the product's top 32 bits of 48,
/// `((x·2^6) · t) >> 16`, which ARMv7E-M does in one `smlawb`/`smlawt`
/// with the table value a halfword of a packed word ([`RefQ14`](crate::nco::RefQ14)), instead of
/// `(x · t) >> 10` (a multiply and a shifted add). The two are the same
/// number: `⌊2^6·x·t / 2^16⌋ = ⌊x·t / 2^10⌋` (tested over the whole range).
/// Taken on ARMv7E-M and ARMv8-M Mainline (`humsense_dsp`, set by the build
/// script from the target). ARMv6-M and ARMv7-M keep the narrow form, where
/// a 64-bit product would cost more, and so does the host, where the wide
/// form measured slower (`cargo bench -p humsim --bench host`, four
/// channels: 5.09 ns a sample in two runs, against 4.7 and 4.1 ns in two
/// runs of the narrow form). The unit tests check both forms there, and
/// the golden vectors check the wide one on the emulated M4F against the
/// host's narrow one, bit for bit.
pub const WIDE_MAC: bool = cfg!(humsense_dsp);

/// The left shift of the value the accumulators take (`x = xc << LANE_SHIFT`):
/// `16 − PRODUCT_SHIFT` in the wide form, 0 in the narrow one. At most
/// 131 070 · 2^6 < 2^23 in magnitude.
pub const LANE_SHIFT: u32 = if WIDE_MAC { 16 - PRODUCT_SHIFT } else { 0 };

/// `⌊(2^32 − 1) / n⌋`, the per-cycle reciprocal of the sample count (0 for
/// `n = 0`). Callers keep it while `n` repeats, so the division runs only
/// when the cycle length changes.
pub const fn reciprocal(n: u32) -> u32 {
    if n == 0 {
        return 0;
    }
    // Shift-subtract on cores without a divide instruction (no library
    // division linked), `/` elsewhere.
    div_rem_u32(u32::MAX, n).0
}

/// `1/cos(π·h·s)` in Q16, times 16 384/16 383 (the table's peak is 16 383), for the
/// phase step `step` (`s = step / 2^32` turns) and harmonic order `h`: the
/// correction of a pair's averaging loss (see the module docs).
///
/// With `x = π·h·s` and `y = x²`: `1/cos x = 1 + y/2 + 5y²/24 + 61y³/720 +
/// 277y⁴/8064 + 50521y⁵/3628800 + …` (the secant's Maclaurin series,
/// Euler numbers; standard tables), evaluated by Horner's rule in Q16 with
/// `y` from the step's top 16 bits. A validated config keeps `h·s ≤ 1/4.4`,
/// where the terms left out add up to less than 10⁻⁴; at 40 samples a cycle
/// the result is within 1.1·10⁻⁵ (1.01·10⁻⁵ low: a Q16 step is 1.5·10⁻⁵
/// there, and the shifts truncate).
pub const fn pair_correction_q16(step: u32, h: u32) -> u32 {
    // t in Q16 turns (from Q20, rounded); y = π²·t² in Q16 (π² = 40 426 /
    // 2^12).
    let t = ((step >> 12).saturating_mul(h).saturating_add(8)) >> 4;
    let t = if t > 16_384 { 16_384 } else { t };
    let y = (((t * t) >> 12) * 40_426) >> 16;
    // Q16 coefficients 5/24, 61/720, 277/8064, 50521/3628800 of the
    // series above.
    let mut acc = 912;
    acc = 2_251 + ((acc * y) >> 16);
    acc = 5_552 + ((acc * y) >> 16);
    acc = 13_653 + ((acc * y) >> 16);
    acc = 32_768 + ((acc * y) >> 16);
    let sec = 65_536 + ((acc * y) >> 16);
    // 1 + 2^-14 for 16 384/16 383 (within 4·10⁻⁹).
    sec + (sec >> 14)
}

/// The per-cycle scaling shared by every channel: `n` samples and their
/// reciprocal corrected for the pair gain of the fundamental and each
/// harmonic.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct CycleScale<const H: usize> {
    /// The pair corrections of the phase step, Q16 (fundamental, then
    /// each harmonic): kept, so that a cycle of another length at the same
    /// step needs only its reciprocal.
    corr_fund: u32,
    n: u32,
    recip: u32,
    fund: u32,
    harm: [u32; H],
    corr_harm: [u32; H],
}

impl<const H: usize> CycleScale<H> {
    /// The scaling of a cycle of `n` samples whose reciprocal is `recip`
    /// ([`reciprocal`]`(n)`) at phase step `step`.
    pub fn new(n: u32, recip: u32, step: u32) -> Self {
        let mut corr_harm = [0; H];
        for (c, h) in corr_harm.iter_mut().zip(2u32..) {
            *c = pair_correction_q16(step, h);
        }
        Self::from_parts(n, recip, pair_correction_q16(step, 1), corr_harm)
    }

    /// The scaling of `n` samples (reciprocal `recip`) at the phase step
    /// this one was made for: the same result as [`new`](Self::new) at
    /// that step, without the corrections' series.
    pub fn with_samples(&self, n: u32, recip: u32) -> Self {
        Self::from_parts(n, recip, self.corr_fund, self.corr_harm)
    }

    fn from_parts(n: u32, recip: u32, corr_fund: u32, corr_harm: [u32; H]) -> Self {
        let corrected = |c: u32| (mul_wide(recip, c) >> 16) as u32;
        let mut harm = [0; H];
        for (r, c) in harm.iter_mut().zip(corr_harm.iter()) {
            *r = corrected(*c);
        }
        Self {
            n,
            recip,
            fund: corrected(corr_fund),
            harm,
            corr_fund,
            corr_harm,
        }
    }

    /// An empty cycle (n = 0): every result zero.
    pub const fn empty() -> Self {
        Self {
            n: 0,
            recip: 0,
            fund: 0,
            harm: [0; H],
            // Not zero: a run of zero fields makes the compiler clear the
            // front end with `memclr` (linked on the M0 only for it).
            corr_fund: 1 << 16,
            corr_harm: [1 << 16; H],
        }
    }

    /// Samples in the cycle.
    pub const fn samples(&self) -> u32 {
        self.n
    }

    /// The uncorrected reciprocal of the sample count.
    pub const fn recip(&self) -> u32 {
        self.recip
    }
}

/// Per-channel accumulator state for the fundamental and `H` extra
/// harmonics (orders 2 to H + 1): 16 + 8·H bytes of data.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct DemodState<const H: usize> {
    acc: [i32; 2],
    harm: [[i32; 2]; H],
    /// Sum of the cycle's samples (at most 65 535 · n_max, inside u32).
    sum: u32,
    /// Mean of the previous cycle, offset-binary code.
    dc: u16,
    /// The first sample of a pair whose second has not arrived (when the
    /// cycle's sample count so far is odd; 0 otherwise).
    pending: u16,
}

/// [`DemodState`] in registers for a run of pairs (block path).
#[derive(Clone, Copy, Debug)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct DemodLane<const H: usize> {
    i: i32,
    q: i32,
    harm: [[i32; 2]; H],
    /// Sum of the run's `xc` (pair sums less twice the DC);
    /// [`DemodState::store`] adds the DC back.
    sum: i32,
    /// Twice the DC estimate (a pair's DC), scaled by 2^[`LANE_SHIFT`].
    dc2: i32,
}

/// `(xc · t) >> 10` for `x = xc << LANE_SHIFT`, in the target's form (see
/// [`WIDE_MAC`]).
#[inline(always)]
fn product(x: i32, t: i16) -> i32 {
    if WIDE_MAC {
        product_wide(x, t)
    } else {
        product_narrow(x, t)
    }
}

/// `(x · t) >> 10`: a 32-bit multiply and a shifted add.
#[inline(always)]
const fn product_narrow(x: i32, t: i16) -> i32 {
    x.wrapping_mul(t as i32) >> PRODUCT_SHIFT
}

/// `(x · t) >> 16` with `x` scaled by 2^6: the top 32 bits of a 48-bit
/// product (`smlawb`/`smlawt` with the add).
#[inline(always)]
const fn product_wide(x: i32, t: i16) -> i32 {
    ((x as i64 * t as i64) >> 16) as i32
}

/// `i += (xc · cos) >> 10`, `q += (xc · sin) >> 10` for `x = xc <<
/// LANE_SHIFT` (wrapping: see [`PRODUCT_SHIFT`] for why the true sum fits).
#[inline(always)]
fn mac(acc: &mut [i32; 2], x: i32, r: PhaseRef) {
    let x = r.signed(x);
    let [i, q] = acc;
    *i = i.wrapping_add(product(x, r.table.cos()));
    *q = q.wrapping_add(product(x, r.table.sin()));
}

/// The harmonic bins' products for `x` at reference phase `phase`: order
/// `h` (2 to H + 1) at `h·phase`.
#[inline(always)]
fn mac_harmonics<const H: usize>(harm: &mut [[i32; 2]; H], x: i32, phase: u32) {
    for (order, acc) in (2u32..).zip(harm.iter_mut()) {
        mac(acc, x, phase_ref(phase.wrapping_mul(order)));
    }
}

impl<const H: usize> DemodLane<H> {
    /// A pair's sum `v` (below 2^17) as [`push_pair`](Self::push_pair) and
    /// the block gate take it: `v` less twice the DC estimate, scaled by
    /// 2^[`LANE_SHIFT`].
    #[inline(always)]
    pub const fn centred(&self, v: u32) -> i32 {
        ((v << LANE_SHIFT) as i32).wrapping_sub(self.dc2)
    }

    /// Accumulates one pair given as `x = xc << LANE_SHIFT`, with `xc` its
    /// gated sum less twice the DC (|xc| ≤ 131 070; see
    /// [`centred`](Self::centred)), at the midpoint
    /// phase `mid`, whose reference is `r` ([`phase_ref`]).
    #[inline(always)]
    pub fn push_pair(&mut self, x: i32, r: PhaseRef, mid: u32) {
        let mut f = [self.i, self.q];
        mac(&mut f, x, r);
        [self.i, self.q] = f;
        mac_harmonics(&mut self.harm, x, mid);
        self.sum = self.sum.wrapping_add(x >> LANE_SHIFT);
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
            pending: 0,
        }
    }

    /// Mean of the previous cycle (the input's DC level), offset binary.
    pub const fn dc(&self) -> u16 {
        self.dc
    }

    /// Takes the first sample of the pair in progress, leaving 0.
    #[inline(always)]
    pub fn take_pending(&mut self) -> u16 {
        core::mem::take(&mut self.pending)
    }

    /// Keeps `x` as the first sample of a pair.
    #[inline(always)]
    pub fn hold_first(&mut self, x: u16) {
        self.pending = x;
    }

    /// The state in registers, for a run of pairs.
    #[inline(always)]
    pub const fn lane(&self) -> DemodLane<H> {
        DemodLane {
            i: self.acc[0],
            q: self.acc[1],
            harm: self.harm,
            sum: 0,
            dc2: (2 * self.dc as i32) << LANE_SHIFT,
        }
    }

    /// Stores back a lane that took `pairs` pairs.
    #[inline(always)]
    pub fn store(&mut self, lane: &DemodLane<H>, pairs: u32) {
        self.acc = [lane.i, lane.q];
        self.harm = lane.harm;
        let dc = ((lane.dc2 >> LANE_SHIFT) as u32).wrapping_mul(pairs);
        self.sum = self.sum.wrapping_add(lane.sum as u32).wrapping_add(dc);
    }

    /// Accumulates one pair with gated sum `v` (below 2^17) at midpoint
    /// phase `mid` (the frame path: one group at a time).
    pub fn push_pair(&mut self, v: u32, mid: u32) {
        let xc = (v as i32).wrapping_sub(2 * i32::from(self.dc));
        self.accumulate(xc, mid, v);
    }

    /// Accumulates a lone sample `x` (the last of a cycle of odd length) at
    /// its own phase `phase`.
    pub fn push_single(&mut self, x: u16, phase: u32) {
        let xc = i32::from(x) - i32::from(self.dc);
        self.accumulate(xc, phase, u32::from(x));
    }

    /// One group on the frame path: `xc` (the group's sum less its DC) at
    /// reference phase `phase`, `v` into the cycle's sum. Out of line: one
    /// copy serves pairs and lone samples (the block path has its own, in
    /// registers).
    #[inline(never)]
    fn accumulate(&mut self, xc: i32, phase: u32, v: u32) {
        let x = xc << LANE_SHIFT;
        mac(&mut self.acc, x, phase_ref(phase));
        mac_harmonics(&mut self.harm, x, phase);
        self.sum = self.sum.wrapping_add(v);
    }

    /// Whether the present cycle demodulated to exactly nothing: every
    /// accumulator is zero, as when every group equals the DC estimate (an
    /// input that does not move, from the cycle after it stopped). Read
    /// before [`end_cycle_with`](Self::end_cycle_with), which clears them.
    pub fn quiet(&self) -> bool {
        let mut bits = self.acc[0] | self.acc[1];
        for [i, q] in self.harm {
            bits |= i | q;
        }
        bits == 0
    }

    /// Ends a cycle of `n` samples taken at phase step `step`: returns the
    /// fundamental and the harmonic pairs in Q8 codes, updates the DC
    /// estimate and clears the accumulators. `n = 0` returns zeros.
    pub fn end_cycle(&mut self, n: u32, step: u32) -> (Iq, [Iq; H]) {
        self.end_cycle_with(&CycleScale::new(n, reciprocal(n), step))
    }

    /// [`end_cycle`](Self::end_cycle) with the scaling supplied by the
    /// caller (computed once for all channels, and only when the sample
    /// count or the step changes).
    pub fn end_cycle_with(&mut self, scale: &CycleScale<H>) -> (Iq, [Iq; H]) {
        let mut harm = [Iq::default(); H];
        let n = scale.n;
        if n == 0 {
            return (Iq::default(), harm);
        }
        let bias = (n.div_ceil(2) >> 1) as i32;
        // In range without a clamp: each of the p ≤ (n + 1)/2 products is
        // below 2^21 after its shift, so |acc + bias| < p·(2^21 + 1), and
        // r ≤ 1.33 · 2^32/n (the largest correction a validated config
        // allows is 1/cos(π/4.4)): |result| < (p/n) · 1.33 · 2^26 · 1.01
        // < 2^26 for n ≥ 6 (`Config` asks for many more samples a cycle).
        let scaled = |acc: i32, r: u32| -> i32 {
            ((mul_wide_signed(acc.wrapping_add(bias), r) + (1 << 26)) >> 27) as i32
        };
        let pair = |[i, q]: [i32; 2], r: u32| Iq {
            i: scaled(i, r),
            q: scaled(q, r),
        };
        let fund = pair(self.acc, scale.fund);
        for ((out, acc), r) in harm.iter_mut().zip(self.harm.iter()).zip(scale.harm.iter()) {
            *out = pair(*acc, *r);
        }
        // sum ≤ 65 535 · n and recip ≤ 2^32 / n, so the rounded mean is at
        // most 65 535: it fits u16 as it is.
        let mean = (mul_wide(self.sum, scale.recip) + (1 << 31)) >> 32;
        self.dc = mean as u16;
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
    use crate::nco::TABLE_PEAK;

    /// Feeds one cycle of `n` samples `x(θ)` from phase `phase` in pairs
    /// (the last alone when `n` is odd), as the detector does; returns the
    /// phase after it.
    fn feed(d: &mut DemodState<2>, x: impl Fn(u32) -> u16, n: u32, step: u32, phase: u32) -> u32 {
        let mut th = phase;
        let mut k = 0;
        while k < n {
            if k + 1 < n {
                let v = u32::from(x(th)) + u32::from(x(th.wrapping_add(step)));
                d.push_pair(v, th.wrapping_add(step - (step >> 1)));
                th = th.wrapping_add(step.wrapping_mul(2));
                k += 2;
            } else {
                d.push_single(x(th), th);
                th = th.wrapping_add(step);
                k += 1;
            }
        }
        th
    }

    fn turns(phase: u32) -> f64 {
        f64::from(phase) / 4_294_967_296.0 * core::f64::consts::TAU
    }

    /// Feeds `cycles` whole cycles of `amp·cos(θ + phi) + dc` at `n`
    /// samples per cycle and returns the last cycle's result.
    fn run(amp: f64, phi: f64, dc: f64, n: u32, cycles: usize) -> (Iq, [Iq; 2]) {
        let step = phase_step(50_000, 50 * n);
        let mut d = DemodState::<2>::new(2048);
        let mut phase: u32 = 0;
        let mut out = (Iq::default(), [Iq::default(); 2]);
        let x = |th: u32| (amp * (turns(th) + phi).cos() + dc).round() as u16;
        for _ in 0..cycles {
            phase = feed(&mut d, x, n, step, phase);
            out = d.end_cycle(n, step);
        }
        out
    }

    #[test]
    fn a_scale_remade_for_another_length_equals_a_new_one() {
        // Self-consistency: the front end's short path for a drifting mains
        // (`with_samples`, the corrections kept) against the whole series
        // (`new`) at the same step, 40 ± 3 samples a cycle, 45 to 65 Hz.
        for mhz in [45_000u32, 49_900, 50_000, 50_100, 60_000, 65_000] {
            let step = phase_step(mhz, 2_000);
            let base = CycleScale::<2>::new(40, reciprocal(40), step);
            for n in 37..=43 {
                let want = CycleScale::<2>::new(n, reciprocal(n), step);
                assert_eq!(
                    base.with_samples(n, reciprocal(n)),
                    want,
                    "{mhz} mHz, {n} samples"
                );
            }
        }
    }

    #[test]
    fn a_steady_code_is_quiet_once_the_dc_estimate_reaches_it() {
        // A stuck input (common practice: a converter input that does not
        // move reads one code) gives exactly zero accumulators once the DC
        // estimate equals its code; a cycle of odd length (the lone last
        // sample) too. Anything that moves is not quiet: the step onto the
        // code, and a one-code square wave at the reference frequency.
        for n in [40, 41] {
            let step = phase_step(50_000, 50 * n);
            let mut d = DemodState::<2>::new(2048);
            let mut phase = 0;
            let mut quiet = [false; 3];
            for q in &mut quiet {
                phase = feed(&mut d, |_| 1234, n, step, phase);
                *q = d.quiet();
                let _ = d.end_cycle(n, step);
            }
            assert_eq!(quiet, [false, true, true], "n {n}");
            let square = |th: u32| 1234 + u16::from(th >> 31 == 1);
            phase = feed(&mut d, square, n, step, phase);
            assert!(!d.quiet(), "n {n}");
            let _ = d.end_cycle(n, step);
            let _ = feed(&mut d, square, n, step, phase);
            assert!(!d.quiet(), "n {n}");
        }
    }

    #[test]
    fn amplitude_and_phase_of_a_bin_centred_sine() {
        for n in [40, 16] {
            let (f, h) = run(1000.0, 0.5, 2048.0, n, 3);
            let amp = (f.power() as f64).sqrt() / 256.0;
            // The pair correction restores the amplitude (within the
            // rounding of the input to whole codes).
            assert!((amp - 1000.0).abs() < 0.5, "n {n}: {amp}");
            // i = A cos φ, q = −A sin φ, with the phase within the table's
            // half-step of π/512 rad. At 16 samples a cycle every pair
            // midpoint sits on a bin edge, so the whole half-step shows,
            // plus the input's rounding to whole codes (up to 5·10⁻⁴ rad at
            // 1000 codes).
            let phi = -(f.q as f64).atan2(f.i as f64);
            let rounding = if n == 16 { 5e-4 } else { 0.0 };
            let bound = core::f64::consts::PI / 512.0 + rounding;
            assert!((phi - 0.5).abs() < bound, "n {n}: {phi}");
            // A pure fundamental leaves the harmonic bins nearly empty:
            // with n even the pair midpoints are evenly spread over the
            // turn (orthogonal bins), and only the reference's phase steps
            // let it through, by at most A·π/512 (6.1 codes here; seen:
            // 1.9 in the third-harmonic bin at 40 samples a cycle).
            let steps = 1000.0 * core::f64::consts::PI / 512.0;
            for b in h {
                let leak = (b.power() as f64).sqrt() / 256.0;
                assert!(leak < steps, "n {n}: {leak} codes");
            }
        }
    }

    #[test]
    fn odd_cycles_read_the_amplitude_within_the_pair_error() {
        // With n odd the pairs' double-frequency terms do not cancel over
        // the cycle: the amplitude then depends on the phase, by up to
        // A·(2π)²/n³ (the scaling of the residual: (1 − cos δ) ≈ δ²/2 per
        // pair with δ = 2π/n, over a partial sum of order 1/n; the bound is
        // checked here, not derived exactly). Even n, whole pairs: within
        // the input's rounding.
        for n in [15u32, 16, 17, 21, 40, 41] {
            let bound = if n % 2 == 0 {
                0.5
            } else {
                1000.0 * core::f64::consts::TAU.powi(2) / f64::from(n).powi(3) + 0.5
            };
            for k in 0..16 {
                let (f, h) = run(1000.0, f64::from(k) * 0.39, 2048.0, n, 3);
                let amp = (f.power() as f64).sqrt() / 256.0;
                assert!((amp - 1000.0).abs() < bound, "n {n}, phase {k}: {amp}");
                // The same uneven spread leaks about A/n into the
                // harmonic bins (n ≥ 14 keeps orders 2 and 3 below the
                // pairs' Nyquist limit with the margin `Config` asks).
                for b in h {
                    let leak = (b.power() as f64).sqrt() / 256.0;
                    assert!(leak < 1000.0 / f64::from(n) + 1.0, "n {n}: {leak} codes");
                }
            }
        }
    }

    #[test]
    fn harmonic_amplitudes_after_the_pair_correction() {
        // 300 codes at the second harmonic, 200 at the third, 40 samples a
        // cycle: each bin reads its own amplitude (orthogonality of the
        // DFT basis over a whole cycle, standard).
        let step = phase_step(50_000, 2_000);
        let mut d = DemodState::<2>::new(2048);
        let x = |th: u32| {
            let t = turns(th);
            (2048.0 + 300.0 * (2.0 * t).cos() + 200.0 * (3.0 * t + 1.0).cos()).round() as u16
        };
        let mut phase = 0;
        let mut out = (Iq::default(), [Iq::default(); 2]);
        for _ in 0..3 {
            phase = feed(&mut d, x, 40, step, phase);
            out = d.end_cycle(40, step);
        }
        let amp = |b: Iq| (b.power() as f64).sqrt() / 256.0;
        assert!(amp(out.0) < 1.0, "{:?}", out.0);
        assert!((amp(out.1[0]) - 300.0).abs() < 0.5, "{}", amp(out.1[0]));
        assert!((amp(out.1[1]) - 200.0).abs() < 0.5, "{}", amp(out.1[1]));
    }

    #[test]
    fn correction_matches_the_secant() {
        // Reference: std's f64 cosine; the series is exact to its next term.
        // Bounds: the doc's 10⁻⁴ within the validated range, and its
        // 1.1·10⁻⁵ at 40 samples a cycle (50 Hz at 2 kHz, 60 Hz at 2.4 kHz).
        for (step, h, bound) in [
            (phase_step(50_000, 2_000), 1, 1.1e-5),
            (phase_step(60_000, 2_400), 1, 1.1e-5),
            (phase_step(66_000, 400), 1, 1e-4),
            (phase_step(50_000, 1_000), 4, 1e-4),
            (phase_step(44_000, 50_000), 1, 1e-4),
        ] {
            let x = core::f64::consts::PI * f64::from(h) * f64::from(step) / 4_294_967_296.0;
            let want = 65_536.0 / x.cos() * 16_384.0 / f64::from(TABLE_PEAK);
            let got = f64::from(pair_correction_q16(step, h));
            assert!(
                (got - want).abs() < bound * want,
                "{step} {h}: {got} vs {want}"
            );
        }
    }

    #[test]
    fn wide_and_narrow_products_agree() {
        // ⌊2^6·x·t / 2^16⌋ = ⌊x·t / 2^10⌋ (floor division by a power of two
        // composes: identity of integer arithmetic). Every table value
        // against pair values spread over the whole range, both ends
        // included, and a dense run around zero where the floors of
        // negative products matter.
        let mut xs: std::vec::Vec<i32> = (-131_070..=131_070).step_by(997).collect();
        xs.extend(-3_000..=3_000);
        xs.extend([-131_070, -131_069, 131_069, 131_070]);
        for t in crate::nco::SINE_Q14.iter().copied() {
            for &xc in &xs {
                let want = (i64::from(xc) * i64::from(t)).div_euclid(1 << 10);
                assert_eq!(i64::from(product_narrow(xc, t)), want, "{xc} {t}");
                assert_eq!(
                    i64::from(product_wide(xc << (16 - PRODUCT_SHIFT), t)),
                    want,
                    "{xc} {t}"
                );
            }
        }
    }

    #[test]
    fn shift_covers_the_longest_cycle() {
        // The longest cycle a validated config allows (`PRODUCT_SHIFT`'s
        // doc: 50 kHz, the largest `sample_rate_hz`, at 44 Hz, the lowest
        // tracked frequency, plus the wrap sample: 569 products), every
        // product at its largest magnitude (|xc| = 131 070 against the
        // table's peak) and of one sign: the worst case for the i32 sums.
        // Reference: the same products summed in i64 (exact integer
        // arithmetic, common practice); the accumulator must equal it, so a
        // shift too small for this cycle would show as a wrapped sum.
        let products = (50_000u32 / 44 + 2).div_ceil(2);
        assert_eq!(products, 569);
        let peak = TABLE_PEAK as i16;
        for xc in [131_070i32, -131_070] {
            let mut acc = [0i32; 2];
            let r = PhaseRef {
                table: crate::nco::RefQ14::new(peak, peak),
                neg: 0,
            };
            for _ in 0..products {
                mac(&mut acc, xc << LANE_SHIFT, r);
            }
            let want = i64::from(products) * (i64::from(xc) * i64::from(peak)).div_euclid(1 << 10);
            assert_eq!(i64::from(acc[0]), want, "{xc}");
            assert_eq!(i64::from(acc[1]), want, "{xc}");
        }
    }

    /// The pair demodulator of the module docs in f64 with exact cosines
    /// (no table, no shifts): pairs `(v, weight, mid)` against the DC
    /// estimate `dc`, `2/n · Σ (v − weight·dc)·(cos, sin)(mid) / cos(π·s)`
    /// (a lone last sample of an odd cycle has weight one, at its own
    /// phase), as (i, q) in codes, with the error budget of the integer
    /// form (see `short_cycles_at_full_scale_need_no_clamp`) in codes.
    fn pair_model(groups: &[(f64, f64, u32)], dc: f64, n: u32, step: u32) -> (f64, f64, f64) {
        let sec = 1.0 / (core::f64::consts::PI * f64::from(step) / 4_294_967_296.0).cos();
        let (mut i, mut q, mut abs) = (0.0, 0.0, 0.0);
        for &(v, w, ph) in groups {
            let xc = v - w * dc;
            i += xc * turns(ph).cos();
            q += xc * turns(ph).sin();
            abs += xc.abs();
        }
        let k = 2.0 / f64::from(n) * sec;
        let p = groups.len() as f64;
        let peak = f64::from(TABLE_PEAK);
        let budget = k
            * (abs * (core::f64::consts::PI / 512.0 + 0.5 / peak) + p / 2.0 * 1024.0 / peak)
            + 1e-4 * k * abs
            + 0.5 / 256.0;
        (i * k, q * k, budget)
    }

    #[test]
    fn extreme_codes_do_not_overflow() {
        // Full-scale 16-bit square wave over 1 139 samples at 44 Hz and
        // 50 kHz (more than the longest cycle, 1 138). Reference: the
        // demodulator's formula in f64 with exact cosines (`pair_model`);
        // the window is 1 139 samples of a 1 136.4-sample turn, so the
        // result is near, not at, the (4/π)·S/2 of a whole turn.
        let mut d = DemodState::<2>::new(32_768);
        let step = phase_step(44_000, 50_000);
        let sq = |th: u32| if th < 1 << 31 { 0 } else { u16::MAX };
        let mut groups = std::vec::Vec::new();
        let mut th = 0u32;
        for k in (0..1_139).step_by(2) {
            if k + 1 < 1_139 {
                let v = u32::from(sq(th)) + u32::from(sq(th.wrapping_add(step)));
                groups.push((f64::from(v), 2.0, th.wrapping_add(step - (step >> 1))));
                th = th.wrapping_add(2 * step);
            } else {
                groups.push((f64::from(sq(th)), 1.0, th));
            }
        }
        let _ = feed(&mut d, sq, 1_139, step, 0);
        let (f, _) = d.end_cycle(1_139, step);
        let model = pair_model(&groups, 32_768.0, 1_139, step);
        let (i, q) = (f64::from(f.i) / 256.0, f64::from(f.q) / 256.0);
        // Within 10^-4 of the amplitude (4.2 codes): the model's error
        // budget (up to π/512 of each product) does not apply in full here,
        // as the half-bin phase errors of 570 products spread over every
        // bin of the turn have zero mean (bin centres) and largely cancel:
        // measured 2.1 codes (5·10^-5), so 10^-4 is twice that.
        let a = model.0.hypot(model.1);
        assert!((i - model.0).abs() < 1e-4 * a, "{i} vs {}", model.0);
        assert!((q - model.1).abs() < 1e-4 * a, "{q} vs {}", model.1);
        assert_eq!(d.end_cycle(0, step).0, Iq::default());
    }

    #[test]
    fn short_cycles_at_full_scale_need_no_clamp() {
        // The end-of-cycle scaling has no clamp (see `end_cycle_with`): at
        // the fewest samples a cycle and full-scale 16-bit input the
        // results must still be the plain amplitude, not wrapped. At 6 and
        // 16 samples a square wave's sampled harmonics alias onto the
        // bins, so the reference is the demodulator's formula (module
        // docs) in f64 with exact cosines (`pair_model`), not (4/π)·S/2.
        for n in [6u32, 16] {
            let step = phase_step(66_000, 66 * n);
            let mut d = DemodState::<0>::new(32_768);
            let mut phase = 0;
            let mut last = (Iq::default(), []);
            let mut model = (0.0, 0.0, 0.0);
            for _ in 0..3 {
                let sq = |th: u32| if th < 1 << 31 { u16::MAX } else { 0 };
                let dc = f64::from(d.dc());
                let mut groups = std::vec::Vec::new();
                let mut th = phase;
                for _ in 0..n / 2 {
                    let v = u32::from(sq(th)) + u32::from(sq(th.wrapping_add(step)));
                    let mid = th.wrapping_add(step - (step >> 1));
                    d.push_pair(v, mid);
                    groups.push((f64::from(v), 2.0, mid));
                    th = th.wrapping_add(2 * step);
                }
                phase = th;
                last = d.end_cycle(n, step);
                model = pair_model(&groups, dc, n, step);
            }
            let (i, q) = (f64::from(last.0.i) / 256.0, f64::from(last.0.q) / 256.0);
            // Error budget (module docs): each table value is the sine or
            // cosine at a phase within half a bin (π/512 rad) of the
            // midpoint, rounded to ±½ of 16 383, so a product is off by at
            // most |xc|·(π/512 + ½/16 383) in units of |xc|·(one); the
            // floors leave at most p/2 units of 2^10/16 383 codes after the
            // ⌊p/2⌋ correction; the secant series is within 10^-4; the
            // final rounding is ½ LSB of Q8. With few products the phase
            // errors need not cancel, so the whole budget is allowed.
            let bound = model.2;
            assert!(
                (i - model.0).abs() < bound,
                "n {n}: i {i} vs {}, {bound}",
                model.0
            );
            assert!(
                (q - model.1).abs() < bound,
                "n {n}: q {q} vs {}, {bound}",
                model.1
            );
            // A constant top code has the top code as its mean.
            let mut d = DemodState::<0>::new(32_768);
            for k in 0..n / 2 {
                d.push_pair(2 * 65_535, k * 2 * step);
            }
            let _ = d.end_cycle(n, step);
            assert_eq!(d.dc(), u16::MAX, "n {n}");
        }
    }

    #[test]
    fn full_scale_square_wave_at_16_bits_and_50_khz() {
        // A square wave of peak-to-peak S has a fundamental of amplitude
        // (4/π)·S/2 (Fourier series of a square wave, standard).
        let mut d = DemodState::<2>::new(32_768);
        let step = phase_step(50_000, 50_000);
        let mut phase = 0u32;
        let mut last = (Iq::default(), [Iq::default(); 2]);
        for _ in 0..3 {
            phase = feed(
                &mut d,
                |th| if th < 1 << 31 { u16::MAX } else { 0 },
                1_000,
                step,
                phase,
            );
            last = d.end_cycle(1_000, step);
        }
        let amp = (last.0.power() as f64).sqrt() / 256.0;
        let want = 4.0 / core::f64::consts::PI * 65_535.0 / 2.0;
        assert!((amp - want).abs() < 0.002 * want, "{amp} vs {want}");
    }
}
