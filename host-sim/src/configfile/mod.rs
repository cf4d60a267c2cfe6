//! Detector configuration files (`replay --config`, `tune --out`).
//!
//! A TOML table of [`humsense::Config`]'s fields, each optional, by the
//! field's own name and in its own unit; enums as strings:
//! `profile = "touch" | "field"`, `mains = "auto" | "50" | "60"`,
//! `panel = "strongest-pad" | "independent"`. The fields, their kinds and
//! their names come from [`Config::FIELDS`] (the core crate's one table of
//! them), so a new field of `Config` is read and written here without an
//! edit. Unknown keys are errors that name the key, the line and the
//! column; every message about a key points at it, from the spans the TOML
//! parser records ([`toml::Spanned`]).
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
//! 5. validated by the core crate ([`Config::validate`]): a refused field
//!    is reported at the line and column of its key, when the file sets it
//!    (the error names the field: [`ConfigError::field`]).
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
//! `input = "pulses" | "level"`. Its keys are located the same way, by
//! their spans; an unknown one is an error. It applies to edge logs and
//! polled-level logs only; for ADC input it is an error. For those inputs
//! the back end works in threshold units (64 codes per `Vt`), not ADC
//! codes, so the profile's defaults are used as they are, as for a 12-bit
//! input at 2000 Hz: `adc_bits` and `sample_rate_hz` may be given (as
//! `tune` writes them) but only as 12 and 2000. [`build_digital`] and
//! [`build_edge`] build the two configurations; [`to_toml_digital`] and
//! [`to_rust_edge`] write them.

use crate::text::line_col;
use humsense::{Config, ConfigError, FieldInfo, FieldKind, FieldValue, MainsMode, Profile};
use std::collections::BTreeMap;
use std::fmt::Write as _;
use std::ops::Range;
use std::path::Path;
use toml::Spanned;

mod edge;
pub use edge::{
    build_digital, build_edge, edge_toml, parse_edge_input, to_rust_edge, to_toml_digital,
    EdgeRequest, EdgeSetting, EdgeTable, DEFAULT_TICK_HZ, DIGITAL_REQUEST,
};

/// A value the file gives for a field, already of the field's kind (the
/// field's type and range are checked when the configuration is built).
#[derive(Debug, Clone, PartialEq)]
pub enum Given {
    /// An integer field's value, read wide so that one too large or
    /// negative is reported rather than wrapped.
    Int(i64),
    /// An `f32` field's value as the file writes it.
    Float(f64),
    /// An enum field's value: its name.
    Name(String),
    /// A boolean (the `[edge]` table's `active_low`; no field of
    /// [`Config`] is one).
    Bool(bool),
}

/// One key of the file: the field it sets, where the key is, and the value.
#[derive(Debug, Clone)]
pub struct Setting {
    /// The field, from [`Config::FIELDS`].
    pub field: &'static FieldInfo,
    /// Byte range of the key in the file's text.
    pub key_span: Range<usize>,
    /// The value.
    pub value: Given,
}

/// A parsed configuration file.
#[derive(Debug, Clone)]
pub struct ConfigFile {
    /// File name as given.
    pub name: String,
    /// Its text.
    pub text: String,
    /// Its settings, in the file's order.
    pub settings: Vec<Setting>,
    /// Its `[edge]` table, if it has one.
    pub edge: Option<EdgeTable>,
}

/// A serde error's message on one line.
fn one_line(msg: &str) -> String {
    msg.trim().lines().collect::<Vec<_>>().join("; ")
}

/// `value` read as the kind of `field` holds, or the message serde gives
/// for the wrong type (`invalid type: string "high", expected f64`).
fn given(field: &FieldInfo, value: toml::Value) -> Result<Given, String> {
    use serde::Deserialize as _;
    let wrong = |e: toml::de::Error| one_line(e.message());
    Ok(match field.kind {
        FieldKind::Int { .. } => Given::Int(i64::deserialize(value).map_err(wrong)?),
        FieldKind::Float { .. } => Given::Float(f64::deserialize(value).map_err(wrong)?),
        _ => Given::Name(String::deserialize(value).map_err(wrong)?),
    })
}

impl ConfigFile {
    /// Parses configuration TOML; `name` labels the source in errors. Keys
    /// that are no field of [`Config`] and values of the wrong type are
    /// refused here, the first in the file first.
    pub fn parse(text: &str, name: &str) -> Result<ConfigFile, String> {
        let at = |span: Range<usize>, msg: &str| {
            let (l, c) = line_col(text, span.start);
            format!("{name}:{l}:{c}: {msg}")
        };
        let table: BTreeMap<Spanned<String>, Spanned<toml::Value>> =
            toml::from_str(text).map_err(|e| {
                let msg = one_line(e.message());
                match e.span() {
                    Some(span) => at(span, &msg),
                    None => format!("{name}: {msg}"),
                }
            })?;
        let mut entries: Vec<_> = table.into_iter().collect();
        entries.sort_by_key(|(k, _)| k.span().start);
        let mut settings = Vec::with_capacity(entries.len());
        let mut edge = None;
        for (key, value) in entries {
            let key_span = key.span();
            if key.get_ref() == edge::TABLE {
                edge = Some(EdgeTable::parse(text, key_span, value, &at)?);
                continue;
            }
            let Some(field) = Config::FIELDS.iter().find(|f| f.name == key.get_ref()) else {
                let known: Vec<String> = Config::FIELDS
                    .iter()
                    .map(|f| format!("`{}`", f.name))
                    .collect();
                return Err(at(
                    key_span,
                    &format!(
                        "unknown field `{}`, expected one of {} or an [{}] table",
                        key.get_ref(),
                        known.join(", "),
                        edge::TABLE
                    ),
                ));
            };
            let value_span = value.span();
            let value = given(field, value.into_inner()).map_err(|m| at(value_span, &m))?;
            settings.push(Setting {
                field,
                key_span,
                value,
            });
        }
        Ok(ConfigFile {
            name: name.to_string(),
            text: text.to_string(),
            settings,
            edge,
        })
    }

    /// Reads and parses a configuration file.
    pub fn read(path: &Path) -> Result<ConfigFile, String> {
        let name = path.display().to_string();
        let text = crate::text::read_small(path, "a config file")?;
        Self::parse(&text, &name)
    }

    /// The setting of field `name`, if the file gives one.
    pub fn get(&self, name: &str) -> Option<&Setting> {
        self.settings.iter().find(|s| s.field.name == name)
    }

    /// `NAME:LINE:COL` of field `name`'s key, or just `NAME` when the file
    /// does not set it.
    pub fn locate(&self, name: &str) -> String {
        match self.get(name) {
            Some(s) => self.at(s.key_span.start),
            None => self.name.clone(),
        }
    }

    /// `NAME:LINE:COL` of `key` in the `[edge]` table, or just `NAME` when
    /// the table does not set it.
    pub fn locate_edge(&self, key: &str) -> String {
        match self.edge.as_ref().and_then(|t| t.get(key)) {
            Some(s) => self.at(s.key_span.start),
            None => self.name.clone(),
        }
    }

    /// `NAME:LINE:COL` of the `[edge]` table's header (of its key, for an
    /// inline table), or just `NAME` when the file has none.
    pub fn locate_edge_table(&self) -> String {
        match &self.edge {
            Some(t) => self.at(t.start),
            None => self.name.clone(),
        }
    }

    /// `NAME:LINE:COL` of byte `offset`.
    fn at(&self, offset: usize) -> String {
        let (l, c) = line_col(&self.text, offset);
        format!("{}:{l}:{c}", self.name)
    }
}

/// The field named `name` of [`Config::FIELDS`].
fn field(name: &str) -> Option<&'static FieldInfo> {
    Config::FIELDS.iter().find(|f| f.name == name)
}

/// The names in files of an enum field's variants.
fn choice_names(f: &FieldInfo) -> &'static [&'static str] {
    match f.kind {
        FieldKind::Choice { names, .. } => names,
        _ => &[],
    }
}

/// `"a"`, `"a" or "b"`, `"a", "b" or "c"`.
fn alternatives(names: &[&str]) -> String {
    let quoted: Vec<String> = names.iter().map(|n| format!("\"{n}\"")).collect();
    match quoted.split_last() {
        Some((last, [])) => last.clone(),
        Some((last, rest)) => format!("{} or {last}", rest.join(", ")),
        None => String::new(),
    }
}

/// The position of the variant of enum field `name` whose name in files
/// is `s`.
fn choose(name: &str, s: &str) -> Option<usize> {
    choice_names(field(name)?).iter().position(|n| *n == s)
}

/// The name in files of `c`'s value of enum field `name`.
fn name_of(c: &Config, name: &str) -> &'static str {
    match field(name).map(|f| ((f.get)(c), choice_names(f))) {
        Some((FieldValue::Choice(i), names)) => names.get(i).copied().unwrap_or("?"),
        _ => "?",
    }
}

/// `c` with enum field `name` set to the variant named `s` in files.
fn with_choice(mut c: Config, name: &str, s: &str) -> Option<Config> {
    let f = field(name)?;
    (f.set)(&mut c, FieldValue::Choice(choose(name, s)?)).then_some(c)
}

/// Parses `touch` / `field` (the names in [`Config::FIELDS`]).
pub fn parse_profile(s: &str) -> Option<Profile> {
    with_choice(Config::touch(), "profile", s).map(|c| c.profile)
}

/// Parses `auto` / `50` / `60` (the names in [`Config::FIELDS`]).
pub fn parse_mains(s: &str) -> Option<MainsMode> {
    with_choice(Config::touch(), "mains", s).map(|c| c.mains)
}

fn profile_name(p: Profile) -> &'static str {
    name_of(
        &Config {
            profile: p,
            ..Config::touch()
        },
        "profile",
    )
}

fn mains_name(m: MainsMode) -> &'static str {
    name_of(
        &Config {
            mains: m,
            ..Config::touch()
        },
        "mains",
    )
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

/// The message for a refused configuration, located in `file` at the key
/// of the field it names, if the file sets that field.
pub fn config_error(e: &ConfigError, file: Option<&ConfigFile>) -> String {
    match file {
        Some(f) => format!("{}: {e}", f.locate(e.field())),
        None => e.to_string(),
    }
}

/// Builds and validates the configuration for an ADC input (see the
/// module docs); a file with an `[edge]` table is refused.
pub fn build(req: &ConfigRequest, file: Option<&ConfigFile>) -> Result<Config, String> {
    if let Some(f) = file.filter(|f| f.edge.is_some()) {
        return Err(format!(
            "{}: the [edge] table applies to edge logs and polled-level logs (--bits 1) only, \
             and this input is ADC codes",
            f.locate_edge_table()
        ));
    }
    build_inner(req, file)
}

/// [`build`] without the `[edge]` table's check (for [`build_digital`]).
pub(crate) fn build_inner(
    req: &ConfigRequest,
    file: Option<&ConfigFile>,
) -> Result<Config, String> {
    let at = |key: &str| file.map_or_else(String::new, |c| c.locate(key));
    let given = |key: &str| file.and_then(|f| f.get(key)).map(|s| &s.value);
    // An enum field's value from the file, by its name there, set on `c`.
    let choice = |c: Config, key: &str| -> Result<Option<Config>, String> {
        match given(key) {
            Some(Given::Name(s)) => match with_choice(c, key, s) {
                Some(c) => Ok(Some(c)),
                None => Err(format!(
                    "{}: {key} `{s}`, expected {}",
                    at(key),
                    alternatives(field(key).map_or(&[], choice_names))
                )),
            },
            _ => Ok(None),
        }
    };
    let file_profile = choice(Config::touch(), "profile")?.map(|c| c.profile);
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
    let file_mains = choice(c, "mains")?.map(|c| c.mains);
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
    if let Some(Given::Int(r)) = given("sample_rate_hz") {
        if *r != i64::from(req.rate_hz) {
            return Err(format!(
                "{}: sample_rate_hz = {r}, but the input is sampled at {} Hz",
                at("sample_rate_hz"),
                req.rate_hz
            ));
        }
    }
    if let Some(Given::Int(b)) = given("adc_bits") {
        if *b != i64::from(req.bits) {
            return Err(format!(
                "{}: adc_bits = {b}, but the input has {}-bit codes (see --bits)",
                at("adc_bits"),
                req.bits
            ));
        }
    }
    // Every other field the file gives, in `Config`'s order.
    for f in Config::FIELDS {
        if matches!(f.name, "profile" | "mains" | "sample_rate_hz" | "adc_bits") {
            continue;
        }
        let set = match (given(f.name), f.kind) {
            (None, _) => continue,
            (Some(Given::Int(v)), FieldKind::Int { type_max, min, max }) => {
                match u32::try_from(*v).ok().filter(|v| *v <= type_max) {
                    Some(v) => (f.set)(&mut c, FieldValue::Int(v)),
                    // Beyond the field's type: the message validation gives
                    // for a value outside the range.
                    None => {
                        return Err(format!(
                            "{}: config field `{}` is {v}, expected a value from {min} to {max}",
                            at(f.name),
                            f.name
                        ))
                    }
                }
            }
            (Some(Given::Float(v)), FieldKind::Float { .. }) => {
                (f.set)(&mut c, FieldValue::Float(*v as f32))
            }
            (Some(Given::Name(_)), FieldKind::Choice { .. }) => match choice(c, f.name)? {
                Some(with) => {
                    c = with;
                    true
                }
                None => false,
            },
            _ => false,
        };
        if !set {
            // `parse` gave the value the field's kind: cannot happen.
            return Err(format!("{}: {} could not be set", at(f.name), f.name));
        }
    }
    validate(&c).map_err(|e| config_error(&e, file))?;
    Ok(c)
}

/// Validates a configuration as every detector's constructor does (one
/// channel, no harmonic bins).
pub fn validate(c: &Config) -> Result<(), ConfigError> {
    c.validate(0)
}

/// Writes `f`'s value in `c` as TOML (`true`) or Rust.
fn value_text(c: &Config, f: &FieldInfo, toml: bool) -> String {
    match ((f.get)(c), f.kind) {
        (FieldValue::Int(v), _) => v.to_string(),
        // Shortest round-trip form: the file gives back the same bits.
        (FieldValue::Float(v), _) => format!("{v:?}"),
        (
            FieldValue::Choice(i),
            FieldKind::Choice {
                type_name,
                variants,
                names,
            },
        ) => {
            if toml {
                format!("\"{}\"", names.get(i).copied().unwrap_or("?"))
            } else {
                format!(
                    "humsense::{type_name}::{}",
                    variants.get(i).copied().unwrap_or("?")
                )
            }
        }
        (FieldValue::Choice(i), _) => i.to_string(),
    }
}

/// Every field of `c` as TOML, in `Config`'s order, accepted by
/// [`ConfigFile::parse`] and [`build`] (floats in their shortest round-trip
/// form, so the file gives back the same bits). The same text is `Config`'s
/// serde form (the core crate's `serde` feature).
pub fn to_toml(c: &Config) -> String {
    let mut s = String::new();
    let _ = writeln!(
        s,
        "# humsense detector configuration (humsim replay --config)"
    );
    for f in Config::FIELDS {
        let _ = writeln!(s, "{} = {}", f.name, value_text(c, f, true));
    }
    s
}

/// `c` as a Rust constant for firmware:
/// `const CONFIG: humsense::Config = humsense::Config { … };`, every field
/// written out (floats in their shortest round-trip form).
pub fn to_rust(c: &Config) -> String {
    let mut s = String::new();
    let _ = writeln!(s, "const CONFIG: humsense::Config = humsense::Config {{");
    for f in Config::FIELDS {
        let _ = writeln!(s, "    {}: {},", f.name, value_text(c, f, false));
    }
    let _ = writeln!(s, "}};");
    s
}
