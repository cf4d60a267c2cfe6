//! The `humsim` binary, run as a user would.

use std::path::PathBuf;
use std::process::Command;

fn humsim() -> Command {
    Command::new(env!("CARGO_BIN_EXE_humsim"))
}

fn tmp(name: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("humsim-cli-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    dir.join(name)
}

#[test]
fn simulate_writes_csv_with_header_and_labels() {
    let out = tmp("kitchen.csv");
    let st = humsim()
        .args([
            "simulate",
            "kitchen-panel",
            "--seconds",
            "3",
            "--time-column",
            "-o",
        ])
        .arg(&out)
        .output()
        .unwrap();
    assert!(
        st.status.success(),
        "{}",
        String::from_utf8_lossy(&st.stderr)
    );
    let text = std::fs::read_to_string(&out).unwrap();
    let mut lines = text.lines();
    assert_eq!(lines.next(), Some("time_s,power,minus,plus,timer"));
    let rows: Vec<&str> = lines.collect();
    assert_eq!(rows.len(), 6000);
    let last: Vec<&str> = rows[5999].split(',').collect();
    assert_eq!(last.len(), 5);
    assert_eq!(last[0], "2.999500");
    assert!(last[1..]
        .iter()
        .all(|v| v.parse::<u16>().is_ok_and(|c| c < 4096)));
    let labels = std::fs::read_to_string(tmp("kitchen.csv.labels.csv")).unwrap();
    let mut l = labels.lines();
    assert_eq!(l.next(), Some("channel,kind,start_s,end_s"));
    assert_eq!(l.next(), Some("power,touch,2.000000,2.400000"));
    assert_eq!(l.next(), None, "only one touch in the first 3 s");
    // Without --time-column: channels only.
    let out2 = tmp("plain.csv");
    let st = humsim()
        .args([
            "simulate",
            "wall-scan",
            "--seconds",
            "0.5",
            "--seed",
            "4",
            "-o",
        ])
        .arg(&out2)
        .output()
        .unwrap();
    assert!(st.status.success());
    let text = std::fs::read_to_string(&out2).unwrap();
    assert_eq!(text.lines().next(), Some("probe"));
    assert_eq!(text.lines().count(), 1 + 1000);
}

#[test]
fn simulate_writes_wav_with_one_channel_per_pad() {
    let out = tmp("odd.wav");
    let st = humsim()
        .args(["simulate", "kitchen-panel", "--seconds", "1", "-o"])
        .arg(&out)
        .output()
        .unwrap();
    assert!(
        st.status.success(),
        "{}",
        String::from_utf8_lossy(&st.stderr)
    );
    let r = hound::WavReader::open(&out).unwrap();
    let spec = r.spec();
    assert_eq!(spec.channels, 4);
    assert_eq!(spec.sample_rate, 2000);
    assert_eq!(spec.bits_per_sample, 16);
    assert_eq!(spec.sample_format, hound::SampleFormat::Int);
    let samples: Vec<i16> = r.into_samples::<i16>().map(|s| s.unwrap()).collect();
    assert_eq!(samples.len(), 4 * 2000);
    // Codes unchanged: the same run as CSV gives the same numbers.
    let csv = tmp("same.csv");
    humsim()
        .args(["simulate", "kitchen-panel", "--seconds", "1", "-o"])
        .arg(&csv)
        .output()
        .unwrap();
    let text = std::fs::read_to_string(&csv).unwrap();
    let from_csv: Vec<i16> = text
        .lines()
        .skip(1)
        .flat_map(|l| {
            l.split(',')
                .map(|v| v.parse::<i16>().unwrap())
                .collect::<Vec<_>>()
        })
        .collect();
    assert_eq!(samples, from_csv);
    assert!(tmp("odd.wav.labels.csv").exists());
}

#[test]
fn bad_scenario_path_fails_clearly() {
    let st = humsim()
        .args(["simulate", "/no/such/scenario.toml", "-o"])
        .arg(tmp("x.csv"))
        .output()
        .unwrap();
    assert!(!st.status.success());
    let err = String::from_utf8_lossy(&st.stderr);
    assert!(err.contains("/no/such/scenario.toml"), "{err}");
    assert!(err.contains("no such file"), "{err}");

    let bad = tmp("bad.toml");
    std::fs::write(
        &bad,
        "name = \"x\"\nduration_s = 1.0\n[adc]\nbits = 40\n[[channel]]\nname = \"a\"\n",
    )
    .unwrap();
    let st = humsim()
        .arg("simulate")
        .arg(&bad)
        .arg("-o")
        .arg(tmp("y.csv"))
        .output()
        .unwrap();
    assert_eq!(st.status.code(), Some(1));
    let err = String::from_utf8_lossy(&st.stderr);
    assert!(err.contains(&format!("{}:4", bad.display())), "{err}");
    assert!(err.contains("adc.bits") && err.contains("8..=16"), "{err}");

    let st = humsim()
        .args(["simulate", "kitchen-panel", "--seconds", "-2", "-o"])
        .arg(tmp("z.csv"))
        .output()
        .unwrap();
    assert!(!st.status.success());

    let st = humsim()
        .args(["simulate", "kitchen-panel", "-o", "/no/such/dir/out.csv"])
        .output()
        .unwrap();
    assert!(!st.status.success());
    assert!(String::from_utf8_lossy(&st.stderr).contains("/no/such/dir/out.csv"));
}

#[test]
fn scenarios_lists_every_builtin_and_help_works() {
    let st = humsim().arg("scenarios").output().unwrap();
    assert!(st.status.success());
    let text = String::from_utf8_lossy(&st.stdout);
    for name in humsim::builtin::names() {
        assert!(
            text.lines()
                .any(|l| l.starts_with(name) && l.len() > name.len() + 10),
            "{name}"
        );
    }
    for sub in [
        &["--help"][..],
        &["simulate", "--help"],
        &["scenarios", "--help"],
    ] {
        let st = humsim().args(sub).output().unwrap();
        assert!(st.status.success(), "{sub:?}");
        assert!(
            String::from_utf8_lossy(&st.stdout).contains("Usage"),
            "{sub:?}"
        );
    }
}

/// Every output format of `simulate` replays, scores and tunes against its
/// own labels as written: CSV, CSV with a time column, and WAV (whose labels
/// name the channels ch0, ch1, … as replay does).
#[test]
fn every_simulate_output_scores_against_its_own_labels() {
    for (name, extra) in [
        ("round.csv", None),
        ("round-timed.csv", Some("--time-column")),
        ("round.wav", None),
    ] {
        let out = tmp(name);
        let mut args = vec!["simulate", "kitchen-panel", "--seconds", "12", "-o"];
        let o = out.to_str().unwrap();
        args.push(o);
        args.extend(extra);
        let st = humsim().args(&args).output().unwrap();
        let err = String::from_utf8_lossy(&st.stderr).into_owned();
        assert!(st.status.success(), "{name}: {err}");
        let labels = format!("{o}.labels.csv");
        let text = std::fs::read_to_string(&labels).unwrap();
        let rate: &[&str] = if name == "round.csv" {
            &["--rate", "2000"]
        } else {
            &[]
        };
        let st = humsim()
            .args(["replay", o, "--labels", &labels])
            .args(rate)
            .output()
            .unwrap();
        let err = String::from_utf8_lossy(&st.stderr).into_owned();
        assert!(st.status.success(), "{name}: {err}\n{text}");
        // Every label scored: the score table's `all` row has every label
        // detected, none missed and no false event (kitchen-panel's own bar, DESIGN.md §4).
        let labels_n = text
            .lines()
            .skip(1)
            .filter(|l| l.contains(",touch,"))
            .count();
        assert!(labels_n >= 4, "{name}: {text}");
        let all: Vec<&str> = err
            .lines()
            .find(|l| l.starts_with("all "))
            .map(|l| l.split_whitespace().take(5).collect())
            .unwrap_or_default();
        let n = labels_n.to_string();
        assert_eq!(
            all,
            ["all", n.as_str(), n.as_str(), "0", "0"],
            "{name}: {err}"
        );
        let st = humsim()
            .args(["tune", o, "--labels", &labels, "--points", "3"])
            .args(rate)
            .output()
            .unwrap();
        assert!(
            st.status.success(),
            "{name}: {}",
            String::from_utf8_lossy(&st.stderr)
        );
    }
}
