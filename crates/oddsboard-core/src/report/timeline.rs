//! The timeline: the log replayed record by record, with the odds of the
//! placement on the ground after each record and the proposal in force.
//!
//! The ground odds are kept up to date incrementally: one [`TaskTally`] per
//! task, and each record removes the units it touches from their task's
//! tally before it is applied and adds them back after; only the tasks so
//! touched are read again. Nothing is rebuilt from the whole placement.

use crate::log::apply::touched_units;
use crate::log::{Event, LogError, Move, Record, Replay};
use crate::model::{Incident, TaskIdx, Tier};
use crate::odds::joint::{JointOptions, joint_by_tier};
use crate::odds::{TaskOdds, TaskTally, tallies};
use chrono::{DateTime, Utc};

/// Worst odds per tier (index [`Tier::index`]); `None` where a tier has no
/// open task.
pub type TierWorst = [Option<f64>; 3];

/// A proposal and its odds, as computed when it was made.
#[derive(Debug, Clone, PartialEq)]
pub struct ProposalOdds {
    /// The record that proposed it (for `--recompute`: the record after
    /// which it was computed).
    pub seq: u64,
    pub moves: Vec<Move>,
    /// Worst odds per tier if the moves were made.
    pub worst: TierWorst,
    /// Worst odds of all open tasks if the moves were made.
    pub min_odds: Option<f64>,
}

/// A task closed with an outcome, and the odds the ground gave it just
/// before it closed.
#[derive(Debug, Clone, PartialEq)]
pub struct ClosedTask {
    pub task: String,
    pub tier: Tier,
    pub outcome: crate::log::OutcomeValue,
    /// The forecast that stood while the task was worked (see [`Stood`]).
    pub predicted: f64,
    /// The record after which those odds stood.
    pub predicted_seq: u64,
    /// True when the task's units were released to reserve before it was
    /// closed, so the forecast is the one from before the release.
    pub released_before_close: bool,
}

/// The odds that stood on a task while it was worked: updated after every
/// record that changes them, except while the task's units are being
/// released to reserve (a unit leaving it for reserve, still in service,
/// with no replacement) — a crew sent back before `task_closed` must not
/// turn a success into a forecast of 0. Units arriving again resume it.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Stood {
    pub odds: f64,
    pub seq: u64,
    pub frozen: bool,
}

/// One row of the timeline.
#[derive(Debug, Clone, PartialEq)]
pub struct Row {
    pub seq: u64,
    pub at: DateTime<Utc>,
    pub by: String,
    pub kind: &'static str,
    /// The event in words.
    pub words: String,
    /// Worst ground odds per tier after the record.
    pub worst: TierWorst,
    /// Worst ground odds of all open tasks after the record.
    pub min_odds: Option<f64>,
    /// Joint ground odds per tier (every open task of the tier at once).
    pub joint: TierWorst,
    /// Joint ground odds of every open task (`None` when none is open).
    pub joint_all: Option<f64>,
    /// The proposal in force after the record (the last `plan_proposed` not
    /// yet accepted or rejected).
    pub proposal: Option<ProposalOdds>,
    /// Set on the `task_closed` rows.
    pub closed: Option<ClosedTask>,
}

/// Walks a log record by record. Create it from the snapshot record, then
/// [`TimelineWalker::step`] each following record in order.
#[derive(Debug, Clone)]
pub struct TimelineWalker {
    replay: Replay,
    tallies: Vec<TaskTally>,
    /// Ground odds per task (closed tasks included; they are skipped).
    odds: Vec<TaskOdds>,
    proposal: Option<ProposalOdds>,
    /// The forecast that stood per task (index = task index).
    stood: Vec<Stood>,
    /// Joint ground odds per tier and of all open tasks, recomputed only
    /// after records that change some task's odds.
    joint: (TierWorst, Option<f64>),
}

/// Joint odds of the ground per tier and of all open tasks.
fn joint_of(state: &Incident) -> (TierWorst, Option<f64>) {
    let j = joint_by_tier(state, &state.placement, JointOptions::default());
    let mut tiers: TierWorst = [None; 3];
    for (tier, o) in &j.tiers {
        tiers[tier.index()] = Some(o.odds());
    }
    let any_open = state.tasks.iter().any(|t| t.is_open());
    (tiers, any_open.then(|| j.all.odds()))
}

fn task_odds(state: &Incident, tally: &TaskTally, t: TaskIdx) -> TaskOdds {
    tally.task_odds(t, &state.tasks[t], state.placement.units_on(t).collect())
}

/// Worst odds per tier and overall of the open tasks, odds given by `odds_of`.
pub fn worst_by_tier(
    state: &Incident,
    odds_of: impl Fn(TaskIdx) -> f64,
) -> (TierWorst, Option<f64>) {
    let mut worst: TierWorst = [None; 3];
    let mut all: Option<f64> = None;
    for (t, task) in state.tasks.iter().enumerate() {
        let t = crate::model::TaskIdx::new(t);
        if !task.is_open() {
            continue;
        }
        let p = odds_of(t);
        let w = &mut worst[task.tier.index()];
        *w = Some(w.map_or(p, |x: f64| x.min(p)));
        all = Some(all.map_or(p, |x: f64| x.min(p)));
    }
    (worst, all)
}

impl TimelineWalker {
    /// Starts from the snapshot record; returns the walker and its row.
    pub fn start(first: &Record) -> Result<(TimelineWalker, Row), LogError> {
        let replay = Replay::start(first)?;
        let state = &replay.state;
        let tallies = tallies(state, &state.placement);
        let odds: Vec<TaskOdds> = crate::model::TaskIdx::range(state.tasks.len())
            .map(|t| task_odds(state, &tallies[t], t))
            .collect();
        let joint = joint_of(state);
        let stood = odds
            .iter()
            .map(|o: &TaskOdds| Stood {
                odds: o.odds(),
                seq: first.seq,
                frozen: false,
            })
            .collect();
        let walker = TimelineWalker {
            replay,
            tallies,
            odds,
            stood,
            proposal: None,
            joint,
        };
        let row = walker.row(first, None);
        Ok((walker, row))
    }

    /// The state after the last record stepped.
    pub fn state(&self) -> &Incident {
        &self.replay.state
    }
    /// Notes and pending plan so far.
    pub fn replay(&self) -> &Replay {
        &self.replay
    }
    /// Ground odds per task after the last record (index = task index).
    pub fn ground(&self) -> &[TaskOdds] {
        &self.odds
    }

    /// Replaces the proposal in force (used by `--recompute`).
    pub fn set_proposal(&mut self, p: Option<ProposalOdds>) {
        self.proposal = p;
    }

    fn row(&self, r: &Record, closed: Option<ClosedTask>) -> Row {
        let state = &self.replay.state;
        let (worst, min_odds) = worst_by_tier(state, |t| self.odds[t].odds());
        Row {
            seq: r.seq,
            at: r.at,
            by: r.by.clone(),
            kind: r.event.kind(),
            words: r.event.describe(),
            worst,
            min_odds,
            joint: self.joint.0,
            joint_all: self.joint.1,
            proposal: self.proposal.clone(),
            closed,
        }
    }

    /// Applies the next record and returns its row. After an error the walker
    /// must not be used further (the log is damaged).
    pub fn step(&mut self, r: &Record) -> Result<Row, LogError> {
        let touched = touched_units(&self.replay.state, &r.event);
        let mut dirty: Vec<TaskIdx> = Vec::new();
        let closed = match &r.event {
            Event::TaskClosed { task, outcome } => {
                self.replay.state.task_idx(task).map(|t| ClosedTask {
                    task: task.clone(),
                    tier: self.replay.state.tasks[t].tier,
                    outcome: *outcome,
                    predicted: self.stood[t].odds,
                    predicted_seq: self.stood[t].seq,
                    released_before_close: self.stood[t].frozen,
                })
            }
            _ => None,
        };
        // Take the touched units out of their tallies with their old
        // ratings, before the event changes them.
        {
            let state = &self.replay.state;
            for id in &touched {
                if let Some(u) = state.unit_idx(id)
                    && let Some(t) = state.placement.get(u)
                {
                    self.tallies[t].remove(state, u);
                    dirty.push(t);
                }
            }
        }
        let ground_before = self.replay.state.placement.clone();
        self.replay.step(r)?;
        let state = &self.replay.state;
        for id in &touched {
            if let Some(u) = state.unit_idx(id)
                && let Some(t) = state.placement.get(u)
            {
                self.tallies[t].add(state, u);
                dirty.push(t);
            }
        }
        match &r.event {
            Event::TaskAdded { .. } => {
                let t = TaskIdx::new(state.tasks.len() - 1);
                self.tallies.push(TaskTally::for_incident(state));
                self.odds.push(task_odds(state, &self.tallies[t], t));
                self.stood.push(Stood {
                    odds: self.odds[t].odds(),
                    seq: r.seq,
                    frozen: false,
                });
                dirty.push(t);
            }
            Event::NeedChanged { task, .. } | Event::TaskClosed { task, .. } => {
                if let Some(t) = state.task_idx(task) {
                    dirty.push(t);
                }
            }
            _ => {}
        }
        dirty.sort_unstable();
        dirty.dedup();
        if !dirty.is_empty() {
            self.joint = joint_of(state);
        }
        for t in dirty {
            self.odds[t] = task_odds(state, &self.tallies[t], t);
            if !state.tasks[t].is_open() {
                continue;
            }
            let on = |p: &crate::model::Placement| p.units_on(t).count();
            let (before, after) = (on(&ground_before), on(&state.placement));
            let released = ground_before.0.iter().enumerate().any(|(u, &p)| {
                let u = crate::model::UnitIdx::new(u);
                p == Some(t)
                    && state.placement.get(u).is_none()
                    && state.units[u].status == crate::model::UnitStatus::Available
            });
            let s = &mut self.stood[t];
            if after < before && released {
                s.frozen = true;
            } else if after > before {
                s.frozen = false;
            }
            if !s.frozen {
                s.odds = self.odds[t].odds();
                s.seq = r.seq;
            }
        }
        match &r.event {
            Event::PlanProposed { moves } => {
                self.proposal = Some(self.proposal_odds(r.seq, moves));
            }
            Event::PlanAccepted { .. } | Event::PlanRejected {} => self.proposal = None,
            _ => {}
        }
        Ok(self.row(r, closed))
    }

    /// Odds of the ground with `moves` made, from copies of only the tallies
    /// the moves touch.
    pub fn proposal_odds(&self, seq: u64, moves: &[Move]) -> ProposalOdds {
        let state = &self.replay.state;
        let mut changed: Vec<(TaskIdx, TaskTally)> = Vec::new();
        let tally_of = |t: TaskIdx, changed: &mut Vec<(TaskIdx, TaskTally)>| -> usize {
            if let Some(i) = changed.iter().position(|(ct, _)| *ct == t) {
                i
            } else {
                changed.push((t, self.tallies[t].clone()));
                changed.len() - 1
            }
        };
        for m in moves {
            let Some(u) = state.unit_idx(&m.unit) else {
                continue;
            };
            let from = state.placement.get(u);
            let to = m.to.as_deref().and_then(|t| state.task_idx(t));
            if let Some(f) = from {
                let i = tally_of(f, &mut changed);
                changed[i].1.remove(state, u);
            }
            if let Some(t) = to {
                let i = tally_of(t, &mut changed);
                changed[i].1.add(state, u);
            }
        }
        let ln = |t: TaskIdx| -> f64 {
            match changed.iter().find(|(ct, _)| *ct == t) {
                Some((_, tally)) => tally.ln_odds(&state.tasks[t]).exp(),
                None => self.odds[t].odds(),
            }
        };
        let (worst, min_odds) = worst_by_tier(state, ln);
        ProposalOdds {
            seq,
            moves: moves.to_vec(),
            worst,
            min_odds,
        }
    }
}

/// Replays `records` into rows (the first must be the snapshot).
pub fn timeline(records: &[Record]) -> Result<Vec<Row>, LogError> {
    let Some((first, rest)) = records.split_first() else {
        return Ok(Vec::new());
    };
    let (mut walker, row) = TimelineWalker::start(first)?;
    let mut rows = Vec::with_capacity(records.len());
    rows.push(row);
    for r in rest {
        rows.push(walker.step(r)?);
    }
    Ok(rows)
}
