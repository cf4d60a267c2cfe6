//! humsim's CSV reader on arbitrary text: never a panic or a hang; frames
//! within their bounds (see `humsense_fuzz::drain`); no more frames than
//! lines after the header.
#![no_main]

use std::io::BufReader;

use humsense_fuzz::{drain, Trickle};
use humsim::input::CsvSource;
use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    // First byte: bits and whether `--rate` is given; second: the read
    // size and the block length. The rest is the file.
    let [a, b, text @ ..] = data else { return };
    let bits = 7 + a % 11; // 7 and 17 are refused
    let rate = match a >> 4 {
        0..=5 => None,
        6..=11 => Some(2_000.0),
        12 => Some(1e-300),
        13 => Some(1e300),
        _ => Some(f64::from(u32::from(*b) * 97 + 1)),
    };
    let chunk = usize::from(b & 0x0f);
    let block = 1 + usize::from(b >> 4) * 37;
    let reader = BufReader::with_capacity(8 + chunk * 13, Trickle::new(text, chunk));
    let Ok(mut src) = CsvSource::from_reader("fuzz.csv".into(), Box::new(reader), rate, bits)
    else {
        return;
    };
    let lines = text.split(|&c| c == b'\n' || c == b'\r').count() as u64;
    let d = drain(&mut src, block, lines + 2);
    assert!(
        d.frames < lines.max(1),
        "{} frames from {lines} lines",
        d.frames
    );
});
