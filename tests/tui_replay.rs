//! Replay navigation (jump by sequence number and by time, play at a speed)
//! and NO_COLOR: with colour off no cell carries a colour, and the board's
//! meaning (regime, tier, odds) is in words and symbols either way.

mod tui_common;

use oddsboard::log::Event;
use oddsboard::tui::app::{AppEvent, replay_seek, replay_state, replay_target};
use oddsboard::tui::{Mode, Theme, update};
use ratatui::crossterm::event::KeyCode;
use ratatui::style::Color;
use tui_common::{Bench, draw, drill};

fn log_with_notes(n: usize) -> Vec<oddsboard::log::Record> {
    let mut b = Bench::new(drill());
    for i in 0..n {
        b.writer
            .append(
                "ic",
                Event::Note {
                    text: format!("note {i}"),
                },
            )
            .unwrap();
    }
    b.records()
}

#[test]
fn jump_by_sequence_number_and_by_time() {
    let records = log_with_notes(5);
    let s = replay_state(records.clone(), Theme::monochrome()).unwrap();
    assert_eq!(replay_target(&s, "4"), Ok(3));
    assert!(
        replay_target(&s, "40")
            .unwrap_err()
            .contains("no record #40")
    );
    // The exact time of record #3: the last record at or before it.
    let t = records[2].at.to_rfc3339();
    let i = replay_target(&s, &t).unwrap();
    assert!(records[i].at <= records[2].at && i >= 2);
    assert!(replay_target(&s, "nonsense").is_err());
}

#[test]
fn play_advances_at_the_chosen_speed_and_stops_at_the_end() {
    let records = log_with_notes(8);
    let n = records.len();
    let mut s = replay_state(records, Theme::monochrome()).unwrap();
    update(&mut s, AppEvent::Key(KeyCode::Char(' ').into()));
    assert!(s.replay.as_ref().unwrap().playing);
    // Default speed 2 records a second; a tick is 200 ms: 5 ticks = 2 records.
    for _ in 0..5 {
        update(&mut s, AppEvent::Tick);
    }
    assert_eq!(s.replay.as_ref().unwrap().at, 2);
    for _ in 0..200 {
        update(&mut s, AppEvent::Tick);
    }
    let c = s.replay.as_ref().unwrap();
    assert_eq!(c.at, n - 1);
    assert!(!c.playing, "play stops at the last record");
    // Back to the start.
    replay_seek(&mut s, 0);
    assert_eq!(s.replay.as_ref().unwrap().at, 0);
}

#[test]
fn no_color_means_no_colour_and_the_words_are_there_anyway() {
    let inc = tui_common::drill();
    let plain = oddsboard::tui::AppState::new(Mode::Watch, inc.clone(), Theme { color: false });
    let backend = draw(&plain, 140, 45);
    let buf = backend.buffer();
    for cell in buf.content() {
        assert_eq!(cell.fg, Color::Reset, "a coloured cell with NO_COLOR");
        assert_eq!(cell.bg, Color::Reset, "a coloured cell with NO_COLOR");
    }
    let coloured = oddsboard::tui::AppState::new(Mode::Watch, inc, Theme { color: true });
    let text_plain = format!("{}", draw(&plain, 140, 45));
    let text_coloured = format!("{}", draw(&coloured, 140, 45));
    assert_eq!(
        text_plain, text_coloured,
        "colour adds nothing the text lacks"
    );
    assert!(text_plain.contains("≡ hedge") && text_plain.contains("LIFE SAFETY"));
}

/// The parts of a dashboard state that come from the records.
fn assert_same_reading(
    a: &oddsboard::tui::app::AppState,
    b: &oddsboard::tui::app::AppState,
    at: usize,
) {
    assert_eq!(a.incident, b.incident, "incident at {at}");
    assert_eq!(a.ground, b.ground, "ground at {at}");
    assert_eq!(a.proposal, b.proposal, "proposal at {at}");
    assert_eq!(a.recent, b.recent, "recent log at {at}");
    assert_eq!(a.worst_history, b.worst_history, "worst history at {at}");
    assert_eq!(a.lost, b.lost, "lost units at {at}");
    assert_eq!(a.closed, b.closed, "closed tasks at {at}");
    assert_eq!(a.last_proposed, b.last_proposed, "last proposal at {at}");
    assert_eq!(a.done_since, b.done_since, "done since at {at}");
    assert_eq!(a.flash, b.flash, "flash at {at}");
}

#[test]
fn jumping_with_checkpoints_equals_a_full_fold() {
    use oddsboard::tui::app::CHECKPOINT_EVERY;
    // An invented, seeded log long enough for several checkpoints.
    let start = chrono::DateTime::parse_from_rfc3339("2026-05-14T09:20:00Z")
        .unwrap()
        .with_timezone(&chrono::Utc);
    let (records, _) =
        oddsboard::log::generate::generate_log(&drill(), 5 * CHECKPOINT_EVERY, 11, start);
    assert!(records.len() > 3 * CHECKPOINT_EVERY, "{}", records.len());
    let last = records.len() - 1;
    let mut s = replay_state(records.clone(), Theme::monochrome()).unwrap();
    // Forward and backward, across and onto checkpoint boundaries.
    let k = CHECKPOINT_EVERY;
    for target in [
        3 * k + 5,
        k + 1,
        k,
        k - 1,
        2 * k,
        last,
        1,
        2 * k - 1,
        0,
        3 * k,
        last - 1,
        4 * k + 7,
    ] {
        replay_seek(&mut s, target);
        assert_eq!(s.replay.as_ref().unwrap().at, target);
        // The reference folds every record from the snapshot on, through
        // the dashboard's own record path and through log::fold.
        let full = oddsboard::cli::dash::state_from_records(
            Mode::Replay,
            &records[..=target],
            Theme::monochrome(),
        )
        .unwrap();
        assert_same_reading(&s, &full, target);
        assert_eq!(
            s.incident,
            oddsboard::log::fold(&records[..=target]).unwrap(),
            "log::fold at {target}"
        );
    }
    // Single steps back over a checkpoint, by key.
    replay_seek(&mut s, 2 * k + 1);
    for _ in 0..3 {
        let _ = update(&mut s, AppEvent::Key(KeyCode::Left.into()));
    }
    let at = s.replay.as_ref().unwrap().at;
    assert_eq!(at, 2 * k - 2);
    let full = oddsboard::cli::dash::state_from_records(
        Mode::Replay,
        &records[..=at],
        Theme::monochrome(),
    )
    .unwrap();
    assert_same_reading(&s, &full, at);
}

#[test]
fn a_resumed_log_starts_from_the_writers_snapshot_state() {
    let mut b = Bench::new(drill());
    b.writer
        .append(
            "ic",
            Event::Moved {
                unit: "E4".into(),
                to: Some("T4".into()),
            },
        )
        .unwrap();
    let records = b.records();
    let mut w = oddsboard::log::LogWriter::open(&b.path).unwrap();
    let first = w.take_first_state().expect("the snapshot's state");
    // What a reader rebuilds from the snapshot record alone.
    assert_eq!(first, oddsboard::log::fold(&records[..1]).unwrap());
    assert_ne!(&first, w.state(), "the move is not in the snapshot");
    assert!(w.take_first_state().is_none(), "given once");
    // The dashboard built from it equals one built by folding the log.
    let resumed =
        oddsboard::cli::dash::state_from(Mode::Command, first, &records, Theme::monochrome());
    let folded =
        oddsboard::cli::dash::state_from_records(Mode::Command, &records, Theme::monochrome())
            .unwrap();
    assert_same_reading(&resumed, &folded, records.len() - 1);
}
