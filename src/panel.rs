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
use crate::fixed::{div_rem_u32, f32_to_fixed};

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
    use super::*;

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
