//! `humsim`: command-line front door to the simulator. Parses arguments and
//! dispatches; the work lives in the library.

use clap::{Parser, Subcommand};
use humsim::scenario::{RenderOptions, Scenario};
use std::io::{BufWriter, Write};
use std::path::{Path, PathBuf};
use std::process::ExitCode;

#[derive(Parser)]
#[command(
    name = "humsim",
    version,
    about = "Coupled-mains hum simulator for the humsense detector"
)]
struct Cli {
    #[command(subcommand)]
    command: Command,
}

#[derive(Subcommand)]
enum Command {
    /// Render a scenario to ADC codes (CSV, or WAV when FILE ends in .wav)
    /// and write its ground-truth labels to FILE.labels.csv.
    Simulate {
        /// A built-in scenario name (see `humsim scenarios`) or a TOML file.
        scenario: String,
        /// Output file: .csv (header = channel names) or .wav (16-bit PCM codes).
        #[arg(short, long, value_name = "FILE")]
        output: PathBuf,
        /// Length in seconds (default: the scenario's duration_s).
        #[arg(long, value_name = "S")]
        seconds: Option<f64>,
        /// Random seed (default: the scenario's seed).
        #[arg(long, value_name = "N")]
        seed: Option<u64>,
        /// Add a leading time_s column to CSV output.
        #[arg(long)]
        time_column: bool,
    },
    /// List the built-in scenarios with a one-line description each.
    Scenarios,
    /// Run the built-in four-pad panel scenario through the detector with
    /// the default touch settings: event table, score, plot.
    Demo {
        /// Where to write the plot (default: humsim-demo.png in the system
        /// temp directory).
        #[arg(long, value_name = "FILE.png")]
        plot: Option<PathBuf>,
    },
    /// Run the detector on a logged file (CSV, WAV or raw) and print its
    /// events as CSV `time_s,channel,event,value`.
    Replay {
        #[command(flatten)]
        input: InputArgs,
        /// Detector options.
        #[command(flatten)]
        detector: DetectorArgs,
        /// A detector configuration TOML (fields of humsense::Config).
        #[arg(long, value_name = "FILE.toml")]
        config: Option<PathBuf>,
        /// Ground-truth labels (channel,kind,start_s,end_s): print a score
        /// to stderr.
        #[arg(long, value_name = "FILE")]
        labels: Option<PathBuf>,
        /// Write the events here instead of stdout.
        #[arg(long, value_name = "FILE")]
        out: Option<PathBuf>,
        /// Draw the run (signal, amplitude, baseline, thresholds, events).
        #[arg(long, value_name = "FILE.png")]
        plot: Option<PathBuf>,
    },
    /// Choose detection constants on a labelled log: sweep back-end
    /// configurations over the recorded mains cycles, pick the lowest
    /// latency with no missed label within the false-event budget.
    Tune {
        #[command(flatten)]
        input: InputArgs,
        #[command(flatten)]
        detector: DetectorArgs,
        /// Ground-truth labels (channel,kind,start_s,end_s).
        #[arg(long, value_name = "FILE")]
        labels: PathBuf,
        /// The starting configuration (TOML); front-end fields stay as it has them.
        #[arg(long, value_name = "FILE.toml")]
        config: Option<PathBuf>,
        /// False events per hour allowed.
        #[arg(long, value_name = "PER_HOUR", default_value_t = 0.0)]
        budget: f64,
        /// Grid points to try (besides the start and the profile defaults).
        #[arg(long, value_name = "N", default_value_t = 1000)]
        points: usize,
        /// Seed of the random draw of grid points.
        #[arg(long, value_name = "N", default_value_t = 1)]
        seed: u64,
        /// Write the chosen configuration (TOML, for replay --config) here
        /// instead of stdout.
        #[arg(long, value_name = "FILE.toml")]
        out: Option<PathBuf>,
        /// Plot false events per hour against median latency.
        #[arg(long, value_name = "FILE.png")]
        plot: Option<PathBuf>,
    },
}

/// How to read an input file.
#[derive(clap::Args)]
struct InputArgs {
    /// The log: CSV (header row of channel names, optional time_s), WAV
    /// (integer PCM) or raw binary (with --raw).
    input: PathBuf,
    /// Sample rate per channel in hertz (required for CSV without time_s and
    /// for raw).
    #[arg(long, value_name = "HZ")]
    rate: Option<f64>,
    /// ADC resolution of the codes (default 12 for CSV and raw, the PCM
    /// width for WAV).
    #[arg(long, value_name = "N")]
    bits: Option<u8>,
    /// Raw little-endian binary input: u16le or i16le.
    #[arg(long, value_name = "FORMAT", value_parser = ["u16le", "i16le"])]
    raw: Option<String>,
    /// Channels of a raw input.
    #[arg(long, value_name = "N")]
    channels: Option<usize>,
}

/// Detector choices shared by replay and tune.
#[derive(clap::Args)]
struct DetectorArgs {
    /// Mains system: auto, 50 or 60 (default auto).
    #[arg(long, value_name = "auto|50|60", value_parser = ["auto", "50", "60"])]
    mains: Option<String>,
    /// Event profile: touch or field (default touch).
    #[arg(long, value_name = "touch|field", value_parser = ["touch", "field"])]
    profile: Option<String>,
}

impl InputArgs {
    fn spec(&self) -> humsim::replay::InputSpec {
        humsim::replay::InputSpec {
            path: self.input.clone(),
            rate_hz: self.rate,
            bits: self.bits,
            raw: self
                .raw
                .as_deref()
                .and_then(humsim::replay::RawFormat::parse),
            channels: self.channels,
        }
    }
}

impl DetectorArgs {
    fn mains(&self) -> Option<humsense::MainsMode> {
        self.mains
            .as_deref()
            .and_then(humsim::configfile::parse_mains)
    }
    fn profile(&self) -> Option<humsense::Profile> {
        self.profile
            .as_deref()
            .and_then(humsim::configfile::parse_profile)
    }
}

fn main() -> ExitCode {
    let cli = Cli::parse();
    let result = match cli.command {
        Command::Simulate {
            scenario,
            output,
            seconds,
            seed,
            time_column,
        } => simulate(&scenario, &output, seconds, seed, time_column),
        Command::Scenarios => scenarios(),
        Command::Demo { plot } => demo(plot),
        Command::Tune {
            input,
            detector,
            labels,
            config,
            budget,
            points,
            seed,
            out,
            plot,
        } => humsim::tune::command(&humsim::tune::TuneCommand {
            input: input.spec(),
            mains: detector.mains(),
            profile: detector.profile(),
            config,
            labels,
            budget_per_hour: budget,
            points,
            seed,
            out,
            plot,
            progress: std::io::IsTerminal::is_terminal(&std::io::stderr()),
        }),
        Command::Replay {
            input,
            detector,
            config,
            labels,
            out,
            plot,
        } => humsim::replay::command(&humsim::replay::ReplayCommand {
            input: input.spec(),
            mains: detector.mains(),
            profile: detector.profile(),
            config,
            labels,
            out,
            plot,
        }),
    };
    match result {
        Ok(()) => ExitCode::SUCCESS,
        Err(msg) => {
            eprintln!("humsim: error: {msg}");
            ExitCode::FAILURE
        }
    }
}

fn demo(plot: Option<PathBuf>) -> Result<(), String> {
    let path = plot.unwrap_or_else(humsim::demo::default_plot_path);
    let report = humsim::demo::run(&path)?;
    print!("{}", report.text);
    Ok(())
}

fn scenarios() -> Result<(), String> {
    let mut out = std::io::stdout().lock();
    for name in humsim::builtin::names() {
        let s = Scenario::builtin(name).map_err(|e| e.to_string())?;
        writeln!(out, "{name:<16} {}", s.description()).map_err(|e| e.to_string())?;
    }
    Ok(())
}

fn simulate(
    scenario: &str,
    output: &Path,
    seconds: Option<f64>,
    seed: Option<u64>,
    time_column: bool,
) -> Result<(), String> {
    let s = Scenario::load(scenario).map_err(|e| e.to_string())?;
    let mut render = s
        .render(&RenderOptions { seconds, seed })
        .map_err(|e| e.to_string())?;
    let wav = output
        .extension()
        .is_some_and(|e| e.eq_ignore_ascii_case("wav"));
    let bar = indicatif::ProgressBar::new(render.frames_total());
    bar.set_style(
        indicatif::ProgressStyle::with_template(
            "{spinner} [{elapsed_precise}] {wide_bar} {pos}/{len} frames ({eta} left)",
        )
        .unwrap_or_else(|_| indicatif::ProgressStyle::default_bar()),
    );
    let out_name = output.display().to_string();
    let io = |e: std::io::Error| format!("{out_name}: cannot write: {e}");
    if wav {
        humsim::output::write_wav(&mut render, output, |n| bar.set_position(n))?;
    } else {
        let file = std::fs::File::create(output).map_err(io)?;
        let mut w = BufWriter::with_capacity(1 << 16, file);
        humsim::output::write_csv(&mut render, &mut w, time_column, |n| bar.set_position(n))
            .map_err(io)?;
        w.flush().map_err(io)?;
    }
    bar.finish_and_clear();
    let labels_path = humsim::output::labels_path(output);
    let seconds = render.frames_total() as f64 / render.rate_hz();
    let file = std::fs::File::create(&labels_path)
        .map_err(|e| format!("{}: cannot write: {e}", labels_path.display()))?;
    let mut w = BufWriter::new(file);
    humsim::output::write_labels(&s.labels(seconds), &mut w)
        .and_then(|()| w.flush())
        .map_err(|e| format!("{}: cannot write: {e}", labels_path.display()))?;
    eprintln!(
        "humsim: wrote {} frames x {} channels to {} and labels to {}",
        render.frames_done(),
        render.channels(),
        out_name,
        labels_path.display()
    );
    Ok(())
}
