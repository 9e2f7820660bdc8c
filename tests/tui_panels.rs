//! Snapshots of the dashboard's screens on a `TestBackend` (insta), for the
//! key states: all tasks hedging, a life-safety task gambling, a proposal
//! pending, the help overlay, the smallest and largest layouts, and a
//! terminal too small for the board.

mod tui_common;

use std::time::Duration;

use insta::assert_snapshot;
use oddsboard::tui::app::{AppEvent, PlanResult};
use oddsboard::tui::{Mode, update};
use tui_common::{draw, drill, drill_with_placement, state};

#[test]
fn board_with_the_drill_at_140x45() {
    let s = state(Mode::Watch, drill());
    assert_snapshot!(draw(&s, 140, 45));
}

#[test]
fn all_hedge_at_100x30() {
    let inc = drill_with_placement("{ E1: T1, E2: T1, H1: T2, E3: T3, E4: T3, W1: T4, W2: T4 }");
    let s = state(Mode::Watch, inc);
    assert!(
        s.ground
            .iter()
            .all(|o| o.regime() == Some(oddsboard::odds::Regime::Hedge))
    );
    assert_snapshot!(draw(&s, 100, 30));
}

#[test]
fn life_safety_task_gambling() {
    // An engine and a tender on T1: 3100 L/min expected against a need
    // raised to 3600, so only a lucky draw meets it.
    let text = tui_common::DRILL
        .replace("needs: { water: 3000 }", "needs: { water: 3600 }")
        .replace("E1: T1, E2: T1,", "E1: T1, W1: T1, E2: T3,")
        .replace("E3: T3, W1: T3,", "E3: T3,");
    let inc = oddsboard::model::parse_incident_str(&text, "drill.yaml").unwrap();
    let s = state(Mode::Watch, inc);
    assert_eq!(s.ground[0].regime(), Some(oddsboard::odds::Regime::Gamble));
    assert_snapshot!(draw(&s, 140, 45));
}

#[test]
fn proposal_pending_while_improving() {
    let inc = drill();
    let mut s = state(Mode::Command, inc);
    let mut better = s.incident.placement.clone();
    let e4 = s.incident.unit_idx("E4").unwrap();
    let t3 = s.incident.task_idx("T3").unwrap();
    let w1 = s.incident.unit_idx("W1").unwrap();
    let t4 = s.incident.task_idx("T4").unwrap();
    better.set(e4, Some(t3));
    better.set(w1, Some(t4));
    update(
        &mut s,
        AppEvent::SolverProgress {
            generation: 0,
            placement: Some(better),
            elapsed: Duration::from_millis(400),
            iterations: 1200,
            bound: None,
        },
    );
    assert_eq!(s.proposal.as_ref().map(|p| p.moves.len()), Some(2));
    assert_snapshot!(draw(&s, 140, 45));
}

#[test]
fn stale_solver_results_are_dropped() {
    let mut s = state(Mode::Command, drill());
    s.generation = 3;
    let mut other = s.incident.placement.clone();
    other.set(oddsboard::model::UnitIdx::new(0), None);
    update(
        &mut s,
        AppEvent::SolverFinished {
            generation: 2,
            result: Ok(PlanResult {
                placement: other,
                proven_optimal: true,
                elapsed: Duration::from_millis(5),
                bound: None,
                settled: true,
            }),
        },
    );
    assert!(s.proposal.is_none());
}

#[test]
fn help_overlay() {
    let mut s = state(Mode::Command, drill());
    update(
        &mut s,
        AppEvent::Key(ratatui::crossterm::event::KeyEvent::from(
            ratatui::crossterm::event::KeyCode::Char('?'),
        )),
    );
    assert_snapshot!(draw(&s, 120, 40));
}

#[test]
fn large_layout_200x60() {
    let s = state(Mode::Watch, drill());
    assert_snapshot!(draw(&s, 200, 60));
}

#[test]
fn too_small_terminal_gets_a_message() {
    let s = state(Mode::Watch, drill());
    let screen = draw(&s, 80, 24);
    assert_snapshot!(screen);
}

#[test]
fn unit_just_lost() {
    // Times of the records are masked: the log stamps the test run.
    let mut b = tui_common::Bench::new(drill());
    b.key(ratatui::crossterm::event::KeyCode::Char('l'));
    b.type_enter("E1");
    b.type_enter("pump failure");
    let text = format!("{}", draw(&b.state, 140, 45));
    assert_snapshot!(regex_free_mask_times(&text));
}

#[test]
fn form_with_an_inline_error() {
    let mut b = tui_common::Bench::new(drill());
    b.key(ratatui::crossterm::event::KeyCode::Char('n'));
    b.key(ratatui::crossterm::event::KeyCode::Enter);
    b.key(ratatui::crossterm::event::KeyCode::Enter);
    b.type_enter("lots");
    b.key(ratatui::crossterm::event::KeyCode::Enter);
    let text = format!("{}", draw(&b.state, 120, 40));
    assert_snapshot!(regex_free_mask_times(&text));
}

#[test]
fn replay_mid_way() {
    use ratatui::crossterm::event::KeyCode;
    let mut b = tui_common::Bench::new(drill());
    // A short incident: a proposal, a loss, the proposal accepted, a close.
    let inc = &b.state.incident;
    let mut p = inc.placement.clone();
    p.set(inc.unit_idx("E4").unwrap(), inc.task_idx("T3"));
    let generation = b.state.generation;
    b.send(AppEvent::SolverFinished {
        generation,
        result: Ok(PlanResult {
            placement: p,
            proven_optimal: true,
            elapsed: Duration::from_millis(2),
            bound: None,
            settled: true,
        }),
    });
    b.key(KeyCode::Char('l'));
    b.type_enter("W2");
    b.type_enter("rollover on approach");
    b.key(KeyCode::Char('m'));
    b.type_enter("E4");
    b.type_enter("T3");
    b.key(KeyCode::Char('c'));
    b.type_enter("T4");
    b.type_enter("cancel");
    let records = b.records();
    let kinds: Vec<_> = records.iter().map(|r| r.event.kind()).collect();
    assert_eq!(records.len(), 5, "{kinds:?} {:?}", b.state.flash);
    let mut s = oddsboard::tui::app::replay_state(records, oddsboard::tui::Theme::monochrome())
        .expect("replay starts");
    // Step forward four records: snapshot, proposal, loss, move.
    for _ in 0..3 {
        update(&mut s, AppEvent::Key(KeyCode::Right.into()));
    }
    assert_eq!(s.replay.as_ref().map(|c| c.at), Some(3));
    // The replayed state equals the fold of the first four records.
    let folded = oddsboard::log::fold(&b.records()[..4]).unwrap();
    assert_eq!(s.incident, folded);
    let screen = draw(&s, 140, 45);
    // The timestamps are the test run's: mask them for the snapshot.
    let text = format!("{screen}");
    let masked = regex_free_mask_times(&text);
    assert_snapshot!(masked);
}

/// Replaces every `HH:MM:SS` and `YYYY-MM-DD` with placeholders.
fn regex_free_mask_times(s: &str) -> String {
    let chars: Vec<char> = s.chars().collect();
    let mut out = String::new();
    let mut i = 0;
    let is_d = |c: char| c.is_ascii_digit();
    while i < chars.len() {
        if i + 8 <= chars.len()
            && is_d(chars[i])
            && is_d(chars[i + 1])
            && chars[i + 2] == ':'
            && is_d(chars[i + 3])
            && is_d(chars[i + 4])
            && chars[i + 5] == ':'
            && is_d(chars[i + 6])
            && is_d(chars[i + 7])
        {
            out.push_str("hh:mm:ss");
            i += 8;
        } else if i + 10 <= chars.len()
            && (0..4).all(|k| is_d(chars[i + k]))
            && chars[i + 4] == '-'
            && is_d(chars[i + 5])
            && is_d(chars[i + 6])
            && chars[i + 7] == '-'
            && is_d(chars[i + 8])
            && is_d(chars[i + 9])
        {
            out.push_str("yyyy-mm-dd");
            i += 10;
        } else {
            out.push(chars[i]);
            i += 1;
        }
    }
    out
}

fn advice_note(
    level: oddsboard::advise::NoteLevel,
    text: &str,
    unit: Option<&str>,
) -> oddsboard::advise::Note {
    oddsboard::advise::Note {
        level,
        text: text.into(),
        task: Some("T1".into()),
        unit: unit.map(str::to_string),
    }
}

#[test]
fn advice_notes_after_the_contextual_notes() {
    use oddsboard::advise::NoteLevel;
    let mut s = state(Mode::Watch, drill());
    let generation = s.advice_on().unwrap();
    update(
        &mut s,
        AppEvent::AdviceReady {
            generation,
            result: Ok(vec![
                advice_note(
                    NoteLevel::Urgent,
                    "Single point of failure: losing E1 (engine on T1) drops T1 below the \
                     secure level even after re-planning. Stage a backup that can take its place.",
                    Some("E1"),
                ),
                advice_note(
                    NoteLevel::Warning,
                    "T1 (life safety) cannot absorb the loss of its most important unit \
                     without leaving its secure level.",
                    None,
                ),
            ]),
        },
    );
    let screen = format!("{:?}", draw(&s, 140, 45));
    assert!(screen.contains("» advice, urgent: Single point of failure"));
    assert!(!screen.contains("advice: computing"));
    assert_snapshot!(draw(&s, 140, 45));
}

#[test]
fn advice_computing_is_shown_until_it_arrives() {
    let mut s = state(Mode::Watch, drill());
    s.advice_on();
    let screen = format!("{:?}", draw(&s, 140, 45));
    assert!(screen.contains("advice: computing…"));
}

#[test]
fn stale_advice_is_dropped() {
    use oddsboard::advise::NoteLevel;
    use oddsboard::tui::app::AdviceStatus;
    let mut s = state(Mode::Command, drill());
    let old = s.advice_on().unwrap();
    // The incident changes: a new advice generation, asked for after the
    // re-plan.
    let effects = s.incident_changed();
    assert!(matches!(
        effects.as_slice(),
        [oddsboard::tui::Effect::Replan { .. }, oddsboard::tui::Effect::Advise { generation }]
            if *generation == old + 1
    ));
    let note = advice_note(NoteLevel::Urgent, "for the old state", None);
    update(
        &mut s,
        AppEvent::AdviceReady {
            generation: old,
            result: Ok(vec![note.clone()]),
        },
    );
    assert!(s.advice.is_empty());
    assert_eq!(s.advice_status, AdviceStatus::Computing);
    // The proposal's generation bump (a rejection) does not touch advice.
    s.generation += 5;
    update(
        &mut s,
        AppEvent::AdviceReady {
            generation: old + 1,
            result: Ok(vec![note.clone()]),
        },
    );
    assert_eq!(s.advice, vec![note]);
    assert_eq!(s.advice_status, AdviceStatus::Ready);
}

#[test]
fn no_advice_in_replay() {
    let records = {
        let b = tui_common::Bench::new(drill());
        b.records()
    };
    let mut s =
        oddsboard::tui::app::replay_state(records, oddsboard::tui::Theme { color: false }).unwrap();
    assert_eq!(s.advice_on(), None);
    assert!(s.incident_changed().is_empty());
}

#[test]
fn real_advice_on_the_drill_reaches_the_panel() {
    // The advice module itself (not a stand-in) through the dashboard's
    // advisor and event path.
    use oddsboard::tui::planner::{Advisor, NotesAdvisor};
    let mut s = state(Mode::Watch, drill());
    let generation = s.advice_on().unwrap();
    let cancel = std::sync::atomic::AtomicBool::new(false);
    let result = NotesAdvisor::default().advise(&s.incident, &cancel);
    let notes = result.clone().expect("advice on the drill");
    // The drill has tasks below their secure levels, so advice has
    // something to say; an empty list would make the checks below vacuous.
    assert!(!notes.is_empty(), "advice on the drill gave no notes");
    update(&mut s, AppEvent::AdviceReady { generation, result });
    let shown = oddsboard::tui::panel_notes::advice_lines(&s);
    assert_eq!(shown.len(), notes.len());
    for (line, note) in shown.iter().zip(&notes) {
        assert!(line.1.starts_with("» advice, "));
        assert!(line.1.ends_with(&note.text));
    }
}

#[test]
fn read_only_dashboards_do_not_offer_the_accept_keys() {
    for (mode, expected) in [
        (Mode::Replay, "Proposed moves (1) · recommended at #9"),
        (
            Mode::Watch,
            "Proposed moves (1) · recommended at #9 · read-only",
        ),
        (
            Mode::Command,
            "Proposed moves (1) · y accept all · s one · x reject",
        ),
    ] {
        let mut s = state(mode, drill());
        let mut better = s.incident.placement.clone();
        let e4 = s.incident.unit_idx("E4").unwrap();
        better.set(e4, s.incident.task_idx("T3"));
        s.proposal = Some(oddsboard::tui::board::Proposal::new(&s.incident, better));
        s.last_proposed = Some((9, Vec::new()));
        let head = oddsboard::tui::panel_units::lines(&s)[0].to_string();
        assert_eq!(head, expected, "{mode:?}");
    }
}

#[test]
fn counts_take_the_right_number() {
    use oddsboard::tui::format::count;
    assert_eq!(count(1, "move", "moves"), "1 move");
    assert_eq!(count(0, "move", "moves"), "0 moves");
    assert_eq!(count(2, "move", "moves"), "2 moves");
}

#[test]
fn the_picture_names_the_capability_and_the_margin_spread_apart() {
    // T3 (third on the board): E3 (engine, sd 250) and W1 (tender, sd 600),
    // one unit of each type, so the capability spread is √(250² + 600²) =
    // 650 (sum of independent normals); the need's own sd 200 adds in
    // quadrature: margin spread √(650² + 200²) ≈ 680.
    let mut s = state(Mode::Watch, drill());
    s.selected = 2;
    assert_eq!(
        s.selected_task().map(|t| s.incident.tasks[t].id.as_str()),
        Some("T3")
    );
    let text: String = oddsboard::tui::panel_picture::lines(&s, 200, 40)
        .iter()
        .map(|l| l.to_string() + "\n")
        .collect();
    assert!(
        text.contains("capability 3100 ± 650 · need 2500 ± 200 · margin spread ± 680"),
        "{text}"
    );
    assert!(
        text.contains("curve drawn with the margin spread"),
        "{text}"
    );
    // A certain need shows one spread only.
    s.selected = 0;
    let text: String = oddsboard::tui::panel_picture::lines(&s, 200, 40)
        .iter()
        .map(|l| l.to_string() + "\n")
        .collect();
    assert!(!text.contains("margin spread"), "{text}");
}

/// A unit the proposal takes off a task into reserve says why when the
/// plan holds the reserve exactly at its minimum (the same words as
/// `plan`), and says nothing more when the reserve is above it.
#[test]
fn a_move_into_reserve_names_the_reserve_minimum_on_the_board() {
    for (reserve_min, reason) in [(2, true), (1, false)] {
        let text = tui_common::DRILL.replace(
            "  started: 2026-05-14T09:20:00Z\n",
            &format!("  started: 2026-05-14T09:20:00Z\n  reserve_min: {reserve_min}\n"),
        );
        let inc = oddsboard::model::parse_incident_str(&text, "drill.yaml").unwrap();
        let mut s = state(Mode::Command, inc);
        let mut plan = s.incident.placement.clone();
        // Reserve now: E4 alone; W2 joins it.
        plan.set(s.incident.unit_idx("W2").unwrap(), None);
        s.proposal = Some(oddsboard::tui::board::Proposal::new(&s.incident, plan));
        let lines: Vec<String> = oddsboard::tui::panel_units::lines(&s)
            .iter()
            .map(|l| l.to_string())
            .collect();
        let row = lines
            .iter()
            .find(|l| l.contains("W2 T4 → reserve"))
            .unwrap_or_else(|| panic!("no W2 move: {lines:#?}"));
        assert_eq!(
            row.contains("(keeps the reserve at its minimum of 2)"),
            reason,
            "reserve_min {reserve_min}: {row}"
        );
    }
}

/// While improving, the status line shows the search's bound beside the
/// tier's worst under the best plan so far, and the work done; a report of
/// work alone leaves the proposal as it was. At a narrow width the work
/// count gives way first, then the bound.
#[test]
fn improving_shows_bound_and_work() {
    use oddsboard::model::Tier;
    use oddsboard::solver::relax::TierBound;
    use oddsboard::tui::panel_status::plan_words;
    let mut s = state(Mode::Command, drill());
    let mut better = s.incident.placement.clone();
    let e4 = s.incident.unit_idx("E4").unwrap();
    let t3 = s.incident.task_idx("T3").unwrap();
    better.set(e4, Some(t3));
    let bound = TierBound {
        tier: Tier::Stabilization,
        worst_odds: 0.01,
        upper_bound: Some(0.93),
    };
    update(
        &mut s,
        AppEvent::SolverProgress {
            generation: 0,
            placement: Some(better),
            elapsed: Duration::from_millis(400),
            iterations: 1200,
            bound: Some(bound.clone()),
        },
    );
    let moved = s.proposal.as_ref().map(|p| p.placement.clone());
    update(
        &mut s,
        AppEvent::SolverProgress {
            generation: 0,
            placement: None,
            elapsed: Duration::from_millis(900),
            iterations: 23_456,
            bound: Some(bound),
        },
    );
    assert_eq!(s.proposal.as_ref().map(|p| p.placement.clone()), moved);
    let words = plan_words(&s, 200);
    // The tier's worst is read from the proposal, not the stale 1 % the
    // bound was computed beside.
    let p = s.proposal.as_ref().unwrap();
    let t = s.incident.task_idx("T3").unwrap();
    let stab_worst = oddsboard::odds::text::pct_ln(p.odds[t.index()].ln_odds);
    assert_eq!(
        words,
        format!(
            "re-plan: improving… worst stabilization {stab_worst}, at most 93.0 % possible · 23 k moves · 0.9 s"
        )
    );
    let narrow = plan_words(&s, 60);
    assert!(narrow.chars().count() <= 60 || !narrow.contains("possible"));
    assert!(narrow.ends_with("0.9 s"), "{narrow}");
    assert!(!narrow.contains("moves"), "{narrow}");
}

/// Once settled, the bound follows the worst if accepted where the line has
/// room, and gives way where it has not.
#[test]
fn settled_bound_gives_way_on_a_short_line() {
    use oddsboard::model::Tier;
    use oddsboard::solver::relax::TierBound;
    use oddsboard::tui::panel_status::plan_words;
    let mut s = state(Mode::Command, drill());
    let placement = s.incident.placement.clone();
    update(
        &mut s,
        AppEvent::SolverFinished {
            generation: 0,
            result: Ok(PlanResult {
                placement,
                proven_optimal: false,
                elapsed: Duration::from_millis(5),
                bound: Some(TierBound {
                    tier: Tier::Life,
                    worst_odds: 0.5,
                    upper_bound: Some(0.75),
                }),
                settled: true,
            }),
        },
    );
    let wide = plan_words(&s, 200);
    assert!(
        wide.ends_with(" · worst life 50.0 %, at most 75.0 % possible"),
        "{wide}"
    );
    let narrow = plan_words(&s, 60);
    assert!(narrow.starts_with("re-plan: done · "), "{narrow}");
    assert!(!narrow.contains("possible"), "{narrow}");
}
