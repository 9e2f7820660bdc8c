//! Advice beyond the plan: which units must not be lost, what to ask for,
//! and what a change would cost.
//!
//! Main items:
//! * [`advise`] with [`AdviseOptions`] → [`Advice`]: the baseline plan, the
//!   fragility of every placed unit ([`fragility::UnitLoss`]), how many
//!   losses each task can absorb ([`fragility::TaskAbsorb`]), resource
//!   requests for every tier that is not secure ([`requests::TierRequest`])
//!   and the notes that follow ([`Note`]).
//! * [`top_notes`]: the most urgent notes alone, for a notes panel.
//! * [`what_if::what_if`]: an event applied to a copy of the incident
//!   through the log's own [`crate::log::apply`], with the odds before and
//!   after on the ground.
//!
//! Every plan here comes from [`crate::solver::solve`] and every ranking
//! from [`crate::solver::ObjectiveKey`]; this module adds no second notion
//! of a better plan.
//!
//! Invariant: no terminal I/O, no files; the clock is read only through the
//! solver's budget and the request search's time limit.

pub mod fragility;
pub mod notes;
pub mod requests;
pub mod what_if;

pub use fragility::{TaskAbsorb, UnitLoss};
pub use notes::{Note, NoteLevel};
pub use requests::{RequestOutcome, RequestSet, TierRequest};

use crate::model::{Incident, Tier};
use crate::solver::{ObjectiveKey, SolveError, SolveOptions, SolveReport, solve};
use serde::Serialize;
use std::sync::atomic::AtomicBool;
use std::time::Duration;

/// Settings of [`advise`]. Every field's default is given beside it.
#[derive(Debug, Clone)]
pub struct AdviseOptions {
    /// Budget of the baseline plan (the re-plan with nothing lost).
    /// Default 300 ms.
    pub baseline_budget: Duration,
    /// Budget of each re-plan after one loss. Default 8 ms.
    pub per_loss_budget: Duration,
    /// Seed of every solve. Default 0.
    pub seed: u64,
    /// Stability slack of the re-plans after a loss (as in the plan
    /// command). Default 0.01.
    pub slack: f64,
    /// Exact search (with proof) in each re-plan when at most this many
    /// units can move. Default 24 (the sample incidents need the proof: a
    /// request judged only by insertion can be missed).
    pub exact_max_units: usize,
    /// Largest resource request considered, in units. Default 8.
    pub max_extra_units: usize,
    /// Alternatives shown per tier. Default 3.
    pub alternatives: usize,
    /// Budget of each solve that checks a candidate request. Default 20 ms.
    pub per_request_budget: Duration,
    /// Time limit of the whole request search over all tiers; when it is
    /// reached the search says so. Default 1.5 s.
    pub request_time_limit: Duration,
    /// Compute per-task absorbable losses. Default true.
    pub absorb: bool,
    /// Time limit of the one-loss assessment over all placed units (units
    /// on life-safety tasks first, then stabilization, then property); the
    /// units left when it is reached are counted as not assessed. Default
    /// 15 s: a few hundred units fit well within it.
    pub loss_time_limit: Duration,
    /// Time limit of the absorbable-loss counts over all tasks (board
    /// order: life-safety tasks first). Default 10 s.
    pub absorb_time_limit: Duration,
}

impl Default for AdviseOptions {
    fn default() -> Self {
        AdviseOptions {
            baseline_budget: Duration::from_millis(300),
            per_loss_budget: Duration::from_millis(8),
            seed: 0,
            slack: 0.01,
            exact_max_units: 24,
            max_extra_units: 8,
            alternatives: 3,
            per_request_budget: Duration::from_millis(20),
            request_time_limit: Duration::from_millis(1500),
            absorb: true,
            loss_time_limit: Duration::from_secs(15),
            absorb_time_limit: Duration::from_secs(10),
        }
    }
}

impl AdviseOptions {
    /// Solve options of a re-plan with the given budget.
    pub(crate) fn solve_options(&self, budget: Duration) -> SolveOptions {
        SolveOptions {
            budget,
            seed: self.seed,
            slack: self.slack,
            exact_max_units: self.exact_max_units,
            stale_rounds: 60,
            ..SolveOptions::default()
        }
    }
}

/// Why advice could not be given.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum AdviseError {
    #[error(transparent)]
    Solve(#[from] SolveError),
}

/// Odds of one tier's worst task.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct TierOdds {
    /// `life`, `stabilization` or `property`.
    pub tier: &'static str,
    /// Worst odds over the tier's open tasks.
    pub odds: f64,
    /// ln of `odds`; `null` when the odds are exactly 0.
    pub ln_odds: Option<f64>,
    /// The tier's secure level.
    pub secure: f64,
    /// `odds` reaches the secure level.
    pub is_secure: bool,
}

/// Worst odds per tier of a key, highest tier first; tiers with no open
/// task are left out.
pub fn tier_odds(incident: &Incident, key: &ObjectiveKey) -> Vec<TierOdds> {
    let worst = key.worst_odds_per_tier();
    Tier::ALL
        .iter()
        .filter_map(|&tier| {
            let p = worst[tier.index()]?;
            let secure = incident.secure.get(tier);
            Some(TierOdds {
                tier: tier.as_str(),
                odds: p,
                ln_odds: (p > 0.0).then(|| p.ln()),
                secure,
                is_secure: reaches(p, secure),
            })
        })
        .collect()
}

/// `p` reaches the level `secure`, with the key's tolerance in ln space.
pub fn reaches(p: f64, secure: f64) -> bool {
    if p <= 0.0 {
        return secure <= 0.0;
    }
    crate::solver::key::cmp_ln(p.ln(), secure.ln()) != std::cmp::Ordering::Less
}

/// Everything `advise` finds.
#[derive(Debug, Clone, Serialize)]
pub struct Advice {
    pub incident: String,
    /// Worst odds per tier of the baseline plan (the re-plan now, nothing
    /// lost).
    pub baseline: Vec<TierOdds>,
    /// The baseline plan is proven optimal.
    pub baseline_proven: bool,
    /// Placed units, most costly loss first.
    pub fragility: Vec<UnitLoss>,
    /// Placed units whose loss was not assessed: the loss time limit was
    /// reached first ([`AdviseOptions::loss_time_limit`]).
    pub losses_not_assessed: usize,
    /// Open tasks, life-safety first, then stabilization, then property
    /// (the order the absorb time limit takes them in).
    pub absorb: Vec<TaskAbsorb>,
    /// One entry per tier that is not secure even with the best plan.
    pub requests: Vec<TierRequest>,
    /// Life-safety and other notes, most urgent first.
    pub notes: Vec<Note>,
    pub cautions: &'static [&'static str],
}

/// The baseline plan: the stable re-plan now, nothing lost.
pub fn baseline_plan(
    incident: &Incident,
    options: &AdviseOptions,
    cancel: &AtomicBool,
) -> Result<SolveReport, AdviseError> {
    let opts = options.solve_options(options.baseline_budget);
    Ok(solve(incident, &opts, cancel, &mut |_| {})?)
}

/// Fragility, absorbable losses, resource requests and notes for the
/// incident as it stands. `cancel` stops the solves early (the results are
/// then the best found so far).
pub fn advise(
    incident: &Incident,
    options: &AdviseOptions,
    cancel: &AtomicBool,
) -> Result<Advice, AdviseError> {
    let base = baseline_plan(incident, options, cancel)?;
    let fragility = fragility::unit_losses(incident, &base, options, cancel)?;
    let losses_not_assessed = fragility::placed_units(incident).len() - fragility.len();
    let absorb = if options.absorb {
        fragility::task_absorbs(incident, &base, options, cancel)?
    } else {
        Vec::new()
    };
    let requests = requests::tier_requests(incident, options, cancel)?;
    let baseline = tier_odds(incident, &base.key);
    let mut notes = notes::notes(incident, &base, &fragility, &absorb, &requests);
    notes.extend(notes::not_assessed(
        losses_not_assessed,
        absorb.iter().filter(|a| a.not_assessed).count(),
    ));
    Ok(Advice {
        incident: incident.name.clone(),
        baseline,
        baseline_proven: base.proven_optimal,
        fragility,
        losses_not_assessed,
        absorb,
        requests,
        notes,
        cautions: &crate::safety::CAUTIONS,
    })
}

/// The `limit` most urgent notes, for a notes panel. Runs the whole
/// [`advise`] (about a second on a 100-unit incident with the defaults), so
/// a screen should call it off its drawing thread.
pub fn top_notes(
    incident: &Incident,
    options: &AdviseOptions,
    cancel: &AtomicBool,
    limit: usize,
) -> Result<Vec<Note>, AdviseError> {
    let mut notes = advise(incident, options, cancel)?.notes;
    notes.truncate(limit);
    Ok(notes)
}
