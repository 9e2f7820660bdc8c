//! Readings derived from the incident for display: the odds of the placement
//! on the ground, of the proposal, the order of the task board, proposed
//! moves. Recomputed whenever the incident or the proposal changes, never
//! while drawing.

use crate::model::{Incident, Placement, TaskIdx, Tier, UnitIdx, UnitStatus};
use crate::odds::{Regime, TaskOdds, evaluate};
use crate::solver::{Move, moves_between};

/// A placement recommended by the re-plan, with its odds.
#[derive(Debug, Clone, PartialEq)]
pub struct Proposal {
    pub placement: Placement,
    pub odds: Vec<TaskOdds>,
    pub moves: Vec<Move>,
}

impl Proposal {
    /// Reads `placement` against the ground of `incident`.
    pub fn new(incident: &Incident, placement: Placement) -> Self {
        let odds = evaluate(incident, &placement);
        let moves = moves_between(&incident.placement, &placement);
        Proposal {
            placement,
            odds,
            moves,
        }
    }
}

/// Open tasks by tier (highest first) in file order, then closed tasks.
pub fn task_order(incident: &Incident) -> Vec<TaskIdx> {
    let mut open: Vec<TaskIdx> = oddsboard_core::model::TaskIdx::range(incident.tasks.len())
        .filter(|&t| incident.tasks[t].is_open())
        .collect();
    open.sort_by_key(|&t| incident.tasks[t].tier);
    open.extend(
        oddsboard_core::model::TaskIdx::range(incident.tasks.len())
            .filter(|&t| !incident.tasks[t].is_open()),
    );
    open
}

/// The open task with the lowest odds, if any task is open.
pub fn worst_open(incident: &Incident, odds: &[TaskOdds]) -> Option<TaskIdx> {
    odds.iter()
        .filter(|o| incident.tasks[o.task_idx].is_open())
        .min_by(|a, b| a.ln_odds.total_cmp(&b.ln_odds))
        .map(|o| o.task_idx)
}

/// Short word for a tier, as headed on the board.
pub fn tier_heading(tier: Tier) -> &'static str {
    match tier {
        Tier::Life => "LIFE SAFETY",
        Tier::Stabilization => "INCIDENT STABILIZATION",
        Tier::Property => "PROPERTY CONSERVATION",
    }
}

/// Symbol and word of a regime: the symbol shows it at a glance, the word
/// says it without relying on colour.
pub fn regime_mark(regime: Option<Regime>) -> &'static str {
    match regime {
        Some(Regime::Hedge) => "≡ hedge",
        Some(Regime::Gamble) => "~ gamble",
        None => "  no need",
    }
}

/// Id of a task position or "reserve".
pub fn place_name(incident: &Incident, t: Option<TaskIdx>) -> String {
    match t {
        Some(t) => incident.tasks[t].id.clone(),
        None => "reserve".into(),
    }
}

/// Available units in reserve, in roster order.
pub fn reserve_units(incident: &Incident) -> Vec<UnitIdx> {
    oddsboard_core::model::UnitIdx::range(incident.units.len())
        .filter(|&u| {
            incident.units[u].status == UnitStatus::Available && incident.placement.get(u).is_none()
        })
        .collect()
}

/// Units out of service, in roster order.
pub fn out_of_service_units(incident: &Incident) -> Vec<UnitIdx> {
    oddsboard_core::model::UnitIdx::range(incident.units.len())
        .filter(|&u| incident.units[u].status == UnitStatus::OutOfService)
        .collect()
}
