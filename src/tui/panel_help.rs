//! The help overlay: every key of the current mode.

use ratatui::Frame;
use ratatui::layout::{Constraint, Rect};
use ratatui::text::Line;
use ratatui::widgets::{Block, Clear, Paragraph};

use super::app::{AppState, Mode};

/// Key, what it does.
pub fn keys(mode: Mode) -> Vec<(&'static str, &'static str)> {
    let mut k = vec![
        ("↑ ↓  j k", "select a task"),
        ("Home End", "first / last task"),
        ("PgUp PgDn", "scroll the unit list"),
    ];
    match mode {
        Mode::Command => k.extend([
            ("y", "accept the whole proposal (written as plan_accepted)"),
            ("s", "accept a single proposed move"),
            ("x", "reject the proposal"),
            ("l", "mark a unit lost, with a reason"),
            ("a", "add a unit (id, type, optional rating)"),
            ("o", "open a new task (id, label, tier, needs, limits)"),
            ("r", "re-rate a unit's trait (mean, sd)"),
            ("f", "record a field reading (measured value, sd)"),
            ("n", "change a need of the selected task"),
            ("c", "close the selected task with its outcome"),
            ("p", "pin a unit to a task, or unpin it"),
            ("m", "move a unit by hand (task or reserve)"),
            ("t", "add a note to the log"),
            ("u", "undo your last action (a compensating record)"),
        ]),
        Mode::Watch => k.push(("", "read-only: follows records others append")),
        Mode::Replay => k.extend([
            ("← →", "one record back / forward"),
            ("< >", "first / last record (or Shift-Home / Shift-End)"),
            ("g", "go to a sequence number or a time (HH:MM or RFC 3339)"),
            ("space", "play / pause"),
            ("+ -", "play faster / slower"),
        ]),
    }
    k.extend([
        (
            "Esc",
            "close a form or this help (any key above works from here)",
        ),
        ("?", "this help"),
        ("N", "every safety note in full (when the panel hides some)"),
        ("q  Ctrl-C", "quit (everything is already in the log)"),
    ]);
    k
}

pub fn render(state: &AppState, frame: &mut Frame, area: Rect) {
    let keys = keys(state.mode);
    let h = (keys.len() as u16 + 4).min(area.height);
    let w = 78.min(area.width);
    let popup = area.centered(Constraint::Length(w), Constraint::Length(h));
    let mut lines: Vec<Line> = keys
        .into_iter()
        .map(|(k, d)| Line::raw(format!(" {k:<11} {d}")))
        .collect();
    lines.push(Line::raw(""));
    lines.push(Line::styled(
        " Esc or ? closes this help",
        state.theme.dim(),
    ));
    frame.render_widget(Clear, popup);
    frame.render_widget(
        Paragraph::new(lines).block(Block::bordered().title(" Keys ")),
        popup,
    );
}
