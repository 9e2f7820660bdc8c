//! The incident snapshot of a log's first record: the incident as the
//! incident file, and back.

use crate::model::Incident;
use crate::model::file::IncidentFile;
use crate::model::load::validate_file;

/// The incident as the incident file (placement, pins and closed tasks
/// included), for the first record of a log.
pub fn to_file(incident: &Incident) -> IncidentFile {
    IncidentFile::from_incident(incident)
}

/// Validates a snapshot and turns it into the state. The snapshot goes
/// through the same checks of meaning as an incident file
/// ([`validate_file`]), so a log never holds a state an incident file could
/// not; it is read from the record's JSON once, never re-parsed as text.
pub fn from_file(file: &IncidentFile, what: &str) -> Result<Incident, String> {
    validate_file(file, what).map_err(|e| {
        e.diagnostics()
            .iter()
            .map(|d| {
                if d.path.is_empty() {
                    d.message.clone()
                } else {
                    format!("{}: {}", d.path, d.message)
                }
            })
            .collect::<Vec<_>>()
            .join("; ")
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::parse_incident_str;

    // Invented incident with a pin, a placement and a closed task.
    const YAML: &str = "
incident: { name: Invented snapshot test, reserve_min: 1 }
traits: [ { id: water, unit: L/min } ]
unit_types: [ { id: engine, rho: 0.2, traits: { water: { mean: 1000, sd: 100 } } } ]
units: [ { id: E1, type: engine }, { id: E2, type: engine, traits: { water: { sd: 30 } } }, { id: E3, type: engine } ]
tasks:
  - { id: T1, tier: life, needs: { water: { need: 1500, sd: 50 } }, max_units: 2 }
  - { id: T2, needs: { water: 500 }, outcome: succeeded }
placement: { E1: T1 }
pins: { E2: T1 }
";

    #[test]
    fn a_snapshot_reads_back_to_the_same_state_and_is_checked_like_a_file() {
        let inc = parse_incident_str(YAML, "t.yaml").expect("valid");
        let file = to_file(&inc);
        // Through the record's JSON, as a log stores it.
        let json = serde_json::to_string(&file).expect("json");
        let back: IncidentFile = serde_json::from_str(&json).expect("decodes");
        assert_eq!(from_file(&back, "snapshot").expect("valid"), inc);
        let mut bad = back.clone();
        bad.unit_types[0].rho = Some(1.5);
        bad.tasks[0].max_units = Some(0);
        let err = from_file(&bad, "snapshot").expect_err("refused");
        assert!(err.contains("unit_types[0].rho"), "{err}");
        assert!(err.contains("tasks[0].max_units"), "{err}");
    }
}
