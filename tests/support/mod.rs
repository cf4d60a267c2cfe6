//! A small deterministic signal generator for the integration tests: mains
//! hum of a given envelope through an ideal amplifier into a 12-bit ADC.
//! (The physical simulator lives in `host-sim`; this one only needs to be
//! simple and exactly reproducible.)
#![allow(dead_code)]

use std::f64::consts::TAU;

/// xorshift64* with a Gaussian from the sum of four uniforms (variance
/// scaled to 1); good enough for test noise, and reproducible.
pub struct Rng(u64);

impl Rng {
    pub fn new(seed: u64) -> Self {
        Self(seed.max(1))
    }
    pub fn uniform(&mut self) -> f64 {
        self.0 ^= self.0 >> 12;
        self.0 ^= self.0 << 25;
        self.0 ^= self.0 >> 27;
        let v = self.0.wrapping_mul(0x2545_F491_4F6C_DD1D);
        (v >> 11) as f64 / (1u64 << 53) as f64
    }
    pub fn gauss(&mut self) -> f64 {
        let s: f64 = (0..4).map(|_| self.uniform()).sum();
        (s - 2.0) * (3.0f64).sqrt()
    }
}

/// How the hum reaches the ADC.
#[derive(Clone)]
pub struct Signal {
    pub rate_hz: f64,
    pub mains_hz: f64,
    /// ADC bias in codes (2048 = mid-rail for 12 bits, 0 = single supply).
    pub bias: f64,
    /// RMS noise in codes.
    pub noise: f64,
    pub bits: u32,
    /// Third-harmonic content relative to the fundamental.
    pub third: f64,
}

impl Signal {
    pub fn mid_rail(rate_hz: f64, mains_hz: f64) -> Self {
        Self {
            rate_hz,
            mains_hz,
            bias: 2048.0,
            noise: 1.0,
            bits: 12,
            third: 0.0,
        }
    }

    /// Renders `seconds` of samples; `amp(t)` is the hum amplitude in codes
    /// at time t (s) and `freq(t)` the mains frequency.
    pub fn render(
        &self,
        seconds: f64,
        seed: u64,
        amp: impl Fn(f64) -> f64,
        freq: impl Fn(f64) -> f64,
    ) -> Vec<u16> {
        let n = (seconds * self.rate_hz).round() as usize;
        let mut rng = Rng::new(seed);
        let mut phase = 0.3f64;
        let top = ((1u32 << self.bits) - 1) as f64;
        let mut out = Vec::with_capacity(n);
        for k in 0..n {
            let t = k as f64 / self.rate_hz;
            let a = amp(t);
            let x = self.bias
                + a * (phase.sin() + self.third * (3.0 * phase).sin())
                + self.noise * rng.gauss();
            out.push(x.round().clamp(0.0, top) as u16);
            phase = (phase + TAU * freq(t) / self.rate_hz) % TAU;
        }
        out
    }
}

/// Smooth envelope of a press: `base` outside, `base·gain` inside
/// `[start, end)`, with 10 ms linear ramps (a finger's press and release).
pub fn press(t: f64, base: f64, gain: f64, presses: &[(f64, f64)]) -> f64 {
    let ramp = 0.010;
    let mut g: f64 = 1.0;
    for &(s, e) in presses {
        let up = ((t - s) / ramp).clamp(0.0, 1.0);
        let down = ((e - t) / ramp).clamp(0.0, 1.0);
        g = g.max(1.0 + (gain - 1.0) * up.min(down));
    }
    base * g
}

/// Every event of a run, with its time in seconds.
pub fn run(cfg: humsense::Config, samples: &[u16]) -> Vec<(f64, humsense::Event)> {
    let rate = f64::from(cfg.sample_rate_hz);
    let mut det: humsense::Detector = humsense::Detector::new(cfg).expect("valid config");
    let mut out = Vec::new();
    for &x in samples {
        if let Some(e) = det.push(x) {
            out.push((e.sample as f64 / rate, e));
        }
    }
    out
}

/// Checks that the events are exactly one on/off pair per press, each on
/// within `on_max` seconds after the press starts and each off within
/// `off_max` after it ends. Returns the on and off latencies.
pub fn match_presses(
    events: &[(f64, humsense::Event)],
    presses: &[(f64, f64)],
    on_kind: humsense::EventKind,
    off_kind: humsense::EventKind,
    on_max: f64,
    off_max: f64,
) -> Result<(Vec<f64>, Vec<f64>), String> {
    let ons: Vec<f64> = events
        .iter()
        .filter(|(_, e)| e.kind == on_kind)
        .map(|(t, _)| *t)
        .collect();
    let offs: Vec<f64> = events
        .iter()
        .filter(|(_, e)| e.kind == off_kind)
        .map(|(t, _)| *t)
        .collect();
    if ons.len() != presses.len() || offs.len() != presses.len() {
        return Err(format!(
            "{} presses, {} ons, {} offs: {events:?}",
            presses.len(),
            ons.len(),
            offs.len()
        ));
    }
    let mut lat_on = Vec::new();
    let mut lat_off = Vec::new();
    for ((&(s, e), &on), &off) in presses.iter().zip(&ons).zip(&offs) {
        let (lon, loff) = (on - s, off - e);
        if !(0.0..=on_max).contains(&lon) || !(0.0..=off_max).contains(&loff) {
            return Err(format!("press {s}..{e}: on at {on}, off at {off}"));
        }
        lat_on.push(lon);
        lat_off.push(loff);
    }
    Ok((lat_on, lat_off))
}

/// Renders `channels` interleaved channels of hum sharing one mains phase;
/// `amp(ch, t)` is each channel's hum amplitude in codes.
pub fn render_panel(
    channels: usize,
    rate_hz: f64,
    seconds: f64,
    seed: u64,
    amp: impl Fn(usize, f64) -> f64,
) -> Vec<u16> {
    let n = (seconds * rate_hz).round() as usize;
    let mut rng = Rng::new(seed);
    let mut out = Vec::with_capacity(n * channels);
    for k in 0..n {
        let t = k as f64 / rate_hz;
        let s = (TAU * 50.0 * t + 0.3).sin();
        for ch in 0..channels {
            let x = 2048.0 + amp(ch, t) * s + rng.gauss();
            out.push(x.round().clamp(0.0, 4095.0) as u16);
        }
    }
    out
}

/// Every event of a multi-channel run, with its time in seconds.
pub fn run_panel<const N: usize>(
    cfg: humsense::Config,
    samples: &[u16],
) -> Vec<(f64, humsense::Event)> {
    let rate = f64::from(cfg.sample_rate_hz);
    let mut det = humsense::Detector::<N, 0>::new(cfg).expect("valid config");
    let mut out = Vec::new();
    det.push_block(samples, |e| out.push((e.sample as f64 / rate, e)));
    out
}
