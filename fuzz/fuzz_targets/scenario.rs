//! humsim's scenario TOML on arbitrary text: never a panic; errors name the
//! file and a key or a line; a scenario that parses renders (a bounded
//! amount) to codes within its ADC's range, whole frames at a time.
#![no_main]

use humsim::scenario::{RenderOptions, Scenario};
use libfuzzer_sys::fuzz_target;

/// Frames rendered at most per input.
const MAX_FRAMES: usize = 4_000;

fuzz_target!(|data: &[u8]| {
    let Ok(text) = std::str::from_utf8(data) else {
        return;
    };
    let s = match Scenario::from_toml_str(text, "fuzz.toml") {
        Ok(s) => s,
        Err(e) => {
            assert!(e.to_string().starts_with("fuzz.toml"), "{e}");
            assert!(e.key.is_some() || e.line.is_some(), "{e}");
            return;
        }
    };
    let Ok(mut r) = s.render(&RenderOptions {
        seconds: Some(0.02),
        seed: Some(1),
    }) else {
        return;
    };
    let nch = r.channels();
    assert!(nch >= 1);
    let max = s.adc.max_code();
    let mut block = vec![0u16; 128 * nch];
    let mut frames = 0;
    while frames < MAX_FRAMES {
        let n = r.fill(&mut block);
        if n == 0 {
            break;
        }
        assert!(n * nch <= block.len());
        assert!(
            block[..n * nch].iter().all(|&c| c <= max),
            "code above {max}"
        );
        frames += n;
    }
});
