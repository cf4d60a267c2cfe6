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
//! Errors ([`ScenarioError`]) carry the file name, the line (and column where
//! the TOML parser gives one), the key, and what was expected.
//!
//! ## Detection range (field labels)
//! A live conductor is *within detection range* of a channel while the hum
//! it couples into that sense node is at least `labels.field_ratio`
//! (default 1.0) times the nominal ambient hum there, and the supply is
//! energised. Both couple the same mains voltage into the same node, so the
//! amplitude ratio equals the ratio of the coupling capacitances
//! `Σ C_conductor(t) / C_ambient`; the ambient's random drift is left out so
//! the labels depend only on the schedule.

use crate::adc::Adc;
use crate::body::{Body, Contact, Touch};
use crate::coupling::{DistanceSchedule, Geometry, SenseNode};
use crate::frontend::{Amplifier, Comparator, FollowerChain, FrontEnd};
use crate::interference::{burst, Discharge, Drift, Lamp};
use crate::labels::{Label, LabelKind};
use crate::mains::{Harmonic, MainsConfig, MainsEvent, MainsSchedule};
use serde::{Deserialize, Serialize};
use std::fmt;

const PF: f64 = 1e-12;
const MM: f64 = 1e-3;

// ---------------------------------------------------------------- errors

/// A problem with a scenario: where it is and what was expected.
#[derive(Debug, Clone, PartialEq)]
pub struct ScenarioError {
    /// File name (or `builtin:NAME`).
    pub file: String,
    /// 1-based line, when known.
    pub line: Option<usize>,
    /// 1-based column, when known.
    pub column: Option<usize>,
    /// The key concerned, e.g. `adc.bits` or `event[3].channel`.
    pub key: Option<String>,
    /// What is wrong and what is expected.
    pub message: String,
}

impl fmt::Display for ScenarioError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{}", self.file)?;
        if let Some(l) = self.line {
            write!(f, ":{l}")?;
            if let Some(c) = self.column {
                write!(f, ":{c}")?;
            }
        }
        write!(f, ": ")?;
        if let Some(k) = &self.key {
            write!(f, "key `{k}`: ")?;
        }
        write!(f, "{}", self.message)
    }
}

impl std::error::Error for ScenarioError {}

/// Where a key lives in the file, for locating it by line.
#[derive(Debug, Clone)]
struct KeyPath {
    table: &'static str,
    index: Option<usize>,
    key: Option<&'static str>,
}

impl KeyPath {
    fn top(key: &'static str) -> Self {
        KeyPath {
            table: "",
            index: None,
            key: Some(key),
        }
    }
    fn table(table: &'static str, key: &'static str) -> Self {
        KeyPath {
            table,
            index: None,
            key: Some(key),
        }
    }
    fn item(table: &'static str, index: usize, key: &'static str) -> Self {
        KeyPath {
            table,
            index: Some(index),
            key: Some(key),
        }
    }
    fn display(&self) -> String {
        let k = self.key.unwrap_or("");
        match (self.table, self.index) {
            ("", _) => k.to_string(),
            (t, Some(i)) if k.is_empty() => format!("{t}[{i}]"),
            (t, Some(i)) => format!("{t}[{i}].{k}"),
            (t, None) => format!("{t}.{k}"),
        }
    }
}

fn header_of(line: &str) -> Option<(bool, &str)> {
    let l = line.trim();
    if let Some(rest) = l.strip_prefix("[[") {
        let end = rest.find("]]")?;
        return Some((true, rest.get(..end)?.trim()));
    }
    if let Some(rest) = l.strip_prefix('[') {
        let end = rest.find(']')?;
        return Some((false, rest.get(..end)?.trim()));
    }
    None
}

fn line_key(line: &str) -> Option<&str> {
    let l = line.trim_start();
    if l.starts_with('#') || l.starts_with('[') {
        return None;
    }
    let eq = l.find('=')?;
    Some(l.get(..eq)?.trim().trim_matches('"'))
}

/// Finds the 1-based line of a key (or of its table's header) in `src`.
fn locate(src: &str, path: &KeyPath) -> Option<usize> {
    let mut in_table = path.table.is_empty();
    let mut header_line = None;
    let mut count = 0usize;
    for (i, line) in src.lines().enumerate() {
        if let Some((array, name)) = header_of(line) {
            if in_table && header_line.is_some() {
                break;
            }
            if in_table && path.table.is_empty() {
                break;
            }
            in_table = false;
            if name == path.table {
                let matches = if array {
                    let m = Some(count) == path.index;
                    count += 1;
                    m
                } else {
                    path.index.is_none()
                };
                if matches {
                    in_table = true;
                    header_line = Some(i + 1);
                }
            }
            continue;
        }
        if in_table {
            if let (Some(k), Some(want)) = (line_key(line), path.key) {
                if k == want {
                    return Some(i + 1);
                }
            }
        }
    }
    header_line
}

// ---------------------------------------------------------------- file format

fn is_default<T: Default + PartialEq>(v: &T) -> bool {
    *v == T::default()
}

/// Mains presets.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
pub enum MainsPreset {
    /// 230 V, 50 Hz, 47–52 Hz range.
    #[default]
    #[serde(rename = "230v-50hz")]
    V230Hz50,
    /// 120 V, 60 Hz, 56.4–62.4 Hz range.
    #[serde(rename = "120v-60hz")]
    V120Hz60,
}

/// One harmonic in the file.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct HarmonicSection {
    /// Order, 2..=100.
    pub order: u32,
    /// Percent of the fundamental.
    pub percent: f64,
    /// Phase, degrees (default 0).
    #[serde(default, skip_serializing_if = "is_default")]
    pub phase_deg: f64,
}

/// `[mains]`: a preset plus overrides.
#[derive(Debug, Clone, PartialEq, Default, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct MainsSection {
    /// `"230v-50hz"` (default) or `"120v-60hz"`.
    #[serde(default)]
    pub preset: MainsPreset,
    /// RMS voltage, volts (preset).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub rms_v: Option<f64>,
    /// Nominal frequency, Hz (preset).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub frequency_hz: Option<f64>,
    /// Hard frequency bounds `[low, high]`, Hz (preset: EN 50160 +4/−6 %).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub range_hz: Option<[f64; 2]>,
    /// Random wander standard deviation, Hz (preset 0.02).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub wander_hz: Option<f64>,
    /// Wander correlation time, s (preset 30).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub wander_tau_s: Option<f64>,
    /// Sinusoidal sweep amplitude, Hz (default 0).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub sweep_hz: Option<f64>,
    /// Sweep period, s (default 600).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub sweep_period_s: Option<f64>,
    /// Harmonics (default none).
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub harmonics: Vec<HarmonicSection>,
}

fn d_bits() -> u32 {
    12
}
fn d_vref() -> f64 {
    3.3
}
fn d_rate() -> f64 {
    2000.0
}
fn d_adc_noise() -> f64 {
    0.4e-3
}

/// `[adc]`.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct AdcSection {
    /// Resolution, 8..=16 bits (default 12).
    #[serde(default = "d_bits")]
    pub bits: u32,
    /// Reference, volts (default 3.3).
    #[serde(default = "d_vref")]
    pub vref_v: f64,
    /// Sample rate, Hz (default 2000).
    #[serde(default = "d_rate")]
    pub rate_hz: f64,
    /// Input-referred noise, volts RMS (default 0.4 mV).
    #[serde(default = "d_adc_noise")]
    pub noise_v: f64,
    /// Timing jitter, seconds RMS (default 0).
    #[serde(default)]
    pub jitter_s: f64,
}

impl Default for AdcSection {
    fn default() -> Self {
        AdcSection {
            bits: d_bits(),
            vref_v: d_vref(),
            rate_hz: d_rate(),
            noise_v: d_adc_noise(),
            jitter_s: 0.0,
        }
    }
}

/// Front-end kinds.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum FrontEndKind {
    /// Non-inverting amplifier (`rf_ohm`, `rg_ohm`, `supply_v`, `bias_v`,
    /// `swing_low_v`, `swing_high_v`).
    #[default]
    Amplifier,
    /// Emitter followers (`stages`, `beta`, `vbe_v`, `supply_v`, `vce_sat_v`,
    /// `load_ohm`).
    Follower,
    /// Comparator (`threshold_v`, `hysteresis_v`, `supply_v`, `rc_ohm`, `rc_nf`).
    Comparator,
}

/// `[frontend]`: `kind` plus that kind's keys; other keys are rejected.
#[derive(Debug, Clone, PartialEq, Default, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
#[allow(missing_docs)] // each key is documented on FrontEndKind and in the README
pub struct FrontEndSection {
    #[serde(default)]
    pub kind: FrontEndKind,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub supply_v: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub rf_ohm: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub rg_ohm: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub bias_v: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub swing_low_v: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub swing_high_v: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub stages: Option<u32>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub beta: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub vbe_v: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub vce_sat_v: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub load_ohm: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub threshold_v: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub hysteresis_v: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub rc_ohm: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub rc_nf: Option<f64>,
}

fn d_amb_pf() -> f64 {
    0.002
}
fn d_amb_noise() -> f64 {
    // kT/C noise of a 10 pF node at 300 K: sqrt(1.380649e-23 * 300 / 10e-12)
    // = 20.4 µV RMS (standard thermodynamics; computed).
    20e-6
}
fn d_drift() -> f64 {
    0.03
}
fn d_drift_tau() -> f64 {
    120.0
}
fn d_esd_fraction() -> f64 {
    1e-4
}

/// `[ambient]`: coupling of room wiring into every pad.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct AmbientSection {
    /// Wiring-to-pad coupling, pF (default 0.002).
    #[serde(default = "d_amb_pf")]
    pub coupling_pf: f64,
    /// Broadband noise at the sense node, volts RMS (default 20 µV, about the
    /// kT/C noise of a 10 pF node).
    #[serde(default = "d_amb_noise")]
    pub noise_v: f64,
    /// Relative standard deviation of the slow drift (default 0.03).
    #[serde(default = "d_drift")]
    pub drift: f64,
    /// Drift correlation time, s (default 120).
    #[serde(default = "d_drift_tau")]
    pub drift_tau_s: f64,
    /// Fraction of an ESD's charge reaching a sense node (default 1e-4).
    #[serde(default = "d_esd_fraction")]
    pub esd_charge_fraction: f64,
}

impl Default for AmbientSection {
    fn default() -> Self {
        AmbientSection {
            coupling_pf: d_amb_pf(),
            noise_v: d_amb_noise(),
            drift: d_drift(),
            drift_tau_s: d_drift_tau(),
            esd_charge_fraction: d_esd_fraction(),
        }
    }
}

fn d_body_ground() -> f64 {
    150.0
}
fn d_body_mains() -> f64 {
    3.0
}
fn d_finger() -> f64 {
    80.0
}

/// `[body]`: the person touching.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct BodySection {
    /// Body to ground, pF (default 150).
    #[serde(default = "d_body_ground")]
    pub ground_pf: f64,
    /// Body to mains wiring, pF (default 3).
    #[serde(default = "d_body_mains")]
    pub mains_pf: f64,
    /// Fingertip contact area at full pressure, mm² (default 80).
    #[serde(default = "d_finger")]
    pub finger_area_mm2: f64,
    /// Fraction of a finger's coupling reaching each neighbouring channel (in
    /// file order), default 0.
    #[serde(default)]
    pub spill: f64,
}

impl Default for BodySection {
    fn default() -> Self {
        BodySection {
            ground_pf: d_body_ground(),
            mains_pf: d_body_mains(),
            finger_area_mm2: d_finger(),
            spill: 0.0,
        }
    }
}

fn d_earth_pf() -> f64 {
    30.0
}
fn d_ground_mains_pf() -> f64 {
    0.5
}

/// `[ground]`: the board's circuit ground.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct GroundSection {
    /// Whether the board floats (battery) at the start (default false).
    #[serde(default)]
    pub floating: bool,
    /// Floating board to earth, pF (default 30).
    #[serde(default = "d_earth_pf")]
    pub earth_pf: f64,
    /// Floating board to mains wiring, pF (default 0.5).
    #[serde(default = "d_ground_mains_pf")]
    pub mains_pf: f64,
}

impl Default for GroundSection {
    fn default() -> Self {
        GroundSection {
            floating: false,
            earth_pf: d_earth_pf(),
            mains_pf: d_ground_mains_pf(),
        }
    }
}

fn d_ratio() -> f64 {
    1.0
}

/// `[labels]`.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct LabelSection {
    /// Conductor-to-ambient coupling ratio that counts as in range (default 1).
    #[serde(default = "d_ratio")]
    pub field_ratio: f64,
}

impl Default for LabelSection {
    fn default() -> Self {
        LabelSection {
            field_ratio: d_ratio(),
        }
    }
}

fn d_input_mohm() -> f64 {
    10.0
}
fn d_stray() -> f64 {
    10.0
}
fn d_overlay_mm() -> f64 {
    2.0
}
fn d_overlay_er() -> f64 {
    3.0
}

/// `[[channel]]`: one pad and its sense node.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ChannelSection {
    /// Column name in the output.
    pub name: String,
    /// Input resistance, MΩ (default 10).
    #[serde(default = "d_input_mohm")]
    pub input_mohm: f64,
    /// Stray capacitance, pF (default 10).
    #[serde(default = "d_stray")]
    pub stray_pf: f64,
    /// Ambient coupling for this pad, pF (default `ambient.coupling_pf`).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub ambient_pf: Option<f64>,
    /// Overlay thickness, mm (default 2).
    #[serde(default = "d_overlay_mm")]
    pub overlay_mm: f64,
    /// Overlay relative permittivity (default 3).
    #[serde(default = "d_overlay_er")]
    pub overlay_eps_r: f64,
    /// Bare metal pad touched by skin (ignores the overlay), default false.
    #[serde(default)]
    pub skin: bool,
}

/// `[[lamp]]`.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct LampSection {
    /// Name used by `lamp-on`/`lamp-off` events.
    pub name: String,
    /// Cord-to-pad coupling, pF.
    pub coupling_pf: f64,
    /// Dimmer firing angle, degrees in [0, 180) (default 0 = no dimmer).
    #[serde(default)]
    pub firing_deg: f64,
    /// On at the start (default false).
    #[serde(default)]
    pub on: bool,
}

/// Shapes of live conductors.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum ConductorShape {
    /// Round wire (`radius_mm`, `length_mm`, `width_mm`).
    #[default]
    Wire,
    /// Flat live surface (`area_mm2`).
    Plate,
    /// Given coupling `coupling_pf` whenever in place.
    Fixed,
}

fn d_start_mm() -> f64 {
    1000.0
}
fn d_radius() -> f64 {
    0.9
}
fn d_length() -> f64 {
    30.0
}
fn d_eps1() -> f64 {
    1.0
}

/// `[[conductor]]`: a live conductor at mains potential.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ConductorSection {
    /// Name used by `approach`/`retreat` events.
    pub name: String,
    /// Shape (default wire).
    #[serde(default)]
    pub shape: ConductorShape,
    /// Wire radius, mm (default 0.9).
    #[serde(default = "d_radius")]
    pub radius_mm: f64,
    /// Electrode length along the wire, mm (default 30).
    #[serde(default = "d_length")]
    pub length_mm: f64,
    /// Electrode width across the wire, mm (default 30).
    #[serde(default = "d_length")]
    pub width_mm: f64,
    /// Plate area, mm² (plate only).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub area_mm2: Option<f64>,
    /// Coupling, pF (fixed only).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub coupling_pf: Option<f64>,
    /// Relative permittivity between conductor and pad (default 1).
    #[serde(default = "d_eps1")]
    pub eps_r: f64,
    /// Minimum distance, e.g. depth in a wall, mm (default 0).
    #[serde(default)]
    pub depth_mm: f64,
    /// Offset at the start, mm (default 1000).
    #[serde(default = "d_start_mm")]
    pub start_mm: f64,
    /// Channels it couples into (default all).
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub channels: Vec<String>,
}

/// Timeline event kinds.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum EventKind {
    /// Finger on `channel` (`hold_s`, `ramp_ms`, `release_ms`, `pressure`, `area_mm2`).
    Touch,
    /// Move `conductor` to offset `to_mm` over `duration_s`.
    Approach,
    /// Same motion as approach, named for the reader.
    Retreat,
    /// Switch `lamp` on (optional `firing_deg`).
    LampOn,
    /// Switch `lamp` off.
    LampOff,
    /// Discharges (`kv`, `count`, `interval_s`, optional `channel`).
    Esd,
    /// Nominal frequency steps to `to_hz`.
    FrequencyStep,
    /// Dip to `residual_percent` for `duration_s`.
    Dip,
    /// Swell to `magnitude_percent` for `duration_s`.
    Swell,
    /// Supply interrupted.
    MainsOff,
    /// Supply restored.
    MainsOn,
    /// Board ground starts floating (battery).
    GroundFloat,
    /// Board ground earthed again.
    GroundEarth,
}

/// `[[event]]`: `kind`, `at_s` and that kind's keys; other keys are rejected.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
#[allow(missing_docs)] // keys are documented on EventKind and in the README
pub struct EventSection {
    pub kind: EventKind,
    pub at_s: f64,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub channel: Option<String>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub hold_s: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub ramp_ms: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub release_ms: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub pressure: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub area_mm2: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub conductor: Option<String>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub to_mm: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub duration_s: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub lamp: Option<String>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub firing_deg: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub kv: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub count: Option<u32>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub interval_s: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub to_hz: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub residual_percent: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub magnitude_percent: Option<f64>,
}

/// The whole file, as written.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ScenarioFile {
    /// Scenario name.
    pub name: String,
    /// One-line description.
    #[serde(default)]
    pub description: String,
    /// Default length of a run, seconds.
    pub duration_s: f64,
    /// Default seed (default 0).
    #[serde(default)]
    pub seed: u64,
    /// Repeat the timeline with this period, seconds (for long runs).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub repeat_s: Option<f64>,
    /// Supply.
    #[serde(default)]
    pub mains: MainsSection,
    /// Converter.
    #[serde(default)]
    pub adc: AdcSection,
    /// Front end.
    #[serde(default)]
    pub frontend: FrontEndSection,
    /// Ambient coupling.
    #[serde(default)]
    pub ambient: AmbientSection,
    /// The person.
    #[serde(default)]
    pub body: BodySection,
    /// The board's ground.
    #[serde(default)]
    pub ground: GroundSection,
    /// Label rules.
    #[serde(default)]
    pub labels: LabelSection,
    /// Pads.
    #[serde(default, rename = "channel")]
    pub channels: Vec<ChannelSection>,
    /// Lamps.
    #[serde(default, rename = "lamp", skip_serializing_if = "Vec::is_empty")]
    pub lamps: Vec<LampSection>,
    /// Live conductors.
    #[serde(default, rename = "conductor", skip_serializing_if = "Vec::is_empty")]
    pub conductors: Vec<ConductorSection>,
    /// Timeline.
    #[serde(default, rename = "event", skip_serializing_if = "Vec::is_empty")]
    pub events: Vec<EventSection>,
}

// ---------------------------------------------------------------- validated model

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
    pub frontend: FrontEnd,
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

struct Ctx<'a> {
    src: &'a str,
    file: &'a str,
}

impl Ctx<'_> {
    fn err(&self, path: KeyPath, message: impl Into<String>) -> ScenarioError {
        ScenarioError {
            file: self.file.to_string(),
            line: locate(self.src, &path),
            column: None,
            key: Some(path.display()),
            message: message.into(),
        }
    }
}

fn positive(ctx: &Ctx, path: KeyPath, v: f64, what: &str) -> Result<f64, ScenarioError> {
    if v.is_finite() && v > 0.0 {
        Ok(v)
    } else {
        Err(ctx.err(path, format!("expected {what} > 0, got {v}")))
    }
}

fn non_negative(ctx: &Ctx, path: KeyPath, v: f64, what: &str) -> Result<f64, ScenarioError> {
    if v.is_finite() && v >= 0.0 {
        Ok(v)
    } else {
        Err(ctx.err(path, format!("expected {what} >= 0, got {v}")))
    }
}

/// Longest run a scenario may ask for, seconds (`duration_s`, `--seconds`).
pub const MAX_RUN_S: f64 = 1e7;

/// Why `name` cannot be a channel (a column of a CSV log that replay reads
/// back), or `None` when it can: not empty and not only spaces, no comma,
/// quote or control character, not `time_s` (replay's time column), not a
/// number (replay takes a header cell that is a number for a data row), and
/// not longer than 64 bytes.
pub fn bad_column_name(name: &str) -> Option<&'static str> {
    if name.trim().is_empty() {
        Some("expected a non-empty name")
    } else if name.contains([',', '"']) || name.chars().any(char::is_control) {
        Some("expected a name without commas, quotes or control characters")
    } else if name.trim() != name {
        Some("expected a name without spaces at either end (CSV readers trim them)")
    } else if name == "time_s" {
        Some("`time_s` is the name of replay's time column; choose another")
    } else if name.parse::<f64>().is_ok() {
        Some("a name that reads as a number would be taken for a data row; choose another")
    } else if name.len() > 64 {
        Some("expected a name of at most 64 bytes")
    } else {
        None
    }
}

impl Scenario {
    /// Parses and validates scenario TOML. `file` names the source in errors.
    /// Never panics.
    pub fn from_toml_str(src: &str, file: &str) -> Result<Scenario, ScenarioError> {
        let parsed: ScenarioFile = toml::from_str(src).map_err(|e| {
            let (line, column, key) = match e.span() {
                Some(span) => {
                    let before = src.get(..span.start).unwrap_or("");
                    let line = before.matches('\n').count() + 1;
                    let col = before.len() - before.rfind('\n').map_or(0, |i| i + 1) + 1;
                    let text = src.lines().nth(line - 1).unwrap_or("");
                    // The enclosing table, with its index for arrays of tables.
                    let mut section: Option<String> = None;
                    let mut counts: Vec<(String, usize)> = Vec::new();
                    for l in src.lines().take(line) {
                        if let Some((array, name)) = header_of(l) {
                            section = Some(if array {
                                let k = match counts.iter_mut().find(|(n, _)| n == name) {
                                    Some((_, k)) => {
                                        *k += 1;
                                        *k
                                    }
                                    None => {
                                        counts.push((name.to_string(), 0));
                                        0
                                    }
                                };
                                format!("{name}[{k}]")
                            } else {
                                name.to_string()
                            });
                        }
                    }
                    let missing = e
                        .message()
                        .strip_prefix("missing field `")
                        .and_then(|r| r.split('`').next());
                    let key = missing.or_else(|| line_key(text)).map(|k| match &section {
                        Some(s) => format!("{s}.{k}"),
                        None => k.to_string(),
                    });
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

    #[allow(clippy::too_many_lines)]
    fn validate(f: ScenarioFile, src: &str, file: &str) -> Result<Scenario, ScenarioError> {
        let ctx = Ctx { src, file };
        positive(
            &ctx,
            KeyPath::top("duration_s"),
            f.duration_s,
            "a duration in seconds",
        )?;
        if f.duration_s > MAX_RUN_S {
            return Err(ctx.err(
                KeyPath::top("duration_s"),
                format!(
                    "expected at most {MAX_RUN_S:e} s (about 116 days), got {}",
                    crate::text::num(f.duration_s)
                ),
            ));
        }
        if let Some(p) = f.repeat_s {
            if !(p.is_finite() && p >= 1.0) {
                return Err(ctx.err(
                    KeyPath::top("repeat_s"),
                    format!("expected a period of at least 1 second, got {p}"),
                ));
            }
        }

        // mains
        let mut mains = match f.mains.preset {
            MainsPreset::V230Hz50 => MainsConfig::preset_230v_50hz(),
            MainsPreset::V120Hz60 => MainsConfig::preset_120v_60hz(),
        };
        let m = &f.mains;
        if let Some(v) = m.rms_v {
            mains.rms_v = v;
        }
        if let Some(v) = m.frequency_hz {
            mains.frequency_hz = v;
        }
        if let Some([lo, hi]) = m.range_hz {
            mains.range_hz = (lo, hi);
        }
        if let Some(v) = m.wander_hz {
            mains.wander_hz = v;
        }
        if let Some(v) = m.wander_tau_s {
            mains.wander_tau_s = v;
        }
        if let Some(v) = m.sweep_hz {
            mains.sweep_hz = v;
        }
        if let Some(v) = m.sweep_period_s {
            mains.sweep_period_s = v;
        }
        mains.harmonics = m
            .harmonics
            .iter()
            .map(|h| Harmonic {
                order: h.order,
                percent: h.percent,
                phase_deg: h.phase_deg,
            })
            .collect();
        if let Err(msg) = mains.validate() {
            let key = msg.split(':').next().unwrap_or("");
            let key: &'static str = match key {
                "rms_v" => "rms_v",
                "range_hz" => "range_hz",
                "frequency_hz" => "frequency_hz",
                "wander_hz" => "wander_hz",
                "wander_tau_s" => "wander_tau_s",
                "sweep_hz" => "sweep_hz",
                "sweep_period_s" => "sweep_period_s",
                _ => "harmonics",
            };
            let rest = msg.split_once(": ").map_or(msg.as_str(), |(_, r)| r);
            return Err(ctx.err(KeyPath::table("mains", key), rest.to_string()));
        }

        // adc
        let a = &f.adc;
        let adc = Adc {
            bits: a.bits,
            vref_v: a.vref_v,
            rate_hz: a.rate_hz,
            noise_v: a.noise_v,
            jitter_s: a.jitter_s,
        };
        if let Err(msg) = adc.validate() {
            let (key, rest) = msg.split_once(": ").unwrap_or(("bits", msg.as_str()));
            let key: &'static str = match key {
                "bits" => "bits",
                "vref_v" => "vref_v",
                "rate_hz" => "rate_hz",
                "noise_v" => "noise_v",
                _ => "jitter_s",
            };
            return Err(ctx.err(KeyPath::table("adc", key), rest.to_string()));
        }
        let nyquist = adc.rate_hz / 2.0;
        if mains.range_hz.1 >= nyquist {
            return Err(ctx.err(
                KeyPath::table("adc", "rate_hz"),
                format!(
                    "expected a sample rate above twice the highest mains frequency ({} Hz)",
                    mains.range_hz.1
                ),
            ));
        }

        let frontend = Self::frontend(&ctx, &f.frontend)?;

        // ambient, body, ground, labels
        let am = &f.ambient;
        non_negative(
            &ctx,
            KeyPath::table("ambient", "coupling_pf"),
            am.coupling_pf,
            "a capacitance in pF",
        )?;
        non_negative(
            &ctx,
            KeyPath::table("ambient", "noise_v"),
            am.noise_v,
            "a noise level in volts RMS",
        )?;
        if !(am.drift.is_finite() && (0.0..=1.0).contains(&am.drift)) {
            return Err(ctx.err(
                KeyPath::table("ambient", "drift"),
                "expected a relative deviation in 0..=1",
            ));
        }
        positive(
            &ctx,
            KeyPath::table("ambient", "drift_tau_s"),
            am.drift_tau_s,
            "a time in seconds",
        )?;
        if !(am.esd_charge_fraction.is_finite() && (0.0..=1.0).contains(&am.esd_charge_fraction)) {
            return Err(ctx.err(
                KeyPath::table("ambient", "esd_charge_fraction"),
                "expected a fraction in 0..=1",
            ));
        }
        let b = &f.body;
        positive(
            &ctx,
            KeyPath::table("body", "ground_pf"),
            b.ground_pf,
            "a capacitance in pF",
        )?;
        non_negative(
            &ctx,
            KeyPath::table("body", "mains_pf"),
            b.mains_pf,
            "a capacitance in pF",
        )?;
        positive(
            &ctx,
            KeyPath::table("body", "finger_area_mm2"),
            b.finger_area_mm2,
            "an area in mm²",
        )?;
        if !(b.spill.is_finite() && (0.0..=1.0).contains(&b.spill)) {
            return Err(ctx.err(
                KeyPath::table("body", "spill"),
                "expected a fraction in 0..=1",
            ));
        }
        positive(
            &ctx,
            KeyPath::table("ground", "earth_pf"),
            f.ground.earth_pf,
            "a capacitance in pF",
        )?;
        non_negative(
            &ctx,
            KeyPath::table("ground", "mains_pf"),
            f.ground.mains_pf,
            "a capacitance in pF",
        )?;
        positive(
            &ctx,
            KeyPath::table("labels", "field_ratio"),
            f.labels.field_ratio,
            "a ratio",
        )?;
        let body = Body {
            c_ground_f: b.ground_pf * PF,
            c_mains_f: b.mains_pf * PF,
        };

        // channels
        if f.channels.is_empty() {
            return Err(ScenarioError {
                file: file.to_string(),
                line: None,
                column: None,
                key: Some("channel".into()),
                message: "expected at least one [[channel]] table with a name".into(),
            });
        }
        let mut channels = Vec::new();
        for (i, c) in f.channels.iter().enumerate() {
            if let Some(why) = bad_column_name(&c.name) {
                return Err(ctx.err(
                    KeyPath::item("channel", i, "name"),
                    format!("`{}`: {why}", crate::text::show(&c.name)),
                ));
            }
            if channels.iter().any(|x: &Channel| x.name == c.name) {
                return Err(ctx.err(
                    KeyPath::item("channel", i, "name"),
                    format!("duplicate channel name `{}`", c.name),
                ));
            }
            positive(
                &ctx,
                KeyPath::item("channel", i, "input_mohm"),
                c.input_mohm,
                "a resistance in MΩ",
            )?;
            non_negative(
                &ctx,
                KeyPath::item("channel", i, "stray_pf"),
                c.stray_pf,
                "a capacitance in pF",
            )?;
            let amb = c.ambient_pf.unwrap_or(am.coupling_pf);
            non_negative(
                &ctx,
                KeyPath::item("channel", i, "ambient_pf"),
                amb,
                "a capacitance in pF",
            )?;
            positive(
                &ctx,
                KeyPath::item("channel", i, "overlay_mm"),
                c.overlay_mm,
                "a thickness in mm",
            )?;
            if !(c.overlay_eps_r.is_finite() && c.overlay_eps_r >= 1.0) {
                return Err(ctx.err(
                    KeyPath::item("channel", i, "overlay_eps_r"),
                    "expected a relative permittivity >= 1",
                ));
            }
            if c.stray_pf + amb <= 0.0 {
                return Err(ctx.err(
                    KeyPath::item("channel", i, "stray_pf"),
                    "expected stray_pf + ambient coupling > 0",
                ));
            }
            channels.push(Channel {
                name: c.name.clone(),
                node: SenseNode {
                    r_ohm: c.input_mohm * 1e6,
                    c_stray_f: c.stray_pf * PF,
                },
                ambient_f: amb * PF,
                contact: if c.skin {
                    Contact::Skin
                } else {
                    Contact::Overlay {
                        thickness_m: c.overlay_mm * MM,
                        eps_r: c.overlay_eps_r,
                    }
                },
            });
        }
        let channel_index = |name: &str| channels.iter().position(|c| c.name == name);

        // lamps
        let mut lamps = Vec::new();
        for (i, l) in f.lamps.iter().enumerate() {
            if f.lamps.iter().take(i).any(|x| x.name == l.name) {
                return Err(ctx.err(
                    KeyPath::item("lamp", i, "name"),
                    format!("duplicate lamp name `{}`", l.name),
                ));
            }
            non_negative(
                &ctx,
                KeyPath::item("lamp", i, "coupling_pf"),
                l.coupling_pf,
                "a capacitance in pF",
            )?;
            if !(l.firing_deg.is_finite() && (0.0..180.0).contains(&l.firing_deg)) {
                return Err(ctx.err(
                    KeyPath::item("lamp", i, "firing_deg"),
                    "expected a firing angle in degrees, 0 <= angle < 180",
                ));
            }
            lamps.push(Lamp {
                coupling_f: l.coupling_pf * PF,
                firing_deg: l.firing_deg,
            });
        }

        // conductors
        let mut conductors = Vec::new();
        for (i, c) in f.conductors.iter().enumerate() {
            if f.conductors.iter().take(i).any(|x| x.name == c.name) {
                return Err(ctx.err(
                    KeyPath::item("conductor", i, "name"),
                    format!("duplicate conductor name `{}`", c.name),
                ));
            }
            if !(c.eps_r.is_finite() && c.eps_r >= 1.0) {
                return Err(ctx.err(
                    KeyPath::item("conductor", i, "eps_r"),
                    "expected a relative permittivity >= 1",
                ));
            }
            non_negative(
                &ctx,
                KeyPath::item("conductor", i, "depth_mm"),
                c.depth_mm,
                "a depth in mm",
            )?;
            if !c.start_mm.is_finite() {
                return Err(ctx.err(
                    KeyPath::item("conductor", i, "start_mm"),
                    "expected a finite offset in mm",
                ));
            }
            let geometry = match c.shape {
                ConductorShape::Wire => Geometry::Wire {
                    eps_r: c.eps_r,
                    radius_m: positive(
                        &ctx,
                        KeyPath::item("conductor", i, "radius_mm"),
                        c.radius_mm,
                        "a radius in mm",
                    )? * MM,
                    length_m: positive(
                        &ctx,
                        KeyPath::item("conductor", i, "length_mm"),
                        c.length_mm,
                        "a length in mm",
                    )? * MM,
                    width_m: positive(
                        &ctx,
                        KeyPath::item("conductor", i, "width_mm"),
                        c.width_mm,
                        "a width in mm",
                    )? * MM,
                },
                ConductorShape::Plate => {
                    let area = c.area_mm2.ok_or_else(|| {
                        ctx.err(
                            KeyPath::item("conductor", i, "area_mm2"),
                            "a plate conductor needs area_mm2 (mm²)",
                        )
                    })?;
                    Geometry::Plate {
                        eps_r: c.eps_r,
                        area_m2: positive(
                            &ctx,
                            KeyPath::item("conductor", i, "area_mm2"),
                            area,
                            "an area in mm²",
                        )? * 1e-6,
                    }
                }
                ConductorShape::Fixed => {
                    let pf = c.coupling_pf.ok_or_else(|| {
                        ctx.err(
                            KeyPath::item("conductor", i, "coupling_pf"),
                            "a fixed conductor needs coupling_pf (pF)",
                        )
                    })?;
                    Geometry::Fixed(
                        non_negative(
                            &ctx,
                            KeyPath::item("conductor", i, "coupling_pf"),
                            pf,
                            "a capacitance in pF",
                        )? * PF,
                    )
                }
            };
            let mut idx = Vec::new();
            for name in &c.channels {
                match channel_index(name) {
                    Some(k) => idx.push(k),
                    None => {
                        return Err(ctx.err(
                            KeyPath::item("conductor", i, "channels"),
                            format!(
                                "unknown channel `{name}`; expected one of the [[channel]] names"
                            ),
                        ))
                    }
                }
            }
            if idx.is_empty() {
                idx = (0..channels.len()).collect();
            }
            conductors.push(Conductor {
                name: c.name.clone(),
                geometry,
                depth_m: c.depth_mm * MM,
                start_m: c.start_mm * MM,
                channels: idx,
            });
        }

        // events
        let mut actions = Vec::new();
        for (i, e) in f.events.iter().enumerate() {
            actions.push(Self::event(&ctx, i, e, &f, &channels, &mains)?);
        }
        if f.repeat_s.is_none() {
            for (i, e) in f.events.iter().enumerate() {
                if e.at_s >= f.duration_s {
                    return Err(ctx.err(
                        KeyPath::item("event", i, "at_s"),
                        format!(
                            "the event starts at {} s, after the scenario ends (duration_s = \
                             {} s): it would never happen",
                            crate::text::num(e.at_s),
                            crate::text::num(f.duration_s)
                        ),
                    ));
                }
            }
        }
        if let Some(period) = f.repeat_s {
            for (i, e) in f.events.iter().enumerate() {
                let end = e.at_s + e.duration_s.unwrap_or(0.0) + e.hold_s.unwrap_or(0.0);
                if end > period {
                    return Err(ctx.err(KeyPath::item("event", i, "at_s"), format!("event ends at {end} s, after repeat_s = {period} s; expected every event inside one period")));
                }
            }
        }
        // overlapping moves of one conductor make no physical sense
        for (i, a) in actions.iter().enumerate() {
            if let Action::Move {
                conductor,
                at_s,
                duration_s,
                ..
            } = *a
            {
                for b in actions.iter().skip(i + 1) {
                    if let Action::Move {
                        conductor: c2,
                        at_s: t2,
                        duration_s: d2,
                        ..
                    } = *b
                    {
                        if c2 == conductor && t2 < at_s + duration_s && at_s < t2 + d2 {
                            return Err(ctx.err(KeyPath::item("event", i, "at_s"), "two approach/retreat events of one conductor overlap in time; expected one motion at a time"));
                        }
                    }
                }
            }
        }

        Ok(Scenario {
            origin: file.to_string(),
            source: src.to_string(),
            mains,
            adc,
            frontend,
            body,
            channels,
            lamps,
            conductors,
            actions,
            drift: Drift {
                sigma: am.drift,
                tau_s: am.drift_tau_s,
            },
            file: f,
        })
    }

    fn frontend(ctx: &Ctx, s: &FrontEndSection) -> Result<FrontEnd, ScenarioError> {
        let p = |k: &'static str| KeyPath::table("frontend", k);
        let given: [(&'static str, bool); 15] = [
            ("supply_v", s.supply_v.is_some()),
            ("rf_ohm", s.rf_ohm.is_some()),
            ("rg_ohm", s.rg_ohm.is_some()),
            ("bias_v", s.bias_v.is_some()),
            ("swing_low_v", s.swing_low_v.is_some()),
            ("swing_high_v", s.swing_high_v.is_some()),
            ("stages", s.stages.is_some()),
            ("beta", s.beta.is_some()),
            ("vbe_v", s.vbe_v.is_some()),
            ("vce_sat_v", s.vce_sat_v.is_some()),
            ("load_ohm", s.load_ohm.is_some()),
            ("threshold_v", s.threshold_v.is_some()),
            ("hysteresis_v", s.hysteresis_v.is_some()),
            ("rc_ohm", s.rc_ohm.is_some()),
            ("rc_nf", s.rc_nf.is_some()),
        ];
        let allowed: &[&str] = match s.kind {
            FrontEndKind::Amplifier => &[
                "supply_v",
                "rf_ohm",
                "rg_ohm",
                "bias_v",
                "swing_low_v",
                "swing_high_v",
            ],
            FrontEndKind::Follower => &[
                "supply_v",
                "stages",
                "beta",
                "vbe_v",
                "vce_sat_v",
                "load_ohm",
            ],
            FrontEndKind::Comparator => {
                &["supply_v", "threshold_v", "hysteresis_v", "rc_ohm", "rc_nf"]
            }
        };
        for (k, g) in given {
            if g && !allowed.contains(&k) {
                return Err(ctx.err(
                    p(k),
                    format!(
                        "does not apply to kind = \"{}\"; expected one of: {}",
                        kind_name(s.kind),
                        allowed.join(", ")
                    ),
                ));
            }
        }
        let supply = positive(
            ctx,
            p("supply_v"),
            s.supply_v.unwrap_or(3.3),
            "a supply in volts",
        )?;
        Ok(match s.kind {
            FrontEndKind::Amplifier => {
                let rf = non_negative(
                    ctx,
                    p("rf_ohm"),
                    s.rf_ohm.unwrap_or(200e3),
                    "a resistance in ohms",
                )?;
                let rg = positive(
                    ctx,
                    p("rg_ohm"),
                    s.rg_ohm.unwrap_or(10e3),
                    "a resistance in ohms",
                )?;
                let bias = non_negative(
                    ctx,
                    p("bias_v"),
                    s.bias_v.unwrap_or(supply / 2.0),
                    "a bias in volts",
                )?;
                let lo = non_negative(
                    ctx,
                    p("swing_low_v"),
                    s.swing_low_v.unwrap_or(0.0),
                    "a voltage",
                )?;
                let hi = s.swing_high_v.unwrap_or(supply);
                if !(hi.is_finite() && hi > lo && hi <= supply) {
                    return Err(ctx.err(
                        p("swing_high_v"),
                        format!("expected swing_low_v < swing_high_v <= supply_v ({supply} V)"),
                    ));
                }
                FrontEnd::Amplifier(Amplifier {
                    rf_ohm: rf,
                    rg_ohm: rg,
                    bias_v: bias,
                    swing_low_v: lo,
                    swing_high_v: hi,
                })
            }
            FrontEndKind::Follower => {
                let stages = s.stages.unwrap_or(2);
                if !(1..=4).contains(&stages) {
                    return Err(
                        ctx.err(p("stages"), format!("expected 1..=4 stages, got {stages}"))
                    );
                }
                FrontEnd::Follower(FollowerChain {
                    stages,
                    beta: positive(ctx, p("beta"), s.beta.unwrap_or(150.0), "a current gain")?,
                    vbe_v: non_negative(ctx, p("vbe_v"), s.vbe_v.unwrap_or(0.65), "a voltage")?,
                    supply_v: supply,
                    vce_sat_v: non_negative(
                        ctx,
                        p("vce_sat_v"),
                        s.vce_sat_v.unwrap_or(0.2),
                        "a voltage",
                    )?,
                    load_ohm: positive(
                        ctx,
                        p("load_ohm"),
                        s.load_ohm.unwrap_or(10e3),
                        "a resistance in ohms",
                    )?,
                })
            }
            FrontEndKind::Comparator => {
                let th = s.threshold_v.ok_or_else(|| {
                    ctx.err(p("threshold_v"), "a comparator needs threshold_v (volts)")
                })?;
                if !th.is_finite() {
                    return Err(ctx.err(p("threshold_v"), "expected a finite threshold in volts"));
                }
                let rc =
                    match (s.rc_ohm, s.rc_nf) {
                        (None, None) => None,
                        (Some(r), Some(c)) => Some((
                            positive(ctx, p("rc_ohm"), r, "a resistance in ohms")?,
                            positive(ctx, p("rc_nf"), c, "a capacitance in nF")? * 1e-9,
                        )),
                        (Some(_), None) => {
                            return Err(ctx
                                .err(p("rc_ohm"), "expected rc_nf too (the RC filter needs both)"))
                        }
                        (None, Some(_)) => {
                            return Err(ctx
                                .err(p("rc_nf"), "expected rc_ohm too (the RC filter needs both)"))
                        }
                    };
                FrontEnd::Comparator(Comparator {
                    threshold_v: th,
                    hysteresis_v: non_negative(
                        ctx,
                        p("hysteresis_v"),
                        s.hysteresis_v.unwrap_or(0.0),
                        "a width in volts",
                    )?,
                    supply_v: supply,
                    rc,
                })
            }
        })
    }

    #[allow(clippy::too_many_lines)]
    fn event(
        ctx: &Ctx,
        i: usize,
        e: &EventSection,
        f: &ScenarioFile,
        channels: &[Channel],
        mains: &MainsConfig,
    ) -> Result<Action, ScenarioError> {
        let p = |k: &'static str| KeyPath::item("event", i, k);
        let given: [(&'static str, bool); 17] = [
            ("channel", e.channel.is_some()),
            ("hold_s", e.hold_s.is_some()),
            ("ramp_ms", e.ramp_ms.is_some()),
            ("release_ms", e.release_ms.is_some()),
            ("pressure", e.pressure.is_some()),
            ("area_mm2", e.area_mm2.is_some()),
            ("conductor", e.conductor.is_some()),
            ("to_mm", e.to_mm.is_some()),
            ("duration_s", e.duration_s.is_some()),
            ("lamp", e.lamp.is_some()),
            ("firing_deg", e.firing_deg.is_some()),
            ("kv", e.kv.is_some()),
            ("count", e.count.is_some()),
            ("interval_s", e.interval_s.is_some()),
            ("to_hz", e.to_hz.is_some()),
            ("residual_percent", e.residual_percent.is_some()),
            ("magnitude_percent", e.magnitude_percent.is_some()),
        ];
        let allowed: &[&str] = match e.kind {
            EventKind::Touch => &[
                "channel",
                "hold_s",
                "ramp_ms",
                "release_ms",
                "pressure",
                "area_mm2",
            ],
            EventKind::Approach | EventKind::Retreat => &["conductor", "to_mm", "duration_s"],
            EventKind::LampOn => &["lamp", "firing_deg"],
            EventKind::LampOff => &["lamp"],
            EventKind::Esd => &["kv", "count", "interval_s", "channel"],
            EventKind::FrequencyStep => &["to_hz"],
            EventKind::Dip => &["duration_s", "residual_percent"],
            EventKind::Swell => &["duration_s", "magnitude_percent"],
            EventKind::MainsOff
            | EventKind::MainsOn
            | EventKind::GroundFloat
            | EventKind::GroundEarth => &[],
        };
        let kind = event_kind_name(e.kind);
        for (k, g) in given {
            if g && !allowed.contains(&k) {
                return Err(ctx.err(
                    p(k),
                    format!(
                        "does not apply to a `{kind}` event; expected only kind, at_s{}{}",
                        if allowed.is_empty() { "" } else { ", " },
                        allowed.join(", ")
                    ),
                ));
            }
        }
        let at = non_negative(ctx, p("at_s"), e.at_s, "a time in seconds")?;
        let need = |v: Option<f64>, k: &'static str, what: &str| -> Result<f64, ScenarioError> {
            v.ok_or_else(|| ctx.err(p(k), format!("a `{kind}` event needs {k} ({what})")))
        };
        let channel = |name: &Option<String>| -> Result<Option<usize>, ScenarioError> {
            match name {
                None => Ok(None),
                Some(n) => channels
                    .iter()
                    .position(|c| &c.name == n)
                    .map(Some)
                    .ok_or_else(|| {
                        ctx.err(
                            p("channel"),
                            format!(
                                "unknown channel `{n}`; expected one of: {}",
                                channels
                                    .iter()
                                    .map(|c| c.name.as_str())
                                    .collect::<Vec<_>>()
                                    .join(", ")
                            ),
                        )
                    }),
            }
        };
        let named = |v: &Option<String>,
                     list: Vec<&str>,
                     k: &'static str|
         -> Result<usize, ScenarioError> {
            let n = v
                .as_ref()
                .ok_or_else(|| ctx.err(p(k), format!("a `{kind}` event needs {k} (a name)")))?;
            list.iter().position(|x| x == n).ok_or_else(|| {
                ctx.err(
                    p(k),
                    format!("unknown {k} `{n}`; expected one of: {}", list.join(", ")),
                )
            })
        };
        Ok(match e.kind {
            EventKind::Touch => {
                let ch = channel(&e.channel)?.ok_or_else(|| {
                    ctx.err(
                        p("channel"),
                        "a `touch` event needs channel (a channel name)",
                    )
                })?;
                let hold = positive(
                    ctx,
                    p("hold_s"),
                    need(e.hold_s, "hold_s", "contact duration in seconds")?,
                    "a duration in seconds",
                )?;
                let ramp =
                    non_negative(ctx, p("ramp_ms"), e.ramp_ms.unwrap_or(15.0), "a ramp in ms")?
                        * 1e-3;
                let release = non_negative(
                    ctx,
                    p("release_ms"),
                    e.release_ms.unwrap_or(ramp * 1e3),
                    "a ramp in ms",
                )? * 1e-3;
                if ramp + release > hold {
                    return Err(ctx.err(
                        p("hold_s"),
                        format!(
                            "expected hold_s >= ramp_ms + release_ms ({} s)",
                            ramp + release
                        ),
                    ));
                }
                let pressure = e.pressure.unwrap_or(1.0);
                if !(pressure.is_finite() && pressure > 0.0 && pressure <= 1.0) {
                    return Err(ctx.err(
                        p("pressure"),
                        "expected a fraction of full contact, 0 < pressure <= 1",
                    ));
                }
                let area = positive(
                    ctx,
                    p("area_mm2"),
                    e.area_mm2.unwrap_or(f.body.finger_area_mm2),
                    "an area in mm²",
                )?;
                Action::Touch {
                    channel: ch,
                    touch: Touch {
                        start_s: at,
                        hold_s: hold,
                        ramp_s: ramp,
                        release_s: release,
                        pressure,
                    },
                    area_m2: area * 1e-6,
                }
            }
            EventKind::Approach | EventKind::Retreat => {
                let c = named(
                    &e.conductor,
                    f.conductors.iter().map(|c| c.name.as_str()).collect(),
                    "conductor",
                )?;
                let to = need(e.to_mm, "to_mm", "target offset in mm")?;
                if !to.is_finite() {
                    return Err(ctx.err(p("to_mm"), "expected a finite offset in mm"));
                }
                let d = non_negative(
                    ctx,
                    p("duration_s"),
                    need(e.duration_s, "duration_s", "motion time in seconds")?,
                    "a duration in seconds",
                )?;
                Action::Move {
                    conductor: c,
                    at_s: at,
                    duration_s: d,
                    to_m: to * MM,
                }
            }
            EventKind::LampOn | EventKind::LampOff => {
                let l = named(
                    &e.lamp,
                    f.lamps.iter().map(|l| l.name.as_str()).collect(),
                    "lamp",
                )?;
                let on = if e.kind == EventKind::LampOn {
                    let deg = e
                        .firing_deg
                        .unwrap_or_else(|| f.lamps.get(l).map_or(0.0, |x| x.firing_deg));
                    if !(deg.is_finite() && (0.0..180.0).contains(&deg)) {
                        return Err(ctx.err(
                            p("firing_deg"),
                            "expected a firing angle in degrees, 0 <= angle < 180",
                        ));
                    }
                    Some(deg)
                } else {
                    None
                };
                Action::Lamp {
                    lamp: l,
                    at_s: at,
                    on,
                }
            }
            EventKind::Esd => {
                let kv = need(e.kv, "kv", "charging voltage in kV, e.g. 4")?;
                if !(kv.is_finite() && kv != 0.0 && kv.abs() <= 30.0) {
                    return Err(ctx.err(p("kv"), "expected a charging voltage in kV, 0 < |kv| <= 30 (contact levels are 2, 4, 6, 8)"));
                }
                let count = e.count.unwrap_or(1);
                if count == 0 || count > 10_000 {
                    return Err(ctx.err(p("count"), "expected 1..=10000 discharges"));
                }
                let interval = positive(
                    ctx,
                    p("interval_s"),
                    e.interval_s.unwrap_or(1.0),
                    "an interval in seconds",
                )?;
                Action::Esd {
                    at_s: at,
                    kv,
                    count,
                    interval_s: interval,
                    channel: channel(&e.channel)?,
                }
            }
            EventKind::FrequencyStep => {
                let to = need(e.to_hz, "to_hz", "new nominal frequency in Hz")?;
                if !(to >= mains.range_hz.0 && to <= mains.range_hz.1) {
                    return Err(ctx.err(
                        p("to_hz"),
                        format!(
                            "expected a frequency inside mains.range_hz [{}, {}]",
                            mains.range_hz.0, mains.range_hz.1
                        ),
                    ));
                }
                Action::Mains(MainsEvent::FrequencyStep {
                    at_s: at,
                    to_hz: to,
                })
            }
            EventKind::Dip => {
                let d = positive(
                    ctx,
                    p("duration_s"),
                    need(e.duration_s, "duration_s", "seconds")?,
                    "a duration in seconds",
                )?;
                let r = need(
                    e.residual_percent,
                    "residual_percent",
                    "residual voltage in percent of nominal",
                )?;
                if !(r.is_finite() && (0.0..90.0).contains(&r)) {
                    return Err(ctx.err(p("residual_percent"), "expected a residual voltage 0 <= percent < 90 (EN 50160: a dip is below 90 %)"));
                }
                Action::Mains(MainsEvent::Dip {
                    at_s: at,
                    duration_s: d,
                    residual: r / 100.0,
                })
            }
            EventKind::Swell => {
                let d = positive(
                    ctx,
                    p("duration_s"),
                    need(e.duration_s, "duration_s", "seconds")?,
                    "a duration in seconds",
                )?;
                let m = need(
                    e.magnitude_percent,
                    "magnitude_percent",
                    "voltage in percent of nominal",
                )?;
                if !(m.is_finite() && m > 110.0 && m <= 200.0) {
                    return Err(ctx.err(
                        p("magnitude_percent"),
                        "expected 110 < percent <= 200 (EN 50160: a swell is above 110 %)",
                    ));
                }
                Action::Mains(MainsEvent::Swell {
                    at_s: at,
                    duration_s: d,
                    magnitude: m / 100.0,
                })
            }
            EventKind::MainsOff => Action::Mains(MainsEvent::Off { at_s: at }),
            EventKind::MainsOn => Action::Mains(MainsEvent::On { at_s: at }),
            EventKind::GroundFloat => Action::Ground {
                at_s: at,
                floating: true,
            },
            EventKind::GroundEarth => Action::Ground {
                at_s: at,
                floating: false,
            },
        })
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

    /// Starts a streaming render (see [`crate::render::Render`]).
    pub fn render(&self, opts: &RenderOptions) -> Result<crate::render::Render, ScenarioError> {
        let seconds = opts.seconds.unwrap_or(self.file.duration_s);
        if !(seconds.is_finite() && seconds > 0.0 && seconds <= MAX_RUN_S) {
            // duration_s was checked at load time: this is --seconds.
            return Err(ScenarioError {
                file: self.origin.clone(),
                line: None,
                column: None,
                key: None,
                message: format!(
                    "--seconds {}: expected a run length above 0 and at most {MAX_RUN_S:e} s",
                    crate::text::num(seconds)
                ),
            });
        }
        let reps = self.file.repeat_s.map_or(1.0, |p| (seconds / p).ceil());
        let expanded = reps * self.actions.len() as f64;
        if expanded > 5e6 {
            return Err(ScenarioError {
                file: self.origin.clone(),
                line: locate(&self.source, &KeyPath::top("repeat_s")),
                column: None,
                key: Some("repeat_s".into()),
                message: format!(
                    "the timeline repeated over {seconds} s expands to {expanded:.0} events; expected at most 5000000 (use a longer repeat_s or a shorter run)"
                ),
            });
        }
        crate::render::Render::new(self, seconds, opts.seed.unwrap_or(self.file.seed)).map_err(
            |m| ScenarioError {
                file: self.origin.clone(),
                line: None,
                column: None,
                key: None,
                message: m,
            },
        )
    }
}

fn kind_name(k: FrontEndKind) -> &'static str {
    match k {
        FrontEndKind::Amplifier => "amplifier",
        FrontEndKind::Follower => "follower",
        FrontEndKind::Comparator => "comparator",
    }
}

fn event_kind_name(k: EventKind) -> &'static str {
    match k {
        EventKind::Touch => "touch",
        EventKind::Approach => "approach",
        EventKind::Retreat => "retreat",
        EventKind::LampOn => "lamp-on",
        EventKind::LampOff => "lamp-off",
        EventKind::Esd => "esd",
        EventKind::FrequencyStep => "frequency-step",
        EventKind::Dip => "dip",
        EventKind::Swell => "swell",
        EventKind::MainsOff => "mains-off",
        EventKind::MainsOn => "mains-on",
        EventKind::GroundFloat => "ground-float",
        EventKind::GroundEarth => "ground-earth",
    }
}

// ---------------------------------------------------------------- expanded plan

/// The timeline expanded over a run: every action at its absolute time.
#[derive(Debug, Clone)]
pub struct Plan {
    /// Run length, seconds.
    pub seconds: f64,
    /// Frames in the run.
    pub frames: u64,
    /// Per channel: `(touch, finger capacitance F, scale)`, sorted by start;
    /// scale is 1 on the touched channel and `body.spill` on its neighbours.
    pub touches: Vec<Vec<(Touch, f64, f64)>>,
    /// Touch labels `(channel, start, end)`.
    pub touch_labels: Vec<(usize, f64, f64)>,
    /// Mains events.
    pub mains_events: Vec<MainsEvent>,
    /// Lamp switching `(time, lamp, firing or None)`, sorted.
    pub lamp_switching: Vec<(f64, usize, Option<f64>)>,
    /// Ground changes `(time, floating)`, sorted.
    pub ground: Vec<(f64, bool)>,
    /// Conductor distance schedules.
    pub distances: Vec<DistanceSchedule>,
    /// Discharges `(discharge, channel or all)`, sorted.
    pub discharges: Vec<(Discharge, Option<usize>)>,
}

impl Plan {
    fn new(s: &Scenario, seconds: f64) -> Plan {
        let period = s.file.repeat_s.unwrap_or(f64::INFINITY);
        let reps = if period.is_finite() {
            (seconds / period).ceil().max(1.0) as u64
        } else {
            1
        };
        let rate = s.adc.rate_hz;
        let frames = (seconds * rate).round() as u64;
        let nch = s.channels.len();
        let mut plan = Plan {
            seconds,
            frames,
            touches: vec![Vec::new(); nch],
            touch_labels: Vec::new(),
            mains_events: Vec::new(),
            lamp_switching: Vec::new(),
            ground: Vec::new(),
            distances: s
                .conductors
                .iter()
                .map(|c| DistanceSchedule {
                    depth_m: c.depth_m,
                    points: vec![(0.0, c.start_m)],
                })
                .collect(),
            discharges: Vec::new(),
        };
        let mut moves: Vec<(f64, usize, f64, f64)> = Vec::new();
        for k in 0..reps {
            let off = if period.is_finite() {
                k as f64 * period
            } else {
                0.0
            };
            if k > 0 {
                for (ci, c) in s.conductors.iter().enumerate() {
                    moves.push((off, ci, 0.0, c.start_m));
                }
            }
            for a in &s.actions {
                match *a {
                    Action::Touch {
                        channel,
                        touch,
                        area_m2,
                    } => {
                        let t = Touch {
                            start_s: touch.start_s + off,
                            ..touch
                        };
                        if t.start_s >= seconds {
                            continue;
                        }
                        let cf = s
                            .channels
                            .get(channel)
                            .map_or(0.0, |c| c.contact.capacitance(area_m2));
                        if let Some(v) = plan.touches.get_mut(channel) {
                            v.push((t, cf, 1.0));
                        }
                        if s.file.body.spill > 0.0 {
                            for nb in [channel.wrapping_sub(1), channel + 1] {
                                if let (Some(v), Some(c)) =
                                    (plan.touches.get_mut(nb), s.channels.get(nb))
                                {
                                    v.push((t, c.contact.capacitance(area_m2), s.file.body.spill));
                                }
                            }
                        }
                        plan.touch_labels
                            .push((channel, t.start_s, t.end_s().min(seconds)));
                    }
                    Action::Move {
                        conductor,
                        at_s,
                        duration_s,
                        to_m,
                    } => {
                        moves.push((at_s + off, conductor, duration_s, to_m));
                    }
                    Action::Lamp { lamp, at_s, on } => {
                        plan.lamp_switching.push((at_s + off, lamp, on))
                    }
                    Action::Esd {
                        at_s,
                        kv,
                        count,
                        interval_s,
                        channel,
                    } => {
                        for d in burst(
                            at_s + off,
                            kv,
                            count,
                            interval_s,
                            s.file.ambient.esd_charge_fraction,
                        ) {
                            if d.at_s < seconds {
                                plan.discharges.push((d, channel));
                            }
                        }
                    }
                    Action::Mains(m) => plan.mains_events.push(shift(m, off)),
                    Action::Ground { at_s, floating } => plan.ground.push((at_s + off, floating)),
                }
            }
        }
        moves.sort_by(|a, b| a.0.total_cmp(&b.0));
        for (at, ci, dur, to) in moves {
            if let Some(d) = plan.distances.get_mut(ci) {
                let cur = d.offset(at);
                d.points.push((at, cur));
                d.points.push((at + dur, to));
            }
        }
        for v in &mut plan.touches {
            v.sort_by(|a, b| a.0.start_s.total_cmp(&b.0.start_s));
        }
        plan.lamp_switching.sort_by(|a, b| a.0.total_cmp(&b.0));
        plan.ground.sort_by(|a, b| a.0.total_cmp(&b.0));
        plan.discharges
            .sort_by(|a, b| a.0.at_s.total_cmp(&b.0.at_s));
        plan
    }

    /// Total conductor coupling into channel `ch` at `t`, farads.
    pub fn conductor_coupling(&self, s: &Scenario, ch: usize, t: f64) -> f64 {
        let mut c = 0.0;
        for (ci, cond) in s.conductors.iter().enumerate() {
            if cond.channels.contains(&ch) {
                if let Some(d) = self.distances.get(ci) {
                    c += cond.geometry.capacitance(d.distance(t));
                }
            }
        }
        c
    }

    fn labels(&self, s: &Scenario) -> Vec<Label> {
        let mut out: Vec<Label> = self
            .touch_labels
            .iter()
            .filter(|(_, a, b)| a < b)
            .map(|&(ch, a, b)| Label {
                channel: s
                    .channels
                    .get(ch)
                    .map_or_else(String::new, |c| c.name.clone()),
                kind: LabelKind::Touch,
                start_s: a,
                end_s: b,
            })
            .collect();
        if !s.conductors.is_empty() {
            let sched = MainsSchedule::new(&self.mains_events);
            let rate = s.adc.rate_hz;
            let ratio = s.file.labels.field_ratio;
            for (ch, c) in s.channels.iter().enumerate() {
                if !s.conductors.iter().any(|x| x.channels.contains(&ch)) {
                    continue;
                }
                let mut start: Option<f64> = None;
                for n in 0..=self.frames {
                    let t = n as f64 / rate;
                    let inside = n < self.frames
                        && sched.energised(t)
                        && self.conductor_coupling(s, ch, t) >= ratio * c.ambient_f;
                    match (inside, start) {
                        (true, None) => start = Some(t),
                        (false, Some(a)) => {
                            out.push(Label {
                                channel: c.name.clone(),
                                kind: LabelKind::Field,
                                start_s: a,
                                end_s: t,
                            });
                            start = None;
                        }
                        _ => {}
                    }
                }
            }
        }
        out.sort_by(|a, b| {
            a.start_s
                .total_cmp(&b.start_s)
                .then(a.channel.cmp(&b.channel))
        });
        out
    }
}

fn shift(m: MainsEvent, off: f64) -> MainsEvent {
    match m {
        MainsEvent::Dip {
            at_s,
            duration_s,
            residual,
        } => MainsEvent::Dip {
            at_s: at_s + off,
            duration_s,
            residual,
        },
        MainsEvent::Swell {
            at_s,
            duration_s,
            magnitude,
        } => MainsEvent::Swell {
            at_s: at_s + off,
            duration_s,
            magnitude,
        },
        MainsEvent::Off { at_s } => MainsEvent::Off { at_s: at_s + off },
        MainsEvent::On { at_s } => MainsEvent::On { at_s: at_s + off },
        MainsEvent::FrequencyStep { at_s, to_hz } => MainsEvent::FrequencyStep {
            at_s: at_s + off,
            to_hz,
        },
    }
}
