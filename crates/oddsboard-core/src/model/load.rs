//! Reading and validating incident files: YAML text → [`IncidentFile`] →
//! [`Incident`], with every problem reported as a located [`Diagnostic`].

use super::file::{
    IncidentFile, IncidentHeader, NeedFile, RatingFile, TaskFile, TraitFile, UnitFile, UnitTypeFile,
};
use super::locate::Locator;
use super::*;
use std::fmt;
use std::path::Path;

/// One problem in an input file, with where it is.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Diagnostic {
    /// File name as given by the user.
    pub file: String,
    /// 1-based line and column, when known.
    pub line: Option<usize>,
    pub column: Option<usize>,
    /// Field path, e.g. `tasks[2].needs.water.sd`; empty for the whole file.
    pub path: String,
    pub message: String,
}

impl fmt::Display for Diagnostic {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{}", self.file)?;
        if let Some(l) = self.line {
            write!(f, ":{l}")?;
            if let Some(c) = self.column {
                write!(f, ":{c}")?;
            }
        }
        if self.path.is_empty() {
            write!(f, ": {}", self.message)
        } else {
            write!(f, ": {}: {}", self.path, self.message)
        }
    }
}

/// Why an incident could not be loaded.
#[derive(Debug, thiserror::Error)]
pub enum LoadError {
    #[error("{file}: cannot read: {source}")]
    Io {
        file: String,
        #[source]
        source: std::io::Error,
    },
    #[error("{}", display_all(.0))]
    Invalid(Vec<Diagnostic>),
}

fn display_all(d: &[Diagnostic]) -> String {
    d.iter()
        .map(|d| d.to_string())
        .collect::<Vec<_>>()
        .join("\n")
}

impl LoadError {
    pub fn diagnostics(&self) -> Vec<Diagnostic> {
        match self {
            LoadError::Io { file, source } => vec![Diagnostic {
                file: file.clone(),
                line: None,
                column: None,
                path: String::new(),
                message: format!("cannot read: {source}"),
            }],
            LoadError::Invalid(d) => d.clone(),
        }
    }
}

/// Reads and validates an incident file.
pub fn load_incident_file(path: &Path) -> Result<Incident, LoadError> {
    let name = path.display().to_string();
    let text = std::fs::read_to_string(path).map_err(|source| LoadError::Io {
        file: name.clone(),
        source,
    })?;
    parse_incident_str(&text, &name)
}

/// Parses and validates incident YAML text; `file` names it in diagnostics.
///
/// Every problem found is reported, sorted by line: duplicate keys, then
/// per section and per list element the serde errors (unknown field, wrong
/// type), then the checks of meaning (references, ranges, constraints). An
/// element that does not even read is left out of the later checks, so one
/// mistake does not echo as many.
pub fn parse_incident_str(text: &str, file: &str) -> Result<Incident, LoadError> {
    // One pass over the text gives both the values and their places.
    let mut locator = Locator::new(text);
    if locator.refused() {
        return Err(LoadError::Invalid(locator.structural_problems(file)));
    }
    let root = locator.take_value();
    let mut sink = Sink::new(file, &locator);
    let mut reported = locator.structural_problems(file);
    if let Some(((line, column), info)) = locator.syntax_error() {
        reported.push(Diagnostic {
            file: file.to_string(),
            line: Some(*line),
            column: Some(*column),
            path: String::new(),
            message: format!("YAML syntax: {info}"),
        });
    }
    let incident = root.and_then(|root| {
        let mut unread = Unread::default();
        let parsed = read_sections(&root, &mut sink, &mut unread);
        reported.append(&mut sink.out);
        let incident = parsed.map(|parsed| convert(&parsed, &mut sink));
        // Problems under an element that did not read are echoes of it.
        sink.out.retain(|d| !unread.covers(&d.path));
        incident
    });
    sink.out.append(&mut reported);
    // Whatever the index could not place belongs to the document as a whole.
    for d in &mut sink.out {
        if d.line.is_none() {
            d.line = Some(1);
            d.column = Some(1);
        }
    }
    match incident {
        Some(incident) if sink.out.is_empty() => Ok(incident),
        _ => Err(LoadError::Invalid(sink.finish())),
    }
}

/// Validates an incident already in the file's shape (a log's snapshot,
/// read from its JSON record) with the checks of meaning the file loader
/// makes, without going back to text: the record's own decoder has already
/// refused unknown fields and wrong types. Diagnostics carry paths, no lines.
pub fn validate_file(f: &IncidentFile, file: &str) -> Result<Incident, LoadError> {
    let locator = Locator::new("");
    let mut sink = Sink::new(file, &locator);
    let incident = convert(f, &mut sink);
    if sink.out.is_empty() {
        Ok(incident)
    } else {
        Err(LoadError::Invalid(sink.finish()))
    }
}

/// The top-level fields of the file, in the order they are documented.
const SECTIONS: [&str; 7] = [
    "incident",
    "traits",
    "unit_types",
    "units",
    "tasks",
    "placement",
    "pins",
];

fn kind_of(v: &serde_yaml::Value) -> &'static str {
    use serde_yaml::Value;
    match v {
        Value::Null => "nothing (null)",
        Value::Bool(_) => "a boolean",
        Value::Number(_) => "a number",
        Value::String(_) => "text",
        Value::Sequence(_) => "a list",
        Value::Mapping(_) => "a mapping",
        Value::Tagged(_) => "a tagged value",
    }
}

/// The text of field `field` of a mapping, if it is text: the id of an
/// element that does not read, so references to it still resolve.
fn text_field(v: &serde_yaml::Value, field: &str) -> Option<String> {
    v.get(field).and_then(|x| x.as_str()).map(str::to_string)
}

/// Paths of elements that did not read (replaced by placeholders).
#[derive(Default)]
struct Unread(Vec<String>);

impl Unread {
    fn covers(&self, path: &str) -> bool {
        self.0.iter().any(|s| {
            path.strip_prefix(s.as_str())
                .is_some_and(|rest| rest.is_empty() || rest.starts_with(['.', '[']))
        })
    }
}

/// Reads the file section by section and element by element, so that one
/// bad element does not hide the problems of the others. Elements that do
/// not read are replaced by placeholders (keeping their id) whose further
/// problems are not reported.
fn read_sections(
    root: &serde_yaml::Value,
    sink: &mut Sink,
    unread: &mut Unread,
) -> Option<IncidentFile> {
    use serde_yaml::Value;
    let map = match root {
        Value::Mapping(m) => m,
        Value::Null => {
            sink.error_at(
                "",
                (1, 1),
                "the file is empty: an incident file needs at least `incident` and `traits`",
            );
            return None;
        }
        other => {
            sink.error(
                "",
                format!(
                    "expected a mapping with `incident`, `traits`, `unit_types`, `units`, `tasks`, got {}",
                    kind_of(other)
                ),
            );
            return None;
        }
    };
    let mut sections: BTreeMap<&str, &Value> = BTreeMap::new();
    for (k, v) in map {
        match k.as_str().and_then(|k| SECTIONS.iter().find(|s| **s == k)) {
            Some(name) => {
                sections.insert(name, v);
            }
            None => {
                let key = k.as_str().map_or_else(|| format!("{k:?}"), str::to_string);
                sink.error_at_key(
                    "",
                    &key,
                    format!(
                        "unknown field `{key}` (expected one of {})",
                        SECTIONS.map(|s| format!("`{s}`")).join(", ")
                    ),
                );
            }
        }
    }

    let incident = match sections.get("incident") {
        None => {
            sink.error(
                "",
                "missing field `incident` (it holds at least the `name`)",
            );
            None
        }
        Some(v) => piece::<IncidentHeader>(v, "incident", sink),
    }
    .unwrap_or_else(|| {
        unread.0.push("incident".to_string());
        IncidentHeader {
            name: sections
                .get("incident")
                .and_then(|v| text_field(v, "name"))
                .unwrap_or_else(|| "?".to_string()),
            started: None,
            reserve_min: None,
            secure: None,
        }
    });
    if !sections.contains_key("traits") {
        sink.error(
            "",
            "missing field `traits` (at least one capability, e.g. `- { id: water, unit: L/min }`)",
        );
        // Said once: not again as "at least one trait is required".
        unread.0.push("traits".to_string());
    }
    let traits = list(sections.get("traits"), "traits", sink, unread, |v| {
        TraitFile {
            id: text_field(v, "id").unwrap_or_default(),
            label: None,
            unit: None,
            measurement_sd: None,
        }
    });
    let unit_types = list(
        sections.get("unit_types"),
        "unit_types",
        sink,
        unread,
        |v| UnitTypeFile {
            id: text_field(v, "id").unwrap_or_default(),
            label: None,
            rho: None,
            traits: BTreeMap::new(),
            cost: None,
        },
    );
    let units = list(sections.get("units"), "units", sink, unread, |v| UnitFile {
        id: text_field(v, "id").unwrap_or_default(),
        unit_type: text_field(v, "type").unwrap_or_default(),
        traits: BTreeMap::new(),
        status: None,
    });
    let tasks = list(sections.get("tasks"), "tasks", sink, unread, |v| TaskFile {
        id: text_field(v, "id").unwrap_or_default(),
        label: None,
        tier: None,
        needs: BTreeMap::new(),
        accepts: None,
        min_units: None,
        max_units: None,
        outcome: None,
    });
    let placement = id_map::<Option<String>>(sections.get("placement"), "placement", sink);
    let pins = id_map::<String>(sections.get("pins"), "pins", sink);
    Some(IncidentFile {
        incident,
        traits,
        unit_types,
        units,
        tasks,
        placement,
        pins,
    })
}

/// One list section, element by element.
fn list<T: serde::de::DeserializeOwned>(
    v: Option<&&serde_yaml::Value>,
    path: &str,
    sink: &mut Sink,
    unread: &mut Unread,
    placeholder: impl Fn(&serde_yaml::Value) -> T,
) -> Vec<T> {
    use serde_yaml::Value;
    match v {
        None | Some(Value::Null) => Vec::new(),
        Some(Value::Sequence(items)) => items
            .iter()
            .enumerate()
            .map(|(i, item)| {
                let p = format!("{path}[{i}]");
                piece::<T>(item, &p, sink).unwrap_or_else(|| {
                    unread.0.push(p);
                    placeholder(item)
                })
            })
            .collect(),
        Some(other) => {
            sink.error(
                path,
                format!(
                    "expected a list (`- …` lines or `[ … ]`), got {}",
                    kind_of(other)
                ),
            );
            Vec::new()
        }
    }
}

/// `placement` or `pins`: unit id → value, entry by entry.
fn id_map<T: serde::de::DeserializeOwned>(
    v: Option<&&serde_yaml::Value>,
    path: &str,
    sink: &mut Sink,
) -> BTreeMap<String, T> {
    use serde_yaml::Value;
    let mut out = BTreeMap::new();
    match v {
        None | Some(Value::Null) => {}
        Some(Value::Mapping(m)) => {
            for (k, v) in m {
                let Some(key) = k.as_str() else {
                    let shown = match k {
                        Value::Number(n) => n.to_string(),
                        Value::Bool(b) => b.to_string(),
                        _ => kind_of(k).to_string(),
                    };
                    sink.error_at_key(
                        path,
                        &shown,
                        format!("a unit id must be text, got `{shown}` (put it in quotes)"),
                    );
                    continue;
                };
                if let Some(t) = piece::<T>(v, &format!("{path}.{key}"), sink) {
                    out.insert(key.to_string(), t);
                }
            }
        }
        Some(other) => sink.error(
            path,
            format!(
                "expected a mapping of unit id to task id, got {}",
                kind_of(other)
            ),
        ),
    }
    out
}

/// Deserializes one piece of the file, reporting a failure with the full
/// field path (`units[3].traits.water.mean`).
fn piece<T: serde::de::DeserializeOwned>(
    v: &serde_yaml::Value,
    path: &str,
    sink: &mut Sink,
) -> Option<T> {
    match serde_path_to_error::deserialize::<_, T>(v) {
        Ok(t) => Some(t),
        Err(e) => {
            let mut full = path.to_string();
            for segment in e.path() {
                match segment {
                    serde_path_to_error::Segment::Seq { index } => {
                        full.push_str(&format!("[{index}]"))
                    }
                    serde_path_to_error::Segment::Map { key } => {
                        if !full.is_empty() {
                            full.push('.');
                        }
                        full.push_str(key);
                    }
                    serde_path_to_error::Segment::Enum { .. }
                    | serde_path_to_error::Segment::Unknown => {}
                }
            }
            report_serde_error(sink, &full, &e.into_inner().to_string());
            None
        }
    }
}

/// Turns serde's wording into the file's: field paths, "a number" rather
/// than "f64", unknown fields located at their key.
fn report_serde_error(sink: &mut Sink, path: &str, message: &str) {
    if let Some(rest) = message.strip_prefix("unknown field `")
        && let Some((field, expected)) = rest.split_once('`')
    {
        // The path may or may not end in the unknown field itself.
        let parent = match path.strip_suffix(field) {
            Some(p) if p.is_empty() || p.ends_with('.') => p.trim_end_matches('.'),
            _ => path,
        };
        let expected = expected.trim_start_matches(", ");
        let hint = if expected.is_empty() {
            String::new()
        } else {
            format!(" ({expected})")
        };
        sink.error_at_key(parent, field, format!("unknown field `{field}`{hint}"));
        return;
    }
    if let Some(rest) = message.strip_prefix("missing field `")
        && let Some((field, _)) = rest.split_once('`')
    {
        sink.error(path, format!("missing field `{field}` (required)"));
        return;
    }
    if let Some(rest) = message.strip_prefix("invalid type: ")
        && let Some((got, expected)) = rest.split_once(", expected ")
    {
        let expected = match expected {
            "f64" => "a number",
            "i64" | "u32" | "u64" => "a whole number",
            "a sequence" => "a list",
            "a map" => "a mapping",
            e if e.starts_with("struct ") => "a mapping of fields (`key: value`)",
            e => e,
        };
        let got = got.replace("unit value", "nothing (null)");
        let hint =
            if expected == "a string" && !got.starts_with("sequence") && !got.starts_with("map") {
                " (put it in quotes)"
            } else {
                ""
            };
        sink.error(path, format!("expected {expected}, got {got}{hint}"));
        return;
    }
    sink.error(path, message.to_string());
}

/// Collects diagnostics, locating each by its field path.
pub struct Sink<'a> {
    pub file: &'a str,
    pub locator: &'a Locator,
    pub out: Vec<Diagnostic>,
}

impl<'a> Sink<'a> {
    pub fn new(file: &'a str, locator: &'a Locator) -> Self {
        Sink {
            file,
            locator,
            out: Vec::new(),
        }
    }

    fn push(&mut self, path: String, at: Option<(usize, usize)>, message: String) {
        let (line, column) = at.map_or((None, None), |(l, c)| (Some(l), Some(c)));
        self.out.push(Diagnostic {
            file: self.file.to_string(),
            line,
            column,
            path,
            message,
        });
    }

    /// A problem with the value at `path`.
    pub fn error(&mut self, path: impl Into<String>, message: impl Into<String>) {
        let path = path.into();
        let at = self.locator.locate(&path);
        self.push(path, at, message.into());
    }

    /// A problem at a known place.
    pub fn error_at(&mut self, path: &str, at: (usize, usize), message: impl Into<String>) {
        self.push(path.to_string(), Some(at), message.into());
    }

    /// A problem with the key `key` of the mapping at `path` (unknown field,
    /// unknown unit id), located at the key.
    pub fn error_at_key(&mut self, path: &str, key: &str, message: impl Into<String>) {
        let key_path = if path.is_empty() {
            key.to_string()
        } else {
            format!("{path}.{key}")
        };
        let at = self.locator.locate_key(&key_path);
        self.push(path.to_string(), at, message.into());
    }

    /// The diagnostics sorted by place (unlocated last), without repeats.
    pub fn finish(mut self) -> Vec<Diagnostic> {
        self.out
            .sort_by_key(|d| (d.line.unwrap_or(usize::MAX), d.column.unwrap_or(usize::MAX)));
        self.out.dedup();
        self.out
    }
}

fn check_number(sink: &mut Sink, path: &str, what: &str, v: f64) -> bool {
    if !v.is_finite() {
        sink.error(path, format!("{what} must be a finite number, got {v}"));
        false
    } else if v < 0.0 {
        sink.error(path, format!("{what} must be ≥ 0, got {v}"));
        false
    } else {
        true
    }
}

/// Ids already given in one list: id → path of the element that has it.
type Seen = BTreeMap<String, String>;

fn check_id(sink: &mut Sink, element: &str, id: &str, seen: &mut Seen, what: &str) {
    let path = format!("{element}.id");
    if let Some(problem) = crate::clean::id_problem(id) {
        sink.error(path, format!("{what} id {problem}"));
    } else if let Some(first) = seen.get(id) {
        sink.error(
            path,
            format!("duplicate {what} id `{id}`: {first} already has it"),
        );
    } else {
        seen.insert(id.to_string(), element.to_string());
    }
}

/// Converts a unit of the file (or of a `unit_added` event) into a domain
/// unit, reporting problems under `path`.
pub fn convert_unit(
    incident: &Incident,
    u: &UnitFile,
    path: &str,
    sink: &mut Sink,
) -> Option<Unit> {
    let Some(type_idx) = incident.type_idx(&u.unit_type) else {
        sink.error(
            format!("{path}.type"),
            format!("unknown unit type `{}`", u.unit_type),
        );
        return None;
    };
    let mut ratings = incident.unit_types[type_idx].ratings.clone();
    let mut ok = true;
    for (tid, r) in &u.traits {
        let tpath = format!("{path}.traits.{tid}");
        let Some(k) = incident.trait_idx(tid) else {
            sink.error(&tpath, format!("unknown trait `{tid}`"));
            ok = false;
            continue;
        };
        if let Some(m) = r.mean {
            ok &= check_number(sink, &format!("{tpath}.mean"), "mean", m);
            ratings[k].mean = m;
        }
        if let Some(s) = r.sd {
            ok &= check_number(sink, &format!("{tpath}.sd"), "sd", s);
            ratings[k].sd = s;
        }
    }
    let status = match u.status.as_deref() {
        None | Some("available") => UnitStatus::Available,
        Some("out_of_service") => UnitStatus::OutOfService,
        Some(other) => {
            sink.error(
                format!("{path}.status"),
                format!("status must be `available` or `out_of_service`, got `{other}`"),
            );
            ok = false;
            UnitStatus::Available
        }
    };
    ok.then(|| Unit {
        id: u.id.clone(),
        type_idx,
        ratings,
        status,
    })
}

/// Converts a task of the file (or of a `task_added` event) into a domain
/// task, reporting problems under `path`.
pub fn convert_task(
    incident: &Incident,
    t: &TaskFile,
    path: &str,
    sink: &mut Sink,
) -> Option<Task> {
    let mut ok = true;
    let tier = match t.tier.as_deref() {
        None => Tier::Property,
        Some(s) => Tier::parse(s).unwrap_or_else(|| {
            sink.error(
                format!("{path}.tier"),
                format!("tier must be `life`, `stabilization` or `property`, got `{s}`"),
            );
            ok = false;
            Tier::Property
        }),
    };
    let mut needs = vec![Need::default(); incident.traits.len()];
    for (tid, n) in &t.needs {
        let npath = format!("{path}.needs.{tid}");
        let Some(k) = incident.trait_idx(tid) else {
            sink.error(&npath, format!("unknown trait `{tid}`"));
            ok = false;
            continue;
        };
        let (need, sd, need_path) = match n {
            NeedFile::Certain(v) => (*v, 0.0, npath.clone()),
            NeedFile::Uncertain(u) => (u.need, u.sd.unwrap_or(0.0), format!("{npath}.need")),
        };
        ok &= check_number(sink, &need_path, "need", need);
        ok &= check_number(sink, &format!("{npath}.sd"), "sd", sd);
        needs[k] = Need { need, sd };
    }
    if t.accepts.as_ref().is_some_and(|a| a.is_empty()) {
        sink.error(
            format!("{path}.accepts"),
            "accepts is empty, so no unit could ever be placed; leave it out to accept every type",
        );
        ok = false;
    }
    let accepts = t.accepts.as_ref().map(|list| {
        list.iter()
            .enumerate()
            .filter_map(|(i, ty)| {
                let idx = incident.type_idx(ty);
                if idx.is_none() {
                    sink.error(
                        format!("{path}.accepts[{i}]"),
                        format!("unknown unit type `{ty}`"),
                    );
                    ok = false;
                }
                idx
            })
            .collect()
    });
    let mut count = |field: &str, v: Option<i64>| -> Option<u32> {
        let v = v?;
        match u32::try_from(v) {
            Ok(c) => Some(c),
            Err(_) => {
                sink.error(
                    format!("{path}.{field}"),
                    format!("{field} must be a whole number ≥ 0, got {v}"),
                );
                ok = false;
                None
            }
        }
    };
    let min_units = count("min_units", t.min_units);
    let max_units = count("max_units", t.max_units);
    if let (Some(lo), Some(hi)) = (min_units, max_units)
        && lo > hi
    {
        sink.error(
            format!("{path}.min_units"),
            format!("min_units ({lo}) is larger than max_units ({hi})"),
        );
        ok = false;
    }
    let outcome = match t.outcome.as_deref() {
        None => None,
        Some(s) => match Outcome::parse(s) {
            Some(o) => Some(o),
            None => {
                sink.error(
                    format!("{path}.outcome"),
                    format!("outcome must be `succeeded`, `failed` or `cancelled`, got `{s}`"),
                );
                ok = false;
                None
            }
        },
    };
    ok.then(|| Task {
        id: t.id.clone(),
        label: t.label.clone().unwrap_or_else(|| t.id.clone()),
        tier,
        needs,
        accepts,
        min_units,
        max_units,
        outcome,
    })
}

fn convert_rating(sink: &mut Sink, path: &str, r: &RatingFile) -> Rating {
    let mean = r.mean.unwrap_or(0.0);
    let sd = r.sd.unwrap_or(0.0);
    check_number(sink, &format!("{path}.mean"), "mean", mean);
    check_number(sink, &format!("{path}.sd"), "sd", sd);
    Rating { mean, sd }
}

/// Validates and converts the whole file; problems go to `sink`.
fn convert(f: &IncidentFile, sink: &mut Sink) -> Incident {
    let mut secure = SecureLevels::default();
    if let Some(s) = &f.incident.secure {
        for (tier, v) in [
            (Tier::Life, s.life),
            (Tier::Stabilization, s.stabilization),
            (Tier::Property, s.property),
        ] {
            if let Some(v) = v {
                if !(v.is_finite() && v > 0.0 && v <= 1.0) {
                    sink.error(
                        format!("incident.secure.{}", tier.as_str()),
                        format!("secure level must be in (0, 1], got {v}"),
                    );
                } else {
                    secure.levels[tier.index()] = v;
                }
            }
        }
    }
    let reserve_min = match f.incident.reserve_min {
        None => 0,
        Some(v) => u32::try_from(v).unwrap_or_else(|_| {
            sink.error(
                "incident.reserve_min",
                format!("reserve_min must be a whole number ≥ 0, got {v}"),
            );
            0
        }),
    };
    if f.incident.name.trim().is_empty() {
        sink.error("incident.name", "name must not be empty");
    }
    if let Some(s) = &f.incident.started
        && chrono::DateTime::parse_from_rfc3339(s).is_err()
    {
        sink.error("incident.started", format!("not an RFC 3339 time: `{s}`"));
    }

    if f.traits.is_empty() {
        sink.error("traits", "at least one trait is required");
    }
    let mut seen = Seen::new();
    let traits: Vec<TraitDef> = f
        .traits
        .iter()
        .enumerate()
        .map(|(i, t)| {
            check_id(sink, &format!("traits[{i}]"), &t.id, &mut seen, "trait");
            let measurement_sd = t.measurement_sd.filter(|&v| {
                check_number(
                    sink,
                    &format!("traits[{i}].measurement_sd"),
                    "measurement_sd",
                    v,
                )
            });
            TraitDef {
                id: t.id.clone(),
                label: t.label.clone().unwrap_or_else(|| t.id.clone()),
                unit: t.unit.clone().unwrap_or_default(),
                measurement_sd,
            }
        })
        .collect();

    let mut seen = Seen::new();
    let mut unit_types = Vec::new();
    for (i, ty) in f.unit_types.iter().enumerate() {
        let path = format!("unit_types[{i}]");
        check_id(sink, &path, &ty.id, &mut seen, "unit type");
        let rho = ty.rho.unwrap_or(0.0);
        if !(rho.is_finite() && (0.0..=1.0).contains(&rho)) {
            sink.error(
                format!("{path}.rho"),
                format!("rho must be in [0, 1], got {rho}"),
            );
        }
        if let Some(c) = ty.cost {
            check_number(sink, &format!("{path}.cost"), "cost", c);
        }
        let mut ratings = vec![Rating::default(); traits.len()];
        for (tid, r) in &ty.traits {
            let tpath = format!("{path}.traits.{tid}");
            match traits.iter().position(|t| &t.id == tid) {
                Some(k) => ratings[k] = convert_rating(sink, &tpath, r),
                None => sink.error(tpath, format!("unknown trait `{tid}`")),
            }
        }
        unit_types.push(UnitType {
            id: ty.id.clone(),
            label: ty.label.clone().unwrap_or_else(|| ty.id.clone()),
            rho: rho.clamp(0.0, 1.0),
            ratings,
            cost: ty.cost,
        });
    }

    let mut incident = Incident {
        name: f.incident.name.clone(),
        started: f.incident.started.clone(),
        reserve_min,
        secure,
        traits,
        unit_types,
        units: Vec::new(),
        tasks: Vec::new(),
        placement: Placement::default(),
        pins: BTreeMap::new(),
        observations: Default::default(),
    };

    // Units and tasks that did not convert: left out of the checks of
    // placement and pins, which would only echo their problem.
    let mut broken_units = vec![false; f.units.len()];
    let mut broken_tasks = vec![false; f.tasks.len()];
    let mut seen = Seen::new();
    for (i, u) in f.units.iter().enumerate() {
        let i = crate::model::UnitIdx::new(i);
        let path = format!("units[{i}]");
        check_id(sink, &path, &u.id, &mut seen, "unit");
        if let Some(unit) = convert_unit(&incident, u, &path, sink) {
            incident.add_unit(unit);
        } else {
            broken_units[i] = true;
            // Keep indices aligned with the file so later references resolve.
            incident.add_unit(Unit {
                id: u.id.clone(),
                type_idx: 0,
                ratings: vec![Rating::default(); incident.traits.len()],
                status: UnitStatus::Available,
            });
        }
    }
    let mut seen = Seen::new();
    for (i, t) in f.tasks.iter().enumerate() {
        let i = crate::model::TaskIdx::new(i);
        let path = format!("tasks[{i}]");
        check_id(sink, &path, &t.id, &mut seen, "task");
        let task = convert_task(&incident, t, &path, sink);
        broken_tasks[i] = task.is_none();
        let task = task.unwrap_or_else(|| Task {
            id: t.id.clone(),
            label: t.id.clone(),
            tier: Tier::Property,
            needs: vec![Need::default(); incident.traits.len()],
            accepts: None,
            min_units: None,
            max_units: None,
            outcome: None,
        });
        incident.tasks.push(task);
    }

    // A (unit, task) pair of `placement` or `pins` by id: unknown ids are
    // reported; pairs whose unit or task already failed are skipped quietly.
    let resolve = |sink: &mut Sink, section: &str, uid: &str, tid: Option<&str>| {
        let Some(u) = incident.unit_idx(uid) else {
            sink.error_at_key(section, uid, format!("unknown unit `{uid}`"));
            return None;
        };
        let tid = tid?;
        let Some(t) = incident.task_idx(tid) else {
            sink.error(format!("{section}.{uid}"), format!("unknown task `{tid}`"));
            return None;
        };
        (!broken_units[u] && !broken_tasks[t]).then_some((u, t))
    };
    // Both sections are resolved before the incident changes (the closure
    // reads it).
    let placed: Vec<_> = (f.placement.iter())
        .filter_map(|(uid, tid)| {
            let tid = tid.as_deref();
            resolve(sink, "placement", uid, tid).map(|(u, t)| (uid, tid.unwrap_or_default(), u, t))
        })
        .collect();
    let pinned: Vec<_> = (f.pins.iter())
        .filter_map(|(uid, tid)| {
            resolve(sink, "pins", uid, Some(tid)).map(|(u, t)| (uid, tid, u, t))
        })
        .collect();
    for (uid, tid, u, t) in placed {
        match placement_problem(&incident, u, t) {
            Some(why) => sink.error(
                format!("placement.{uid}"),
                format!("`{uid}` cannot be on `{tid}`: {why}"),
            ),
            None => incident.placement.set(u, Some(t)),
        }
    }
    for (uid, tid, u, t) in pinned {
        // A pin binds the plan, not the ground: a unit pinned to one task may
        // stand on another now; the plan will move it.
        match placement_problem(&incident, u, t) {
            Some(why) => sink.error(
                format!("pins.{uid}"),
                format!("`{uid}` cannot be pinned to `{tid}`: {why}"),
            ),
            None => {
                incident.pins.insert(u, t);
            }
        }
    }
    for v in crate::rules::count_violations(&incident, true) {
        sink.error(v.field, v.message);
    }
    incident
}

/// Why unit `u` may not stand on (or be pinned to) task `t`, if it may not.
fn placement_problem(incident: &Incident, u: UnitIdx, t: TaskIdx) -> Option<String> {
    crate::rules::may_go(incident, u, t)
        .err()
        .map(|r| r.reason(incident))
}
