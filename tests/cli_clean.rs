//! Nothing from outside is printed raw by the command line: control
//! characters (Unicode category Cc: C0, DEL, C1 — the sets of ISO/IEC 6429)
//! in labels, notes, reasons and actors come out escaped (`\u{1b}`) from
//! `timeline`, `report`, `odds`, `plan`, `sheet`, `check`, `simulate`,
//! `advise` and `record`'s echo; JSON keeps its standard escaping. Ids holding a control character
//! are refused by `check`, `start` and `record` with a located error.

#[path = "log_fixtures/common.rs"]
mod common;

use common::*;
use proptest::prelude::*;

/// Printed text holding a control character other than the line feed.
fn raw_controls(out: &[u8]) -> Vec<String> {
    String::from_utf8_lossy(out)
        .lines()
        .filter(|l| l.chars().any(|c| c.is_control()))
        .map(|l| l.escape_debug().to_string())
        .collect()
}

/// JSON text with every control character escaped as `\uXXXX` (serde_json
/// leaves DEL and C1 raw, which the YAML reader of events refuses).
fn json_line(v: &serde_json::Value) -> String {
    v.to_string()
        .chars()
        .map(|c| {
            if c.is_control() {
                format!("\\u{:04x}", c as u32)
            } else {
                c.to_string()
            }
        })
        .collect()
}

fn dirty() -> impl Strategy<Value = String> {
    let pieces = prop_oneof![
        Just("\u{1b}]0;pwned\u{7}".to_string()),
        Just("\u{1b}[2J".to_string()),
        Just("\u{9b}31m".to_string()),
        Just("\r\t\u{8}\u{7f}".to_string()),
        (1u32..0x20).prop_map(|c| char::from_u32(c).unwrap_or('?').to_string()),
        (0x7fu32..0xa0).prop_map(|c| char::from_u32(c).unwrap_or('?').to_string()),
        "[a-z ]{1,6}",
    ];
    proptest::collection::vec(pieces, 1..5).prop_map(|v| v.concat())
}

/// Runs the text outputs on a log whose incident and records carry `a`
/// and `b`; returns the lines with a raw control character.
fn outputs_with_controls(a: &str, b: &str) -> Vec<String> {
    let dir = tempfile::tempdir().expect("tempdir");
    let yaml = DRILL
        .replace(
            "name: Invented drill - grain store fire",
            &format!("name: {}", yaml_quoted(&format!("Invented {a}"))),
        )
        .replace(
            "label: Interior attack, east wing",
            &format!("label: {}", yaml_quoted(b)),
        );
    let file = dir.path().join("dirty.yaml");
    std::fs::write(&file, yaml).expect("write");
    let log = dir.path().join("dirty.log");
    let mut bad = Vec::new();
    let mut run = |args: &[&std::ffi::OsStr], stdin: Option<String>| {
        let mut c = bin();
        c.args(args);
        if let Some(s) = stdin {
            c.write_stdin(s);
        }
        let out = c.output().expect("runs");
        let what = format!("{args:?}");
        if !out.status.success() {
            bad.push(format!(
                "{what} failed: {}",
                String::from_utf8_lossy(&out.stderr).escape_debug()
            ));
        }
        bad.extend(
            raw_controls(&out.stdout)
                .into_iter()
                .map(|l| format!("{what}: {l}")),
        );
        bad.extend(
            raw_controls(&out.stderr)
                .into_iter()
                .map(|l| format!("{what} (stderr): {l}")),
        );
    };
    let os = |s: &str| std::ffi::OsString::from(s);
    let (file_s, log_s) = (file.clone().into_os_string(), log.clone().into_os_string());
    run(&[&os("check"), &file_s], None);
    run(&[&os("start"), &file_s, &os("--log"), &log_s], None);
    // Events as JSON lines with the control characters JSON-escaped, as a
    // feed would send them; one record's actor is dirty too.
    let note = |t: &str| json_line(&serde_json::json!({"kind": "note", "text": t}));
    let lost = json_line(&serde_json::json!({"kind": "unit_lost", "unit": "E2", "reason": a}));
    run(
        &[&os("record"), &log_s, &os("-"), &os("--by"), &os(b)],
        Some(format!("{}\n{lost}\n{}\n", note(a), note(b))),
    );
    run(&[&os("record"), &log_s, &os(&note(b))], None);
    for cmd in ["timeline", "report", "odds", "sheet"] {
        run(&[&os(cmd), &log_s], None);
    }
    run(&[&os("timeline"), &log_s, &os("--csv")], None);
    run(&[&os("plan"), &log_s, &os("--budget-ms"), &os("50")], None);
    run(
        &[&os("simulate"), &log_s, &os("--trials"), &os("500")],
        None,
    );
    run(
        &[&os("advise"), &log_s, &os("--loss-budget-ms"), &os("50")],
        None,
    );
    bad
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(4))]

    #[test]
    fn no_control_character_is_printed(a in dirty(), b in dirty()) {
        let bad = outputs_with_controls(&a, &b);
        prop_assert!(bad.is_empty(), "{bad:#?}");
    }
}

/// The case of the issue: a note that would set the window title and clear
/// the screen is recorded, echoed and listed escaped.
#[test]
fn a_note_with_escape_sequences_is_printed_escaped() {
    let dir = tempfile::tempdir().expect("tempdir");
    let log = sample_log(dir.path());
    let note = r#"{"kind":"note","text":"title \u001b]0;x\u0007 clear \u001b[2J end"}"#;
    let out = bin()
        .arg("record")
        .arg(&log)
        .arg(note)
        .output()
        .expect("runs");
    assert!(out.status.success());
    let echo = String::from_utf8_lossy(&out.stdout);
    assert!(
        echo.contains(r"title \u{1b}]0;x\u{7} clear \u{1b}[2J end"),
        "{echo}"
    );
    for cmd in ["timeline", "report"] {
        let out = bin().arg(cmd).arg(&log).output().expect("runs");
        let text = String::from_utf8_lossy(&out.stdout);
        assert!(text.contains(r"\u{1b}]0;x"), "{cmd}: {text}");
        assert!(raw_controls(&out.stdout).is_empty(), "{cmd}");
    }
    // JSON keeps JSON's own escaping: the text reads back exactly.
    let out = bin()
        .args(["timeline", "--json"])
        .arg(&log)
        .output()
        .expect("runs");
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).expect("json");
    let last = v.as_array().and_then(|a| a.last()).expect("rows");
    assert_eq!(
        last["event"],
        "note: title \u{1b}]0;x\u{7} clear \u{1b}[2J end"
    );
}

#[test]
fn ids_with_control_characters_are_refused_with_their_place() {
    let dir = tempfile::tempdir().expect("tempdir");
    let yaml = DRILL.replace(
        "  - { id: E4, type: engine }",
        "  - { id: \"E\\e]0;x\\a4\", type: engine }",
    );
    assert_ne!(yaml, DRILL);
    let file = dir.path().join("bad-id.yaml");
    std::fs::write(&file, &yaml).expect("write");
    let line = yaml
        .lines()
        .position(|l| l.contains("E\\e]0"))
        .expect("line")
        + 1;
    for args in [vec!["check"], vec!["start", "--log"]] {
        let mut c = bin();
        c.arg(args[0]).arg(&file);
        if args.len() > 1 {
            c.arg(args[1]).arg(dir.path().join("new.log"));
        }
        let out = c.output().expect("runs");
        assert_eq!(out.status.code(), Some(1), "{args:?}");
        let err = String::from_utf8_lossy(&out.stderr);
        assert!(
            err.contains(&format!("bad-id.yaml:{line}")),
            "{args:?}: {err}"
        );
        assert!(err.contains("units[3].id"), "{err}");
        assert!(err.contains(r"\u{1b}"), "{err}");
        assert!(raw_controls(&out.stderr).is_empty(), "{err}");
    }
    assert!(!dir.path().join("new.log").exists(), "nothing half-written");
    // `record`: a task or unit added with such an id is refused, the log
    // unchanged.
    let log = sample_log(dir.path());
    let before = std::fs::read(&log).expect("read");
    for ev in [
        r#"{"kind":"task_added","task":{"id":"T\u009b9","label":"x","tier":"life","needs":{"water":1}}}"#,
        r#"{"kind":"unit_added","unit":{"id":"E\u001b9","type":"engine"}}"#,
    ] {
        let out = bin()
            .arg("record")
            .arg(&log)
            .arg(ev)
            .output()
            .expect("runs");
        assert_eq!(out.status.code(), Some(1));
        let err = String::from_utf8_lossy(&out.stderr);
        assert!(
            err.contains(".id") && err.contains("control character"),
            "{err}"
        );
        assert!(raw_controls(&out.stderr).is_empty(), "{err}");
    }
    assert_eq!(std::fs::read(&log).expect("read"), before);
}
