//! A host run of the detector on a synthetic pad: 50 Hz hum of 25 codes on
//! a 12-bit ADC at 2 kHz, biased at mid-rail, three touches that raise the
//! hum twentyfold. Prints each event with its time and strength.
//!
//! `cargo run --release --example host_touch`
//!
//! (The physical simulator and the full demo are `humsim`:
//! `cargo run --release -p humsim -- demo`.)

use humsense::{Config, Detector};

fn main() {
    let rate = 2_000.0f64;
    let touches = [(1.0, 1.4), (2.5, 3.5), (4.2, 4.35)];
    let detector: Result<Detector, _> = Detector::new(Config::touch());
    let mut det = match detector {
        Ok(d) => d,
        Err(e) => {
            eprintln!("host_touch: {e}");
            std::process::exit(1);
        }
    };
    let mut noise = 0x2545_f491_u32;
    for n in 0..(5.0 * rate) as u32 {
        let t = f64::from(n) / rate;
        let touched = touches.iter().any(|&(s, e)| t >= s && t < e);
        let amp = if touched { 500.0 } else { 25.0 };
        noise ^= noise << 13;
        noise ^= noise >> 17;
        noise ^= noise << 5;
        let dither = f64::from(noise % 5) - 2.0;
        let x = 2048.0 + amp * (std::f64::consts::TAU * 50.0 * t).sin() + dither;
        if let Some(e) = det.push(x.round().clamp(0.0, 4095.0) as u16) {
            let name = e.kind.name();
            println!(
                "{:8.4} s  ch{}  {:<10} {:6.1} dB",
                e.sample as f64 / rate,
                e.channel,
                name,
                e.strength_db()
            );
        }
    }
    let snap = det.snapshot(0);
    if let Some(s) = snap {
        println!(
            "mains {:.2} Hz ({}), baseline {:.1} codes, noise {:.2} codes",
            s.mains_hz,
            if s.mains_locked {
                "locked"
            } else {
                "not locked"
            },
            f64::from(s.baseline_q8) / 256.0,
            f64::from(s.noise_q8) / 256.0
        );
    }
}
