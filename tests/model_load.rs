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

// ---------------------------------------------------------------------------
// One pass over the text: the index's own value against serde_yaml 0.9's.
// serde_yaml (crates.io) is the reference: before the loader read values and
// places in one pass, it read the values with serde_yaml, so every scalar
// must resolve as it did there.

fn both_values(text: &str) -> (Option<serde_yaml::Value>, Option<serde_yaml::Value>) {
    let ours = oddsboard::model::locate::Locator::new(text).take_value();
    let reference = serde_yaml::from_str::<serde_yaml::Value>(text).ok();
    (ours, reference)
}

/// NaN is never equal to itself; compare through a spelling of the tree.
fn spelled(v: &Option<serde_yaml::Value>) -> String {
    format!("{v:?}")
}

#[test]
fn scalars_resolve_as_serde_yaml_resolves_them() {
    let scalars = [
        "",
        "~",
        "null",
        "Null",
        "NULL",
        "nul",
        "true",
        "True",
        "TRUE",
        "tRUE",
        "false",
        "no",
        "yes",
        "on",
        "0",
        "-0",
        "+0",
        "7",
        "+7",
        "-7",
        "007",
        "-007",
        "0x1F",
        "-0x1F",
        "+0x1F",
        "0x-1",
        "0o17",
        "-0o17",
        "0b101",
        "-0b101",
        "0b",
        "0x",
        "1_000",
        "1e3",
        "1E3",
        "-1.5e-3",
        "+.5",
        ".5",
        "5.",
        ".inf",
        "-.inf",
        "+.inf",
        ".Inf",
        ".INF",
        ".nan",
        ".NaN",
        "NaN",
        "nan",
        "inf",
        "infinity",
        "1e400",
        "-1e400",
        "18446744073709551615",
        "-9223372036854775808",
        "++1",
        "+-1",
        "1900",
        "1900.0",
        "0.99",
        "E3",
        "L/min",
        "2026-12-04T02:47:00Z",
        "12:30",
        "'quoted'",
        "\"1900\"",
        "'true'",
        "|\n  block\n",
        ">\n  folded 12\n",
    ];
    for s in scalars {
        let text = format!("k: {s}\n");
        let (ours, reference) = both_values(&text);
        assert!(reference.is_some(), "serde_yaml reads {text:?}");
        assert_eq!(spelled(&ours), spelled(&reference), "{text:?}");
    }
    // Integers beyond u64/i64 made serde_yaml's Value fail the whole file;
    // one pass reads them as the (finite) numbers they are, and the checks of
    // meaning then judge them like any other number.
    for s in ["18446744073709551616", "-9223372036854775809"] {
        let text = format!("k: {s}\n");
        let (ours, reference) = both_values(&text);
        assert!(reference.is_none(), "{text:?}");
        let k = ours
            .as_ref()
            .and_then(|v| v.get("k"))
            .and_then(|v| v.as_f64());
        assert_eq!(k, s.parse::<f64>().ok(), "{text:?}");
    }
}

#[test]
fn collections_anchors_and_duplicates_read_as_serde_yaml_reads_them() {
    let texts = [
        "a: [1, 'x', {b: 2.5, c: [null, true]}]\n",
        "base: &b { mean: 1900, sd: 250 }\nx: *b\ny: [*b, *b]\n",
        "k: &s 12\nl: *s\n",
        "- 1\n- - 2\n  - 3\n- {a: b}\n",
        "? [1, 2]\n: complex key\n",
        "",
        "# only a comment\n",
        "empty:\n",
    ];
    for text in texts {
        let (ours, reference) = both_values(text);
        assert!(reference.is_some(), "serde_yaml reads {text:?}");
        assert_eq!(spelled(&ours), spelled(&reference), "{text:?}");
    }
    // Duplicate keys: serde_yaml's Value refuses them; the index reports each
    // with its place and the value keeps the last, as a serde map fills.
    let l = oddsboard::model::locate::Locator::new("a: 1\na: 2\n");
    assert_eq!(l.problems().len(), 1);
    let mut l = l;
    assert_eq!(
        l.take_value(),
        serde_yaml::from_str::<serde_yaml::Value>("a: 2\n").ok()
    );
}

#[test]
fn a_second_document_and_tags_are_refused_with_their_place() {
    let e = errors("incident: { name: x }\n---\nincident: { name: y }\n");
    assert!(
        e.iter()
            .any(|d| d.contains(":2:") && d.contains("second YAML document")),
        "{e:?}"
    );
    let e = errors("incident:\n  name: !!binary aGVsbG8=\n");
    assert!(
        e.iter()
            .any(|d| d.contains(":2:") && d.contains("`!!binary`")),
        "{e:?}"
    );
    // A core-schema tag that says what the text is anyway is accepted.
    let ours = oddsboard::model::locate::Locator::new("a: !!str 12\nb: !!float 3\n").take_value();
    assert_eq!(
        ours,
        serde_yaml::from_str::<serde_yaml::Value>("a: '12'\nb: 3.0\n").ok()
    );
}

proptest! {
    /// Number-like and word-like plain scalars: the same value as serde_yaml.
    #[test]
    fn any_plain_scalar_resolves_as_serde_yaml(s in "[-+]?(0[xob])?[0-9a-fA-F._eE]{0,12}|[a-zA-Z~.]{1,6}") {
        let text = format!("k: {s}\n");
        let (ours, reference) = both_values(&text);
        if reference.is_some() {
            prop_assert_eq!(spelled(&ours), spelled(&reference), "{:?}", text);
        }
    }
}
