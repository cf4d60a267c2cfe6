//! `humsim demo`, run as a user would.
#![allow(clippy::unwrap_used)]

use std::process::Command;

#[test]
fn demo_prints_events_summary_and_writes_a_png() {
    let dir = std::env::temp_dir().join(format!("humsim-demo-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let png = dir.join("demo.png");
    let out = Command::new(env!("CARGO_BIN_EXE_humsim"))
        .args(["demo", "--plot"])
        .arg(&png)
        .output()
        .unwrap();
    let text = String::from_utf8_lossy(&out.stdout);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    assert!(text.contains("time (s)  channel  event"), "{text}");
    // The scenario's first touch is on `power` at 2.0 s for 0.4 s: its on
    // event comes within the first 100 ms.
    let first = text
        .lines()
        .find(|l| l.contains("touch-on"))
        .unwrap()
        .split_whitespace()
        .collect::<Vec<_>>();
    let t: f64 = first[0].parse().unwrap();
    assert_eq!(first[1], "power");
    assert!((2.0..2.1).contains(&t), "{t}");
    // kitchen-panel has 8 touches; with defaults every one is found once.
    assert!(
        text.contains("touches detected 8 of 8, missed 0; false events 0"),
        "{text}"
    );
    assert!(text.contains(&format!("plot: {}", png.display())));
    let bytes = std::fs::read(&png).unwrap();
    assert_eq!(&bytes[..8], b"\x89PNG\r\n\x1a\n");
}
