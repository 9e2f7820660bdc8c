//! Undo beside apply: the events that take an applied event back, worked
//! out on the state before it. The log is append-only, so undo is more
//! records (compensating events), never a rewrite.

use super::apply::apply;
use super::event::{Event, Move, StatusValue};
use crate::model::file::{RatingFile, UnitFile};
use crate::model::{Incident, UnitIdx, UnitStatus};

/// Why an event has no inverse.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum InverseError {
    #[error("unknown unit `{0}`")]
    UnknownUnit(String),
    #[error("unknown task `{0}`")]
    UnknownTask(String),
    #[error("unknown trait `{0}`")]
    UnknownTrait(String),
    /// The log has no event that takes this one back.
    #[error("{0}")]
    NotUndoable(String),
}

impl Event {
    /// Events that, applied after `self`, give back the state `before` it
    /// (for every field the objective and the board read), or why none do.
    /// `before` is the state the event was applied to.
    pub fn inverse(&self, before: &Incident) -> Result<Vec<Event>, InverseError> {
        inverse(before, self)
    }
}

/// See [`Event::inverse`].
pub fn inverse(inc: &Incident, event: &Event) -> Result<Vec<Event>, InverseError> {
    let unit_idx = |id: &str| {
        inc.unit_idx(id)
            .ok_or_else(|| InverseError::UnknownUnit(id.to_string()))
    };
    let task_idx = |id: &str| {
        inc.task_idx(id)
            .ok_or_else(|| InverseError::UnknownTask(id.to_string()))
    };
    let trait_idx = |id: &str| {
        inc.trait_idx(id)
            .ok_or_else(|| InverseError::UnknownTrait(id.to_string()))
    };
    match event {
        Event::UnitLost { unit, .. } => {
            let u = unit_idx(unit)?;
            let un = &inc.units[u];
            let traits = inc
                .traits
                .iter()
                .zip(&un.ratings)
                .map(|(t, r)| {
                    (
                        t.id.clone(),
                        RatingFile {
                            mean: Some(r.mean),
                            sd: Some(r.sd),
                        },
                    )
                })
                .collect();
            let mut out = vec![Event::UnitAdded {
                unit: UnitFile {
                    id: unit.clone(),
                    unit_type: inc.unit_types[un.type_idx].id.clone(),
                    traits,
                    status: None,
                },
            }];
            if un.status == UnitStatus::OutOfService {
                out.push(Event::UnitStatus {
                    unit: unit.clone(),
                    status: StatusValue::OutOfService,
                });
            }
            restore_place(inc, u, unit, &mut out);
            Ok(out)
        }
        Event::UnitAdded { unit } => Ok(vec![Event::UnitLost {
            unit: unit.id.clone(),
            reason: Some("undo: added in error".into()),
        }]),
        Event::UnitRerated { unit, trait_id, .. } => {
            let u = unit_idx(unit)?;
            let r = inc.units[u].ratings[trait_idx(trait_id)?];
            Ok(vec![Event::UnitRerated {
                unit: unit.clone(),
                trait_id: trait_id.clone(),
                mean: Some(r.mean),
                sd: Some(r.sd),
            }])
        }
        Event::NeedChanged { task, trait_id, .. } => {
            let n = inc.tasks[task_idx(task)?].needs[trait_idx(trait_id)?];
            Ok(vec![Event::NeedChanged {
                task: task.clone(),
                trait_id: trait_id.clone(),
                need: n.need,
                sd: Some(n.sd),
            }])
        }
        Event::TaskClosed { task, .. } => Err(InverseError::NotUndoable(format!(
            "closing {task} cannot be undone (the log has no reopen); add a new task instead"
        ))),
        Event::Pinned { unit, .. } | Event::Unpinned { unit } => {
            let u = unit_idx(unit)?;
            Ok(vec![match inc.pins.get(&u) {
                Some(&t) => Event::Pinned {
                    unit: unit.clone(),
                    task: inc.tasks[t].id.clone(),
                },
                None => Event::Unpinned { unit: unit.clone() },
            }])
        }
        Event::Moved { unit, .. } => {
            let u = unit_idx(unit)?;
            Ok(vec![Event::Moved {
                unit: unit.clone(),
                to: inc.placement.get(u).map(|t| inc.tasks[t].id.clone()),
            }])
        }
        Event::PlanAccepted { moves } => Ok(vec![Event::PlanAccepted {
            moves: moves
                .iter()
                .map(|m| Move {
                    unit: m.unit.clone(),
                    from: m.to.clone(),
                    to: m.from.clone(),
                })
                .collect(),
        }]),
        Event::Observed {
            unit,
            trait_id,
            value,
            sd,
        } => {
            let u = unit_idx(unit)?;
            let k = trait_idx(trait_id)?;
            // The sd the reading takes when applied to `inc`.
            let sd = sd.unwrap_or_else(|| {
                inc.traits[k]
                    .measurement_sd
                    .unwrap_or(inc.units[u].ratings[k].sd)
            });
            Ok(vec![Event::ObservationWithdrawn {
                unit: unit.clone(),
                trait_id: trait_id.clone(),
                value: *value,
                sd: Some(sd),
            }])
        }
        Event::ObservationWithdrawn {
            unit,
            trait_id,
            value,
            sd,
        } => {
            let u = unit_idx(unit)?;
            let k = trait_idx(trait_id)?;
            let r = inc
                .observations
                .latest_matching(u, k, *value, *sd)
                .ok_or_else(|| {
                    InverseError::NotUndoable(format!("{unit} has no such reading to restore"))
                })?;
            Ok(vec![Event::Observed {
                unit: unit.clone(),
                trait_id: trait_id.clone(),
                value: r.value,
                sd: Some(r.sd),
            }])
        }
        Event::Note { text } => Ok(vec![Event::Note {
            text: format!("retracted: {text}"),
        }]),
        Event::UnitStatus { unit, .. } => {
            let u = unit_idx(unit)?;
            let status = match inc.units[u].status {
                UnitStatus::Available => StatusValue::Available,
                UnitStatus::OutOfService => StatusValue::OutOfService,
                UnitStatus::Lost => return Err(InverseError::UnknownUnit(unit.clone())),
            };
            let mut out = vec![Event::UnitStatus {
                unit: unit.clone(),
                status,
            }];
            restore_place(inc, u, unit, &mut out);
            Ok(out)
        }
        Event::TaskAdded { task } => Err(InverseError::NotUndoable(format!(
            "adding {} cannot be undone (the log has no task removal); close it instead",
            task.id
        ))),
        Event::PlanProposed { .. } | Event::PlanRejected {} | Event::IncidentOpened { .. } => Err(
            InverseError::NotUndoable("a proposal or a rejection changes nothing to undo".into()),
        ),
    }
}

/// The events that put unit `u` back where `inc` has it: on its task (if
/// any) and pinned (if it was). Undoing a loss or a status change both end
/// with these.
fn restore_place(inc: &Incident, u: UnitIdx, unit: &str, out: &mut Vec<Event>) {
    if let Some(t) = inc.placement.get(u) {
        out.push(Event::Moved {
            unit: unit.to_string(),
            to: Some(inc.tasks[t].id.clone()),
        });
    }
    if let Some(&t) = inc.pins.get(&u) {
        out.push(Event::Pinned {
            unit: unit.to_string(),
            task: inc.tasks[t].id.clone(),
        });
    }
}

/// The inverse of a list of events applied in order to `before`: each
/// event's inverse worked out on the state it met, last event undone first.
/// Fails on the first event that does not apply or has no inverse.
pub fn inverse_all(before: &Incident, events: &[Event]) -> Result<Vec<Event>, InverseError> {
    let mut scratch = before.clone();
    let mut out: Vec<Event> = Vec::new();
    for e in events {
        let mut c = inverse(&scratch, e)?;
        apply(&mut scratch, e).map_err(|err| InverseError::NotUndoable(err.to_string()))?;
        c.append(&mut out);
        out = c;
    }
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::parse_incident_str;

    // Invented incident with a pin, an out-of-service unit and a closed task.
    const YAML: &str = "
incident: { name: Invented undo test, reserve_min: 1 }
traits: [ { id: water }, { id: lift } ]
unit_types: [ { id: engine, traits: { water: { mean: 1000, sd: 100 } } }, { id: boat } ]
units:
  - { id: E1, type: engine }
  - { id: E2, type: engine }
  - { id: E3, type: engine, traits: { lift: { mean: 2, sd: 0.5 } } }
  - { id: E4, type: engine, status: out_of_service }
  - { id: B1, type: boat }
tasks:
  - { id: T1, needs: { water: 1500 }, max_units: 2, accepts: [engine] }
  - { id: T2, needs: { water: 500, lift: { need: 1, sd: 0.2 } } }
  - { id: T3, needs: { water: 500 }, outcome: failed }
placement: { E1: T1, E3: T2 }
pins: { E1: T1 }
";

    fn ev(s: &str) -> Event {
        serde_yaml::from_str(s).expect("event")
    }

    /// The events that change the state, each applied then undone.
    const UNDOABLE: &[&str] = &[
        "{kind: moved, unit: E2, to: T1}",
        "{kind: moved, unit: E3, to: null}",
        "{kind: plan_accepted, moves: [{unit: E2, from: null, to: T2}, {unit: E3, from: T2, to: T1}]}",
        "{kind: pinned, unit: E3, task: T2}",
        "{kind: unpinned, unit: E1}",
        "{kind: unit_rerated, unit: E3, trait: lift, mean: 3}",
        "{kind: unit_rerated, unit: B1, trait: water, sd: 40}",
        "{kind: need_changed, task: T2, trait: water, need: 900, sd: 50}",
        "{kind: unit_status, unit: E3, status: out_of_service}",
        "{kind: unit_status, unit: E1, status: out_of_service}",
        "{kind: unit_status, unit: E4, status: available}",
        "{kind: unit_added, unit: { id: E9, type: engine }}",
        "{kind: unit_lost, unit: E1, reason: invented}",
        "{kind: unit_lost, unit: E3}",
        "{kind: unit_lost, unit: E4}",
    ];

    /// The state with the tombstones of units added then lost at the end of
    /// the roster cut off: a new unit taken back leaves its slot behind.
    fn trimmed(mut s: Incident) -> Incident {
        while s.units.last().is_some_and(|u| u.is_lost()) {
            s.units.pop();
            s.placement.0.pop();
        }
        s
    }

    #[test]
    fn apply_then_inverse_gives_back_the_state() {
        let s0 = parse_incident_str(YAML, "t.yaml").expect("valid");
        for e in UNDOABLE {
            let e = ev(e);
            let inv = e.inverse(&s0).expect("undoable");
            let mut s = s0.clone();
            apply(&mut s, &e).unwrap_or_else(|err| panic!("{e:?}: {err}"));
            assert_ne!(s, s0, "{e:?} changed nothing: the check could not fail");
            for i in &inv {
                apply(&mut s, i).unwrap_or_else(|err| panic!("undo of {e:?}: {i:?}: {err}"));
            }
            assert_eq!(trimmed(s), s0, "undo of {e:?} by {inv:?}");
        }
        // In order: the state after each event is the one the next meets.
        let events: Vec<Event> = [0, 3, 5, 7, 8, 11, 12, 14]
            .iter()
            .map(|&i| ev(UNDOABLE[i]))
            .collect();
        let inv = inverse_all(&s0, &events).expect("undoable");
        let mut s = s0.clone();
        for e in events.iter().chain(&inv) {
            apply(&mut s, e).unwrap_or_else(|err| panic!("{e:?}: {err}"));
        }
        assert_eq!(trimmed(s), s0);
    }

    #[test]
    fn what_cannot_be_taken_back_says_so() {
        let s0 = parse_incident_str(YAML, "t.yaml").expect("valid");
        for e in [
            "{kind: task_closed, task: T1, outcome: succeeded}",
            "{kind: task_added, task: { id: T9, needs: { water: 1 } }}",
            "{kind: plan_rejected}",
        ] {
            assert!(matches!(
                ev(e).inverse(&s0),
                Err(InverseError::NotUndoable(_))
            ));
        }
        assert_eq!(
            ev("{kind: moved, unit: X1, to: T1}").inverse(&s0),
            Err(InverseError::UnknownUnit("X1".into()))
        );
    }
}
