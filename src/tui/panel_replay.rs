//! The trainer's panel in replay mode: where the replay stands, the record
//! just applied, what was recommended beside what was done since, and how
//! closed tasks turned out against their odds at closing.

use ratatui::Frame;
use ratatui::layout::Rect;
use ratatui::text::Line;
use ratatui::widgets::{Block, Paragraph, Wrap};

use super::app::AppState;
use crate::odds::text::pct_ln;

pub fn lines(state: &AppState) -> Vec<Line<'static>> {
    let th = &state.theme;
    let mut out = Vec::new();
    let Some(c) = &state.replay else {
        return out;
    };
    let rec = &c.records[c.at];
    let play = if c.playing {
        format!("▶ playing ×{} rec/s", c.speed)
    } else {
        format!("❚❚ paused (speed {} rec/s)", c.speed)
    };
    out.push(Line::styled(
        format!(
            "record #{} of {} · {} UTC · {play}",
            rec.seq,
            c.records.len(),
            rec.at.format("%Y-%m-%d %H:%M:%S")
        ),
        th.heading(),
    ));
    out.push(Line::raw(format!(
        "by {}: {}",
        rec.by,
        rec.event.describe()
    )));
    out.push(Line::raw(""));
    match &state.last_proposed {
        Some((seq, moves)) => {
            let list: Vec<String> = moves.iter().map(|m| m.to_string()).collect();
            out.push(Line::styled(
                format!("Recommended at #{seq}:"),
                th.heading(),
            ));
            out.push(Line::raw(format!("  {}", list.join(", "))));
            out.push(Line::styled("Done since:", th.heading()));
            if state.done_since.is_empty() {
                out.push(Line::raw("  nothing yet"));
            }
            for d in &state.done_since {
                out.push(Line::raw(format!("  {d}")));
            }
        }
        None => out.push(Line::styled("No recommendation in the log yet.", th.dim())),
    }
    if !state.closed.is_empty() {
        out.push(Line::styled(
            "Closed tasks (odds at closing):",
            th.heading(),
        ));
        for (task, outcome, p) in &state.closed {
            out.push(Line::raw(format!(
                "  {task}: {outcome} · odds were {}",
                pct_ln(p.ln())
            )));
        }
    }
    out
}

pub fn render(state: &AppState, frame: &mut Frame, area: Rect) {
    frame.render_widget(
        Paragraph::new(super::format::clean_lines(lines(state)))
            .block(Block::bordered().title(" Replay · recommended vs done "))
            .wrap(Wrap { trim: false }),
        area,
    );
}
