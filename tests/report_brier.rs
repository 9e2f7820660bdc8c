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
    // The reliability table: one forecast in each of three bins, each with
    // its count, its 95 % Wilson interval (by hand: 0 of 1 gives
    // [0, 3.8415/4.8415 = 0.7934], 1 of 1 gives [1/4.8415 = 0.2065, 1]) and
    // flagged thin.
    assert!(
        md.contains("| 10–20 % | 1 | 15.9 % | 0 | 0 % (0 % – 79.3 %) thin |"),
        "{md}"
    );
    assert!(
        md.contains("| 50–60 % | 1 | 50.0 % | 1 | 100 % (20.7 % – 100 %) thin |"),
        "{md}"
    );
    assert!(
        md.contains("| 80–90 % | 1 | 84.1 % | 0 | 0 % (0 % – 79.3 %) thin |"),
        "{md}"
    );
    assert!(md.contains("3 of 3 bins hold fewer than 10 tasks"), "{md}");
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

/// A crew released to reserve before `task_closed` (common on the
/// fireground) is scored by the forecast that stood while the task was
/// worked, not by the 0 of an empty task: A is released, then closed as
/// succeeded; its forecast is Φ(0) = 0.5 from the snapshot (seq 1).
#[test]
fn a_release_before_close_scores_the_forecast_that_stood() {
    let dir = tempfile::tempdir().expect("tempdir");
    let incident = load_incident_file(Path::new("tests/log_fixtures/calibration.yaml"))
        .expect("fixture valid");
    let path = dir.path().join("rel.log");
    let mut w = LogWriter::create(&path, &incident, "trainer").expect("create");
    for e in [
        "{kind: moved, unit: P1, to: null}",
        "{kind: task_closed, task: A, outcome: succeeded}",
        "{kind: task_closed, task: B, outcome: failed}",
    ] {
        w.append("trainer", serde_yaml::from_str(e).expect("event"))
            .expect("applies");
    }
    let records = read_log(&path).expect("read").records;
    let rows = timeline(&records).expect("timeline");
    let a = rows[2].closed.clone().expect("A closed");
    assert!((a.predicted - 0.5).abs() < 1e-12, "{a:?}");
    assert_eq!(a.predicted_seq, 1);
    assert!(a.released_before_close);
    // B kept its unit to the close: its own last odds, Φ(1).
    let b = rows[3].closed.clone().expect("B closed");
    assert!((b.predicted - 0.841_344_746_1).abs() < 1e-9 && !b.released_before_close);
    let md = String::from_utf8(
        assert_cmd::Command::cargo_bin("oddsboard")
            .expect("binary")
            .arg("report")
            .arg(&path)
            .output()
            .expect("runs")
            .stdout,
    )
    .expect("utf8");
    assert!(
        md.contains(
            "| A | life | 3 | succeeded | 50.0 % | seq 1, before its units were released |"
        ),
        "{md}"
    );
}

/// `report --all`: the closed tasks of two logs scored together. Two copies
/// of the log above give the same forecasts twice: Brier unchanged
/// (0.3277), six tasks, and Murphy's terms add up to it.
#[test]
fn report_all_scores_many_logs_together() {
    let dir = tempfile::tempdir().expect("tempdir");
    let one = make_log(dir.path());
    let two = dir.path().join("cal2.log");
    std::fs::copy(&one, &two).expect("copy");
    let out = assert_cmd::Command::cargo_bin("oddsboard")
        .expect("binary")
        .args(["report", "--all", "--json"])
        .arg(&one)
        .arg(&two)
        .output()
        .expect("runs");
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).expect("json");
    assert_eq!(v["scored_tasks"], 6);
    assert!((v["brier_score"].as_f64().unwrap() - HAND_BRIER).abs() < 1e-9);
    let m = &v["murphy"];
    let f = |k: &str| m[k].as_f64().expect(k);
    let sum = f("reliability") - f("resolution") + f("uncertainty") + f("within_bin");
    assert!(
        (sum - v["brier_score"].as_f64().unwrap()).abs() < 1e-12,
        "{m}"
    );
    // Two logs without --all is a usage error.
    let out = assert_cmd::Command::cargo_bin("oddsboard")
        .expect("binary")
        .arg("report")
        .arg(&one)
        .arg(&two)
        .output()
        .expect("runs");
    assert_eq!(out.status.code(), Some(2));
}
