//! Shared pieces of the dashboard tests: an invented incident and helpers to
//! draw the app on a `TestBackend`.
#![allow(dead_code)]

use oddsboard::model::{Incident, parse_incident_str};
use oddsboard::tui::{AppState, Mode, Theme, render};
use ratatui::Terminal;
use ratatui::backend::TestBackend;

/// An invented drill incident (not a real event): a warehouse fire with a
/// search-and-rescue task, exposure protection and salvage.
pub const DRILL: &str = r#"
incident:
  name: Invented drill - harbour warehouse fire
  started: 2026-05-14T09:20:00Z
traits:
  - { id: water, label: Water delivery, unit: L/min }
  - { id: lift, label: Lift capacity, unit: t }
unit_types:
  - id: engine
    label: Pumper engine
    rho: 0.2
    traits: { water: { mean: 1900, sd: 250 }, lift: { mean: 0.3, sd: 0.1 } }
  - id: tender
    label: Water tender
    traits: { water: { mean: 1200, sd: 600 } }
  - id: heavy
    label: Heavy rescue
    traits: { lift: { mean: 8, sd: 1.5 }, water: { mean: 200, sd: 50 } }
units:
  - { id: E1, type: engine }
  - { id: E2, type: engine }
  - { id: E3, type: engine }
  - { id: E4, type: engine }
  - { id: W1, type: tender }
  - { id: W2, type: tender }
  - { id: H1, type: heavy }
  - { id: E5, type: engine, status: out_of_service }
tasks:
  - id: T1
    label: Interior search, east wing
    tier: life
    needs: { water: 3000 }
    min_units: 2
  - id: T2
    label: Collapse shoring, loading dock
    tier: life
    needs: { lift: 6, water: 150 }
  - id: T3
    label: Exposure protection, tank farm
    tier: stabilization
    needs: { water: { need: 2500, sd: 200 } }
  - id: T4
    label: Salvage, records office
    tier: property
    needs: { water: 1000 }
placement: { E1: T1, E2: T1, H1: T2, E3: T3, W1: T3, W2: T4 }
pins: { H1: T2 }
"#;

pub fn drill() -> Incident {
    parse_incident_str(DRILL, "drill.yaml").expect("drill incident parses")
}

/// The drill with `placement` replaced (YAML flow map text).
pub fn drill_with_placement(placement: &str) -> Incident {
    let text = DRILL.replace(
        "placement: { E1: T1, E2: T1, H1: T2, E3: T3, W1: T3, W2: T4 }",
        &format!("placement: {placement}"),
    );
    parse_incident_str(&text, "drill.yaml").expect("drill variant parses")
}

pub fn state(mode: Mode, incident: Incident) -> AppState {
    AppState::new(mode, incident, Theme::monochrome())
}

/// Draws the state at `w`×`h` and returns the backend for a snapshot.
pub fn draw(state: &AppState, w: u16, h: u16) -> TestBackend {
    let mut terminal = Terminal::new(TestBackend::new(w, h)).expect("test terminal");
    terminal.draw(|f| render(state, f)).expect("draw");
    terminal.backend().clone()
}

use oddsboard::log::{Event, LogWriter, read_log};
use oddsboard::tui::app::{AppEvent, Effect, update};
use ratatui::crossterm::event::{KeyCode, KeyEvent};

/// A log of the drill in a temporary folder and the commander's state on it.
pub struct Bench {
    pub dir: tempfile::TempDir,
    pub path: std::path::PathBuf,
    pub writer: LogWriter,
    pub state: AppState,
}

impl Bench {
    pub fn new(incident: Incident) -> Bench {
        let dir = tempfile::tempdir().expect("temp dir");
        let path = dir.path().join("drill.log");
        let writer = LogWriter::create(&path, &incident, "ic").expect("log created");
        let records = read_log(&path).expect("log reads").records;
        let mut state =
            oddsboard::cli::dash::state_from_records(Mode::Command, &records, Theme::monochrome())
                .expect("state from log");
        state.operator = "ic".into();
        Bench {
            dir,
            path,
            writer,
            state,
        }
    }

    /// Sends one event; appends what the update asks to append, feeds each
    /// written record back, and returns the events written.
    pub fn send(&mut self, event: AppEvent) -> Vec<Event> {
        let mut written = Vec::new();
        let mut queue: std::collections::VecDeque<Effect> = update(&mut self.state, event).into();
        while let Some(effect) = queue.pop_front() {
            if let Effect::Append { events, undoable } = effect {
                for e in events {
                    match self.writer.append("ic", e.clone()) {
                        Ok(record) => {
                            written.push(e);
                            queue.extend(update(&mut self.state, AppEvent::RecordAppended(record)));
                        }
                        Err(err) => {
                            queue.extend(update(
                                &mut self.state,
                                AppEvent::AppendFailed {
                                    message: err.to_string(),
                                    undoable,
                                },
                            ));
                            break;
                        }
                    }
                }
            }
        }
        written
    }

    pub fn key(&mut self, code: KeyCode) -> Vec<Event> {
        self.send(AppEvent::Key(KeyEvent::from(code)))
    }

    /// Types text then presses Enter; returns what was written.
    pub fn type_enter(&mut self, text: &str) -> Vec<Event> {
        let mut out = Vec::new();
        for c in text.chars() {
            out.extend(self.key(KeyCode::Char(c)));
        }
        out.extend(self.key(KeyCode::Enter));
        out
    }

    /// The state the log's fold gives.
    pub fn folded(&self) -> Incident {
        let records = read_log(&self.path).expect("log reads").records;
        oddsboard::log::fold(&records).expect("log folds")
    }

    pub fn records(&self) -> Vec<oddsboard::log::Record> {
        read_log(&self.path).expect("log reads").records
    }
}
