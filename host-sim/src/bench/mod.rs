//! Figures of `humsim bench`, as library modules: each runs its part and
//! returns rows with a `bench_line()` (`bench: key=value …`, DESIGN.md §3).
//!
//! [`mod@reference`] holds the two reference detectors (an RC filter and a
//! comparator; an EMA of `|x − mean|` with a count debounce), [`tuner`]
//! tunes them on labelled data, [`compare`] runs them beside humsense on the
//! built-in touch scenarios and a long ambient-only run, [`latency`] gives
//! humsense's touch-on and touch-off latency at 50 and 60 Hz and 1, 2 and
//! 8 kHz against one mains cycle, and [`speed`] the core detector's host
//! throughput.

pub mod compare;
pub mod latency;
pub mod reference;
pub mod speed;
pub mod tuner;
