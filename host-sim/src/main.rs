//! `humsim`: command-line front door to the simulator. Parses arguments and
//! dispatches; the work lives in the library.

use clap::{Parser, Subcommand};
use humsim::console::{self, CliError};
use humsim::outfile::{check_distinct, Kind, OutputFile};
use humsim::scenario::{RenderOptions, Scenario};
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
        /// Write the comparator's pin instead of ADC codes: an edge log
        /// (time_s,channel,level, one row per change), or with --poll-hz a
        /// polled-level CSV of 0/1 reads. Needs a comparator front end.
        #[arg(long)]
        digital: bool,
        /// With --digital: read the pins at this rate and write a
        /// polled-level CSV (replay it with --bits 1).
        #[arg(long, value_name = "HZ", requires = "digital")]
        poll_hz: Option<f64>,
    },
    /// List the built-in scenarios with a one-line description each.
    Scenarios,
    /// Measure the detector: sensitivity against the optimum detector,
    /// reference detectors on the built-ins, latency against one mains
    /// cycle, host throughput. Prints a table and `bench:` lines.
    Bench {
        /// The short run CI uses (under 20 s): fewer trials and noise hours;
        /// fails if the field profile's gap to the optimum exceeds 1.5 dB
        /// or a false event appears where none is allowed.
        #[arg(long)]
        quick: bool,
    },
    /// Run the built-in four-pad panel scenario through the detector with
    /// the default touch settings: event table, score, plot.
    Demo {
        /// Where to write the plot (default: humsim-demo.png in the system
        /// temp directory).
        #[arg(long, value_name = "FILE.png")]
        plot: Option<PathBuf>,
    },
    /// Run the detector on a logged file (CSV, WAV, raw, edge log or
    /// polled-level CSV) and print its events as CSV
    /// `time_s,channel,event,value`.
    Replay {
        #[command(flatten)]
        input: InputArgs,
        /// Detector options.
        #[command(flatten)]
        detector: DetectorArgs,
        #[command(flatten)]
        edge: EdgeArgs,
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
        #[command(flatten)]
        edge: EdgeArgs,
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
    /// Convert a telemetry capture (.humtel, the board's humtel record
    /// stream) to a CSV log with a time_s column; gaps and corrupt records
    /// are reported by frame.
    Convert {
        /// The capture.
        input: PathBuf,
        /// Output CSV file.
        #[arg(short, long, value_name = "FILE.csv")]
        output: PathBuf,
    },
}

/// How to read an input file.
#[derive(clap::Args)]
struct InputArgs {
    /// The log: CSV (header row of channel names, optional time_s), WAV
    /// (integer PCM), a telemetry capture (.humtel) or raw binary (with
    /// --raw).
    input: PathBuf,
    /// Sample rate per channel in hertz (required for CSV without time_s and
    /// for raw).
    #[arg(long, value_name = "HZ")]
    rate: Option<f64>,
    /// ADC resolution of the codes (default 12 for CSV and raw, the PCM
    /// width for WAV); 1 reads a CSV of 0/1 pin reads at --rate (a
    /// polled-level log).
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

/// The comparator input of edge logs and polled-level logs (also in the
/// --config file's [edge] table).
#[derive(clap::Args)]
struct EdgeArgs {
    /// The comparator's hysteresis over its threshold offset (h/Vt) in
    /// thousandths, 0 for none: needed for pulses (no default).
    #[arg(long, value_name = "H")]
    hysteresis_permille: Option<u16>,
    /// Timer rate an edge log's times are counted in (default 1000000).
    #[arg(long, value_name = "HZ")]
    tick_hz: Option<u32>,
    /// Width of that timer: 16 or 32 (default 32).
    #[arg(long, value_name = "16|32")]
    timer_bits: Option<u8>,
    /// What the pin carries: pulses (a comparator on the hum, default) or
    /// level (behind a heavy RC: touched or not).
    #[arg(long, value_name = "pulses|level", value_parser = ["pulses", "level"])]
    edge_input: Option<String>,
}

impl EdgeArgs {
    fn request(&self) -> humsim::configfile::EdgeRequest {
        humsim::configfile::EdgeRequest {
            polled_hz: None,
            tick_hz: self.tick_hz,
            timer_bits: self.timer_bits,
            hysteresis_permille: self.hysteresis_permille,
            input: self
                .edge_input
                .as_deref()
                .and_then(humsim::configfile::parse_edge_input),
        }
    }
}

impl InputArgs {
    fn spec(&self) -> humsim::input::InputSpec {
        humsim::input::InputSpec {
            path: self.input.clone(),
            rate_hz: self.rate,
            bits: self.bits,
            raw: self
                .raw
                .as_deref()
                .and_then(humsim::input::RawFormat::parse),
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
            digital,
            poll_hz,
        } => {
            if digital {
                humsim::digital::command(&humsim::digital::DigitalCommand {
                    scenario,
                    output,
                    seconds,
                    seed,
                    time_column,
                    poll_hz,
                })
            } else {
                simulate(&scenario, &output, seconds, seed, time_column)
            }
        }
        Command::Scenarios => scenarios(),
        Command::Bench { quick } => humsim::bench::command(quick),
        Command::Demo { plot } => demo(plot),
        Command::Convert { input, output } => humsim::convert::command(&input, &output),
        Command::Tune {
            input,
            detector,
            edge,
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
            edge: edge.request(),
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
            edge,
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
            edge: edge.request(),
        }),
    };
    humsim::console::finish(result)
}

fn demo(plot: Option<PathBuf>) -> Result<(), CliError> {
    let path = plot.unwrap_or_else(humsim::demo::default_plot_path);
    let mut file = OutputFile::create("--plot", &path, Kind::Png)?;
    let report = humsim::demo::run(file.writer()?, &path)?;
    file.commit()?;
    console::out(&report.text)
}

fn scenarios() -> Result<(), CliError> {
    let mut text = String::new();
    for name in humsim::builtin::names() {
        let s = Scenario::builtin(name).map_err(|e| e.to_string())?;
        text.push_str(&format!("{name:<16} {}\n", s.description()));
    }
    console::out(&text)
}

fn simulate(
    scenario: &str,
    output: &Path,
    seconds: Option<f64>,
    seed: Option<u64>,
    time_column: bool,
) -> Result<(), CliError> {
    let labels_path = humsim::output::labels_path(output);
    check_distinct(
        &[("scenario", Path::new(scenario))],
        &[("-o", output), ("labels", &labels_path)],
    )?;
    let s = Scenario::load(scenario).map_err(|e| e.to_string())?;
    let mut render = s
        .render(&RenderOptions { seconds, seed })
        .map_err(|e| e.to_string())?;
    let wav = output
        .extension()
        .is_some_and(|e| e.eq_ignore_ascii_case("wav"));
    let mut out = OutputFile::create("-o", output, Kind::Data)?;
    let out_name = out.shown().to_string();
    if wav {
        // Refused before any sample is rendered or written.
        humsim::output::check_wav(&render, &out_name)?;
    }
    let mut labels_file = OutputFile::create("labels", &labels_path, Kind::Data)?;
    let bar = indicatif::ProgressBar::new(render.frames_total());
    bar.set_style(
        indicatif::ProgressStyle::with_template(
            "{spinner} [{elapsed_precise}] {wide_bar} {pos}/{len} frames ({eta} left)",
        )
        .unwrap_or_else(|_| indicatif::ProgressStyle::default_bar()),
    );
    if wav {
        humsim::output::write_wav(&mut render, out.writer()?, &out_name, |n| {
            bar.set_position(n)
        })?;
    } else {
        let w = out.writer()?;
        humsim::output::write_csv(&mut render, w, time_column, |n| bar.set_position(n))
            .map_err(|e| format!("{out_name}: cannot write: {e}"))?;
    }
    bar.finish_and_clear();
    let seconds = render.frames_total() as f64 / render.rate_hz();
    let labels_name = labels_file.shown().to_string();
    let mut labels = s.labels(seconds);
    let mut renamed = String::new();
    if wav {
        // A WAV's channels are ch0, ch1, … to replay: its labels use those
        // names, so that the pair scores and tunes as it is.
        let names = s.channel_names();
        humsim::labels::rename_to_index(&mut labels, &names);
        let list: Vec<String> = names
            .iter()
            .enumerate()
            .map(|(i, n)| format!("ch{i} = {n}"))
            .collect();
        renamed = format!(" (labels by WAV channel: {})", list.join(", "));
    }
    humsim::labels::write(&labels, labels_file.writer()?)
        .map_err(|e| format!("{labels_name}: cannot write: {e}"))?;
    humsim::outfile::commit_all([out, labels_file])?;
    console::err(&format!(
        "humsim: wrote {} frames x {} channels to {} and labels to {}{renamed}\n",
        render.frames_done(),
        render.channels(),
        output.display(),
        labels_path.display()
    ))
}
