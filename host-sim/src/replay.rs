//! Replay: logged ADC codes in, detector events out.
//!
//! Inputs are read by [`crate::input`] (CSV, WAV, raw, edge logs and
//! polled-level logs; [`prepare`] opens one and builds its configuration).
//! Edge and polled-level logs run through the core crate's comparator
//! input instead of the ADC front end ([`crate::edgeinput`]); everything
//! after the cycles is the same.
//!
//! ## Output ([`event_row`])
//! CSV `time_s,channel,event,value`, one row per event in time order
//! (within one mains cycle, in channel order): `time_s` is the log's start
//! ([`FrameSource::start_s`]) plus the emitting sample's index divided by
//! the rate (for edge and polled-level logs: the tick count divided by
//! `tick_hz`), with 6 decimals; `channel` the
//! input column's name (`ch0`, `ch1`, … for WAV and raw); `event` one of
//! `touch-on`, `touch-off`, `field-on`, `field-off`, `level`, `fault`,
//! `fault-clear`; `value` the strength in dB above the baseline (touch and
//! field events, 2 decimals), the new level (`level`), or the fault's name.
//! `Overflow` cannot occur: it reports events lost by the firmware's
//! interrupt queue, and replay takes every event straight from the back
//! end, with no queue.
//!
//! ## The pipeline
//! Replay runs [`Frontend`] per frame and [`Backend::process`] on each
//! [`Cycle`], which is exactly what [`humsense::Detector`] does inside; it
//! keeps the halves apart to take a snapshot of every channel after each
//! cycle for the plot. A test checks that the events equal a
//! [`humsense::Detector`]'s on the same input.

use crate::configfile::EdgeRequest;
use crate::input::{for_each_frame, open_any, FrameSource, Input, InputSpec};
use humsense::edge::EdgeConfig;
use humsense::{AdcSample, Backend, Config, Cycle, Event, EventKind, Frontend};
use std::path::{Path, PathBuf};

/// The back end humsim runs: no harmonics, and window memory, so the field
/// profile decides on its sliding window as a
/// [`FieldDetector`](humsense::FieldDetector) does (the touch profile has
/// none and runs as a plain [`Backend`]).
pub type HostBackend<const N: usize> =
    Backend<N, 0, humsense::SlidingWindow<N, { humsense::FIELD_WINDOW_WORDS }>>;

/// Most channels a replay dispatches to.
pub use crate::input::MAX_CHANNELS;

// ------------------------------------------------------------------ dispatch

/// Work to do with a detector of a channel count known only at run time.
pub trait ChannelTask {
    /// What the work returns.
    type Output;
    /// Does the work for `N` channels.
    fn run<const N: usize>(self) -> Result<Self::Output, String>;
}

/// Calls `task.run::<N>()` with `N = channels` (1 to [`MAX_CHANNELS`]).
pub fn with_channels<T: ChannelTask>(channels: usize, task: T) -> Result<T::Output, String> {
    macro_rules! arms {
        ($($n:literal)*) => {
            match channels {
                $($n => task.run::<$n>(),)*
                other => Err(format!(
                    "{other} channels; replay handles 1 to {MAX_CHANNELS}"
                )),
            }
        };
    }
    arms!(1 2 3 4 5 6 7 8 9 10 11 12 13 14 15 16)
}

/// A sample type built from a checked code.
pub trait Code: AdcSample {
    /// The code (already checked to fit) as this type.
    fn from_code(v: i32) -> Self;
}

impl Code for u16 {
    #[inline(always)]
    fn from_code(v: i32) -> Self {
        v as u16
    }
}

impl Code for i16 {
    #[inline(always)]
    fn from_code(v: i32) -> Self {
        v as i16
    }
}

/// Streams every frame of `src` through a [`Frontend`] built from `cfg`;
/// calls `on_frame(index, frame)` for each frame and `on_cycle` for each
/// completed mains cycle, which returns the mains tracker's floor for the
/// cycles after it (a window back end's
/// [`tracking_floor`](Backend::tracking_floor), 0 for none), as a
/// [`FieldDetector`](humsense::FieldDetector) feeds it back. Returns the
/// frames read.
pub fn drive<const N: usize>(
    src: &mut dyn FrameSource,
    cfg: &Config,
    on_frame: impl FnMut(u64, &[i32; N]),
    on_cycle: impl FnMut(&Cycle<N, 0>) -> Result<u32, String>,
) -> Result<u64, String> {
    let front = Frontend::<N, 0>::new(cfg).map_err(|e| e.to_string())?;
    if src.signed() {
        drive_typed::<N, i16>(src, front, on_frame, on_cycle)
    } else {
        drive_typed::<N, u16>(src, front, on_frame, on_cycle)
    }
}

fn drive_typed<const N: usize, S: Code>(
    src: &mut dyn FrameSource,
    mut front: Frontend<N, 0>,
    mut on_frame: impl FnMut(u64, &[i32; N]),
    mut on_cycle: impl FnMut(&Cycle<N, 0>) -> Result<u32, String>,
) -> Result<u64, String> {
    for_each_frame::<N>(src, |index, codes| {
        on_frame(index, codes);
        let frame: [S; N] = codes.map(S::from_code);
        if let Some(cycle) = front.push_frame(&frame) {
            let floor = on_cycle(&cycle)?;
            front.set_tracking_floor(floor);
        }
        Ok(())
    })
}

/// Streams any input through its front end: the ADC [`Frontend`] for
/// samples, the edge front end for edge and polled-level logs (`edge`
/// needed). `on_signal(x, values)` sees the signal (codes, or pin levels
/// 0/1) at clock tick `x`; returns the input's length in ticks of its clock
/// ([`Prepared::clock_hz`]).
pub fn drive_input<const N: usize>(
    input: &mut Input,
    cfg: &Config,
    edge: Option<&EdgeConfig>,
    on_signal: impl FnMut(u64, &[i32; N]),
    on_cycle: impl FnMut(&Cycle<N, 0>) -> Result<u32, String>,
) -> Result<u64, String> {
    let name = input.name().to_string();
    let need = || format!("{name}: no edge configuration for a digital input");
    match input {
        Input::Samples(src) => drive::<N>(src.as_mut(), cfg, on_signal, on_cycle),
        Input::Levels(src) => {
            let e = edge.ok_or_else(need)?;
            crate::edgeinput::drive_levels::<N>(src.as_mut(), cfg, e, on_signal, on_cycle)
        }
        Input::Edges(log) => {
            let e = edge.ok_or_else(need)?;
            crate::edgeinput::drive_edges::<N>(log, cfg, e, on_signal, on_cycle)
        }
    }
}

/// The back end's configuration for `input`: `cfg`, with `nohum_codes = 0`
/// for a digital input ([`crate::edgeinput::backend_config`]).
pub fn backend_config(input: &Input, cfg: &Config) -> Config {
    if input.is_digital() {
        crate::edgeinput::backend_config(cfg)
    } else {
        *cfg
    }
}

// ------------------------------------------------------------------ replay

/// What a replay produced.
#[derive(Debug, Clone, PartialEq)]
pub struct ReplayOutcome {
    /// Frames read.
    pub frames: u64,
    /// Every event, when asked to keep them.
    pub events: Vec<Event>,
}

/// Replays `src` with `cfg`: every event goes to `sink` as it happens (and
/// into [`ReplayOutcome::events`] with `keep`); `plot`, if given, records
/// the run for a picture.
pub fn replay(
    src: &mut dyn FrameSource,
    cfg: &Config,
    sink: &mut dyn FnMut(&Event) -> Result<(), String>,
    plot: Option<&mut crate::plot::PlotRecorder>,
    keep: bool,
) -> Result<ReplayOutcome, String> {
    let n = src.channel_names().len();
    with_channels(
        n,
        ReplayTask {
            src: Feed::Frames(src),
            cfg,
            sink,
            plot,
            keep,
        },
    )
}

/// [`replay`] for any input ([`Input`]; `edge` for edge and polled-level
/// logs). [`ReplayOutcome::frames`] is then the length in ticks of the
/// input's clock.
pub fn replay_input(
    input: &mut Input,
    cfg: &Config,
    edge: Option<&EdgeConfig>,
    sink: &mut dyn FnMut(&Event) -> Result<(), String>,
    plot: Option<&mut crate::plot::PlotRecorder>,
    keep: bool,
) -> Result<ReplayOutcome, String> {
    let n = input.channel_names().len();
    with_channels(
        n,
        ReplayTask {
            src: Feed::Any(input, edge),
            cfg,
            sink,
            plot,
            keep,
        },
    )
}

enum Feed<'a> {
    Frames(&'a mut dyn FrameSource),
    Any(&'a mut Input, Option<&'a EdgeConfig>),
}

struct ReplayTask<'a, 'b> {
    src: Feed<'a>,
    cfg: &'a Config,
    sink: &'a mut dyn FnMut(&Event) -> Result<(), String>,
    plot: Option<&'b mut crate::plot::PlotRecorder>,
    keep: bool,
}

impl ChannelTask for ReplayTask<'_, '_> {
    type Output = ReplayOutcome;
    fn run<const N: usize>(self) -> Result<ReplayOutcome, String> {
        let back_cfg = match &self.src {
            Feed::Frames(_) => *self.cfg,
            Feed::Any(input, _) => backend_config(input, self.cfg),
        };
        let mut back = HostBackend::<N>::new(&back_cfg).map_err(|e| e.to_string())?;
        let mut events = Vec::new();
        let sink = self.sink;
        let keep = self.keep;
        let mut failed: Option<String> = None;
        // One recorder, used by both closures in turn.
        let cell = std::cell::RefCell::new(self.plot);
        let on_frame = |i: u64, f: &[i32; N]| {
            if let Some(p) = cell.borrow_mut().as_mut() {
                p.frame(i, f);
            }
        };
        let on_cycle = |cycle: &Cycle<N, 0>| {
            back.process(cycle, |e| {
                if failed.is_none() {
                    if let Err(m) = sink(&e) {
                        failed = Some(m);
                    }
                }
                if keep {
                    events.push(e);
                }
                if let Some(p) = cell.borrow_mut().as_mut() {
                    p.event(&e);
                }
            });
            if let Some(m) = failed.take() {
                return Err(m);
            }
            if let Some(p) = cell.borrow_mut().as_mut() {
                for ch in 0..N {
                    if let Some(s) = back.snapshot(ch) {
                        p.cycle(cycle.end_sample, ch, &s);
                    }
                }
            }
            Ok(back.tracking_floor())
        };
        let frames = match self.src {
            Feed::Frames(src) => drive::<N>(src, self.cfg, on_frame, on_cycle)?,
            Feed::Any(input, edge) => drive_input::<N>(input, self.cfg, edge, on_frame, on_cycle)?,
        };
        Ok(ReplayOutcome { frames, events })
    }
}

/// One output row (without the line end) for event `e`; see the module
/// docs. `start_s` is the input's first time on its own clock.
pub fn event_row(e: &Event, names: &[String], rate_hz: f64, start_s: f64) -> String {
    let t = start_s + e.sample as f64 / rate_hz;
    let ch = names
        .get(usize::from(e.channel))
        .map_or("all", String::as_str);
    let value = match e.kind {
        EventKind::TouchOn | EventKind::TouchOff | EventKind::FieldOn | EventKind::FieldOff => {
            format!("{:.2}", e.strength_db())
        }
        EventKind::Level(n) => n.to_string(),
        EventKind::Fault(f) | EventKind::FaultClear(f) => f.name().to_string(),
        EventKind::Overflow(n) => n.to_string(),
        _ => String::new(),
    };
    format!("{t:.6},{ch},{},{value}", e.kind.name())
}

/// The output header.
pub const HEADER: &str = "time_s,channel,event,value";

// ------------------------------------------------------------------ command

/// Everything `humsim replay` was asked.
#[derive(Debug, Clone, Default)]
pub struct ReplayCommand {
    /// The input and how to read it.
    pub input: InputSpec,
    /// `--mains`.
    pub mains: Option<humsense::MainsMode>,
    /// `--profile`.
    pub profile: Option<humsense::Profile>,
    /// `--config`.
    pub config: Option<PathBuf>,
    /// `--labels`.
    pub labels: Option<PathBuf>,
    /// `--out` (stdout without).
    pub out: Option<PathBuf>,
    /// `--plot`.
    pub plot: Option<PathBuf>,
    /// The edge front end's flags (edge and polled-level logs).
    pub edge: EdgeRequest,
}

/// An input opened with its configurations.
pub struct Prepared {
    /// The input.
    pub input: Input,
    /// The detector's configuration (for an edge or polled-level log, the
    /// back end's, before [`backend_config`]).
    pub cfg: Config,
    /// The edge front end's, for an edge or polled-level log.
    pub edge: Option<EdgeConfig>,
    /// Ticks per second of the input's clock, on which events count: the
    /// sample rate, or the edge front end's `tick_hz`.
    pub clock_hz: f64,
}

/// Opens `spec` as any input and builds its configuration from the command
/// line and `--config` (see [`crate::configfile`]).
pub fn prepare(
    spec: &InputSpec,
    profile: Option<humsense::Profile>,
    mains: Option<humsense::MainsMode>,
    config: Option<&Path>,
    edge: &EdgeRequest,
) -> Result<Prepared, String> {
    let input = open_any(spec)?;
    let file = match config {
        Some(p) => Some(crate::configfile::ConfigFile::read(p)?),
        None => None,
    };
    let digital_flags = edge.tick_hz.is_some()
        || edge.timer_bits.is_some()
        || edge.hysteresis_permille.is_some()
        || edge.input.is_some();
    let lead = |m: String| {
        if file.is_none() {
            format!("{}: {m}", input.name())
        } else {
            m
        }
    };
    match &input {
        Input::Samples(src) => {
            if digital_flags {
                return Err(format!(
                    "{}: --tick-hz, --timer-bits, --hysteresis-permille and --edge-input apply to \
                     edge logs and polled-level logs (--bits 1), and this input is ADC codes",
                    src.name()
                ));
            }
            let cfg = config_for(src.as_ref(), profile, mains, config)?;
            let clock_hz = src.rate_hz();
            Ok(Prepared {
                input,
                cfg,
                edge: None,
                clock_hz,
            })
        }
        Input::Levels(_) | Input::Edges(_) => {
            let cfg =
                crate::configfile::build_digital(profile, mains, file.as_ref()).map_err(lead)?;
            let polled_hz = match &input {
                Input::Levels(src) => {
                    let r = src.rate_hz().round();
                    if !(1.0..=f64::from(u32::MAX)).contains(&r) {
                        return Err(format!(
                            "{}: read rate {} Hz is out of range",
                            src.name(),
                            crate::text::num(src.rate_hz())
                        ));
                    }
                    Some(r as u32)
                }
                _ => None,
            };
            let req = EdgeRequest { polled_hz, ..*edge };
            let e = crate::configfile::build_edge(&req, file.as_ref(), &cfg).map_err(lead)?;
            Ok(Prepared {
                input,
                cfg,
                clock_hz: f64::from(e.tick_hz),
                edge: Some(e),
            })
        }
    }
}

/// The configuration for `src` from the command line and `--config`.
pub fn config_for(
    src: &dyn FrameSource,
    profile: Option<humsense::Profile>,
    mains: Option<humsense::MainsMode>,
    config: Option<&Path>,
) -> Result<Config, String> {
    let file = match config {
        Some(p) => Some(crate::configfile::ConfigFile::read(p)?),
        None => None,
    };
    let rate = src.rate_hz().round();
    if !(1.0..=f64::from(u32::MAX)).contains(&rate) {
        return Err(format!(
            "{}: sample rate {} Hz is out of range (1 Hz to {} Hz)",
            src.name(),
            crate::text::num(src.rate_hz()),
            u32::MAX
        ));
    }
    let req = crate::configfile::ConfigRequest {
        profile,
        mains,
        bits: src.bits(),
        rate_hz: rate as u32,
    };
    crate::configfile::build(&req, file.as_ref()).map_err(|m| {
        if file.is_none() {
            format!("{}: {m}", src.name())
        } else {
            m
        }
    })
}

/// The kind of labels a profile is scored against.
pub fn label_kind(cfg: &Config) -> crate::labels::LabelKind {
    match cfg.profile {
        humsense::Profile::Field => crate::labels::LabelKind::Field,
        _ => crate::labels::LabelKind::Touch,
    }
}

/// Runs `humsim replay`. Events go to `--out` or stdout; the score (with
/// `--labels`) to stderr. Outputs are checked before the run and put in
/// place only when it succeeds ([`crate::outfile`]): a failed run leaves
/// every file as it was.
pub fn command(cmd: &ReplayCommand) -> Result<(), crate::console::CliError> {
    use crate::console::{self, CliError};
    use crate::outfile::{check_distinct, Kind, OutputFile};
    use std::io::Write;
    let mut inputs = vec![("input", cmd.input.path.as_path())];
    inputs.extend(cmd.labels.as_deref().map(|p| ("--labels", p)));
    inputs.extend(cmd.config.as_deref().map(|p| ("--config", p)));
    let mut outputs = Vec::new();
    outputs.extend(cmd.out.as_deref().map(|p| ("--out", p)));
    outputs.extend(cmd.plot.as_deref().map(|p| ("--plot", p)));
    check_distinct(&inputs, &outputs)?;
    let Prepared {
        input: mut src,
        cfg,
        edge,
        clock_hz: rate,
    } = prepare(
        &cmd.input,
        cmd.profile,
        cmd.mains,
        cmd.config.as_deref(),
        &cmd.edge,
    )?;
    let names = src.channel_names().to_vec();
    let start = src.start_s();
    let labels = match &cmd.labels {
        Some(p) => {
            let l = crate::labels::LabelFile::read(p)?;
            l.check(&names, &crate::labels::Span::open(start))?;
            if let (_, Some(w)) = l.of_kind(label_kind(&cfg)) {
                console::err(&format!("humsim: warning: {w}\n"))?;
            }
            Some(l)
        }
        None => None,
    };
    let mut out_file = match &cmd.out {
        Some(p) => Some(OutputFile::create("--out", p, Kind::Data)?),
        None => None,
    };
    let mut plot_file = match &cmd.plot {
        Some(p) => Some(OutputFile::create("--plot", p, Kind::Png)?),
        None => None,
    };
    // Where a write error on stdout is kept, so that a closed pipe ends
    // the run quietly rather than as an error message.
    let mut stdout_failure: Option<CliError> = None;
    {
        let mut stdout_lock;
        let (out, out_name): (&mut dyn Write, String) = match out_file.as_mut() {
            Some(f) => {
                let name = f.shown().to_string();
                (f.writer()?, name)
            }
            None => {
                stdout_lock = std::io::BufWriter::with_capacity(1 << 16, std::io::stdout().lock());
                (&mut stdout_lock, "stdout".to_string())
            }
        };
        let to_stdout = cmd.out.is_none();
        let mut fail = |e: std::io::Error| {
            if to_stdout {
                stdout_failure = Some(console::stdout_error(&e));
            }
            format!("{out_name}: cannot write: {e}")
        };
        let result = (|| {
            writeln!(out, "{HEADER}").map_err(&mut fail)?;
            let digital = src.is_digital();
            let mut plot = cmd.plot.as_ref().map(|_| {
                let r = crate::plot::PlotRecorder::new(&names, rate).starting_at(start);
                if digital {
                    r.digital()
                } else {
                    r
                }
            });
            let mut sink = |e: &Event| {
                writeln!(out, "{}", event_row(e, &names, rate, start)).map_err(&mut fail)
            };
            let outcome = replay_input(
                &mut src,
                &cfg,
                edge.as_ref(),
                &mut sink,
                plot.as_mut(),
                labels.is_some(),
            )?;
            out.flush().map_err(&mut fail)?;
            Ok::<_, String>((outcome, plot))
        })();
        let (outcome, plot) = match result {
            Ok(v) => v,
            Err(m) => return Err(stdout_failure.take().unwrap_or(CliError::Message(m))),
        };
        let seconds = outcome.frames as f64 / rate;
        if let Some(l) = &labels {
            let pname = &l.name;
            l.check(&names, &crate::labels::Span::of_input(start, seconds, rate))?;
            let opts = crate::score::ScoreOptions::for_kind(label_kind(&cfg));
            let on_samples = crate::labels::shifted(&l.labels, -start);
            let s = crate::score::score_events(&outcome.events, rate, &names, &on_samples, &opts)?;
            console::err(&format!(
                "score of {} against {pname} ({} labels, {seconds:.1} s):\n{}",
                src.name(),
                opts.kind.as_str(),
                s.table()
            ))?;
        }
        if let (Some(f), Some(rec)) = (plot_file.as_mut(), &plot) {
            let title = match &src {
                Input::Edges(_) => format!(
                    "humsim replay: {} (edge log, {:.1} s, {rate} ticks/s)",
                    src.name(),
                    seconds
                ),
                Input::Levels(_) => format!(
                    "humsim replay: {} (polled levels, {:.1} s at {rate} Hz)",
                    src.name(),
                    seconds
                ),
                Input::Samples(_) => format!(
                    "humsim replay: {} ({:.1} s at {rate} Hz)",
                    src.name(),
                    seconds
                ),
            };
            let name = f.shown().to_string();
            rec.write_png(
                f.writer()?,
                &name,
                &title,
                labels.as_ref().map_or(&[][..], |l| &l.labels[..]),
            )?;
        }
    }
    crate::outfile::commit_all(out_file.into_iter().chain(plot_file))?;
    if let Some(p) = &cmd.plot {
        console::err(&format!("plot: {}\n", p.display()))?;
    }
    Ok(())
}
