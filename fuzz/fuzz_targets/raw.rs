//! humsim's raw reader on arbitrary bytes: never a panic or a hang; frames
//! within their bounds (see `humsense_fuzz::drain`); at most
//! bytes / (2 · channels) frames, and exactly that many when the read
//! ends without an error.
#![no_main]

use humsense_fuzz::{drain, Trickle};
use humsim::input::{RawFormat, RawSource};
use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    // First byte: format and channels (0 to 17; 0 and 17 are refused);
    // second: bits (7 to 17) and the read size. The rest is the file.
    let [a, b, bytes @ ..] = data else { return };
    let format = if a & 1 == 0 {
        RawFormat::U16Le
    } else {
        RawFormat::I16Le
    };
    let channels = usize::from(a >> 1) % 18;
    let bits = 7 + (b & 0x0f) % 11;
    let chunk = usize::from(b >> 4);
    let Ok(mut src) = RawSource::from_reader(
        "fuzz.raw".into(),
        Box::new(Trickle::new(bytes, chunk)),
        format,
        channels,
        2_000.0,
        bits,
    ) else {
        return;
    };
    let whole = (bytes.len() / (2 * channels)) as u64;
    let d = drain(
        &mut src,
        1 + usize::from(b >> 4) * 29,
        bytes.len() as u64 + 2,
    );
    assert!(
        d.frames <= whole,
        "{} frames from {} bytes",
        d.frames,
        bytes.len()
    );
    if d.error.is_none() {
        assert_eq!(
            d.frames * 2 * channels as u64,
            bytes.len() as u64,
            "bytes left unread"
        );
    }
});
