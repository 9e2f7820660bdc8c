//! Shared steps of the CLI tests that need a log: write an invented
//! incident, `start` its log, `record` events into it.
#![allow(dead_code)]

use assert_cmd::Command;
use std::path::{Path, PathBuf};

pub fn oddsboard() -> Command {
    Command::cargo_bin("oddsboard").expect("binary")
}

/// Writes `yaml` as `invented.yaml` in `dir` and starts `invented.log`
/// from it; returns (incident file, log).
pub fn started(dir: &Path, yaml: &str) -> (PathBuf, PathBuf) {
    let file = dir.join("invented.yaml");
    std::fs::write(&file, yaml).expect("write the incident");
    let log = dir.join("invented.log");
    oddsboard()
        .args(["start", "--log"])
        .arg(&log)
        .arg(&file)
        .assert()
        .success();
    (file, log)
}

/// Records one event (YAML or JSON text); it must be accepted.
pub fn record(log: &Path, event: &str) {
    oddsboard()
        .arg("record")
        .arg(log)
        .arg(event)
        .assert()
        .success();
}
