//! The board at the three sizes it is designed for (100×30, 140×45,
//! 200×60) on every bundled sample (all invented), as insta snapshots; and
//! the rule that a task id is never cut, whatever the width.

mod tui_common;

use insta::assert_snapshot;
use oddsboard::model::{Incident, parse_incident_str};
use oddsboard::tui::Mode;
use tui_common::{draw, state};

const SAMPLES: [(&str, &str); 3] = [
    (
        "warehouse-fire",
        include_str!("../sample-incidents/warehouse-fire.yaml"),
    ),
    (
        "river-flood",
        include_str!("../sample-incidents/river-flood.yaml"),
    ),
    (
        "building-collapse",
        include_str!("../sample-incidents/building-collapse.yaml"),
    ),
];

const SIZES: [(u16, u16); 3] = [(100, 30), (140, 45), (200, 60)];

fn sample(text: &str, name: &str) -> Incident {
    parse_incident_str(text, name).unwrap_or_else(|e| panic!("{name}: {e}"))
}

fn rows(b: &ratatui::backend::TestBackend) -> Vec<String> {
    let buf = b.buffer();
    (0..buf.area.height)
        .map(|y| (0..buf.area.width).map(|x| buf[(x, y)].symbol()).collect())
        .collect()
}

#[test]
fn every_sample_at_every_size() {
    for (name, text) in SAMPLES {
        let s = state(Mode::Watch, sample(text, name));
        for (w, h) in SIZES {
            assert_snapshot!(format!("{name}_{w}x{h}"), draw(&s, w, h));
        }
    }
}

/// Every task id appears whole on its row of the board, at the smallest
/// size and for an id longer than any sample's.
#[test]
fn no_task_id_is_cut_at_100x30() {
    let long = tui_common::DRILL
        .replace("  - id: T1\n", "  - id: interior-search-east-wing-level-2\n")
        .replace(
            "placement: { E1: T1, E2: T1,",
            "placement: { E1: interior-search-east-wing-level-2, E2: interior-search-east-wing-level-2,",
        );
    let mut incidents: Vec<(String, Incident)> = SAMPLES
        .iter()
        .map(|(n, t)| (n.to_string(), sample(t, n)))
        .collect();
    incidents.push(("long id".into(), sample(&long, "long.yaml")));
    for (name, inc) in incidents {
        let ids: Vec<String> = inc.tasks.iter().map(|t| t.id.clone()).collect();
        let mut s = state(Mode::Command, inc);
        for (pos, _) in s.task_order().iter().enumerate() {
            s.selected = pos;
            let screen = rows(&draw(&s, 100, 30));
            for id in &ids {
                // On a board row: the id followed by a space, after the
                // row's marker.
                let whole = screen
                    .iter()
                    .any(|r| r.contains(&format!("▸ {id} ")) || r.contains(&format!("  {id} ")));
                assert!(
                    whole,
                    "{name}: task id {id} cut at 100×30:\n{}",
                    screen.join("\n")
                );
            }
            // The header names the worst open task whole too.
            if let Some(t) = oddsboard::tui::board::worst_open(&s.incident, &s.ground) {
                let id = &s.incident.tasks[t].id;
                assert!(
                    screen[0].contains(&format!("worst task {id} ")),
                    "{name}: header cuts {id}: {}",
                    screen[0]
                );
            }
        }
    }
}

/// The numbers of a task row (odds, units, the proposal's change) fit at
/// 100×30: each row ends inside the panel with its unit count whole.
#[test]
fn task_rows_keep_their_numbers_at_100x30() {
    for (name, text) in SAMPLES {
        let s = state(Mode::Watch, sample(text, name));
        let screen = rows(&draw(&s, 100, 30));
        for t in &s.incident.tasks {
            if !t.is_open() {
                continue;
            }
            let row = screen
                .iter()
                .find(|r| {
                    r.contains(&format!("  {} ", t.id)) || r.contains(&format!("▸ {} ", t.id))
                })
                .unwrap_or_else(|| panic!("{name}: no row for {}", t.id));
            assert!(row.contains(" %"), "{name}: {row}");
            assert!(
                row.split('│')
                    .nth(1)
                    .is_some_and(|cell| cell.trim_end().ends_with('u')),
                "{name}: the unit count is cut: {row}"
            );
        }
    }
}

/// The add-task form over the board at the smallest size, with an error
/// under the needs field.
#[test]
fn add_task_form_at_100x30() {
    use oddsboard::tui::app::{AppEvent, update};
    use ratatui::crossterm::event::{KeyCode, KeyEvent};
    let mut s = state(Mode::Command, tui_common::drill());
    let key = |s: &mut oddsboard::tui::AppState, c: KeyCode| {
        update(s, AppEvent::Key(KeyEvent::from(c)));
    };
    key(&mut s, KeyCode::Char('o'));
    for (text, enter) in [
        ("search-annex", true),
        ("Search the annex offices", true),
        ("life", true),
        ("crew 4", true),
    ] {
        for c in text.chars() {
            key(&mut s, KeyCode::Char(c));
        }
        if enter {
            key(&mut s, KeyCode::Enter);
        }
    }
    for _ in 0..3 {
        key(&mut s, KeyCode::Enter);
    }
    assert_snapshot!(draw(&s, 100, 30));
}

/// The board's screen as rows of cells (one symbol each).
fn cells(b: &ratatui::backend::TestBackend) -> Vec<Vec<String>> {
    let buf = b.buffer();
    (0..buf.area.height)
        .map(|y| {
            (0..buf.area.width)
                .map(|x| buf[(x, y)].symbol().to_string())
                .collect()
        })
        .collect()
}

/// The inner rows of the bordered panel whose title starts with `title`.
fn panel(screen: &[Vec<String>], title: &str) -> Vec<String> {
    let text: Vec<String> = screen.iter().map(|r| r.concat()).collect();
    let Some((top, col)) = text.iter().enumerate().find_map(|(y, r)| {
        r.find(&format!("┌ {title}"))
            .map(|byte| (y, r[..byte].chars().count()))
    }) else {
        return Vec::new();
    };
    let mut out = Vec::new();
    for row in &screen[top + 1..] {
        if row[col] == "└" {
            break;
        }
        let end = (col + 1..row.len())
            .find(|&x| row[x] == "│")
            .unwrap_or(row.len());
        out.push(row[col + 1..end].concat());
    }
    out
}

/// Words separated by single spaces (a no-break space is a space).
fn words(s: &str) -> String {
    s.replace('\u{a0}', " ")
        .split_whitespace()
        .collect::<Vec<_>>()
        .join(" ")
}

/// Each sample twice: as on the ground (watch) and with a proposal that
/// takes units off their tasks (more notes: each withdrawal has one).
fn states_with_notes() -> Vec<(String, oddsboard::tui::AppState)> {
    use oddsboard::tui::app::{AppEvent, update};
    let mut out = Vec::new();
    for (name, text) in SAMPLES {
        out.push((name.to_string(), state(Mode::Watch, sample(text, name))));
        let mut s = state(Mode::Command, sample(text, name));
        let inc = &s.incident;
        let mut moved = inc.placement.clone();
        let open: Vec<_> = inc
            .tasks
            .iter()
            .enumerate()
            .filter(|(_, t)| t.is_open())
            .map(|(i, _)| oddsboard::model::TaskIdx::new(i))
            .collect();
        let placed: Vec<_> = inc
            .roster()
            .filter_map(|(u, _)| inc.placement.get(u).map(|t| (u, t)))
            .collect();
        for (u, t) in placed.into_iter().step_by(2).take(4) {
            let i = open.iter().position(|&o| o == t).unwrap_or(0);
            moved.set(u, Some(open[(i + 1) % open.len()]));
        }
        let generation = s.generation;
        update(
            &mut s,
            AppEvent::SolverProgress {
                generation,
                placement: Some(moved),
                elapsed: std::time::Duration::from_millis(100),
                iterations: 10,
                bound: None,
            },
        );
        assert!(s.proposal.is_some(), "{name}: no proposal");
        out.push((format!("{name} with a proposal"), s));
    }
    out
}

/// The safety notes panel shows each note whole or not at all, and says
/// how many it hides; while it hides any, the log below has no more than
/// its minimum of three rows (life-safety notes outrank log history).
#[test]
fn notes_are_whole_and_outrank_the_log() {
    use ratatui::crossterm::event::{KeyCode, KeyEvent};
    for (name, s) in states_with_notes() {
        let mut all: Vec<String> = oddsboard::tui::panel_notes::contextual(&s)
            .iter()
            .map(|n| words(&format!("! {n}")))
            .collect();
        all.extend(
            oddsboard::tui::panel_notes::advice_lines(&s)
                .iter()
                .map(|(_, t)| words(t)),
        );
        for (w, h) in SIZES {
            let screen = cells(&draw(&s, w, h));
            let rows = panel(&screen, "Safety notes");
            let caution = rows
                .iter()
                .position(|r| r.trim_start().starts_with("Decision support"))
                .unwrap_or_else(|| panic!("{name} {w}×{h}: no caution"));
            let shown = words(&rows[..caution].join(" "));
            let mut hidden = 0;
            let mut first_hidden = None;
            for note in &all {
                // Its first words (unit and task ids among them).
                let head = note.split(' ').take(5).collect::<Vec<_>>().join(" ");
                if shown.contains(note.as_str()) {
                    continue;
                }
                assert!(
                    !shown.contains(&head),
                    "{name} {w}×{h}: note cut mid-sentence: {note}\n{}",
                    rows.join("\n")
                );
                hidden += 1;
                first_hidden.get_or_insert(note.clone());
            }
            if hidden > 0 {
                assert!(
                    shown.contains("N lists all") || shown.contains("N: all"),
                    "{name} {w}×{h}: {hidden} notes hidden without a word:\n{}",
                    rows.join("\n")
                );
                // The log keeps three rows; it may have more only when
                // those could not hold the first hidden note even packed
                // tight (its length over the panel's width).
                let log = panel(&screen, "Log");
                let width = rows[0].chars().count();
                let extra = log.len().saturating_sub(3);
                let next = first_hidden.unwrap_or_default().chars().count();
                assert!(
                    next > extra * width,
                    "{name} {w}×{h}: a note of {next} characters hidden while the log has {} rows",
                    log.len()
                );
                // N lists them all, whole.
                let mut listed = s.clone();
                oddsboard::tui::update(
                    &mut listed,
                    oddsboard::tui::app::AppEvent::Key(KeyEvent::from(KeyCode::Char('N'))),
                );
                let screen = cells(&draw(&listed, w, h));
                let list = words(&panel(&screen, "Safety notes, all").join(" "));
                for note in &all {
                    assert!(
                        list.contains(note.as_str()),
                        "{name} {w}×{h}: N omits {note}"
                    );
                }
            }
        }
    }
}

/// The units panel uses its rows: while any unit is folded onto a packed
/// line (no row of its own), no row of the panel is empty. Every unit is
/// named, and a unit on its own row shows its type and the target of its
/// proposed move whole.
#[test]
fn units_panel_fills_its_rows_before_folding() {
    for (name, s) in states_with_notes() {
        let inc = &s.incident;
        for (w, h) in SIZES {
            let screen = cells(&draw(&s, w, h));
            let rows = panel(&screen, "Units");
            let text = rows.join("\n");
            let mut folded = Vec::new();
            for (u, unit) in inc.roster() {
                let ty = &inc.unit_types[unit.type_idx].id;
                let own = rows.iter().find(|r| {
                    let mut f = r.split_whitespace();
                    r.starts_with("  ")
                        && f.next().map(|t| t.trim_end_matches(['*', '→'])) == Some(&unit.id)
                        && f.next() == Some(ty.as_str())
                });
                match own {
                    Some(row) => {
                        if let Some(m) = s
                            .proposal
                            .as_ref()
                            .and_then(|p| p.moves.iter().find(|m| m.unit == u))
                        {
                            let to = oddsboard::tui::board::place_name(inc, m.to);
                            assert!(
                                row.trim_end().ends_with(&format!("→ {to}")),
                                "{name} {w}×{h}: move cut: {row}"
                            );
                        }
                    }
                    None => {
                        assert!(
                            text.split([' ', '\n'])
                                .any(|t| t.trim_end_matches(['*', '→']) == unit.id),
                            "{name} {w}×{h}: {} not in the units panel:\n{text}",
                            unit.id
                        );
                        folded.push(unit.id.clone());
                    }
                }
            }
            if !folded.is_empty() {
                let empty = rows.iter().filter(|r| r.trim().is_empty()).count();
                assert_eq!(
                    empty, 0,
                    "{name} {w}×{h}: {empty} empty rows while {folded:?} are folded:\n{text}"
                );
            }
        }
    }
}

/// The full list of notes (N) on a screen too short for it keeps the
/// caution at its foot, says it scrolls, and scrolled to its end shows the
/// last note's end.
#[test]
fn the_notes_list_scrolls_under_its_caution() {
    let (name, s) = states_with_notes()
        .into_iter()
        .find(|(n, _)| n == "river-flood with a proposal")
        .expect("river-flood state");
    let all = oddsboard::tui::panel_notes::contextual(&s);
    let last = words(all.last().expect("notes"));
    let tail: String = last
        .split(' ')
        .rev()
        .take(3)
        .collect::<Vec<_>>()
        .into_iter()
        .rev()
        .collect::<Vec<_>>()
        .join(" ");
    let screen = |scroll: u16| {
        let mut t = ratatui::Terminal::new(ratatui::backend::TestBackend::new(60, 16)).unwrap();
        t.draw(|f| oddsboard::tui::panel_notes::render_all(&s, f, f.area(), scroll))
            .unwrap();
        let rows = panel(&cells(t.backend()), "Safety notes, all");
        words(&rows.join(" "))
    };
    let top = screen(0);
    assert!(top.contains("Decision support only"), "{name}: {top}");
    assert!(top.contains("scroll"), "{name}: {top}");
    assert!(
        !top.contains(&tail),
        "{name}: the list fits after all: {top}"
    );
    let end = screen(u16::MAX);
    assert!(end.contains(&tail), "{name}: scrolled to the end: {end}");
    assert!(end.contains("Decision support only"), "{name}: {end}");
}
