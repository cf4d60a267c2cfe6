//! `humsim tune`: a bad start is repaired, the fast path equals a full
//! replay, and labels that do not fit the input are refused.
#![allow(clippy::unwrap_used)]

#[path = "support/cli.rs"]
mod cli;
use cli::{p, run};
use humsim::input::InputSpec;
use humsim::replay::{config_for, replay};
use humsim::tune::{tune, TuneCommand};
use std::path::PathBuf;

fn tmp(name: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("humsim-tune-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    dir.join(name)
}

/// kitchen-panel (four pads, eight touches, a lamp step) as a CSV log.
fn kitchen(name: &str) -> (PathBuf, PathBuf) {
    let csv = tmp(name);
    let (code, _, err) = run(&["simulate", "kitchen-panel", "--time-column", "-o", p(&csv)]);
    assert_eq!(code, 0, "{err}");
    let labels = PathBuf::from(format!("{}.labels.csv", p(&csv)));
    (csv, labels)
}

/// Hair-trigger thresholds: 1.1x the baseline or one noise unit, one cycle.
const BAD: &str = "on_ratio = 1.1\noff_ratio = 1.05\non_noise = 1.0\noff_noise = 0.5\n\
                   debounce_on = 1\ndebounce_off = 1\n";

#[test]
fn tune_repairs_a_bad_start_and_the_fast_path_equals_a_full_replay() {
    let (csv, labels) = kitchen("bad-start.csv");
    let start = tmp("bad.toml");
    std::fs::write(&start, BAD).unwrap();
    let cmd = TuneCommand {
        input: InputSpec {
            path: csv.clone(),
            ..InputSpec::default()
        },
        mains: None,
        profile: None,
        edge: Default::default(),
        config: Some(start.clone()),
        labels: labels.clone(),
        budget_per_hour: 0.0,
        points: 120,
        seed: 3,
        out: None,
        plot: None,
        progress: false,
    };
    let out = tune(&cmd).unwrap();
    // The start (always candidate 0 of the sweep) really is bad.
    let src = humsim::input::open_input(&cmd.input).unwrap();
    let start_cfg = config_for(src.as_ref(), None, None, Some(&start)).unwrap();
    let start_trial = out.trials.iter().find(|t| t.config == start_cfg).unwrap();
    assert!(
        start_trial.score.false_events() > 0,
        "the bad start must give false events"
    );
    let best = &out.trials[out.chosen.unwrap()];
    assert!(best.feasible(0.0));
    assert_eq!((best.score.missed(), best.score.false_events()), (0, 0));
    assert_eq!(best.score.detected(), 8);
    assert!(out.verified);
    // Independently: a full replay with the chosen config gives the events
    // the fast path gave.
    let mut src = humsim::input::open_input(&cmd.input).unwrap();
    let full = replay(src.as_mut(), &best.config, &mut |_| Ok(()), None, true).unwrap();
    assert_eq!(full.events, out.events);
    assert_eq!(full.events.len(), 16);
    // Front-end fields stayed as the start had them.
    assert_eq!(best.config.sample_rate_hz, start_cfg.sample_rate_hz);
    assert_eq!(best.config.spike_max_len, start_cfg.spike_max_len);
    assert_eq!(best.config.track_min_codes, start_cfg.track_min_codes);
    assert_eq!(best.config.mains, start_cfg.mains);
}

#[test]
fn tune_cli_writes_a_config_that_replay_accepts() {
    let (csv, labels) = kitchen("cli.csv");
    let start = tmp("cli-bad.toml");
    std::fs::write(&start, BAD).unwrap();
    let chosen = tmp("chosen.toml");
    let png = tmp("tradeoff.png");
    let (code, out, err) = run(&[
        "tune",
        p(&csv),
        "--labels",
        p(&labels),
        "--config",
        p(&start),
        "--points",
        "80",
        "--out",
        p(&chosen),
        "--plot",
        p(&png),
    ]);
    assert_eq!(code, 0, "{err}\n{out}");
    assert!(
        out.contains("const CONFIG: humsense::Config = humsense::Config {"),
        "{out}"
    );
    assert!(
        out.contains("a full replay reproduced its 16 events exactly"),
        "{out}"
    );
    assert!(out.contains("rank   on_r"), "{out}");
    assert_eq!(&std::fs::read(&png).unwrap()[..4], b"\x89PNG");
    let (code, _, err) = run(&[
        "replay",
        p(&csv),
        "--config",
        p(&chosen),
        "--labels",
        p(&labels),
    ]);
    assert_eq!(code, 0, "{err}");
    let all: Vec<String> = err
        .lines()
        .find(|l| l.starts_with("all "))
        .unwrap()
        .split_whitespace()
        .map(str::to_string)
        .collect();
    assert_eq!(&all[1..5], ["8", "8", "0", "0"], "{err}");
}

#[test]
fn tune_refuses_labels_that_do_not_fit() {
    let (csv, _) = kitchen("refuse.csv");
    let labels = tmp("refuse.labels.csv");
    std::fs::write(&labels, "channel,kind,start_s,end_s\nknob,touch,1,2\n").unwrap();
    let (code, _, err) = run(&["tune", p(&csv), "--labels", p(&labels)]);
    assert_eq!(code, 1);
    assert!(
        err.contains(&format!(
            "{}:2: label `knob,touch,1,2` is for channel `knob`",
            p(&labels)
        )),
        "{err}"
    );
    assert!(
        err.contains("its channels are: power, minus, plus, timer"),
        "{err}"
    );
    std::fs::write(&labels, "channel,kind,start_s,end_s\npower,touch,19.5,25\n").unwrap();
    let (code, _, err) = run(&["tune", p(&csv), "--labels", p(&labels)]);
    assert_eq!(code, 1);
    assert!(
        err.contains("ends after the input, which lasts 20.0000 s"),
        "{err}"
    );
    std::fs::write(&labels, "channel,kind,start_s,end_s\npower,field,1,2\n").unwrap();
    let (code, _, err) = run(&["tune", p(&csv), "--labels", p(&labels)]);
    assert_eq!(code, 1);
    assert!(
        err.contains("no `touch` labels to tune the touch profile on"),
        "{err}"
    );
    let (code, _, err) = run(&["tune", p(&csv), "--labels", p(&labels), "--budget=-1"]);
    assert_eq!(code, 1);
    assert!(err.contains("--budget -1"), "{err}");
}
