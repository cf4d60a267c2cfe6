//! Streaming memory: a long render must not keep its samples. In a test
//! binary of its own, because the resident set it reads is the process's:
//! other tests running in parallel threads of the same binary would add
//! their own allocations to it.
#![allow(
    clippy::unwrap_used,
    clippy::expect_used,
    clippy::indexing_slicing,
    clippy::panic
)]

use humsim::scenario::{RenderOptions, Scenario};

// Streaming keeps memory bounded: ten minutes rendered block by block
// without keeping samples must not grow the resident set by more than the
// samples themselves would take (4.8 MB here) — we allow 2 MB. The
// resident set is read from Linux's /proc/self/status, so the test is
// built for Linux only, and there a missing or unreadable VmRSS fails it
// rather than skipping the check.
#[cfg(target_os = "linux")]
#[test]
fn ten_minutes_stream_in_bounded_memory() {
    fn rss_kb() -> u64 {
        let s = std::fs::read_to_string("/proc/self/status")
            .expect("/proc/self/status must be readable on Linux");
        let line = s
            .lines()
            .find(|l| l.starts_with("VmRSS:"))
            .expect("VmRSS line in /proc/self/status");
        line.split_whitespace()
            .nth(1)
            .and_then(|v| v.parse().ok())
            .expect("VmRSS in kB")
    }
    let s = Scenario::builtin("esd-bench").unwrap();
    let mut r = s
        .render(&RenderOptions {
            seconds: Some(600.0),
            seed: None,
        })
        .unwrap();
    let mut block = vec![0u16; 4096 * r.channels()];
    let mut frames = 0u64;
    let mut checksum = 0u64;
    let n = r.fill(&mut block);
    frames += n as u64;
    let before = rss_kb();
    loop {
        let n = r.fill(&mut block);
        if n == 0 {
            break;
        }
        frames += n as u64;
        checksum += block[..n * r.channels()]
            .iter()
            .map(|&c| u64::from(c))
            .sum::<u64>();
    }
    assert_eq!(frames, 1_200_000);
    assert!(checksum > 0);
    let after = rss_kb();
    assert!(
        after.saturating_sub(before) < 2048,
        "RSS grew {} kB",
        after.saturating_sub(before)
    );
}
