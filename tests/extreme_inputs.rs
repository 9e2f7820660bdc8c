//! Extreme but valid inputs through the commands that read an incident
//! (check, odds, plan, advise, simulate, and dash in tmux): the largest
//! `max_units` the file allows, needs of 1e300, and a large generated
//! incident. Every run must end with exit 0 and its output (never an abort
//! or a panic) and print one JSON document when asked. No timing here: the
//! figures (time, peak memory) are in docs/performance.md.

use assert_cmd::Command;
use oddsboard::model::parse_incident_str;
use oddsboard::odds::evaluate;
use std::path::{Path, PathBuf};

const SAMPLE: &str = "sample-incidents/warehouse-fire.yaml";

fn bin() -> Command {
    Command::cargo_bin("oddsboard").expect("binary")
}

/// The invented warehouse-fire sample with every `max_units` at 2³²−1, the
/// largest the file takes (before the fix, `advise` allocated a list of that
/// many entries and aborted).
fn huge_max_units(dir: &Path) -> PathBuf {
    let text = std::fs::read_to_string(SAMPLE).expect("sample");
    let mut out = String::new();
    let mut replaced = 0;
    for line in text.lines() {
        if let Some((head, _)) = line.split_once("max_units: ") {
            out.push_str(&format!("{head}max_units: 4294967295\n"));
            replaced += 1;
        } else {
            out.push_str(line);
            out.push('\n');
        }
    }
    assert!(replaced >= 3, "the sample has max_units to replace");
    let path = dir.join("huge-max-units.yaml");
    std::fs::write(&path, out).expect("write");
    path
}

/// Invented: a life task whose need and need sd are 1e300, another whose
/// need is 1e300 with no spread, beside an ordinary task.
const NEEDS_1E300: &str = "
incident: { name: Invented extreme needs }
traits: [ { id: water, unit: L/min }, { id: crew, unit: persons } ]
unit_types:
  - { id: engine, traits: { water: { mean: 1900, sd: 250 }, crew: { mean: 4, sd: 0.5 } } }
units: [ { id: E1, type: engine }, { id: E2, type: engine }, { id: E3, type: engine } ]
tasks:
  - { id: RESCUE, tier: life, needs: { crew: { need: 1e300, sd: 1e300 } } }
  - { id: ATTACK, tier: life, needs: { water: 1e300 } }
  - { id: COVER, tier: property, needs: { water: 1500 } }
placement: { E1: RESCUE, E2: ATTACK }
";

/// Runs `args` and checks it ends cleanly; with `--json` the output must be
/// one JSON document. Returns stdout.
fn runs(args: &[&str]) -> String {
    let out = bin()
        .args(args)
        .timeout(std::time::Duration::from_secs(300))
        .output()
        .expect("runs");
    let code = out.status.code();
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert_eq!(code, Some(0), "{args:?} ended with {code:?}: {stderr}");
    assert!(!stderr.contains("panicked"), "{args:?}: {stderr}");
    let stdout = String::from_utf8(out.stdout).expect("utf-8");
    if args.contains(&"--json") {
        serde_json::from_str::<serde_json::Value>(&stdout)
            .unwrap_or_else(|e| panic!("{args:?}: not one JSON document: {e}"));
    }
    stdout
}

fn every_command(file: &str) {
    runs(&["check", file]);
    runs(&["odds", file, "--json"]);
    runs(&["odds", file, "--traits"]);
    runs(&["plan", file, "--budget-ms", "200", "--json"]);
    runs(&["plan", file, "--budget-ms", "200", "--compare"]);
    runs(&[
        "advise",
        file,
        "--json",
        "--loss-budget-ms",
        "2",
        "--max-extra",
        "2",
    ]);
    runs(&["simulate", file, "--trials", "500", "--json"]);
}

#[test]
fn the_largest_max_units_is_no_limit_and_no_allocation() {
    let dir = tempfile::tempdir().expect("tempdir");
    let file = huge_max_units(dir.path());
    let file = file.to_str().expect("path");
    every_command(file);
}

#[test]
fn needs_of_1e300_give_finite_answers() {
    let dir = tempfile::tempdir().expect("tempdir");
    let path = dir.path().join("needs-1e300.yaml");
    std::fs::write(&path, NEEDS_1E300).expect("write");
    every_command(path.to_str().expect("path"));
    // The need's sd of 1e300 squares to +∞ in f64; the odds must still be
    // Φ((8 − 1e300)/1e300) = Φ(−1) = 0.158655 (Abramowitz & Stegun, table
    // 26.1: Φ(1) = 0.8413447461), not the 50 % that z = 0 would give.
    let mut inc = parse_incident_str(NEEDS_1E300, "n.yaml").expect("valid");
    inc.placement.set(
        oddsboard::model::UnitIdx::new(1),
        Some(oddsboard::model::TaskIdx::new(0)),
    );
    let odds = evaluate(&inc, &inc.placement);
    assert!(
        (odds[0].odds() - 0.158_655_253_9).abs() < 1e-9,
        "{}",
        odds[0].odds()
    );
    // A need of 1e300 with no spread is met with odds 0, and so says the JSON.
    let json = runs(&["odds", path.to_str().expect("path"), "--json"]);
    let v: serde_json::Value = serde_json::from_str(&json).expect("json");
    let attack = v["tasks"]
        .as_array()
        .expect("tasks")
        .iter()
        .find(|t| t["id"] == "ATTACK")
        .expect("ATTACK");
    assert_eq!(attack["odds"], 0.0);
}

#[test]
fn a_large_generated_incident_checks_and_evaluates() {
    // 10 000 units and 1 000 tasks (invented, seeded); a plan on it runs in
    // the test below.
    let dir = tempfile::tempdir().expect("tempdir");
    let path = dir.path().join("big.yaml");
    let p = path.to_str().expect("path");
    runs(&[
        "generate", "--units", "10000", "--tasks", "1000", "--traits", "5", "--seed", "1", "--out",
        p,
    ]);
    let check = runs(&["check", p]);
    assert!(
        check.contains("10000 units") && check.contains("1000 tasks"),
        "{check}"
    );
    runs(&["odds", p, "--json"]);
    runs(&["simulate", p, "--trials", "20", "--json"]);
}

/// Once minutes even in a release build; since issue 11 the plan keeps to
/// its budget apart from fixed costs (the plan about 8 s in a debug build).
#[test]
fn a_large_generated_incident_plans() {
    // `advise` is left out: on 10 000 units its fragility pass re-plans once
    // per placed unit and does not end within 10 minutes (a known limit,
    // docs/performance.md); memory stays bounded while it runs.
    let dir = tempfile::tempdir().expect("tempdir");
    let path = dir.path().join("big.yaml");
    let p = path.to_str().expect("path");
    runs(&[
        "generate", "--units", "10000", "--tasks", "1000", "--traits", "5", "--seed", "1", "--out",
        p,
    ]);
    let plan = runs(&["plan", p, "--budget-ms", "200", "--json"]);
    let v: serde_json::Value = serde_json::from_str(&plan).expect("one JSON document");
    // The budget ends the search on this size; the plan is still whole.
    assert_eq!(v["stop"], "budget_exhausted", "{}", v["stop"]);
    assert_eq!(v["placement"].as_object().map(|m| m.len()), Some(10_000));
    let moves = v["moves"].as_array().map_or(0, Vec::len) as u64;
    let counted = v["withdrawals"].as_u64().unwrap_or(0) + v["dispatches"].as_u64().unwrap_or(0);
    assert!(counted <= moves, "{counted} disturbances, {moves} moves");
    runs(&["simulate", p, "--trials", "200", "--json"]);
}

/// `dash` on the `max_units` 2³²−1 sample, in a real pseudo-terminal
/// (tmux): the background advice (where the 34 GB allocation used to abort
/// the process and leave the terminal raw) must appear, and `q` must end
/// the process with exit code 0. Skips with a message when tmux is absent.
#[test]
fn the_dashboard_shows_advice_for_the_largest_max_units() {
    use std::process::Command as Std;
    use std::time::{Duration, Instant};
    if !Std::new("tmux")
        .arg("-V")
        .output()
        .is_ok_and(|o| o.status.success())
    {
        eprintln!("tmux not found: skipping the dashboard check");
        return;
    }
    let dir = tempfile::tempdir().expect("tempdir");
    let file = huge_max_units(dir.path());
    let log = dir.path().join("huge.log");
    let rc = dir.path().join("rc");
    let cmd = format!(
        "{} dash {} --log {}; echo $? > {}",
        env!("CARGO_BIN_EXE_oddsboard"),
        file.display(),
        log.display(),
        rc.display()
    );
    let name = format!("extreme-dash-{}", std::process::id());
    let tmux = |args: &[&str]| {
        Std::new("tmux")
            .args(args)
            .env("NO_COLOR", "1")
            .output()
            .expect("tmux runs")
    };
    let started = tmux(&[
        "new-session",
        "-d",
        "-s",
        &name,
        "-x",
        "160",
        "-y",
        "45",
        &cmd,
    ]);
    assert!(started.status.success(), "tmux session starts");
    let screen =
        || String::from_utf8_lossy(&tmux(&["capture-pane", "-p", "-t", &name]).stdout).into_owned();
    let start = Instant::now();
    let mut last = String::new();
    while !last.contains("» advice") {
        if start.elapsed() > Duration::from_secs(120) {
            tmux(&["kill-session", "-t", &name]);
            panic!("the advice never showed; the screen:\n{last}");
        }
        std::thread::sleep(Duration::from_millis(100));
        last = screen();
    }
    tmux(&["send-keys", "-t", &name, "q"]);
    let start = Instant::now();
    while !rc.exists() && start.elapsed() < Duration::from_secs(30) {
        std::thread::sleep(Duration::from_millis(50));
    }
    tmux(&["kill-session", "-t", &name]);
    let code = std::fs::read_to_string(&rc).expect("the dashboard ended");
    assert_eq!(code.trim(), "0", "dash exit code");
}
