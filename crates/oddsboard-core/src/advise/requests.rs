//! Resource requests: for each tier that is not secure even with the best
//! plan, the smallest set of extra units, drawn from the incident's unit
//! types at their default ratings, that brings every task of the tier to its
//! secure level when the solver places it. Field readings count: the units
//! on the incident are screened at their current estimates and a requested
//! unit at its type's rating moved by its type-mates' readings (the shared
//! factor), as the solver then scores them.
//!
//! How the search runs, per tier (highest first):
//! 1. The best plan of the roster as it stands (a from-scratch solve) says
//!    which tiers are short.
//! 2. **Out of reach** is decided first, per task of the tier, without any
//!    search: a counting trait that no unit type the task accepts carries
//!    (mean 0) and that the units already on the incident cannot cover, or a
//!    `max_units` cap that even that many units of the strongest type
//!    cannot fill. No number of extra units helps then, and it is said so.
//! 3. Candidate sets are the multisets of *helpful* types (accepted by a
//!    short task, with a mean above 0 in one of its counting traits, or any
//!    accepted type when the task has a `min_units`) of 1 to
//!    [`AdviseOptions::max_extra_units`] units, in order of cost when every
//!    helpful type has a `cost`, else of unit count; ties by composition.
//! 4. Each candidate first passes a necessary screen (below); one that fails
//!    cannot secure the tier and is dropped without a solve. One that passes
//!    is added to a copy of the incident, in reserve, and solved from
//!    scratch (warm-started from the best plan); it is sufficient when every
//!    task of the tier then reaches its secure level. On incidents too large
//!    for the exact search, a candidate is first inserted into the best plan
//!    (the tier's worst task below its level takes the extra unit that
//!    raises it most, repeatedly); only one that secures the tier there is
//!    solved, warm-started from the insertion. The others are dropped
//!    unsolved, so the result is then never marked proven.
//! 5. The first sufficient candidate is the request; up to
//!    [`AdviseOptions::alternatives`] sufficient candidates that are not
//!    supersets of an earlier one, and at most one unit larger than the
//!    first, are shown beside it.
//!
//! **The screen** (a relaxation, so it never drops a set that could work):
//! with a secure level s > 0.5, a task at odds ≥ s has every counting trait
//! at odds ≥ s (task odds are a product of trait odds ≤ 1), so
//! z = (mean − need)/√(unit var + need sd²) ≥ Φ⁻¹(s) > 0, hence
//! mean − need ≥ Φ⁻¹(s)·need sd. The most mean a task can get in a trait is
//! the sum of the `max_units` largest means among the units and extra units
//! that may go on it (pins respected); the tier as a whole can get at most
//! the means of every unit that may go on one of its tasks.
//!
//! What is exact and what is not: the request is minimal (no cheaper
//! candidate secures the tier) when every cheaper candidate was dropped by
//! the screen or by a solve proven optimal; [`RequestOutcome::Found`] says
//! so in `minimal_proven`. On large incidents the solves are anytime and a
//! cheaper set could exist that the search did not find. A set shown is
//! always sufficient: the plan that secures the tier was found.
//!
//! The solver ranks higher tiers first, so a request for a lower tier
//! includes what a short higher tier would take from it.

use super::{AdviseError, AdviseOptions, TierOdds, tier_odds};
use crate::model::{Incident, Placement, TaskIdx, Tier, TypeIdx, Unit, UnitIdx, UnitStatus};
use crate::odds::{TaskTally, tallies};
use crate::rules;
use crate::solver::key::{cmp_ln, ln_cap};
use crate::solver::{SolveOptions, solve};
use serde::Serialize;
use statrs::distribution::{ContinuousCDF, Normal};
use std::cmp::Ordering;
use std::sync::atomic::AtomicBool;
use std::time::Instant;

/// Candidate sets enumerated per tier at most; beyond it the largest sizes
/// are left out (and the outcome says the search was cut).
pub const MAX_CANDIDATES: usize = 20_000;

/// How many units of one type a request asks for.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TypeCount {
    pub unit_type: String,
    pub label: String,
    pub count: usize,
}

/// One sufficient set of extra units.
#[derive(Debug, Clone, Serialize)]
pub struct RequestSet {
    pub units: Vec<TypeCount>,
    pub total_units: usize,
    /// Sum of the types' costs, when every type in the set has one.
    pub total_cost: Option<f64>,
    /// Worst odds per tier once the set is placed by the solver.
    pub after: Vec<TierOdds>,
}

impl RequestSet {
    /// "2 × pump team" or "1 × high-volume pump + 1 × pump team".
    pub fn describe(&self) -> String {
        self.units
            .iter()
            .map(|t| format!("{} × {}", t.count, t.label))
            .collect::<Vec<_>>()
            .join(" + ")
    }
}

/// Why one task of a tier is out of reach of every extra unit.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Unreachable {
    pub task: String,
    #[serde(rename = "trait")]
    pub trait_id: String,
    pub reason: String,
}

/// What the request search found for one tier.
#[derive(Debug, Clone, Serialize)]
#[serde(tag = "status", rename_all = "snake_case")]
pub enum RequestOutcome {
    /// Sufficient sets, cheapest first.
    Found {
        sets: Vec<RequestSet>,
        /// No cheaper set can secure the tier (see the module docs).
        minimal_proven: bool,
    },
    /// No number of extra units of the incident's types can secure it.
    OutOfReach { tasks: Vec<Unreachable> },
    /// No set of up to `max_extra_units` secured it. `proven`: every
    /// candidate was dropped by the screen or by a proven solve, so none
    /// exists; otherwise the anytime solves may have missed one.
    NotWithin {
        max_extra_units: usize,
        candidates_checked: usize,
        proven: bool,
    },
    /// The search reached its time limit before finding a set.
    TimeLimit { candidates_checked: usize },
}

/// The request for one tier that is not secure.
#[derive(Debug, Clone, Serialize)]
pub struct TierRequest {
    pub tier: &'static str,
    pub secure: f64,
    /// Worst odds in the tier with the best plan of the roster as it stands.
    pub best_now: f64,
    /// Tasks of the tier below its secure level with that plan.
    pub short_tasks: Vec<String>,
    pub outcome: RequestOutcome,
}

impl TierRequest {
    /// One line: what was found.
    pub fn outcome_summary(&self) -> String {
        match &self.outcome {
            RequestOutcome::Found {
                sets,
                minimal_proven,
            } => format!(
                "{} (and {} alternatives){}",
                sets.first().map(RequestSet::describe).unwrap_or_default(),
                sets.len().saturating_sub(1),
                if *minimal_proven {
                    ", minimal proven"
                } else {
                    ""
                }
            ),
            RequestOutcome::OutOfReach { tasks } => format!("out of reach ({} tasks)", tasks.len()),
            RequestOutcome::NotWithin {
                max_extra_units,
                candidates_checked,
                proven,
            } => format!(
                "none within {max_extra_units} units ({candidates_checked} checked, proven {proven})"
            ),
            RequestOutcome::TimeLimit { candidates_checked } => {
                format!("time limit after {candidates_checked} sets")
            }
        }
    }
}

/// Φ⁻¹(s)·need sd margin over the need, for secure levels above one half;
/// `None` when the screen does not apply (s ≤ 0.5).
fn z_secure(s: f64) -> Option<f64> {
    if s <= 0.5 || s >= 1.0 {
        return (s >= 1.0).then_some(f64::INFINITY);
    }
    Normal::new(0.0, 1.0).ok().map(|n| n.inverse_cdf(s))
}

/// Precomputed limits of one task in one trait.
struct TraitLimit {
    task: TaskIdx,
    k: usize,
    /// Mean the task must reach in this trait.
    threshold: f64,
    /// Prefix sums of the means (largest first) of the units already on the
    /// incident that may go on the task.
    prefix: Vec<f64>,
    max_units: usize,
}

impl TraitLimit {
    /// Largest mean the task can get with the extra means `extra` (largest
    /// first): the `max_units` largest of both lists.
    /// Largest mean with `count` extra units of mean `value` each (no list
    /// built: `count` may be a `max_units` from the file, up to 2³²−1).
    fn best_with_copies(&self, value: f64, count: usize) -> f64 {
        let n = self.prefix.len() - 1;
        let top = count.min(self.max_units);
        // Between 0 and max_units − n extras the task's own units all fit,
        // so the sum only grows with i (value > 0) or only falls: the ends
        // of that stretch and the last n + 1 counts are all that can win.
        let lo = self.max_units.saturating_sub(n).min(top);
        std::iter::once(0)
            .chain(lo..=top)
            .map(|i| i as f64 * value + self.prefix[(self.max_units - i).min(n)])
            .fold(f64::NEG_INFINITY, f64::max)
    }

    fn best(&self, extra: &[f64]) -> f64 {
        let n = self.prefix.len() - 1;
        let mut best = f64::NEG_INFINITY;
        let mut e = 0.0;
        for i in 0..=extra.len().min(self.max_units) {
            if i > 0 {
                e += extra[i - 1];
            }
            let rest = (self.max_units - i).min(n);
            best = best.max(e + self.prefix[rest]);
        }
        best
    }
}

/// The screen's data for one tier.
struct Screen {
    limits: Vec<TraitLimit>,
    /// Per trait: Σ thresholds over the tier's tasks, and Σ means of the
    /// units that may go on one of them.
    totals: Vec<(usize, f64, f64)>,
}

fn may_go(incident: &Incident, u: UnitIdx, t: TaskIdx) -> bool {
    rules::plan_may_put(incident, u, t)
}

impl Screen {
    fn new(incident: &Incident, tasks: &[TaskIdx], z: f64) -> Screen {
        let mut limits = Vec::new();
        let n_traits = incident.traits.len();
        let mut need_total = vec![0.0; n_traits];
        for &t in tasks {
            let task = &incident.tasks[t];
            for (k, need) in task.needs.iter().enumerate() {
                if !need.counts() {
                    continue;
                }
                let threshold = need.need + z * need.sd;
                need_total[k] += threshold;
                let mut means: Vec<f64> = crate::model::UnitIdx::range(incident.units.len())
                    .filter(|&u| may_go(incident, u, t))
                    .map(|u| incident.belief(u, k).mean)
                    .collect();
                means.sort_by(|a, b| b.total_cmp(a));
                let mut prefix = vec![0.0];
                for m in means {
                    prefix.push(prefix.last().copied().unwrap_or(0.0) + m);
                }
                limits.push(TraitLimit {
                    task: t,
                    k,
                    threshold,
                    prefix,
                    max_units: rules::capacity(task),
                });
            }
        }
        let totals = (0..n_traits)
            .filter(|&k| need_total[k] > 0.0)
            .map(|k| {
                let have: f64 = crate::model::UnitIdx::range(incident.units.len())
                    .filter(|&u| tasks.iter().any(|&t| may_go(incident, u, t)))
                    .map(|u| incident.belief(u, k).mean)
                    .sum();
                (k, need_total[k], have)
            })
            .collect();
        Screen { limits, totals }
    }

    /// Could the extra units `counts` (per type) possibly secure the tier?
    fn passes(&self, incident: &Incident, tasks: &[TaskIdx], counts: &[usize]) -> bool {
        for l in &self.limits {
            let task = &incident.tasks[l.task];
            let mut extra: Vec<f64> = Vec::new();
            for (ty, &c) in counts.iter().enumerate() {
                if c > 0 && task.accepts_type(ty) {
                    extra.extend(std::iter::repeat_n(incident.type_belief(ty, l.k).mean, c));
                }
            }
            extra.sort_by(|a, b| b.total_cmp(a));
            if l.best(&extra) < l.threshold - 1e-9 * l.threshold.abs().max(1.0) {
                return false;
            }
        }
        for &(k, need, have) in &self.totals {
            let extra: f64 = counts
                .iter()
                .enumerate()
                .filter(|&(ty, &c)| {
                    c > 0 && tasks.iter().any(|&t| incident.tasks[t].accepts_type(ty))
                })
                .map(|(ty, &c)| c as f64 * incident.type_belief(ty, k).mean)
                .sum();
            if have + extra < need - 1e-9 * need.abs().max(1.0) {
                return false;
            }
        }
        true
    }
}

/// Tasks of the tier out of reach of any number of extra units.
fn unreachable(incident: &Incident, screen: &Screen) -> Vec<Unreachable> {
    let mut out = Vec::new();
    for l in &screen.limits {
        let task = &incident.tasks[l.task];
        let accepted: Vec<TypeIdx> = (0..incident.unit_types.len())
            .filter(|&ty| task.accepts_type(ty))
            .collect();
        let strongest = accepted
            .iter()
            .map(|&ty| incident.type_belief(ty, l.k).mean)
            .fold(0.0, f64::max);
        let trait_def = &incident.traits[l.k];
        let need = task.needs[l.k];
        if strongest <= 0.0 {
            if l.best(&[]) < l.threshold {
                out.push(Unreachable {
                    task: task.id.clone(),
                    trait_id: trait_def.id.clone(),
                    reason: format!(
                        "no unit type it accepts carries any {} (need {} {}), and the units on the incident cannot cover it",
                        trait_label(incident, l.k),
                        fmt_amount(need.need),
                        trait_def.unit
                    ),
                });
            }
        } else if l.max_units < usize::MAX {
            let reach = l.best_with_copies(strongest, l.max_units);
            if reach < l.threshold {
                out.push(Unreachable {
                    task: task.id.clone(),
                    trait_id: trait_def.id.clone(),
                    reason: format!(
                        "max_units {} caps it: even {} of the strongest type give {} {} on average, short of the {} {} needed at its secure level",
                        l.max_units,
                        l.max_units,
                        fmt_amount(reach),
                        trait_def.unit,
                        fmt_amount(l.threshold),
                        trait_def.unit
                    ),
                });
            }
        }
    }
    out
}

fn trait_label(incident: &Incident, k: usize) -> String {
    let t = &incident.traits[k];
    if t.label.is_empty() || t.label == t.id {
        t.id.clone()
    } else {
        format!("{} ({})", t.label.to_lowercase(), t.id)
    }
}

fn fmt_amount(x: f64) -> String {
    if x.fract() == 0.0 && x.abs() < 1e12 {
        format!("{x:.0}")
    } else {
        format!("{x:.2}")
    }
}

/// Every multiset of `types` of sizes 1..=max, as counts per type index.
fn multisets(
    n_types: usize,
    types: &[TypeIdx],
    max: usize,
    limit: usize,
) -> (Vec<Vec<usize>>, bool) {
    let mut out = Vec::new();
    let mut cut = false;
    for size in 1..=max {
        let mut cur = vec![0usize; n_types];
        let before = out.len();
        fill(types, 0, size, &mut cur, &mut out, limit);
        if out.len() >= limit {
            out.truncate(before);
            cut = true;
            break;
        }
    }
    (out, cut)
}

fn fill(
    types: &[TypeIdx],
    from: usize,
    left: usize,
    cur: &mut Vec<usize>,
    out: &mut Vec<Vec<usize>>,
    limit: usize,
) {
    if out.len() >= limit {
        return;
    }
    if left == 0 {
        out.push(cur.clone());
        return;
    }
    if from >= types.len() {
        return;
    }
    for take in (0..=left).rev() {
        if from + 1 == types.len() && take != left {
            continue;
        }
        cur[types[from]] += take;
        fill(types, from + 1, left - take, cur, out, limit);
        cur[types[from]] -= take;
    }
}

fn is_superset(a: &[usize], b: &[usize]) -> bool {
    a.iter().zip(b).all(|(x, y)| x >= y)
}

/// Adds the extra units (default ratings, available, in reserve) to a copy.
pub fn with_extra_units(incident: &Incident, counts: &[usize]) -> Incident {
    let mut inc = incident.clone();
    for (ty, &c) in counts.iter().enumerate() {
        for n in 1..=c {
            let base = format!("requested-{}-{n}", incident.unit_types[ty].id);
            let mut id = base.clone();
            let mut i = 1;
            while inc.unit_idx(&id).is_some() {
                i += 1;
                id = format!("{base}-{i}");
            }
            inc.add_unit(Unit {
                id,
                type_idx: ty,
                ratings: incident.unit_types[ty].ratings.clone(),
                status: UnitStatus::Available,
            });
        }
    }
    inc
}

/// Every open task of `tier` at its secure level under `placement`.
pub fn tier_secure(incident: &Incident, placement: &Placement, tier: Tier) -> bool {
    let cap = ln_cap(incident, tier);
    tallies(incident, placement)
        .iter()
        .zip(&incident.tasks)
        .filter(|(_, task)| task.is_open() && task.tier == tier)
        .all(|(tl, task)| cmp_ln(tl.ln_odds(task), cap) != Ordering::Less)
}

/// Requests for every tier not secure with the best plan, highest first.
pub fn tier_requests(
    incident: &Incident,
    options: &AdviseOptions,
    cancel: &AtomicBool,
) -> Result<Vec<TierRequest>, AdviseError> {
    let started = Instant::now();
    let best = solve(
        incident,
        &SolveOptions {
            from_scratch: true,
            ..options.solve_options(options.baseline_budget)
        },
        cancel,
        &mut |_| {},
    )?;
    let best_tallies = tallies(incident, &best.placement);
    let worst = tier_odds(incident, &best.key);
    let mut out = Vec::new();
    for tier in Tier::ALL {
        let Some(w) = worst.iter().find(|w| w.tier == tier.as_str()) else {
            continue;
        };
        if w.is_secure {
            continue;
        }
        let cap = ln_cap(incident, tier);
        let tasks: Vec<TaskIdx> = crate::model::TaskIdx::range(incident.tasks.len())
            .filter(|&t| incident.tasks[t].is_open() && incident.tasks[t].tier == tier)
            .collect();
        let short: Vec<TaskIdx> = tasks
            .iter()
            .copied()
            .filter(|&t| cmp_ln(best_tallies[t].ln_odds(&incident.tasks[t]), cap) == Ordering::Less)
            .collect();
        let outcome = search_tier(
            incident,
            tier,
            &tasks,
            &short,
            &best.placement,
            options,
            cancel,
            started,
        );
        out.push(TierRequest {
            tier: tier.as_str(),
            secure: w.secure,
            best_now: w.odds,
            short_tasks: short
                .iter()
                .map(|&t| incident.tasks[t].id.clone())
                .collect(),
            outcome,
        });
    }
    Ok(out)
}

#[allow(clippy::too_many_arguments)]
fn search_tier(
    incident: &Incident,
    tier: Tier,
    tasks: &[TaskIdx],
    short: &[TaskIdx],
    best: &Placement,
    options: &AdviseOptions,
    cancel: &AtomicBool,
    started: Instant,
) -> RequestOutcome {
    let secure = incident.secure.get(tier);
    let screen = z_secure(secure).map(|z| Screen::new(incident, tasks, z));
    if let Some(s) = &screen {
        let unreachable = unreachable(incident, s);
        if !unreachable.is_empty() {
            return RequestOutcome::OutOfReach { tasks: unreachable };
        }
    }
    let n_types = incident.unit_types.len();
    let helpful: Vec<TypeIdx> = (0..n_types)
        .filter(|&ty| {
            short.iter().any(|&t| {
                let task = &incident.tasks[t];
                task.accepts_type(ty)
                    && (task.min_units.is_some()
                        || task.needs.iter().enumerate().any(|(k, n)| {
                            n.counts() && incident.unit_types[ty].ratings[k].mean > 0.0
                        }))
            })
        })
        .collect();
    let (mut candidates, cut) =
        multisets(n_types, &helpful, options.max_extra_units, MAX_CANDIDATES);
    let by_cost = helpful
        .iter()
        .all(|&ty| incident.unit_types[ty].cost.is_some());
    let cost = |c: &[usize]| -> f64 {
        c.iter()
            .enumerate()
            .map(|(ty, &n)| n as f64 * incident.unit_types[ty].cost.unwrap_or(1.0))
            .sum()
    };
    let size = |c: &[usize]| c.iter().sum::<usize>();
    candidates.sort_by(|a, b| {
        let primary = if by_cost {
            cost(a).total_cmp(&cost(b))
        } else {
            Ordering::Equal
        };
        primary
            .then(size(a).cmp(&size(b)))
            // More of the earlier types first: a stable, readable order.
            .then(b.cmp(a))
    });

    let mut found: Vec<(Vec<usize>, RequestSet)> = Vec::new();
    let mut minimal_proven = true;
    let mut all_proven = !cut;
    let mut checked = 0;
    let mut warm;
    // The exact search can judge every candidate on small incidents; on
    // larger ones a candidate is first inserted into the best plan.
    let movable = crate::model::UnitIdx::range(incident.units.len())
        .filter(|u| rules::counts_in_reserve(&incident.units[*u]) && !incident.pins.contains_key(u))
        .count();
    let insertion_only = movable + options.max_extra_units > options.exact_max_units;
    let cap = ln_cap(incident, tier);
    let full: Vec<usize> = (0..n_types)
        .map(|ty| {
            if helpful.contains(&ty) {
                options.max_extra_units
            } else {
                0
            }
        })
        .collect();
    let pool = with_extra_units(incident, &full);
    let insertion = Insertion::new(&pool, best, tasks);
    for cand in &candidates {
        if found.len() >= options.alternatives.max(1) {
            break;
        }
        if let Some((first, _)) = found.first()
            && size(cand) > size(first) + 1
        {
            continue;
        }
        if found.iter().any(|(f, _)| is_superset(cand, f)) {
            continue;
        }
        if screen
            .as_ref()
            .is_some_and(|s| !s.passes(incident, tasks, cand))
        {
            continue;
        }
        if started.elapsed() >= options.request_time_limit {
            if found.is_empty() {
                return RequestOutcome::TimeLimit {
                    candidates_checked: checked,
                };
            }
            break;
        }
        checked += 1;
        let inc = with_extra_units(incident, cand);
        if insertion_only {
            // Large incident: judge the set by inserting it into the best
            // plan first; only a set that secures the tier there is solved.
            match insertion.insert(&pool, cand, cap) {
                Some(extra) => {
                    warm = best.0.clone();
                    warm.extend(extra);
                }
                None => {
                    all_proven = false;
                    if found.is_empty() {
                        minimal_proven = false;
                    }
                    continue;
                }
            }
        } else {
            warm = best.0.clone();
            warm.resize(inc.units.len(), None);
        }
        let opts = SolveOptions {
            from_scratch: true,
            warm_start: Some(Placement(warm.clone())),
            ..options.solve_options(options.per_request_budget)
        };
        let Ok(report) = solve(&inc, &opts, cancel, &mut |_| {}) else {
            continue;
        };
        if tier_secure(&inc, &report.placement, tier) {
            let units = cand
                .iter()
                .enumerate()
                .filter(|(_, c)| **c > 0)
                .map(|(ty, &count)| {
                    let t = &incident.unit_types[ty];
                    TypeCount {
                        unit_type: t.id.clone(),
                        label: if t.label.is_empty() {
                            t.id.clone()
                        } else {
                            t.label.clone()
                        },
                        count,
                    }
                })
                .collect();
            let total_cost = cand
                .iter()
                .enumerate()
                .filter(|(_, c)| **c > 0)
                .map(|(ty, &c)| incident.unit_types[ty].cost.map(|x| x * c as f64))
                .sum::<Option<f64>>();
            found.push((
                cand.clone(),
                RequestSet {
                    units,
                    total_units: size(cand),
                    total_cost,
                    after: tier_odds(&inc, &report.key),
                },
            ));
        } else if !report.proven_optimal {
            all_proven = false;
            if found.is_empty() {
                minimal_proven = false;
            }
        }
    }
    if found.is_empty() {
        return RequestOutcome::NotWithin {
            max_extra_units: options.max_extra_units,
            candidates_checked: checked,
            proven: all_proven,
        };
    }
    // A secure check that failed without proof before the first success
    // leaves room for a cheaper set; so does a cut enumeration.
    RequestOutcome::Found {
        sets: found.into_iter().map(|(_, s)| s).collect(),
        minimal_proven: minimal_proven && !cut,
    }
}

/// Extra units placed into the best plan, each on a task of the tier: the
/// fast judge of a candidate on large incidents.
struct Insertion {
    /// Tier tasks with their tallies under the best plan.
    tasks: Vec<(TaskIdx, TaskTally)>,
    n_existing: usize,
}

impl Insertion {
    fn new(pool: &Incident, best: &Placement, tasks: &[TaskIdx]) -> Insertion {
        let n_existing = best.len();
        let mut p = best.0.clone();
        p.resize(pool.units.len(), None);
        let tl = tallies(pool, &Placement(p));
        Insertion {
            tasks: tasks.iter().map(|&t| (t, tl[t].clone())).collect(),
            n_existing,
        }
    }

    /// Places the candidate's units (pool units: per type, the first
    /// `counts[type]` of `max` requested ones) one at a time: the tier task
    /// with the lowest odds below `cap` takes the unit that raises it most.
    /// Returns the place of each unit of the candidate, in the order
    /// [`with_extra_units`] adds them, when every task ends at `cap`.
    fn insert(&self, pool: &Incident, counts: &[usize], cap: f64) -> Option<Vec<Option<TaskIdx>>> {
        // Pool units of each type, in the order they were added.
        let mut left: Vec<UnitIdx> = Vec::new();
        let mut order: Vec<UnitIdx> = Vec::new();
        for (ty, &c) in counts.iter().enumerate() {
            let of_type: Vec<UnitIdx> = (self.n_existing..pool.units.len())
                .map(UnitIdx::new)
                .filter(|&u| pool.units[u].type_idx == ty)
                .take(c)
                .collect();
            order.extend(&of_type);
            left.extend(of_type);
        }
        let mut tasks = self.tasks.clone();
        let mut place: Vec<(UnitIdx, TaskIdx)> = Vec::new();
        loop {
            let mut below: Vec<(usize, f64)> = tasks
                .iter()
                .enumerate()
                .map(|(i, (t, tl))| (i, tl.ln_odds(&pool.tasks[*t])))
                .filter(|(_, ln)| cmp_ln(*ln, cap) == Ordering::Less)
                .collect();
            if below.is_empty() {
                break;
            }
            below.sort_by(|a, b| a.1.total_cmp(&b.1));
            let mut placed = false;
            for (i, _) in below {
                let (t, tl) = &mut tasks[i];
                let task = &pool.tasks[*t];
                if !rules::has_room(task, tl.count() as usize) {
                    continue;
                }
                let mut best: Option<(usize, f64)> = None;
                for (j, &u) in left.iter().enumerate() {
                    if !task.accepts_type(pool.units[u].type_idx) {
                        continue;
                    }
                    tl.add(pool, u);
                    let ln = ln_odds_ignoring_minimum(tl, task);
                    tl.remove(pool, u);
                    if best.is_none_or(|(_, b)| ln > b) {
                        best = Some((j, ln));
                    }
                }
                if let Some((j, _)) = best {
                    let u = left.swap_remove(j);
                    tl.add(pool, u);
                    place.push((u, *t));
                    placed = true;
                    break;
                }
            }
            if !placed {
                return None;
            }
        }
        Some(
            order
                .iter()
                .map(|u| place.iter().find(|(p, _)| p == u).map(|(_, t)| *t))
                .collect(),
        )
    }
}

/// ln odds of the task's needs alone (a task below its minimum still
/// shows progress as units arrive).
fn ln_odds_ignoring_minimum(tl: &TaskTally, task: &crate::model::Task) -> f64 {
    task.needs
        .iter()
        .enumerate()
        .filter(|(_, n)| n.counts())
        .map(|(k, n)| tl.trait_odds(k, *n).ln_odds)
        .sum()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn multisets_cover_every_composition_once() {
        // Types 0 and 2 of 3, sizes 1..=3: 2 + 3 + 4 = 9 multisets.
        let (m, cut) = multisets(3, &[0, 2], 3, 1000);
        assert!(!cut);
        assert_eq!(m.len(), 9);
        let mut sorted = m.clone();
        sorted.sort();
        sorted.dedup();
        assert_eq!(sorted.len(), 9);
        assert!(m.iter().all(|c| c[1] == 0));
    }

    #[test]
    fn top_m_bound() {
        let l = TraitLimit {
            task: TaskIdx::new(0),
            k: 0,
            threshold: 0.0,
            prefix: vec![0.0, 5.0, 8.0, 9.0],
            max_units: 2,
        };
        assert_eq!(l.best(&[]), 8.0);
        assert_eq!(l.best(&[6.0]), 11.0);
        assert_eq!(l.best(&[6.0, 6.0]), 12.0);
    }

    #[test]
    fn copies_bound_matches_the_list_without_building_it() {
        // Brute force: best_with_copies(v, c) against best(&vec![v; c]) for
        // small caps and counts, over prefixes with means above and below v.
        for max_units in 0..7 {
            for count in 0..9 {
                for v in [0.5, 2.0, 4.0, 9.0] {
                    let l = TraitLimit {
                        task: TaskIdx::new(0),
                        k: 0,
                        threshold: 0.0,
                        prefix: vec![0.0, 5.0, 8.0, 9.0],
                        max_units,
                    };
                    let want = l.best(&vec![v; count]);
                    assert_eq!(
                        l.best_with_copies(v, count),
                        want,
                        "{max_units} {count} {v}"
                    );
                }
            }
        }
        // The file's largest max_units: no allocation; the best keeps the
        // own unit of mean 5 beside 2³²−2 copies of mean 1.
        let l = TraitLimit {
            task: TaskIdx::new(0),
            k: 0,
            threshold: 0.0,
            prefix: vec![0.0, 5.0],
            max_units: u32::MAX as usize,
        };
        assert_eq!(
            l.best_with_copies(1.0, u32::MAX as usize),
            f64::from(u32::MAX - 1) + 5.0
        );
    }
}
