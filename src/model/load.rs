//! Reading and validating incident files: YAML text → [`IncidentFile`] →
//! [`Incident`], with every problem reported as a located [`Diagnostic`].

use super::file::{IncidentFile, NeedFile, RatingFile, TaskFile, UnitFile};
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
pub fn parse_incident_str(text: &str, file: &str) -> Result<Incident, LoadError> {
    let locator = Locator::new(text);
    let mut sink = Sink {
        file,
        locator: &locator,
        out: Vec::new(),
    };
    sink.out.extend(locator.structural_problems(file));
    if !sink.out.is_empty() {
        return Err(LoadError::Invalid(sink.out));
    }
    let parsed: IncidentFile = match serde_yaml::from_str(text) {
        Ok(p) => p,
        Err(e) => {
            let (line, column) = e
                .location()
                .map(|l| (Some(l.line()), Some(l.column())))
                .unwrap_or((None, None));
            let msg = e.to_string();
            let message =
                if msg.contains("repetition limit exceeded") || msg.contains("recursion limit") {
                    "too many aliases or too deep nesting (a YAML alias bomb?): refused".to_string()
                } else {
                    msg
                };
            return Err(LoadError::Invalid(vec![Diagnostic {
                file: file.to_string(),
                line,
                column,
                path: String::new(),
                message,
            }]));
        }
    };
    let incident = convert(&parsed, &mut sink);
    if sink.out.is_empty() {
        Ok(incident)
    } else {
        Err(LoadError::Invalid(sink.out))
    }
}

/// Collects diagnostics, locating each by its field path.
pub struct Sink<'a> {
    pub file: &'a str,
    pub locator: &'a Locator,
    pub out: Vec<Diagnostic>,
}

impl Sink<'_> {
    pub fn error(&mut self, path: impl Into<String>, message: impl Into<String>) {
        let path = path.into();
        let (line, column) = self
            .locator
            .locate(&path)
            .map_or((None, None), |(l, c)| (Some(l), Some(c)));
        self.out.push(Diagnostic {
            file: self.file.to_string(),
            line,
            column,
            path,
            message: message.into(),
        });
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

fn check_id(sink: &mut Sink, path: &str, id: &str, seen: &mut Vec<String>, what: &str) {
    if id.trim().is_empty() {
        sink.error(path, format!("{what} id must not be empty"));
    } else if seen.iter().any(|s| s == id) {
        sink.error(path, format!("duplicate {what} id `{id}`"));
    } else {
        seen.push(id.to_string());
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
    let mut seen = Vec::new();
    let traits: Vec<TraitDef> = f
        .traits
        .iter()
        .enumerate()
        .map(|(i, t)| {
            check_id(sink, &format!("traits[{i}].id"), &t.id, &mut seen, "trait");
            TraitDef {
                id: t.id.clone(),
                label: t.label.clone().unwrap_or_else(|| t.id.clone()),
                unit: t.unit.clone().unwrap_or_default(),
            }
        })
        .collect();

    let mut seen = Vec::new();
    let mut unit_types = Vec::new();
    for (i, ty) in f.unit_types.iter().enumerate() {
        let path = format!("unit_types[{i}]");
        check_id(sink, &format!("{path}.id"), &ty.id, &mut seen, "unit type");
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
    };

    let mut seen = Vec::new();
    for (i, u) in f.units.iter().enumerate() {
        let path = format!("units[{i}]");
        check_id(sink, &format!("{path}.id"), &u.id, &mut seen, "unit");
        if let Some(unit) = convert_unit(&incident, u, &path, sink) {
            incident.add_unit(unit);
        } else {
            // Keep indices aligned with the file so later references resolve.
            incident.add_unit(Unit {
                id: u.id.clone(),
                type_idx: 0,
                ratings: vec![Rating::default(); incident.traits.len()],
                status: UnitStatus::Available,
            });
        }
    }
    let mut seen = Vec::new();
    for (i, t) in f.tasks.iter().enumerate() {
        let path = format!("tasks[{i}]");
        check_id(sink, &format!("{path}.id"), &t.id, &mut seen, "task");
        let task = convert_task(&incident, t, &path, sink).unwrap_or_else(|| Task {
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
    if !sink.out.is_empty() {
        return incident;
    }

    for (uid, tid) in &f.placement {
        let path = format!("placement.{uid}");
        let Some(u) = incident.unit_idx(uid) else {
            sink.error(&path, format!("unknown unit `{uid}`"));
            continue;
        };
        let Some(tid) = tid else { continue };
        let Some(t) = incident.task_idx(tid) else {
            sink.error(&path, format!("unknown task `{tid}`"));
            continue;
        };
        let unit = &incident.units[u];
        let task = &incident.tasks[t];
        if unit.status == UnitStatus::OutOfService {
            sink.error(
                &path,
                format!("unit `{uid}` is out of service and cannot be placed"),
            );
        } else if !task.is_open() {
            sink.error(&path, format!("task `{tid}` is closed"));
        } else if !task.accepts_type(unit.type_idx) {
            sink.error(
                &path,
                format!(
                    "task `{tid}` does not accept unit type `{}`",
                    incident.unit_types[unit.type_idx].id
                ),
            );
        } else {
            incident.placement.set(u, Some(t));
        }
    }
    for (uid, tid) in &f.pins {
        let path = format!("pins.{uid}");
        let Some(u) = incident.unit_idx(uid) else {
            sink.error(&path, format!("unknown unit `{uid}`"));
            continue;
        };
        let Some(t) = incident.task_idx(tid) else {
            sink.error(&path, format!("unknown task `{tid}`"));
            continue;
        };
        if !incident.may_place(u, t) {
            sink.error(
                &path,
                format!("unit `{uid}` cannot be pinned to `{tid}` (out of service, closed task or type not accepted)"),
            );
        } else {
            incident.pins.insert(u, t);
        }
    }
    for (t, task) in incident.tasks.iter().enumerate() {
        if let Some(max) = task.max_units {
            let pinned = incident.pins.values().filter(|&&pt| pt == t).count();
            if pinned as u32 > max {
                sink.error(
                    format!("tasks[{t}].max_units"),
                    format!(
                        "{pinned} units are pinned to `{}` but max_units is {max}",
                        task.id
                    ),
                );
            }
            let placed = incident.placement.units_on(t).count();
            if placed as u32 > max {
                sink.error(
                    format!("tasks[{t}].max_units"),
                    format!(
                        "{placed} units are placed on `{}` but max_units is {max}",
                        task.id
                    ),
                );
            }
        }
    }
    let available = incident
        .units
        .iter()
        .filter(|u| u.status == UnitStatus::Available)
        .count() as u32;
    let pinned = incident.pins.len() as u32;
    if reserve_min > available.saturating_sub(pinned) {
        sink.error(
            "incident.reserve_min",
            format!(
                "reserve_min is {reserve_min} but only {} available unpinned units exist",
                available.saturating_sub(pinned)
            ),
        );
    }
    incident
}
