//! Operator actions: which form each key opens, how a submitted form turns
//! into log events (with inline validation), and the compensating events
//! that undo an action without rewriting the log.

use super::app::AppState;
use super::board::{place_name, task_order};
use super::form::{Field, Form, FormKind};
use crate::log::{Event, Move as MoveSpec, OutcomeValue};
use crate::model::file::{
    NeedFile as NeedSpec, RatingFile as RatingSpec, TaskFile as TaskSpec,
    UncertainNeedFile as UncertainNeedSpec, UnitFile as UnitSpec,
};
use crate::model::{Incident, Tier, UnitStatus};
use crate::rules;

/// An action the operator may undo, with the events that undo it.
#[derive(Debug, Clone, PartialEq)]
pub struct UndoEntry {
    pub label: String,
    pub compensation: Vec<Event>,
}

fn unit_options(inc: &Incident, only_available: bool) -> Vec<(String, String)> {
    inc.roster()
        .filter(|(_, u)| !only_available || u.status == UnitStatus::Available)
        .map(|(i, u)| {
            let ty = &inc.unit_types[u.type_idx].id;
            let at = match u.status {
                UnitStatus::OutOfService => "out of service".to_string(),
                UnitStatus::Lost => "lost".to_string(),
                UnitStatus::Available => match inc.placement.get(i) {
                    Some(_) => format!("on {}", place_name(inc, inc.placement.get(i))),
                    None => "in reserve".to_string(),
                },
            };
            (u.id.clone(), format!("{} · {ty} · {at}", u.id))
        })
        .collect()
}

fn task_options(inc: &Incident) -> Vec<(String, String)> {
    task_order(inc)
        .into_iter()
        .filter(|&t| inc.tasks[t].is_open())
        .map(|t| {
            let task = &inc.tasks[t];
            (
                task.id.clone(),
                format!("{} · {} · {}", task.id, task.label, tier_word(task.tier)),
            )
        })
        .collect()
}

fn tier_word(t: Tier) -> &'static str {
    t.as_str()
}

fn trait_options(inc: &Incident) -> Vec<(String, String)> {
    inc.traits
        .iter()
        .map(|t| (t.id.clone(), format!("{} · {} ({})", t.id, t.label, t.unit)))
        .collect()
}

/// Opens the form for `kind`, or says why it cannot open.
pub fn open_form(state: &AppState, kind: FormKind) -> Result<Form, String> {
    let inc = &state.incident;
    let selected = state.selected_task().map(|t| inc.tasks[t].id.clone());
    let fields = match kind {
        FormKind::Lost => {
            if inc.roster_len() == 0 {
                return Err("no units on the roster".into());
            }
            vec![
                Field::pick("unit", unit_options(inc, false), None),
                Field::text("reason", "what happened, e.g. pump failure", ""),
            ]
        }
        FormKind::AddUnit => {
            let types = inc
                .unit_types
                .iter()
                .map(|t| (t.id.clone(), format!("{} · {}", t.id, t.label)))
                .collect();
            let mut traits = vec![(String::new(), "(type's ratings)".to_string())];
            traits.extend(trait_options(inc));
            vec![
                Field::text("id", "a new unit id, e.g. E9", ""),
                Field::pick("type", types, None),
                Field::pick("rating of", traits, None),
                Field::text("mean", "blank keeps the type's mean", ""),
                Field::text("sd", "blank keeps the type's sd", ""),
            ]
        }
        FormKind::AddTask => {
            let tiers = Tier::ALL
                .iter()
                .map(|t| {
                    (
                        t.as_str().to_string(),
                        super::board::tier_heading(*t).to_lowercase(),
                    )
                })
                .collect();
            let tier = state.selected_task().map(|t| inc.tasks[t].tier.as_str());
            vec![
                Field::text("id", "a new task id without spaces, e.g. search-annex", ""),
                Field::text("label", "what the crews will do, e.g. Search the annex", ""),
                Field::pick("tier", tiers, tier),
                Field::text(
                    "needs",
                    "trait amount [± sd], comma-separated, e.g. water 3000, crew 4 ± 1",
                    "",
                ),
                Field::text("accepts", "unit types it takes, blank = every type", ""),
                Field::text("min units", "blank = no minimum crew", ""),
                Field::text("max units", "blank = no limit", ""),
            ]
        }
        FormKind::Rerate => {
            if inc.roster_len() == 0 {
                return Err("no units on the roster".into());
            }
            vec![
                Field::pick("unit", unit_options(inc, false), None),
                Field::pick("trait", trait_options(inc), None),
                Field::text("mean", "blank keeps the current mean", ""),
                Field::text("sd", "blank keeps the current sd", ""),
            ]
        }
        FormKind::Observe => {
            if inc.roster_len() == 0 {
                return Err("no units on the roster".into());
            }
            vec![
                Field::pick("unit", unit_options(inc, false), None),
                Field::pick("trait", trait_options(inc), None),
                Field::text("value", "the measured figure, ≥ 0", ""),
                Field::text(
                    "sd",
                    "the reading's spread; blank: the trait's measurement sd, else the unit's rated sd",
                    "",
                ),
            ]
        }
        FormKind::ChangeNeed => {
            let tasks = task_options(inc);
            if tasks.is_empty() {
                return Err("no open task".into());
            }
            let binding = state
                .selected_task()
                .and_then(|t| state.ground[t].binding_trait())
                .map(|b| inc.traits[b.trait_idx].id.clone());
            vec![
                Field::pick("task", tasks, selected.as_deref()),
                Field::pick("trait", trait_options(inc), binding.as_deref()),
                Field::text("need", "the new need, ≥ 0", ""),
                Field::text("sd", "uncertainty of the need, blank = 0", ""),
            ]
        }
        FormKind::CloseTask => {
            let tasks = task_options(inc);
            if tasks.is_empty() {
                return Err("no open task".into());
            }
            let outcomes = ["succeeded", "failed", "cancelled"]
                .iter()
                .map(|o| (o.to_string(), o.to_string()))
                .collect();
            vec![
                Field::pick("task", tasks, selected.as_deref()),
                Field::pick("outcome", outcomes, None),
            ]
        }
        FormKind::Pin => {
            let mut tasks = vec![(String::new(), "(unpin)".to_string())];
            tasks.extend(task_options(inc));
            vec![
                Field::pick("unit", unit_options(inc, true), None),
                Field::pick("pin to", tasks, selected.as_deref()),
            ]
        }
        FormKind::Move => {
            let mut tasks = vec![(String::new(), "reserve".to_string())];
            tasks.extend(task_options(inc));
            vec![
                Field::pick("unit", unit_options(inc, true), None),
                Field::pick("to", tasks, selected.as_deref()),
            ]
        }
        FormKind::Note => vec![Field::text("note", "free text, written to the log", "")],
        FormKind::AcceptOne => {
            let Some(p) = &state.proposal else {
                return Err("no proposal to accept".into());
            };
            let moves = p
                .moves
                .iter()
                .enumerate()
                .map(|(i, m)| {
                    (
                        i.to_string(),
                        format!(
                            "{} {} → {}",
                            inc.units[m.unit].id,
                            place_name(inc, m.from),
                            place_name(inc, m.to)
                        ),
                    )
                })
                .collect();
            vec![Field::pick("move", moves, None)]
        }
        FormKind::GoTo => vec![Field::text(
            "seq or time",
            "a sequence number, HH:MM[:SS] or RFC 3339",
            "",
        )],
    };
    Ok(Form::new(kind, fields))
}

fn number(
    form: &Form,
    i: usize,
    what: &str,
    required: bool,
) -> Result<Option<f64>, (usize, String)> {
    let s = form.value(i);
    if s.is_empty() {
        return if required {
            Err((i, format!("{what} is required")))
        } else {
            Ok(None)
        };
    }
    match s.parse::<f64>() {
        Ok(x) if x.is_finite() && x >= 0.0 => Ok(Some(x)),
        Ok(x) => Err((i, format!("{what} must be a finite number ≥ 0, got {x}"))),
        Err(_) => Err((i, format!("{what} must be a number, got {s:?}"))),
    }
}

fn picked(form: &Form, i: usize, what: &str) -> Result<String, (usize, String)> {
    form.fields
        .get(i)
        .and_then(|f| f.value())
        .ok_or_else(|| (i, format!("choose a {what}")))
}

/// Log events for a submitted form, or (field, message) of what is wrong.
pub fn submit(state: &AppState, form: &Form) -> Result<Vec<Event>, (usize, String)> {
    let inc = &state.incident;
    match form.kind {
        FormKind::Lost => {
            let unit = picked(form, 0, "unit")?;
            let reason = form.value(1);
            if reason.is_empty() {
                return Err((1, "give a reason (it goes to the log)".into()));
            }
            Ok(vec![Event::UnitLost {
                unit,
                reason: Some(reason),
            }])
        }
        FormKind::AddUnit => {
            let id = form.value(0);
            if id.is_empty() || id.chars().any(char::is_whitespace) {
                return Err((0, "an id without spaces is required".into()));
            }
            if inc.unit_idx(&id).is_some() {
                return Err((0, format!("unit {id} is already on the roster")));
            }
            let unit_type = picked(form, 1, "type")?;
            let trait_id = form.value(2);
            let mean = number(form, 3, "mean", false)?;
            let sd = number(form, 4, "sd", false)?;
            let mut traits = std::collections::BTreeMap::new();
            if !trait_id.is_empty() && (mean.is_some() || sd.is_some()) {
                traits.insert(trait_id, RatingSpec { mean, sd });
            } else if trait_id.is_empty() && (mean.is_some() || sd.is_some()) {
                return Err((2, "choose the trait the rating is for".into()));
            }
            Ok(vec![Event::UnitAdded {
                unit: UnitSpec {
                    id,
                    unit_type,
                    traits,
                    status: None,
                },
            }])
        }
        FormKind::AddTask => add_task(inc, form),
        FormKind::Rerate => {
            let unit = picked(form, 0, "unit")?;
            let trait_id = picked(form, 1, "trait")?;
            let mean = number(form, 2, "mean", false)?;
            let sd = number(form, 3, "sd", false)?;
            if mean.is_none() && sd.is_none() {
                return Err((2, "give a mean, an sd or both".into()));
            }
            Ok(vec![Event::UnitRerated {
                unit,
                trait_id,
                mean,
                sd,
            }])
        }
        FormKind::Observe => {
            let unit = picked(form, 0, "unit")?;
            let trait_id = picked(form, 1, "trait")?;
            let value = number(form, 2, "value", true)?.unwrap_or_default();
            let sd = number(form, 3, "sd", false)?;
            Ok(vec![Event::Observed {
                unit,
                trait_id,
                value,
                sd,
            }])
        }
        FormKind::ChangeNeed => {
            let task = picked(form, 0, "task")?;
            let trait_id = picked(form, 1, "trait")?;
            let need = number(form, 2, "need", true)?.unwrap_or_default();
            let sd = number(form, 3, "sd", false)?;
            Ok(vec![Event::NeedChanged {
                task,
                trait_id,
                need,
                sd,
            }])
        }
        FormKind::CloseTask => {
            let outcome = match picked(form, 1, "outcome")?.as_str() {
                "succeeded" => OutcomeValue::Succeeded,
                "failed" => OutcomeValue::Failed,
                "cancelled" => OutcomeValue::Cancelled,
                other => return Err((1, format!("unknown outcome {other}"))),
            };
            Ok(vec![Event::TaskClosed {
                task: picked(form, 0, "task")?,
                outcome,
            }])
        }
        FormKind::Pin => {
            let unit = picked(form, 0, "unit")?;
            let task = form.value(1);
            let u = inc.unit_idx(&unit).ok_or((0, "unknown unit".to_string()))?;
            if task.is_empty() {
                if !inc.pins.contains_key(&u) {
                    return Err((1, format!("{unit} is not pinned")));
                }
                return Ok(vec![Event::Unpinned { unit }]);
            }
            let t = inc.task_idx(&task).ok_or((1, "unknown task".to_string()))?;
            if let Err(r) = rules::may_go(inc, u, t) {
                return Err((
                    1,
                    format!("{unit} cannot be pinned to {task}: {}", r.reason(inc)),
                ));
            }
            Ok(vec![Event::Pinned { unit, task }])
        }
        FormKind::Move => {
            let unit = picked(form, 0, "unit")?;
            let to = form.value(1);
            let u = inc.unit_idx(&unit).ok_or((0, "unknown unit".to_string()))?;
            let to_idx = if to.is_empty() {
                None
            } else {
                Some(inc.task_idx(&to).ok_or((1, "unknown task".to_string()))?)
            };
            if inc.placement.get(u) == to_idx {
                return Err((1, format!("{unit} is already there")));
            }
            if let Some(t) = to_idx {
                if let Err(r) = rules::may_go(inc, u, t) {
                    return Err((1, format!("{unit} cannot go to {to}: {}", r.reason(inc))));
                }
                let task = &inc.tasks[t];
                let on = inc.placement.units_on(t).count();
                if !rules::has_room(task, on) {
                    return Err((1, format!("{to} already has its maximum of units")));
                }
            }
            Ok(vec![Event::Moved {
                unit,
                to: (!to.is_empty()).then_some(to),
            }])
        }
        FormKind::Note => {
            let text = form.value(0);
            if text.is_empty() {
                return Err((0, "the note is empty".into()));
            }
            Ok(vec![Event::Note { text }])
        }
        FormKind::AcceptOne => {
            let p = state
                .proposal
                .as_ref()
                .ok_or((0, "no proposal".to_string()))?;
            let i: usize = picked(form, 0, "move")?
                .parse()
                .map_err(|_| (0, "choose a move".to_string()))?;
            let m = p.moves.get(i).ok_or((0, "choose a move".to_string()))?;
            Ok(vec![Event::PlanAccepted {
                moves: vec![move_spec(inc, m)],
            }])
        }
        // Replay navigation is handled by the replay keys, not the log.
        FormKind::GoTo => Ok(Vec::new()),
    }
}

/// A `task_added` event from the add-task form. What the form can check
/// (names, numbers) it checks here with the field to point at; the rest
/// (capacities against the roster…) is `log::apply`'s, as for any feed.
fn add_task(inc: &Incident, form: &Form) -> Result<Vec<Event>, (usize, String)> {
    let id = form.value(0);
    if let Some(problem) = crate::clean::id_problem(&id) {
        return Err((0, format!("the id {problem}")));
    }
    if id.chars().any(char::is_whitespace) {
        return Err((0, "an id without spaces is required".into()));
    }
    if inc.task_idx(&id).is_some() {
        return Err((0, format!("task {id} is already on the board")));
    }
    let label = form.value(1);
    let tier = picked(form, 2, "tier")?;
    let needs = parse_needs(inc, &form.value(3)).map_err(|m| (3, m))?;
    let accepts = form.value(4);
    let accepts: Vec<String> = accepts
        .split([',', ' '])
        .filter(|s| !s.is_empty())
        .map(str::to_string)
        .collect();
    if let Some(bad) = accepts.iter().find(|a| inc.type_idx(a).is_none()) {
        let known: Vec<&str> = inc.unit_types.iter().map(|t| t.id.as_str()).collect();
        return Err((
            4,
            format!(
                "unknown unit type {bad}; the types are {}",
                known.join(", ")
            ),
        ));
    }
    let count = |i: usize, what: &str| -> Result<Option<i64>, (usize, String)> {
        let s = form.value(i);
        if s.is_empty() {
            return Ok(None);
        }
        match s.parse::<i64>() {
            Ok(n) if n >= 0 => Ok(Some(n)),
            _ => Err((i, format!("{what} must be a whole number ≥ 0, got {s:?}"))),
        }
    };
    let min_units = count(5, "min units")?;
    let max_units = count(6, "max units")?;
    if let (Some(lo), Some(hi)) = (min_units, max_units)
        && lo > hi
    {
        return Err((6, format!("max units {hi} is below min units {lo}")));
    }
    Ok(vec![Event::TaskAdded {
        task: TaskSpec {
            id,
            label: (!label.is_empty()).then_some(label),
            tier: Some(tier),
            needs,
            accepts: (!accepts.is_empty()).then_some(accepts),
            min_units,
            max_units,
            outcome: None,
        },
    }])
}

/// `water 3000, crew 4 ± 1` (or `+-` for `±`): each need a known trait and
/// an amount ≥ 0 with an optional sd; at least one.
pub fn parse_needs(
    inc: &Incident,
    text: &str,
) -> Result<std::collections::BTreeMap<String, NeedSpec>, String> {
    let mut needs = std::collections::BTreeMap::new();
    for part in text.split(',').map(str::trim).filter(|p| !p.is_empty()) {
        let part = part.replace("+-", "±");
        let (head, sd) = match part.split_once('±') {
            Some((h, sd)) => (h.trim().to_string(), Some(sd.trim().to_string())),
            None => (part.clone(), None),
        };
        let mut words = head.split_whitespace();
        let (Some(trait_id), Some(amount), None) = (words.next(), words.next(), words.next())
        else {
            return Err(format!(
                "write each need as `trait amount [± sd]`, not {part:?}"
            ));
        };
        if inc.trait_idx(trait_id).is_none() {
            let known: Vec<&str> = inc.traits.iter().map(|t| t.id.as_str()).collect();
            return Err(format!(
                "unknown trait {trait_id}; the traits are {}",
                known.join(", ")
            ));
        }
        let num = |s: &str, what: &str| match s.parse::<f64>() {
            Ok(x) if x.is_finite() && x >= 0.0 => Ok(x),
            _ => Err(format!(
                "the {what} of {trait_id} must be a number ≥ 0, got {s:?}"
            )),
        };
        let need = num(amount, "need")?;
        let spec = match sd {
            Some(sd) => NeedSpec::Uncertain(UncertainNeedSpec {
                need,
                sd: Some(num(&sd, "sd")?),
            }),
            None => NeedSpec::Certain(need),
        };
        if needs.insert(trait_id.to_string(), spec).is_some() {
            return Err(format!("{trait_id} is given twice"));
        }
    }
    if needs.is_empty() {
        return Err("give at least one need, e.g. water 3000".into());
    }
    Ok(needs)
}

/// The log's shape of a proposed move.
pub fn move_spec(inc: &Incident, m: &crate::solver::Move) -> MoveSpec {
    MoveSpec {
        unit: inc.units[m.unit].id.clone(),
        from: m.from.map(|t| inc.tasks[t].id.clone()),
        to: m.to.map(|t| inc.tasks[t].id.clone()),
    }
}

/// Events that undo `event` on the incident as it was before it, or why it
/// cannot be undone: [`Event::inverse`], beside `log::apply` in the core.
pub fn compensation(inc: &Incident, event: &Event) -> Result<Vec<Event>, String> {
    event.inverse(inc).map_err(|e| e.to_string())
}
