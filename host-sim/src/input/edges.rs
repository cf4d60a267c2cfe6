//! Edge logs: the changes of comparator or GPIO pins (see the
//! [module docs](super)).
//!
//! ```text
//! time_s,channel,level
//! 0.000000,bell,0        start rows: every channel's level at the start
//! 0.000000,light,0
//! 0.004120,bell,1        one row per change, in time order
//! 0.005880,bell,0
//! …
//! 12.000000,bell,0       end rows (optional): the level repeated, at the
//! 12.000000,light,0      log's end
//! ```
//!
//! - The header is exactly `time_s,channel,level` (spaces around cells, a
//!   UTF-8 byte-order mark and CRLF line ends are fine); [`is_edge_header`]
//!   is how [`super::open_any`] tells an edge log from an ADC CSV.
//! - **Start rows**: the rows at the first row's time, one per channel,
//!   name the channels (in that order, 1 to [`MAX_CHANNELS`]) and give each
//!   one's level at the start of the log. A channel first named later has
//!   no start row and is refused.
//! - **Changes**: every further row changes its channel's level (`0` or
//!   `1`), with `time_s` not before the row above it (rows of different
//!   channels may share a time).
//! - **End rows** (optional): rows that repeat their channel's level, all
//!   at one time and last in the file, at most one per channel: the log
//!   lasts until then (without them it ends at its last row). `humsim
//!   simulate --digital` writes them.
//! - `time_s` in seconds with at least 6 decimals (microseconds).
//!
//! Read row by row into a reused line buffer: memory does not depend on
//! the log's length. Every refusal names the line and column and quotes the
//! cell short ([`crate::text`]).

use super::MAX_CHANNELS;
use std::fs::File;
use std::io::{BufRead, BufReader};
use std::path::Path;

/// The header of an edge log.
pub const EDGE_HEADER: &str = "time_s,channel,level";

/// Fewest decimals of an edge log's `time_s`.
pub const MIN_DECIMALS: usize = 6;

/// Whether `line` (a file's first line, its end removed) is the header of
/// an edge log.
pub fn is_edge_header(line: &[u8]) -> bool {
    let Ok(text) = std::str::from_utf8(line) else {
        return false;
    };
    let text = text.strip_prefix('\u{feff}').unwrap_or(text);
    let cells: Vec<&str> = text
        .trim_end_matches(['\r', '\n'])
        .split(',')
        .map(str::trim)
        .collect();
    cells == ["time_s", "channel", "level"]
}

/// One change of a pin.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct EdgeRow {
    /// Time on the log's own clock, seconds.
    pub time_s: f64,
    /// Index of the channel in [`EdgeLog::channels`].
    pub channel: usize,
    /// The new level (`true` for 1).
    pub level: bool,
}

/// A row as parsed, before the checks against the rows above it.
struct Parsed {
    time_s: f64,
    time_col: usize,
    channel: Option<usize>,
    channel_col: usize,
    level: bool,
}

/// An edge log being read (see the module docs).
pub struct EdgeLog {
    name: String,
    reader: Box<dyn BufRead>,
    line: Vec<u8>,
    line_no: usize,
    channels: Vec<String>,
    start_levels: Vec<bool>,
    start_line: usize,
    start_s: f64,
    /// Present level of each channel and the line that set it.
    levels: Vec<(bool, usize)>,
    /// Time and line of the latest row.
    last: (f64, usize),
    /// The first row after the start rows, read ahead (the present line).
    ahead: Option<Parsed>,
    /// The end rows seen so far: their time, first line and channels.
    ending: Option<(f64, usize, Vec<bool>)>,
    done: bool,
}

impl EdgeLog {
    /// Opens an edge log and reads its header and start rows.
    pub fn open(path: &Path) -> Result<EdgeLog, String> {
        let name = path.display().to_string();
        let file = File::open(path).map_err(|e| format!("{name}: cannot open: {e}"))?;
        EdgeLog::from_reader(name, Box::new(BufReader::with_capacity(1 << 20, file)))
    }

    /// [`EdgeLog::open`] on any reader (`name` for messages): for tests and
    /// fuzzing without files.
    pub fn from_reader(name: String, reader: Box<dyn BufRead>) -> Result<EdgeLog, String> {
        let mut log = EdgeLog {
            name: name.clone(),
            reader,
            line: Vec::with_capacity(128),
            line_no: 0,
            channels: Vec::new(),
            start_levels: Vec::new(),
            start_line: 0,
            start_s: 0.0,
            levels: Vec::new(),
            last: (0.0, 0),
            ahead: None,
            ending: None,
            done: false,
        };
        if !log.next_line()? {
            return Err(format!(
                "{name}: empty file; expected the header `{EDGE_HEADER}`"
            ));
        }
        if crate::text::has_inner_cr(&log.line) {
            return Err(crate::text::cr_only(&name));
        }
        if !is_edge_header(&log.line) {
            return Err(format!(
                "{name}:{}:1: expected the header `{EDGE_HEADER}`, found `{}`",
                log.line_no,
                crate::text::show_bytes(&log.line)
            ));
        }
        // Start rows: every row at the first row's time.
        while let Some(p) = log.parse_row()? {
            let ln = log.line_no;
            if log.start_line == 0 {
                log.start_line = ln;
                log.start_s = p.time_s;
                log.last = (p.time_s, ln);
            }
            if p.time_s != log.start_s {
                if p.time_s < log.start_s {
                    return Err(log.backwards(&p));
                }
                log.ahead = Some(p);
                break;
            }
            let cell = log.cell_text(p.channel_col);
            if let Some(i) = p.channel {
                let first = log.levels.get(i).map_or(0, |l| l.1);
                return Err(format!(
                    "{}:{ln}:{}: channel `{}` has a second start row (its first is on line \
                     {first}); the rows at the log's first time ({} s) give each channel's \
                     starting level once",
                    log.name,
                    p.channel_col,
                    crate::text::show(&cell),
                    fmt_s(log.start_s)
                ));
            }
            if log.channels.len() == MAX_CHANNELS {
                return Err(format!(
                    "{}:{ln}:{}: more than {MAX_CHANNELS} channels in the start rows; replay \
                     handles 1 to {MAX_CHANNELS} (split the file)",
                    log.name, p.channel_col
                ));
            }
            log.channels.push(cell);
            log.start_levels.push(p.level);
            log.levels.push((p.level, ln));
            log.last = (p.time_s, ln);
        }
        if log.channels.is_empty() {
            return Err(format!(
                "{name}: no rows after the header; an edge log starts with one row per channel \
                 giving its level at the start"
            ));
        }
        Ok(log)
    }

    /// The file's name, for messages.
    pub fn name(&self) -> &str {
        &self.name
    }

    /// Channel names, in the order of the start rows.
    pub fn channels(&self) -> &[String] {
        &self.channels
    }

    /// Each channel's level at the start.
    pub fn start_levels(&self) -> &[bool] {
        &self.start_levels
    }

    /// The log's first time, seconds (its own clock).
    pub fn start_s(&self) -> f64 {
        self.start_s
    }

    /// The latest time read so far: once [`EdgeLog::next_change`] has returned
    /// `None`, the log's end (its end rows' time, or its last row's).
    pub fn end_s(&self) -> f64 {
        match &self.ending {
            Some((t, _, _)) => *t,
            None => self.last.0,
        }
    }

    /// The next change, `None` at the end. Errors name the line and column.
    pub fn next_change(&mut self) -> Result<Option<EdgeRow>, String> {
        loop {
            let p = match self.ahead.take() {
                Some(p) => p,
                None if self.done => return Ok(None),
                None => match self.parse_row()? {
                    Some(p) => p,
                    None => {
                        self.done = true;
                        return Ok(None);
                    }
                },
            };
            if p.time_s < self.last.0 {
                return Err(self.backwards(&p));
            }
            let ln = self.line_no;
            let Some(ch) = p.channel else {
                return Err(self.unknown(&p));
            };
            let level = self.levels.get(ch).is_some_and(|l| l.0);
            if let Some((t_end, end_line, ended)) = &mut self.ending {
                let again = ended.get(ch).copied().unwrap_or(true);
                if p.level == level && p.time_s == *t_end && !again {
                    if let Some(e) = ended.get_mut(ch) {
                        *e = true;
                    }
                    self.last = (p.time_s, ln);
                    continue;
                }
                return Err(format!(
                    "{}:{ln}:1: a row after the end rows: line {end_line} repeats its \
                     channel's level, which only the end rows do (at the log's last time, one \
                     per channel); every other row must change its channel's level",
                    self.name
                ));
            }
            self.last = (p.time_s, ln);
            if p.level == level {
                // An end row, if nothing but end rows follows.
                let mut ended = vec![false; self.channels.len()];
                if let Some(e) = ended.get_mut(ch) {
                    *e = true;
                }
                self.ending = Some((p.time_s, ln, ended));
                continue;
            }
            if let Some(slot) = self.levels.get_mut(ch) {
                *slot = (p.level, ln);
            }
            return Ok(Some(EdgeRow {
                time_s: p.time_s,
                channel: ch,
                level: p.level,
            }));
        }
    }

    fn backwards(&self, p: &Parsed) -> String {
        format!(
            "{}:{}:{}: time_s {} s comes before {} s on line {}: rows must be in time order",
            self.name,
            self.line_no,
            p.time_col,
            fmt_s(p.time_s),
            fmt_s(self.last.0),
            self.last.1
        )
    }

    fn unknown(&self, p: &Parsed) -> String {
        let cell = self.cell_text(p.channel_col);
        format!(
            "{}:{}:{}: channel `{}` has no start row: each channel's first row must be at the \
             log's start ({} s, line {}) and give its level there; the channels are: {}",
            self.name,
            self.line_no,
            p.channel_col,
            crate::text::show(&cell),
            fmt_s(self.start_s),
            self.start_line,
            self.channels.join(", ")
        )
    }

    /// The trimmed cell of the present line starting at 1-based `col`.
    fn cell_text(&self, col: usize) -> String {
        let rest = self.line.get(col.saturating_sub(1)..).unwrap_or(&[]);
        let end = rest.iter().position(|&b| b == b',').unwrap_or(rest.len());
        String::from_utf8_lossy(rest.get(..end).unwrap_or(&[]).trim_ascii()).into_owned()
    }

    /// Reads the next non-empty line into `self.line` (without its end).
    fn next_line(&mut self) -> Result<bool, String> {
        crate::text::read_content_line(
            &mut self.reader,
            &mut self.line,
            &self.name,
            &mut self.line_no,
        )
    }

    /// Parses the next row's cells; `None` at the end of the file.
    fn parse_row(&mut self) -> Result<Option<Parsed>, String> {
        if !self.next_line()? {
            return Ok(None);
        }
        let ln = self.line_no;
        let name = &self.name;
        let mut cells: [(usize, &[u8]); 3] = [(0, &[]); 3];
        let mut n = 0usize;
        let mut start = 0usize;
        for part in self.line.split(|&b| b == b',') {
            let lead = part.len() - part.trim_ascii_start().len();
            if let Some(slot) = cells.get_mut(n) {
                *slot = (start + lead + 1, part.trim_ascii());
            }
            n += 1;
            start += part.len() + 1;
        }
        if n != 3 {
            return Err(format!(
                "{name}:{ln}:1: expected 3 cells (time_s,channel,level), found {n}"
            ));
        }
        let [(tc, t), (cc, c), (lc, l)] = cells;
        let ts = std::str::from_utf8(t).unwrap_or("");
        let time_s: f64 = ts
            .parse()
            .ok()
            .filter(|v: &f64| v.is_finite() && *v >= 0.0)
            .ok_or_else(|| {
                format!(
                    "{name}:{ln}:{tc}: `{}` is not a time in seconds (>= 0)",
                    crate::text::show_bytes(t)
                )
            })?;
        let decimals = ts.find('.').map_or(0, |p| ts.len() - p - 1);
        if decimals < MIN_DECIMALS || ts.contains(['e', 'E']) {
            return Err(format!(
                "{name}:{ln}:{tc}: time_s `{}` has {decimals} decimals; an edge log's times \
                 need at least {MIN_DECIMALS} (microseconds), written out without an exponent",
                crate::text::show_bytes(t)
            ));
        }
        if c.is_empty() {
            return Err(format!("{name}:{ln}:{cc}: empty channel name"));
        }
        let level = match l {
            b"0" => false,
            b"1" => true,
            other => {
                return Err(format!(
                    "{name}:{ln}:{lc}: level `{}` of channel `{}`: expected 0 or 1",
                    crate::text::show_bytes(other),
                    crate::text::show_bytes(c)
                ))
            }
        };
        let channel = self.channels.iter().position(|n| n.as_bytes() == c);
        Ok(Some(Parsed {
            time_s,
            time_col: tc,
            channel,
            channel_col: cc,
            level,
        }))
    }
}

/// A time as messages show it (6 decimals, as the log has at least).
fn fmt_s(t: f64) -> String {
    format!("{t:.6}")
}

#[cfg(test)]
mod tests {
    use super::*;

    fn log(text: &str) -> Result<(EdgeLog, Vec<EdgeRow>), String> {
        let mut l = EdgeLog::from_reader(
            "t.csv".into(),
            Box::new(std::io::Cursor::new(text.as_bytes().to_vec())),
        )?;
        let mut rows = Vec::new();
        while let Some(r) = l.next_change()? {
            rows.push(r);
        }
        Ok((l, rows))
    }

    #[test]
    fn reads_start_rows_changes_and_end_rows() {
        let (l, rows) = log(
            "\u{feff}time_s, channel ,level\r\n0.500000,a,0\n0.500000,b,1\n\n0.501000,a,1\n\
             0.501000,b,0\n0.502500,a,0\n0.900000,a,0\n0.900000,b,0\n",
        )
        .unwrap_or_else(|e| panic!("{e}"));
        assert_eq!(l.channels(), ["a", "b"]);
        assert_eq!(l.start_levels(), [false, true]);
        assert_eq!(l.start_s(), 0.5);
        assert_eq!(l.end_s(), 0.9);
        let got: Vec<(f64, usize, bool)> = rows
            .iter()
            .map(|r| (r.time_s, r.channel, r.level))
            .collect();
        assert_eq!(
            got,
            [(0.501, 0, true), (0.501, 1, false), (0.5025, 0, false)]
        );
        // Without end rows the log ends at its last row.
        let (l, rows) = log("time_s,channel,level\n0.000000,a,0\n0.010000,a,1\n").unwrap();
        assert_eq!((rows.len(), l.end_s()), (1, 0.01));
    }

    #[test]
    fn refusals_name_line_and_column() {
        let h = "time_s,channel,level\n0.000000,a,0\n0.000000,b,0\n";
        let cases = [
            (
                format!("{h}0.100000,a,2\n"),
                "t.csv:4:12: level `2` of channel `a`: expected 0 or 1",
            ),
            (
                format!("{h}0.100000,a,1\n0.050000,b,1\n"),
                "t.csv:5:1: time_s 0.050000 s comes before 0.100000 s on line 4",
            ),
            (
                format!("{h}0.100000,c,1\n"),
                "t.csv:4:10: channel `c` has no start row",
            ),
            (
                format!("{h}0.000000,a,1\n"),
                "t.csv:4:10: channel `a` has a second start row (its first is on line 2)",
            ),
            (
                format!("{h}0.1,a,1\n"),
                "t.csv:4:1: time_s `0.1` has 1 decimals",
            ),
            (
                format!("{h}0.100000,a\n"),
                "t.csv:4:1: expected 3 cells (time_s,channel,level), found 2",
            ),
            (
                format!("{h}0.100000,a,0\n0.200000,a,1\n"),
                "t.csv:5:1: a row after the end rows: line 4 repeats",
            ),
            (
                "time_s,channel,level\n".to_string(),
                "t.csv: no rows after the header",
            ),
            (
                "time_s,pad\n".to_string(),
                "t.csv:1:1: expected the header `time_s,channel,level`",
            ),
        ];
        for (text, want) in cases {
            match log(&text) {
                Err(m) => assert!(m.starts_with(want), "{m}\nwanted {want}"),
                Ok(_) => panic!("accepted:\n{text}"),
            }
        }
    }

    #[test]
    fn detects_the_header() {
        assert!(is_edge_header(b"time_s,channel,level"));
        assert!(is_edge_header(" time_s , channel , level \r".as_bytes()));
        assert!(!is_edge_header(b"time_s,channel,level,x"));
        assert!(!is_edge_header(b"time_s,pad"));
    }
}
