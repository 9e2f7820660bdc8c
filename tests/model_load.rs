//! The validating loader on whole files: defaults, what is allowed, what is
//! reported together, and that no input makes it panic.

use oddsboard::model::{LoadError, Tier, UnitStatus, parse_incident_str};
use proptest::prelude::*;

fn doc_example() -> String {
    let doc = include_str!("../docs/incident-file.md");
    let start = doc.find("```yaml\n").expect("a yaml example") + "```yaml\n".len();
    let end = start + doc[start..].find("```").expect("closing fence");
    doc[start..end].to_string()
}

fn errors(text: &str) -> Vec<String> {
    match parse_incident_str(text, "t.yaml") {
        Ok(_) => Vec::new(),
        Err(e) => e.diagnostics().iter().map(|d| d.to_string()).collect(),
    }
}

#[test]
fn the_documented_example_loads_with_its_defaults() {
    let inc = parse_incident_str(&doc_example(), "example.yaml").expect("valid");
    let e3 = &inc.units[inc.unit_idx("E3").unwrap()];
    let water = inc.trait_idx("water").unwrap();
    // Re-rated mean, sd from the type.
    assert_eq!(
        (e3.ratings[water].mean, e3.ratings[water].sd),
        (1400.0, 250.0)
    );
    assert_eq!(inc.units[3].status, UnitStatus::OutOfService);
    let exposure = &inc.tasks[inc.task_idx("exposure").unwrap()];
    assert_eq!(exposure.tier, Tier::Stabilization);
    assert_eq!(exposure.accepts, None);
    assert_eq!(inc.secure.get(Tier::Stabilization), 0.95);
    assert_eq!(inc.reserve_min, 1);
    assert_eq!(inc.pins.len(), 1);
    assert_eq!(
        inc.placement
            .units_on(oddsboard::model::TaskIdx::new(0))
            .count(),
        2
    );
}

const BASE: &str = "\
incident: { name: Invented test }
traits: [ { id: water, unit: L/min } ]
unit_types:
  - { id: engine, traits: { water: { mean: 1900, sd: 250 } } }
units: [ { id: E1, type: engine }, { id: E2, type: engine } ]
tasks:
  - { id: T1, needs: { water: 1000 } }
  - { id: T2, needs: { water: 1000 } }
";

#[test]
fn a_unit_pinned_to_one_task_may_stand_on_another() {
    let text = format!("{BASE}placement: {{ E1: T2 }}\npins: {{ E1: T1 }}\n");
    let inc = parse_incident_str(&text, "t.yaml").expect("pins bind the plan, not the ground");
    assert_eq!(
        inc.placement.get(oddsboard::model::UnitIdx::new(0)),
        Some(oddsboard::model::TaskIdx::new(1))
    );
    assert_eq!(
        inc.pins.get(&oddsboard::model::UnitIdx::new(0)),
        Some(&oddsboard::model::TaskIdx::new(0))
    );
}

#[test]
fn anchors_and_aliases_of_modest_size_are_fine() {
    let text = "\
incident: { name: Invented test }
traits: [ { id: water } ]
unit_types:
  - { id: a, traits: { water: &std { mean: 1900, sd: 250 } } }
  - { id: b, traits: { water: *std } }
";
    let inc = parse_incident_str(text, "t.yaml").expect("valid");
    assert_eq!(inc.unit_types[1].ratings[0].mean, 1900.0);
}

#[test]
fn an_unreadable_element_does_not_echo_in_later_checks() {
    // E2 has an unknown field; placing and pinning it must not add
    // "unknown unit" errors on top.
    let text = BASE.replace(
        "{ id: E2, type: engine }",
        "{ id: E2, type: engine, crew: 4 }",
    ) + "placement: { E2: T1 }\npins: { E2: T1 }\n";
    let errs = errors(&text);
    assert_eq!(errs.len(), 1, "{errs:#?}");
    assert!(errs[0].starts_with("t.yaml:5:"), "{}", errs[0]);
    assert!(errs[0].contains("units[1]: unknown field `crew`"));
}

#[test]
fn duplicate_keys_and_other_problems_are_reported_together() {
    let text = BASE
        .replace(
            "{ mean: 1900, sd: 250 }",
            "{ mean: 1900, sd: 250, sd: 300 }",
        )
        .replace(
            "{ id: T2, needs: { water: 1000 } }",
            "{ id: T2, needs: { water: -1 } }",
        );
    let errs = errors(&text);
    assert_eq!(errs.len(), 2, "{errs:#?}");
    assert!(errs[0].contains("t.yaml:4:") && errs[0].contains("duplicate key `sd`"));
    assert!(errs[1].contains("t.yaml:8:") && errs[1].contains("need must be ≥ 0, got -1"));
}

#[test]
fn an_alias_bomb_is_one_clear_located_error() {
    let mut text = String::from("incident: { name: x }\nl0: &l0 [a, a, a, a, a, a, a, a, a, a]\n");
    for i in 1..12 {
        let p = i - 1;
        text.push_str(&format!(
            "l{i}: &l{i} [*l{p}, *l{p}, *l{p}, *l{p}, *l{p}, *l{p}, *l{p}, *l{p}, *l{p}, *l{p}]\n"
        ));
    }
    let errs = errors(&text);
    assert_eq!(errs.len(), 1, "{errs:#?}");
    assert!(errs[0].contains("alias bomb"), "{}", errs[0]);
    assert!(errs[0].starts_with("t.yaml:6:"), "{}", errs[0]);
}

#[test]
fn io_errors_name_the_file() {
    let err = oddsboard::model::load_incident_file(std::path::Path::new("no/such/file.yaml"))
        .expect_err("missing");
    assert!(matches!(err, LoadError::Io { .. }));
    assert!(
        err.to_string()
            .starts_with("no/such/file.yaml: cannot read")
    );
}

proptest! {
    // More cases for a longer hunt: MODEL_FUZZ_CASES=20000 cargo test --test model_load
    #![proptest_config(ProptestConfig::with_cases(
        std::env::var("MODEL_FUZZ_CASES").ok().and_then(|v| v.parse().ok()).unwrap_or(300)
    ))]

    /// Random edits of a valid file (characters that matter to YAML) never
    /// make the loader panic, and every problem it reports is located.
    #[test]
    fn edited_files_never_panic_and_every_problem_is_located(
        edits in proptest::collection::vec(
            (0usize..10_000, proptest::sample::select(vec![
                "", ":", "{", "}", "[", "]", ",", "-", "&a", "*a", "!", "|", ">",
                "'", "\"", "#", "\n", " ", "\t", "-1", ".nan", "1e999", "x",
            ])),
            1..6,
        )
    ) {
        let mut text = include_str!("../sample-incidents/building-collapse.yaml").to_string();
        for (at, insert) in edits {
            let mut at = at % (text.len() + 1);
            while !text.is_char_boundary(at) {
                at -= 1;
            }
            // Either insert or delete one character, by the insert's parity.
            if insert.is_empty() && at < text.len() {
                let len = text[at..].chars().next().map_or(0, char::len_utf8);
                text.replace_range(at..at + len, "");
            } else {
                text.insert_str(at, insert);
            }
        }
        if let Err(e) = parse_incident_str(&text, "edited.yaml") {
            for d in e.diagnostics() {
                prop_assert!(d.line.is_some() && d.column.is_some(), "{d}");
                prop_assert!(!d.message.is_empty());
            }
        }
    }
}
