//! CSV logs (see the [module docs](super)).
//!
//! Hand-written rather than through a general CSV crate: a log is integer
//! cells and one optional time column, read row by row into a reused
//! buffer with no allocation per row (the replay of a one-hour four-channel
//! log streams through it at the detector's own speed: see the README's
//! performance section), and every refusal names the line and column and
//! quotes the cell short ([`crate::text`]). Quoted cells are not part of the
//! format: a quote is only trimmed from a header name.

use super::{check_channels, FrameSource, SourceInfo, MAX_CHANNELS, RATE_ROWS};
use std::collections::VecDeque;
use std::fs::File;
use std::io::{BufRead, BufReader};
use std::path::Path;

/// A CSV log (see the module docs).
pub struct CsvSource {
    info: SourceInfo,
    reader: Box<dyn BufRead>,
    line: Vec<u8>,
    line_no: usize,
    header: Vec<String>,
    time_col: Option<usize>,
    max_code: i64,
    period: f64,
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

impl CsvSource {
    /// Opens a CSV log: reads the header and, with a `time_s` column, the
    /// first rows to infer the rate.
    pub fn open(path: &Path, rate: Option<f64>, bits: u8) -> Result<CsvSource, String> {
        let name = path.display().to_string();
        let file = File::open(path).map_err(|e| format!("{name}: cannot open: {e}"))?;
        CsvSource::from_reader(
            name,
            Box::new(BufReader::with_capacity(1 << 20, file)),
            rate,
            bits,
        )
    }

    /// [`CsvSource::open`] on any reader (`name` for messages): for tests
    /// and fuzzing without files.
    pub fn from_reader(
        name: String,
        reader: Box<dyn BufRead>,
        rate: Option<f64>,
        bits: u8,
    ) -> Result<CsvSource, String> {
        if bits != 1 {
            super::check_bits(bits)?;
        }
        let mut src = CsvSource {
            info: SourceInfo {
                name: name.clone(),
                bits,
                ..SourceInfo::default()
            },
            reader,
            line: Vec::with_capacity(256),
            line_no: 0,
            header: Vec::new(),
            time_col: None,
            max_code: (1i64 << bits) - 1,
            period: 0.0,
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
            if src.info.channels.len() == MAX_CHANNELS && t != "time_s" {
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
                src.info.channels.push(t.to_string());
            }
            src.header.push(t.to_string());
            col += cell.len() + 1;
        }
        check_channels(&name, src.info.channels.len())?;
        src.row = vec![0; src.info.channels.len()];
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
            src.info.start_s = first.0;
            let inferred = 1.0 / period;
            if let Some(r) = rate {
                if (r - inferred).abs() > 0.01 * inferred {
                    return Err(format!(
                        "{name}: --rate {r} disagrees with time_s, which gives {inferred:.3} Hz"
                    ));
                }
            }
            src.info.rate_hz = rate.unwrap_or(inferred);
            for &(t, line, col, decimals) in &ts {
                src.check_time(t, line, col, decimals)?;
            }
        } else {
            src.info.rate_hz = rate.ok_or_else(|| {
                format!("{name}: no time_s column, so the sample rate is unknown; pass --rate HZ")
            })?;
        }
        Ok(src)
    }

    /// Reads the next non-empty line into `self.line` (without its end),
    /// at most [`crate::text::MAX_LINE_BYTES`] long.
    fn next_line(&mut self) -> Result<bool, String> {
        crate::text::read_content_line(
            &mut self.reader,
            &mut self.line,
            &self.info.name,
            &mut self.line_no,
        )
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
                let name = &self.info.name;
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
                    self.info.name,
                    start + 1
                ));
            }
            let t = cell.trim_ascii();
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
                            self.info.name,
                            crate::text::show_bytes(t)
                        )
                    })?;
                let decimals = s.find('.').map_or(0, |p| s.len() - p - 1);
                time = Some((v, ln, col, decimals));
            } else {
                let Some(v) = parse_int(t) else {
                    return Err(format!(
                        "{}:{ln}:{col}: column `{}`: `{}` is not an integer ADC code",
                        self.info.name,
                        crate::text::show(self.info.channels.get(ch).map_or("?", String::as_str)),
                        crate::text::show_bytes(t)
                    ));
                };
                if (v < 0 || v > self.max_code) && self.info.bits == 1 {
                    return Err(format!(
                        "{}:{ln}:{col}: column `{}`: {v} is not a pin level; a polled-level log \
                         (--bits 1) holds 0 or 1",
                        self.info.name,
                        crate::text::show(self.info.channels.get(ch).map_or("?", String::as_str)),
                    ));
                }
                if v < 0 || v > self.max_code {
                    return Err(format!(
                        "{}:{ln}:{col}: column `{}`: {v} is out of range for {}-bit codes \
                         (0 to {}); see --bits",
                        self.info.name,
                        crate::text::show(self.info.channels.get(ch).map_or("?", String::as_str)),
                        self.info.bits,
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
                self.info.name,
                len + 1
            ));
        }
        Ok(Some(time))
    }
}

impl FrameSource for CsvSource {
    fn info(&self) -> &SourceInfo {
        &self.info
    }
    fn read(&mut self, buf: &mut [i32]) -> Result<usize, String> {
        let n = self.info.channels.len();
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
