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
use super::format::{bar, fit, pad, shown, signed_amount};
use crate::odds::text::{pct, pct_ln};
use crate::odds::{ForcedZero, Regime};

/// The cells of one open task's row, before they are laid out.
struct Cells {
    odds: String,
    binding: String,
    units: String,
    change: Option<(bool, String)>,
}

fn cells(state: &AppState, t: crate::model::TaskIdx) -> Cells {
    let inc = &state.incident;
    let task = &inc.tasks[t];
    let o = &state.ground[t];
    let binding = match (o.forced_zero, o.binding_trait()) {
        (Some(ForcedZero::NoUnits), _) => "no units".to_string(),
        (Some(ForcedZero::BelowMinimum), _) => {
            format!("below min {}", task.min_units.unwrap_or_default())
        }
        (None, Some(b)) => {
            let tr = &inc.traits[b.trait_idx];
            format!(
                "{} {} {}",
                tr.id,
                signed_amount(b.margin()),
                shown(&tr.unit)
            )
        }
        (None, None) => "—".to_string(),
    };
    let change = state.proposal.as_ref().and_then(|prop| {
        let po = &prop.odds[t];
        let then = pct_ln(po.ln_odds);
        (pct_ln(o.ln_odds) != then).then_some((po.ln_odds > o.ln_odds, then))
    });
    Cells {
        odds: pct_ln(o.ln_odds),
        binding,
        units: format!("{}u", o.units.len()),
        change,
    }
}

/// Column widths of the board for a panel `width` cells wide: every column
/// is sized by its content; when the row is too long the label is
/// shortened first (down to nothing), then the regime loses its word, the
/// bar shrinks, and last the binding trait is cut. The id is never cut.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Columns {
    pub id: usize,
    pub label: usize,
    pub odds: usize,
    pub bar: usize,
    pub regime: usize,
    pub binding: usize,
    pub units: usize,
    pub change: usize,
}

impl Columns {
    /// Cells the row takes, separators included.
    pub fn total(&self) -> usize {
        let label = if self.label > 0 { self.label + 1 } else { 0 };
        2 + self.id
            + 1
            + label
            + self.odds
            + 1
            + self.bar
            + 1
            + self.regime
            + 1
            + self.binding
            + 1
            + self.units
            + if self.change > 0 { 1 + self.change } else { 0 }
    }
}

fn columns(
    state: &AppState,
    rows: &[(crate::model::TaskIdx, Option<Cells>)],
    width: usize,
) -> Columns {
    let inc = &state.incident;
    let longest = |f: &dyn Fn(&Cells) -> usize| {
        rows.iter()
            .filter_map(|(_, c)| c.as_ref())
            .map(f)
            .max()
            .unwrap_or(0)
    };
    let id = rows
        .iter()
        .map(|(t, _)| inc.tasks[*t].id.chars().count())
        .max()
        .unwrap_or(4)
        .max(4);
    let label_full = rows
        .iter()
        .map(|(t, _)| shown(&inc.tasks[*t].label).chars().count())
        .max()
        .unwrap_or(0);
    let mut c = Columns {
        id,
        label: label_full.min(48),
        odds: longest(&|c| c.odds.chars().count()).max(4),
        bar: if width >= 110 { 10 } else { 6 },
        regime: 8,
        binding: longest(&|c| c.binding.chars().count()).clamp(8, 28),
        units: longest(&|c| c.units.chars().count()).max(2),
        change: longest(&|c| c.change.as_ref().map_or(0, |(_, s)| s.chars().count() + 1)),
    };
    let over = |c: &Columns| c.total().saturating_sub(width);
    // The label gives way first; a label under 8 cells says nothing.
    let short = over(&c);
    c.label = c.label.saturating_sub(short);
    if c.label < 8 {
        c.label = 0;
    }
    if over(&c) > 0 {
        c.regime = 1; // the symbol alone: `~` gamble, `≡` hedge
    }
    if over(&c) > 0 {
        c.bar = c.bar.saturating_sub(over(&c)).max(3);
    }
    if over(&c) > 0 {
        c.binding = c.binding.saturating_sub(over(&c)).max(6);
    }
    c
}

/// The regime as a symbol and a word, or the symbol alone in one cell.
fn regime_text(regime: Option<Regime>, width: usize) -> String {
    let full = regime_mark(regime);
    if width >= full.chars().count() {
        full.to_string()
    } else {
        full.chars().next().unwrap_or(' ').to_string()
    }
}

/// Lines of the board and the line of the selected task (for scrolling).
pub fn lines(state: &AppState, width: usize) -> (Vec<Line<'static>>, usize) {
    lines_with(state, width).0
}

/// The board's lines with the column widths they were laid out in.
pub fn lines_with(state: &AppState, width: usize) -> ((Vec<Line<'static>>, usize), Columns) {
    let th = &state.theme;
    let inc = &state.incident;
    let order = state.task_order();
    let rows: Vec<(crate::model::TaskIdx, Option<Cells>)> = order
        .iter()
        .map(|&t| (t, inc.tasks[t].is_open().then(|| cells(state, t))))
        .collect();
    let cols = columns(state, &rows, width);
    let mut out = Vec::new();
    let mut selected_line = 0;
    let mut current_group: Option<Option<crate::model::Tier>> = None;
    for (pos, (t, row)) in rows.iter().enumerate() {
        let t = *t;
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
        let mut spans = vec![
            Span::raw(marker),
            Span::styled(pad(&task.id, cols.id + 1), th.heading()),
        ];
        if cols.label > 0 {
            spans.push(Span::styled(
                pad(&fit(&shown(&task.label), cols.label), cols.label + 1),
                th.dim(),
            ));
        }
        let Some(c) = row else {
            if let Some(outcome) = task.outcome {
                spans.push(Span::raw(format!("closed: {}", outcome.as_str())));
            }
            let mut line = Line::from(spans);
            if selected {
                line = line.style(th.selected());
            }
            out.push(line);
            continue;
        };
        let o = &state.ground[t];
        let secure = inc.secure.get(task.tier);
        let p = o.odds();
        let odds_style = th.for_odds(p, secure);
        spans.push(Span::styled(
            format!("{:>w$} ", c.odds, w = cols.odds),
            odds_style,
        ));
        spans.push(Span::styled(bar(p, cols.bar), odds_style));
        spans.push(Span::raw(" "));
        let regime = o.regime();
        let regime_style = match regime {
            Some(Regime::Gamble) => th.gamble(),
            _ => th.hedge(),
        };
        spans.push(Span::styled(
            pad(&regime_text(regime, cols.regime), cols.regime + 1),
            regime_style,
        ));
        spans.push(Span::raw(pad(&c.binding, cols.binding + 1)));
        spans.push(Span::raw(format!("{:>w$}", c.units, w = cols.units)));
        if let Some((up, then)) = &c.change {
            let (arrow, style) = if *up {
                ("▲", th.secure())
            } else {
                ("▼", th.poor())
            };
            spans.push(Span::styled(format!(" {arrow}{then}"), style));
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
    ((out, selected_line), cols)
}

/// Cells a task row needs with its label whole (the left column is sized
/// from it).
pub fn wanted_width(state: &AppState) -> usize {
    let (_, cols) = lines_with(state, usize::MAX / 4);
    cols.total()
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
