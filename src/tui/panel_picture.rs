//! The selected task's picture: the capability distribution of its binding
//! trait drawn against the need. Columns at or above the need are solid, the
//! rest light, so the solid share of the curve is the trait's odds — the
//! odds made visible. A one-line reading says what the shape means.
//!
//! Two spreads have two names, on screen as in `odds --json`: the
//! *capability spread* (the units' sd, JSON `sd`) and the *margin spread*
//! (the sd of capability − need, the need's own sd folded in, JSON
//! `margin_sd`). The curve is drawn with the margin spread, i.e.
//! `Normal(mean, margin_sd²)`, so that the solid area is exactly
//! `Φ((mean − need)/margin_sd)`; the two are the same when the need is
//! certain.

use ratatui::Frame;
use ratatui::layout::Rect;
use ratatui::text::{Line, Span};
use ratatui::widgets::{Block, Paragraph};

use super::app::AppState;
use super::board::tier_heading;
use super::format::{amount, shown, signed_amount, z_value};
use crate::odds::text::{Detail, odds_text, pct_ln};
use crate::odds::{ForcedZero, Regime, TraitOdds};

const SOLID: [char; 9] = [' ', '▁', '▂', '▃', '▄', '▅', '▆', '▇', '█'];

/// Chart rows (top first) of `width` columns and `height` rows, plus the
/// axis and label rows.
pub fn chart(b: &TraitOdds, width: usize, height: usize) -> Vec<String> {
    let width = width.max(10);
    let (mean, sd, need) = (b.mean, b.sd, b.need);
    let spread = if sd > 0.0 {
        sd
    } else {
        (mean.abs().max(need.abs()) * 0.05).max(1e-9)
    };
    let lo = (mean - 3.5 * spread).min(need - 0.5 * spread);
    let hi = (mean + 3.5 * spread).max(need + 0.5 * spread);
    let step = (hi - lo) / width as f64;
    let col_of =
        |x: f64| (((x - lo) / step).floor() as isize).clamp(0, width as isize - 1) as usize;
    let need_col = col_of(need);
    // Column heights in eighths of a row.
    let heights: Vec<usize> = (0..width)
        .map(|c| {
            let x = lo + (c as f64 + 0.5) * step;
            let f = if sd > 0.0 {
                let z = (x - mean) / sd;
                (-0.5 * z * z).exp()
            } else if c == col_of(mean) {
                1.0
            } else {
                0.0
            };
            (f * (height * 8) as f64).round() as usize
        })
        .collect();
    let mut rows = Vec::with_capacity(height + 2);
    for r in 0..height {
        // Row r from the top covers eighths [(height-1-r)*8, (height-r)*8).
        let base = (height - 1 - r) * 8;
        let row: String = (0..width)
            .map(|c| {
                let h = heights[c];
                let fill = h.saturating_sub(base).min(8);
                let at_or_above = c >= need_col;
                if fill == 0 {
                    if c == need_col { '│' } else { ' ' }
                } else if at_or_above {
                    SOLID[fill]
                } else if fill >= 4 {
                    '░'
                } else {
                    ' '
                }
            })
            .collect();
        rows.push(row);
    }
    let axis: String = (0..width)
        .map(|c| if c == need_col { '┴' } else { '─' })
        .collect();
    rows.push(axis);
    // Labels: low end, the need under its column, high end.
    let mut labels: Vec<char> = vec![' '; width];
    let put = |labels: &mut Vec<char>, at: usize, s: &str| {
        let s: Vec<char> = s.chars().collect();
        let start = at.min(width.saturating_sub(s.len()));
        for (i, ch) in s.iter().enumerate() {
            if start + i < width {
                labels[start + i] = *ch;
            }
        }
    };
    let need_label = format!("need {}", amount(need));
    let need_start = need_col.saturating_sub(need_label.len() / 2);
    let lo_s = amount(lo);
    let hi_s = amount(hi);
    if need_start > lo_s.len() + 1 {
        put(&mut labels, 0, &lo_s);
    }
    if need_start + need_label.len() + 1 < width.saturating_sub(hi_s.len()) {
        put(&mut labels, width - hi_s.len(), &hi_s);
    }
    put(&mut labels, need_start, &need_label);
    rows.push(labels.into_iter().collect());
    rows
}

pub fn lines(state: &AppState, width: usize, height: usize) -> Vec<Line<'static>> {
    let th = &state.theme;
    let inc = &state.incident;
    let Some(t) = state.selected_task() else {
        return vec![Line::raw("No task selected.")];
    };
    let task = &inc.tasks[t];
    if let Some(outcome) = task.outcome {
        return vec![Line::raw(format!("Closed: {}.", outcome.as_str()))];
    }
    let o = &state.ground[t];
    let mut out = Vec::new();
    let Some(b) = o.binding_trait() else {
        out.push(Line::raw("No need counts on this task: nothing to meet."));
        return out;
    };
    let tr = &inc.traits[b.trait_idx];
    out.push(Line::from(vec![
        Span::raw("binding trait: "),
        Span::styled(
            format!("{} ({}, {})", tr.id, shown(&tr.label), shown(&tr.unit)),
            th.heading(),
        ),
    ]));
    if o.forced_zero == Some(ForcedZero::NoUnits) {
        // No capability to describe: the need and what it takes.
        out.push(Line::raw(format!(
            "need {} {} · no capability on it",
            amount(b.need),
            shown(&tr.unit)
        )));
        out.push(Line::styled(
            "No units on this task: its odds are 0 until units are placed.",
            th.poor(),
        ));
        return out;
    }
    let need = if b.need_sd > 0.0 {
        format!(
            "need {} ± {} · margin spread ± {}",
            amount(b.need),
            amount(b.need_sd),
            amount(b.sd)
        )
    } else {
        format!("need {}", amount(b.need))
    };
    out.push(Line::raw(format!(
        "capability {} ± {} · {need} · {} · odds {}",
        amount(b.mean),
        amount(b.unit_sd),
        z_value(b.z),
        odds_text(b.ln_odds, b.ln_fail, Detail::Full)
    )));
    let others: Vec<String> = o
        .traits
        .iter()
        .filter(|x| x.trait_idx != b.trait_idx)
        .map(|x| format!("{} {}", inc.traits[x.trait_idx].id, pct_ln(x.ln_odds)))
        .collect();
    if !others.is_empty() {
        out.push(Line::styled(
            format!("other needs: {}", others.join(" · ")),
            th.dim(),
        ));
    }
    if o.forced_zero == Some(ForcedZero::BelowMinimum) {
        out.push(Line::styled(
            format!(
                "Below its minimum of {} units: odds 0 until it is crewed.",
                task.min_units.unwrap_or_default()
            ),
            th.poor(),
        ));
    }
    let reading = match Regime::from_z(b.z) {
        Regime::Hedge => format!(
            "≡ hedge · covered on average ({} {}): steady units protect it.",
            signed_amount(b.margin()),
            tr.unit
        ),
        Regime::Gamble => format!(
            "~ gamble · short on average ({} {}): only spread can meet it; look for more resources.",
            signed_amount(b.margin()),
            tr.unit
        ),
    };
    out.push(Line::styled(reading, th.heading()));
    let legend = format!(
        "solid: capability at or above the need = odds {}; light: below{}",
        odds_text(b.ln_odds, b.ln_fail, Detail::Full),
        if b.need_sd > 0.0 {
            " (curve drawn with the margin spread)"
        } else {
            ""
        }
    );
    // Rows already used (lines wrap), plus axis, labels and the legend.
    let rows_of = |w: usize| w.div_ceil(width.max(1)).max(1);
    let used: usize = out.iter().map(|l| rows_of(l.width())).sum();
    let reserved = used + 2 + rows_of(legend.chars().count() + 2);
    let chart_h = height.saturating_sub(reserved).clamp(2, 12);
    let style = match o.regime() {
        Some(Regime::Gamble) => th.gamble(),
        _ => th.hedge(),
    };
    for row in chart(b, width, chart_h) {
        out.push(Line::styled(row, style));
    }
    out.push(Line::styled(legend, th.dim()));
    out
}

pub fn render(state: &AppState, frame: &mut Frame, area: Rect) {
    let title = match state.selected_task() {
        Some(t) => {
            let task = &state.incident.tasks[t];
            format!(
                " {} · {} · {} ",
                task.id,
                super::format::shown(&task.label),
                tier_heading(task.tier).to_lowercase()
            )
        }
        None => " Selected task ".into(),
    };
    let block = Block::bordered().title(title);
    let inner = block.inner(area);
    let lines = lines(state, inner.width as usize, inner.height as usize);
    frame.render_widget(
        Paragraph::new(super::format::clean_lines(lines))
            .block(block)
            .wrap(ratatui::widgets::Wrap { trim: false }),
        area,
    );
}
