//! Replay: logged ADC codes in, detector events out.
//!
//! ## Inputs ([`open_input`])
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
//!
//! `--bits` defaults to 12 for CSV and raw and to the PCM width for WAV;
//! every code is checked against it. Channels: 1 to [`MAX_CHANNELS`]; the
//! detector's channel count is a const generic, and the inputs dispatch to
//! `Frontend<1, 0>` … `Frontend<16, 0>` ([`with_channels`]); more channels
//! are refused with a message.
//!
//! Reading streams: a fixed block of frames at a time, so memory does not
//! depend on the file's length.
//!
//! ## Output ([`event_row`])
//! CSV `time_s,channel,event,value`, one row per event in time order
//! (within one mains cycle, in channel order): `time_s` is the log's start
//! ([`FrameSource::start_s`]) plus the emitting sample's index divided by
//! the rate, with 6 decimals; `channel` the
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

use humsense::{AdcSample, Backend, Config, Cycle, Event, EventKind, Frontend};
use std::collections::VecDeque;
use std::fs::File;
use std::io::{BufReader, Read};
use std::path::{Path, PathBuf};

/// Most channels an input may have.
pub const MAX_CHANNELS: usize = 16;

/// Frames per read block.
const BLOCK_FRAMES: usize = 4096;

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

/// A stream of interleaved frames of ADC codes.
pub trait FrameSource {
    /// The input's name for messages (the file name).
    fn name(&self) -> &str;
    /// Channel names in column order.
    fn channel_names(&self) -> &[String];
    /// Sample rate per channel, hertz.
    fn rate_hz(&self) -> f64;
    /// ADC resolution the codes were checked against.
    fn bits(&self) -> u8;
    /// Whether codes are two's complement (fed to the detector as `i16`).
    fn signed(&self) -> bool;
    /// The time of the first frame on the log's own clock, seconds: the
    /// first `time_s` of a CSV log, 0 for inputs without a time column.
    /// Events and labels are reported on this clock.
    fn start_s(&self) -> f64 {
        0.0
    }
    /// Fills `buf` (a multiple of the channel count long) with whole frames
    /// and returns how many; 0 at the end. Errors name the place in the file.
    fn read(&mut self, buf: &mut [i32]) -> Result<usize, String>;
}

/// Opens `spec.path` as CSV, WAV or raw (see the module docs).
pub fn open_input(spec: &InputSpec) -> Result<Box<dyn FrameSource>, String> {
    let name = spec.path.display().to_string();
    if let Some(b) = spec.bits {
        if !(8..=16).contains(&b) {
            return Err(format!("--bits {b}: expected 8 to 16"));
        }
    }
    if let Some(r) = spec.rate_hz {
        if !(r.is_finite() && r > 0.0) {
            return Err(format!("--rate {r}: expected a positive number of hertz"));
        }
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

// ------------------------------------------------------------------ CSV

/// A CSV log (see the module docs).
pub struct CsvSource {
    name: String,
    reader: BufReader<File>,
    line: Vec<u8>,
    line_no: usize,
    header: Vec<String>,
    names: Vec<String>,
    time_col: Option<usize>,
    bits: u8,
    max_code: i64,
    rate_hz: f64,
    period: f64,
    start_s: f64,
    last_time: Option<(f64, usize)>,
    pending: VecDeque<i32>,
    row: Vec<i32>,
    done: bool,
}

/// The sample period from the first rows' times: the mean of the intervals
/// within ±50 % of their median, so that one gap among them does not bend
/// the rate, while the rounding of printed times (intervals that alternate
/// between two printed values) averages out.
fn mean_interval(ts: &[(f64, usize, usize, usize)]) -> f64 {
    let mut dts: Vec<f64> = ts
        .windows(2)
        .map(|w| match w {
            [a, b] => b.0 - a.0,
            _ => 0.0,
        })
        .collect();
    dts.sort_by(f64::total_cmp);
    let Some(&median) = dts.get(dts.len() / 2) else {
        return 0.0;
    };
    let near: Vec<f64> = dts
        .into_iter()
        .filter(|d| (d - median).abs() <= 0.5 * median.abs())
        .collect();
    near.iter().sum::<f64>() / near.len().max(1) as f64
}

/// Parses an optionally signed decimal integer; `None` if not one.
#[inline]
fn parse_int(b: &[u8]) -> Option<i64> {
    let (neg, digits) = match b.split_first() {
        Some((b'-', r)) => (true, r),
        Some((b'+', r)) => (false, r),
        _ => (false, b),
    };
    if digits.is_empty() || digits.len() > 18 {
        return None;
    }
    let mut v: i64 = 0;
    for &d in digits {
        let x = d.wrapping_sub(b'0');
        if x > 9 {
            return None;
        }
        v = v * 10 + i64::from(x);
    }
    Some(if neg { -v } else { v })
}

fn trim_bytes(mut b: &[u8]) -> &[u8] {
    while let Some((f, r)) = b.split_first() {
        if f.is_ascii_whitespace() {
            b = r;
        } else {
            break;
        }
    }
    while let Some((l, r)) = b.split_last() {
        if l.is_ascii_whitespace() {
            b = r;
        } else {
            break;
        }
    }
    b
}

impl CsvSource {
    /// Opens a CSV log: reads the header and, with a `time_s` column, the
    /// first rows to infer the rate.
    pub fn open(path: &Path, rate: Option<f64>, bits: u8) -> Result<CsvSource, String> {
        let name = path.display().to_string();
        let file = File::open(path).map_err(|e| format!("{name}: cannot open: {e}"))?;
        let mut src = CsvSource {
            name: name.clone(),
            reader: BufReader::with_capacity(1 << 20, file),
            line: Vec::with_capacity(256),
            line_no: 0,
            header: Vec::new(),
            names: Vec::new(),
            time_col: None,
            bits,
            max_code: (1i64 << bits) - 1,
            rate_hz: 0.0,
            period: 0.0,
            start_s: 0.0,
            last_time: None,
            pending: VecDeque::new(),
            row: Vec::new(),
            done: false,
        };
        if !src.next_line()? {
            return Err(format!(
                "{name}: empty file; expected a header row naming the channels"
            ));
        }
        if crate::text::has_inner_cr(&src.line) {
            return Err(crate::text::cr_only(&name));
        }
        let text = std::str::from_utf8(&src.line)
            .map_err(|_| format!("{name}:1:1: the header is not UTF-8 text"))?;
        let text = text.strip_prefix('\u{feff}').unwrap_or(text);
        let mut col = 1;
        for cell in text.split(',') {
            let t = cell.trim().trim_matches('"');
            let here = col + cell.len() - cell.trim_start().len();
            if src.names.len() == MAX_CHANNELS && t != "time_s" {
                return Err(format!(
                    "{name}:1:{here}: more than {MAX_CHANNELS} channel columns in the header; \
                     replay handles 1 to {MAX_CHANNELS} (split the file)"
                ));
            }
            let shown = crate::text::show(t);
            if t.is_empty() {
                return Err(format!("{name}:1:{here}: empty column name in the header"));
            }
            if t.parse::<f64>().is_ok() {
                return Err(format!(
                    "{name}:1:{here}: header cell `{shown}` is a number; the first row must name the channels"
                ));
            }
            if src.header.iter().any(|h| h == t) {
                return Err(format!(
                    "{name}:1:{here}: column `{shown}` appears twice in the header"
                ));
            }
            if t == "time_s" {
                src.time_col = Some(src.header.len());
            } else {
                src.names.push(t.to_string());
            }
            src.header.push(t.to_string());
            col += cell.len() + 1;
        }
        check_channels(&name, src.names.len())?;
        src.row = vec![0; src.names.len()];
        // Read ahead to find the rate (and to refuse a header-only file).
        let ahead = if src.time_col.is_some() { RATE_ROWS } else { 1 };
        let mut times = Vec::new();
        while times.len() < ahead {
            let Some(t) = src.parse_row()? else { break };
            src.pending.extend(src.row.iter().copied());
            times.push(t);
        }
        if times.is_empty() {
            return Err(format!("{name}: no data rows after the header"));
        }
        if src.time_col.is_some() {
            let ts: Vec<(f64, usize, usize, usize)> = times.into_iter().flatten().collect();
            let (Some(first), Some(last)) = (ts.first(), ts.last()) else {
                return Err(format!("{name}: no data rows after the header"));
            };
            if ts.len() < 2 {
                return Err(format!(
                    "{name}: one data row: time_s needs at least two rows to give the rate; pass --rate"
                ));
            }
            let period = mean_interval(&ts);
            if !(period.is_finite() && period > 0.0) {
                return Err(format!(
                    "{name}:{}:{}: time_s does not increase (from {} s to {} s over the first {} rows)",
                    last.1,
                    last.2,
                    first.0,
                    last.0,
                    ts.len()
                ));
            }
            src.period = period;
            src.start_s = first.0;
            let inferred = 1.0 / period;
            if let Some(r) = rate {
                if (r - inferred).abs() > 0.01 * inferred {
                    return Err(format!(
                        "{name}: --rate {r} disagrees with time_s, which gives {inferred:.3} Hz"
                    ));
                }
            }
            src.rate_hz = rate.unwrap_or(inferred);
            for &(t, line, col, decimals) in &ts {
                src.check_time(t, line, col, decimals)?;
            }
        } else {
            src.rate_hz = rate.ok_or_else(|| {
                format!("{name}: no time_s column, so the sample rate is unknown; pass --rate HZ")
            })?;
        }
        Ok(src)
    }

    /// Reads the next non-empty line into `self.line` (without its end),
    /// at most [`crate::text::MAX_LINE_BYTES`] long.
    fn next_line(&mut self) -> Result<bool, String> {
        loop {
            self.line.clear();
            let n = crate::text::read_line(
                &mut self.reader,
                &mut self.line,
                &self.name,
                self.line_no + 1,
            )?;
            if n == 0 {
                return Ok(false);
            }
            self.line_no += 1;
            while matches!(self.line.last(), Some(b'\n' | b'\r')) {
                self.line.pop();
            }
            if !trim_bytes(&self.line).is_empty() {
                return Ok(true);
            }
        }
    }

    /// Checks one row's time against the row before, from the values:
    /// the interval must be the period within a tolerance of one unit in the
    /// last printed decimal (the rounding of printed times), at least 1 %
    /// and at most half of the period, so that a missing or repeated
    /// sample is found whatever the printed precision. A gap is reported
    /// with both line numbers and the samples missing.
    fn check_time(
        &mut self,
        t: f64,
        line: usize,
        col: usize,
        decimals: usize,
    ) -> Result<(), String> {
        let period = self.period;
        if let Some((prev, prev_line)) = self.last_time {
            let dt = t - prev;
            let unit = 10f64.powi(-(decimals.min(15) as i32));
            let tol = unit.clamp(0.01 * period, 0.5 * period);
            if !(dt - period).abs().le(&tol) {
                let name = &self.name;
                let rate = 1.0 / period;
                let resolve = if unit > 0.5 * period {
                    format!(
                        " (`{t}` has {decimals} decimals, too few to resolve a period of \
                         {period:.9} s: print more, or drop time_s and pass --rate)"
                    )
                } else {
                    String::new()
                };
                return Err(if dt > 1.5 * period {
                    let missing = (dt / period).round() - 1.0;
                    format!(
                        "{name}:{line}:{col}: column `time_s`: a gap of {dt:.9} s from line \
                         {prev_line} ({prev} s) to line {line} ({t} s): about {missing:.0} \
                         missing sample(s) at {rate:.3} Hz; replay needs uniform \
                         samples{resolve}"
                    )
                } else if dt <= 0.0 {
                    format!(
                        "{name}:{line}:{col}: column `time_s`: {t} s does not come after {prev} s \
                         on line {prev_line}{resolve}"
                    )
                } else {
                    format!(
                        "{name}:{line}:{col}: column `time_s`: interval {dt:.9} s from line \
                         {prev_line} differs from the period {period:.9} s ({rate:.3} Hz) by more \
                         than {tol:.9} s: the rate must be uniform{resolve}"
                    )
                });
            }
        }
        self.last_time = Some((t, line));
        Ok(())
    }

    /// Parses the next row into `self.row`; returns its time cell (value,
    /// line, column, decimals) when there is a time column. `None` at the end.
    #[allow(clippy::type_complexity)]
    fn parse_row(&mut self) -> Result<Option<Option<(f64, usize, usize, usize)>>, String> {
        if self.done || !self.next_line()? {
            self.done = true;
            return Ok(None);
        }
        let ln = self.line_no;
        let ncols = self.header.len();
        let mut time = None;
        let mut k = 0usize;
        let mut ch = 0usize;
        let mut start = 0usize;
        let line = &self.line;
        let len = line.len();
        loop {
            let end = line
                .get(start..)
                .and_then(|r| r.iter().position(|&b| b == b','))
                .map_or(len, |p| start + p);
            let cell = line.get(start..end).unwrap_or(&[]);
            if k >= ncols {
                return Err(format!(
                    "{}:{ln}:{}: expected {ncols} cells as in the header, found more",
                    self.name,
                    start + 1
                ));
            }
            let t = trim_bytes(cell);
            let col = start + 1;
            if Some(k) == self.time_col {
                let s = std::str::from_utf8(t).unwrap_or("");
                let v: f64 = s
                    .parse()
                    .ok()
                    .filter(|v: &f64| v.is_finite())
                    .ok_or_else(|| {
                        format!(
                            "{}:{ln}:{col}: column `time_s`: `{}` is not a time in seconds",
                            self.name,
                            crate::text::show_bytes(t)
                        )
                    })?;
                let decimals = s.find('.').map_or(0, |p| s.len() - p - 1);
                time = Some((v, ln, col, decimals));
            } else {
                let Some(v) = parse_int(t) else {
                    return Err(format!(
                        "{}:{ln}:{col}: column `{}`: `{}` is not an integer ADC code",
                        self.name,
                        crate::text::show(self.names.get(ch).map_or("?", String::as_str)),
                        crate::text::show_bytes(t)
                    ));
                };
                if v < 0 || v > self.max_code {
                    return Err(format!(
                        "{}:{ln}:{col}: column `{}`: {v} is out of range for {}-bit codes \
                         (0 to {}); see --bits",
                        self.name,
                        crate::text::show(self.names.get(ch).map_or("?", String::as_str)),
                        self.bits,
                        self.max_code
                    ));
                }
                if let Some(slot) = self.row.get_mut(ch) {
                    *slot = v as i32;
                }
                ch += 1;
            }
            k += 1;
            if end >= len {
                break;
            }
            start = end + 1;
        }
        if k != ncols {
            return Err(format!(
                "{}:{ln}:{}: expected {ncols} cells as in the header, found {k}",
                self.name,
                len + 1
            ));
        }
        Ok(Some(time))
    }
}

impl FrameSource for CsvSource {
    fn name(&self) -> &str {
        &self.name
    }
    fn channel_names(&self) -> &[String] {
        &self.names
    }
    fn rate_hz(&self) -> f64 {
        self.rate_hz
    }
    fn bits(&self) -> u8 {
        self.bits
    }
    fn signed(&self) -> bool {
        false
    }
    fn start_s(&self) -> f64 {
        self.start_s
    }
    fn read(&mut self, buf: &mut [i32]) -> Result<usize, String> {
        let n = self.names.len();
        let mut frames = 0;
        for frame in buf.chunks_exact_mut(n) {
            if !self.pending.is_empty() {
                for slot in frame.iter_mut() {
                    *slot = self.pending.pop_front().unwrap_or(0);
                }
            } else {
                match self.parse_row()? {
                    None => break,
                    Some(time) => {
                        if let Some((t, line, col, d)) = time {
                            self.check_time(t, line, col, d)?;
                        }
                        frame.copy_from_slice(&self.row);
                    }
                }
            }
            frames += 1;
        }
        Ok(frames)
    }
}

// ------------------------------------------------------------------ WAV

/// A WAV file of integer PCM (see the module docs).
pub struct WavSource {
    name: String,
    reader: hound::WavReader<BufReader<File>>,
    names: Vec<String>,
    rate_hz: f64,
    bits: u8,
    signed: bool,
    lo: i32,
    hi: i32,
    declared: u64,
    read: u64,
}

impl WavSource {
    /// Opens a WAV file; `bits` is `--bits`.
    pub fn open(path: &Path, bits: Option<u8>) -> Result<WavSource, String> {
        let name = path.display().to_string();
        let reader = hound::WavReader::open(path).map_err(|e| match e {
            hound::Error::IoError(ref io) if io.kind() == std::io::ErrorKind::NotFound => {
                format!("{name}: cannot open: {io}")
            }
            hound::Error::IoError(ref io) if io.kind() == std::io::ErrorKind::UnexpectedEof => {
                format!("{name}: truncated WAV: the file ends inside its header")
            }
            other if other.to_string().contains("enough bytes") => {
                format!("{name}: truncated WAV: the file ends inside its header ({other})")
            }
            other => format!("{name}: not a readable WAV file: {other}"),
        })?;
        let spec = reader.spec();
        if spec.sample_format != hound::SampleFormat::Int {
            return Err(format!(
                "{name}: floating-point WAV; expected integer PCM ADC codes"
            ));
        }
        let width = spec.bits_per_sample;
        let nch = usize::from(spec.channels);
        check_channels(&name, nch)?;
        let bits = match bits {
            Some(b) if u16::from(b) > width => {
                return Err(format!(
                    "{name}: --bits {b} exceeds the file's {width}-bit PCM"
                ))
            }
            Some(b) => b,
            None if width <= 16 => width as u8,
            None => {
                return Err(format!(
                    "{name}: {width}-bit PCM; the detector takes codes of 8 to 16 bits: pass \
                     --bits N (8 to 16) if the samples are ADC codes stored unchanged"
                ))
            }
        };
        if bits < 8 {
            return Err(format!(
                "{name}: {bits}-bit codes; the detector takes 8 to 16 bits"
            ));
        }
        let signed = u16::from(bits) == width;
        let (lo, hi) = if signed {
            (-(1i32 << (bits - 1)), (1i32 << (bits - 1)) - 1)
        } else {
            (0, (1i32 << bits) - 1)
        };
        let declared = u64::from(reader.len());
        if declared == 0 {
            return Err(format!("{name}: the WAV holds no samples"));
        }
        Ok(WavSource {
            names: (0..nch).map(|i| format!("ch{i}")).collect(),
            rate_hz: f64::from(spec.sample_rate),
            name,
            reader,
            bits,
            signed,
            lo,
            hi,
            declared,
            read: 0,
        })
    }
}

impl FrameSource for WavSource {
    fn name(&self) -> &str {
        &self.name
    }
    fn channel_names(&self) -> &[String] {
        &self.names
    }
    fn rate_hz(&self) -> f64 {
        self.rate_hz
    }
    fn bits(&self) -> u8 {
        self.bits
    }
    fn signed(&self) -> bool {
        self.signed
    }
    fn read(&mut self, buf: &mut [i32]) -> Result<usize, String> {
        let nch = self.names.len();
        let (lo, hi, bits) = (self.lo, self.hi, self.bits);
        let name = &self.name;
        let declared = self.declared;
        let mut got = 0usize;
        let mut samples = self.reader.samples::<i32>();
        for slot in buf.iter_mut() {
            match samples.next() {
                None => break,
                Some(Ok(v)) => {
                    let index = self.read + got as u64;
                    if v < lo || v > hi {
                        let how = if self.signed {
                            "two's-complement"
                        } else {
                            "unsigned (as --bits is below the PCM width)"
                        };
                        return Err(format!(
                            "{name}: frame {}, channel ch{}: sample {v} is out of range for \
                             {bits}-bit {how} codes ({lo} to {hi}); see --bits",
                            index / nch as u64,
                            index % nch as u64
                        ));
                    }
                    *slot = v;
                    got += 1;
                }
                Some(Err(e)) => {
                    let at = self.read + got as u64;
                    return Err(format!(
                        "{name}: truncated WAV: the header declares {declared} samples but \
                         sample {at} (frame {}) cannot be read: {e}",
                        at / nch as u64
                    ));
                }
            }
        }
        self.read += got as u64;
        if !got.is_multiple_of(nch) {
            return Err(format!(
                "{name}: truncated WAV: the data ends inside frame {} ({} of {nch} channels)",
                self.read / nch as u64,
                got % nch
            ));
        }
        if got == 0 && self.read < declared {
            return Err(format!(
                "{name}: truncated WAV: the header declares {declared} samples but the data \
                 ends after {}",
                self.read
            ));
        }
        Ok(got / nch)
    }
}

// ------------------------------------------------------------------ raw

/// Raw little-endian 16-bit codes.
pub struct RawSource {
    name: String,
    reader: BufReader<File>,
    names: Vec<String>,
    rate_hz: f64,
    bits: u8,
    format: RawFormat,
    lo: i32,
    hi: i32,
    bytes: Vec<u8>,
    offset: u64,
    started: bool,
}

impl RawSource {
    /// Opens a raw file.
    pub fn open(
        path: &Path,
        format: RawFormat,
        channels: usize,
        rate_hz: f64,
        bits: u8,
    ) -> Result<RawSource, String> {
        let name = path.display().to_string();
        check_channels(&name, channels)?;
        let file = File::open(path).map_err(|e| format!("{name}: cannot open: {e}"))?;
        let (lo, hi) = match format {
            RawFormat::U16Le => (0, (1i32 << bits) - 1),
            RawFormat::I16Le => (-(1i32 << (bits - 1)), (1i32 << (bits - 1)) - 1),
        };
        Ok(RawSource {
            name,
            reader: BufReader::with_capacity(1 << 20, file),
            names: (0..channels).map(|i| format!("ch{i}")).collect(),
            rate_hz,
            bits,
            format,
            lo,
            hi,
            bytes: Vec::new(),
            offset: 0,
            started: false,
        })
    }
}

impl FrameSource for RawSource {
    fn name(&self) -> &str {
        &self.name
    }
    fn channel_names(&self) -> &[String] {
        &self.names
    }
    fn rate_hz(&self) -> f64 {
        self.rate_hz
    }
    fn bits(&self) -> u8 {
        self.bits
    }
    fn signed(&self) -> bool {
        self.format == RawFormat::I16Le
    }
    fn read(&mut self, buf: &mut [i32]) -> Result<usize, String> {
        let nch = self.names.len();
        let frame_bytes = 2 * nch;
        let want = buf.len() / nch * frame_bytes;
        self.bytes.resize(want, 0);
        let mut filled = 0usize;
        while filled < want {
            let Some(rest) = self.bytes.get_mut(filled..) else {
                break;
            };
            match self.reader.read(rest) {
                Ok(0) => break,
                Ok(n) => filled += n,
                Err(e) if e.kind() == std::io::ErrorKind::Interrupted => {}
                Err(e) => return Err(format!("{}: cannot read: {e}", self.name)),
            }
        }
        if filled == 0 && !self.started {
            return Err(format!("{}: empty file", self.name));
        }
        self.started = true;
        if !filled.is_multiple_of(frame_bytes) {
            return Err(format!(
                "{}: truncated: {} trailing bytes at byte offset {} do not make a whole frame \
                 ({nch} channels x 2 bytes)",
                self.name,
                filled % frame_bytes,
                self.offset + (filled - filled % frame_bytes) as u64
            ));
        }
        let frames = filled / frame_bytes;
        let signed = self.signed();
        for (k, (pair, slot)) in self
            .bytes
            .chunks_exact(2)
            .take(frames * nch)
            .zip(buf.iter_mut())
            .enumerate()
        {
            let raw = [
                pair.first().copied().unwrap_or(0),
                pair.get(1).copied().unwrap_or(0),
            ];
            let v = if signed {
                i32::from(i16::from_le_bytes(raw))
            } else {
                i32::from(u16::from_le_bytes(raw))
            };
            if v < self.lo || v > self.hi {
                let byte = self.offset + 2 * k as u64;
                return Err(format!(
                    "{}: frame {}, channel ch{} (byte offset {byte}): code {v} is out of range \
                     for {}-bit codes ({} to {}); see --bits",
                    self.name,
                    byte / frame_bytes as u64,
                    k % nch,
                    self.bits,
                    self.lo,
                    self.hi
                ));
            }
            *slot = v;
        }
        self.offset += filled as u64;
        Ok(frames)
    }
}

// ------------------------------------------------------------------ simulator

/// A scenario render as an input (for the demo and tests).
pub struct RenderSource {
    render: crate::render::Render,
    names: Vec<String>,
    bits: u8,
    codes: Vec<u16>,
}

impl RenderSource {
    /// Wraps a render.
    pub fn new(render: crate::render::Render) -> RenderSource {
        let names = render.scenario().channel_names();
        let bits = render.scenario().adc.bits.clamp(8, 16) as u8;
        RenderSource {
            render,
            names,
            bits,
            codes: Vec::new(),
        }
    }
}

impl FrameSource for RenderSource {
    fn name(&self) -> &str {
        &self.render.scenario().origin
    }
    fn channel_names(&self) -> &[String] {
        &self.names
    }
    fn rate_hz(&self) -> f64 {
        self.render.rate_hz()
    }
    fn bits(&self) -> u8 {
        self.bits
    }
    fn signed(&self) -> bool {
        false
    }
    fn read(&mut self, buf: &mut [i32]) -> Result<usize, String> {
        self.codes.resize(buf.len(), 0);
        let n = self.render.fill(&mut self.codes);
        for (slot, c) in buf.iter_mut().zip(&self.codes).take(n * self.names.len()) {
            *slot = i32::from(*c);
        }
        Ok(n)
    }
}

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
/// completed mains cycle. Returns the frames read.
pub fn drive<const N: usize>(
    src: &mut dyn FrameSource,
    cfg: &Config,
    on_frame: impl FnMut(u64, &[i32; N]),
    on_cycle: impl FnMut(&Cycle<N, 0>) -> Result<(), String>,
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
    mut on_cycle: impl FnMut(&Cycle<N, 0>) -> Result<(), String>,
) -> Result<u64, String> {
    let mut buf = vec![0i32; BLOCK_FRAMES * N];
    let mut index = 0u64;
    loop {
        let frames = src.read(&mut buf)?;
        if frames == 0 {
            break;
        }
        for chunk in buf.chunks_exact(N).take(frames) {
            let Ok(codes) = <&[i32; N]>::try_from(chunk) else {
                continue;
            };
            on_frame(index, codes);
            index += 1;
            let frame: [S; N] = codes.map(S::from_code);
            if let Some(cycle) = front.push_frame(&frame) {
                on_cycle(&cycle)?;
            }
        }
    }
    Ok(index)
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
            src,
            cfg,
            sink,
            plot,
            keep,
        },
    )
}

struct ReplayTask<'a, 'b> {
    src: &'a mut dyn FrameSource,
    cfg: &'a Config,
    sink: &'a mut dyn FnMut(&Event) -> Result<(), String>,
    plot: Option<&'b mut crate::plot::PlotRecorder>,
    keep: bool,
}

impl ChannelTask for ReplayTask<'_, '_> {
    type Output = ReplayOutcome;
    fn run<const N: usize>(self) -> Result<ReplayOutcome, String> {
        let mut back = Backend::<N, 0>::new(self.cfg).map_err(|e| e.to_string())?;
        let mut events = Vec::new();
        let sink = self.sink;
        let keep = self.keep;
        let mut failed: Option<String> = None;
        // One recorder, used by both closures in turn.
        let cell = std::cell::RefCell::new(self.plot);
        let frames = drive::<N>(
            self.src,
            self.cfg,
            |i, f| {
                if let Some(p) = cell.borrow_mut().as_mut() {
                    p.frame(i, f);
                }
            },
            |cycle| {
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
                Ok(())
            },
        )?;
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
            "{}: sample rate {} Hz is out of range",
            src.name(),
            src.rate_hz()
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
pub fn label_kind(cfg: &Config) -> crate::scenario::LabelKind {
    match cfg.profile {
        humsense::Profile::Field => crate::scenario::LabelKind::Field,
        _ => crate::scenario::LabelKind::Touch,
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
    let mut src = open_input(&cmd.input)?;
    let cfg = config_for(src.as_ref(), cmd.profile, cmd.mains, cmd.config.as_deref())?;
    let names = src.channel_names().to_vec();
    let rate = src.rate_hz();
    let start = src.start_s();
    let labels = match &cmd.labels {
        Some(p) => {
            let l = crate::score::read_labels(p)?;
            let span = crate::score::Span::open(start);
            crate::score::check_labels(&l, &names, &span, &p.display().to_string())?;
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
            let mut plot = cmd
                .plot
                .as_ref()
                .map(|_| crate::plot::PlotRecorder::new(&names, rate).starting_at(start));
            let mut sink = |e: &Event| {
                writeln!(out, "{}", event_row(e, &names, rate, start)).map_err(&mut fail)
            };
            let outcome = replay(
                src.as_mut(),
                &cfg,
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
        if let (Some(l), Some(p)) = (&labels, &cmd.labels) {
            let pname = p.display().to_string();
            let span = crate::score::Span::of_input(start, seconds, rate);
            crate::score::check_labels(l, &names, &span, &pname)?;
            let opts = crate::score::ScoreOptions::for_kind(label_kind(&cfg));
            let on_samples = crate::score::shifted(l, -start);
            let s = crate::score::score_events(&outcome.events, rate, &names, &on_samples, &opts)?;
            console::err(&format!(
                "score of {} against {pname} ({} labels, {seconds:.1} s):\n{}",
                src.name(),
                opts.kind.as_str(),
                s.table()
            ))?;
        }
        if let (Some(f), Some(rec)) = (plot_file.as_mut(), &plot) {
            let title = format!(
                "humsim replay: {} ({:.1} s at {rate} Hz)",
                src.name(),
                seconds
            );
            let name = f.shown().to_string();
            rec.write_png(
                f.write_path(),
                &name,
                &title,
                labels.as_deref().unwrap_or(&[]),
            )?;
        }
    }
    crate::outfile::commit_all(out_file.into_iter().chain(plot_file))?;
    if let Some(p) = &cmd.plot {
        console::err(&format!("plot: {}\n", p.display()))?;
    }
    Ok(())
}
