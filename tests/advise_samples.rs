//! Advice on the bundled (invented) sample incidents: a request shown for a
//! tier must secure it when the requested units are added and the whole
//! incident is re-solved from scratch by the exact solver — an independent
//! check of sufficiency, outside the request search.

use oddsboard::advise::{AdviseOptions, RequestOutcome, advise};
use oddsboard::model::{Tier, Unit, UnitStatus, load_incident_file};
use oddsboard::solver::{SolveOptions, solve};
use std::path::Path;
use std::sync::atomic::AtomicBool;

#[test]
fn building_collapse_life_request_is_found_and_sufficient() {
    let path =
        Path::new(env!("CARGO_MANIFEST_DIR")).join("sample-incidents/building-collapse.yaml");
    let incident = load_incident_file(&path).expect("sample loads");
    let cancel = AtomicBool::new(false);
    let options = AdviseOptions {
        absorb: false,
        ..AdviseOptions::default()
    };
    let advice = advise(&incident, &options, &cancel).expect("advice");
    let life = advice
        .requests
        .iter()
        .find(|r| r.tier == "life")
        .expect("the life tier is short in this sample");
    let RequestOutcome::Found { sets, .. } = &life.outcome else {
        panic!(
            "a life-safety request should be found, got {:?}",
            life.outcome
        );
    };
    let set = &sets[0];
    assert!(set.total_units <= 5, "request of {} units", set.total_units);

    // Add the requested units at their types' default ratings and solve.
    let mut bigger = incident.clone();
    for (i, tc) in set.units.iter().enumerate() {
        let i = oddsboard::model::UnitIdx::new(i);
        let ty = bigger.type_idx(&tc.unit_type).expect("known type");
        for j in 0..tc.count {
            let ratings = bigger.unit_types[ty].ratings.clone();
            bigger.add_unit(Unit {
                id: format!("REQ-{i}-{j}"),
                type_idx: ty,
                ratings,
                status: UnitStatus::Available,
            });
        }
    }
    // Slack 0: the best plan (with a slack a life task may sit up to 1 %
    // below its secure level to lift a lower tier).
    let opts = SolveOptions {
        from_scratch: true,
        slack: 0.0,
        budget: std::time::Duration::from_secs(20),
        ..SolveOptions::default()
    };
    let report = solve(&bigger, &opts, &cancel, &mut |_| {}).expect("solves");
    let life_worst = report.key.worst_odds_per_tier()[Tier::Life.index()].expect("life tasks");
    assert!(
        life_worst >= bigger.secure.get(Tier::Life) - 1e-9,
        "with the requested units the best plan's worst life odds are {life_worst}"
    );
}

/// The time limits of the loss assessment: what they leave out is counted
/// and said, never dropped silently, and the order is life safety first.
#[test]
fn the_time_limits_count_and_say_what_they_leave_out() {
    use oddsboard::advise::fragility::placed_units;
    use std::time::Duration;
    let path = Path::new(env!("CARGO_MANIFEST_DIR")).join("sample-incidents/warehouse-fire.yaml");
    let incident = load_incident_file(&path).expect("sample loads");
    let cancel = AtomicBool::new(false);
    let placed = placed_units(&incident);
    assert!(placed.len() > 3, "the sample places units");
    // Life-safety tasks' units first, then stabilization, then property.
    let tiers: Vec<Tier> = placed
        .iter()
        .map(|&(_, t)| incident.tasks[t].tier)
        .collect();
    assert!(tiers.windows(2).all(|w| w[0] <= w[1]), "{tiers:?}");

    let none = AdviseOptions {
        loss_time_limit: Duration::ZERO,
        absorb_time_limit: Duration::ZERO,
        ..AdviseOptions::default()
    };
    let advice = advise(&incident, &none, &cancel).expect("advice");
    assert!(advice.fragility.is_empty());
    assert_eq!(advice.losses_not_assessed, placed.len());
    let skipped = advice.absorb.iter().filter(|a| a.not_assessed).count();
    assert!(skipped > 0, "a secure task was left out");
    assert!(advice.absorb.iter().all(|a| a.absorbs.is_none()));
    let note = advice
        .notes
        .iter()
        .find(|n| n.text.starts_with("Time limit reached"))
        .expect("a note says what was left out");
    assert!(
        note.text
            .contains(&format!("{} placed units", placed.len())),
        "{}",
        note.text
    );
    assert!(
        note.text.contains(&format!("{skipped} task")),
        "{}",
        note.text
    );

    // With the default limits the sample is assessed whole, and no note says otherwise.
    let all = advise(&incident, &AdviseOptions::default(), &cancel).expect("advice");
    assert_eq!(all.fragility.len(), placed.len());
    assert_eq!(all.losses_not_assessed, 0);
    assert!(all.absorb.iter().all(|a| !a.not_assessed));
    assert!(
        !all.notes
            .iter()
            .any(|n| n.text.starts_with("Time limit reached"))
    );
}
