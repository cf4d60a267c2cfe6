//! `humtel` telemetry captures (`.humtel`): the byte stream a board sends
//! with `humsense::telemetry::TelemetryEncoder` (feature `telemetry`),
//! saved as it came off the UART or RTT channel.
//!
//! The format is specified byte by byte in the core crate's
//! `humsense::telemetry` module docs; this decoder is written from that
//! description alone (its own COBS and CRC code), so that the round-trip
//! tests check one implementation against the other.
//!
//! ## What is reported, and how
//! Positions are frame numbers on the board's own counter (the header's
//! `next_frame`, then each record's `first_frame`), with the time on the
//! capture's clock, frame / rate: replay's `time_s` is on that clock too
//! (the first frame's time is [`SourceInfo::start_s`]).
//!
//! - **Warnings** (printed, the run goes on), for what loses no sample:
//!   a corrupt piece (bad stuffing, CRC, kind or length: garbage on the
//!   line, a record cut by the start of the capture) named by its byte
//!   offset and the frame it follows; sample records before the first
//!   header (their channel count is not known yet); an exact repeat of the
//!   last record (skipped); a capture that ends inside a record. The
//!   first [`SHOWN_WARNINGS`] are printed, then a count.
//! - **Errors** (the run stops with a message): a **gap** (frames missing
//!   between two records: a record dropped by the board for lack of buffer,
//!   lost or corrupted on the link) with the missing frames and their
//!   times, so that a run never joins the samples on both sides of one; a
//!   record out of order or overlapping frames already read; a header that
//!   changes the stream's parameters or sets its counter back (the board
//!   restarted); a code out of range for the header's ADC bits; no header
//!   or no sample record at all. `humsim convert` instead reports gaps as
//!   warnings and writes the frames on both sides with their true
//!   `time_s`, where the CSV reader refuses to join them in turn.

use super::{FrameSource, InputSpec, SourceInfo};
use std::fs::File;
use std::io::{BufReader, Read};
use std::path::Path;

/// The file extension that selects this reader.
pub const EXTENSION: &str = "humtel";
/// Format version this decoder reads.
pub const VERSION: u8 = 1;
/// Most bytes of a record on the wire between its zero bytes (format
/// docs: a payload of at most 245 bytes, 2 of CRC, 1 of COBS overhead).
pub const MAX_PIECE: usize = 1 + 245 + 2;
/// Warnings printed one by one before only a count is kept.
pub const SHOWN_WARNINGS: usize = 20;

const KIND_HEADER: u8 = 0x01;
const KIND_SAMPLES: u8 = 0x02;

/// Whether `path` names a telemetry capture (by its extension).
pub fn is_capture(path: &Path) -> bool {
    path.extension()
        .is_some_and(|e| e.eq_ignore_ascii_case(EXTENSION))
}

/// CRC-16/CCITT-FALSE (poly 0x1021, init 0xFFFF, no reflection, no final
/// XOR), table-driven; check value of `123456789` 0x29B1 (Greg Cook,
/// "Catalogue of parametrised CRC algorithms", CRC-16/IBM-3740).
pub fn crc16(data: &[u8]) -> u16 {
    const TABLE: [u16; 256] = {
        let mut t = [0u16; 256];
        let mut i = 0;
        while i < 256 {
            let mut c = (i as u16) << 8;
            let mut k = 0;
            while k < 8 {
                c = if c & 0x8000 != 0 {
                    (c << 1) ^ 0x1021
                } else {
                    c << 1
                };
                k += 1;
            }
            t[i] = c;
            i += 1;
        }
        t
    };
    data.iter().fold(0xFFFF, |crc, &b| {
        (crc << 8) ^ TABLE[usize::from(((crc >> 8) as u8) ^ b)]
    })
}

/// Un-stuffs one COBS piece (no zero bytes in it); `None` if a code byte
/// points past the end.
pub fn cobs_decode(piece: &[u8]) -> Option<Vec<u8>> {
    let mut out = Vec::with_capacity(piece.len());
    let mut rest = piece;
    while let Some((&code, tail)) = rest.split_first() {
        let n = usize::from(code).checked_sub(1)?;
        out.extend_from_slice(tail.get(..n)?);
        rest = tail.get(n..)?;
        if code != 0xFF && !rest.is_empty() {
            out.push(0);
        }
    }
    Some(out)
}

/// A header record's fields.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Header {
    /// Channels per frame.
    pub channels: u8,
    /// ADC resolution, bits.
    pub adc_bits: u8,
    /// Two's-complement codes (else unsigned offset binary).
    pub signed: bool,
    /// Samples a second per channel.
    pub rate_hz: u32,
    /// The sequence number the next sample record starts at.
    pub next_frame: u32,
    /// Frames the board dropped for lack of buffer so far.
    pub dropped_frames: u32,
}

impl Header {
    fn same_stream(&self, o: &Header) -> bool {
        (self.channels, self.adc_bits, self.signed, self.rate_hz)
            == (o.channels, o.adc_bits, o.signed, o.rate_hz)
    }
    fn describe(&self) -> String {
        format!(
            "{} channel{}, {}-bit {} codes, {} Hz",
            self.channels,
            if self.channels == 1 { "" } else { "s" },
            self.adc_bits,
            if self.signed { "signed" } else { "unsigned" },
            self.rate_hz
        )
    }
}

/// One decoded piece of the stream.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Record {
    /// A header record.
    Header(Header),
    /// A sample record: its first frame's sequence number and the raw
    /// 16-bit samples (frame by frame; not yet split into frames, which
    /// needs the header's channel count).
    Samples {
        /// `first_frame`.
        first: u32,
        /// The samples' bit patterns.
        raw: Vec<u16>,
    },
}

/// Decodes one piece (the bytes between zeros); the error says why it is
/// corrupt.
pub fn decode_piece(piece: &[u8]) -> Result<Record, String> {
    if piece.len() > MAX_PIECE {
        return Err(format!(
            "{} bytes, longer than any record ({MAX_PIECE})",
            piece.len()
        ));
    }
    let p = cobs_decode(piece).ok_or("bad byte stuffing")?;
    let Some((body, crc)) = p.split_last_chunk::<2>() else {
        return Err(format!("{} bytes, too short for a record", piece.len()));
    };
    let (want, got) = (u16::from_le_bytes(*crc), crc16(body));
    if want != got {
        return Err(format!("CRC {got:04X}, record says {want:04X}"));
    }
    let u32_at = |at: usize| -> u32 {
        body.get(at..at + 4)
            .and_then(|b| <[u8; 4]>::try_from(b).ok())
            .map_or(0, u32::from_le_bytes)
    };
    match body.first() {
        Some(&KIND_HEADER) => {
            if body.len() != 17 {
                return Err(format!("header of {} bytes (expected 17)", body.len()));
            }
            let f = |i: usize| body.get(i).copied().unwrap_or(0);
            if f(1) != VERSION {
                return Err(format!(
                    "header of format version {} (this reader knows {VERSION})",
                    f(1)
                ));
            }
            let h = Header {
                channels: f(2),
                adc_bits: f(3),
                signed: match f(4) {
                    0 => false,
                    1 => true,
                    other => return Err(format!("header with sample type {other} (0 or 1)")),
                },
                rate_hz: u32_at(5),
                next_frame: u32_at(9),
                dropped_frames: u32_at(13),
            };
            if !(1..=16).contains(&h.channels) {
                return Err(format!("header with {} channels (1 to 16)", h.channels));
            }
            if !(8..=16).contains(&h.adc_bits) {
                return Err(format!("header with {} ADC bits (8 to 16)", h.adc_bits));
            }
            if h.rate_hz == 0 {
                return Err("header with rate 0 Hz".to_string());
            }
            Ok(Record::Header(h))
        }
        Some(&KIND_SAMPLES) => {
            let samples = body.get(5..).unwrap_or(&[]);
            if body.len() < 5 || samples.is_empty() || samples.len() % 2 != 0 {
                return Err(format!("sample record of {} bytes", body.len()));
            }
            Ok(Record::Samples {
                first: u32_at(1),
                raw: samples
                    .chunks_exact(2)
                    .map(|c| u16::from_le_bytes([c[0], c[1]]))
                    .collect(),
            })
        }
        Some(k) => Err(format!("unknown record kind 0x{k:02X}")),
        None => Err("empty record".to_string()),
    }
}

/// Splits a byte stream at zero bytes.
struct Splitter {
    reader: Box<dyn Read>,
    buf: Vec<u8>,
    at: usize,
    end: usize,
    /// Byte offset of `buf[at]` in the stream.
    offset: u64,
    eof: bool,
}

/// A piece of the stream: its first byte's offset, its bytes (cut at
/// [`MAX_PIECE`] + 1), its full length, and whether a zero ended it.
struct Piece {
    start: u64,
    bytes: Vec<u8>,
    len: u64,
    closed: bool,
}

impl Splitter {
    fn fill(&mut self, name: &str) -> Result<bool, String> {
        if self.eof {
            return Ok(false);
        }
        loop {
            match self.reader.read(&mut self.buf) {
                Ok(0) => {
                    self.eof = true;
                    return Ok(false);
                }
                Ok(n) => {
                    self.at = 0;
                    self.end = n;
                    return Ok(true);
                }
                Err(e) if e.kind() == std::io::ErrorKind::Interrupted => {}
                Err(e) => return Err(format!("{name}: cannot read: {e}")),
            }
        }
    }

    /// The next non-empty piece, or `None` at the end.
    fn next(&mut self, name: &str) -> Result<Option<Piece>, String> {
        let mut piece: Option<Piece> = None;
        loop {
            if self.at >= self.end && !self.fill(name)? {
                return Ok(piece);
            }
            let chunk = self.buf.get(self.at..self.end).unwrap_or(&[]);
            let zero = chunk.iter().position(|&b| b == 0);
            let take = zero.unwrap_or(chunk.len());
            if take > 0 {
                let p = piece.get_or_insert_with(|| Piece {
                    start: self.offset,
                    bytes: Vec::new(),
                    len: 0,
                    closed: false,
                });
                let room = (MAX_PIECE + 1).saturating_sub(p.bytes.len());
                p.bytes
                    .extend_from_slice(chunk.get(..take.min(room)).unwrap_or(&[]));
                p.len += take as u64;
            }
            let step = take + usize::from(zero.is_some());
            self.at += step;
            self.offset += step as u64;
            if zero.is_some() {
                if let Some(mut p) = piece.take() {
                    p.closed = true;
                    return Ok(Some(p));
                }
            }
        }
    }
}

/// What [`Capture::next_item`] found.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Next {
    /// Frames at `first` (a position on the board's counter, unwrapped),
    /// `codes` frame by frame (two's-complement codes sign-extended).
    Samples {
        /// Position of the first frame.
        first: u64,
        /// The codes.
        codes: Vec<i32>,
    },
    /// Frames `from .. from + frames` are missing (only with gaps allowed;
    /// a warning has been given).
    Gap {
        /// The first missing frame.
        from: u64,
        /// How many are missing.
        frames: u64,
    },
    /// The end of the capture.
    End,
}

/// Where warnings go.
pub type WarnSink = Box<dyn FnMut(&str) -> Result<(), String>>;

/// A telemetry capture, decoded record by record (see the module docs).
pub struct Capture {
    name: String,
    split: Splitter,
    header: Header,
    /// The next frame expected, unwrapped.
    expect: u64,
    /// The first frame of the capture.
    start: u64,
    last: Option<(u64, Vec<u16>)>,
    allow_gaps: bool,
    warn: WarnSink,
    warnings: usize,
    corrupt_since: usize,
    corrupt: usize,
    dropped_seen: u32,
    ended: bool,
    pending: Option<Next>,
}

impl Capture {
    /// Opens a capture file; `allow_gaps` as for `humsim convert`.
    pub fn open(path: &Path, allow_gaps: bool, warn: WarnSink) -> Result<Capture, String> {
        let name = path.display().to_string();
        let file = File::open(path).map_err(|e| format!("{name}: cannot open: {e}"))?;
        Capture::from_reader(
            name,
            Box::new(BufReader::with_capacity(1 << 16, file)),
            allow_gaps,
            warn,
        )
    }

    /// [`Capture::open`] on any reader (`name` for messages). Reads up to
    /// the first header.
    pub fn from_reader(
        name: String,
        reader: Box<dyn Read>,
        allow_gaps: bool,
        warn: WarnSink,
    ) -> Result<Capture, String> {
        let mut split = Splitter {
            reader,
            buf: vec![0; 1 << 16],
            at: 0,
            end: 0,
            offset: 0,
            eof: false,
        };
        let mut c = Capture {
            name,
            split: Splitter {
                reader: Box::new(std::io::empty()),
                buf: Vec::new(),
                at: 0,
                end: 0,
                offset: 0,
                eof: true,
            },
            header: Header {
                channels: 1,
                adc_bits: 8,
                signed: false,
                rate_hz: 1,
                next_frame: 0,
                dropped_frames: 0,
            },
            expect: 0,
            start: 0,
            last: None,
            allow_gaps,
            warn,
            warnings: 0,
            corrupt_since: 0,
            corrupt: 0,
            dropped_seen: 0,
            ended: false,
            pending: None,
        };
        let mut skipped = 0usize;
        let mut any = false;
        loop {
            let Some(p) = split.next(&c.name)? else {
                let name = &c.name;
                return Err(if any {
                    format!(
                        "{name}: no valid header record in the capture ({} corrupt pieces, \
                         {skipped} sample records without a header): not a humtel capture, \
                         or one too damaged to read",
                        c.corrupt
                    )
                } else {
                    format!("{name}: empty capture (no records)")
                });
            };
            any = true;
            match decode_piece(&p.bytes) {
                Ok(Record::Header(h)) => {
                    c.header = h;
                    c.expect = u64::from(h.next_frame);
                    c.start = c.expect;
                    c.dropped_seen = h.dropped_frames;
                    break;
                }
                Ok(Record::Samples { .. }) => skipped += 1,
                Err(_) => c.corrupt += 1,
            }
        }
        c.split = split;
        if skipped > 0 || c.corrupt > 0 {
            let m = format!(
                "{}: {skipped} sample records and {} corrupt pieces before the first header \
                 skipped; the capture starts at frame {}",
                c.name, c.corrupt, c.start
            );
            c.warning(&m)?;
        }
        Ok(c)
    }

    /// The stream's parameters (from the first header).
    pub fn header(&self) -> Header {
        self.header
    }

    /// The first frame of the capture on the board's counter.
    pub fn start_frame(&self) -> u64 {
        self.start
    }

    /// Corrupt pieces met so far.
    pub fn corrupt(&self) -> usize {
        self.corrupt
    }

    fn warning(&mut self, m: &str) -> Result<(), String> {
        self.warnings += 1;
        if self.warnings <= SHOWN_WARNINGS {
            (self.warn)(m)?;
        }
        Ok(())
    }

    /// `frame` as a place for messages: the number and its time.
    fn place(&self, frame: u64) -> String {
        format!("frame {frame} ({} s)", self.secs(frame))
    }

    /// `frame`'s time on the capture's clock, 4 decimals.
    fn secs(&self, frame: u64) -> String {
        format!("{:.4}", frame as f64 / f64::from(self.header.rate_hz))
    }

    fn after(&self) -> String {
        if self.expect == self.start {
            "before the first frame".to_string()
        } else {
            format!("after {}", self.place(self.expect - 1))
        }
    }

    /// The next samples (or gap, or the end).
    pub fn next_item(&mut self) -> Result<Next, String> {
        loop {
            if let Some(n) = self.pending.take() {
                return Ok(n);
            }
            if self.ended {
                return Ok(Next::End);
            }
            let Some(p) = self.split.next(&self.name)? else {
                self.ended = true;
                if self.warnings > SHOWN_WARNINGS {
                    let m = format!(
                        "{}: {} further warnings not shown ({} corrupt pieces in all)",
                        self.name,
                        self.warnings - SHOWN_WARNINGS,
                        self.corrupt
                    );
                    (self.warn)(&m)?;
                }
                if self.expect == self.start {
                    return Err(format!("{}: no sample records after the header", self.name));
                }
                return Ok(Next::End);
            };
            let decoded = if p.len > MAX_PIECE as u64 {
                Err(format!(
                    "{} bytes, longer than any record ({MAX_PIECE})",
                    p.len
                ))
            } else {
                decode_piece(&p.bytes)
            };
            let rec = match decoded {
                Ok(r) => r,
                Err(why) if !p.closed => {
                    self.corrupt += 1;
                    let m = format!(
                        "{}: the capture ends inside a record ({} bytes from byte {}, {}): \
                         ignored ({why})",
                        self.name,
                        p.len,
                        p.start,
                        self.after()
                    );
                    self.warning(&m)?;
                    continue;
                }
                Err(why) => {
                    self.corrupt += 1;
                    self.corrupt_since += 1;
                    let m = format!(
                        "{}: byte {}: corrupt record skipped ({why}), {}",
                        self.name,
                        p.start,
                        self.after()
                    );
                    self.warning(&m)?;
                    continue;
                }
            };
            match rec {
                Record::Header(h) => {
                    if !h.same_stream(&self.header) {
                        return Err(format!(
                            "{}: byte {}: a header for another stream ({}; the capture began \
                             with {}), {}: the board restarted with other settings; split the \
                             capture there",
                            self.name,
                            p.start,
                            h.describe(),
                            self.header.describe(),
                            self.after()
                        ));
                    }
                    let at = self.position(h.next_frame);
                    if at < self.expect as i64 {
                        return Err(format!(
                            "{}: byte {}: a header sets the frame counter back to {} {}: the \
                             board restarted; split the capture there",
                            self.name,
                            p.start,
                            h.next_frame,
                            self.after()
                        ));
                    }
                    self.header.dropped_frames = h.dropped_frames;
                }
                Record::Samples { first, raw } => {
                    let nch = usize::from(self.header.channels);
                    if raw.len() % nch != 0 {
                        self.corrupt += 1;
                        self.corrupt_since += 1;
                        let m = format!(
                            "{}: byte {}: corrupt record skipped ({} samples, not a whole \
                             number of {nch}-channel frames), {}",
                            self.name,
                            p.start,
                            raw.len(),
                            self.after()
                        );
                        self.warning(&m)?;
                        continue;
                    }
                    let frames = (raw.len() / nch) as u64;
                    let at = self.position(first);
                    let expect = self.expect;
                    if at < expect as i64 {
                        let at = at.max(0) as u64;
                        if self.last.as_ref() == Some(&(at, raw.clone())) {
                            let m = format!(
                                "{}: byte {}: a repeat of the record of frames {} to {}: \
                                 skipped",
                                self.name,
                                p.start,
                                at,
                                at + frames - 1
                            );
                            self.warning(&m)?;
                            continue;
                        }
                        return Err(format!(
                            "{}: byte {}: a record of frames {} to {} where frame {expect} comes \
                             next: records out of order or overlapping",
                            self.name,
                            p.start,
                            at,
                            at + frames - 1
                        ));
                    }
                    let at = at as u64;
                    let codes = self.codes(&raw, at, p.start)?;
                    let cause = self.cause();
                    self.corrupt_since = 0;
                    self.last = Some((at, raw));
                    self.expect = at + frames;
                    if at > expect {
                        let missing = at - expect;
                        let m = format!(
                            "{}: gap before byte {}: frames {expect} to {} ({missing} frames, {} \
                             to {} s) are missing{cause}",
                            self.name,
                            p.start,
                            at - 1,
                            self.secs(expect),
                            self.secs(at),
                        );
                        if !self.allow_gaps {
                            return Err(format!(
                                "{m}; replay does not join samples across a gap: convert the \
                                 capture to CSV (humsim convert) and split it there"
                            ));
                        }
                        self.warning(&m)?;
                        self.pending = Some(Next::Samples { first: at, codes });
                        return Ok(Next::Gap {
                            from: expect,
                            frames: missing,
                        });
                    }
                    return Ok(Next::Samples { first: at, codes });
                }
            }
        }
    }

    /// Why frames may be missing, for a gap's message.
    fn cause(&mut self) -> String {
        let mut why = Vec::new();
        if self.corrupt_since > 0 {
            why.push(format!(
                "{} corrupt records were skipped there",
                self.corrupt_since
            ));
        }
        let dropped = self.header.dropped_frames.saturating_sub(self.dropped_seen);
        if dropped > 0 {
            why.push(format!(
                "the board reports {dropped} frames dropped for lack of buffer"
            ));
            self.dropped_seen = self.header.dropped_frames;
        }
        if why.is_empty() {
            " (records lost on the link)".to_string()
        } else {
            format!(" ({})", why.join("; "))
        }
    }

    /// A record's `first_frame` as a position near the expected one.
    fn position(&self, first: u32) -> i64 {
        let diff = first.wrapping_sub(self.expect as u32) as i32;
        self.expect as i64 + i64::from(diff)
    }

    /// A record's codes, checked against the header's bits.
    fn codes(&self, raw: &[u16], at: u64, byte: u64) -> Result<Vec<i32>, String> {
        let h = self.header;
        let (lo, hi) = if h.signed {
            (-(1i32 << (h.adc_bits - 1)), (1i32 << (h.adc_bits - 1)) - 1)
        } else {
            (0, (1i32 << h.adc_bits) - 1)
        };
        raw.iter()
            .enumerate()
            .map(|(k, &r)| {
                let v = if h.signed {
                    i32::from(r as i16)
                } else {
                    i32::from(r)
                };
                if v < lo || v > hi {
                    let ch = k % usize::from(h.channels);
                    let f = at + (k / usize::from(h.channels)) as u64;
                    return Err(format!(
                        "{}: {}, channel ch{ch} (record at byte {byte}): code {v} is out of \
                         range for the header's {}-bit codes ({lo} to {hi})",
                        self.name,
                        self.place(f),
                        h.adc_bits
                    ));
                }
                Ok(v)
            })
            .collect()
    }
}

/// A telemetry capture as a [`FrameSource`] for replay and tune: gaps are
/// errors.
pub struct TelemetrySource {
    info: SourceInfo,
    capture: Capture,
    codes: Vec<i32>,
    at: usize,
    /// An error met after some frames of a block: reported on the next
    /// read, so that every frame before it is delivered first.
    deferred: Option<String>,
}

impl TelemetrySource {
    /// Opens `spec.path` (the checks of `--rate`, `--bits`, `--channels`,
    /// `--raw` are made here: the header gives them all).
    pub fn open(spec: &InputSpec, warn: WarnSink) -> Result<TelemetrySource, String> {
        let name = spec.path.display().to_string();
        for (given, flag) in [
            (spec.rate_hz.is_some(), "--rate"),
            (spec.bits.is_some(), "--bits"),
            (spec.channels.is_some(), "--channels"),
            (spec.raw.is_some(), "--raw"),
        ] {
            if given {
                return Err(format!(
                    "{name}: {flag} does not apply to a telemetry capture, whose header gives \
                     the channels, rate and ADC bits"
                ));
            }
        }
        TelemetrySource::new(Capture::open(&spec.path, false, warn)?)
    }

    /// Wraps an opened capture (for tests: [`Capture::from_reader`] with
    /// gaps not allowed).
    pub fn new(capture: Capture) -> Result<TelemetrySource, String> {
        let h = capture.header();
        Ok(TelemetrySource {
            info: SourceInfo {
                name: capture.name.clone(),
                channels: (0..h.channels).map(|i| format!("ch{i}")).collect(),
                rate_hz: f64::from(h.rate_hz),
                bits: h.adc_bits,
                signed: h.signed,
                start_s: capture.start_frame() as f64 / f64::from(h.rate_hz),
            },
            capture,
            codes: Vec::new(),
            at: 0,
            deferred: None,
        })
    }
}

impl FrameSource for TelemetrySource {
    fn info(&self) -> &SourceInfo {
        &self.info
    }
    fn read(&mut self, buf: &mut [i32]) -> Result<usize, String> {
        let nch = self.info.channels.len();
        let want = buf.len() / nch * nch;
        let mut filled = 0;
        if let Some(e) = self.deferred.take() {
            return Err(e);
        }
        while filled < want {
            if self.at >= self.codes.len() {
                let next = match self.capture.next_item() {
                    Ok(n) => n,
                    Err(e) if filled > 0 => {
                        self.deferred = Some(e);
                        break;
                    }
                    Err(e) => return Err(e),
                };
                match next {
                    Next::Samples { codes, .. } => {
                        self.codes = codes;
                        self.at = 0;
                    }
                    // Not produced without gaps allowed; stop rather than join.
                    Next::Gap { from, .. } => {
                        return Err(format!("{}: gap at frame {from}", self.info.name))
                    }
                    Next::End => break,
                }
            }
            let n = (want - filled).min(self.codes.len() - self.at);
            if let (Some(d), Some(s)) = (
                buf.get_mut(filled..filled + n),
                self.codes.get(self.at..self.at + n),
            ) {
                d.copy_from_slice(s);
            }
            filled += n;
            self.at += n;
        }
        Ok(filled / nch)
    }
}

/// Warnings to stderr through [`crate::console`].
pub fn console_warnings() -> WarnSink {
    Box::new(|m| {
        crate::console::err(&format!("humsim: warning: {m}\n"))
            .map_err(|_| "stderr cannot be written".to_string())
    })
}
