//! `humsim bench`: the detector measured against the theoretical limit and
//! simple reference detectors.

pub mod marcum;
pub mod sensitivity;

use crate::console::{self, CliError};
use humsense::Profile;

/// `humsim bench [--quick]`.
pub fn command(quick: bool) -> Result<(), CliError> {
    let progress = std::io::IsTerminal::is_terminal(&std::io::stderr());
    let opts: Vec<sensitivity::Options> = [Profile::Field, Profile::Touch]
        .into_iter()
        .map(|p| sensitivity::Options::new(p, quick))
        .collect();
    let total: u64 = opts.iter().map(|o| o.work_units()).sum();
    let bar = if progress {
        indicatif::ProgressBar::new(total)
    } else {
        indicatif::ProgressBar::hidden()
    };
    let tick = |n: u64| bar.inc(n);
    let mut lines = Vec::new();
    for o in &opts {
        let s = sensitivity::measure(o, &tick).map_err(CliError::from)?;
        lines.push(s.bench_line());
    }
    bar.finish_and_clear();
    console::out(&(lines.join("\n") + "\n"))
}
