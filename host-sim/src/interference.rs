//! Interference: electrostatic discharge, lamp and dimmer switching, slow
//! drift of the ambient coupling.
//!
//! Units: amperes, volts, coulombs, seconds, farads.
//!
//! Broadband noise at the sense node is a plain Gaussian term (volts RMS)
//! added in the scenario renderer; it needs no type of its own.

use crate::rng::Rng;

/// Current per kilovolt of the contact-discharge waveform model, a sum of two
/// double-exponential pulses,
/// `i(t)/kV = a1 (e^(−t/d1) − e^(−t/r1)) + a2 (e^(−t/d2) − e^(−t/r2))`,
/// fitted here (least squares by hand-rolled search) to the IEC 61000-4-2
/// contact-discharge points: first peak 3.75 A/kV, 2 A/kV at 30 ns, 1 A/kV
/// at 60 ns, 10–90 % rise 0.8 ns (edition 1 table read; 2008 tolerances from
/// memory), and to the total charge of the 150 pF generator, 150 nC/kV
/// (IEC 61000-4-2, secondary; computed `Q = CV`).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct EsdWaveform {
    /// Charging voltage, kilovolts (sign gives polarity).
    pub kv: f64,
}

const A1: f64 = 6.7499;
const R1: f64 = 0.673_89e-9;
const D1: f64 = 2.876_33e-9;
const A2: f64 = 5.420_94;
const R2: f64 = 10.988_5e-9;
const D2: f64 = 35.909_25e-9;

impl EsdWaveform {
    /// Contact discharge at `kv` kilovolts (IEC levels 2, 4, 6, 8).
    pub fn contact(kv: f64) -> Self {
        EsdWaveform { kv }
    }

    /// Discharge current at `t` seconds after onset, amperes (0 before).
    pub fn current(&self, t: f64) -> f64 {
        if t < 0.0 {
            return 0.0;
        }
        let per_kv =
            A1 * ((-t / D1).exp() - (-t / R1).exp()) + A2 * ((-t / D2).exp() - (-t / R2).exp());
        self.kv * per_kv
    }

    /// Total charge `∫ i dt`, coulombs (closed form of the integral).
    pub fn charge(&self) -> f64 {
        self.kv * (A1 * (D1 - R1) + A2 * (D2 - R2))
    }
}

/// One discharge reaching the board: its time and the charge that arrives at
/// the sense node (`charge_fraction` of the discharge, the coupling path).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Discharge {
    /// Onset, seconds.
    pub at_s: f64,
    /// Charge delivered into the sense node, coulombs.
    pub charge_c: f64,
}

/// A burst of `count` discharges `interval_s` apart (as a test operator
/// repeats single discharges), each delivering `charge_fraction` of its charge
/// into the sense node.
pub fn burst(
    at_s: f64,
    kv: f64,
    count: u32,
    interval_s: f64,
    charge_fraction: f64,
) -> Vec<Discharge> {
    let q = EsdWaveform::contact(kv).charge() * charge_fraction;
    (0..count)
        .map(|k| Discharge {
            at_s: at_s + k as f64 * interval_s,
            charge_c: q,
        })
        .collect()
}

/// A lamp on a leading-edge phase-cut dimmer. While on, its cord carries the
/// mains voltage only after the firing angle of each half cycle (0° = full
/// brightness); the rest of the half cycle it sits near neutral through the
/// filament. The cut waveform is rich in odd harmonics, and switching it on
/// or off steps the ambient hum.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Lamp {
    /// Coupling from the lamp's cord to each pad, farads.
    pub coupling_f: f64,
    /// Firing angle, degrees in `[0, 180)`.
    pub firing_deg: f64,
}

impl Lamp {
    /// Cord voltage given the mains voltage and phase (turns) of the
    /// fundamental.
    pub fn cord_voltage(&self, mains_v: f64, phase_turns: f64) -> f64 {
        let half = (phase_turns * 2.0).fract() * 180.0;
        if half >= self.firing_deg {
            mains_v
        } else {
            0.0
        }
    }
}

/// Slow multiplicative drift of the ambient coupling (humidity, people
/// moving about): `factor = exp(x)`, `x` an Ornstein-Uhlenbeck process with
/// standard deviation `sigma` (relative) and correlation time `tau_s`,
/// updated by its exact discretisation and clamped to ±3σ.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Drift {
    /// Relative standard deviation (0.05 = 5 %).
    pub sigma: f64,
    /// Correlation time, seconds.
    pub tau_s: f64,
}

/// State of a [`Drift`].
#[derive(Debug, Clone)]
pub struct DriftState {
    x: f64,
    rng: Rng,
}

impl DriftState {
    /// Starts at factor 1.
    pub fn new(rng: Rng) -> Self {
        DriftState { x: 0.0, rng }
    }

    /// The multiplicative factor now.
    pub fn factor(&self) -> f64 {
        self.x.exp()
    }
}

impl Drift {
    /// Advances by `dt` seconds and returns the new factor.
    pub fn advance(&self, s: &mut DriftState, dt: f64) -> f64 {
        if self.sigma > 0.0 && self.tau_s > 0.0 {
            let a = (-dt / self.tau_s).exp();
            s.x = a * s.x + self.sigma * (1.0 - a * a).sqrt() * s.rng.gaussian();
            s.x = s.x.clamp(-3.0 * self.sigma, 3.0 * self.sigma);
        }
        s.factor()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    // Lamp cord: at 90° firing only the second quarter of each half cycle
    // conducts.
    #[test]
    fn dimmer_cuts_the_leading_part() {
        let l = Lamp {
            coupling_f: 1e-15,
            firing_deg: 90.0,
        };
        assert_eq!(l.cord_voltage(100.0, 0.1), 0.0); // 36°
        assert_eq!(l.cord_voltage(100.0, 0.3), 100.0); // 108°
        assert_eq!(l.cord_voltage(-50.0, 0.6), 0.0); // 216° = 36° of 2nd half
        assert_eq!(l.cord_voltage(-50.0, 0.8), -50.0);
    }

    #[test]
    fn drift_is_bounded_and_moves() {
        let d = Drift {
            sigma: 0.1,
            tau_s: 1.0,
        };
        let mut s = DriftState::new(Rng::new(1, 2));
        let (mut lo, mut hi) = (f64::MAX, f64::MIN);
        for _ in 0..100_000 {
            let f = d.advance(&mut s, 0.01);
            lo = lo.min(f);
            hi = hi.max(f);
        }
        assert!(lo >= (-0.3f64).exp() - 1e-12 && hi <= 0.3f64.exp() + 1e-12);
        assert!(hi / lo > 1.3, "drift hardly moved: {lo}..{hi}");
    }
}
