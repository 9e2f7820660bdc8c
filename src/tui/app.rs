//! The dashboard's state, its one closed event enum and the single `update`
//! function (The Elm Architecture). `update` never does I/O: what must happen
//! outside (append to the log, start a re-plan, quit) comes back as
//! [`Effect`]s that the runtime carries out, which keeps every key testable
//! on plain values.

use std::collections::VecDeque;
use std::time::Duration;

use ratatui::crossterm::event::{KeyCode, KeyEvent, KeyEventKind, KeyModifiers};

use super::board::{Proposal, task_order, worst_open};
use super::theme::Theme;
use crate::model::{Incident, Placement, TaskIdx};
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
#[derive(Debug, Clone, PartialEq, Default)]
pub enum Overlay {
    #[default]
    None,
    Help,
}

/// Everything the screen shows; drawing is a pure function of it.
#[derive(Debug, Clone)]
pub struct AppState {
    pub mode: Mode,
    pub incident: Incident,
    /// Odds of the placement on the ground, by task index.
    pub ground: Vec<TaskOdds>,
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
    /// Lines from the advice module, shown in the safety notes when present.
    pub advice: Vec<String>,
    pub theme: Theme,
    pub quit: bool,
}

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
    Quit,
}

/// Longest recent-log list kept in memory.
const RECENT_KEPT: usize = 500;

impl AppState {
    pub fn new(mode: Mode, incident: Incident, theme: Theme) -> Self {
        let ground = evaluate(&incident, &incident.placement);
        let mut state = AppState {
            mode,
            incident,
            ground,
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
            theme,
            quit: false,
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
        self.proposal = None;
        self.generation += 1;
        self.push_worst();
        let n = self.task_order().len();
        if self.selected >= n {
            self.selected = n.saturating_sub(1);
        }
        if self.mode == Mode::Command {
            self.plan_status = PlanStatus::Starting;
            vec![Effect::Replan {
                generation: self.generation,
            }]
        } else {
            Vec::new()
        }
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
        AppEvent::Resize(..) | AppEvent::Tick => Vec::new(),
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
                }
                Err(e) => state.plan_status = PlanStatus::Failed(e),
            }
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
    if state.overlay == Overlay::Help {
        if matches!(
            key.code,
            KeyCode::Esc | KeyCode::Char('?') | KeyCode::Enter | KeyCode::Char('q')
        ) {
            state.overlay = Overlay::None;
        }
        return Vec::new();
    }
    state.flash = None;
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
