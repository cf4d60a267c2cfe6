//! Host figures, printed as `bench: key=value …` lines (DESIGN.md §3):
//! simulation and replay throughput on a one-hour four-channel log, the
//! detector's own throughput, and touch latency over the built-in
//! scenarios. Figures only: nothing here asserts a time.
//!
//! `cargo bench -p humsim --bench host`
#![allow(
    clippy::unwrap_used,
    clippy::expect_used,
    clippy::indexing_slicing,
    clippy::panic
)]

use std::io::BufWriter;
use std::time::Instant;

use humsense::{Config, Detector};
use humsim::input::{open_input, InputSpec, RenderSource};
use humsim::labels::LabelKind;
use humsim::replay::{config_for, replay};
use humsim::scenario::{RenderOptions, Scenario};
use humsim::score::{score_events, ScoreOptions};

fn main() {
    let dir = std::env::temp_dir().join(format!("humsim-bench-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let csv = dir.join("kitchen-1h.csv");

    // Simulate one hour of the four-pad panel to CSV (with time_s).
    let s = Scenario::builtin("kitchen-panel").unwrap();
    let mut r = s
        .render(&RenderOptions {
            seconds: Some(3600.0),
            seed: None,
        })
        .unwrap();
    let t0 = Instant::now();
    {
        let mut w = BufWriter::new(std::fs::File::create(&csv).unwrap());
        humsim::output::write_csv(&mut r, &mut w, true, |_| {}).unwrap();
    }
    let sim_s = t0.elapsed().as_secs_f64();
    let bytes = std::fs::metadata(&csv).map(|m| m.len()).unwrap_or(0);
    println!("bench: what=simulate_csv scenario=kitchen-panel channels=4 signal_s=3600 wall_s={sim_s:.3} file_mb={:.1}", bytes as f64 / 1e6);

    // Replay it (streaming CSV parse + detector).
    let spec = InputSpec {
        path: csv.clone(),
        rate_hz: None,
        bits: None,
        raw: None,
        channels: None,
    };
    let mut src = open_input(&spec).unwrap();
    let cfg = config_for(src.as_ref(), None, None, None).unwrap();
    let t0 = Instant::now();
    let out = replay(src.as_mut(), &cfg, &mut |_| Ok(()), None, false).unwrap();
    let rep_s = t0.elapsed().as_secs_f64();
    let samples = out.frames * 4;
    println!(
        "bench: what=replay_csv channels=4 signal_s=3600 frames={} wall_s={rep_s:.3} samples_per_s={:.0}",
        out.frames,
        samples as f64 / rep_s
    );
    let _ = std::fs::remove_dir_all(&dir);

    // The detector alone on samples in memory (host build, release).
    for ch in [1usize, 4] {
        let s = Scenario::builtin("kitchen-panel").unwrap();
        let mut r = s
            .render(&RenderOptions {
                seconds: Some(600.0),
                seed: None,
            })
            .unwrap();
        let mut codes = vec![0u16; 1_200_000 * 4];
        let frames = r.fill(&mut codes);
        codes.truncate(frames * 4);
        let x: Vec<u16> = if ch == 1 {
            codes.iter().step_by(4).copied().collect()
        } else {
            codes
        };
        let t0 = Instant::now();
        let mut events = 0usize;
        if ch == 1 {
            let mut d = Detector::<1, 0>::new(Config::touch()).unwrap();
            d.push_block(&x, |_| events += 1);
        } else {
            let mut d = Detector::<4, 0>::new(Config::touch()).unwrap();
            d.push_block(&x, |_| events += 1);
        }
        let dt = t0.elapsed().as_secs_f64();
        println!(
            "bench: what=detector_push_block channels={ch} samples={} events={events} ns_per_sample={:.2}",
            x.len(),
            dt * 1e9 / x.len() as f64
        );
    }

    // Touch-on latency over every built-in touch label (default config).
    let mut lat = Vec::new();
    for name in humsim::builtin::names() {
        let s = Scenario::builtin(name).unwrap();
        let seconds = s.duration_s().min(120.0);
        let labels: Vec<_> = s
            .labels(seconds)
            .into_iter()
            .filter(|l| l.kind == LabelKind::Touch)
            .collect();
        if labels.is_empty() {
            continue;
        }
        let render = s
            .render(&RenderOptions {
                seconds: Some(seconds),
                seed: None,
            })
            .unwrap();
        let mut src = RenderSource::new(render);
        let cfg = config_for(&src, Some(humsense::Profile::Touch), None, None).unwrap();
        let out = replay(&mut src, &cfg, &mut |_| Ok(()), None, true).unwrap();
        let score = score_events(
            &out.events,
            s.adc.rate_hz,
            &s.channel_names(),
            &labels,
            &ScoreOptions::TOUCH,
        )
        .unwrap();
        for c in &score.channels {
            lat.extend_from_slice(&c.on_latency_ms);
        }
    }
    lat.sort_by(f64::total_cmp);
    if let (Some(&max), false) = (lat.last(), lat.is_empty()) {
        let p = |q: f64| lat[((q * lat.len() as f64).ceil() as usize).clamp(1, lat.len()) - 1];
        println!(
            "bench: what=touch_on_latency touches={} median_ms={:.1} p95_ms={:.1} max_ms={max:.1}",
            lat.len(),
            p(0.5),
            p(0.95)
        );
    }
}
