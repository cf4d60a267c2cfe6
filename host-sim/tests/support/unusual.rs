//! A configuration unlike either profile's defaults in every enum and in
//! several numbers, shared by tests/configfile.rs (which writes its Rust
//! snippet) and tests/rust_snippet.rs (which compiles the snippet).

use humsense::{Config, MainsMode, PanelMode};

/// See the module docs.
pub fn unusual() -> Config {
    let mut c = Config::field().with_adc_bits(10).with_sample_rate(1_000);
    c.mains = MainsMode::Hz60;
    c.panel = PanelMode::Independent;
    c.on_ratio = 1.7;
    c.off_ratio = 1.3;
    c.on_noise = 5.5;
    c.off_noise = 2.2;
    c.debounce_on = 4;
    c.avg_shift = 3;
    c
}
