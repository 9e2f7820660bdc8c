//! The after-action report's Brier score against a value computed by hand.
//!
//! Each task has one unit rated Normal(1000, 100²) L/min against a certain
//! need, so its odds are Φ(z) with z = (1000 − need)/100:
//!   A: need 1000, z = 0,  Φ = 0.5, succeeded
//!   B: need  900, z = +1, Φ = 0.8413447461 (A&S Table 26.1), failed
//!   C: need 1100, z = −1, Φ = 0.1586552539 (= 1 − Φ(1)), failed
//!   D: cancelled, left out of the score.
//!
//! Brier 1950 (binary form), by hand:
//! BS = [(0.5 − 1)² + 0.8413447461² + 0.1586552539²] / 3
//! = (0.25 + 0.7078609815 + 0.0251714896) / 3 = 0.3276774904.

use oddsboard::log::{LogWriter, read_log};
use oddsboard::model::load_incident_file;
use oddsboard::report::after_action::forecasts;
use oddsboard::report::brier_score;
use oddsboard::report::timeline::timeline;
use std::path::Path;

const HAND_BRIER: f64 = 0.327_677_490_4;

fn make_log(dir: &Path) -> std::path::PathBuf {
    let incident = load_incident_file(Path::new("tests/log_fixtures/calibration.yaml"))
        .expect("fixture valid");
    let path = dir.join("cal.log");
    let mut w = LogWriter::create(&path, &incident, "trainer").expect("create");
    for e in [
        "{kind: task_closed, task: A, outcome: succeeded}",
        "{kind: task_closed, task: B, outcome: failed}",
        "{kind: task_closed, task: C, outcome: failed}",
        "{kind: task_closed, task: D, outcome: cancelled}",
    ] {
        w.append("trainer", serde_yaml::from_str(e).expect("event"))
            .expect("applies");
    }
    path
}

#[test]
fn brier_score_of_a_small_log_matches_the_hand_value() {
    let dir = tempfile::tempdir().expect("tempdir");
    let path = make_log(dir.path());
    let records = read_log(&path).expect("read").records;
    let rows = timeline(&records).expect("timeline");
    let closed: Vec<_> = rows
        .iter()
        .filter_map(|r| r.closed.clone().map(|c| (r.seq, c)))
        .collect();
    assert_eq!(closed.len(), 4);
    let f = forecasts(&closed);
    assert_eq!(f.len(), 3, "cancelled is left out");
    let bs = brier_score(&f).expect("scored");
    assert!((bs - HAND_BRIER).abs() < 1e-9, "{bs}");

    let out = assert_cmd::Command::cargo_bin("oddsboard")
        .expect("binary")
        .arg("report")
        .arg(&path)
        .output()
        .expect("runs");
    assert!(out.status.success());
    let md = String::from_utf8(out.stdout).expect("utf8");
    assert!(md.contains("**0.3277** over 3 tasks"), "{md}");
    // Brier's two-class form is twice the binary one.
    assert!(md.contains("two-class form: 0.6554"), "{md}");
    // The reliability table: one forecast in each of three bins.
    assert!(md.contains("| 10–20 % | 1 | 15.9 % | 0 % |"), "{md}");
    assert!(md.contains("| 50–60 % | 1 | 50.0 % | 100 % |"), "{md}");
    assert!(md.contains("| 80–90 % | 1 | 84.1 % | 0 % |"), "{md}");
    // The cautions of decision support are there.
    assert!(md.contains("## Cautions"));
    assert!(md.contains("never replaces the incident commander's judgement"));

    let out = assert_cmd::Command::cargo_bin("oddsboard")
        .expect("binary")
        .arg("report")
        .arg(&path)
        .arg("--json")
        .output()
        .expect("runs");
    assert!(out.status.success());
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).expect("json");
    let bs = v["brier_score"].as_f64().expect("scored");
    assert!((bs - HAND_BRIER).abs() < 1e-9, "{bs}");
    assert_eq!(v["scored_tasks"], 3);
    assert_eq!(v["outcomes"].as_array().expect("outcomes").len(), 4);
}
