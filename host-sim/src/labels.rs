//! Ground-truth labels: the type, the CSV reader and writer, and the checks
//! of a label file against the input it labels.
//!
//! Labels are intervals `channel,kind,start_s,end_s` with that header, kind
//! `touch` or `field`, times in seconds on the labelled log's own clock
//! (from its first `time_s`, or from 0). `humsim simulate` writes them
//! beside its output as `FILE.labels.csv` (see [`crate::output`]); a
//! developer writes them by hand for a logged board. A UTF-8 byte-order
//! mark, CRLF line ends, blank lines and spaces around cells are accepted.

use std::io::{self, Write};
use std::path::Path;

/// What kind of interval a label marks.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum LabelKind {
    /// A finger on the pad.
    Touch,
    /// A live conductor within detection range.
    Field,
}

impl LabelKind {
    /// `touch` or `field`, as in the labels CSV.
    pub fn as_str(&self) -> &'static str {
        match self {
            LabelKind::Touch => "touch",
            LabelKind::Field => "field",
        }
    }
}

/// One ground-truth interval.
#[derive(Debug, Clone, PartialEq)]
pub struct Label {
    /// Channel name.
    pub channel: String,
    /// Kind.
    pub kind: LabelKind,
    /// Start, seconds.
    pub start_s: f64,
    /// End, seconds.
    pub end_s: f64,
}

/// Labels read from a file, with the line each came from, for messages.
#[derive(Debug, Clone, PartialEq)]
pub struct LabelFile {
    /// The file's name, for messages.
    pub name: String,
    /// The labels in file order.
    pub labels: Vec<Label>,
    /// The line of each label.
    lines: Vec<usize>,
}

impl LabelFile {
    /// Reads a labels CSV (`channel,kind,start_s,end_s` with that header).
    /// Errors name the file, line and column. Never panics.
    pub fn read(path: &Path) -> Result<LabelFile, String> {
        let name = path.display().to_string();
        let text = crate::text::read_small(path, "labels")?;
        LabelFile::parse(&text, &name)
    }

    /// Parses labels CSV text; `name` labels the source in errors.
    pub fn parse(text: &str, name: &str) -> Result<LabelFile, String> {
        parse(text, name)
    }
}

fn parse(text: &str, name: &str) -> Result<LabelFile, String> {
    let text = text.strip_prefix('\u{feff}').unwrap_or(text);
    let mut lines = text.lines().enumerate();
    let header = loop {
        match lines.next() {
            Some((_, l)) if l.trim().is_empty() => continue,
            Some((i, l)) => break (i, l),
            None => {
                return Err(format!(
                    "{name}: empty labels file, expected the header `channel,kind,start_s,end_s`"
                ))
            }
        }
    };
    let cells: Vec<&str> = header.1.split(',').map(str::trim).collect();
    if cells != ["channel", "kind", "start_s", "end_s"] {
        if header.0 == 0 && crate::text::has_inner_cr(header.1.as_bytes()) {
            return Err(crate::text::cr_only(name));
        }
        return Err(format!(
            "{name}:{}:1: expected the header `channel,kind,start_s,end_s`, found `{}`",
            header.0 + 1,
            crate::text::show(header.1.trim())
        ));
    }
    let mut out = Vec::new();
    let mut at = Vec::new();
    for (i, line) in lines {
        let ln = i + 1;
        if line.trim().is_empty() {
            continue;
        }
        let mut col = 1usize;
        let mut cells = Vec::with_capacity(4);
        for cell in line.split(',') {
            cells.push((col, cell.trim()));
            col += cell.chars().count() + 1;
        }
        if cells.len() != 4 {
            return Err(format!(
                "{name}:{ln}:1: expected 4 cells (channel,kind,start_s,end_s), found {}",
                cells.len()
            ));
        }
        let (c0, channel) = cells[0];
        if channel.is_empty() {
            return Err(format!("{name}:{ln}:{c0}: empty channel name"));
        }
        let (c1, kind) = cells[1];
        let kind = match kind {
            "touch" => LabelKind::Touch,
            "field" => LabelKind::Field,
            other => {
                return Err(format!(
                    "{name}:{ln}:{c1}: kind `{}`, expected `touch` or `field`",
                    crate::text::show(other)
                ))
            }
        };
        let num = |(c, s): (usize, &str), what: &str| -> Result<f64, String> {
            s.parse::<f64>()
                .ok()
                .filter(|v| v.is_finite() && *v >= 0.0)
                .ok_or_else(|| {
                    format!(
                        "{name}:{ln}:{c}: {what} `{}` is not a time in seconds (>= 0)",
                        crate::text::show(s)
                    )
                })
        };
        let start_s = num(cells[2], "start_s")?;
        let end_s = num(cells[3], "end_s")?;
        if end_s < start_s {
            return Err(format!(
                "{name}:{ln}:{}: end_s {end_s} is before start_s {start_s}",
                cells[3].0
            ));
        }
        out.push(Label {
            channel: channel.to_string(),
            kind,
            start_s,
            end_s,
        });
        at.push(ln);
    }
    Ok(LabelFile {
        name: name.to_string(),
        labels: out,
        lines: at,
    })
}

/// The time an input covers on its own clock, for [`LabelFile::check`].
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Span {
    /// The first frame's time, seconds.
    pub start_s: f64,
    /// The input's length, seconds (infinite before it has been read).
    pub duration_s: f64,
    /// Rounding allowed at either end (one sample period), seconds.
    pub slack_s: f64,
}

impl Span {
    /// An input starting at `start_s` whose length is not known yet.
    pub fn open(start_s: f64) -> Span {
        Span {
            start_s,
            duration_s: f64::INFINITY,
            slack_s: 0.0,
        }
    }

    /// An input of `duration_s` from `start_s`, sampled at `rate_hz`.
    pub fn of_input(start_s: f64, duration_s: f64, rate_hz: f64) -> Span {
        Span {
            start_s,
            duration_s,
            slack_s: 1.0 / rate_hz,
        }
    }
}

impl LabelFile {
    /// Checks that the labels fit an input with these `channels` over
    /// `span`: every label's channel exists and no label starts before the
    /// input or ends after it (within one sample period of rounding). The
    /// message names the file, the label's line and the label.
    pub fn check(&self, channels: &[String], span: &Span) -> Result<(), String> {
        let end = span.start_s + span.duration_s;
        let clock = if span.start_s == 0.0 {
            String::new()
        } else {
            format!(" (from {} s to {end:.4} s on its own clock)", span.start_s)
        };
        for (l, ln) in self.labels.iter().zip(&self.lines) {
            let here = format!("{}:{ln}", self.name);
            let row = format!(
                "`{},{},{},{}`",
                crate::text::show(&l.channel),
                l.kind.as_str(),
                l.start_s,
                l.end_s
            );
            if !channels.contains(&l.channel) {
                return Err(format!(
                    "{here}: label {row} is for channel `{}`, but the input has no such channel; \
                     its channels are: {}",
                    crate::text::show(&l.channel),
                    channels.join(", ")
                ));
            }
            if l.start_s < span.start_s - span.slack_s {
                return Err(format!(
                    "{here}: label {row} starts before the input, which starts at {} s; labels \
                     are on the log's own clock",
                    span.start_s
                ));
            }
            if l.end_s > end + span.slack_s {
                return Err(format!(
                    "{here}: label {row} ends after the input, which lasts {:.4} s{clock}",
                    span.duration_s
                ));
            }
        }
        Ok(())
    }

    /// Labels of `kind`, and a warning for the labels of the other kind,
    /// which a profile does not score (`None` when there are none).
    pub fn of_kind(&self, kind: LabelKind) -> (Vec<Label>, Option<String>) {
        let (mine, other): (Vec<&Label>, Vec<&Label>) =
            self.labels.iter().partition(|l| l.kind == kind);
        let warning = other.first().map(|l| {
            format!(
                "{}: {} `{}` label(s) not scored: the {} profile scores `{}` labels (pass \
                 --profile {} to score them)",
                self.name,
                other.len(),
                l.kind.as_str(),
                kind.as_str(),
                kind.as_str(),
                l.kind.as_str()
            )
        });
        (mine.into_iter().cloned().collect(), warning)
    }
}

/// Renames each label's channel to `ch<i>`, `i` its index in `names` (the
/// names a WAV or raw input has in replay). A channel not in `names` is
/// left as it is.
pub fn rename_to_index(labels: &mut [Label], names: &[String]) {
    for l in labels {
        if let Some(i) = names.iter().position(|n| *n == l.channel) {
            l.channel = format!("ch{i}");
        }
    }
}

/// `labels` with `offset_s` added to every time (from the log's own clock
/// to sample time: `offset_s = −start`).
pub fn shifted(labels: &[Label], offset_s: f64) -> Vec<Label> {
    labels
        .iter()
        .map(|l| Label {
            start_s: l.start_s + offset_s,
            end_s: l.end_s + offset_s,
            ..l.clone()
        })
        .collect()
}
/// Writes labels as CSV (`channel,kind,start_s,end_s`, 6 decimals).
pub fn write<W: Write>(labels: &[Label], w: &mut W) -> io::Result<()> {
    writeln!(w, "channel,kind,start_s,end_s")?;
    for l in labels {
        writeln!(
            w,
            "{},{},{:.6},{:.6}",
            l.channel,
            l.kind.as_str(),
            l.start_s,
            l.end_s
        )?;
    }
    Ok(())
}
