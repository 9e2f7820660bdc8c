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

/// The project's solver (stable re-plan from the ground, anytime, seeded).
#[derive(Debug, Clone)]
pub struct SolverPlanner {
    pub options: crate::solver::SolveOptions,
}

impl SolverPlanner {
    /// Default solver options with this budget.
    pub fn with_budget(budget: Duration) -> Self {
        SolverPlanner {
            options: crate::solver::SolveOptions {
                budget,
                ..Default::default()
            },
        }
    }
}

impl Planner for SolverPlanner {
    fn plan(
        &self,
        incident: &Incident,
        cancel: &AtomicBool,
        progress: &mut dyn FnMut(&Placement, Duration, u64),
    ) -> Result<PlanResult, String> {
        let mut on_progress =
            |p: &crate::solver::Progress| progress(p.placement, p.elapsed, p.iterations);
        let report = crate::solver::solve(incident, &self.options, cancel, &mut on_progress)
            .map_err(|e| e.to_string())?;
        Ok(PlanResult {
            placement: report.placement,
            proven_optimal: report.proven_optimal,
            elapsed: report.elapsed,
        })
    }
}
