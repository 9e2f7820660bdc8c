//! The request search on an incident too large for the exact search (the
//! insertion path), against a closed form.

use oddsboard::advise::requests::tier_requests;
use oddsboard::advise::{AdviseOptions, RequestOutcome};
use oddsboard::model::parse_incident_str;
use std::fmt::Write as _;
use std::sync::atomic::AtomicBool;

/// Invented: twenty pump teams each covering its own exposure, and a rescue
/// that only high-volume pumps may work, with none on the incident.
///
/// One high-volume pump (mean 3600) is short of 5200 on average, so its
/// odds are below one half; two give z = (7200 − 5200)/(500·√2) = 2.828,
/// Φ(2.828) = 0.99766 ≥ 0.99 (Abramowitz & Stegun Table 26.1: Φ(2.80) =
/// 0.99744, Φ(2.85) = 0.99781). So the smallest request is two.
fn incident_yaml() -> String {
    let mut y = String::from(
        r#"
incident: { name: Invented large request drill }
traits: [ { id: water, unit: L/min } ]
unit_types:
  - { id: pump, label: pump team, traits: { water: { mean: 1900, sd: 250 } } }
  - { id: hv, label: high-volume pump, traits: { water: { mean: 3600, sd: 500 } } }
units:
"#,
    );
    for i in 1..=20 {
        let _ = writeln!(y, "  - {{ id: P{i}, type: pump }}");
    }
    y.push_str("tasks:\n  - { id: RESCUE, tier: life, needs: { water: 5200 }, accepts: [hv] }\n");
    for i in 1..=20 {
        let _ = writeln!(y, "  - {{ id: X{i}, needs: {{ water: 1000 }} }}");
    }
    y.push_str("placement:\n");
    for i in 1..=20 {
        let _ = writeln!(y, "  P{i}: X{i}");
    }
    y
}

#[test]
fn insertion_path_finds_the_closed_form_request() {
    let inc = parse_incident_str(&incident_yaml(), "large.yaml").expect("valid");
    let cancel = AtomicBool::new(false);
    let requests = tier_requests(&inc, &AdviseOptions::default(), &cancel).expect("advice");
    assert_eq!(requests.len(), 1, "only life is short: {requests:?}");
    let r = &requests[0];
    assert_eq!(r.tier, "life");
    match &r.outcome {
        RequestOutcome::Found {
            sets,
            minimal_proven,
        } => {
            assert_eq!(sets[0].describe(), "2 × high-volume pump");
            // One unit was ruled out by the screen, not by a guess.
            assert!(*minimal_proven);
            let life = sets[0]
                .after
                .iter()
                .find(|t| t.tier == "life")
                .expect("life");
            assert!((life.odds - 0.99766).abs() < 2e-5, "{}", life.odds);
        }
        other => panic!("expected a request, got {other:?}"),
    }
}
