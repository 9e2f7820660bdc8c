//! Exact branch and bound over the units, with proof.
//!
//! Depth-first, one unit per level (the largest units first), each unit to
//! reserve or to a task it may go to. At every node each task's odds are
//! bounded from above ([`super::bound`]) assuming every unit not yet placed
//! that it accepts could still join it; the key is monotone in every task's
//! odds (raising one entry of a vector never lowers its sorted form), so the
//! key of the vector of bounds bounds the key of every completion, and a node
//! whose bound key is not better than the incumbent is cut.
//!
//! Symmetry: units that are interchangeable (same type, same ratings, same
//! place on the ground) sit next to each other in the order and take
//! options in non-decreasing order, so each multiset of choices (a count
//! vector per group) is visited once.
//!
//! Two goals, each among the plans whose capped key entries reach the
//! required thresholds (entry by entry; none for the plain best key): the
//! best key under the context's caps and floors, and (stable re-plan) the
//! least disruption from the ground (withdrawals, then dispatches), ties to
//! the better key. A node is cut when the sorted bounds of its tasks miss a
//! threshold: the key is monotone in every task's odds, so no completion
//! can meet it.
//!
//! Cover cut: the bounds above let every task count on every free unit at
//! once. Where each task of a tier must reach a level (the first entry of
//! a better key than the incumbent's, the cap of a tier the incumbent holds
//! at its cap throughout and the next tier's worst entry, or a tier's first
//! threshold), each of
//! its traits needs ln Φ(z) ≥ level − the other traits' ln bounds at the
//! node, so on the hedge side (z ≥ 0) at least need + z·√(variance now) −
//! mean now more mean (the variance only grows as units join), and on the
//! gamble side (z < 0) at least need + z·√(variance with every candidate)
//! − mean now (the variance is at most that). Each free unit joins one task:
//! when a trait's shortfalls over those tasks exceed the mean of the free
//! units that may join any of them, no completion reaches the levels.
//!
//! Inert units ([`Goal::Key`]): a unit that brings no mean and no spread to
//! any trait a task counts is not placed there once the task holds the
//! units its count needs (`min_units`, one if it has a need): the same plan
//! with the unit in reserve has the same key. Such units are only tried
//! there while the task is short of that count (they may be what lifts it
//! from odds 0); an optimal plan without the skipped pattern always
//! exists (move such units to reserve one at a time, each move keeps the
//! key).

use super::Budget;
use super::bound::{TraitBound, ratio_orders, task_ln_upper_bound, task_ln_upper_bound_traits};
use super::key::{ObjectiveKey, cmp_ln, counts};
use super::search::{Ctx, State};
use super::stable::{Disruption, unit_disruption};
use crate::model::{Placement, TaskIdx, UnitIdx};
use crate::odds::ln_phi;
use std::collections::HashMap;

/// What the search optimises.
pub enum Goal {
    /// The best key under the context's caps and floors.
    Key,
    /// The least disruption from `ground`; ties to the better key.
    LeastDisruption { ground: Vec<Option<TaskIdx>> },
}

pub struct Incumbent {
    pub state: State,
    pub key: ObjectiveKey,
    /// Disruption from the ground (zero for [`Goal::Key`]).
    pub cost: Disruption,
}

pub struct ExactOutcome {
    pub best: Option<Incumbent>,
    /// The whole tree was searched: the incumbent is optimal.
    pub complete: bool,
    pub nodes: u64,
}

struct Search<'c, 'a> {
    ctx: &'c Ctx<'a>,
    goal: Goal,
    /// Capped entries' thresholds every plan must reach (ln).
    required: Vec<f64>,
    order: Vec<UnitIdx>,
    /// `same_as_prev[d]`: order[d] is interchangeable with order[d − 1].
    same_as_prev: Vec<bool>,
    /// Option preferred first for each unit (incumbent's or ground's).
    preferred: Vec<Option<TaskIdx>>,
    free: Vec<bool>,
    /// Units among the free ones that must be withdrawn (their ground task
    /// is open but no longer takes them), for the disruption bound.
    forced: Vec<bool>,
    forced_left: usize,
    ratio: Vec<Vec<UnitIdx>>,
    best: Option<Incumbent>,
    nodes: u64,
    node_limit: u64,
    aborted: bool,
    buf: Vec<(f64, f64)>,
    ub: Vec<f64>,
    /// Per task, its traits' bounds at the node (for the cover cut).
    trait_ub: Vec<Vec<TraitBound>>,
    /// ln level every task of a tier must reach from the thresholds (the
    /// tier's first entry), per tier.
    tier_floor: [Option<f64>; 3],
    /// Counted tasks per tier (the key's capped entries, tier by tier).
    tier_len: [usize; 3],
    /// Per trait: shortfall summed over the tasks, and the tasks short.
    short: Vec<(f64, Vec<TaskIdx>)>,
    /// Per trait, the free units' mean that may go to a short task (scratch).
    cover_buf: Vec<f64>,
    /// Per trait, a task's shortfalls at its mandatory and at the partial
    /// level, and per trait the extra shortfalls of the partial level
    /// (scratch of the cover cut).
    gap_must: Vec<f64>,
    gap_may: Vec<f64>,
    extra: Vec<Vec<f64>>,
}

/// Steps per unit of z of [`z_table`].
const Z_STEPS: f64 = 128.0;

/// ln Φ(z) on the grid z = −40 + i/128, i = 0..=10 240 (computed once).
fn z_table() -> &'static [f64] {
    static TABLE: std::sync::OnceLock<Vec<f64>> = std::sync::OnceLock::new();
    TABLE.get_or_init(|| {
        (0..=(80.0 * Z_STEPS) as usize)
            .map(|i| ln_phi(-40.0 + i as f64 / Z_STEPS))
            .collect()
    })
}

/// A lower bound on every z with ln Φ(z) ≥ `level`: the largest grid point
/// whose ln Φ is below the level (ln Φ increases), a hair lower; −∞ when
/// even z = −40 reaches it (no requirement worth a cut).
fn z_for_level(level: f64) -> f64 {
    let table = z_table();
    // First grid point at or above the level; the one before is below it.
    let i = table.partition_point(|&l| l < level);
    if i == 0 || level.is_nan() {
        return f64::NEG_INFINITY;
    }
    -40.0 + (i - 1) as f64 / Z_STEPS - 1e-9
}

fn option_index(o: Option<TaskIdx>) -> usize {
    o.map_or(0, |t| t.index() + 1)
}

impl Search<'_, '_> {
    fn thresholds_met(&self, ln: &[f64]) -> bool {
        self.required.is_empty()
            || ObjectiveKey::from_ln_odds(self.ctx.inc, ln).meets(&self.required)
    }

    fn bound_prunes(&mut self, state: &State, cost: Disruption) -> bool {
        let inc = self.ctx.inc;
        for t in crate::model::TaskIdx::range(inc.tasks.len()) {
            if !counts(inc, t) {
                self.ub[t] = 0.0;
                continue;
            }
            let free = &self.free;
            let allowed = &self.ctx.allowed_on;
            let may_join = |u: UnitIdx| free[u] && allowed[u][t];
            self.ub[t] = task_ln_upper_bound_traits(
                inc,
                t,
                &state.tallies[t],
                &self.ratio,
                &may_join,
                &mut self.buf,
                Some(&mut self.trait_ub[t]),
            );
        }
        if !self.thresholds_met(&self.ub) {
            return true;
        }
        if self.cover_prunes(state) {
            return true;
        }
        let Some(best) = &self.best else {
            return false;
        };
        if matches!(self.goal, Goal::LeastDisruption { .. }) {
            let lower = Disruption {
                withdrawals: cost.withdrawals + self.forced_left,
                dispatches: cost.dispatches,
            };
            if lower > best.cost {
                return true;
            }
            if lower < best.cost {
                return false;
            }
        }
        let ub_key = self.ctx.key_of(&self.ub);
        !ub_key.better_than(&best.key)
    }

    /// Per tier, the ln level each of its tasks must reach in a plan whose
    /// key beats the incumbent's ([`Goal::Key`]): the first tier's worst
    /// entry; and while a tier is at its cap throughout (no plan can exceed
    /// it there, so a better plan ties it), the cap for that tier and the
    /// next tier's worst entry. A capped entry at least a level means the
    /// odds are too.
    fn levels_to_beat(&self) -> [Option<f64>; 3] {
        let mut beat = [None; 3];
        let (Goal::Key, Some(b)) = (&self.goal, &self.best) else {
            return beat;
        };
        let capped = b.key.capped();
        if capped.len() != self.tier_len.iter().sum::<usize>() {
            return beat;
        }
        // Held or focused keys rank by other caps: the first entry only.
        let plain = self.ctx.floors.is_empty() && !self.ctx.focus;
        let mut at = 0;
        for (tier, &len) in self.tier_len.iter().enumerate() {
            if len == 0 {
                continue;
            }
            beat[tier] = Some(capped[at]);
            let cap = self.ctx.caps[tier];
            if !(plain && capped[at..at + len].iter().all(|&e| e == cap)) {
                break;
            }
            at += len;
        }
        beat
    }

    /// Under floors (a threshold search, [`super::search::Ctx::with_floors`]
    /// or `with_focus`): a plan better than an incumbent that meets them
    /// ties the floors and has its entry f = floors.len() at least the
    /// incumbent's, so the tasks of that entry's tier from its position on
    /// reach it: (tier, ln level, how many of the tier's tasks).
    fn partial_level(&self) -> Option<(usize, f64, usize)> {
        let (Goal::Key, Some(b)) = (&self.goal, &self.best) else {
            return None;
        };
        let f = self.ctx.floors.len();
        let capped = b.key.capped();
        if f == 0 || f >= capped.len() || capped.len() != self.tier_len.iter().sum::<usize>() {
            return None;
        }
        if !b.key.meets(&self.ctx.floors) {
            return None;
        }
        let mut at = 0;
        for (tier, &len) in self.tier_len.iter().enumerate() {
            if f < at + len {
                return Some((tier, capped[f], len - (f - at)));
            }
            at += len;
        }
        None
    }

    /// Per trait, the least mean task `t` still needs for its odds to reach
    /// ln `level`, into `gaps`; `false` when it cannot reach it (its bound
    /// misses the level, or it is full and short). See the module docs.
    fn gaps_for(&self, state: &State, t: TaskIdx, level: f64, gaps: &mut [f64]) -> bool {
        gaps.fill(0.0);
        // Looser than the key's tolerance, so a tie is never cut.
        let level = level - 1e-8 * level.abs().max(1.0);
        if level.is_nan() || level == f64::NEG_INFINITY {
            return true;
        }
        if self.ub[t] < level {
            return false;
        }
        let inc = self.ctx.inc;
        let tally = &state.tallies[t];
        let bounds = &self.trait_ub[t];
        for (k, need) in inc.tasks[t].needs.iter().enumerate() {
            if !need.counts() {
                continue;
            }
            // ln Φ(z_k) ≥ level − Σ of the other traits' bounds.
            let others: f64 = bounds
                .iter()
                .enumerate()
                .filter(|&(j, _)| j != k)
                .map(|(_, b)| b.ln_ub)
                .sum();
            let z = z_for_level((level - others).min(0.0));
            if z == f64::NEG_INFINITY {
                continue;
            }
            // Hedge side: the variance only grows as units join, so the
            // spread now is the least; gamble side: the spread with every
            // candidate is the most.
            let var = if z >= 0.0 {
                tally.unit_var(k) + need.sd * need.sd
            } else {
                bounds[k].var_max
            };
            let gap = need.need + z * var.max(0.0).sqrt() - tally.mean(k);
            if gap > 1e-9 * need.need.abs().max(1.0) {
                if self.ctx.is_full(t, tally.count()) {
                    return false;
                }
                gaps[k] = gap;
            }
        }
        true
    }

    /// Would unit `u` on task `t` change nothing the key sees ([`Goal::Key`]
    /// only)? It brings no mean and no spread to any trait the task counts,
    /// and the task already holds what its odds need from the count
    /// (`min_units`, one unit if it has a need): then every plan with `u`
    /// there ties or loses to the same plan with `u` in reserve (the task's
    /// odds are the same, the reserve only grows), so that option is
    /// skipped. See the module docs.
    fn inert_on(&self, state: &State, u: UnitIdx, t: TaskIdx) -> bool {
        if !matches!(self.goal, Goal::Key) {
            return false;
        }
        let inc = self.ctx.inc;
        let task = &inc.tasks[t];
        let has_needs = task.needs.iter().any(|n| n.counts());
        let least = task.min_units.unwrap_or(0).max(u32::from(has_needs));
        if state.tallies[t].count() < least {
            return false;
        }
        task.needs.iter().enumerate().all(|(k, n)| {
            let r = inc.belief(u, k);
            !n.counts() || (r.mean == 0.0 && r.sd() == 0.0)
        })
    }

    /// The cover cut of the module docs.
    fn cover_prunes(&mut self, state: &State) -> bool {
        let inc = self.ctx.inc;
        let beat = self.levels_to_beat();
        let partial = self.partial_level();
        for s in &mut self.short {
            s.0 = 0.0;
            s.1.clear();
        }
        let mut must = std::mem::take(&mut self.gap_must);
        let mut may = std::mem::take(&mut self.gap_may);
        let mut extra = std::mem::take(&mut self.extra);
        extra.iter_mut().for_each(Vec::clear);
        let mut eligible = 0;
        let mut cut = false;
        for t in crate::model::TaskIdx::range(inc.tasks.len()) {
            if !counts(inc, t) {
                continue;
            }
            let tier = inc.tasks[t].tier.index();
            let level = [self.tier_floor[tier], beat[tier]]
                .into_iter()
                .flatten()
                .reduce(f64::max);
            if let Some(level) = level
                && !self.gaps_for(state, t, level, &mut must)
            {
                cut = true;
                break;
            }
            if level.is_none() {
                must.fill(0.0);
            }
            for (k, &g) in must.iter().enumerate() {
                if g > 0.0 {
                    self.short[k].0 += g;
                    self.short[k].1.push(t);
                }
            }
            // At least `count` tasks of the tier reach the partial level:
            // per trait, the `count` least extra shortfalls count.
            if let Some((p_tier, p_level, _)) = partial
                && p_tier == tier
                && self.gaps_for(
                    state,
                    t,
                    level.map_or(p_level, |l| l.max(p_level)),
                    &mut may,
                )
            {
                eligible += 1;
                for (k, (&g, &m)) in may.iter().zip(&must).enumerate() {
                    extra[k].push((g - m).max(0.0));
                    if g > 0.0 && m <= 0.0 {
                        self.short[k].1.push(t);
                    }
                }
            }
        }
        if !cut && let Some((_, _, count)) = partial {
            if eligible < count {
                cut = true;
            } else {
                for (k, e) in extra.iter_mut().enumerate() {
                    e.sort_by(f64::total_cmp);
                    self.short[k].0 += e.iter().take(count).sum::<f64>();
                }
            }
        }
        self.gap_must = must;
        self.gap_may = may;
        self.extra = extra;
        if cut {
            return true;
        }
        if self.short.iter().all(|s| s.0 <= 0.0) {
            return false;
        }
        let supply = &mut self.cover_buf;
        supply.iter_mut().for_each(|s| *s = 0.0);
        for &u in &self.order {
            if !self.free[u] {
                continue;
            }
            for (k, (_, tasks)) in self.short.iter().enumerate() {
                if tasks.iter().any(|&t| self.ctx.allowed_on[u][t]) {
                    supply[k] += inc.belief(u, k).mean.max(0.0);
                }
            }
        }
        self.short
            .iter()
            .zip(supply.iter())
            .any(|((gap, _), s)| *gap > s + 1e-9 * gap.abs().max(1.0))
    }

    fn leaf(
        &mut self,
        state: &State,
        cost: Disruption,
        on_improve: &mut dyn FnMut(&State, &ObjectiveKey),
    ) {
        if !self.thresholds_met(&state.ln) {
            return;
        }
        let key = state.key(self.ctx);
        let better = match &self.best {
            None => true,
            Some(b) => match self.goal {
                Goal::Key => key.better_than(&b.key),
                Goal::LeastDisruption { .. } => {
                    cost < b.cost || (cost == b.cost && key.better_than(&b.key))
                }
            },
        };
        if better {
            on_improve(state, &key);
            self.best = Some(Incumbent {
                state: state.clone(),
                key,
                cost,
            });
        }
    }

    fn dfs(
        &mut self,
        state: &mut State,
        depth: usize,
        prev_option: usize,
        cost: Disruption,
        budget: &Budget,
        on_improve: &mut dyn FnMut(&State, &ObjectiveKey),
    ) {
        if self.aborted {
            return;
        }
        self.nodes += 1;
        if (self.nodes.is_multiple_of(256) && budget.exhausted()) || self.nodes > self.node_limit {
            self.aborted = true;
            return;
        }
        if depth == self.order.len() {
            self.leaf(state, cost, on_improve);
            return;
        }
        if self.bound_prunes(state, cost) {
            return;
        }
        let inc = self.ctx.inc;
        let u = self.order[depth];
        let min_option = if self.same_as_prev[depth] {
            prev_option
        } else {
            0
        };
        let mut options: Vec<Option<TaskIdx>> = Vec::with_capacity(self.ctx.allowed[u].len() + 1);
        let pref = self.preferred[u];
        if pref.is_none_or(|t| self.ctx.allowed_on[u][t]) {
            options.push(pref);
        }
        if pref.is_some() {
            options.push(None);
        }
        options.extend(
            self.ctx.allowed[u]
                .iter()
                .map(|&t| Some(t))
                .filter(|&o| o != pref),
        );
        self.free[u] = false;
        let was_forced = self.forced[u];
        if was_forced {
            self.forced_left -= 1;
        }
        let ground = match &self.goal {
            Goal::LeastDisruption { ground } => Some(ground[u]),
            Goal::Key => None,
        };
        for o in options {
            let oi = option_index(o);
            if oi < min_option {
                continue;
            }
            if let Some(t) = o {
                if self.ctx.is_full(t, state.tallies[t].count())
                    || !self.ctx.may_draw_reserve(state.reserve)
                    || self.inert_on(state, u, t)
                {
                    continue;
                }
                state.apply_move(inc, u, Some(t));
            }
            let step = ground.map_or(Disruption::default(), |g| unit_disruption(inc, g, o));
            self.dfs(state, depth + 1, oi, cost + step, budget, on_improve);
            if o.is_some() {
                state.apply_move(inc, u, None);
            }
            if self.aborted {
                break;
            }
        }
        self.free[u] = true;
        if was_forced {
            self.forced_left += 1;
        }
    }
}

/// Exhaustive search for `goal` with `incumbent` as the plan to beat.
pub fn branch_and_bound(
    ctx: &Ctx,
    goal: Goal,
    required: &[f64],
    incumbent: Option<Incumbent>,
    budget: &Budget,
    node_limit: u64,
    on_improve: &mut dyn FnMut(&State, &ObjectiveKey),
) -> ExactOutcome {
    let inc = ctx.inc;
    let n = inc.units.len();
    // Start: pinned units on their tasks, everything else in reserve.
    let mut start = Placement::all_reserve(n);
    for (u, t) in ctx.pinned.iter().enumerate() {
        start.set(UnitIdx::new(u), *t);
    }
    let mut state = State::new(ctx, &start);

    // Units in descending order of their largest share of the board's needs,
    // interchangeable units side by side.
    let n_traits = inc.traits.len();
    let mut total_need = vec![0.0f64; n_traits];
    for (t, task) in inc.tasks.iter().enumerate() {
        let t = crate::model::TaskIdx::new(t);
        if counts(inc, t) {
            for (k, need) in task.needs.iter().enumerate() {
                total_need[k] += need.need.max(need.sd);
            }
        }
    }
    let size = |u: UnitIdx| {
        inc.units[u]
            .ratings
            .iter()
            .enumerate()
            .map(|(k, r)| {
                if total_need[k] > 0.0 {
                    (r.mean + r.sd) / total_need[k]
                } else {
                    0.0
                }
            })
            .fold(0.0, f64::max)
    };
    let ground_of = |u: UnitIdx| match &goal {
        Goal::LeastDisruption { ground } => ground[u],
        Goal::Key => None,
    };
    let mut groups: HashMap<Vec<u64>, usize> = HashMap::new();
    let mut group_of = vec![0usize; n];
    for &u in &ctx.movable {
        let unit = &inc.units[u];
        let mut sig = vec![unit.type_idx as u64, option_index(ground_of(u)) as u64];
        for k in 0..unit.ratings.len() {
            let r = inc.belief(u, k); // readings make a unit unlike its mates
            sig.push(r.mean.to_bits());
            sig.push(r.sd().to_bits());
        }
        let next = groups.len();
        group_of[u] = *groups.entry(sig).or_insert(next);
    }
    let mut order = ctx.movable.clone();
    let group_size: Vec<f64> = {
        let mut s = vec![0.0; groups.len()];
        for &u in &order {
            s[group_of[u]] = size(u);
        }
        s
    };
    order.sort_by(|&a, &b| {
        group_size[group_of[b]]
            .partial_cmp(&group_size[group_of[a]])
            .unwrap_or(std::cmp::Ordering::Equal)
            .then(group_of[a].cmp(&group_of[b]))
            .then(a.cmp(&b))
    });
    let same_as_prev: Vec<bool> = (0..order.len())
        .map(|d| d > 0 && group_of[order[d]] == group_of[order[d - 1]])
        .collect();

    let mut preferred = vec![None; n];
    match &goal {
        Goal::Key => {
            if let Some(b) = &incumbent {
                preferred.clone_from(&b.state.place);
            }
        }
        Goal::LeastDisruption { ground } => preferred.clone_from(ground),
    }
    let mut free = vec![false; n];
    let mut forced = vec![false; n];
    let mut forced_left = 0;
    for &u in &order {
        free[u] = true;
        if let Goal::LeastDisruption { ground } = &goal
            && let Some(g) = ground[u]
            && counts(inc, g)
            && !ctx.allowed_on[u][g]
        {
            forced[u] = true;
            forced_left += 1;
        }
    }
    // Moves of pinned and out-of-service units are fixed.
    let base_cost = match &goal {
        Goal::LeastDisruption { ground } => (0..n)
            .filter(|u| !free[*u])
            .map(|u| unit_disruption(inc, ground[u], start.get(UnitIdx::new(u))))
            .fold(Disruption::default(), |a, b| a + b),
        Goal::Key => Disruption::default(),
    };
    // Each tier's first threshold binds every task of the tier.
    let mut tier_floor = [None; 3];
    let mut tier_len = [0usize; 3];
    for t in crate::model::TaskIdx::range(inc.tasks.len()) {
        if counts(inc, t) {
            tier_len[inc.tasks[t].tier.index()] += 1;
        }
    }
    let mut start_entry = 0;
    for tier in 0..3 {
        if tier_len[tier] > 0 {
            tier_floor[tier] = required.get(start_entry).copied().filter(|r| r.is_finite());
        }
        start_entry += tier_len[tier];
    }
    let mut search = Search {
        ctx,
        goal,
        required: required.to_vec(),
        order,
        same_as_prev,
        preferred,
        free,
        forced,
        forced_left,
        ratio: ratio_orders(inc),
        best: incumbent,
        nodes: 0,
        node_limit,
        aborted: false,
        buf: Vec::new(),
        ub: vec![0.0; inc.tasks.len()],
        trait_ub: vec![Vec::new(); inc.tasks.len()],
        tier_floor,
        tier_len,
        short: vec![(0.0, Vec::new()); n_traits],
        cover_buf: vec![0.0; n_traits],
        gap_must: vec![0.0; n_traits],
        gap_may: vec![0.0; n_traits],
        extra: vec![Vec::new(); n_traits],
    };
    search.dfs(&mut state, 0, 0, base_cost, budget, on_improve);
    ExactOutcome {
        complete: !search.aborted,
        nodes: search.nodes,
        best: search.best,
    }
}

/// Upper bound on the worst odds over all open tasks for any feasible plan:
/// the least of the tasks' bounds with every unit they accept on them.
pub fn worst_odds_upper_bound(ctx: &Ctx) -> f64 {
    let inc = ctx.inc;
    let n = inc.units.len();
    let mut start = Placement::all_reserve(n);
    for (u, t) in ctx.pinned.iter().enumerate() {
        start.set(UnitIdx::new(u), *t);
    }
    let state = State::new(ctx, &start);
    let ratio = ratio_orders(inc);
    let mut free = vec![false; n];
    for &u in &ctx.movable {
        free[u] = true;
    }
    let mut buf = Vec::new();
    let mut worst: f64 = 0.0;
    for t in crate::model::TaskIdx::range(inc.tasks.len()) {
        if !counts(inc, t) {
            continue;
        }
        let may_join = |u: UnitIdx| free[u] && ctx.allowed_on[u][t];
        let ub = task_ln_upper_bound(inc, t, &state.tallies[t], &ratio, &may_join, &mut buf);
        if cmp_ln(ub, worst) == std::cmp::Ordering::Less {
            worst = ub;
        }
    }
    worst.exp()
}
