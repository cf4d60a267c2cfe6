//! The telemetry encoder's cases for `tests/on_target.rs` (feature
//! `telemetry`), on the host and on the emulated Cortex-M cores alike
//! (`core` only, no allocation).
//!
//! Each case feeds a known signal from [`crate::gen`] to a
//! [`TelemetryEncoder`] frame by frame or in blocks, drains its output in
//! uneven pieces through both `read` and `pending`/`consume` (with a
//! stall long enough to fill the buffer, so records are dropped and the
//! header after a drop is sent), queues one header by hand, flushes at the
//! end, and hashes every byte of the stream in order. The host writes the
//! hash, the byte and record counts and a checkpoint every 2 KiB into
//! `golden_telemetry.rs`; a target must produce the same stream byte for
//! byte.
//!
//! Beside that comparison, each run is checked against the format as the
//! module docs of `humsense::telemetry` describe it, by a decoder written
//! here from that description: every record un-stuffs (COBS) and carries a
//! good CRC-16/CCITT-FALSE; the stream opens with a header for frame 0;
//! sample records are whole frames, contiguous except where frames were
//! dropped, and every header's `dropped_frames` counts exactly the frames
//! missing before its `next_frame`; every sample that arrived equals the
//! code the generator made for it (a second generator follows the
//! stream); frames received plus frames dropped are all frames pushed.
//! The CRC's published check value is checked too, and the first case
//! (one channel of 12-bit codes at 2 kHz) must open with the 22 bytes of
//! the module docs' worked example.

use core::fmt;

use humsense::telemetry::{
    crc16, StreamHeader, TelemetryEncoder, TelemetryError, HEADER_PAYLOAD, KIND_HEADER,
    KIND_SAMPLES, MAX_FRAME, MAX_PAYLOAD,
};

use crate::cases::{mix, Code, FNV_OFFSET};
use crate::gen::{k, ChannelSpec, Knot, Rng, SignalSpec, Source};

/// Bytes of the stream between checkpoints.
pub const CHECK_BYTES: u32 = 2048;
/// Most checkpoints kept.
pub const MAX_TEL_CHECKS: usize = 24;

/// The golden values of one case, as the host computed them.
#[derive(Clone, Copy, Debug)]
pub struct TelGolden {
    /// Case name.
    pub name: &'static str,
    /// Frames pushed.
    pub frames: u32,
    /// Hash of every input code.
    pub input_hash: u64,
    /// Bytes of the stream.
    pub bytes: u32,
    /// Records in the stream (pieces between zero bytes).
    pub records: u32,
    /// Hash of every byte of the stream, in order.
    pub stream_hash: u64,
    /// `stream_hash` after every `CHECK_BYTES` bytes.
    pub checks: &'static [u64],
    /// The encoder's `dropped_records` at the end.
    pub dropped_records: u32,
    /// The encoder's `dropped_frames` at the end.
    pub dropped_frames: u32,
}

/// What one run produced.
#[derive(Clone, Debug)]
pub struct TelOutcome {
    /// Frames pushed.
    pub frames: u32,
    /// Hash of every input code.
    pub input_hash: u64,
    /// Bytes of the stream.
    pub bytes: u32,
    /// Records in the stream.
    pub records: u32,
    /// Hash of the stream.
    pub stream_hash: u64,
    /// Checkpoints of `stream_hash`.
    pub checks: [u64; MAX_TEL_CHECKS],
    /// Checkpoints kept.
    pub n_checks: usize,
    /// The encoder's counters at the end.
    pub dropped_records: u32,
    /// See `dropped_records`.
    pub dropped_frames: u32,
    /// The first failure of the format checks, if any.
    pub fault: Option<Fault>,
}

impl TelOutcome {
    /// The checkpoints kept.
    pub fn checks(&self) -> &[u64] {
        self.checks.get(..self.n_checks).unwrap_or(&[])
    }
}

/// A way the stream broke the format or lost the signal.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Fault {
    /// A piece at this stream offset did not un-stuff, was too long, or
    /// had a bad CRC.
    Corrupt(u32),
    /// A record of an unknown kind or wrong length at this offset.
    Malformed(u32),
    /// The stream did not begin with a header for frame 0.
    NoHeaderFirst,
    /// A header's fields differ from the stream's (at this offset).
    HeaderFields(u32),
    /// A header's `dropped_frames` (first) disagrees with the frames
    /// missing before its `next_frame` (second).
    DroppedCount(u32, u64),
    /// A sample record starting before the frame expected (first) at
    /// `first_frame` (second): a repeat or a reordering.
    Backwards(u32, u32),
    /// The sample of this frame and channel differs from the input.
    Sample(u32, usize),
    /// Frames received plus frames dropped (first) is not the frames
    /// pushed (second).
    Accounting(u64, u32),
    /// The encoder refused a push it should have taken, or took one it
    /// should have refused.
    Refusal,
    /// The stream does not open with the module docs' worked example.
    DocExample,
    /// `crc16(b"123456789")` is not the published check value 0x29B1.
    CheckValue,
    /// A checkpoint array overflowed.
    TooLong,
}

impl fmt::Display for Fault {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            Fault::Corrupt(at) => write!(f, "corrupt record at byte {at}"),
            Fault::Malformed(at) => write!(f, "malformed record at byte {at}"),
            Fault::NoHeaderFirst => f.write_str("no header for frame 0 first"),
            Fault::HeaderFields(at) => write!(f, "header fields differ at byte {at}"),
            Fault::DroppedCount(said, missing) => {
                write!(f, "header says {said} frames dropped, {missing} missing")
            }
            Fault::Backwards(want, got) => {
                write!(f, "record at frame {got}, expected {want} or later")
            }
            Fault::Sample(frame, ch) => write!(f, "sample of frame {frame} ch{ch} differs"),
            Fault::Accounting(seen, pushed) => {
                write!(f, "{seen} frames received or dropped, {pushed} pushed")
            }
            Fault::Refusal => f.write_str("a push was refused or accepted wrongly"),
            Fault::DocExample => f.write_str("stream does not open with the documented example"),
            Fault::CheckValue => f.write_str("crc16 check value is not 0x29B1"),
            Fault::TooLong => f.write_str("more checkpoints than kept"),
        }
    }
}

/// The module docs' worked example: the header of one channel of 12-bit
/// codes at 2000 Hz, `next_frame` 0, nothing dropped, on the wire.
const DOC_EXAMPLE: [u8; 22] = [
    0x00, 0x05, 0x01, 0x01, 0x01, 0x0C, 0x03, 0xD0, 0x07, 0x01, 0x01, 0x01, 0x01, 0x01, 0x01, 0x01,
    0x01, 0x01, 0x03, 0x14, 0xAE, 0x00,
];

/// Follows the stream byte by byte and checks it against the format and
/// against a second generator of the same signal.
struct Checker<const N: usize> {
    header: StreamHeader,
    signed: bool,
    /// The signal again, `src_next` the index of its next frame.
    src: Source<N>,
    src_next: u32,
    piece: [u8; MAX_FRAME],
    piece_len: usize,
    piece_long: bool,
    /// Stream offset of the piece being collected.
    piece_at: u32,
    offset: u32,
    records: u32,
    /// The first frame the next sample record should start at (`None`
    /// before the first header).
    expect: Option<u32>,
    /// Frames missing so far (gaps between records).
    missing: u64,
    /// Frames received in sample records.
    received: u64,
    fault: Option<Fault>,
}

impl<const N: usize> Checker<N> {
    fn new(header: StreamHeader, signed: bool, src: Source<N>) -> Self {
        Self {
            header,
            signed,
            src,
            src_next: 0,
            piece: [0; MAX_FRAME],
            piece_len: 0,
            piece_long: false,
            piece_at: 0,
            offset: 0,
            records: 0,
            expect: None,
            missing: 0,
            received: 0,
            fault: None,
        }
    }

    fn fail(&mut self, f: Fault) {
        if self.fault.is_none() {
            self.fault = Some(f);
        }
    }

    fn byte(&mut self, b: u8) {
        if b == 0 {
            if self.piece_len > 0 || self.piece_long {
                self.records += 1;
                self.piece_done();
            }
            self.piece_len = 0;
            self.piece_long = false;
            self.piece_at = self.offset + 1;
        } else {
            match self.piece.get_mut(self.piece_len) {
                Some(slot) => {
                    *slot = b;
                    self.piece_len += 1;
                }
                None => self.piece_long = true,
            }
        }
        self.offset += 1;
    }

    /// Un-stuffs the piece (COBS: a code byte `c` is followed by `c − 1`
    /// data bytes, then an implied zero unless `c` is 255 or the piece
    /// ends) and checks the record in it.
    fn piece_done(&mut self) {
        let at = self.piece_at;
        let mut out = [0u8; MAX_PAYLOAD + 2];
        let mut n = 0usize;
        let mut i = 0usize;
        let piece = self.piece.get(..self.piece_len).unwrap_or(&[]);
        let mut ok = !self.piece_long;
        while ok && i < piece.len() {
            let c = usize::from(piece[i]);
            i += 1;
            for _ in 1..c {
                match (piece.get(i), out.get_mut(n)) {
                    (Some(&b), Some(slot)) => {
                        *slot = b;
                        n += 1;
                        i += 1;
                    }
                    _ => ok = false,
                }
            }
            if c != 0xFF && i < piece.len() {
                match out.get_mut(n) {
                    Some(slot) => {
                        *slot = 0;
                        n += 1;
                    }
                    None => ok = false,
                }
            }
        }
        if !ok || n < 3 {
            self.fail(Fault::Corrupt(at));
            return;
        }
        let (payload, crc) = out[..n].split_at(n - 2);
        if crc16(payload) != u16::from_le_bytes([crc[0], crc[1]]) {
            self.fail(Fault::Corrupt(at));
            return;
        }
        let le32 = |p: &[u8], i: usize| u32::from_le_bytes([p[i], p[i + 1], p[i + 2], p[i + 3]]);
        match payload[0] {
            KIND_HEADER if payload.len() == HEADER_PAYLOAD => {
                // Version 1 (the module docs' format).
                let want = [
                    1,
                    self.header.channels,
                    self.header.adc_bits,
                    u8::from(self.signed),
                ];
                if payload[1..5] != want || le32(payload, 5) != self.header.rate_hz {
                    self.fail(Fault::HeaderFields(at));
                }
                let (next, dropped) = (le32(payload, 9), le32(payload, 13));
                match self.expect {
                    None => {
                        if next != 0 || dropped != 0 {
                            self.fail(Fault::NoHeaderFirst);
                        }
                        self.expect = Some(0);
                    }
                    Some(e) => {
                        // Frames missing before `next`: the gaps so far and
                        // the one up to `next`.
                        let before = self.missing + u64::from(next.wrapping_sub(e));
                        if u64::from(dropped) != before {
                            self.fail(Fault::DroppedCount(dropped, before));
                        }
                    }
                }
            }
            KIND_SAMPLES if payload.len() > 5 && (payload.len() - 5) % (2 * N) == 0 => {
                let Some(e) = self.expect else {
                    self.fail(Fault::NoHeaderFirst);
                    return;
                };
                let first = le32(payload, 1);
                let gap = first.wrapping_sub(e);
                if (gap as i32) < 0 {
                    self.fail(Fault::Backwards(e, first));
                    return;
                }
                self.missing += u64::from(gap);
                let frames = ((payload.len() - 5) / (2 * N)) as u32;
                for f in 0..frames {
                    let frame = first.wrapping_add(f);
                    while self.src_next < frame {
                        let _ = self.src.frame();
                        self.src_next += 1;
                    }
                    let codes = self.src.frame();
                    self.src_next += 1;
                    for (ch, &code) in codes.iter().enumerate() {
                        let i = 5 + 2 * (f as usize * N + ch);
                        let got = u16::from_le_bytes([payload[i], payload[i + 1]]);
                        // `u16` codes as they are; `i16` as their bit pattern.
                        let want = if self.signed {
                            code as i16 as u16
                        } else {
                            code as u16
                        };
                        if got != want {
                            self.fail(Fault::Sample(frame, ch));
                        }
                    }
                }
                self.received += u64::from(frames);
                self.expect = Some(first.wrapping_add(frames));
            }
            _ => self.fail(Fault::Malformed(at)),
        }
    }
}

/// How a case pushes its frames.
enum Push {
    /// One frame at a time.
    Frames,
    /// Interleaved blocks of this many frames.
    Blocks(usize),
}

/// Runs one case: `frames` frames of `spec` on `chans` through an encoder
/// with `CAP` bytes of buffer and `frames_per_record` frames a record.
fn run<const N: usize, const CAP: usize, S: Code>(
    spec: SignalSpec,
    chans: &[ChannelSpec],
    adc_bits: u8,
    frames_per_record: u8,
    frames: u32,
    push: Push,
    doc_example: bool,
) -> TelOutcome {
    let header = StreamHeader {
        channels: N as u8,
        adc_bits,
        rate_hz: spec.rate_hz,
    };
    let mut out = TelOutcome {
        frames,
        input_hash: FNV_OFFSET,
        bytes: 0,
        records: 0,
        stream_hash: FNV_OFFSET,
        checks: [0; MAX_TEL_CHECKS],
        n_checks: 0,
        dropped_records: 0,
        dropped_frames: 0,
        fault: None,
    };
    // CRC-16/CCITT-FALSE check value: Greg Cook, "Catalogue of
    // parametrised CRC algorithms", CRC-16/IBM-3740 (from memory; the
    // module docs cite it).
    if crc16(b"123456789") != 0x29B1 {
        out.fault = Some(Fault::CheckValue);
    }
    let Ok(mut enc) = TelemetryEncoder::<S, CAP>::new(header, frames_per_record) else {
        out.fault = Some(Fault::Refusal);
        return out;
    };
    let mut src = Source::<N>::new(spec, chans);
    let mut check = Checker::<N>::new(header, S::SIGNED, Source::<N>::new(spec, chans));
    let mut drain_rng = Rng::new(spec.seed ^ 0x5EED_0001);
    let mut first = [0u8; 22];
    // A block being filled (Blocks) and its length in samples.
    let mut block = [S::from_code(0); 64];
    let mut in_block = 0usize;
    let mut sink = [0u8; 40];
    let mut take = |bytes: &[u8], out: &mut TelOutcome, check: &mut Checker<N>| {
        for &b in bytes {
            if let Some(slot) = first.get_mut(out.bytes as usize) {
                *slot = b;
            }
            mix(&mut out.stream_hash, u32::from(b));
            out.bytes += 1;
            if out.bytes.is_multiple_of(CHECK_BYTES) {
                match out.checks.get_mut(out.n_checks) {
                    Some(slot) => {
                        *slot = out.stream_hash;
                        out.n_checks += 1;
                    }
                    None => check.fail(Fault::TooLong),
                }
            }
            check.byte(b);
        }
    };
    // The drain stalls for frames STALL_FROM..STALL_TO: long enough to
    // fill any case's buffer.
    const STALL_FROM: u32 = 1500;
    const STALL_TO: u32 = 2300;
    for n in 0..frames {
        let codes = src.frame();
        for c in codes {
            mix(&mut out.input_hash, c as u32);
        }
        let frame: [S; N] = codes.map(S::from_code);
        match push {
            Push::Frames => {
                if enc.push_frame(&frame).is_err() {
                    check.fail(Fault::Refusal);
                }
            }
            Push::Blocks(len) => {
                for x in frame {
                    if let Some(slot) = block.get_mut(in_block) {
                        *slot = x;
                        in_block += 1;
                    }
                }
                if in_block >= (len * N).min(block.len() / N * N) {
                    // One sample short of the block is not whole frames
                    // (of two or more channels): refused, and nothing of
                    // it is pushed.
                    let next = enc.next_frame();
                    let short = block.get(..in_block - 1).unwrap_or(&[]);
                    if N > 1
                        && (enc.push_block(short) != Err(TelemetryError::Length(in_block - 1))
                            || enc.next_frame() != next)
                    {
                        check.fail(Fault::Refusal);
                    }
                    if enc
                        .push_block(block.get(..in_block).unwrap_or(&[]))
                        .is_err()
                    {
                        check.fail(Fault::Refusal);
                    }
                    in_block = 0;
                }
            }
        }
        if n == frames / 2 + 7 {
            // A header queued by hand, in the middle of a record.
            let _ = enc.push_header();
        }
        if (STALL_FROM..STALL_TO).contains(&n) {
            continue;
        }
        // Up to 40 bytes a frame, 20 on average: faster than any case
        // produces, so the buffer empties again after the stall.
        let r = drain_rng.next_u32();
        let want = (r % 41) as usize;
        if r & 0x100 != 0 {
            let got = enc.read(sink.get_mut(..want).unwrap_or(&mut []));
            take(sink.get(..got).unwrap_or(&[]), &mut out, &mut check);
        } else {
            let pending = enc.pending();
            let got = want.min(pending.len());
            take(pending.get(..got).unwrap_or(&[]), &mut out, &mut check);
            enc.consume(got);
        }
    }
    if in_block > 0
        && enc
            .push_block(block.get(..in_block).unwrap_or(&[]))
            .is_err()
    {
        check.fail(Fault::Refusal);
    }
    enc.flush();
    loop {
        let got = enc.read(&mut sink);
        if got == 0 {
            break;
        }
        take(sink.get(..got).unwrap_or(&[]), &mut out, &mut check);
    }
    out.records = check.records;
    out.dropped_records = enc.dropped_records();
    out.dropped_frames = enc.dropped_frames();
    if check.received + u64::from(out.dropped_frames) != u64::from(frames) {
        check.fail(Fault::Accounting(
            check.received + u64::from(out.dropped_frames),
            frames,
        ));
    }
    if check.missing != u64::from(out.dropped_frames) {
        check.fail(Fault::DroppedCount(out.dropped_frames, check.missing));
    }
    if doc_example && first != DOC_EXAMPLE {
        check.fail(Fault::DocExample);
    }
    out.fault = out.fault.or(check.fault);
    out
}

/// Ambient `a`, one press of amplitude `p` from `on` to `off` ms.
const fn press(a: u32, p: u32, on: u32, off: u32) -> [Knot; 5] {
    [k(0, a), k(on, a), k(on + 20, p), k(off, p), k(off + 20, a)]
}

const PAD: [Knot; 5] = press(20, 400, 900, 1600);
const PAD_B: [Knot; 5] = press(15, 300, 400, 1300);
const PAD_C: [Knot; 5] = press(25, 500, 1200, 1700);

/// One channel of 12-bit codes at 2 kHz, 50 Hz, with a touch and spikes;
/// frame by frame, 32 frames a record, a 1 KiB buffer.
fn tel_u16_1ch() -> TelOutcome {
    let spec = SignalSpec {
        rate_hz: 2_000,
        mains_mhz: 50_000,
        bias: 2048,
        lo: 0,
        hi: 4095,
        spike_ms: 200,
        drift_mhz: 0,
        drift_ms: 0,
        seed: 21,
    };
    let chans = [ChannelSpec {
        phase: 0,
        knots: &PAD,
        third_q8: 0,
        fifth_q8: 0,
        noise_x16: 16,
    }];
    run::<1, 1024, u16>(spec, &chans, 12, 32, 4_000, Push::Frames, true)
}

/// Three channels of signed 12-bit codes at 2.5 kHz, 60 Hz, in blocks of
/// 7 frames, 40 frames a record (the most for three), a buffer of two
/// and a half records.
fn tel_i16_3ch() -> TelOutcome {
    let spec = SignalSpec {
        rate_hz: 2_500,
        mains_mhz: 60_000,
        bias: 0,
        lo: -2048,
        hi: 2047,
        spike_ms: 0,
        drift_mhz: 0,
        drift_ms: 0,
        seed: 22,
    };
    let chans = [
        ChannelSpec {
            phase: 0,
            knots: &PAD_B,
            third_q8: 30,
            fifth_q8: 0,
            noise_x16: 20,
        },
        ChannelSpec {
            phase: 0x5000_0000,
            knots: &PAD_C,
            third_q8: 0,
            fifth_q8: 0,
            noise_x16: 16,
        },
        ChannelSpec {
            phase: 0xA000_0000,
            knots: &PAD,
            third_q8: 10,
            fifth_q8: 0,
            noise_x16: 24,
        },
    ];
    run::<3, 640, i16>(spec, &chans, 12, 40, 5_000, Push::Blocks(7), false)
}

/// One telemetry case.
pub struct TelCase {
    /// Name, also the key in the golden file.
    pub name: &'static str,
    /// Runs the case.
    pub run: fn() -> TelOutcome,
}

/// Every telemetry case, in golden-file order.
pub const TEL_CASES: &[TelCase] = &[
    TelCase {
        name: "tel_u16_1ch",
        run: tel_u16_1ch,
    },
    TelCase {
        name: "tel_i16_3ch",
        run: tel_i16_3ch,
    },
];

/// Checks one outcome, printing each failure through `say`; true when it
/// passed. `want: None` (while blessing) keeps the format checks only.
pub fn check(
    case: &TelCase,
    got: &TelOutcome,
    want: Option<&TelGolden>,
    say: &mut dyn FnMut(fmt::Arguments<'_>),
) -> bool {
    let name = case.name;
    let mut ok = true;
    if let Some(f) = got.fault {
        say(format_args!("{name}: {f}"));
        ok = false;
    }
    if got.dropped_records == 0 {
        // The stall is there to make the encoder drop records.
        say(format_args!(
            "{name}: no record dropped: the drop path went untested"
        ));
        ok = false;
    }
    let Some(want) = want else {
        return ok;
    };
    if want.name != name {
        say(format_args!(
            "{name}: golden entry is for {} (regenerate)",
            want.name
        ));
        return false;
    }
    if got.frames != want.frames || got.input_hash != want.input_hash {
        say(format_args!(
            "{name}: input differs: {} frames hash {:016x}, golden {} frames hash {:016x}",
            got.frames, got.input_hash, want.frames, want.input_hash
        ));
        ok = false;
    }
    if got.bytes != want.bytes
        || got.records != want.records
        || got.stream_hash != want.stream_hash
        || got.checks() != want.checks
    {
        let at = got
            .checks()
            .iter()
            .zip(want.checks.iter())
            .position(|(a, b)| a != b);
        match at {
            Some(i) => say(format_args!(
                "{name}: stream differs within bytes {}..{}",
                i as u32 * CHECK_BYTES,
                (i as u32 + 1) * CHECK_BYTES
            )),
            None => say(format_args!(
                "{name}: stream differs: {} bytes in {} records hash {:016x}, golden {} in {} hash {:016x}",
                got.bytes, got.records, got.stream_hash, want.bytes, want.records, want.stream_hash
            )),
        }
        ok = false;
    }
    if (got.dropped_records, got.dropped_frames) != (want.dropped_records, want.dropped_frames) {
        say(format_args!(
            "{name}: dropped {} records ({} frames), golden {} ({})",
            got.dropped_records, got.dropped_frames, want.dropped_records, want.dropped_frames
        ));
        ok = false;
    }
    ok
}
