//! One step of the fold: an event applied to the incident state.
//!
//! [`apply`] checks everything first and changes the state only when the
//! whole event applies, so a refused event leaves the state as it was.
//!
//! The ground placement changes only through `moved`, `plan_accepted`,
//! `unit_lost`, `unit_status` and `task_closed` (SPEC §4). A pin binds the
//! plan, not the ground: `pinned` never moves a unit.

use super::event::{Event, Move, OutcomeValue, StatusValue};
use crate::model::load::{Sink, convert_task, convert_unit};
use crate::model::locate::Locator;
use crate::model::{Incident, Need, Outcome, Placement, Reading, TaskIdx, UnitIdx, UnitStatus};
use crate::rules;

/// Why an event does not apply to the state.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum ApplyError {
    #[error("unknown unit `{}`", crate::clean::clean(.0))]
    UnknownUnit(String),
    #[error("unknown task `{}`", crate::clean::clean(.0))]
    UnknownTask(String),
    #[error("unknown trait `{}` (not defined in the incident)", crate::clean::clean(.0))]
    UnknownTrait(String),
    /// A field with a value the event cannot take.
    #[error("{field}: {message}")]
    BadField { field: String, message: String },
    /// The event breaks a constraint or does not fit the state.
    #[error("{0}")]
    DoesNotApply(String),
}

fn refuse<T>(msg: impl Into<String>) -> Result<T, ApplyError> {
    Err(ApplyError::DoesNotApply(msg.into()))
}

fn unit_of(state: &Incident, id: &str) -> Result<UnitIdx, ApplyError> {
    state
        .unit_idx(id)
        .ok_or_else(|| ApplyError::UnknownUnit(id.to_string()))
}

fn task_of(state: &Incident, id: &str) -> Result<TaskIdx, ApplyError> {
    state
        .task_idx(id)
        .ok_or_else(|| ApplyError::UnknownTask(id.to_string()))
}

fn trait_of(state: &Incident, id: &str) -> Result<usize, ApplyError> {
    state
        .trait_idx(id)
        .ok_or_else(|| ApplyError::UnknownTrait(id.to_string()))
}

fn amount(field: &str, v: f64) -> Result<f64, ApplyError> {
    if !v.is_finite() || v < 0.0 {
        return Err(ApplyError::BadField {
            field: field.into(),
            message: format!("must be a finite number ≥ 0, got {v}"),
        });
    }
    Ok(v)
}

fn task_name(state: &Incident, t: Option<TaskIdx>) -> &str {
    t.map_or("reserve", |t| state.tasks[t].id.as_str())
}

/// Checks a new ground placement that differs from the current one in
/// `changed` against [`rules::ground_problem`].
fn check_ground(state: &Incident, new: &Placement, changed: &[UnitIdx]) -> Result<(), ApplyError> {
    match rules::ground_problem(state, new, changed, "placed") {
        Some(why) => refuse(why),
        None => Ok(()),
    }
}

/// Resolves and checks a list of moves against the ground: every unit known
/// and listed once, every `from` where the unit is now. Returns the placement
/// after the moves and the units that change.
fn resolve_moves(
    state: &Incident,
    moves: &[Move],
) -> Result<(Placement, Vec<UnitIdx>), ApplyError> {
    let mut new = state.placement.clone();
    let mut changed = Vec::with_capacity(moves.len());
    for (i, m) in moves.iter().enumerate() {
        let u = unit_of(state, &m.unit)?;
        if changed.contains(&u) {
            return refuse(format!("moves[{i}]: {} is moved twice", m.unit));
        }
        let from = m.from.as_deref().map(|t| task_of(state, t)).transpose()?;
        let to = m.to.as_deref().map(|t| task_of(state, t)).transpose()?;
        let now = state.placement.get(u);
        if from != now {
            return refuse(format!(
                "moves[{i}]: {} is on {}, not {} (the ground changed since the plan was made)",
                m.unit,
                task_name(state, now),
                task_name(state, from)
            ));
        }
        new.set(u, to);
        changed.push(u);
    }
    Ok((new, changed))
}

fn check_pin(state: &Incident, u: UnitIdx, t: TaskIdx) -> Result<(), ApplyError> {
    if state.pins.get(&u) == Some(&t) {
        return refuse(format!(
            "{} is already pinned to {}",
            state.units[u].id, state.tasks[t].id
        ));
    }
    match rules::new_pin_problem(state, u, t) {
        Some(why) => refuse(why),
        None => Ok(()),
    }
}

fn new_sink<'a>(locator: &'a Locator, what: &'a str) -> Sink<'a> {
    Sink {
        file: what,
        locator,
        out: Vec::new(),
    }
}

fn sink_error(sink: Sink) -> ApplyError {
    let msgs: Vec<String> = sink
        .out
        .iter()
        .map(|d| format!("{}: {}", d.path, d.message))
        .collect();
    ApplyError::DoesNotApply(msgs.join("; "))
}

/// Applies one event to `state`. Refuses what does not apply, and then the
/// state is unchanged.
pub fn apply(state: &mut Incident, event: &Event) -> Result<(), ApplyError> {
    match event {
        Event::IncidentOpened { .. } => {
            refuse("an incident snapshot can only be the first record of a log")
        }
        Event::UnitLost { unit, .. } => {
            let u = unit_of(state, unit)?;
            state.remove_unit(u);
            Ok(())
        }
        Event::UnitAdded { unit } => {
            if let Some(message) = crate::clean::id_problem(&unit.id) {
                return Err(ApplyError::BadField {
                    field: "unit.id".into(),
                    message,
                });
            }
            if state.unit_idx(&unit.id).is_some() {
                return refuse(format!(
                    "a unit with id `{}` is already on the roster",
                    unit.id
                ));
            }
            let locator = Locator::new("");
            let mut sink = new_sink(&locator, "unit_added");
            match convert_unit(state, unit, "unit", &mut sink) {
                Some(u) if sink.out.is_empty() => {
                    let u = state.add_unit(u);
                    // A lost unit's slot taken back keeps its readings.
                    if state.observations.readings().iter().any(|r| r.unit == u) {
                        state.refresh_beliefs();
                    }
                    Ok(())
                }
                _ => Err(sink_error(sink)),
            }
        }
        Event::UnitRerated {
            unit,
            trait_id,
            mean,
            sd,
        } => {
            let u = unit_of(state, unit)?;
            let k = trait_of(state, trait_id)?;
            if mean.is_none() && sd.is_none() {
                return refuse("unit_rerated needs a mean, an sd or both");
            }
            let mean = mean.map(|m| amount("mean", m)).transpose()?;
            let sd = sd.map(|s| amount("sd", s)).transpose()?;
            let r = &mut state.units[u].ratings[k];
            if let Some(m) = mean {
                r.mean = m;
            }
            if let Some(s) = sd {
                r.sd = s;
            }
            // Readings stay; they now update the new rating.
            if state.observations.touches(state.units[u].type_idx, k) {
                state.refresh_beliefs();
            }
            Ok(())
        }
        Event::UnitStatus { unit, status } => {
            let u = unit_of(state, unit)?;
            let new = match status {
                StatusValue::Available => UnitStatus::Available,
                StatusValue::OutOfService => UnitStatus::OutOfService,
            };
            if state.units[u].status == new {
                return refuse(format!("{unit} is already {}", new.as_str()));
            }
            state.units[u].status = new;
            if new == UnitStatus::OutOfService {
                state.placement.set(u, None);
                state.pins.remove(&u);
            }
            Ok(())
        }
        Event::TaskAdded { task } => {
            if let Some(message) = crate::clean::id_problem(&task.id) {
                return Err(ApplyError::BadField {
                    field: "task.id".into(),
                    message,
                });
            }
            if state.task_idx(&task.id).is_some() {
                return refuse(format!(
                    "a task with id `{}` is already on the board",
                    task.id
                ));
            }
            if task.outcome.is_some() {
                return Err(ApplyError::BadField {
                    field: "task.outcome".into(),
                    message: "a new task cannot already be closed".into(),
                });
            }
            let locator = Locator::new("");
            let mut sink = new_sink(&locator, "task_added");
            match convert_task(state, task, "task", &mut sink) {
                Some(t) if sink.out.is_empty() => {
                    state.tasks.push(t);
                    Ok(())
                }
                _ => Err(sink_error(sink)),
            }
        }
        Event::NeedChanged {
            task,
            trait_id,
            need,
            sd,
        } => {
            let t = task_of(state, task)?;
            let k = trait_of(state, trait_id)?;
            if !state.tasks[t].is_open() {
                return refuse(format!("task {task} is closed"));
            }
            let need = amount("need", *need)?;
            let sd = amount("sd", sd.unwrap_or(0.0))?;
            state.tasks[t].needs[k] = Need { need, sd };
            Ok(())
        }
        Event::TaskClosed { task, outcome } => {
            let t = task_of(state, task)?;
            if let Some(o) = state.tasks[t].outcome {
                return refuse(format!("task {task} is already closed ({})", o.as_str()));
            }
            state.tasks[t].outcome = Some(match outcome {
                OutcomeValue::Succeeded => Outcome::Succeeded,
                OutcomeValue::Failed => Outcome::Failed,
                OutcomeValue::Cancelled => Outcome::Cancelled,
            });
            for p in state.placement.0.iter_mut() {
                if *p == Some(t) {
                    *p = None;
                }
            }
            state.pins.retain(|_, pt| *pt != t);
            Ok(())
        }
        Event::Pinned { unit, task } => {
            let u = unit_of(state, unit)?;
            let t = task_of(state, task)?;
            check_pin(state, u, t)?;
            state.pins.insert(u, t);
            Ok(())
        }
        Event::Unpinned { unit } => {
            let u = unit_of(state, unit)?;
            if state.pins.remove(&u).is_none() {
                return refuse(format!("{unit} is not pinned"));
            }
            Ok(())
        }
        Event::Moved { unit, to } => {
            let u = unit_of(state, unit)?;
            let to = to.as_deref().map(|t| task_of(state, t)).transpose()?;
            if state.placement.get(u) == to {
                return refuse(format!("{unit} is already on {}", task_name(state, to)));
            }
            let mut new = state.placement.clone();
            new.set(u, to);
            check_ground(state, &new, &[u])?;
            state.placement = new;
            Ok(())
        }
        Event::PlanProposed { moves } => {
            let (new, changed) = resolve_moves(state, moves)?;
            check_ground(state, &new, &changed)
        }
        Event::PlanAccepted { moves } => {
            let (new, changed) = resolve_moves(state, moves)?;
            check_ground(state, &new, &changed)?;
            state.placement = new;
            Ok(())
        }
        Event::PlanRejected {} | Event::Note { .. } => Ok(()),
        Event::Observed {
            unit,
            trait_id,
            value,
            sd,
        } => {
            let reading = reading_of(state, unit, trait_id, *value, *sd)?;
            let rated = state.units[reading.unit].ratings[reading.trait_idx];
            if rated.sd <= 0.0 {
                return refuse(format!(
                    "{unit} is rated {trait_id} {} with sd 0 (a certain value): a reading cannot change it; re-rate the unit instead",
                    rated.mean
                ));
            }
            state.add_reading(reading);
            Ok(())
        }
        Event::ObservationWithdrawn {
            unit,
            trait_id,
            value,
            sd,
        } => {
            let u = unit_of(state, unit)?;
            let k = trait_of(state, trait_id)?;
            let found = state.observations.latest_matching(u, k, *value, *sd);
            match found {
                Some(r) => {
                    state.withdraw_reading(&r);
                    Ok(())
                }
                None => refuse(format!(
                    "{unit} has no reading of {trait_id} {value}{} to withdraw",
                    sd.map(|s| format!(" (sd {s})")).unwrap_or_default()
                )),
            }
        }
    }
}

/// Checks an `observed` event and resolves its sd: the event's, else the
/// trait's `measurement_sd`, else the unit's rated sd (docs/model.md).
fn reading_of(
    state: &Incident,
    unit: &str,
    trait_id: &str,
    value: f64,
    sd: Option<f64>,
) -> Result<Reading, ApplyError> {
    let u = unit_of(state, unit)?;
    let k = trait_of(state, trait_id)?;
    let value = amount("value", value)?;
    let sd = match sd {
        Some(s) => amount("sd", s)?,
        None => state.traits[k]
            .measurement_sd
            .unwrap_or(state.units[u].ratings[k].sd),
    };
    Ok(Reading {
        unit: u,
        trait_idx: k,
        value,
        sd,
    })
}

/// Ids of the units whose tally contribution an event may change (placement
/// or rating), taken before the event is applied. Used to keep per-task
/// tallies up to date without rebuilding them.
pub fn touched_units(state: &Incident, event: &Event) -> Vec<String> {
    // A reading (or a re-rating under readings) moves the posterior of every
    // unit of the type through the shared factor.
    let type_mates = |unit: &str| -> Vec<String> {
        let Some(u) = state.unit_idx(unit) else {
            return Vec::new();
        };
        let t = state.units[u].type_idx;
        state
            .roster()
            .filter(|(_, x)| x.type_idx == t)
            .map(|(_, x)| x.id.clone())
            .collect()
    };
    match event {
        Event::Observed { unit, .. } | Event::ObservationWithdrawn { unit, .. } => type_mates(unit),
        // A lost unit's slot taken back brings its readings back.
        Event::UnitAdded { unit }
            if state
                .unit_slot(&unit.id)
                .is_some_and(|u| state.observations.readings().iter().any(|r| r.unit == u)) =>
        {
            let t = state.type_idx(&unit.unit_type);
            state
                .roster()
                .filter(|(_, x)| Some(x.type_idx) == t)
                .map(|(_, x)| x.id.clone())
                .collect()
        }
        Event::UnitRerated { unit, .. }
            if state
                .unit_idx(unit)
                .is_some_and(|u| state.observations.touches_type(state.units[u].type_idx)) =>
        {
            type_mates(unit)
        }
        Event::UnitLost { unit, .. }
        | Event::UnitRerated { unit, .. }
        | Event::UnitStatus { unit, .. }
        | Event::Moved { unit, .. } => vec![unit.clone()],
        Event::PlanAccepted { moves } => moves.iter().map(|m| m.unit.clone()).collect(),
        Event::TaskClosed { task, .. } => match state.task_idx(task) {
            Some(t) => state
                .placement
                .units_on(t)
                .map(|u| state.units[u].id.clone())
                .collect(),
            None => Vec::new(),
        },
        _ => Vec::new(),
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::parse_incident_str;

    const YAML: &str = "
incident: { name: Invented apply test, reserve_min: 1 }
traits: [ { id: water } ]
unit_types: [ { id: engine, traits: { water: { mean: 1000, sd: 100 } } }, { id: boat } ]
units: [ { id: E1, type: engine }, { id: E2, type: engine }, { id: E3, type: engine }, { id: B1, type: boat } ]
tasks:
  - { id: T1, needs: { water: 1500 }, max_units: 1, accepts: [engine] }
  - { id: T2, needs: { water: 500 } }
placement: { E1: T1 }
";

    fn state() -> Incident {
        parse_incident_str(YAML, "t.yaml").expect("valid")
    }
    fn ev(s: &str) -> Event {
        serde_yaml::from_str(s).expect("event")
    }

    #[test]
    fn constraints_refuse_and_leave_the_state() {
        let s0 = state();
        for (e, says) in [
            ("{kind: moved, unit: E2, to: T1}", "at most 1 units"),
            (
                "{kind: moved, unit: B1, to: T1}",
                "does not accept unit type `boat`",
            ),
            ("{kind: moved, unit: E1, to: T1}", "already on T1"),
            ("{kind: unpinned, unit: E1}", "not pinned"),
            (
                "{kind: plan_accepted, moves: [{unit: E1, from: T1, to: T2}, {unit: E1, from: T1, to: null}]}",
                "moved twice",
            ),
        ] {
            let mut s = s0.clone();
            let err = apply(&mut s, &ev(e)).expect_err(e);
            assert!(err.to_string().contains(says), "{e}: {err}");
            assert_eq!(s, s0, "{e} changed the state");
        }
        // reserve_min 1: E2, E3, B1 in reserve; two may leave, not three.
        let mut s = s0.clone();
        apply(&mut s, &ev("{kind: moved, unit: E2, to: T2}")).expect("ok");
        apply(&mut s, &ev("{kind: moved, unit: E3, to: T2}")).expect("ok");
        let err = apply(&mut s, &ev("{kind: moved, unit: B1, to: T2}")).expect_err("reserve");
        assert!(
            err.to_string().contains("at least 1 units in reserve"),
            "{err}"
        );
    }

    #[test]
    fn pins_bind_the_plan_not_the_ground() {
        let mut s = state();
        apply(&mut s, &ev("{kind: pinned, unit: E2, task: T2}")).expect("pin");
        assert_eq!(
            s.placement.get(crate::model::UnitIdx::new(1)),
            None,
            "a pin does not move the unit"
        );
        let err = apply(&mut s, &ev("{kind: moved, unit: E2, to: T1}")).expect_err("pinned");
        assert!(err.to_string().contains("pinned to T2"), "{err}");
        apply(
            &mut s,
            &ev("{kind: plan_accepted, moves: [{unit: E2, from: null, to: T2}]}"),
        )
        .expect("a plan may carry a pinned unit to its task");
        // Out of service: leaves its task and its pin.
        apply(
            &mut s,
            &ev("{kind: unit_status, unit: E2, status: out_of_service}"),
        )
        .expect("oos");
        assert_eq!(s.placement.get(crate::model::UnitIdx::new(1)), None);
        assert!(s.pins.is_empty());
    }

    #[test]
    fn ground_changes_only_through_its_events() {
        let mut s = state();
        let before = s.placement.clone();
        for e in [
            "{kind: plan_proposed, moves: [{unit: E2, from: null, to: T2}]}",
            "{kind: plan_rejected}",
            "{kind: pinned, unit: E3, task: T2}",
            "{kind: need_changed, task: T2, trait: water, need: 900}",
            "{kind: unit_rerated, unit: E1, trait: water, mean: 800}",
            "{kind: note, text: x}",
        ] {
            apply(&mut s, &ev(e)).expect(e);
            assert_eq!(s.placement, before, "{e} moved a unit");
        }
        apply(
            &mut s,
            &ev("{kind: task_closed, task: T1, outcome: failed}"),
        )
        .expect("close");
        assert_eq!(
            s.placement.get(crate::model::UnitIdx::new(0)),
            None,
            "units of a closed task go to reserve"
        );
        let err = apply(
            &mut s,
            &ev("{kind: task_closed, task: T1, outcome: failed}"),
        )
        .expect_err("twice");
        assert!(err.to_string().contains("already closed"));
    }
}
