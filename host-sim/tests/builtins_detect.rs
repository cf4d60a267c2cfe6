//! Every built-in scenario through the detector with default settings,
//! scored against its own ground-truth labels (`humsim::selfcheck`): touch
//! labels with the touch profile (every touch detected once, no false
//! event, on latency p95 ≤ 100 ms), field labels with the field profile
//! (every interval found, no false event).
//!
//! The comparator built-ins (`humsim::builtin::DIGITAL`) are checked
//! through what they are made for: the edge log `humsim simulate
//! --digital` writes, read back and replayed through the edge input with
//! the default touch settings and the board's own comparator description
//! (its hysteresis ratio, and `level` input behind a heavy RC): every
//! touch detected once, no false event, no fault; their latencies are
//! printed.
#![allow(
    clippy::unwrap_used,
    clippy::expect_used,
    clippy::indexing_slicing,
    clippy::panic
)]

use humsense::Profile;
use humsim::input::{EdgeLog, Input};
use humsim::labels::LabelKind;
use humsim::replay::replay_input;
use humsim::scenario::{RenderOptions, Scenario};
use humsim::score::{score_events, ScoreOptions};
use humsim::selfcheck::score_builtin;

fn check(name: &str, kind: LabelKind) -> String {
    let Some(score) = score_builtin(name, kind, &|_| {}).unwrap() else {
        return String::new();
    };
    let mut problems = String::new();
    if score.missed() > 0 || score.false_events() > 0 || score.faults() > 0 {
        problems = format!(
            "{name} ({kind:?}): {} of {} detected, {} missed, {} false, {} faults\n{}",
            score.detected(),
            score.labels(),
            score.missed(),
            score.false_events(),
            score.faults(),
            score.table()
        );
    }
    if let Some(on) = score.on_latency() {
        // DESIGN.md §4: touch-on latency p95 ≤ 100 ms at 50 Hz (the
        // project's bar); field events are slower by design.
        if kind == LabelKind::Touch && on.p95_ms > 100.0 {
            problems.push_str(&format!("{name}: touch-on p95 {:.0} ms\n", on.p95_ms));
        }
    }
    if kind == LabelKind::Touch {
        // Every touch released, each within 100 ms of the finger lifting,
        // also when the ambient changed during the touch (the project's
        // bar, the same as for touch-on).
        if score.off_missing() > 0 {
            problems.push_str(&format!(
                "{name}: {} touches never released\n",
                score.off_missing()
            ));
        }
        if let Some(off) = score.off_latency() {
            if off.max_ms > 100.0 {
                problems.push_str(&format!("{name}: touch-off max {:.0} ms\n", off.max_ms));
            }
        }
    }
    problems
}

/// A digital built-in's edge log through the edge input; the problems
/// found, and the latency line.
fn check_digital(name: &str) -> (String, String) {
    let s = Scenario::builtin(name).unwrap();
    let seconds = s.duration_s();
    let labels = s.labels(seconds);
    let mut render = s
        .render(&RenderOptions {
            seconds: Some(seconds),
            seed: None,
        })
        .unwrap();
    let mut log = Vec::new();
    humsim::digital::write_edge_log(&mut render, &mut log, |_| {}).unwrap();
    let board = humsim::digital::board_settings(&s).unwrap();
    let edge = board.edge_config(1_000_000);
    let mut input = Input::Edges(Box::new(
        EdgeLog::from_reader(name.into(), Box::new(std::io::Cursor::new(log))).unwrap(),
    ));
    let cfg = humsim::configfile::build_digital(Some(Profile::Touch), None, None).unwrap();
    let out = replay_input(&mut input, &cfg, Some(&edge), &mut |_| Ok(()), None, true).unwrap();
    let names = s.channel_names();
    let opts = ScoreOptions::for_kind(LabelKind::Touch);
    let score = score_events(&out.events, 1e6, &names, &labels, &opts).unwrap();
    let mut problems = String::new();
    if score.missed() > 0 || score.false_events() > 0 || score.faults() > 0 {
        problems = format!(
            "{name} (edge log, {}): {} of {} detected, {} missed, {} false, {} faults\n{}",
            board.flags(),
            score.detected(),
            score.labels(),
            score.missed(),
            score.false_events(),
            score.faults(),
            score.table()
        );
    }
    // Touches are in the labels, and each was found once.
    assert!(score.labels() >= 4, "{name}: {} labels", score.labels());
    let on = score.on_latency().map_or("no detection".into(), |l| {
        format!(
            "on latency median {:.1} ms, p95 {:.1} ms, max {:.1} ms",
            l.median_ms, l.p95_ms, l.max_ms
        )
    });
    (
        problems,
        format!("{name:<22} {} touches, {on}", score.labels()),
    )
}

#[test]
fn every_digital_builtin_passes_its_own_labels_through_its_edge_log() {
    let mut all = String::new();
    let mut latencies = String::new();
    assert_eq!(humsim::builtin::DIGITAL.len(), 6);
    for name in humsim::builtin::DIGITAL {
        let (problems, latency) = check_digital(name);
        all.push_str(&problems);
        latencies.push_str(&latency);
        latencies.push('\n');
    }
    // Reported, not asserted: `cargo test --test builtins_detect -- --nocapture`.
    println!("{latencies}");
    assert!(all.is_empty(), "\n{all}");
}

#[test]
fn every_builtin_passes_its_own_labels() {
    let mut all = String::new();
    let names = humsim::builtin::names();
    assert!(names.len() >= 10, "{} built-ins", names.len());
    for name in names {
        if humsim::builtin::DIGITAL.contains(&name) {
            continue;
        }
        all.push_str(&check(name, LabelKind::Touch));
        all.push_str(&check(name, LabelKind::Field));
    }
    assert!(all.is_empty(), "\n{all}");
}

#[test]
fn a_field_is_released_after_an_ambient_step_and_a_lamp_alone_reports_nothing() {
    // `field-lamp-step`: a lamp switched on while a live cord is reported
    // (ambient about 2.3x within one mains cycle) and left on past the
    // withdrawal; the lamp alone with nothing near; an approach under the
    // lamp, switched off at the cord; one without it. Every interval found
    // once, no false event (the lamp alone reports nothing), and each
    // field released within 2 s of the interval's end: the window's 0.5 s,
    // the 10-cycle off debounce, and the tail of a withdrawal between the
    // labels' edge (the cord's coupling 3x the room's ambient) and the off
    // threshold (1.25x the ambient estimate, which carries what it learnt
    // of the slow approach before the field was reported). The bar is the
    // project's for this case; `humsim replay` of the rendered scenario
    // prints the latencies.
    let score = score_builtin("field-lamp-step", LabelKind::Field, &|_| {})
        .unwrap()
        .unwrap();
    assert_eq!(score.labels(), 3);
    assert!(
        score.missed() == 0 && score.false_events() == 0 && score.faults() == 0,
        "{}",
        score.table()
    );
    assert_eq!(score.off_missing(), 0, "{}", score.table());
    let off = score.off_latency().unwrap();
    assert_eq!(off.count, 3);
    assert!(off.max_ms <= 2_000.0, "{}", score.table());
}
