//! The dashboard commands on bad input: a clear error naming the file, exit
//! 1, nothing written, and the terminal never entered.

use assert_cmd::Command;
use predicates::prelude::*;

#[test]
fn dash_on_an_invalid_incident_names_the_file_and_writes_no_log() {
    let dir = tempfile::tempdir().unwrap();
    let file = dir.path().join("bad.yaml");
    std::fs::write(
        &file,
        "incident: { name: Invented }\ntraits: []\nunits: [ { id: E1, type: nope } ]\n",
    )
    .unwrap();
    Command::cargo_bin("oddsboard")
        .unwrap()
        .args(["dash", file.to_str().unwrap()])
        .assert()
        .code(1)
        .stderr(predicate::str::contains("bad.yaml"));
    assert!(
        !dir.path().join("bad.log").exists(),
        "no log written for a bad file"
    );
}

#[test]
fn dash_refuses_to_overwrite_an_existing_log() {
    let dir = tempfile::tempdir().unwrap();
    let file = dir.path().join("fire.yaml");
    std::fs::copy(
        std::path::Path::new(env!("CARGO_MANIFEST_DIR"))
            .join("sample-incidents/warehouse-fire.yaml"),
        &file,
    )
    .unwrap();
    std::fs::write(dir.path().join("fire.log"), "precious\n").unwrap();
    Command::cargo_bin("oddsboard")
        .unwrap()
        .args(["dash", file.to_str().unwrap()])
        .assert()
        .code(1)
        .stderr(predicate::str::contains("already exists"));
    assert_eq!(
        std::fs::read_to_string(dir.path().join("fire.log")).unwrap(),
        "precious\n"
    );
}

#[test]
fn watch_and_replay_on_a_missing_log_fail_cleanly() {
    for cmd in ["watch", "replay"] {
        Command::cargo_bin("oddsboard")
            .unwrap()
            .args([cmd, "/nonexistent/incident.log"])
            .assert()
            .code(1)
            .stderr(predicate::str::contains("incident.log"));
    }
}

#[test]
fn replay_at_an_unknown_sequence_number_is_refused() {
    let dir = tempfile::tempdir().unwrap();
    let log = dir.path().join("fire.log");
    let inc = oddsboard::model::load_incident_file(
        &std::path::Path::new(env!("CARGO_MANIFEST_DIR"))
            .join("sample-incidents/warehouse-fire.yaml"),
    )
    .unwrap();
    oddsboard::log::LogWriter::create(&log, &inc, "ic").unwrap();
    Command::cargo_bin("oddsboard")
        .unwrap()
        .args(["replay", log.to_str().unwrap(), "--at", "99"])
        .assert()
        .code(1)
        .stderr(predicate::str::contains("no record #99"));
}
