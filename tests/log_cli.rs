//! The log commands end to end: `record -` with a per-line report, `odds`
//! and `plan` reading a log, `timeline` formats.

#[path = "log_fixtures/common.rs"]
mod common;

use common::*;
use oddsboard::log::read_log;
use predicates::str::contains;

#[test]
fn record_from_stdin_is_all_or_nothing_per_line() {
    let dir = tempfile::tempdir().expect("tempdir");
    let path = sample_log(dir.path());
    let before = read_log(&path).expect("read").records.len();
    let input = "\
# radio console, invented
{kind: unit_status, unit: E3, status: out_of_service}
{kind: moved, unit: E3, to: T2}

{\"kind\":\"note\",\"text\":\"E3 towed\"}
{kind: moved, unit: E3}
";
    bin()
        .arg("record")
        .arg(&path)
        .args(["-", "--by", "radio"])
        .write_stdin(input)
        .assert()
        .code(1)
        .stdout(contains("stdin:2: recorded seq 10: E3 out of service"))
        .stdout(contains("stdin:5: recorded seq 11: note: E3 towed"))
        .stderr(contains("stdin:3: refused:"))
        .stderr(contains(
            "cannot be placed on T2: the unit is out of service",
        ))
        .stderr(contains("stdin:6: refused: event:"))
        .stderr(contains("2 of 4 events refused"));
    let c = read_log(&path).expect("read");
    assert_eq!(c.records.len(), before + 2);
    assert!(c.records[before..].iter().all(|r| r.by == "radio"));
}

#[test]
fn odds_and_plan_read_the_state_at_the_end_of_a_log() {
    let dir = tempfile::tempdir().expect("tempdir");
    let path = sample_log(dir.path());
    let out = bin()
        .arg("odds")
        .arg(&path)
        .arg("--json")
        .output()
        .expect("runs");
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).expect("json");
    // At the end of the sample log E4 was moved to T1 by an accepted plan,
    // E2 was lost and T3 closed.
    assert_eq!(v["placement"]["E4"], "T1");
    assert!(v["placement"].get("E2").is_none());
    assert!(
        v["tasks"]
            .as_array()
            .expect("tasks")
            .iter()
            .all(|t| t["id"] != "T3")
    );
    bin().arg("plan").arg(&path).assert().success();
}

#[test]
fn timeline_formats() {
    let dir = tempfile::tempdir().expect("tempdir");
    let path = sample_log(dir.path());
    let out = bin()
        .arg("timeline")
        .arg(&path)
        .arg("--json")
        .output()
        .expect("runs");
    assert!(out.status.success());
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).expect("one JSON array");
    let rows = v.as_array().expect("array");
    assert_eq!(rows.len(), 9);
    for (i, r) in rows.iter().enumerate() {
        assert_eq!(r["seq"], i as u64 + 1);
        assert!(r["kind"].is_string());
        assert!(r["ground"].is_array());
    }
    // The proposal of seq 4 is in force on its row and gone once accepted.
    assert_eq!(rows[3]["proposal"]["moves"][0]["unit"], "E4");
    assert_eq!(rows[3]["proposal"]["seq"], 4);
    assert!(rows[4]["proposal"].is_null());
    // Ground after seq 5: E4 is on T1 with E1.
    let t1 = rows[4]["ground"]
        .as_array()
        .expect("ground")
        .iter()
        .find(|t| t["id"] == "T1")
        .expect("T1");
    assert_eq!(t1["units"], serde_json::json!(["E1", "E2", "E4"]));

    let csv = bin()
        .arg("timeline")
        .arg(&path)
        .arg("--csv")
        .output()
        .expect("runs");
    let text = String::from_utf8(csv.stdout).expect("utf8");
    assert_eq!(text.lines().count(), 10);
    assert!(
        text.lines()
            .nth(8)
            .expect("row of seq 8")
            .contains("\"note: Crews report partial roof collapse, east\"")
    );

    bin()
        .arg("timeline")
        .arg(&path)
        .assert()
        .success()
        .stdout(contains("E2 lost (pump failure)"))
        .stdout(contains("E4 T2→T1"));
}

#[test]
fn recomputed_proposals_start_from_the_ground_of_their_row() {
    use oddsboard::log::{Event, Move, apply, fold};
    let dir = tempfile::tempdir().expect("tempdir");
    let path = sample_log(dir.path());
    let records = read_log(&path).expect("read").records;
    let out = bin()
        .arg("timeline")
        .arg(&path)
        .args(["--json", "--recompute", "--budget-ms", "20", "--seed", "3"])
        .output()
        .expect("runs");
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let rows: Vec<serde_json::Value> = serde_json::from_slice(&out.stdout).expect("json");
    assert_eq!(rows.len(), records.len());
    for (i, row) in rows.iter().enumerate() {
        let p = &row["proposal"];
        assert_eq!(p["seq"], row["seq"], "a re-plan after every record");
        let moves: Vec<Move> = serde_json::from_value(p["moves"].clone()).expect("moves");
        // Every re-plan is a valid plan from the ground after its record.
        let mut state = fold(&records[..=i]).expect("fold");
        apply(&mut state, &Event::PlanAccepted { moves })
            .unwrap_or_else(|e| panic!("row {}: proposal does not apply: {e}", i + 1));
        // Never worse than the ground in the worst life-safety odds capped at
        // the secure level (0.99), beyond the 1 % stability slack (SPEC §3).
        let (g, q) = (&row["worst"]["life"], &p["worst"]["life"]);
        if let (Some(g), Some(q)) = (g.as_f64(), q.as_f64()) {
            assert!(q >= g.min(0.99) * 0.99 - 1e-12, "row {}: {q} vs {g}", i + 1);
        }
    }
}
