//! `report LOG --charts DIR`: the SVG charts parse as XML (roxmltree), carry
//! their axis labels, and draw one series per tier that has open tasks,
//! ending at the tier's last worst odds from `report --json`.

use assert_cmd::Command;
use std::collections::BTreeMap;
use std::path::Path;

fn oddsboard() -> Command {
    Command::cargo_bin("oddsboard").expect("binary")
}

fn drill_log() -> std::path::PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("sample-incidents/drill-warehouse-fire.log")
}

const TIER_TITLES: [&str; 3] = [
    "Life safety",
    "Incident stabilization",
    "Property conservation",
];

/// One polyline of the chart: stroke colour, stroke width, points.
type Polyline = (String, String, Vec<(f64, f64)>);

fn polylines(doc: &roxmltree::Document) -> Vec<Polyline> {
    doc.descendants()
        .filter(|n| n.has_tag_name("polyline"))
        .map(|n| {
            let points = n
                .attribute("points")
                .unwrap_or("")
                .split_whitespace()
                .map(|p| {
                    let (x, y) = p.split_once(',').expect("x,y");
                    (x.parse().unwrap(), y.parse().unwrap())
                })
                .collect();
            (
                n.attribute("stroke").unwrap_or("").to_string(),
                n.attribute("stroke-width").unwrap_or("").to_string(),
                points,
            )
        })
        .collect()
}

/// Text elements: (y, text).
fn texts(doc: &roxmltree::Document) -> Vec<(f64, String)> {
    doc.descendants()
        .filter(|n| n.has_tag_name("text"))
        .map(|n| {
            let y = n.attribute("y").and_then(|y| y.parse().ok()).unwrap_or(0.0);
            let t: String = n.children().filter_map(|c| c.text()).collect();
            (y, t.trim().to_string())
        })
        .collect()
}

/// Runs `report --charts` and `report --json` on `log`; returns the two
/// SVG texts and the JSON.
fn charts_of(log: &Path) -> (String, String, serde_json::Value) {
    let dir = tempfile::tempdir().unwrap();
    let out = oddsboard()
        .arg("report")
        .arg(log)
        .arg("--charts")
        .arg(dir.path().join("charts"))
        .output()
        .unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let md = String::from_utf8(out.stdout).unwrap();
    assert!(md.contains("## Charts"), "the Markdown links the charts");
    let json = oddsboard()
        .arg("report")
        .arg(log)
        .arg("--json")
        .output()
        .unwrap();
    let json: serde_json::Value = serde_json::from_slice(&json.stdout).unwrap();
    let read = |f: &str| std::fs::read_to_string(dir.path().join("charts").join(f)).unwrap();
    (read("worst-odds.svg"), read("reliability.svg"), json)
}

/// Checks the worst-odds chart against the report's data: one series per
/// tier with data, each ending at the tier's last worst odds.
fn check_worst_chart(svg: &str, json: &serde_json::Value) {
    let doc = roxmltree::Document::parse(svg).expect("the SVG parses as XML");
    assert!(doc.root_element().has_tag_name("svg"));
    let texts = texts(&doc);
    let has = |s: &str| texts.iter().any(|(_, t)| t.contains(s));
    assert!(has("worst task odds in the tier"), "y axis label");
    assert!(has("time (UTC)") || has("log record"), "x axis label");
    assert!(has("100%") && has("0%"), "y ticks in percent");
    // The plot area from the y axis line (the first vertical black line).
    let lines = polylines(&doc);
    let axis = lines
        .iter()
        .find(|(c, _, p)| c == "#000000" && p.len() == 2 && p[0].0 == p[1].0)
        .expect("y axis");
    let (top, bottom) = (axis.2[0].1.min(axis.2[1].1), axis.2[0].1.max(axis.2[1].1));
    // Tiers with data in the report, and each one's last worst odds.
    let timeline = json["worst_timeline"].as_array().unwrap();
    let mut want: BTreeMap<usize, f64> = BTreeMap::new();
    for i in 0..3 {
        if let Some(last) = timeline.iter().rev().find_map(|p| p["worst"][i].as_f64()) {
            want.insert(i, last);
        }
    }
    assert!(!want.is_empty());
    // Series: thick polylines grouped by colour; the legend names them.
    let mut by_colour: BTreeMap<String, Vec<&Vec<(f64, f64)>>> = BTreeMap::new();
    for (c, w, p) in &lines {
        if w == "3" {
            by_colour.entry(c.clone()).or_default().push(p);
        }
    }
    assert_eq!(by_colour.len(), want.len(), "one series per tier with data");
    for (i, title) in TIER_TITLES.iter().enumerate() {
        let label = texts.iter().find(|(_, t)| t.starts_with(title));
        let Some(&want_odds) = want.get(&i) else {
            assert!(label.is_none(), "{title} has no data but a legend entry");
            continue;
        };
        let (ly, _) = label.unwrap_or_else(|| panic!("legend lacks {title}"));
        // The legend swatch beside the label gives the tier's colour.
        let colour = by_colour
            .iter()
            .find(|(_, segs)| {
                segs.iter()
                    .any(|p| p.len() == 2 && p[0].1 == p[1].1 && (p[0].1 - ly).abs() < 10.0)
            })
            .map(|(c, _)| c.clone())
            .unwrap_or_else(|| panic!("no swatch for {title}"));
        // The series' rightmost point is the tier's last worst odds.
        let end = by_colour[&colour]
            .iter()
            .filter(|p| p.len() > 2 || p[0].1 != p[1].1 || (p[0].1 - ly).abs() >= 10.0)
            .flat_map(|p| p.iter())
            .max_by(|a, b| a.0.total_cmp(&b.0))
            .expect("series points");
        let odds = (bottom - end.1) / (bottom - top);
        assert!(
            (odds - want_odds).abs() < 0.01,
            "{title}: chart ends at {odds:.3}, report says {want_odds:.3}"
        );
    }
}

#[test]
fn drill_charts_parse_and_show_each_tier() {
    let (worst, reliability, json) = charts_of(&drill_log());
    check_worst_chart(&worst, &json);
    let doc = roxmltree::Document::parse(&reliability).expect("XML");
    let texts = texts(&doc);
    let has = |s: &str| texts.iter().any(|(_, t)| t.contains(s));
    assert!(has("odds given when the task closed"), "x axis label");
    assert!(has("share of those tasks that succeeded"), "y axis label");
    assert!(has("perfect calibration"));
    // One marker per reliability bin of the report, labelled with its count.
    let bins = json["reliability"].as_array().unwrap();
    assert!(!bins.is_empty(), "the drill closes tasks");
    for b in bins {
        assert!(has(&format!("n={}", b["count"])), "bin {b}");
    }
    let circles = doc
        .descendants()
        .filter(|n| n.has_tag_name("circle"))
        .count();
    assert_eq!(circles, bins.len());
}

#[test]
fn a_log_with_one_tier_draws_one_series() {
    let dir = tempfile::tempdir().unwrap();
    let yaml = dir.path().join("one-tier.yaml");
    // Invented: one life-safety task, two engines.
    std::fs::write(
        &yaml,
        "incident: { name: Invented one-tier drill }\n\
         traits: [ { id: water, unit: L/min } ]\n\
         unit_types: [ { id: engine, traits: { water: { mean: 1900, sd: 250 } } } ]\n\
         units: [ { id: E1, type: engine }, { id: E2, type: engine } ]\n\
         tasks: [ { id: T1, tier: life, needs: { water: 3000 } } ]\n",
    )
    .unwrap();
    let log = dir.path().join("one-tier.log");
    oddsboard()
        .args([
            "start",
            "--by",
            "ic",
            "--at",
            "2026-05-14T09:20:00Z",
            "--log",
        ])
        .arg(&log)
        .arg(&yaml)
        .assert()
        .success();
    for (at, ev) in [
        ("2026-05-14T09:25:00Z", "{kind: moved, unit: E1, to: T1}"),
        ("2026-05-14T09:40:00Z", "{kind: moved, unit: E2, to: T1}"),
    ] {
        oddsboard()
            .arg("record")
            .arg(&log)
            .arg(ev)
            .args(["--by", "ic", "--at", at])
            .assert()
            .success();
    }
    let (worst, _, json) = charts_of(&log);
    check_worst_chart(&worst, &json);
}

/// A log written within seconds (a script) is drawn against its record
/// numbers, one tick per record, and still ends each series right.
#[test]
fn a_log_written_in_seconds_is_drawn_by_record() {
    let dir = tempfile::tempdir().unwrap();
    let yaml = dir.path().join("quick.yaml");
    // Invented: a life task and a property task, written in one go.
    std::fs::write(
        &yaml,
        "incident: { name: Invented quick drill }\n\
         traits: [ { id: water, unit: L/min } ]\n\
         unit_types: [ { id: engine, traits: { water: { mean: 1900, sd: 250 } } } ]\n\
         units: [ { id: E1, type: engine }, { id: E2, type: engine }, { id: E3, type: engine } ]\n\
         tasks: [ { id: T1, tier: life, needs: { water: 3000 } }, { id: T2, needs: { water: 1000 } } ]\n",
    )
    .unwrap();
    let log = dir.path().join("quick.log");
    oddsboard()
        .arg("start")
        .arg(&yaml)
        .arg("--log")
        .arg(&log)
        .assert()
        .success();
    for ev in [
        "{kind: moved, unit: E1, to: T1}",
        "{kind: moved, unit: E2, to: T1}",
        "{kind: moved, unit: E3, to: T2}",
    ] {
        oddsboard()
            .arg("record")
            .arg(&log)
            .arg(ev)
            .assert()
            .success();
    }
    let (worst, _, json) = charts_of(&log);
    check_worst_chart(&worst, &json);
    let doc = roxmltree::Document::parse(&worst).unwrap();
    let texts = texts(&doc);
    assert!(texts.iter().any(|(_, t)| t.starts_with("log record")));
    for seq in 1..=4 {
        let tick = format!("#{seq}");
        assert!(texts.iter().any(|(_, t)| *t == tick), "no tick {tick}");
    }
}

#[test]
fn charts_into_an_unwritable_place_fail_cleanly() {
    let dir = tempfile::tempdir().unwrap();
    let file = dir.path().join("a-file");
    std::fs::write(&file, "x").unwrap();
    oddsboard()
        .arg("report")
        .arg(drill_log())
        .arg("--charts")
        .arg(file.join("sub"))
        .assert()
        .code(1)
        .stderr(predicates::str::contains("cannot create"));
}
