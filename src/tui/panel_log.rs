//! The recent log, newest first, under a sparkline of the worst open task's
//! odds after each record.

use ratatui::Frame;
use ratatui::layout::{Constraint, Layout, Rect};
use ratatui::text::{Line, Span};
use ratatui::widgets::{Block, Paragraph, Sparkline};

use super::app::AppState;
use super::format::fit;
use crate::odds::text::pct_ln;

/// Sparkline heights: the worst odds in percent (0–100), last `width` points.
pub fn spark_points(history: &[f64], width: usize) -> Vec<u64> {
    let start = history.len().saturating_sub(width);
    history[start..]
        .iter()
        .map(|p| (p.clamp(0.0, 1.0) * 100.0).round() as u64)
        .collect()
}

pub fn render(state: &AppState, frame: &mut Frame, area: Rect) {
    let th = &state.theme;
    let worst = state.worst_history.last().copied().unwrap_or(1.0);
    let block = Block::bordered().title(format!(
        " Log · worst odds now {} (scale 0–100 %) ",
        pct_ln(worst.ln())
    ));
    let inner = block.inner(area);
    frame.render_widget(block, area);
    // A sparkline of one point, or of nothing but zeros, draws blank rows:
    // the rows go to the list until there is a history to show.
    let history = &state.worst_history;
    let spark_h = if history.len() < 2 || history.iter().all(|p| *p <= 0.0) {
        0
    } else if inner.height >= 8 {
        2
    } else {
        1
    };
    let [spark_area, list_area] =
        Layout::vertical([Constraint::Length(spark_h), Constraint::Fill(1)]).areas(inner);
    let points = spark_points(&state.worst_history, spark_area.width as usize);
    frame.render_widget(
        Sparkline::default()
            .data(&points)
            .max(100)
            .style(th.accent()),
        spark_area,
    );
    let w = list_area.width as usize;
    let shown_lines = list_area.height as usize;
    // The actor whole (up to 12 cells): who wrote it matters at 3 a.m.
    let by_w = state
        .recent
        .iter()
        .rev()
        .take(shown_lines)
        .map(|l| super::format::shown(&l.by).chars().count())
        .max()
        .unwrap_or(2)
        .clamp(2, 12);
    let lines: Vec<Line> = state
        .recent
        .iter()
        .rev()
        .take(shown_lines)
        .map(|l| {
            let head = format!(
                "#{:<4} {} {:<by_w$} ",
                l.seq,
                l.at,
                fit(&super::format::shown(&l.by), by_w)
            );
            let rest = w.saturating_sub(head.chars().count());
            Line::from(vec![
                Span::styled(head, th.dim()),
                Span::raw(fit(&super::format::shown(&l.text), rest)),
            ])
        })
        .collect();
    frame.render_widget(Paragraph::new(super::format::clean_lines(lines)), list_area);
}
