//! The reliability cases ([`humsim::reliability`]) and the bar each must
//! clear with the default touch settings. The figures themselves are
//! printed by `cargo bench -p humsim --bench reliability`.
#![allow(clippy::unwrap_used, clippy::indexing_slicing)]

use humsense::Fault;
use humsim::reliability::{cases, run, Outcome};

fn outcome(name: &str) -> Outcome {
    let case = cases().into_iter().find(|c| c.name == name).unwrap();
    let o = run(&case).unwrap();
    println!("{}", o.bench_line());
    o
}

/// No false touch in any case (DESIGN.md §4: no false events with default
/// settings).
fn no_false_touch(o: &Outcome) {
    assert_eq!(o.score.false_events(), 0, "{}", o.bench_line());
}

fn every_touch(o: &Outcome) {
    no_false_touch(o);
    assert_eq!(o.missed(), 0, "{}", o.bench_line());
    assert!(o.score.labels() >= 6, "{}", o.bench_line());
}

#[test]
fn esd_at_every_contact_level_idle_and_touched() {
    // IEC 61000-4-2 contact levels 2, 4, 6, 8 kV: every touch once, none
    // split by a discharge, none invented; no fault from a few saturated
    // samples.
    let o = outcome("esd");
    every_touch(&o);
    assert!(o.faults.is_empty(), "{}", o.bench_line());
}

#[test]
fn frequency_steps_of_1_and_4_percent_and_dips_to_40_percent() {
    // EN 50160: ±1 % for 99.5 % of a year, +4 % at the limit; dips of
    // 200 ms to 40 % residual. The tracker follows within the 47-52 Hz
    // range: no mains fault, every touch.
    let o = outcome("supply-steps");
    every_touch(&o);
    assert!(o.faults.is_empty(), "{}", o.bench_line());
}

#[test]
fn ambient_ten_times_and_back_invents_no_touch() {
    // A lamp raising every pad's hum tenfold is ambient to the panel rule:
    // no false event, and the touches before and after the lamp is on are
    // found. (Touches while it is on rise only 2.03-2.04x over the raised
    // ambient, which the ambient rule rescales every baseline to at once,
    // below the 2.8x on ratio: they are counted in the figures, not
    // asserted; the README's reliability section gives the numbers and why
    // an excess criterion is not used for them.)
    let o = outcome("ambient-x10");
    no_false_touch(&o);
    for ch in &o.score.channels {
        for t in &ch.missed_at_s {
            assert!(
                (5.0..17.0).contains(t),
                "missed at {t} s: {}",
                o.bench_line()
            );
        }
    }
    assert!(o.score.detected() >= 3, "{}", o.bench_line());
}

/// Exactly one span of `fault`, raised within `raised` seconds and cleared
/// within `cleared` seconds; any other fault is `MainsLost` (a single pad
/// without hum leaves the tracker nothing to lock to) inside the same
/// window, which opens at `from` seconds.
fn one_span(o: &Outcome, fault: Fault, from: f64, raised: (f64, f64), cleared: (f64, f64)) {
    for f in &o.faults {
        if f.fault != fault {
            assert_eq!(f.fault, Fault::MainsLost, "{}", o.bench_line());
            assert!(f.raised_s > from, "{}", o.bench_line());
            assert!(f.cleared_s.unwrap() < cleared.1 + 1.0, "{}", o.bench_line());
        }
    }
    let spans = o.spans(fault);
    assert_eq!(spans.len(), 1, "{}", o.bench_line());
    let s = spans[0];
    assert!(
        (raised.0..=raised.1).contains(&s.raised_s),
        "{fault:?} raised at {}: {}",
        s.raised_s,
        o.bench_line()
    );
    let c = s.cleared_s.unwrap();
    assert!(
        (cleared.0..=cleared.1).contains(&c),
        "{fault:?} cleared at {c}: {}",
        o.bench_line()
    );
}

#[test]
fn a_stuck_converter_is_a_fault_and_recovers() {
    // Frozen from 10 to 14 s: `Stuck` after fault_stuck_cycles (25) of
    // 50 Hz cycles, counted from the cycle after the codes stop (README
    // fault table): 10.5 to 10.6 s; cleared in the first cycle that moves.
    let o = outcome("adc-stuck");
    every_touch(&o);
    one_span(&o, Fault::Stuck, 10.0, (10.5, 10.62), (14.0, 14.05));
}

#[test]
fn ten_seconds_at_the_top_rail_is_saturation_and_recovers() {
    // At the top rail from 10 to 20 s: `Saturated` after
    // fault_saturation_cycles (50): 11.0 s, give or take a cycle; cleared
    // once it leaves the rail.
    let o = outcome("adc-saturated");
    every_touch(&o);
    one_span(&o, Fault::Saturated, 10.0, (10.98, 11.06), (20.0, 20.1));
}

#[test]
fn a_disconnected_electrode_is_no_hum_and_recovers() {
    // No electrode from 10 to 50 s: `NoHum` after nohum_cycles (1500: 30 s
    // at 50 Hz): 40 s, give or take a cycle; cleared when the hum returns.
    let o = outcome("disconnected");
    every_touch(&o);
    one_span(&o, Fault::NoHum, 10.0, (39.9, 40.1), (50.0, 50.1));
}

#[test]
fn a_clock_2_percent_off_still_detects_every_touch() {
    // 2 % fast or slow: the tracker sees 51 or 49 Hz, inside EN 50160's
    // 47-52 Hz: no fault, every touch.
    for name in ["rate-fast", "rate-slow"] {
        let o = outcome(name);
        every_touch(&o);
        assert!(o.faults.is_empty(), "{}", o.bench_line());
    }
}
