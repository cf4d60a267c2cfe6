//! Edge logs and polled-level logs: `simulate --digital` → `replay` and
//! `tune` through the command line, agreement with the core crate's
//! `EdgeDetector`, the plot, and what an edge log holds.
#![allow(clippy::unwrap_used, clippy::indexing_slicing)]

#[path = "support/cli.rs"]
mod cli;
use cli::{p, run};
use humsense::Event;
use humsim::configfile::build_digital;
use humsim::edgeinput::full_edge_events;
use humsim::input::{EdgeLog, Input};
use humsim::replay::replay_input;
use std::path::PathBuf;

fn tmp(name: &str) -> PathBuf {
    cli::scratch("edges", name)
}

/// The `all` row of a score table: labels, detected, missed, false.
fn all_row(stderr: &str) -> Vec<String> {
    let line = stderr
        .lines()
        .find(|l| l.starts_with("all "))
        .unwrap_or_else(|| panic!("no score in:\n{stderr}"));
    line.split_whitespace()
        .skip(1)
        .take(4)
        .map(String::from)
        .collect()
}

/// `(channel, event)` of each output row, and the times.
fn events(out: &str) -> Vec<(String, String, f64)> {
    let mut lines = out.lines();
    assert_eq!(lines.next(), Some("time_s,channel,event,value"));
    lines
        .map(|l| {
            let c: Vec<&str> = l.split(',').collect();
            assert_eq!(c.len(), 4, "{l}");
            // At least 6 decimals (DESIGN: at least 4).
            assert!(c[0].split('.').nth(1).unwrap().len() >= 6, "{l}");
            (c[1].to_string(), c[2].to_string(), c[0].parse().unwrap())
        })
        .collect()
}

#[test]
fn an_edge_log_round_trips_through_simulate_and_replay() {
    let log = tmp("amb.csv");
    let labels = tmp("amb.csv.labels.csv");
    let (code, _, err) = run(&[
        "simulate",
        "comparator-ambient",
        "--digital",
        "--seconds",
        "8",
        "-o",
        p(&log),
    ]);
    assert_eq!(code, 0, "{err}");
    // The summary says how to replay it: the scenario's h/Vt is
    // 0.2 mV / 1.2 mV = 0.1667 (computed).
    assert!(err.contains("--hysteresis-permille 167"), "{err}");
    // The contract: header, start rows at 0 for each channel, rows in time
    // order with 6 decimals, levels 0/1 changing at every row but the end
    // rows.
    let text = std::fs::read_to_string(&log).unwrap();
    let mut lines = text.lines();
    assert_eq!(lines.next(), Some("time_s,channel,level"));
    let rows: Vec<(f64, String, u8)> = lines
        .map(|l| {
            let c: Vec<&str> = l.split(',').collect();
            assert_eq!(c.len(), 3, "{l}");
            assert_eq!(c[0].split('.').nth(1).unwrap().len(), 6, "{l}");
            (
                c[0].parse().unwrap(),
                c[1].to_string(),
                c[2].parse().unwrap(),
            )
        })
        .collect();
    assert_eq!(rows[0], (0.0, "hob".into(), 0));
    assert_eq!(rows[1], (0.0, "timer".into(), 0));
    assert!(rows.windows(2).all(|w| w[0].0 <= w[1].0));
    let n = rows.len();
    assert_eq!(rows[n - 1].0, 8.0);
    assert_eq!(rows[n - 2].0, 8.0);
    let mut level = std::collections::HashMap::new();
    for (t, ch, l) in &rows[..n - 2] {
        let before = level.insert(ch.clone(), *l);
        if *t > 0.0 {
            assert_eq!(before, Some(1 - *l), "{t} {ch}");
        }
    }
    // At rest the ambient hum (about twice the threshold) pulses the pins
    // once a mains cycle: about 50 rising edges a second per channel
    // between the first touch at 2 s and the start (common practice:
    // 50 Hz mains).
    let rising = rows
        .iter()
        .filter(|(t, ch, l)| *t > 0.0 && *t < 1.9 && ch == "hob" && *l == 1)
        .count();
    assert!((93..=96).contains(&rising), "{rising}");

    let (code, out, err) = run(&[
        "replay",
        p(&log),
        "--hysteresis-permille",
        "167",
        "--labels",
        p(&labels),
    ]);
    assert_eq!(code, 0, "{err}");
    // The first 8 s hold three touches (2.0 s hob, 4.5 s timer, 7.0 s
    // hob, held 2 s: its off comes after the log's end).
    assert_eq!(all_row(&err), ["3", "3", "0", "0"], "{err}");
    let ev = events(&out);
    let kinds: Vec<(&str, &str)> = ev
        .iter()
        .map(|(c, e, _)| (c.as_str(), e.as_str()))
        .collect();
    assert_eq!(
        kinds,
        [
            ("hob", "touch-on"),
            ("hob", "touch-off"),
            ("timer", "touch-on"),
            ("timer", "touch-off"),
            ("hob", "touch-on"),
        ]
    );
    // Each on within 100 ms of its touch (DESIGN.md §4).
    for ((_, _, t), at) in ev.iter().filter(|e| e.1 == "touch-on").zip([2.0, 4.5, 7.0]) {
        assert!(*t > at && *t < at + 0.1, "{t} for the touch at {at}");
    }
}

#[test]
fn a_polled_level_log_round_trips_with_bits_1() {
    let log = tmp("silent-polled.csv");
    let labels = tmp("silent-polled.csv.labels.csv");
    let (code, _, err) = run(&[
        "simulate",
        "comparator-silent",
        "--digital",
        "--poll-hz",
        "10000",
        "--time-column",
        "-o",
        p(&log),
    ]);
    assert_eq!(code, 0, "{err}");
    assert!(err.contains("--bits 1"), "{err}");
    let text = std::fs::read_to_string(&log).unwrap();
    let mut lines = text.lines();
    assert_eq!(lines.next(), Some("time_s,gate"));
    // 14 s at 10 kHz: 140 000 reads.
    assert_eq!(text.lines().count(), 140_001);
    assert!(lines.all(|l| l.ends_with(",0") || l.ends_with(",1")));
    let (code, out, err) = run(&[
        "replay",
        p(&log),
        "--bits",
        "1",
        "--hysteresis-permille",
        "167",
        "--labels",
        p(&labels),
    ]);
    assert_eq!(code, 0, "{err}");
    assert_eq!(all_row(&err), ["4", "4", "0", "0"], "{err}");
    // The same scenario as an edge log: the same events, each within a
    // mains window (20 ms) of the polled log's.
    let edges = tmp("silent-edges.csv");
    let (code, _, err) = run(&[
        "simulate",
        "comparator-silent",
        "--digital",
        "-o",
        p(&edges),
    ]);
    assert_eq!(code, 0, "{err}");
    let (code, out2, err) = run(&["replay", p(&edges), "--hysteresis-permille", "167"]);
    assert_eq!(code, 0, "{err}");
    let (a, b) = (events(&out), events(&out2));
    assert_eq!(a.len(), 8, "{out}");
    assert_eq!(a.len(), b.len(), "{out}\n{out2}");
    for (x, y) in a.iter().zip(&b) {
        assert_eq!((&x.0, &x.1), (&y.0, &y.1));
        assert!((x.2 - y.2).abs() <= 0.021, "{x:?} {y:?}");
    }
    // Without the time column, --rate gives the read rate.
    let plain: String = text
        .lines()
        .map(|l| l.split_once(',').map_or(l, |(_, r)| r).to_string() + "\n")
        .collect();
    let bare = tmp("silent-bare.csv");
    std::fs::write(&bare, plain).unwrap();
    let (code, out3, err) = run(&[
        "replay",
        p(&bare),
        "--bits",
        "1",
        "--rate",
        "10000",
        "--hysteresis-permille",
        "167",
    ]);
    assert_eq!(code, 0, "{err}");
    assert_eq!(out3, out);
    // Tune records the polled log's cycles once and checks its choice by
    // a full run through EdgeDetector; the [edge] table it writes has the
    // read rate as tick_hz.
    let toml = tmp("silent-polled.toml");
    let (code, tuned, err) = run(&[
        "tune",
        p(&log),
        "--bits",
        "1",
        "--labels",
        p(&labels),
        "--hysteresis-permille",
        "167",
        "--points",
        "30",
        "--out",
        p(&toml),
    ]);
    assert_eq!(code, 0, "{err}\n{tuned}");
    assert!(tuned.contains("a full replay reproduced its"), "{tuned}");
    let text = std::fs::read_to_string(&toml).unwrap();
    assert!(text.contains("tick_hz = 10000\n"), "{text}");
}

#[test]
fn replay_of_an_edge_log_equals_the_edge_detector_itself() {
    let log = tmp("esd.csv");
    let (code, _, err) = run(&[
        "simulate",
        "comparator-esd",
        "--digital",
        "--seconds",
        "16",
        "-o",
        p(&log),
    ]);
    assert_eq!(code, 0, "{err}");
    let cfg = build_digital(None, None, None).unwrap();
    let edge = humsense::edge::EdgeConfig::new(1_000_000, humsense::edge::TimerWidth::Bits32)
        .with_hysteresis_permille(167);
    let mut input = Input::Edges(Box::new(EdgeLog::open(&log).unwrap()));
    let out = replay_input(&mut input, &cfg, Some(&edge), &mut |_| Ok(()), None, true).unwrap();
    let mut again = EdgeLog::open(&log).unwrap();
    let full: Vec<Event> = full_edge_events::<2>(&mut again, &cfg, &edge).unwrap();
    // Three touches in the first 16 s (at 9, 12 and 15 s; the last one's
    // off comes after 16 s), through the ESD bursts; every event of both
    // paths equal.
    assert_eq!(out.events.len(), 5, "{:?}", out.events);
    assert_eq!(out.events, full);
    // The length in ticks of the 1 MHz clock: the end rows at 16 s.
    assert_eq!(out.frames, 16_000_000);
}

#[test]
fn a_16_bit_timer_wraps_into_the_same_events() {
    let log = tmp("chatter.csv");
    let (code, _, err) = run(&[
        "simulate",
        "comparator-chatter",
        "--digital",
        "--seconds",
        "6",
        "-o",
        p(&log),
    ]);
    assert_eq!(code, 0, "{err}");
    let (code, a, err) = run(&["replay", p(&log), "--hysteresis-permille", "0"]);
    assert_eq!(code, 0, "{err}");
    // A 16-bit timer at 1 MHz wraps every 65.5 ms, 90 times in 6 s: the
    // replay's advance calls every 5 ms keep the counts unambiguous.
    let (code, b, err) = run(&[
        "replay",
        p(&log),
        "--hysteresis-permille",
        "0",
        "--timer-bits",
        "16",
    ]);
    assert_eq!(code, 0, "{err}");
    assert_eq!(events(&a).len(), 4, "{a}");
    assert_eq!(a, b);
}

#[test]
fn tune_on_an_edge_log_writes_a_config_that_replays() {
    let log = tmp("lrc.csv");
    let labels = tmp("lrc.csv.labels.csv");
    let toml = tmp("lrc-tuned.toml");
    let (code, _, err) = run(&[
        "simulate",
        "comparator-light-rc",
        "--digital",
        "-o",
        p(&log),
    ]);
    assert_eq!(code, 0, "{err}");
    let (code, out, err) = run(&[
        "tune",
        p(&log),
        "--labels",
        p(&labels),
        "--hysteresis-permille",
        "167",
        "--points",
        "60",
        "--out",
        p(&toml),
    ]);
    assert_eq!(code, 0, "{err}\n{out}");
    assert!(out.contains("a full replay reproduced its"), "{out}");
    assert!(
        out.contains("const EDGE: humsense::edge::EdgeConfig"),
        "{out}"
    );
    let text = std::fs::read_to_string(&toml).unwrap();
    assert!(text.contains("\n[edge]\n"), "{text}");
    assert!(text.contains("hysteresis_permille = 167\n"), "{text}");
    assert!(text.contains("tick_hz = 1000000\n"), "{text}");
    // The tuned file alone describes the board: replay needs no flag.
    let (code, _, err) = run(&[
        "replay",
        p(&log),
        "--config",
        p(&toml),
        "--labels",
        p(&labels),
    ]);
    assert_eq!(code, 0, "{err}");
    assert_eq!(all_row(&err), ["5", "5", "0", "0"], "{err}");
    // A flag that disagrees with the file is refused.
    let (code, _, err) = run(&[
        "replay",
        p(&log),
        "--config",
        p(&toml),
        "--hysteresis-permille",
        "100",
    ]);
    assert_eq!(code, 1);
    assert!(
        err.contains(
            "the file's hysteresis_permille is 167 but --hysteresis-permille 100 was given"
        ),
        "{err}"
    );
}

#[test]
fn the_plot_of_an_edge_log_is_a_png() {
    let log = tmp("heavy.csv");
    let labels = tmp("heavy.csv.labels.csv");
    let png = tmp("heavy.png");
    let (code, _, err) = run(&[
        "simulate",
        "comparator-heavy-rc",
        "--digital",
        "-o",
        p(&log),
    ]);
    assert_eq!(code, 0, "{err}");
    assert!(err.contains("--edge-input level"), "{err}");
    let (code, _, err) = run(&[
        "replay",
        p(&log),
        "--hysteresis-permille",
        "167",
        "--edge-input",
        "level",
        "--labels",
        p(&labels),
        "--plot",
        p(&png),
        "--out",
        p(&tmp("heavy-events.csv")),
    ]);
    assert_eq!(code, 0, "{err}");
    assert_eq!(all_row(&err), ["4", "4", "0", "0"], "{err}");
    let bytes = std::fs::read(&png).unwrap();
    // PNG signature (ISO/IEC 15948, 5.2).
    assert_eq!(&bytes[..8], b"\x89PNG\r\n\x1a\n");
    assert!(bytes.len() > 10_000, "{}", bytes.len());
}
