//! The header line (incident, mode, worst task) and the status line (main
//! keys, the re-plan's progress, the last action's result).

use ratatui::Frame;
use ratatui::layout::{Constraint, Layout, Rect};
use ratatui::text::{Line, Span};
use ratatui::widgets::Paragraph;

use super::app::{AppState, Mode, PlanStatus};
use super::board::worst_open;
use super::format::fit;
use crate::odds::text::{pct, pct_ln};

/// The main keys per mode; `?` lists all.
pub fn key_hint(mode: Mode) -> &'static str {
    match mode {
        Mode::Command => {
            "y accept · x reject · l lost · a unit · o task · r rate · n need · m move · p pin · u undo · ? keys · q quit"
        }
        Mode::Watch => "↑↓ task · PgUp/PgDn units · ? help · q quit · read-only",
        Mode::Replay => "←→ step · Home/End · g go to · space play · +/- speed · ? help · q quit",
    }
}

/// What the re-plan is doing, in words, in at most `max` characters where
/// it can: while improving, the work done gives way first, then the bound;
/// once settled, the bound.
/// The status line shows it whole up to 3/5 of its width: the place for the
/// search's progress and its bound (how far the best plan found may be from
/// the best there is) as the solver reports them.
pub fn plan_words(state: &AppState, max: usize) -> String {
    let worst = |state: &AppState| {
        state
            .proposal
            .as_ref()
            .and_then(|p| worst_open(&state.incident, &p.odds).map(|t| pct_ln(p.odds[t].ln_odds)))
    };
    match &state.plan_status {
        PlanStatus::Off => String::new(),
        PlanStatus::Starting => "re-plan: starting…".into(),
        PlanStatus::Improving {
            elapsed,
            iterations,
            bound,
        } => {
            let secs = format!("{:.1} s", elapsed.as_secs_f64());
            let work = format!("{} moves", count_words(*iterations));
            // "worst stabilization 80.1 %, at most 94.5 % possible": the
            // tier's worst under the best plan so far.
            let gap = bound.as_ref().and_then(|b| {
                let u = b.upper_bound?;
                let now = tier_worst(state, b.tier).unwrap_or(b.worst_odds);
                Some(format!(
                    "worst {} {}, at most {} possible",
                    b.tier.as_str(),
                    pct(now),
                    pct(u)
                ))
            });
            let head = match (worst(state), &gap) {
                (_, Some(g)) => format!("re-plan: improving… {g}"),
                (Some(w), None) => format!("re-plan: improving… best so far: worst {w}"),
                (None, None) => "re-plan: improving… ground is best so far".to_string(),
            };
            let shortest = match worst(state) {
                Some(w) => format!("re-plan: improving… worst {w} · {secs}"),
                None => format!("re-plan: improving… ground is best · {secs}"),
            };
            [
                format!("{head} · {work} · {secs}"),
                format!("{head} · {secs}"),
            ]
            .into_iter()
            .find(|c| c.chars().count() <= max)
            .unwrap_or(shortest)
        }
        PlanStatus::Settled {
            proven_optimal,
            bound,
            ..
        } => {
            let proof = if *proven_optimal {
                " (proven best)"
            } else {
                ""
            };
            // "worst stabilization 81.0 %, at most 93.0 % possible"
            let gap = bound
                .as_ref()
                .and_then(|b| {
                    b.upper_bound.map(|u| {
                        format!(
                            " · worst {} {}, at most {} possible",
                            b.tier.as_str(),
                            pct(b.worst_odds),
                            pct(u)
                        )
                    })
                })
                .unwrap_or_default();
            let head = match worst(state) {
                Some(w) => format!("re-plan: done{proof} · worst if accepted {w}"),
                None => format!("re-plan: done{proof} · no better plan: keep the ground"),
            };
            // The bound gives way when the line is short.
            let full = format!("{head}{gap}");
            if full.chars().count() <= max {
                full
            } else {
                head
            }
        }
        PlanStatus::Failed(e) => format!("re-plan failed: {e}"),
        PlanStatus::Rejected => "re-plan: proposal rejected · waits for a change".into(),
    }
}

pub fn render_header(state: &AppState, frame: &mut Frame, area: Rect) {
    let th = &state.theme;
    let inc = &state.incident;
    let seq = state
        .recent
        .back()
        .map(|l| format!(" · log #{} {}", l.seq, l.at))
        .unwrap_or_default();
    let worst = match worst_open(inc, &state.ground) {
        Some(t) => {
            let o = &state.ground[t];
            let regime = o.regime().map(|r| r.as_str()).unwrap_or("no need");
            format!(
                "worst task {} {} ({regime})",
                inc.tasks[t].id,
                pct_ln(o.ln_odds)
            )
        }
        None => "no open task".into(),
    };
    // The incident's name gives way to the worst task, whose id is whole.
    let mode = format!(" {} ", state.mode.word());
    let fixed = 11 + mode.chars().count() + seq.chars().count() + 3 + worst.chars().count();
    let name_w = (area.width as usize).saturating_sub(fixed).clamp(8, 40);
    let line = Line::from(vec![
        Span::styled(" oddsboard ", th.selected()),
        Span::styled(mode, th.accent()),
        Span::styled(fit(&super::format::shown(&inc.name), name_w), th.heading()),
        Span::raw(seq),
        Span::raw(" · "),
        Span::raw(worst),
    ]);
    frame.render_widget(Paragraph::new(line), area);
}

pub fn render_status(state: &AppState, frame: &mut Frame, area: Rect) {
    let th = &state.theme;
    let plan = plan_words(state, (area.width * 3 / 5).saturating_sub(2) as usize);
    // What the re-plan is doing is shown whole (up to 3/5 of the line); the
    // key hint gives way, `?` lists every key.
    let plan_w = (plan.chars().count() as u16 + 2).min(area.width * 3 / 5);
    let [left, right] =
        Layout::horizontal([Constraint::Fill(1), Constraint::Length(plan_w)]).areas(area);
    let left_line = match &state.flash {
        Some(f) if f.error => Line::styled(format!("✗ {}", f.text), th.error()),
        Some(f) => Line::styled(format!("✓ {}", f.text), th.secure()),
        None => Line::styled(
            fit(key_hint(state.mode), left_width(area, plan_w)),
            th.dim(),
        ),
    };
    frame.render_widget(Paragraph::new(super::format::clean_line(left_line)), left);
    frame.render_widget(
        Paragraph::new(Line::styled(
            super::format::shown(&plan).into_owned(),
            th.accent(),
        ))
        .right_aligned(),
        right,
    );
}

fn left_width(area: Rect, plan_w: u16) -> usize {
    area.width.saturating_sub(plan_w) as usize
}

/// The worst odds among `tier`'s open tasks with a need under the proposal
/// (the tasks a tier bound speaks of), if any.
fn tier_worst(state: &AppState, tier: crate::model::Tier) -> Option<f64> {
    let p = state.proposal.as_ref()?;
    p.odds
        .iter()
        .filter(|o| {
            let t = &state.incident.tasks[o.task_idx];
            t.is_open() && t.tier == tier && t.needs.iter().any(|n| n.counts())
        })
        .map(|o| o.ln_odds.exp())
        .min_by(f64::total_cmp)
}

/// A count of moves for a status line: "870", "9999", "870 k", "3.4 M".
fn count_words(n: u64) -> String {
    match n {
        0..10_000 => n.to_string(),
        10_000..1_000_000 => format!("{} k", n / 1000),
        _ => format!("{:.1} M", n as f64 / 1e6),
    }
}
