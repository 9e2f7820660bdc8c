//! The solver: recommends the placement with the best [`ObjectiveKey`]
//! (SPEC §3), exactly with a proof on small incidents and anytime on large
//! ones, and keeps re-plans stable (few moves from the ground).
//!
//! Main items:
//! * [`ObjectiveKey`]: the one ranking of plans (tiers, secure caps, then all
//!   tasks uncapped; ln space, tolerance 1e−10).
//! * [`solve`] with [`SolveOptions`] → [`SolveReport`]: the plan, the moves
//!   from the ground, the key, whether it is proven optimal, a bound, why it
//!   stopped. Progress goes to a callback whenever the best key improves.
//! * [`check_feasible`]: constraints that cannot all be met, as an error
//!   naming the field.
//! * [`baselines`]: expected-value, mean-minus-spread and random plans.
//!
//! How [`solve`] runs:
//! 0. after a loss, given the settled ground from before it
//!    ([`SolveOptions::settled_before_loss`]), a repair around the loss
//!    that brings every capped entry back ends the solve
//!    ([`stable::absorb_loss`]);
//! 1. start plans (the ground made feasible, the warm start, an empty board)
//!    are filled greedily (the worst task takes its best reserve unit) and the
//!    best is kept: a first plan in milliseconds;
//! 2. local search around the bottleneck task (move in, move out, swap; every
//!    move scored from the two tallies it touches): with seeded
//!    perturbation before an exact search, otherwise one descent and then
//!    the large-neighbourhood search ([`lns`]) on `threads` workers;
//! 3. on small incidents (at most [`SolveOptions::exact_max_units`] movable
//!    units) branch and bound over the units proves the best key
//!    ([`exact`]);
//! 4. the recommendation rule ([`stable`]): thresholds entry by entry over
//!    the capped key (sequential ε-lexicographic: each entry's best value
//!    among the plans meeting the thresholds before it, less the slack);
//!    among the plans meeting them all, the least disruption from the ground
//!    (fewest withdrawals, then dispatches, then the better key), or from
//!    scratch the best key. Exactly by branch and bound when every search
//!    before finished, heuristically otherwise.
//!
//! Indices: plans, pins and moves use the typed [`UnitIdx`] / [`TaskIdx`];
//! dense inner tables (the exact search's option numbers, the joint odds'
//! slots) keep plain `usize` positions and convert at their edge with
//! `.index()` / `UnitIdx::new(i)`.
//!
//! Invariant: the solver never reads the clock except through its budget,
//! draws random numbers only from generators seeded from the options, and
//! does no I/O.

pub mod baselines;
pub mod bound;
pub mod exact;
pub mod key;
pub mod lns;
pub mod relax;
pub mod search;
pub mod stable;

pub use key::ObjectiveKey;

use crate::model::{Incident, Placement, TaskIdx, UnitIdx};
use search::{Ctx, SearchLimits, State, greedy_fill, local_search};
use std::sync::atomic::{AtomicBool, Ordering as AtomicOrdering};
use std::time::{Duration, Instant};

/// Settings of one solve. Every field's default is given beside it.
#[derive(Debug, Clone)]
pub struct SolveOptions {
    /// Wall-clock budget. Default 1 s.
    pub budget: Duration,
    /// Seed of every random choice. Default 0.
    pub seed: u64,
    /// Slack of the rule, relative: each capped key entry's threshold is
    /// (1 − slack) × the best it reaches while the entries before it meet
    /// theirs; 0 is plain leximin. Default 0.01.
    pub slack: f64,
    /// Ignore the placement on the ground (no stability). Default false.
    pub from_scratch: bool,
    /// A plan to start the search from (e.g. the previous proposal). It does
    /// not change what counts as a move: moves are always counted from the
    /// ground. Default `None`.
    pub warm_start: Option<Placement>,
    /// Run the exact search when at most this many units can move.
    /// Default 40 (the search then runs until proof or budget).
    pub exact_max_units: usize,
    /// Stop the exact search after this many nodes. Default `u64::MAX`
    /// (budget only).
    pub exact_node_limit: u64,
    /// Stop the anytime search after this many perturbations (small
    /// incidents) or LNS steps per worker (large ones, see [`lns`]) in a
    /// row that found nothing better. Default 400.
    pub stale_rounds: u64,
    /// Workers of the large-neighbourhood search. The plan depends on the
    /// seed and on this number (not on the machine). Default 1; front ends
    /// pass the available cores.
    pub threads: usize,
    /// Stop the large-neighbourhood search after this many epochs: a work
    /// budget independent of the clock, for reproducible runs. Default
    /// `u64::MAX` (the budget and `stale_rounds` decide).
    pub max_epochs: u64,
    /// The ground as it stood before the units now lost were lost, when it
    /// was the settled recommendation then (e.g. the accepted proposal) and
    /// nothing but the losses changed since. A re-plan too large for the
    /// exact search then stops early when the loss can be absorbed
    /// ([`stable::absorb_loss`], [`StopReason::LossAbsorbed`]). Default
    /// `None`.
    pub settled_before_loss: Option<Placement>,
}

/// The cores this machine offers (at least 1): the front ends' default for
/// [`SolveOptions::threads`].
pub fn available_threads() -> usize {
    std::thread::available_parallelism().map_or(1, std::num::NonZeroUsize::get)
}

impl Default for SolveOptions {
    fn default() -> Self {
        SolveOptions {
            budget: Duration::from_secs(1),
            seed: 0,
            slack: 0.01,
            from_scratch: false,
            warm_start: None,
            exact_max_units: 40,
            exact_node_limit: u64::MAX,
            stale_rounds: 400,
            threads: 1,
            max_epochs: u64::MAX,
            settled_before_loss: None,
        }
    }
}

/// One unit's change of place. `None` is reserve.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Move {
    pub unit: UnitIdx,
    pub from: Option<TaskIdx>,
    pub to: Option<TaskIdx>,
}

/// Why a solve ended.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum StopReason {
    /// The plan is proven optimal.
    Proved,
    /// The budget ran out first.
    BudgetExhausted,
    /// The caller raised the cancel flag.
    Cancelled,
    /// The anytime search stopped finding better plans.
    NoImprovement,
    /// A re-plan after a loss ended early: the ground repaired reaches,
    /// entry by entry, what the settled ground reached before the loss
    /// ([`stable::absorb_loss`]).
    LossAbsorbed,
}

impl StopReason {
    pub fn as_str(self) -> &'static str {
        match self {
            StopReason::Proved => "proved",
            StopReason::BudgetExhausted => "budget_exhausted",
            StopReason::Cancelled => "cancelled",
            StopReason::NoImprovement => "no_improvement",
            StopReason::LossAbsorbed => "loss_absorbed",
        }
    }
}

/// What a solve returns.
#[derive(Debug, Clone)]
pub struct SolveReport {
    pub placement: Placement,
    /// Moves from `incident.placement` (the ground) to `placement`.
    pub moves: Vec<Move>,
    /// What the moves disturb: withdrawals, then dispatches.
    pub disruption: stable::Disruption,
    pub key: ObjectiveKey,
    /// The thresholds of the capped key entries (ln, key order) that every
    /// acceptable plan meets.
    pub thresholds: Vec<f64>,
    /// True only when the search proved it: every threshold is exact and no
    /// acceptable plan has less disruption (from scratch: a better key).
    pub proven_optimal: bool,
    /// An upper bound on the worst odds (over all open tasks) any feasible
    /// plan can reach; `None` when the solve was cancelled, or when the
    /// budget was spent on an incident of more than a million units × tasks
    /// (it would take about a second more).
    pub upper_bound: Option<f64>,
    /// Candidate moves scored plus exact-search nodes.
    pub iterations: u64,
    pub elapsed: Duration,
    pub stop: StopReason,
}

/// Reported whenever the best plan found so far improves, and at the end
/// of every epoch of the large-neighbourhood search (`improved` false when
/// the best plan did not change), so a front end can show the work going on.
pub struct Progress<'a> {
    /// The best plan found so far.
    pub placement: &'a Placement,
    /// Its key (the best key so far).
    pub key: &'a ObjectiveKey,
    pub elapsed: Duration,
    /// Candidate moves scored plus exact-search nodes so far.
    pub iterations: u64,
    /// How high the worst odds of the first tier short of its secure level
    /// could go, computed once while searching (see [`search_bound`]);
    /// `None` before then, on budgets under a second, or when no tier is
    /// short.
    pub bound: Option<&'a relax::TierBound>,
    /// The best plan changed since the last report.
    pub improved: bool,
}

/// An incident whose constraints cannot all be met.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
pub enum SolveError {
    #[error("{field}: {message}")]
    Infeasible { field: String, message: String },
}

fn infeasible(field: String, message: String) -> SolveError {
    SolveError::Infeasible { field, message }
}

/// The clock and the cancel flag: the only way the solver learns about time.
pub struct Budget<'a> {
    start: Instant,
    limit: Duration,
    cancel: &'a AtomicBool,
    /// A second flag that ends this budget alone (not `cancelled`): the
    /// parallel LNS stops a step whose start plan is out of date.
    abort: Option<&'a AtomicBool>,
}

impl<'a> Budget<'a> {
    pub fn new(limit: Duration, cancel: &'a AtomicBool) -> Self {
        Budget {
            start: Instant::now(),
            limit,
            cancel,
            abort: None,
        }
    }
    /// A budget ending `fraction` of the way through this one.
    fn share(&self, fraction: f64) -> Budget<'a> {
        Budget {
            start: self.start,
            limit: self.limit.mul_f64(fraction),
            cancel: self.cancel,
            abort: self.abort,
        }
    }
    /// This budget, also ended when `abort` is raised.
    fn with_abort<'b>(&self, abort: &'b AtomicBool) -> Budget<'b>
    where
        'a: 'b,
    {
        Budget {
            start: self.start,
            limit: self.limit,
            cancel: self.cancel,
            abort: Some(abort),
        }
    }
    pub fn cancelled(&self) -> bool {
        self.cancel.load(AtomicOrdering::Relaxed)
    }
    pub fn exhausted(&self) -> bool {
        self.cancelled()
            || self.abort.is_some_and(|a| a.load(AtomicOrdering::Relaxed))
            || self.start.elapsed() >= self.limit
    }
    pub fn elapsed(&self) -> Duration {
        self.start.elapsed()
    }
}

/// Every unit whose place differs, in roster order.
pub fn moves_between(before: &Placement, after: &Placement) -> Vec<Move> {
    let n = before.len().max(after.len());
    UnitIdx::range(n)
        .filter_map(|u| {
            let (from, to) = (before.get(u), after.get(u));
            (from != to).then_some(Move { unit: u, from, to })
        })
        .collect()
}

/// Checks that some plan meets every constraint: pins on tasks that can take
/// the unit, no task pinned over its maximum, enough unpinned available
/// units for the reserve.
pub fn check_feasible(incident: &Incident) -> Result<(), SolveError> {
    for (&u, &t) in &incident.pins {
        if u.index() >= incident.units.len() {
            return Err(infeasible(
                format!("pins[{u}]"),
                "pins a unit that is not on the roster".into(),
            ));
        }
        if t.index() >= incident.tasks.len() {
            return Err(infeasible(
                format!("pins.{}", incident.units[u].id),
                "pinned to a task that does not exist".into(),
            ));
        }
        if let Some(v) = crate::rules::pin_violation(incident, u, t) {
            return Err(infeasible(v.field, v.message));
        }
    }
    match crate::rules::count_violations(incident, false)
        .into_iter()
        .next()
    {
        Some(v) => Err(infeasible(v.field, v.message)),
        None => Ok(()),
    }
}

/// Units × tasks up to which the final per-task bound is computed even
/// when the budget is spent: it is linear in units × tasks with a sort per
/// task and trait (tens of ms at 2000 × 100 × 6; 1.05 s measured at
/// 10 000 × 1 000 × 6 on the shared machine).
const BOUND_AFTER_BUDGET_MAX: usize = 1_000_000;

/// The per-task upper bound of the report, or `None`: skipped on cancel (it
/// would delay the return the caller is waiting for) and, past
/// [`BOUND_AFTER_BUDGET_MAX`], when the budget is spent.
fn final_bound(ctx: &Ctx, budget: &Budget) -> Option<f64> {
    let size = ctx.inc.units.len().saturating_mul(ctx.inc.tasks.len());
    let affordable = !budget.exhausted() || size <= BOUND_AFTER_BUDGET_MAX;
    (!budget.cancelled() && affordable).then(|| exact::worst_odds_upper_bound(ctx))
}

/// Budgets from which the search computes a tier bound while it goes.
const SEARCH_BOUND_MIN_BUDGET: Duration = Duration::from_secs(1);

/// The bound the search reports while it goes: after the first descent,
/// the tier bound ([`relax::tier_bounds`]) of the first tier short of its
/// secure level under the plan found so far, in a tenth of the budget (at
/// most a second). The tiers above that one are at their secure levels, and
/// every better key keeps them there, so the bound holds for that tier
/// whatever plan the search moves to; a front end shows it as "at most N %
/// possible". Skipped on budgets under a second, when no tier is short, and
/// past [`BOUND_AFTER_BUDGET_MAX`] units × tasks (the relaxation's set-up is
/// not cut by the clock there).
fn search_bound(
    inc: &Incident,
    placement: &Placement,
    key: &ObjectiveKey,
    options: &SolveOptions,
    budget: &Budget,
) -> Option<relax::TierBound> {
    let size = inc.units.len().saturating_mul(inc.tasks.len());
    if options.budget < SEARCH_BOUND_MIN_BUDGET
        || size > BOUND_AFTER_BUDGET_MAX
        || budget.exhausted()
    {
        return None;
    }
    key.first_short_tier(&key::ln_caps(inc))?;
    let relax_options = relax::RelaxOptions {
        time_limit: options.budget.mul_f64(0.1).min(Duration::from_secs(1)),
        first_short_only: true,
        ..relax::RelaxOptions::default()
    };
    relax::tier_bounds(inc, placement, &relax_options, budget.cancel)
        .first_short(inc)
        .cloned()
}

/// The report of a re-plan that [`stable::absorb_loss`] settled.
fn absorbed_report(
    ctx: &Ctx,
    budget: &Budget,
    a: stable::Absorbed,
    on_progress: &mut dyn FnMut(&Progress),
) -> SolveReport {
    let inc = ctx.inc;
    let placement = stable::settle_interchangeable(inc, &inc.placement, &a.state.placement());
    let key = ObjectiveKey::of(inc, &placement);
    on_progress(&Progress {
        placement: &placement,
        key: &key,
        elapsed: budget.elapsed(),
        iterations: a.iterations,
        bound: None,
        improved: true,
    });
    let stop = if budget.cancelled() {
        StopReason::Cancelled
    } else {
        StopReason::LossAbsorbed
    };
    let done = Finished {
        placement,
        key,
        thresholds: a.thresholds,
        proven: false,
        iterations: a.iterations,
        stop,
    };
    done.report(ctx, budget)
}

/// What a solve settled on; [`Finished::report`] adds what follows from it.
struct Finished {
    placement: Placement,
    key: ObjectiveKey,
    thresholds: Vec<f64>,
    proven: bool,
    iterations: u64,
    stop: StopReason,
}

impl Finished {
    /// The report: moves and disruption from the ground, the final bound
    /// and the time taken.
    fn report(self, ctx: &Ctx, budget: &Budget) -> SolveReport {
        let ground = &ctx.inc.placement;
        SolveReport {
            moves: moves_between(ground, &self.placement),
            disruption: stable::disruption(ctx.inc, ground, &self.placement),
            thresholds: self.thresholds,
            placement: self.placement,
            key: self.key,
            proven_optimal: self.proven,
            upper_bound: final_bound(ctx, budget),
            iterations: self.iterations,
            elapsed: budget.elapsed(),
            stop: self.stop,
        }
    }
}

/// Recommends a placement. See the module docs for the method; the caller
/// owns the budget (in `options`) and the cancel flag, which is checked
/// between steps of the search (every few hundred exact-search nodes).
pub fn solve(
    incident: &Incident,
    options: &SolveOptions,
    cancel: &AtomicBool,
    on_progress: &mut dyn FnMut(&Progress),
) -> Result<SolveReport, SolveError> {
    check_feasible(incident)?;
    let budget = Budget::new(options.budget, cancel);
    let ctx = Ctx::new(incident);
    let inc = incident;
    let stable = !options.from_scratch;
    let exact = ctx.movable.len() <= options.exact_max_units;

    // After a loss the ground may absorb it without the full search.
    if stable
        && !exact
        && let Some(before) = &options.settled_before_loss
        && let Some(a) = stable::absorb_loss(&ctx, &inc.placement, before, options.slack, &budget)
    {
        return Ok(absorbed_report(&ctx, &budget, a, on_progress));
    }

    let mut iterations = 0u64;
    let bound_found: std::cell::OnceCell<Option<relax::TierBound>> = std::cell::OnceCell::new();
    let mut report = |s: &State, key: &ObjectiveKey, iterations: u64, improved: bool| {
        on_progress(&Progress {
            placement: &s.placement(),
            key,
            elapsed: budget.elapsed(),
            iterations,
            bound: bound_found.get().and_then(Option::as_ref),
            improved,
        });
    };

    // 1. Greedy first plans. The ground and the warm start are filled
    // first: on a very large incident filling an empty board takes seconds
    // (10 000 units), so when there is a ground or a warm start the empty
    // board gets at most a quarter of the budget. Ties go to the empty
    // board, then the ground, then the warm start (rank), whatever the
    // order they were filled in.
    let mut starts: Vec<(u8, Placement)> = Vec::new();
    if stable {
        starts.push((1, inc.placement.clone()));
    }
    if let Some(w) = &options.warm_start
        && w.len() == inc.units.len()
    {
        starts.push((2, w.clone()));
    }
    let empty_share = if starts.is_empty() { 1.0 } else { 0.25 };
    starts.push((0, Placement::all_reserve(inc.units.len())));
    let mut best: Option<(u8, State, ObjectiveKey)> = None;
    // The ground filled: a plan found like any other, so the rule's
    // thresholds are read from it too (below).
    let mut ground_filled: Option<State> = None;
    for (rank, p) in &starts {
        let share = if *rank == 0 {
            budget.share(empty_share)
        } else {
            budget.share(1.0)
        };
        let mut s = State::new(&ctx, &ctx.repair(p));
        greedy_fill(&ctx, &mut s, Some(&share));
        if *rank == 1 {
            ground_filled = Some(s.clone());
        }
        let k = s.key(&ctx);
        let wins = best.as_ref().is_none_or(|(br, _, bk)| match k.compare(bk) {
            std::cmp::Ordering::Greater => true,
            std::cmp::Ordering::Equal => rank < br,
            std::cmp::Ordering::Less => false,
        });
        if wins {
            best = Some((*rank, s, k));
        }
    }
    let Some((_, first, first_key)) = best else {
        unreachable!("at least one start plan");
    };
    report(&first, &first_key, 0, true);

    // 2. Local search. Before an exact search it runs a fixed number of
    // rounds (no clock); otherwise one descent, then the large-neighbourhood
    // search until its share of the budget ends or it stops finding better.
    let limits = if exact {
        SearchLimits {
            stale_rounds: 10,
            max_rounds: 30,
        }
    } else {
        SearchLimits {
            stale_rounds: 1,
            max_rounds: 1,
        }
    };
    let key_budget = if !exact {
        budget.share(0.55)
    } else {
        budget.share(1.0)
    };
    let outcome = local_search(
        &ctx,
        first,
        options.seed,
        &limits,
        &key_budget,
        &mut |s, k, it| report(s, k, it, true),
    );
    iterations += outcome.iterations;
    let mut stopped_by_budget = outcome.stopped_by_budget;
    let mut best_state = outcome.best;
    let mut best_key = outcome.best_key;
    // The bound, once the first descent has ended (or was cut: on a large
    // incident it can take the search's whole share).
    if !exact {
        let b = search_bound(inc, &best_state.placement(), &best_key, options, &budget);
        let told = b.is_some();
        let _ = bound_found.set(b);
        if told {
            report(&best_state, &best_key, iterations, false);
        }
    }
    if !exact && !stopped_by_budget {
        let base = iterations;
        let out = lns::lns(
            &ctx,
            best_state,
            options.seed,
            &lns::LnsLimits {
                threads: options.threads.max(1),
                // In LNS steps per worker: epochs after the first few do 16.
                stale_epochs: options.stale_rounds.div_ceil(16).max(2),
                max_epochs: options.max_epochs,
            },
            &key_budget,
            &mut |s, k, it, improved| report(s, k, base + it, improved),
        );
        iterations += out.iterations;
        stopped_by_budget |= out.stopped_by_budget;
        best_state = out.best;
        best_key = out.best_key;
    }

    // 3. Exact search.
    let mut key_proven = false;
    if exact && !budget.exhausted() {
        let inc_moves = stable::Disruption::default();
        let out = exact::branch_and_bound(
            &ctx,
            exact::Goal::Key,
            &[],
            Some(exact::Incumbent {
                state: best_state.clone(),
                key: best_key.clone(),
                cost: inc_moves,
            }),
            &budget,
            options.exact_node_limit,
            &mut |s, k| report(s, k, iterations, true),
        );
        iterations += out.nodes;
        key_proven = out.complete;
        stopped_by_budget |= !out.complete;
        if let Some(b) = out.best {
            best_state = b.state;
        }
    }

    // 4. The rule: thresholds entry by entry, then the least disruption
    // (from scratch: the best key) among acceptable plans.
    let out = stable::stable_replan(
        &ctx,
        &inc.placement,
        &best_state,
        ground_filled.as_slice(),
        &stable::StableSettings {
            slack: options.slack,
            seed: options.seed,
            exact: key_proven,
            node_limit: options.exact_node_limit,
            stale_rounds: options.stale_rounds,
            from_scratch: options.from_scratch,
            threads: options.threads.max(1),
        },
        &budget,
    );
    iterations += out.iterations;
    let proven = out.proven;
    stopped_by_budget |= out.stopped_by_budget;
    let chosen = out.state;

    let mut placement = chosen.placement();
    if !options.from_scratch {
        placement = stable::settle_interchangeable(inc, &inc.placement, &placement);
    }
    let key = ObjectiveKey::of(inc, &placement);
    let stop = if proven {
        StopReason::Proved
    } else if budget.cancelled() {
        StopReason::Cancelled
    } else if stopped_by_budget || budget.exhausted() {
        StopReason::BudgetExhausted
    } else {
        StopReason::NoImprovement
    };
    let done = Finished {
        placement,
        key,
        thresholds: out.thresholds,
        proven,
        iterations,
        stop,
    };
    Ok(done.report(&ctx, &budget))
}
