//! The single state transition: [`update`] applies one [`AppEvent`] to the
//! state and returns the [`Effect`]s for the runtime. No I/O, no clock.
//! Records from the log are applied here ([`on_record`]: the only way the
//! incident changes), operator actions are turned into log events with
//! their undo ([`act`]).

use super::actions::{UndoEntry, compensation, move_spec, submit};
use super::app::{
    AdviceStatus, AppEvent, AppState, Effect, Flash, LogLine, LostUnit, Mode, Overlay, PlanStatus,
};
use super::form::{Form, FormKind};
use super::keys::on_key;
use super::replay::{replay_seek, replay_target, replay_tick};
use crate::log::{Event, Record, apply};

/// The single state transition. Returns the effects for the runtime.
pub fn update(state: &mut AppState, event: AppEvent) -> Vec<Effect> {
    match event {
        AppEvent::Key(key) => on_key(state, key),
        AppEvent::Resize(..) => Vec::new(),
        AppEvent::Tick => {
            replay_tick(state, super::runtime::TICK);
            Vec::new()
        }
        AppEvent::Shutdown => {
            state.quit = true;
            vec![Effect::Quit]
        }
        AppEvent::SolverProgress {
            generation,
            placement,
            elapsed,
            iterations,
            bound,
        } => {
            if generation == state.generation && state.mode == Mode::Command {
                if let Some(p) = placement {
                    state.take_placement(p);
                }
                state.plan_status = PlanStatus::Improving {
                    elapsed,
                    iterations,
                    bound,
                };
            }
            Vec::new()
        }
        AppEvent::SolverFinished { generation, result } => {
            if generation != state.generation || state.mode != Mode::Command {
                return Vec::new();
            }
            match result {
                Ok(plan) => {
                    state.settled_ground = (plan.settled
                        && plan.placement == state.incident.placement)
                        .then(|| plan.placement.clone());
                    state.take_placement(plan.placement);
                    state.plan_status = PlanStatus::Settled {
                        elapsed: plan.elapsed,
                        proven_optimal: plan.proven_optimal,
                        bound: plan.bound,
                    };
                    // The settled recommendation goes to the log, so that a
                    // replay can set it beside what was done.
                    if let Some(p) = &state.proposal {
                        let moves: Vec<_> = p
                            .moves
                            .iter()
                            .map(|m| move_spec(&state.incident, m))
                            .collect();
                        if state.last_written_proposal.as_ref() != Some(&moves) {
                            state.last_written_proposal = Some(moves.clone());
                            return vec![Effect::Append {
                                events: vec![Event::PlanProposed { moves }],
                                undoable: false,
                            }];
                        }
                    }
                }
                Err(e) => state.plan_status = PlanStatus::Failed(e),
            }
            Vec::new()
        }
        AppEvent::AdviceReady { generation, result } => {
            // Advice for an older state of the incident, or arriving after
            // advice was switched off, is dropped.
            if generation != state.advice_generation || state.advice_status == AdviceStatus::Off {
                return Vec::new();
            }
            match result {
                Ok(notes) => {
                    state.advice = notes;
                    state.advice_status = AdviceStatus::Ready;
                }
                Err(e) => {
                    state.advice.clear();
                    state.advice_status = AdviceStatus::Failed(e);
                }
            }
            Vec::new()
        }
        AppEvent::RecordAppended(record) => on_record(state, record),
        AppEvent::AppendFailed { message, undoable } => {
            if undoable {
                state.undo.pop();
            }
            state.flash = Some(Flash {
                error: true,
                text: format!("not written to the log: {message}"),
            });
            Vec::new()
        }
    }
}

/// Applies a record from the log: the only way the incident changes.
pub(super) fn on_record(state: &mut AppState, record: Record) -> Vec<Effect> {
    if state.last_seq.is_some_and(|s| record.seq <= s) {
        return Vec::new(); // already applied (our own append read back)
    }
    state.last_seq = Some(record.seq);
    let lost_from = match &record.event {
        Event::UnitLost { unit, reason } => state.incident.unit_idx(unit).map(|u| LostUnit {
            unit: unit.clone(),
            reason: reason.clone().unwrap_or_else(|| "no reason given".into()),
            from_task: state
                .incident
                .placement
                .get(u)
                .map(|t| state.incident.tasks[t].id.clone()),
        }),
        _ => None,
    };
    state.push_log_line(LogLine {
        seq: record.seq,
        at: record.at.format("%H:%M:%S").to_string(),
        by: record.by.clone(),
        text: record.event.describe(),
    });
    // The snapshot is how the state was built; nothing to apply.
    if matches!(record.event, Event::IncidentOpened { .. }) {
        return Vec::new();
    }
    match &record.event {
        Event::PlanProposed { moves } => {
            state.last_proposed = Some((record.seq, moves.clone()));
            state.done_since.clear();
        }
        Event::PlanAccepted { .. } | Event::Moved { .. } | Event::PlanRejected {} => {
            state
                .done_since
                .push(format!("#{} {}", record.seq, record.event.describe()));
        }
        Event::TaskClosed { task, outcome } => {
            if let Some(t) = state.incident.task_idx(task) {
                let odds = state.ground.get(t.index()).map_or(0.0, |o| o.odds());
                state
                    .closed
                    .push((task.clone(), outcome.as_str().to_string(), odds));
            }
        }
        _ => {}
    }
    if let Err(e) = apply(&mut state.incident, &record.event) {
        state.flash = Some(Flash {
            error: true,
            text: format!("log record #{} does not apply: {e}", record.seq),
        });
        return Vec::new();
    }
    if let Some(l) = lost_from {
        state.lost.push(l);
    }
    // Only losses keep the settled ground (as it stood before them).
    let changes_incident = !matches!(
        record.event,
        Event::Note { .. } | Event::PlanRejected {} | Event::PlanProposed { .. }
    );
    if changes_incident && !matches!(record.event, Event::UnitLost { .. }) {
        state.settled_ground = None;
    }
    match &record.event {
        Event::Note { .. } => Vec::new(),
        Event::PlanRejected {} => {
            if state.mode != Mode::Command {
                state.proposal = None;
            }
            Vec::new()
        }
        Event::PlanProposed { moves } => {
            if state.mode != Mode::Command {
                let mut placement = state.incident.placement.clone();
                for m in moves {
                    if let Some(u) = state.incident.unit_idx(&m.unit) {
                        placement.set(u, m.to.as_deref().and_then(|t| state.incident.task_idx(t)));
                    }
                }
                state.take_placement(placement);
            }
            Vec::new()
        }
        _ => state.incident_changed(),
    }
}

/// Writes the events of an operator action, pushing its undo first.
pub(super) fn act(state: &mut AppState, label: String, events: Vec<Event>) -> Vec<Effect> {
    // The undo is worked out on the incident before the action, event by event.
    let mut scratch = state.incident.clone();
    let mut comp: Vec<Event> = Vec::new();
    let mut undoable = true;
    for e in &events {
        match compensation(&scratch, e) {
            Ok(mut c) => {
                c.append(&mut comp);
                comp = c;
            }
            Err(_) => undoable = false,
        }
        if let Err(e) = apply(&mut scratch, e) {
            state.flash = Some(Flash {
                error: true,
                text: format!("refused: {e}"),
            });
            return Vec::new();
        }
    }
    if undoable {
        state.undo.push(UndoEntry {
            label: label.clone(),
            compensation: comp,
        });
    }
    state.flash = Some(Flash {
        error: false,
        text: format!("written to the log: {label}"),
    });
    vec![Effect::Append { events, undoable }]
}

pub(super) fn submit_form(state: &mut AppState, form: Form) -> Vec<Effect> {
    if form.kind == FormKind::GoTo {
        return match replay_target(state, &form.value(0)) {
            Ok(i) => {
                state.overlay = Overlay::None;
                replay_seek(state, i);
                Vec::new()
            }
            Err(message) => {
                if let Overlay::Form(f) = &mut state.overlay {
                    f.error = Some((0, message));
                }
                Vec::new()
            }
        };
    }
    match submit(state, &form) {
        Ok(events) => {
            state.overlay = Overlay::None;
            if events.is_empty() {
                return Vec::new();
            }
            let label = events
                .iter()
                .map(Event::describe)
                .collect::<Vec<_>>()
                .join("; ");
            act(state, label, events)
        }
        Err((field, message)) => {
            if let Overlay::Form(f) = &mut state.overlay {
                f.error = Some((field, message));
                f.focus = field;
            }
            Vec::new()
        }
    }
}
