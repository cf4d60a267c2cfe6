//! No run destroys a file: outputs that name an input are refused, a failed
//! run leaves every old file as it was and removes only what it created,
//! outputs are checked before the work starts, and printing to a full or
//! closed stream ends with a message (or quietly), never a panic.
#![allow(clippy::unwrap_used)]

#[path = "support/cli.rs"]
mod cli;
use cli::{humsim, p, run};
use std::collections::hash_map::DefaultHasher;
use std::hash::{Hash, Hasher};
use std::path::{Path, PathBuf};
use std::process::{Command, Stdio};

/// A fresh directory of this test's own.
fn dir(name: &str) -> PathBuf {
    let d = std::env::temp_dir().join(format!("humsim-outputs-{}-{name}", std::process::id()));
    let _ = std::fs::remove_dir_all(&d);
    std::fs::create_dir_all(&d).unwrap();
    d
}

fn hash(path: &Path) -> u64 {
    let mut h = DefaultHasher::new();
    std::fs::read(path).unwrap().hash(&mut h);
    h.finish()
}

/// Names in `d`, sorted: no temporary file may be left behind.
fn listing(d: &Path) -> Vec<String> {
    let mut v: Vec<String> = std::fs::read_dir(d)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .collect();
    v.sort();
    v
}

/// A four-second one-pad log with touches at 1.0–1.5 s and 2.0–2.3 s.
fn log(path: &Path) {
    let mut s = String::from("time_s,pad\n");
    for n in 0..8000u32 {
        let t = f64::from(n) / 2000.0;
        let a = if (1.0..1.5).contains(&t) || (2.0..2.3).contains(&t) {
            400.0
        } else {
            20.0
        };
        let x = 2048.0 + a * (std::f64::consts::TAU * 50.0 * t).sin();
        s.push_str(&format!("{t:.4},{}\n", x.round() as i64));
    }
    std::fs::write(path, s).unwrap();
}

fn labels(path: &Path) {
    std::fs::write(
        path,
        "channel,kind,start_s,end_s\npad,touch,1.0,1.5\npad,touch,2.0,2.3\n",
    )
    .unwrap();
}

#[test]
fn an_output_that_is_an_input_is_refused_and_the_input_kept() {
    let d = dir("same");
    let input = d.join("log.csv");
    log(&input);
    let lab = d.join("log.labels.csv");
    labels(&lab);
    let cfg = d.join("cfg.toml");
    std::fs::write(&cfg, "profile = \"touch\"\n").unwrap();
    let sym = d.join("link.csv");
    std::os::unix::fs::symlink(&input, &sym).unwrap();
    let hard = d.join("hard.csv");
    std::fs::hard_link(&input, &hard).unwrap();
    let dotted = format!("{}/./log.csv", p(&d));
    let before: Vec<u64> = [&input, &lab, &cfg].iter().map(|f| hash(f)).collect();
    let names_before = listing(&d);
    let i = p(&input);
    let cases: Vec<Vec<&str>> = vec![
        vec!["replay", i, "--out", i],
        vec!["replay", i, "--out", p(&sym)],
        vec!["replay", i, "--out", p(&hard)],
        vec!["replay", i, "--out", &dotted],
        vec!["replay", i, "--labels", p(&lab), "--out", p(&lab)],
        vec!["replay", i, "--config", p(&cfg), "--out", p(&cfg)],
        vec!["tune", i, "--labels", p(&lab), "--out", p(&lab)],
        vec!["tune", i, "--labels", p(&lab), "--out", i],
        vec!["simulate", p(&cfg), "-o", p(&cfg)],
    ];
    for args in &cases {
        let (code, out, err) = run(args);
        assert_eq!(code, 1, "{args:?}: {err}");
        assert!(out.is_empty(), "{args:?}: {out}");
        assert!(
            err.contains("is the same file as the input") && err.contains("refusing to overwrite"),
            "{args:?}: {err}"
        );
        let after: Vec<u64> = [&input, &lab, &cfg].iter().map(|f| hash(f)).collect();
        assert_eq!(before, after, "{args:?} changed an input");
        assert_eq!(names_before, listing(&d), "{args:?} left a file behind");
    }
    // The plot may not be the input either (a CSV whose name ends in .png).
    let png_named = d.join("log.png");
    std::fs::copy(&input, &png_named).unwrap();
    let h = hash(&png_named);
    let (code, _, err) = run(&["replay", p(&png_named), "--plot", p(&png_named)]);
    assert_eq!(code, 1, "{err}");
    assert!(
        err.contains("--plot") && err.contains("same file as the input"),
        "{err}"
    );
    assert_eq!(hash(&png_named), h);
}

#[test]
fn two_outputs_of_one_run_may_not_be_one_file() {
    let d = dir("twice");
    let input = d.join("log.csv");
    log(&input);
    let both = d.join("x.png");
    let (code, _, err) = run(&["replay", p(&input), "--out", p(&both), "--plot", p(&both)]);
    assert_eq!(code, 1, "{err}");
    assert!(err.contains("is also the --out output"), "{err}");
    assert!(!both.exists());
}

#[test]
fn a_failed_run_leaves_the_old_output_as_it_was() {
    let d = dir("failed");
    let input = d.join("log.csv");
    log(&input);
    let out = d.join("events.csv");
    let plot = d.join("run.png");
    std::fs::write(&out, "the events of an earlier run\n").unwrap();
    std::fs::write(&plot, "an earlier picture").unwrap();
    let (h_out, h_plot) = (hash(&out), hash(&plot));
    // A label past the end of the 4 s log fails the run after the replay.
    let lab = d.join("late.labels.csv");
    std::fs::write(&lab, "channel,kind,start_s,end_s\npad,touch,1,9.5\n").unwrap();
    let names = listing(&d);
    let (code, stdout, err) = run(&[
        "replay",
        p(&input),
        "--labels",
        p(&lab),
        "--out",
        p(&out),
        "--plot",
        p(&plot),
    ]);
    assert_eq!(code, 1, "{err}");
    assert!(stdout.is_empty());
    assert!(err.contains("ends after the input"), "{err}");
    assert_eq!(hash(&out), h_out, "the old events file changed");
    assert_eq!(hash(&plot), h_plot, "the old plot changed");
    assert_eq!(listing(&d), names, "a temporary file was left behind");
    // The same run with good labels replaces both, keeping the old file's
    // permissions.
    use std::os::unix::fs::PermissionsExt;
    std::fs::set_permissions(&out, std::fs::Permissions::from_mode(0o640)).unwrap();
    labels(&lab);
    let (code, _, err) = run(&[
        "replay",
        p(&input),
        "--labels",
        p(&lab),
        "--out",
        p(&out),
        "--plot",
        p(&plot),
    ]);
    assert_eq!(code, 0, "{err}");
    let text = std::fs::read_to_string(&out).unwrap();
    assert!(text.starts_with("time_s,channel,event,value\n"), "{text}");
    assert_eq!(text.matches("touch-on").count(), 2, "{text}");
    assert!(std::fs::read(&plot).unwrap().starts_with(b"\x89PNG"));
    let mode = std::fs::metadata(&out).unwrap().permissions().mode() & 0o777;
    assert_eq!(mode, 0o640);
    assert_eq!(listing(&d), names, "a temporary file was left behind");
}

#[test]
fn an_output_through_a_symbolic_link_writes_the_file_it_points_to() {
    let d = dir("link");
    let input = d.join("log.csv");
    log(&input);
    let real = d.join("real.csv");
    std::fs::write(&real, "old\n").unwrap();
    let link = d.join("link.csv");
    std::os::unix::fs::symlink(&real, &link).unwrap();
    let (code, _, err) = run(&["replay", p(&input), "--out", p(&link)]);
    assert_eq!(code, 0, "{err}");
    assert!(std::fs::symlink_metadata(&link)
        .unwrap()
        .file_type()
        .is_symlink());
    assert!(std::fs::read_to_string(&real)
        .unwrap()
        .starts_with("time_s,"));
}

/// A character device node equal to /dev/full in a directory of our own
/// (so that a regression deletes our node, not the system's); needs root,
/// as CI runs.
fn full_device(d: &Path) -> Option<PathBuf> {
    let node = d.join("full");
    let ok = Command::new("mknod")
        .args([p(&node), "c", "1", "7"])
        .status()
        .is_ok_and(|s| s.success());
    if ok {
        Some(node)
    } else {
        eprintln!("note: mknod failed (not root?): the device-node cases did not run");
        None
    }
}

fn is_char_device(path: &Path) -> bool {
    use std::os::unix::fs::FileTypeExt;
    std::fs::symlink_metadata(path).is_ok_and(|m| m.file_type().is_char_device())
}

#[test]
fn a_device_given_as_output_is_written_and_never_removed() {
    let d = dir("device");
    let input = d.join("log.csv");
    log(&input);
    // /dev/null takes the events and stays.
    let (code, out, err) = run(&["replay", p(&input), "--out", "/dev/null"]);
    assert_eq!((code, out.as_str()), (0, ""), "{err}");
    assert!(is_char_device(Path::new("/dev/null")));
    let Some(full) = full_device(&d) else {
        // Without root the node cannot be made: /dev/full itself is only
        // written to, which is safe with the code under test (never removed
        // there), and asserted to stay.
        let (code, _, err) = run(&["replay", p(&input), "--out", "/dev/full"]);
        assert_eq!(code, 1, "{err}");
        assert!(is_char_device(Path::new("/dev/full")));
        return;
    };
    let (code, _, err) = run(&["replay", p(&input), "--out", p(&full)]);
    assert_eq!(code, 1, "{err}");
    assert!(
        err.contains("--out") && err.contains("cannot write") && err.contains("No space left"),
        "{err}"
    );
    assert!(is_char_device(&full), "the device node was removed");
    // A plot that cannot be written says so plainly, not as debug text.
    let png = d.join("full.png");
    std::os::unix::fs::symlink(&full, &png).unwrap();
    let (code, _, err) = run(&["replay", p(&input), "--plot", p(&png)]);
    assert_eq!(code, 1, "{err}");
    assert_eq!(
        err.trim_end(),
        format!(
            "humsim: error: --plot {}: cannot write: No space left on device (os error 28)",
            p(&png)
        )
    );
    assert!(is_char_device(&full), "the device node was removed");
    // tune: the result still reaches stdout when the TOML cannot be written.
    let lab = d.join("log.labels.csv");
    labels(&lab);
    let (code, out, err) = run(&[
        "tune",
        p(&input),
        "--labels",
        p(&lab),
        "--points",
        "4",
        "--out",
        p(&full),
    ]);
    assert_eq!(code, 1, "{err}");
    assert!(
        err.contains("cannot write") && err.contains("printed above instead"),
        "{err}"
    );
    assert!(out.contains("chosen: no missed label"), "{out}");
    assert!(
        out.contains("on_ratio = "),
        "the TOML is missing from stdout: {out}"
    );
    assert!(out.contains("// For firmware:"), "{out}");
    assert!(is_char_device(&full));
}

#[test]
fn outputs_are_checked_before_the_work() {
    let d = dir("preflight");
    let input = d.join("log.csv");
    log(&input);
    let lab = d.join("log.labels.csv");
    labels(&lab);
    let missing = d.join("no-such-dir").join("x.csv");
    let missing_png = d.join("no-such-dir").join("x.png");
    let cases: Vec<(Vec<&str>, &str)> = vec![
        (
            vec!["replay", p(&input), "--out", p(&missing)],
            "does not exist",
        ),
        (
            vec!["replay", p(&input), "--plot", p(&missing_png)],
            "does not exist",
        ),
        (
            vec!["replay", p(&input), "--plot", p(&d)],
            "give a file name ending in .png",
        ),
        (vec!["replay", p(&input), "--out", p(&d)], "is a directory"),
        (
            vec!["replay", p(&input), "--plot", "plot.svg"],
            "ending in .png",
        ),
        (
            vec!["tune", p(&input), "--labels", p(&lab), "--out", p(&missing)],
            "does not exist",
        ),
        (
            vec!["tune", p(&input), "--labels", p(&lab), "--plot", "t.jpeg"],
            "ending in .png",
        ),
        (vec!["demo", "--plot", p(&missing_png)], "does not exist"),
        (
            vec!["simulate", "kitchen-panel", "-o", p(&missing)],
            "does not exist",
        ),
    ];
    for (args, want) in &cases {
        let (code, out, err) = run(args);
        assert_eq!(code, 1, "{args:?}: {err}");
        // Nothing was printed: tune did not sweep, replay wrote no event.
        assert!(out.is_empty(), "{args:?} printed {out}");
        assert!(err.contains(want), "{args:?}: {err}");
        assert!(!err.contains("panicked"), "{args:?}: {err}");
    }
    // A read-only directory, as an unprivileged user has it: root writes
    // anyway, so this case runs only where the mode is honoured.
    let ro = d.join("ro");
    std::fs::create_dir(&ro).unwrap();
    use std::os::unix::fs::PermissionsExt;
    std::fs::set_permissions(&ro, std::fs::Permissions::from_mode(0o500)).unwrap();
    if std::fs::write(ro.join("probe"), "x").is_err() {
        let (code, out, err) = run(&[
            "tune",
            p(&input),
            "--labels",
            p(&lab),
            "--out",
            p(&ro.join("t.toml")),
        ]);
        assert_eq!(code, 1, "{err}");
        assert!(
            out.is_empty() && err.contains("cannot write in the directory"),
            "{err}"
        );
    }
    std::fs::set_permissions(&ro, std::fs::Permissions::from_mode(0o700)).unwrap();
}

#[test]
fn a_wav_too_large_for_its_size_fields_is_refused_before_writing() {
    let d = dir("bigwav");
    let out = d.join("big.wav");
    // kitchen-panel: 4 channels at 2 kHz, 16 000 bytes a second: 10^6 s is
    // 16 GB, far past the 4 GiB a WAV's 32-bit size fields can count.
    let (code, _, err) = run(&[
        "simulate",
        "kitchen-panel",
        "--seconds",
        "1000000",
        "-o",
        p(&out),
    ]);
    assert_eq!(code, 1, "{err}");
    assert!(err.contains("exceed what a WAV file can hold"), "{err}");
    // 4 294 967 215 bytes / 16 000 bytes a second = 268 435 s.
    assert!(err.contains("at most --seconds 268435"), "{err}");
    assert!(listing(&d).is_empty(), "{:?}", listing(&d));
}

fn dev_full() -> std::fs::File {
    std::fs::OpenOptions::new()
        .write(true)
        .open("/dev/full")
        .unwrap()
}

#[test]
fn a_full_stdout_or_stderr_is_an_error_not_a_panic() {
    let d = dir("fullout");
    let plot = d.join("demo.png");
    for args in [vec!["demo", "--plot", p(&plot)], vec!["scenarios"]] {
        let o = humsim().args(&args).stdout(dev_full()).output().unwrap();
        let err = String::from_utf8_lossy(&o.stderr);
        assert_eq!(o.status.code(), Some(1), "{args:?}: {err}");
        assert!(
            err.contains("stdout: cannot write: No space left"),
            "{args:?}: {err}"
        );
        assert!(!err.contains("panicked"), "{args:?}: {err}");
    }
    // stderr full: the run ends with status 1 (there is nowhere to say why).
    let out = d.join("s.csv");
    let o = humsim()
        .args(["simulate", "kitchen-panel", "--seconds", "1", "-o", p(&out)])
        .stderr(dev_full())
        .output()
        .unwrap();
    assert_eq!(o.status.code(), Some(1));
    let o = humsim()
        .args(["replay", "no-such-file.csv", "--rate", "2000"])
        .stderr(dev_full())
        .output()
        .unwrap();
    assert_eq!(o.status.code(), Some(1));
}

#[test]
fn a_closed_stdout_ends_the_run_quietly() {
    let d = dir("pipe");
    let input = d.join("long.csv");
    // Twenty seconds, twenty touches: the reader is gone before the first write.
    let mut s = String::from("pad\n");
    for n in 0..40_000u32 {
        let t = f64::from(n) / 2000.0;
        let a = if t % 1.0 < 0.5 { 400.0 } else { 20.0 };
        let x = 2048.0 + a * (std::f64::consts::TAU * 50.0 * t).sin();
        s.push_str(&format!("{}\n", x.round() as i64));
    }
    std::fs::write(&input, s).unwrap();
    let mut child = humsim()
        .args(["replay", p(&input), "--rate", "2000"])
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .unwrap();
    drop(child.stdout.take());
    let o = child.wait_with_output().unwrap();
    let err = String::from_utf8_lossy(&o.stderr);
    assert_eq!(o.status.code(), Some(0), "{err}");
    assert!(err.is_empty(), "{err}");
}
