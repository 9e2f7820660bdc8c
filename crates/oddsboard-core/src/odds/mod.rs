//! The probability model (SPEC §2): per task and trait the aggregate
//! capability `Normal(mean, var)` of the units placed on it, the odds that it
//! meets the need, the task's odds (product over traits), its binding trait
//! and its regime (hedge or gamble).
//!
//! Main types:
//! * [`TaskTally`]: running sums for one task; adding or removing a unit is
//!   O(traits). The solver and the dashboard keep one per task.
//! * [`TraitOdds`] / [`TaskOdds`]: the full reading of a task, for display.
//! * [`evaluate`]: full recompute of every task for a placement.
//!
//! Invariant: pure functions of their inputs; no I/O, no clock, no randomness.

pub mod joint;
pub mod normal;
pub mod simulate;
pub mod text;
pub mod view;

pub use normal::{ln_phi, ln_phi_complement, phi};

use crate::model::{Incident, Need, Placement, Task, TaskIdx, UnitIdx};

/// Which way spread pulls a task's odds (SPEC §2).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Regime {
    /// Expected capability meets the need (z ≥ 0): spread lowers the odds,
    /// steady units protect the task.
    Hedge,
    /// Expected capability falls short (z < 0): only a lucky draw meets the
    /// need, so spread raises the odds; look for more resources.
    Gamble,
}

impl Regime {
    pub fn as_str(self) -> &'static str {
        match self {
            Regime::Hedge => "hedge",
            Regime::Gamble => "gamble",
        }
    }
    pub fn from_z(z: f64) -> Regime {
        if z >= 0.0 {
            Regime::Hedge
        } else {
            Regime::Gamble
        }
    }
}

/// Why a task's odds are forced to 0 regardless of its sums.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ForcedZero {
    /// The task has needs and no units.
    NoUnits,
    /// Fewer units than the task's `min_units`.
    BelowMinimum,
}

impl ForcedZero {
    /// The name used in JSON: `no_units` or `below_minimum`.
    pub fn as_str(self) -> &'static str {
        match self {
            ForcedZero::NoUnits => "no_units",
            ForcedZero::BelowMinimum => "below_minimum",
        }
    }
}

/// Odds of one trait of one task.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TraitOdds {
    pub trait_idx: usize,
    /// Aggregate mean capability.
    pub mean: f64,
    /// Standard deviation of the units' aggregate capability alone (with
    /// within-type correlation), without the need's sd.
    pub unit_sd: f64,
    /// Standard deviation of (capability − need): units' spread with
    /// correlation, plus the need's own sd.
    pub sd: f64,
    pub need: f64,
    pub need_sd: f64,
    /// (mean − need)/sd; ±∞ when sd = 0.
    pub z: f64,
    /// ln p_jk.
    pub ln_odds: f64,
    /// ln(1 − p_jk).
    pub ln_fail: f64,
}

impl TraitOdds {
    pub fn odds(&self) -> f64 {
        self.ln_odds.exp()
    }
    /// Surplus (positive) or shortfall (negative) in the trait's own unit.
    pub fn margin(&self) -> f64 {
        self.mean - self.need
    }
}

/// √(units' variance + need sd²) without overflow: a need sd above about
/// 1e154 squares to +∞, which would make z = 0 and the odds 50 %. The
/// finite case (every real incident) keeps the plain formula.
#[inline]
pub fn total_sd(unit_var: f64, need_sd: f64) -> f64 {
    let var = unit_var + need_sd * need_sd;
    if var.is_finite() {
        var.sqrt()
    } else {
        unit_var.sqrt().hypot(need_sd)
    }
}

/// Odds of one trait given aggregate mean, the units' variance and the need.
/// Where the total variance is 0 the odds are 1 if mean ≥ need, else 0.
pub fn trait_odds(trait_idx: usize, mean: f64, unit_var: f64, need: Need) -> TraitOdds {
    let unit_var = unit_var.max(0.0);
    let sd = total_sd(unit_var, need.sd);
    let diff = mean - need.need;
    let (z, ln_odds, ln_fail) = if sd > 0.0 {
        let z = diff / sd;
        (z, ln_phi(z), ln_phi_complement(z))
    } else if diff >= 0.0 {
        (f64::INFINITY, 0.0, f64::NEG_INFINITY)
    } else {
        (f64::NEG_INFINITY, f64::NEG_INFINITY, 0.0)
    };
    TraitOdds {
        trait_idx,
        mean,
        unit_sd: unit_var.sqrt(),
        sd,
        need: need.need,
        need_sd: need.sd,
        z,
        ln_odds,
        ln_fail,
    }
}

/// ln p_jk alone: the same value as [`trait_odds`]`(..).ln_odds` without
/// computing z's complement, for the solver's inner loop.
#[inline]
pub fn trait_ln_odds(mean: f64, unit_var: f64, need: Need) -> f64 {
    let sd = total_sd(unit_var.max(0.0), need.sd);
    let diff = mean - need.need;
    if sd > 0.0 {
        ln_phi(diff / sd)
    } else if diff >= 0.0 {
        0.0
    } else {
        f64::NEG_INFINITY
    }
}

/// Full reading of one task.
#[derive(Debug, Clone, PartialEq)]
pub struct TaskOdds {
    pub task_idx: TaskIdx,
    /// ln of the task's odds (Σ over counting traits, or −∞ if forced to 0).
    pub ln_odds: f64,
    /// ln(1 − odds), computed stably (for ranking near-certain tasks).
    pub ln_fail: f64,
    /// Counting traits only (need > 0 or need sd > 0), in trait order.
    pub traits: Vec<TraitOdds>,
    /// Index into `traits` of the binding trait (lowest odds), if any counts.
    pub binding: Option<usize>,
    pub forced_zero: Option<ForcedZero>,
    /// Units on the task, in roster order.
    pub units: Vec<UnitIdx>,
}

impl TaskOdds {
    pub fn odds(&self) -> f64 {
        self.ln_odds.exp()
    }
    pub fn binding_trait(&self) -> Option<&TraitOdds> {
        self.binding.map(|b| &self.traits[b])
    }
    /// z on the binding trait; −∞ when forced to zero; +∞ with no needs.
    pub fn z(&self) -> f64 {
        if self.forced_zero.is_some() {
            return f64::NEG_INFINITY;
        }
        self.binding_trait().map_or(f64::INFINITY, |t| t.z)
    }
    /// Regime of the task; `None` when no trait counts (nothing to meet).
    pub fn regime(&self) -> Option<Regime> {
        if self.binding.is_none() && self.forced_zero.is_none() {
            return None;
        }
        Some(Regime::from_z(self.z()))
    }
}

/// ln(1 − e^x) for x ≤ 0, stable at both ends (Mächler 2012, "Accurately
/// computing log(1 − exp(−|a|))").
pub fn ln_one_minus_exp(x: f64) -> f64 {
    if x >= 0.0 {
        f64::NEG_INFINITY
    } else if x > -std::f64::consts::LN_2 {
        (-x.exp_m1()).ln()
    } else {
        (-x.exp()).ln_1p()
    }
}

/// Combines per-trait odds into the task reading.
fn combine(
    task_idx: TaskIdx,
    traits: Vec<TraitOdds>,
    forced_zero: Option<ForcedZero>,
    units: Vec<UnitIdx>,
) -> TaskOdds {
    let binding = traits
        .iter()
        .enumerate()
        .min_by(|a, b| {
            a.1.ln_odds
                .partial_cmp(&b.1.ln_odds)
                .unwrap_or(std::cmp::Ordering::Equal)
                // Equal odds (e.g. both certain): the one nearer failure binds.
                .then(
                    b.1.ln_fail
                        .partial_cmp(&a.1.ln_fail)
                        .unwrap_or(std::cmp::Ordering::Equal),
                )
        })
        .map(|(i, _)| i);
    let (ln_odds, ln_fail) = if forced_zero.is_some() {
        (f64::NEG_INFINITY, 0.0)
    } else {
        let ln: f64 = traits.iter().map(|t| t.ln_odds).sum();
        let fail = match traits.len() {
            0 => f64::NEG_INFINITY,
            1 => traits[0].ln_fail,
            _ => ln_one_minus_exp(ln),
        };
        (ln, fail)
    };
    TaskOdds {
        task_idx,
        ln_odds,
        ln_fail,
        traits,
        binding,
        forced_zero,
        units,
    }
}

/// Running sums of the units placed on one task. Adding or removing a unit
/// costs O(traits); reading the odds costs O(traits).
///
/// Variance with within-type correlation ρ (SPEC §2):
/// `var = Σ_t [(1 − ρ_t)·Σ sd² + ρ_t·(Σ sd)²]`. Adding a unit of type t with
/// sd s to a type whose running Σ sd is S changes it by `s² + 2ρ_t·S·s`, so
/// the variance is kept as a running sum too; per type only Σ sd is kept.
/// Where readings touch a (type, trait), the same slot keeps Σ load of the
/// units' posteriors instead and a unit adds `own² + load² + 2·L·load`
/// ([`crate::model::Belief`]); with no readings the two agree.
#[derive(Debug, Clone, PartialEq)]
pub struct TaskTally {
    n_traits: usize,
    count: u32,
    mean: Vec<f64>,
    var: Vec<f64>,
    /// Units with sd > 0 per trait: when none remain the variance is exactly
    /// 0, whatever rounding the running sum picked up.
    spread_units: Vec<u32>,
    /// Units per type.
    type_count: Vec<u32>,
    /// Σ sd per (type, trait), at `type * n_traits + trait`.
    sd_sum: Vec<f64>,
}

impl TaskTally {
    pub fn new(n_traits: usize, n_types: usize) -> Self {
        TaskTally {
            n_traits,
            count: 0,
            mean: vec![0.0; n_traits],
            var: vec![0.0; n_traits],
            spread_units: vec![0; n_traits],
            type_count: vec![0; n_types],
            sd_sum: vec![0.0; n_traits * n_types],
        }
    }

    /// Empty tally sized for `incident`.
    pub fn for_incident(incident: &Incident) -> Self {
        Self::new(incident.traits.len(), incident.unit_types.len())
    }

    /// Number of units counted.
    pub fn count(&self) -> u32 {
        self.count
    }
    /// Aggregate mean of trait k.
    pub fn mean(&self, k: usize) -> f64 {
        self.mean[k]
    }
    /// Variance of the units' aggregate in trait k (without the need's sd).
    pub fn unit_var(&self, k: usize) -> f64 {
        if self.spread_units[k] == 0 {
            0.0
        } else {
            self.var[k].max(0.0)
        }
    }

    /// Adds unit `u` of `incident`.
    pub fn add(&mut self, incident: &Incident, u: UnitIdx) {
        let unit = &incident.units[u];
        let t = unit.type_idx;
        let rho = incident.unit_types[t].rho;
        self.count += 1;
        self.type_count[t] += 1;
        let obs = &incident.observations;
        for (k, r) in unit.ratings.iter().enumerate() {
            // Readings touch this (type, trait): its slot sums loadings.
            if let Some(b) = obs.posterior(t, k, u, *r, rho) {
                self.mean[k] += b.mean;
                if b.has_spread() {
                    let s1 = &mut self.sd_sum[t * self.n_traits + k];
                    self.var[k] += b.own * b.own + b.load * b.load + 2.0 * *s1 * b.load;
                    *s1 += b.load;
                    self.spread_units[k] += 1;
                }
                continue;
            }
            self.mean[k] += r.mean;
            if r.sd > 0.0 {
                let s1 = &mut self.sd_sum[t * self.n_traits + k];
                self.var[k] += r.sd * r.sd + 2.0 * rho * *s1 * r.sd;
                *s1 += r.sd;
                self.spread_units[k] += 1;
            }
        }
    }

    /// Removes unit `u` of `incident` (which must have been added).
    pub fn remove(&mut self, incident: &Incident, u: UnitIdx) {
        let unit = &incident.units[u];
        let t = unit.type_idx;
        let rho = incident.unit_types[t].rho;
        self.count -= 1;
        self.type_count[t] -= 1;
        let last_of_type = self.type_count[t] == 0;
        let obs = &incident.observations;
        for (k, r) in unit.ratings.iter().enumerate() {
            if let Some(b) = obs.posterior(t, k, u, *r, rho) {
                self.mean[k] -= b.mean;
                if b.has_spread() {
                    let s1 = &mut self.sd_sum[t * self.n_traits + k];
                    *s1 -= b.load;
                    if last_of_type {
                        *s1 = 0.0;
                    }
                    self.var[k] -= b.own * b.own + b.load * b.load + 2.0 * *s1 * b.load;
                    self.spread_units[k] -= 1;
                    if self.spread_units[k] == 0 {
                        self.var[k] = 0.0;
                    }
                }
                continue;
            }
            self.mean[k] -= r.mean;
            if r.sd > 0.0 {
                let s1 = &mut self.sd_sum[t * self.n_traits + k];
                *s1 -= r.sd;
                if last_of_type {
                    *s1 = 0.0;
                }
                self.var[k] -= r.sd * r.sd + 2.0 * rho * *s1 * r.sd;
                self.spread_units[k] -= 1;
                if self.spread_units[k] == 0 {
                    self.var[k] = 0.0;
                }
            }
        }
        if self.count == 0 {
            self.mean.iter_mut().for_each(|m| *m = 0.0);
        }
    }

    /// Odds of trait k against `need`.
    pub fn trait_odds(&self, k: usize, need: Need) -> TraitOdds {
        trait_odds(k, self.mean[k], self.unit_var(k), need)
    }

    /// Why the task would be forced to odds 0, if it would.
    pub fn forced_zero(&self, task: &Task) -> Option<ForcedZero> {
        let has_needs = task.needs.iter().any(Need::counts);
        if has_needs && self.count == 0 {
            Some(ForcedZero::NoUnits)
        } else if task.min_units.is_some_and(|m| self.count < m) {
            Some(ForcedZero::BelowMinimum)
        } else {
            None
        }
    }

    /// ln odds of `task` with these units: the fast path for the solver.
    pub fn ln_odds(&self, task: &Task) -> f64 {
        if self.forced_zero(task).is_some() {
            return f64::NEG_INFINITY;
        }
        task.needs
            .iter()
            .enumerate()
            .filter(|(_, n)| n.counts())
            .map(|(k, n)| trait_ln_odds(self.mean[k], self.unit_var(k), *n))
            .sum()
    }

    /// Full reading of `task` with these units (units listed by caller).
    pub fn task_odds(&self, task_idx: TaskIdx, task: &Task, units: Vec<UnitIdx>) -> TaskOdds {
        let traits = task
            .needs
            .iter()
            .enumerate()
            .filter(|(_, n)| n.counts())
            .map(|(k, n)| self.trait_odds(k, *n))
            .collect();
        combine(task_idx, traits, self.forced_zero(task), units)
    }
}

/// Builds one tally per task for `placement` (closed tasks get empty ones).
pub fn tallies(incident: &Incident, placement: &Placement) -> Vec<TaskTally> {
    let mut out = vec![TaskTally::for_incident(incident); incident.tasks.len()];
    for (u, t) in placement.0.iter().enumerate() {
        if let Some(t) = *t {
            out[t].add(incident, crate::model::UnitIdx::new(u));
        }
    }
    out
}

/// Full recompute, straight from the formula of SPEC §2 (no running sums):
/// the reference the tallies are tested against.
pub fn evaluate_task(incident: &Incident, placement: &Placement, t: TaskIdx) -> TaskOdds {
    let task = &incident.tasks[t];
    let units: Vec<UnitIdx> = placement.units_on(t).collect();
    let n_types = incident.unit_types.len();
    let mut traits = Vec::new();
    for (k, need) in task.needs.iter().enumerate() {
        if !need.counts() {
            continue;
        }
        let mean: f64 = units.iter().map(|&u| incident.belief(u, k).mean).sum();
        let mut var = 0.0;
        for ty in 0..n_types {
            let rho = incident.unit_types[ty].rho;
            let of_type = units.iter().filter(|&&u| incident.units[u].type_idx == ty);
            if incident.observations.touches(ty, k) {
                // Posterior: Σ own² + (Σ load)² (docs/model.md, "Observations").
                let (l1, o2) = of_type
                    .map(|&u| incident.belief(u, k))
                    .fold((0.0, 0.0), |(a, b), x| (a + x.load, b + x.own * x.own));
                var += o2 + l1 * l1;
                continue;
            }
            let sds = of_type.map(|&u| incident.units[u].ratings[k].sd);
            let (s1, s2) = sds.fold((0.0, 0.0), |(a, b), s| (a + s, b + s * s));
            var += (1.0 - rho) * s2 + rho * s1 * s1;
        }
        traits.push(trait_odds(k, mean, var, *need));
    }
    let has_needs = !traits.is_empty();
    let forced = if has_needs && units.is_empty() {
        Some(ForcedZero::NoUnits)
    } else if task.min_units.is_some_and(|m| (units.len() as u32) < m) {
        Some(ForcedZero::BelowMinimum)
    } else {
        None
    };
    combine(t, traits, forced, units)
}

/// Odds of every task (index = task index; closed tasks included, callers
/// skip them) for `placement`.
pub fn evaluate(incident: &Incident, placement: &Placement) -> Vec<TaskOdds> {
    crate::model::TaskIdx::range(incident.tasks.len())
        .map(|t| evaluate_task(incident, placement, t))
        .collect()
}
