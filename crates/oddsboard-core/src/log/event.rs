//! The events of an incident log (SPEC §4). Outside feeds write these shapes,
//! so kinds and field names are fixed; fields may be added, none renamed.

use crate::model::file::{IncidentFile, TaskFile, UnitFile};
use serde::{Deserialize, Deserializer, Serialize};

/// Version of the log format written by this program. A log whose snapshot
/// names a larger number is refused.
pub const FORMAT_VERSION: u32 = 1;

/// Whether a unit can be placed, as written in events.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum StatusValue {
    Available,
    OutOfService,
}

/// How a closed task turned out, as written in events.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum OutcomeValue {
    Succeeded,
    Failed,
    Cancelled,
}

impl OutcomeValue {
    pub fn as_str(self) -> &'static str {
        match self {
            OutcomeValue::Succeeded => "succeeded",
            OutcomeValue::Failed => "failed",
            OutcomeValue::Cancelled => "cancelled",
        }
    }
}

/// One unit's move by id; `None` is the reserve.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Move {
    pub unit: String,
    /// Where the unit is when the move is written; must be given (null for
    /// reserve), so that a typo never silently means "reserve".
    #[serde(deserialize_with = "required_option")]
    pub from: Option<String>,
    #[serde(deserialize_with = "required_option")]
    pub to: Option<String>,
}

impl std::fmt::Display for Move {
    /// `E3 T1→reserve`: the one wording of a move in the timeline, the report
    /// and the replay panel.
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(
            f,
            "{} {}→{}",
            self.unit,
            self.from.as_deref().unwrap_or("reserve"),
            self.to.as_deref().unwrap_or("reserve")
        )
    }
}

/// Moves in words, comma-separated; `no moves` for none.
pub fn describe_moves(moves: &[Move]) -> String {
    if moves.is_empty() {
        return "no moves".into();
    }
    moves
        .iter()
        .map(Move::to_string)
        .collect::<Vec<_>>()
        .join(", ")
}

/// A field that must be present but may be null.
fn required_option<'de, D: Deserializer<'de>>(d: D) -> Result<Option<String>, D::Error> {
    Option::<String>::deserialize(d)
}

/// Something that happened during the incident.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case", deny_unknown_fields)]
pub enum Event {
    /// The first record of every log: the whole incident as the incident
    /// file, so that a log alone replays, and the format version.
    IncidentOpened {
        format: u32,
        incident: Box<IncidentFile>,
    },
    /// The unit leaves its task, its pin and the roster (its index stays, as
    /// a tombstone: no other index changes).
    UnitLost {
        unit: String,
        #[serde(default, skip_serializing_if = "Option::is_none")]
        reason: Option<String>,
    },
    /// A unit as in the incident file; it arrives in reserve.
    UnitAdded {
        unit: UnitFile,
    },
    /// A new rating of one trait; a field left out keeps its value.
    UnitRerated {
        unit: String,
        #[serde(rename = "trait")]
        trait_id: String,
        #[serde(default, skip_serializing_if = "Option::is_none")]
        mean: Option<f64>,
        #[serde(default, skip_serializing_if = "Option::is_none")]
        sd: Option<f64>,
    },
    /// An out-of-service unit leaves its task (and its pin).
    UnitStatus {
        unit: String,
        status: StatusValue,
    },
    /// A task as in the incident file.
    TaskAdded {
        task: TaskFile,
    },
    /// A new need of one trait; `sd` left out is 0 (a certain need).
    NeedChanged {
        task: String,
        #[serde(rename = "trait")]
        trait_id: String,
        need: f64,
        #[serde(default, skip_serializing_if = "Option::is_none")]
        sd: Option<f64>,
    },
    /// The task is closed; its units go to reserve and its pins lapse.
    TaskClosed {
        task: String,
        outcome: OutcomeValue,
    },
    /// The commander's word: the unit stays on (or goes to) the task in
    /// every plan. It does not move the unit on the ground.
    Pinned {
        unit: String,
        task: String,
    },
    Unpinned {
        unit: String,
    },
    /// A move on the ground; `to: null` is the reserve (must be written).
    Moved {
        unit: String,
        #[serde(deserialize_with = "required_option")]
        to: Option<String>,
    },
    /// A recommendation; it changes nothing until accepted.
    PlanProposed {
        moves: Vec<Move>,
    },
    /// The moves now on the ground.
    PlanAccepted {
        moves: Vec<Move>,
    },
    PlanRejected {},
    Note {
        text: String,
    },
    /// A measurement of the unit's capability in one trait on this
    /// incident; `sd` is the measurement's own spread (left out: the
    /// trait's `measurement_sd`, else the unit's rated sd).
    Observed {
        unit: String,
        #[serde(rename = "trait")]
        trait_id: String,
        value: f64,
        #[serde(default, skip_serializing_if = "Option::is_none")]
        sd: Option<f64>,
    },
    /// Takes back the last `observed` of this unit and trait with this value
    /// and sd (undo of a reading entered in error). Without `sd`, the sd
    /// the reading was given when applied.
    ObservationWithdrawn {
        unit: String,
        #[serde(rename = "trait")]
        trait_id: String,
        value: f64,
        #[serde(default, skip_serializing_if = "Option::is_none")]
        sd: Option<f64>,
    },
}

impl Event {
    /// The `kind` as written in the log.
    pub fn kind(&self) -> &'static str {
        match self {
            Event::IncidentOpened { .. } => "incident_opened",
            Event::UnitLost { .. } => "unit_lost",
            Event::UnitAdded { .. } => "unit_added",
            Event::UnitRerated { .. } => "unit_rerated",
            Event::UnitStatus { .. } => "unit_status",
            Event::TaskAdded { .. } => "task_added",
            Event::NeedChanged { .. } => "need_changed",
            Event::TaskClosed { .. } => "task_closed",
            Event::Pinned { .. } => "pinned",
            Event::Unpinned { .. } => "unpinned",
            Event::Moved { .. } => "moved",
            Event::PlanProposed { .. } => "plan_proposed",
            Event::PlanAccepted { .. } => "plan_accepted",
            Event::PlanRejected {} => "plan_rejected",
            Event::Note { .. } => "note",
            Event::Observed { .. } => "observed",
            Event::ObservationWithdrawn { .. } => "observation_withdrawn",
        }
    }

    /// The event in words, for the timeline and the report.
    pub fn describe(&self) -> String {
        let moves = describe_moves;
        fn num(v: f64) -> String {
            format!("{v}")
        }
        match self {
            Event::IncidentOpened { incident, .. } => format!(
                "incident opened: {} ({} units, {} tasks)",
                incident.incident.name,
                incident.units.len(),
                incident.tasks.len()
            ),
            Event::UnitLost { unit, reason } => match reason {
                Some(r) => format!("{unit} lost ({r})"),
                None => format!("{unit} lost"),
            },
            Event::UnitAdded { unit } => {
                format!("{} ({}) arrived in reserve", unit.id, unit.unit_type)
            }
            Event::UnitRerated {
                unit,
                trait_id,
                mean,
                sd,
            } => {
                let mut parts = Vec::new();
                if let Some(m) = mean {
                    parts.push(format!("mean {}", num(*m)));
                }
                if let Some(s) = sd {
                    parts.push(format!("sd {}", num(*s)));
                }
                format!("{unit} re-rated: {trait_id} {}", parts.join(", "))
            }
            Event::UnitStatus { unit, status } => match status {
                StatusValue::Available => format!("{unit} back in service"),
                StatusValue::OutOfService => format!("{unit} out of service"),
            },
            Event::TaskAdded { task } => format!(
                "task {} added{}",
                task.id,
                task.label
                    .as_deref()
                    .map(|l| format!(": {l}"))
                    .unwrap_or_default()
            ),
            Event::NeedChanged {
                task,
                trait_id,
                need,
                sd,
            } => match sd {
                Some(s) if *s > 0.0 => {
                    format!("{task} needs {trait_id} {} (sd {})", num(*need), num(*s))
                }
                _ => format!("{task} needs {trait_id} {}", num(*need)),
            },
            Event::TaskClosed { task, outcome } => format!("{task} closed: {}", outcome.as_str()),
            Event::Pinned { unit, task } => format!("{unit} pinned to {task}"),
            Event::Unpinned { unit } => format!("{unit} unpinned"),
            Event::Moved { unit, to } => {
                format!("{unit} moved to {}", to.as_deref().unwrap_or("reserve"))
            }
            Event::PlanProposed { moves: m } => format!("plan proposed: {}", moves(m)),
            Event::PlanAccepted { moves: m } => format!("plan accepted: {}", moves(m)),
            Event::PlanRejected {} => "plan rejected".into(),
            Event::Note { text } => format!("note: {text}"),
            Event::Observed {
                unit,
                trait_id,
                value,
                sd,
            } => match sd {
                Some(s) => format!(
                    "{unit} measured: {trait_id} {} (sd {})",
                    num(*value),
                    num(*s)
                ),
                None => format!("{unit} measured: {trait_id} {}", num(*value)),
            },
            Event::ObservationWithdrawn {
                unit,
                trait_id,
                value,
                ..
            } => format!("{unit} reading withdrawn: {trait_id} {}", num(*value)),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn spec_examples_parse_as_yaml() {
        let lines = [
            "{ kind: unit_lost,     unit: E2, reason: pump failure }",
            "{ kind: unit_added,    unit: { id: E9, type: engine } }",
            "{ kind: unit_rerated,  unit: E2, trait: water, mean: 1500, sd: 400 }",
            "{ kind: unit_status,   unit: E2, status: out_of_service }",
            "{ kind: task_added,    task: { id: T4, label: Roof ventilation, needs: { crew: 4 } } }",
            "{ kind: need_changed,  task: T1, trait: water, need: 3500, sd: 0 }",
            "{ kind: task_closed,   task: T1, outcome: succeeded }",
            "{ kind: pinned,        unit: E1, task: T1 }",
            "{ kind: unpinned,      unit: E1 }",
            "{ kind: moved,         unit: E1, to: T2 }",
            "{ kind: moved,         unit: E1, to: null }",
            "{ kind: plan_proposed, moves: [ { unit: E3, from: T1, to: T2 } ] }",
            "{ kind: plan_accepted, moves: [ { unit: E3, from: T1, to: T2 } ] }",
            "{ kind: plan_rejected }",
            "{ kind: note,          text: Crews report partial roof collapse }",
            "{ kind: observed,      unit: E3, trait: water, value: 1650, sd: 100 }",
            "{ kind: observed,      unit: E3, trait: water, value: 1650 }",
            "{ kind: observation_withdrawn, unit: E3, trait: water, value: 1650, sd: 100 }",
        ];
        for l in lines {
            let e: Event = serde_yaml::from_str(l).unwrap_or_else(|e| panic!("{l}: {e}"));
            // JSON round trip keeps the event.
            let j = serde_json::to_string(&e).expect("serialize");
            let back: Event = serde_json::from_str(&j).expect("reparse");
            assert_eq!(back, e, "{j}");
            assert!(j.contains(&format!("\"kind\":\"{}\"", e.kind())));
        }
    }

    #[test]
    fn typos_and_missing_destinations_are_refused() {
        for bad in [
            "{ kind: moved, unit: E1 }",
            "{ kind: moved, unit: E1, too: T2 }",
            "{ kind: moved, unit: E1, to: T2, extra: 1 }",
            "{ kind: plan_accepted, moves: [ { unit: E3, to: T2 } ] }",
            "{ kind: unit_teleported, unit: E1 }",
            "{ kind: unit_status, unit: E1, status: broken }",
            "{ kind: task_closed, task: T1, outcome: maybe }",
            "{ kind: observed, unit: E3, trait: water }",
            "{ kind: observed, unit: E3, trait: water, value: 1650, spread: 10 }",
        ] {
            assert!(serde_yaml::from_str::<Event>(bad).is_err(), "{bad}");
        }
    }
}
