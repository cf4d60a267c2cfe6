//! Configuration files: TOML round trips, and the Rust snippet compiles.
#![allow(clippy::unwrap_used)]

use humsense::{Config, MainsMode, PanelMode};
use humsim::configfile::{build, to_rust, to_toml, ConfigFile, ConfigRequest};

/// A configuration unlike either profile's defaults in every enum and in
/// several numbers.
fn unusual() -> Config {
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

// The snippet written by `to_rust(&unusual())`, checked in and compiled
// here: if the generator wrote something that does not compile, or the core
// crate's `Config` changed shape, this test file fails to build.
mod snippet {
    include!("data/unusual_config.rs");
    pub const fn get() -> humsense::Config {
        CONFIG
    }
}

#[test]
fn the_rust_snippet_compiles_and_equals_the_config() {
    let text = to_rust(&unusual());
    let golden = include_str!("data/unusual_config.rs");
    assert_eq!(
        text, golden,
        "regenerate tests/data/unusual_config.rs:\n{text}"
    );
    assert_eq!(snippet::get(), unusual());
}

#[test]
fn toml_round_trips_exactly() {
    for (c, bits, rate) in [
        (Config::touch(), 12, 2000),
        (Config::field(), 12, 2000),
        (unusual(), 10, 1000),
    ] {
        let text = to_toml(&c);
        let file = ConfigFile::parse(&text, "rt.toml").unwrap();
        let req = ConfigRequest {
            profile: None,
            mains: None,
            bits,
            rate_hz: rate,
        };
        assert_eq!(build(&req, Some(&file)).unwrap(), c, "{text}");
    }
}

#[test]
fn defaults_without_a_file_are_the_profiles() {
    let req = ConfigRequest {
        profile: None,
        mains: None,
        bits: 12,
        rate_hz: 2000,
    };
    assert_eq!(build(&req, None).unwrap(), Config::touch());
    let req10 = ConfigRequest {
        profile: Some(humsense::Profile::Field),
        mains: Some(MainsMode::Hz50),
        bits: 10,
        rate_hz: 1000,
    };
    let want = Config::field()
        .with_adc_bits(10)
        .with_sample_rate(1000)
        .with_mains(MainsMode::Hz50);
    assert_eq!(build(&req10, None).unwrap(), want);
}

#[test]
fn conflicts_and_bad_values_name_the_line() {
    let req = ConfigRequest {
        profile: Some(humsense::Profile::Touch),
        mains: Some(MainsMode::Hz50),
        bits: 12,
        rate_hz: 2000,
    };
    let cases = [
        (
            "\nprofile = \"field\"\n",
            "c.toml:2:1: the file's profile is \"field\" but --profile touch",
        ),
        (
            "mains = \"60\"\n",
            "c.toml:1:1: the file's mains is \"60\" but --mains 50",
        ),
        ("mains = \"70\"\n", "c.toml:1:1: mains `70`"),
        ("panel = \"all\"\n", "c.toml:1:1: panel `all`"),
        (
            "adc_bits = 10\n",
            "c.toml:1:1: adc_bits = 10, but the input has 12-bit codes",
        ),
        ("on_ratio = \"high\"\n", "c.toml:1:12: invalid type"),
        (
            "  avg_shift = 9\n",
            "c.toml:1:3: config field `avg_shift` is 9",
        ),
        (
            "on_ratio = 3\noff_ratio = 3\n",
            "c.toml:2:1: config field `off_ratio` must be below `on_ratio`",
        ),
        ("x = 1\n", "c.toml:1:1: unknown field `x`"),
    ];
    for (text, want) in cases {
        let e = ConfigFile::parse(text, "c.toml").and_then(|f| build(&req, Some(&f)));
        let e = e.unwrap_err();
        assert!(e.starts_with(want), "{text:?}: {e}");
    }
}
