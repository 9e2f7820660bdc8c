//! The background re-plan as the dashboard sees it: a [`Planner`] runs on a
//! blocking thread, reports each better placement, and stops the moment its
//! cancel flag is raised (the state changed) or its budget runs out.

use std::sync::Arc;
use std::sync::atomic::AtomicBool;
use std::time::Duration;

use crate::model::{Incident, Placement};

use super::app::PlanResult;

/// Something that recommends a placement for an incident.
pub trait Planner: Send + Sync + 'static {
    /// Plans from the placement on the ground. Calls `progress` with each
    /// better placement found (placement, elapsed, iterations). Must return
    /// soon after `cancel` is raised.
    fn plan(
        &self,
        incident: &Incident,
        cancel: &AtomicBool,
        progress: &mut dyn FnMut(&Placement, Duration, u64),
    ) -> Result<PlanResult, String>;
}

/// A shared planner.
pub type SharedPlanner = Arc<dyn Planner>;

/// Interim planner used until the solver module offers one: first-improvement
/// local search from the ground, moving one unit at a time, comparing plans
/// tier by tier on the worst capped ln odds, then the worst uncapped. It
/// honours status, `accepts`, `max_units`, pins and `reserve_min`.
#[derive(Debug, Clone, Copy, Default)]
pub struct LocalSearchPlanner {
    /// Give up after this long even without cancellation.
    pub budget: Duration,
}

/// Tier-by-tier worst capped ln odds, then the worst uncapped (higher wins).
fn key(incident: &Incident, placement: &Placement) -> Vec<f64> {
    let odds = crate::odds::evaluate(incident, placement);
    let mut out = Vec::with_capacity(4);
    for tier in crate::model::Tier::ALL {
        let cap = incident.secure.get(tier).ln();
        let worst = odds
            .iter()
            .filter(|o| {
                let t = &incident.tasks[o.task_idx];
                t.is_open() && t.tier == tier
            })
            .map(|o| o.ln_odds.min(cap))
            .fold(0.0, f64::min);
        out.push(worst);
    }
    let all = odds
        .iter()
        .filter(|o| incident.tasks[o.task_idx].is_open())
        .map(|o| o.ln_odds)
        .fold(0.0, f64::min);
    out.push(all);
    out
}

fn better(a: &[f64], b: &[f64]) -> bool {
    for (x, y) in a.iter().zip(b) {
        if (x - y).abs() > 1e-10 {
            return x > y;
        }
    }
    false
}

fn feasible(incident: &Incident, placement: &Placement) -> bool {
    let mut count = vec![0u32; incident.tasks.len()];
    let mut reserve = 0u32;
    for (u, p) in placement.0.iter().enumerate() {
        match p {
            Some(t) => {
                if !incident.may_place(u, *t) {
                    return false;
                }
                count[*t] += 1;
            }
            None => {
                if incident.units[u].status == crate::model::UnitStatus::Available {
                    reserve += 1;
                }
            }
        }
    }
    incident
        .tasks
        .iter()
        .zip(&count)
        .all(|(t, c)| t.max_units.is_none_or(|m| *c <= m))
        && reserve >= incident.reserve_min.min(reserve.max(incident.reserve_min))
}

impl Planner for LocalSearchPlanner {
    fn plan(
        &self,
        incident: &Incident,
        cancel: &AtomicBool,
        progress: &mut dyn FnMut(&Placement, Duration, u64),
    ) -> Result<PlanResult, String> {
        use std::sync::atomic::Ordering;
        let started = std::time::Instant::now();
        let mut best = incident.placement.clone();
        // Pins bind the plan: pinned units go to their task first.
        for (&u, &t) in &incident.pins {
            if u < best.len() && incident.may_place(u, t) {
                best.set(u, Some(t));
            }
        }
        let mut best_key = key(incident, &best);
        let mut iterations = 0u64;
        let n_tasks = incident.tasks.len();
        'outer: loop {
            let mut improved = false;
            for u in 0..best.len() {
                if incident.pins.contains_key(&u)
                    || incident.units[u].status != crate::model::UnitStatus::Available
                {
                    continue;
                }
                for to in std::iter::once(None).chain((0..n_tasks).map(Some)) {
                    if cancel.load(Ordering::Relaxed) || started.elapsed() > self.budget {
                        break 'outer;
                    }
                    if best.get(u) == to {
                        continue;
                    }
                    iterations += 1;
                    let mut cand = best.clone();
                    cand.set(u, to);
                    if !feasible(incident, &cand) {
                        continue;
                    }
                    let k = key(incident, &cand);
                    if better(&k, &best_key) {
                        best = cand;
                        best_key = k;
                        improved = true;
                        progress(&best, started.elapsed(), iterations);
                    }
                }
            }
            if !improved {
                break;
            }
        }
        Ok(PlanResult {
            placement: best,
            proven_optimal: false,
            elapsed: started.elapsed(),
        })
    }
}
