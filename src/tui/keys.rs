//! Keys, mode by mode: an open overlay (help, a form) takes every key;
//! then the commander's keys (forms and actions), the trainer's (stepping
//! through a log), and the keys every mode shares (select, scroll, help,
//! quit). A new action is one arm in [`command_key`] and its events in
//! `actions`.

use ratatui::crossterm::event::{KeyCode, KeyEvent, KeyEventKind, KeyModifiers};

use super::actions::{move_spec, open_form};
use super::app::{AppState, Effect, Flash, Mode, Overlay, PlanStatus};
use super::form::{FormKind, FormOutcome};
use super::replay::{REPLAY_SPEEDS, replay_seek};
use super::update::{act, submit_form};
use crate::log::Event;

pub(super) fn on_key(state: &mut AppState, key: KeyEvent) -> Vec<Effect> {
    if key.kind == KeyEventKind::Release {
        return Vec::new();
    }
    // Ctrl-C quits from anywhere: nothing is unsaved.
    if key.modifiers.contains(KeyModifiers::CONTROL) && key.code == KeyCode::Char('c') {
        state.quit = true;
        return vec![Effect::Quit];
    }
    match &mut state.overlay {
        Overlay::Notes(scroll) => {
            // ↑↓ and PgUp/PgDn scroll a list taller than the screen (drawing
            // stops at its end); any other key closes it.
            match key.code {
                KeyCode::Down | KeyCode::Char('j') => *scroll = scroll.saturating_add(1),
                KeyCode::Up | KeyCode::Char('k') => *scroll = scroll.saturating_sub(1),
                KeyCode::PageDown => *scroll = scroll.saturating_add(10),
                KeyCode::PageUp => *scroll = scroll.saturating_sub(10),
                _ => {
                    state.overlay = Overlay::None;
                    if matches!(
                        key.code,
                        KeyCode::Esc | KeyCode::Char('N') | KeyCode::Enter | KeyCode::Char('q')
                    ) {
                        return Vec::new();
                    }
                }
            }
            if matches!(state.overlay, Overlay::Notes(_)) {
                return Vec::new();
            }
        }
        Overlay::Help => {
            state.overlay = Overlay::None;
            if matches!(
                key.code,
                KeyCode::Esc | KeyCode::Char('?') | KeyCode::Enter | KeyCode::Char('q')
            ) {
                return Vec::new();
            }
            // Any other key listed in the help does what it says from here:
            // the help is the way into every form.
        }
        Overlay::Form(form) => {
            return match form.on_key(key) {
                FormOutcome::Editing => Vec::new(),
                FormOutcome::Cancel => {
                    state.overlay = Overlay::None;
                    Vec::new()
                }
                FormOutcome::Submit => {
                    let form = form.clone();
                    submit_form(state, form)
                }
            };
        }
        Overlay::None => {}
    }
    state.flash = None;
    if state.mode == Mode::Command
        && let Some(effects) = command_key(state, key.code)
    {
        return effects;
    }
    if state.mode == Mode::Replay && replay_key(state, key) {
        return Vec::new();
    }
    let n_tasks = state.task_order().len();
    match key.code {
        KeyCode::Char('q') => {
            state.quit = true;
            return vec![Effect::Quit];
        }
        KeyCode::Char('?') => state.overlay = Overlay::Help,
        KeyCode::Char('N') => state.overlay = Overlay::Notes(0),
        KeyCode::Up | KeyCode::Char('k') => state.selected = state.selected.saturating_sub(1),
        KeyCode::Down | KeyCode::Char('j') if state.selected + 1 < n_tasks => {
            state.selected += 1;
        }
        KeyCode::Home => state.selected = 0,
        KeyCode::End => state.selected = n_tasks.saturating_sub(1),
        KeyCode::PageDown => state.roster_scroll = state.roster_scroll.saturating_add(5),
        KeyCode::PageUp => state.roster_scroll = state.roster_scroll.saturating_sub(5),
        _ => {}
    }
    Vec::new()
}

/// Keys of the commander's dashboard; `None` when the key is not one of them.
fn command_key(state: &mut AppState, code: KeyCode) -> Option<Vec<Effect>> {
    let kind = match code {
        KeyCode::Char('l') => FormKind::Lost,
        KeyCode::Char('a') => FormKind::AddUnit,
        KeyCode::Char('o') => FormKind::AddTask,
        KeyCode::Char('f') => FormKind::Observe,
        KeyCode::Char('r') => FormKind::Rerate,
        KeyCode::Char('n') => FormKind::ChangeNeed,
        KeyCode::Char('c') => FormKind::CloseTask,
        KeyCode::Char('p') => FormKind::Pin,
        KeyCode::Char('m') => FormKind::Move,
        KeyCode::Char('t') => FormKind::Note,
        KeyCode::Char('s') => FormKind::AcceptOne,
        KeyCode::Char('y') => {
            let Some(p) = &state.proposal else {
                state.flash = Some(Flash {
                    error: true,
                    text: "no proposal to accept".into(),
                });
                return Some(Vec::new());
            };
            let moves: Vec<_> = p
                .moves
                .iter()
                .map(|m| move_spec(&state.incident, m))
                .collect();
            let label = format!(
                "accepted {}",
                super::format::count(moves.len(), "move", "moves")
            );
            return Some(act(state, label, vec![Event::PlanAccepted { moves }]));
        }
        KeyCode::Char('x') => {
            if state.proposal.is_none() {
                state.flash = Some(Flash {
                    error: true,
                    text: "no proposal to reject".into(),
                });
                return Some(Vec::new());
            }
            state.proposal = None;
            // Late results of this generation are dropped.
            state.generation += 1;
            state.plan_status = PlanStatus::Rejected;
            state.flash = Some(Flash {
                error: false,
                text: "proposal rejected".into(),
            });
            return Some(vec![Effect::Append {
                events: vec![Event::PlanRejected {}],
                undoable: false,
            }]);
        }
        KeyCode::Char('u') => {
            let Some(entry) = state.undo.pop() else {
                state.flash = Some(Flash {
                    error: true,
                    text: "nothing of yours to undo".into(),
                });
                return Some(Vec::new());
            };
            state.flash = Some(Flash {
                error: false,
                text: format!("undoing: {}", entry.label),
            });
            return Some(vec![Effect::Append {
                events: entry.compensation,
                undoable: false,
            }]);
        }
        _ => return None,
    };
    match open_form(state, kind) {
        Ok(form) => state.overlay = Overlay::Form(form),
        Err(e) => {
            state.flash = Some(Flash {
                error: true,
                text: e,
            })
        }
    }
    Some(Vec::new())
}

/// Keys of the replay; true when the key was one of them.
fn replay_key(state: &mut AppState, key: KeyEvent) -> bool {
    let Some(c) = state.replay.as_mut() else {
        return false;
    };
    let at = c.at;
    let last = c.records.len().saturating_sub(1);
    match key.code {
        KeyCode::Right => replay_seek(state, at + 1),
        KeyCode::Left => replay_seek(state, at.saturating_sub(1)),
        KeyCode::Home if key.modifiers.contains(KeyModifiers::SHIFT) => replay_seek(state, 0),
        KeyCode::End if key.modifiers.contains(KeyModifiers::SHIFT) => replay_seek(state, last),
        KeyCode::Char('<') => replay_seek(state, 0),
        KeyCode::Char('>') => replay_seek(state, last),
        KeyCode::Char(' ') => {
            c.playing = !c.playing;
            c.owed = 0.0;
            if c.playing && at == last {
                replay_seek(state, 0);
                if let Some(c) = state.replay.as_mut() {
                    c.playing = true;
                }
            }
        }
        KeyCode::Char('+') => {
            let i = REPLAY_SPEEDS
                .iter()
                .position(|s| *s >= c.speed)
                .unwrap_or(0);
            c.speed = REPLAY_SPEEDS[(i + 1).min(REPLAY_SPEEDS.len() - 1)];
        }
        KeyCode::Char('-') => {
            let i = REPLAY_SPEEDS
                .iter()
                .position(|s| *s >= c.speed)
                .unwrap_or(0);
            c.speed = REPLAY_SPEEDS[i.saturating_sub(1)];
        }
        KeyCode::Char('g') => {
            if let Ok(form) = open_form(state, FormKind::GoTo) {
                state.overlay = Overlay::Form(form);
            }
        }
        _ => return false,
    }
    true
}
