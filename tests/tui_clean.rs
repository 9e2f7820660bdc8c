//! Nothing from outside reaches the screen raw: text with control
//! characters (C0, DEL, C1 — Unicode category Cc, the sets of ISO/IEC 6429)
//! in an incident's name and labels, in notes, loss reasons and actors of
//! log records is drawn escaped (`\u{1b}`), in every panel, at every size.
//! (ratatui itself drops control characters from its buffer; the tests
//! check that the text is shown escaped rather than silently altered.)

#[path = "log_fixtures/common.rs"]
mod common;
mod tui_common;

use chrono::TimeZone;
use common::yaml_quoted;
use oddsboard::log::{Event, Record};
use oddsboard::tui::app::{AppEvent, update};
use oddsboard::tui::{AppState, Mode};
use proptest::prelude::*;
use ratatui::backend::TestBackend;
use ratatui::crossterm::event::{KeyCode, KeyEvent};
use tui_common::{DRILL, draw, state};

/// Text that mixes printable characters with every kind of control
/// character, including the escape introducers ESC, CSI (U+009B) and
/// OSC (U+009D) and BEL, the terminator of an OSC title sequence.
fn dirty() -> impl Strategy<Value = String> {
    let pieces = prop_oneof![
        Just("\u{1b}]0;pwned\u{7}".to_string()),
        Just("\u{1b}[2J".to_string()),
        Just("\u{9b}31m".to_string()),
        Just("\u{9d}2;x\u{9c}".to_string()),
        Just("\r\n\t\u{8}\u{7f}\u{0}".to_string()),
        (0u32..0x20).prop_map(|c| char::from_u32(c).unwrap_or('?').to_string()),
        (0x7fu32..0xa0).prop_map(|c| char::from_u32(c).unwrap_or('?').to_string()),
        "[a-z ]{0,6}",
    ];
    proptest::collection::vec(pieces, 1..6).prop_map(|v| v.concat())
}

/// The drill with dirty text in the incident name, a trait's label and
/// unit, and two task labels.
fn dirty_drill(a: &str, b: &str) -> oddsboard::model::Incident {
    let text = DRILL
        .replace(
            "name: Invented drill - harbour warehouse fire",
            &format!("name: {}", yaml_quoted(&format!("Invented {a}"))),
        )
        .replace(
            "label: Interior search, east wing",
            &format!("label: {}", yaml_quoted(b)),
        )
        .replace(
            "label: Collapse shoring, loading dock",
            &format!("label: {}", yaml_quoted(a)),
        )
        .replace(
            "label: Pumper engine",
            &format!("label: {}", yaml_quoted(b)),
        )
        .replace(
            "{ id: water, label: Water delivery, unit: L/min }",
            &format!(
                "{{ id: water, label: {}, unit: {} }}",
                yaml_quoted(b),
                yaml_quoted(a)
            ),
        );
    oddsboard::model::parse_incident_str(&text, "dirty.yaml")
        .unwrap_or_else(|e| panic!("{e}\n{text}"))
}

fn record(seq: u64, by: &str, event: Event) -> Record {
    Record {
        seq,
        at: chrono::Utc
            .with_ymd_and_hms(2026, 5, 14, 9, 30, 0)
            .single()
            .expect("valid time"),
        by: by.to_string(),
        event,
    }
}

/// Every cell of the buffer, and the cells that hold a control character.
fn control_cells(b: &TestBackend) -> Vec<(u16, u16, String)> {
    let buf = b.buffer();
    let mut bad = Vec::new();
    for y in 0..buf.area.height {
        for x in 0..buf.area.width {
            let sym = buf[(x, y)].symbol();
            if sym.chars().any(char::is_control) {
                bad.push((x, y, sym.escape_debug().to_string()));
            }
        }
    }
    bad
}

fn text_of(b: &TestBackend) -> String {
    let buf = b.buffer();
    (0..buf.area.height)
        .map(|y| {
            (0..buf.area.width)
                .map(|x| buf[(x, y)].symbol())
                .collect::<String>()
        })
        .collect::<Vec<_>>()
        .join("\n")
}

fn feed(s: &mut AppState, a: &str, b: &str) {
    let events = [
        record(
            2,
            a,
            Event::Note {
                text: b.to_string(),
            },
        ),
        record(
            3,
            b,
            Event::UnitLost {
                unit: "W2".into(),
                reason: Some(a.to_string()),
            },
        ),
        record(
            4,
            "feed",
            Event::Note {
                text: a.to_string(),
            },
        ),
    ];
    for r in events {
        update(s, AppEvent::RecordAppended(r));
    }
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(24))]

    #[test]
    fn no_control_character_reaches_the_screen(a in dirty(), b in dirty()) {
        for mode in [Mode::Command, Mode::Watch] {
            let mut s = state(mode, dirty_drill(&a, &b));
            feed(&mut s, &a, &b);
            for (w, h) in [(100, 30), (140, 45), (200, 60)] {
                let bad = control_cells(&draw(&s, w, h));
                prop_assert!(bad.is_empty(), "{mode:?} {w}×{h}: {bad:?}");
            }
            // ratatui drops control characters from its buffer on its own;
            // what matters is that the text is shown, escaped, not silently
            // changed: the newest note (`a`) in the log panel and the
            // selected task's label (`b`) on the board and in the picture.
            let screen = text_of(&draw(&s, 200, 60));
            let escaped = |t: &str| -> String { oddsboard::clean::clean(t).chars().take(12).collect() };
            let note_row = screen.lines().find(|r| r.contains("#4    09:30:00")).unwrap_or("");
            prop_assert!(
                note_row.contains(&format!("note: {}", escaped(&a))),
                "{mode:?}: the note is not shown escaped: {note_row}"
            );
            let board_row = screen.lines().find(|r| r.contains("▸ T1 ")).unwrap_or("");
            prop_assert!(
                board_row.contains(&escaped(&b)),
                "{mode:?}: the label is not shown escaped: {board_row}"
            );
            // The help overlay, and forms whose pickers list labels.
            update(&mut s, AppEvent::Key(KeyEvent::from(KeyCode::Char('?'))));
            prop_assert!(control_cells(&draw(&s, 140, 45)).is_empty());
            for key in ['a', 'n', 'r'] {
                update(&mut s, AppEvent::Key(KeyEvent::from(KeyCode::Esc)));
                update(&mut s, AppEvent::Key(KeyEvent::from(KeyCode::Char(key))));
                update(&mut s, AppEvent::Key(KeyEvent::from(KeyCode::Tab)));
                prop_assert!(control_cells(&draw(&s, 140, 45)).is_empty(), "form {key}");
            }
        }
    }
}

/// The latest note is in the log panel with its escape written out, and
/// the screen does not hold the raw sequence (so no title is set).
#[test]
fn a_note_with_escape_sequences_shows_escaped() {
    let mut s = state(Mode::Watch, tui_common::drill());
    update(
        &mut s,
        AppEvent::RecordAppended(record(
            2,
            "feed",
            Event::Note {
                text: "ok \u{1b}]0;x\u{7} then \u{1b}[2J".into(),
            },
        )),
    );
    let b = draw(&s, 140, 45);
    let text: String = b
        .buffer()
        .content()
        .iter()
        .map(|c| c.symbol())
        .collect::<String>();
    assert!(text.contains("ok \\u{1b}]0;x\\u{7} then"), "{b}");
    assert!(control_cells(&b).is_empty());
}
