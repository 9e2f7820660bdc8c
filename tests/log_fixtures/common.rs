//! Helpers shared by the log tests: an invented drill incident and a log
//! built from it through the library's own writer.
#![allow(dead_code)]

use oddsboard::log::{Event, LogWriter};
use oddsboard::model::{Incident, parse_incident_str};
use std::path::{Path, PathBuf};

pub const DRILL: &str = include_str!("drill.yaml");

pub fn drill() -> Incident {
    parse_incident_str(DRILL, "drill.yaml").expect("the drill fixture is valid")
}

pub fn ev(yaml: &str) -> Event {
    serde_yaml::from_str(yaml).unwrap_or_else(|e| panic!("{yaml}: {e}"))
}

/// A log of the drill with a handful of events of several kinds.
pub fn sample_log(dir: &Path) -> PathBuf {
    let path = dir.join("drill.log");
    let mut w = LogWriter::create(&path, &drill(), "ic").expect("create");
    for e in [
        "{ kind: moved, unit: E4, to: T2 }",
        "{ kind: unit_rerated, unit: E3, trait: water, mean: 1200, sd: 500 }",
        "{ kind: plan_proposed, moves: [ { unit: E4, from: T2, to: T1 } ] }",
        "{ kind: plan_accepted, moves: [ { unit: E4, from: T2, to: T1 } ] }",
        "{ kind: pinned, unit: E1, task: T1 }",
        "{ kind: unit_lost, unit: E2, reason: pump failure }",
        "{ kind: note, text: \"Crews report partial roof collapse, east\" }",
        "{ kind: task_closed, task: T3, outcome: succeeded }",
    ] {
        w.append("ic", ev(e)).expect("applies");
    }
    path
}

pub fn bin() -> assert_cmd::Command {
    assert_cmd::Command::cargo_bin("oddsboard").expect("binary built")
}

/// A YAML double-quoted scalar holding `s` exactly (YAML 1.2 escapes).
pub fn yaml_quoted(s: &str) -> String {
    let mut out = String::from("\"");
    for c in s.chars() {
        match c {
            '"' => out.push_str("\\\""),
            '\\' => out.push_str("\\\\"),
            c if c.is_control() => out.push_str(&format!("\\x{:02x}", c as u32)),
            c => out.push(c),
        }
    }
    out.push('"');
    out
}
