//! The snapshot written to a log (`IncidentFile::from_incident`) must read
//! back as the same incident: parse → snapshot → YAML (and JSON) → parse.

use oddsboard::model::file::IncidentFile;
use oddsboard::model::{Incident, parse_incident_str};

/// Invented scenario for testing; not a real incident. Uses every field.
const RICH: &str = r#"
incident:
  name: Invented round-trip drill
  started: 2026-05-14T09:20:00Z
  reserve_min: 1
  secure: { life: 0.995, property: 0.8 }
traits:
  - { id: water, label: Water delivery, unit: L/min }
  - { id: lift, unit: t }
  - { id: crew }
unit_types:
  - id: engine
    label: Pumper engine
    rho: 0.2
    cost: 3
    traits:
      water: { mean: 1900, sd: 250 }
      crew: { mean: 4 }
  - id: crane
    traits: { lift: { mean: 25, sd: 5 } }
units:
  - { id: E1, type: engine }
  - id: E2
    type: engine
    traits: { water: { mean: 1500 } }
  - id: E3
    type: engine
    traits: { water: { sd: 400 }, lift: { mean: 0.5, sd: 0.1 } }
    status: out_of_service
  - { id: C1, type: crane }
  - { id: C2, type: crane }
tasks:
  - id: T1
    label: Interior attack, east wing
    tier: life
    needs:
      water: 3000
      crew: { need: 6, sd: 1 }
    accepts: [engine]
    min_units: 1
    max_units: 3
  - id: T2
    tier: stabilization
    needs: { lift: { need: 20 } }
  - id: T3
    needs: { water: 500 }
    outcome: succeeded
placement: { E1: T1, C1: T2, E2: null }
pins: { E1: T1, C2: T2 }
"#;

fn roundtrip_yaml(incident: &Incident) -> Incident {
    let snapshot = IncidentFile::from_incident(incident);
    let text = serde_yaml::to_string(&snapshot).expect("snapshot serializes");
    parse_incident_str(&text, "snapshot.yaml")
        .unwrap_or_else(|e| panic!("snapshot does not parse back:\n{e}\n---\n{text}"))
}

#[test]
fn rich_incident_survives_yaml_roundtrip() {
    let incident = parse_incident_str(RICH, "rich.yaml").expect("valid");
    let back = roundtrip_yaml(&incident);
    assert_eq!(back, incident);
    // And a second round changes nothing in the text either.
    let a = serde_yaml::to_string(&IncidentFile::from_incident(&incident)).unwrap();
    let b = serde_yaml::to_string(&IncidentFile::from_incident(&back)).unwrap();
    assert_eq!(a, b);
}

#[test]
fn rich_incident_survives_json_roundtrip() {
    let incident = parse_incident_str(RICH, "rich.yaml").expect("valid");
    let json = serde_json::to_string(&IncidentFile::from_incident(&incident)).unwrap();
    let file: IncidentFile = serde_json::from_str(&json).expect("json parses");
    // JSON is a subset of YAML, so the validating loader reads it too.
    let back = parse_incident_str(&json, "snapshot.json").expect("valid");
    assert_eq!(back, incident);
    assert_eq!(file, IncidentFile::from_incident(&incident));
}

#[test]
fn overrides_are_written_only_where_a_unit_differs_from_its_type() {
    let incident = parse_incident_str(RICH, "rich.yaml").expect("valid");
    let snap = IncidentFile::from_incident(&incident);
    let unit = |id: &str| snap.units.iter().find(|u| u.id == id).unwrap();
    assert!(unit("E1").traits.is_empty());
    assert_eq!(unit("E1").status, None);
    let e2 = &unit("E2").traits["water"];
    assert_eq!((e2.mean, e2.sd), (Some(1500.0), None));
    let e3 = unit("E3");
    assert_eq!(e3.status.as_deref(), Some("out_of_service"));
    assert_eq!(
        (e3.traits["water"].mean, e3.traits["water"].sd),
        (None, Some(400.0))
    );
    assert_eq!(e3.traits["lift"].mean, Some(0.5));
    // Placement by id, reserve left out; pins by id; closed task keeps outcome.
    assert_eq!(snap.placement.len(), 2);
    assert_eq!(snap.placement["C1"].as_deref(), Some("T2"));
    assert_eq!(snap.pins["C2"], "T2");
    assert_eq!(snap.tasks[2].outcome.as_deref(), Some("succeeded"));
}
