//! The notes that follow from the advice (SPEC §8): life-safety tasks on
//! the gamble side or short of their secure level, single points of
//! failure, tasks that cannot absorb a loss, needs out of reach. Most
//! urgent first.

use super::fragility::{TaskAbsorb, UnitLoss};
use super::requests::{RequestOutcome, TierRequest};
use crate::model::{Incident, Tier};
use crate::odds::text::{pct, pct_ln};
use crate::odds::{Regime, evaluate_task};
use crate::safety::{self, When};
use crate::solver::SolveReport;
use serde::Serialize;

/// How urgent a note is.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum NoteLevel {
    /// Life safety at stake now.
    Urgent,
    /// A weakness to plan for.
    Warning,
    /// Background.
    Info,
}

impl NoteLevel {
    pub fn as_str(self) -> &'static str {
        match self {
            NoteLevel::Urgent => "urgent",
            NoteLevel::Warning => "warning",
            NoteLevel::Info => "info",
        }
    }
}

/// One note for the commander.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Note {
    pub level: NoteLevel,
    pub text: String,
    /// The task it is about, if one.
    pub task: Option<String>,
    /// The unit it is about, if one.
    pub unit: Option<String>,
}

fn note(level: NoteLevel, text: String, task: Option<&str>, unit: Option<&str>) -> Note {
    Note {
        level,
        text,
        task: task.map(str::to_string),
        unit: unit.map(str::to_string),
    }
}

/// What the time limits of the loss assessment left out, said rather than
/// dropped: `units` placed units whose loss was not assessed, `tasks`
/// secure tasks whose absorbable losses were not counted.
pub fn not_assessed(units: usize, tasks: usize) -> Option<Note> {
    let mut parts = Vec::new();
    if units > 0 {
        parts.push(format!(
            "the loss of {units} placed unit{}",
            if units == 1 { "" } else { "s" }
        ));
    }
    if tasks > 0 {
        parts.push(format!(
            "the absorbable losses of {tasks} task{}",
            if tasks == 1 { "" } else { "s" }
        ));
    }
    (!parts.is_empty()).then(|| {
        note(
            NoteLevel::Info,
            format!(
                "Time limit reached: {} not assessed. Life-safety tasks and their units are assessed first, property conservation last.",
                parts.join(" and ")
            ),
            None,
            None,
        )
    })
}

fn request_hint(requests: &[TierRequest], tier: Tier) -> String {
    match requests.iter().find(|r| r.tier == tier.as_str()) {
        Some(TierRequest {
            outcome: RequestOutcome::Found { sets, .. },
            ..
        }) => sets
            .first()
            .map(|s| format!(" (e.g. {})", s.describe()))
            .unwrap_or_default(),
        _ => String::new(),
    }
}

/// Builds the notes, most urgent first (stable within a level).
pub fn notes(
    incident: &Incident,
    base: &SolveReport,
    fragility: &[UnitLoss],
    absorb: &[TaskAbsorb],
    requests: &[TierRequest],
) -> Vec<Note> {
    let mut out = Vec::new();
    for (t, task) in incident.tasks.iter().enumerate() {
        let t = crate::model::TaskIdx::new(t);
        if !task.is_open() || task.tier != Tier::Life {
            continue;
        }
        let o = evaluate_task(incident, &base.placement, t);
        let secure = incident.secure.get(Tier::Life);
        if o.regime() == Some(Regime::Gamble) {
            out.push(note(
                NoteLevel::Urgent,
                safety::life_gamble(
                    &task.id,
                    When::WithBestPlan,
                    &request_hint(requests, Tier::Life),
                ),
                Some(&task.id),
                None,
            ));
        } else if !super::reaches(o.odds(), secure) {
            out.push(note(
                NoteLevel::Urgent,
                safety::life_below_secure(
                    &task.id,
                    &pct_ln(o.ln_odds),
                    &pct(secure),
                    When::WithBestPlan,
                    &request_hint(requests, Tier::Life),
                ),
                Some(&task.id),
                None,
            ));
        }
    }
    for r in requests {
        if let RequestOutcome::OutOfReach { tasks } = &r.outcome {
            for u in tasks {
                out.push(note(
                    if r.tier == Tier::Life.as_str() {
                        NoteLevel::Urgent
                    } else {
                        NoteLevel::Warning
                    },
                    format!(
                        "{}: out of reach of every unit type on this incident ({}). No number of extra units of these types secures it: revise the tactic or seek other resources.",
                        u.task, u.reason
                    ),
                    Some(&u.task),
                    None,
                ));
            }
        }
    }
    for loss in fragility.iter().filter(|l| l.single_point_of_failure) {
        let what = match &loss.infeasible {
            Some(e) => format!("leaves no plan that meets the constraints ({e})"),
            None => {
                let mut parts = Vec::new();
                if !loss.leaves_secure.is_empty() {
                    parts.push(format!(
                        "drops {} below the secure level",
                        loss.leaves_secure.join(", ")
                    ));
                }
                if !loss.to_gamble.is_empty() {
                    parts.push(format!(
                        "puts {} on the gamble side",
                        loss.to_gamble.join(", ")
                    ));
                }
                parts.join(" and ")
            }
        };
        out.push(note(
            NoteLevel::Warning,
            format!(
                "Single point of failure: losing {} ({} on {}) {} even after re-planning. Stage a backup that can take its place.",
                loss.unit, loss.unit_type, loss.task, what
            ),
            Some(&loss.task),
            Some(&loss.unit),
        ));
    }
    for a in absorb {
        if a.tier == Tier::Life.as_str() && a.absorbs == Some(0) {
            out.push(note(
                NoteLevel::Warning,
                format!(
                    "{} (life safety) cannot absorb the loss of its most important unit without leaving its secure level.",
                    a.task
                ),
                Some(&a.task),
                None,
            ));
        }
    }
    for r in requests {
        if r.tier == Tier::Life.as_str() {
            continue;
        }
        let text = match &r.outcome {
            RequestOutcome::Found { sets, .. } => sets.first().map(|s| {
                format!(
                    "The {} tier is not secure ({} below {}): request {}.",
                    r.tier,
                    r.short_tasks.join(", "),
                    pct(r.secure),
                    s.describe()
                )
            }),
            RequestOutcome::NotWithin {
                max_extra_units, ..
            } => Some(format!(
                "The {} tier is not secure and no set of up to {max_extra_units} extra units of the incident's types was found to secure it.",
                r.tier
            )),
            _ => None,
        };
        if let Some(text) = text {
            out.push(note(NoteLevel::Info, text, None, None));
        }
    }
    out.sort_by_key(|n| n.level);
    out
}
