//! Scenario errors, and locating a key in the file's text for them.

use super::*;

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
pub(crate) struct KeyPath {
    table: &'static str,
    index: Option<usize>,
    key: Option<&'static str>,
}

impl KeyPath {
    pub(crate) fn top(key: &'static str) -> Self {
        KeyPath {
            table: "",
            index: None,
            key: Some(key),
        }
    }
    pub(crate) fn table(table: &'static str, key: &'static str) -> Self {
        KeyPath {
            table,
            index: None,
            key: Some(key),
        }
    }
    pub(crate) fn item(table: &'static str, index: usize, key: &'static str) -> Self {
        KeyPath {
            table,
            index: Some(index),
            key: Some(key),
        }
    }
    pub(crate) fn display(&self) -> String {
        let k = self.key.unwrap_or("");
        match (self.table, self.index) {
            ("", _) => k.to_string(),
            (t, Some(i)) if k.is_empty() => format!("{t}[{i}]"),
            (t, Some(i)) => format!("{t}[{i}].{k}"),
            (t, None) => format!("{t}.{k}"),
        }
    }
}

pub(crate) fn header_of(line: &str) -> Option<(bool, &str)> {
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

pub(crate) fn line_key(line: &str) -> Option<&str> {
    let l = line.trim_start();
    if l.starts_with('#') || l.starts_with('[') {
        return None;
    }
    let eq = l.find('=')?;
    Some(l.get(..eq)?.trim().trim_matches('"'))
}

/// Finds the 1-based line of a key (or of its table's header) in `src`.
pub(crate) fn locate(src: &str, path: &KeyPath) -> Option<usize> {
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

pub(crate) struct Ctx<'a> {
    pub(crate) src: &'a str,
    pub(crate) file: &'a str,
}

impl Ctx<'_> {
    pub(crate) fn err(&self, path: KeyPath, message: impl Into<String>) -> ScenarioError {
        ScenarioError {
            file: self.file.to_string(),
            line: locate(self.src, &path),
            column: None,
            key: Some(path.display()),
            message: message.into(),
        }
    }
}

pub(crate) fn positive(ctx: &Ctx, path: KeyPath, v: f64, what: &str) -> Result<f64, ScenarioError> {
    if v.is_finite() && v > 0.0 {
        Ok(v)
    } else {
        Err(ctx.err(path, format!("expected {what} > 0, got {v}")))
    }
}

pub(crate) fn non_negative(
    ctx: &Ctx,
    path: KeyPath,
    v: f64,
    what: &str,
) -> Result<f64, ScenarioError> {
    if v.is_finite() && v >= 0.0 {
        Ok(v)
    } else {
        Err(ctx.err(path, format!("expected {what} >= 0, got {v}")))
    }
}
