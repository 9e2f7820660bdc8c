//! Serializable readings of the odds, shaped like the `tasks` entries of
//! `odds --json` (SPEC §5). Every command and screen that shows task odds
//! builds them here, so the JSON of `odds`, `plan` and `timeline` agree.
//!
//! Main types:
//! * [`TaskView`]: one open task: odds, ln odds, regime, binding trait, z,
//!   margin in the trait's own unit, units, per-trait detail.
//! * [`OddsView`]: the whole `odds --json` document.
//!
//! JSON has no infinities: a value that is ±∞ in the model is written as
//! `null` (e.g. `ln_odds` of a task whose odds are exactly 0, or `z` of a
//! trait whose spread is 0).
//!
//! Invariant: pure; builds values from an incident and a placement, never
//! prints.

use super::joint::{JointDetailView, JointOddsView, JointOptions, joint_by_tier};
use super::{ForcedZero, Regime, TaskOdds, TraitOdds, evaluate_task};
use crate::model::{Incident, Placement, Tier};
use serde::Serialize;
use std::collections::BTreeMap;

/// One trait of one task.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TraitView {
    /// Trait id.
    #[serde(rename = "trait")]
    pub trait_id: String,
    /// Unit of measure of the trait.
    pub unit: String,
    /// Aggregate mean capability of the units on the task.
    pub mean: f64,
    /// Capability spread: the standard deviation of the units' aggregate
    /// capability alone (within-type correlation included, the need's own
    /// sd excluded).
    pub sd: f64,
    pub need: f64,
    /// The need's own standard deviation (0 = certain need).
    pub need_sd: f64,
    /// Margin spread: the standard deviation of capability − need, √(sd² +
    /// need_sd²), the spread `z` and the odds are computed with.
    pub margin_sd: f64,
    /// mean − need: surplus (positive) or shortfall (negative).
    pub margin: f64,
    pub odds: f64,
    /// `null` when the odds are exactly 0.
    pub ln_odds: Option<f64>,
    /// ln(1 − odds); `null` when the trait is certain to be met.
    pub ln_fail: Option<f64>,
    /// (mean − need)/√(sd² + need_sd²); `null` when the total spread is 0.
    pub z: Option<f64>,
}

/// One open task, as in SPEC §5 `tasks`.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TaskView {
    pub id: String,
    pub label: String,
    /// `life`, `stabilization` or `property`.
    pub tier: &'static str,
    /// Probability that every need is met.
    pub odds: f64,
    /// ln odds; `null` when the odds are exactly 0.
    pub ln_odds: Option<f64>,
    /// ln(1 − odds); `null` when the task is certain to succeed.
    pub ln_fail: Option<f64>,
    /// `hedge`, `gamble`, or `null` when no need counts.
    pub regime: Option<&'static str>,
    /// The trait with the lowest odds; `null` when no need counts.
    pub binding_trait: Option<String>,
    /// z on the binding trait; `null` when infinite (no spread, or forced 0).
    pub z: Option<f64>,
    /// Surplus (positive) or shortfall (negative) of the binding trait, in
    /// its own unit; `null` when no need counts.
    pub margin: Option<f64>,
    /// Unit of measure of the binding trait.
    pub unit: Option<String>,
    /// Ids of the units on the task, in roster order.
    pub units: Vec<String>,
    /// Counting traits (need > 0 or need sd > 0), in trait order.
    pub traits: Vec<TraitView>,
    /// `no_units` or `below_minimum` when the odds are forced to 0.
    pub forced_zero: Option<&'static str>,
}

impl TaskView {
    /// Tier of the task as the model type.
    pub fn tier(&self) -> Tier {
        Tier::parse(self.tier).unwrap_or_default()
    }
    /// The binding trait's detail, if any need counts.
    pub fn binding(&self) -> Option<&TraitView> {
        let id = self.binding_trait.as_deref()?;
        self.traits.iter().find(|t| t.trait_id == id)
    }
}

/// Worst odds of one tier.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TierWorst {
    pub tier: &'static str,
    /// Id of the task with the lowest odds in the tier.
    pub task: String,
    pub odds: f64,
    pub ln_odds: Option<f64>,
    /// The tier's secure level (odds above it no longer outrank lower tiers).
    pub secure: f64,
}

/// The `odds --json` document.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct OddsView {
    /// Incident name.
    pub incident: String,
    /// Every unit id → task id, or `null` for reserve.
    pub placement: BTreeMap<String, Option<String>>,
    /// Open tasks in board order.
    pub tasks: Vec<TaskView>,
    /// Lowest odds over open tasks (1 when there are none).
    pub min_odds: f64,
    /// ln of `min_odds`; `null` when it is exactly 0.
    pub min_ln_odds: Option<f64>,
    /// Worst task per tier, highest tier first; tiers without open tasks
    /// are left out.
    pub worst_by_tier: Vec<TierWorst>,
    /// The standing cautions ([`crate::safety::CAUTIONS`]).
    pub cautions: &'static [&'static str],
    /// Joint odds: every open task together, and every open task of each
    /// tier (shared correlated types make them differ from the product).
    pub joint_odds: JointOddsView,
    /// How each joint figure was computed (method, error estimate, product).
    pub joint_detail: Vec<JointDetailView>,
    /// Ratings moved by field readings (`observed`), the readings' own units
    /// and their type-mates; left out when there are none.
    #[serde(skip_serializing_if = "Vec::is_empty")]
    pub readings: Vec<RatingNow>,
}

/// A unit's rating in one trait as rated and as the readings now have it.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct RatingNow {
    pub unit: String,
    #[serde(rename = "trait")]
    pub trait_id: String,
    /// Unit of measure of the trait.
    pub measure: String,
    pub rated_mean: f64,
    pub rated_sd: f64,
    /// Posterior mean and sd given every reading (docs/model.md).
    pub mean: f64,
    pub sd: f64,
    /// Readings of this unit; 0 for a type-mate moved through the shared
    /// factor.
    pub readings: usize,
}

impl RatingNow {
    /// `rated 1900 ± 250 → now 1700 ± 110 (2 readings)`.
    pub fn describe(&self) -> String {
        let why = readings_reason(self.readings);
        format!(
            "rated {} ± {} → now {} ± {} ({why})",
            amount(self.rated_mean),
            amount(self.rated_sd),
            amount(self.mean),
            amount(self.sd)
        )
    }
}

/// What moved an estimate: `1 reading`, `3 readings`, or (0) its
/// type-mates' readings through the shared factor.
pub fn readings_reason(readings: usize) -> String {
    match readings {
        0 => "through its type-mates' readings".to_string(),
        1 => "1 reading".to_string(),
        n => format!("{n} readings"),
    }
}

/// An amount for people: about three significant figures.
pub fn amount(v: f64) -> String {
    let a = v.abs();
    let s = if a >= 100.0 || a == 0.0 {
        format!("{v:.0}")
    } else if a >= 10.0 {
        format!("{v:.1}")
    } else {
        format!("{v:.2}")
    };
    if s.contains('.') {
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        s
    }
}

/// Every (roster unit, trait) whose belief differs from its rating, in
/// roster then trait order.
pub fn ratings_now(incident: &Incident) -> Vec<RatingNow> {
    let mut out = Vec::new();
    if incident.observations.is_empty() {
        return out;
    }
    for (u, unit) in incident.roster() {
        for (k, r) in unit.ratings.iter().enumerate() {
            if !incident.observations.touches(unit.type_idx, k) {
                continue;
            }
            let b = incident.belief(u, k);
            let n = incident.observations.count(u, k);
            let moved = (b.mean - r.mean).abs() > 1e-9 * (1.0 + r.mean.abs())
                || (b.sd() - r.sd).abs() > 1e-9 * (1.0 + r.sd);
            if n == 0 && !moved {
                continue;
            }
            out.push(RatingNow {
                unit: unit.id.clone(),
                trait_id: incident.traits[k].id.clone(),
                measure: incident.traits[k].unit.clone(),
                rated_mean: r.mean,
                rated_sd: r.sd,
                mean: b.mean,
                sd: b.sd(),
                readings: n,
            });
        }
    }
    out
}

fn finite(x: f64) -> Option<f64> {
    x.is_finite().then_some(x)
}

fn trait_view(incident: &Incident, t: &TraitOdds) -> TraitView {
    let def = &incident.traits[t.trait_idx];
    TraitView {
        trait_id: def.id.clone(),
        unit: def.unit.clone(),
        mean: t.mean,
        sd: t.unit_sd,
        need: t.need,
        need_sd: t.need_sd,
        margin_sd: t.sd,
        margin: t.margin(),
        odds: t.odds(),
        ln_odds: finite(t.ln_odds),
        ln_fail: finite(t.ln_fail),
        z: finite(t.z),
    }
}

/// Builds the view of one task reading.
pub fn task_view(incident: &Incident, odds: &TaskOdds) -> TaskView {
    let task = &incident.tasks[odds.task_idx];
    let binding = odds.binding_trait();
    TaskView {
        id: task.id.clone(),
        label: task.label.clone(),
        tier: task.tier.as_str(),
        odds: odds.odds(),
        ln_odds: finite(odds.ln_odds),
        ln_fail: finite(odds.ln_fail),
        regime: odds.regime().map(Regime::as_str),
        binding_trait: binding.map(|b| incident.traits[b.trait_idx].id.clone()),
        z: finite(odds.z()),
        margin: binding.map(TraitOdds::margin),
        unit: binding.map(|b| incident.traits[b.trait_idx].unit.clone()),
        units: odds
            .units
            .iter()
            .map(|&u| incident.units[u].id.clone())
            .collect(),
        traits: odds
            .traits
            .iter()
            .map(|t| trait_view(incident, t))
            .collect(),
        forced_zero: odds.forced_zero.map(ForcedZero::as_str),
    }
}

/// Views of every open task for `placement`, in board order.
pub fn task_views(incident: &Incident, placement: &Placement) -> Vec<TaskView> {
    crate::model::TaskIdx::range(incident.tasks.len())
        .filter(|&t| incident.tasks[t].is_open())
        .map(|t| task_view(incident, &evaluate_task(incident, placement, t)))
        .collect()
}

/// Every unit id → the id of its task, or `None` (reserve).
pub fn placement_view(
    incident: &Incident,
    placement: &Placement,
) -> BTreeMap<String, Option<String>> {
    incident
        .roster()
        .map(|(u, unit)| {
            let task = placement.get(u).map(|t| incident.tasks[t].id.clone());
            (unit.id.clone(), task)
        })
        .collect()
}

/// Worst task of each tier that has open tasks, highest tier first.
pub fn worst_by_tier(incident: &Incident, tasks: &[TaskView]) -> Vec<TierWorst> {
    Tier::ALL
        .iter()
        .filter_map(|&tier| {
            let worst = tasks
                .iter()
                .filter(|t| t.tier == tier.as_str())
                .min_by(|a, b| ln_key(a).total_cmp(&ln_key(b)))?;
            Some(TierWorst {
                tier: tier.as_str(),
                task: worst.id.clone(),
                odds: worst.odds,
                ln_odds: worst.ln_odds,
                secure: incident.secure.get(tier),
            })
        })
        .collect()
}

/// ln odds for ordering (`null` = −∞).
fn ln_key(t: &TaskView) -> f64 {
    t.ln_odds.unwrap_or(f64::NEG_INFINITY)
}

/// The whole `odds --json` document for `placement`.
pub fn odds_view(incident: &Incident, placement: &Placement) -> OddsView {
    let tasks = task_views(incident, placement);
    let min_ln = tasks.iter().map(ln_key).fold(0.0_f64, f64::min);
    let joint = joint_by_tier(incident, placement, JointOptions::default());
    OddsView {
        joint_odds: joint.view(),
        joint_detail: joint.details(),
        incident: incident.name.clone(),
        placement: placement_view(incident, placement),
        worst_by_tier: worst_by_tier(incident, &tasks),
        min_odds: min_ln.exp(),
        min_ln_odds: finite(min_ln),
        tasks,
        cautions: &crate::safety::CAUTIONS,
        readings: ratings_now(incident),
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::parse_incident_str;

    const YAML: &str = r#"
incident: { name: Invented drill }
traits:
  - { id: water, unit: L/min }
  - { id: crew, unit: persons }
unit_types:
  - { id: engine, traits: { water: { mean: 1900, sd: 250 }, crew: { mean: 4, sd: 0 } } }
units: [ { id: E1, type: engine }, { id: E2, type: engine }, { id: E3, type: engine } ]
tasks:
  - { id: T1, tier: life, needs: { water: 3000, crew: 6 } }
  - { id: T2, needs: { water: { need: 2500, sd: 300 } } }
  - { id: T3, tier: stabilization, needs: { crew: 2 }, min_units: 2 }
placement: { E1: T1, E2: T1, E3: T3 }
"#;

    #[test]
    fn views_match_the_model() {
        let inc = parse_incident_str(YAML, "drill.yaml").expect("valid drill");
        let v = odds_view(&inc, &inc.placement);
        assert_eq!(v.tasks.len(), 3);
        let t1 = &v.tasks[0];
        assert_eq!(t1.tier, "life");
        assert_eq!(t1.binding_trait.as_deref(), Some("water"));
        assert_eq!(t1.regime, Some("hedge"));
        assert_eq!(t1.units, vec!["E1", "E2"]);
        // 3800 − 3000 = +800 L/min; crew 8 vs 6 with sd 0 is certain.
        assert_eq!(t1.margin, Some(800.0));
        assert_eq!(t1.unit.as_deref(), Some("L/min"));
        let crew = &t1.traits[1];
        assert_eq!(crew.z, None);
        assert_eq!(crew.odds, 1.0);
        // T2 has no units: forced to 0, ln odds null, gamble.
        let t2 = &v.tasks[1];
        assert_eq!(t2.forced_zero, Some("no_units"));
        assert_eq!(t2.ln_odds, None);
        assert_eq!(t2.odds, 0.0);
        assert_eq!(t2.regime, Some("gamble"));
        assert_eq!(t2.z, None);
        // T3: one unit, needs two.
        assert_eq!(v.tasks[2].forced_zero, Some("below_minimum"));
        assert_eq!(v.min_odds, 0.0);
        assert_eq!(v.placement.get("E3"), Some(&Some("T3".to_string())));
        assert_eq!(v.worst_by_tier.len(), 3);
        assert_eq!(v.worst_by_tier[0].tier, "life");
        let json = serde_json::to_value(&v).expect("serializable");
        assert_eq!(json["tasks"][0]["traits"][0]["trait"], "water");
        assert!(json["tasks"][1]["ln_odds"].is_null());
    }
}
