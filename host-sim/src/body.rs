//! The human body as a hum source, and a finger's coupling to a pad.
//!
//! Units: farads, metres, seconds.
//!
//! A person is a conductor with capacitance `C_bg` to ground and `C_bm` to
//! nearby mains wiring (Haberman, Cassino, Spinelli 2011: about 100–200 pF and
//! 0.01 to a few pF, read from the abstract). The body therefore floats at the
//! capacitive-divider potential `V_body = V_mains · C_bm / (C_bm + C_bg)`, and
//! seen from a pad it is a source of that open-circuit voltage behind its own
//! capacitance `C_bm + C_bg` (Thévenin). A finger coupling `C_f` to the pad
//! therefore acts as `C_f` in series with `C_bm + C_bg`
//! ([`Body::effective_coupling`]), which matters only for skin contact.

use crate::coupling::parallel_plate;

/// Electrical model of a person.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Body {
    /// Capacitance to ground (earth), farads.
    pub c_ground_f: f64,
    /// Capacitance to live mains wiring, farads.
    pub c_mains_f: f64,
}

impl Body {
    /// Body hum potential as a fraction of the mains voltage,
    /// `C_bm / (C_bm + C_bg)`.
    pub fn hum_ratio(&self) -> f64 {
        self.c_mains_f / (self.c_mains_f + self.c_ground_f)
    }

    /// The body's source capacitance `C_bm + C_bg`, farads.
    pub fn source_capacitance(&self) -> f64 {
        self.c_mains_f + self.c_ground_f
    }

    /// Finger coupling `c_finger` in series with the body's source capacitance.
    pub fn effective_coupling(&self, c_finger: f64) -> f64 {
        let cb = self.source_capacitance();
        if c_finger <= 0.0 {
            0.0
        } else {
            c_finger * cb / (c_finger + cb)
        }
    }
}

/// Skin-to-electrode capacitance used for bare-metal contact, farads. The
/// stratum corneum is of order 0.01–0.1 µF/cm² (from memory), so this is a
/// short compared with the body's own 100–200 pF: its value hardly matters.
pub const SKIN_CONTACT_F: f64 = 10e-9;

/// How the finger meets the electrode.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Contact {
    /// Through a dielectric overlay (glass, plastic): parallel plate.
    Overlay {
        /// Overlay thickness, metres.
        thickness_m: f64,
        /// Overlay relative permittivity.
        eps_r: f64,
    },
    /// Bare skin on the metal pad.
    Skin,
}

impl Contact {
    /// Finger-to-pad capacitance for a contact area `area_m2`, farads.
    pub fn capacitance(&self, area_m2: f64) -> f64 {
        match *self {
            Contact::Overlay { thickness_m, eps_r } => parallel_plate(eps_r, area_m2, thickness_m),
            Contact::Skin => SKIN_CONTACT_F,
        }
    }
}

/// One touch: contact from `start_s` for `hold_s`, coupling ramping up over
/// `ramp_s` at the start and down over `release_s` at the end (both inside
/// the hold), to a plateau of `pressure` (fraction of full contact area).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Touch {
    /// Contact begins, seconds.
    pub start_s: f64,
    /// Contact duration, seconds.
    pub hold_s: f64,
    /// Press ramp, seconds.
    pub ramp_s: f64,
    /// Release ramp, seconds.
    pub release_s: f64,
    /// Plateau coupling as a fraction of full contact (0..=1).
    pub pressure: f64,
}

fn smooth(x: f64) -> f64 {
    // Raised-cosine ramp from 0 to 1 on [0, 1]: contact area grows smoothly.
    let x = x.clamp(0.0, 1.0);
    0.5 - 0.5 * (std::f64::consts::PI * x).cos()
}

impl Touch {
    /// End of contact, seconds.
    pub fn end_s(&self) -> f64 {
        self.start_s + self.hold_s
    }

    /// Coupling fraction (0..=pressure) at `t`.
    pub fn fraction(&self, t: f64) -> f64 {
        let end = self.end_s();
        if t < self.start_s || t >= end {
            return 0.0;
        }
        let up = if self.ramp_s > 0.0 {
            smooth((t - self.start_s) / self.ramp_s)
        } else {
            1.0
        };
        let down = if self.release_s > 0.0 {
            smooth((end - t) / self.release_s)
        } else {
            1.0
        };
        self.pressure * up.min(down)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    // Capacitive divider (standard circuit theory): 2 pF to mains, 150 pF to
    // ground -> 230 V · 2/152 = 3.026 V RMS (computed), "volts, not
    // millivolts" as DESIGN.md §1 says.
    #[test]
    fn body_hum_potential() {
        let b = Body {
            c_ground_f: 150e-12,
            c_mains_f: 2e-12,
        };
        assert!((230.0 * b.hum_ratio() - 3.026).abs() < 1e-3);
        // Series capacitances: 2 pF with 152 pF -> 1.974 pF (computed).
        assert!((b.effective_coupling(2e-12) - 1.974e-12).abs() < 1e-15);
        // Skin contact: coupling approaches the body's own capacitance.
        let skin = b.effective_coupling(Contact::Skin.capacitance(1e-4));
        assert!(skin > 0.98 * 152e-12 && skin < 152e-12);
    }

    #[test]
    fn overlay_is_parallel_plate() {
        // 80 mm² through 2 mm of εr 3: 8.8541878188e-12·3·80e-6/2e-3 =
        // 1.0625 pF (computed, parallel plate).
        let c = Contact::Overlay {
            thickness_m: 2e-3,
            eps_r: 3.0,
        }
        .capacitance(80e-6);
        assert!((c - 1.0625e-12).abs() < 1e-16, "{c}");
    }

    #[test]
    fn touch_ramp_shape() {
        let t = Touch {
            start_s: 1.0,
            hold_s: 0.5,
            ramp_s: 0.02,
            release_s: 0.01,
            pressure: 0.8,
        };
        assert_eq!(t.fraction(0.99), 0.0);
        assert!((t.fraction(1.01) - 0.4).abs() < 1e-9); // half-way up the ramp
        assert!((t.fraction(1.2) - 0.8).abs() < 1e-12);
        assert!((t.fraction(1.495) - 0.4).abs() < 1e-9);
        assert_eq!(t.fraction(1.5), 0.0);
    }
}
