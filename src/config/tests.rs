//! Unit tests of the field table, the rules and validation.

extern crate std;
use super::*;

#[test]
fn order_key_orders_like_the_floats() {
    let vals = [
        f32::MIN,
        -1000.0,
        -1.5,
        -f32::MIN_POSITIVE,
        -0.0,
        0.0,
        1e-40,
        0.5,
        1.01,
        2.2,
        10_000.0,
        f32::MAX,
    ];
    for a in vals {
        assert!(finite(a));
        for b in vals {
            assert_eq!(order_key(a) < order_key(b), a < b, "{a} {b}");
            assert_eq!(order_key(a) >= order_key(b), a >= b, "{a} {b}");
        }
    }
    assert!(!finite(f32::NAN) && !finite(f32::INFINITY) && !finite(f32::NEG_INFINITY));
}

#[test]
fn unsigned_keys_against_non_negative_limits_order_like_the_floats() {
    // Reference: IEEE 754 ordering as the host's f32 comparison gives
    // it (common practice). Every `f32` limit is non-negative.
    let vals = [
        f32::MIN,
        -1000.0,
        -1.0,
        -f32::MIN_POSITIVE,
        -1e-40,
        -0.0,
        0.0,
        1e-40,
        0.5,
        0.999_999_9,
        1.0,
        1.01,
        1.05,
        20.0,
        100.0,
        1000.0,
        1_000.000_06,
        10_000.0,
        f32::MAX,
    ];
    for rule in RULES.iter().skip(INT_RULES) {
        let (min, max) = (f32::from_bits(rule.min), f32::from_bits(rule.max));
        assert!(min >= 0.0 && min < max, "{}", rule.field);
        for v in vals {
            let key = order_key(v) as u32;
            let inside = key >= rule.min && key <= rule.max;
            assert_eq!(inside, v >= min && v <= max, "{} {v}", rule.field);
        }
    }
}

#[test]
fn adc_bits_rescale_like_the_float_products() {
    // Reference: the float formula this builder used before (host
    // f32 arithmetic with the power-of-two scale).
    for (base, spike) in [
        (Config::touch(), 1u16),
        (Config::touch(), 1_000),
        (Config::field(), 8),
        (Config::field(), u16::MAX),
    ] {
        for from in [8u8, 12, 16] {
            let start = Config {
                adc_bits: from,
                spike_floor_codes: spike,
                track_min_codes: 2.3,
                floor_codes: 1e-38,
                nohum_codes: 3e38,
                ..base
            };
            for bits in 0..=40u8 {
                let scale = if bits >= from {
                    (1u32 << (bits - from).min(16)) as f32
                } else {
                    1.0 / (1u32 << (from - bits).min(16)) as f32
                };
                let got = start.with_adc_bits(bits);
                let want_spike = ((start.spike_floor_codes as f32 * scale) as u16).max(1);
                assert_eq!(got.spike_floor_codes, want_spike, "{from} -> {bits}");
                for (g, v) in [
                    (got.track_min_codes, start.track_min_codes),
                    (got.floor_codes, start.floor_codes),
                    (got.nohum_codes, start.nohum_codes),
                ] {
                    assert_eq!(g.to_bits(), (v * scale).to_bits(), "{from} -> {bits}");
                }
                assert_eq!(got.adc_bits, bits);
            }
        }
    }
}

#[test]
fn rule_table_matches_the_fields() {
    let names: std::vec::Vec<&str> = RULES.iter().map(|r| r.field).collect();
    let pairs: std::vec::Vec<(&str, &str)> = BELOW
        .iter()
        .map(|&(small, big)| {
            assert!(small >= INT_RULES && big >= INT_RULES);
            (names[small], names[big])
        })
        .collect();
    // Each `below` of the table, in declaration order.
    let declared: std::vec::Vec<(&str, &str)> = Config::FIELDS
        .iter()
        .filter_map(|f| f.below.map(|other| (f.name, other)))
        .collect();
    assert_eq!(pairs, declared);
    // The hysteresis pairs the field docs state.
    for pair in [
        ("off_noise", "on_noise"),
        ("off_ratio", "on_ratio"),
        ("level_hysteresis_db", "level_step_db"),
    ] {
        assert!(pairs.contains(&pair), "{pair:?}");
    }
    let e = Config {
        sample_rate_hz: 399,
        ..Config::touch()
    }
    .validate(0);
    assert_eq!(
        e,
        Err(ConfigError::OutOfRange {
            field: "sample_rate_hz",
            value: ConfigValue::Int(399),
            min: ConfigValue::Int(400),
            max: ConfigValue::Int(50_000),
        })
    );
    let e = Config {
        on_ratio: 1.0,
        ..Config::touch()
    }
    .validate(0);
    assert_eq!(
        e,
        Err(ConfigError::OutOfRange {
            field: "on_ratio",
            value: ConfigValue::Float(1.0),
            min: ConfigValue::Float(1.01),
            max: ConfigValue::Float(1000.0),
        })
    );
    // 3 bins up to 66 Hz: 4.4 · 66 · 3 = 871.2 Hz, so 872 Hz.
    let e = Config::touch().with_sample_rate(400).validate(2);
    assert_eq!(
        e,
        Err(ConfigError::TooFewSamplesPerCycle {
            sample_rate_hz: 400,
            min_rate_hz: 872,
        })
    );
    assert!(Config::touch().with_sample_rate(872).validate(2).is_ok());
    assert!(Config::touch().with_sample_rate(871).validate(2).is_err());
}

/// The field names `derive(Debug)` prints for `c`, in order (the
/// compiler's own list of the struct's fields).
fn debug_fields(c: &Config) -> std::vec::Vec<std::string::String> {
    let text = std::format!("{c:?}");
    let inner = text
        .strip_prefix("Config { ")
        .and_then(|t| t.strip_suffix(" }"))
        .unwrap();
    inner
        .split(", ")
        .map(|kv| std::string::String::from(kv.split(": ").next().unwrap()))
        .collect()
}

#[test]
fn the_descriptors_list_every_field_in_order() {
    // Reference: the compiler-generated `Debug` of the struct names every
    // field in declaration order.
    let names: std::vec::Vec<&str> = Config::FIELDS.iter().map(|f| f.name).collect();
    assert_eq!(debug_fields(&Config::touch()), names);
}

#[test]
fn each_setter_changes_its_own_field_only() {
    let debug_values = |c: &Config| {
        let text = std::format!("{c:?}");
        let inner = std::string::String::from(
            text.strip_prefix("Config { ")
                .unwrap()
                .strip_suffix(" }")
                .unwrap(),
        );
        inner
            .split(", ")
            .map(std::string::String::from)
            .collect::<std::vec::Vec<_>>()
    };
    for (k, f) in Config::FIELDS.iter().enumerate() {
        let base = Config::field();
        let before = debug_values(&base);
        // A value other than the default, of the field's own kind.
        let new = match (f.kind, (f.get)(&base)) {
            (FieldKind::Int { max, .. }, FieldValue::Int(v)) => {
                FieldValue::Int(if v == max { v - 1 } else { v + 1 })
            }
            (FieldKind::Float { .. }, FieldValue::Float(v)) => FieldValue::Float(v + 0.25),
            (FieldKind::Choice { names, .. }, FieldValue::Choice(i)) => {
                FieldValue::Choice((i + 1) % names.len())
            }
            other => panic!("{}: kind and value disagree: {other:?}", f.name),
        };
        let mut c = base;
        assert!((f.set)(&mut c, new), "{}", f.name);
        assert_eq!((f.get)(&c), new, "{}", f.name);
        let after = debug_values(&c);
        for (j, (a, b)) in before.iter().zip(&after).enumerate() {
            assert_eq!(a != b, j == k, "setting {} changed {a} -> {b}", f.name);
        }
        // Another kind, or a value beyond the type, is refused and
        // changes nothing.
        let mut d = base;
        let wrong = match f.kind {
            FieldKind::Float { .. } => FieldValue::Int(1),
            _ => FieldValue::Float(1.0),
        };
        assert!(!(f.set)(&mut d, wrong), "{}", f.name);
        match f.kind {
            FieldKind::Int { type_max, .. } if type_max < u32::MAX => {
                assert!(
                    !(f.set)(&mut d, FieldValue::Int(type_max + 1)),
                    "{}",
                    f.name
                );
                assert!((f.set)(&mut d, FieldValue::Int(type_max)), "{}", f.name);
                d = base;
            }
            FieldKind::Choice {
                names, variants, ..
            } => {
                assert_eq!(names.len(), variants.len());
                assert!(
                    !(f.set)(&mut d, FieldValue::Choice(names.len())),
                    "{}",
                    f.name
                );
            }
            _ => {}
        }
        assert_eq!(d, base, "{}", f.name);
    }
}

#[test]
fn the_integer_types_are_the_declared_ones() {
    // Reference: the primitive types' MAX (core); each field's declared
    // type is what `derive(Debug)` cannot show, so pin the type bound
    // through the setter: type_max fits, type_max + 1 does not (above).
    let max = |name: &str| match Config::FIELDS.iter().find(|f| f.name == name).unwrap().kind {
        FieldKind::Int { type_max, .. } => type_max,
        k => panic!("{k:?}"),
    };
    assert_eq!(max("sample_rate_hz"), u32::MAX);
    assert_eq!(max("adc_bits"), u32::from(u8::MAX));
    assert_eq!(max("spike_floor_codes"), u32::from(u16::MAX));
}

/// `v` as the field docs write numbers: shortest form, thousands
/// separated by a space from five digits on ("50 000", "1000").
fn doc_number(v: f64) -> std::string::String {
    let s = std::format!("{v}");
    let (int, frac) = s.split_once('.').map_or((s.as_str(), ""), |(a, b)| (a, b));
    let mut out = std::string::String::new();
    if int.len() >= 5 {
        for (i, ch) in int.chars().enumerate() {
            if i > 0 && (int.len() - i) % 3 == 0 {
                out.push(' ');
            }
            out.push(ch);
        }
    } else {
        out.push_str(int);
    }
    if !frac.is_empty() {
        out.push('.');
        out.push_str(frac);
    }
    out
}

#[test]
fn the_docs_state_the_checked_ranges() {
    // Docs are contracts: every numeric field's doc says "MIN to MAX"
    // with the limits `validate` applies, and an `f32` field kept below
    // another names that field.
    for f in Config::FIELDS {
        let (min, max) = match f.kind {
            FieldKind::Int { min, max, .. } => (f64::from(min), f64::from(max)),
            FieldKind::Float { min, max } => (f64::from(min), f64::from(max)),
            FieldKind::Choice { .. } => continue,
        };
        // The f32 limits print their shortest decimal form.
        let (min, max) = match f.kind {
            FieldKind::Float { min: a, max: b } => (
                std::format!("{a}").parse::<f64>().unwrap(),
                std::format!("{b}").parse::<f64>().unwrap(),
            ),
            _ => (min, max),
        };
        let want = std::format!("{} to {}", doc_number(min), doc_number(max));
        let doc = f
            .doc
            .split_whitespace()
            .collect::<std::vec::Vec<_>>()
            .join(" ");
        assert!(
            doc.contains(&want),
            "{}: doc does not say `{want}`: {doc}",
            f.name
        );
        if let Some(other) = f.below {
            assert!(
                doc.contains(&std::format!("below `{other}`")),
                "{}: {doc}",
                f.name
            );
        }
        assert!(!f.unit.is_empty(), "{}", f.name);
    }
}

#[test]
fn the_rules_follow_the_descriptors() {
    // Every field with a range narrower than its type, and every f32
    // field, has a rule with its limits; the integer rules come first.
    let mut expected = std::vec::Vec::new();
    for float in [false, true] {
        for f in Config::FIELDS {
            match f.kind {
                FieldKind::Int { type_max, min, max } if !float && (min > 0 || max < type_max) => {
                    expected.push((f.name, min, max));
                }
                FieldKind::Float { min, max } if float => {
                    expected.push((f.name, min.to_bits(), max.to_bits()));
                }
                _ => {}
            }
        }
    }
    let got: std::vec::Vec<_> = RULES.iter().map(|r| (r.field, r.min, r.max)).collect();
    assert_eq!(got, expected);
    for (i, rule) in RULES.iter().enumerate() {
        assert_eq!(rule_index(rule.field), i);
    }
    assert_eq!(rule_index("spike_floor_codes"), NO_RULE);
    assert_eq!(rule_index("mains"), NO_RULE);
    assert_eq!(rule_index("no_such_field"), NO_RULE);
    // `raw` reads each rule's field.
    let c = Config::field();
    for (i, rule) in RULES.iter().enumerate() {
        let f = Config::FIELDS
            .iter()
            .find(|f| f.name == rule.field)
            .unwrap();
        let want = match (f.get)(&c) {
            FieldValue::Int(v) => v,
            FieldValue::Float(v) => v.to_bits(),
            FieldValue::Choice(_) => panic!("{}", f.name),
        };
        assert_eq!(c.raw(i), want, "{}", rule.field);
    }
    assert_eq!(c.raw(RULES.len()), 0);
}

#[test]
fn choices_round_trip_through_their_index() {
    for m in [MainsMode::Auto, MainsMode::Hz50, MainsMode::Hz60] {
        assert_eq!(MainsMode::from_index(m.index()), Some(m));
        assert_eq!(std::format!("{m:?}"), MainsMode::VARIANTS[m.index()]);
    }
    for p in [Profile::Touch, Profile::Field] {
        assert_eq!(Profile::from_index(p.index()), Some(p));
        assert_eq!(std::format!("{p:?}"), Profile::VARIANTS[p.index()]);
    }
    for p in [PanelMode::StrongestPad, PanelMode::Independent] {
        assert_eq!(PanelMode::from_index(p.index()), Some(p));
        assert_eq!(std::format!("{p:?}"), PanelMode::VARIANTS[p.index()]);
    }
    assert_eq!(MainsMode::NAMES, ["auto", "50", "60"]);
    assert_eq!(MainsMode::from_index(3), None);
}
