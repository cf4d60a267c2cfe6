//! humsim: a physics-based simulator of the mains hum that a capacitive
//! touch pad or field probe hands to an MCU's ADC.
//!
//! One module per physical stage, each with documented units:
//! [`mains`] (supply) → [`coupling`] and [`body`] (capacitances, the sense
//! node's high-pass divider) → [`frontend`] (amplifier, follower chain,
//! comparator) → [`adc`] (quantised codes), plus [`interference`] (ESD,
//! lamps, drift). [`scenario`] reads TOML scenarios, validates them and
//! yields ground-truth labels ([`labels`]: the type, its CSV reader and
//! writer); [`render`] streams codes in blocks; [`builtin`] holds the named
//! scenarios; [`output`] writes CSV and WAV. [`input`] reads logs (CSV, WAV,
//! raw, telemetry captures) as frames, and edge logs; [`convert`] turns a
//! capture into CSV; [`replay`] runs the detector on them
//! ([`edgeinput`] for edge and polled-level logs, through the core
//! crate's comparator input); [`digital`] is `simulate --digital`, the
//! comparator's pin as edge or polled-level logs; [`score`] matches
//! events to labels; [`configfile`] reads and writes detector
//! configurations; [`plot`] draws runs; [`demo`] is `humsim demo`; [`tune`]
//! sweeps detector constants on a labelled log; [`mod@bench`] measures the
//! detector against reference detectors, the latency floor and for speed.
//! Around them: [`outfile`]
//! (outputs written beside and renamed into place, never over an input),
//! [`field_error`] (a model's refused parameter, by name),
//! [`console`] (stdout and stderr without panics) and [`text`] (bounds on
//! lines and files, cells quoted short in messages).
//!
//! ```
//! use humsim::scenario::{Scenario, RenderOptions};
//! let s = Scenario::builtin("kitchen-panel")?;
//! let mut r = s.render(&RenderOptions { seconds: Some(0.1), seed: Some(1) })?;
//! let mut block = vec![0u16; 64 * r.channels()];
//! while r.fill(&mut block) > 0 {}
//! # Ok::<(), humsim::scenario::ScenarioError>(())
//! ```
//!
//! Every run is deterministic given `(scenario, seed, seconds)`.

pub mod adc;
pub mod bench;
pub mod body;
pub mod builtin;
pub mod configfile;
pub mod console;
pub mod convert;
pub mod coupling;
pub mod demo;
pub mod digital;
pub mod edgeinput;
pub mod field_error;
pub mod frontend;
pub mod input;
pub mod interference;
pub mod labels;
pub mod mains;
pub mod outfile;
pub mod output;
pub mod plot;
pub mod reliability;
pub mod render;
pub mod replay;
pub mod rng;
pub mod scenario;
pub mod score;
pub mod selfcheck;
pub mod text;
pub mod tune;
