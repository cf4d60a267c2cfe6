//! Scenario errors, and locating a key in the file for them from the spans
//! the TOML parser records ([`toml::Spanned`]).

use super::*;
use crate::text::line_col;
use std::ops::Range;
use toml::Spanned;

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

/// The keys of a TOML document with the byte spans the parser records:
/// every table's keys and values, and the elements of arrays (arrays of
/// tables included).
#[derive(Debug, Clone)]
enum Node {
    /// A table (also an inline table): its keys.
    Table(Vec<(Spanned<String>, Spanned<Node>)>),
    /// An array: its elements.
    Array(Vec<Spanned<Node>>),
    /// Any other value.
    Leaf,
}

impl<'de> Deserialize<'de> for Node {
    fn deserialize<D: serde::Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        struct Visit;
        impl<'de> serde::de::Visitor<'de> for Visit {
            type Value = Node;
            fn expecting(&self, f: &mut fmt::Formatter) -> fmt::Result {
                f.write_str("a TOML value")
            }
            fn visit_bool<E>(self, _: bool) -> Result<Node, E> {
                Ok(Node::Leaf)
            }
            fn visit_i64<E>(self, _: i64) -> Result<Node, E> {
                Ok(Node::Leaf)
            }
            fn visit_u64<E>(self, _: u64) -> Result<Node, E> {
                Ok(Node::Leaf)
            }
            fn visit_f64<E>(self, _: f64) -> Result<Node, E> {
                Ok(Node::Leaf)
            }
            fn visit_str<E>(self, _: &str) -> Result<Node, E> {
                Ok(Node::Leaf)
            }
            fn visit_seq<A: serde::de::SeqAccess<'de>>(self, mut a: A) -> Result<Node, A::Error> {
                let mut items = Vec::new();
                while let Some(item) = a.next_element()? {
                    items.push(item);
                }
                Ok(Node::Array(items))
            }
            fn visit_map<A: serde::de::MapAccess<'de>>(self, mut a: A) -> Result<Node, A::Error> {
                let mut keys = Vec::new();
                while let Some(entry) = a.next_entry()? {
                    keys.push(entry);
                }
                Ok(Node::Table(keys))
            }
        }
        d.deserialize_any(Visit)
    }
}

/// The document `src` as a tree of spanned keys: `None` if it is not valid
/// TOML, or if it uses dotted keys or dotted table headers (`a.b = 1`,
/// `[a.b]`), whose implicit tables the parser gives no spans.
fn key_tree(src: &str) -> Option<Node> {
    toml::from_str(src).ok()
}

/// The entry `key` of `node`, if it is a table that has one.
fn entry<'a>(node: &'a Node, key: &str) -> Option<&'a (Spanned<String>, Spanned<Node>)> {
    match node {
        Node::Table(keys) => keys.iter().find(|(k, _)| k.get_ref() == key),
        _ => None,
    }
}

/// Whether `outer` holds all of `inner`.
fn covers(outer: &Range<usize>, inner: &Range<usize>) -> bool {
    outer.start <= inner.start && inner.end <= outer.end
}

/// The 1-based line and column of a key in `src`: of the key itself, or of
/// its table (its header) when the key is not in the file (a missing key);
/// `None` when neither is found.
pub(crate) fn locate(src: &str, path: &KeyPath) -> Option<(usize, usize)> {
    let tree = key_tree(src)?;
    let (table, table_span) = if path.table.is_empty() {
        (&tree, None)
    } else {
        let (_, value) = entry(&tree, path.table)?;
        match (value.get_ref(), path.index) {
            (Node::Array(items), Some(i)) => {
                let item = items.get(i)?;
                (item.get_ref(), Some(item.span()))
            }
            (node, None) => (node, Some(value.span())),
            _ => return None,
        }
    };
    let at = path
        .key
        .and_then(|k| entry(table, k))
        .map(|(k, _)| k.span())
        .or(table_span)?;
    Some(line_col(src, at.start))
}

/// The key path (`adc.rate_hz`, `channel[0].name`; empty for the top
/// level) of the innermost key, array element or table of `src` that holds
/// all of `span` (a parse error's). `None` when `src` gives no key spans
/// (see [`key_tree`]).
pub(crate) fn path_at(src: &str, span: &Range<usize>) -> Option<String> {
    let tree = key_tree(src)?;
    let mut path = String::new();
    let mut node = &tree;
    loop {
        let next = match node {
            Node::Table(keys) => keys.iter().find_map(|(k, v)| {
                if covers(&k.span(), span) {
                    Some((k.get_ref().as_str(), None))
                } else if covers(&v.span(), span) {
                    Some((k.get_ref().as_str(), Some(v.get_ref())))
                } else {
                    None
                }
            }),
            Node::Array(items) => {
                let found = items
                    .iter()
                    .enumerate()
                    .find(|(_, v)| covers(&v.span(), span));
                if let Some((i, v)) = found {
                    path.push_str(&format!("[{i}]"));
                    node = v.get_ref();
                    continue;
                }
                None
            }
            Node::Leaf => None,
        };
        match next {
            Some((key, inner)) => {
                if !path.is_empty() {
                    path.push('.');
                }
                path.push_str(key);
                match inner {
                    Some(n) => node = n,
                    None => break,
                }
            }
            None => break,
        }
    }
    Some(path)
}

pub(crate) struct Ctx<'a> {
    pub(crate) src: &'a str,
    pub(crate) file: &'a str,
}

impl Ctx<'_> {
    pub(crate) fn err(&self, path: KeyPath, message: impl Into<String>) -> ScenarioError {
        let at = locate(self.src, &path);
        ScenarioError {
            file: self.file.to_string(),
            line: at.map(|(l, _)| l),
            column: at.map(|(_, c)| c),
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
