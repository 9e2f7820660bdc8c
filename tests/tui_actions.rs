//! State-machine tests of the commander's dashboard: each operator action,
//! driven by keys through `update`, writes exactly the expected log
//! record(s), and the dashboard's incident then equals what the log's fold
//! gives (the log is the one source of truth).

mod tui_common;

use std::time::Duration;

use oddsboard::log::{Event, Move, OutcomeValue};
use oddsboard::tui::app::{AppEvent, Overlay, PlanResult};
use ratatui::crossterm::event::KeyCode;
use tui_common::{Bench, drill};

fn assert_matches_log(b: &Bench) {
    assert_eq!(
        b.state.incident,
        b.folded(),
        "dashboard state differs from the log's fold"
    );
}

#[test]
fn mark_unit_lost_writes_one_record_with_its_reason() {
    let mut b = Bench::new(drill());
    assert!(b.key(KeyCode::Char('l')).is_empty());
    assert!(b.type_enter("E1").is_empty());
    let written = b.type_enter("pump failure");
    assert_eq!(
        written,
        vec![Event::UnitLost {
            unit: "E1".into(),
            reason: Some("pump failure".into())
        }]
    );
    assert!(b.state.incident.unit_idx("E1").is_none());
    assert_eq!(
        b.state.lost.last().map(|l| l.from_task.clone()),
        Some(Some("T1".into()))
    );
    assert_matches_log(&b);
}

#[test]
fn a_loss_without_reason_is_refused_inline_and_nothing_is_written() {
    let mut b = Bench::new(drill());
    b.key(KeyCode::Char('l'));
    b.type_enter("E1");
    let written = b.key(KeyCode::Enter);
    assert!(written.is_empty());
    match &b.state.overlay {
        Overlay::Form(f) => assert_eq!(f.error.as_ref().map(|e| e.0), Some(1)),
        other => panic!("form should stay open with an error, got {other:?}"),
    }
    assert_eq!(b.records().len(), 1);
    b.key(KeyCode::Esc);
    assert!(matches!(b.state.overlay, Overlay::None));
}

#[test]
fn add_unit_with_a_rating_override() {
    let mut b = Bench::new(drill());
    b.key(KeyCode::Char('a'));
    b.type_enter("E9");
    b.type_enter("engine");
    b.type_enter("water");
    b.type_enter("1500");
    let written = b.type_enter("400");
    assert_eq!(written.len(), 1);
    match &written[0] {
        Event::UnitAdded { unit } => {
            assert_eq!(unit.id, "E9");
            assert_eq!(unit.unit_type, "engine");
            let r = unit.traits.get("water").expect("water override");
            assert_eq!((r.mean, r.sd), (Some(1500.0), Some(400.0)));
        }
        other => panic!("expected unit_added, got {other:?}"),
    }
    let u = b.state.incident.unit_idx("E9").expect("E9 on the roster");
    assert_eq!(
        b.state.incident.placement.get(u),
        None,
        "arrives in reserve"
    );
    assert_matches_log(&b);
}

#[test]
fn adding_a_duplicate_id_is_refused_inline() {
    let mut b = Bench::new(drill());
    b.key(KeyCode::Char('a'));
    for _ in 0..5 {
        if b.key(KeyCode::Enter).is_empty() {
            continue;
        }
    }
    // Empty id: refused on field 0.
    match &b.state.overlay {
        Overlay::Form(f) => assert_eq!(f.error.as_ref().map(|e| e.0), Some(0)),
        other => panic!("expected the form with an error, got {other:?}"),
    }
    b.type_enter("E1");
    for _ in 0..4 {
        b.key(KeyCode::Enter);
    }
    match &b.state.overlay {
        Overlay::Form(f) => {
            let (field, msg) = f.error.clone().expect("error shown");
            assert_eq!(field, 0);
            assert!(msg.contains("already"), "{msg}");
        }
        other => panic!("expected the form with an error, got {other:?}"),
    }
    assert_eq!(b.records().len(), 1);
}

#[test]
fn rerate_keeps_what_is_left_blank() {
    let mut b = Bench::new(drill());
    b.key(KeyCode::Char('r'));
    b.type_enter("W1");
    b.type_enter("water");
    b.type_enter("1000");
    let written = b.key(KeyCode::Enter);
    assert_eq!(
        written,
        vec![Event::UnitRerated {
            unit: "W1".into(),
            trait_id: "water".into(),
            mean: Some(1000.0),
            sd: None
        }]
    );
    let u = b.state.incident.unit_idx("W1").unwrap();
    let k = b.state.incident.trait_idx("water").unwrap();
    assert_eq!(b.state.incident.units[u].ratings[k].mean, 1000.0);
    assert_eq!(
        b.state.incident.units[u].ratings[k].sd, 600.0,
        "type's sd kept"
    );
    assert_matches_log(&b);
}

#[test]
fn change_need_of_the_selected_task_on_its_binding_trait() {
    let mut b = Bench::new(drill());
    b.key(KeyCode::Char('n'));
    b.key(KeyCode::Enter); // task: T1 preselected
    b.key(KeyCode::Enter); // trait: T1's binding trait preselected
    b.type_enter("3500");
    let written = b.key(KeyCode::Enter);
    assert_eq!(
        written,
        vec![Event::NeedChanged {
            task: "T1".into(),
            trait_id: "water".into(),
            need: 3500.0,
            sd: None
        }]
    );
    assert_matches_log(&b);
}

#[test]
fn a_negative_need_is_refused_inline() {
    let mut b = Bench::new(drill());
    b.key(KeyCode::Char('n'));
    b.key(KeyCode::Enter);
    b.key(KeyCode::Enter);
    b.type_enter("-5");
    let written = b.key(KeyCode::Enter);
    assert!(written.is_empty());
    match &b.state.overlay {
        Overlay::Form(f) => assert_eq!(f.error.as_ref().map(|e| e.0), Some(2)),
        other => panic!("expected the form with an error, got {other:?}"),
    }
}

#[test]
fn close_task_sends_its_units_to_reserve() {
    let mut b = Bench::new(drill());
    b.key(KeyCode::Char('c'));
    b.key(KeyCode::Enter);
    let written = b.type_enter("fail");
    assert_eq!(
        written,
        vec![Event::TaskClosed {
            task: "T1".into(),
            outcome: OutcomeValue::Failed
        }]
    );
    let t1 = b.state.incident.task_idx("T1").unwrap();
    assert_eq!(b.state.incident.placement.units_on(t1).count(), 0);
    assert_eq!(b.state.closed.len(), 1);
    assert_matches_log(&b);
}

#[test]
fn pin_then_unpin() {
    let mut b = Bench::new(drill());
    b.key(KeyCode::Char('p'));
    b.type_enter("E4");
    let written = b.key(KeyCode::Enter); // T1 preselected
    assert_eq!(
        written,
        vec![Event::Pinned {
            unit: "E4".into(),
            task: "T1".into()
        }]
    );
    b.key(KeyCode::Char('p'));
    b.type_enter("E4");
    let written = b.type_enter("unpin");
    assert_eq!(written, vec![Event::Unpinned { unit: "E4".into() }]);
    assert_matches_log(&b);
}

#[test]
fn move_by_hand_and_undo_it_with_a_compensating_record() {
    let mut b = Bench::new(drill());
    b.key(KeyCode::Char('m'));
    b.type_enter("E4");
    let written = b.type_enter("T4");
    assert_eq!(
        written,
        vec![Event::Moved {
            unit: "E4".into(),
            to: Some("T4".into())
        }]
    );
    let written = b.key(KeyCode::Char('u'));
    assert_eq!(
        written,
        vec![Event::Moved {
            unit: "E4".into(),
            to: None
        }]
    );
    let e4 = b.state.incident.unit_idx("E4").unwrap();
    assert_eq!(b.state.incident.placement.get(e4), None);
    // The log kept both records: append-only.
    assert_eq!(b.records().len(), 3);
    assert_matches_log(&b);
    // Nothing more of ours to undo.
    assert!(b.key(KeyCode::Char('u')).is_empty());
}

#[test]
fn undo_of_a_loss_brings_the_unit_back_where_it_was() {
    let original = drill();
    let mut b = Bench::new(original.clone());
    b.key(KeyCode::Char('l'));
    b.type_enter("H1");
    b.type_enter("strut failure");
    let written = b.key(KeyCode::Char('u'));
    assert_eq!(
        written.len(),
        3,
        "added, moved back, pinned again: {written:?}"
    );
    let inc = &b.state.incident;
    let h1 = inc.unit_idx("H1").unwrap();
    let was = original.unit_idx("H1").unwrap();
    assert_eq!(inc.units[h1].ratings, original.units[was].ratings);
    assert_eq!(inc.placement.get(h1), inc.task_idx("T2"));
    assert_eq!(inc.pins.get(&h1).copied(), inc.task_idx("T2"));
    assert_matches_log(&b);
}

#[test]
fn note_is_written_as_typed() {
    let mut b = Bench::new(drill());
    b.key(KeyCode::Char('t'));
    let written = b.type_enter("Crews report partial roof collapse");
    assert_eq!(
        written,
        vec![Event::Note {
            text: "Crews report partial roof collapse".into()
        }]
    );
    assert_matches_log(&b);
}

fn proposal_of_two_moves(b: &mut Bench) -> Vec<Event> {
    let inc = &b.state.incident;
    let mut p = inc.placement.clone();
    p.set(inc.unit_idx("E4").unwrap(), inc.task_idx("T3"));
    p.set(inc.unit_idx("W1").unwrap(), inc.task_idx("T4"));
    let generation = b.state.generation;
    b.send(AppEvent::SolverFinished {
        generation,
        result: Ok(PlanResult {
            placement: p,
            proven_optimal: false,
            elapsed: Duration::from_millis(3),
            bound: None,
            settled: true,
        }),
    })
}

fn the_two_moves() -> Vec<Move> {
    vec![
        Move {
            unit: "E4".into(),
            from: None,
            to: Some("T3".into()),
        },
        Move {
            unit: "W1".into(),
            from: Some("T3".into()),
            to: Some("T4".into()),
        },
    ]
}

#[test]
fn a_settled_proposal_is_logged_once_and_accepting_it_moves_the_ground() {
    let mut b = Bench::new(drill());
    let written = proposal_of_two_moves(&mut b);
    assert_eq!(
        written,
        vec![Event::PlanProposed {
            moves: the_two_moves()
        }]
    );
    // The same proposal again is not logged twice.
    assert!(proposal_of_two_moves(&mut b).is_empty());
    let expected = b.state.proposal.as_ref().unwrap().placement.clone();
    let written = b.key(KeyCode::Char('y'));
    assert_eq!(
        written,
        vec![Event::PlanAccepted {
            moves: the_two_moves()
        }]
    );
    assert_eq!(b.state.incident.placement, expected);
    assert!(b.state.proposal.is_none(), "stale proposal dropped");
    assert_matches_log(&b);
}

#[test]
fn accept_a_single_move() {
    let mut b = Bench::new(drill());
    proposal_of_two_moves(&mut b);
    b.key(KeyCode::Char('s'));
    let written = b.type_enter("W1");
    assert_eq!(
        written,
        vec![Event::PlanAccepted {
            moves: vec![the_two_moves()[1].clone()]
        }]
    );
    assert_matches_log(&b);
}

#[test]
fn reject_drops_the_proposal_and_late_results_of_it() {
    let mut b = Bench::new(drill());
    proposal_of_two_moves(&mut b);
    let written = b.key(KeyCode::Char('x'));
    assert_eq!(written, vec![Event::PlanRejected {}]);
    assert!(b.state.proposal.is_none());
    // A late result of the rejected re-plan changes nothing.
    let inc = &b.state.incident;
    let mut p = inc.placement.clone();
    p.set(inc.unit_idx("E4").unwrap(), inc.task_idx("T1"));
    b.send(AppEvent::SolverProgress {
        generation: b.state.generation - 1,
        placement: Some(p),
        elapsed: Duration::from_millis(1),
        iterations: 1,
        bound: None,
    });
    assert!(b.state.proposal.is_none());
    assert_matches_log(&b);
}

#[test]
fn records_from_another_writer_are_applied_in_order() {
    let mut b = Bench::new(drill());
    let mut other = oddsboard::log::LogWriter::open(&b.path).unwrap();
    let r = other
        .append(
            "radio",
            Event::Moved {
                unit: "E4".into(),
                to: Some("T4".into()),
            },
        )
        .unwrap();
    b.send(AppEvent::RecordAppended(r.clone()));
    // Read twice (own read-back or a second poll): applied once.
    b.send(AppEvent::RecordAppended(r));
    assert_eq!(b.state.recent.back().map(|l| l.by.as_str()), Some("radio"));
    assert_matches_log(&b);
}

#[test]
fn watch_mode_ignores_commander_keys() {
    let mut s = tui_common::state(oddsboard::tui::Mode::Watch, drill());
    for c in "laxyrnmpctsu".chars() {
        let eff = oddsboard::tui::update(
            &mut s,
            AppEvent::Key(ratatui::crossterm::event::KeyEvent::from(KeyCode::Char(c))),
        );
        assert!(eff.is_empty(), "key {c} in watch mode asked for {eff:?}");
    }
    assert!(matches!(s.overlay, Overlay::None));
}

#[test]
fn open_a_new_task_through_the_form() {
    let mut b = Bench::new(drill());
    b.key(KeyCode::Char('o'));
    b.type_enter("search-annex");
    b.type_enter("Search the annex");
    b.type_enter("stab");
    b.type_enter("water 2000 ± 300, lift 2");
    b.type_enter("engine heavy");
    b.type_enter("1");
    let written = b.type_enter("3");
    assert_eq!(written.len(), 1, "{:?}", b.state.overlay);
    match &written[0] {
        Event::TaskAdded { task } => {
            assert_eq!(task.id, "search-annex");
            assert_eq!(task.label.as_deref(), Some("Search the annex"));
            assert_eq!(task.tier.as_deref(), Some("stabilization"));
            assert_eq!(task.needs.len(), 2);
            assert_eq!(
                task.accepts.as_deref(),
                Some(&["engine".to_string(), "heavy".to_string()][..])
            );
            assert_eq!((task.min_units, task.max_units), (Some(1), Some(3)));
        }
        other => panic!("expected task_added, got {other:?}"),
    }
    let t = b
        .state
        .incident
        .task_idx("search-annex")
        .expect("on the board");
    let need = b.state.incident.tasks[t].needs[0];
    assert_eq!((need.need, need.sd), (2000.0, 300.0));
    // A new task has no units: odds 0 until some are placed.
    assert_eq!(b.state.ground[t.index()].odds(), 0.0);
    assert_matches_log(&b);
}

#[test]
fn a_new_task_with_an_unknown_trait_is_refused_inline() {
    let mut b = Bench::new(drill());
    b.key(KeyCode::Char('o'));
    b.type_enter("T9");
    b.type_enter("");
    b.type_enter("life");
    b.type_enter("foam 10");
    for _ in 0..3 {
        b.key(KeyCode::Enter);
    }
    match &b.state.overlay {
        Overlay::Form(f) => {
            let (field, msg) = f.error.clone().expect("error shown");
            assert_eq!(field, 3);
            assert!(msg.contains("unknown trait foam"), "{msg}");
        }
        other => panic!("expected the form with an error, got {other:?}"),
    }
    assert_eq!(b.records().len(), 1);
}

/// Every form is reachable from the help overlay: its key opens it there.
#[test]
fn every_form_opens_from_the_help_overlay() {
    for key in ['l', 'a', 'o', 'r', 'f', 'n', 'c', 'p', 'm', 't'] {
        let mut b = Bench::new(drill());
        b.key(KeyCode::Char('?'));
        assert!(matches!(b.state.overlay, Overlay::Help));
        b.key(KeyCode::Char(key));
        assert!(
            matches!(b.state.overlay, Overlay::Form(_)),
            "{key} from the help: {:?}",
            b.state.overlay
        );
    }
}

/// A field reading recorded through its form (`f`) is one `observed`
/// record, the state equals the log's fold, and undo withdraws it.
#[test]
fn record_a_field_reading_through_the_form_and_undo_it() {
    let mut b = Bench::new(drill());
    let before = b.state.incident.clone();
    b.key(KeyCode::Char('f'));
    b.type_enter("W1");
    b.type_enter("water");
    b.type_enter("900");
    let written = b.type_enter("100");
    assert_eq!(
        written,
        vec![Event::Observed {
            unit: "W1".into(),
            trait_id: "water".into(),
            value: 900.0,
            sd: Some(100.0),
        }]
    );
    assert_matches_log(&b);
    assert_ne!(b.state.incident, before, "the reading moved the belief");
    // The units panel lists it, within a small panel too.
    for rows in [usize::MAX, 12] {
        let text: Vec<String> = oddsboard::tui::panel_units::lines_for(&b.state, rows, 80)
            .iter()
            .map(|l| l.to_string())
            .collect();
        assert!(
            text.iter().any(|l| l.starts_with("Field readings (1)")),
            "{text:?}"
        );
        assert!(
            text.iter().any(|l| l.contains("W1 water: rated")),
            "{text:?}"
        );
    }
    b.key(KeyCode::Char('u'));
    assert_matches_log(&b);
}

/// The ground a settled re-plan kept is remembered for the next re-plan
/// while only losses follow (as it stood before them), and forgotten on any
/// other change or when the re-plan ended on its budget.
#[test]
fn a_settled_ground_is_kept_through_losses_only() {
    fn finish(b: &mut Bench, settled: bool) {
        let generation = b.state.generation;
        let placement = b.state.incident.placement.clone();
        b.send(AppEvent::SolverFinished {
            generation,
            result: Ok(PlanResult {
                placement,
                proven_optimal: false,
                elapsed: Duration::from_millis(3),
                bound: None,
                settled,
            }),
        });
    }
    let mut b = Bench::new(drill());
    let ground = b.state.incident.placement.clone();
    assert_eq!(b.state.settled_ground, None);
    // A re-plan cut by its budget that keeps the ground: not settled.
    finish(&mut b, false);
    assert_eq!(b.state.settled_ground, None);
    finish(&mut b, true);
    assert_eq!(b.state.settled_ground.as_ref(), Some(&ground));
    // A loss: the ground before it is kept; so is a note.
    let e1 = b.state.incident.unit_idx("E1").unwrap();
    assert!(ground.get(e1).is_some(), "E1 works a task in the drill");
    for event in [
        Event::UnitLost {
            unit: "E1".into(),
            reason: Some("pump failure".into()),
        },
        Event::Note {
            text: "E1 towed".into(),
        },
    ] {
        let r = b.writer.append("radio", event).unwrap();
        b.send(AppEvent::RecordAppended(r));
    }
    assert_ne!(b.state.incident.placement, ground);
    assert_eq!(b.state.settled_ground.as_ref(), Some(&ground));
    // A move on the ground: forgotten.
    let r = b
        .writer
        .append(
            "radio",
            Event::Moved {
                unit: "E4".into(),
                to: Some("T4".into()),
            },
        )
        .unwrap();
    b.send(AppEvent::RecordAppended(r));
    assert_eq!(b.state.settled_ground, None);
}
