//! Unit placement: the proposed moves first (from → to), then every unit by
//! task, in reserve and out of service, each on a row of its own as far as
//! the rows go (the selected task first, then by tier), the rest folded on
//! packed lines. Pinned units carry `*`, units the proposal would move
//! carry `→`.

use ratatui::Frame;
use ratatui::layout::Rect;
use ratatui::text::{Line, Span};
use ratatui::widgets::{Block, Paragraph};

use super::app::AppState;
use super::board::{out_of_service_units, place_name, reserve_units, task_order};
use super::format::{amount, fit, pad, shown};
use crate::model::UnitIdx;

fn unit_token(state: &AppState, u: UnitIdx) -> String {
    let unit = &state.incident.units[u];
    let mut s = shown(&unit.id).into_owned();
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

/// Column widths of a unit row: id with marks, type, status.
type Widths = (usize, usize, usize);

fn widths(state: &AppState) -> Widths {
    let inc = &state.incident;
    let mut w = (2, 4, 9);
    for (u, unit) in inc.roster() {
        w.0 = w.0.max(unit_token(state, u).chars().count());
        w.1 =
            w.1.max(shown(&inc.unit_types[unit.type_idx].id).chars().count());
        w.2 = w.2.max(status_word(unit.status).len());
    }
    w
}

/// One unit on its own row: id with its marks, type, status, rating on
/// the trait it serves, the target of a proposed move. A row wider than
/// `width` cuts the rating, never the move.
fn unit_row(state: &AppState, u: UnitIdx, widths: Widths, width: usize) -> Line<'static> {
    let th = &state.theme;
    let inc = &state.incident;
    let unit = &inc.units[u];
    let ty = shown(&inc.unit_types[unit.type_idx].id).into_owned();
    let status = status_word(unit.status);
    let rating = served_trait(state, u)
        .map(|k| {
            let r = unit.ratings[k];
            let tr = &inc.traits[k];
            format!(
                "{} {} ± {} {}",
                shown(&tr.id),
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
        .map(|m| format!(" → {}", shown(&place_name(inc, m.to))))
        .unwrap_or_default();
    let fixed = 2 + widths.0 + 1 + widths.1 + 1 + widths.2 + 1;
    let room = width.saturating_sub(fixed + moving.chars().count());
    Line::from(vec![
        Span::raw("  "),
        Span::raw(pad(&unit_token(state, u), widths.0 + 1)),
        Span::styled(pad(&ty, widths.1 + 1), th.dim()),
        Span::raw(pad(status, widths.2 + 1)),
        Span::raw(fit(&rating, room)),
        Span::styled(moving, th.accent()),
    ])
}

/// `tokens` after `head`, joined by `sep` and packed into rows of `width`
/// cells (continuation rows indented); at most `max_rows` rows, the last
/// then ending with "+k more".
fn pack(
    head: Span<'static>,
    tokens: &[String],
    sep: &str,
    width: usize,
    max_rows: usize,
) -> Vec<Line<'static>> {
    let width = width.max(8);
    let max_rows = max_rows.max(1);
    let sep_w = sep.chars().count();
    let mut done: Vec<(Vec<&str>, usize)> = Vec::new();
    let mut cur: Vec<&str> = Vec::new();
    let mut used = head.content.chars().count();
    let mut placed = 0;
    for t in tokens {
        let n = t.chars().count();
        let need = if cur.is_empty() {
            used + n
        } else {
            used + sep_w + n
        };
        if need > width && !cur.is_empty() {
            done.push((std::mem::take(&mut cur), used));
            if done.len() >= max_rows {
                break;
            }
            used = 2 + n;
        } else {
            used = need;
        }
        cur.push(t);
        placed += 1;
    }
    if !cur.is_empty() || done.is_empty() {
        done.push((cur, used));
    }
    let mut more = String::new();
    if placed < tokens.len() {
        let mut k = tokens.len() - placed;
        if let Some((last, used)) = done.last_mut() {
            // Room for the count at the end of the last row.
            loop {
                more = format!("{}+{k} more", if last.is_empty() { "" } else { sep });
                if *used + more.chars().count() <= width || last.is_empty() {
                    break;
                }
                if let Some(t) = last.pop() {
                    *used -= t.chars().count() + if last.is_empty() { 0 } else { sep_w };
                    k += 1;
                }
            }
        }
    }
    let rows = done.len();
    let mut head = Some(head);
    done.into_iter()
        .enumerate()
        .map(|(i, (row, _))| {
            let mut text = if row.is_empty() && tokens.is_empty() {
                "—".to_string()
            } else {
                row.join(sep)
            };
            if i + 1 == rows {
                text.push_str(&more);
            }
            match head.take() {
                Some(h) => Line::from(vec![h, Span::raw(text)]),
                None => Line::raw(format!("  {text}")),
            }
        })
        .collect()
}

/// A task (or the reserve, or the units out of service) and its units.
struct Group {
    title: String,
    units: Vec<UnitIdx>,
    tokens: Vec<String>,
}

/// How a group is shown: its units on one packed line, the first `j` on
/// rows of their own and the rest packed under its heading, or all on rows.
#[derive(Clone, Copy, PartialEq)]
enum Shape {
    Folded,
    Partial(usize),
    Detailed,
}

fn groups(state: &AppState) -> Vec<Group> {
    let inc = &state.incident;
    let group = |title: String, units: Vec<UnitIdx>| Group {
        tokens: units.iter().map(|&u| unit_token(state, u)).collect(),
        title,
        units,
    };
    let mut out: Vec<Group> = task_order(inc)
        .into_iter()
        .filter(|&t| inc.tasks[t].is_open())
        .map(|t| {
            group(
                shown(&inc.tasks[t].id).into_owned(),
                inc.placement.units_on(t).collect(),
            )
        })
        .collect();
    out.push(group("reserve".into(), reserve_units(inc)));
    let oos = out_of_service_units(inc);
    if !oos.is_empty() {
        out.push(group("out of service".into(), oos));
    }
    out
}

pub fn lines(state: &AppState) -> Vec<Line<'static>> {
    lines_for(state, usize::MAX, usize::MAX)
}

/// The panel's lines for `rows` rows of `width` cells, one row each: the
/// proposed moves (at most a third of the rows), then every task's units,
/// the reserve and the units out of service. Each unit gets a row of its
/// own (type, status, rating on the trait it serves, → target) for as many
/// groups as fit — the selected task first, then by tier — the others
/// folded on packed lines; the rows left over detail part of the next
/// group, so no row stays empty while a unit is folded.
pub fn lines_for(state: &AppState, rows: usize, width: usize) -> Vec<Line<'static>> {
    let th = &state.theme;
    let proposal_cap = if rows == usize::MAX {
        usize::MAX
    } else {
        (rows / 3).max(2)
    };
    let mut out = proposal_lines(state, width, proposal_cap);
    let readings = reading_lines(state, width, proposal_cap);
    let budget = rows.saturating_sub(out.len() + readings.len());
    let groups = groups(state);
    let title_w = groups
        .iter()
        .map(|g| g.title.chars().count())
        .max()
        .unwrap_or(7)
        + 1;
    let folded = |g: &Group| {
        pack(
            Span::styled(pad(&g.title, title_w), th.heading()),
            &g.tokens,
            " ",
            width,
            usize::MAX,
        )
    };
    let partial_head = |g: &Group, j: usize| {
        pack(
            Span::styled(
                format!("{} ({}) · also ", g.title, g.units.len()),
                th.heading(),
            ),
            &g.tokens[j..],
            " ",
            width,
            usize::MAX,
        )
    };
    let folded_rows: Vec<usize> = groups.iter().map(|g| folded(g).len()).collect();
    let mut shape = vec![Shape::Folded; groups.len()];
    let mut used: usize = folded_rows.iter().sum();
    // The selected task first, then the board's order (most urgent tier
    // first), the reserve, the units out of service.
    let selected = state.selected_task().and_then(|t| {
        task_order(&state.incident)
            .into_iter()
            .filter(|&o| state.incident.tasks[o].is_open())
            .position(|o| o == t)
    });
    let mut priority: Vec<usize> = selected.into_iter().collect();
    priority.extend((0..groups.len()).filter(|&g| Some(g) != selected));
    for &g in &priority {
        let extra = (1 + groups[g].units.len()).saturating_sub(folded_rows[g]);
        if !groups[g].units.is_empty() && used + extra <= budget {
            shape[g] = Shape::Detailed;
            used += extra;
        }
    }
    // An empty group takes one row either way: headed like the others
    // when all are detailed, else folded with them ("—").
    if (0..groups.len()).all(|g| groups[g].units.is_empty() || shape[g] == Shape::Detailed) {
        shape.fill(Shape::Detailed);
    }
    for &g in &priority {
        if shape[g] != Shape::Folded || used >= budget {
            continue;
        }
        let room = folded_rows[g] + budget - used;
        let n = groups[g].units.len();
        if let Some((j, cost)) = (1..n.min(room))
            .rev()
            .map(|j| (j, partial_head(&groups[g], j).len() + j))
            .find(|&(_, cost)| cost <= room)
        {
            shape[g] = Shape::Partial(j);
            used = used + cost - folded_rows[g];
        }
    }
    let widths = widths(state);
    for (g, group) in groups.iter().enumerate() {
        match shape[g] {
            Shape::Folded => out.extend(folded(group)),
            Shape::Detailed => {
                out.push(Line::styled(
                    format!("{} ({})", group.title, group.units.len()),
                    th.heading(),
                ));
                out.extend(
                    group
                        .units
                        .iter()
                        .map(|&u| unit_row(state, u, widths, width)),
                );
            }
            Shape::Partial(j) => {
                out.extend(partial_head(group, j));
                out.extend(
                    group.units[..j]
                        .iter()
                        .map(|&u| unit_row(state, u, widths, width)),
                );
            }
        }
    }
    out.extend(readings);
    out
}

/// The ratings field readings moved (`observed` records): one row per unit
/// read, at most `max_rows` rows with the heading; the rest counted. The
/// type-mates moved through the shared factor are listed by `odds`.
fn reading_lines(state: &AppState, width: usize, max_rows: usize) -> Vec<Line<'static>> {
    let th = &state.theme;
    let read: Vec<_> = crate::odds::view::ratings_now(&state.incident)
        .into_iter()
        .filter(|r| r.readings > 0)
        .collect();
    if read.is_empty() || max_rows < 2 {
        return Vec::new();
    }
    let mut out = vec![Line::styled(
        fit(&format!("Field readings ({})", read.len()), width),
        th.heading(),
    )];
    let room = max_rows - 1;
    let listed = if read.len() <= room {
        read.len()
    } else {
        room - 1
    };
    for r in &read[..listed] {
        let text = format!(
            "  {} {}: {}",
            shown(&r.unit),
            shown(&r.trait_id),
            r.describe()
        );
        out.push(Line::raw(fit(&text, width)));
    }
    if listed < read.len() {
        out.push(Line::styled(
            fit(
                &format!(
                    "  +{} more (the odds command lists all)",
                    read.len() - listed
                ),
                width,
            ),
            th.dim(),
        ));
    }
    out
}

fn proposal_lines(state: &AppState, width: usize, max_rows: usize) -> Vec<Line<'static>> {
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
            fit(&format!("Proposed moves ({}){keys}", p.moves.len()), width),
            th.accent(),
        ));
        let held = crate::rules::reserve_held_at_minimum(inc, &p.placement);
        let moves: Vec<String> = p
            .moves
            .iter()
            .map(|m| {
                let why = crate::rules::reserve_reason(held, m.from, m.to)
                    .map(|r| format!(" ({r})"))
                    .unwrap_or_default();
                format!(
                    "{} {} → {}{why}",
                    shown(&inc.units[m.unit].id),
                    shown(&place_name(inc, m.from)),
                    shown(&place_name(inc, m.to))
                )
            })
            .collect();
        out.extend(pack(
            Span::raw("  "),
            &moves,
            " · ",
            width,
            max_rows.saturating_sub(1),
        ));
    } else if state.mode == super::app::Mode::Command {
        out.push(Line::styled("No moves proposed.", th.dim()));
    }
    out
}

pub fn render(state: &AppState, frame: &mut Frame, area: Rect) {
    let n = state.incident.roster_len();
    let block = Block::bordered().title(format!(" Units ({n}) · * pinned · → moves "));
    let width = area.width.saturating_sub(2) as usize;
    // Scrolled (PgDn), the list is the whole one, every unit on its row.
    let rows = if state.roster_scroll > 0 {
        usize::MAX
    } else {
        area.height.saturating_sub(2) as usize
    };
    frame.render_widget(
        Paragraph::new(super::format::clean_lines(lines_for(state, rows, width)))
            .block(block)
            .scroll((state.roster_scroll, 0)),
        area,
    );
}

#[cfg(test)]
mod tests {
    use super::pack;
    use ratatui::text::Span;

    fn rows(tokens: &[&str], width: usize, max_rows: usize) -> Vec<String> {
        let tokens: Vec<String> = tokens.iter().map(|t| t.to_string()).collect();
        pack(Span::raw("head "), &tokens, " ", width, max_rows)
            .iter()
            .map(|l| l.to_string())
            .collect()
    }

    // Laid out by hand: rows of at most 12 cells, continuations indented.
    #[test]
    fn packs_tokens_into_rows() {
        assert_eq!(rows(&["aa", "bb", "cc"], 12, 9), ["head aa bb", "  cc"]);
        assert_eq!(rows(&[], 12, 9), ["head —"]);
        // Two rows at most: the last ends with the count of the rest.
        assert_eq!(
            rows(&["aa", "bb", "cc", "dd", "ee", "ff", "gg"], 12, 2),
            ["head aa bb", "  cc +4 more"]
        );
    }
}
