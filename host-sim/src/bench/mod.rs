//! `humsim bench`: the detector measured against the theoretical limit and
//! simple reference detectors. Each part is a library module that returns
//! rows with a `bench_line()` (`bench: key=value …`, DESIGN.md §3):
//!
//! - [`sensitivity`] (with [`marcum`]): the amplitude each profile needs for
//!   Pd = 0.9 within its deadline in white Gaussian noise, against the
//!   optimum detector at the profile's measured false-alarm rate;
//! - [`mod@reference`], [`tuner`], [`compare`]: two reference detectors (an
//!   RC filter and a comparator; an EMA of `|x − mean|` with a count
//!   debounce), tuned on labelled data and run beside humsense on the
//!   built-in touch scenarios and a long ambient-only run;
//! - [`latency`]: touch-on and touch-off latency at 50 and 60 Hz and 1, 2
//!   and 8 kHz against one mains cycle;
//! - [`speed`]: the core detector's host throughput.

pub mod compare;
pub mod latency;
pub mod marcum;
pub mod reference;
pub mod sensitivity;
pub mod speed;
pub mod tuner;

use crate::console::{self, CliError};
use humsense::Profile;

/// The quick run fails when the field profile's gap to the optimum exceeds
/// this, dB.
pub const QUICK_FIELD_GAP_DB: f64 = 1.5;

/// `humsim bench [--quick]`: every part, a progress bar on a terminal, the
/// tables, then the `bench:` lines. With `quick`, fails if the field gap
/// exceeds [`QUICK_FIELD_GAP_DB`] or humsense reports a false event on a
/// built-in touch scenario or in the ambient-only run.
pub fn command(quick: bool) -> Result<(), CliError> {
    let progress = std::io::IsTerminal::is_terminal(&std::io::stderr());
    let sens: Vec<sensitivity::Options> = [Profile::Field, Profile::Touch]
        .into_iter()
        .map(|p| sensitivity::Options::new(p, quick))
        .collect();
    let cmp = if quick {
        compare::Options::quick()
    } else {
        compare::Options::default()
    };
    let total: u64 = sens.iter().map(|o| o.work_units()).sum::<u64>()
        + compare::work_units(&cmp)
        + latency::work_units(quick)
        + speed::work_units();
    let bar = if progress {
        indicatif::ProgressBar::new(total)
    } else {
        indicatif::ProgressBar::hidden()
    };
    let tick = |n: u64| bar.inc(n);

    let mut text = String::new();
    let mut lines = Vec::new();
    let mut gaps = Vec::new();
    text.push_str(&format!(
        "sensitivity: steady 50 Hz field in white noise, sigma {} codes, {} Hz, 12 bits\n{:<8} {:>9} {:>9} {:>8} {:>7} {:>9} {:>8}\n",
        sensitivity::SIGMA,
        sensitivity::RATE_HZ,
        "profile",
        "deadline",
        "a90",
        "a_opt",
        "gap dB",
        "ci95 dB",
        "false/h"
    ));
    for o in &sens {
        let s = sensitivity::measure(o, &tick).map_err(CliError::from)?;
        text.push_str(&format!(
            "{:<8} {:>7.0}ms {:>9.2} {:>8.2} {:>7.2} {:>9.2} {:>8.2}\n",
            sensitivity::profile_name(s.profile),
            s.deadline_s * 1e3,
            s.a90,
            s.a_opt,
            s.snr_gap_db(),
            s.ci95_db,
            s.pfa_per_hour()
        ));
        gaps.push((s.profile, s.snr_gap_db()));
        lines.push(s.bench_line());
    }

    let c = compare::compare(&cmp, &tick).map_err(CliError::from)?;
    text.push('\n');
    text.push_str(&c.table());
    lines.extend(c.bench_lines());
    lines.extend(c.ratio_lines());

    let rows = latency::rows(quick, &tick).map_err(CliError::from)?;
    text.push('\n');
    text.push_str(&latency::table_header());
    text.push('\n');
    for r in &rows {
        text.push_str(&r.table_row());
        text.push('\n');
    }
    lines.extend(rows.iter().map(|r| r.bench_line()));

    let speed = speed::rows(quick, &tick).map_err(CliError::from)?;
    lines.extend(speed.iter().map(|r| r.bench_line()));
    bar.finish_and_clear();

    text.push('\n');
    for l in &lines {
        text.push_str(l);
        text.push('\n');
    }
    console::out(&text)?;

    if quick {
        let mut problems = Vec::new();
        for (p, g) in &gaps {
            // A NaN gap (no fit) fails too.
            if *p == Profile::Field && (g.is_nan() || *g > QUICK_FIELD_GAP_DB) {
                problems.push(format!(
                    "field profile {g:.2} dB from the optimum (allowed {QUICK_FIELD_GAP_DB} dB)"
                ));
            }
        }
        for r in c.rows.iter().filter(|r| r.detector == "humsense") {
            if r.false_events > 0 {
                problems.push(format!(
                    "humsense: {} false event(s) on {}",
                    r.false_events, r.scenario
                ));
            }
        }
        if !problems.is_empty() {
            return Err(CliError::from(format!(
                "bench --quick failed: {}",
                problems.join("; ")
            )));
        }
    }
    Ok(())
}
