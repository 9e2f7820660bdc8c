//! `record --at` and `start --at` for recording drills after the fact, and
//! the bundled drill recorded with them.

mod cli_log;

use assert_cmd::Command;
use chrono::{DateTime, Utc};
use std::path::Path;

fn oddsboard() -> Command {
    Command::cargo_bin("oddsboard").expect("binary")
}

fn times(log: &Path) -> Vec<DateTime<Utc>> {
    std::fs::read_to_string(log)
        .unwrap()
        .lines()
        .map(|l| {
            let v: serde_json::Value = serde_json::from_str(l).unwrap();
            v["at"].as_str().unwrap().parse().unwrap()
        })
        .collect()
}

const YAML: &str = "incident: { name: Invented drill, started: 2026-05-14T09:20:00Z }\n\
    traits: [ { id: water, unit: L/min } ]\n\
    unit_types: [ { id: engine, traits: { water: { mean: 1900, sd: 250 } } } ]\n\
    units: [ { id: E1, type: engine }, { id: E2, type: engine } ]\n\
    tasks: [ { id: T1, tier: life, needs: { water: 3000 } } ]\n";

#[test]
fn at_stamps_records_and_refuses_to_go_backwards() {
    let dir = tempfile::tempdir().unwrap();
    let yaml = dir.path().join("drill.yaml");
    std::fs::write(&yaml, YAML).unwrap();
    let log = dir.path().join("drill.log");
    oddsboard()
        .args(["start", "--at", "2026-05-14T09:20:00Z", "--log"])
        .arg(&log)
        .arg(&yaml)
        .assert()
        .success();
    // A time with an offset is kept in UTC: 10:35+01:00 is 09:35Z.
    oddsboard()
        .arg("record")
        .arg(&log)
        .args([
            "{kind: moved, unit: E1, to: T1}",
            "--at",
            "2026-05-14T10:35:00+01:00",
        ])
        .assert()
        .success();
    let before = std::fs::read(&log).unwrap();
    // Earlier than the last record: refused, the log untouched (exit 1).
    oddsboard()
        .arg("record")
        .arg(&log)
        .args([
            "{kind: moved, unit: E2, to: T1}",
            "--at",
            "2026-05-14T09:30:00Z",
        ])
        .assert()
        .code(1)
        .stderr(predicates::str::contains("earlier than record 2"));
    assert_eq!(std::fs::read(&log).unwrap(), before, "refused, yet written");
    // The same time as the last record is not backwards.
    oddsboard()
        .arg("record")
        .arg(&log)
        .args([
            "{kind: moved, unit: E2, to: T1}",
            "--at",
            "2026-05-14T09:35:00Z",
        ])
        .assert()
        .success();
    // Not a time: a usage error, nothing written.
    let before = std::fs::read(&log).unwrap();
    oddsboard()
        .arg("record")
        .arg(&log)
        .args(["{kind: note, text: x}", "--at", "half past nine"])
        .assert()
        .code(2)
        .stderr(predicates::str::contains("RFC 3339"));
    assert_eq!(std::fs::read(&log).unwrap(), before);
    let t = times(&log);
    let want: Vec<DateTime<Utc>> = [
        "2026-05-14T09:20:00Z",
        "2026-05-14T09:35:00Z",
        "2026-05-14T09:35:00Z",
    ]
    .iter()
    .map(|s| s.parse().unwrap())
    .collect();
    assert_eq!(t, want);
    // Without --at a live record is stamped now, after the drill's times.
    oddsboard()
        .arg("record")
        .arg(&log)
        .arg("{kind: note, text: live again}")
        .assert()
        .success();
    assert!(*times(&log).last().unwrap() > want[2]);
}

#[test]
fn stdin_events_all_take_the_given_time() {
    let dir = tempfile::tempdir().unwrap();
    let yaml = dir.path().join("drill.yaml");
    std::fs::write(&yaml, YAML).unwrap();
    let log = dir.path().join("drill.log");
    oddsboard()
        .args(["start", "--at", "2026-05-14T09:20:00Z", "--log"])
        .arg(&log)
        .arg(&yaml)
        .assert()
        .success();
    oddsboard()
        .arg("record")
        .arg(&log)
        .args(["-", "--at", "2026-05-14T09:21:30Z"])
        .write_stdin("{kind: note, text: one}\n{kind: note, text: two}\n")
        .assert()
        .success();
    let t = times(&log);
    assert_eq!(t.len(), 3);
    assert!(
        t[1..]
            .iter()
            .all(|x| x.to_rfc3339() == "2026-05-14T09:21:30+00:00")
    );
}

/// The bundled drill: its records are stamped over the first two hours of
/// the scenario, in order, so replay, timeline and report read like an
/// incident and not like a script run in seconds.
#[test]
fn the_bundled_drill_has_a_believable_clock() {
    let log =
        Path::new(env!("CARGO_MANIFEST_DIR")).join("sample-incidents/drill-warehouse-fire.log");
    let t = times(&log);
    assert!(t.len() > 10, "the drill has {} records", t.len());
    for w in t.windows(2) {
        assert!(w[1] > w[0], "times do not increase: {} then {}", w[0], w[1]);
    }
    let span = *t.last().unwrap() - t[0];
    assert!(span > chrono::Duration::hours(1), "spans only {span}");
    // Within the first two hours from the scenario's `started` time.
    let first: serde_json::Value = serde_json::from_str(
        std::fs::read_to_string(&log)
            .unwrap()
            .lines()
            .next()
            .unwrap(),
    )
    .unwrap();
    let started: DateTime<Utc> = first["event"]["incident"]["incident"]["started"]
        .as_str()
        .expect("the drill says when it started")
        .parse()
        .unwrap();
    assert!(t[0] >= started);
    assert!(*t.last().unwrap() <= started + chrono::Duration::hours(2));
    // And it still loads: every record applies to the state before it.
    oddsboard().arg("check").arg(&log).assert().success();
}

/// Two writers on one log: a time earlier than what the other writer
/// appended is refused once this writer has caught up, and nothing is
/// written.
#[test]
fn another_writers_later_record_counts() {
    use oddsboard::log::{Event, LogError, LogWriter};
    let dir = tempfile::tempdir().unwrap();
    let log = dir.path().join("drill.log");
    let incident = oddsboard::model::parse_incident_str(YAML, "drill.yaml").unwrap();
    let t = |s: &str| s.parse::<DateTime<Utc>>().unwrap();
    let note = |text: &str| -> Event {
        serde_yaml::from_str(&format!("{{kind: note, text: {text}}}")).unwrap()
    };
    let mut a =
        LogWriter::create_at(&log, &incident, "ic", Some(t("2026-05-14T09:20:00Z"))).unwrap();
    let mut b = LogWriter::open(&log).unwrap();
    b.append_at("radio", note("later"), Some(t("2026-05-14T10:00:00Z")))
        .unwrap();
    let before = std::fs::read(&log).unwrap();
    let err = a
        .append_at("ic", note("earlier"), Some(t("2026-05-14T09:30:00Z")))
        .unwrap_err();
    assert!(
        matches!(err, LogError::TimeBackwards { seq: 2, .. }),
        "{err}"
    );
    assert_eq!(std::fs::read(&log).unwrap(), before);
    a.append_at("ic", note("after"), Some(t("2026-05-14T10:05:00Z")))
        .unwrap();
    assert_eq!(times(&log).len(), 3);
}

/// The bundled drill is exactly what its script records: every record's
/// time is given, so the bytes (checksums included) are reproducible.
#[test]
fn the_drill_script_makes_the_bundled_log() {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("drill.log");
    let status = std::process::Command::new("sh")
        .arg(root.join("sample-incidents/drill-warehouse-fire.sh"))
        .arg(&out)
        .env("ODDSBOARD", assert_cmd::cargo::cargo_bin("oddsboard"))
        .status()
        .expect("sh runs");
    assert!(status.success());
    let made = std::fs::read_to_string(&out).unwrap();
    let bundled =
        std::fs::read_to_string(root.join("sample-incidents/drill-warehouse-fire.log")).unwrap();
    assert_eq!(
        made, bundled,
        "re-run the script to refresh the bundled drill"
    );
}

/// `start` from a log carries its field readings: the new log's odds and
/// readings equal the old log's end (the same posterior, recomputed from
/// the carried `observed` records), including a reading weighed at the
/// unit's rated sd (no `sd` given). A reading of a unit since lost cannot
/// be named in the new snapshot; it is counted in a note, never dropped
/// silently.
#[test]
fn start_from_a_log_carries_its_field_readings() {
    let dir = tempfile::tempdir().expect("tempdir");
    let (_, old) = cli_log::started(
        dir.path(),
        "incident: { name: Invented carried readings }\n\
         traits: [ { id: water, unit: L/min } ]\n\
         unit_types: [ { id: engine, rho: 0.4, traits: { water: { mean: 1000, sd: 200 } } } ]\n\
         units: [ { id: E1, type: engine }, { id: E2, type: engine }, { id: E3, type: engine } ]\n\
         tasks: [ { id: ATTACK, needs: { water: 2500 } } ]\n\
         placement: { E1: ATTACK, E2: ATTACK, E3: ATTACK }\n",
    );
    cli_log::record(
        &old,
        "{kind: observed, unit: E1, trait: water, value: 1250, sd: 50}",
    );
    cli_log::record(&old, "{kind: observed, unit: E2, trait: water, value: 900}");
    let odds = |log: &Path| -> serde_json::Value {
        let out = oddsboard()
            .args(["odds", "--json"])
            .arg(log)
            .assert()
            .success()
            .get_output()
            .stdout
            .clone();
        serde_json::from_slice(&out).expect("json")
    };
    let new = dir.path().join("new.log");
    oddsboard()
        .args(["start", "--log"])
        .arg(&new)
        .arg(&old)
        .assert()
        .success()
        .stdout(predicates::str::contains("then its 2 field readings"));
    let (a, b) = (odds(&old), odds(&new));
    assert!(
        a["readings"].as_array().is_some_and(|r| r.len() == 3),
        "{a}"
    );
    assert_eq!(a["readings"], b["readings"]);
    assert_eq!(a["tasks"], b["tasks"]);

    // A lost unit's reading: counted, not carried.
    cli_log::record(&old, "{kind: unit_lost, unit: E1}");
    let after = dir.path().join("after.log");
    oddsboard()
        .args(["start", "--log"])
        .arg(&after)
        .arg(&old)
        .assert()
        .success()
        .stderr(predicates::str::contains(
            "1 field reading of units since lost do not carry",
        ));
    let c = odds(&after);
    assert_eq!(c["readings"].as_array().map(Vec::len), Some(2), "{c}");
}
