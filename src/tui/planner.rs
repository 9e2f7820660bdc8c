//! The background re-plan as the dashboard sees it: a [`Planner`] runs on a
//! blocking thread, reports each better placement, and stops the moment its
//! cancel flag is raised (the state changed) or its budget runs out. The
//! background advice ([`Advisor`]) runs the same way.

use std::sync::Arc;
use std::sync::atomic::AtomicBool;
use std::time::Duration;

use crate::model::{Incident, Placement};
use crate::solver::relax::TierBound;

use super::app::PlanResult;

/// What a re-plan reports while it goes.
#[derive(Debug, Clone, Copy)]
pub struct PlanProgress<'a> {
    /// A better placement, when one was found since the last report.
    pub placement: Option<&'a Placement>,
    pub elapsed: Duration,
    /// Candidate moves scored (plus exact-search nodes) so far.
    pub iterations: u64,
    /// How high the first short tier's worst odds could go, once the search
    /// has bounded it.
    pub bound: Option<&'a TierBound>,
}

/// Something that recommends a placement for an incident.
pub trait Planner: Send + Sync + 'static {
    /// Plans from the placement on the ground. `settled_before_loss` is the
    /// ground before the units now lost were lost, when a settled re-plan
    /// had kept it and only losses happened since. Calls `progress` with
    /// each better placement found, and now and then with the work done so
    /// far. Must return soon after `cancel` is raised.
    fn plan(
        &self,
        incident: &Incident,
        settled_before_loss: Option<&Placement>,
        cancel: &AtomicBool,
        progress: &mut dyn FnMut(&PlanProgress),
    ) -> Result<PlanResult, String>;
}

/// How often a re-plan reports its work when no better plan turns up.
pub const WORK_REPORT_EVERY: Duration = Duration::from_millis(250);

/// A shared planner.
pub type SharedPlanner = Arc<dyn Planner>;

/// The project's solver (stable re-plan from the ground, anytime, seeded).
#[derive(Debug, Clone)]
pub struct SolverPlanner {
    pub options: crate::solver::SolveOptions,
}

impl SolverPlanner {
    /// Default solver options with this budget, searching on every core
    /// available (the cancel flag still stops every worker at once).
    pub fn with_budget(budget: Duration) -> Self {
        SolverPlanner {
            options: crate::solver::SolveOptions {
                budget,
                threads: crate::solver::available_threads(),
                ..Default::default()
            },
        }
    }
}

impl Planner for SolverPlanner {
    fn plan(
        &self,
        incident: &Incident,
        settled_before_loss: Option<&Placement>,
        cancel: &AtomicBool,
        progress: &mut dyn FnMut(&PlanProgress),
    ) -> Result<PlanResult, String> {
        // A better placement at once; otherwise the work done (the search
        // reports every epoch, far more often than a screen needs) at most
        // every WORK_REPORT_EVERY, and as soon as the bound is known.
        let mut last: Option<Duration> = None;
        let mut bound_told = false;
        let mut on_progress = |p: &crate::solver::Progress| {
            let due = last.is_none_or(|l| p.elapsed >= l + WORK_REPORT_EVERY);
            let new_bound = p.bound.is_some() && !bound_told;
            if p.improved || due || new_bound {
                last = Some(p.elapsed);
                bound_told |= p.bound.is_some();
                progress(&PlanProgress {
                    placement: p.improved.then_some(p.placement),
                    elapsed: p.elapsed,
                    iterations: p.iterations,
                    bound: p.bound,
                });
            }
        };
        let options = crate::solver::SolveOptions {
            settled_before_loss: settled_before_loss.cloned(),
            ..self.options.clone()
        };
        let report = crate::solver::solve(incident, &options, cancel, &mut on_progress)
            .map_err(|e| e.to_string())?;
        use crate::solver::StopReason;
        let settled = matches!(
            report.stop,
            StopReason::Proved | StopReason::NoImprovement | StopReason::LossAbsorbed
        );
        // The gap of the first short tier, after the plan is settled and
        // within a small time limit (the cancel flag stops it too).
        let bound = if report.proven_optimal {
            None
        } else {
            let options = crate::solver::relax::RelaxOptions {
                time_limit: Duration::from_millis(300),
                ..Default::default()
            };
            crate::solver::relax::tier_bounds(incident, &report.placement, &options, cancel)
                .first_short(incident)
                .cloned()
        };
        Ok(PlanResult {
            placement: report.placement,
            proven_optimal: report.proven_optimal,
            elapsed: report.elapsed,
            bound,
            settled,
        })
    }
}

/// Something that gives the most urgent advice notes for an incident.
pub trait Advisor: Send + Sync + 'static {
    /// The notes, most urgent first. Must return soon after `cancel` is
    /// raised.
    fn advise(
        &self,
        incident: &Incident,
        cancel: &AtomicBool,
    ) -> Result<Vec<crate::advise::Note>, String>;
}

/// A shared advisor.
pub type SharedAdvisor = Arc<dyn Advisor>;

/// The project's advice module: [`crate::advise::top_notes`].
#[derive(Debug, Clone, Default)]
pub struct NotesAdvisor {
    pub options: crate::advise::AdviseOptions,
    /// Notes kept (the panel shows what fits). Default 0 means 5.
    pub limit: usize,
}

impl Advisor for NotesAdvisor {
    fn advise(
        &self,
        incident: &Incident,
        cancel: &AtomicBool,
    ) -> Result<Vec<crate::advise::Note>, String> {
        let limit = if self.limit == 0 { 5 } else { self.limit };
        crate::advise::top_notes(incident, &self.options, cancel, limit).map_err(|e| e.to_string())
    }
}
