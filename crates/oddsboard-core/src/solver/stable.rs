//! The recommendation rule (SPEC §3 Stability, issue 10): acceptable plans,
//! then the least disruption.
//!
//! **Thresholds, entry by entry (sequential ε-lexicographic).** The capped
//! part of the key is a list of entries: tier by tier, the tasks' ln odds
//! capped at the tier's secure level, ascending. For entry e = 1, 2, … in
//! that order, best_e is the highest value entry e reaches over the feasible
//! plans that meet the thresholds of entries 1…e−1, and threshold_e =
//! best_e + ln(1 − slack). A plan is *acceptable* when every entry reaches
//! its threshold: no task, worst or not, is given up by more than the slack.
//! Slack 0 is plain leximin.
//!
//! best_e is found as the best key with the entries before it held at their
//! thresholds ([`ObjectiveKey::held`]): plans meeting them tie there, so the
//! key ranks by entry e first. On small incidents the branch and bound
//! proves it (nodes whose sorted bounds miss a threshold are cut); on large
//! ones the local search approximates it and the result is not proven.
//!
//! **Then the least disruption** among acceptable plans: fewest withdrawals
//! (a unit taken off an open task it is working), then fewest dispatches (a
//! unit sent to a task from reserve, or from a closed task), then the better
//! key. From scratch the disruption step is skipped: the best key among the
//! acceptable plans.

use super::Budget;
use super::exact::{self, Goal, Incumbent};
use super::key::{ObjectiveKey, counts, reaches};
use super::search::{Ctx, SearchLimits, State, apply_step, local_search};
use crate::model::{Incident, Placement, TaskIdx, UnitIdx};
use std::ops::Add;

/// What a plan disturbs on the ground. Ordered as the rule ranks it:
/// withdrawals first, then dispatches.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq, PartialOrd, Ord)]
pub struct Disruption {
    /// Units taken off an open task they are working (to another task or
    /// to reserve).
    pub withdrawals: usize,
    /// Units sent to a task from reserve (or from a closed task).
    pub dispatches: usize,
}

impl Add for Disruption {
    type Output = Disruption;
    fn add(self, o: Disruption) -> Disruption {
        Disruption {
            withdrawals: self.withdrawals + o.withdrawals,
            dispatches: self.dispatches + o.dispatches,
        }
    }
}

/// What sending one unit from `ground` to `to` disturbs.
pub fn unit_disruption(inc: &Incident, ground: Option<TaskIdx>, to: Option<TaskIdx>) -> Disruption {
    if ground == to {
        return Disruption::default();
    }
    match ground {
        Some(g) if g.index() < inc.tasks.len() && counts(inc, g) => Disruption {
            withdrawals: 1,
            dispatches: 0,
        },
        _ => Disruption {
            withdrawals: 0,
            dispatches: usize::from(to.is_some()),
        },
    }
}

/// What `plan` disturbs compared with `ground`.
pub fn disruption(inc: &Incident, ground: &Placement, plan: &Placement) -> Disruption {
    crate::model::UnitIdx::range(inc.units.len())
        .map(|u| unit_disruption(inc, ground.get(u), plan.get(u)))
        .fold(Disruption::default(), |a, b| a + b)
}

/// Thresholds of the capped entries, ln, one per entry in key order.
pub type Thresholds = Vec<f64>;

/// threshold = best + ln(1 − slack); −∞ stays −∞.
fn lowered(best: f64, ln_keep: f64) -> f64 {
    if best == f64::NEG_INFINITY {
        best
    } else {
        best + ln_keep
    }
}

/// The thresholds computed over a finite set of plans (their keys): the
/// rule applied to the plans found, as the heuristic path uses it.
pub fn thresholds_over(keys: &[ObjectiveKey], slack: f64) -> Thresholds {
    let ln_keep = (1.0 - slack.clamp(0.0, 1.0)).ln();
    let n = keys.first().map_or(0, ObjectiveKey::capped_len);
    let mut thr = Vec::with_capacity(n);
    for e in 0..n {
        let best = keys
            .iter()
            .filter(|k| k.meets(&thr))
            .map(|k| k.capped()[e])
            .fold(f64::NEG_INFINITY, f64::max);
        thr.push(lowered(best, ln_keep));
    }
    thr
}

fn meets(ctx: &Ctx, state: &State, thr: &[f64]) -> bool {
    ObjectiveKey::from_ln_odds(ctx.inc, &state.ln).meets(thr)
}

fn cost(ctx: &Ctx, state: &State, ground: &[Option<TaskIdx>]) -> Disruption {
    state
        .place
        .iter()
        .zip(ground)
        .map(|(p, g)| unit_disruption(ctx.inc, *g, *p))
        .fold(Disruption::default(), |a, b| a + b)
}

/// Sends units back to their ground places while the plan stays
/// acceptable: withdrawals are undone first, then dispatches. The first
/// pass over the units always runs; later passes and the pairs stop when
/// `budget` is spent (the plan stays acceptable, with more moves than it
/// might need): on very large incidents each check costs a sort of the key
/// and the pairs are quadratic in the moved units.
pub fn prune_toward_ground(
    ctx: &Ctx,
    state: &mut State,
    ground: &[Option<TaskIdx>],
    thr: &[f64],
    budget: &Budget,
) {
    let inc = ctx.inc;
    let mut first_pass = true;
    loop {
        let mut changed = false;
        for withdrawals in [true, false] {
            for &u in &ctx.movable {
                let (from, to) = (state.place[u], ground[u]);
                if from == to || to.is_some() != withdrawals {
                    continue;
                }
                if (!first_pass && budget.exhausted()) || budget.cancelled() {
                    return;
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
                if meets(ctx, state, thr) {
                    changed = true;
                } else {
                    state.apply_move(inc, u, from);
                }
            }
        }
        first_pass = false;
        if !changed && !prune_pairs(ctx, state, ground, thr, budget) {
            return;
        }
    }
}

/// Sends two moved units back to their ground places at once (e.g. two
/// units that traded places) if the plan stays acceptable and feasible.
/// Returns whether a pair went back.
fn prune_pairs(
    ctx: &Ctx,
    state: &mut State,
    ground: &[Option<TaskIdx>],
    thr: &[f64],
    budget: &Budget,
) -> bool {
    let inc = ctx.inc;
    let moved: Vec<UnitIdx> = ctx
        .movable
        .iter()
        .copied()
        .filter(|&u| state.place[u] != ground[u] && ground[u].is_none_or(|t| ctx.allowed_on[u][t]))
        .collect();
    let fits =
        |s: &State, t: Option<TaskIdx>| t.is_none_or(|t| s.tallies[t].count() <= ctx.max_units[t]);
    for (i, &u) in moved.iter().enumerate() {
        if budget.exhausted() {
            return false;
        }
        for &v in &moved[i + 1..] {
            // Each pair costs a full key: thousands of moved units on
            // 10 000 × 1 000 make one row seconds long.
            if budget.exhausted() {
                return false;
            }
            let (fu, fv) = (state.place[u], state.place[v]);
            // Through reserve, so no task is over its maximum in between.
            state.apply_move(inc, u, None);
            state.apply_move(inc, v, None);
            state.apply_move(inc, u, ground[u]);
            state.apply_move(inc, v, ground[v]);
            let ok = fits(state, ground[u])
                && fits(state, ground[v])
                && state.reserve >= ctx.reserve_min
                && meets(ctx, state, thr);
            if ok {
                return true;
            }
            state.apply_move(inc, u, None);
            state.apply_move(inc, v, None);
            state.apply_move(inc, u, fu);
            state.apply_move(inc, v, fv);
        }
    }
    false
}

/// The heuristic least-disruption plan; `leader` must be acceptable. The
/// better (less disruption, then key) of: `leader` pruned toward the ground,
/// and the ground repaired until acceptable, then pruned.
pub fn stable_plan(
    ctx: &Ctx,
    ground: &Placement,
    leader: &State,
    thr: &[f64],
    budget: &Budget,
) -> State {
    let inc = ctx.inc;
    let g = &ground.0;
    let mut from_leader = leader.clone();
    prune_toward_ground(ctx, &mut from_leader, g, thr, budget);
    if budget.cancelled() {
        // The caller is waiting: the leader is acceptable as it is.
        return from_leader;
    }

    // Repair steps are ranked with each tier capped at its highest
    // threshold (fast, separable): a task below it is a bottleneck.
    let mut from_ground = State::new(ctx, &ctx.repair(ground));
    let mut iterations = 0;
    let mut ok = meets(ctx, &from_ground, thr);
    // Built only when needed: a context copy is tens of ms at 10 000 × 1 000.
    let held = (!ok && !budget.exhausted()).then(|| {
        let tiers = ObjectiveKey::from_ln_odds(inc, &leader.ln).entry_tiers();
        ctx.with_caps(top_caps(ctx, &tiers, thr))
    });
    let step_limit = 4 * inc.units.len() + 16;
    let mut memo = super::search::Certified::new(inc.tasks.len());
    for _ in 0..step_limit {
        let Some(held) = held.as_ref() else { break };
        if ok || budget.exhausted() {
            break;
        }
        // Given up at the budget: a full scan at 10 000 × 1 000 takes
        // seconds when no step helps.
        match super::search::best_step_certified(
            held,
            &mut from_ground,
            &mut iterations,
            &mut memo,
            Some(budget),
        ) {
            Some(step) => {
                let before = from_ground.key(held);
                let was = from_ground.place.clone();
                let undo = apply_step(inc, &mut from_ground, step);
                memo.between(&was, &from_ground.place);
                if !from_ground.key(held).better_than(&before) {
                    apply_step(inc, &mut from_ground, undo);
                    break;
                }
            }
            None => break,
        }
        ok = meets(ctx, &from_ground, thr);
    }
    let mut best = from_leader;
    let mut candidates = vec![walk_toward(ctx, ground, leader, thr, budget)];
    if ok {
        candidates.push(Some(from_ground));
    }
    for mut c in candidates.into_iter().flatten() {
        prune_toward_ground(ctx, &mut c, g, thr, budget);
        let (ca, cb) = (cost(ctx, &c, g), cost(ctx, &best, g));
        if ca < cb || (ca == cb && c.key(ctx).better_than(&best.key(ctx))) {
            best = c;
        }
    }
    best
}

/// From the ground, the leader's placements one unit at a time, each time
/// the one that most raises the key with every entry held at its
/// threshold, until the plan is acceptable (at worst the leader itself).
/// `None` when `budget` runs out first: each step tries every movable unit,
/// so the walk is quadratic in them.
fn walk_toward(
    ctx: &Ctx,
    ground: &Placement,
    leader: &State,
    thr: &[f64],
    budget: &Budget,
) -> Option<State> {
    let inc = ctx.inc;
    let mut s = State::new(ctx, &ctx.repair(ground));
    if meets(ctx, &s, thr) {
        return Some(s);
    }
    if budget.exhausted() {
        return None;
    }
    let held = ctx.with_floors(thr);
    for _ in 0..=ctx.movable.len() {
        if meets(ctx, &s, thr) {
            return Some(s);
        }
        if budget.exhausted() {
            return None;
        }
        let mut best: Option<(UnitIdx, ObjectiveKey)> = None;
        for (i, &u) in ctx.movable.iter().enumerate() {
            // One step is a full key per unit: seconds on 10 000 × 1 000.
            if i % 16 == 0 && budget.exhausted() {
                return None;
            }
            let (from, to) = (s.place[u], leader.place[u]);
            if from == to
                || to.is_some_and(|t| s.tallies[t].count() >= ctx.max_units[t])
                || (from.is_none() && s.reserve <= ctx.reserve_min)
            {
                continue;
            }
            s.apply_move(inc, u, to);
            let k = s.key(&held);
            s.apply_move(inc, u, from);
            if best.as_ref().is_none_or(|(_, bk)| k.better_than(bk)) {
                best = Some((u, k));
            }
        }
        let (u, _) = best?;
        s.apply_move(inc, u, leader.place[u]);
    }
    meets(ctx, &s, thr).then_some(s)
}

/// Each tier's cap lowered to its highest threshold so far: a plan whose
/// tasks all reach it ties on that tier. Used where the held key
/// ([`ObjectiveKey::held`]) would be too slow (it is not separable).
fn top_caps(ctx: &Ctx, tiers: &[crate::model::Tier], thr: &[f64]) -> super::key::LnCaps {
    let mut top: [Option<f64>; 3] = [None; 3];
    for (t, th) in tiers.iter().zip(thr) {
        let x = &mut top[t.index()];
        *x = Some(x.map_or(*th, |v| v.max(*th)));
    }
    let mut caps = ctx.caps;
    for (c, t) in caps.iter_mut().zip(top) {
        if let Some(t) = t {
            *c = c.min(t);
        }
    }
    caps
}

/// How the rule is applied.
pub struct StableSettings {
    pub slack: f64,
    pub seed: u64,
    /// Run the exact searches (the best key was proven).
    pub exact: bool,
    pub node_limit: u64,
    /// Stale rounds of each heuristic local search when not exact.
    pub stale_rounds: u64,
    /// Skip the disruption step: the best key among acceptable plans.
    pub from_scratch: bool,
    /// Workers of the large-neighbourhood search after each heuristic
    /// threshold search.
    pub threads: usize,
}

pub struct StableOutcome {
    pub state: State,
    /// Every threshold and the final choice were found by exhaustive search.
    pub proven: bool,
    pub iterations: u64,
    pub stopped_by_budget: bool,
    /// The thresholds used (ln), one per capped entry.
    pub thresholds: Thresholds,
}

/// Folds an exact search's effort into the rule's (nodes, proof, budget)
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

/// Applies the rule from `best` (the best plan found, proven when
/// `settings.exact`): thresholds entry by entry, then the least disruption
/// from `ground` (or, from scratch, the best key) among acceptable plans.
/// `also` are other plans found (e.g. the ground filled): the heuristic
/// thresholds are read from them as well, so a plan that gives up an entry
/// of the ground beyond the slack for small gains before it is not
/// acceptable merely because the search stopped early (a cancel).
pub fn stable_replan(
    ctx: &Ctx,
    ground: &Placement,
    best: &State,
    also: &[State],
    settings: &StableSettings,
    budget: &Budget,
) -> StableOutcome {
    let inc = ctx.inc;
    let slack = settings.slack.clamp(0.0, 1.0);
    let ln_keep = (1.0 - slack).ln();
    let mut iterations = 0u64;
    let mut proven = settings.exact;
    let mut stopped_by_budget = false;
    let best = State::new(ctx, &best.placement());
    let mut leader = best.clone();
    // Plans found on the way: the heuristic thresholds are read from them.
    let mut found = vec![best.clone()];
    found.extend(also.iter().map(|s| State::new(ctx, &s.placement())));
    let tiers = ObjectiveKey::from_ln_odds(inc, &best.ln).entry_tiers();
    let n = tiers.len();
    let mut thr: Thresholds = Vec::with_capacity(n);
    let mut relaxed = false;
    // Keys of the plans found and of the leader, kept in step with them:
    // one key is a sort of every task, and there is one entry per task
    // (rebuilding them per entry took 0.13 s at 1 000 tasks).
    let key_of = |s: &State| ObjectiveKey::from_ln_odds(inc, &s.ln);
    let mut keys: Vec<ObjectiveKey> = found.iter().map(key_of).collect();
    let mut leader_key = key_of(&leader);
    for e in 0..n {
        let cap = ctx.caps[tiers[e].index()];
        let v = leader_key.capped()[e];
        // Only a relaxed threshold before e can let entry e rise, and not
        // above its secure level. The heuristic path searches once per
        // tier (at its first entry) and reads the other entries from the
        // plans found.
        let first_of_tier = e == 0 || tiers[e] != tiers[e - 1];
        let exact_now = settings.exact && proven;
        if relaxed && !reaches(v, cap) && (exact_now || first_of_tier) {
            if budget.exhausted() {
                proven = false;
                stopped_by_budget = true;
            } else {
                if settings.exact && proven {
                    // Built here only: a context copy is tens of ms at
                    // 10 000 × 1 000, and the heuristic path ranks otherwise.
                    let held = ctx.with_focus(&thr);
                    let key = leader.key(&held);
                    let out = exact::branch_and_bound(
                        &held,
                        Goal::Key,
                        &thr,
                        Some(Incumbent {
                            state: leader.clone(),
                            key,
                            cost: Disruption::default(),
                        }),
                        budget,
                        settings.node_limit,
                        &mut |_, _| {},
                    );
                    if let Some(x) =
                        absorb(out, &mut iterations, &mut proven, &mut stopped_by_budget)
                    {
                        leader = x;
                    }
                } else {
                    proven = false;
                    // Tiers above held at their highest thresholds.
                    let held = ctx.with_caps(top_caps(ctx, &tiers, &thr));
                    let limits = SearchLimits {
                        stale_rounds: settings.stale_rounds.min(3),
                        max_rounds: 8,
                    };
                    // Each entry's search may run to a further share of the
                    // budget; the rest is for the disruption step.
                    let share = budget.share(0.55 + 0.15 * tiers[e].index() as f64);
                    let seed = settings.seed ^ (0x656e_7472_7900 + e as u64);
                    let out = local_search(
                        &held,
                        State::new(&held, &leader.placement()),
                        seed,
                        &limits,
                        &share,
                        &mut |_, _, _| {},
                    );
                    iterations += out.iterations;
                    stopped_by_budget |= out.stopped_by_budget;
                    leader = out.best;
                    // A few LNS epochs under the same ranking: candidates
                    // for the threshold that one descent cannot reach.
                    if !out.stopped_by_budget && held.floors.is_empty() {
                        let more = super::lns::lns(
                            &held,
                            leader,
                            seed,
                            &super::lns::LnsLimits {
                                threads: settings.threads.max(1),
                                stale_epochs: 2,
                                max_epochs: 6,
                            },
                            &share,
                            &mut |_, _, _, _| {},
                        );
                        iterations += more.iterations;
                        stopped_by_budget |= more.stopped_by_budget;
                        leader = more.best;
                    }
                }
                leader = State::new(ctx, &leader.placement());
                leader_key = key_of(&leader);
                found.push(leader.clone());
                keys.push(leader_key.clone());
            }
        }
        // best_e over the plans found that meet the thresholds so far (the
        // leader, which does, when the search was exact).
        let b = keys
            .iter()
            .filter(|k| k.meets(&thr))
            .map(|k| k.capped()[e])
            .fold(f64::NEG_INFINITY, f64::max);
        let t = lowered(b, ln_keep);
        relaxed |= t < b;
        thr.push(t);
        // The next search starts from the best plan meeting every threshold.
        if !leader_key.meets(&thr)
            && let Some((s, k)) = found
                .iter()
                .zip(&keys)
                .filter(|(_, k)| k.meets(&thr))
                .max_by(|a, b| a.0.key(ctx).compare(&b.0.key(ctx)))
        {
            leader = s.clone();
            leader_key = k.clone();
        }
    }

    let g: Vec<Option<TaskIdx>> = crate::model::UnitIdx::range(inc.units.len())
        .map(|u| ground.get(u))
        .collect();
    // From scratch, a proven best key that is acceptable is the answer.
    let best_ok = settings.from_scratch && proven && meets(ctx, &best, &thr);
    let mut chosen = if best_ok {
        best.clone()
    } else if settings.from_scratch {
        found
            .iter()
            .filter(|s| meets(ctx, s, &thr))
            .max_by(|a, b| a.key(ctx).compare(&b.key(ctx)))
            .cloned()
            .unwrap_or_else(|| leader.clone())
    } else {
        stable_plan(ctx, ground, &leader, &thr, budget)
    };
    // Scored with fresh sums.
    chosen = State::new(ctx, &chosen.placement());
    if best_ok {
        // Nothing to search: no plan has a better key.
    } else if settings.exact && proven && !budget.exhausted() {
        let key = chosen.key(ctx);
        let (goal, c) = if settings.from_scratch {
            (Goal::Key, Disruption::default())
        } else {
            let c = cost(ctx, &chosen, &g);
            (Goal::LeastDisruption { ground: g }, c)
        };
        let out = exact::branch_and_bound(
            ctx,
            goal,
            &thr,
            Some(Incumbent {
                state: chosen.clone(),
                key,
                cost: c,
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

/// A re-plan after a loss that the ground absorbed ([`absorb_loss`]).
pub struct Absorbed {
    /// The ground repaired: every capped entry at least what the ground
    /// reached before the loss.
    pub state: State,
    /// The rule applied to the plans found (the repaired plan and the
    /// ground after the loss), as on the heuristic path.
    pub thresholds: Thresholds,
    /// Candidate moves scored.
    pub iterations: u64,
}

/// The settled re-plan after a loss, when the loss can be absorbed around
/// the tasks it touched (issue 11).
///
/// `before` is the ground as it stood before the units now lost were lost,
/// when it was the settled recommendation then; apart from the lost units
/// it must equal `ground` (else `None`: something else changed). A lost
/// unit's tombstone keeps its ratings and readings, so `before` is scored
/// as it stood. Every plan after the loss is a plan before it (the lost
/// unit idle), so a plan whose capped key is, entry by entry, at least the
/// key of `before` cannot be beaten after the loss by more than `before`
/// could be beaten before it: the loss was absorbed.
///
/// Repair, task by task (each task at least its own capped odds before
/// the loss is enough for the entries): the worst short task takes the
/// reserve unit that lifts it most; when none helps, an ejection chain of
/// depth ≤ 2 (a unit of a task with odds to spare moves in, and a unit from
/// reserve or from another such task may take its place). Then moves are
/// undone toward the ground while every entry stays at its pre-loss value.
/// `None` when the repair does not get there: the caller runs the full
/// rule.
pub fn absorb_loss(
    ctx: &Ctx,
    ground: &Placement,
    before: &Placement,
    slack: f64,
    budget: &Budget,
) -> Option<Absorbed> {
    let inc = ctx.inc;
    let n = inc.units.len();
    if before.len() != n {
        return None;
    }
    let mut any_lost = false;
    for u in UnitIdx::range(n) {
        let b = before.get(u);
        if inc.units[u].is_lost() {
            if let Some(t) = b {
                if t.index() >= inc.tasks.len() {
                    return None;
                }
                any_lost = true;
            }
        } else if b != ground.get(u) {
            return None;
        }
    }
    if !any_lost {
        return None;
    }
    // The tallies count every unit placed, tombstones included.
    let then = State::new(ctx, before);
    let target: Vec<f64> = ObjectiveKey::from_ln_odds(inc, &then.ln).capped().to_vec();
    let capped = |t: TaskIdx, ln: f64| ln.min(ctx.caps[inc.tasks[t].tier.index()]);
    let want: Vec<f64> = TaskIdx::range(inc.tasks.len())
        .map(|t| capped(t, then.ln[t]))
        .collect();
    let ok = |s: &State, t: TaskIdx| !counts(inc, t) || reaches(capped(t, s.ln[t]), want[t]);
    let g: Vec<Option<TaskIdx>> = UnitIdx::range(n).map(|u| ground.get(u)).collect();
    let after = State::new(ctx, &ctx.repair(ground));
    let mut s = after.clone();
    let mut iterations = 0u64;
    for _ in 0..=2 * ctx.movable.len() {
        if ObjectiveKey::from_ln_odds(inc, &s.ln).meets(&target) {
            break;
        }
        if budget.exhausted() {
            return None;
        }
        let f = s.bottlenecks(ctx).into_iter().find(|&t| !ok(&s, t))?;
        let step = refill_step(ctx, &mut s, f, &mut iterations)
            .or_else(|| chain_step(ctx, &mut s, f, &ok, &mut iterations))?;
        for (u, to) in step.into_iter().flatten() {
            s.apply_move(inc, u, to);
        }
    }
    let key = ObjectiveKey::from_ln_odds(inc, &s.ln);
    if !key.meets(&target) {
        return None;
    }
    prune_toward_ground(ctx, &mut s, &g, &target, budget);
    let s = State::new(ctx, &s.placement());
    if !ObjectiveKey::from_ln_odds(inc, &s.ln).meets(&target) {
        return None;
    }
    let keys = [&s, &after].map(|x| ObjectiveKey::from_ln_odds(inc, &x.ln));
    Some(Absorbed {
        thresholds: thresholds_over(&keys, slack),
        state: s,
        iterations,
    })
}

/// Up to two moves, applied in order.
type Chain = [Option<(UnitIdx, Option<TaskIdx>)>; 2];

/// ln odds of `t` with `add` added and `remove` taken away (tally left as
/// it was), and the same ignoring `min_units` (ranks fills below a minimum).
fn trial(
    ctx: &Ctx,
    s: &mut State,
    t: TaskIdx,
    add: Option<UnitIdx>,
    remove: Option<UnitIdx>,
) -> (f64, f64) {
    let inc = ctx.inc;
    let tl = &mut s.tallies[t];
    if let Some(r) = remove {
        tl.remove(inc, r);
    }
    if let Some(a) = add {
        tl.add(inc, a);
    }
    let out = (
        tl.ln_odds(&inc.tasks[t]),
        super::search::ln_odds_ignoring_minimum(tl, inc, t),
    );
    if let Some(a) = add {
        tl.remove(inc, a);
    }
    if let Some(r) = remove {
        tl.add(inc, r);
    }
    out
}

fn better_ln(a: (f64, f64), b: (f64, f64)) -> bool {
    use std::cmp::Ordering::*;
    match super::key::cmp_ln(a.0, b.0) {
        Greater => true,
        Less => false,
        Equal => super::key::cmp_ln(a.1, b.1) == Greater,
    }
}

/// The reserve unit (one per group of interchangeable units) that lifts `f`
/// most, if one lifts it at all.
fn refill_step(ctx: &Ctx, s: &mut State, f: TaskIdx, iterations: &mut u64) -> Option<Chain> {
    if ctx.is_full(f, s.tallies[f].count()) || !ctx.may_draw_reserve(s.reserve) {
        return None;
    }
    let now = trial(ctx, s, f, None, None);
    let mut seen = vec![false; ctx.n_groups];
    let mut best: Option<(UnitIdx, (f64, f64))> = None;
    for &u in &ctx.movable {
        if s.place[u].is_some() || !ctx.allowed_on[u][f] || seen[ctx.group[u]] {
            continue;
        }
        seen[ctx.group[u]] = true;
        *iterations += 1;
        let v = trial(ctx, s, f, Some(u), None);
        if better_ln(v, now) && best.is_none_or(|(_, b)| better_ln(v, b)) {
            best = Some((u, v));
        }
    }
    best.map(|(u, _)| [Some((u, Some(f))), None])
}

/// Heads tried in a depth-2 chain: the units that lift `f` most.
const CHAIN_HEADS: usize = 6;

/// An ejection chain into `f` of depth ≤ 2 that lifts it and leaves every
/// task it takes from at its pre-loss odds (`ok`): a unit of task A moves
/// to `f`, and when A would fall short, a unit from reserve or from a task
/// B with odds to spare takes its place. Fewest withdrawals first, then
/// the highest odds of `f`.
fn chain_step(
    ctx: &Ctx,
    s: &mut State,
    f: TaskIdx,
    ok: &dyn Fn(&State, TaskIdx) -> bool,
    iterations: &mut u64,
) -> Option<Chain> {
    let inc = ctx.inc;
    if ctx.is_full(f, s.tallies[f].count()) {
        return None;
    }
    let now = trial(ctx, s, f, None, None);
    // Heads: units on another task that lift f.
    let mut heads: Vec<(UnitIdx, (f64, f64))> = Vec::new();
    for &u in &ctx.movable {
        let Some(a) = s.place[u] else { continue };
        if a == f || !ctx.allowed_on[u][f] {
            continue;
        }
        *iterations += 1;
        let v = trial(ctx, s, f, Some(u), None);
        if better_ln(v, now) {
            heads.push((u, v));
        }
    }
    heads.sort_by(|x, y| {
        if better_ln(x.1, y.1) {
            std::cmp::Ordering::Less
        } else if better_ln(y.1, x.1) {
            std::cmp::Ordering::Greater
        } else {
            x.0.cmp(&y.0)
        }
    });
    // Depth 1: the best head whose task keeps its pre-loss odds.
    for &(u, _) in &heads {
        let a = s.place[u]?;
        s.apply_move(inc, u, None);
        let fine = ok(s, a);
        s.apply_move(inc, u, Some(a));
        if fine {
            return Some([Some((u, Some(f))), None]);
        }
    }
    // Depth 2: a head's task made up by a reserve unit (one withdrawal)
    // before a unit of another task (two).
    let mut best: Option<(usize, (f64, f64), Chain)> = None;
    let mut seen = vec![false; ctx.n_groups];
    for &(u, fv) in heads.iter().take(CHAIN_HEADS) {
        let a = s.place[u]?;
        s.apply_move(inc, u, Some(f));
        seen.iter_mut().for_each(|x| *x = false);
        for &v in &ctx.movable {
            let b = s.place[v];
            if b == Some(a) || b == Some(f) || v == u || !ctx.allowed_on[v][a] {
                continue;
            }
            let withdrawals = 1 + usize::from(b.is_some());
            if best.as_ref().is_some_and(|(w, bv, _)| {
                withdrawals > *w || (withdrawals == *w && !better_ln(fv, *bv))
            }) {
                continue;
            }
            if b.is_none() {
                if seen[ctx.group[v]] || !ctx.may_draw_reserve(s.reserve) {
                    continue;
                }
                seen[ctx.group[v]] = true;
            }
            *iterations += 1;
            s.apply_move(inc, v, Some(a));
            let fine = ok(s, a) && b.is_none_or(|b| ok(s, b));
            s.apply_move(inc, v, b);
            if fine {
                best = Some((withdrawals, fv, [Some((u, Some(f))), Some((v, Some(a)))]));
            }
        }
        s.apply_move(inc, u, Some(a));
    }
    best.map(|(_, _, c)| c)
}

/// Puts interchangeable units back on their own ground task where the plan
/// only exchanged them: two units of one type with the same ratings, the
/// same current estimates and status, neither pinned, are the same to every
/// task, so the plan's key, reserve and capacities stay exactly as they
/// are while moves that only swap them vanish. A search cut by its budget
/// can leave such swaps (two identical sandbag crews exchanging levee and
/// substation); a commander would never order them.
pub fn settle_interchangeable(inc: &Incident, ground: &Placement, plan: &Placement) -> Placement {
    use std::collections::BTreeMap;
    let n_traits = inc.traits.len();
    // Class key: type, status, and every trait's rating and estimate (bits).
    let mut classes: BTreeMap<Vec<u64>, Vec<UnitIdx>> = BTreeMap::new();
    for u in UnitIdx::range(inc.units.len()) {
        let unit = &inc.units[u];
        if unit.is_lost() || inc.pins.contains_key(&u) {
            continue;
        }
        let mut key = vec![unit.type_idx as u64, unit.status as u64];
        for k in 0..n_traits {
            let r = unit.ratings[k];
            let b = inc.belief(u, k);
            key.extend([r.mean, r.sd, b.mean, b.load, b.own].map(f64::to_bits));
        }
        classes.entry(key).or_default().push(u);
    }
    let mut out = plan.clone();
    for units in classes.values().filter(|c| c.len() > 1) {
        let mut left: Vec<Option<TaskIdx>> = units.iter().map(|&u| plan.get(u)).collect();
        let mut given: Vec<Option<Option<TaskIdx>>> = vec![None; units.len()];
        // Each unit first keeps its ground place when the plan still has a
        // place of its class there.
        for (i, &u) in units.iter().enumerate() {
            if let Some(j) = left.iter().position(|&t| t == ground.get(u)) {
                given[i] = Some(left.swap_remove(j));
            }
        }
        // The rest take the remaining places, those the plan gave them first.
        for (i, &u) in units.iter().enumerate() {
            if given[i].is_none() {
                let j = left.iter().position(|&t| t == plan.get(u)).unwrap_or(0);
                given[i] = Some(left.swap_remove(j));
            }
        }
        let ok = units.iter().zip(&given).all(|(&u, g)| match g {
            Some(Some(t)) => crate::rules::plan_may_put(inc, u, *t),
            Some(None) => true,
            None => false,
        });
        if ok {
            for (&u, g) in units.iter().zip(&given) {
                out.set(u, g.flatten());
            }
        }
    }
    out
}

/// How a plan compares with the recommendation, entry by entry over the
/// capped key within the slack: the first entry where one is lower than
/// the other by more than the slack decides.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Verdict {
    /// Lower than the recommendation beyond the slack at this entry.
    Worse { entry: usize },
    /// No entry differs by more than the slack.
    WithinSlack,
    /// Higher than the recommendation beyond the slack at this entry (it
    /// then misses a threshold or disturbs more, or the search was not
    /// exhaustive).
    Better { entry: usize },
}

impl Verdict {
    pub fn as_str(self) -> &'static str {
        match self {
            Verdict::Worse { .. } => "worse",
            Verdict::WithinSlack => "within slack",
            Verdict::Better { .. } => "better",
        }
    }
}

/// `other` against `recommended` (see [`Verdict`]).
pub fn verdict(recommended: &ObjectiveKey, other: &ObjectiveKey, slack: f64) -> Verdict {
    let ln_keep = (1.0 - slack.clamp(0.0, 1.0)).ln();
    for (e, (r, o)) in recommended.capped().iter().zip(other.capped()).enumerate() {
        if !reaches(*o, lowered(*r, ln_keep)) {
            return Verdict::Worse { entry: e };
        }
        if !reaches(*r, lowered(*o, ln_keep)) {
            return Verdict::Better { entry: e };
        }
    }
    Verdict::WithinSlack
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::parse_incident_str;

    fn incident() -> Incident {
        parse_incident_str(
            r#"
incident: { name: Invented verdict check }
traits: [ { id: water } ]
unit_types: [ { id: e, traits: { water: { mean: 1, sd: 1 } } } ]
units: [ { id: E1, type: e } ]
tasks:
  - { id: L1, tier: life, needs: { water: 1 } }
  - { id: L2, tier: life, needs: { water: 1 } }
  - { id: S1, tier: stabilization, needs: { water: 1 } }
"#,
            "v.yaml",
        )
        .expect("valid")
    }

    fn key(inc: &Incident, p: [f64; 3]) -> ObjectiveKey {
        ObjectiveKey::from_ln_odds(inc, &p.map(f64::ln))
    }

    #[test]
    fn verdict_reads_entries_within_the_slack() {
        let inc = incident();
        let rec = key(&inc, [0.80, 0.90, 0.50]);
        // 0.5 % lower on the second life entry: within slack.
        let near = key(&inc, [0.80, 0.8955, 0.50]);
        assert_eq!(verdict(&rec, &near, 0.01), Verdict::WithinSlack);
        // 2 % lower on it: worse at entry 1, whatever the tier below does.
        let worse = key(&inc, [0.80, 0.88, 0.99]);
        assert_eq!(verdict(&rec, &worse, 0.01), Verdict::Worse { entry: 1 });
        // Higher by more than the slack at the stabilization entry: better.
        let better = key(&inc, [0.80, 0.90, 0.60]);
        assert_eq!(verdict(&rec, &better, 0.01), Verdict::Better { entry: 2 });
        // Slack 0: any difference beyond the tolerance decides.
        assert_eq!(verdict(&rec, &near, 0.0), Verdict::Worse { entry: 1 });
    }

    #[test]
    fn thresholds_over_plans_follow_the_definition() {
        let inc = incident();
        // A: best worst life; B: 0.5 % lower there but far better second
        // entry; C: fails B's second-entry threshold.
        let a = key(&inc, [0.80, 0.81, 0.10]);
        let b = key(&inc, [0.796, 0.95, 0.20]);
        let c = key(&inc, [0.80, 0.85, 0.90]);
        let thr = thresholds_over(&[a.clone(), b.clone(), c.clone()], 0.01);
        let close = |x: f64, y: f64| (x - y).abs() < 1e-12;
        assert!(close(thr[0], 0.80f64.ln() + 0.99f64.ln()));
        assert!(close(thr[1], 0.95f64.ln() + 0.99f64.ln()));
        // Only B meets both life thresholds: its stabilization sets the last.
        assert!(close(thr[2], 0.20f64.ln() + 0.99f64.ln()));
        assert!(b.meets(&thr) && !a.meets(&thr) && !c.meets(&thr));
    }

    /// Two identical sandbag crews (river-flood sample, invented) exchanged
    /// between levee and substation: settled back, the key unchanged; a swap
    /// of units that differ stays.
    #[test]
    fn swaps_of_interchangeable_units_are_settled_back() {
        let path = concat!(
            env!("CARGO_MANIFEST_DIR"),
            "/../../sample-incidents/river-flood.yaml"
        );
        let text = std::fs::read_to_string(path).expect("sample");
        let inc = crate::model::parse_incident_str(&text, path).expect("loads");
        let ground = inc.placement.clone();
        let (s1, s3) = (inc.unit_idx("S1").unwrap(), inc.unit_idx("S3").unwrap());
        let mut plan = ground.clone();
        plan.set(s1, ground.get(s3));
        plan.set(s3, ground.get(s1));
        assert_ne!(plan, ground);
        let settled = settle_interchangeable(&inc, &ground, &plan);
        assert_eq!(settled, ground);
        let key = |p: &Placement| ObjectiveKey::of(&inc, p);
        assert_eq!(
            key(&plan).compare(&key(&settled)),
            std::cmp::Ordering::Equal
        );
        // A pump and a sandbag crew differ: their exchange is the plan's own.
        let p2 = inc.unit_idx("P2").unwrap();
        let mut other = ground.clone();
        other.set(p2, ground.get(s1));
        other.set(s1, ground.get(p2));
        assert_eq!(settle_interchangeable(&inc, &ground, &other), other);
    }
}
