//! Unit placement: the proposed moves first (from → to), then every unit by
//! task, in reserve and out of service. Pinned units carry `*`, units the
//! proposal would move carry `→`.

use ratatui::Frame;
use ratatui::layout::Rect;
use ratatui::text::{Line, Span};
use ratatui::widgets::{Block, Paragraph, Wrap};

use super::app::AppState;
use super::board::{out_of_service_units, place_name, reserve_units, task_order};
use super::format::{amount, pad, shown};
use crate::model::UnitIdx;

fn unit_token(state: &AppState, u: UnitIdx) -> String {
    let unit = &state.incident.units[u];
    let mut s = unit.id.clone();
    if state.incident.pins.contains_key(&u) {
        s.push('*');
    }
    if state
        .proposal
        .as_ref()
        .is_some_and(|p| p.moves.iter().any(|m| m.unit == u))
    {
        s.push('→');
    }
    s
}

/// The trait a unit serves: on a task, the task's binding trait if the
/// unit is rated on it, else the first need it is rated on; in reserve, the
/// trait it is rated highest on relative to its spread.
fn served_trait(state: &AppState, u: UnitIdx) -> Option<usize> {
    let inc = &state.incident;
    let unit = &inc.units[u];
    let rated = |k: usize| unit.ratings.get(k).is_some_and(|r| r.mean > 0.0);
    if let Some(t) = inc.placement.get(u) {
        let binding = state
            .ground
            .get(t.index())
            .and_then(|o| o.binding_trait())
            .map(|b| b.trait_idx);
        if let Some(k) = binding.filter(|&k| rated(k)) {
            return Some(k);
        }
        let task = &inc.tasks[t];
        if let Some(k) = (0..task.needs.len()).find(|&k| task.needs[k].need > 0.0 && rated(k)) {
            return Some(k);
        }
    }
    (0..unit.ratings.len())
        .filter(|&k| rated(k))
        .max_by(|&a, &b| {
            let score = |k: usize| {
                let r = unit.ratings[k];
                r.mean / (r.sd + r.mean * 1e-9)
            };
            score(a).total_cmp(&score(b))
        })
}

fn status_word(status: crate::model::UnitStatus) -> &'static str {
    match status {
        crate::model::UnitStatus::OutOfService => "out of service",
        crate::model::UnitStatus::Lost => "lost",
        crate::model::UnitStatus::Available => "available",
    }
}

/// One unit on its own row: id with its marks, type, status, rating on
/// the trait it serves.
fn unit_row(state: &AppState, u: UnitIdx, widths: (usize, usize, usize)) -> Line<'static> {
    let th = &state.theme;
    let inc = &state.incident;
    let unit = &inc.units[u];
    let ty = &inc.unit_types[unit.type_idx].id;
    let status = status_word(unit.status);
    let rating = served_trait(state, u)
        .map(|k| {
            let r = unit.ratings[k];
            let tr = &inc.traits[k];
            format!(
                "{} {} ± {} {}",
                tr.id,
                amount(r.mean),
                amount(r.sd),
                shown(&tr.unit)
            )
        })
        .unwrap_or_else(|| "no rating".into());
    let moving = state
        .proposal
        .as_ref()
        .and_then(|p| p.moves.iter().find(|m| m.unit == u))
        .map(|m| format!(" → {}", place_name(inc, m.to)))
        .unwrap_or_default();
    Line::from(vec![
        Span::raw("  "),
        Span::raw(pad(&unit_token(state, u), widths.0 + 1)),
        Span::styled(pad(ty, widths.1 + 1), th.dim()),
        Span::raw(pad(status, widths.2 + 1)),
        Span::raw(rating),
        Span::styled(moving, th.accent()),
    ])
}

/// Every unit on its own row under its task, reserve and out of service:
/// used when the panel has the rows for it.
fn detailed(state: &AppState) -> Vec<Line<'static>> {
    let th = &state.theme;
    let inc = &state.incident;
    let roster: Vec<UnitIdx> = inc.roster().map(|(u, _)| u).collect();
    let id_w = roster
        .iter()
        .map(|&u| unit_token(state, u).chars().count())
        .max()
        .unwrap_or(2);
    let ty_w = roster
        .iter()
        .map(|&u| inc.unit_types[inc.units[u].type_idx].id.chars().count())
        .max()
        .unwrap_or(4);
    let status_w = roster
        .iter()
        .map(|&u| status_word(inc.units[u].status).len())
        .max()
        .unwrap_or(9);
    let mut out = Vec::new();
    let group = |title: String, units: Vec<UnitIdx>, out: &mut Vec<Line<'static>>| {
        out.push(Line::styled(
            format!("{title} ({})", units.len()),
            th.heading(),
        ));
        for u in units {
            out.push(unit_row(state, u, (id_w, ty_w, status_w)));
        }
    };
    for t in task_order(inc) {
        if inc.tasks[t].is_open() {
            group(
                inc.tasks[t].id.clone(),
                inc.placement.units_on(t).collect(),
                &mut out,
            );
        }
    }
    group("reserve".into(), reserve_units(inc), &mut out);
    let oos = out_of_service_units(inc);
    if !oos.is_empty() {
        group("out of service".into(), oos, &mut out);
    }
    out
}

/// Rows [`detailed`] takes.
fn detailed_rows(state: &AppState) -> usize {
    let inc = &state.incident;
    let open = inc.tasks.iter().filter(|t| t.is_open()).count();
    let oos = usize::from(!out_of_service_units(inc).is_empty());
    inc.roster_len() + open + 1 + oos
}

pub fn lines(state: &AppState) -> Vec<Line<'static>> {
    lines_for(state, usize::MAX)
}

/// The panel's lines for `rows` rows: each unit on its own row (type,
/// status, rating on the trait it serves) when they fit, else the units
/// of each task on one line.
pub fn lines_for(state: &AppState, rows: usize) -> Vec<Line<'static>> {
    let mut out = proposal_lines(state);
    if out.len() + detailed_rows(state) <= rows {
        out.extend(detailed(state));
        return out;
    }
    out.extend(compact(state));
    out
}

fn proposal_lines(state: &AppState) -> Vec<Line<'static>> {
    let th = &state.theme;
    let inc = &state.incident;
    let mut out = Vec::new();
    if let Some(p) = &state.proposal {
        // The accept/reject keys exist only on the commander's dashboard;
        // elsewhere the heading says where the proposal comes from.
        let keys = match (state.mode, &state.last_proposed) {
            (super::app::Mode::Command, _) => " · y accept all · s one · x reject".to_string(),
            (super::app::Mode::Replay, Some((seq, _))) => format!(" · recommended at #{seq}"),
            (_, Some((seq, _))) => format!(" · recommended at #{seq} · read-only"),
            (_, None) => " · read-only".to_string(),
        };
        out.push(Line::styled(
            format!("Proposed moves ({}){keys}", p.moves.len()),
            th.accent(),
        ));
        let moves: Vec<String> = p
            .moves
            .iter()
            .map(|m| {
                format!(
                    "{} {} → {}",
                    inc.units[m.unit].id,
                    place_name(inc, m.from),
                    place_name(inc, m.to)
                )
            })
            .collect();
        out.push(Line::raw(format!("  {}", moves.join(" · "))));
    } else if state.mode == super::app::Mode::Command {
        out.push(Line::styled("No moves proposed.", th.dim()));
    }
    out
}

/// The units of each task on one line (a small panel).
fn compact(state: &AppState) -> Vec<Line<'static>> {
    let th = &state.theme;
    let inc = &state.incident;
    let mut out = Vec::new();
    let id_w = inc
        .tasks
        .iter()
        .map(|t| t.id.chars().count())
        .max()
        .unwrap_or(4)
        .max(6)
        + 1;
    for t in task_order(inc) {
        let task = &inc.tasks[t];
        if !task.is_open() {
            continue;
        }
        let units: Vec<String> = inc
            .placement
            .units_on(t)
            .map(|u| unit_token(state, u))
            .collect();
        let body = if units.is_empty() {
            "—".to_string()
        } else {
            units.join(" ")
        };
        out.push(Line::from(vec![
            Span::styled(pad(&task.id, id_w), th.heading()),
            Span::raw(body),
        ]));
    }
    let reserve: Vec<String> = reserve_units(inc)
        .into_iter()
        .map(|u| unit_token(state, u))
        .collect();
    out.push(Line::from(vec![
        Span::styled("reserve ", th.heading()),
        Span::raw(if reserve.is_empty() {
            "—".to_string()
        } else {
            reserve.join(" ")
        }),
    ]));
    let oos: Vec<String> = out_of_service_units(inc)
        .into_iter()
        .map(|u| inc.units[u].id.clone())
        .collect();
    out.push(Line::from(vec![
        Span::styled("out of service ", th.heading()),
        Span::raw(if oos.is_empty() {
            "—".to_string()
        } else {
            oos.join(" ")
        }),
    ]));
    // Ratings moved by field readings: the units read (type-mates moved
    // through the shared factor are in `odds`).
    let read: Vec<_> = crate::odds::view::ratings_now(inc)
        .into_iter()
        .filter(|r| r.readings > 0)
        .collect();
    if !read.is_empty() {
        out.push(Line::styled("Field readings", th.heading()));
        for r in read {
            out.push(Line::raw(format!(
                "  {} {}: {}",
                r.unit,
                r.trait_id,
                r.describe()
            )));
        }
    }
    out
}

pub fn render(state: &AppState, frame: &mut Frame, area: Rect) {
    let n = state.incident.roster_len();
    let block = Block::bordered().title(format!(" Units ({n}) · * pinned · → moves "));
    frame.render_widget(
        Paragraph::new(super::format::clean_lines(lines_for(
            state,
            area.height.saturating_sub(2) as usize,
        )))
        .block(block)
        .wrap(Wrap { trim: false })
        .scroll((state.roster_scroll, 0)),
        area,
    );
}
