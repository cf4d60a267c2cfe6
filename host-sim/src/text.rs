//! Bounds on what `humsim` reads as text, and how it quotes what it read.
//!
//! - A line of a CSV log, labels or any other line-based input may hold at
//!   most [`MAX_LINE_BYTES`]: a row of 16 channels with a time column needs
//!   a few hundred bytes, so a longer line is a wrong file (binary data, a
//!   file with CR-only line ends, one enormous cell), refused with its line
//!   number and the limit instead of being read into memory whole.
//! - Files read whole (labels, configuration and scenario TOML) may hold at
//!   most [`MAX_TEXT_BYTES`].
//! - A cell quoted back in a message is cut to [`SHOWN_CHARS`] characters,
//!   with control characters (a NUL, a carriage return) escaped so that
//!   they are seen, never dropped.

use std::io::{BufRead, Read};
use std::path::Path;

/// Longest line accepted, bytes (64 KiB).
pub const MAX_LINE_BYTES: usize = 64 * 1024;

/// Largest file read whole, bytes (16 MiB).
pub const MAX_TEXT_BYTES: u64 = 16 << 20;

/// Characters of a cell quoted in a message.
pub const SHOWN_CHARS: usize = 40;

/// `text` as quoted in a message: control characters escaped (`\0`, `\r`,
/// `\u{1b}`), cut after [`SHOWN_CHARS`] characters with the full length
/// said.
pub fn show(text: &str) -> String {
    shown(text, text.len())
}

/// [`show`] for bytes that may not be UTF-8 (invalid sequences become
/// U+FFFD).
pub fn show_bytes(bytes: &[u8]) -> String {
    // Enough bytes for SHOWN_CHARS characters of up to 4 bytes, and one
    // more to know there is more.
    let cut = bytes.get(..4 * SHOWN_CHARS + 1).unwrap_or(bytes);
    shown(&String::from_utf8_lossy(cut), bytes.len())
}

fn shown(text: &str, total_bytes: usize) -> String {
    let mut out = String::new();
    for (n, c) in text.chars().enumerate() {
        if n == SHOWN_CHARS {
            out.push_str(&format!("… ({total_bytes} bytes in all)"));
            break;
        }
        if c.is_control() {
            out.extend(c.escape_debug());
        } else {
            out.push(c);
        }
    }
    out
}

/// A number as a message shows it: plain where that is short, in
/// scientific notation where plain would print dozens of digits
/// (`1e-300`, `1e300`).
pub fn num(v: f64) -> String {
    let a = v.abs();
    if v != 0.0 && v.is_finite() && !(1e-4..1e9).contains(&a) {
        format!("{v:e}")
    } else {
        format!("{v}")
    }
}

/// 1-based line and column (in characters) of byte offset `at` in `text`
/// (its end when `at` lies past it).
pub fn line_col(text: &str, at: usize) -> (usize, usize) {
    let before = text.get(..at).unwrap_or(text);
    let line = before.matches('\n').count() + 1;
    let col = before.chars().rev().take_while(|c| *c != '\n').count() + 1;
    (line, col)
}

/// Whether a line (its end already removed) holds a carriage return: the
/// sign of a file with CR-only line ends, read as one line.
pub fn has_inner_cr(line: &[u8]) -> bool {
    line.contains(&b'\r')
}

/// The message for a first line holding carriage returns.
pub fn cr_only(name: &str) -> String {
    format!(
        "{name}:1: the first line holds carriage returns (CR) but the file has no line feed \
         there: it seems to use CR-only line ends, which are not read; convert them to LF or \
         CRLF"
    )
}

/// Why a line was too long, with a hint when it holds carriage returns
/// (a file with CR-only line ends reads as one long line).
pub fn too_long(name: &str, line_no: usize, line: &[u8]) -> String {
    let cr = if line.contains(&b'\r') {
        "; it holds carriage returns (CR) and no line feed: the file seems to use CR-only line \
         ends, which are not read; convert them to LF or CRLF"
    } else {
        ""
    };
    format!("{name}:{line_no}: line longer than {MAX_LINE_BYTES} bytes, the limit for one line{cr}")
}

/// Reads one line (through its `\n`) into `buf`, at most
/// [`MAX_LINE_BYTES`] plus the line end. Returns the bytes read (0 at the
/// end of the input); a longer line is an error from [`too_long`] naming
/// `line_no`.
pub fn read_line<R: BufRead>(
    reader: &mut R,
    buf: &mut Vec<u8>,
    name: &str,
    line_no: usize,
) -> Result<usize, String> {
    let limit = MAX_LINE_BYTES as u64 + 2;
    let n = reader
        .by_ref()
        .take(limit)
        .read_until(b'\n', buf)
        .map_err(|e| format!("{name}:{line_no}: cannot read: {e}"))?;
    if n as u64 == limit && buf.last() != Some(&b'\n') {
        return Err(too_long(name, line_no, buf));
    }
    Ok(n)
}

/// Reads lines of `reader` into `buf` (cleared first) until one holds more
/// than ASCII whitespace, and strips its line end: `Ok(false)` at the end
/// of the input. `line_no` counts every line read (blank ones too), so
/// messages name the file's own line numbers. Each line is bounded as in
/// [`read_line`].
pub fn read_content_line<R: BufRead>(
    reader: &mut R,
    buf: &mut Vec<u8>,
    name: &str,
    line_no: &mut usize,
) -> Result<bool, String> {
    loop {
        buf.clear();
        if read_line(reader, buf, name, *line_no + 1)? == 0 {
            return Ok(false);
        }
        *line_no += 1;
        while matches!(buf.last(), Some(b'\n' | b'\r')) {
            buf.pop();
        }
        if !buf.trim_ascii().is_empty() {
            return Ok(true);
        }
    }
}

/// Reads a small text file whole: at most [`MAX_TEXT_BYTES`], UTF-8, no
/// line longer than [`MAX_LINE_BYTES`]. `what` names the file's role in
/// messages (`labels`, `config file`).
pub fn read_small(path: &Path, what: &str) -> Result<String, String> {
    let name = path.display().to_string();
    let file = std::fs::File::open(path).map_err(|e| format!("{name}: cannot read {what}: {e}"))?;
    let mut bytes = Vec::new();
    file.take(MAX_TEXT_BYTES + 1)
        .read_to_end(&mut bytes)
        .map_err(|e| format!("{name}: cannot read {what}: {e}"))?;
    if bytes.len() as u64 > MAX_TEXT_BYTES {
        return Err(format!(
            "{name}: larger than {MAX_TEXT_BYTES} bytes, the limit for {what}; is this the \
             right file?"
        ));
    }
    for (line_no, line) in (1..).zip(bytes.split(|&b| b == b'\n')) {
        if line.len() > MAX_LINE_BYTES {
            return Err(too_long(&name, line_no, line));
        }
    }
    String::from_utf8(bytes).map_err(|e| {
        let at = e.utf8_error().valid_up_to();
        format!("{name}: {what} is not UTF-8 text (an invalid byte at offset {at})")
    })
}
