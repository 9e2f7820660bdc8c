//! `oddsboard check` on every sample (must pass) and on every file of
//! tests/bad-inputs/ (must fail with exit 1, no panic, and exactly the
//! diagnostics its `# expect: LINE: fragment` comments announce, at those
//! lines, in that order).

use assert_cmd::Command;
use std::path::{Path, PathBuf};

fn files_in(dir: &str) -> Vec<PathBuf> {
    let root = Path::new(env!("CARGO_MANIFEST_DIR")).join(dir);
    let mut files: Vec<PathBuf> = std::fs::read_dir(&root)
        .unwrap_or_else(|e| panic!("{}: {e}", root.display()))
        .map(|e| e.expect("dir entry").path())
        .filter(|p| p.extension().is_some_and(|x| x == "yaml"))
        .collect();
    files.sort();
    files
}

fn check(args: &[&std::ffi::OsStr]) -> std::process::Output {
    Command::cargo_bin("oddsboard")
        .expect("binary")
        .arg("check")
        .args(args)
        .output()
        .expect("runs")
}

#[test]
fn every_sample_passes_check() {
    let samples = files_in("sample-incidents");
    assert!(samples.len() >= 3, "at least three samples");
    for file in samples {
        let out = check(&[file.as_os_str()]);
        let stdout = String::from_utf8_lossy(&out.stdout);
        let stderr = String::from_utf8_lossy(&out.stderr);
        assert!(out.status.success(), "{}: {stderr}", file.display());
        assert!(stdout.starts_with("ok: "), "{}: {stdout}", file.display());
        assert!(stdout.contains(" units"), "{stdout}");
        assert!(stdout.contains("placement: "), "{stdout}");
    }
}

/// `# expect: LINE: fragment` lines of a bad input.
fn expectations(text: &str) -> Vec<(usize, String)> {
    text.lines()
        .filter_map(|l| l.strip_prefix("# expect: "))
        .map(|rest| {
            let (line, fragment) = rest.split_once(": ").expect("`# expect: LINE: fragment`");
            (line.parse().expect("line number"), fragment.to_string())
        })
        .collect()
}

#[test]
fn every_bad_input_is_refused_with_located_messages() {
    let bad = files_in("tests/bad-inputs");
    assert!(bad.len() >= 17, "one file per kind of error");
    for file in bad {
        let text = std::fs::read_to_string(&file).expect("read");
        let expected = expectations(&text);
        assert!(
            !expected.is_empty(),
            "{}: no `# expect:` line",
            file.display()
        );
        let out = check(&[file.as_os_str()]);
        let stderr = String::from_utf8_lossy(&out.stderr);
        assert_eq!(out.status.code(), Some(1), "{}: {stderr}", file.display());
        assert!(!stderr.contains("panicked"), "{stderr}");
        let shown = file.display().to_string();
        let diagnostics: Vec<&str> = stderr
            .lines()
            .map(|l| l.strip_prefix("error: ").unwrap_or(l))
            .collect();
        assert_eq!(
            diagnostics.len(),
            expected.len(),
            "{}: expected {} diagnostics, got:\n{stderr}",
            file.display(),
            expected.len()
        );
        for (got, (line, fragment)) in diagnostics.iter().zip(&expected) {
            let prefix = format!("{shown}:{line}:");
            assert!(
                got.starts_with(&prefix),
                "{}: expected line {line}, got: {got}",
                file.display()
            );
            // `file:line:col: ` then the path and message.
            let column = got[prefix.len()..].split(':').next().unwrap_or("");
            assert!(
                column.parse::<usize>().is_ok_and(|c| c >= 1),
                "no column in: {got}"
            );
            assert!(
                got.contains(fragment.as_str()),
                "{}: expected `{fragment}` in: {got}",
                file.display()
            );
        }
    }
}

#[test]
fn json_lists_every_problem_on_stdout() {
    let file = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/bad-inputs/several-errors.yaml");
    let out = check(&[std::ffi::OsStr::new("--json"), file.as_os_str()]);
    assert_eq!(out.status.code(), Some(1));
    let doc: serde_json::Value = serde_json::from_slice(&out.stdout).expect("one JSON document");
    assert_eq!(doc["ok"], false);
    let errors = doc["errors"].as_array().expect("errors");
    assert_eq!(errors.len(), 9);
    assert_eq!(errors[0]["line"], 14);
    assert_eq!(errors[0]["path"], "incident.started");
    assert!(errors[0]["column"].as_u64().is_some());
    assert!(
        errors[0]["file"]
            .as_str()
            .unwrap()
            .ends_with("several-errors.yaml")
    );
    assert!(
        errors[3]["message"]
            .as_str()
            .unwrap()
            .contains("`crew_size`")
    );
}

#[test]
fn json_on_a_good_file_says_ok() {
    let file = files_in("sample-incidents").remove(0);
    let out = check(&[std::ffi::OsStr::new("--json"), file.as_os_str()]);
    assert!(out.status.success());
    let doc: serde_json::Value = serde_json::from_slice(&out.stdout).expect("one JSON document");
    assert_eq!(doc["ok"], true);
    assert_eq!(doc["errors"].as_array().map(Vec::len), Some(0));
    assert!(doc["summary"].as_str().unwrap().starts_with("ok: "));
}

#[test]
fn a_missing_file_is_bad_input_not_a_panic() {
    let out = check(&[std::ffi::OsStr::new("no/such/incident.yaml")]);
    assert_eq!(out.status.code(), Some(1));
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert!(stderr.contains("no/such/incident.yaml"), "{stderr}");
    assert!(!stderr.contains("panicked"));
}

#[test]
fn a_log_is_checked_to_its_end() {
    let dir = tempfile::tempdir().expect("tempdir");
    let log = dir.path().join("flood.log");
    let sample = Path::new(env!("CARGO_MANIFEST_DIR")).join("sample-incidents/river-flood.yaml");
    Command::cargo_bin("oddsboard")
        .expect("binary")
        .arg("start")
        .arg(&sample)
        .arg("--log")
        .arg(&log)
        .assert()
        .success();
    let out = check(&[log.as_os_str()]);
    let stdout = String::from_utf8_lossy(&out.stdout);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    assert!(
        stdout.starts_with("ok: ") && stdout.contains("(log, state at its end)"),
        "{stdout}"
    );
    assert!(stdout.contains("20 units"), "{stdout}");
}
