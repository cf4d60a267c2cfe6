//! The core detector's throughput on the host: samples per second on one
//! core (one thread, nothing else of this module running), for 1, 4 and 8
//! channels, through [`humsense::Detector::push_block`] with the default
//! touch settings.
//!
//! The signal ([`signal`]) is built-in `kitchen-panel` (four pads: mains
//! harmonics of 3, 4 and 2 %, ambient drift, noise, taps, a long press, a
//! lamp step), its timeline repeated every 20 s, with ESD bursts of 4 and
//! 8 kV added each period (spikes on every pad). Eight channels are two
//! renders of it with different seeds side by side, the second shifted by
//! half a period; one channel is the first pad, four the first render.
//! Each channel count is run once untimed, then [`RUNS`] times on the same
//! codes with a fresh detector each (3 in a quick run); the figures are
//! the median and the slowest run. A machine shared with other work gives
//! slower and more scattered figures: compare figures from one machine
//! only.
//!
//! `bench: host_msamples_per_s=<f> channels=<n> min_msamples_per_s=<f>
//! samples=<n> runs=<n> threads=1`: `host_msamples_per_s` the median run's
//! samples (frames × channels) per second, in millions; `min_…` the
//! slowest run's; `samples` per run.

use std::time::Instant;

use humsense::{Config, Detector};

use crate::scenario::{RenderOptions, Scenario};

/// Channel counts measured.
pub const CHANNELS: [usize; 3] = [1, 4, 8];

/// Timed runs per channel count (3 in a quick run).
pub const RUNS: usize = 7;

/// Seconds of signal per channel (60 in a quick run).
pub const SECONDS: f64 = 600.0;

/// Where the second render of the 8-channel signal starts, seconds.
pub const SECOND_OFFSET_S: f64 = 10.0;

/// ESD bursts added to the signal's 20 s period.
const SPIKES: &str = "
[[event]]
kind = \"esd\"
at_s = 3.3
kv = 4.0
count = 3
interval_s = 0.5

[[event]]
kind = \"esd\"
at_s = 13.1
kv = -8.0
";

/// One channel count's figures.
#[derive(Debug, Clone, PartialEq)]
pub struct SpeedRow {
    /// Channels.
    pub channels: usize,
    /// Samples (frames × channels) per run.
    pub samples: usize,
    /// Timed runs.
    pub runs: usize,
    /// Events one run emitted.
    pub events: usize,
    /// The median run, million samples per second.
    pub median_msamples_per_s: f64,
    /// The slowest run, million samples per second.
    pub min_msamples_per_s: f64,
}

impl SpeedRow {
    /// The line described in the module docs.
    pub fn bench_line(&self) -> String {
        format!(
            "bench: host_msamples_per_s={:.1} channels={} min_msamples_per_s={:.1} samples={} \
             runs={} threads=1",
            self.median_msamples_per_s,
            self.channels,
            self.min_msamples_per_s,
            self.samples,
            self.runs
        )
    }

    /// Nanoseconds per sample of the median run.
    pub fn ns_per_sample(&self) -> f64 {
        1e3 / self.median_msamples_per_s
    }
}

/// The signal's scenario: `kitchen-panel` repeated every 20 s, with
/// ESD bursts of 4 and 8 kV at 3.3 s and 13.1 s of each period.
pub fn scenario() -> Result<Scenario, String> {
    let base = crate::builtin::source("kitchen-panel")
        .ok_or_else(|| "no built-in kitchen-panel".to_string())?;
    let text = format!("repeat_s = 20.0\n{base}{SPIKES}");
    Scenario::from_toml_str(&text, "speed-signal").map_err(|e| e.to_string())
}

/// 8 channels of `seconds` of codes, interleaved: two renders of
/// [`scenario`] (seeds 11 and 12) side by side, the second from
/// [`SECOND_OFFSET_S`] into its run so that its touches fall between the
/// first's.
pub fn signal(seconds: f64) -> Result<Vec<u16>, String> {
    let s = scenario()?;
    // `skip_s` of a render dropped from its start.
    let render = |seed: u64, skip_s: f64| -> Result<Vec<u16>, String> {
        let mut r = s
            .render(&RenderOptions {
                seconds: Some(seconds + skip_s),
                seed: Some(seed),
            })
            .map_err(|e| e.to_string())?;
        let mut codes = vec![0u16; r.frames_total() as usize * r.channels()];
        let n = r.fill(&mut codes);
        codes.truncate(n * r.channels());
        let skip = (skip_s * r.rate_hz()) as usize * r.channels();
        Ok(codes.split_off(skip.min(codes.len())))
    };
    let (a, b) = rayon::join(|| render(11, 0.0), || render(12, SECOND_OFFSET_S));
    let (a, b) = (a?, b?);
    let frames = a.len().min(b.len()) / 4;
    let mut out = Vec::with_capacity(frames * 8);
    for (fa, fb) in a.chunks_exact(4).zip(b.chunks_exact(4)).take(frames) {
        out.extend_from_slice(fa);
        out.extend_from_slice(fb);
    }
    Ok(out)
}

/// The first `channels` of each 8-channel frame.
fn columns(signal: &[u16], channels: usize) -> Vec<u16> {
    signal
        .chunks_exact(8)
        .flat_map(|f| f.iter().take(channels).copied())
        .collect()
}

fn run<const N: usize>(codes: &[u16]) -> Result<(f64, usize), String> {
    let mut d = Detector::<N, 0>::new(Config::touch()).map_err(|e| e.to_string())?;
    let mut events = 0usize;
    let t0 = Instant::now();
    d.push_block(codes, |_| events += 1);
    Ok((t0.elapsed().as_secs_f64(), events))
}

/// Times `runs` runs of an `N`-channel detector over `codes`.
fn measure<const N: usize>(codes: &[u16], runs: usize) -> Result<SpeedRow, String> {
    let mut times = Vec::with_capacity(runs);
    // One untimed run first (caches, clock, idle worker threads settling).
    let (_, mut events) = run::<N>(std::hint::black_box(codes))?;
    for _ in 0..runs.max(1) {
        let (t, e) = run::<N>(std::hint::black_box(codes))?;
        times.push(t);
        events = e;
    }
    times.sort_by(f64::total_cmp);
    let median = times.get(times.len() / 2).copied().unwrap_or(f64::NAN);
    let slowest = times.last().copied().unwrap_or(f64::NAN);
    let rate = |t: f64| codes.len() as f64 / t / 1e6;
    Ok(SpeedRow {
        channels: N,
        samples: codes.len(),
        runs: times.len(),
        events,
        median_msamples_per_s: rate(median),
        min_msamples_per_s: rate(slowest),
    })
}

/// Renders the signal, then times each channel count on one thread.
/// `progress(n)` gets one unit per channel count measured (plus one for
/// the render), adding up to [`work_units`].
pub fn rows(quick: bool, progress: &(dyn Fn(u64) + Sync)) -> Result<Vec<SpeedRow>, String> {
    let (seconds, runs) = if quick { (60.0, 3) } else { (SECONDS, RUNS) };
    let sig = signal(seconds)?;
    progress(1);
    let mut out = Vec::new();
    for ch in CHANNELS {
        let codes = columns(&sig, ch);
        out.push(match ch {
            1 => measure::<1>(&codes, runs)?,
            4 => measure::<4>(&codes, runs)?,
            8 => measure::<8>(&codes, runs)?,
            other => return Err(format!("no detector build for {other} channels here")),
        });
        progress(1);
    }
    Ok(out)
}

/// The units [`rows`] reports.
pub fn work_units() -> u64 {
    CHANNELS.len() as u64 + 1
}
