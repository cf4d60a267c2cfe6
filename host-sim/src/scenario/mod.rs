//! Scenario files: a TOML format of our own, its validation, ground-truth
//! labels, and the entry point to rendering.
//!
//! A scenario names its channels (pads), the front end, the ADC, the mains
//! supply, the ambient coupling, the body, the board's ground, lamps, live
//! conductors, and a timeline of events. Every key is optional except
//! `name`, `duration_s` and at least one `[[channel]]` with a `name`; the
//! defaults are documented on each field below and in
//! `host-sim/scenarios/README.md`.
//!
//! ```
//! let s = humsim::scenario::Scenario::builtin("kitchen-panel")?;
//! let mut r = s.render(&humsim::scenario::RenderOptions { seconds: Some(0.5), seed: None })?;
//! let mut block = vec![0u16; 256 * r.channels()];
//! let mut frames = 0;
//! loop {
//!     let n = r.fill(&mut block);
//!     if n == 0 { break; }
//!     frames += n;
//! }
//! assert_eq!(frames, 1000); // 0.5 s at 2 kHz
//! let labels = s.labels(0.5);
//! assert!(labels.iter().all(|l| l.start_s < l.end_s));
//! # Ok::<(), humsim::scenario::ScenarioError>(())
//! ```
//!
//! Errors ([`ScenarioError`]) carry the file name, the line and column of
//! the key (from the spans the TOML parser records; a key the file leaves
//! out is placed at its table's header), the key, and what was expected.
//! Dotted keys (`mains.frequency_hz = 50.0`, `[a.b]`) get no spans from
//! the parser: errors about such a file name the key without a line.
//!
//! ## Detection range (field labels)
//! A live conductor is *within detection range* of a channel while the hum
//! it couples into that sense node is at least `labels.field_ratio`
//! (default 1.0) times the nominal ambient hum there, and the supply is
//! energised. Both couple the same mains voltage into the same node, so the
//! amplitude ratio equals the ratio of the coupling capacitances
//! `Σ C_conductor(t) / C_ambient`; the ambient's random drift is left out so
//! the labels depend only on the schedule.
//!
//! The module's files: [`error`] (errors, and locating keys by the parser's spans),
//! [`file`](mod@file) (the TOML schema), `validate` (from the file to the model, and
//! the front end's keys), `events` (each timeline event's keys), and
//! [`timeline`] (the expanded plan and its labels). Rendering is
//! [`crate::render`]'s.

pub mod error;
mod events;
pub mod file;
pub mod timeline;
mod validate;

pub use error::ScenarioError;
pub use file::*;
pub use timeline::Plan;
pub use validate::{bad_column_name, MAX_RUN_S};

use crate::adc::Adc;
use crate::body::{Body, Contact, Touch};
use crate::coupling::{DistanceSchedule, Geometry, SenseNode};
use crate::frontend::{Amplifier, AnalogFrontEnd, Comparator, FollowerChain};
use crate::interference::{burst, Discharge, Drift, Lamp};
use crate::labels::{Label, LabelKind};
use crate::mains::{Harmonic, MainsConfig, MainsEvent, MainsSchedule};
use error::KeyPath;
use serde::{Deserialize, Serialize};
use std::fmt;

const PF: f64 = 1e-12;
const MM: f64 = 1e-3;

/// A validated pad.
#[derive(Debug, Clone, PartialEq)]
pub struct Channel {
    /// Name.
    pub name: String,
    /// Sense node.
    pub node: SenseNode,
    /// Ambient coupling, farads.
    pub ambient_f: f64,
    /// How a finger meets it.
    pub contact: Contact,
}

/// A validated conductor.
#[derive(Debug, Clone, PartialEq)]
pub struct Conductor {
    /// Name.
    pub name: String,
    /// Geometry.
    pub geometry: Geometry,
    /// Depth, metres.
    pub depth_m: f64,
    /// Start offset, metres.
    pub start_m: f64,
    /// Indices of channels it couples into.
    pub channels: Vec<usize>,
}

/// A validated timeline action (times in seconds, within one period).
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Action {
    /// Finger on a channel.
    Touch {
        /// Channel index.
        channel: usize,
        /// Timing and pressure.
        touch: Touch,
        /// Contact area, m².
        area_m2: f64,
    },
    /// Conductor motion.
    Move {
        /// Conductor index.
        conductor: usize,
        /// Start, s.
        at_s: f64,
        /// Duration, s.
        duration_s: f64,
        /// Target offset, metres.
        to_m: f64,
    },
    /// Lamp switching (`None` = off, `Some(firing_deg)` = on).
    Lamp {
        /// Lamp index.
        lamp: usize,
        /// Time, s.
        at_s: f64,
        /// Firing angle when switched on.
        on: Option<f64>,
    },
    /// ESD burst.
    Esd {
        /// Start, s.
        at_s: f64,
        /// Kilovolts.
        kv: f64,
        /// Number of discharges.
        count: u32,
        /// Spacing, s.
        interval_s: f64,
        /// Channel (None = all).
        channel: Option<usize>,
    },
    /// A mains event.
    Mains(MainsEvent),
    /// Ground floating (`true`) or earthed.
    Ground {
        /// Time, s.
        at_s: f64,
        /// Floating from then on.
        floating: bool,
    },
}

/// A validated scenario, ready to render.
#[derive(Debug, Clone)]
pub struct Scenario {
    /// The file as parsed (serialise with [`Scenario::to_toml`]).
    pub file: ScenarioFile,
    /// Where it came from (file name or `builtin:NAME`).
    pub origin: String,
    /// The TOML text it was parsed from (for locating keys in later errors).
    pub source: String,
    /// Supply.
    pub mains: MainsConfig,
    /// Converter.
    pub adc: Adc,
    /// Front end.
    pub frontend: AnalogFrontEnd,
    /// Person.
    pub body: Body,
    /// Pads.
    pub channels: Vec<Channel>,
    /// Lamps (with their initial state in `file.lamps[i].on`).
    pub lamps: Vec<Lamp>,
    /// Conductors.
    pub conductors: Vec<Conductor>,
    /// Timeline of one period.
    pub actions: Vec<Action>,
    /// Ambient drift.
    pub drift: Drift,
}

/// Options for [`Scenario::render`].
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct RenderOptions {
    /// Length, seconds (default: the scenario's `duration_s`).
    pub seconds: Option<f64>,
    /// Seed (default: the scenario's `seed`).
    pub seed: Option<u64>,
}

impl Scenario {
    /// Parses and validates scenario TOML. `file` names the source in errors.
    /// Never panics.
    pub fn from_toml_str(src: &str, file: &str) -> Result<Scenario, ScenarioError> {
        let parsed: ScenarioFile = toml::from_str(src).map_err(|e| {
            let (line, column, key) = match e.span() {
                Some(span) => {
                    let (line, col) = crate::text::line_col(src, span.start);
                    // The key the error is about, from the parser's spans: a
                    // missing key in the innermost table holding the error,
                    // else the innermost key holding it.
                    let missing = e
                        .message()
                        .strip_prefix("missing field `")
                        .and_then(|r| r.split('`').next());
                    let at = error::path_at(src, &span);
                    let key = match (missing, at) {
                        (Some(m), Some(p)) if !p.is_empty() => Some(format!("{p}.{m}")),
                        (Some(m), _) => Some(m.to_string()),
                        (None, Some(p)) if !p.is_empty() => Some(p),
                        (None, _) => None,
                    };
                    (Some(line), Some(col), key)
                }
                None => (None, None, None),
            };
            ScenarioError {
                file: file.to_string(),
                line,
                column,
                key,
                message: e.message().trim().lines().collect::<Vec<_>>().join("; "),
            }
        })?;
        Self::validate(parsed, src, file)
    }

    /// Reads and validates a scenario file.
    pub fn from_file(path: &std::path::Path) -> Result<Scenario, ScenarioError> {
        let name = path.display().to_string();
        let src = crate::text::read_small(path, "a scenario file").map_err(|m| ScenarioError {
            file: name.clone(),
            line: None,
            column: None,
            key: None,
            message: m
                .strip_prefix(&format!("{name}:"))
                .map_or(m.as_str(), str::trim_start)
                .to_string(),
        })?;
        Self::from_toml_str(&src, &name)
    }

    /// A built-in scenario by name (see [`crate::builtin::BUILTINS`]).
    pub fn builtin(name: &str) -> Result<Scenario, ScenarioError> {
        match crate::builtin::source(name) {
            Some(src) => Self::from_toml_str(src, &format!("builtin:{name}")),
            None => Err(ScenarioError {
                file: format!("builtin:{name}"),
                line: None,
                column: None,
                key: None,
                message: format!(
                    "no built-in scenario of that name; built-ins: {}",
                    crate::builtin::names().join(", ")
                ),
            }),
        }
    }

    /// A built-in name, or else a path to a TOML file.
    pub fn load(name_or_path: &str) -> Result<Scenario, ScenarioError> {
        if crate::builtin::source(name_or_path).is_some() {
            return Self::builtin(name_or_path);
        }
        let path = std::path::Path::new(name_or_path);
        if !path.exists() {
            return Err(ScenarioError {
                file: name_or_path.to_string(),
                line: None,
                column: None,
                key: None,
                message: format!(
                    "not a built-in scenario and no such file; expected a path to a TOML \
                     scenario or one of: {}",
                    crate::builtin::names().join(", ")
                ),
            });
        }
        Self::from_file(path)
    }

    /// The scenario as TOML (parses back to an equal [`ScenarioFile`]).
    pub fn to_toml(&self) -> Result<String, String> {
        toml::to_string(&self.file).map_err(|e| e.to_string())
    }

    /// Name.
    pub fn name(&self) -> &str {
        &self.file.name
    }

    /// Description.
    pub fn description(&self) -> &str {
        &self.file.description
    }

    /// Default duration, seconds.
    pub fn duration_s(&self) -> f64 {
        self.file.duration_s
    }

    /// Channel names in column order.
    pub fn channel_names(&self) -> Vec<String> {
        self.channels.iter().map(|c| c.name.clone()).collect()
    }

    /// Expands the timeline over `seconds` (repeating it every `repeat_s`).
    pub fn plan(&self, seconds: f64) -> Plan {
        Plan::new(self, seconds)
    }

    /// Ground-truth labels over `seconds`, sorted by start then channel.
    /// Touch intervals run from contact to release; field intervals as in
    /// the module docs, sampled at the ADC rate.
    pub fn labels(&self, seconds: f64) -> Vec<Label> {
        self.plan(seconds).labels(self)
    }
}
