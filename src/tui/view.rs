//! `render`: the whole screen as a pure function of [`AppState`]. Picks a
//! layout for the terminal's size (100×30 up to 200×60 and beyond) or, when
//! the terminal is too small, a plain message instead of a garbled board.

use ratatui::Frame;
use ratatui::layout::{Constraint, Layout, Rect};
use ratatui::text::Line;
use ratatui::widgets::{Paragraph, Wrap};

use super::app::{AppState, Overlay};
use super::{
    panel_help, panel_log, panel_notes, panel_picture, panel_replay, panel_status, panel_tasks,
    panel_units,
};

/// Smallest terminal the board is drawn in.
pub const MIN_WIDTH: u16 = 100;
pub const MIN_HEIGHT: u16 = 30;

/// Draws the state. Never mutates it.
pub fn render(state: &AppState, frame: &mut Frame) {
    let area = frame.area();
    if area.width < MIN_WIDTH || area.height < MIN_HEIGHT {
        render_too_small(state, frame, area);
        return;
    }
    let [header, body, status] = Layout::vertical([
        Constraint::Length(1),
        Constraint::Fill(1),
        Constraint::Length(1),
    ])
    .areas(area);
    panel_status::render_header(state, frame, header);
    panel_status::render_status(state, frame, status);

    // The task board is as wide as its rows want (labels whole), within a
    // share of the screen that leaves the right column room for the
    // picture and the notes.
    let max_pct: u16 = match area.width {
        0..130 => 68,
        130..180 => 64,
        _ => 60,
    };
    let wanted = (panel_tasks::wanted_width(state) + 2).min(u16::MAX as usize) as u16;
    let left_w = wanted.clamp(area.width / 2, area.width * max_pct / 100);
    let [left, right] =
        Layout::horizontal([Constraint::Length(left_w), Constraint::Fill(1)]).areas(body);
    // The task board takes what it needs (up to two thirds), the units the rest.
    let board_lines = panel_tasks::lines(state, left.width.saturating_sub(2) as usize)
        .0
        .len() as u16;
    let tasks_h = (board_lines + 2).clamp(8, left.height * 2 / 3);
    let [tasks, units] =
        Layout::vertical([Constraint::Length(tasks_h), Constraint::Fill(1)]).areas(left);
    panel_tasks::render(state, frame, tasks);
    panel_units::render(state, frame, units);

    // The safety notes come before the log and the trainer's panel: these
    // keep a minimum, the notes take what their text needs of the rest.
    let (picture_h, log_min) = match body.height {
        0..36 if state.replay.is_some() => (8, 8),
        _ if state.replay.is_some() && body.height < 45 => (11, 12),
        // The log keeps three rows inside its border: life-safety notes
        // outrank log history.
        0..36 => (8, 5),
        36..50 => (14, 5),
        _ => (20, 5),
    };
    // The notes take the rows their text needs (up to what leaves the log
    // its minimum), the log the rest.
    let notes_room = body.height.saturating_sub(picture_h + log_min);
    let notes_h = panel_notes::rows_within(state, right.width, notes_room)
        .clamp(6.min(notes_room), notes_room);
    let [picture, notes, log] = Layout::vertical([
        Constraint::Length(picture_h),
        Constraint::Length(notes_h),
        Constraint::Fill(1),
    ])
    .areas(right);
    panel_picture::render(state, frame, picture);
    panel_notes::render(state, frame, notes);
    if state.replay.is_some() {
        panel_replay::render(state, frame, log);
    } else {
        panel_log::render(state, frame, log);
    }

    match &state.overlay {
        Overlay::Help => panel_help::render(state, frame, area),
        Overlay::Notes(scroll) => panel_notes::render_all(state, frame, area, *scroll),
        Overlay::Form(form) => super::form::render(form, &state.theme, frame, area),
        Overlay::None => {}
    }
}

fn render_too_small(state: &AppState, frame: &mut Frame, area: Rect) {
    let text = vec![
        Line::styled("oddsboard: terminal too small", state.theme.heading()),
        Line::raw(format!(
            "This terminal is {}×{}; the board needs at least {MIN_WIDTH}×{MIN_HEIGHT}.",
            area.width, area.height
        )),
        Line::raw("Enlarge the window or use a smaller font."),
        Line::raw("Nothing is lost: every action is in the log. q quits."),
    ];
    frame.render_widget(Paragraph::new(text).wrap(Wrap { trim: true }), area);
}
