//! The `advise` command and `plan --what-if`, driven as a user would.

mod cli_log;

use assert_cmd::Command;
use predicates::prelude::*;
use std::io::Write;

/// Invented drill: a rescue short of water (gamble), a cover task with a
/// surplus, two engine types.
const DRILL: &str = r#"
incident: { name: Invented advice drill }
traits:
  - { id: water, label: Water delivery, unit: L/min }
unit_types:
  - { id: engine, label: pump team, traits: { water: { mean: 1900, sd: 250 } } }
  - { id: hv, label: high-volume pump, traits: { water: { mean: 3600, sd: 500 } } }
units:
  - { id: E1, type: engine }
  - { id: E2, type: engine }
  - { id: E3, type: engine }
tasks:
  - { id: RESCUE, tier: life, needs: { water: 5200 } }
  - { id: COVER, tier: property, needs: { water: 1000 } }
placement: { E1: RESCUE, E2: RESCUE, E3: COVER }
"#;

fn file_with(text: &str, suffix: &str) -> tempfile::NamedTempFile {
    let mut f = tempfile::Builder::new()
        .suffix(suffix)
        .tempfile()
        .expect("temp file");
    f.write_all(text.as_bytes()).expect("write");
    f
}

fn oddsboard() -> Command {
    Command::cargo_bin("oddsboard").expect("binary")
}

#[test]
fn advise_text_shows_fragility_requests_notes_and_the_caution() {
    let f = file_with(DRILL, ".yaml");
    oddsboard()
        .args(["advise"])
        .arg(f.path())
        .assert()
        .success()
        .stdout(predicate::str::contains("Fragility"))
        .stdout(predicate::str::contains("E1"))
        .stdout(predicate::str::contains("Resource requests"))
        .stdout(predicate::str::contains("request 1 × pump team"))
        .stdout(predicate::str::contains(
            "RESCUE (life safety) stays below its secure level",
        ))
        .stdout(predicate::str::contains("Caution: Decision support only"));
}

#[test]
fn advise_json_has_the_documented_fields() {
    let f = file_with(DRILL, ".yaml");
    let out = oddsboard()
        .args(["advise", "--json"])
        .arg(f.path())
        .assert()
        .success()
        .get_output()
        .stdout
        .clone();
    let v: serde_json::Value = serde_json::from_slice(&out).expect("one JSON document");
    assert_eq!(v["incident"], "Invented advice drill");
    assert_eq!(v["fragility"].as_array().map(Vec::len), Some(3));
    assert!(v["fragility"][0]["after"][0]["odds"].is_number());
    assert_eq!(v["requests"][0]["tier"], "life");
    assert_eq!(v["requests"][0]["outcome"]["status"], "found");
    assert_eq!(
        v["requests"][0]["outcome"]["sets"][0]["units"][0]["unit_type"],
        "engine"
    );
    assert_eq!(v["notes"][0]["level"], "urgent");
    assert!(v["cautions"].as_array().is_some_and(|c| {
        c.iter()
            .any(|x| x.as_str().is_some_and(|x| x.contains("Life safety first")))
    }));
}

#[test]
fn advise_bad_input_exits_1_naming_the_file() {
    let f = file_with("incident: { name: x }\ntraits: []\nbogus: 1\n", ".yaml");
    oddsboard()
        .args(["advise"])
        .arg(f.path())
        .assert()
        .code(1)
        .stderr(predicate::str::contains(
            f.path().file_name().and_then(|n| n.to_str()).unwrap_or("?"),
        ));
    oddsboard()
        .args(["advise", "/nonexistent/drill.yaml"])
        .assert()
        .code(1);
    oddsboard().args(["advise", "--bogus"]).assert().code(2);
}

#[test]
fn what_if_shows_the_replan_and_writes_nothing() {
    let f = file_with(DRILL, ".yaml");
    let before = std::fs::read(f.path()).expect("read");
    oddsboard()
        .args(["plan", "--what-if", "{kind: unit_lost, unit: E1}"])
        .arg(f.path())
        .assert()
        .success()
        .stdout(predicate::str::contains("What if: E1 lost"))
        .stdout(predicate::str::contains("recommended placement"));
    let out = oddsboard()
        .args([
            "plan",
            "--json",
            "--what-if",
            r#"{"kind": "need_changed", "task": "COVER", "trait": "water", "need": 2500}"#,
        ])
        .arg(f.path())
        .assert()
        .success()
        .get_output()
        .stdout
        .clone();
    let v: serde_json::Value = serde_json::from_slice(&out).expect("JSON");
    assert_eq!(v["what_if"]["kind"], "need_changed");
    let cover = v["tasks"]
        .as_array()
        .and_then(|t| t.iter().find(|t| t["id"] == "COVER"))
        .expect("COVER");
    assert_eq!(cover["traits"][0]["need"], 2500.0);
    assert_eq!(std::fs::read(f.path()).expect("read"), before);
}

#[test]
fn what_if_on_a_log_leaves_the_log_unchanged() {
    let f = file_with(DRILL, ".yaml");
    let dir = tempfile::tempdir().expect("dir");
    let log = dir.path().join("drill.log");
    oddsboard()
        .arg("start")
        .arg(f.path())
        .arg("--log")
        .arg(&log)
        .assert()
        .success();
    let before = std::fs::read(&log).expect("read");
    oddsboard()
        .args(["plan", "--what-if", "{kind: unit_lost, unit: E3}"])
        .arg(&log)
        .assert()
        .success()
        .stdout(predicate::str::contains("What if: E3 lost"));
    assert_eq!(std::fs::read(&log).expect("read"), before);
}

#[test]
fn what_if_bad_event_exits_1() {
    let f = file_with(DRILL, ".yaml");
    oddsboard()
        .args(["plan", "--what-if", "{kind: unit_lost, unit: E9}"])
        .arg(f.path())
        .assert()
        .code(1)
        .stderr(predicate::str::contains("unknown unit `E9`"));
    oddsboard()
        .args(["plan", "--what-if", "{kind: exploded}"])
        .arg(f.path())
        .assert()
        .code(1)
        .stderr(predicate::str::contains("--what-if"));
}

/// Field readings that show a type stronger than rated count in the
/// request: two engines read at 1400 (rated 1000 ± 200, ρ 0.5) lift the
/// estimate of a requested engine through the shared factor, so one more
/// engine secures the 3500 L/min task. At the ratings alone four are
/// needed (the 99 % level against the type's shared spread), and a screen
/// at the ratings would drop the one-engine set unsolved (2 × 1000 + 1000
/// < 3500).
#[test]
fn advise_counts_field_readings_in_the_request() {
    let dir = tempfile::tempdir().expect("tempdir");
    let (yaml, log) = cli_log::started(
        dir.path(),
        "incident: { name: Invented reading request drill }\n\
         traits: [ { id: water, unit: L/min } ]\n\
         unit_types: [ { id: engine, rho: 0.5, traits: { water: { mean: 1000, sd: 200 } } } ]\n\
         units: [ { id: E1, type: engine }, { id: E2, type: engine } ]\n\
         tasks: [ { id: RESCUE, tier: life, needs: { water: 3500 } } ]\n\
         placement: { E1: RESCUE, E2: RESCUE }\n",
    );
    for unit in ["E1", "E2"] {
        cli_log::record(
            &log,
            &format!("{{kind: observed, unit: {unit}, trait: water, value: 1400, sd: 10}}"),
        );
    }
    let requested = |file: &std::path::Path| -> u64 {
        let out = oddsboard()
            .args(["advise", "--json"])
            .arg(file)
            .assert()
            .success()
            .get_output()
            .stdout
            .clone();
        let v: serde_json::Value = serde_json::from_slice(&out).expect("json");
        let set = &v["requests"][0]["outcome"]["sets"][0];
        assert_eq!(v["requests"][0]["outcome"]["status"], "found", "{v}");
        set["units"]
            .as_array()
            .expect("units")
            .iter()
            .map(|u| u["count"].as_u64().expect("count"))
            .sum()
    };
    assert_eq!(requested(&yaml), 4, "at the ratings alone");
    assert_eq!(requested(&log), 1, "with the readings");
    let text = oddsboard()
        .arg("advise")
        .arg(&log)
        .assert()
        .success()
        .get_output()
        .stdout
        .clone();
    let text = String::from_utf8(text).expect("utf-8");
    assert!(
        text.contains("moved by their type-mates' field readings"),
        "{text}"
    );
}
