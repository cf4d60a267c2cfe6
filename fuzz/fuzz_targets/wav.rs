//! humsim's WAV reader on arbitrary bytes: never a panic or a hang; frames
//! within their bounds (see `humsense_fuzz::drain`); no more samples than
//! bytes.
#![no_main]

use humsense_fuzz::{drain, Trickle};
use humsim::input::{FrameSource, WavSource};
use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    // First byte: `--bits` (none, or 6 to 17) and the read size. The rest
    // is the file.
    let [a, wav @ ..] = data else { return };
    let bits = match a % 16 {
        0..=3 => None,
        k => Some(k + 2),
    };
    let chunk = usize::from(a >> 4);
    let block = 1 + usize::from(a >> 4) * 61;
    let Ok(mut src) =
        WavSource::from_reader("fuzz.wav".into(), Box::new(Trickle::new(wav, chunk)), bits)
    else {
        return;
    };
    let nch = src.channel_names().len() as u64;
    let d = drain(&mut src, block, wav.len() as u64 + 2);
    assert!(
        d.frames * nch <= wav.len() as u64,
        "{} frames of {nch} from {} bytes",
        d.frames,
        wav.len()
    );
});
