//! Maps field paths (`tasks[2].needs.water.sd`) to line and column in the
//! YAML text, and finds problems serde_yaml hides or reports without a place:
//! duplicate keys (serde fills a map keeping the last one), alias bombs and
//! absurd nesting.
//!
//! The index is built from yaml-rust2's event parser, whose events carry
//! markers. The walk never expands an alias: it only adds up how many nodes
//! each anchor would expand to, so a "billion laughs" document is measured in
//! time and memory linear in its text and refused before anything expands it.

use super::load::Diagnostic;
use std::collections::HashMap;
use yaml_rust2::parser::{Event, Parser};
use yaml_rust2::scanner::Marker;

/// Most nodes the document may expand to once aliases are followed, beyond
/// ten times its written size. A real incident file (a few hundred units)
/// expands to some thousands of nodes.
pub const MAX_EXPANDED_NODES: u64 = 100_000;

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
    /// The event parser's own syntax error, if any (serde_yaml's parser is the
    /// one whose error is reported; this one only explains a short index).
    syntax_error: Option<(Position, String)>,
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

    fn walk(&mut self, text: &str) {
        let mut parser = Parser::new_from_str(text);
        let mut stack: Vec<Frame> = Vec::new();
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
                Event::StreamEnd => return,
                Event::DocumentStart => {
                    documents += 1;
                    if documents > 1 {
                        // serde_yaml refuses a second document; nothing to index.
                        return;
                    }
                }
                Event::Nothing | Event::StreamStart | Event::DocumentEnd => {}
                Event::Scalar(value, _, anchor, _) => {
                    expanded += 1;
                    written += 1;
                    if anchor != 0 {
                        anchor_sizes.insert(anchor, 1);
                    }
                    self.node(&mut stack, NodeKind::Scalar(value), here);
                }
                Event::Alias(anchor) => {
                    let size = anchor_sizes.get(&anchor).copied().unwrap_or(1);
                    expanded = expanded.saturating_add(size);
                    written += 1;
                    let path = self.node(&mut stack, NodeKind::Alias, here);
                    if expanded > MAX_EXPANDED_NODES.saturating_add(written.saturating_mul(10)) {
                        self.problems.push(StructuralProblem {
                            path,
                            position: here,
                            message: format!(
                                "YAML aliases here expand the file to more than {MAX_EXPANDED_NODES} \
                                 values (an alias bomb?): refused; write the values out or use fewer aliases"
                            ),
                            fatal: true,
                        });
                        return;
                    }
                }
                Event::SequenceStart(anchor, _) | Event::MappingStart(anchor, _) => {
                    expanded += 1;
                    written += 1;
                    let is_map = matches!(event, Event::MappingStart(..));
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
