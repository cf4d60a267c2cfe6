//! humsim's edge-log reader on arbitrary bytes: never a panic; what it
//! accepts has 1 to 16 channels, and every change it yields names one of
//! them, comes in time order, changes its channel's level, and lies within
//! the log's start and end; errors name the file.
#![no_main]

use humsim::input::EdgeLog;
use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    let reader = Box::new(std::io::Cursor::new(data.to_vec()));
    let mut log = match EdgeLog::from_reader("fuzz-edges.csv".into(), reader) {
        Ok(l) => l,
        Err(e) => {
            assert!(e.starts_with("fuzz-edges.csv"), "{e}");
            return;
        }
    };
    let n = log.channels().len();
    assert!((1..=16).contains(&n));
    let mut levels = log.start_levels().to_vec();
    let mut last = log.start_s();
    loop {
        match log.next_change() {
            Ok(Some(row)) => {
                assert!(row.channel < n);
                assert!(row.time_s >= last, "{} after {last}", row.time_s);
                assert_ne!(levels[row.channel], row.level);
                levels[row.channel] = row.level;
                last = row.time_s;
            }
            Ok(None) => {
                assert!(log.end_s() >= last);
                break;
            }
            Err(e) => {
                assert!(e.starts_with("fuzz-edges.csv"), "{e}");
                break;
            }
        }
    }
});
