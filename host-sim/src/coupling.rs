//! Capacitive coupling into the sense node, and the sense node itself.
//!
//! Units: farads, ohms, metres, volts, seconds, hertz.
//!
//! The sense electrode has an input resistance `R` to circuit ground and a
//! stray capacitance `C_s`. Sources at potentials `V_i` (relative to circuit
//! ground) couple in through capacitances `C_i`. Kirchhoff's current law at the
//! node gives, with `Q = Σ C_i V_i`, `C_tot = C_s + Σ C_i` and `u = C_tot V`,
//!
//! `du/dt = dQ/dt − u / τ`, `τ = R C_tot`,
//!
//! which holds with time-varying `C_i` (a finger pressing, a conductor
//! approaching). For constant coupling and a sinusoidal source it is the
//! high-pass divider of DESIGN.md §1,
//! `V_in = V · jωC_cR / (1 + jω(C_c + C_s)R)` ([`SenseNode::magnitude`]).
//!
//! Discretisation ([`SenseNode::step`]): exact for `Q` piecewise linear between
//! samples (first-order hold) and `τ` constant within a step,
//! `u[n] = a u[n−1] + (Q[n] − Q[n−1]) (τ/T)(1 − a)`, `a = exp(−T/τ)`,
//! `V[n] = u[n] / C_tot[n]`. Its error against the continuous response at a
//! frequency `f` is of order `(ωT)²/24` (the first-order hold's sinc), about
//! 0.1 % at 50 Hz sampled at 2 kHz.

use std::f64::consts::TAU;

/// Vacuum permittivity ε0, F/m (CODATA 2022, read).
pub const EPSILON_0: f64 = 8.854_187_818_8e-12;

/// Parallel-plate capacitance `C = ε0 εr A / d`, farads, for area `area_m2`
/// (m²) and gap `gap_m` (m). Fringing is neglected. Returns 0 for a
/// non-positive area and infinity for a zero gap; callers validate.
pub fn parallel_plate(eps_r: f64, area_m2: f64, gap_m: f64) -> f64 {
    if area_m2 <= 0.0 {
        return 0.0;
    }
    EPSILON_0 * eps_r * area_m2 / gap_m
}

/// Capacitance of a round wire of radius `radius_m` whose axis is
/// `height_m` above a conducting plane, over a length `length_m` (farads):
/// `C = 2π ε0 εr L / acosh(h / r)`, the cylinder-over-ground-plane result of
/// transmission-line handbooks (e.g. Wadell, Transmission Line Design
/// Handbook, 1991, wire over ground: from memory). The electrode is taken as
/// the plane and `L` as its extent along the wire, an approximation that
/// overestimates the coupling of a small electrode. `height_m` is clamped to
/// at least `1.001 r` (the wire touching the plane).
pub fn wire_over_plane(eps_r: f64, length_m: f64, radius_m: f64, height_m: f64) -> f64 {
    let ratio = (height_m / radius_m).max(1.001);
    TAU * EPSILON_0 * eps_r * length_m / ratio.acosh()
}

/// Coupling of a round wire to an electrode strip of width `width_m`
/// (across the wire) and length `length_m` (along it), the wire's axis at
/// `height_m`: [`wire_over_plane`] times the fraction of the wire's flux
/// toward the plane that the strip intercepts, `(2/π) atan(w / 2h)` (the angle
/// the strip subtends seen from the wire, relative to the half-plane's π).
/// This is our own approximation: it tends to the handbook formula as
/// `w → ∞` and falls as `w / (π h)` far away, where an infinite plane would
/// wrongly fall only logarithmically.
pub fn wire_to_strip(eps_r: f64, length_m: f64, radius_m: f64, width_m: f64, height_m: f64) -> f64 {
    let share = std::f64::consts::FRAC_2_PI * (width_m / (2.0 * height_m.max(1e-9))).atan();
    wire_over_plane(eps_r, length_m, radius_m, height_m) * share
}

/// A flat live surface of area `area_m2` facing the electrode at `gap_m`:
/// [`parallel_plate`] times `(2/π) atan(√A / 2d)`, our own far-field
/// correction in the spirit of [`wire_to_strip`]: exact as `d → 0`, falling
/// as `1/d²` once the gap exceeds the plate's size, where the bare
/// parallel-plate formula would overestimate. Gaps are clamped to ≥ 0.1 mm.
pub fn plate_facing(eps_r: f64, area_m2: f64, gap_m: f64) -> f64 {
    let d = gap_m.max(1e-4);
    let share = std::f64::consts::FRAC_2_PI * (area_m2.max(0.0).sqrt() / (2.0 * d)).atan();
    parallel_plate(eps_r, area_m2, d) * share
}

/// RMS current through a capacitance `c` (farads) from an RMS voltage
/// `v_rms` at `f` hertz into a node held near ground: `I = 2π f C V`, amperes.
pub fn coupled_current(v_rms: f64, f: f64, c: f64) -> f64 {
    TAU * f * c * v_rms
}

/// How a coupling capacitance is obtained.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Geometry {
    /// Given directly, farads (independent of distance).
    Fixed(f64),
    /// A round wire facing an electrode strip ([`wire_to_strip`]).
    Wire {
        /// Relative permittivity of the medium.
        eps_r: f64,
        /// Wire radius, metres.
        radius_m: f64,
        /// Electrode length along the wire, metres.
        length_m: f64,
        /// Electrode width across the wire, metres.
        width_m: f64,
    },
    /// A flat live surface facing the electrode ([`plate_facing`]).
    Plate {
        /// Relative permittivity of the medium.
        eps_r: f64,
        /// Facing area, m².
        area_m2: f64,
    },
}

impl Geometry {
    /// Capacitance at distance `d_m` (metres; for a wire, of its axis from the
    /// electrode plane).
    pub fn capacitance(&self, d_m: f64) -> f64 {
        match *self {
            Geometry::Fixed(c) => c,
            Geometry::Wire {
                eps_r,
                radius_m,
                length_m,
                width_m,
            } => wire_to_strip(eps_r, length_m, radius_m, width_m, d_m),
            Geometry::Plate { eps_r, area_m2 } => plate_facing(eps_r, area_m2, d_m),
        }
    }
}

/// Piecewise-linear position schedule: `(time s, lateral offset m)` points,
/// held constant before the first and after the last. The distance from the
/// electrode is `sqrt(depth² + offset²)`, so a straight pass of a buried cable
/// at `depth_m` gives the familiar rise and fall; with `depth_m = 0` the
/// offset is the distance itself.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct DistanceSchedule {
    /// Minimum distance (depth below the scanned surface), metres.
    pub depth_m: f64,
    /// Points sorted by time.
    pub points: Vec<(f64, f64)>,
}

impl DistanceSchedule {
    /// Offset at `t` by linear interpolation.
    pub fn offset(&self, t: f64) -> f64 {
        let i = self.points.partition_point(|p| p.0 <= t);
        match (self.points.get(i.wrapping_sub(1)), self.points.get(i)) {
            (Some(&(t0, x0)), Some(&(t1, x1))) => {
                if t1 > t0 {
                    x0 + (x1 - x0) * (t - t0) / (t1 - t0)
                } else {
                    x1
                }
            }
            (Some(&(_, x0)), None) => x0,
            (None, Some(&(_, x1))) => x1,
            (None, None) => f64::INFINITY,
        }
    }

    /// Distance from the electrode at `t`, metres.
    pub fn distance(&self, t: f64) -> f64 {
        self.offset(t).hypot(self.depth_m)
    }
}

/// Configuration of a sense node.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SenseNode {
    /// Input resistance to circuit ground, ohms.
    pub r_ohm: f64,
    /// Stray capacitance to circuit ground (pad, trace, input), farads.
    pub c_stray_f: f64,
}

/// Running state of a [`SenseNode`].
#[derive(Debug, Clone, Copy, Default)]
pub struct SenseNodeState {
    /// Node charge `u = C_tot V`, coulombs.
    pub u: f64,
    q_prev: Option<f64>,
    tau_cached: f64,
    a_cached: f64,
    k_cached: f64,
    c_tot: f64,
}

impl SenseNode {
    /// Closed-form magnitude `|V_in / V| = ωC_cR / |1 + jω(C_c + C_s)R|` at
    /// `f` hertz for coupling `c_c` farads (DESIGN.md §1).
    pub fn magnitude(&self, c_c: f64, f: f64) -> f64 {
        let w = TAU * f;
        let num = w * c_c * self.r_ohm;
        let im = w * (c_c + self.c_stray_f) * self.r_ohm;
        num / (1.0 + im * im).sqrt()
    }

    /// High-pass corner `1 / (2π R (C_c + C_s))`, hertz.
    pub fn corner_hz(&self, c_c: f64) -> f64 {
        1.0 / (TAU * self.r_ohm * (c_c + self.c_stray_f))
    }

    /// One step of `dt` seconds. `q` is `Σ C_i V_i` now (coulombs), `c_coupling`
    /// is `Σ C_i` now (farads), `load_ohm` an extra resistance to ground in
    /// parallel with `R` (infinity for none). Returns the node voltage.
    /// The first call only records `q` (the node starts at rest).
    pub fn step(
        &self,
        s: &mut SenseNodeState,
        q: f64,
        c_coupling: f64,
        load_ohm: f64,
        dt: f64,
    ) -> f64 {
        let c_tot = self.c_stray_f + c_coupling;
        let r = if load_ohm.is_finite() {
            self.r_ohm * load_ohm / (self.r_ohm + load_ohm)
        } else {
            self.r_ohm
        };
        let tau = r * c_tot;
        if tau != s.tau_cached {
            s.tau_cached = tau;
            s.a_cached = (-dt / tau).exp();
            s.k_cached = (tau / dt) * (1.0 - s.a_cached);
        }
        let dq = q - s.q_prev.unwrap_or(q);
        s.q_prev = Some(q);
        s.u = s.a_cached * s.u + dq * s.k_cached;
        s.c_tot = c_tot;
        s.u / c_tot
    }

    /// Adds a charge `charge` (coulombs) that arrived `age_s` seconds before
    /// the current sample, decayed through the node's time constant.
    pub fn inject(&self, s: &mut SenseNodeState, charge: f64, age_s: f64) {
        if s.tau_cached > 0.0 {
            s.u += charge * (-age_s / s.tau_cached).exp();
        }
    }

    /// The node voltage after the last step (or injection), volts.
    pub fn voltage(&self, s: &SenseNodeState) -> f64 {
        if s.c_tot > 0.0 {
            s.u / s.c_tot
        } else {
            0.0
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    // Coupled current I = 2πfCV (standard circuit theory; values computed in
    // REFERENCES.md): 230 V, 50 Hz, 1 pF -> 72.26 nA; 120 V, 60 Hz -> 45.24 nA.
    #[test]
    fn coupled_current_check_values() {
        assert!((coupled_current(230.0, 50.0, 1e-12) - 72.26e-9).abs() < 0.01e-9);
        assert!((coupled_current(120.0, 60.0, 1e-12) - 45.24e-9).abs() < 0.01e-9);
    }

    // Parallel plate C = ε0 εr A/d with ε0 from CODATA 2022 (read);
    // 1 cm² through 1 mm: εr 1 -> 0.885 pF, εr 3 -> 2.656 pF (computed).
    #[test]
    fn parallel_plate_check_values() {
        assert!((parallel_plate(1.0, 1e-4, 1e-3) - 0.885e-12).abs() < 0.001e-12);
        assert!((parallel_plate(3.0, 1e-4, 1e-3) - 2.656e-12).abs() < 0.001e-12);
    }

    // Wire over plane: acosh(x) -> ln(2x) for x >> 1, so the handbook form
    // (Wadell, from memory) must meet the thin-wire form 2π ε0 L / ln(2h/r)
    // (standard electrostatics, image method). At h/r = 10:
    // 2π·8.8541878188e-12/acosh(10) = 18.586 pF/m (computed).
    #[test]
    fn wire_over_plane_limits() {
        let exact = wire_over_plane(1.0, 1.0, 1e-4, 0.1);
        let thin = TAU * EPSILON_0 / (2.0f64 * 1000.0).ln();
        assert!((exact / thin - 1.0).abs() < 1e-6);
        let c = wire_over_plane(1.0, 1.0, 1e-3, 1e-2);
        assert!((c - 18.586e-12).abs() < 0.002e-12, "{c}");
    }

    // DESIGN.md §1 example: 230 V, 50 Hz, 10 MΩ, 1 pF: corner far above
    // 50 Hz and V_in ≈ V ωC_cR ≈ 1 V peak (computed: 325.27 V · 3.1416e-3 =
    // 1.0219 V at C_s = 0).
    #[test]
    fn design_example_one_volt() {
        let n = SenseNode {
            r_ohm: 10e6,
            c_stray_f: 0.0,
        };
        assert!(n.corner_hz(1e-12) > 15_000.0);
        let v = 230.0 * 2f64.sqrt() * n.magnitude(1e-12, 50.0);
        assert!((v - 1.0219).abs() < 1e-3, "{v}");
    }

    #[test]
    fn step_response_decays_with_tau() {
        // A charge step ΔQ gives V = ΔQ/C_tot · exp(−t/τ) (first-order RC).
        let n = SenseNode {
            r_ohm: 1e6,
            c_stray_f: 100e-12,
        };
        let mut s = SenseNodeState::default();
        let dt = 1e-6;
        n.step(&mut s, 0.0, 0.0, f64::INFINITY, dt);
        n.inject(&mut s, 1e-10, 0.0);
        assert!((n.voltage(&s) - 1.0).abs() < 1e-12);
        let tau = 1e-4;
        let mut v = 0.0;
        for _ in 0..100 {
            v = n.step(&mut s, 0.0, 0.0, f64::INFINITY, dt);
        }
        assert!((v - (-(100.0 * dt) / tau).exp()).abs() < 1e-9, "{v}");
    }

    #[test]
    fn strip_tends_to_plane_and_falls_off() {
        let plane = wire_over_plane(2.0, 0.03, 7e-4, 0.025);
        let wide = wire_to_strip(2.0, 0.03, 7e-4, 1e6, 0.025);
        assert!((wide / plane - 1.0).abs() < 1e-6);
        // Far away: share -> w/(π h) (atan x ≈ x).
        let far = wire_to_strip(2.0, 0.03, 7e-4, 0.03, 3.0);
        let share = 0.03 / (std::f64::consts::PI * 3.0);
        assert!((far / wire_over_plane(2.0, 0.03, 7e-4, 3.0) / share - 1.0).abs() < 1e-4);
        // Monotonic fall with distance.
        let c: Vec<f64> = [0.01, 0.03, 0.1, 0.3, 1.0]
            .iter()
            .map(|&h| wire_to_strip(2.0, 0.03, 7e-4, 0.03, h))
            .collect();
        assert!(c.windows(2).all(|w| w[0] > w[1]), "{c:?}");
    }

    #[test]
    fn schedule_interpolates_and_holds() {
        let d = DistanceSchedule {
            depth_m: 0.03,
            points: vec![(0.0, 0.5), (2.0, -0.5)],
        };
        assert!((d.distance(1.0) - 0.03).abs() < 1e-12);
        assert!((d.offset(0.5) - 0.25).abs() < 1e-12);
        assert_eq!(d.offset(5.0), -0.5);
        assert_eq!(d.offset(-1.0), 0.5);
    }
}
