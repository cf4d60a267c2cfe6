//! humsim's detector configuration TOML on arbitrary text: never a panic;
//! a file that parses and builds gives a config the core crate accepts,
//! and writing it back out (`to_toml`) parses and builds to the same
//! config.
#![no_main]

use humsense::Detector;
use humsim::configfile::{build, to_toml, ConfigFile, ConfigRequest};
use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    let [a, rest @ ..] = data else { return };
    let Ok(text) = std::str::from_utf8(rest) else {
        return;
    };
    let Ok(file) = ConfigFile::parse(text, "fuzz.toml") else {
        return;
    };
    let req = ConfigRequest {
        profile: None,
        mains: None,
        bits: 8 + a % 9,
        rate_hz: [400, 1_000, 2_000, 871, 50_000][usize::from(a >> 4) % 5],
    };
    let Ok(cfg) = build(&req, Some(&file)) else {
        return;
    };
    assert!(
        Detector::<1, 0>::new(cfg).is_ok(),
        "built but refused: {cfg:?}"
    );
    let again = ConfigFile::parse(&to_toml(&cfg), "again.toml").expect("to_toml parses");
    let back = build(&req, Some(&again)).expect("to_toml builds");
    assert_eq!(back, cfg, "round trip through to_toml");
});
