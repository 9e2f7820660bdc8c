//! The anytime search: a greedy first plan, then best-improvement local
//! search around the bottleneck task (move a unit in, take one out, swap),
//! with seeded perturbation when it stalls. Every candidate move is scored
//! from the tallies of the (at most two) tasks it touches, in O(traits), and
//! ranked with [`compare_change`].

// Index loops over the parallel per-unit arrays read clearer than zipped iterators.
#![allow(clippy::needless_range_loop)]

use super::key::{
    LN_TOLERANCE, LnCaps, TaskChange, cmp_ln, compare_change_capped, counts, ln_caps,
};
use super::{Budget, ObjectiveKey};
use crate::model::{Incident, Placement, TaskIdx, UnitIdx};
use crate::odds::{TaskTally, tallies};
use crate::rules;
use rand::rngs::Xoshiro256PlusPlus;
use rand::{RngExt, SeedableRng};
use std::cmp::Ordering;

/// What never changes during one search: which unit may go where, and the
/// caps the key ranks plans with.
#[derive(Clone)]
pub struct Ctx<'a> {
    pub inc: &'a Incident,
    /// Tasks each unit may be placed on ([`rules::may_go`]; empty for
    /// out-of-service units), precomputed for the inner loop.
    pub allowed: Vec<Vec<TaskIdx>>,
    /// `allowed_on[u][t]`.
    pub allowed_on: Vec<Vec<bool>>,
    pub pinned: Vec<Option<TaskIdx>>,
    /// Units the search may move: available and not pinned.
    pub movable: Vec<UnitIdx>,
    /// [`rules::capacity`] per task (saturated to `u32::MAX`, which no
    /// count reaches); compare through [`Ctx::is_full`].
    pub max_units: Vec<u32>,
    /// The incident's `reserve_min`; compare through [`Ctx::may_draw_reserve`].
    pub reserve_min: u32,
    /// Interchangeable units (same type, same ratings, same status) share a
    /// group: trying one reserve unit of a group stands for all of them.
    pub group: Vec<usize>,
    pub n_groups: usize,
    /// Each tier's cap in the key: ln of its secure level, or lower when
    /// the stable re-plan holds a tier at its threshold.
    pub caps: LnCaps,
    /// Thresholds holding the first capped entries of the key (see
    /// [`ObjectiveKey::held`]); empty for the plain key.
    pub floors: Vec<f64>,
    /// With floors: rank by the first free entry only
    /// ([`ObjectiveKey::held_focus`]).
    pub focus: bool,
}

impl<'a> Ctx<'a> {
    pub fn new(inc: &'a Incident) -> Self {
        let n_tasks = inc.tasks.len();
        let mut allowed = Vec::new();
        let mut allowed_on = Vec::new();
        let mut pinned = vec![None; inc.units.len()];
        for (u, p) in &inc.pins {
            pinned[*u] = Some(*p);
        }
        let mut movable = Vec::new();
        let mut groups: std::collections::HashMap<Vec<u64>, usize> = Default::default();
        let mut group = Vec::with_capacity(inc.units.len());
        for u in crate::model::UnitIdx::range(inc.units.len()) {
            let unit = &inc.units[u];
            let mut sig = vec![unit.type_idx as u64, u64::from(pinned[u].is_some())];
            for k in 0..unit.ratings.len() {
                let r = inc.belief(u, k); // readings make a unit unlike its mates
                sig.push(r.mean.to_bits());
                sig.push(r.sd().to_bits());
            }
            let next = groups.len();
            group.push(*groups.entry(sig).or_insert(next));
        }
        for u in crate::model::UnitIdx::range(inc.units.len()) {
            let row: Vec<bool> = TaskIdx::range(n_tasks)
                .map(|t| rules::can_go(inc, u, t))
                .collect();
            allowed.push(TaskIdx::range(n_tasks).filter(|&t| row[t]).collect());
            allowed_on.push(row);
            if rules::counts_in_reserve(&inc.units[u]) && pinned[u].is_none() {
                movable.push(u);
            }
        }
        Ctx {
            inc,
            allowed,
            allowed_on,
            pinned,
            movable,
            max_units: inc
                .tasks
                .iter()
                .map(|t| u32::try_from(rules::capacity(t)).unwrap_or(u32::MAX))
                .collect(),
            reserve_min: inc.reserve_min,
            n_groups: groups.len(),
            group,
            caps: ln_caps(inc),
            floors: Vec::new(),
            focus: false,
        }
    }

    /// The same incident ranked with the first capped entries held at
    /// `floors`.
    pub fn with_floors(&self, floors: &[f64]) -> Self {
        Ctx {
            floors: floors.to_vec(),
            focus: false,
            ..self.clone()
        }
    }

    /// Ranked by the first capped entry after `floors` alone, the entries
    /// before it held at `floors`: what a threshold's search maximises.
    pub fn with_focus(&self, floors: &[f64]) -> Self {
        Ctx {
            floors: floors.to_vec(),
            focus: true,
            ..self.clone()
        }
    }

    /// Task `t` holding `count` units has no room for another
    /// ([`rules::has_room`], precomputed).
    #[inline]
    pub fn is_full(&self, t: TaskIdx, count: u32) -> bool {
        count >= self.max_units[t]
    }

    /// One more unit may leave a reserve of `reserve` ([`rules::may_draw_reserve`]).
    #[inline]
    pub fn may_draw_reserve(&self, reserve: u32) -> bool {
        rules::may_draw_reserve(self.reserve_min, reserve as usize)
    }

    /// The same incident ranked with each tier capped at `caps`.
    pub fn with_caps(&self, caps: LnCaps) -> Self {
        Ctx {
            caps,
            ..self.clone()
        }
    }

    /// Key of the ln odds `ln` under this context's caps.
    pub fn key_of(&self, ln: &[f64]) -> ObjectiveKey {
        let key = ObjectiveKey::from_ln_odds_capped(self.inc, ln, &self.caps);
        if self.focus {
            key.held_focus(&self.floors)
        } else if self.floors.is_empty() {
            key
        } else {
            key.held(&self.floors)
        }
    }

    /// The placement `start` made feasible: pins applied, units that cannot
    /// stay where they are sent to reserve, tasks over their maximum trimmed
    /// (last units first), reserve refilled (last placed units first).
    pub fn repair(&self, start: &Placement) -> Placement {
        let n = self.inc.units.len();
        let mut p: Vec<Option<TaskIdx>> = UnitIdx::range(n).map(|u| start.get(u)).collect();
        for u in 0..n {
            if let Some(t) = self.pinned[u] {
                p[u] = Some(t);
            } else if let Some(t) = p[u]
                && (t.index() >= self.inc.tasks.len() || !self.allowed_on[u][t])
            {
                p[u] = None;
            }
        }
        let mut count = vec![0u32; self.inc.tasks.len()];
        for u in 0..n {
            if let Some(t) = p[u] {
                if self.is_full(t, count[t]) && self.pinned[u].is_none() {
                    p[u] = None;
                } else {
                    count[t] += 1;
                }
            }
        }
        let mut reserve = self.movable.iter().filter(|&&u| p[u].is_none()).count() as u32;
        for &u in self.movable.iter().rev() {
            if !rules::reserve_short(self.inc, reserve as usize) {
                break;
            }
            if p[u].is_some() {
                p[u] = None;
                reserve += 1;
            }
        }
        Placement(p)
    }
}

/// ln odds of a task ignoring `min_units` and the no-unit rule: lets the
/// greedy fill a task that needs several units before it counts.
pub(crate) fn ln_odds_ignoring_minimum(tally: &TaskTally, inc: &Incident, t: TaskIdx) -> f64 {
    inc.tasks[t]
        .needs
        .iter()
        .enumerate()
        .filter(|(_, n)| n.counts())
        .map(|(k, n)| tally.trait_odds(k, *n).ln_odds)
        .sum()
}

/// A placement with its tallies and per-task ln odds kept in step.
#[derive(Clone)]
pub struct State {
    pub place: Vec<Option<TaskIdx>>,
    pub tallies: Vec<TaskTally>,
    pub ln: Vec<f64>,
    /// Available units in reserve.
    pub reserve: u32,
}

impl State {
    pub fn new(ctx: &Ctx, p: &Placement) -> Self {
        let tl = tallies(ctx.inc, p);
        let ln = tl
            .iter()
            .zip(&ctx.inc.tasks)
            .map(|(t, task)| t.ln_odds(task))
            .collect();
        let reserve = ctx.movable.iter().filter(|&&u| p.get(u).is_none()).count() as u32;
        State {
            place: p.0.clone(),
            tallies: tl,
            ln,
            reserve,
        }
    }

    pub fn placement(&self) -> Placement {
        Placement(self.place.clone())
    }

    /// The key under `ctx`'s caps.
    pub fn key(&self, ctx: &Ctx) -> ObjectiveKey {
        ctx.key_of(&self.ln)
    }

    /// Moves unit `u` to `to`, keeping tallies and odds in step.
    pub fn apply_move(&mut self, inc: &Incident, u: UnitIdx, to: Option<TaskIdx>) {
        let from = self.place[u];
        if from == to {
            return;
        }
        if let Some(a) = from {
            self.tallies[a].remove(inc, u);
            self.ln[a] = self.tallies[a].ln_odds(&inc.tasks[a]);
        } else {
            self.reserve -= 1;
        }
        if let Some(b) = to {
            self.tallies[b].add(inc, u);
            self.ln[b] = self.tallies[b].ln_odds(&inc.tasks[b]);
        } else {
            self.reserve += 1;
        }
        self.place[u] = to;
    }

    /// ln odds task `t` would have with `add` added and `remove` removed,
    /// leaving the tally as it was.
    fn try_ln(
        &mut self,
        inc: &Incident,
        t: TaskIdx,
        add: Option<UnitIdx>,
        remove: Option<UnitIdx>,
    ) -> f64 {
        let tl = &mut self.tallies[t];
        if let Some(r) = remove {
            tl.remove(inc, r);
        }
        if let Some(a) = add {
            tl.add(inc, a);
        }
        let ln = tl.ln_odds(&inc.tasks[t]);
        if let Some(a) = add {
            tl.remove(inc, a);
        }
        if let Some(r) = remove {
            tl.add(inc, r);
        }
        ln
    }

    /// Tasks that count, worst first in the key's order: tasks below their
    /// tier's cap by tier, then the rest by ln odds.
    pub fn bottlenecks(&self, ctx: &Ctx) -> Vec<TaskIdx> {
        let inc = ctx.inc;
        let mut v: Vec<TaskIdx> = crate::model::TaskIdx::range(inc.tasks.len())
            .filter(|&t| counts(inc, t))
            .collect();
        let rank = |t: TaskIdx| {
            let tier = inc.tasks[t].tier;
            if cmp_ln(self.ln[t], ctx.caps[tier.index()]) == Ordering::Less {
                (0, tier.index())
            } else {
                (1, 0)
            }
        };
        v.sort_by(|&a, &b| {
            rank(a)
                .cmp(&rank(b))
                .then(
                    self.ln[a]
                        .partial_cmp(&self.ln[b])
                        .unwrap_or(Ordering::Equal),
                )
                .then(a.cmp(&b))
        });
        v
    }
}

/// A candidate change: one move or a swap, with the tasks it touches.
#[derive(Clone, Copy, Debug)]
pub enum Step {
    Move(UnitIdx, Option<TaskIdx>),
    Swap(UnitIdx, UnitIdx),
}

#[derive(Clone, Copy)]
struct Scored {
    step: Step,
    changes: [TaskChange; 2],
    n: usize,
}

/// Compares the plans after two candidates (Greater: `a` is better).
fn cmp_candidates(ctx: &Ctx, state: &State, a: &Scored, b: &Scored) -> Ordering {
    if !ctx.floors.is_empty() || ctx.focus {
        // Held entries depend on positions, not only on the tasks touched:
        // compare full keys.
        let with = |s: &Scored| {
            let mut ln = state.ln.clone();
            for c in &s.changes[..s.n] {
                ln[c.task] = c.after;
            }
            ctx.key_of(&ln)
        };
        return with(a).compare(&with(b));
    }
    let mut ch: [TaskChange; 4] = [TaskChange {
        task: TaskIdx::new(0),
        before: 0.0,
        after: 0.0,
    }; 4];
    let mut n = 0;
    let value = |s: &Scored, t: TaskIdx| {
        s.changes[..s.n]
            .iter()
            .find(|c| c.task == t)
            .map_or(state.ln[t], |c| c.after)
    };
    for c in a.changes[..a.n].iter().chain(&b.changes[..b.n]) {
        if ch[..n].iter().any(|x| x.task == c.task) {
            continue;
        }
        ch[n] = TaskChange {
            task: c.task,
            before: value(b, c.task),
            after: value(a, c.task),
        };
        n += 1;
    }
    compare_change_capped(ctx.inc, &ctx.caps, &ch[..n])
}

/// Options that shape the local search.
pub struct SearchLimits {
    /// Stop after this many perturbations in a row that did not improve the
    /// best plan.
    pub stale_rounds: u64,
    /// Stop after this many perturbation rounds in all (`u64::MAX`: budget
    /// only). The exact search uses a fixed number so that its start does
    /// not depend on the clock.
    pub max_rounds: u64,
}

pub struct SearchOutcome {
    pub best: State,
    pub best_key: ObjectiveKey,
    pub iterations: u64,
    pub stopped_by_budget: bool,
}

/// Fills the plan greedily: repeatedly give the worst task that can be
/// helped the reserve unit that raises its odds most. Stops early (with a
/// feasible plan) when `budget` ends.
pub fn greedy_fill(ctx: &Ctx, state: &mut State, budget: Option<&Budget>) {
    let inc = ctx.inc;
    let mut seen = vec![false; ctx.n_groups];
    // A task no reserve unit improves stays so for the rest of the fill:
    // the reserve only shrinks and the task's tally does not change.
    let mut dead = vec![false; inc.tasks.len()];
    loop {
        if !ctx.may_draw_reserve(state.reserve) || budget.is_some_and(Budget::exhausted) {
            return;
        }
        let order = state.bottlenecks(ctx);
        let mut done = false;
        for &t in &order {
            if dead[t] || ctx.is_full(t, state.tallies[t].count()) {
                continue;
            }
            let below_min = state.ln[t] == f64::NEG_INFINITY;
            let base = if below_min {
                f64::NEG_INFINITY
            } else {
                state.ln[t]
            };
            let mut best: Option<(UnitIdx, f64)> = None;
            seen.iter_mut().for_each(|x| *x = false);
            for &u in &ctx.movable {
                if state.place[u].is_some() || !ctx.allowed_on[u][t] || seen[ctx.group[u]] {
                    continue;
                }
                seen[ctx.group[u]] = true;
                state.tallies[t].add(inc, u);
                let ln = if below_min {
                    ln_odds_ignoring_minimum(&state.tallies[t], inc, t)
                } else {
                    state.tallies[t].ln_odds(&inc.tasks[t])
                };
                state.tallies[t].remove(inc, u);
                let improves = below_min || cmp_ln(ln, base) == Ordering::Greater;
                if improves && best.is_none_or(|(_, b)| cmp_ln(ln, b) == Ordering::Greater) {
                    best = Some((u, ln));
                }
            }
            if let Some((u, _)) = best {
                state.apply_move(inc, u, Some(t));
                done = true;
                break;
            }
            dead[t] = true;
        }
        if !done {
            return;
        }
    }
}

/// The best improving step around the bottleneck tasks, if any.
pub fn best_step(ctx: &Ctx, state: &mut State, iterations: &mut u64) -> Option<Step> {
    best_step_within(ctx, state, iterations, usize::MAX, true, None)
}

/// [`best_step`] around the first `max_tasks` bottlenecks only, with or
/// without swaps (the costly part: units on f × all units), giving up
/// (`None`) as soon as `budget` ends: proving a local optimum scans every
/// task, which on large incidents takes longer than a cancel may wait.
pub fn best_step_within(
    ctx: &Ctx,
    state: &mut State,
    iterations: &mut u64,
    max_tasks: usize,
    swaps: bool,
    budget: Option<&Budget>,
) -> Option<Step> {
    scan(ctx, state, iterations, max_tasks, swaps, budget, None)
}

/// Which tasks are known to have no improving step (issue 11: most of a
/// descent's scans find nothing). Whether a candidate improves the key
/// depends only on the tasks it touches (the key is separable, see
/// [`compare_change_capped`]), so a task found with no improving step keeps
/// none until it, a task it trades with, or the reserve changes; then only
/// the candidates touching what changed are scored again. Not used with
/// held entries (floors), whose ranking depends on every task.
#[derive(Clone)]
pub struct Certified {
    /// Stamp at which each task was found with no improving step.
    at: Vec<Option<u64>>,
    /// Stamp of each task's last change.
    changed: Vec<u64>,
    reserve_changed: u64,
    now: u64,
}

impl Certified {
    pub fn new(n_tasks: usize) -> Self {
        Certified {
            at: vec![None; n_tasks],
            changed: vec![0; n_tasks],
            reserve_changed: 0,
            now: 1,
        }
    }

    /// Unit moves `from` → `to` happened (`None`: reserve).
    pub fn moved(&mut self, from: Option<TaskIdx>, to: Option<TaskIdx>) {
        if from == to {
            return;
        }
        self.now += 1;
        for side in [from, to] {
            match side {
                Some(t) => self.changed[t] = self.now,
                None => self.reserve_changed = self.now,
            }
        }
    }

    /// Marks the changes between two placements of the same units.
    pub fn between(&mut self, a: &[Option<TaskIdx>], b: &[Option<TaskIdx>]) {
        for (x, y) in a.iter().zip(b) {
            self.moved(*x, *y);
        }
    }
}

/// [`best_step_within`] that skips, for tasks `memo` holds with no
/// improving step, every candidate whose other side (reserve or task) has
/// not changed since; the step found is the one a full scan finds.
pub fn best_step_certified(
    ctx: &Ctx,
    state: &mut State,
    iterations: &mut u64,
    memo: &mut Certified,
    budget: Option<&Budget>,
) -> Option<Step> {
    if !ctx.floors.is_empty() || ctx.focus {
        return best_step_within(ctx, state, iterations, usize::MAX, true, budget);
    }
    scan(ctx, state, iterations, usize::MAX, true, budget, Some(memo))
}

fn scan(
    ctx: &Ctx,
    state: &mut State,
    iterations: &mut u64,
    max_tasks: usize,
    swaps: bool,
    budget: Option<&Budget>,
    mut memo: Option<&mut Certified>,
) -> Option<Step> {
    let inc = ctx.inc;
    let mut seen = vec![false; ctx.n_groups];
    let order = state.bottlenecks(ctx);
    let zero = TaskChange {
        task: TaskIdx::new(0),
        before: 0.0,
        after: 0.0,
    };
    let current = Scored {
        step: Step::Move(UnitIdx::new(0), None),
        changes: [zero; 2],
        n: 0,
    };
    for &f in order.iter().take(max_tasks) {
        if budget.is_some_and(Budget::exhausted) {
            return None;
        }
        // Since when f is known to have no improving step: only candidates
        // whose other side changed after that need scoring.
        let since = memo
            .as_ref()
            .and_then(|m| m.at[f].filter(|&c| m.changed[f] <= c));
        let fresh = |side: Option<TaskIdx>| match (since, memo.as_ref()) {
            (Some(c), Some(m)) => match side {
                Some(t) => m.changed[t] > c,
                None => m.reserve_changed > c,
            },
            _ => true,
        };
        let mut best = current;
        let consider = |state: &State, s: Scored, best: &mut Scored| {
            if cmp_candidates(ctx, state, &s, best) == Ordering::Greater {
                *best = s;
            }
        };
        let change = |t: TaskIdx, state: &State, after: f64| TaskChange {
            task: t,
            before: state.ln[t],
            after,
        };
        let f_full = ctx.is_full(f, state.tallies[f].count());
        // Moves into f, from reserve (one unit per group) or another task.
        seen.iter_mut().for_each(|x| *x = false);
        for &u in &ctx.movable {
            let from = state.place[u];
            if from == Some(f) || !ctx.allowed_on[u][f] || f_full || !fresh(from) {
                continue;
            }
            if from.is_none() {
                if seen[ctx.group[u]] {
                    continue;
                }
                seen[ctx.group[u]] = true;
            }
            if from.is_none() && !ctx.may_draw_reserve(state.reserve) {
                continue;
            }
            *iterations += 1;
            let after_f = state.try_ln(inc, f, Some(u), None);
            let mut s = Scored {
                step: Step::Move(u, Some(f)),
                changes: [change(f, state, after_f), zero],
                n: 1,
            };
            if let Some(a) = from {
                let after_a = state.try_ln(inc, a, None, Some(u));
                s.changes[1] = change(a, state, after_a);
                s.n = 2;
            }
            consider(state, s, &mut best);
        }
        // Moves out of f: to reserve or to another task.
        let on_f: Vec<UnitIdx> = ctx
            .movable
            .iter()
            .copied()
            .filter(|&u| state.place[u] == Some(f))
            .collect();
        for &u in &on_f {
            let after_f = state.try_ln(inc, f, None, Some(u));
            if fresh(None) {
                *iterations += 1;
                consider(
                    state,
                    Scored {
                        step: Step::Move(u, None),
                        changes: [change(f, state, after_f), zero],
                        n: 1,
                    },
                    &mut best,
                );
            }
            for &g in &ctx.allowed[u] {
                if g == f || ctx.is_full(g, state.tallies[g].count()) || !fresh(Some(g)) {
                    continue;
                }
                *iterations += 1;
                let after_g = state.try_ln(inc, g, Some(u), None);
                consider(
                    state,
                    Scored {
                        step: Step::Move(u, Some(g)),
                        changes: [change(f, state, after_f), change(g, state, after_g)],
                        n: 2,
                    },
                    &mut best,
                );
            }
        }
        // Swaps of a unit on f with one elsewhere (reserve or a task).
        for &u in on_f.iter().filter(|_| swaps) {
            if budget.is_some_and(Budget::exhausted) {
                return None;
            }
            seen.iter_mut().for_each(|x| *x = false);
            for &v in &ctx.movable {
                let b = state.place[v];
                if b == Some(f) || !ctx.allowed_on[v][f] || !fresh(b) {
                    continue;
                }
                if b.is_none() {
                    if seen[ctx.group[v]] {
                        continue;
                    }
                    seen[ctx.group[v]] = true;
                }
                if let Some(b) = b
                    && !ctx.allowed_on[u][b]
                {
                    continue;
                }
                *iterations += 1;
                let after_f = state.try_ln(inc, f, Some(v), Some(u));
                let mut s = Scored {
                    step: Step::Swap(u, v),
                    changes: [change(f, state, after_f), zero],
                    n: 1,
                };
                if let Some(b) = b {
                    let after_b = state.try_ln(inc, b, Some(u), Some(v));
                    s.changes[1] = change(b, state, after_b);
                    s.n = 2;
                }
                consider(state, s, &mut best);
            }
        }
        if best.n > 0 {
            return Some(best.step);
        }
        if let Some(m) = memo.as_deref_mut() {
            m.at[f] = Some(m.now);
        }
    }
    None
}

/// Applies `step` and returns the step that undoes it.
pub fn apply_step(inc: &Incident, state: &mut State, step: Step) -> Step {
    match step {
        Step::Move(u, to) => {
            let from = state.place[u];
            state.apply_move(inc, u, to);
            Step::Move(u, from)
        }
        Step::Swap(u, v) => {
            let (a, b) = (state.place[u], state.place[v]);
            // Through reserve in between, so counts never exceed a maximum.
            state.apply_move(inc, u, None);
            state.apply_move(inc, v, a);
            state.apply_move(inc, u, b);
            Step::Swap(u, v)
        }
    }
}

/// Random feasible moves, to leave a local optimum.
fn perturb(ctx: &Ctx, state: &mut State, rng: &mut Xoshiro256PlusPlus) {
    if ctx.movable.is_empty() {
        return;
    }
    let inc = ctx.inc;
    let k = 1 + rng.random_range(0..(ctx.movable.len() / 8).clamp(1, 8) + 1);
    for _ in 0..k {
        let u = ctx.movable[rng.random_range(0..ctx.movable.len())];
        let n_opts = ctx.allowed[u].len() + 1;
        let pick = rng.random_range(0..n_opts);
        let to = (pick < ctx.allowed[u].len()).then(|| ctx.allowed[u][pick]);
        let from = state.place[u];
        if to == from {
            continue;
        }
        if let Some(t) = to
            && ctx.is_full(t, state.tallies[t].count())
        {
            continue;
        }
        if from.is_none() && !ctx.may_draw_reserve(state.reserve) {
            continue;
        }
        state.apply_move(inc, u, to);
    }
}

/// How often a descent reports its plan while it goes.
const DESCENT_REPORT_EVERY: std::time::Duration = std::time::Duration::from_millis(250);

/// Local search from `start` until the budget ends, it is cancelled, or the
/// limits say stop. The trajectory depends only on the seed and the limits,
/// never on the clock, so a larger budget never gives a worse plan.
pub fn local_search(
    ctx: &Ctx,
    start: State,
    seed: u64,
    limits: &SearchLimits,
    budget: &Budget,
    on_improve: &mut dyn FnMut(&State, &ObjectiveKey, u64),
) -> SearchOutcome {
    let inc = ctx.inc;
    let mut rng = Xoshiro256PlusPlus::seed_from_u64(seed ^ 0x6f64_6473_626f_6172);
    let mut state = start;
    let mut best = state.clone();
    let mut best_key = best.key(ctx);
    let mut iterations = 0u64;
    let mut stale = 0u64;
    let mut rounds = 0u64;
    let mut memo = Certified::new(inc.tasks.len());
    // The memo of `best` (a local optimum once a descent ended there).
    let mut best_memo = memo.clone();
    // The last key reported: a long descent (seconds on a large incident)
    // reports its plan now and then, and every report is better than the
    // one before it.
    let mut told = best_key.clone();
    let mut next_report = budget.elapsed() + DESCENT_REPORT_EVERY;
    loop {
        // Descend to a local optimum.
        loop {
            if budget.exhausted() {
                // Keep the descent's progress: every step it took made the
                // key better, so a descent cut short still beats its start.
                let cut = State::new(ctx, &state.placement());
                let key = cut.key(ctx);
                if key.better_than(&best_key) {
                    best = cut;
                    best_key = key;
                    if best_key.better_than(&told) {
                        on_improve(&best, &best_key, iterations);
                    }
                }
                return SearchOutcome {
                    best,
                    best_key,
                    iterations,
                    stopped_by_budget: true,
                };
            }
            let Some(step) =
                best_step_certified(ctx, &mut state, &mut iterations, &mut memo, Some(budget))
            else {
                if budget.exhausted() {
                    continue; // reported at the top of the loop
                }
                break;
            };
            // The step was ranked from trial sums; accept it only if the key
            // of the sums it leaves behind is better too. Tiny rounding in
            // the running sums could otherwise make a step and its reverse
            // both look like gains (a cycle).
            let before = state.key(ctx);
            let was = state.place.clone();
            let undo = apply_step(inc, &mut state, step);
            memo.between(&was, &state.place);
            if !state.key(ctx).better_than(&before) {
                // The tasks it touched are marked changed already.
                apply_step(inc, &mut state, undo);
                break;
            }
            if budget.elapsed() >= next_report {
                next_report = budget.elapsed() + DESCENT_REPORT_EVERY;
                // Scored afresh, as the plans reported at a descent's end.
                let now = State::new(ctx, &state.placement());
                let key = now.key(ctx);
                if key.better_than(&told) {
                    on_improve(&now, &key, iterations);
                    told = key;
                }
            }
        }
        // Rebuild the sums from scratch now and then so rounding never piles up.
        state = State::new(ctx, &state.placement());
        let key = state.key(ctx);
        if key.better_than(&best_key) {
            best = state.clone();
            best_key = key;
            best_memo = memo.clone();
            stale = 0;
            if best_key.better_than(&told) {
                on_improve(&best, &best_key, iterations);
                told = best_key.clone();
            }
        } else {
            stale += 1;
            // Restart from the best plan found so far.
            state = best.clone();
            memo = best_memo.clone();
        }
        rounds += 1;
        if stale >= limits.stale_rounds || rounds >= limits.max_rounds {
            return SearchOutcome {
                best,
                best_key,
                iterations,
                stopped_by_budget: false,
            };
        }
        let was = state.place.clone();
        perturb(ctx, &mut state, &mut rng);
        memo.between(&was, &state.place);
    }
}

/// Tolerance for threshold tests in ln space.
pub fn at_least(a: f64, threshold: f64) -> bool {
    a >= threshold - LN_TOLERANCE * threshold.abs().max(1.0)
}
