//! Stable re-plan (SPEC §3 Stability): few moves from the ground among the
//! plans within the slack of the best, then the better key.
//!
//! **Sequential slack.** The thresholds are set tier by tier, highest first:
//!
//! * b_life = the best worst capped life odds of any plan (the best key's
//!   first entry);
//! * b_stab = the best worst capped stabilization odds over the plans whose
//!   worst capped life odds are at least (1 − slack)·b_life;
//! * b_prop = the best worst capped property odds over the plans that meet
//!   both thresholds above.
//!
//! A plan is within the slack when each tier's worst capped odds reach
//! (1 − slack)·b of that tier. The slack granted to a higher tier frees
//! units (the ground often keeps a life task a little below the best plan's
//! odds without the unit that lifted it); measuring a lower tier against the
//! best plan's, which spent that unit above, would let the ground leave a
//! lower task at poor odds with units idle in reserve. Each b is at least
//! the best plan's own worst odds in that tier (the best plan meets every
//! threshold above it), so the plans accepted also lie within the slack of
//! the best plan in every tier.
//!
//! Each b is found as the best key with the tiers above held at their
//! thresholds: capping a tier at its threshold (in ln space) makes every
//! plan that meets it tie on that tier, so the key then ranks by the next
//! tier's worst capped odds first. The same searches as for the best key do
//! the work ([`super::search::local_search`], and on small incidents
//! [`super::exact::branch_and_bound`] with proof).
//!
//! Then the fewest moves: exactly by branch and bound when every search
//! before it was exhaustive, otherwise the better of two heuristic
//! candidates (fewer moves, then better key):
//! 1. the plan that set the last threshold, with moved units sent back to
//!    their ground places one by one while the thresholds still hold;
//! 2. the ground itself, repaired by best-improvement steps (ranked with
//!    every tier capped at its threshold, so the tasks below their
//!    thresholds come first) until all reach them, then pruned the same way.

use super::exact::{self, Goal, Incumbent};
use super::key::{ObjectiveKey, counts, ln_cap};
use super::search::{Ctx, SearchLimits, State, apply_step, at_least, local_search};
use super::{Budget, moves_between};
use crate::model::{Placement, TaskIdx};

/// Worst capped ln odds per tier must reach these.
pub type Thresholds = [Option<f64>; 3];

/// Does every counted task reach its tier's threshold (capped at its
/// secure level)?
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

/// The heuristic stable plan under `ctx`'s own caps for the final key;
/// `leader` must meet the thresholds.
pub fn stable_plan(
    ctx: &Ctx,
    ground: &Placement,
    leader: &State,
    thr: &Thresholds,
    budget: &Budget,
) -> State {
    let inc = ctx.inc;
    let g = &ground.0;
    let mut from_leader = leader.clone();
    prune_toward_ground(ctx, &mut from_leader, g, thr);

    // Repair steps are ranked with every tier capped at its threshold: a
    // task below its threshold is then a bottleneck, one above is done.
    let mut caps = ctx.caps;
    for (c, t) in caps.iter_mut().zip(thr) {
        if let Some(t) = t {
            *c = c.min(*t);
        }
    }
    let held = ctx.with_caps(caps);
    let mut from_ground = State::new(ctx, &ctx.repair(ground));
    let mut iterations = 0;
    let mut ok = meets(ctx, &from_ground.ln, thr);
    let step_limit = 4 * inc.units.len() + 16;
    for _ in 0..step_limit {
        if ok || budget.exhausted() {
            break;
        }
        match super::search::best_step(&held, &mut from_ground, &mut iterations) {
            Some(step) => {
                let before = from_ground.key(&held);
                let undo = apply_step(inc, &mut from_ground, step);
                if !from_ground.key(&held).better_than(&before) {
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
        let (ma, mb) = (moves(&from_ground, g), moves(&from_leader, g));
        let better =
            ma < mb || (ma == mb && from_ground.key(ctx).better_than(&from_leader.key(ctx)));
        if better {
            return from_ground;
        }
    }
    from_leader
}

/// How the stable re-plan runs.
pub struct StableSettings {
    pub slack: f64,
    pub seed: u64,
    /// Run the exact searches (the best key was proven).
    pub exact: bool,
    pub node_limit: u64,
    /// Stale rounds of each heuristic local search when not exact.
    pub stale_rounds: u64,
}

pub struct StableOutcome {
    pub state: State,
    /// Every threshold and the fewest moves were found by exhaustive search.
    pub proven: bool,
    pub iterations: u64,
    pub stopped_by_budget: bool,
    /// The thresholds used (ln), per tier.
    pub thresholds: Thresholds,
}

/// Worst capped ln odds of `tier` (original caps), `None` if it has no
/// counted task.
fn tier_worst(ctx: &Ctx, ln: &[f64], tier: usize) -> Option<f64> {
    ObjectiveKey::from_ln_odds(ctx.inc, ln).worst_capped_ln_per_tier()[tier]
}

/// The stable re-plan from `best` (the best plan found, with key
/// `best_key`): sequential thresholds, then the fewest moves from `ground`.
/// Folds an exact search's effort into the re-plan's (nodes, proof, budget)
/// and returns the plan it found, if any.
fn absorb(
    out: exact::ExactOutcome,
    iterations: &mut u64,
    proven: &mut bool,
    stopped_by_budget: &mut bool,
) -> Option<State> {
    *iterations += out.nodes;
    *proven &= out.complete;
    *stopped_by_budget |= !out.complete;
    out.best.map(|x| x.state)
}

pub fn stable_replan(
    ctx: &Ctx,
    ground: &Placement,
    best: &State,
    best_key: &ObjectiveKey,
    settings: &StableSettings,
    budget: &Budget,
) -> StableOutcome {
    let inc = ctx.inc;
    let ln_keep = (1.0 - settings.slack.clamp(0.0, 1.0)).ln();
    let mut thr: Thresholds = [None; 3];
    let mut caps = ctx.caps;
    let mut leader = best.clone();
    let mut iterations = 0u64;
    let mut proven = settings.exact;
    let mut stopped_by_budget = false;
    let mut upper_held = false;
    let first_worst = best_key.worst_capped_ln_per_tier();
    for tier in 0..3 {
        let Some(mut b) = first_worst[tier] else {
            continue;
        };
        // Only a tier below some held tier can gain, and only when short of
        // its secure level.
        if upper_held && !at_least(b, ctx.caps[tier]) && budget.exhausted() {
            // No time to search: the best plan's own odds set the threshold.
            proven = false;
            stopped_by_budget = true;
        } else if upper_held && !at_least(b, ctx.caps[tier]) {
            let held = ctx.with_caps(caps);
            let limits = if settings.exact {
                SearchLimits {
                    stale_rounds: 10,
                    max_rounds: 30,
                }
            } else {
                SearchLimits {
                    stale_rounds: settings.stale_rounds,
                    max_rounds: u64::MAX,
                }
            };
            // Heuristic searches share what is left of the budget: each
            // tier search up to 15 % more of it, the rest for the moves.
            let share = budget.share(0.55 + 0.15 * tier as f64);
            let tier_budget = if settings.exact { budget } else { &share };
            let seed = settings.seed ^ (0x7469_6572 + tier as u64);
            let out = local_search(
                &held,
                State::new(&held, &leader.placement()),
                seed,
                &limits,
                tier_budget,
                &mut |_, _, _| {},
            );
            iterations += out.iterations;
            stopped_by_budget |= out.stopped_by_budget;
            leader = out.best;
            if settings.exact && proven && !budget.exhausted() {
                let key = leader.key(&held);
                let out = exact::branch_and_bound(
                    &held,
                    Goal::Key,
                    Some(Incumbent {
                        state: leader.clone(),
                        key,
                        moves: 0,
                    }),
                    budget,
                    settings.node_limit,
                    &mut |_, _| {},
                );
                if let Some(x) = absorb(out, &mut iterations, &mut proven, &mut stopped_by_budget) {
                    leader = x;
                }
            } else {
                proven = false;
            }
            // Fresh sums: the threshold is read from them.
            leader = State::new(ctx, &leader.placement());
            b = tier_worst(ctx, &leader.ln, tier).unwrap_or(b);
        }
        let t = b + ln_keep;
        thr[tier] = Some(t);
        caps[tier] = caps[tier].min(t);
        upper_held = true;
    }

    let mut chosen = stable_plan(ctx, ground, &leader, &thr, budget);
    // Recompute from scratch: the result is scored with fresh sums.
    chosen = State::new(ctx, &chosen.placement());
    if settings.exact && proven && !budget.exhausted() {
        let g: Vec<Option<TaskIdx>> = (0..inc.units.len()).map(|u| ground.get(u)).collect();
        let moves = moves_between(ground, &chosen.placement()).len();
        let key = chosen.key(ctx);
        let out = exact::branch_and_bound(
            ctx,
            Goal::FewestMoves {
                ground: g,
                thresholds: thr,
            },
            Some(Incumbent {
                state: chosen.clone(),
                key,
                moves,
            }),
            budget,
            settings.node_limit,
            &mut |_, _| {},
        );
        if let Some(x) = absorb(out, &mut iterations, &mut proven, &mut stopped_by_budget) {
            chosen = x;
        }
    } else {
        proven = false;
    }
    StableOutcome {
        state: chosen,
        proven,
        iterations,
        stopped_by_budget,
        thresholds: thr,
    }
}
