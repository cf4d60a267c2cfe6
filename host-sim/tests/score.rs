//! Scoring rules, checked by hand-worked small cases.
#![allow(clippy::unwrap_used)]

use humsense::{Event, EventKind, Fault};
use humsim::labels::{Label, LabelFile, LabelKind, Span};
use humsim::score::{score_events, LatencyStats, ScoreOptions};

const RATE: f64 = 2000.0;

fn touch(ch: &str, start_s: f64, end_s: f64) -> Label {
    Label {
        channel: ch.into(),
        kind: LabelKind::Touch,
        start_s,
        end_s,
    }
}

/// An event at `t` seconds on channel `ch` (sample = t · 2000).
fn ev(ch: u8, kind: EventKind, t: f64) -> Event {
    Event::new(ch, kind, (t * RATE).round() as u64, 0, 0)
}

fn names(n: &[&str]) -> Vec<String> {
    n.iter().map(|s| s.to_string()).collect()
}

fn close(a: &[f64], b: &[f64]) {
    assert_eq!(a.len(), b.len(), "{a:?} vs {b:?}");
    for (x, y) in a.iter().zip(b) {
        assert!((x - y).abs() < 1e-6, "{a:?} vs {b:?}");
    }
}

#[test]
fn three_touches_known_times() {
    // Worked by hand: on latencies 40, 60, 100 ms; off latencies
    // 1.56 − 1.5 = 60, 2.26 − 2.2 = 60, 3.36 − 3.4 = −40 ms.
    let labels = vec![
        touch("pad", 1.0, 1.5),
        touch("pad", 2.0, 2.2),
        touch("pad", 3.0, 3.4),
    ];
    let events = [
        ev(0, EventKind::TouchOn, 1.04),
        ev(0, EventKind::TouchOff, 1.56),
        ev(0, EventKind::TouchOn, 2.06),
        ev(0, EventKind::TouchOff, 2.26),
        ev(0, EventKind::TouchOn, 3.10),
        ev(0, EventKind::TouchOff, 3.36),
    ];
    let s = score_events(
        &events,
        RATE,
        &names(&["pad"]),
        &labels,
        &ScoreOptions::TOUCH,
    )
    .unwrap();
    assert_eq!(
        (s.labels(), s.detected(), s.missed(), s.false_events()),
        (3, 3, 0, 0)
    );
    assert!(s.perfect());
    close(&s.channels[0].on_latency_ms, &[40.0, 60.0, 100.0]);
    close(&s.channels[0].off_latency_ms, &[60.0, 60.0, -40.0]);
    let on = s.on_latency().unwrap();
    // Median of {40, 60, 100} = 60; nearest rank ⌈0.95·3⌉ = 3 → 100.
    assert_eq!(on.count, 3);
    close(&[on.median_ms, on.p95_ms, on.max_ms], &[60.0, 100.0, 100.0]);
    let off = s.off_latency().unwrap();
    // Sorted {−40, 60, 60}: median 60, rank 3 → 60, max 60.
    assert!((off.median_ms - 60.0).abs() < 1e-6 && (off.p95_ms - 60.0).abs() < 1e-6);
    assert!((off.max_ms - 60.0).abs() < 1e-6);
}

#[test]
fn double_report_missed_and_stray_are_counted() {
    let labels = vec![
        touch("a", 1.0, 1.5), // reported twice: one detection, one false
        touch("a", 4.0, 4.2), // nothing: missed
        touch("b", 2.0, 2.1), // on event 0.2 s after the end: inside the 0.25 s grace
        touch("b", 6.0, 6.1), // on event 0.26 s after the end: outside: missed + false
    ];
    let events = [
        ev(0, EventKind::TouchOn, 1.04),
        ev(0, EventKind::TouchOff, 1.10),
        ev(0, EventKind::TouchOn, 1.20),
        ev(0, EventKind::TouchOff, 1.60),
        ev(1, EventKind::TouchOn, 2.30),
        ev(1, EventKind::TouchOff, 2.40),
        ev(0, EventKind::TouchOn, 5.00), // far from any label: false
        ev(1, EventKind::TouchOn, 6.36),
    ];
    let s = score_events(
        &events,
        RATE,
        &names(&["a", "b"]),
        &labels,
        &ScoreOptions::TOUCH,
    )
    .unwrap();
    let a = &s.channels[0];
    assert_eq!(
        (a.labels, a.detected, a.missed, a.false_events),
        (2, 1, 1, 2)
    );
    close(&a.false_at_s, &[1.2, 5.0]);
    close(&a.missed_at_s, &[4.0]);
    close(&a.on_latency_ms, &[40.0]);
    // The off event of the matched on event is the first one after it (1.10 s).
    close(&a.off_latency_ms, &[-400.0]);
    let b = &s.channels[1];
    assert_eq!((b.detected, b.missed, b.false_events), (1, 1, 1));
    close(&b.on_latency_ms, &[300.0]);
    // The last on event has no off event, but it is false, so off_missing stays 0.
    assert_eq!(b.off_missing, 0);
    assert_eq!((s.missed(), s.false_events()), (2, 3));
    assert!(!s.perfect());
}

#[test]
fn a_missed_touch_does_not_take_the_next_touch_s_event() {
    // A [1.0, 1.25] is missed; the on event at 1.35 s lies inside A's grace
    // window and inside B: it belongs to B, which started last.
    let labels = vec![touch("p", 1.0, 1.25), touch("p", 1.3, 1.55)];
    let events = [
        ev(0, EventKind::TouchOn, 1.35),
        ev(0, EventKind::TouchOff, 1.6),
    ];
    let s = score_events(&events, RATE, &names(&["p"]), &labels, &ScoreOptions::TOUCH).unwrap();
    let c = &s.channels[0];
    assert_eq!((c.detected, c.missed, c.false_events), (1, 1, 0));
    close(&c.missed_at_s, &[1.0]);
    close(&c.on_latency_ms, &[50.0]);
    close(&c.off_latency_ms, &[50.0]);
}

#[test]
fn faults_levels_and_other_kinds_are_not_touches() {
    let labels = vec![
        touch("p", 1.0, 1.5),
        Label {
            channel: "p".into(),
            kind: LabelKind::Field,
            start_s: 3.0,
            end_s: 4.0,
        },
    ];
    let events = [
        ev(0, EventKind::Fault(Fault::Saturated), 0.5),
        ev(0, EventKind::TouchOn, 1.02),
        ev(0, EventKind::FaultClear(Fault::Saturated), 1.1),
        ev(0, EventKind::TouchOff, 1.52),
        ev(0, EventKind::FieldOn, 2.0),
        ev(0, EventKind::Level(2), 2.1),
    ];
    let s = score_events(&events, RATE, &names(&["p"]), &labels, &ScoreOptions::TOUCH).unwrap();
    let c = &s.channels[0];
    assert_eq!(
        (c.labels, c.detected, c.false_events, c.faults),
        (1, 1, 0, 1)
    );
    close(&c.off_latency_ms, &[20.0]);
    // Scoring fields instead: the field label is matched by the field-on
    // 1 s before it (inside FIELD's 3 s early window), latency −1000 ms.
    let f = score_events(&events, RATE, &names(&["p"]), &labels, &ScoreOptions::FIELD).unwrap();
    let c = &f.channels[0];
    assert_eq!(
        (c.labels, c.detected, c.false_events, c.off_missing),
        (1, 1, 0, 1)
    );
    close(&c.on_latency_ms, &[-1000.0]);
}

#[test]
fn unknown_channels_are_errors() {
    let e = score_events(
        &[],
        RATE,
        &names(&["a"]),
        &[touch("zz", 1.0, 2.0)],
        &ScoreOptions::TOUCH,
    )
    .unwrap_err();
    assert!(e.contains("`zz`") && e.contains("channels are: a"), "{e}");
    let e = score_events(
        &[ev(3, EventKind::TouchOn, 1.0)],
        RATE,
        &names(&["a"]),
        &[],
        &ScoreOptions::TOUCH,
    )
    .unwrap_err();
    assert!(e.contains("channel index 3"), "{e}");
    assert!(score_events(&[], 0.0, &names(&["a"]), &[], &ScoreOptions::TOUCH).is_err());
}

#[test]
fn percentiles_by_nearest_rank() {
    // Nearest-rank percentile (textbook definition, from memory): for
    // 1..=20, P95 is the value at rank ⌈0.95·20⌉ = 19; the median of an
    // even count is the mean of the two middle values, (10 + 11) / 2.
    let v: Vec<f64> = (1..=20).rev().map(f64::from).collect();
    let s = LatencyStats::of(&v).unwrap();
    assert_eq!(
        (s.median_ms, s.p95_ms, s.max_ms, s.count),
        (10.5, 19.0, 20.0, 20)
    );
    // 1..=100: rank 95.
    let v: Vec<f64> = (1..=100).map(f64::from).collect();
    assert_eq!(LatencyStats::of(&v).unwrap().p95_ms, 95.0);
    let one = LatencyStats::of(&[7.0]).unwrap();
    assert_eq!((one.median_ms, one.p95_ms, one.max_ms), (7.0, 7.0, 7.0));
    assert!(LatencyStats::of(&[]).is_none());
    assert!(LatencyStats::of(&[1.0, f64::NAN]).is_none());
}

#[test]
fn label_files_parse_and_errors_name_line_and_column() {
    let file = LabelFile::parse(
        "channel,kind,start_s,end_s\npad,touch,1.0,1.5\n\nprobe,field,2,3\n",
        "l.csv",
    )
    .unwrap();
    assert_eq!(
        file.labels,
        vec![
            touch("pad", 1.0, 1.5),
            Label {
                channel: "probe".into(),
                kind: LabelKind::Field,
                start_s: 2.0,
                end_s: 3.0
            }
        ]
    );
    let cases = [
        ("", "l.csv: empty labels file"),
        ("a,b\n", "l.csv:1:1: expected the header"),
        (
            "channel,kind,start_s,end_s\npad,tap,1,2\n",
            "l.csv:2:5: kind `tap`",
        ),
        (
            "channel,kind,start_s,end_s\npad,touch,x,2\n",
            "l.csv:2:11: start_s `x`",
        ),
        (
            "channel,kind,start_s,end_s\npad,touch,1,0.5\n",
            "l.csv:2:13: end_s 0.5 is before",
        ),
        (
            "channel,kind,start_s,end_s\npad,touch,1\n",
            "l.csv:2:1: expected 4 cells",
        ),
        (
            "channel,kind,start_s,end_s\n,touch,1,2\n",
            "l.csv:2:1: empty channel name",
        ),
    ];
    for (text, want) in cases {
        let e = LabelFile::parse(text, "l.csv").unwrap_err();
        assert!(e.starts_with(want), "{text:?}: got {e}");
    }
    // Checks against the input name the label's line (line 4: after a
    // blank line), for an unknown channel and for a label past the end.
    let names = ["pad".to_string(), "probe".to_string()];
    assert!(file
        .check(&names, &Span::of_input(0.0, 4.0, 2000.0))
        .is_ok());
    let e = file
        .check(&names[..1], &Span::of_input(0.0, 4.0, 2000.0))
        .unwrap_err();
    assert!(
        e.starts_with("l.csv:4: label `probe,field,2,3` is for channel `probe`"),
        "{e}"
    );
    let e = file
        .check(&names, &Span::of_input(0.0, 2.5, 2000.0))
        .unwrap_err();
    assert!(
        e.starts_with(
            "l.csv:4: label `probe,field,2,3` ends after the input, which lasts 2.5000 s"
        ),
        "{e}"
    );
    // Labels of the other kind are named in a warning, not dropped silently.
    let (touches, warning) = file.of_kind(LabelKind::Touch);
    assert_eq!(touches, vec![touch("pad", 1.0, 1.5)]);
    assert_eq!(
        warning.as_deref(),
        Some(
            "l.csv: 1 `field` label(s) not scored: the touch profile scores `touch` labels \
             (pass --profile field to score them)"
        )
    );
}
