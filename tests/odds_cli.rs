//! The `odds` and `simulate` commands, driven as a user would.

use assert_cmd::Command;
use predicates::prelude::*;
use std::io::Write;

/// An invented drill: one life-safety task short of water (gamble), one
/// property task comfortably covered (hedge), one task with no units.
const DRILL: &str = r#"
incident: { name: Invented drill }
traits:
  - { id: water, label: Water delivery, unit: L/min }
  - { id: crew, label: Firefighters, unit: persons }
unit_types:
  - { id: engine, rho: 0.2, traits: { water: { mean: 1900, sd: 250 }, crew: { mean: 4 } } }
units: [ { id: E1, type: engine }, { id: E2, type: engine }, { id: E3, type: engine }, { id: E4, type: engine } ]
tasks:
  - { id: RESCUE, label: Search and rescue, tier: life, needs: { water: 4250, crew: 6 } }
  - { id: COVER, label: Exposure cover, needs: { water: 1000 } }
  - { id: EMPTY, tier: stabilization, needs: { water: 500 } }
placement: { E1: RESCUE, E2: RESCUE, E3: COVER }
"#;

fn drill_file() -> tempfile::NamedTempFile {
    let mut f = tempfile::Builder::new()
        .suffix(".yaml")
        .tempfile()
        .expect("temp file");
    f.write_all(DRILL.as_bytes()).expect("write");
    f
}

fn oddsboard() -> Command {
    Command::cargo_bin("oddsboard").expect("binary")
}

#[test]
fn odds_table_shows_tiers_regimes_margins_and_the_caution() {
    let f = drill_file();
    oddsboard()
        .args(["odds", "--traits"])
        .arg(f.path())
        .assert()
        .success()
        .stdout(predicate::str::contains("Life safety"))
        .stdout(predicate::str::contains("GAMBLE"))
        .stdout(predicate::str::contains("hedge"))
        // 3800 L/min placed against 4250 needed.
        .stdout(predicate::str::contains("\u{2212}450 L/min short"))
        .stdout(predicate::str::contains("worst in life: RESCUE"))
        .stdout(predicate::str::contains(
            "life-safety task in the gamble regime",
        ))
        .stdout(predicate::str::contains("no units placed"))
        .stdout(predicate::str::contains("Caution: Decision support only."))
        .stdout(predicate::str::contains("· crew"));
}

#[test]
fn odds_json_has_the_fields_of_the_spec() {
    let f = drill_file();
    let out = oddsboard()
        .args(["odds", "--json"])
        .arg(f.path())
        .output()
        .expect("runs");
    assert!(out.status.success());
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).expect("one JSON document");
    assert_eq!(v["placement"]["E1"], "RESCUE");
    assert!(v["placement"]["E4"].is_null());
    let tasks = v["tasks"].as_array().expect("tasks");
    assert_eq!(tasks.len(), 3);
    let rescue = &tasks[0];
    for field in [
        "id",
        "tier",
        "odds",
        "ln_odds",
        "regime",
        "binding_trait",
        "z",
        "units",
        "traits",
    ] {
        assert!(rescue.get(field).is_some(), "missing {field}");
    }
    assert_eq!(rescue["regime"], "gamble");
    assert_eq!(rescue["binding_trait"], "water");
    assert_eq!(rescue["margin"], -450.0);
    for field in ["trait", "mean", "sd", "need", "odds"] {
        assert!(rescue["traits"][0].get(field).is_some(), "missing {field}");
    }
    // min_odds is the task with no units: exactly 0.
    assert_eq!(v["min_odds"], 0.0);
    assert!(v["tasks"][2]["ln_odds"].is_null());
}

#[test]
fn simulate_prints_rates_beside_the_model() {
    let f = drill_file();
    oddsboard()
        .args(["simulate", "--trials", "5000", "--seed", "3"])
        .arg(f.path())
        .assert()
        .success()
        .stdout(predicate::str::contains("5000 trials, seed 3"))
        .stdout(predicate::str::contains("99% interval"))
        .stdout(predicate::str::contains("all tasks"))
        .stdout(predicate::str::contains("Caution:"));
    let run = || {
        oddsboard()
            .args(["simulate", "--json", "--trials", "4000", "--seed", "9"])
            .arg(f.path())
            .output()
            .expect("runs")
    };
    let (a, b) = (run(), run());
    assert!(a.status.success());
    assert_eq!(a.stdout, b.stdout, "a seeded run repeats exactly");
    let v: serde_json::Value = serde_json::from_slice(&a.stdout).expect("JSON");
    assert_eq!(v["trials"], 4000);
    assert_eq!(v["tasks"].as_array().map(Vec::len), Some(3));
    assert!(v["tasks"][0]["low"].as_f64() <= v["tasks"][0]["high"].as_f64());
}

#[test]
fn bad_input_exits_1_and_bad_usage_exits_2() {
    oddsboard()
        .args(["odds", "/nonexistent/incident.yaml"])
        .assert()
        .code(1)
        .stderr(predicate::str::contains("incident.yaml"));
    let mut f = tempfile::Builder::new()
        .suffix(".yaml")
        .tempfile()
        .expect("temp");
    f.write_all(b"incident: { name: x }\ntraits: [ { id: water, unit: L } ]\nunits: [ { id: E1, type: nosuch } ]\n")
        .expect("write");
    oddsboard().arg("odds").arg(f.path()).assert().code(1);
    oddsboard().arg("simulate").arg(f.path()).assert().code(1);
    let good = drill_file();
    oddsboard()
        .args(["simulate", "--confidence", "1.5"])
        .arg(good.path())
        .assert()
        .code(2);
    oddsboard()
        .args(["simulate", "--trials", "0"])
        .arg(good.path())
        .assert()
        .code(2);
}

/// Every sample incident gives a table and a JSON document whose tasks and
/// placement cover the file (the samples are invented scenarios).
#[test]
fn odds_on_every_sample_incident() {
    let dir = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("sample-incidents");
    let Ok(entries) = std::fs::read_dir(&dir) else {
        return;
    };
    for path in entries.filter_map(|e| e.ok().map(|e| e.path())) {
        if path.extension().is_none_or(|e| e != "yaml") {
            continue;
        }
        oddsboard()
            .arg("odds")
            .arg(&path)
            .assert()
            .success()
            .stdout(predicate::str::contains("Caution:"));
        let out = oddsboard()
            .args(["odds", "--json"])
            .arg(&path)
            .output()
            .expect("runs");
        assert!(out.status.success(), "{}", path.display());
        let v: serde_json::Value = serde_json::from_slice(&out.stdout).expect("JSON");
        let inc = oddsboard::model::load_incident_file(&path).expect("sample loads");
        assert_eq!(
            v["placement"].as_object().map(|m| m.len()),
            Some(inc.units.len())
        );
        let open = inc.tasks.iter().filter(|t| t.is_open()).count();
        assert_eq!(v["tasks"].as_array().map(Vec::len), Some(open));
    }
}
