//! humsim's labels parser on arbitrary text: never a panic; what it
//! accepts are labels with a channel name and finite times
//! 0 <= start_s <= end_s; errors name the file.
#![no_main]

use humsim::labels::LabelFile;
use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    let Ok(text) = std::str::from_utf8(data) else {
        return;
    };
    match LabelFile::parse(text, "fuzz-labels.csv") {
        Ok(file) => {
            let labels = &file.labels;
            for l in labels {
                assert!(!l.channel.is_empty());
                assert!(l.start_s.is_finite() && l.end_s.is_finite());
                assert!(0.0 <= l.start_s && l.start_s <= l.end_s, "{l:?}");
            }
            assert!(labels.len() <= text.lines().count());
        }
        Err(e) => assert!(e.starts_with("fuzz-labels.csv"), "{e}"),
    }
});
