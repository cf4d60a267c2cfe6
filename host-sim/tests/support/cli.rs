//! Running the `humsim` binary from the integration tests: one copy of the
//! helpers that edges.rs, outputs.rs, replay.rs, telemetry.rs and tune.rs
//! share.
#![allow(dead_code)]

use std::path::{Path, PathBuf};
use std::process::Command;

/// The `humsim` binary of this build.
pub fn humsim() -> Command {
    Command::new(env!("CARGO_BIN_EXE_humsim"))
}

/// Runs `humsim` with `args`: exit status (-1 when killed by a signal),
/// stdout and stderr.
pub fn run(args: &[&str]) -> (i32, String, String) {
    let o = humsim().args(args).output().expect("humsim runs");
    (
        o.status.code().unwrap_or(-1),
        String::from_utf8_lossy(&o.stdout).into_owned(),
        String::from_utf8_lossy(&o.stderr).into_owned(),
    )
}

/// A path as an argument (the tests' paths are UTF-8).
pub fn p(path: &Path) -> &str {
    path.to_str().expect("UTF-8 path")
}

/// `name` in a scratch directory of this test binary's own (`prefix` and
/// the process id), created if need be.
pub fn scratch(prefix: &str, name: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("humsim-{prefix}-{}", std::process::id()));
    std::fs::create_dir_all(&dir).expect("temp directory");
    dir.join(name)
}
