//! Comparison baselines (SPEC §3). Each returns a feasible placement built
//! from scratch (pins kept, reserve kept); the caller scores it with the same
//! odds model and [`super::ObjectiveKey`], so the user sees what the
//! risk-adaptive plan gains.
//!
//! * [`expected_value`] (risk-neutral): maximise the minimum over tasks of
//!   min_k(mean_jk / need_jk), spread ignored;
//! * [`mean_minus_spread`] (risk-averse): the same with mean − λ·sd in place
//!   of the mean (sd with the within-type correlation);
//! * [`random_feasible`]: every movable unit to a uniformly drawn option
//!   among those still open to it (seeded).
//!
//! The two deterministic baselines use the same greedy fill and
//! best-improvement local search as the anytime solver, but on their own
//! score (a max-min over tasks, ties broken by the next worst), so they are
//! as good at their objective as the solver is at its own.

use super::search::Ctx;
use crate::model::{Incident, Placement, TaskIdx, UnitIdx};
use crate::odds::TaskTally;
use rand::rngs::Xoshiro256PlusPlus;
use rand::{RngExt, SeedableRng};

/// Coverage of a task under a baseline: min over counting traits of
/// (mean − λ·sd)/need (the need's own sd added to the spread); tasks that
/// cannot count (below `min_units`, no units) score −∞ and tasks with no
/// counting need +∞.
fn coverage(inc: &Incident, t: TaskIdx, tally: &TaskTally, lambda: f64) -> f64 {
    let task = &inc.tasks[t];
    if tally.forced_zero(task).is_some() {
        return f64::NEG_INFINITY;
    }
    task.needs
        .iter()
        .enumerate()
        .filter(|(_, n)| n.counts())
        .map(|(k, n)| {
            let sd = crate::odds::total_sd(tally.unit_var(k), n.sd);
            let have = tally.mean(k) - lambda * sd;
            if n.need > 0.0 {
                have / n.need
            } else {
                // Only the need's spread counts: scale by it instead.
                have / n.sd.max(f64::MIN_POSITIVE)
            }
        })
        .fold(f64::INFINITY, f64::min)
}

/// Max-min of [`coverage`] with greedy fill and single-unit improvement.
fn coverage_plan(incident: &Incident, lambda: f64) -> Placement {
    let ctx = Ctx::new(incident);
    let inc = incident;
    let mut place = ctx.repair(&Placement::all_reserve(inc.units.len()));
    let mut tallies = crate::odds::tallies(inc, &place);
    let open: Vec<TaskIdx> = crate::model::TaskIdx::range(inc.tasks.len())
        .filter(|&t| inc.tasks[t].is_open())
        .collect();
    let mut score: Vec<f64> = crate::model::TaskIdx::range(inc.tasks.len())
        .map(|t| coverage(inc, t, &tallies[t], lambda))
        .collect();
    let mut reserve = ctx
        .movable
        .iter()
        .filter(|&&u| place.get(u).is_none())
        .count() as u32;
    // Greedy: the worst task that some reserve unit improves takes the unit
    // that improves it most.
    loop {
        if !ctx.may_draw_reserve(reserve) {
            break;
        }
        let mut order = open.clone();
        order.sort_by(|&a, &b| {
            score[a]
                .partial_cmp(&score[b])
                .unwrap_or(std::cmp::Ordering::Equal)
        });
        let mut chosen: Option<(UnitIdx, TaskIdx)> = None;
        for &t in &order {
            if ctx.is_full(t, tallies[t].count()) {
                continue;
            }
            let mut best: Option<(UnitIdx, f64)> = None;
            for &u in &ctx.movable {
                if place.get(u).is_some() || !ctx.allowed_on[u][t] {
                    continue;
                }
                tallies[t].add(inc, u);
                let s = coverage(inc, t, &tallies[t], lambda);
                tallies[t].remove(inc, u);
                let below_min = score[t] == f64::NEG_INFINITY;
                if (below_min || s > score[t]) && best.is_none_or(|(_, b)| s > b) {
                    best = Some((u, s));
                }
            }
            if let Some((u, _)) = best {
                chosen = Some((u, t));
                break;
            }
        }
        let Some((u, t)) = chosen else { break };
        place.set(u, Some(t));
        tallies[t].add(inc, u);
        score[t] = coverage(inc, t, &tallies[t], lambda);
        reserve -= 1;
    }
    // Improvement: move one unit from a task to the worst task while that
    // raises the minimum (bounded number of passes).
    for _ in crate::model::UnitIdx::range(inc.units.len()) {
        let Some(&worst) = open.iter().min_by(|&&a, &&b| {
            score[a]
                .partial_cmp(&score[b])
                .unwrap_or(std::cmp::Ordering::Equal)
        }) else {
            break;
        };
        if ctx.is_full(worst, tallies[worst].count()) {
            break;
        }
        let mut best: Option<(UnitIdx, TaskIdx, f64, f64)> = None;
        for &u in &ctx.movable {
            let Some(from) = place.get(u) else { continue };
            if from == worst || !ctx.allowed_on[u][worst] {
                continue;
            }
            tallies[from].remove(inc, u);
            tallies[worst].add(inc, u);
            let (sf, sw) = (
                coverage(inc, from, &tallies[from], lambda),
                coverage(inc, worst, &tallies[worst], lambda),
            );
            tallies[worst].remove(inc, u);
            tallies[from].add(inc, u);
            let new_min = sf.min(sw);
            if new_min > score[worst] && best.is_none_or(|b| new_min > b.2.min(b.3)) {
                best = Some((u, from, sf, sw));
            }
        }
        let Some((u, from, sf, sw)) = best else { break };
        tallies[from].remove(inc, u);
        tallies[worst].add(inc, u);
        place.set(u, Some(worst));
        score[from] = sf;
        score[worst] = sw;
    }
    place
}

/// Risk-neutral baseline: max-min of expected coverage, spread ignored.
pub fn expected_value(incident: &Incident) -> Placement {
    coverage_plan(incident, 0.0)
}

/// Risk-averse baseline: max-min of (mean − λ·sd)/need.
pub fn mean_minus_spread(incident: &Incident, lambda: f64) -> Placement {
    coverage_plan(incident, lambda)
}

/// A random feasible placement: movable units in a seeded random order, each
/// to a uniformly drawn option (reserve or an accepting task with room),
/// reserve kept at its minimum.
pub fn random_feasible(incident: &Incident, seed: u64) -> Placement {
    let ctx = Ctx::new(incident);
    let mut rng = Xoshiro256PlusPlus::seed_from_u64(seed);
    let mut place = ctx.repair(&Placement::all_reserve(incident.units.len()));
    let mut count = vec![0u32; incident.tasks.len()];
    for t in place.0.iter().flatten() {
        count[*t] += 1;
    }
    let mut units = ctx.movable.clone();
    // Fisher–Yates.
    for i in (1..units.len()).rev() {
        let j = rng.random_range(0..=i);
        units.swap(i, j);
    }
    // The first `reserve_min` units of the shuffled order stay in reserve.
    for &u in units.iter().skip(ctx.reserve_min as usize) {
        let options: Vec<Option<TaskIdx>> = std::iter::once(None)
            .chain(
                ctx.allowed[u]
                    .iter()
                    .filter(|&&t| !ctx.is_full(t, count[t]))
                    .map(|&t| Some(t)),
            )
            .collect();
        let pick = options[rng.random_range(0..options.len())];
        if let Some(t) = pick {
            count[t] += 1;
        }
        place.set(u, pick);
    }
    place
}
