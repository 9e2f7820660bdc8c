//! What-if: an event applied to a copy of the incident, exactly as the log
//! would apply it ([`crate::log::apply`]), so that an event means the same
//! here as in the log. Nothing is written anywhere.

use super::{TierOdds, tier_odds};
use crate::log::{ApplyError, Event, apply};
use crate::model::Incident;
use crate::solver::ObjectiveKey;
use serde::Serialize;

/// The incident after a hypothetical event, with the ground's worst odds
/// per tier before and after it.
#[derive(Debug, Clone)]
pub struct WhatIf {
    /// The incident as it would be after the event.
    pub incident: Incident,
    pub summary: WhatIfSummary,
}

/// What the event does to the ground, before any re-plan.
#[derive(Debug, Clone, Serialize)]
pub struct WhatIfSummary {
    /// The event's `kind`.
    pub kind: &'static str,
    /// The event in words.
    pub event: String,
    /// Worst odds per tier on the ground now.
    pub ground_now: Vec<TierOdds>,
    /// Worst odds per tier on the ground right after the event.
    pub ground_after: Vec<TierOdds>,
}

/// Applies `event` to a copy of `incident`. An event the log would refuse
/// is refused here with the same error; a log snapshot is refused too.
pub fn what_if(incident: &Incident, event: &Event) -> Result<WhatIf, ApplyError> {
    let mut after = incident.clone();
    apply(&mut after, event)?;
    let summary = WhatIfSummary {
        kind: event.kind(),
        event: event.describe(),
        ground_now: tier_odds(incident, &ObjectiveKey::of(incident, &incident.placement)),
        ground_after: tier_odds(&after, &ObjectiveKey::of(&after, &after.placement)),
    };
    Ok(WhatIf {
        incident: after,
        summary,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::parse_incident_str;

    const YAML: &str = r#"
incident: { name: Invented what-if drill }
traits: [ { id: water, unit: L/min } ]
unit_types: [ { id: engine, traits: { water: { mean: 1900, sd: 250 } } } ]
units: [ { id: E1, type: engine }, { id: E2, type: engine }, { id: E3, type: engine } ]
tasks: [ { id: T1, tier: life, needs: { water: 3000 } } ]
placement: { E1: T1, E2: T1 }
"#;

    #[test]
    fn applies_to_a_copy_like_the_log() {
        let inc = parse_incident_str(YAML, "w.yaml").expect("valid");
        let ev: Event = serde_yaml::from_str("{kind: unit_lost, unit: E1}").expect("event");
        let w = what_if(&inc, &ev).expect("applies");
        assert_eq!(inc.roster_len(), 3, "the original is untouched");
        assert_eq!(w.incident.roster_len(), 2);
        let mut by_log = inc.clone();
        apply(&mut by_log, &ev).expect("applies");
        assert_eq!(by_log, w.incident);
        // 3800 vs 3000, sd 250·√2: z = 2.263 → 0.988; after: 1900 vs 3000.
        assert!((w.summary.ground_now[0].odds - 0.98817).abs() < 1e-4);
        assert!(w.summary.ground_after[0].odds < 1e-5);
        let bad: Event = serde_yaml::from_str("{kind: unit_lost, unit: E9}").expect("event");
        assert!(what_if(&inc, &bad).is_err());
    }
}
