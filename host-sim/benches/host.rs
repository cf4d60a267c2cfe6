//! Host figures, printed as `bench: key=value …` lines (DESIGN.md §3):
//! simulation and replay throughput on a one-hour four-channel log, the
//! detector's own throughput (`humsim::bench::speed`: 1, 4 and 8 channels,
//! one thread, median of 7 runs; also as `bench: host_msamples_per_s=…`
//! lines), and touch latency over the built-in
//! scenarios; for the comparator input, simulation and replay of a
//! one-hour two-channel edge log and touch latency over the comparator
//! built-ins through their edge logs. Figures only: nothing here asserts a
//! time.
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

    // The detector alone on samples in memory (host build, release), one
    // thread: humsim::bench::speed (1, 4 and 8 channels of a built-in with
    // harmonics, drift, noise, ESD spikes and touches).
    for r in humsim::bench::speed::rows(false, &|_| {}).unwrap() {
        println!(
            "bench: what=detector_push_block channels={} samples={} events={} ns_per_sample={:.2}",
            r.channels,
            r.samples,
            r.events,
            r.ns_per_sample()
        );
        println!("{}", r.bench_line());
    }

    // Touch-on latency over every built-in touch label (default config).
    let mut lat = Vec::new();
    for name in humsim::builtin::names() {
        if humsim::builtin::DIGITAL.contains(&name) {
            continue;
        }
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
    edge_figures(&dir);
}

/// Median, 95th percentile (nearest rank) and maximum of sorted values.
fn stats(lat: &[f64]) -> (f64, f64, f64) {
    let p = |q: f64| lat[((q * lat.len() as f64).ceil() as usize).clamp(1, lat.len()) - 1];
    (p(0.5), p(0.95), lat[lat.len() - 1])
}

fn edge_figures(dir: &std::path::Path) {
    use humsim::input::{EdgeLog, Input};
    std::fs::create_dir_all(dir).unwrap();
    // One hour of the two-pad ESD keypad (its discharges and touches in
    // the first 30 s, pulses at rest after) as an edge log.
    let log = dir.join("comparator-esd-1h.csv");
    let s = Scenario::builtin("comparator-esd").unwrap();
    let mut r = s
        .render(&RenderOptions {
            seconds: Some(3600.0),
            seed: None,
        })
        .unwrap();
    let t0 = Instant::now();
    let rows = {
        let mut w = BufWriter::new(std::fs::File::create(&log).unwrap());
        humsim::digital::write_edge_log(&mut r, &mut w, |_| {}).unwrap()
    };
    let sim_s = t0.elapsed().as_secs_f64();
    let bytes = std::fs::metadata(&log).map(|m| m.len()).unwrap_or(0);
    println!(
        "bench: what=simulate_edge_log scenario=comparator-esd channels=2 signal_s=3600 step_hz=50000 changes={rows} wall_s={sim_s:.3} file_mb={:.1}",
        bytes as f64 / 1e6
    );
    let board = humsim::digital::board_settings(&s).unwrap();
    let edge = board.edge_config(1_000_000);
    let cfg = humsim::configfile::build_digital(None, None, None).unwrap();
    let mut input = Input::Edges(Box::new(EdgeLog::open(&log).unwrap()));
    let t0 = Instant::now();
    let out =
        humsim::replay::replay_input(&mut input, &cfg, Some(&edge), &mut |_| Ok(()), None, true)
            .unwrap();
    let rep_s = t0.elapsed().as_secs_f64();
    println!(
        "bench: what=replay_edge_log channels=2 signal_s=3600 changes={rows} events={} wall_s={rep_s:.3} changes_per_s={:.0}",
        out.events.len(),
        rows as f64 / rep_s
    );
    let _ = std::fs::remove_file(&log);
    let _ = std::fs::remove_dir(dir);

    // Touch-on latency over the comparator built-ins, through their edge
    // logs (default touch settings, the board's own hysteresis and input).
    let mut lat = Vec::new();
    let mut per = String::new();
    for name in humsim::builtin::DIGITAL {
        let s = Scenario::builtin(name).unwrap();
        let seconds = s.duration_s();
        let labels = s.labels(seconds);
        let mut r = s
            .render(&RenderOptions {
                seconds: Some(seconds),
                seed: None,
            })
            .unwrap();
        let mut bytes = Vec::new();
        humsim::digital::write_edge_log(&mut r, &mut bytes, |_| {}).unwrap();
        let edge = humsim::digital::board_settings(&s)
            .unwrap()
            .edge_config(1_000_000);
        let mut input = Input::Edges(Box::new(
            EdgeLog::from_reader((*name).into(), Box::new(std::io::Cursor::new(bytes))).unwrap(),
        ));
        let out = humsim::replay::replay_input(
            &mut input,
            &cfg,
            Some(&edge),
            &mut |_| Ok(()),
            None,
            true,
        )
        .unwrap();
        let score = score_events(
            &out.events,
            1e6,
            &s.channel_names(),
            &labels,
            &ScoreOptions::TOUCH,
        )
        .unwrap();
        let mut mine = Vec::new();
        for c in &score.channels {
            mine.extend_from_slice(&c.on_latency_ms);
        }
        mine.sort_by(f64::total_cmp);
        if !mine.is_empty() {
            let (m, p95, max) = stats(&mine);
            per.push_str(&format!(
                "bench: what=touch_on_latency_edges scenario={name} touches={} missed={} false={} median_ms={m:.1} p95_ms={p95:.1} max_ms={max:.1}\n",
                mine.len(),
                score.missed(),
                score.false_events()
            ));
        }
        lat.extend(mine);
    }
    lat.sort_by(f64::total_cmp);
    print!("{per}");
    if !lat.is_empty() {
        let (m, p95, max) = stats(&lat);
        println!(
            "bench: what=touch_on_latency_edges scenario=all touches={} median_ms={m:.1} p95_ms={p95:.1} max_ms={max:.1}",
            lat.len()
        );
    }
}
