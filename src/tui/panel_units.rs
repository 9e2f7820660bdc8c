//! Unit placement: the proposed moves first (from → to), then every unit by
//! task, in reserve and out of service. Pinned units carry `*`, units the
//! proposal would move carry `→`.

use ratatui::Frame;
use ratatui::layout::Rect;
use ratatui::text::{Line, Span};
use ratatui::widgets::{Block, Paragraph, Wrap};

use super::app::AppState;
use super::board::{out_of_service_units, place_name, reserve_units, task_order};
use super::format::pad;
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

pub fn lines(state: &AppState) -> Vec<Line<'static>> {
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
    let id_w = inc
        .tasks
        .iter()
        .map(|t| t.id.chars().count())
        .max()
        .unwrap_or(4)
        .clamp(6, 18)
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
        Paragraph::new(lines(state))
            .block(block)
            .wrap(Wrap { trim: false })
            .scroll((state.roster_scroll, 0)),
        area,
    );
}
