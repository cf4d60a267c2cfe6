//! The edge input's configuration: the `[edge]` table, the flags, and the
//! back end's configuration for edge and polled-level inputs (see the
//! [module docs](super)).

use super::{build_inner, one_line, to_toml, ConfigFile, ConfigRequest, Given};
use humsense::edge::{EdgeConfig, EdgeFrontend, EdgeInput, TimerWidth};
use humsense::{Config, ConfigError, MainsMode, Profile};
use serde::Deserialize;
use std::collections::BTreeMap;
use std::ops::Range;
use toml::Spanned;

/// The table's name in files.
pub(super) const TABLE: &str = "edge";

/// What a key of the `[edge]` table holds.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Kind {
    /// An integer, read wide (its range is checked by [`build_edge`]).
    Int,
    /// `true` or `false`.
    Bool,
    /// A name (`input`).
    Name,
}

/// The `[edge]` table's keys, [`EdgeConfig`]'s fields by their names in
/// files (`timer_bits` for `timer`), in the order [`edge_toml`] writes
/// them, with what each holds.
const KEYS: [(&str, Kind); 7] = [
    ("tick_hz", Kind::Int),
    ("timer_bits", Kind::Int),
    ("glitch_ticks", Kind::Int),
    ("hysteresis_permille", Kind::Int),
    ("active_low", Kind::Bool),
    ("stuck_high_cycles", Kind::Int),
    ("input", Kind::Name),
];

/// One key of the `[edge]` table: which, where the key is, and the value.
#[derive(Debug, Clone)]
pub struct EdgeSetting {
    /// The key, one of the table's keys (see the [module docs](super)).
    pub key: &'static str,
    /// Byte range of the key in the file's text.
    pub key_span: Range<usize>,
    /// The value, of the key's kind ([`Given::Int`], [`Given::Bool`] or
    /// [`Given::Name`]).
    pub value: Given,
}

/// A file's `[edge]` table (see the [module docs](super)).
#[derive(Debug, Clone)]
pub struct EdgeTable {
    /// Byte offset of the table in the file's text: its `[edge]` header,
    /// or its key for an inline table.
    pub start: usize,
    /// Its settings, in the file's order.
    pub settings: Vec<EdgeSetting>,
}

/// The file's `[edge]` table with the spans of its keys (read in a second
/// pass: the first reads the top level's values as plain TOML values,
/// which keep no spans inside).
#[derive(Deserialize)]
struct EdgeDoc {
    edge: BTreeMap<Spanned<String>, Spanned<toml::Value>>,
}

impl EdgeTable {
    /// The `[edge]` table of `text`, whose top-level key `edge` is at
    /// `key_span` with value `value`; `at` formats a message at a byte
    /// range of `text`. Unknown keys and values of the wrong type are
    /// refused, the first in the file first.
    pub(super) fn parse(
        text: &str,
        key_span: Range<usize>,
        value: Spanned<toml::Value>,
        at: &dyn Fn(Range<usize>, &str) -> String,
    ) -> Result<EdgeTable, String> {
        // `[edge]`: the value starts at the header's `[`, before the key;
        // `edge = { … }`: at the brace, after it.
        let start = key_span.start.min(value.span().start);
        if !value.get_ref().is_table() {
            return Err(at(
                key_span,
                &format!(
                    "`{TABLE}` is a table of the comparator input's settings ([{TABLE}]), \
                     found {}",
                    value.get_ref().type_str()
                ),
            ));
        }
        let doc: EdgeDoc = toml::from_str(text).map_err(|e| {
            let msg = one_line(e.message());
            at(e.span().unwrap_or(key_span.clone()), &msg)
        })?;
        let mut entries: Vec<_> = doc.edge.into_iter().collect();
        entries.sort_by_key(|(k, _)| k.span().start);
        let mut settings = Vec::with_capacity(entries.len());
        for (key, value) in entries {
            let key_span = key.span();
            let Some(&(name, kind)) = KEYS.iter().find(|(n, _)| *n == key.get_ref()) else {
                let known: Vec<String> = KEYS.iter().map(|(n, _)| format!("`{n}`")).collect();
                return Err(at(
                    key_span,
                    &format!(
                        "unknown field `{}` in the [{TABLE}] table, expected one of {}",
                        key.get_ref(),
                        known.join(", ")
                    ),
                ));
            };
            let value_span = value.span();
            let wrong = |e: toml::de::Error| at(value_span.clone(), &one_line(e.message()));
            let value = value.into_inner();
            let value = match kind {
                Kind::Int => Given::Int(i64::deserialize(value).map_err(wrong)?),
                Kind::Bool => Given::Bool(bool::deserialize(value).map_err(wrong)?),
                Kind::Name => Given::Name(String::deserialize(value).map_err(wrong)?),
            };
            settings.push(EdgeSetting {
                key: name,
                key_span,
                value,
            });
        }
        Ok(EdgeTable { start, settings })
    }

    /// The setting of `key`, if the table gives one.
    pub fn get(&self, key: &str) -> Option<&EdgeSetting> {
        self.settings.iter().find(|s| s.key == key)
    }

    /// The integer the table gives for `key`.
    fn int(&self, key: &str) -> Option<i64> {
        match self.get(key).map(|s| &s.value) {
            Some(Given::Int(v)) => Some(*v),
            _ => None,
        }
    }

    /// The boolean the table gives for `key`.
    fn bool(&self, key: &str) -> Option<bool> {
        match self.get(key).map(|s| &s.value) {
            Some(Given::Bool(v)) => Some(*v),
            _ => None,
        }
    }

    /// The name the table gives for `key`.
    fn name(&self, key: &str) -> Option<&str> {
        match self.get(key).map(|s| &s.value) {
            Some(Given::Name(v)) => Some(v),
            _ => None,
        }
    }
}

/// The rate and resolution an edge or polled-level input's back end is
/// configured as (see the module docs).
pub const DIGITAL_REQUEST: (u8, u32) = (12, 2_000);

/// Builds and validates the back end's configuration for an edge or
/// polled-level input (see the module docs).
pub fn build_digital(
    profile: Option<Profile>,
    mains: Option<MainsMode>,
    file: Option<&ConfigFile>,
) -> Result<Config, String> {
    let (bits, rate) = DIGITAL_REQUEST;
    if let Some(f) = file {
        let given = [
            ("adc_bits", i64::from(bits)),
            ("sample_rate_hz", i64::from(rate)),
        ];
        for (key, want) in given {
            let v = match f.get(key).map(|s| &s.value) {
                Some(Given::Int(v)) => Some(*v),
                _ => None,
            };
            if let Some(v) = v.filter(|v| *v != want) {
                return Err(format!(
                    "{}: {key} = {v}, but an edge or polled-level input has no ADC: its back end \
                     works in threshold units (64 codes per Vt) as a {bits}-bit input at {rate} Hz \
                     would; leave {key} out or set it to {want}",
                    f.locate(key)
                ));
            }
        }
    }
    build_inner(
        &ConfigRequest {
            profile,
            mains,
            bits,
            rate_hz: rate,
        },
        file,
    )
}

/// What the command line and the input fix for the edge front end.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct EdgeRequest {
    /// A polled-level log's read rate, hertz (`None` for an edge log).
    pub polled_hz: Option<u32>,
    /// `--tick-hz`.
    pub tick_hz: Option<u32>,
    /// `--timer-bits`.
    pub timer_bits: Option<u8>,
    /// `--hysteresis-permille`.
    pub hysteresis_permille: Option<u16>,
    /// `--edge-input`.
    pub input: Option<EdgeInput>,
}

/// Default timer rate for an edge log's times, hertz (1 MHz: the log's
/// microseconds).
pub const DEFAULT_TICK_HZ: u32 = 1_000_000;

/// Parses `pulses` / `level`.
pub fn parse_edge_input(s: &str) -> Option<EdgeInput> {
    match s {
        "pulses" => Some(EdgeInput::Pulses),
        "level" => Some(EdgeInput::Level),
        _ => None,
    }
}

fn edge_input_name(i: EdgeInput) -> &'static str {
    match i {
        EdgeInput::Pulses => "pulses",
        EdgeInput::Level => "level",
    }
}

/// Builds and validates the edge front end's configuration from the
/// command line and the file's `[edge]` table, against `back` (the back
/// end's configuration). A value given both ways must agree. The
/// comparator's hysteresis has no default: for pulses it must be given,
/// by `--hysteresis-permille` or `hysteresis_permille`.
pub fn build_edge(
    req: &EdgeRequest,
    file: Option<&ConfigFile>,
    back: &Config,
) -> Result<EdgeConfig, String> {
    let f = file.and_then(|c| c.edge.as_ref());
    let f_int = |key: &str| f.and_then(|t| t.int(key));
    let at = |key: &str| file.map_or_else(String::new, |c| c.locate_edge(key));
    fn pick<T: PartialEq + Copy + std::fmt::Display>(
        flag: Option<T>,
        file: Option<T>,
        what: &str,
        at: &dyn Fn(&str) -> String,
        key: &str,
    ) -> Result<Option<T>, String> {
        match (flag, file) {
            (Some(a), Some(b)) if a != b => Err(format!(
                "{}: the file's {key} is {b} but {what} {a} was given",
                at(key)
            )),
            (Some(a), _) | (None, Some(a)) => Ok(Some(a)),
            (None, None) => Ok(None),
        }
    }
    let int = |key: &str, v: Option<i64>, max: i64| -> Result<Option<u32>, String> {
        match v {
            None => Ok(None),
            Some(v) if (0..=max).contains(&v) => Ok(Some(v as u32)),
            Some(v) => Err(format!(
                "{}: {key} = {v} does not fit the field (0 to {max}; see humsense::edge::EdgeConfig)",
                at(key)
            )),
        }
    };
    let file_tick = int("tick_hz", f_int("tick_hz"), i64::from(u32::MAX))?;
    let tick_hz = match req.polled_hz {
        Some(rate) => {
            if req.tick_hz.is_some() {
                return Err(
                    "--tick-hz applies to edge logs; a polled-level log is read at its --rate \
                     (or its time_s)"
                        .into(),
                );
            }
            if let Some(t) = file_tick.filter(|t| *t != rate) {
                return Err(format!(
                    "{}: tick_hz = {t}, but the polled-level log is read at {rate} Hz",
                    at("tick_hz")
                ));
            }
            rate
        }
        None => {
            pick(req.tick_hz, file_tick, "--tick-hz", &at, "tick_hz")?.unwrap_or(DEFAULT_TICK_HZ)
        }
    };
    let file_bits = int("timer_bits", f_int("timer_bits"), 255)?;
    let bits = pick(
        req.timer_bits.map(u32::from),
        file_bits,
        "--timer-bits",
        &at,
        "timer_bits",
    )?
    .unwrap_or(32);
    let timer = match bits {
        16 => TimerWidth::Bits16,
        32 => TimerWidth::Bits32,
        other => {
            return Err(format!(
                "{}timer{}bits {other}: expected 16 or 32",
                if file_bits.is_some() {
                    format!("{}: ", at("timer_bits"))
                } else {
                    "--".into()
                },
                if file_bits.is_some() { "_" } else { "-" }
            ))
        }
    };
    let file_input = match f.and_then(|t| t.name("input")) {
        Some(s) => Some(parse_edge_input(s).ok_or_else(|| {
            format!(
                "{}: input `{}`, expected \"pulses\" or \"level\"",
                at("input"),
                crate::text::show(s)
            )
        })?),
        None => None,
    };
    let input = match (req.input, file_input) {
        (Some(a), Some(b)) if a != b => {
            return Err(format!(
                "{}: the file's input is \"{}\" but --edge-input {} was given",
                at("input"),
                edge_input_name(b),
                edge_input_name(a)
            ))
        }
        (Some(a), _) | (None, Some(a)) => a,
        (None, None) => EdgeInput::Pulses,
    };
    let file_h = int(
        "hysteresis_permille",
        f_int("hysteresis_permille"),
        i64::from(u16::MAX),
    )?;
    let h = pick(
        req.hysteresis_permille.map(u32::from),
        file_h,
        "--hysteresis-permille",
        &at,
        "hysteresis_permille",
    )?;
    let h = match (h, input) {
        (Some(h), _) => h,
        (None, EdgeInput::Level) => 0,
        (None, EdgeInput::Pulses) => {
            return Err(
                "the comparator's hysteresis is needed to turn duty into amplitude: pass \
                 --hysteresis-permille H (its hysteresis over its threshold offset, h/Vt, in \
                 thousandths; 0 for none) or set hysteresis_permille in the --config file's \
                 [edge] table"
                    .into(),
            )
        }
    };
    let mut e = EdgeConfig::new(tick_hz, timer)
        .with_input(input)
        .with_hysteresis_permille(h.min(u32::from(u16::MAX)) as u16);
    if let Some(g) = int("glitch_ticks", f_int("glitch_ticks"), i64::from(u32::MAX))? {
        e.glitch_ticks = g;
    } else {
        e.glitch_ticks = tick_hz / 5_000;
    }
    if let Some(a) = f.and_then(|t| t.bool("active_low")) {
        e.active_low = a;
    }
    if let Some(s) = int(
        "stuck_high_cycles",
        f_int("stuck_high_cycles"),
        i64::from(u16::MAX),
    )? {
        e.stuck_high_cycles = s as u16;
    }
    EdgeFrontend::<1>::new(&e, back).map_err(|err| edge_config_error(&err, file))?;
    Ok(e)
}

/// The message for a refused edge configuration, located in `file` at the
/// `[edge]` table's key of the field it names, if the table sets it.
fn edge_config_error(e: &ConfigError, file: Option<&ConfigFile>) -> String {
    match file {
        Some(f) => format!("{}: {e}", f.locate_edge(e.field())),
        None => e.to_string(),
    }
}

/// The `[edge]` table of `e` (every field), for [`to_toml_digital`].
pub fn edge_toml(e: &EdgeConfig) -> String {
    let EdgeConfig {
        tick_hz,
        timer,
        glitch_ticks,
        hysteresis_permille,
        active_low,
        stuck_high_cycles,
        input,
    } = *e;
    let bits = match timer {
        TimerWidth::Bits16 => 16,
        TimerWidth::Bits32 => 32,
    };
    format!(
        "\n[edge]\ntick_hz = {tick_hz}\ntimer_bits = {bits}\nglitch_ticks = {glitch_ticks}\n\
         hysteresis_permille = {hysteresis_permille}\nactive_low = {active_low}\n\
         stuck_high_cycles = {stuck_high_cycles}\ninput = \"{}\"\n",
        edge_input_name(input)
    )
}

/// [`to_toml`] and, for an edge or polled-level input, its `[edge]`
/// table.
pub fn to_toml_digital(c: &Config, e: Option<&EdgeConfig>) -> String {
    let mut s = to_toml(c);
    if let Some(e) = e {
        s.push_str(&edge_toml(e));
    }
    s
}

/// `e` as a Rust constant for firmware:
/// `const EDGE: humsense::edge::EdgeConfig = …;`, every field written out.
pub fn to_rust_edge(e: &EdgeConfig) -> String {
    let EdgeConfig {
        tick_hz,
        timer,
        glitch_ticks,
        hysteresis_permille,
        active_low,
        stuck_high_cycles,
        input,
    } = *e;
    format!(
        "const EDGE: humsense::edge::EdgeConfig = humsense::edge::EdgeConfig {{\n    \
         tick_hz: {tick_hz},\n    timer: humsense::edge::TimerWidth::{timer:?},\n    \
         glitch_ticks: {glitch_ticks},\n    hysteresis_permille: {hysteresis_permille},\n    \
         active_low: {active_low},\n    stuck_high_cycles: {stuck_high_cycles},\n    \
         input: humsense::edge::EdgeInput::{input:?},\n}};\n"
    )
}
