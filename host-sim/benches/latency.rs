//! Touch latency with default touch settings, in two parts:
//!
//! 1. every built-in scenario with touch labels: one `bench:` line per
//!    scenario and one over all of them (latencies pooled), with missed and
//!    false touches beside;
//! 2. a grid of one-pad scenarios of 60 touches each at 50 and 60 Hz and
//!    1, 2 and 8 kHz, touches through a 2 mm overlay (about 10x the
//!    ambient) and through 10 mm (about 4x), their onsets spread over the
//!    mains cycle: `bench: grid mains_hz=… rate_hz=… overlay_mm=…` lines,
//!    then the same rows as `humsim::bench::latency` prints them
//!    (`bench: latency …`, with each figure in mains cycles too).
//!
//! `cargo bench -p humsim --bench latency`

use humsim::labels::LabelKind;
use humsim::score::LatencyStats;
use humsim::selfcheck::score_builtin;

fn stats(s: Option<LatencyStats>) -> (String, String) {
    match s {
        Some(l) => (
            format!("{:>6.1} {:>6.1} {:>6.1}", l.median_ms, l.p95_ms, l.max_ms),
            format!(
                "p50_ms={:.1} p95_ms={:.1} max_ms={:.1}",
                l.median_ms, l.p95_ms, l.max_ms
            ),
        ),
        None => (
            format!("{:>20}", "-"),
            "p50_ms=na p95_ms=na max_ms=na".into(),
        ),
    }
}

fn main() {
    let mut on_all = Vec::new();
    let mut off_all = Vec::new();
    let (mut missed, mut false_events, mut labels) = (0, 0, 0);
    let mut lines = Vec::new();
    println!(
        "{:<16} {:>6} {:>6} {:>6}  {:>20}  {:>20}",
        "scenario", "labels", "missed", "false", "on p50/p95/max ms", "off p50/p95/max ms"
    );
    for name in humsim::builtin::names() {
        if humsim::builtin::DIGITAL.contains(&name) {
            // Made for the edge input: their latencies come from
            // `cargo test -p humsim --test builtins_detect -- --nocapture`.
            continue;
        }
        let score = match score_builtin(name, LabelKind::Touch, &|_| {}) {
            Ok(Some(s)) => s,
            Ok(None) => continue,
            Err(e) => {
                eprintln!("{name}: {e}");
                std::process::exit(1);
            }
        };
        let (on_t, on_b) = stats(score.on_latency());
        let (off_t, off_b) = stats(score.off_latency());
        println!(
            "{name:<16} {:>6} {:>6} {:>6}  {on_t}  {off_t}",
            score.labels(),
            score.missed(),
            score.false_events()
        );
        lines.push(format!(
            "bench: scenario={name} labels={} missed={} false={} on_{} off_{}",
            score.labels(),
            score.missed(),
            score.false_events(),
            on_b.replace(' ', " on_"),
            off_b.replace(' ', " off_")
        ));
        labels += score.labels();
        missed += score.missed();
        false_events += score.false_events();
        for c in &score.channels {
            on_all.extend_from_slice(&c.on_latency_ms);
            off_all.extend_from_slice(&c.off_latency_ms);
        }
    }
    let (on_t, on_b) = stats(LatencyStats::of(&on_all));
    let (off_t, off_b) = stats(LatencyStats::of(&off_all));
    println!(
        "{:<16} {labels:>6} {missed:>6} {false_events:>6}  {on_t}  {off_t}",
        "all"
    );
    for l in lines {
        println!("{l}");
    }
    println!(
        "bench: scenario=all labels={labels} missed={missed} false={false_events} on_{} off_{}",
        on_b.replace(' ', " on_"),
        off_b.replace(' ', " off_")
    );
    grid();
}

fn grid() {
    // The grid's scenarios and scoring are humsim::bench::latency's (the
    // same rows `humsim bench` prints), 60 touches a point.
    let rows = match humsim::bench::latency::rows(false, &|_| {}) {
        Ok(r) => r,
        Err(e) => {
            eprintln!("grid: {e}");
            std::process::exit(1);
        }
    };
    println!(
        "\n{:>8} {:>7} {:>8} {:>6} {:>6}  {:>20}  {:>20}",
        "mains_hz",
        "rate_hz",
        "overlay",
        "missed",
        "false",
        "on p50/p95/max ms",
        "off p50/p95/max ms"
    );
    let mut lines = Vec::new();
    for r in &rows {
        let (on_t, on_b) = stats(r.on);
        let (off_t, off_b) = stats(r.off);
        println!(
            "{:>8} {:>7} {:>6.0}mm {:>6} {:>6}  {on_t}  {off_t}",
            r.mains_hz, r.rate_hz, r.overlay_mm, r.missed, r.false_events
        );
        lines.push(format!(
            "bench: grid mains_hz={} rate_hz={} overlay_mm={} \
             labels={} missed={} false={} on_{} off_{}",
            r.mains_hz,
            r.rate_hz,
            r.overlay_mm,
            r.touches,
            r.missed,
            r.false_events,
            on_b.replace(' ', " on_"),
            off_b.replace(' ', " off_")
        ));
    }
    for l in lines {
        println!("{l}");
    }
    // The same figures with their ratios to one mains cycle.
    for r in &rows {
        println!("{}", r.bench_line());
    }
}
