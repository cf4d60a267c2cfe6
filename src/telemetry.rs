//! Telemetry for tuning: raw ADC samples streamed off the board in the
//! `humtel` record format (feature `telemetry`), for `humsim replay`,
//! `humsim tune` and `humsim convert` on the host.
//!
//! [`TelemetryEncoder`] packs frames of samples into records and the records
//! into a byte stream in a bounded buffer of its own (`CAP` bytes, a const
//! generic). The firmware pushes frames from its ADC handler or main loop
//! and drains bytes to a UART or an RTT up channel whenever that has room;
//! nothing blocks, nothing allocates, nothing panics. When the buffer has
//! no room for a finished record, the record is dropped and counted
//! ([`TelemetryEncoder::dropped_records`]); its frames still advance the
//! sequence counter, so the host sees the gap at its exact sample position,
//! and a header record goes out before the next record that fits, carrying
//! the count of frames lost so.
//!
//! # The format, byte by byte (version 1)
//!
//! **Frames.** Each record is a *payload* (below) followed by its CRC,
//! stuffed with COBS (Consistent Overhead Byte Stuffing: Cheshire and
//! Baker, "Consistent Overhead Byte Stuffing", IEEE/ACM Transactions on
//! Networking 7(2), 1999) so that it holds no zero byte, and sent between
//! two zero bytes:
//!
//! ```text
//! 0x00 | COBS(payload | crc_lo crc_hi) | 0x00
//! ```
//!
//! A decoder splits the stream at zero bytes, ignores empty pieces (the
//! two zeros between consecutive records), and un-stuffs each piece: a
//! code byte `c` (1 to 255) is followed by `c − 1` data bytes, and after
//! them a zero byte is implied unless `c` is 255 or the piece ends. The
//! leading zero costs one byte a record and confines any bytes that are
//! not records (a boot message on the same UART, a half record when the
//! capture started) to a piece of their own, so they never spoil the
//! record after them. A payload is at most [`MAX_PAYLOAD`] bytes, so a
//! stuffed record has exactly one byte of COBS overhead and a whole frame
//! is at most [`MAX_FRAME`] bytes; a decoder may treat any longer piece as
//! corrupt.
//!
//! **CRC.** CRC-16/CCITT-FALSE (also catalogued as CRC-16/IBM-3740):
//! polynomial 0x1021, initial value 0xFFFF, no reflection, no final XOR,
//! computed over the payload bytes and sent low byte first. Its check value
//! (the CRC of the ASCII bytes `123456789`) is 0x29B1 (Greg Cook,
//! "Catalogue of parametrised CRC algorithms", CRC-16/IBM-3740; the tests
//! check [`crc16`] against it).
//!
//! **Payloads.** All multi-byte fields are little-endian. Byte 0 is the
//! record kind:
//!
//! | kind | name | bytes after the kind |
//! |---|---|---|
//! | `0x01` | header | 16: `version` u8 (1), `channels` u8 (1 to 16), `adc_bits` u8 (8 to 16), `sample_type` u8 (0: unsigned offset-binary codes `0 ..= 2^bits − 1`; 1: two's-complement codes `−2^(bits−1) ..= 2^(bits−1) − 1`), `rate_hz` u32 (samples a second per channel, at least 1), `next_frame` u32 (the sequence number the next sample record starts at), `dropped_frames` u32 (frames the encoder has dropped for lack of buffer since start, saturating) |
//! | `0x02` | samples | `first_frame` u32 (the sequence number: the index of the record's first frame since the stream began at 0, wrapping at 2^32), then `frames × channels` samples of 2 bytes each, frame by frame, channels in order within a frame (`u16` codes, or the `i16` bit pattern for two's complement) |
//!
//! A header comes before the first sample record, again every
//! [`HEADER_INTERVAL`] records, and before the first record sent after
//! any was dropped, so a capture started at any point can be read from its
//! first header on, and a decoder can tell frames the board dropped from
//! frames lost on the link. A sample record holds 1 to
//! [`MAX_RECORD_SAMPLES`] samples, a whole number of frames; consecutive
//! records are contiguous: each `first_frame` is the previous one plus its
//! frame count (mod 2^32). Anything else at that place is a gap (frames
//! lost: a dropped or corrupt record), a duplicate or a reordering, which
//! a decoder reports by frame number. Unknown kinds are reserved: a
//! version-1 decoder reports them as corrupt records. A header whose
//! fields change mid-stream means the board restarted with other settings.
//!
//! Example: one channel, 12 bits, 2000 Hz, `next_frame` 0, nothing dropped,
//! gives the payload `01 01 01 0C 00 D0 07 00 00 00 00 00 00 00 00 00 00`,
//! CRC 0xAE14, and on the wire (22 bytes):
//! `00 05 01 01 01 0C 03 D0 07 01 01 01 01 01 01 01 01 01 03 14 AE 00`
//! (the module's tests encode it).
//!
//! # Use
//!
//! ```
//! use humsense::telemetry::{StreamHeader, TelemetryEncoder};
//!
//! // Two channels of 12-bit codes at 2 kHz, 32 frames a record, 1 KiB buffer.
//! let header = StreamHeader { channels: 2, adc_bits: 12, rate_hz: 2000 };
//! let mut tel = TelemetryEncoder::<u16, 1024>::new(header, 32)?;
//!
//! // ADC handler: one frame (or `push_block` for a DMA half-buffer).
//! tel.push_frame(&[2048, 1990])?;
//!
//! // Main loop: send what the link takes now, keep the rest for later.
//! let mut uart_fifo = [0u8; 16];
//! let n = tel.read(&mut uart_fifo);
//! # let _ = n;
//! # Ok::<(), humsense::telemetry::TelemetryError>(())
//! ```
//!
//! The encoder belongs to one context: if the ADC interrupt pushes and the
//! main loop drains, keep it in a `critical_section::Mutex<RefCell<…>>` as
//! the [`crate::queue`] docs show for the detector, or push in the main
//! loop from the DMA buffer the interrupt hands over. With
//! [`TelemetryEncoder::pending`] and [`TelemetryEncoder::consume`] a
//! driver that writes part of a slice (an RTT channel, a DMA transfer)
//! takes bytes without a copy.

use crate::detector::AdcSample;
use core::marker::PhantomData;

/// Format version written in header records.
pub const VERSION: u8 = 1;
/// Record kind of a header record.
pub const KIND_HEADER: u8 = 0x01;
/// Record kind of a sample record.
pub const KIND_SAMPLES: u8 = 0x02;
/// Most samples (frames × channels) in one sample record.
pub const MAX_RECORD_SAMPLES: usize = 120;
/// Bytes of a header payload: the kind and 16 bytes of fields.
pub const HEADER_PAYLOAD: usize = 17;
/// Most bytes of a payload (a full sample record): kind, `first_frame`,
/// samples.
pub const MAX_PAYLOAD: usize = 1 + 4 + 2 * MAX_RECORD_SAMPLES;
/// Most bytes of one record on the wire: the leading zero, the COBS code
/// byte, payload, CRC, the trailing zero.
pub const MAX_FRAME: usize = 1 + 1 + MAX_PAYLOAD + 2 + 1;
/// Sample records between two header records.
pub const HEADER_INTERVAL: u16 = 32;
/// Most channels a stream may carry (the detector's limit).
pub const MAX_CHANNELS: u8 = 16;

/// The stream's own parameters, sent in every header record.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct StreamHeader {
    /// Channels per frame, 1 to 16.
    pub channels: u8,
    /// ADC resolution in bits, 8 to 16.
    pub adc_bits: u8,
    /// Samples a second per channel, hertz, at least 1.
    pub rate_hz: u32,
}

/// Why a telemetry call was refused.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
#[non_exhaustive]
pub enum TelemetryError {
    /// `channels` is not 1 to 16.
    Channels(u8),
    /// `adc_bits` is not 8 to 16.
    AdcBits(u8),
    /// `rate_hz` is 0.
    Rate,
    /// `frames_per_record` is 0 or more than `MAX_RECORD_SAMPLES / channels`.
    FramesPerRecord(u8),
    /// A frame or block of this many samples is not a whole number of
    /// frames of the stream's channel count; nothing of it was pushed.
    Length(usize),
}

impl core::fmt::Display for TelemetryError {
    fn fmt(&self, f: &mut core::fmt::Formatter<'_>) -> core::fmt::Result {
        match self {
            TelemetryError::Channels(n) => write!(f, "channels {n}: expected 1 to 16"),
            TelemetryError::AdcBits(n) => write!(f, "adc_bits {n}: expected 8 to 16"),
            TelemetryError::Rate => f.write_str("rate_hz 0: expected at least 1 Hz"),
            TelemetryError::FramesPerRecord(n) => write!(
                f,
                "frames_per_record {n}: expected 1 to {MAX_RECORD_SAMPLES} samples a record in all"
            ),
            TelemetryError::Length(n) => {
                write!(f, "{n} samples: not a whole number of frames")
            }
        }
    }
}

impl core::error::Error for TelemetryError {}

/// CRC-16/CCITT-FALSE of `data` (polynomial 0x1021, initial 0xFFFF, not
/// reflected, no final XOR; check value 0x29B1, see the module docs).
/// Bit by bit: a few instructions a bit, no table in flash.
pub fn crc16(data: &[u8]) -> u16 {
    let mut crc: u16 = 0xFFFF;
    for &b in data {
        crc ^= u16::from(b) << 8;
        for _ in 0..8 {
            crc = if crc & 0x8000 != 0 {
                (crc << 1) ^ 0x1021
            } else {
                crc << 1
            };
        }
    }
    crc
}

/// COBS-stuffs `src` into `dst` (no delimiters); returns the bytes written,
/// or `None` if `dst` is too short (`src.len() + src.len() / 254 + 1` bytes
/// always suffice).
fn cobs_encode(src: &[u8], dst: &mut [u8]) -> Option<usize> {
    let mut code_at = 0usize;
    let mut w = 1usize;
    let mut code: u8 = 1;
    for &b in src {
        if b == 0 {
            *dst.get_mut(code_at)? = code;
            code_at = w;
            w += 1;
            code = 1;
        } else {
            *dst.get_mut(w)? = b;
            w += 1;
            code += 1;
            if code == 0xFF {
                *dst.get_mut(code_at)? = code;
                code_at = w;
                w += 1;
                code = 1;
            }
        }
    }
    *dst.get_mut(code_at)? = code;
    Some(w)
}

/// Writes one record (payload, CRC, stuffing, both zero bytes) into `dst`;
/// returns the bytes written, or `None` if `dst` is too short (then `dst`
/// holds garbage that the caller does not count as written).
fn write_frame(payload: &[u8], dst: &mut [u8]) -> Option<usize> {
    let crc = crc16(payload).to_le_bytes();
    // Stuff payload and CRC in one pass: copy the CRC next to the payload.
    let mut whole = [0u8; MAX_PAYLOAD + 2];
    let n = payload.len();
    whole.get_mut(..n)?.copy_from_slice(payload);
    whole.get_mut(n..n + 2)?.copy_from_slice(&crc);
    *dst.first_mut()? = 0;
    let body = cobs_encode(whole.get(..n + 2)?, dst.get_mut(1..)?)?;
    *dst.get_mut(1 + body)? = 0;
    Some(body + 2)
}

/// The header payload for `header` with sample type `signed`.
fn header_payload(
    header: &StreamHeader,
    signed: bool,
    next_frame: u32,
    dropped: u32,
) -> [u8; HEADER_PAYLOAD] {
    let mut p = [0u8; HEADER_PAYLOAD];
    let rate = header.rate_hz.to_le_bytes();
    let next = next_frame.to_le_bytes();
    let drop = dropped.to_le_bytes();
    let fields = [
        KIND_HEADER,
        VERSION,
        header.channels,
        header.adc_bits,
        u8::from(signed),
    ];
    for (slot, b) in p
        .iter_mut()
        .zip(fields.iter().chain(&rate).chain(&next).chain(&drop))
    {
        *slot = *b;
    }
    p
}

/// Streams frames of `S` (`u16` offset-binary or `i16` two's-complement
/// codes) as `humtel` records into a buffer of `CAP` bytes (at least
/// [`MAX_FRAME`], checked at compile time). See the module docs.
///
/// Memory: `CAP` bytes of output, [`MAX_PAYLOAD`] of the record being
/// filled, and a few counters. No call allocates, blocks or panics.
#[derive(Debug, Clone)]
pub struct TelemetryEncoder<S: AdcSample, const CAP: usize> {
    header: StreamHeader,
    frames_per_record: u8,
    out: [u8; CAP],
    out_len: usize,
    record: [u8; MAX_PAYLOAD],
    record_frames: u8,
    next_frame: u32,
    records_since_header: u16,
    dropped_records: u32,
    dropped_frames: u32,
    header_due: bool,
    sample: PhantomData<S>,
}

/// Prints the header and the counters, not the buffer.
#[cfg(feature = "defmt")]
impl<S: AdcSample, const CAP: usize> defmt::Format for TelemetryEncoder<S, CAP> {
    fn format(&self, f: defmt::Formatter) {
        defmt::write!(
            f,
            "TelemetryEncoder {{ header: {}, pending: {=usize}, next_frame: {=u32}, dropped_records: {=u32}, dropped_frames: {=u32} }}",
            self.header,
            self.out_len,
            self.next_frame,
            self.dropped_records,
            self.dropped_frames
        );
    }
}

impl<S: AdcSample, const CAP: usize> TelemetryEncoder<S, CAP> {
    /// An encoder for `header`'s stream with `frames_per_record` frames a
    /// sample record (1 to `MAX_RECORD_SAMPLES / channels`: 120 frames of
    /// one channel, 7 of sixteen). Fewer frames a record send sooner and
    /// lose less to one corrupt record; more spend fewer bytes on framing
    /// (10 bytes a record). Never panics.
    pub fn new(header: StreamHeader, frames_per_record: u8) -> Result<Self, TelemetryError> {
        const { assert!(CAP >= MAX_FRAME, "CAP must hold one whole record") };
        if header.channels == 0 || header.channels > MAX_CHANNELS {
            return Err(TelemetryError::Channels(header.channels));
        }
        if !(8..=16).contains(&header.adc_bits) {
            return Err(TelemetryError::AdcBits(header.adc_bits));
        }
        if header.rate_hz == 0 {
            return Err(TelemetryError::Rate);
        }
        let samples = usize::from(frames_per_record) * usize::from(header.channels);
        if frames_per_record == 0 || samples > MAX_RECORD_SAMPLES {
            return Err(TelemetryError::FramesPerRecord(frames_per_record));
        }
        Ok(TelemetryEncoder {
            header,
            frames_per_record,
            out: [0; CAP],
            out_len: 0,
            record: [0; MAX_PAYLOAD],
            record_frames: 0,
            next_frame: 0,
            records_since_header: 0,
            dropped_records: 0,
            dropped_frames: 0,
            header_due: true,
            sample: PhantomData,
        })
    }

    /// The stream's parameters.
    pub fn header(&self) -> StreamHeader {
        self.header
    }

    /// Pushes one frame (`channels` samples); a finished record goes to
    /// the buffer (or, without room, is dropped and counted). Refuses a
    /// frame of another length, pushing nothing. Never panics.
    pub fn push_frame(&mut self, frame: &[S]) -> Result<(), TelemetryError> {
        if frame.len() != usize::from(self.header.channels) {
            return Err(TelemetryError::Length(frame.len()));
        }
        self.push_checked(frame);
        Ok(())
    }

    /// Pushes a block of interleaved frames (a DMA buffer); refuses a block
    /// that is not a whole number of frames, pushing nothing. Never panics.
    pub fn push_block(&mut self, block: &[S]) -> Result<(), TelemetryError> {
        let nch = usize::from(self.header.channels);
        if !block.len().is_multiple_of(nch) {
            return Err(TelemetryError::Length(block.len()));
        }
        for frame in block.chunks_exact(nch) {
            self.push_checked(frame);
        }
        Ok(())
    }

    fn push_checked(&mut self, frame: &[S]) {
        if self.record_frames == 0 {
            let seq = self.next_frame.to_le_bytes();
            if let Some(head) = self.record.get_mut(..5) {
                head.copy_from_slice(&[KIND_SAMPLES, seq[0], seq[1], seq[2], seq[3]]);
            }
        }
        let at = 5 + 2 * usize::from(self.record_frames) * frame.len();
        let flip: u16 = if S::SIGNED { 0x8000 } else { 0 };
        if let Some(cells) = self.record.get_mut(at..at + 2 * frame.len()) {
            for (cell, s) in cells.chunks_exact_mut(2).zip(frame) {
                cell.copy_from_slice(&(s.offset_code() ^ flip).to_le_bytes());
            }
        }
        self.record_frames += 1;
        self.next_frame = self.next_frame.wrapping_add(1);
        if self.record_frames >= self.frames_per_record {
            self.finish_record();
        }
    }

    /// Sends the record being filled now, however few frames it holds (for
    /// example before the capture stops). Does nothing if it is empty.
    /// Never panics.
    pub fn flush(&mut self) {
        if self.record_frames > 0 {
            self.finish_record();
        }
    }

    /// Queues a header record now (one is also sent before the first
    /// record, every [`HEADER_INTERVAL`] records and after a drop).
    /// Returns `false` if the buffer has no room; a header is then sent
    /// before the next sample record that has room. Never panics.
    pub fn push_header(&mut self) -> bool {
        let p = header_payload(
            &self.header,
            S::SIGNED,
            self.next_frame.wrapping_sub(u32::from(self.record_frames)),
            self.dropped_frames,
        );
        if self.append(&p) {
            self.header_due = false;
            true
        } else {
            self.header_due = true;
            false
        }
    }

    fn finish_record(&mut self) {
        if self.records_since_header == 0 || self.header_due {
            let _ = self.push_header();
        }
        self.records_since_header = (self.records_since_header + 1) % HEADER_INTERVAL;
        let frames = self.record_frames;
        self.record_frames = 0;
        let len = 5 + 2 * usize::from(frames) * usize::from(self.header.channels);
        let mut payload = [0u8; MAX_PAYLOAD];
        let ok = match (payload.get_mut(..len), self.record.get(..len)) {
            (Some(dst), Some(src)) => {
                dst.copy_from_slice(src);
                true
            }
            _ => false,
        };
        if !(ok && payload.get(..len).is_some_and(|p| self.append(p))) {
            self.dropped_records = self.dropped_records.saturating_add(1);
            self.dropped_frames = self.dropped_frames.saturating_add(u32::from(frames));
            self.header_due = true;
        }
    }

    /// Appends one framed payload if the whole of it fits.
    fn append(&mut self, payload: &[u8]) -> bool {
        let Some(free) = self.out.get_mut(self.out_len..) else {
            return false;
        };
        match write_frame(payload, free) {
            Some(n) => {
                self.out_len += n;
                true
            }
            None => false,
        }
    }

    /// The bytes waiting to be sent, oldest first.
    pub fn pending(&self) -> &[u8] {
        self.out.get(..self.out_len).unwrap_or(&[])
    }

    /// Marks the first `n` pending bytes as sent (at most all of them).
    /// Never panics.
    pub fn consume(&mut self, n: usize) {
        // Clamped so that the compiler sees `n <= end <= CAP` and links no
        // bounds panic (`out_len <= CAP` holds anyway).
        let end = self.out_len.min(CAP);
        let n = n.min(end);
        self.out.copy_within(n..end, 0);
        self.out_len = end - n;
    }

    /// Copies as many pending bytes as fit into `dst`, removes them, and
    /// returns how many. Never panics.
    pub fn read(&mut self, dst: &mut [u8]) -> usize {
        let n = dst.len().min(self.out_len);
        if let (Some(d), Some(s)) = (dst.get_mut(..n), self.out.get(..n)) {
            d.copy_from_slice(s);
        }
        self.consume(n);
        n
    }

    /// The sequence number the next frame pushed will have (frames pushed
    /// since start, wrapping at 2^32).
    pub fn next_frame(&self) -> u32 {
        self.next_frame
    }

    /// Sample records dropped for lack of buffer, saturating.
    pub fn dropped_records(&self) -> u32 {
        self.dropped_records
    }

    /// Frames lost in dropped sample records, saturating.
    pub fn dropped_frames(&self) -> u32 {
        self.dropped_frames
    }
}

#[cfg(test)]
mod tests {
    #![allow(clippy::unwrap_used, clippy::indexing_slicing)]
    use super::*;

    #[test]
    fn crc_matches_the_published_check_value() {
        // CRC-16/CCITT-FALSE (CRC-16/IBM-3740) of "123456789" is 0x29B1:
        // Greg Cook, "Catalogue of parametrised CRC algorithms" (from memory).
        assert_eq!(crc16(b"123456789"), 0x29B1);
        // The empty message leaves the initial value (the definition).
        assert_eq!(crc16(b""), 0xFFFF);
    }

    #[test]
    fn cobs_matches_the_papers_examples() {
        // Examples from Cheshire and Baker (1999) as reproduced in common
        // descriptions of COBS (from memory): 00 → 01 01; 11 22 00 33 →
        // 03 11 22 02 33; 11 00 00 00 → 02 11 01 01 01.
        let mut d = [0u8; 8];
        assert_eq!(cobs_encode(&[0x00], &mut d), Some(2));
        assert_eq!(&d[..2], &[0x01, 0x01]);
        assert_eq!(cobs_encode(&[0x11, 0x22, 0x00, 0x33], &mut d), Some(5));
        assert_eq!(&d[..5], &[0x03, 0x11, 0x22, 0x02, 0x33]);
        assert_eq!(cobs_encode(&[0x11, 0x00, 0x00, 0x00], &mut d), Some(5));
        assert_eq!(&d[..5], &[0x02, 0x11, 0x01, 0x01, 0x01]);
        // Too short a destination is refused, not overrun.
        assert_eq!(cobs_encode(&[1, 2, 3], &mut d[..3]), None);
    }

    #[test]
    fn the_documented_header_example() {
        let h = StreamHeader {
            channels: 1,
            adc_bits: 12,
            rate_hz: 2000,
        };
        let p = header_payload(&h, false, 0, 0);
        assert_eq!(
            p,
            [1, 1, 1, 12, 0, 0xD0, 0x07, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0],
            "module docs"
        );
        let mut wire = [0u8; 32];
        let n = write_frame(&p, &mut wire).unwrap();
        assert_eq!(
            &wire[..n],
            &[
                0x00, 0x05, 0x01, 0x01, 0x01, 0x0C, 0x03, 0xD0, 0x07, 0x01, 0x01, 0x01, 0x01, 0x01,
                0x01, 0x01, 0x01, 0x01, 0x03, 0x14, 0xAE, 0x00
            ],
            "module docs (CRC and stuffing computed by hand from their definitions)"
        );
    }

    #[test]
    fn overflow_is_counted_and_the_sequence_still_advances() {
        let h = StreamHeader {
            channels: 1,
            adc_bits: 12,
            rate_hz: 2000,
        };
        let mut t = TelemetryEncoder::<u16, MAX_FRAME>::new(h, 10).unwrap();
        // Header (17-byte payload: 22 bytes on the wire) and 10-frame
        // records (25-byte payloads: 30 bytes) into 250 bytes: the header
        // and 7 records fit (232 bytes), the next 14 records are dropped.
        for k in 0..20u16 {
            t.push_frame(&[k]).unwrap();
        }
        assert_eq!(t.pending().len(), 22 + 2 * 30);
        assert_eq!(t.dropped_records(), 0);
        for k in 0..190u16 {
            t.push_frame(&[k]).unwrap();
        }
        assert_eq!(t.pending().len(), 22 + 7 * 30);
        assert_eq!((t.dropped_records(), t.dropped_frames()), (14, 140));
        assert_eq!(t.next_frame(), 210);
        // Draining makes room again: the next record is kept, after a
        // header that carries the count of dropped frames.
        let mut sink = [0u8; 100];
        assert_eq!(t.read(&mut sink), 100);
        assert_eq!(t.pending().len(), 132);
        for k in 0..10u16 {
            t.push_frame(&[k]).unwrap();
        }
        assert_eq!(t.pending().len(), 132 + 22 + 30);
        let header = &t.pending()[132..154];
        let want = header_payload(&h, false, 210, 140);
        let mut wire = [0u8; 32];
        let n = write_frame(&want, &mut wire).unwrap();
        assert_eq!(header, &wire[..n]);
        assert_eq!(t.dropped_records(), 14);
        assert_eq!(t.push_frame(&[1, 2]), Err(TelemetryError::Length(2)));
    }

    #[test]
    fn construction_checks_every_field() {
        let ok = StreamHeader {
            channels: 16,
            adc_bits: 16,
            rate_hz: 1,
        };
        type T = TelemetryEncoder<i16, 512>;
        assert!(T::new(ok, 7).is_ok());
        assert_eq!(
            T::new(ok, 8).err(),
            Some(TelemetryError::FramesPerRecord(8))
        );
        assert_eq!(
            T::new(ok, 0).err(),
            Some(TelemetryError::FramesPerRecord(0))
        );
        let bad = |h| T::new(h, 1).err();
        assert_eq!(
            bad(StreamHeader { channels: 17, ..ok }),
            Some(TelemetryError::Channels(17))
        );
        assert_eq!(
            bad(StreamHeader { channels: 0, ..ok }),
            Some(TelemetryError::Channels(0))
        );
        assert_eq!(
            bad(StreamHeader { adc_bits: 7, ..ok }),
            Some(TelemetryError::AdcBits(7))
        );
        assert_eq!(
            bad(StreamHeader { rate_hz: 0, ..ok }),
            Some(TelemetryError::Rate)
        );
    }
}
