//! Coherent averaging, amplitude and the noise sample: the first per-cycle
//! stage of each channel, between the front end's [`Cycle`](super::Cycle)
//! and the decisions.
//!
//! Each cycle's I/Q (fundamental and harmonics) is averaged coherently,
//! `a += (z − a) >> k` with `k = avg_shift` (`k = 0`: no averaging), the
//! amplitude is the root of the summed powers, and the noise sample is the
//! change of amplitude since the last cycle, scaled to a mean absolute
//! deviation (see [`diff_gain_q8`]).

use crate::demod::Iq;
use crate::fixed::{isqrt_u64, isqrt_u64_from, mul_q8};

/// `256 · 2^(k/2) / √2` for k = 0..=4 (computed).
const DIFF_GAIN_Q8: [u32; 5] = [181, 256, 362, 512, 724];

/// Scales |a_k − a_{k−1}| to the mean absolute deviation of a:
/// 1/√(2α) with α = 2^-avg_shift, in Q8. For white noise the change of
/// an exponential average has variance 2α times the average's own
/// (standard EMA result: var(y) = α/(2−α)·σ², var(Δy) = 2α²/(2−α)·σ²).
/// Inline: a call in the middle of building the back end makes the
/// compiler build it aside and copy it in (`memcpy`, `memclr` on a
/// Cortex-M0: about 1 KiB of flash).
#[inline(always)]
pub(super) fn diff_gain_q8(avg_shift: u8) -> u32 {
    DIFF_GAIN_Q8
        .get(usize::from(avg_shift))
        .copied()
        .unwrap_or(724)
}

/// Takes one cycle's fundamental `f` and harmonics `h` into a channel's
/// coherent averages `avg` and `avg_h` (shift `k`), updates its amplitude
/// `amp_q8` (Q8 codes) and returns the noise sample (the change of
/// amplitude times `gain`, Q8 codes) and the previous cycle's amplitude
/// (for [`Evidence`](crate::decision::Evidence)). The state lives in the
/// back end's per-channel record.
#[inline(always)]
pub(super) fn update<const H: usize>(
    avg: &mut Iq,
    avg_h: &mut [Iq; H],
    amp_q8: &mut u32,
    (f, h): (&Iq, &[Iq; H]),
    k: u8,
    gain: u32,
) -> (u32, u32) {
    average(avg, f, k);
    let mut power = avg.power();
    for (a, z) in avg_h.iter_mut().zip(h.iter()) {
        average(a, z, k);
        power = power.saturating_add(a.power());
    }
    // Newton steps from the last amplitude (the same bits as `isqrt_u64`).
    let amp = isqrt_u64_from(power, *amp_q8);
    // Noise sample: the change since the last cycle, scaled to a mean
    // absolute deviation (see `diff_gain_q8`).
    let d = mul_q8(amp.abs_diff(*amp_q8), gain);
    let previous = *amp_q8;
    *amp_q8 = amp;
    (d, previous)
}

/// Complex exponential average `a += (z − a) >> k` (k = 0: `a = z`).
#[inline]
fn average(a: &mut Iq, z: &Iq, k: u8) {
    a.i = a.i.saturating_add(z.i.saturating_sub(a.i) >> k);
    a.q = a.q.saturating_add(z.q.saturating_sub(a.q) >> k);
}

/// The window stage's amplitude in place of the exponential average: the
/// window mean's magnitude, with the harmonics' averages (shift `k`) added
/// in power; returns the window's noise sample and the previous amplitude.
#[inline(always)]
pub(super) fn with_window<const H: usize>(
    avg_h: &mut [Iq; H],
    amp_q8: &mut u32,
    out: super::window::WindowOut,
    h: &[Iq; H],
    k: u8,
) -> (u32, u32) {
    let mut amp = out.amp_q8;
    if H > 0 {
        let mut power = u64::from(amp) * u64::from(amp);
        for (a, z) in avg_h.iter_mut().zip(h.iter()) {
            average(a, z, k);
            power = power.saturating_add(a.power());
        }
        amp = isqrt_u64(power);
    }
    let previous = *amp_q8;
    *amp_q8 = amp;
    (out.noise_q8, previous)
}
