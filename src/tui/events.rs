//! Interim: the log events of SPEC §4 as the dashboard writes them, and their
//! effect on the incident. Replaced by the log module's `Event` and `apply`
//! when it lands; the shapes (serde tag `kind`, field names) follow SPEC §4.

use std::collections::BTreeMap;

use serde::{Deserialize, Serialize};

use crate::model::{Incident, Need, Outcome, Rating, Unit, UnitStatus};

/// A unit as in the incident file.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct UnitSpec {
    pub id: String,
    #[serde(rename = "type")]
    pub unit_type: String,
    #[serde(default, skip_serializing_if = "BTreeMap::is_empty")]
    pub traits: BTreeMap<String, RatingSpec>,
}

#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct RatingSpec {
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub mean: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub sd: Option<f64>,
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct MoveSpec {
    pub unit: String,
    pub from: Option<String>,
    pub to: Option<String>,
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum Event {
    UnitLost {
        unit: String,
        reason: String,
    },
    UnitAdded {
        unit: UnitSpec,
    },
    UnitRerated {
        unit: String,
        #[serde(rename = "trait")]
        trait_id: String,
        mean: f64,
        sd: f64,
    },
    UnitStatus {
        unit: String,
        status: String,
    },
    NeedChanged {
        task: String,
        #[serde(rename = "trait")]
        trait_id: String,
        need: f64,
        sd: f64,
    },
    TaskClosed {
        task: String,
        outcome: String,
    },
    Pinned {
        unit: String,
        task: String,
    },
    Unpinned {
        unit: String,
    },
    Moved {
        unit: String,
        to: Option<String>,
    },
    PlanProposed {
        moves: Vec<MoveSpec>,
    },
    PlanAccepted {
        moves: Vec<MoveSpec>,
    },
    PlanRejected,
    Note {
        text: String,
    },
}

/// One line of the log.
#[derive(Debug, Clone, PartialEq)]
pub struct Record {
    pub seq: u64,
    /// RFC 3339 UTC.
    pub at: String,
    pub by: String,
    pub event: Event,
}

fn unit(inc: &Incident, id: &str) -> Result<usize, String> {
    inc.unit_idx(id).ok_or_else(|| format!("unknown unit {id}"))
}
fn task(inc: &Incident, id: &str) -> Result<usize, String> {
    inc.task_idx(id).ok_or_else(|| format!("unknown task {id}"))
}
fn place(inc: &Incident, id: &Option<String>) -> Result<Option<usize>, String> {
    id.as_deref().map(|t| task(inc, t)).transpose()
}

/// Applies `event` to the incident, or refuses it leaving the incident as it was.
pub fn apply(inc: &mut Incident, event: &Event) -> Result<(), String> {
    let mut next = inc.clone();
    apply_in_place(&mut next, event)?;
    *inc = next;
    Ok(())
}

fn apply_in_place(inc: &mut Incident, event: &Event) -> Result<(), String> {
    match event {
        Event::UnitLost { unit: u, .. } => {
            let u = unit(inc, u)?;
            inc.remove_unit(u);
        }
        Event::UnitAdded { unit: spec } => {
            if inc.unit_idx(&spec.id).is_some() {
                return Err(format!("unit {} already exists", spec.id));
            }
            let t = inc
                .type_idx(&spec.unit_type)
                .ok_or_else(|| format!("unknown unit type {}", spec.unit_type))?;
            let mut ratings = inc.unit_types[t].ratings.clone();
            for (k, r) in &spec.traits {
                let k = inc
                    .trait_idx(k)
                    .ok_or_else(|| format!("unknown trait {k}"))?;
                if let Some(m) = r.mean {
                    ratings[k].mean = m;
                }
                if let Some(s) = r.sd {
                    ratings[k].sd = s;
                }
            }
            inc.add_unit(Unit {
                id: spec.id.clone(),
                type_idx: t,
                ratings,
                status: UnitStatus::Available,
            });
        }
        Event::UnitRerated {
            unit: u,
            trait_id,
            mean,
            sd,
        } => {
            let u = unit(inc, u)?;
            let k = inc
                .trait_idx(trait_id)
                .ok_or_else(|| format!("unknown trait {trait_id}"))?;
            if !(mean.is_finite() && *mean >= 0.0 && sd.is_finite() && *sd >= 0.0) {
                return Err("mean and sd must be finite and ≥ 0".into());
            }
            inc.units[u].ratings[k] = Rating {
                mean: *mean,
                sd: *sd,
            };
        }
        Event::UnitStatus { unit: u, status } => {
            let u = unit(inc, u)?;
            inc.units[u].status = match status.as_str() {
                "available" => UnitStatus::Available,
                "out_of_service" => {
                    inc.placement.set(u, None);
                    UnitStatus::OutOfService
                }
                other => return Err(format!("unknown status {other}")),
            };
        }
        Event::NeedChanged {
            task: t,
            trait_id,
            need,
            sd,
        } => {
            let t = task(inc, t)?;
            let k = inc
                .trait_idx(trait_id)
                .ok_or_else(|| format!("unknown trait {trait_id}"))?;
            if !(need.is_finite() && *need >= 0.0 && sd.is_finite() && *sd >= 0.0) {
                return Err("need and sd must be finite and ≥ 0".into());
            }
            inc.tasks[t].needs[k] = Need {
                need: *need,
                sd: *sd,
            };
        }
        Event::TaskClosed { task: t, outcome } => {
            let t = task(inc, t)?;
            let o = Outcome::parse(outcome).ok_or_else(|| format!("unknown outcome {outcome}"))?;
            inc.tasks[t].outcome = Some(o);
            for u in 0..inc.placement.len() {
                if inc.placement.get(u) == Some(t) {
                    inc.placement.set(u, None);
                }
            }
            inc.pins.retain(|_, pt| *pt != t);
        }
        Event::Pinned { unit: u, task: t } => {
            let (u, t) = (unit(inc, u)?, task(inc, t)?);
            if !inc.may_place(u, t) {
                return Err("that unit cannot be placed on that task".into());
            }
            inc.pins.insert(u, t);
        }
        Event::Unpinned { unit: u } => {
            let u = unit(inc, u)?;
            inc.pins.remove(&u);
        }
        Event::Moved { unit: u, to } => {
            let u = unit(inc, u)?;
            let to = place(inc, to)?;
            if let Some(t) = to
                && !inc.may_place(u, t)
            {
                return Err("that unit cannot be placed on that task".into());
            }
            inc.placement.set(u, to);
        }
        Event::PlanAccepted { moves } => {
            for m in moves {
                let u = unit(inc, &m.unit)?;
                let to = place(inc, &m.to)?;
                if let Some(t) = to
                    && !inc.may_place(u, t)
                {
                    return Err(format!(
                        "{} cannot be placed on {}",
                        m.unit, inc.tasks[t].id
                    ));
                }
                inc.placement.set(u, to);
            }
        }
        Event::PlanProposed { .. } | Event::PlanRejected | Event::Note { .. } => {}
    }
    Ok(())
}

/// One-line summary for the recent log.
pub fn summary(event: &Event) -> String {
    let place = |t: &Option<String>| t.clone().unwrap_or_else(|| "reserve".into());
    let moves = |ms: &[MoveSpec]| {
        ms.iter()
            .map(|m| format!("{} {}→{}", m.unit, place(&m.from), place(&m.to)))
            .collect::<Vec<_>>()
            .join(", ")
    };
    match event {
        Event::UnitLost { unit, reason } => format!("{unit} lost: {reason}"),
        Event::UnitAdded { unit } => format!("{} added ({})", unit.id, unit.unit_type),
        Event::UnitRerated {
            unit,
            trait_id,
            mean,
            sd,
        } => {
            format!("{unit} re-rated: {trait_id} {mean} ± {sd}")
        }
        Event::UnitStatus { unit, status } => format!("{unit} now {status}"),
        Event::NeedChanged {
            task,
            trait_id,
            need,
            sd,
        } => {
            format!("{task} needs {trait_id} {need} ± {sd}")
        }
        Event::TaskClosed { task, outcome } => format!("{task} closed: {outcome}"),
        Event::Pinned { unit, task } => format!("{unit} pinned to {task}"),
        Event::Unpinned { unit } => format!("{unit} unpinned"),
        Event::Moved { unit, to } => format!("{unit} moved to {}", place(to)),
        Event::PlanProposed { moves: m } => format!("proposed {} moves: {}", m.len(), moves(m)),
        Event::PlanAccepted { moves: m } => format!("accepted {} moves: {}", m.len(), moves(m)),
        Event::PlanRejected => "proposal rejected".into(),
        Event::Note { text } => format!("note: {text}"),
    }
}
