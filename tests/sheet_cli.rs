//! `oddsboard sheet` on every sample: each placed unit is listed under its
//! task, each idle unit under reserve or out of service; the CSV parses with
//! a CSV reader and says the same; the JSON agrees.
//!
//! The reference placement is read straight from the sample's YAML
//! `placement:` map (serde_yaml, not the program's loader), or, for the
//! recorded drill, from `odds --json`.

mod cli_log;

use assert_cmd::Command;
use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

fn oddsboard() -> Command {
    Command::cargo_bin("oddsboard").expect("binary")
}

fn samples() -> Vec<PathBuf> {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("sample-incidents");
    let mut files: Vec<PathBuf> = std::fs::read_dir(&dir)
        .expect("sample-incidents")
        .map(|e| e.expect("entry").path())
        .filter(|p| p.extension().is_some_and(|e| e == "yaml" || e == "log"))
        .collect();
    files.sort();
    assert!(files.len() >= 4, "samples: {files:?}");
    files
}

fn stdout(args: &[&str], file: &Path) -> String {
    let out = oddsboard().args(args).arg(file).output().expect("runs");
    assert!(
        out.status.success(),
        "{args:?} {}: {}",
        file.display(),
        String::from_utf8_lossy(&out.stderr)
    );
    String::from_utf8(out.stdout).expect("utf-8")
}

/// Unit id → task id (None: reserve) for every unit on the roster.
fn reference_placement(file: &Path) -> BTreeMap<String, Option<String>> {
    if file.extension().is_some_and(|e| e == "log") {
        let v: serde_json::Value =
            serde_json::from_str(&stdout(&["odds", "--json"], file)).expect("json");
        return serde_json::from_value(v["placement"].clone()).expect("placement map");
    }
    let doc: serde_yaml::Value =
        serde_yaml::from_str(&std::fs::read_to_string(file).unwrap()).unwrap();
    let on_ground: BTreeMap<String, String> = doc
        .get("placement")
        .map(|p| serde_yaml::from_value(p.clone()).expect("placement map"))
        .unwrap_or_default();
    doc["units"]
        .as_sequence()
        .expect("units")
        .iter()
        .map(|u| {
            let id = u["id"].as_str().expect("unit id").to_string();
            let task = on_ground.get(&id).cloned();
            (id, task)
        })
        .collect()
}

/// Reads the Markdown back: section (task id, `reserve`, `out_of_service`)
/// of every unit row.
fn markdown_units(md: &str) -> BTreeMap<String, String> {
    let mut section = String::new();
    let mut found = BTreeMap::new();
    for line in md.lines() {
        if let Some(rest) = line.strip_prefix("### ") {
            section = rest.split(':').next().unwrap().to_string();
        } else if line.starts_with("## Reserve") {
            section = "reserve".into();
        } else if line.starts_with("## Out of service") {
            section = "out_of_service".into();
        } else if line.starts_with("## ") {
            section.clear();
        } else if let Some(row) = line.strip_prefix("| ") {
            let first = row.split(" |").next().unwrap().trim();
            let id = first.trim_end_matches(" (pinned)");
            if id == "Unit" || id.starts_with("---") {
                continue;
            }
            assert!(!section.is_empty(), "unit row outside a section: {line}");
            let before = found.insert(id.to_string(), section.clone());
            assert!(before.is_none(), "{id} listed twice");
        }
    }
    found
}

#[test]
fn every_placed_unit_appears_under_its_task_on_each_sample() {
    for file in samples() {
        let want = reference_placement(&file);
        let placed = want.values().filter(|t| t.is_some()).count();
        assert!(placed > 0, "{}: sample places no unit", file.display());
        let md = stdout(&["sheet"], &file);
        assert!(md.contains("**Caution.**"), "no caution");
        let got = markdown_units(&md);
        let json: serde_json::Value =
            serde_json::from_str(&stdout(&["sheet", "--json"], &file)).unwrap();
        let oos: Vec<&str> = json["out_of_service"]
            .as_array()
            .unwrap()
            .iter()
            .map(|u| u["id"].as_str().unwrap())
            .collect();
        for (unit, task) in &want {
            let section = got
                .get(unit)
                .unwrap_or_else(|| panic!("{}: {unit} not on the sheet", file.display()));
            match task {
                Some(task) => assert_eq!(section, task, "{}: {unit}", file.display()),
                None if oos.contains(&unit.as_str()) => {
                    assert_eq!(section, "out_of_service", "{unit}")
                }
                None => assert_eq!(section, "reserve", "{}: {unit}", file.display()),
            }
        }
        assert_eq!(got.len(), want.len(), "{}: extra units", file.display());
        // A note that points at reserve units names only units the
        // reference has in reserve.
        for t in json["tasks"].as_array().unwrap() {
            for n in t["notes"].as_array().unwrap() {
                let n = n.as_str().unwrap();
                if let Some((_, list)) = n.split_once("reserve units could add to its ") {
                    let list = list.split_once(": ").unwrap().1;
                    let list = list.split(" (").next().unwrap();
                    for u in list.split(", ") {
                        assert_eq!(want.get(u), Some(&None), "{}: {u} in {n}", file.display());
                        assert!(!oos.contains(&u), "{u} is out of service");
                    }
                }
            }
        }
        // The JSON lists the same units under the same tasks.
        for t in json["tasks"].as_array().unwrap() {
            for u in t["units"].as_array().unwrap() {
                let id = u["id"].as_str().unwrap();
                assert_eq!(want[id].as_deref(), t["id"].as_str(), "json {id}");
            }
        }
    }
}

#[test]
fn csv_parses_with_a_csv_reader_and_matches_the_placement() {
    for file in samples() {
        let want = reference_placement(&file);
        let text = stdout(&["sheet", "--csv"], &file);
        let mut reader = csv::Reader::from_reader(text.as_bytes());
        let headers = reader.headers().expect("header row").clone();
        let col = |name: &str| headers.iter().position(|h| h == name).expect(name);
        let (section, task, unit) = (col("section"), col("task"), col("unit"));
        let mut seen = BTreeMap::new();
        for row in reader.records() {
            let row = row.expect("a well-formed CSV row");
            assert_eq!(row.len(), headers.len());
            if row[unit].is_empty() {
                // A task with no units: one row, flagged by its notes.
                assert_eq!(&row[section], "task");
                continue;
            }
            let place = match &row[section] {
                "task" => Some(row[task].to_string()),
                "reserve" | "out_of_service" => None,
                other => panic!("unknown section {other}"),
            };
            seen.insert(row[unit].to_string(), place);
        }
        assert_eq!(seen, want, "{}", file.display());
    }
}

#[test]
fn sheet_of_a_missing_file_is_bad_input() {
    oddsboard()
        .args(["sheet", "no-such-incident.yaml"])
        .assert()
        .code(1);
}

/// Text from the file reaches the sheet escaped: a pipe cannot break a
/// Markdown table and a control character is shown, not sent raw.
#[test]
fn labels_are_escaped_in_the_markdown() {
    let dir = tempfile::tempdir().unwrap();
    let yaml = dir.path().join("odd-labels.yaml");
    // Invented; the label holds a pipe and a bell character (YAML "\a").
    std::fs::write(
        &yaml,
        "incident: { name: Invented label check }\n\
         traits: [ { id: water, unit: L/min } ]\n\
         unit_types: [ { id: engine, label: \"Pumper | engine\", traits: { water: { mean: 1900, sd: 250 } } } ]\n\
         units: [ { id: E1, type: engine } ]\n\
         tasks: [ { id: T1, label: \"Attack \\a east | wing\", tier: life, needs: { water: 1000 } } ]\n\
         placement: { E1: T1 }\n",
    )
    .unwrap();
    let md = stdout(&["sheet"], &yaml);
    assert!(
        !md.contains('\u{7}'),
        "a raw control character reached stdout"
    );
    assert!(md.contains("### T1: Attack \\u{7} east \\| wing"), "{md}");
    assert!(md.contains("| E1 | engine: Pumper \\| engine |"), "{md}");
    // The CSV too shows the control character escaped; the pipe is kept
    // and a CSV reader gets the label back whole.
    let csv_text = stdout(&["sheet", "--csv"], &yaml);
    let mut r = csv::Reader::from_reader(csv_text.as_bytes());
    let row = r.records().next().unwrap().unwrap();
    assert_eq!(&row[2], "Attack \\u{7} east | wing");
}

/// After a field reading the sheet lists the unit at its current estimate
/// and keeps the rating beside it. With ρ = 0 the estimate is the conjugate
/// normal update (Gelman et al., BDA 3rd ed. §2.5): precision-weighted mean
/// of the rating and the reading, precision the sum of the two.
#[test]
fn a_field_reading_shows_on_the_sheet_beside_the_rating() {
    let dir = tempfile::tempdir().expect("tempdir");
    let (_, log) = cli_log::started(
        dir.path(),
        "incident: { name: Invented sheet reading test }\n\
         traits: [ { id: water, unit: L/min } ]\n\
         unit_types: [ { id: engine, rho: 0, traits: { water: { mean: 1900, sd: 250 } } } ]\n\
         units: [ { id: E1, type: engine }, { id: E2, type: engine } ]\n\
         tasks: [ { id: ATTACK, needs: { water: 1500 } } ]\n\
         placement: { E1: ATTACK }\n",
    );
    cli_log::record(
        &log,
        "{kind: observed, unit: E1, trait: water, value: 1500, sd: 100}",
    );
    let (m0, s0, y, e) = (1900.0_f64, 250.0_f64, 1500.0_f64, 100.0_f64);
    let prec = 1.0 / (s0 * s0) + 1.0 / (e * e);
    let (mean, sd) = ((m0 / (s0 * s0) + y / (e * e)) / prec, prec.powf(-0.5));
    let v: serde_json::Value =
        serde_json::from_str(&stdout(&["sheet", "--json"], &log)).expect("json");
    let task = &v["tasks"][0];
    let e1 = &task["units"][0];
    assert_eq!(e1["id"], "E1");
    let r = &e1["ratings"][0];
    let f = |x: &serde_json::Value| x.as_f64().expect("number");
    assert!((f(&r["mean"]) - mean).abs() < 1e-6, "{r}");
    assert!((f(&r["sd"]) - sd).abs() < 1e-6, "{r}");
    assert_eq!(f(&r["rated_mean"]), m0);
    assert_eq!(f(&r["rated_sd"]), s0);
    assert_eq!(r["readings"], 1);
    let md = stdout(&["sheet"], &log);
    let line = md.lines().find(|l| l.starts_with("| E1")).expect("E1 row");
    assert!(
        line.contains("water 1555 ± 92.8 L/min (rated 1900 ± 250, 1 reading)"),
        "{line}"
    );
    // E2, never read and with ρ = 0, stays at its rating.
    let e2 = md.lines().find(|l| l.starts_with("| E2")).expect("E2 row");
    assert!(
        e2.contains("water 1900 ± 250 L/min") && !e2.contains("rated"),
        "{e2}"
    );
}
