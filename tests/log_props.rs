//! Properties of the log: folding what was written equals applying the same
//! events live; refused events leave the file unchanged; the timeline's
//! incrementally kept ground odds equal a full recompute after every record.

#[path = "log_fixtures/common.rs"]
mod common;

use common::*;
use oddsboard::log::{Event, LogWriter, Move, OutcomeValue, StatusValue, apply, fold, read_log};
use oddsboard::model::file::{NeedFile, TaskFile, UnitFile};
use oddsboard::odds::evaluate;
use oddsboard::report::TimelineWalker;
use proptest::prelude::*;

const UNITS: [&str; 8] = ["E1", "E2", "E3", "E4", "C1", "E9", "C9", "X"];
const TASKS: [&str; 5] = ["T1", "T2", "T3", "T4", "TX"];
const TRAITS: [&str; 3] = ["water", "lift", "foam"];

fn unit() -> impl Strategy<Value = String> {
    prop::sample::select(&UNITS[..]).prop_map(String::from)
}
fn task() -> impl Strategy<Value = String> {
    prop::sample::select(&TASKS[..]).prop_map(String::from)
}
fn dest() -> impl Strategy<Value = Option<String>> {
    prop::option::weighted(0.8, task())
}
fn trait_id() -> impl Strategy<Value = String> {
    prop::sample::select(&TRAITS[..]).prop_map(String::from)
}

fn event() -> impl Strategy<Value = Event> {
    prop_oneof![
        4 => (unit(), dest()).prop_map(|(unit, to)| Event::Moved { unit, to }),
        1 => unit().prop_map(|unit| Event::UnitLost { unit, reason: None }),
        1 => (prop::sample::select(&["E9", "C9", "E1"][..]), prop::sample::select(&["engine", "crane", "boat"][..]))
            .prop_map(|(id, ty)| Event::UnitAdded { unit: UnitFile {
                id: id.into(), unit_type: ty.into(), traits: Default::default(), status: None } }),
        2 => (unit(), trait_id(), prop::option::of(0.0..3000.0f64), prop::option::of(-10.0..600.0f64))
            .prop_map(|(unit, trait_id, mean, sd)| Event::UnitRerated { unit, trait_id, mean, sd }),
        1 => (unit(), any::<bool>()).prop_map(|(unit, a)| Event::UnitStatus { unit,
            status: if a { StatusValue::Available } else { StatusValue::OutOfService } }),
        1 => (prop::sample::select(&["T4", "T1"][..]), 0.0..4000.0f64).prop_map(|(id, w)| Event::TaskAdded {
            task: TaskFile { id: id.into(), label: None, tier: Some("life".into()),
                needs: [("water".to_string(), NeedFile::Certain(w))].into_iter().collect(),
                accepts: None, min_units: None, max_units: Some(2), outcome: None } }),
        2 => (task(), trait_id(), -5.0..5000.0f64, prop::option::of(0.0..300.0f64))
            .prop_map(|(task, trait_id, need, sd)| Event::NeedChanged { task, trait_id, need, sd }),
        1 => (task(), prop::sample::select(&[OutcomeValue::Succeeded, OutcomeValue::Failed, OutcomeValue::Cancelled][..]))
            .prop_map(|(task, outcome)| Event::TaskClosed { task, outcome }),
        2 => (unit(), task()).prop_map(|(unit, task)| Event::Pinned { unit, task }),
        1 => unit().prop_map(|unit| Event::Unpinned { unit }),
        2 => prop::collection::vec((unit(), dest(), dest()), 0..3).prop_map(|m| Event::PlanAccepted {
            moves: m.into_iter().map(|(unit, from, to)| Move { unit, from, to }).collect() }),
        1 => prop::collection::vec((unit(), dest(), dest()), 0..3).prop_map(|m| Event::PlanProposed {
            moves: m.into_iter().map(|(unit, from, to)| Move { unit, from, to }).collect() }),
        1 => Just(Event::PlanRejected {}),
        1 => "[a-z ]{0,12}".prop_map(|text| Event::Note { text }),
        // Readings condition the posterior of the unit and its type-mates.
        3 => (unit(), trait_id(), -10.0..3000.0f64, prop::option::of(-5.0..300.0f64))
            .prop_map(|(unit, trait_id, value, sd)| Event::Observed { unit, trait_id, value, sd }),
        1 => (unit(), trait_id(), -10.0..3000.0f64, prop::option::of(0.0..300.0f64))
            .prop_map(|(unit, trait_id, value, sd)| Event::ObservationWithdrawn { unit, trait_id, value, sd }),
    ]
}

/// Makes plan moves more often valid: a move's `from` is where the unit is.
fn fix_from(state: &oddsboard::model::Incident, e: Event, fix: bool) -> Event {
    if !fix {
        return e;
    }
    let fixm = |moves: Vec<Move>| -> Vec<Move> {
        moves
            .into_iter()
            .map(|mut m| {
                if let Some(u) = state.unit_idx(&m.unit) {
                    m.from = state.placement.get(u).map(|t| state.tasks[t].id.clone());
                }
                m
            })
            .collect()
    };
    match e {
        Event::PlanAccepted { moves } => Event::PlanAccepted { moves: fixm(moves) },
        Event::PlanProposed { moves } => Event::PlanProposed { moves: fixm(moves) },
        other => other,
    }
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 40, ..ProptestConfig::default() })]

    #[test]
    fn replay_equals_live_and_refusals_change_nothing(
        events in prop::collection::vec((event(), any::<bool>()), 1..30)
    ) {
        let dir = tempfile::tempdir().expect("tempdir");
        let path = dir.path().join("p.log");
        let mut live = drill();
        let mut writer = LogWriter::create(&path, &live, "ic").expect("create");
        for (e, fix) in events {
            let e = fix_from(&live, e, fix);
            let before = std::fs::read(&path).expect("read");
            let mut next = live.clone();
            let live_result = apply(&mut next, &e);
            let written = writer.append("ic", e.clone());
            prop_assert_eq!(live_result.is_ok(), written.is_ok(), "{:?}", e);
            if live_result.is_ok() {
                live = next;
            } else {
                prop_assert_eq!(&next, &live, "a refused event changed the state");
                prop_assert_eq!(std::fs::read(&path).expect("read"), before,
                    "a refused event changed the file");
            }
            prop_assert_eq!(writer.state(), &live);
        }
        let contents = read_log(&path).expect("reads");
        prop_assert!(contents.torn_tail.is_none());
        let replayed = fold(&contents.records).expect("folds");
        prop_assert_eq!(replayed, live);
    }

    #[test]
    fn timeline_ground_odds_equal_a_full_recompute(
        events in prop::collection::vec((event(), any::<bool>()), 1..40)
    ) {
        let dir = tempfile::tempdir().expect("tempdir");
        let path = dir.path().join("t.log");
        let mut live = drill();
        let mut writer = LogWriter::create(&path, &live, "ic").expect("create");
        for (e, fix) in events {
            let e = fix_from(&live, e, fix);
            if writer.append("ic", e).is_ok() {
                live = writer.state().clone();
            }
        }
        let records = read_log(&path).expect("reads").records;
        let (mut walker, _) = TimelineWalker::start(&records[0]).expect("start");
        for r in &records[1..] {
            let row = walker.step(r).expect("step");
            let state = walker.state();
            let full = evaluate(state, &state.placement);
            for (t, task) in state.tasks.iter().enumerate() {
                let t = oddsboard::model::TaskIdx::new(t);
                if !task.is_open() { continue; }
                let inc = &walker.ground()[t];
                let (a, b) = (inc.ln_odds, full[t].ln_odds);
                prop_assert!(a == b || (a - b).abs() <= 1e-9 * (1.0 + b.abs()),
                    "seq {} task {}: incremental {} vs full {}", r.seq, task.id, a, b);
                prop_assert_eq!(&inc.units, &full[t].units);
            }
            let worst = state.tasks.iter().enumerate()
                .filter(|(_, t)| t.is_open())
                .map(|(i, _)| full[i].odds())
                .fold(None, |m: Option<f64>, p| Some(m.map_or(p, |m| m.min(p))));
            match (row.min_odds, worst) {
                (Some(a), Some(b)) => prop_assert!((a - b).abs() <= 1e-9),
                (a, b) => prop_assert_eq!(a, b),
            }
        }
    }
}
