//! Per-tier upper bounds from a convex relaxation (docs/solver.md, "Tier
//! bounds").
//!
//! For tier T: no plan that keeps every task of the tiers above at least at
//! the given plan's worst odds of its tier (capped at the tier's secure
//! level) gives every task of T odds p or more, when the relaxation below is
//! infeasible at p. Bisection on p then brackets the smallest such p.
//!
//! The relaxation at p. Units with the same type, ratings and status form a
//! class c of n_c units; y_cj ∈ [0, n_c] is how many of them go to task j
//! (fractions allowed). Pinned units are constants on their task. Rows:
//! class supply Σ_j y_cj ≤ n_c, `max_units`, `min_units` (and one unit at
//! least: a task with needs and no unit has odds 0), `reserve_min`. A task's
//! odds Π_k Φ(z_k) ≥ p needs every factor Φ(z_k) ≥ p / Π_{k'≠k} U_k', with
//! U_k' the per-trait bound of [`super::bound::z_upper_bound`] (each other
//! factor is at most its bound), so each trait needs z_k ≥ ζ_k.
//!
//! * ζ ≥ 0 (hedge side): mean − need ≥ ζ·sd. At whole units the variance
//!   Σ_t [(1−ρ_t) Σ s² x² + ρ_t (Σ s x)²] + need_sd² is the squared norm of
//!   an affine map of x, so the constraint is a second-order cone; splitting
//!   a class equally minimises Σ x², so per class it reads s_c y_c/√n_c.
//!   That alone is weak at scale (a unit split over J tasks counts 1/J² of
//!   its variance), so two linear cuts valid at whole units join it:
//!   V ≥ V_lin = Σ s_i² x_i + need_sd² (ρ ≥ 0), and V_lin of any set meeting
//!   the trait is at least V_lo, the fixed point of
//!   V_lo ← min { V_lin : mean ≥ need + ζ·√V_lo } (a fractional knapsack,
//!   smallest s²/m first); so mean ≥ need + ζ√V_lo, and since √ is concave
//!   the chord of √V between V_lo and V_hi (every allowed unit on the task)
//!   lies below it: mean − need ≥ ζ·(√V_lo + (V_lin − V_lo)/(√V_lo + √V_hi)).
//! * ζ < 0 (gamble side): mean − need ≥ ζ·sd needs an upper bound on sd
//!   that is concave: at whole units (Σ_{i∈t} s_i x_i)² ≤ S_t·Σ s_i x_i with
//!   S_t the sum over every allowed unit of type t, so V ≤ L(y), linear, and
//!   mean − need + |ζ|·u ≥ 0 with u² ≤ L(y) (a rotated cone).
//!
//! * Both sides: the trait's mean must reach need + ζ√V_lo (hedge) or
//!   need − |ζ|·√L(all) (gamble), so the task holds at least the fewest
//!   whole units whose means reach it (largest first): a count row.
//!
//! The cones go to Clarabel. Only its `PrimalInfeasible` status lowers a
//! bound; any other outcome counts as "maybe feasible", so numerical trouble
//! can only leave a bound weaker, never wrong.

use super::bound::{ratio_orders, z_upper_bound};
use super::key::ObjectiveKey;
use super::search::Ctx;
use crate::model::{Incident, Placement, TaskIdx, Tier, UnitIdx};
use crate::odds::{TaskTally, ln_phi};
use clarabel::algebra::CscMatrix;
use clarabel::solver::{DefaultSettings, DefaultSolver, IPSolver, SolverStatus, SupportedConeT};
use std::sync::atomic::{AtomicBool, Ordering};
use std::time::{Duration, Instant};

/// One tier's worst odds under a plan and how high they could go.
#[derive(Debug, Clone, PartialEq)]
pub struct TierBound {
    pub tier: Tier,
    /// The plan's worst odds among the tier's open tasks.
    pub worst_odds: f64,
    /// No plan that keeps the tiers above at least at this plan's worst
    /// (capped at their secure levels) gives every task of this tier more;
    /// `None` when no bound was found in time.
    pub upper_bound: Option<f64>,
}

/// What [`tier_bounds`] returns.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct TierBounds {
    /// Tiers with an open task, in the trade's order.
    pub tiers: Vec<TierBound>,
    /// A bound on the worst odds over every open task and every feasible
    /// plan: the bound of the first tier with a counting task (nothing above
    /// it is held).
    pub overall: Option<f64>,
    /// Tiers whose bisection the time limit or the cancel flag cut: their
    /// bound is valid but a longer run may lower it. Every other tier's
    /// bound depends only on the incident (and, below the first tier with a
    /// need, on the plan's worst odds of the tiers above).
    pub cut: Vec<Tier>,
}

impl TierBounds {
    /// Did the bisection of `tier` run all its steps (see [`Self::cut`])?
    pub fn complete(&self, tier: Tier) -> bool {
        !self.cut.contains(&tier)
    }

    /// The entry of `tier`, if it has open tasks.
    pub fn get(&self, tier: Tier) -> Option<&TierBound> {
        self.tiers.iter().find(|b| b.tier == tier)
    }

    /// The entry of the first tier whose worst odds are below its secure
    /// level in `inc`, if any.
    pub fn first_short(&self, inc: &Incident) -> Option<&TierBound> {
        self.tiers
            .iter()
            .find(|b| b.worst_odds < inc.secure.get(b.tier))
    }
}

/// Limits of [`tier_bounds`].
#[derive(Debug, Clone)]
pub struct RelaxOptions {
    /// Wall-clock time for all tiers together. Default 1.5 s. A tier whose
    /// bisection it cuts is listed in [`TierBounds::cut`].
    pub time_limit: Duration,
    /// Halvings of the fixed bisection bracket z ∈ [−[`Z_SPAN`], Z_SPAN]
    /// per tier (20: z to 8·10⁻⁵). Only the halvings whose midpoint lies
    /// between the plan's worst and the per-task bound call the solver.
    pub steps: u32,
    /// Bound only the first tier short of its secure level (the others get
    /// `upper_bound: None`). Default false.
    pub first_short_only: bool,
}

impl Default for RelaxOptions {
    fn default() -> Self {
        RelaxOptions {
            time_limit: Duration::from_millis(1500),
            steps: 20,
            first_short_only: false,
        }
    }
}

/// Half-width of the bisection bracket on the tier's z. The bracket is the
/// same for every plan, so the midpoints tried, and the bound, depend on
/// the incident only (docs/solver.md, "Tier bounds").
pub const Z_SPAN: f64 = 40.0;

/// Outcome of one relaxation at one target.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Verdict {
    /// Proven: no plan reaches the target (bound lowered).
    Infeasible,
    /// Feasible, or the solver could not tell.
    NotRefuted,
    /// The time limit stopped the solver: no verdict (the bisection stops).
    Cut,
}

/// The z with ln Φ(z) = `ln_p` (bisection: ln Φ is increasing). Clamped on
/// the side that keeps a requirement z ≥ result no stronger than the truth:
/// 40 for ln_p ≥ 0 (odds of 1 need z = ∞), −∞ below ln Φ(−200).
pub fn z_for_ln_odds(ln_p: f64) -> f64 {
    if ln_p >= 0.0 {
        return 40.0;
    }
    let (mut lo, mut hi) = (-200.0f64, 40.0f64);
    if ln_phi(lo) >= ln_p {
        return f64::NEG_INFINITY;
    }
    for _ in 0..200 {
        let mid = 0.5 * (lo + hi);
        if ln_phi(mid) < ln_p {
            lo = mid;
        } else {
            hi = mid;
        }
        if hi - lo < 1e-12 {
            break;
        }
    }
    hi
}

/// A class of interchangeable movable units.
struct Class {
    rep: UnitIdx,
    n: f64,
}

/// What a task brings before any free unit joins: its pinned units.
struct Fixed {
    tally: TaskTally,
    /// Σ sd per (type, trait) of the pinned units, for the ρ part.
    sd_sum: Vec<Vec<f64>>,
    /// Σ sd² per (type, trait).
    sd2_sum: Vec<Vec<f64>>,
}

struct Prep<'c, 'a> {
    ctx: &'c Ctx<'a>,
    classes: Vec<Class>,
    fixed: Vec<Fixed>,
    /// Per task and trait: ln of the per-trait bound U_jk (0 for a trait
    /// that does not count).
    ln_trait_ub: Vec<Vec<f64>>,
    /// Per task: ln of the task bound (Σ_k ln U_jk; −∞ when min_units or
    /// the no-unit rule cannot be met).
    ln_task_ub: Vec<f64>,
}

impl<'c, 'a> Prep<'c, 'a> {
    fn new(ctx: &'c Ctx<'a>) -> Self {
        let inc = ctx.inc;
        let n_traits = inc.traits.len();
        let n_types = inc.unit_types.len();
        let mut classes: Vec<Class> = Vec::new();
        let mut class_of_group: std::collections::HashMap<usize, usize> = Default::default();
        for &u in &ctx.movable {
            let next = classes.len();
            let c = *class_of_group.entry(ctx.group[u.index()]).or_insert(next);
            if c == next {
                classes.push(Class { rep: u, n: 0.0 });
            }
            classes[c].n += 1.0;
        }
        let mut fixed: Vec<Fixed> = (0..inc.tasks.len())
            .map(|_| Fixed {
                tally: TaskTally::for_incident(inc),
                sd_sum: vec![vec![0.0; n_traits]; n_types],
                sd2_sum: vec![vec![0.0; n_traits]; n_types],
            })
            .collect();
        for (u, p) in ctx.pinned.iter().enumerate() {
            let Some(t) = *p else { continue };
            let u = UnitIdx::new(u);
            let unit = &inc.units[u];
            if !crate::rules::placeable(unit) {
                continue;
            }
            let f = &mut fixed[t.index()];
            f.tally.add(inc, u);
            for (k, r) in unit.ratings.iter().enumerate() {
                f.sd_sum[unit.type_idx][k] += r.sd;
                f.sd2_sum[unit.type_idx][k] += r.sd * r.sd;
            }
        }
        let orders = ratio_orders(inc);
        let mut ln_trait_ub = vec![vec![0.0; n_traits]; inc.tasks.len()];
        let mut ln_task_ub = vec![0.0; inc.tasks.len()];
        let mut buf = Vec::new();
        for t in TaskIdx::range(inc.tasks.len()) {
            let task = &inc.tasks[t];
            if !task.is_open() {
                continue;
            }
            let may_join =
                |u: UnitIdx| ctx.pinned[u.index()].is_none() && ctx.allowed_on[u.index()][t];
            let f = &fixed[t.index()].tally;
            let joinable = ctx.movable.iter().filter(|&&u| may_join(u)).count() as u32;
            let most = f.count() + joinable;
            let has_needs = task.needs.iter().any(|n| n.counts());
            if task.min_units.is_some_and(|m| most < m) || (has_needs && most == 0) {
                ln_task_ub[t.index()] = f64::NEG_INFINITY;
            }
            let mut all = f.clone();
            for &u in &ctx.movable {
                if may_join(u) {
                    all.add(inc, u);
                }
            }
            for (k, need) in task.needs.iter().enumerate() {
                if !need.counts() {
                    continue;
                }
                let nv = need.sd * need.sd;
                buf.clear();
                for &u in &orders[k] {
                    if ctx.pinned[u.index()].is_none()
                        && crate::rules::placeable(&inc.units[u])
                        && ctx.allowed_on[u.index()][t]
                    {
                        let r = inc.units[u].ratings[k];
                        buf.push((r.mean, r.sd));
                    }
                }
                let z = z_upper_bound(
                    f.mean(k) - need.need,
                    f.unit_var(k) + nv,
                    all.unit_var(k) + nv,
                    &buf,
                );
                let l = ln_phi(z);
                ln_trait_ub[t.index()][k] = l;
                ln_task_ub[t.index()] += l;
            }
        }
        Prep {
            ctx,
            classes,
            fixed,
            ln_trait_ub,
            ln_task_ub,
        }
    }

    /// May class `c` go to task `t`?
    fn allowed(&self, c: usize, t: TaskIdx) -> bool {
        self.ctx.allowed_on[self.classes[c].rep.index()][t]
    }
}

/// One (task, trait) requirement: z ≥ `zeta`.
struct Req {
    task: TaskIdx,
    k: usize,
    zeta: f64,
}

/// Requirements that every counting trait of task `t` reaches a task odds
/// of `ln_p` (through the per-trait targets).
fn task_reqs(prep: &Prep, t: TaskIdx, ln_p: f64, out: &mut Vec<Req>) {
    if ln_p == f64::NEG_INFINITY {
        return;
    }
    let task = &prep.ctx.inc.tasks[t];
    let ub = &prep.ln_trait_ub[t.index()];
    for (k, need) in task.needs.iter().enumerate() {
        if !need.counts() {
            continue;
        }
        let others: f64 = (0..ub.len()).filter(|&j| j != k).map(|j| ub[j]).sum();
        if others == f64::NEG_INFINITY {
            continue; // the task has odds 0 in every plan; nothing to hold
        }
        // A hair below the exact target, so a solver's tolerance never
        // refutes a target a whole plan reaches.
        let zeta = z_for_ln_odds((ln_p - others).min(0.0)) - 1e-6;
        if zeta == f64::NEG_INFINITY {
            continue;
        }
        out.push(Req { task: t, k, zeta });
    }
}

/// Fractional knapsack: the least Σ v·x over classes allowed on the task,
/// x_c ∈ [0, n_c], with Σ m·x ≥ `r`. `items` is (m, v, n) in ascending
/// order of v/m (m > 0 only). `None` when even all of them fall short.
fn min_var_for_mean(items: &[(f64, f64, f64)], r: f64) -> Option<f64> {
    if r <= 0.0 {
        return Some(0.0);
    }
    let (mut left, mut var) = (r, 0.0);
    for &(m, v, n) in items {
        let take = (left / m).min(n);
        var += take * v;
        left -= take * m;
        if left <= 1e-12 * r {
            return Some(var);
        }
    }
    None
}

/// The fewest whole units, largest means first, whose means add up to `r`:
/// a count every set meeting the trait needs (integrality the fractional
/// rows lack). `items` is (mean, n) in descending order of mean. `None`
/// when even all of them fall short.
fn min_count_for_mean(items: &[(f64, f64)], r: f64) -> Option<f64> {
    // A hair below r, so rounding never asks one unit too many.
    let mut left = r - 1e-9 * r.abs().max(1e-300);
    if left <= 0.0 {
        return Some(0.0);
    }
    let mut count = 0.0;
    for &(m, n) in items {
        if m <= 0.0 {
            break;
        }
        let need = (left / m - 1e-9).ceil().max(1.0);
        if need <= n {
            return Some(count + need);
        }
        count += n;
        left -= n * m;
        if left <= 0.0 {
            return Some(count);
        }
    }
    None
}

/// Largest relaxation handed to the solver (nonzeros of its matrix); above
/// it the per-task bound stands alone.
const MAX_NONZEROS: usize = 400_000;

/// Sparse rows of the conic problem in Clarabel's form A·x + s = b.
#[derive(Default)]
struct Rows {
    i: Vec<usize>,
    j: Vec<usize>,
    v: Vec<f64>,
    b: Vec<f64>,
}

impl Rows {
    fn row(&mut self, coefs: &[(usize, f64)], b: f64) {
        let r = self.b.len();
        for &(j, v) in coefs {
            if v != 0.0 {
                self.i.push(r);
                self.j.push(j);
                self.v.push(v);
            }
        }
        self.b.push(b);
    }
    fn len(&self) -> usize {
        self.b.len()
    }
}

/// Builds and solves the relaxation for `reqs`. `deadline` bounds the
/// solver's time.
fn refute(prep: &Prep, reqs: &[Req], deadline: Instant) -> Verdict {
    let ctx = prep.ctx;
    let inc = ctx.inc;
    let n_types = inc.unit_types.len();
    let mut tasks: Vec<TaskIdx> = reqs.iter().map(|r| r.task).collect();
    tasks.sort();
    tasks.dedup();
    // Variables: y_cj for allowed pairs, then one u per gamble-side row.
    let mut var_of: std::collections::HashMap<(usize, usize), usize> = Default::default();
    let mut vars: Vec<(usize, TaskIdx)> = Vec::new();
    for &t in &tasks {
        for c in 0..prep.classes.len() {
            if prep.allowed(c, t) {
                var_of.insert((c, t.index()), vars.len());
                vars.push((c, t));
            }
        }
    }
    let n_y = vars.len();
    if n_y * (reqs.len() / tasks.len().max(1) + 3) > MAX_NONZEROS {
        return Verdict::NotRefuted;
    }
    let n_u = reqs.iter().filter(|r| r.zeta < 0.0).count();
    let n_var = n_y + n_u;

    let mut lin = Rows::default();
    // y ≥ 0.
    for x in 0..n_y {
        lin.row(&[(x, -1.0)], 0.0);
    }
    // Class supply.
    for (c, class) in prep.classes.iter().enumerate() {
        let coefs: Vec<(usize, f64)> = tasks
            .iter()
            .filter_map(|t| var_of.get(&(c, t.index())).map(|&x| (x, 1.0)))
            .collect();
        if !coefs.is_empty() {
            lin.row(&coefs, class.n);
        }
    }
    // Reserve.
    let placeable = ctx.movable.len() as f64;
    let all: Vec<(usize, f64)> = (0..n_y).map(|x| (x, 1.0)).collect();
    lin.row(&all, (placeable - f64::from(ctx.reserve_min)).max(0.0));
    // Counts per task.
    for &t in &tasks {
        let task = &inc.tasks[t];
        let coefs: Vec<(usize, f64)> = (0..prep.classes.len())
            .filter_map(|c| var_of.get(&(c, t.index())).map(|&x| (x, 1.0)))
            .collect();
        let pinned = f64::from(prep.fixed[t.index()].tally.count());
        let cap = ctx.max_units[t.index()];
        if cap != u32::MAX {
            lin.row(&coefs, f64::from(cap) - pinned);
        }
        let has_needs = task.needs.iter().any(|n| n.counts());
        let least = f64::from(task.min_units.unwrap_or(0).max(u32::from(has_needs)));
        if least > pinned {
            let neg: Vec<(usize, f64)> = coefs.iter().map(|&(x, _)| (x, -1.0)).collect();
            lin.row(&neg, pinned - least);
        }
    }

    let mut socs: Vec<(Rows, usize)> = Vec::new();
    let mut u_next = n_y;
    for req in reqs {
        let t = req.task;
        let k = req.k;
        let need = inc.tasks[t].needs[k];
        let f = &prep.fixed[t.index()];
        let m_fix = f.tally.mean(k);
        // Scale: the trait's need (or its spread) is 1.
        let scale = need.need.max(need.sd).max(1e-12);
        let cls: Vec<(usize, usize)> = (0..prep.classes.len())
            .filter_map(|c| var_of.get(&(c, t.index())).map(|&x| (c, x)))
            .collect();
        let rating = |c: usize| inc.units[prep.classes[c].rep].ratings[k];
        let zeta = req.zeta;
        let mut by_mean: Vec<(f64, f64)> = cls
            .iter()
            .map(|&(c, _)| (rating(c).mean, prep.classes[c].n))
            .collect();
        by_mean.sort_by(|a, b| b.0.total_cmp(&a.0));
        let count_row = |lin: &mut Rows, r: f64| -> bool {
            match min_count_for_mean(&by_mean, r) {
                None => false,
                Some(least) => {
                    if least > 0.0 {
                        let coefs: Vec<(usize, f64)> =
                            cls.iter().map(|&(_, x)| (x, -1.0)).collect();
                        lin.row(&coefs, -least);
                    }
                    true
                }
            }
        };
        if zeta >= 0.0 {
            // V_lin and the fixed point V_lo.
            let v_fix: f64 = f.sd2_sum.iter().map(|row| row[k]).sum::<f64>() + need.sd * need.sd;
            let mut items: Vec<(f64, f64, f64)> = cls
                .iter()
                .filter(|&&(c, _)| rating(c).mean > 0.0)
                .map(|&(c, _)| {
                    let r = rating(c);
                    (r.mean, r.sd * r.sd, prep.classes[c].n)
                })
                .collect();
            items.sort_by(|a, b| (a.1 / a.0).total_cmp(&(b.1 / b.0)));
            let v_hi = v_fix
                + cls
                    .iter()
                    .map(|&(c, _)| rating(c).sd.powi(2) * prep.classes[c].n)
                    .sum::<f64>();
            let mut v_lo = v_fix;
            for _ in 0..60 {
                let r = need.need + zeta * v_lo.sqrt() - m_fix;
                let Some(extra) = min_var_for_mean(&items, r) else {
                    return Verdict::Infeasible;
                };
                let next = v_fix + extra;
                if next <= v_lo * (1.0 + 1e-12) {
                    v_lo = v_lo.max(next);
                    break;
                }
                v_lo = next;
            }
            // Shrink the cuts a hair so rounding never cuts a whole plan.
            let v_lo = v_lo * (1.0 - 1e-9);
            // mean ≥ need + ζ√V_lo.
            let coefs: Vec<(usize, f64)> = cls
                .iter()
                .map(|&(c, x)| (x, -rating(c).mean / scale))
                .collect();
            lin.row(&coefs, (m_fix - need.need - zeta * v_lo.sqrt()) / scale);
            if !count_row(&mut lin, need.need + zeta * v_lo.sqrt() - m_fix) {
                return Verdict::Infeasible;
            }
            // The chord of √V between V_lo and V_hi.
            if v_hi > v_lo && zeta > 0.0 {
                let beta = 1.0 / (v_lo.sqrt() + v_hi.sqrt());
                let coefs: Vec<(usize, f64)> = cls
                    .iter()
                    .map(|&(c, x)| {
                        let r = rating(c);
                        (x, (-r.mean + zeta * beta * r.sd * r.sd) / scale)
                    })
                    .collect();
                let b = m_fix - need.need - zeta * (v_lo.sqrt() + beta * (v_fix - v_lo));
                lin.row(&coefs, b / scale);
            }
            if zeta > 1e-3 {
                // The cone (left out near ζ = 0, where dividing by ζ would
                // hurt the conditioning; the rows above stay): ‖components‖ ≤ (mean − need)/ζ.
                let mut soc = Rows::default();
                let coefs: Vec<(usize, f64)> = cls
                    .iter()
                    .map(|&(c, x)| (x, -rating(c).mean / (zeta * scale)))
                    .collect();
                soc.row(&coefs, (m_fix - need.need) / (zeta * scale));
                let mut constant = need.sd * need.sd;
                for ty in 0..n_types {
                    let rho = inc.unit_types[ty].rho;
                    constant += (1.0 - rho) * f.sd2_sum[ty][k];
                    for &(c, x) in &cls {
                        let unit = &inc.units[prep.classes[c].rep];
                        if unit.type_idx != ty {
                            continue;
                        }
                        let w = (1.0 - rho).sqrt() * rating(c).sd / prep.classes[c].n.sqrt();
                        soc.row(&[(x, -w / scale)], 0.0);
                    }
                    if rho > 0.0 {
                        let coefs: Vec<(usize, f64)> = cls
                            .iter()
                            .filter(|&&(c, _)| inc.units[prep.classes[c].rep].type_idx == ty)
                            .map(|&(c, x)| (x, -rho.sqrt() * rating(c).sd / scale))
                            .collect();
                        if !coefs.is_empty() || f.sd_sum[ty][k] > 0.0 {
                            soc.row(&coefs, rho.sqrt() * f.sd_sum[ty][k] / scale);
                        }
                    }
                }
                soc.row(&[], constant.max(0.0).sqrt() / scale);
                let dim = soc.len();
                socs.push((soc, dim));
            }
        } else {
            // Gamble side: u² ≤ L(y), mean − need + |ζ|·u ≥ 0.
            let u = u_next;
            u_next += 1;
            let mut l_fix = need.sd * need.sd;
            let mut alpha: Vec<(usize, f64)> = Vec::new();
            for ty in 0..n_types {
                let rho = inc.unit_types[ty].rho;
                let s_all = f.sd_sum[ty][k]
                    + cls
                        .iter()
                        .filter(|&&(c, _)| inc.units[prep.classes[c].rep].type_idx == ty)
                        .map(|&(c, _)| rating(c).sd * prep.classes[c].n)
                        .sum::<f64>();
                l_fix += (1.0 - rho) * f.sd2_sum[ty][k] + rho * s_all * f.sd_sum[ty][k];
                for &(c, x) in &cls {
                    if inc.units[prep.classes[c].rep].type_idx != ty {
                        continue;
                    }
                    let s = rating(c).sd;
                    alpha.push((x, ((1.0 - rho) * s * s + rho * s_all * s) / (scale * scale)));
                }
            }
            // Every set has V ≤ L(all), so mean ≥ need − |ζ|·√L(all).
            let l_all = l_fix
                + alpha
                    .iter()
                    .map(|&(x, a)| a * prep.classes[vars[x].0].n)
                    .sum::<f64>()
                    * scale
                    * scale;
            if !count_row(&mut lin, need.need + zeta * l_all.max(0.0).sqrt() - m_fix) {
                return Verdict::Infeasible;
            }
            let l_fix = l_fix / (scale * scale);
            let mut coefs: Vec<(usize, f64)> = cls
                .iter()
                .map(|&(c, x)| (x, -rating(c).mean / scale))
                .collect();
            coefs.push((u, zeta)); // −|ζ|·u
            lin.row(&coefs, (m_fix - need.need) / scale);
            let neg_alpha: Vec<(usize, f64)> = alpha.iter().map(|&(x, a)| (x, -a)).collect();
            let mut soc = Rows::default();
            soc.row(&neg_alpha, l_fix + 1.0);
            soc.row(&[(u, -2.0)], 0.0);
            soc.row(&neg_alpha, l_fix - 1.0);
            socs.push((soc, 3));
        }
    }

    // Stack: the linear rows, then each cone.
    let mut all_rows = Rows::default();
    let mut cones = vec![SupportedConeT::NonnegativeConeT(lin.len())];
    let mut offset = 0;
    let push = |rows: &Rows, all_rows: &mut Rows, offset: &mut usize| {
        for ((&i, &j), &v) in rows.i.iter().zip(&rows.j).zip(&rows.v) {
            all_rows.i.push(i + *offset);
            all_rows.j.push(j);
            all_rows.v.push(v);
        }
        all_rows.b.extend_from_slice(&rows.b);
        *offset += rows.len();
    };
    push(&lin, &mut all_rows, &mut offset);
    for (soc, dim) in &socs {
        push(soc, &mut all_rows, &mut offset);
        cones.push(SupportedConeT::SecondOrderConeT(*dim));
    }
    let m = all_rows.len();
    if n_var == 0 {
        // Nothing can move: the rows are constants.
        return Verdict::NotRefuted;
    }
    // Numbers the solver cannot take (needs of 1e300 square to ∞) or a
    // problem too large for the time: no refutation, the per-task bound
    // stays.
    if all_rows.v.len() > MAX_NONZEROS
        || !all_rows.v.iter().chain(&all_rows.b).all(|x| x.is_finite())
    {
        return Verdict::NotRefuted;
    }
    let a = CscMatrix::new_from_triplets(m, n_var, all_rows.i, all_rows.j, all_rows.v);
    let p = CscMatrix::<f64>::zeros((n_var, n_var));
    let q = vec![0.0; n_var];
    let left = deadline.saturating_duration_since(Instant::now());
    if left.is_zero() {
        return Verdict::Cut;
    }
    let settings = DefaultSettings {
        verbose: false,
        time_limit: left.as_secs_f64(),
        max_iter: 100,
        ..DefaultSettings::default()
    };
    // A panic inside the solver must not take the caller down: it counts as
    // "not refuted".
    let status = std::panic::catch_unwind(std::panic::AssertUnwindSafe(|| {
        let mut solver = DefaultSolver::new(&p, &q, &a, &all_rows.b, &cones, settings).ok()?;
        solver.solve();
        Some(solver.solution.status)
    }));
    // The iteration limit is deterministic; the time limit is not, so a
    // solve it stops gives no verdict.
    match status {
        Ok(Some(SolverStatus::PrimalInfeasible)) => Verdict::Infeasible,
        Ok(Some(SolverStatus::MaxTime)) => Verdict::Cut,
        _ => Verdict::NotRefuted,
    }
}

/// Per tier (those with an open task with a need): the plan's worst odds and
/// an upper bound over every plan keeping the tiers above at least at the
/// plan's worst (capped at their secure levels). The first tier short of its
/// secure level is bounded first; the time limit covers all tiers.
pub fn tier_bounds(
    inc: &Incident,
    placement: &Placement,
    options: &RelaxOptions,
    cancel: &AtomicBool,
) -> TierBounds {
    let start = Instant::now();
    let deadline = start + options.time_limit;
    let ctx = Ctx::new(inc);
    let prep = Prep::new(&ctx);
    let key = ObjectiveKey::of(inc, placement);
    let worst = key.worst_odds_per_tier();
    let ln_worst: Vec<Option<f64>> = worst.iter().map(|w| w.map(f64::ln)).collect();
    let tier_tasks = |tier: Tier| -> Vec<TaskIdx> {
        TaskIdx::range(inc.tasks.len())
            .filter(|&t| {
                let task = &inc.tasks[t];
                task.is_open() && task.tier == tier && task.needs.iter().any(|n| n.counts())
            })
            .collect()
    };
    let mut out: Vec<TierBound> = Vec::new();
    let mut cut: Vec<Tier> = Vec::new();
    let first_counting = Tier::ALL
        .iter()
        .copied()
        .find(|&tier| !tier_tasks(tier).is_empty());
    // The first short tier first, then the others in order.
    let short = Tier::ALL.iter().position(|&tier| {
        ln_worst[tier.index()].is_some_and(|w| w < inc.secure.get(tier).ln() - 1e-12)
    });
    let mut order: Vec<Tier> = Tier::ALL.to_vec();
    if let Some(s) = short {
        order.retain(|&t| t != Tier::ALL[s]);
        order.insert(0, Tier::ALL[s]);
    }
    for tier in order {
        let tasks = tier_tasks(tier);
        let Some(w) = worst[tier.index()] else {
            continue;
        };
        let skipped = options.first_short_only && short.is_none_or(|s| Tier::ALL[s] != tier);
        if tasks.is_empty() || skipped {
            out.push(TierBound {
                tier,
                worst_odds: w,
                upper_bound: (!skipped).then_some(1.0),
            });
            continue;
        }
        // Tiers above held at the plan's worst, capped.
        let mut held: Vec<Req> = Vec::new();
        for above in Tier::ALL.iter().take(tier.index()) {
            let Some(lw) = ln_worst[above.index()] else {
                continue;
            };
            let floor = lw.min(inc.secure.get(*above).ln()) - 1e-9;
            for t in tier_tasks(*above) {
                task_reqs(&prep, t, floor, &mut held);
            }
        }
        // A NaN task bound (non-finite inputs) makes the tier's NaN too.
        let cheap = tasks
            .iter()
            .map(|t| prep.ln_task_ub[t.index()])
            .fold(0.0f64, |a, b| {
                if b.is_nan() || a.is_nan() {
                    f64::NAN
                } else {
                    a.min(b)
                }
            });
        let (ub, complete) = bisect(
            &prep,
            &tasks,
            &held,
            w.ln(),
            cheap,
            options,
            deadline,
            cancel,
        );
        out.push(TierBound {
            tier,
            worst_odds: w,
            // NaN (from inputs such as needs of 1e300) is no bound.
            upper_bound: ub.map(|l| l.exp().min(1.0)).filter(|u| !u.is_nan()),
        });
        if !complete {
            cut.push(tier);
        }
    }
    out.sort_by_key(|b| b.tier.index());
    let overall = match first_counting {
        Some(tier) => out
            .iter()
            .find(|b| b.tier == tier)
            .and_then(|b| b.upper_bound),
        None => None,
    };
    TierBounds {
        tiers: out,
        overall,
        cut,
    }
}

/// Bisection on the tier's z over the fixed bracket [−Z_SPAN, Z_SPAN],
/// `options.steps` halvings; returns ln of the bound and whether every
/// halving was decided. A midpoint at or below the plan's worst is feasible
/// (the plan reaches it) and one at or above the per-task bound is refuted
/// by it, so only the midpoints between call the solver: the sequence of
/// midpoints, and so the bound, does not depend on the plan (nor on time,
/// unless the time limit cuts the bisection, which `false` reports).
#[allow(clippy::too_many_arguments)]
fn bisect(
    prep: &Prep,
    tasks: &[TaskIdx],
    held: &[Req],
    ln_lo: f64,
    ln_cheap: f64,
    options: &RelaxOptions,
    deadline: Instant,
    cancel: &AtomicBool,
) -> (Option<f64>, bool) {
    if ln_cheap.is_nan() {
        return (None, true);
    }
    if ln_cheap == f64::NEG_INFINITY {
        return (Some(f64::NEG_INFINITY), true);
    }
    let z_cheap = z_for_ln_odds(ln_cheap);
    if z_cheap == f64::NEG_INFINITY {
        return (Some(ln_cheap), true);
    }
    let z_reached = z_for_ln_odds(ln_lo.min(ln_cheap));
    let (mut z_lo, mut z_hi) = (-Z_SPAN, Z_SPAN);
    let mut reqs: Vec<Req> = Vec::new();
    for _ in 0..options.steps {
        let z_mid = 0.5 * (z_lo + z_hi);
        if z_mid <= z_reached {
            z_lo = z_mid;
            continue;
        }
        if z_mid >= z_cheap {
            z_hi = z_mid;
            continue;
        }
        if cancel.load(Ordering::Relaxed) || Instant::now() >= deadline {
            return (Some(ln_phi(z_hi).min(ln_cheap)), false);
        }
        let ln_mid = ln_phi(z_mid);
        reqs.clear();
        for &t in tasks {
            task_reqs(prep, t, ln_mid, &mut reqs);
        }
        for r in held {
            reqs.push(Req {
                task: r.task,
                k: r.k,
                zeta: r.zeta,
            });
        }
        match refute(prep, &reqs, deadline) {
            Verdict::Infeasible => z_hi = z_mid,
            Verdict::NotRefuted => z_lo = z_mid,
            Verdict::Cut => return (Some(ln_phi(z_hi).min(ln_cheap)), false),
        }
    }
    (Some(ln_phi(z_hi).min(ln_cheap)), true)
}
