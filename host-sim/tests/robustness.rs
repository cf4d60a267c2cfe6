//! No panic for any scenario text; the render path honours the mains range.

use humsim::scenario::{RenderOptions, Scenario};
use proptest::prelude::*;

fn render_codes(s: &Scenario, seconds: f64) -> Option<Vec<u16>> {
    let mut r = s
        .render(&RenderOptions {
            seconds: Some(seconds),
            seed: Some(1),
        })
        .ok()?;
    let mut out = Vec::new();
    let mut block = vec![0u16; 256 * r.channels()];
    loop {
        let n = r.fill(&mut block);
        if n == 0 {
            break;
        }
        out.extend_from_slice(&block[..n * r.channels()]);
    }
    Some(out)
}

/// Replaces the `k`-th numeric literal of `src` with `value`.
fn mutate(src: &str, k: usize, value: &str) -> String {
    let mut out = String::new();
    let mut seen = 0;
    for line in src.lines() {
        match line.split_once(" = ") {
            Some((key, v)) if v.trim().parse::<f64>().is_ok() => {
                if seen == k {
                    out.push_str(&format!("{key} = {value}\n"));
                } else {
                    out.push_str(line);
                    out.push('\n');
                }
                seen += 1;
            }
            _ => {
                out.push_str(line);
                out.push('\n');
            }
        }
    }
    out
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(200))]

    // Any numeric key of any built-in set to any value (negative, huge, nan,
    // inf, wrong type): parsing never panics, an error names a key, and what
    // parses renders without panicking to codes within the ADC's range.
    #[test]
    fn mutated_builtins_never_panic(
        which in 0usize..12,
        k in 0usize..40,
        value in prop_oneof![
            any::<f64>().prop_map(|v| format!("{v:e}")),
            (-1e3f64..1e3).prop_map(|v| format!("{v:e}")),
            Just("nan".to_string()),
            Just("-inf".to_string()),
            Just("0".to_string()),
            Just("\"text\"".to_string()),
            Just("[1, 2]".to_string()),
        ],
    ) {
        let names = humsim::builtin::names();
        let name = names[which % names.len()];
        let src = humsim::builtin::source(name).unwrap();
        let text = mutate(src, k, &value);
        match Scenario::from_toml_str(&text, "mutated.toml") {
            Ok(s) => {
                if let Some(codes) = render_codes(&s, 0.05) {
                    let max = s.adc.max_code();
                    prop_assert!(codes.iter().all(|&c| c <= max));
                }
            }
            Err(e) => {
                prop_assert!(e.to_string().starts_with("mutated.toml"), "{}", e);
                prop_assert!(e.key.is_some() || e.line.is_some(), "{}", e);
            }
        }
    }

    // Arbitrary bytes as a scenario: an error, never a panic.
    #[test]
    fn arbitrary_text_never_panics(text in ".{0,200}") {
        let _ = Scenario::from_toml_str(&text, "junk.toml");
    }
}

// The render path keeps the instantaneous mains frequency inside the
// configured EN 50160 always-range (47–52 Hz; EN 50160:2010 §4.2.1,
// secondary), and a frequency step lands where asked.
#[test]
fn rendered_mains_frequency_stays_in_range() {
    let s = Scenario::builtin("drift-50hz").unwrap();
    let mut r = s.render(&RenderOptions::default()).unwrap();
    let mut block = vec![0u16; 20 * r.channels()];
    let (mut lo, mut hi) = (f64::MAX, f64::MIN);
    while r.fill(&mut block) > 0 {
        lo = lo.min(r.mains_frequency());
        hi = hi.max(r.mains_frequency());
    }
    assert!(lo >= 47.0 && hi <= 52.0, "{lo}..{hi}");
    assert!(
        lo < 47.3 && hi > 51.7,
        "sweep should cross the range: {lo}..{hi}"
    );

    let s = Scenario::builtin("mains-events").unwrap();
    let mut r = s
        .render(&RenderOptions {
            seconds: Some(14.0),
            seed: None,
        })
        .unwrap();
    let mut block = vec![0u16; 1000];
    while r.fill(&mut block) > 0 {}
    assert!(
        (r.mains_frequency() - 50.4).abs() < 0.1,
        "{}",
        r.mains_frequency()
    );
}
