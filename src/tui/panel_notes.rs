//! Operator safety notes: contextual notes where they matter (SPEC §8) and,
//! always visible at the bottom, the standing caution. After the contextual
//! notes come the most urgent notes of the advice module (single points of
//! failure, resource requests), computed in the background and marked
//! "advice" in words, not by colour alone.

use ratatui::Frame;
use ratatui::layout::{Constraint, Layout, Rect};
use ratatui::style::Style;
use ratatui::text::Line;
use ratatui::widgets::{Block, Clear, Paragraph, Wrap};

use super::app::{AdviceStatus, AppState};
use super::format::keep_percent;
use crate::advise::NoteLevel;
use crate::model::Tier;
use crate::odds::text::{pct, pct_ln};
use crate::odds::{ForcedZero, Regime};
use crate::safety::{self, When};

/// Contextual notes, most urgent first.
pub fn contextual(state: &AppState) -> Vec<String> {
    let inc = &state.incident;
    let mut notes = Vec::new();
    for lost in state.lost.iter().rev().take(3) {
        notes.push(safety::unit_lost(
            &lost.unit,
            lost.from_task.as_deref(),
            &lost.reason,
        ));
    }
    for o in &state.ground {
        let task = &inc.tasks[o.task_idx];
        if !task.is_open() {
            continue;
        }
        if task.tier == Tier::Life && o.regime() == Some(Regime::Gamble) {
            notes.push(safety::life_gamble(&task.id, When::Now, ""));
        }
    }
    if let Some(p) = &state.proposal {
        let mut by_task: Vec<(oddsboard_core::model::TaskIdx, Vec<String>)> = Vec::new();
        for m in &p.moves {
            if let Some(from) = m.from {
                let id = inc.units[m.unit].id.clone();
                match by_task.iter_mut().find(|(t, _)| *t == from) {
                    Some((_, v)) => v.push(id),
                    None => by_task.push((from, vec![id])),
                }
            }
        }
        for (t, units) in by_task {
            let units: Vec<&str> = units.iter().map(String::as_str).collect();
            notes.push(format!(
                "Proposal: {}",
                safety::withdrawal(&units, &inc.tasks[t].id)
            ));
        }
    }
    for o in &state.ground {
        let task = &inc.tasks[o.task_idx];
        if task.is_open() && o.forced_zero == Some(ForcedZero::BelowMinimum) {
            notes.push(safety::below_minimum(
                &task.id,
                Some((o.units.len(), task.min_units.unwrap_or_default())),
            ));
        }
    }
    for o in &state.ground {
        let task = &inc.tasks[o.task_idx];
        let secure = inc.secure.get(task.tier);
        if task.is_open()
            && task.tier == Tier::Life
            && o.regime() == Some(Regime::Hedge)
            && o.odds() < secure
        {
            notes.push(safety::life_below_secure(
                &task.id,
                &pct_ln(o.ln_odds),
                &pct(secure),
                When::Now,
                "",
            ));
        }
    }
    notes
}

/// The advice lines shown after the contextual notes: each marked as
/// advice with its level in words, or one line saying where the advice
/// stands when there is none to show.
pub fn advice_lines(state: &AppState) -> Vec<(NoteLevel, String)> {
    let mut lines: Vec<(NoteLevel, String)> = state
        .advice
        .iter()
        .map(|n| {
            (
                n.level,
                format!("» advice, {}: {}", n.level.as_str(), n.text),
            )
        })
        .collect();
    let status = match &state.advice_status {
        AdviceStatus::Off | AdviceStatus::Ready => None,
        AdviceStatus::Computing if lines.is_empty() => Some("advice: computing…".to_string()),
        AdviceStatus::Computing => Some("advice: updating…".to_string()),
        AdviceStatus::Failed(e) => Some(format!("advice: not available ({e})")),
    };
    if let Some(s) = status {
        lines.push((NoteLevel::Info, s));
    }
    lines
}

/// The caution for a panel `width` cells wide (inside the border).
fn caution(width: u16) -> &'static str {
    if width >= 56 {
        safety::CAUTION_SCREEN
    } else {
        safety::CAUTION_SHORT
    }
}

/// Rows `s` takes when wrapped at word boundaries to `width` cells (as the
/// panel's `Wrap` does; a word longer than the row is cut across rows).
fn wrapped_rows(s: &str, width: usize) -> usize {
    let mut rows = 1;
    let mut used = 0;
    for word in s.split(' ') {
        let n = word.chars().count();
        let need = if used == 0 { n } else { used + 1 + n };
        if need <= width {
            used = need;
        } else {
            rows += usize::from(used > 0);
            rows += n.saturating_sub(1) / width;
            // The last row of the word: full when it ends on the edge.
            used = match n % width {
                0 if n > 0 => width,
                r => r,
            };
        }
    }
    rows
}

/// Rows (borders included) the panel takes at `width` (outside the
/// border) when it may have up to `room`: every note and advice line
/// wrapped, and the caution; when they do not all fit, the whole notes
/// that do and the line counting the rest (the rows a note too long for
/// what is left would have had go back to the panel below).
pub fn rows_within(state: &AppState, width: u16, room: u16) -> u16 {
    let inner = width.saturating_sub(2).max(1) as usize;
    let caution_rows = wrapped_rows(caution(width.saturating_sub(2)), inner);
    // The same lines the panel draws, so the count matches what is shown.
    let lines = note_lines(state);
    let count = |lines: &[Line]| -> usize {
        lines
            .iter()
            .map(|l| wrapped_rows(&l.to_string(), inner))
            .sum()
    };
    let mut rows = count(&lines);
    let frame = caution_rows + 2;
    if rows + frame > room as usize {
        let fit = whole_notes(
            lines,
            inner,
            (room as usize).saturating_sub(frame),
            Style::default(),
        );
        rows = count(&fit);
    }
    (rows + frame).min(u16::MAX as usize) as u16
}

/// Every note and advice line as the panel shows it, most urgent first,
/// control characters escaped.
fn note_lines(state: &AppState) -> Vec<Line<'static>> {
    let th = &state.theme;
    let notes = contextual(state);
    let advice = advice_lines(state);
    let mut lines: Vec<Line> = if notes.is_empty() {
        vec![Line::styled("No contextual notes.", th.dim())]
    } else {
        notes
            .into_iter()
            .map(|n| Line::styled(format!("! {}", keep_percent(&n)), th.warning()))
            .collect()
    };
    lines.extend(advice.into_iter().map(|(level, text)| {
        let style = if text.starts_with('»') && level != NoteLevel::Info {
            th.warning()
        } else {
            th.dim()
        };
        Line::styled(keep_percent(&text), style)
    }));
    super::format::clean_lines(lines)
}

/// Every note in full over the board (key N), for when the panel hides
/// some, scrolled down `scroll` rows when taller than the screen; the
/// caution stays at the bottom, as in the panel.
pub fn render_all(state: &AppState, frame: &mut Frame, area: Rect, scroll: u16) {
    let th = &state.theme;
    let w = 100.min(area.width);
    let inner_w = w.saturating_sub(2).max(1) as usize;
    let lines = note_lines(state);
    let rows: usize = lines
        .iter()
        .map(|l| wrapped_rows(&l.to_string(), inner_w))
        .sum();
    let caution_rows = wrapped_rows(safety::CAUTION_SCREEN, inner_w);
    let h = (rows + caution_rows + 4).min(area.height as usize) as u16;
    let popup = area.centered(Constraint::Length(w), Constraint::Length(h));
    let block = Block::bordered().title(" Safety notes, all ");
    let inner = block.inner(popup);
    let [notes_area, caution_area, hint_area] = Layout::vertical([
        Constraint::Fill(1),
        Constraint::Length(caution_rows.min(u16::MAX as usize) as u16),
        Constraint::Length(1),
    ])
    .areas(inner);
    let max_scroll = rows.saturating_sub(notes_area.height as usize);
    let scroll = (scroll as usize).min(max_scroll);
    let hint = if max_scroll > 0 {
        format!(
            "rows {}–{} of {rows} · ↑↓ PgUp PgDn scroll · Esc or N closes",
            scroll + 1,
            scroll + notes_area.height as usize
        )
    } else {
        "Esc or N closes this list".to_string()
    };
    frame.render_widget(Clear, popup);
    frame.render_widget(block, popup);
    frame.render_widget(
        Paragraph::new(lines)
            .wrap(Wrap { trim: true })
            .scroll((scroll.min(u16::MAX as usize) as u16, 0)),
        notes_area,
    );
    frame.render_widget(
        Paragraph::new(Line::styled(safety::CAUTION_SCREEN, th.dim())).wrap(Wrap { trim: true }),
        caution_area,
    );
    frame.render_widget(Paragraph::new(Line::styled(hint, th.dim())), hint_area);
}

pub fn render(state: &AppState, frame: &mut Frame, area: Rect) {
    let th = &state.theme;
    let notes = contextual(state);
    let title = if notes.is_empty() {
        " Safety notes ".to_string()
    } else {
        format!(" Safety notes ({}, most urgent first) ", notes.len())
    };
    let block = Block::bordered().title(title);
    let inner = block.inner(area);
    frame.render_widget(block, area);
    // The caution keeps its rows whatever the height.
    let caution = caution(inner.width);
    let caution_rows =
        wrapped_rows(caution, inner.width.max(1) as usize).min(u16::MAX as usize) as u16;
    let [notes_area, caution_area] =
        Layout::vertical([Constraint::Fill(1), Constraint::Length(caution_rows)]).areas(inner);
    let lines = whole_notes(
        note_lines(state),
        notes_area.width as usize,
        notes_area.height as usize,
        th.warning(),
    );
    frame.render_widget(Paragraph::new(lines).wrap(Wrap { trim: true }), notes_area);
    frame.render_widget(
        Paragraph::new(Line::styled(caution, th.dim())).wrap(Wrap { trim: true }),
        caution_area,
    );
}

/// The notes that fit whole in `rows` rows of `width` cells, most urgent
/// first; when some do not, the last row says how many are hidden and how
/// to list them, so no note is ever cut mid-sentence.
fn whole_notes(
    lines: Vec<Line<'_>>,
    width: usize,
    rows: usize,
    more_style: Style,
) -> Vec<Line<'_>> {
    let width = width.max(1);
    let need: Vec<usize> = lines
        .iter()
        .map(|l| wrapped_rows(&l.to_string(), width))
        .collect();
    if need.iter().sum::<usize>() <= rows {
        return lines;
    }
    let mut used = 0;
    let mut keep = 0;
    for n in &need {
        if used + n + 1 > rows {
            break;
        }
        used += n;
        keep += 1;
    }
    // Hidden contextual notes ("! …") and advice notes ("» …") counted
    // apart; a hidden status line ("advice: updating…") is neither.
    let hidden = |prefix: &str| {
        lines[keep..]
            .iter()
            .filter(|l| l.to_string().starts_with(prefix))
            .count()
    };
    let (notes, advice) = (hidden("! "), hidden("» "));
    let mut out: Vec<Line> = lines.into_iter().take(keep).collect();
    let what = match (notes, advice) {
        (0, 0) => "advice status".to_string(),
        (n, 0) => super::format::count(n, "more note", "more notes"),
        (0, a) => format!("{a} more advice"),
        (n, a) => format!("{n} note{}, {a} advice", if n == 1 { "" } else { "s" }),
    };
    let mut more = format!("+{what} · N lists all");
    if more.chars().count() > width {
        more = format!("+{what} · N: all");
    }
    out.push(Line::styled(super::format::fit(&more, width), more_style));
    out
}

#[cfg(test)]
mod tests {
    use super::{whole_notes, wrapped_rows};
    use ratatui::style::Style;
    use ratatui::text::Line;

    // Laid out by hand at 40 cells: the first note takes 2 rows, the
    // others 1; in 3 rows the first stays whole and the last row counts
    // the hidden note and advice.
    #[test]
    fn notes_shown_whole_or_counted() {
        let first = format!("! {}", ["word"; 12].join(" "));
        let lines = || {
            vec![
                Line::raw(first.clone()),
                Line::raw("! short"),
                Line::raw("» advice, info: also short"),
            ]
        };
        let s = |v: Vec<Line>| v.iter().map(|l| l.to_string()).collect::<Vec<_>>();
        assert_eq!(s(whole_notes(lines(), 40, 4, Style::default())), s(lines()));
        assert_eq!(
            s(whole_notes(lines(), 40, 3, Style::default())),
            [first.clone(), "+1 note, 1 advice · N lists all".to_string()]
        );
        assert_eq!(
            s(whole_notes(lines(), 40, 2, Style::default())),
            ["+2 notes, 1 advice · N lists all"]
        );
    }

    // Counted by hand: greedy word wrap as ratatui's `Wrap` lays it out.
    #[test]
    fn rows_of_wrapped_text() {
        assert_eq!(wrapped_rows("aaa bbb ccc", 7), 2); // "aaa bbb" / "ccc"
        assert_eq!(wrapped_rows("aaa bbb ccc", 3), 3);
        assert_eq!(wrapped_rows("abcdefgh", 3), 3); // "abc" / "def" / "gh"
        assert_eq!(wrapped_rows("abcdef x", 3), 3); // "abc" / "def" / "x"
        assert_eq!(wrapped_rows("", 10), 1);
    }
}
