//! Multi-channel panel rules, once per mains cycle, above the per-channel
//! decisions.
//!
//! - **Ambient change** (three or more channels): with `r_c = a_c / b_c`
//!   the rise of each eligible channel over its own baseline, sorted, the
//!   weakest quarter `r_(k)` (k = ⌊(n − 1)/4⌋; the smallest for four
//!   channels) at or above `ambient_ratio` means every channel rose
//!   together: a lamp, the device picked up, the ground reference moving.
//!   Every baseline and noise estimate is multiplied by `r_(k)` at once, so
//!   no channel crosses its on threshold from it, and a touch on top of the
//!   change still stands out by its own ratio. A fall of the strongest
//!   quarter below `1/ambient_ratio` is handled the same way. A finger's
//!   leakage into its neighbours (10–20 % of its rise) leaves the far pads
//!   at 1, so it never looks ambient on four pads or more.
//! - **Strongest pad** (two or more channels, [`PanelMode::StrongestPad`]):
//!   only the channel with the largest `r_c` may turn on, and only while no
//!   other channel is on.

use crate::config::{Config, PanelMode};
use crate::fixed::{div_rem_u32, f32_to_fixed, mul_wide};

/// The panel stage's constants (from [`Config`]).
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct PanelTuning {
    /// Pads decide independently.
    pub independent: bool,
    /// `ambient_ratio` in Q8.
    ambient_q8: u32,
    /// `1 / ambient_ratio` in Q8.
    ambient_inv_q8: u32,
    /// Least baseline used in ratios (the decision floor), Q8 codes.
    pub floor_q8: u32,
}

impl PanelTuning {
    /// Converts a validated config.
    pub fn new(cfg: &Config) -> Self {
        let ambient_q8 = f32_to_fixed(cfg.ambient_ratio, 8).max(257);
        Self {
            independent: cfg.panel == PanelMode::Independent,
            ambient_q8,
            ambient_inv_q8: div_rem_u32(1 << 16, ambient_q8).0,
            floor_q8: f32_to_fixed(cfg.floor_codes, 8).max(1),
        }
    }

    /// The common ratio (Q8) by which to rescale every baseline, if the
    /// rises `ratios` (Q8, one per eligible channel; sorted in place) are
    /// an ambient change. Fewer than three channels: never.
    pub fn common_ratio(&self, ratios: &mut [u32]) -> Option<u32> {
        let n = ratios.len();
        if n < 3 {
            return None;
        }
        ratios.sort_unstable();
        let k = (n - 1) / 4;
        let low = *ratios.get(k)?;
        let high = *ratios.get(n - 1 - k)?;
        if low >= self.ambient_q8 {
            Some(low)
        } else if high <= self.ambient_inv_q8 {
            Some(high.max(1))
        } else {
            None
        }
    }
}

impl PanelTuning {
    /// Whether [`common_ratio`](Self::common_ratio) can find an ambient
    /// change among channels with amplitudes and baselines `pairs` (Q8;
    /// baselines at least 1), decided without dividing: the rise
    /// `⌊256a/b⌋` (as `ratio_q8` gives it, saturating) is at least `T`
    /// exactly when `256a ≥ T·b`, and at most `T` exactly when
    /// `256a < (T + 1)·b`. So this counts the channels at or above the
    /// ambient ratio and those at or below its inverse; `false` means
    /// `common_ratio` would return `None` for their rises.
    pub fn may_be_ambient(&self, pairs: impl Iterator<Item = (u32, u32)>) -> bool {
        let (mut n, mut high, mut low) = (0usize, 0usize, 0usize);
        for (a, b) in pairs {
            let a = u64::from(a) << 8;
            n += 1;
            if a >= mul_wide(self.ambient_q8, b) {
                high += 1;
            }
            if a < mul_wide(self.ambient_inv_q8 + 1, b) {
                low += 1;
            }
        }
        // common_ratio: the k-th smallest rise at or above the ratio, or
        // the k-th largest at or below its inverse (k = ⌊(n − 1)/4⌋).
        let need = n - n.saturating_sub(1) / 4;
        n >= 3 && (high >= need || low >= need)
    }
}

/// Index of the largest rise among `ratios` (`None` entries are channels
/// not deciding yet); ties go to the lower index.
pub fn strongest(ratios: impl Iterator<Item = Option<u32>>) -> Option<u8> {
    let mut best: Option<(u8, u32)> = None;
    for (i, r) in (0u8..).zip(ratios) {
        if let Some(r) = r {
            if best.is_none_or(|(_, b)| r > b) {
                best = Some((i, r));
            }
        }
    }
    best.map(|(i, _)| i)
}

#[cfg(test)]
mod tests {
    extern crate std;
    use super::*;
    use crate::decision::ratio_q8;

    proptest::proptest! {
        /// The division-free pre-check never misses what `common_ratio`
        /// finds, and says no whenever it finds nothing. Self-consistency,
        /// not an external reference: the pre-check against the crate's
        /// own rule on the divided rises.
        #[test]
        fn ambient_precheck_agrees_with_the_rule(
            ratio in 257u32..3_000,
            pairs in proptest::collection::vec((0u32..1 << 26, 1u32..1 << 26), 0..10),
            scale in proptest::collection::vec(100u32..2_000, 10),
        ) {
            let t = PanelTuning {
                independent: false,
                ambient_q8: ratio,
                ambient_inv_q8: div_rem_u32(1 << 16, ratio).0,
                floor_q8: 1,
            };
            // Half the cases with amplitudes near a common multiple of
            // their baselines, where the rule fires.
            let pairs: std::vec::Vec<(u32, u32)> = pairs
                .iter()
                .zip(scale.iter())
                .map(|(&(a, b), &s)| {
                    if a % 2 == 0 {
                        (((u64::from(b) * u64::from(s)) >> 8) as u32, b)
                    } else {
                        (a, b)
                    }
                })
                .collect();
            let mut rises: std::vec::Vec<u32> = pairs.iter().map(|&(a, b)| ratio_q8(a, b)).collect();
            let found = t.common_ratio(&mut rises).is_some();
            let may = t.may_be_ambient(pairs.iter().copied());
            proptest::prop_assert_eq!(may, found, "{:?}", pairs);
        }
    }

    #[test]
    fn leakage_is_not_ambient_but_a_common_rise_is() {
        let t = PanelTuning::new(&Config::touch());
        // Middle pad of four touched 20x, 15 % of the rise in each
        // neighbour: 1 + 0.15 · 19 = 3.85x.
        let mut touch = [986, 5120, 986, 256];
        assert_eq!(t.common_ratio(&mut touch), None);
        let mut lamp = [1280, 1300, 1270, 1290];
        assert_eq!(t.common_ratio(&mut lamp), Some(1270));
        let mut off = [50, 52, 51, 49];
        assert_eq!(t.common_ratio(&mut off), Some(52));
        assert_eq!(t.common_ratio(&mut [1280, 1280]), None);
        assert_eq!(
            strongest([Some(3), None, Some(9), Some(9)].into_iter()),
            Some(2)
        );
        assert_eq!(strongest([None, None].into_iter()), None);
    }
}
