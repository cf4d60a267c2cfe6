//! Inputs: logged ADC codes as a stream of frames ([`FrameSource`]).
//!
//! ## Formats ([`open_input`])
//! - **CSV** (any name not ending in `.wav`, unless `--raw`): a header row
//!   naming the channels, then one row per frame of integer ADC codes. A
//!   column named `time_s` (anywhere) is optional: with it the rate is
//!   inferred from the first 1000 rows (the mean of the intervals within
//!   ±50 % of their median), and every
//!   interval must be that period within one unit in the row's last printed
//!   decimal (the rounding of printed times), but never less than 1 % nor
//!   more than half of the period: a gap or a repeated row is refused with
//!   its line numbers however coarsely the times are printed. The first
//!   `time_s` is the log's start: events and labels are on the log's own
//!   clock. Without `time_s`, `--rate` is required and the clock starts at
//!   0. With both, they must agree within 1 %. Codes are
//!   unsigned, `0 ..= 2^bits − 1`. Cells may have spaces around them; empty
//!   lines are skipped; CRLF endings and a UTF-8 byte-order mark are fine.
//! - **WAV** (`.wav`): integer PCM, any channel count, rate from the header
//!   (rounded to whole hertz by the format). At the PCM width (the default
//!   `--bits`) samples are two's-complement codes; with `--bits N` below the
//!   width, samples must be unsigned ADC codes `0 ..= 2^N − 1` stored
//!   unchanged, as `humsim simulate` writes them. Widths above 16 bits need
//!   `--bits` of 16 or less.
//! - **Raw** (`--raw u16le|i16le --channels N --rate HZ`): interleaved
//!   little-endian 16-bit codes, unsigned or two's complement.
//! - **Telemetry** (`.humtel`): a capture of the board's `humtel` record
//!   stream; the header gives channels, rate, bits and sample type, gaps
//!   and corrupt records are reported by frame ([`telemetry`]).
//!
//! - **Edge log** (a CSV whose header is exactly `time_s,channel,level`,
//!   whatever its name): the changes of comparator or GPIO pins, read by
//!   [`EdgeLog`] ([`edges`] has the format); `--rate`, `--bits`, `--raw`
//!   and `--channels` do not apply.
//! - **Polled-level log** (`--bits 1`, CSV only): a CSV as above whose
//!   cells are pin reads, `0` or `1`, at `--rate` (or its `time_s`).
//!
//! [`open_any`] tells the four apart ([`Input`]); [`open_input`] opens the
//! ADC formats only. `--bits` defaults to 12 for CSV and raw and to the PCM
//! width for WAV; every code is checked against it. Channels: 1 to [`MAX_CHANNELS`]; the
//! detector's channel count is a const generic, and the inputs dispatch to
//! `Frontend<1, 0>` … `Frontend<16, 0>` ([`crate::replay::with_channels`]); more channels
//! are refused with a message.
//!
//! Reading streams: a fixed block of frames at a time, so memory does not
//! depend on the file's length.

mod csv;
pub mod edges;
mod raw;
pub mod telemetry;
mod wav;

pub use csv::CsvSource;
pub use edges::{is_edge_header, EdgeLog, EdgeRow};
pub use raw::RawSource;
pub use telemetry::TelemetrySource;
pub use wav::WavSource;

use std::path::PathBuf;

/// Most channels an input may have.
pub const MAX_CHANNELS: usize = 16;

/// Rows read ahead to infer the rate from `time_s`.
const RATE_ROWS: usize = 1000;

/// Layout of a raw binary input.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum RawFormat {
    /// Unsigned 16-bit little-endian codes.
    U16Le,
    /// Two's-complement 16-bit little-endian codes.
    I16Le,
}

impl RawFormat {
    /// Parses `u16le` / `i16le`.
    pub fn parse(s: &str) -> Option<RawFormat> {
        match s {
            "u16le" => Some(RawFormat::U16Le),
            "i16le" => Some(RawFormat::I16Le),
            _ => None,
        }
    }
}

/// What the command line says about an input.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct InputSpec {
    /// The file.
    pub path: PathBuf,
    /// `--rate`.
    pub rate_hz: Option<f64>,
    /// `--bits`.
    pub bits: Option<u8>,
    /// `--raw`.
    pub raw: Option<RawFormat>,
    /// `--channels` (raw only).
    pub channels: Option<usize>,
}

/// What every input says about itself.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct SourceInfo {
    /// The input's name for messages (the file name).
    pub name: String,
    /// Channel names in column order.
    pub channels: Vec<String>,
    /// Sample rate per channel, hertz.
    pub rate_hz: f64,
    /// ADC resolution the codes were checked against.
    pub bits: u8,
    /// Whether codes are two's complement (fed to the detector as `i16`).
    pub signed: bool,
    /// The time of the first frame on the log's own clock, seconds: the
    /// first `time_s` of a CSV log, 0 for inputs without a time column.
    /// Events and labels are reported on this clock.
    pub start_s: f64,
}

/// A stream of interleaved frames of ADC codes.
pub trait FrameSource {
    /// What the input says about itself.
    fn info(&self) -> &SourceInfo;
    /// Fills `buf` (a multiple of the channel count long) with whole frames
    /// and returns how many; 0 at the end. Errors name the place in the file.
    fn read(&mut self, buf: &mut [i32]) -> Result<usize, String>;
    /// [`SourceInfo::name`].
    fn name(&self) -> &str {
        &self.info().name
    }
    /// [`SourceInfo::channels`].
    fn channel_names(&self) -> &[String] {
        &self.info().channels
    }
    /// [`SourceInfo::rate_hz`].
    fn rate_hz(&self) -> f64 {
        self.info().rate_hz
    }
    /// [`SourceInfo::bits`].
    fn bits(&self) -> u8 {
        self.info().bits
    }
    /// [`SourceInfo::signed`].
    fn signed(&self) -> bool {
        self.info().signed
    }
    /// [`SourceInfo::start_s`].
    fn start_s(&self) -> f64 {
        self.info().start_s
    }
}

/// Frames read from a [`FrameSource`] at a time by [`for_each_frame`].
pub const BLOCK_FRAMES: usize = 4096;

/// Reads `src` to its end in blocks of [`BLOCK_FRAMES`] and hands each
/// frame of `N` codes to `f` with its index from 0; stops at the first
/// error of the source or of `f`. Returns the frames read.
pub fn for_each_frame<const N: usize>(
    src: &mut dyn FrameSource,
    mut f: impl FnMut(u64, &[i32; N]) -> Result<(), String>,
) -> Result<u64, String> {
    let mut buf = vec![0i32; BLOCK_FRAMES * N];
    let mut index = 0u64;
    loop {
        let frames = src.read(&mut buf)?;
        if frames == 0 {
            return Ok(index);
        }
        for chunk in buf.chunks_exact(N).take(frames) {
            let Ok(codes) = <&[i32; N]>::try_from(chunk) else {
                continue;
            };
            f(index, codes)?;
            index += 1;
        }
    }
}

/// Opens `spec.path` as CSV, WAV or raw (see the module docs).
pub fn open_input(spec: &InputSpec) -> Result<Box<dyn FrameSource>, String> {
    let name = spec.path.display().to_string();
    if let Some(b) = spec.bits {
        check_bits(b)?;
    }
    check_rate(spec)?;
    if telemetry::is_capture(&spec.path) {
        let warn = telemetry::console_warnings();
        return Ok(Box::new(TelemetrySource::open(spec, warn)?));
    }
    if let Some(fmt) = spec.raw {
        let Some(ch) = spec.channels else {
            return Err(format!("{name}: --raw needs --channels N"));
        };
        let Some(rate) = spec.rate_hz else {
            return Err(format!("{name}: --raw needs --rate HZ"));
        };
        return Ok(Box::new(RawSource::open(
            &spec.path,
            fmt,
            ch,
            rate,
            spec.bits.unwrap_or(12),
        )?));
    }
    if spec.channels.is_some() {
        return Err(format!(
            "{name}: --channels applies to --raw input only (CSV names its channels in the header, WAV in its header)"
        ));
    }
    let wav = spec
        .path
        .extension()
        .is_some_and(|e| e.eq_ignore_ascii_case("wav"));
    if wav {
        if spec.rate_hz.is_some() {
            return Err(format!(
                "{name}: --rate does not apply to WAV input, whose header gives the rate"
            ));
        }
        return Ok(Box::new(WavSource::open(&spec.path, spec.bits)?));
    }
    Ok(Box::new(CsvSource::open(
        &spec.path,
        spec.rate_hz,
        spec.bits.unwrap_or(12),
    )?))
}

/// `--rate` must be 1 Hz to `u32::MAX` Hz.
fn check_rate(spec: &InputSpec) -> Result<(), String> {
    if let Some(r) = spec.rate_hz {
        if !(1.0..=f64::from(u32::MAX)).contains(&r) {
            return Err(format!(
                "--rate {}: expected a sample rate from 1 Hz to {} Hz",
                crate::text::num(r),
                u32::MAX
            ));
        }
    }
    Ok(())
}

/// `--bits` must be 8 to 16 (1, a polled-level CSV, is taken by
/// [`open_any`] before this).
fn check_bits(b: u8) -> Result<(), String> {
    if (8..=16).contains(&b) {
        Ok(())
    } else {
        Err(format!(
            "--bits {b}: expected 8 to 16 for ADC codes, or 1 for a polled-level CSV of 0/1 pin reads"
        ))
    }
}

/// An input of any kind.
pub enum Input {
    /// ADC codes (CSV, WAV, raw).
    Samples(Box<dyn FrameSource>),
    /// Pin reads `0`/`1` at a fixed rate (a CSV with `--bits 1`).
    Levels(Box<dyn FrameSource>),
    /// Timed changes of pins (an edge log).
    Edges(Box<EdgeLog>),
}

impl Input {
    /// The input's name for messages.
    pub fn name(&self) -> &str {
        match self {
            Input::Samples(s) | Input::Levels(s) => s.name(),
            Input::Edges(e) => e.name(),
        }
    }

    /// Channel names in column (or start-row) order.
    pub fn channel_names(&self) -> &[String] {
        match self {
            Input::Samples(s) | Input::Levels(s) => s.channel_names(),
            Input::Edges(e) => e.channels(),
        }
    }

    /// The first time on the log's own clock, seconds.
    pub fn start_s(&self) -> f64 {
        match self {
            Input::Samples(s) | Input::Levels(s) => s.start_s(),
            Input::Edges(e) => e.start_s(),
        }
    }

    /// Whether the input is pins (edges or polled levels), not ADC codes.
    pub fn is_digital(&self) -> bool {
        !matches!(self, Input::Samples(_))
    }
}

/// The first non-empty line of `path` (without its end), bounded by
/// [`crate::text::MAX_LINE_BYTES`]; `None` for an empty file or one that
/// cannot be read (the reader proper reports that).
fn first_line(path: &std::path::Path) -> Option<Vec<u8>> {
    let file = std::fs::File::open(path).ok()?;
    let mut r = std::io::BufReader::new(file);
    let mut line = Vec::new();
    for n in 1.. {
        line.clear();
        let got = crate::text::read_line(&mut r, &mut line, "", n).ok()?;
        if got == 0 {
            return None;
        }
        if line.iter().any(|b| !b.is_ascii_whitespace()) {
            return Some(line);
        }
    }
    None
}

/// Opens `spec.path` as any input: an edge log when its first line is the
/// edge header, a polled-level CSV with `--bits 1`, else as
/// [`open_input`] does.
pub fn open_any(spec: &InputSpec) -> Result<Input, String> {
    let name = spec.path.display().to_string();
    let wav = spec
        .path
        .extension()
        .is_some_and(|e| e.eq_ignore_ascii_case("wav"));
    if spec.raw.is_none() && !wav {
        if let Some(first) = first_line(&spec.path) {
            if is_edge_header(&first) {
                let given = [
                    ("--rate", spec.rate_hz.is_some()),
                    ("--bits", spec.bits.is_some()),
                    ("--channels", spec.channels.is_some()),
                ];
                if let Some((flag, _)) = given.iter().find(|(_, g)| *g) {
                    return Err(format!(
                        "{name}: {flag} does not apply to an edge log (header `{}`), whose rows are timed changes of 0/1 levels; see --tick-hz",
                        edges::EDGE_HEADER
                    ));
                }
                return Ok(Input::Edges(Box::new(EdgeLog::open(&spec.path)?)));
            }
        }
    }
    if spec.bits == Some(1) {
        if spec.raw.is_some() || wav {
            return Err(format!(
                "{name}: --bits 1 (a polled-level log of 0/1 pin reads) applies to CSV input only"
            ));
        }
        if spec.channels.is_some() {
            return Err(format!("{name}: --channels applies to --raw input only"));
        }
        check_rate(spec)?;
        return Ok(Input::Levels(Box::new(CsvSource::open(
            &spec.path,
            spec.rate_hz,
            1,
        )?)));
    }
    open_input(spec).map(Input::Samples)
}

fn check_channels(name: &str, n: usize) -> Result<(), String> {
    if n == 0 {
        return Err(format!("{name}: no channels"));
    }
    if n > MAX_CHANNELS {
        return Err(format!(
            "{name}: {n} channels; replay handles 1 to {MAX_CHANNELS} (split the file)"
        ));
    }
    Ok(())
}

// ------------------------------------------------------------------ simulator

/// A scenario render as an input (for the demo and tests).
pub struct RenderSource {
    render: crate::render::Render,
    info: SourceInfo,
    codes: Vec<u16>,
}

impl RenderSource {
    /// Wraps a render.
    pub fn new(render: crate::render::Render) -> RenderSource {
        let info = SourceInfo {
            name: render.scenario().origin.clone(),
            channels: render.scenario().channel_names(),
            rate_hz: render.rate_hz(),
            bits: render.scenario().adc.bits.clamp(8, 16) as u8,
            signed: false,
            start_s: 0.0,
        };
        RenderSource {
            render,
            info,
            codes: Vec::new(),
        }
    }
}

impl FrameSource for RenderSource {
    fn info(&self) -> &SourceInfo {
        &self.info
    }
    fn read(&mut self, buf: &mut [i32]) -> Result<usize, String> {
        self.codes.resize(buf.len(), 0);
        let n = self.render.fill(&mut self.codes);
        for (slot, c) in buf
            .iter_mut()
            .zip(&self.codes)
            .take(n * self.info.channels.len())
        {
            *slot = i32::from(*c);
        }
        Ok(n)
    }
}
