//! `humsim demo`: a built-in scenario through the detector with the default
//! touch configuration, an event table, a score against the scenario's own
//! labels, and a plot.

use crate::input::RenderSource;
use crate::replay::{config_for, replay};
use crate::scenario::{RenderOptions, Scenario};
use crate::score::{score_events, ScoreOptions};
use std::fmt::Write as _;
use std::path::{Path, PathBuf};

/// The scenario the demo runs.
pub const SCENARIO: &str = "kitchen-panel";

/// Where the plot goes without `--plot`.
pub fn default_plot_path() -> PathBuf {
    std::env::temp_dir().join("humsim-demo.png")
}

/// What the demo found.
#[derive(Debug, Clone)]
pub struct DemoReport {
    /// The text to print (event table and summary).
    pub text: String,
    /// The score against the scenario's labels.
    pub score: crate::score::Score,
    /// Events reported.
    pub events: usize,
}

/// Runs the demo, writes the plot (PNG) to `out`, returns the report;
/// `plot` is the plot's file name for the report and messages.
pub fn run(out: &mut dyn std::io::Write, plot: &Path) -> Result<DemoReport, String> {
    let s = Scenario::builtin(SCENARIO).map_err(|e| e.to_string())?;
    let seconds = s.duration_s();
    let render = s
        .render(&RenderOptions::default())
        .map_err(|e| e.to_string())?;
    let mut src = RenderSource::new(render);
    let cfg = config_for(&src, None, None, None)?;
    let names = s.channel_names();
    let rate = s.adc.rate_hz;
    let mut rec = crate::plot::PlotRecorder::new(&names, rate);
    let outcome = replay(&mut src, &cfg, &mut |_| Ok(()), Some(&mut rec), true)?;
    let labels = s.labels(seconds);
    let score = score_events(&outcome.events, rate, &names, &labels, &ScoreOptions::TOUCH)?;
    let mut t = String::new();
    let _ = writeln!(
        t,
        "humsim demo: built-in scenario `{SCENARIO}`: {}",
        s.description()
    );
    let _ = writeln!(
        t,
        "{} channels at {rate} Hz, {seconds} s, detector with Config::touch() defaults\n",
        names.len()
    );
    let _ = writeln!(
        t,
        "{:>9}  {:<8} {:<12} {:>12}",
        "time (s)", "channel", "event", "strength dB"
    );
    for e in &outcome.events {
        let ch = names
            .get(usize::from(e.channel))
            .map_or("all", String::as_str);
        let value = match e.kind {
            humsense::EventKind::Fault(f) | humsense::EventKind::FaultClear(f) => {
                f.name().to_string()
            }
            humsense::EventKind::Level(n) => format!("level {n}"),
            _ => format!("{:+.1}", e.strength_db()),
        };
        let _ = writeln!(
            t,
            "{:>9.3}  {:<8} {:<12} {:>12}",
            e.sample as f64 / rate,
            ch,
            e.kind.name(),
            value
        );
    }
    let ms = |v: Option<crate::score::LatencyStats>| {
        v.map_or("-".to_string(), |l| format!("{:.0} ms", l.median_ms))
    };
    let _ = writeln!(
        t,
        "\nsummary: {} events; touches detected {} of {}, missed {}; false events {}; \
         median latency on {}, off {}",
        outcome.events.len(),
        score.detected(),
        score.labels(),
        score.missed(),
        score.false_events(),
        ms(score.on_latency()),
        ms(score.off_latency()),
    );
    let _ = writeln!(t, "\nper channel (against the scenario's labels):");
    t.push_str(&score.table());
    let title = format!("humsim demo: `{SCENARIO}` through the detector (touch defaults)");
    rec.write_png(out, &plot.display().to_string(), &title, &labels)?;
    let _ = writeln!(t, "\nplot: {}", plot.display());
    Ok(DemoReport {
        text: t,
        score,
        events: outcome.events.len(),
    })
}
