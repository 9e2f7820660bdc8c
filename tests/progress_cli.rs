//! Progress on stderr for long work: shown on a terminal after about a
//! second, never when stderr is not a terminal, never with `--json`.
//! The terminal case plans a generated 200-unit incident with a 2 s
//! budget: the anytime search cannot prove optimality there, so it usually
//! runs for the whole budget; should it stop early (no improvement), the
//! presence check is skipped for that run, since no progress was due.
//! The terminal case runs under util-linux `script` (a pseudo-terminal) and
//! is skipped with a message where `script` is missing.

use assert_cmd::Command;
use std::path::Path;

fn drill() -> std::path::PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("sample-incidents/drill-warehouse-fire.log")
}

/// `timeline --recompute` with a budget that makes it run for seconds.
const ARGS: [&str; 4] = ["timeline", "--recompute", "--budget-ms", "150"];

#[test]
fn nothing_on_stderr_when_it_is_not_a_terminal() {
    let out = Command::cargo_bin("oddsboard")
        .unwrap()
        .args(ARGS)
        .arg(drill())
        .output()
        .unwrap();
    assert!(out.status.success());
    assert!(
        out.stderr.is_empty(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
}

/// The typescript of the run and how long it took.
fn under_a_terminal(extra: &[&str]) -> Option<(String, std::time::Duration)> {
    let has_script = std::process::Command::new("script")
        .arg("--version")
        .output()
        .is_ok_and(|o| o.status.success());
    if !has_script {
        eprintln!("skipped: util-linux `script` is not installed");
        return None;
    }
    let dir = tempfile::tempdir().unwrap();
    let big = dir.path().join("big.yaml");
    let made = Command::cargo_bin("oddsboard")
        .unwrap()
        .args([
            "generate", "--units", "200", "--tasks", "20", "--traits", "3", "--seed", "1",
        ])
        .output()
        .unwrap();
    assert!(made.status.success());
    std::fs::write(&big, made.stdout).unwrap();
    let bin = assert_cmd::cargo::cargo_bin("oddsboard");
    let cmd = format!(
        "{} plan --budget-ms 2000 {} {} > /dev/null",
        bin.display(),
        extra.join(" "),
        big.display()
    );
    let typescript = dir.path().join("typescript");
    let start = std::time::Instant::now();
    let status = std::process::Command::new("script")
        .args(["-q", "-e", "-c", &cmd])
        .arg(&typescript)
        .stdin(std::process::Stdio::null())
        .stdout(std::process::Stdio::null())
        .status()
        .unwrap();
    let took = start.elapsed();
    assert!(status.success());
    let text = String::from_utf8_lossy(&std::fs::read(&typescript).unwrap()).into_owned();
    Some((text, took))
}

#[test]
fn a_spinner_on_a_terminal_and_none_with_json() {
    let Some((shown, took)) = under_a_terminal(&[]) else {
        return;
    };
    if took >= std::time::Duration::from_millis(1800) {
        assert!(
            shown.contains("planning (budget 2.0 s)"),
            "no progress on a terminal after {took:?}: {shown}"
        );
    } else {
        eprintln!("presence check skipped: the plan took only {took:?}");
    }
    let Some((json, _)) = under_a_terminal(&["--json"]) else {
        return;
    };
    assert!(!json.contains("planning"), "progress with --json: {json}");
}
