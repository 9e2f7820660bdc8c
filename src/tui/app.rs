//! The dashboard's state, its one closed event enum and the single `update`
//! function (The Elm Architecture). `update` never does I/O: what must happen
//! outside (append to the log, start a re-plan, quit) comes back as
//! [`Effect`]s that the runtime carries out, which keeps every key testable
//! on plain values.

use std::collections::VecDeque;
use std::time::Duration;

use ratatui::crossterm::event::{KeyCode, KeyEvent, KeyEventKind, KeyModifiers};

use super::actions::{UndoEntry, compensation, move_spec, open_form, submit};
use super::board::{Proposal, task_order, worst_open};
use super::form::{Form, FormKind, FormOutcome};
use super::theme::Theme;
use crate::log::{Event, Record, apply};
use crate::model::{Incident, Placement, TaskIdx};
use crate::odds::joint::{JointByTier, JointOptions, joint_by_tier};
use crate::odds::{TaskOdds, evaluate};

/// Which of the three dashboards is running.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Mode {
    /// The commander's: acts, re-plans, writes the log.
    Command,
    /// The duty officer's: read-only, follows a live log.
    Watch,
    /// The trainer's: steps through a saved log.
    Replay,
}

impl Mode {
    pub fn word(self) -> &'static str {
        match self {
            Mode::Command => "COMMAND",
            Mode::Watch => "WATCH · read-only",
            Mode::Replay => "REPLAY",
        }
    }
}

/// Where the background re-plan stands.
#[derive(Debug, Clone, PartialEq)]
pub enum PlanStatus {
    /// No re-plan in this mode (watch, replay).
    Off,
    /// Waiting for the first result of the current generation.
    Starting,
    /// A placement has come back and the search goes on.
    Improving { elapsed: Duration, iterations: u64 },
    /// The search has stopped for this state.
    Settled {
        elapsed: Duration,
        proven_optimal: bool,
    },
    /// The re-plan failed; the message says why.
    Failed(String),
    /// The commander rejected the proposal; no new one until the state changes.
    Rejected,
}

/// Where the background advice (fragile units, resource requests) stands.
#[derive(Debug, Clone, PartialEq)]
pub enum AdviceStatus {
    /// No advice in this dashboard (replay, or switched off).
    Off,
    /// Being computed for the current incident state.
    Computing,
    /// The notes shown are for the current incident state.
    Ready,
    /// The advice failed; the message says why.
    Failed(String),
}

/// One line of the recent-log panel.
#[derive(Debug, Clone, PartialEq)]
pub struct LogLine {
    pub seq: u64,
    /// `HH:MM:SS` UTC.
    pub at: String,
    pub by: String,
    pub text: String,
}

/// A unit lost recently, kept for the safety notes.
#[derive(Debug, Clone, PartialEq)]
pub struct LostUnit {
    pub unit: String,
    pub reason: String,
    pub from_task: Option<String>,
}

/// A message on the status line after an action.
#[derive(Debug, Clone, PartialEq)]
pub struct Flash {
    pub error: bool,
    pub text: String,
}

/// What covers the board, if anything.
#[derive(Debug, Clone, Default)]
pub enum Overlay {
    #[default]
    None,
    Help,
    Form(Form),
}

/// Everything the screen shows; drawing is a pure function of it.
#[derive(Debug, Clone)]
pub struct AppState {
    pub mode: Mode,
    pub incident: Incident,
    /// Odds of the placement on the ground, by task index.
    pub ground: Vec<TaskOdds>,
    /// Joint odds of the ground per tier and of all open tasks (for the
    /// tier headers), computed with `ground`.
    pub ground_joint: JointByTier,
    pub proposal: Option<Proposal>,
    pub plan_status: PlanStatus,
    /// Bumped on every change of the incident; re-plan results of an older
    /// generation are stale and dropped.
    pub generation: u64,
    /// Newest last.
    pub recent: VecDeque<LogLine>,
    /// Worst open-task odds after each record, oldest first.
    pub worst_history: Vec<f64>,
    /// Position in [`task_order`] of the selected task.
    pub selected: usize,
    pub roster_scroll: u16,
    pub overlay: Overlay,
    pub flash: Option<Flash>,
    pub lost: Vec<LostUnit>,
    /// The most urgent notes of the advice module (fragile units, resource
    /// requests), shown after the contextual notes. Kept while a newer
    /// advice is computed, so the panel does not flicker.
    pub advice: Vec<crate::advise::Note>,
    pub advice_status: AdviceStatus,
    /// Bumped on every change of the incident (only then, unlike
    /// `generation`, which a rejection also bumps); advice of an older
    /// generation is stale and dropped.
    pub advice_generation: u64,
    pub theme: Theme,
    pub quit: bool,
    /// Who this dashboard writes as (`by` of its records).
    pub operator: String,
    /// Highest sequence number applied.
    pub last_seq: Option<u64>,
    /// The operator's own actions, newest last, with their undo.
    pub undo: Vec<UndoEntry>,
    /// Moves of the last `plan_proposed` written, so the same proposal is
    /// not written twice.
    pub last_written_proposal: Option<Vec<crate::log::Move>>,
    /// The last recommendation in the log: its seq and moves.
    pub last_proposed: Option<(u64, Vec<crate::log::Move>)>,
    /// What was done on the ground since that recommendation.
    pub done_since: Vec<String>,
    /// Closed tasks: id, outcome, odds on the ground just before closing.
    pub closed: Vec<(String, String, f64)>,
    /// The trainer's position in a saved log (replay mode only).
    pub replay: Option<ReplayCursor>,
}

/// Position and pace of a replay.
#[derive(Debug, Clone)]
pub struct ReplayCursor {
    pub records: std::sync::Arc<Vec<Record>>,
    /// Index in `records` of the last record applied.
    pub at: usize,
    pub playing: bool,
    /// Records per second while playing.
    pub speed: f64,
    /// Seconds of play not yet turned into steps.
    pub owed: f64,
    /// The state after every [`CHECKPOINT_EVERY`]-th record, kept as the
    /// replay first passes it, so a step back or a jump folds at most that
    /// many records instead of the whole log.
    checkpoints: std::sync::Arc<Vec<(usize, AppState)>>,
}

/// Records between two replay checkpoints.
pub const CHECKPOINT_EVERY: usize = 64;

/// Play speeds offered by `+`/`-`, records per second.
pub const REPLAY_SPEEDS: [f64; 6] = [0.5, 1.0, 2.0, 5.0, 10.0, 50.0];

/// The one closed set of things that can happen to the dashboard.
#[derive(Debug, Clone)]
pub enum AppEvent {
    Key(KeyEvent),
    Resize(u16, u16),
    /// Periodic wake-up (replay play, watch poll).
    Tick,
    /// A better placement found while the re-plan goes on.
    SolverProgress {
        generation: u64,
        placement: Placement,
        elapsed: Duration,
        iterations: u64,
    },
    /// The re-plan for `generation` has stopped.
    SolverFinished {
        generation: u64,
        result: Result<PlanResult, String>,
    },
    /// The advice for `generation` of the incident (see
    /// `AppState::advice_generation`) is ready.
    AdviceReady {
        generation: u64,
        result: Result<Vec<crate::advise::Note>, String>,
    },
    /// SIGTERM or SIGHUP: quit and restore the terminal.
    Shutdown,
    /// A record is in the log (ours after the append, or another writer's).
    RecordAppended(Record),
    /// An append was refused; nothing was written.
    AppendFailed {
        message: String,
        undoable: bool,
    },
}

/// What a finished re-plan hands back.
#[derive(Debug, Clone, PartialEq)]
pub struct PlanResult {
    pub placement: Placement,
    pub proven_optimal: bool,
    pub elapsed: Duration,
}

/// Work for the runtime; `update` never does it itself.
#[derive(Debug, Clone, PartialEq)]
pub enum Effect {
    /// Cancel any running re-plan and start one for this generation of the
    /// incident in the state.
    Replan {
        generation: u64,
    },
    /// Append these events to the log, in order, each only after the one
    /// before it was written; `undoable` when they are an operator action
    /// whose undo was just pushed.
    Append {
        events: Vec<Event>,
        undoable: bool,
    },
    /// Cancel any running advice and start one (after a short pause that
    /// absorbs a burst of records) for this advice generation.
    Advise {
        generation: u64,
    },
    Quit,
}

/// Longest recent-log list kept in memory.
const RECENT_KEPT: usize = 500;

impl AppState {
    pub fn new(mode: Mode, incident: Incident, theme: Theme) -> Self {
        let ground = evaluate(&incident, &incident.placement);
        let ground_joint = joint_by_tier(&incident, &incident.placement, JointOptions::quick());
        let mut state = AppState {
            mode,
            incident,
            ground,
            ground_joint,
            proposal: None,
            plan_status: if mode == Mode::Command {
                PlanStatus::Starting
            } else {
                PlanStatus::Off
            },
            generation: 0,
            recent: VecDeque::new(),
            worst_history: Vec::new(),
            selected: 0,
            roster_scroll: 0,
            overlay: Overlay::None,
            flash: None,
            lost: Vec::new(),
            advice: Vec::new(),
            // Switched on by the runtime when it has an advisor.
            advice_status: AdviceStatus::Off,
            advice_generation: 0,
            theme,
            quit: false,
            operator: "commander".into(),
            last_seq: None,
            undo: Vec::new(),
            last_written_proposal: None,
            last_proposed: None,
            done_since: Vec::new(),
            closed: Vec::new(),
            replay: None,
        };
        state.push_worst();
        state
    }

    /// Task order of the board (open tasks by tier, then closed).
    pub fn task_order(&self) -> Vec<TaskIdx> {
        task_order(&self.incident)
    }

    /// Index of the selected task, if the board has any task.
    pub fn selected_task(&self) -> Option<TaskIdx> {
        let order = self.task_order();
        order
            .get(self.selected.min(order.len().saturating_sub(1)))
            .copied()
    }

    /// Worst odds among open tasks on the ground (1 when nothing is open).
    pub fn worst_ground_odds(&self) -> f64 {
        worst_open(&self.incident, &self.ground).map_or(1.0, |t| self.ground[t].odds())
    }

    fn push_worst(&mut self) {
        let w = self.worst_ground_odds();
        self.worst_history.push(w);
    }

    /// Adds a line to the recent log.
    pub fn push_log_line(&mut self, line: LogLine) {
        self.recent.push_back(line);
        while self.recent.len() > RECENT_KEPT {
            self.recent.pop_front();
        }
    }

    /// Call after the incident changed: re-reads the ground, drops the stale
    /// proposal, records the worst odds and asks for a re-plan.
    pub fn incident_changed(&mut self) -> Vec<Effect> {
        self.ground = evaluate(&self.incident, &self.incident.placement);
        self.ground_joint = joint_by_tier(
            &self.incident,
            &self.incident.placement,
            JointOptions::quick(),
        );
        self.proposal = None;
        self.generation += 1;
        self.push_worst();
        let n = self.task_order().len();
        if self.selected >= n {
            self.selected = n.saturating_sub(1);
        }
        let mut effects = Vec::new();
        if self.mode == Mode::Command {
            self.plan_status = PlanStatus::Starting;
            effects.push(Effect::Replan {
                generation: self.generation,
            });
        }
        // After the re-plan, so that the proposal comes first.
        self.advice_generation += 1;
        if self.advice_status != AdviceStatus::Off {
            self.advice_status = AdviceStatus::Computing;
            effects.push(Effect::Advise {
                generation: self.advice_generation,
            });
        }
        effects
    }

    /// Turns the background advice on for the current state: the runtime
    /// starts it with [`Effect::Advise`] of the returned generation. Never
    /// in a replay.
    pub fn advice_on(&mut self) -> Option<u64> {
        if self.mode == Mode::Replay {
            return None;
        }
        self.advice_status = AdviceStatus::Computing;
        Some(self.advice_generation)
    }

    /// Sets the proposal from a placement, or clears it when it changes
    /// nothing on the ground.
    fn take_placement(&mut self, placement: Placement) {
        if placement.len() != self.incident.units.len() {
            return;
        }
        if placement == self.incident.placement {
            self.proposal = None;
        } else {
            self.proposal = Some(Proposal::new(&self.incident, placement));
        }
    }
}

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
        } => {
            if generation == state.generation && state.mode == Mode::Command {
                state.take_placement(placement);
                state.plan_status = PlanStatus::Improving {
                    elapsed,
                    iterations,
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
                    state.take_placement(plan.placement);
                    state.plan_status = PlanStatus::Settled {
                        elapsed: plan.elapsed,
                        proven_optimal: plan.proven_optimal,
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

fn on_key(state: &mut AppState, key: KeyEvent) -> Vec<Effect> {
    if key.kind == KeyEventKind::Release {
        return Vec::new();
    }
    // Ctrl-C quits from anywhere: nothing is unsaved.
    if key.modifiers.contains(KeyModifiers::CONTROL) && key.code == KeyCode::Char('c') {
        state.quit = true;
        return vec![Effect::Quit];
    }
    match &mut state.overlay {
        Overlay::Help => {
            if matches!(
                key.code,
                KeyCode::Esc | KeyCode::Char('?') | KeyCode::Enter | KeyCode::Char('q')
            ) {
                state.overlay = Overlay::None;
            }
            return Vec::new();
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

/// Applies a record from the log: the only way the incident changes.
fn on_record(state: &mut AppState, record: Record) -> Vec<Effect> {
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
fn act(state: &mut AppState, label: String, events: Vec<Event>) -> Vec<Effect> {
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

fn submit_form(state: &mut AppState, form: Form) -> Vec<Effect> {
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

/// Keys of the commander's dashboard; `None` when the key is not one of them.
fn command_key(state: &mut AppState, code: KeyCode) -> Option<Vec<Effect>> {
    let kind = match code {
        KeyCode::Char('l') => FormKind::Lost,
        KeyCode::Char('a') => FormKind::AddUnit,
        KeyCode::Char('r') => FormKind::Rerate,
        KeyCode::Char('o') => FormKind::Observe,
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

/// The state of a replay at the start of its log: the snapshot only.
pub fn replay_state(records: Vec<Record>, theme: Theme) -> Result<AppState, crate::log::LogError> {
    let first = crate::log::fold(&records[..1.min(records.len())])?;
    let mut state = AppState::new(Mode::Replay, first, theme);
    let records = std::sync::Arc::new(records);
    if let Some(r) = records.first() {
        on_record(&mut state, r.clone());
    }
    state.replay = Some(ReplayCursor {
        records,
        at: 0,
        playing: false,
        speed: 2.0,
        owed: 0.0,
        checkpoints: Default::default(),
    });
    Ok(state)
}

/// Moves the replay to record index `target`. Forward, the records in
/// between are applied to the state shown; backward, the state restarts from
/// the last checkpoint at or before `target` (or the snapshot) and folds
/// forward from there: the log stays the only source of truth (no reverse
/// steps), and no step re-folds the whole log.
pub fn replay_seek(state: &mut AppState, target: usize) {
    let Some(mut cursor) = state.replay.take() else {
        return;
    };
    let target = target.min(cursor.records.len().saturating_sub(1));
    // `applied`: index of the last record already in `state`, if any.
    let applied = if target >= cursor.at {
        Some(cursor.at)
    } else {
        let base = cursor
            .checkpoints
            .iter()
            .rev()
            .find(|(i, _)| *i <= target)
            .map(|(i, s)| (*i, s.clone()));
        let (applied, mut fresh) = match base {
            Some((i, s)) => (Some(i), s),
            None => {
                let Ok(first) = crate::log::fold(&cursor.records[..1]) else {
                    state.replay = Some(cursor);
                    return;
                };
                (None, AppState::new(Mode::Replay, first, state.theme))
            }
        };
        fresh.selected = state.selected;
        fresh.theme = state.theme;
        *state = fresh;
        applied
    };
    let from = applied.map_or(0, |i| i + 1);
    for i in from..=target {
        on_record(state, cursor.records[i].clone());
        let known = cursor.checkpoints.last().map_or(0, |(k, _)| *k);
        if i > 0 && i % CHECKPOINT_EVERY == 0 && i > known {
            std::sync::Arc::make_mut(&mut cursor.checkpoints).push((i, state.clone()));
        }
    }
    state.selected = state
        .selected
        .min(state.task_order().len().saturating_sub(1));
    cursor.at = target;
    state.replay = Some(cursor);
}

fn replay_tick(state: &mut AppState, dt: Duration) {
    let Some(c) = state.replay.as_mut() else {
        return;
    };
    if !c.playing {
        return;
    }
    c.owed += dt.as_secs_f64() * c.speed;
    let steps = c.owed.floor() as usize;
    if steps == 0 {
        return;
    }
    c.owed -= steps as f64;
    let last = c.records.len().saturating_sub(1);
    let target = (c.at + steps).min(last);
    if target == last {
        c.playing = false;
    }
    replay_seek(state, target);
}

/// Finds a record by sequence number, `HH:MM[:SS]` (UTC) or RFC 3339 time:
/// the last record at or before that time.
pub fn replay_target(state: &AppState, text: &str) -> Result<usize, String> {
    let Some(c) = &state.replay else {
        return Err("not replaying".into());
    };
    let text = text.trim();
    if let Ok(seq) = text.parse::<u64>() {
        return c
            .records
            .iter()
            .position(|r| r.seq == seq)
            .ok_or_else(|| format!("no record #{seq} (the log has #1 to #{})", c.records.len()));
    }
    let at_or_before =
        |pred: &dyn Fn(&Record) -> bool| c.records.iter().rposition(pred).unwrap_or(0);
    if let Ok(t) = chrono::DateTime::parse_from_rfc3339(text) {
        let t = t.with_timezone(&chrono::Utc);
        return Ok(at_or_before(&|r: &Record| r.at <= t));
    }
    for fmt in ["%H:%M:%S", "%H:%M"] {
        if let Ok(t) = chrono::NaiveTime::parse_from_str(text, fmt) {
            return Ok(at_or_before(&|r: &Record| r.at.time() <= t));
        }
    }
    Err(format!(
        "{text:?} is neither a sequence number, HH:MM[:SS] nor an RFC 3339 time"
    ))
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
