//! The mains supply: voltage, frequency wander, harmonics, dips, swells and
//! switching, as one continuous-phase waveform.
//!
//! Units: volts (RMS where named `rms`), hertz, seconds. Phase is kept in
//! turns (1.0 = one cycle of the fundamental) in `[0, 1)`.
//!
//! Difference equation, per step of `dt` seconds:
//! `phase[n] = frac(phase[n-1] + f[n] * dt)` and
//! `v[n] = sqrt(2) * rms * envelope(t) * (sin(2π phase) + Σ_k h_k sin(2π k phase + θ_k))`.
//! Because the phase is the integral of the frequency, a frequency step or
//! wander never makes the waveform jump.
//!
//! The instantaneous frequency is
//! `f(t) = clamp(nominal(t) + wander(t) + sweep * sin(2π t / sweep_period), range)`,
//! where `wander` is an Ornstein-Uhlenbeck process (a mean-reverting, hence
//! bounded, random walk) with standard deviation `wander_hz` and correlation
//! time `wander_tau_s`, updated every [`WANDER_UPDATE_S`] by its exact
//! discretisation. EN 50160:2010 §4.2.1 (secondary) allows 50 Hz ±1 % for
//! 99.5 % of a year and +4 %/−6 % (47–52 Hz) always; the clamp `range_hz`
//! defaults to that always-range.

use crate::field_error::FieldError;
use crate::rng::Rng;
use std::f64::consts::{PI, SQRT_2, TAU};

/// How often the frequency wander process is updated, seconds.
pub const WANDER_UPDATE_S: f64 = 0.01;

/// One harmonic of the supply voltage.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Harmonic {
    /// Order (2 = second harmonic). At least 2.
    pub order: u32,
    /// Amplitude in percent of the fundamental.
    pub percent: f64,
    /// Phase relative to the fundamental, degrees.
    pub phase_deg: f64,
}

/// Static description of a supply.
#[derive(Debug, Clone, PartialEq)]
pub struct MainsConfig {
    /// Nominal RMS voltage, volts.
    pub rms_v: f64,
    /// Nominal frequency, hertz.
    pub frequency_hz: f64,
    /// Hard bounds on the instantaneous frequency, hertz (low, high).
    pub range_hz: (f64, f64),
    /// Standard deviation of the random wander, hertz (0 = none).
    pub wander_hz: f64,
    /// Correlation time of the random wander, seconds.
    pub wander_tau_s: f64,
    /// Amplitude of a slow sinusoidal sweep of the frequency, hertz.
    pub sweep_hz: f64,
    /// Period of that sweep, seconds.
    pub sweep_period_s: f64,
    /// Harmonics of the voltage.
    pub harmonics: Vec<Harmonic>,
}

impl MainsConfig {
    /// 230 V, 50 Hz (IEC 60038 Table 1, secondary) with the EN 50160
    /// always-range 47–52 Hz (secondary) and a small wander (0.02 Hz,
    /// 30 s): grid frequency typically stays within a few tens of mHz
    /// (common practice).
    pub fn preset_230v_50hz() -> Self {
        MainsConfig {
            rms_v: 230.0,
            frequency_hz: 50.0,
            range_hz: (47.0, 52.0),
            wander_hz: 0.02,
            wander_tau_s: 30.0,
            sweep_hz: 0.0,
            sweep_period_s: 600.0,
            harmonics: Vec::new(),
        }
    }

    /// 120 V, 60 Hz (IEC 60038 Table 1 / ANSI C84.1, secondary). EN 50160 does
    /// not cover 60 Hz systems; its +4 %/−6 % range is applied by analogy
    /// (56.4–62.4 Hz), an assumption of this simulator.
    pub fn preset_120v_60hz() -> Self {
        MainsConfig {
            rms_v: 120.0,
            frequency_hz: 60.0,
            range_hz: (56.4, 62.4),
            ..Self::preset_230v_50hz()
        }
    }

    /// Checks the configuration; the error names the offending field.
    pub fn validate(&self) -> Result<(), FieldError> {
        let (lo, hi) = self.range_hz;
        if !(self.rms_v.is_finite() && self.rms_v >= 0.0) {
            return Err(FieldError::new("rms_v", "expected a voltage >= 0"));
        }
        if !(lo.is_finite() && hi.is_finite() && lo > 0.0 && lo < hi) {
            return Err(FieldError::new(
                "range_hz",
                "expected [low, high] with 0 < low < high",
            ));
        }
        if !(self.frequency_hz >= lo && self.frequency_hz <= hi) {
            return Err(FieldError::new(
                "frequency_hz",
                format!(
                    "expected a value inside range_hz [{lo}, {hi}], got {}",
                    self.frequency_hz
                ),
            ));
        }
        if !(self.wander_hz.is_finite() && self.wander_hz >= 0.0) {
            return Err(FieldError::new("wander_hz", "expected >= 0"));
        }
        if !(self.wander_tau_s.is_finite() && self.wander_tau_s > 0.0) {
            return Err(FieldError::new("wander_tau_s", "expected > 0 seconds"));
        }
        if !(self.sweep_hz.is_finite() && self.sweep_hz >= 0.0) {
            return Err(FieldError::new("sweep_hz", "expected >= 0"));
        }
        if !(self.sweep_period_s.is_finite() && self.sweep_period_s > 0.0) {
            return Err(FieldError::new("sweep_period_s", "expected > 0 seconds"));
        }
        for h in &self.harmonics {
            if h.order < 2 || h.order > 100 {
                return Err(FieldError::new(
                    "harmonics",
                    format!("order {} outside 2..=100", h.order),
                ));
            }
            if !(h.percent.is_finite() && (0.0..=100.0).contains(&h.percent)) {
                return Err(FieldError::new(
                    "harmonics",
                    format!("percent {} outside 0..=100 (order {})", h.percent, h.order),
                ));
            }
            if !h.phase_deg.is_finite() {
                return Err(FieldError::new("harmonics", "phase_deg must be finite"));
            }
        }
        Ok(())
    }
}

/// A scheduled change of the supply.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum MainsEvent {
    /// Voltage dip (EN 50160: RMS below 90 % of reference): the voltage falls
    /// to `residual` (fraction of nominal, e.g. 0.4 for a 40 % residual
    /// voltage) for `duration_s`.
    Dip {
        /// Start, seconds.
        at_s: f64,
        /// Duration, seconds (EN 50160 dips last 10 ms to 1 min).
        duration_s: f64,
        /// Residual voltage as a fraction of nominal (0..1).
        residual: f64,
    },
    /// Swell: the voltage rises to `magnitude` (fraction of nominal, > 1).
    Swell {
        /// Start, seconds.
        at_s: f64,
        /// Duration, seconds.
        duration_s: f64,
        /// Magnitude as a fraction of nominal (e.g. 1.15).
        magnitude: f64,
    },
    /// Supply switched off (an interruption) from `at_s`.
    Off {
        /// Time, seconds.
        at_s: f64,
    },
    /// Supply switched back on at `at_s`.
    On {
        /// Time, seconds.
        at_s: f64,
    },
    /// The nominal frequency steps to `to_hz` at `at_s` (phase stays continuous).
    FrequencyStep {
        /// Time, seconds.
        at_s: f64,
        /// New nominal frequency, hertz.
        to_hz: f64,
    },
}

/// EN 50160 / IEC 61000-4-30 classification of an RMS level relative to the
/// reference voltage (secondary): interruption below 5 %, dip below 90 %,
/// swell above 110 %.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum VoltageClass {
    /// Below 5 % of reference.
    Interruption,
    /// 5 % to below 90 %.
    Dip,
    /// 90 % to 110 %.
    Normal,
    /// Above 110 %.
    Swell,
}

/// Classify a relative RMS level (1.0 = reference).
pub fn classify(relative: f64) -> VoltageClass {
    if relative < 0.05 {
        VoltageClass::Interruption
    } else if relative < 0.90 {
        VoltageClass::Dip
    } else if relative <= 1.10 {
        VoltageClass::Normal
    } else {
        VoltageClass::Swell
    }
}

/// The deterministic part of the supply's timeline: envelope and nominal
/// frequency as pure functions of time.
#[derive(Debug, Clone, Default)]
pub struct MainsSchedule {
    /// (start, end, level) intervals of dips and swells, sorted by start.
    levels: Vec<(f64, f64, f64)>,
    /// (time, on) switching points, sorted.
    switching: Vec<(f64, bool)>,
    /// (time, nominal Hz) frequency steps, sorted.
    steps: Vec<(f64, f64)>,
}

impl MainsSchedule {
    /// Builds the schedule from events in any order.
    pub fn new(events: &[MainsEvent]) -> Self {
        let mut s = MainsSchedule::default();
        for e in events {
            match *e {
                MainsEvent::Dip {
                    at_s,
                    duration_s,
                    residual,
                } => s.levels.push((at_s, at_s + duration_s, residual)),
                MainsEvent::Swell {
                    at_s,
                    duration_s,
                    magnitude,
                } => s.levels.push((at_s, at_s + duration_s, magnitude)),
                MainsEvent::Off { at_s } => s.switching.push((at_s, false)),
                MainsEvent::On { at_s } => s.switching.push((at_s, true)),
                MainsEvent::FrequencyStep { at_s, to_hz } => s.steps.push((at_s, to_hz)),
            }
        }
        s.levels.sort_by(|a, b| a.0.total_cmp(&b.0));
        s.switching.sort_by(|a, b| a.0.total_cmp(&b.0));
        s.steps.sort_by(|a, b| a.0.total_cmp(&b.0));
        s
    }

    /// Whether the supply is switched on at `t`.
    pub fn energised(&self, t: f64) -> bool {
        let i = self.switching.partition_point(|p| p.0 <= t);
        i == 0 || matches!(self.switching.get(i - 1), None | Some((_, true)))
    }

    /// Relative amplitude at `t`: 0 when off, the level of the latest-started
    /// dip or swell covering `t`, else 1.
    pub fn envelope(&self, t: f64) -> f64 {
        if !self.energised(t) {
            return 0.0;
        }
        let i = self.levels.partition_point(|p| p.0 <= t);
        self.levels
            .get(..i)
            .unwrap_or(&[])
            .iter()
            .rev()
            .find(|p| t < p.1)
            .map_or(1.0, |p| p.2)
    }

    /// Nominal frequency at `t` given the configured one.
    pub fn nominal(&self, t: f64, configured: f64) -> f64 {
        let i = self.steps.partition_point(|p| p.0 <= t);
        if i == 0 {
            configured
        } else {
            self.steps.get(i - 1).map_or(configured, |p| p.1)
        }
    }
}

/// The running supply: owns its phase, wander state and schedule.
#[derive(Debug, Clone)]
pub struct MainsSource {
    config: MainsConfig,
    schedule: MainsSchedule,
    rng: Rng,
    t: f64,
    phase: f64,
    wander: f64,
    since_update: f64,
    frequency: f64,
    harmonics: Vec<(f64, f64, f64)>,
}

impl MainsSource {
    /// A source at t = 0, phase 0. Fails with a message naming the field if
    /// the configuration is invalid.
    pub fn new(config: MainsConfig, events: &[MainsEvent], seed: u64) -> Result<Self, String> {
        config.validate().map_err(|e| e.to_string())?;
        let harmonics = config
            .harmonics
            .iter()
            .map(|h| (h.order as f64, h.percent / 100.0, h.phase_deg * PI / 180.0))
            .collect();
        let mut s = MainsSource {
            schedule: MainsSchedule::new(events),
            rng: Rng::new(seed, crate::rng::stream::MAINS),
            t: 0.0,
            phase: 0.0,
            wander: 0.0,
            since_update: 0.0,
            frequency: config.frequency_hz,
            harmonics,
            config,
        };
        s.frequency = s.compute_frequency();
        Ok(s)
    }

    /// The configuration.
    pub fn config(&self) -> &MainsConfig {
        &self.config
    }

    /// The deterministic schedule.
    pub fn schedule(&self) -> &MainsSchedule {
        &self.schedule
    }

    fn compute_frequency(&self) -> f64 {
        let c = &self.config;
        let sweep = if c.sweep_hz > 0.0 {
            c.sweep_hz * (TAU * self.t / c.sweep_period_s).sin()
        } else {
            0.0
        };
        let f = self.schedule.nominal(self.t, c.frequency_hz) + self.wander + sweep;
        f.clamp(c.range_hz.0, c.range_hz.1)
    }

    /// Advances time by `dt` seconds (> 0), integrating frequency into phase
    /// with the trapezoidal rule.
    pub fn advance(&mut self, dt: f64) {
        let f0 = self.frequency;
        self.t += dt;
        self.since_update += dt;
        if self.config.wander_hz > 0.0 && self.since_update >= WANDER_UPDATE_S {
            // Exact OU discretisation over the elapsed interval.
            let a = (-self.since_update / self.config.wander_tau_s).exp();
            let sd = self.config.wander_hz * (1.0 - a * a).sqrt();
            self.wander = a * self.wander + sd * self.rng.gaussian();
            // Keep the state itself inside the range so it never sticks at a bound.
            let span = self.config.range_hz.1 - self.config.range_hz.0;
            self.wander = self.wander.clamp(-span, span);
            self.since_update = 0.0;
        }
        self.frequency = self.compute_frequency();
        self.phase = (self.phase + 0.5 * (f0 + self.frequency) * dt).rem_euclid(1.0);
    }

    /// Current time, seconds.
    pub fn time(&self) -> f64 {
        self.t
    }

    /// Instantaneous frequency, hertz.
    pub fn frequency(&self) -> f64 {
        self.frequency
    }

    /// Phase of the fundamental, turns in `[0, 1)`.
    pub fn phase(&self) -> f64 {
        self.phase
    }

    /// Relative amplitude now (0 = off, 1 = nominal).
    pub fn envelope(&self) -> f64 {
        self.schedule.envelope(self.t)
    }

    /// Instantaneous voltage now, volts.
    pub fn voltage(&self) -> f64 {
        self.voltage_at_phase(self.phase)
    }

    /// Instantaneous voltage at a given phase (turns) with the current envelope.
    pub fn voltage_at_phase(&self, phase: f64) -> f64 {
        let env = self.envelope();
        if env == 0.0 {
            return 0.0;
        }
        let x = TAU * phase;
        let mut w = x.sin();
        for &(k, a, th) in &self.harmonics {
            w += a * (k * x + th).sin();
        }
        SQRT_2 * self.config.rms_v * env * w
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn each_refusal_names_its_field() {
        let ok = MainsConfig::preset_230v_50hz();
        assert!(ok.validate().is_ok());
        let field = |c: MainsConfig| c.validate().unwrap_err().field;
        assert_eq!(
            field(MainsConfig {
                rms_v: -1.0,
                ..ok.clone()
            }),
            "rms_v"
        );
        assert_eq!(
            field(MainsConfig {
                range_hz: (50.0, 50.0),
                ..ok.clone()
            }),
            "range_hz"
        );
        assert_eq!(
            field(MainsConfig {
                frequency_hz: 70.0,
                ..ok.clone()
            }),
            "frequency_hz"
        );
        assert_eq!(
            field(MainsConfig {
                wander_hz: f64::NAN,
                ..ok.clone()
            }),
            "wander_hz"
        );
        assert_eq!(
            field(MainsConfig {
                wander_tau_s: 0.0,
                ..ok.clone()
            }),
            "wander_tau_s"
        );
        assert_eq!(
            field(MainsConfig {
                sweep_hz: -0.1,
                ..ok.clone()
            }),
            "sweep_hz"
        );
        assert_eq!(
            field(MainsConfig {
                sweep_period_s: 0.0,
                ..ok.clone()
            }),
            "sweep_period_s"
        );
        let bad_order = MainsConfig {
            harmonics: vec![Harmonic {
                order: 1,
                percent: 1.0,
                phase_deg: 0.0,
            }],
            ..ok.clone()
        };
        assert_eq!(
            bad_order.validate().unwrap_err().to_string(),
            "harmonics: order 1 outside 2..=100"
        );
    }

    fn quiet(f: f64) -> MainsConfig {
        MainsConfig {
            wander_hz: 0.0,
            frequency_hz: f,
            ..MainsConfig::preset_230v_50hz()
        }
    }

    // Peak of a sinusoid is sqrt(2) times its RMS (standard circuit theory):
    // 230 V RMS -> 325.27 V peak (computed).
    #[test]
    fn peak_is_sqrt2_rms() {
        let mut m = MainsSource::new(quiet(50.0), &[], 1).unwrap();
        let mut peak: f64 = 0.0;
        for _ in 0..20_000 {
            m.advance(1e-5);
            peak = peak.max(m.voltage().abs());
        }
        assert!((peak - 325.269).abs() < 0.01, "peak {peak}");
    }

    // Phase continuity: after a frequency step the sample-to-sample change of a
    // sine of peak Vp sampled at dt is at most 2π f Vp dt (its slope bound,
    // calculus); a phase jump would exceed it.
    #[test]
    fn frequency_step_keeps_phase_continuous() {
        let ev = [MainsEvent::FrequencyStep {
            at_s: 0.0123,
            to_hz: 51.5,
        }];
        let mut m = MainsSource::new(quiet(50.0), &ev, 1).unwrap();
        let dt = 1.0 / 2000.0;
        let mut prev = m.voltage();
        let bound = TAU * 51.5 * 325.27 * dt * 1.001;
        let mut max_step: f64 = 0.0;
        for _ in 0..200 {
            m.advance(dt);
            let v = m.voltage();
            max_step = max_step.max((v - prev).abs());
            prev = v;
        }
        assert!(max_step <= bound, "{max_step} > {bound}");
        assert!((m.frequency() - 51.5).abs() < 1e-12);
    }

    #[test]
    fn envelope_follows_dips_swells_and_switching() {
        let ev = [
            MainsEvent::Dip {
                at_s: 1.0,
                duration_s: 0.1,
                residual: 0.4,
            },
            MainsEvent::Swell {
                at_s: 2.0,
                duration_s: 0.5,
                magnitude: 1.15,
            },
            MainsEvent::Off { at_s: 3.0 },
            MainsEvent::On { at_s: 4.0 },
        ];
        let s = MainsSchedule::new(&ev);
        assert_eq!(s.envelope(0.5), 1.0);
        assert_eq!(s.envelope(1.05), 0.4);
        assert_eq!(s.envelope(1.2), 1.0);
        assert_eq!(s.envelope(2.2), 1.15);
        assert_eq!(s.envelope(3.5), 0.0);
        assert_eq!(s.envelope(4.5), 1.0);
        // EN 50160 terms (secondary): 40 % residual is a dip, 115 % a swell,
        // 0 an interruption.
        assert_eq!(classify(s.envelope(1.05)), VoltageClass::Dip);
        assert_eq!(classify(s.envelope(2.2)), VoltageClass::Swell);
        assert_eq!(classify(s.envelope(3.5)), VoltageClass::Interruption);
        assert_eq!(classify(1.0), VoltageClass::Normal);
    }

    // Fourier: a harmonic of order k at p % adds a line at k f of p % of the
    // fundamental; checked by correlating over whole cycles (orthogonality).
    #[test]
    fn harmonic_amplitude_by_correlation() {
        let mut c = quiet(50.0);
        c.harmonics.push(Harmonic {
            order: 3,
            percent: 5.0,
            phase_deg: 0.0,
        });
        let mut m = MainsSource::new(c, &[], 1).unwrap();
        let n = 10_000; // 1 s at 10 kHz = 50 whole cycles
        let (mut s1, mut s3) = (0.0, 0.0);
        for i in 0..n {
            let t = i as f64 / 10_000.0;
            let v = m.voltage();
            s1 += v * (TAU * 50.0 * t).sin();
            s3 += v * (TAU * 150.0 * t).sin();
            m.advance(1e-4);
        }
        assert!((s3 / s1 - 0.05).abs() < 1e-3, "{}", s3 / s1);
    }

    #[test]
    fn bad_config_is_named() {
        let mut c = quiet(50.0);
        c.frequency_hz = 60.0;
        let e = MainsSource::new(c, &[], 0).unwrap_err();
        assert!(e.contains("frequency_hz"), "{e}");
    }
}
