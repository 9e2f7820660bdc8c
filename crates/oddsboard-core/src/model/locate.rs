//! Maps field paths (`tasks[2].needs.water.sd`) to line and column in the
//! YAML text, and finds problems serde_yaml hides or reports without a place:
//! duplicate keys (serde fills a map keeping the last one), alias bombs and
//! absurd nesting.
//!
//! The index is built from yaml-rust2's event parser, whose events carry
//! markers. The same walk builds the document's value (a `serde_yaml::Value`
//! the loader deserializes section by section), so a file is parsed once for
//! both values and places. The walk adds up how many nodes each anchor
//! expands to before it copies one, so a "billion laughs" document is refused
//! in time and memory linear in its text.
//!
//! Plain scalars resolve as serde_yaml 0.9 resolves them (YAML 1.2 core
//! schema: null, booleans, integers in decimal, 0x, 0o and 0b, floats with
//! `.inf` and `.nan`, leading-zero digits as text); quoted and block scalars
//! are text. Tags other than the core schema's are refused: incident files
//! do not use them.

use super::load::Diagnostic;
use serde_yaml::{Mapping, Number, Value};
use std::collections::HashMap;
use yaml_rust2::parser::{Event, Parser, Tag};
use yaml_rust2::scanner::{Marker, TScalarStyle};

/// Most nodes the document may expand to once aliases are followed, beyond
/// [`MAX_EXPANSION_RATIO`] times its written size. A real incident file (a few
/// hundred units, anchors for shared ratings) expands to a few times its
/// written size.
pub const MAX_EXPANDED_NODES: u64 = 10_000;

/// How many times its written size a document may expand to, beyond
/// [`MAX_EXPANDED_NODES`].
pub const MAX_EXPANSION_RATIO: u64 = 100;

/// Deepest nesting accepted; an incident file needs about six levels.
pub const MAX_DEPTH: usize = 64;

/// A 1-based line and column.
pub type Position = (usize, usize);

/// A problem found while indexing, before any field is read.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct StructuralProblem {
    pub path: String,
    pub position: Position,
    pub message: String,
    /// True when the text must not be read further (alias bomb, too deep).
    pub fatal: bool,
}

/// Index of where each field path sits in a YAML document.
#[derive(Debug, Default)]
pub struct Locator {
    /// Path → position of its value when a scalar or alias, of its key when a
    /// collection under a key (the line a reader looks for), else of the
    /// collection's start.
    values: HashMap<String, Position>,
    /// Path → position of its key, for entries of a mapping.
    keys: HashMap<String, Position>,
    problems: Vec<StructuralProblem>,
    /// The event parser's syntax error, if any.
    syntax_error: Option<(Position, String)>,
    /// The document's value, when it read to the end without a fatal
    /// problem, a syntax error or a tag.
    value: Option<Value>,
}

/// A collection being built, beside its index [`Frame`].
enum Build {
    Sequence(Vec<Value>, usize),
    /// The mapping so far, the key waiting for its value, the anchor.
    Mapping(Mapping, Option<Value>, usize),
}

enum Frame {
    Sequence {
        path: String,
        /// Where the collection starts, until its first child gives a
        /// better place (yaml-rust2 marks a block collection after its
        /// first key).
        pending: Option<Position>,
        next_index: usize,
        anchor: usize,
        expanded_at_start: u64,
    },
    Mapping {
        path: String,
        pending: Option<Position>,
        /// Key text → where it was first given.
        seen: HashMap<String, Position>,
        /// `None` while a key is expected; `Some(key)` while its value is.
        key: Option<(String, Position)>,
        anchor: usize,
        expanded_at_start: u64,
    },
    /// A collection used as a mapping key: walked, not indexed.
    ComplexKey {
        anchor: usize,
        expanded_at_start: u64,
    },
}

fn pos(m: &Marker) -> Position {
    // yaml-rust2 markers: line 1-based, column 0-based.
    (m.line(), m.col() + 1)
}

fn child_path(parent: &str, key: &str) -> String {
    if parent.is_empty() {
        key.to_string()
    } else {
        format!("{parent}.{key}")
    }
}

/// The path one level up: `units[3].traits` → `units[3]` → `units` → ``.
pub fn parent_path(path: &str) -> Option<&str> {
    if path.is_empty() {
        return None;
    }
    if path.ends_with(']')
        && let Some(open) = path.rfind('[')
    {
        return Some(&path[..open]);
    }
    Some(path.rfind('.').map_or("", |dot| &path[..dot]))
}

impl Locator {
    /// Indexes `text`. Never fails: problems are kept for
    /// [`Locator::structural_problems`].
    pub fn new(text: &str) -> Self {
        let mut me = Locator::default();
        me.walk(text);
        me
    }

    /// The document's value, read in the same pass as the index: `None`
    /// when the text has a syntax error, a fatal structural problem or a
    /// tag (each reported with its place). An empty document is null.
    pub fn take_value(&mut self) -> Option<Value> {
        self.value.take()
    }

    fn walk(&mut self, text: &str) {
        let mut parser = Parser::new_from_str(text);
        let mut stack: Vec<Frame> = Vec::new();
        let mut builds: Vec<Build> = Vec::new();
        let mut anchored: HashMap<usize, Value> = HashMap::new();
        let mut root: Option<Value> = None;
        // False once something makes the value untrustworthy (a tag).
        let mut readable = true;
        // Nodes the document expands to so far, aliases followed.
        let mut expanded: u64 = 0;
        let mut written: u64 = 0;
        // Expanded size of each anchored node, by anchor id.
        let mut anchor_sizes: HashMap<usize, u64> = HashMap::new();
        let mut documents = 0;
        loop {
            let (event, marker) = match parser.next_token() {
                Ok(e) => e,
                Err(e) => {
                    self.syntax_error = Some((pos(e.marker()), e.info().to_string()));
                    return;
                }
            };
            let here = pos(&marker);
            match event {
                Event::StreamEnd => {
                    if readable {
                        self.value = Some(root.unwrap_or(Value::Null));
                    }
                    return;
                }
                Event::DocumentStart => {
                    documents += 1;
                    if documents > 1 {
                        self.problems.push(StructuralProblem {
                            path: String::new(),
                            position: here,
                            message: "a second YAML document (`---`) starts here: an incident \
                                      file is one document"
                                .to_string(),
                            fatal: true,
                        });
                        return;
                    }
                }
                Event::Nothing | Event::StreamStart | Event::DocumentEnd => {}
                Event::Scalar(text, style, anchor, tag) => {
                    expanded += 1;
                    written += 1;
                    let value = resolve_scalar(&text, style, tag.as_ref());
                    let path = self.node(&mut stack, NodeKind::Scalar(text), here);
                    let value = match value {
                        Ok(v) => v,
                        Err(message) => {
                            self.tag_problem(path, here, message);
                            readable = false;
                            Value::Null
                        }
                    };
                    if anchor != 0 {
                        anchor_sizes.insert(anchor, 1);
                        anchored.insert(anchor, value.clone());
                    }
                    place(&mut builds, &mut root, value);
                }
                Event::Alias(anchor) => {
                    let size = anchor_sizes.get(&anchor).copied().unwrap_or(1);
                    expanded = expanded.saturating_add(size);
                    written += 1;
                    let path = self.node(&mut stack, NodeKind::Alias, here);
                    let limit = MAX_EXPANDED_NODES
                        .saturating_add(written.saturating_mul(MAX_EXPANSION_RATIO));
                    if expanded > limit {
                        self.problems.push(StructuralProblem {
                            path,
                            position: here,
                            message: format!(
                                "YAML aliases here expand the file to more than {limit} values \
                                 (an alias bomb?): refused; write the values out or use fewer aliases"
                            ),
                            fatal: true,
                        });
                        return;
                    }
                    // Within the limit: the copy is bounded by it.
                    let value = anchored.get(&anchor).cloned().unwrap_or(Value::Null);
                    place(&mut builds, &mut root, value);
                }
                Event::SequenceStart(anchor, ref tag) | Event::MappingStart(anchor, ref tag) => {
                    expanded += 1;
                    written += 1;
                    let is_map = matches!(event, Event::MappingStart(..));
                    let tag_message = tag
                        .as_ref()
                        .filter(|t| !is_core_tag(t, if is_map { "map" } else { "seq" }))
                        .map(tag_refusal);
                    if stack.len() >= MAX_DEPTH {
                        self.problems.push(StructuralProblem {
                            path: String::new(),
                            position: here,
                            message: format!(
                                "nesting deeper than {MAX_DEPTH} levels: refused (not an incident file?)"
                            ),
                            fatal: true,
                        });
                        return;
                    }
                    let kind = if is_map {
                        NodeKind::MappingStart
                    } else {
                        NodeKind::SequenceStart
                    };
                    let is_key = matches!(stack.last(), Some(Frame::Mapping { key: None, .. }));
                    let path = self.node(&mut stack, kind, here);
                    if let Some(message) = tag_message {
                        self.tag_problem(path.clone(), here, message);
                        readable = false;
                    }
                    builds.push(if is_map {
                        Build::Mapping(Mapping::new(), None, anchor)
                    } else {
                        Build::Sequence(Vec::new(), anchor)
                    });
                    let expanded_at_start = expanded - 1;
                    stack.push(if is_key {
                        Frame::ComplexKey {
                            anchor,
                            expanded_at_start,
                        }
                    } else if is_map {
                        Frame::Mapping {
                            pending: self.take_pending_start(&path, here),
                            path,
                            seen: HashMap::new(),
                            key: None,
                            anchor,
                            expanded_at_start,
                        }
                    } else {
                        Frame::Sequence {
                            pending: self.take_pending_start(&path, here),
                            path,
                            next_index: 0,
                            anchor,
                            expanded_at_start,
                        }
                    });
                }
                Event::SequenceEnd | Event::MappingEnd => {
                    if let Some(build) = builds.pop() {
                        let (value, anchor) = match build {
                            Build::Sequence(items, anchor) => (Value::Sequence(items), anchor),
                            Build::Mapping(map, _, anchor) => (Value::Mapping(map), anchor),
                        };
                        if anchor != 0 {
                            anchored.insert(anchor, value.clone());
                        }
                        place(&mut builds, &mut root, value);
                    }
                    let Some(frame) = stack.pop() else { continue };
                    if let Frame::Sequence {
                        path,
                        pending: Some(start),
                        ..
                    }
                    | Frame::Mapping {
                        path,
                        pending: Some(start),
                        ..
                    } = &frame
                    {
                        self.values.insert(path.clone(), *start);
                    }
                    let (anchor, start) = match &frame {
                        Frame::Sequence {
                            anchor,
                            expanded_at_start,
                            ..
                        }
                        | Frame::Mapping {
                            anchor,
                            expanded_at_start,
                            ..
                        }
                        | Frame::ComplexKey {
                            anchor,
                            expanded_at_start,
                        } => (*anchor, *expanded_at_start),
                    };
                    if anchor != 0 {
                        anchor_sizes.insert(anchor, expanded - start);
                    }
                    if let Frame::ComplexKey { .. } = frame
                        && let Some(Frame::Mapping { key, .. }) = stack.last_mut()
                    {
                        *key = Some(("?".to_string(), here));
                    }
                }
            }
        }
    }

    /// A tag is not part of an incident file: reported at its node.
    fn tag_problem(&mut self, path: String, position: Position, message: String) {
        self.problems.push(StructuralProblem {
            path,
            position,
            message,
            fatal: false,
        });
    }

    /// Records one node (scalar, alias or collection start) at the top of
    /// `stack`; returns its path.
    fn node(&mut self, stack: &mut [Frame], kind: NodeKind, here: Position) -> String {
        if let Some(
            Frame::Sequence {
                path,
                pending: pending @ Some(_),
                ..
            }
            | Frame::Mapping {
                path,
                pending: pending @ Some(_),
                ..
            },
        ) = stack.last_mut()
        {
            *pending = None;
            self.values.insert(path.clone(), here);
        }
        match stack.last_mut() {
            None => {
                self.values.entry(String::new()).or_insert(here);
                String::new()
            }
            Some(Frame::ComplexKey { .. }) => String::new(),
            Some(Frame::Sequence {
                path, next_index, ..
            }) => {
                let p = format!("{path}[{next_index}]");
                *next_index += 1;
                self.values.insert(p.clone(), here);
                p
            }
            Some(Frame::Mapping {
                path, seen, key, ..
            }) => match key.take() {
                None => {
                    // A key. Collections as keys are handled by the caller.
                    if let NodeKind::Scalar(text) = &kind {
                        let p = child_path(path, text);
                        if let Some(first) = seen.get(text) {
                            self.problems.push(StructuralProblem {
                                path: p.clone(),
                                position: here,
                                message: format!(
                                    "duplicate key `{text}` (first given at line {}): \
                                     only one may stay",
                                    first.0
                                ),
                                fatal: false,
                            });
                        } else {
                            seen.insert(text.clone(), here);
                            self.keys.insert(p.clone(), here);
                        }
                        *key = Some((text.clone(), here));
                        p
                    } else {
                        if let NodeKind::Alias = kind {
                            *key = Some(("*".to_string(), here));
                        }
                        String::new()
                    }
                }
                Some((k, key_pos)) => {
                    let p = child_path(path, &k);
                    let at = match kind {
                        NodeKind::Scalar(_) | NodeKind::Alias => here,
                        NodeKind::MappingStart | NodeKind::SequenceStart => key_pos,
                    };
                    // The first of duplicate keys keeps the index entry.
                    self.values.entry(p.clone()).or_insert(at);
                    p
                }
            },
        }
    }

    /// A collection not under a key (a sequence element, the root) is
    /// placed at its first child once that is seen; until then, at `start`.
    fn take_pending_start(&mut self, path: &str, start: Position) -> Option<Position> {
        let under_key = self.keys.contains_key(path);
        (!under_key).then_some(start)
    }

    /// 1-based (line, column) of the value at `path` (of its key when the
    /// value is a collection), or of its nearest located ancestor.
    pub fn locate(&self, path: &str) -> Option<Position> {
        let mut p = Some(path);
        while let Some(q) = p {
            if let Some(at) = self.values.get(q) {
                return Some(*at);
            }
            p = parent_path(q);
        }
        None
    }

    /// 1-based (line, column) of the key of `path` (a mapping entry), else
    /// as [`Locator::locate`].
    pub fn locate_key(&self, path: &str) -> Option<Position> {
        self.keys.get(path).copied().or_else(|| self.locate(path))
    }

    /// Problems found while indexing: duplicate keys, alias bombs, nesting.
    pub fn problems(&self) -> &[StructuralProblem] {
        &self.problems
    }

    /// True when the text must not be read further.
    pub fn refused(&self) -> bool {
        self.problems.iter().any(|p| p.fatal)
    }

    /// The event parser's syntax error, if it found one.
    pub fn syntax_error(&self) -> Option<&(Position, String)> {
        self.syntax_error.as_ref()
    }

    /// [`Locator::problems`] as diagnostics naming `file`.
    pub fn structural_problems(&self, file: &str) -> Vec<Diagnostic> {
        self.problems
            .iter()
            .map(|p| Diagnostic {
                file: file.to_string(),
                line: Some(p.position.0),
                column: Some(p.position.1),
                path: p.path.clone(),
                message: p.message.clone(),
            })
            .collect()
    }
}

/// Puts a finished value into the collection being built, or makes it the
/// document's root. A mapping keeps the last of duplicate keys (as serde does
/// when it fills a map); the index reports every duplicate with its place.
fn place(builds: &mut [Build], root: &mut Option<Value>, value: Value) {
    match builds.last_mut() {
        None => *root = Some(value),
        Some(Build::Sequence(items, _)) => items.push(value),
        Some(Build::Mapping(map, key, _)) => match key.take() {
            None => *key = Some(value),
            Some(k) => {
                map.insert(k, value);
            }
        },
    }
}

const CORE_TAG: &str = "tag:yaml.org,2002:";

fn is_core_tag(tag: &Tag, name: &str) -> bool {
    tag.handle == CORE_TAG && tag.suffix == name
}

fn tag_refusal(tag: &Tag) -> String {
    let shown = if tag.handle == CORE_TAG {
        format!("!!{}", tag.suffix)
    } else {
        format!("{}{}", tag.handle, tag.suffix)
    };
    format!("YAML tags (`!name`) are not used in incident files (found `{shown}`)")
}

/// A scalar's value under the YAML 1.2 core schema, resolved as serde_yaml
/// 0.9 resolves it, so the move to one pass changed no file's meaning.
fn resolve_scalar(text: &str, style: TScalarStyle, tag: Option<&Tag>) -> Result<Value, String> {
    let wrong = |what: &str| format!("`{text}` is not {what}, as its tag says");
    match tag {
        None if style == TScalarStyle::Plain => Ok(resolve_plain(text)),
        None => Ok(Value::String(text.to_string())),
        Some(t) if t.handle != CORE_TAG => Err(tag_refusal(t)),
        Some(t) => match t.suffix.as_str() {
            "str" => Ok(Value::String(text.to_string())),
            "null" => parse_null(text).ok_or_else(|| wrong("null")),
            "bool" => parse_bool(text)
                .map(Value::Bool)
                .ok_or_else(|| wrong("a boolean")),
            "int" => parse_int(text).ok_or_else(|| wrong("an integer")),
            "float" => parse_float(text)
                .map(|f| Value::Number(Number::from(f)))
                .ok_or_else(|| wrong("a number")),
            _ => Err(tag_refusal(t)),
        },
    }
}

fn resolve_plain(text: &str) -> Value {
    if text.is_empty() {
        return Value::Null;
    }
    if let Some(v) = parse_null(text) {
        return v;
    }
    if let Some(b) = parse_bool(text) {
        return Value::Bool(b);
    }
    if let Some(v) = parse_int(text) {
        return v;
    }
    if !leading_zero_digits(text)
        && let Some(f) = parse_float(text)
    {
        return Value::Number(Number::from(f));
    }
    Value::String(text.to_string())
}

fn parse_null(text: &str) -> Option<Value> {
    matches!(text, "null" | "Null" | "NULL" | "~").then_some(Value::Null)
}

fn parse_bool(text: &str) -> Option<bool> {
    match text {
        "true" | "True" | "TRUE" => Some(true),
        "false" | "False" | "FALSE" => Some(false),
        _ => None,
    }
}

/// Digits with a leading zero (`007`) are text in YAML 1.2.
fn leading_zero_digits(text: &str) -> bool {
    let t = text.strip_prefix(['-', '+']).unwrap_or(text);
    t.len() > 1 && t.starts_with('0') && t[1..].bytes().all(|b| b.is_ascii_digit())
}

/// An integer in decimal, `0x`, `0o` or `0b`, optionally signed; one that
/// fits neither u64 nor i64 is not an integer (serde_yaml's `Value` cannot
/// hold it either).
fn parse_int(text: &str) -> Option<Value> {
    let (negative, digits) = match text.as_bytes().first() {
        Some(b'-') => (true, &text[1..]),
        Some(b'+') => (false, &text[1..]),
        _ => (false, text),
    };
    if digits.starts_with(['+', '-']) {
        return None;
    }
    let (radix, body) = if let Some(r) = digits.strip_prefix("0x") {
        (16, r)
    } else if let Some(r) = digits.strip_prefix("0o") {
        (8, r)
    } else if let Some(r) = digits.strip_prefix("0b") {
        (2, r)
    } else {
        if leading_zero_digits(text) {
            return None;
        }
        (10, digits)
    };
    if body.is_empty() || body.starts_with(['+', '-']) {
        return None;
    }
    let magnitude = u128::from_str_radix(body, radix).ok()?;
    if negative {
        let v = i64::try_from(-i128::try_from(magnitude).ok()?).ok()?;
        Some(Value::Number(Number::from(v)))
    } else {
        u64::try_from(magnitude)
            .ok()
            .map(|v| Value::Number(Number::from(v)))
    }
}

/// A float: `.inf`, `-.inf`, `.nan` in their three spellings, or a finite
/// number Rust reads (`inf`, `nan` and overflowing text stay text).
fn parse_float(text: &str) -> Option<f64> {
    let unsigned = match text.strip_prefix('+') {
        Some(u) if u.starts_with(['+', '-']) => return None,
        Some(u) => u,
        None => text,
    };
    if matches!(unsigned, ".inf" | ".Inf" | ".INF") {
        return Some(f64::INFINITY);
    }
    if matches!(text, "-.inf" | "-.Inf" | "-.INF") {
        return Some(f64::NEG_INFINITY);
    }
    if matches!(text, ".nan" | ".NaN" | ".NAN") {
        return Some(f64::NAN);
    }
    unsigned.parse::<f64>().ok().filter(|f| f.is_finite())
}

enum NodeKind {
    Scalar(String),
    Alias,
    MappingStart,
    SequenceStart,
}

#[cfg(test)]
mod tests {
    use super::*;

    const TEXT: &str = "\
incident:
  name: Drill
  secure: { life: 0.99 }
traits:
  - { id: water, unit: L/min }
units:
  - id: E1
    type: engine
    traits:
      water: { mean: 1500, sd: 400 }
placement: { E1: T1 }
";

    #[test]
    fn paths_map_to_lines_and_columns() {
        let l = Locator::new(TEXT);
        assert_eq!(l.locate("incident.name"), Some((2, 9)));
        assert_eq!(l.locate("incident.secure.life"), Some((3, 19)));
        assert_eq!(l.locate("traits[0].unit"), Some((5, 24)));
        assert_eq!(l.locate("units[0]"), Some((7, 5)));
        assert_eq!(l.locate("units[0].traits"), Some((9, 5)));
        assert_eq!(l.locate("units[0].traits.water.sd"), Some((10, 32)));
        assert_eq!(l.locate("placement.E1"), Some((11, 18)));
        assert_eq!(l.locate_key("placement.E1"), Some((11, 14)));
        assert!(l.problems().is_empty());
    }

    #[test]
    fn unknown_paths_fall_back_to_the_nearest_ancestor() {
        let l = Locator::new(TEXT);
        assert_eq!(l.locate("units[0].traits.water.nothing"), Some((10, 7)));
        assert_eq!(l.locate("units[0].colour"), Some((7, 5)));
        assert_eq!(l.locate("units[7].id"), Some((6, 1)));
        assert_eq!(parent_path("units[3].traits"), Some("units[3]"));
        assert_eq!(parent_path("units[3]"), Some("units"));
        assert_eq!(parent_path("units"), Some(""));
        assert_eq!(parent_path(""), None);
    }

    #[test]
    fn duplicate_keys_are_found_in_any_mapping() {
        let l = Locator::new("a: 1\nneeds: { water: 1, water: 2 }\nb:\n  c: 1\n  c: 2\na: 3\n");
        let found: Vec<_> = l
            .problems()
            .iter()
            .map(|p| (p.path.as_str(), p.position))
            .collect();
        assert_eq!(
            found,
            vec![("needs.water", (2, 20)), ("b.c", (5, 3)), ("a", (6, 1))]
        );
        assert!(l.problems()[0].message.contains("first given at line 2"));
        assert!(!l.refused());
    }

    #[test]
    fn an_alias_bomb_is_refused_without_expanding_it() {
        let mut text = String::from("a0: &a0 [x, x, x, x, x, x, x, x, x, x]\n");
        for i in 1..40 {
            let prev = i - 1;
            text.push_str(&format!(
                "a{i}: &a{i} [*a{prev}, *a{prev}, *a{prev}, *a{prev}, *a{prev}, *a{prev}, *a{prev}, *a{prev}, *a{prev}, *a{prev}]\n"
            ));
        }
        let l = Locator::new(&text);
        assert!(l.refused());
        let p = &l.problems()[0];
        assert!(p.message.contains("alias bomb"), "{}", p.message);
        // 10 + 100 + 1000 + 10000 + 100000: refused on the fifth line.
        assert_eq!(p.position.0, 5);
    }

    #[test]
    fn modest_aliases_are_fine() {
        let l = Locator::new("base: &b { mean: 1, sd: 2 }\nx: *b\ny: *b\n");
        assert!(l.problems().is_empty());
        assert_eq!(l.locate("x.mean"), Some((2, 4)));
    }

    #[test]
    fn deep_nesting_is_refused() {
        let text = format!("{}{}", "[".repeat(100), "]".repeat(100));
        let l = Locator::new(&text);
        assert!(l.refused());
        assert!(l.problems()[0].message.contains("nesting"));
    }

    #[test]
    fn a_syntax_error_keeps_what_was_indexed() {
        let l = Locator::new("incident:\n  name: x\ntraits: [\n");
        assert!(l.syntax_error().is_some());
        assert_eq!(l.locate("incident.name"), Some((2, 9)));
    }
}
