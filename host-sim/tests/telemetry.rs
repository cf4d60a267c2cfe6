//! Telemetry round trip: records written by the core crate's encoder
//! (`humsense::telemetry`) and read by humsim's own decoder
//! (`humsim::input::telemetry`), clean and damaged: dropped, repeated,
//! reordered and corrupted records, truncated captures, garbage between
//! records, the encoder's own overflow; replay of a capture against the
//! same samples as CSV; `humsim convert`.
#![allow(clippy::unwrap_used, clippy::indexing_slicing)]

#[path = "support/cli.rs"]
mod cli;
use cli::run;
use humsense::telemetry::{StreamHeader, TelemetryEncoder};
use humsim::input::telemetry::{cobs_decode, crc16, decode_piece, Capture, Next, Record};
use humsim::input::{FrameSource, TelemetrySource};
use std::cell::RefCell;
use std::path::{Path, PathBuf};
use std::rc::Rc;

fn tmp(name: &str) -> PathBuf {
    cli::scratch("telemetry", name)
}

/// A deterministic test signal: channel c, frame k.
fn code(k: u32, c: u32) -> u16 {
    ((k.wrapping_mul(2_654_435_761) >> 7).wrapping_add(c * 977) % 4096) as u16
}

/// Encodes `frames` frames of `channels` channels, 12 bits, 2 kHz, with
/// `per` frames a record; drains the encoder in odd-sized pieces so that
/// records straddle reads.
fn encode(channels: u8, frames: u32, per: u8) -> Vec<u8> {
    let h = StreamHeader {
        channels,
        adc_bits: 12,
        rate_hz: 2000,
    };
    let mut enc = TelemetryEncoder::<u16, 1024>::new(h, per).unwrap();
    let mut out = Vec::new();
    let mut piece = [0u8; 37];
    let mut frame = vec![0u16; usize::from(channels)];
    for k in 0..frames {
        for (c, s) in frame.iter_mut().enumerate() {
            *s = code(k, c as u32);
        }
        enc.push_frame(&frame).unwrap();
        let n = enc.read(&mut piece);
        out.extend_from_slice(&piece[..n]);
    }
    enc.flush();
    while !enc.pending().is_empty() {
        let n = enc.read(&mut piece);
        out.extend_from_slice(&piece[..n]);
    }
    assert_eq!(enc.dropped_records(), 0);
    out
}

/// The records of a stream as byte ranges (from a zero to the next).
fn records(bytes: &[u8]) -> Vec<std::ops::Range<usize>> {
    let mut out = Vec::new();
    let mut start = None;
    for (i, &b) in bytes.iter().enumerate() {
        if b == 0 {
            if let Some(s) = start.take() {
                out.push(s..i + 1);
            }
        } else if start.is_none() {
            start = Some(i - 1);
        }
    }
    out
}

/// Is the record at `r` a header?
fn is_header(bytes: &[u8], r: &std::ops::Range<usize>) -> bool {
    matches!(
        decode_piece(&bytes[r.start + 1..r.end - 1]),
        Ok(Record::Header(_))
    )
}

type Warnings = Rc<RefCell<Vec<String>>>;

fn capture(bytes: Vec<u8>, allow_gaps: bool) -> Result<(Capture, Warnings), String> {
    let w: Warnings = Rc::default();
    let sink = Rc::clone(&w);
    let c = Capture::from_reader(
        "cap.humtel".into(),
        Box::new(std::io::Cursor::new(bytes)),
        allow_gaps,
        Box::new(move |m| {
            sink.borrow_mut().push(m.to_string());
            Ok(())
        }),
    )?;
    Ok((c, w))
}

/// Every frame of a capture read as replay reads it: (frames, error).
fn read_all(bytes: Vec<u8>) -> (Vec<i32>, Option<String>, Vec<String>) {
    let (c, w) = capture(bytes, false).unwrap();
    let mut src = TelemetrySource::new(c).unwrap();
    let mut all = Vec::new();
    let mut buf = vec![0i32; 64 * src.channel_names().len()];
    let err = loop {
        match src.read(&mut buf) {
            Ok(0) => break None,
            Ok(n) => all.extend_from_slice(&buf[..n * src.channel_names().len()]),
            Err(e) => break Some(e),
        }
    };
    let w = w.borrow().clone();
    (all, err, w)
}

fn expected(channels: u32, frames: std::ops::Range<u32>) -> Vec<i32> {
    frames
        .flat_map(|k| (0..channels).map(move |c| i32::from(code(k, c))))
        .collect()
}

#[test]
fn crc_and_cobs_match_published_values() {
    // CRC-16/CCITT-FALSE check value: Greg Cook, "Catalogue of
    // parametrised CRC algorithms", CRC-16/IBM-3740 (from memory); the
    // core crate's bitwise CRC and this table-driven one must both give it.
    assert_eq!(crc16(b"123456789"), 0x29B1);
    assert_eq!(humsense::telemetry::crc16(b"123456789"), 0x29B1);
    // COBS examples after Cheshire and Baker (1999) (from memory).
    assert_eq!(cobs_decode(&[0x01, 0x01]).unwrap(), vec![0x00]);
    assert_eq!(
        cobs_decode(&[0x03, 0x11, 0x22, 0x02, 0x33]).unwrap(),
        vec![0x11, 0x22, 0x00, 0x33]
    );
    assert_eq!(cobs_decode(&[0x05, 0x11]), None);
}

#[test]
fn a_clean_stream_round_trips_bit_for_bit() {
    for (ch, per) in [(1u8, 120u8), (4, 30), (16, 7), (3, 1)] {
        let bytes = encode(ch, 2000, per);
        let (codes, err, warnings) = read_all(bytes);
        assert_eq!(err, None);
        assert!(warnings.is_empty(), "{warnings:?}");
        assert_eq!(codes, expected(u32::from(ch), 0..2000), "{ch} channels");
    }
}

#[test]
fn signed_codes_round_trip() {
    let h = StreamHeader {
        channels: 2,
        adc_bits: 16,
        rate_hz: 1000,
    };
    let mut enc = TelemetryEncoder::<i16, 4096>::new(h, 10).unwrap();
    let samples: Vec<i16> = (0..200).map(|k: i32| (k * 331 - 32768) as i16).collect();
    enc.push_block(&samples).unwrap();
    let bytes = enc.pending().to_vec();
    let (c, _) = capture(bytes, false).unwrap();
    let mut src = TelemetrySource::new(c).unwrap();
    assert!(src.signed());
    assert_eq!(src.bits(), 16);
    let mut buf = vec![0i32; 400];
    assert_eq!(src.read(&mut buf).unwrap(), 100);
    let want: Vec<i32> = samples.iter().map(|&s| i32::from(s)).collect();
    assert_eq!(buf[..200], want[..]);
}

#[test]
fn a_dropped_record_is_a_gap_at_its_frames() {
    let bytes = encode(2, 1000, 25);
    let recs = records(&bytes);
    // Record 0 is the header; 1.. are samples of 25 frames each: drop the
    // fourth sample record (frames 75 to 99).
    assert!(is_header(&bytes, &recs[0]) && !is_header(&bytes, &recs[4]));
    let mut damaged = bytes[..recs[4].start].to_vec();
    damaged.extend_from_slice(&bytes[recs[4].end..]);
    let (codes, err, _) = read_all(damaged.clone());
    let err = err.unwrap();
    assert!(
        err.contains("frames 75 to 99 (25 frames, 0.0375 to 0.0500 s) are missing"),
        "{err}"
    );
    assert!(err.contains("replay does not join"), "{err}");
    // Nothing after the gap was joined on.
    assert_eq!(codes, expected(2, 0..75));
    // With gaps allowed (convert) the gap is reported exactly, and the
    // frames after it come with their own positions.
    let (mut c, w) = capture(damaged, true).unwrap();
    let mut got = Vec::new();
    loop {
        match c.next_item().unwrap() {
            Next::End => break,
            n => got.push(n),
        }
    }
    assert!(got.contains(&Next::Gap {
        from: 75,
        frames: 25
    }));
    let after = got.iter().find_map(|n| match n {
        Next::Samples { first: 100, codes } => Some(codes.clone()),
        _ => None,
    });
    assert_eq!(after.unwrap(), expected(2, 100..125));
    assert_eq!(w.borrow().len(), 1);
}

#[test]
fn a_repeated_record_is_skipped_with_a_warning() {
    let bytes = encode(3, 600, 20);
    let recs = records(&bytes);
    let mut dup = bytes[..recs[5].end].to_vec();
    dup.extend_from_slice(&bytes[recs[5].clone()]);
    dup.extend_from_slice(&bytes[recs[5].end..]);
    let (codes, err, w) = read_all(dup);
    assert_eq!(err, None);
    assert_eq!(codes, expected(3, 0..600));
    assert_eq!(w.len(), 1, "{w:?}");
    assert!(
        w[0].contains("a repeat of the record of frames 80 to 99"),
        "{w:?}"
    );
}

#[test]
fn reordered_records_are_refused() {
    let bytes = encode(1, 600, 20);
    let recs = records(&bytes);
    // Swap sample records 3 and 4 (frames 40-59 and 60-79).
    let mut sw = bytes[..recs[3].start].to_vec();
    sw.extend_from_slice(&bytes[recs[4].clone()]);
    sw.extend_from_slice(&bytes[recs[3].clone()]);
    sw.extend_from_slice(&bytes[recs[4].end..]);
    let (codes, err, _) = read_all(sw.clone());
    assert!(err.unwrap().contains("frames 40 to 59 (20 frames"));
    assert_eq!(codes, expected(1, 0..40));
    // Even where gaps are allowed, the late record is an error.
    let (mut c, _) = capture(sw, true).unwrap();
    let e = loop {
        match c.next_item() {
            Err(e) => break e,
            Ok(Next::End) => panic!("no error"),
            Ok(_) => {}
        }
    };
    assert!(
        e.contains("a record of frames 40 to 59 where frame 80 comes next: records out of order"),
        "{e}"
    );
}

#[test]
fn a_corrupted_record_is_named_and_its_frames_are_a_gap() {
    let bytes = encode(2, 400, 10);
    let recs = records(&bytes);
    let mut bad = bytes.clone();
    // Flip one bit in a sample of sample record 7 (frames 60 to 69).
    bad[recs[7].start + 12] ^= 0x04;
    let (codes, err, w) = read_all(bad);
    assert_eq!(w.len(), 1, "{w:?}");
    assert!(
        w[0].contains(&format!(
            "byte {}: corrupt record skipped (CRC",
            recs[7].start + 1
        )) && w[0].contains("after frame 59 (0.0295 s)"),
        "{w:?}"
    );
    let err = err.unwrap();
    assert!(
        err.contains("frames 60 to 69 (10 frames")
            && err.contains("1 corrupt records were skipped"),
        "{err}"
    );
    assert_eq!(codes, expected(2, 0..60));
}

#[test]
fn a_corrupted_header_loses_no_sample() {
    // 33 sample records: a second header before the 33rd.
    let bytes = encode(1, 33 * 4, 4);
    let recs = records(&bytes);
    let second = recs
        .iter()
        .skip(1)
        .find(|r| is_header(&bytes, r))
        .unwrap()
        .clone();
    let mut bad = bytes.clone();
    bad[second.start + 3] ^= 0x40;
    let (codes, err, w) = read_all(bad);
    assert_eq!(err, None);
    assert_eq!(codes, expected(1, 0..132));
    assert_eq!(w.len(), 1);
    assert!(w[0].contains("corrupt record skipped"), "{w:?}");
}

#[test]
fn a_truncated_capture_keeps_every_whole_record() {
    let bytes = encode(2, 300, 10);
    let recs = records(&bytes);
    let last = recs.last().unwrap().clone();
    // Cut in the middle of the last record.
    let cut = bytes[..last.start + 9].to_vec();
    let (codes, err, w) = read_all(cut);
    assert_eq!(err, None);
    assert_eq!(codes, expected(2, 0..290));
    assert!(
        w.len() == 1 && w[0].contains("the capture ends inside a record (8 bytes from byte"),
        "{w:?}"
    );
    // Cut just before the final zero: the record is whole and kept.
    let (codes, err, w) = read_all(bytes[..bytes.len() - 1].to_vec());
    assert_eq!((err, w.len()), (None, 0));
    assert_eq!(codes, expected(2, 0..300));
}

#[test]
fn a_capture_started_mid_stream_begins_at_its_first_header() {
    // 50 records of 10 frames: headers before records 1 and 33 (frame 320).
    let bytes = encode(1, 500, 10);
    let recs = records(&bytes);
    // Start inside sample record 3: that piece is corrupt, records 4 to 32
    // have no header before them.
    let (codes, err, w) = read_all(bytes[recs[3].start + 5..].to_vec());
    assert_eq!(err, None);
    assert_eq!(w.len(), 1, "{w:?}");
    assert!(
        w[0].contains("29 sample records and 1 corrupt pieces before the first header skipped; the capture starts at frame 320"),
        "{w:?}"
    );
    assert_eq!(codes, expected(1, 320..500));
    let (c, _) = capture(bytes[recs[3].start + 5..].to_vec(), false).unwrap();
    let src = TelemetrySource::new(c).unwrap();
    // The capture's clock is the board's: frame 320 at 2 kHz.
    assert_eq!(src.start_s(), 0.16);
}

#[test]
fn garbage_between_records_spoils_no_record() {
    let bytes = encode(1, 500, 25);
    let recs = records(&bytes);
    let mut g = bytes[..recs[6].end].to_vec();
    g.extend_from_slice(b"\r\nboard v2 boot ok\r\n");
    g.extend_from_slice(&[0xFF; 300]);
    g.extend_from_slice(&bytes[recs[6].end..]);
    let (codes, err, w) = read_all(g);
    assert_eq!(err, None);
    assert_eq!(codes, expected(1, 0..500));
    assert_eq!(w.len(), 1);
    // Sample record 6 holds frames 125 to 149.
    assert!(w[0].contains("after frame 149"), "{w:?}");
}

#[test]
fn the_encoders_own_overflow_shows_as_a_gap_with_its_count() {
    let h = StreamHeader {
        channels: 1,
        adc_bits: 12,
        rate_hz: 2000,
    };
    let mut enc = TelemetryEncoder::<u16, 300>::new(h, 10).unwrap();
    let mut out = Vec::new();
    for k in 0..2000u32 {
        enc.push_frame(&[code(k, 0)]).unwrap();
        // The link stalls for frames 500 to 999.
        if !(500..1000).contains(&k) {
            let pending = enc.pending().to_vec();
            out.extend_from_slice(&pending);
            enc.consume(pending.len());
        }
    }
    assert!(enc.dropped_records() > 0);
    let (codes, err, _) = read_all(out);
    let err = err.unwrap();
    // When the link stalls after frame 499, the 300-byte buffer is empty
    // and takes 10 records of 30 bytes (frames 500 to 599); frames 600 to
    // 999 are dropped, and a header with the count goes out before the
    // record of frames 1000 to 1009.
    assert_eq!(enc.dropped_frames(), 400);
    assert!(
        err.contains("frames 600 to 999 (400 frames, 0.3000 to 0.5000 s) are missing (the board reports 400 frames dropped for lack of buffer)"),
        "{err}"
    );
    assert_eq!(codes, expected(1, 0..600));
}

fn write(path: &Path, bytes: &[u8]) {
    std::fs::write(path, bytes).unwrap();
}

#[test]
fn replay_of_a_capture_gives_the_events_of_the_same_samples_as_csv() {
    use humsim::scenario::{RenderOptions, Scenario};
    let s = Scenario::builtin("kitchen-panel").unwrap();
    let mut r = s
        .render(&RenderOptions {
            seconds: Some(8.0),
            seed: Some(3),
        })
        .unwrap();
    let nch = r.channels();
    let rate = r.rate_hz();
    let h = StreamHeader {
        channels: nch as u8,
        adc_bits: s.adc.bits as u8,
        rate_hz: rate as u32,
    };
    let mut enc = TelemetryEncoder::<u16, 4096>::new(h, 30).unwrap();
    let mut cap = Vec::new();
    let mut csv = String::from("ch0");
    for c in 1..nch {
        csv.push_str(&format!(",ch{c}"));
    }
    csv.push('\n');
    let mut block = vec![0u16; 256 * nch];
    loop {
        let n = r.fill(&mut block);
        if n == 0 {
            break;
        }
        enc.push_block(&block[..n * nch]).unwrap();
        for f in block[..n * nch].chunks_exact(nch) {
            let row: Vec<String> = f.iter().map(u16::to_string).collect();
            csv.push_str(&row.join(","));
            csv.push('\n');
        }
        cap.extend_from_slice(enc.pending());
        let len = enc.pending().len();
        enc.consume(len);
    }
    enc.flush();
    cap.extend_from_slice(enc.pending());
    let (cap_path, csv_path) = (tmp("kitchen.humtel"), tmp("kitchen.csv"));
    write(&cap_path, &cap);
    std::fs::write(&csv_path, csv).unwrap();
    let (code_t, out_t, err_t) = run(&["replay", cap_path.to_str().unwrap()]);
    let rate_s = format!("{rate}");
    let bits_s = format!("{}", s.adc.bits);
    let (code_c, out_c, err_c) = run(&[
        "replay",
        csv_path.to_str().unwrap(),
        "--rate",
        &rate_s,
        "--bits",
        &bits_s,
    ]);
    assert_eq!((code_t, code_c), (0, 0), "{err_t}\n{err_c}");
    assert!(out_t.contains("touch-on"), "{out_t}");
    assert_eq!(out_t, out_c);
    // And through convert: the CSV it writes replays to the same events.
    let conv = tmp("kitchen-conv.csv");
    let (code, _, err) = run(&[
        "convert",
        cap_path.to_str().unwrap(),
        "-o",
        conv.to_str().unwrap(),
    ]);
    assert_eq!(code, 0, "{err}");
    assert!(err.contains("wrote 16000 frames x 4 channels"), "{err}");
    let (code, out, err) = run(&["replay", conv.to_str().unwrap(), "--bits", &bits_s]);
    assert_eq!(code, 0, "{err}");
    assert_eq!(out, out_c);
}

#[test]
fn convert_keeps_a_gap_in_time_s_and_replay_of_the_csv_refuses_it() {
    let bytes = encode(1, 4000, 40);
    let recs = records(&bytes);
    let mut damaged = bytes[..recs[20].start].to_vec();
    damaged.extend_from_slice(&bytes[recs[20].end..]);
    let cap = tmp("gap.humtel");
    write(&cap, &damaged);
    let (code, _, err) = run(&["replay", cap.to_str().unwrap()]);
    assert_eq!(code, 1);
    assert!(err.contains("frames 760 to 799 (40 frames"), "{err}");
    let csv = tmp("gap.csv");
    let (code, _, err) = run(&[
        "convert",
        cap.to_str().unwrap(),
        "-o",
        csv.to_str().unwrap(),
    ]);
    assert_eq!(code, 0, "{err}");
    assert!(
        err.contains("humsim: warning: ") && err.contains("frames 760 to 799"),
        "{err}"
    );
    assert!(err.contains("1 gaps (40 frames missing)"), "{err}");
    let text = std::fs::read_to_string(&csv).unwrap();
    let lines: Vec<&str> = text.lines().collect();
    assert_eq!(lines[0], "time_s,ch0");
    assert_eq!(lines.len(), 1 + 3960);
    assert_eq!(lines[760], format!("0.379500,{}", code_of(759)));
    assert_eq!(lines[761], format!("0.400000,{}", code_of(800)));
    let (code, _, err) = run(&["replay", csv.to_str().unwrap()]);
    assert_eq!(code, 1);
    assert!(
        err.contains("gap.csv:762:1: column `time_s`: a gap"),
        "{err}"
    );
}

fn code_of(k: u32) -> u16 {
    code(k, 0)
}

/// One record on the wire, framed here from the format description (a
/// COBS encoder of the test's own), for streams the encoder cannot make.
fn framed(payload: &[u8]) -> Vec<u8> {
    let mut p = payload.to_vec();
    p.extend_from_slice(&crc16(payload).to_le_bytes());
    let mut out = vec![0u8, 0];
    let mut code_at = 1;
    for &b in &p {
        if b == 0 {
            out[code_at] = (out.len() - code_at) as u8;
            code_at = out.len();
            out.push(0);
        } else {
            out.push(b);
        }
    }
    out[code_at] = (out.len() - code_at) as u8;
    out.push(0);
    out
}

#[test]
fn the_sequence_number_wraps_at_two_to_the_32() {
    let start = u32::MAX - 49;
    let mut header = vec![1u8, 1, 1, 12, 0];
    header.extend_from_slice(&2000u32.to_le_bytes());
    header.extend_from_slice(&start.to_le_bytes());
    header.extend_from_slice(&0u32.to_le_bytes());
    let mut bytes = framed(&header);
    // Records of 20 frames from 2^32 − 50: the third crosses the wrap.
    for r in 0..5u32 {
        let first = start.wrapping_add(20 * r);
        let mut p = vec![2u8];
        p.extend_from_slice(&first.to_le_bytes());
        for k in 0..20 {
            p.extend_from_slice(&code(20 * r + k, 0).to_le_bytes());
        }
        bytes.extend_from_slice(&framed(&p));
    }
    // The framing helper agrees with the crate's own for a record it can
    // make (the header of a fresh stream).
    let enc = TelemetryEncoder::<u16, 512>::new(
        StreamHeader {
            channels: 1,
            adc_bits: 12,
            rate_hz: 2000,
        },
        20,
    )
    .unwrap();
    let mut fresh = vec![1u8, 1, 1, 12, 0];
    fresh.extend_from_slice(&2000u32.to_le_bytes());
    fresh.extend_from_slice(&[0; 8]);
    let mut enc = enc;
    enc.push_block(&[0u16; 20]).unwrap();
    assert!(enc.pending().starts_with(&framed(&fresh)));
    let (mut c, w) = capture(bytes, false).unwrap();
    let mut firsts = Vec::new();
    let mut all = Vec::new();
    loop {
        match c.next_item().unwrap() {
            Next::Samples { first, codes } => {
                firsts.push(first);
                all.extend(codes);
            }
            Next::Gap { .. } => panic!("gap"),
            Next::End => break,
        }
    }
    let s = u64::from(start);
    assert_eq!(firsts, vec![s, s + 20, s + 40, s + 60, s + 80]);
    assert_eq!(all, expected(1, 0..100));
    assert!(w.borrow().is_empty());
}

/// One way to damage a stream.
#[derive(Debug, Clone)]
enum Damage {
    /// Flip bit `bit` of byte `at` (modulo the length).
    Flip { at: usize, bit: u8 },
    /// Drop record `k` (modulo the count).
    Drop { k: usize },
    /// Send record `k` twice.
    Repeat { k: usize },
    /// Non-zero garbage after record `k`.
    Garbage { k: usize, bytes: Vec<u8> },
    /// Cut the stream at byte `at`.
    Cut { at: usize },
}

fn damage() -> impl proptest::strategy::Strategy<Value = Damage> {
    use proptest::prelude::*;
    prop_oneof![
        (any::<usize>(), 0u8..8).prop_map(|(at, bit)| Damage::Flip { at, bit }),
        any::<usize>().prop_map(|k| Damage::Drop { k }),
        any::<usize>().prop_map(|k| Damage::Repeat { k }),
        (any::<usize>(), proptest::collection::vec(1u8..=255, 1..40))
            .prop_map(|(k, bytes)| Damage::Garbage { k, bytes }),
        any::<usize>().prop_map(|at| Damage::Cut { at }),
    ]
}

fn apply(bytes: &[u8], d: &Damage) -> Vec<u8> {
    let recs = records(bytes);
    let pick = |k: usize| recs[k % recs.len()].clone();
    match d {
        Damage::Flip { at, bit } => {
            let mut b = bytes.to_vec();
            let i = at % b.len();
            b[i] ^= 1 << bit;
            b
        }
        Damage::Drop { k } => {
            let r = pick(*k);
            [&bytes[..r.start], &bytes[r.end..]].concat()
        }
        Damage::Repeat { k } => {
            let r = pick(*k);
            [&bytes[..r.end], &bytes[r.clone()], &bytes[r.end..]].concat()
        }
        Damage::Garbage { k, bytes: g } => {
            let r = pick(*k);
            [&bytes[..r.end], &g[..], &bytes[r.end..]].concat()
        }
        Damage::Cut { at } => bytes[..at % bytes.len()].to_vec(),
    }
}

proptest::proptest! {
    #![proptest_config(proptest::prelude::ProptestConfig::with_cases(256))]

    /// Whatever the damage (up to three bit flips, which CRC-16/CCITT
    /// detects in records this short: common practice, from memory, for
    /// this polynomial below 32 767 bits), every frame delivered is the
    /// encoder's frame at that position, and frames are contiguous except
    /// where a gap was reported: damage is refused or reported, never
    /// joined over or passed on.
    #[test]
    fn damage_is_reported_never_joined(ds in proptest::collection::vec(damage(), 1..4)) {
        let mut bytes = encode(2, 1500, 10);
        for d in &ds {
            if bytes.len() < 2 || records(&bytes).is_empty() {
                break;
            }
            bytes = apply(&bytes, d);
        }
        let Ok((mut c, _)) = capture(bytes, true) else {
            return Ok(());
        };
        let mut cursor = c.start_frame();
        loop {
            match c.next_item() {
                Err(_) | Ok(Next::End) => break,
                Ok(Next::Gap { from, frames }) => {
                    proptest::prop_assert_eq!(from, cursor);
                    proptest::prop_assert!(frames > 0);
                    cursor += frames;
                }
                Ok(Next::Samples { first, codes }) => {
                    proptest::prop_assert_eq!(first, cursor);
                    let n = (codes.len() / 2) as u64;
                    proptest::prop_assert!(first + n <= 1500);
                    proptest::prop_assert_eq!(
                        codes,
                        expected(2, first as u32..(first + n) as u32)
                    );
                    cursor += n;
                }
            }
        }
    }
}
