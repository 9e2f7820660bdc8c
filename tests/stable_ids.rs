//! Stable ids: a unit lost mid-incident leaves every other unit where it was
//! — its index, placement, pin and rating — so a placement or a pin taken
//! before the loss means the same after it. Checked on the invented
//! warehouse-fire sample and through a real log (write, read, fold).

use oddsboard::log::{Event, LogWriter, apply, fold, read_log};
use oddsboard::model::{Incident, UnitStatus, load_incident_file};
use oddsboard::solver::{SolveOptions, solve};
use std::sync::atomic::AtomicBool;

fn sample() -> Incident {
    load_incident_file(std::path::Path::new("sample-incidents/warehouse-fire.yaml"))
        .expect("sample loads")
}

fn ev(s: &str) -> Event {
    serde_yaml::from_str(s).expect("event")
}

/// Per unit index: id, task id, pin id, ratings — what must not move.
type Where = (String, Option<String>, Option<String>, Vec<(f64, f64)>);

fn where_is(inc: &Incident) -> Vec<Where> {
    let task = |t: oddsboard::model::TaskIdx| inc.tasks[t].id.clone();
    oddsboard::model::UnitIdx::range(inc.units.len())
        .map(|u| {
            (
                inc.units[u].id.clone(),
                inc.placement.get(u).map(task),
                inc.pins.get(&u).map(|&t| task(t)),
                inc.units[u]
                    .ratings
                    .iter()
                    .map(|r| (r.mean, r.sd))
                    .collect(),
            )
        })
        .collect()
}

/// A placed, unpinned unit early in the roster, so that many units follow it
/// (a removal would have shifted all of them).
fn early_placed(inc: &Incident) -> oddsboard::model::UnitIdx {
    oddsboard::model::UnitIdx::range(inc.units.len())
        .find(|&u| inc.placement.get(u).is_some() && !inc.pins.contains_key(&u))
        .expect("the sample has a placed unpinned unit")
}

#[test]
fn a_loss_moves_no_other_unit() {
    let before = sample();
    let lost = early_placed(&before);
    assert!(
        before.units.len() - lost.index() > 5,
        "units follow the lost one: the check could fail"
    );
    assert!(!before.pins.is_empty(), "the sample has pins to keep");
    let id = before.units[lost].id.clone();
    let mut after = before.clone();
    apply(&mut after, &ev(&format!("{{kind: unit_lost, unit: {id}}}"))).expect("applies");
    let (w0, w1) = (where_is(&before), where_is(&after));
    assert_eq!(w0.len(), w1.len(), "the lost unit keeps its slot");
    for u in 0..w0.len() {
        if u == lost.index() {
            assert_eq!(w1[u].0, id);
            assert_eq!((&w1[u].1, &w1[u].2), (&None, &None), "the lost unit left");
            assert_eq!(after.units[u].status, UnitStatus::Lost);
        } else {
            assert_eq!(w0[u], w1[u], "unit {} moved", w0[u].0);
        }
    }
    // Out of every view: ids, the roster, the snapshot, the JSON placement.
    assert_eq!(after.unit_idx(&id), None);
    assert_eq!(after.roster_len(), before.roster_len() - 1);
    let view = oddsboard::odds::view::placement_view(&after, &after.placement);
    assert!(!view.contains_key(&id) && view.len() == after.roster_len());
    let file = oddsboard::model::file::IncidentFile::from_incident(&after);
    assert!(file.units.iter().all(|u| u.id != id));
    // And out of the plan: the solver never places it.
    let cancel = AtomicBool::new(false);
    let opts = SolveOptions {
        budget: std::time::Duration::from_millis(300),
        ..SolveOptions::default()
    };
    let plan = solve(&after, &opts, &cancel, &mut |_| {}).expect("solves");
    assert_eq!(plan.placement.get(lost), None);
    assert_eq!(plan.placement.len(), after.units.len());
}

#[test]
fn a_placement_taken_before_a_loss_still_applies_after_it() {
    let before = sample();
    let lost = early_placed(&before);
    // A plan worked out before the loss, by unit index.
    let cancel = AtomicBool::new(false);
    let opts = SolveOptions {
        budget: std::time::Duration::from_millis(300),
        ..SolveOptions::default()
    };
    let plan = solve(&before, &opts, &cancel, &mut |_| {}).expect("solves");
    let mut after = before.clone();
    let id = before.units[lost].id.clone();
    apply(&mut after, &ev(&format!("{{kind: unit_lost, unit: {id}}}"))).expect("applies");
    // Every other unit's planned task, read by index after the loss, is the
    // task planned for the same id before it.
    for u in oddsboard::model::UnitIdx::range(after.units.len()).filter(|&u| u != lost) {
        let by_id = before.unit_idx(&after.units[u].id).expect("same id");
        assert_eq!(by_id, u, "index of {} changed", after.units[u].id);
        assert_eq!(plan.placement.get(u), plan.placement.get(by_id));
    }
}

#[test]
fn a_log_with_a_loss_folds_to_the_same_indices() {
    let dir = tempfile::tempdir().expect("tempdir");
    let path = dir.path().join("drill.log");
    let inc = sample();
    let lost = early_placed(&inc);
    let id = inc.units[lost].id.clone();
    let mut w = LogWriter::create(&path, &inc, "test").expect("log");
    w.append("test", ev(&format!("{{kind: unit_lost, unit: {id}}}")))
        .expect("loss");
    // A unit added after the loss goes at the end; the lost id's slot stays.
    w.append(
        "test",
        ev("{kind: unit_added, unit: { id: X99, type: engine }}"),
    )
    .expect("add");
    drop(w);
    let contents = read_log(&path).expect("reads");
    let state = fold(&contents.records).expect("folds");
    assert_eq!(state.units[lost].id, id);
    assert!(state.units[lost].is_lost());
    assert_eq!(
        state.unit_idx("X99"),
        Some(oddsboard::model::UnitIdx::new(inc.units.len()))
    );
    for u in oddsboard::model::UnitIdx::range(inc.units.len()).filter(|&u| u != lost) {
        assert_eq!(state.units[u].id, inc.units[u].id);
        assert_eq!(state.placement.get(u), inc.placement.get(u));
        assert_eq!(state.pins.get(&u), inc.pins.get(&u));
    }
    // Taking the loss back (the undo) gives the unit its old slot.
    let mut s = state.clone();
    let back = Event::UnitAdded {
        unit: oddsboard::model::file::UnitFile {
            id: id.clone(),
            unit_type: inc.unit_types[inc.units[lost].type_idx].id.clone(),
            traits: Default::default(),
            status: None,
        },
    };
    apply(&mut s, &back).expect("re-added");
    assert_eq!(s.unit_idx(&id), Some(lost));
}
