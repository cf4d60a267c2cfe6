//! Configuration files: TOML round trips, messages, and the Rust snippet
//! (compiled by tests/rust_snippet.rs) kept current.
#![allow(clippy::unwrap_used)]

#[path = "support/unusual.rs"]
mod support;

use humsense::edge::{EdgeConfig, EdgeInput, TimerWidth};
use humsense::{Config, MainsMode};
use humsim::configfile::{
    build, build_digital, build_edge, to_rust, to_rust_edge, to_toml, to_toml_digital, ConfigFile,
    ConfigRequest, EdgeRequest,
};
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

/// An edge configuration with every field off its default (16-bit timer,
/// level input, inverted pin), valid against both profiles.
fn unusual_edge() -> EdgeConfig {
    EdgeConfig {
        tick_hz: 400_000,
        timer: TimerWidth::Bits16,
        glitch_ticks: 37,
        hysteresis_permille: 250,
        active_low: true,
        stuck_high_cycles: 40_000,
        input: EdgeInput::Level,
    }
}

#[test]
fn the_edge_table_round_trips_exactly() {
    // `to_toml_digital` writes the back end's fields and the [edge] table;
    // reading the text back gives both configurations again.
    for (c, e) in [
        (
            Config::touch(),
            EdgeConfig::new(1_000_000, TimerWidth::Bits32).with_hysteresis_permille(100),
        ),
        (Config::touch(), unusual_edge()),
        (Config::field(), unusual_edge()),
    ] {
        let text = to_toml_digital(&c, Some(&e));
        let file = ConfigFile::parse(&text, "rt.toml").unwrap();
        assert_eq!(build_digital(None, None, Some(&file)).unwrap(), c, "{text}");
        let back = build_edge(&EdgeRequest::default(), Some(&file), &c).unwrap();
        assert_eq!(back, e, "{text}");
    }
    // Without an edge configuration the text is `to_toml`'s.
    assert_eq!(
        to_toml_digital(&Config::touch(), None),
        to_toml(&Config::touch())
    );
}

#[test]
fn every_edge_key_is_read_from_the_table() {
    // One key at a time: the built edge configuration differs from the
    // defaults (hysteresis given, as pulses need it) in that field only.
    let c = Config::touch();
    let base = EdgeConfig::new(1_000_000, TimerWidth::Bits32).with_hysteresis_permille(100);
    type Change = fn(&mut EdgeConfig);
    let cases: [(&str, Change); 7] = [
        ("tick_hz = 500000", |e| {
            e.tick_hz = 500_000;
            // Its default follows the tick rate (a 200 µs glitch filter).
            e.glitch_ticks = 100;
        }),
        ("timer_bits = 16", |e| e.timer = TimerWidth::Bits16),
        ("glitch_ticks = 9", |e| e.glitch_ticks = 9),
        ("hysteresis_permille = 300", |e| e.hysteresis_permille = 300),
        ("active_low = true", |e| e.active_low = true),
        ("stuck_high_cycles = 30000", |e| {
            e.stuck_high_cycles = 30_000
        }),
        ("input = \"level\"", |e| e.input = EdgeInput::Level),
    ];
    for (line, change) in cases {
        let text = format!("[edge]\nhysteresis_permille = 100\n{line}\n");
        // A key given twice is a TOML error: give hysteresis once.
        let text = if line.starts_with("hysteresis") {
            format!("[edge]\n{line}\n")
        } else {
            text
        };
        let file = ConfigFile::parse(&text, "one.toml").unwrap();
        let mut want = base;
        change(&mut want);
        let got = build_edge(&EdgeRequest::default(), Some(&file), &c).unwrap();
        assert_eq!(got, want, "{text}");
    }
}

#[test]
fn edge_table_messages_name_the_line_and_column() {
    let c = Config::touch();
    let edge = |text: &str| {
        ConfigFile::parse(text, "e.toml")
            .and_then(|f| build_edge(&EdgeRequest::default(), Some(&f), &c))
            .unwrap_err()
    };
    let cases = [
        // An unknown key in the table, named with the table's keys.
        (
            "[edge]\nhysteresis_permile = 100\n",
            "e.toml:2:1: unknown field `hysteresis_permile` in the [edge] table, expected one \
             of `tick_hz`, `timer_bits`, `glitch_ticks`, `hysteresis_permille`, `active_low`, \
             `stuck_high_cycles`, `input`",
        ),
        // Values of the wrong type, at the value.
        (
            "[edge]\nactive_low = 1\n",
            "e.toml:2:14: invalid type: integer `1`, expected a boolean",
        ),
        (
            "[edge]\ninput = 2\n",
            "e.toml:2:9: invalid type: integer `2`, expected a string",
        ),
        // A refused field at its key in the table: quoted and indented
        // keys, a comment naming the key first and a top-level field
        // before the table do not mislead the location.
        (
            "# tick_hz = 1\non_ratio = 3.0\n[edge]\nhysteresis_permille = 0\n  'tick_hz' = 999\n",
            "e.toml:5:3: config field `tick_hz` is 999, expected a value from 1000 to 100000000",
        ),
        (
            "[edge]\nhysteresis_permille = 0\nglitch_ticks = 5000\n",
            "e.toml:3:1: config field `glitch_ticks` is 5000, expected a value from 0 to 1515",
        ),
        // The table's own range messages and choices.
        (
            "[edge]\n\n timer_bits = 24\n",
            "e.toml:3:2: timer_bits 24: expected 16 or 32",
        ),
        (
            "[edge]\nhysteresis_permille = -1\n",
            "e.toml:2:1: hysteresis_permille = -1 does not fit the field (0 to 65535",
        ),
        (
            "[edge]\ninput = \"pulse\"\n",
            "e.toml:2:1: input `pulse`, expected \"pulses\" or \"level\"",
        ),
        // An inline table reads the same.
        (
            "edge = { hysteresis_permille = 0, stuck_high_cycles = 0 }\n",
            "e.toml:1:35: config field `stuck_high_cycles` is 0",
        ),
        // `edge` is the table's name, not a field.
        (
            "edge = 3\n",
            "e.toml:1:1: `edge` is a table of the comparator input's settings ([edge]), found integer",
        ),
    ];
    for (text, want) in cases {
        let e = edge(text);
        assert!(e.starts_with(want), "{text:?}: {e}");
    }
    // A flag and the table disagreeing: located at the table's key.
    let file = ConfigFile::parse("[edge]\n\ntick_hz = 500000\n", "e.toml").unwrap();
    let req = EdgeRequest {
        tick_hz: Some(1_000_000),
        hysteresis_permille: Some(0),
        ..EdgeRequest::default()
    };
    let e = build_edge(&req, Some(&file), &c).unwrap_err();
    assert!(
        e.starts_with("e.toml:3:1: the file's tick_hz is 500000 but --tick-hz 1000000"),
        "{e}"
    );
}

#[test]
fn the_edge_table_is_refused_for_adc_input_at_its_header() {
    let req = ConfigRequest {
        profile: None,
        mains: None,
        bits: 12,
        rate_hz: 2000,
    };
    let want = "the [edge] table applies to edge logs and polled-level logs (--bits 1) only, \
                and this input is ADC codes";
    for (text, at) in [
        (
            "on_ratio = 3.0\n\n[edge]\nhysteresis_permille = 100\n",
            "a.toml:3:1",
        ),
        ("on_ratio = 3.0\n  [ edge ]\n", "a.toml:2:3"),
        ("edge = {}\n", "a.toml:1:1"),
    ] {
        let file = ConfigFile::parse(text, "a.toml").unwrap();
        let e = build(&req, Some(&file)).unwrap_err();
        assert_eq!(e, format!("{at}: {want}"), "{text:?}");
    }
    // The same file's back end builds for an edge input.
    let file = ConfigFile::parse("on_ratio = 3.0\n[edge]\n", "a.toml").unwrap();
    let c = build_digital(None, None, Some(&file)).unwrap();
    assert_eq!(c.on_ratio, 3.0);
    // An edge input has no ADC: its back end is configured as 12 bits at
    // 2000 Hz, and a file saying otherwise is refused at the key.
    let file = ConfigFile::parse("[edge]\n", "a.toml").unwrap();
    assert_eq!(
        build_digital(None, None, Some(&file)).unwrap(),
        Config::touch()
    );
    let file = ConfigFile::parse("\nsample_rate_hz = 1000\n", "a.toml").unwrap();
    let e = build_digital(None, None, Some(&file)).unwrap_err();
    assert!(
        e.starts_with("a.toml:2:1: sample_rate_hz = 1000, but an edge or polled-level input"),
        "{e}"
    );
}

#[test]
fn to_rust_edge_names_every_field() {
    // The edge snippet builds the same value (checked field by field
    // against the struct's Debug form, which names every field).
    let e = unusual_edge();
    let text = to_rust_edge(&e);
    for (field, value) in [
        ("tick_hz", "400000"),
        ("timer", "humsense::edge::TimerWidth::Bits16"),
        ("glitch_ticks", "37"),
        ("hysteresis_permille", "250"),
        ("active_low", "true"),
        ("stuck_high_cycles", "40000"),
        ("input", "humsense::edge::EdgeInput::Level"),
    ] {
        assert!(
            text.contains(&format!("\n    {field}: {value},\n")),
            "{text}"
        );
        assert!(format!("{e:?}").contains(&format!("{field}: ")), "{e:?}");
    }
}
