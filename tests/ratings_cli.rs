//! `oddsboard ratings LOG…` as a user runs it: the JSON shape of the issue,
//! a `--yaml` block an incident file takes, thin-data warnings, bad input.

use oddsboard::log::{Event, LogWriter};
use oddsboard::model::parse_incident_str;
use std::path::{Path, PathBuf};

const DRILL: &str = include_str!("log_fixtures/drill.yaml");

/// An invented log of the drill with readings of the four engines.
fn log(dir: &Path, i: u32) -> PathBuf {
    let inc = parse_incident_str(DRILL, "drill.yaml").expect("drill");
    let path = dir.join(format!("r{i}.log"));
    let mut w = LogWriter::create(&path, &inc, "trainer").expect("create");
    for (j, u) in ["E1", "E2", "E3", "E4"].iter().enumerate() {
        for r in 0..3 {
            let value = 1700.0 + 40.0 * f64::from(i) + 60.0 * j as f64 + 25.0 * f64::from(r);
            w.append(
                "trainer",
                Event::Observed {
                    unit: u.to_string(),
                    trait_id: "water".into(),
                    value,
                    sd: None,
                },
            )
            .expect("applies");
        }
    }
    path
}

fn run(args: &[&str], logs: &[PathBuf]) -> std::process::Output {
    assert_cmd::Command::cargo_bin("oddsboard")
        .expect("binary")
        .arg("ratings")
        .args(args)
        .args(logs)
        .output()
        .expect("runs")
}

#[test]
fn ratings_json_yaml_and_text() {
    let dir = tempfile::tempdir().expect("tempdir");
    let logs: Vec<PathBuf> = (0..3).map(|i| log(dir.path(), i)).collect();
    let out = run(&["--json"], &logs);
    assert!(out.status.success());
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).expect("json");
    assert_eq!(v["format"], 1);
    let r = &v["ratings"][0];
    for key in [
        "unit_type",
        "trait",
        "mean",
        "sd",
        "rho",
        "measurement_sd",
        "observations",
        "units",
        "incidents",
    ] {
        assert!(!r[key].is_null(), "{key} missing: {r}");
    }
    assert_eq!(r["unit_type"], "engine");
    assert_eq!(r["observations"], 36);
    assert_eq!(r["units"], 12);
    assert_eq!(r["incidents"], 3);
    // The readings' mean, with the units equally read (a balanced design:
    // the GLS mean is the plain mean): 1700 + 40 + 90 + 25 = 1855.
    assert!((r["mean"].as_f64().unwrap() - 1855.0).abs() < 1e-6, "{r}");
    assert!(
        r["warnings"].to_string().contains("only 3 incidents"),
        "{r}"
    );

    let out = run(&["--yaml"], &logs);
    assert!(out.status.success());
    let text = String::from_utf8(out.stdout).expect("utf8");
    let y: serde_yaml::Value = serde_yaml::from_str(&text).expect("yaml");
    assert_eq!(y["unit_types"][0]["id"], "engine");
    assert!(
        y["unit_types"][0]["traits"]["water"]["mean"]
            .as_f64()
            .is_some()
    );

    let out = run(&[], &logs);
    assert!(out.status.success());
    let text = String::from_utf8(out.stdout).expect("utf8");
    assert!(
        text.contains("engine") && text.contains("only 3 incidents"),
        "{text}"
    );
}

#[test]
fn a_missing_log_is_bad_input() {
    let out = run(&[], &[PathBuf::from("no-such.log")]);
    assert_eq!(out.status.code(), Some(1));
    assert!(String::from_utf8_lossy(&out.stderr).contains("no-such.log"));
}
