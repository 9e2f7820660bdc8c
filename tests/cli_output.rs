//! What every command's output shares: a `format` version in every JSON
//! document, the cautions under one name, the two spreads under two names,
//! errors said once.

use assert_cmd::Command;
use serde_json::Value;
use std::io::Write;

/// Invented drill: one life task with an uncertain need, one property task.
const DRILL: &str = r#"
incident: { name: Invented output drill }
traits:
  - { id: water, label: Water delivery, unit: L/min }
unit_types:
  - { id: engine, label: pump team, traits: { water: { mean: 1900, sd: 300 } } }
units:
  - { id: E1, type: engine }
  - { id: E2, type: engine }
  - { id: E3, type: engine }
tasks:
  - { id: RESCUE, tier: life, needs: { water: { need: 3000, sd: 400 } } }
  - { id: COVER, tier: property, needs: { water: 1000 } }
placement: { E1: RESCUE, E2: RESCUE, E3: COVER }
"#;

fn drill_file(dir: &std::path::Path) -> std::path::PathBuf {
    let path = dir.join("drill.yaml");
    let mut f = std::fs::File::create(&path).expect("create");
    f.write_all(DRILL.as_bytes()).expect("write");
    path
}

fn oddsboard() -> Command {
    Command::cargo_bin("oddsboard").expect("binary")
}

fn json_of(args: &[&str]) -> Value {
    let out = oddsboard().args(args).output().expect("runs");
    assert!(
        out.status.success(),
        "{args:?}: {}",
        String::from_utf8_lossy(&out.stderr)
    );
    serde_json::from_slice(&out.stdout).expect("one JSON document")
}

#[test]
fn every_json_document_says_its_format_and_carries_the_cautions_as_a_list() {
    let dir = tempfile::tempdir().expect("tempdir");
    let file = drill_file(dir.path());
    let file = file.to_str().expect("utf8 path");
    let log = dir.path().join("drill.log");
    let log = log.to_str().expect("utf8 path");
    oddsboard()
        .args(["start", file, "--log", log])
        .assert()
        .success();

    // Objects: `format` first-class, cautions where results are shown.
    for (args, has_cautions) in [
        (vec!["odds", file, "--json"], true),
        (vec!["plan", file, "--json", "--budget-ms", "200"], true),
        (vec!["simulate", file, "--json", "--trials", "2000"], true),
        (
            vec!["advise", file, "--json", "--loss-budget-ms", "100"],
            true,
        ),
        (vec!["report", log, "--json"], true),
        (vec!["sheet", file, "--json"], true),
        (vec!["check", file, "--json"], false),
    ] {
        let v = json_of(&args);
        assert_eq!(v["format"], 1, "{args:?}");
        assert!(v.get("caution").is_none(), "{args:?}: old name");
        if has_cautions {
            let c = v["cautions"].as_array().expect("cautions is a list");
            assert!(
                c.iter()
                    .any(|x| x.as_str().is_some_and(|s| s.contains("Life safety first"))),
                "{args:?}"
            );
        }
    }

    // Arrays: every element carries the format.
    let rows = json_of(&["record", log, "{kind: note, text: drill}", "--json"]);
    let timeline = json_of(&["timeline", log, "--json"]);
    for doc in [rows, timeline] {
        let items = doc.as_array().expect("an array");
        assert!(!items.is_empty());
        assert!(items.iter().all(|r| r["format"] == 1), "{doc}");
    }
}

#[test]
fn odds_json_names_the_two_spreads_apart() {
    let dir = tempfile::tempdir().expect("tempdir");
    let file = drill_file(dir.path());
    let v = json_of(&["odds", file.to_str().expect("utf8"), "--json"]);
    let rescue = v["tasks"]
        .as_array()
        .and_then(|t| t.iter().find(|t| t["id"] == "RESCUE"))
        .expect("RESCUE");
    let water = &rescue["traits"][0];
    let sd = water["sd"].as_f64().expect("sd");
    let margin_sd = water["margin_sd"].as_f64().expect("margin_sd");
    // Sum of independent normals (SPEC §2, rho 0): two units of sd 300 give
    // a capability spread of 300·√2; the need's sd 400 adds in quadrature.
    assert!((sd - 300.0 * 2f64.sqrt()).abs() < 1e-9, "{sd}");
    assert!(
        (margin_sd - (2.0 * 300f64.powi(2) + 400f64.powi(2)).sqrt()).abs() < 1e-9,
        "{margin_sd}"
    );
    // z is worked with the margin spread: (3800 − 3000)/margin_sd.
    let z = rescue["z"].as_f64().expect("z");
    assert!((z - 800.0 / margin_sd).abs() < 1e-9, "{z}");
}

#[test]
fn a_missing_file_is_reported_once() {
    let out = oddsboard()
        .args(["odds", "/nonexistent/oddsboard-drill.yaml"])
        .output()
        .expect("runs");
    assert_eq!(out.status.code(), Some(1));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(err.contains("/nonexistent/oddsboard-drill.yaml"), "{err}");
    // The OS message appears once, not once per layer of the error.
    assert_eq!(err.matches("os error 2").count(), 1, "{err}");
}
