//! The scenario file's TOML schema: every table and key, with its default.

use super::*;

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
    /// Comparator (`threshold_v`, `hysteresis_v`, `supply_v`, `rc_ohm`, `rc_nf`,
    /// `pin_threshold_v`, `pin_hysteresis_v`).
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
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub pin_threshold_v: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub pin_hysteresis_v: Option<f64>,
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
pub enum TimelineKind {
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
#[allow(missing_docs)] // keys are documented on TimelineKind and in the README
pub struct EventSection {
    pub kind: TimelineKind,
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
