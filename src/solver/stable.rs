//! Stable re-plan, heuristic side (SPEC §3 Stability): among plans whose
//! worst capped odds in each tier are within the slack of the best plan's,
//! few moves from the ground, then the better key.
//!
//! Two candidates, the one with fewer moves (then the better key) wins:
//! 1. the best plan, with moved units sent back to their ground places one by
//!    one while the thresholds still hold;
//! 2. the ground itself, repaired by best-improvement steps around the tasks
//!    below their thresholds until all reach them, then pruned the same way.

use super::Budget;
use super::key::{counts, ln_cap};
use super::search::{Ctx, State, apply_step, at_least};
use crate::model::{Placement, TaskIdx};

/// Worst capped ln odds per tier must reach these.
pub type Thresholds = [Option<f64>; 3];

pub fn meets(ctx: &Ctx, ln: &[f64], thr: &Thresholds) -> bool {
    let inc = ctx.inc;
    (0..inc.tasks.len()).all(|t| {
        if !counts(inc, t) {
            return true;
        }
        let tier = inc.tasks[t].tier;
        thr[tier.index()].is_none_or(|th| at_least(ln[t].min(ln_cap(inc, tier)), th))
    })
}

fn moves(state: &State, ground: &[Option<TaskIdx>]) -> usize {
    state
        .place
        .iter()
        .zip(ground)
        .filter(|(a, b)| a != b)
        .count()
}

/// Sends moved units back to their ground places while the thresholds hold.
pub fn prune_toward_ground(
    ctx: &Ctx,
    state: &mut State,
    ground: &[Option<TaskIdx>],
    thr: &Thresholds,
) {
    let inc = ctx.inc;
    loop {
        let mut changed = false;
        for &u in &ctx.movable {
            let (from, to) = (state.place[u], ground[u]);
            if from == to {
                continue;
            }
            if let Some(t) = to
                && (!ctx.allowed_on[u][t] || state.tallies[t].count() >= ctx.max_units[t])
            {
                continue;
            }
            if from.is_none() && state.reserve <= ctx.reserve_min {
                continue;
            }
            state.apply_move(inc, u, to);
            if meets(ctx, &state.ln, thr) {
                changed = true;
            } else {
                state.apply_move(inc, u, from);
            }
        }
        if !changed {
            return;
        }
    }
}

/// The heuristic stable plan; `best` is the best plan found (it meets the
/// thresholds by construction).
pub fn stable_plan(
    ctx: &Ctx,
    ground: &Placement,
    best: &State,
    thr: &Thresholds,
    budget: &Budget,
) -> State {
    let inc = ctx.inc;
    let g = &ground.0;
    let mut from_best = best.clone();
    prune_toward_ground(ctx, &mut from_best, g, thr);

    let mut from_ground = State::new(ctx, &ctx.repair(ground));
    let mut iterations = 0;
    let mut ok = meets(ctx, &from_ground.ln, thr);
    let step_limit = 4 * inc.units.len() + 16;
    for _ in 0..step_limit {
        if ok || budget.exhausted() {
            break;
        }
        match super::search::best_step(ctx, &mut from_ground, &mut iterations) {
            Some(step) => {
                let before = from_ground.key(inc);
                let undo = apply_step(inc, &mut from_ground, step);
                if !from_ground.key(inc).better_than(&before) {
                    apply_step(inc, &mut from_ground, undo);
                    break;
                }
            }
            None => break,
        }
        ok = meets(ctx, &from_ground.ln, thr);
    }
    if ok {
        prune_toward_ground(ctx, &mut from_ground, g, thr);
        let (ma, mb) = (moves(&from_ground, g), moves(&from_best, g));
        let better = ma < mb || (ma == mb && from_ground.key(inc).better_than(&from_best.key(inc)));
        if better {
            return from_ground;
        }
    }
    from_best
}
