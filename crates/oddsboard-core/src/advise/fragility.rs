//! Fragility: what the loss of one placed unit would cost, and how many
//! losses each task can absorb before it leaves its secure level.
//!
//! **One loss** ([`unit_losses`]): for every unit placed on the ground, the
//! unit is removed from a copy of the incident (as a `unit_lost` event
//! would: [`Incident::remove_unit`]) and the rest re-placed by the stable
//! re-plan ([`solve`], not from scratch), warm-started from the baseline plan
//! without that unit, with a small budget ([`AdviseOptions::per_loss_budget`]).
//! The figures are the worst odds per tier of that re-plan. Losses are ranked
//! by the re-plan's [`ObjectiveKey`], worst first: the one ranking of plans.
//! On incidents small enough for the exact search the re-plan is proven, and
//! with slack 0 its worst capped odds per tier are the optimum after the
//! loss; otherwise they are the best found within the budget.
//!
//! A **single point of failure** is a unit whose loss takes a life-safety
//! task that is at its secure level in the baseline plan below it, or a
//! life-safety task on the hedge side to the gamble side.
//!
//! **Absorbable losses** ([`task_absorbs`]) are a greedy heuristic, not an
//! exact worst case: starting from the baseline plan, the task repeatedly
//! loses the unit on it whose removal lowers its odds most (judged before
//! re-planning), then everything is re-planned as above; the count is the
//! number of losses taken while the task stays at its secure level. The true
//! worst case is the minimum over every order of losses, so with exact
//! re-plans the greedy count is an upper bound on it (greedy follows one
//! order). The count stops at [`ABSORB_CAP`].
//!
//! Both run under a time limit ([`AdviseOptions::loss_time_limit`],
//! [`AdviseOptions::absorb_time_limit`]), most important tier first, so a very
//! large incident gets advice in bounded time: what the limit left out is
//! counted and said, never silently dropped.

use super::{AdviseError, AdviseOptions, TierOdds, tier_odds};
use crate::model::{Incident, Placement, TaskIdx, Tier, UnitIdx};
use crate::odds::{Regime, evaluate_task, tallies};
use crate::solver::key::{cmp_ln, ln_cap};
use crate::solver::{ObjectiveKey, SolveReport, solve};
use serde::Serialize;
use std::cmp::Ordering;
use std::sync::atomic::AtomicBool;
use std::time::Instant;

/// Absorbable losses are counted up to this many.
pub const ABSORB_CAP: u32 = 8;

/// What losing one placed unit would cost.
#[derive(Debug, Clone, Serialize)]
pub struct UnitLoss {
    pub unit: String,
    pub unit_type: String,
    /// The task it is on now.
    pub task: String,
    /// Worst odds per tier of the re-plan after the loss.
    pub after: Vec<TierOdds>,
    /// Tasks at their secure level in the baseline plan that fall below it.
    pub leaves_secure: Vec<String>,
    /// Tasks on the hedge side in the baseline plan that go to the gamble
    /// side.
    pub to_gamble: Vec<String>,
    /// A life-safety task leaves its secure level or goes to the gamble side.
    pub single_point_of_failure: bool,
    /// Moves of the re-plan after the loss, counted from the ground.
    pub moves: usize,
    /// Of those, units taken off open tasks they are working.
    pub withdrawals: usize,
    /// Of those, units sent to a task from reserve.
    pub dispatches: usize,
    /// The re-plan after the loss is proven optimal.
    pub proven_optimal: bool,
    /// Set when no plan meets the constraints after the loss (e.g. the
    /// reserve minimum); such a loss ranks first.
    pub infeasible: Option<String>,
    #[serde(skip)]
    key: Option<ObjectiveKey>,
}

/// How many losses a task can absorb.
#[derive(Debug, Clone, Serialize)]
pub struct TaskAbsorb {
    pub task: String,
    pub tier: &'static str,
    /// Units on the task in the baseline plan.
    pub units: usize,
    /// The task is at its secure level in the baseline plan.
    pub secure_now: bool,
    /// Losses taken while it stays secure (greedy, see the module docs);
    /// `null` when it is not secure now or has no needs.
    pub absorbs: Option<u32>,
    /// The count reached [`ABSORB_CAP`]: it absorbs at least that many.
    pub at_least: bool,
    /// The units lost, in the greedy order.
    pub sequence: Vec<String>,
    /// The absorb time limit was reached before this task's turn.
    pub not_assessed: bool,
}

struct TaskState {
    ln: f64,
    regime: Option<Regime>,
}

fn task_states(incident: &Incident, placement: &Placement) -> Vec<TaskState> {
    crate::model::TaskIdx::range(incident.tasks.len())
        .map(|t| {
            let o = evaluate_task(incident, placement, t);
            TaskState {
                ln: o.ln_odds,
                regime: o.regime(),
            }
        })
        .collect()
}

fn is_secure(incident: &Incident, t: TaskIdx, ln: f64) -> bool {
    cmp_ln(ln, ln_cap(incident, incident.tasks[t].tier)) != Ordering::Less
}

/// The placement with unit `u` gone (`remove_unit` keeps every index).
fn without(p: &Placement, u: UnitIdx) -> Placement {
    let mut v = p.clone();
    v.set(u, None);
    v
}

/// The stable re-plan of `incident`, warm-started from `warm`.
fn replan(
    incident: &Incident,
    warm: Placement,
    options: &AdviseOptions,
    cancel: &AtomicBool,
) -> Result<SolveReport, crate::solver::SolveError> {
    let mut opts = options.solve_options(options.per_loss_budget);
    opts.warm_start = Some(warm);
    solve(incident, &opts, cancel, &mut |_| {})
}

/// Units placed on the ground (on an open task), those on life-safety
/// tasks first, then stabilization, then property; roster order within a
/// tier.
pub fn placed_units(incident: &Incident) -> Vec<(UnitIdx, TaskIdx)> {
    let mut placed: Vec<(UnitIdx, TaskIdx)> = UnitIdx::range(incident.units.len())
        .filter_map(|u| incident.placement.get(u).map(|t| (u, t)))
        .filter(|&(_, t)| incident.tasks[t].is_open())
        .collect();
    placed.sort_by_key(|&(_, t)| incident.tasks[t].tier);
    placed
}

/// Fragility of the units placed on the ground (on an open task), most
/// costly loss first, as many as [`AdviseOptions::loss_time_limit`] allows
/// in the order of [`placed_units`]. `base` is the baseline plan of
/// `incident`.
pub fn unit_losses(
    incident: &Incident,
    base: &SolveReport,
    options: &AdviseOptions,
    cancel: &AtomicBool,
) -> Result<Vec<UnitLoss>, AdviseError> {
    let before = task_states(incident, &base.placement);
    let start = Instant::now();
    let mut out = Vec::new();
    for (u, on) in placed_units(incident) {
        if start.elapsed() >= options.loss_time_limit {
            break;
        }
        let unit = &incident.units[u];
        let mut lost = incident.clone();
        lost.remove_unit(u);
        let mut entry = UnitLoss {
            unit: unit.id.clone(),
            unit_type: incident.unit_types[unit.type_idx].id.clone(),
            task: incident.tasks[on].id.clone(),
            after: Vec::new(),
            leaves_secure: Vec::new(),
            to_gamble: Vec::new(),
            single_point_of_failure: false,
            moves: 0,
            withdrawals: 0,
            dispatches: 0,
            proven_optimal: false,
            infeasible: None,
            key: None,
        };
        match replan(&lost, without(&base.placement, u), options, cancel) {
            Err(e) => {
                entry.infeasible = Some(e.to_string());
                entry.single_point_of_failure = true;
            }
            Ok(report) => {
                let after = task_states(&lost, &report.placement);
                for (t, task) in incident.tasks.iter().enumerate() {
                    let t = crate::model::TaskIdx::new(t);
                    if !task.is_open() {
                        continue;
                    }
                    let life = task.tier == Tier::Life;
                    if is_secure(incident, t, before[t].ln) && !is_secure(incident, t, after[t].ln)
                    {
                        entry.leaves_secure.push(task.id.clone());
                        entry.single_point_of_failure |= life;
                    }
                    if before[t].regime == Some(Regime::Hedge)
                        && after[t].regime == Some(Regime::Gamble)
                    {
                        entry.to_gamble.push(task.id.clone());
                        entry.single_point_of_failure |= life;
                    }
                }
                entry.after = tier_odds(&lost, &report.key);
                entry.moves = report.moves.len();
                entry.withdrawals = report.disruption.withdrawals;
                entry.dispatches = report.disruption.dispatches;
                entry.proven_optimal = report.proven_optimal;
                entry.key = Some(report.key);
            }
        }
        out.push(entry);
    }
    // Worst re-plan first; an infeasible loss before everything. The sort
    // is stable, so equal keys keep roster order.
    out.sort_by(|a, b| match (&a.key, &b.key) {
        (None, None) => Ordering::Equal,
        (None, Some(_)) => Ordering::Less,
        (Some(_), None) => Ordering::Greater,
        (Some(x), Some(y)) => x.compare(y),
    });
    Ok(out)
}

/// Absorbable losses of every open task, life-safety tasks first (roster
/// order within a tier); see the module docs.
pub fn task_absorbs(
    incident: &Incident,
    base: &SolveReport,
    options: &AdviseOptions,
    cancel: &AtomicBool,
) -> Result<Vec<TaskAbsorb>, AdviseError> {
    let base_tallies = tallies(incident, &base.placement);
    let start = Instant::now();
    let mut out = Vec::new();
    let mut order: Vec<TaskIdx> = TaskIdx::range(incident.tasks.len())
        .filter(|&t| incident.tasks[t].is_open())
        .collect();
    order.sort_by_key(|&t| incident.tasks[t].tier);
    for t in order {
        let task = &incident.tasks[t];
        let units = base_tallies[t].count() as usize;
        let ln = base_tallies[t].ln_odds(task);
        let has_needs = task.needs.iter().any(|n| n.counts()) || task.min_units.is_some();
        let secure_now = is_secure(incident, t, ln);
        let mut entry = TaskAbsorb {
            task: task.id.clone(),
            tier: task.tier.as_str(),
            units,
            secure_now,
            absorbs: None,
            at_least: false,
            sequence: Vec::new(),
            not_assessed: false,
        };
        if secure_now && has_needs && start.elapsed() >= options.absorb_time_limit {
            entry.not_assessed = true;
        } else if secure_now && has_needs {
            let (count, at_least, sequence) = absorb_one(incident, base, t, options, cancel);
            entry.absorbs = Some(count);
            entry.at_least = at_least;
            entry.sequence = sequence;
        }
        out.push(entry);
    }
    Ok(out)
}

/// The greedy loss sequence of task `t`: (losses absorbed, cap reached,
/// units lost in order).
fn absorb_one(
    incident: &Incident,
    base: &SolveReport,
    t: TaskIdx,
    options: &AdviseOptions,
    cancel: &AtomicBool,
) -> (u32, bool, Vec<String>) {
    let mut inc = incident.clone();
    let mut plan = base.placement.clone();
    let mut sequence = Vec::new();
    let mut count = 0;
    let task = &incident.tasks[t];
    while count < ABSORB_CAP {
        // The unit whose removal hurts the task most, on the current plan.
        let mut tally = tallies(&inc, &plan).swap_remove(t.index());
        let on: Vec<UnitIdx> = plan.units_on(t).collect();
        let mut worst: Option<(UnitIdx, f64)> = None;
        for &u in &on {
            tally.remove(&inc, u);
            let ln = tally.ln_odds(task);
            tally.add(&inc, u);
            if worst.is_none_or(|(_, w)| cmp_ln(ln, w) == Ordering::Less) {
                worst = Some((u, ln));
            }
        }
        let Some((u, _)) = worst else {
            // Secure with no units (no needs left to meet): nothing to lose.
            return (count, true, sequence);
        };
        sequence.push(inc.units[u].id.clone());
        let warm = without(&plan, u);
        inc.remove_unit(u);
        let Ok(report) = replan(&inc, warm, options, cancel) else {
            return (count, false, sequence);
        };
        let ln = tallies(&inc, &report.placement)[t].ln_odds(task);
        if !is_secure(&inc, t, ln) {
            return (count, false, sequence);
        }
        count += 1;
        plan = report.placement;
    }
    (count, true, sequence)
}
