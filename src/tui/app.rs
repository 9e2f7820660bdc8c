//! The dashboard's state and its derived views (The Elm Architecture): what
//! the screen shows ([`AppState`]), the one closed event enum ([`AppEvent`])
//! and the work `update` hands back ([`Effect`]). The transition itself is in
//! `update`, the keys of each mode in `keys`, the trainer's cursor in
//! `replay`; a new panel reads this file, a new action touches `keys`
//! (which key) and `actions` (which events).

use std::collections::VecDeque;
use std::time::Duration;

use ratatui::crossterm::event::KeyEvent;

use super::actions::UndoEntry;
use super::board::{Proposal, task_order, worst_open};
use super::form::Form;
use super::theme::Theme;
use crate::log::{Event, Record};
use crate::model::{Incident, Placement, TaskIdx};
use crate::odds::joint::{JointByTier, JointOptions, joint_by_tier};
use crate::odds::{TaskOdds, evaluate};

pub use super::replay::{
    CHECKPOINT_EVERY, REPLAY_SPEEDS, ReplayCursor, replay_seek, replay_state, replay_target,
};
pub use super::update::update;

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
    Improving {
        elapsed: Duration,
        iterations: u64,
        bound: Option<crate::solver::relax::TierBound>,
    },
    /// The search has stopped for this state.
    Settled {
        elapsed: Duration,
        proven_optimal: bool,
        bound: Option<crate::solver::relax::TierBound>,
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
    /// Every safety note in full (when the panel hides some), scrolled
    /// down by this many rows.
    Notes(u16),
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
    /// The ground when a settled re-plan (one that ended on its own) kept
    /// it, while nothing but unit losses changed since: the next re-plan is
    /// told, so a loss the reserve or a short chain of moves can absorb is
    /// settled at once (`SolveOptions::settled_before_loss`).
    pub settled_ground: Option<Placement>,
    /// The last recommendation in the log: its seq and moves.
    pub last_proposed: Option<(u64, Vec<crate::log::Move>)>,
    /// What was done on the ground since that recommendation.
    pub done_since: Vec<String>,
    /// Closed tasks: id, outcome, odds on the ground just before closing.
    pub closed: Vec<(String, String, f64)>,
    /// The trainer's position in a saved log (replay mode only).
    pub replay: Option<ReplayCursor>,
}

/// The one closed set of things that can happen to the dashboard.
#[derive(Debug, Clone)]
pub enum AppEvent {
    Key(KeyEvent),
    Resize(u16, u16),
    /// Periodic wake-up (replay play, watch poll).
    Tick,
    /// The re-plan's work so far, with a better placement when one was
    /// found since the last report.
    SolverProgress {
        generation: u64,
        placement: Option<Placement>,
        elapsed: Duration,
        iterations: u64,
        /// How high the first short tier could go, once bounded.
        bound: Option<crate::solver::relax::TierBound>,
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
    /// The first short tier's worst odds and how high they could go
    /// (`solver::relax`); `None` when proven or not computed.
    pub bound: Option<crate::solver::relax::TierBound>,
    /// The search ended on its own (not on its budget or a cancel).
    pub settled: bool,
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
            settled_ground: None,
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

    pub(super) fn push_worst(&mut self) {
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
    pub(super) fn take_placement(&mut self, placement: Placement) {
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
