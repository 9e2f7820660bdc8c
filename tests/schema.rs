//! docs/incident.schema.json (JSON Schema draft 2020-12) against the files it
//! describes: every sample validates, every snapshot the program writes
//! validates, and bad files whose fault is one of shape, type or range are
//! refused by the schema too. The validator is the `jsonschema` crate.
//!
//! Faults that need the whole file (duplicate ids, unknown references,
//! max_units against pins, reserve_min against available units) are beyond a
//! schema; `oddsboard check` finds those (tests/check_cli.rs).

use oddsboard::model::file::IncidentFile;
use oddsboard::model::load_incident_file;
use std::path::{Path, PathBuf};

fn root() -> &'static Path {
    Path::new(env!("CARGO_MANIFEST_DIR"))
}

fn schema() -> serde_json::Value {
    let text = std::fs::read_to_string(root().join("docs/incident.schema.json")).expect("schema");
    serde_json::from_str(&text).expect("schema is JSON")
}

fn validator() -> jsonschema::Validator {
    let schema = schema();
    jsonschema::options()
        .with_draft(jsonschema::Draft::Draft202012)
        .should_validate_formats(true)
        .build(&schema)
        .expect("schema compiles")
}

/// YAML text → JSON value, the way an outside tool would see the file.
fn yaml_to_json(text: &str) -> serde_json::Value {
    let yaml: serde_yaml::Value = serde_yaml::from_str(text).expect("YAML");
    serde_json::to_value(yaml).expect("JSON-representable")
}

fn problems(v: &jsonschema::Validator, doc: &serde_json::Value) -> Vec<String> {
    v.iter_errors(doc)
        .map(|e| format!("{}: {e}", e.instance_path()))
        .collect()
}

fn samples() -> Vec<PathBuf> {
    let mut files: Vec<PathBuf> = std::fs::read_dir(root().join("sample-incidents"))
        .expect("sample-incidents/")
        .map(|e| e.expect("entry").path())
        .filter(|p| p.extension().is_some_and(|x| x == "yaml"))
        .collect();
    files.sort();
    files
}

#[test]
fn the_schema_is_a_valid_draft_2020_12_schema() {
    assert!(jsonschema::meta::is_valid(&schema()));
}

#[test]
fn every_sample_validates() {
    let v = validator();
    let files = samples();
    assert!(files.len() >= 3);
    for file in files {
        let doc = yaml_to_json(&std::fs::read_to_string(&file).expect("read"));
        let errors = problems(&v, &doc);
        assert!(errors.is_empty(), "{}: {errors:#?}", file.display());
    }
}

#[test]
fn every_snapshot_the_program_writes_validates() {
    let v = validator();
    for file in samples() {
        let incident = load_incident_file(&file).expect("sample loads");
        let doc = serde_json::to_value(IncidentFile::from_incident(&incident)).expect("json");
        let errors = problems(&v, &doc);
        assert!(errors.is_empty(), "{}: {errors:#?}", file.display());
    }
}

#[test]
fn bad_shapes_types_and_ranges_fail_the_schema() {
    let v = validator();
    for (name, where_) in [
        ("unknown-field.yaml", "/units/0"),
        ("unknown-section.yaml", ""),
        ("wrong-type.yaml", "/unit_types/0/traits/water/mean"),
        ("negative-sd.yaml", "/tasks/0/needs/water"),
        ("nan-mean.yaml", "/units/0/traits/water/mean"),
        ("infinite-need.yaml", "/tasks/0/needs/water"),
        ("rho-out-of-range.yaml", "/unit_types/0/rho"),
        ("empty-traits.yaml", "/traits"),
        ("secure-out-of-range.yaml", "/incident/secure/property"),
        ("started-not-rfc3339.yaml", "/incident/started"),
        ("unknown-status.yaml", "/units/0/status"),
        ("numeric-id.yaml", "/units/0/id"),
        ("empty-accepts.yaml", "/tasks/0/accepts"),
        ("bad-need-shape.yaml", "/tasks/0/needs/water"),
        ("missing-incident.yaml", ""),
    ] {
        let text = std::fs::read_to_string(root().join("tests/bad-inputs").join(name)).expect(name);
        let doc = yaml_to_json(&text);
        let errors = problems(&v, &doc);
        assert!(
            errors.iter().any(|e| e.starts_with(&format!("{where_}:"))),
            "{name}: expected a schema error at `{where_}`, got {errors:#?}"
        );
    }
}

#[test]
fn a_minimal_file_validates_and_a_missing_name_does_not() {
    let v = validator();
    let ok = yaml_to_json("incident: { name: Invented drill }\ntraits: [ { id: water } ]\n");
    assert!(problems(&v, &ok).is_empty());
    let bad =
        yaml_to_json("incident: { started: 2026-05-14T09:20:00Z }\ntraits: [ { id: water } ]\n");
    assert!(!problems(&v, &bad).is_empty());
}
