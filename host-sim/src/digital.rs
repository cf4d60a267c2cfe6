//! `humsim simulate --digital`: the comparator's pin instead of ADC codes.
//!
//! The scenario is rendered as for ADC output (same physics, same seed);
//! at every step the logic level an MCU input reads on each channel's pin
//! is followed ([`crate::frontend::Comparator::pin_step`]): without an RC
//! it is the comparator's output, each change placed between two steps by
//! linear interpolation of the comparator's input; behind an RC it is the
//! RC's output read against the scenario's `pin_threshold_v` (with
//! `pin_hysteresis_v`). Steps are the scenario's `[adc] rate_hz`: the
//! digital built-ins use 50 kHz (20 µs), so a change is placed within a
//! fraction of a microsecond of the crossing of the interpolated input.
//! A scenario whose front end is not a comparator has no pin, and is
//! refused.
//!
//! - **Edge log** (default): `time_s,channel,level` ([`crate::input::edges`]
//!   has the format); start rows at 0, one row per change in time order,
//!   `time_s` with 6 decimals (a change is never written at the start
//!   rows' time: one within the first microsecond is written at 1 µs), and
//!   end rows at the run's length, so that the log says how long it lasts.
//! - **Polled-level log** (`--poll-hz HZ`): a CSV of the channels' names
//!   (optionally `time_s` first) with one row of `0`/`1` per read at
//!   `k / HZ`, each the level at that instant; replay it with `--bits 1`.
//!
//! Labels are written beside, as for ADC output. Both writers stream: the
//! changes of one block of steps at a time are sorted and written.

use crate::console::{self, CliError};
use crate::frontend::AnalogFrontEnd;
use crate::outfile::{check_distinct, Kind, OutputFile};
use crate::render::{PinChange, Render};
use crate::scenario::{RenderOptions, Scenario};
use std::io::{self, Write};
use std::path::{Path, PathBuf};

/// Steps per block.
const BLOCK_FRAMES: usize = 4096;

/// RC time constants from this long up make a heavy RC, whose pin carries
/// a slow level rather than pulses (one 50 Hz period), seconds.
pub const HEAVY_RC_S: f64 = 0.02;

/// The edge front end's settings that describe a scenario's comparator
/// board: the hysteresis over the threshold offset in thousandths (`h/Vt`),
/// and whether its pin carries a slow level (a heavy RC).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct BoardSettings {
    /// `round(1000 · hysteresis_v / threshold_v)`.
    pub hysteresis_permille: u16,
    /// The RC's time constant is at least [`HEAVY_RC_S`].
    pub level: bool,
}

impl BoardSettings {
    /// The replay flags that say this (`--hysteresis-permille H`, and
    /// `--edge-input level` for a heavy RC).
    pub fn flags(&self) -> String {
        let mut s = format!("--hysteresis-permille {}", self.hysteresis_permille);
        if self.level {
            s.push_str(" --edge-input level");
        }
        s
    }

    /// The edge configuration at `tick_hz` (32-bit timer) with these
    /// settings.
    pub fn edge_config(&self, tick_hz: u32) -> humsense::edge::EdgeConfig {
        let e = humsense::edge::EdgeConfig::new(tick_hz, humsense::edge::TimerWidth::Bits32)
            .with_hysteresis_permille(self.hysteresis_permille);
        if self.level {
            e.with_input(humsense::edge::EdgeInput::Level)
        } else {
            e
        }
    }
}

/// The settings of `s`'s comparator, or an error naming the front end.
pub fn board_settings(s: &Scenario) -> Result<BoardSettings, String> {
    match &s.frontend {
        AnalogFrontEnd::Comparator(c) => {
            let ratio = if c.threshold_v.abs() > 0.0 {
                (1000.0 * c.hysteresis_v / c.threshold_v.abs()).round()
            } else {
                0.0
            };
            Ok(BoardSettings {
                hysteresis_permille: ratio.clamp(0.0, 1000.0) as u16,
                level: c.rc_tau_s() >= HEAVY_RC_S,
            })
        }
        other => {
            let kind = match other {
                AnalogFrontEnd::Amplifier(_) => "an amplifier",
                AnalogFrontEnd::Follower(_) => "a follower chain",
                AnalogFrontEnd::Comparator(_) => "a comparator",
            };
            Err(format!(
                "{}: --digital writes a comparator's pin, but this scenario's front end is {kind} \
                 (an ADC input); use a scenario with [frontend] kind = \"comparator\", or leave \
                 out --digital to write ADC codes",
                s.origin
            ))
        }
    }
}

/// Renders `r` (pins enabled) block by block and hands each block's
/// changes, sorted by time, to `sink` with the time the block reaches.
fn render_changes(
    r: &mut Render,
    mut sink: impl FnMut(&[PinChange], f64) -> io::Result<()>,
    mut progress: impl FnMut(u64),
) -> io::Result<()> {
    let nch = r.channels();
    let rate = r.rate_hz();
    let mut block = vec![0u16; BLOCK_FRAMES * nch.max(1)];
    let mut changes: Vec<PinChange> = Vec::new();
    loop {
        let n = r.fill(&mut block);
        if n == 0 {
            break;
        }
        changes.clear();
        r.take_changes(&mut changes);
        changes.sort_by(|a, b| a.0.total_cmp(&b.0));
        let reached = (r.frames_done() - 1) as f64 / rate;
        sink(&changes, reached)?;
        progress(r.frames_done());
    }
    Ok(())
}

/// Streams `r` as an edge log (see the module docs); returns the changes
/// written.
pub fn write_edge_log<W: Write>(
    r: &mut Render,
    w: &mut W,
    progress: impl FnMut(u64),
) -> Result<u64, String> {
    r.enable_pins()?;
    let names = r.scenario().channel_names();
    let seconds = r.frames_total() as f64 / r.rate_hz();
    let mut count = 0u64;
    let mut line = Vec::with_capacity(1 << 16);
    let io = |e: io::Error| e.to_string();
    writeln!(line, "{}", crate::input::edges::EDGE_HEADER).map_err(io)?;
    let mut levels = start_levels(r);
    for (name, l) in names.iter().zip(&levels) {
        writeln!(line, "{:.6},{name},{}", 0.0, u8::from(*l)).map_err(io)?;
    }
    w.write_all(&line).map_err(io)?;
    render_changes(
        r,
        |changes, _| {
            line.clear();
            for &(t, ch, level) in changes {
                let name = names.get(ch).map_or("?", String::as_str);
                writeln!(line, "{:.6},{name},{}", t.max(1e-6), u8::from(level))?;
                if let Some(l) = levels.get_mut(ch) {
                    *l = level;
                }
                count += 1;
            }
            w.write_all(&line)
        },
        progress,
    )
    .map_err(io)?;
    line.clear();
    for (name, l) in names.iter().zip(&levels) {
        writeln!(line, "{seconds:.6},{name},{}", u8::from(*l)).map_err(io)?;
    }
    w.write_all(&line).map_err(io)?;
    Ok(count)
}

/// Renders the first step, which gives each pin's level at the start.
fn start_levels(r: &mut Render) -> Vec<bool> {
    let mut one = vec![0u16; r.channels().max(1)];
    r.fill(&mut one);
    r.start_levels()
        .unwrap_or_else(|| vec![false; r.channels()])
}

/// Streams `r` as a polled-level CSV read at `poll_hz` (see the module
/// docs); returns the rows written.
pub fn write_levels_csv<W: Write>(
    r: &mut Render,
    w: &mut W,
    poll_hz: f64,
    time_column: bool,
    progress: impl FnMut(u64),
) -> Result<u64, String> {
    r.enable_pins()?;
    let names = r.scenario().channel_names();
    let total = (r.frames_total() as f64 / r.rate_hz() * poll_hz).floor() as u64;
    let io = |e: io::Error| e.to_string();
    let mut header = String::new();
    if time_column {
        header.push_str("time_s,");
    }
    header.push_str(&names.join(","));
    header.push('\n');
    w.write_all(header.as_bytes()).map_err(io)?;
    let mut levels = start_levels(r);
    let mut k = 0u64;
    let mut line = Vec::with_capacity(1 << 16);
    let write_until =
        |line: &mut Vec<u8>, levels: &[bool], k: &mut u64, until: f64| -> io::Result<()> {
            while *k < total && (*k as f64) / poll_hz < until {
                if time_column {
                    write!(line, "{:.6},", *k as f64 / poll_hz)?;
                }
                for (i, l) in levels.iter().enumerate() {
                    if i > 0 {
                        line.push(b',');
                    }
                    line.push(if *l { b'1' } else { b'0' });
                }
                line.push(b'\n');
                *k += 1;
            }
            Ok(())
        };
    render_changes(
        r,
        |changes, reached| {
            line.clear();
            for &(t, ch, level) in changes {
                write_until(&mut line, &levels, &mut k, t)?;
                if let Some(l) = levels.get_mut(ch) {
                    *l = level;
                }
            }
            write_until(&mut line, &levels, &mut k, reached)?;
            w.write_all(&line)
        },
        progress,
    )
    .map_err(io)?;
    line.clear();
    write_until(&mut line, &levels, &mut k, f64::INFINITY).map_err(io)?;
    w.write_all(&line).map_err(io)?;
    Ok(k)
}

/// What `humsim simulate --digital` was asked.
#[derive(Debug, Clone)]
pub struct DigitalCommand {
    /// A built-in name or a TOML file.
    pub scenario: String,
    /// `-o`.
    pub output: PathBuf,
    /// `--seconds`.
    pub seconds: Option<f64>,
    /// `--seed`.
    pub seed: Option<u64>,
    /// `--time-column` (polled-level output only).
    pub time_column: bool,
    /// `--poll-hz`: a polled-level log instead of an edge log.
    pub poll_hz: Option<f64>,
}

/// Runs `humsim simulate --digital` (see the module docs).
pub fn command(cmd: &DigitalCommand) -> Result<(), CliError> {
    let output = cmd.output.as_path();
    let labels_path = crate::output::labels_path(output);
    check_distinct(
        &[("scenario", Path::new(&cmd.scenario))],
        &[("-o", output), ("labels", &labels_path)],
    )?;
    if output
        .extension()
        .is_some_and(|e| e.eq_ignore_ascii_case("wav"))
    {
        return Err(format!(
            "{}: --digital writes CSV (an edge log or a polled-level log), not WAV",
            output.display()
        )
        .into());
    }
    if let Some(p) = cmd.poll_hz {
        if !(p.is_finite() && (1_000.0..=100e6).contains(&p)) {
            return Err(format!(
                "--poll-hz {}: expected a read rate from 1000 Hz to 100 MHz (the edge input's \
                 range)",
                crate::text::num(p)
            )
            .into());
        }
    } else if cmd.time_column {
        return Err(String::from(
            "--time-column applies to ADC and polled-level (--poll-hz) output; an edge log \
             always has time_s",
        )
        .into());
    }
    let s = Scenario::load(&cmd.scenario).map_err(|e| e.to_string())?;
    let board = board_settings(&s)?;
    let mut render = s
        .render(&RenderOptions {
            seconds: cmd.seconds,
            seed: cmd.seed,
        })
        .map_err(|e| e.to_string())?;
    let mut out = OutputFile::create("-o", output, Kind::Data)?;
    let mut labels_file = OutputFile::create("labels", &labels_path, Kind::Data)?;
    let out_name = out.shown().to_string();
    let bar = indicatif::ProgressBar::new(render.frames_total());
    let written = {
        let w = out.writer()?;
        let progress = |n| bar.set_position(n);
        match cmd.poll_hz {
            None => write_edge_log(&mut render, w, progress),
            Some(p) => write_levels_csv(&mut render, w, p, cmd.time_column, progress),
        }
        .map_err(|e| format!("{out_name}: cannot write: {e}"))?
    };
    bar.finish_and_clear();
    let seconds = render.frames_total() as f64 / render.rate_hz();
    let labels = s.labels(seconds);
    let labels_name = labels_file.shown().to_string();
    crate::labels::write(&labels, labels_file.writer()?)
        .map_err(|e| format!("{labels_name}: cannot write: {e}"))?;
    crate::outfile::commit_all([out, labels_file])?;
    let what = match cmd.poll_hz {
        None => format!("{written} pin changes (edge log)"),
        Some(p) => format!(
            "{written} reads at {} Hz (polled-level log)",
            crate::text::num(p)
        ),
    };
    let bits = match (cmd.poll_hz, cmd.time_column) {
        (None, _) => String::new(),
        (Some(_), true) => " --bits 1".to_string(),
        (Some(p), false) => format!(" --bits 1 --rate {}", crate::text::num(p)),
    };
    console::err(&format!(
        "humsim: wrote {what} of {} channels over {seconds:.1} s to {} and labels to {}\n\
         humsim: replay it with: humsim replay {}{bits} {}\n",
        render.channels(),
        output.display(),
        labels_path.display(),
        output.display(),
        board.flags()
    ))
}
