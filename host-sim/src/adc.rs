//! The MCU's analogue-to-digital converter.
//!
//! Units: volts, hertz, seconds. Codes are integers `0..=2^bits − 1`.
//!
//! Model: the pin voltage plus Gaussian input-referred noise (`noise_v` RMS)
//! is quantised by an ideal rounding quantiser with `LSB = vref / 2^bits`:
//! `code = clamp(round(v / LSB), 0, 2^bits − 1)`. Timing jitter (`jitter_s`
//! RMS) is applied to first order: the sample taken at `t + δ` reads
//! `v(t) + δ · dv/dt`, the slope estimated from the previous sample.

use crate::field_error::FieldError;
use crate::rng::Rng;

/// Converter configuration.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Adc {
    /// Resolution, bits (8..=16).
    pub bits: u32,
    /// Reference (full scale), volts.
    pub vref_v: f64,
    /// Sample rate, hertz.
    pub rate_hz: f64,
    /// Input-referred noise, volts RMS.
    pub noise_v: f64,
    /// Sampling-instant jitter, seconds RMS.
    pub jitter_s: f64,
}

/// Running state of an [`Adc`] channel.
#[derive(Debug, Clone)]
pub struct AdcState {
    rng: Rng,
    prev_v: Option<f64>,
}

impl AdcState {
    /// State with its own random stream.
    pub fn new(rng: Rng) -> Self {
        AdcState { rng, prev_v: None }
    }
}

impl Default for Adc {
    /// 12 bits, 3.3 V, 2 kHz, 0.4 mV noise (about half an LSB), no jitter.
    fn default() -> Self {
        Adc {
            bits: 12,
            vref_v: 3.3,
            rate_hz: 2000.0,
            noise_v: 0.4e-3,
            jitter_s: 0.0,
        }
    }
}

impl Adc {
    /// Checks the configuration; the error names the field.
    pub fn validate(&self) -> Result<(), FieldError> {
        if !(8..=16).contains(&self.bits) {
            return Err(FieldError::new(
                "bits",
                format!("expected 8..=16, got {}", self.bits),
            ));
        }
        if !(self.vref_v.is_finite() && self.vref_v > 0.0) {
            return Err(FieldError::new(
                "vref_v",
                "expected a reference voltage > 0",
            ));
        }
        if !(self.rate_hz.is_finite() && self.rate_hz >= 100.0 && self.rate_hz <= 1e6) {
            return Err(FieldError::new(
                "rate_hz",
                format!("expected 100..=1000000 Hz, got {}", self.rate_hz),
            ));
        }
        if !(self.noise_v.is_finite() && self.noise_v >= 0.0) {
            return Err(FieldError::new("noise_v", "expected >= 0 volts RMS"));
        }
        if !(self.jitter_s.is_finite()
            && self.jitter_s >= 0.0
            && self.jitter_s < 0.5 / self.rate_hz)
        {
            return Err(FieldError::new(
                "jitter_s",
                "expected >= 0 and below half a sample period",
            ));
        }
        Ok(())
    }

    /// Largest code, `2^bits − 1`.
    pub fn max_code(&self) -> u16 {
        ((1u32 << self.bits.min(16)) - 1) as u16
    }

    /// One LSB, volts.
    pub fn lsb_v(&self) -> f64 {
        self.vref_v / (1u32 << self.bits.min(16)) as f64
    }

    /// Ideal noiseless quantisation of `v` volts.
    pub fn quantise(&self, v: f64) -> u16 {
        let x = (v / self.lsb_v()).round();
        if x.is_nan() {
            return 0;
        }
        x.clamp(0.0, self.max_code() as f64) as u16
    }

    /// Samples `v` volts with noise and jitter.
    pub fn sample(&self, s: &mut AdcState, v: f64) -> u16 {
        let mut x = v;
        if self.jitter_s > 0.0 {
            if let Some(p) = s.prev_v {
                let slope = (v - p) * self.rate_hz;
                x += slope * self.jitter_s * s.rng.gaussian();
            }
            s.prev_v = Some(v);
        }
        if self.noise_v > 0.0 {
            x += self.noise_v * s.rng.gaussian();
        }
        self.quantise(x)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn each_refusal_names_its_field() {
        let a = Adc::default();
        let field = |b: Adc| b.validate().unwrap_err().field;
        assert_eq!(field(Adc { bits: 17, ..a }), "bits");
        assert_eq!(field(Adc { vref_v: 0.0, ..a }), "vref_v");
        assert_eq!(field(Adc { rate_hz: 99.0, ..a }), "rate_hz");
        assert_eq!(field(Adc { noise_v: -1.0, ..a }), "noise_v");
        assert_eq!(field(Adc { jitter_s: 1.0, ..a }), "jitter_s");
        assert_eq!(
            Adc { bits: 7, ..a }.validate().unwrap_err().to_string(),
            "bits: expected 8..=16, got 7"
        );
    }

    #[test]
    fn quantiser_clamps_and_rounds() {
        let a = Adc::default();
        assert_eq!(a.max_code(), 4095);
        assert_eq!(a.quantise(-1.0), 0);
        assert_eq!(a.quantise(10.0), 4095);
        assert_eq!(a.quantise(f64::NAN), 0);
        assert_eq!(a.quantise(a.lsb_v() * 100.4), 100);
        assert_eq!(a.quantise(a.lsb_v() * 100.6), 101);
        assert!(Adc { bits: 7, ..a }.validate().is_err());
        assert!(Adc { bits: 16, ..a }.validate().is_ok());
    }

    // Aperture jitter σ_j on a sine of amplitude A at f adds noise of RMS
    // A·2πf·σ_j/√2, i.e. SNR = −20 log10(2π f σ_j) (common practice; Kester,
    // Analog Devices MT-007, from memory). 16 bits so quantisation is small.
    #[test]
    fn jitter_noise_follows_slope() {
        let a = Adc {
            bits: 16,
            vref_v: 2.0,
            rate_hz: 100_000.0,
            noise_v: 0.0,
            jitter_s: 1e-6,
        };
        let mut s = AdcState::new(Rng::new(5, 5));
        let (amp, f) = (0.9, 1000.0);
        let n = 100_000;
        let mut pe = 0.0;
        for k in 0..n {
            let v = 1.0 + amp * (std::f64::consts::TAU * f * k as f64 / a.rate_hz).sin();
            let e = f64::from(a.sample(&mut s, v)) * a.lsb_v() - v;
            pe += e * e;
        }
        let rms = (pe / n as f64).sqrt();
        let want = amp * std::f64::consts::TAU * f * 1e-6 / 2f64.sqrt();
        assert!((rms / want - 1.0).abs() < 0.05, "{rms} vs {want}");
    }

    #[test]
    fn noise_rms_is_as_configured() {
        // A constant input plus N(0, σ²): the codes' standard deviation is
        // sqrt(σ² + LSB²/12) (quantisation noise of a uniform error, standard).
        let a = Adc {
            noise_v: 4.0 * Adc::default().lsb_v(),
            ..Adc::default()
        };
        let mut s = AdcState::new(Rng::new(3, 9));
        let n = 50_000;
        let codes: Vec<f64> = (0..n).map(|_| a.sample(&mut s, 1.65) as f64).collect();
        let m = codes.iter().sum::<f64>() / n as f64;
        let var = codes.iter().map(|c| (c - m).powi(2)).sum::<f64>() / n as f64;
        let expect = (16.0f64 + 1.0 / 12.0).sqrt();
        assert!((var.sqrt() / expect - 1.0).abs() < 0.02, "{}", var.sqrt());
    }
}
