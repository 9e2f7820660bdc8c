//! Monte Carlo of a placement: draws every placed unit's capability and every
//! uncertain need, and counts how often each task (and all tasks together)
//! has every need met. It checks the closed-form model of [`super`] from the
//! outside: the model's odds should fall inside the Wilson score interval of
//! the simulated rate.
//!
//! Sampling (SPEC §2): for each unit type t and trait k one shared factor
//! `Z_tk` per trial, for each unit i one own factor `Z_ik`, all standard
//! normal and independent; unit i of type t gets
//! `mean_ik + sd_ik·(√ρ_t·Z_tk + √(1 − ρ_t)·Z_ik)`, so two units of a type
//! have correlation ρ_t and the sum of a type's units has the variance
//! `(1 − ρ)·Σsd² + ρ·(Σsd)²` of the model. The shared factor is shared across
//! tasks too (the same weather reaches every task), which is why the
//! all-tasks rate can differ from the product of the task odds.
//!
//! Values are not truncated at 0: the model is a normal one, and the point of
//! the simulation is to check the model's arithmetic, not to replace it.
//! With means several sd above 0 (as real ratings are) a negative draw is
//! rare either way; see docs/model.md.
//!
//! Invariant: pure and repeatable: the generator is seeded from the options
//! ([`SimulationOptions::seed`]), never from the operating system. It is
//! xoshiro256++ (a named algorithm, the solver's too), so a seed reproduces
//! the same run across oddsboard versions as long as rand's xoshiro256++ and
//! rand_distr's normal sampler keep their documented output.

use super::joint::{JointOdds, JointOptions, joint_odds};
use super::{evaluate_task, phi};
use crate::model::{Incident, Need, Placement, TaskIdx, UnitIdx};
use rand::rngs::Xoshiro256PlusPlus;
use rand::{RngExt, SeedableRng};
use rand_distr::StandardNormal;
use serde::Serialize;

/// Settings of a Monte Carlo run.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SimulationOptions {
    /// Number of simulated draws of the whole incident. Default 100 000.
    pub trials: u64,
    /// Seed of the random generator. Default 0.
    pub seed: u64,
}

impl Default for SimulationOptions {
    fn default() -> Self {
        SimulationOptions {
            trials: 100_000,
            seed: 0,
        }
    }
}

/// Simulated outcome of one open task.
#[derive(Debug, Clone, PartialEq)]
pub struct TaskRate {
    pub task_idx: TaskIdx,
    /// Trials in which every need of the task was met.
    pub successes: u64,
    pub trials: u64,
    /// The model's odds for the same placement.
    pub model_odds: f64,
    /// ln of the model's odds, and ln(1 − odds).
    pub model_ln_odds: f64,
    pub model_ln_fail: f64,
}

impl TaskRate {
    pub fn rate(&self) -> f64 {
        rate(self.successes, self.trials)
    }
}

/// The result of [`simulate`].
#[derive(Debug, Clone, PartialEq)]
pub struct Simulation {
    pub options: SimulationOptions,
    /// Open tasks, in board order.
    pub tasks: Vec<TaskRate>,
    /// Trials in which every open task succeeded.
    pub all_successes: u64,
    /// The model's joint odds of every open task (shared correlated types
    /// included), to compare with the all-tasks rate.
    pub all_model: JointOdds,
}

impl Simulation {
    pub fn all_rate(&self) -> f64 {
        rate(self.all_successes, self.options.trials)
    }
}

fn rate(successes: u64, trials: u64) -> f64 {
    if trials == 0 {
        0.0
    } else {
        successes as f64 / trials as f64
    }
}

/// Wilson score interval for a binomial proportion (Wilson, 1927, "Probable
/// inference, the law of succession, and statistical inference", JASA 22):
/// centre (p̂ + z²/2n)/(1 + z²/n), half-width
/// z/(1 + z²/n)·√(p̂(1 − p̂)/n + z²/4n²). It is the set of p whose normal
/// test at level z does not reject p̂, and it behaves well near 0 and 1.
pub fn wilson_interval(successes: u64, trials: u64, z: f64) -> (f64, f64) {
    if trials == 0 {
        return (0.0, 1.0);
    }
    let n = trials as f64;
    let p = successes as f64 / n;
    let z2 = z * z;
    let denom = 1.0 + z2 / n;
    let centre = (p + z2 / (2.0 * n)) / denom;
    let half = z / denom * (p * (1.0 - p) / n + z2 / (4.0 * n * n)).sqrt();
    // At 0 (or n) successes the lower (upper) end is exactly 0 (1); the
    // formula gets there only up to rounding, which must not exclude a model
    // that says exactly 0 or 1.
    let low = if successes == 0 {
        0.0
    } else {
        (centre - half).max(0.0)
    };
    let high = if successes >= trials {
        1.0
    } else {
        (centre + half).min(1.0)
    };
    (low, high)
}

/// The two-sided standard normal quantile for a confidence level, e.g.
/// 0.95 → 1.95996…, found by bisection on [`phi`] (accurate to 1e−12).
pub fn z_for_confidence(confidence: f64) -> f64 {
    let target = 0.5 + confidence.clamp(0.0, 1.0 - 1e-15) / 2.0;
    let (mut lo, mut hi) = (0.0_f64, 40.0_f64);
    while hi - lo > 1e-12 {
        let mid = 0.5 * (lo + hi);
        if phi(mid) < target {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    0.5 * (lo + hi)
}

/// One placed unit as the sampler sees it.
struct Draw {
    task: usize,
    type_idx: usize,
    /// (trait, mean, shared loading, own sd) for the traits that count for
    /// the unit's task: its [`crate::model::Belief`].
    traits: Vec<(usize, f64, f64, f64)>,
}

/// Runs the Monte Carlo of `placement` (see the module docs).
pub fn simulate(
    incident: &Incident,
    placement: &Placement,
    options: SimulationOptions,
) -> Simulation {
    let n_traits = incident.traits.len();
    let n_types = incident.unit_types.len();
    let open: Vec<TaskIdx> = crate::model::TaskIdx::range(incident.tasks.len())
        .filter(|&t| incident.tasks[t].is_open())
        .collect();
    // Position of each open task in `open`.
    let mut slot = vec![usize::MAX; incident.tasks.len()];
    for (i, &t) in open.iter().enumerate() {
        slot[t] = i;
    }
    let readings: Vec<_> = open
        .iter()
        .map(|&t| evaluate_task(incident, placement, t))
        .collect();
    // A task forced to 0 (no units, below its minimum) fails in every trial,
    // as in the model.
    let forced: Vec<bool> = readings.iter().map(|r| r.forced_zero.is_some()).collect();
    let needs: Vec<Vec<(usize, Need)>> = open
        .iter()
        .map(|&t| {
            incident.tasks[t]
                .needs
                .iter()
                .enumerate()
                .filter(|(_, n)| n.counts())
                .map(|(k, n)| (k, *n))
                .collect()
        })
        .collect();
    let draws: Vec<Draw> = placement
        .0
        .iter()
        .enumerate()
        .filter_map(|(u, t)| {
            let t = (*t)?;
            let s = *slot.get(t.index())?;
            if s == usize::MAX {
                return None;
            }
            let unit = &incident.units[u];
            let traits = needs[s]
                .iter()
                .map(|&(k, _)| {
                    let b = incident.belief(UnitIdx::new(u), k);
                    (k, b.mean, b.load, b.own)
                })
                .collect();
            Some(Draw {
                task: s,
                type_idx: unit.type_idx,
                traits,
            })
        })
        .collect();

    // A named algorithm (as in the solver), not StdRng, whose algorithm rand
    // may change: the same seed gives the same draws in later versions.
    let mut rng = Xoshiro256PlusPlus::seed_from_u64(options.seed);
    let mut shared = vec![0.0_f64; n_types * n_traits];
    let mut totals = vec![0.0_f64; open.len() * n_traits];
    let mut successes = vec![0_u64; open.len()];
    let mut all_successes = 0_u64;
    for _ in 0..options.trials {
        for z in shared.iter_mut() {
            *z = rng.sample(StandardNormal);
        }
        totals.iter_mut().for_each(|x| *x = 0.0);
        for d in &draws {
            for &(k, mean, load, own_sd) in &d.traits {
                let value = if load > 0.0 || own_sd > 0.0 {
                    let own: f64 = rng.sample(StandardNormal);
                    mean + load * shared[d.type_idx * n_traits + k] + own_sd * own
                } else {
                    mean
                };
                totals[d.task * n_traits + k] += value;
            }
        }
        let mut all = true;
        for (s, task_needs) in needs.iter().enumerate() {
            let mut ok = !forced[s];
            for &(k, need) in task_needs {
                let required = if need.sd > 0.0 {
                    let z: f64 = rng.sample(StandardNormal);
                    need.need + need.sd * z
                } else {
                    need.need
                };
                // Every need is drawn even after a failure, so that one
                // task's outcome does not shift the random stream of others.
                ok &= totals[s * n_traits + k] >= required;
            }
            if ok {
                successes[s] += 1;
            } else {
                all = false;
            }
        }
        if all {
            all_successes += 1;
        }
    }
    let tasks: Vec<TaskRate> = open
        .iter()
        .zip(&readings)
        .zip(&successes)
        .map(|((&t, r), &n)| TaskRate {
            task_idx: t,
            successes: n,
            trials: options.trials,
            model_odds: r.odds(),
            model_ln_odds: r.ln_odds,
            model_ln_fail: r.ln_fail,
        })
        .collect();
    let all_model = joint_odds(incident, placement, &open, JointOptions::default());
    Simulation {
        options,
        tasks,
        all_successes,
        all_model,
    }
}

/// One task of the `simulate --json` document.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TaskRateView {
    pub id: String,
    pub tier: &'static str,
    /// The model's odds.
    pub model_odds: f64,
    /// ln of the model's odds (`null` when exactly 0) and ln(1 − odds)
    /// (`null` when certain).
    pub model_ln_odds: Option<f64>,
    pub model_ln_fail: Option<f64>,
    pub successes: u64,
    pub trials: u64,
    /// Simulated success rate.
    pub rate: f64,
    /// Wilson score interval of the rate at the chosen confidence.
    pub low: f64,
    pub high: f64,
    /// Whether the model's odds lie inside the interval.
    pub model_inside: bool,
}

/// All tasks together in the `simulate --json` document.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct AllTasksView {
    pub successes: u64,
    pub rate: f64,
    pub low: f64,
    pub high: f64,
    /// The model's joint odds of every open task (not the product of the
    /// task odds: shared correlated types make tasks rise and fall together).
    pub model_joint: f64,
    /// Estimated absolute error of `model_joint` (numerical, not sampling).
    pub model_joint_error: f64,
    /// Whether the model's joint odds lie inside the interval (within their
    /// numerical error).
    pub model_inside: bool,
}

/// The `simulate --json` document.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SimulationView {
    pub incident: String,
    pub trials: u64,
    pub seed: u64,
    /// Confidence level of the intervals, e.g. 0.99.
    pub confidence: f64,
    /// The matching standard normal quantile.
    pub z: f64,
    pub tasks: Vec<TaskRateView>,
    pub all_tasks: AllTasksView,
    /// Ids of tasks whose model odds fall outside their interval.
    pub outside: Vec<String>,
    pub cautions: &'static [&'static str],
}

/// Builds the serializable result of a simulation at a confidence level.
pub fn simulation_view(incident: &Incident, sim: &Simulation, confidence: f64) -> SimulationView {
    let z = z_for_confidence(confidence);
    let tasks: Vec<TaskRateView> = sim
        .tasks
        .iter()
        .map(|t| {
            let (low, high) = wilson_interval(t.successes, t.trials, z);
            let task = &incident.tasks[t.task_idx];
            TaskRateView {
                id: task.id.clone(),
                tier: task.tier.as_str(),
                model_odds: t.model_odds,
                model_ln_odds: t.model_ln_odds.is_finite().then_some(t.model_ln_odds),
                model_ln_fail: t.model_ln_fail.is_finite().then_some(t.model_ln_fail),
                successes: t.successes,
                trials: t.trials,
                rate: t.rate(),
                low,
                high,
                model_inside: low <= t.model_odds && t.model_odds <= high,
            }
        })
        .collect();
    let (low, high) = wilson_interval(sim.all_successes, sim.options.trials, z);
    SimulationView {
        incident: incident.name.clone(),
        trials: sim.options.trials,
        seed: sim.options.seed,
        confidence,
        z,
        outside: tasks
            .iter()
            .filter(|t| !t.model_inside)
            .map(|t| t.id.clone())
            .collect(),
        tasks,
        all_tasks: AllTasksView {
            successes: sim.all_successes,
            rate: sim.all_rate(),
            low,
            high,
            model_joint: sim.all_model.odds(),
            model_joint_error: sim.all_model.error,
            model_inside: low <= sim.all_model.odds() + sim.all_model.error
                && sim.all_model.odds() - sim.all_model.error <= high,
        },
        cautions: &crate::safety::CAUTIONS,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn wilson_interval_known_values() {
        // 50 of 100 at z = 1.96: centre 0.5, half-width
        // 1.96/(1 + 0.038416)·√(0.0025 + 0.00009604) = 0.0961… (hand
        // computation of Wilson's formula).
        let (lo, hi) = wilson_interval(50, 100, 1.96);
        assert!((lo - 0.403_831).abs() < 1e-5, "{lo}");
        assert!((hi - 0.596_169).abs() < 1e-5, "{hi}");
        // 0 successes still gives a positive upper end ("rule of three"
        // region): 0 of 100 at z = 1.96 → upper 0.0370.
        let (lo, hi) = wilson_interval(0, 100, 1.96);
        assert_eq!(lo, 0.0);
        for n in [7, 2000, 100_000] {
            assert_eq!(wilson_interval(0, n, 2.575).0, 0.0);
            assert_eq!(wilson_interval(n, n, 2.575).1, 1.0);
        }
        assert!((hi - 0.036_994).abs() < 1e-5, "{hi}");
    }

    #[test]
    fn wilson_interval_matches_newcombe_1998() {
        // Newcombe (1998), "Two-sided confidence intervals for the single
        // proportion", Statistics in Medicine 17, Table II, score method
        // (values from memory of the table, 4 decimals; they agree with the
        // formula above).
        for (s, n, lo, hi) in [
            (81, 263, 0.2553, 0.3662),
            (15, 148, 0.0624, 0.1605),
            (0, 20, 0.0, 0.1611),
            (1, 29, 0.0061, 0.1718),
        ] {
            let (l, h) = wilson_interval(s, n, 1.959_964);
            assert!(
                (l - lo).abs() < 6e-5 && (h - hi).abs() < 6e-5,
                "{s}/{n}: {l} {h}"
            );
        }
    }

    #[test]
    fn quantiles() {
        // Python's statistics.NormalDist().inv_cdf(0.975) and (0.995).
        assert!((z_for_confidence(0.95) - 1.959_963_984_540_054).abs() < 1e-9);
        assert!((z_for_confidence(0.99) - 2.575_829_303_548_901).abs() < 1e-9);
    }
}
