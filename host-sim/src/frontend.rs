//! Analogue front ends between the sense node and the MCU pin.
//!
//! Each takes the sense-node voltage (volts, relative to circuit ground) and
//! returns the voltage at the MCU pin. Models are static (no bandwidth
//! limits) except the comparator's hysteresis state and optional RC filter.

/// (a) Single-supply non-inverting amplifier.
///
/// `v_out = clamp(bias + (1 + Rf/Rg) · v_in, swing_low, swing_high)`: the
/// input is biased at `bias_v` and the gain network is AC-coupled to the bias,
/// so the bias appears at the output with unity gain (common practice). With
/// `bias_v = 0` and the negative rail at 0 V the output is the half-wave
/// shape of a strong input.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Amplifier {
    /// Feedback resistor, ohms (0 makes a follower).
    pub rf_ohm: f64,
    /// Gain resistor to the bias, ohms (> 0).
    pub rg_ohm: f64,
    /// Input and output bias, volts (0 = none; mid-rail is `supply / 2`).
    pub bias_v: f64,
    /// Lowest output, volts (negative rail 0 V plus output headroom).
    pub swing_low_v: f64,
    /// Highest output, volts (supply minus output headroom).
    pub swing_high_v: f64,
}

impl Amplifier {
    /// Voltage gain `1 + Rf/Rg`.
    pub fn gain(&self) -> f64 {
        1.0 + self.rf_ohm / self.rg_ohm
    }

    /// Output for input `v_in`, volts.
    pub fn output(&self, v_in: f64) -> f64 {
        (self.bias_v + self.gain() * v_in).clamp(self.swing_low_v, self.swing_high_v)
    }
}

/// (b) A chain of bipolar emitter followers (each base driven by the
/// previous emitter), the last emitter loaded by `load_ohm` to ground.
///
/// Piecewise-linear model: each conducting stage drops `vbe_v`, so
/// `v_out = clamp(v_in − n·V_BE, 0, supply − V_CE(sat))`; emitter current is
/// `(β + 1)` times base current per stage, so the chain's input draws
/// `I_E / (β + 1)^n` and loads the sense node with `(β + 1)^n · R_load`
/// while it conducts (and not at all below the drops).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FollowerChain {
    /// Number of stages (1..=4).
    pub stages: u32,
    /// Current gain β of each transistor.
    pub beta: f64,
    /// Base-emitter drop per stage, volts (~0.65 V).
    pub vbe_v: f64,
    /// Collector supply, volts.
    pub supply_v: f64,
    /// Collector-emitter saturation voltage of the last stage, volts.
    pub vce_sat_v: f64,
    /// Emitter load resistor, ohms.
    pub load_ohm: f64,
}

impl FollowerChain {
    /// Overall current gain `(β + 1)^n`.
    pub fn current_gain(&self) -> f64 {
        (self.beta + 1.0).powi(self.stages as i32)
    }

    /// Output (emitter of the last stage) for input `v_in`, volts.
    pub fn output(&self, v_in: f64) -> f64 {
        let drop = self.stages as f64 * self.vbe_v;
        (v_in - drop).clamp(0.0, (self.supply_v - self.vce_sat_v).max(0.0))
    }

    /// Current drawn by the first base at input `v_in`, amperes.
    pub fn input_current(&self, v_in: f64) -> f64 {
        self.output(v_in) / self.load_ohm / self.current_gain()
    }

    /// Resistance the chain presents to the sense node at `v_in`, ohms
    /// (infinite while it does not conduct).
    pub fn load_ohm_at(&self, v_in: f64) -> f64 {
        if self.output(v_in) > 0.0 {
            self.current_gain() * self.load_ohm
        } else {
            f64::INFINITY
        }
    }
}

/// (c) Comparator against a threshold, with hysteresis, optionally followed
/// by an RC low-pass (corner `1/(2πRC)`) into the pin.
///
/// The output goes high when `v_in > threshold + hysteresis/2` and low when
/// `v_in < threshold − hysteresis/2`. The RC stage is discretised exactly
/// for an input held over each step: `y += (1 − exp(−T/RC)) (x − y)`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Comparator {
    /// Threshold (e.g. set by a divider), volts.
    pub threshold_v: f64,
    /// Total hysteresis width, volts.
    pub hysteresis_v: f64,
    /// Output high level (supply), volts; low is 0 V.
    pub supply_v: f64,
    /// RC low-pass `(R ohms, C farads)` before the pin, if any.
    pub rc: Option<(f64, f64)>,
    /// Logic threshold of the MCU input that reads the pin, volts (used by
    /// `humsim simulate --digital`; default `supply_v / 2`). It matters
    /// only behind an RC, whose output moves between the rails slowly.
    pub pin_threshold_v: f64,
    /// Hysteresis of that input (a Schmitt trigger), total width in volts:
    /// high above `pin_threshold_v + pin_hysteresis_v / 2`, low below
    /// `pin_threshold_v − pin_hysteresis_v / 2`.
    pub pin_hysteresis_v: f64,
}

impl Comparator {
    /// Corner of the RC filter, hertz, if fitted.
    pub fn rc_corner_hz(&self) -> Option<f64> {
        self.rc.map(|(r, c)| 1.0 / (std::f64::consts::TAU * r * c))
    }

    /// Time constant of the RC filter, seconds (0 without one).
    pub fn rc_tau_s(&self) -> f64 {
        self.rc.map_or(0.0, |(r, c)| r * c)
    }

    /// The logic level the MCU reads on the pin after a step of `dt`
    /// seconds ending at `t_end`, and the time of its change within the
    /// step if it changed.
    ///
    /// - Without an RC the pin is the comparator's output: it changes when
    ///   the input crosses `threshold ± hysteresis/2`, placed between the
    ///   step's two input voltages `v0` → `v1` by linear interpolation.
    /// - Behind an RC the pin voltage `p1` (the RC's output) is read by an
    ///   input with threshold `pin_threshold_v` and hysteresis
    ///   `pin_hysteresis_v`; the crossing is interpolated between `p0` and
    ///   `p1`.
    ///
    /// `s` holds the level read so far; `high` is the comparator's state
    /// after the step (from [`AnalogFrontEndState::comparator_high`]).
    #[allow(clippy::too_many_arguments)]
    pub fn pin_step(
        &self,
        s: &mut PinState,
        v0: f64,
        v1: f64,
        p0: f64,
        p1: f64,
        high: bool,
        t_end: f64,
        dt: f64,
    ) -> Option<f64> {
        let frac = |a: f64, b: f64, x: f64| {
            if b == a {
                1.0
            } else {
                ((x - a) / (b - a)).clamp(0.0, 1.0)
            }
        };
        let (level, f) = match self.rc {
            None => {
                let half = 0.5 * self.hysteresis_v;
                let at = if high {
                    self.threshold_v + half
                } else {
                    self.threshold_v - half
                };
                (high, frac(v0, v1, at))
            }
            Some(_) => {
                let half = 0.5 * self.pin_hysteresis_v;
                let up = self.pin_threshold_v + half;
                let down = self.pin_threshold_v - half;
                if !s.high && p1 > up {
                    (true, frac(p0, p1, up))
                } else if s.high && p1 < down {
                    (false, frac(p0, p1, down))
                } else {
                    (s.high, 1.0)
                }
            }
        };
        if level == s.high {
            return None;
        }
        s.high = level;
        Some(t_end - dt + f * dt)
    }

    /// The level the MCU reads at the start, from the first step's pin
    /// voltage and comparator state.
    pub fn pin_start(&self, pin_v: f64, high: bool) -> PinState {
        PinState {
            high: match self.rc {
                None => high,
                Some(_) => pin_v > self.pin_threshold_v,
            },
        }
    }
}

/// The logic level an MCU input reads on a comparator's pin (see
/// [`Comparator::pin_step`]).
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct PinState {
    /// The level read: true while high.
    pub high: bool,
}

/// One of the front ends.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum AnalogFrontEnd {
    /// Non-inverting amplifier.
    Amplifier(Amplifier),
    /// Emitter-follower chain.
    Follower(FollowerChain),
    /// Comparator, optional RC.
    Comparator(Comparator),
}

/// Running state of an [`AnalogFrontEnd`] (only the comparator has any).
#[derive(Debug, Clone, Copy, Default)]
pub struct AnalogFrontEndState {
    high: bool,
    rc_out: f64,
    last_in: f64,
}

impl AnalogFrontEndState {
    /// The comparator's output state (true while high).
    pub fn comparator_high(&self) -> bool {
        self.high
    }

    /// The latest input voltage seen, volts.
    pub fn last_input(&self) -> f64 {
        self.last_in
    }
}

impl AnalogFrontEnd {
    /// Pin voltage for node voltage `v_in` after a step of `dt` seconds.
    pub fn output(&self, s: &mut AnalogFrontEndState, v_in: f64, dt: f64) -> f64 {
        s.last_in = v_in;
        match self {
            AnalogFrontEnd::Amplifier(a) => a.output(v_in),
            AnalogFrontEnd::Follower(f) => f.output(v_in),
            AnalogFrontEnd::Comparator(c) => {
                let half = 0.5 * c.hysteresis_v;
                if s.high && v_in < c.threshold_v - half {
                    s.high = false;
                } else if !s.high && v_in > c.threshold_v + half {
                    s.high = true;
                }
                let x = if s.high { c.supply_v } else { 0.0 };
                match c.rc {
                    Some((r, cap)) => {
                        let alpha = 1.0 - (-dt / (r * cap)).exp();
                        s.rc_out += alpha * (x - s.rc_out);
                        s.rc_out
                    }
                    None => x,
                }
            }
        }
    }

    /// Extra load on the sense node, ohms, given the last input seen.
    pub fn load_ohm(&self, s: &AnalogFrontEndState) -> f64 {
        match self {
            AnalogFrontEnd::Follower(f) => f.load_ohm_at(s.last_in),
            _ => f64::INFINITY,
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    // Non-inverting gain 1 + Rf/Rg (common practice): 3.9 MΩ / 5.6 kΩ ->
    // 1 + 696.428571 = 697.428571 (computed).
    #[test]
    fn non_inverting_gain() {
        let a = Amplifier {
            rf_ohm: 3.9e6,
            rg_ohm: 5.6e3,
            bias_v: 0.0,
            swing_low_v: 0.0,
            swing_high_v: 3.3,
        };
        assert!((a.gain() - 697.428_571_428_571_4).abs() < 1e-9);
        assert!((a.output(1e-3) - 0.697_428_571_428_571_4).abs() < 1e-12);
        assert_eq!(a.output(-1e-3), 0.0); // clipped at the 0 V rail
        assert_eq!(a.output(1.0), 3.3); // clipped at the positive rail
    }

    // Emitter follower (common practice): one V_BE drop per stage,
    // I_E = (β+1) I_B per stage. Two stages, β = 100, 0.65 V each:
    // 2 V in -> 0.7 V out; 0.7 V / 10 kΩ = 70 µA / 101² = 6.862 nA base (computed).
    #[test]
    fn follower_drops_and_current_gain() {
        let f = FollowerChain {
            stages: 2,
            beta: 100.0,
            vbe_v: 0.65,
            supply_v: 5.0,
            vce_sat_v: 0.2,
            load_ohm: 10e3,
        };
        assert!((f.output(2.0) - 0.7).abs() < 1e-12);
        assert_eq!(f.output(1.0), 0.0);
        assert_eq!(f.output(9.0), 4.8);
        assert!((f.input_current(2.0) - 6.862e-9).abs() < 1e-12);
        assert!(f.load_ohm_at(1.0).is_infinite());
        assert!((f.load_ohm_at(2.0) - 101.0 * 101.0 * 10e3).abs() < 1e-3);
    }

    #[test]
    fn comparator_hysteresis_and_rc() {
        let c = Comparator {
            threshold_v: 0.5,
            hysteresis_v: 0.2,
            supply_v: 3.3,
            rc: None,
            pin_threshold_v: 1.65,
            pin_hysteresis_v: 0.0,
        };
        let fe = AnalogFrontEnd::Comparator(c);
        let mut s = AnalogFrontEndState::default();
        let outs: Vec<f64> = [0.55, 0.61, 0.45, 0.39, 0.5]
            .iter()
            .map(|&v| fe.output(&mut s, v, 1e-3))
            .collect();
        assert_eq!(outs, vec![0.0, 3.3, 3.3, 0.0, 0.0]);
        // RC low-pass f = 1/(2πRC) (standard): 100 kΩ, 1 µF -> 1.5915 Hz.
        let c2 = Comparator {
            rc: Some((100e3, 1e-6)),
            ..c
        };
        assert!((c2.rc_corner_hz().unwrap_or(0.0) - 1.591_55).abs() < 1e-4);
        // Step response after one time constant: 1 − 1/e of the step.
        let fe2 = AnalogFrontEnd::Comparator(c2);
        let mut s2 = AnalogFrontEndState::default();
        let mut y = 0.0;
        for _ in 0..100 {
            y = fe2.output(&mut s2, 1.0, 1e-3);
        }
        assert!((y - 3.3 * (1.0 - (-1.0f64).exp())).abs() < 1e-9, "{y}");
    }

    /// Steps a sine `a·sin(2π·50·t)` through `c` at 20 µs and returns the
    /// pin's changes (time, level) over one mains cycle.
    fn pin_changes(c: Comparator, a: f64) -> Vec<(f64, bool)> {
        let fe = AnalogFrontEnd::Comparator(c);
        let mut s = AnalogFrontEndState::default();
        let dt = 20e-6;
        let v = |t: f64| a * (std::f64::consts::TAU * 50.0 * t).sin();
        let p0 = fe.output(&mut s, v(0.0), dt);
        let mut pin = c.pin_start(p0, s.comparator_high());
        let mut last_pin = p0;
        let mut out = Vec::new();
        for n in 1..=1000 {
            let t = f64::from(n) * dt;
            let v0 = s.last_input();
            let p = fe.output(&mut s, v(t), dt);
            if let Some(tc) =
                c.pin_step(&mut pin, v0, v(t), last_pin, p, s.comparator_high(), t, dt)
            {
                out.push((tc, pin.high));
            }
            last_pin = p;
        }
        out
    }

    #[test]
    fn pin_edges_fall_where_the_sine_crosses_the_thresholds() {
        // A sine of amplitude 2 against a threshold of 1 with 0.2 of
        // hysteresis rises past 1.1 at asin(0.55)/ω and falls past 0.9 at
        // (π − asin(0.45))/ω (standard trigonometry; ω = 2π·50 Hz). Linear
        // interpolation between 20 µs steps misses by about
        // dt²/8 · ω·tan(φ) = 0.01 µs (computed): within 0.1 µs here.
        let c = Comparator {
            threshold_v: 1.0,
            hysteresis_v: 0.2,
            supply_v: 3.3,
            rc: None,
            pin_threshold_v: 1.65,
            pin_hysteresis_v: 0.0,
        };
        let w = std::f64::consts::TAU * 50.0;
        let rise = 0.55f64.asin() / w;
        let fall = (std::f64::consts::PI - 0.45f64.asin()) / w;
        let got = pin_changes(c, 2.0);
        assert_eq!(got.len(), 2, "{got:?}");
        assert!(
            (got[0].0 - rise).abs() < 1e-7 && got[0].1,
            "{got:?} vs {rise}"
        );
        assert!(
            (got[1].0 - fall).abs() < 1e-7 && !got[1].1,
            "{got:?} vs {fall}"
        );
        // The duty without hysteresis: acos(Vt/A)/π = 1/3 at A = 2 Vt
        // (REFERENCES.md, comparator on a sine).
        let got = pin_changes(
            Comparator {
                hysteresis_v: 0.0,
                ..c
            },
            2.0,
        );
        let duty = (got[1].0 - got[0].0) * 50.0;
        assert!((duty - 1.0 / 3.0).abs() < 1e-5, "{duty}");
    }

    #[test]
    fn behind_an_rc_the_pin_changes_late_by_the_charging_time() {
        // The RC output charges as Vs·(1 − e^(−t/τ)) (RC low-pass step
        // response, standard): it reaches the input's upper threshold
        // 1.65 + 0.33 V at τ·ln(3.3/1.32) = 0.9163 τ after the comparator
        // rises (computed). The simulation applies the comparator's new
        // output over the whole step in which it switched, so the RC starts
        // charging up to one step (20 µs) early.
        let c = Comparator {
            threshold_v: 1.0,
            hysteresis_v: 0.0,
            supply_v: 3.3,
            rc: Some((33e3, 10e-9)),
            pin_threshold_v: 1.65,
            pin_hysteresis_v: 0.66,
        };
        let w = std::f64::consts::TAU * 50.0;
        let rise = 0.5f64.asin() / w;
        let tau = 33e3 * 10e-9;
        let want = rise + tau * (3.3f64 / 1.32).ln();
        let got = pin_changes(c, 2.0);
        assert!(got.len() == 2 && got[0].1, "{got:?}");
        let late = got[0].0 - want;
        assert!((-20e-6..=1e-6).contains(&late), "{late}");
        // And falls about as late: the pulse keeps its width within two
        // steps (the RC discharges to 1.32 V in the same 0.9163 τ).
        let width = got[1].0 - got[0].0;
        let sine_width = (std::f64::consts::PI - 2.0 * 0.5f64.asin()) / w;
        assert!(
            (width - sine_width).abs() < 40e-6,
            "{width} vs {sine_width}"
        );
    }
}
