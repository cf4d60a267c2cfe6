//! Detector configuration files (`replay --config`, `tune --out`).
//!
//! A TOML table of [`humsense::Config`]'s fields, each optional, by the
//! field's own name and in its own unit; enums as strings:
//! `profile = "touch" | "field"`, `mains = "auto" | "50" | "60"`,
//! `panel = "strongest-pad" | "independent"`. Unknown keys are errors that
//! name the key, the line and the column.
//!
//! How the final configuration is built, in this order:
//! 1. the profile's defaults ([`Config::touch`] or [`Config::field`]), the
//!    profile coming from `--profile` or the file's `profile` (both given
//!    and different: an error);
//! 2. rescaled to the input's ADC resolution with [`Config::with_adc_bits`]
//!    and set to its sample rate;
//! 3. `mains` from `--mains`, else from the file, else `auto` (both given
//!    and different: an error);
//! 4. every other field the file gives replaces the default. The file's
//!    `sample_rate_hz` and `adc_bits`, when present, must equal the input's
//!    (a configuration tuned at one rate means something else at another);
//! 5. validated by the core crate: a refused field is reported with the
//!    file's line where the field was set.
//!
//! [`to_toml`] writes every field, so a file from `humsim tune` says
//! everything; [`to_rust`] writes the same configuration as a `const` for
//! firmware.
//!
//! ## Edge and polled-level inputs
//! An `[edge]` table, after the fields above, describes the comparator
//! input ([`humsense::edge::EdgeConfig`], each key by the field's own name
//! and unit): `tick_hz`, `timer_bits` (16 or 32), `glitch_ticks`,
//! `hysteresis_permille`, `active_low`, `stuck_high_cycles`, and
//! `input = "pulses" | "level"`. It applies to edge logs and polled-level
//! logs only; for ADC input it is an error. For those inputs the back end
//! works in threshold units (64 codes per `Vt`), not ADC codes, so the
//! profile's defaults are used as they are, as for a 12-bit input at
//! 2000 Hz: `adc_bits` and `sample_rate_hz` may be given (as `tune`
//! writes them) but only as 12 and 2000. [`build_digital`] and
//! [`build_edge`] build the two configurations; [`to_toml_digital`] and
//! [`to_rust_edge`] write them.

use humsense::{Backend, Config, ConfigError, MainsMode, PanelMode, Profile};
use serde::Deserialize;
use std::fmt::Write as _;
use std::path::Path;

mod edge;
pub use edge::{
    build_digital, build_edge, edge_toml, parse_edge_input, to_rust_edge, to_toml_digital,
    EdgeRequest, EdgeToml, DEFAULT_TICK_HZ, DIGITAL_REQUEST,
};

/// The file's fields: [`Config`]'s, all optional. Integers are read wide
/// and checked against the field's own type, so a value that does not fit
/// is reported rather than wrapped.
#[derive(Debug, Clone, Default, Deserialize)]
#[serde(deny_unknown_fields)]
#[allow(missing_docs)]
pub struct ConfigToml {
    pub profile: Option<String>,
    pub mains: Option<String>,
    pub panel: Option<String>,
    pub sample_rate_hz: Option<i64>,
    pub adc_bits: Option<i64>,
    pub spike_max_len: Option<i64>,
    pub spike_floor_codes: Option<i64>,
    pub track_min_codes: Option<f64>,
    pub avg_shift: Option<i64>,
    pub startup_cycles: Option<i64>,
    pub baseline_rise_shift: Option<i64>,
    pub baseline_fall_shift: Option<i64>,
    pub noise_shift: Option<i64>,
    pub on_noise: Option<f64>,
    pub off_noise: Option<f64>,
    pub on_ratio: Option<f64>,
    pub off_ratio: Option<f64>,
    pub floor_codes: Option<f64>,
    pub debounce_on: Option<i64>,
    pub debounce_off: Option<i64>,
    pub min_active_cycles: Option<i64>,
    pub max_active_cycles: Option<i64>,
    pub levels: Option<i64>,
    pub level_step_db: Option<f64>,
    pub level_hysteresis_db: Option<f64>,
    pub ambient_ratio: Option<f64>,
    pub fault_saturation_cycles: Option<i64>,
    pub fault_stuck_cycles: Option<i64>,
    pub nohum_codes: Option<f64>,
    pub nohum_cycles: Option<i64>,
    pub mains_lost_cycles: Option<i64>,
    pub edge: Option<EdgeToml>,
}

/// A parsed configuration file with its text, for locating keys in errors.
#[derive(Debug, Clone)]
pub struct ConfigFile {
    /// File name as given.
    pub name: String,
    /// Its text.
    pub text: String,
    /// Its fields.
    pub fields: ConfigToml,
}

/// 1-based (line, column) of byte offset `at` in `text`.
fn line_col(text: &str, at: usize) -> (usize, usize) {
    let before = text.get(..at).unwrap_or(text);
    let line = before.matches('\n').count() + 1;
    let col = before.chars().rev().take_while(|c| *c != '\n').count() + 1;
    (line, col)
}

impl ConfigFile {
    /// Parses configuration TOML; `name` labels the source in errors.
    pub fn parse(text: &str, name: &str) -> Result<ConfigFile, String> {
        let fields: ConfigToml = toml::from_str(text).map_err(|e| {
            let msg = e.message().trim().lines().collect::<Vec<_>>().join("; ");
            match e.span() {
                Some(span) => {
                    let (l, c) = line_col(text, span.start);
                    format!("{name}:{l}:{c}: {msg}")
                }
                None => format!("{name}: {msg}"),
            }
        })?;
        Ok(ConfigFile {
            name: name.to_string(),
            text: text.to_string(),
            fields,
        })
    }

    /// Reads and parses a configuration file.
    pub fn read(path: &Path) -> Result<ConfigFile, String> {
        let name = path.display().to_string();
        let text = crate::text::read_small(path, "a config file")?;
        Self::parse(&text, &name)
    }

    /// `NAME:LINE` of the `[table]` header (or just `NAME` when not found).
    pub fn locate_table(&self, table: &str) -> String {
        let head = format!("[{table}]");
        for (i, line) in self.text.lines().enumerate() {
            if line.trim().starts_with(&head) {
                return format!("{}:{}", self.name, i + 1);
            }
        }
        self.name.clone()
    }

    /// `NAME:LINE:COL` of `key` (or just `NAME` when not found), written
    /// bare (`key = …`) or quoted (`"key" = …`, `'key' = …`), as TOML allows.
    pub fn locate(&self, key: &str) -> String {
        let forms = [key.to_string(), format!("\"{key}\""), format!("'{key}'")];
        for (i, line) in self.text.split_inclusive('\n').enumerate() {
            let t = line.trim_start();
            let found = forms.iter().any(|f| {
                t.strip_prefix(f.as_str())
                    .is_some_and(|rest| rest.trim_start().starts_with('='))
            });
            if found {
                let col = line.len() - t.len() + 1;
                return format!("{}:{}:{col}", self.name, i + 1);
            }
        }
        self.name.clone()
    }
}

/// Parses `touch` / `field`.
pub fn parse_profile(s: &str) -> Option<Profile> {
    match s {
        "touch" => Some(Profile::Touch),
        "field" => Some(Profile::Field),
        _ => None,
    }
}

/// Parses `auto` / `50` / `60`.
pub fn parse_mains(s: &str) -> Option<MainsMode> {
    match s {
        "auto" => Some(MainsMode::Auto),
        "50" => Some(MainsMode::Hz50),
        "60" => Some(MainsMode::Hz60),
        _ => None,
    }
}

fn mains_name(m: MainsMode) -> &'static str {
    match m {
        MainsMode::Auto => "auto",
        MainsMode::Hz50 => "50",
        MainsMode::Hz60 => "60",
    }
}

fn profile_name(p: Profile) -> &'static str {
    match p {
        Profile::Touch => "touch",
        Profile::Field => "field",
    }
}

fn panel_name(p: PanelMode) -> &'static str {
    match p {
        PanelMode::StrongestPad => "strongest-pad",
        PanelMode::Independent => "independent",
    }
}

/// What the command line and the input fix.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ConfigRequest {
    /// `--profile`, if given.
    pub profile: Option<Profile>,
    /// `--mains`, if given.
    pub mains: Option<MainsMode>,
    /// The input's ADC resolution (`--bits` or the format's default).
    pub bits: u8,
    /// The input's sample rate, hertz (rounded to whole hertz).
    pub rate_hz: u32,
}

/// The message for a refused configuration, located in `file` if the field
/// was set there.
pub fn config_error(e: &ConfigError, file: Option<&ConfigFile>) -> String {
    let field = match e {
        ConfigError::OutOfRange { field, .. }
        | ConfigError::NotFinite { field }
        | ConfigError::NotBelow { field, .. } => Some(*field),
        ConfigError::TooFewSamplesPerCycle { .. } => Some("sample_rate_hz"),
        _ => None,
    };
    match (file, field) {
        (Some(f), Some(k)) if f.locate(k) != f.name => format!("{}: {e}", f.locate(k)),
        (Some(f), _) => format!("{}: {e}", f.name),
        (None, _) => e.to_string(),
    }
}

/// Builds and validates the configuration for an ADC input (see the
/// module docs).
pub fn build(req: &ConfigRequest, file: Option<&ConfigFile>) -> Result<Config, String> {
    if let Some(f) = file.filter(|f| f.fields.edge.is_some()) {
        return Err(format!(
            "{}: the [edge] table applies to edge logs and polled-level logs (--bits 1) only, \
             and this input is ADC codes",
            f.locate_table("edge")
        ));
    }
    build_inner(req, file)
}

pub(crate) fn build_inner(
    req: &ConfigRequest,
    file: Option<&ConfigFile>,
) -> Result<Config, String> {
    let empty = ConfigToml::default();
    let f = file.map_or(&empty, |c| &c.fields);
    let at = |key: &str| file.map_or_else(String::new, |c| c.locate(key));
    let file_profile = match &f.profile {
        Some(s) => Some(parse_profile(s).ok_or_else(|| {
            format!(
                "{}: profile `{s}`, expected \"touch\" or \"field\"",
                at("profile")
            )
        })?),
        None => None,
    };
    let profile = match (req.profile, file_profile) {
        (Some(a), Some(b)) if a != b => {
            return Err(format!(
                "{}: the file's profile is \"{}\" but --profile {} was given",
                at("profile"),
                profile_name(b),
                profile_name(a)
            ))
        }
        (Some(a), _) => a,
        (None, Some(b)) => b,
        (None, None) => Profile::Touch,
    };
    let base = match profile {
        Profile::Touch => Config::touch(),
        Profile::Field => Config::field(),
    };
    let mut c = base.with_adc_bits(req.bits).with_sample_rate(req.rate_hz);
    let file_mains = match &f.mains {
        Some(s) => Some(parse_mains(s).ok_or_else(|| {
            format!(
                "{}: mains `{s}`, expected \"auto\", \"50\" or \"60\"",
                at("mains")
            )
        })?),
        None => None,
    };
    c.mains = match (req.mains, file_mains) {
        (Some(a), Some(b)) if a != b => {
            return Err(format!(
                "{}: the file's mains is \"{}\" but --mains {} was given",
                at("mains"),
                mains_name(b),
                mains_name(a)
            ))
        }
        (Some(a), _) | (None, Some(a)) => a,
        (None, None) => MainsMode::Auto,
    };
    if let Some(r) = f.sample_rate_hz {
        if r != i64::from(req.rate_hz) {
            return Err(format!(
                "{}: sample_rate_hz = {r}, but the input is sampled at {} Hz",
                at("sample_rate_hz"),
                req.rate_hz
            ));
        }
    }
    if let Some(b) = f.adc_bits {
        if b != i64::from(req.bits) {
            return Err(format!(
                "{}: adc_bits = {b}, but the input has {}-bit codes (see --bits)",
                at("adc_bits"),
                req.bits
            ));
        }
    }
    if let Some(s) = &f.panel {
        c.panel = match s.as_str() {
            "strongest-pad" => PanelMode::StrongestPad,
            "independent" => PanelMode::Independent,
            _ => {
                return Err(format!(
                    "{}: panel `{s}`, expected \"strongest-pad\" or \"independent\"",
                    at("panel")
                ))
            }
        };
    }
    macro_rules! set_int {
        ($($field:ident),* $(,)?) => {
            $(if let Some(v) = f.$field {
                c.$field = v.try_into().map_err(|_| {
                    format!(
                        "{}: {} = {v} does not fit the field (see humsense::Config)",
                        at(stringify!($field)),
                        stringify!($field)
                    )
                })?;
            })*
        };
    }
    macro_rules! set_float {
        ($($field:ident),* $(,)?) => {
            $(if let Some(v) = f.$field { c.$field = v as f32; })*
        };
    }
    set_int!(
        spike_max_len,
        spike_floor_codes,
        avg_shift,
        startup_cycles,
        baseline_rise_shift,
        baseline_fall_shift,
        noise_shift,
        debounce_on,
        debounce_off,
        min_active_cycles,
        max_active_cycles,
        levels,
        fault_saturation_cycles,
        fault_stuck_cycles,
        nohum_cycles,
        mains_lost_cycles,
    );
    set_float!(
        track_min_codes,
        on_noise,
        off_noise,
        on_ratio,
        off_ratio,
        floor_codes,
        level_step_db,
        level_hysteresis_db,
        ambient_ratio,
        nohum_codes,
    );
    validate(&c).map_err(|e| config_error(&e, file))?;
    Ok(c)
}

/// Validates a configuration through the core crate's constructor.
pub fn validate(c: &Config) -> Result<(), ConfigError> {
    Backend::<1, 0>::new(c).map(|_| ())
}

/// Every field of `c` as TOML, accepted by [`ConfigFile::parse`] and
/// [`build`] (floats in their shortest round-trip form, so the file gives
/// back the same bits).
pub fn to_toml(c: &Config) -> String {
    // Destructured so that a new field in the core crate fails to compile
    // here instead of being left out silently.
    let Config {
        sample_rate_hz,
        adc_bits,
        mains,
        profile,
        spike_max_len,
        spike_floor_codes,
        track_min_codes,
        avg_shift,
        startup_cycles,
        baseline_rise_shift,
        baseline_fall_shift,
        noise_shift,
        on_noise,
        off_noise,
        on_ratio,
        off_ratio,
        floor_codes,
        debounce_on,
        debounce_off,
        min_active_cycles,
        max_active_cycles,
        levels,
        level_step_db,
        level_hysteresis_db,
        panel,
        ambient_ratio,
        fault_saturation_cycles,
        fault_stuck_cycles,
        nohum_codes,
        nohum_cycles,
        mains_lost_cycles,
    } = *c;
    let mut s = String::new();
    let _ = writeln!(
        s,
        "# humsense detector configuration (humsim replay --config)"
    );
    let _ = writeln!(s, "profile = \"{}\"", profile_name(profile));
    let _ = writeln!(s, "mains = \"{}\"", mains_name(mains));
    let _ = writeln!(s, "panel = \"{}\"", panel_name(panel));
    macro_rules! put {
        ($($field:ident),* $(,)?) => {
            $(let _ = writeln!(s, "{} = {:?}", stringify!($field), $field);)*
        };
    }
    put!(
        sample_rate_hz,
        adc_bits,
        spike_max_len,
        spike_floor_codes,
        track_min_codes,
        avg_shift,
        startup_cycles,
        baseline_rise_shift,
        baseline_fall_shift,
        noise_shift,
        on_noise,
        off_noise,
        on_ratio,
        off_ratio,
        floor_codes,
        debounce_on,
        debounce_off,
        min_active_cycles,
        max_active_cycles,
        levels,
        level_step_db,
        level_hysteresis_db,
        ambient_ratio,
        fault_saturation_cycles,
        fault_stuck_cycles,
        nohum_codes,
        nohum_cycles,
        mains_lost_cycles,
    );
    s
}

/// `c` as a Rust constant for firmware:
/// `const CONFIG: humsense::Config = humsense::Config { … };`, every field
/// written out (floats in their shortest round-trip form).
pub fn to_rust(c: &Config) -> String {
    let Config {
        sample_rate_hz,
        adc_bits,
        mains,
        profile,
        spike_max_len,
        spike_floor_codes,
        track_min_codes,
        avg_shift,
        startup_cycles,
        baseline_rise_shift,
        baseline_fall_shift,
        noise_shift,
        on_noise,
        off_noise,
        on_ratio,
        off_ratio,
        floor_codes,
        debounce_on,
        debounce_off,
        min_active_cycles,
        max_active_cycles,
        levels,
        level_step_db,
        level_hysteresis_db,
        panel,
        ambient_ratio,
        fault_saturation_cycles,
        fault_stuck_cycles,
        nohum_codes,
        nohum_cycles,
        mains_lost_cycles,
    } = *c;
    let mut s = String::new();
    let _ = writeln!(s, "const CONFIG: humsense::Config = humsense::Config {{");
    macro_rules! put {
        ($($field:ident),* $(,)?) => {
            $(let _ = writeln!(s, "    {}: {:?},", stringify!($field), $field);)*
        };
    }
    put!(sample_rate_hz, adc_bits);
    let _ = writeln!(s, "    mains: humsense::MainsMode::{mains:?},");
    let _ = writeln!(s, "    profile: humsense::Profile::{profile:?},");
    put!(
        spike_max_len,
        spike_floor_codes,
        track_min_codes,
        avg_shift,
        startup_cycles,
        baseline_rise_shift,
        baseline_fall_shift,
        noise_shift,
        on_noise,
        off_noise,
        on_ratio,
        off_ratio,
        floor_codes,
        debounce_on,
        debounce_off,
        min_active_cycles,
        max_active_cycles,
        levels,
        level_step_db,
        level_hysteresis_db,
    );
    let _ = writeln!(s, "    panel: humsense::PanelMode::{panel:?},");
    put!(
        ambient_ratio,
        fault_saturation_cycles,
        fault_stuck_cycles,
        nohum_codes,
        nohum_cycles,
        mains_lost_cycles,
    );
    let _ = writeln!(s, "}};");
    s
}
