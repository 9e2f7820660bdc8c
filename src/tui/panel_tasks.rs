//! The task board: every task grouped by tier with its odds as a number and
//! a bar, its regime in a symbol and a word, its binding trait with the
//! shortfall or surplus in the trait's own unit, its number of units, and
//! `▲`/`▼` with the proposal's odds where the proposal would change them.

use ratatui::Frame;
use ratatui::layout::Rect;
use ratatui::text::{Line, Span};
use ratatui::widgets::{Block, Paragraph};

use super::app::AppState;
use super::board::{regime_mark, tier_heading};
use super::format::{bar, fit, pad, signed_amount};
use crate::odds::text::{pct, pct_ln};
use crate::odds::{ForcedZero, Regime};

/// Lines of the board and the line of the selected task (for scrolling).
pub fn lines(state: &AppState, width: usize) -> (Vec<Line<'static>>, usize) {
    let th = &state.theme;
    let inc = &state.incident;
    let order = state.task_order();
    // Ids are shown whole up to 18 characters (12 on narrow boards): an id
    // cut short is ambiguous.
    let longest = inc
        .tasks
        .iter()
        .map(|t| t.id.chars().count())
        .max()
        .unwrap_or(4);
    let id_w = longest.clamp(4, if width < 64 { 12 } else { 18 }) + 1;
    // marker, id, odds, space after the bar, regime, units, proposal change
    let base = 2 + id_w + 10 + 1 + 9 + 5 + 10;
    let rest = width.saturating_sub(base);
    let bar_w = if rest >= 32 { 10 } else { 6 };
    let bind_w = rest.saturating_sub(bar_w).clamp(10, 24);
    let label_w = match rest.saturating_sub(bar_w + bind_w + 1) {
        w if w < 8 => 0,
        w => w.min(30),
    };
    let mut out = Vec::new();
    let mut selected_line = 0;
    let mut current_group: Option<Option<crate::model::Tier>> = None;
    for (pos, &t) in order.iter().enumerate() {
        let task = &inc.tasks[t];
        let group = task.is_open().then_some(task.tier);
        if current_group != Some(group) {
            current_group = Some(group);
            let head = match group {
                Some(tier) => {
                    let mut head = format!(
                        "{}  · secure at {}",
                        tier_heading(tier),
                        pct(inc.secure.get(tier))
                    );
                    // Joint odds: every open task of the tier at once;
                    // a shorter form where the panel is narrow.
                    if let Some(j) = state.ground_joint.tier(tier) {
                        let p = pct_ln(j.ln_odds);
                        let long = format!("  · all {} tasks: {p}", tier_tasks_word(tier));
                        if head.chars().count() + long.chars().count() <= width {
                            head.push_str(&long);
                        } else {
                            head.push_str(&format!(" · all: {p}"));
                        }
                    }
                    head
                }
                None => "CLOSED".to_string(),
            };
            out.push(Line::styled(head, th.heading()));
        }
        let selected = pos == state.selected;
        if selected {
            selected_line = out.len();
        }
        let marker = if selected { "▸ " } else { "  " };
        let mut spans = vec![Span::raw(marker), Span::raw(pad(&task.id, id_w))];
        if label_w > 0 {
            spans.push(Span::styled(
                pad(
                    &fit(&super::format::shown(&task.label), label_w),
                    label_w + 1,
                ),
                th.dim(),
            ));
        }
        if let Some(outcome) = task.outcome {
            spans.push(Span::raw(format!("closed: {}", outcome.as_str())));
            let mut line = Line::from(spans);
            if selected {
                line = line.style(th.selected());
            }
            out.push(line);
            continue;
        }
        let o = &state.ground[t];
        let secure = inc.secure.get(task.tier);
        let p = o.odds();
        let odds_style = th.for_odds(p, secure);
        spans.push(Span::styled(pad(&pct_ln(o.ln_odds), 10), odds_style));
        spans.push(Span::styled(bar(p, bar_w), odds_style));
        spans.push(Span::raw(" "));
        let regime = o.regime();
        let regime_style = match regime {
            Some(Regime::Gamble) => th.gamble(),
            _ => th.hedge(),
        };
        spans.push(Span::styled(pad(regime_mark(regime), 9), regime_style));
        let binding = match (o.forced_zero, o.binding_trait()) {
            (Some(ForcedZero::NoUnits), _) => "no units".to_string(),
            (Some(ForcedZero::BelowMinimum), _) => {
                format!("below min {} units", task.min_units.unwrap_or_default())
            }
            (None, Some(b)) => {
                let tr = &inc.traits[b.trait_idx];
                format!("{} {} {}", tr.id, signed_amount(b.margin()), tr.unit)
            }
            (None, None) => "—".to_string(),
        };
        spans.push(Span::raw(pad(&binding, bind_w)));
        spans.push(Span::raw(format!("{:>3}u ", o.units.len())));
        if let Some(prop) = &state.proposal {
            let po = &prop.odds[t];
            let now = pct_ln(o.ln_odds);
            let then = pct_ln(po.ln_odds);
            if now != then {
                let (arrow, style) = if po.ln_odds > o.ln_odds {
                    ("▲", th.secure())
                } else {
                    ("▼", th.poor())
                };
                spans.push(Span::styled(format!("{arrow}{then}"), style));
            }
        }
        let mut line = Line::from(spans);
        if selected {
            line = line.style(th.selected());
        }
        out.push(line);
    }
    if order.is_empty() {
        out.push(Line::raw("No tasks on the board."));
    }
    (out, selected_line)
}

pub fn render(state: &AppState, frame: &mut Frame, area: Rect) {
    let title = match &state.proposal {
        Some(p) => format!(
            " Task odds · ground now, ▲▼ with the proposal ({}) ",
            super::format::count(p.moves.len(), "move", "moves")
        ),
        None => " Task odds · ground now ".to_string(),
    };
    let block = Block::bordered().title(title);
    let inner = block.inner(area);
    let (lines, selected_line) = lines(state, inner.width as usize);
    let h = inner.height as usize;
    // Keep the selected task in view.
    let scroll = (selected_line + 1).saturating_sub(h);
    frame.render_widget(
        Paragraph::new(super::format::clean_lines(lines))
            .block(block)
            .scroll((scroll as u16, 0)),
        area,
    );
}

/// The tier in "all … tasks" of the header.
fn tier_tasks_word(tier: crate::model::Tier) -> &'static str {
    match tier {
        crate::model::Tier::Life => "life-safety",
        crate::model::Tier::Stabilization => "stabilization",
        crate::model::Tier::Property => "property",
    }
}
