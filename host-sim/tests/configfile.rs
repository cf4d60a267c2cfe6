//! Configuration files: TOML round trips, messages, and the Rust snippet
//! (compiled by tests/rust_snippet.rs) kept current.
#![allow(clippy::unwrap_used)]

#[path = "support/unusual.rs"]
mod support;

use humsense::{Config, MainsMode};
use humsim::configfile::{build, to_rust, to_toml, ConfigFile, ConfigRequest};
use support::unusual;

#[test]
fn the_checked_in_rust_snippet_is_current() {
    // tests/rust_snippet.rs compiles the file; this test keeps it equal to
    // what `to_rust` writes, and rewrites it with HUMSENSE_BLESS=1 (after a
    // change to `Config`'s fields, when tests/rust_snippet.rs cannot build).
    let text = to_rust(&unusual());
    let path =
        std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/data/unusual_config.rs");
    if std::env::var_os("HUMSENSE_BLESS").is_some() {
        std::fs::write(&path, &text).unwrap();
    }
    let golden = std::fs::read_to_string(&path).unwrap();
    assert_eq!(
        text, golden,
        "tests/data/unusual_config.rs is out of date: HUMSENSE_BLESS=1 cargo test -p humsim --test configfile"
    );
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
fn the_file_format_is_the_core_crates_serde_form() {
    // A second, independent reader of the format: serde's derive on
    // `Config` (feature `serde`), which requires every field by its name
    // and refuses unknown ones. So `to_toml` writes every field, under
    // the names and enum spellings the core crate declares.
    for c in [Config::touch(), Config::field(), unusual()] {
        let text = to_toml(&c);
        let back: Config = toml::from_str(&text).unwrap();
        assert_eq!(back, c, "{text}");
    }
    // And serde's output reads back through the file reader.
    let text = toml::to_string(&unusual()).unwrap();
    let file = ConfigFile::parse(&text, "serde.toml").unwrap();
    let req = ConfigRequest {
        profile: None,
        mains: None,
        bits: 10,
        rate_hz: 1000,
    };
    assert_eq!(build(&req, Some(&file)).unwrap(), unusual(), "{text}");
}

#[test]
fn every_field_is_read_from_the_file() {
    // One field at a time set to a value other than the default, through
    // the descriptors: the built configuration differs in that field only.
    use humsense::{FieldKind, FieldValue};
    let req = ConfigRequest {
        profile: None,
        mains: None,
        bits: 12,
        rate_hz: 2000,
    };
    for f in Config::FIELDS {
        if matches!(f.name, "sample_rate_hz" | "adc_bits") {
            continue; // must equal the input's
        }
        let base = Config::touch();
        let (text, want) = match ((f.get)(&base), f.kind) {
            (FieldValue::Int(v), FieldKind::Int { max, .. }) => {
                let n = if v < max { v + 1 } else { v - 1 };
                (format!("{} = {n}\n", f.name), FieldValue::Int(n))
            }
            (FieldValue::Float(v), FieldKind::Float { max, .. }) => {
                // A quarter up stays below each "below" partner's default.
                let n = (v * 1.25).min(max);
                (format!("{} = {n:?}\n", f.name), FieldValue::Float(n))
            }
            (FieldValue::Choice(i), FieldKind::Choice { names, .. }) => {
                let n = (i + 1) % names.len();
                (
                    format!("{} = \"{}\"\n", f.name, names[n]),
                    FieldValue::Choice(n),
                )
            }
            other => panic!("{}: {other:?}", f.name),
        };
        let file = ConfigFile::parse(&text, "one.toml").unwrap();
        // A changed profile brings its own defaults: compare with them.
        let mut expect = if text.starts_with("profile") {
            Config::field()
        } else {
            base
        };
        assert!((f.set)(&mut expect, want), "{}", f.name);
        // Every new value is valid on its own and against its neighbours.
        assert_eq!(build(&req, Some(&file)).unwrap(), expect, "{text}");
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
        // Quoted and indented keys are located by the parser's spans.
        (
            "'debounce_on' = 0\n",
            "c.toml:1:1: config field `debounce_on` is 0, expected a value from 1 to 255",
        ),
        (
            "profile = \"touch\"\n   \"on_noise\" = 0.1\n",
            "c.toml:2:4: config field `on_noise` is 0.1",
        ),
        // Beyond the field's type: the range, as validation gives it.
        (
            "spike_floor_codes = -1\n",
            "c.toml:1:1: config field `spike_floor_codes` is -1, expected a value from 0 to 65535",
        ),
        // A key in a table is no field.
        (
            "[on_ratio]\nx = 1\n",
            "c.toml:1:1: invalid type: map, expected f64",
        ),
        ("[ratio]\nx = 1\n", "c.toml:1:2: unknown field `ratio`"),
        (
            "debounce_on = 2.5\n",
            "c.toml:1:15: invalid type: floating point `2.5`, expected i64",
        ),
    ];
    for (text, want) in cases {
        let e = ConfigFile::parse(text, "c.toml").and_then(|f| build(&req, Some(&f)));
        let e = e.unwrap_err();
        assert!(e.starts_with(want), "{text:?}: {e}");
    }
}
