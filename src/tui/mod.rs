//! The terminal dashboard: `dash` (the commander's), `watch` (the duty
//! officer's, read-only) and `replay` (the trainer's).
//!
//! Built as The Elm Architecture: [`app::AppState`] holds everything shown,
//! [`app::AppEvent`] is the one closed set of things that can happen,
//! [`app::update`] is the only state transition and returns
//! [`app::Effect`]s (append to the log, re-plan, quit) that the runtime
//! carries out, and [`view::render`] draws the state without changing it.
//! The app is generic over the ratatui `Backend`, so tests drive it on a
//! `TestBackend`.
//!
//! One file per panel: `panel_tasks`, `panel_units`, `panel_picture`,
//! `panel_notes`, `panel_log`, `panel_replay`, `panel_status`,
//! `panel_help`. Operator actions (which form, which log events, which
//! compensating events undo them) live in `actions` and `form`; the event
//! loop in `runtime`, terminal setup and restore in `terminal`, the start of
//! a run in `launch`, the background re-plan adapter in `planner`.
//!
//! Invariant: the incident shown changes only by applying log records
//! (`AppEvent::RecordAppended`); an operator action is an `Effect::Append`
//! that the runtime writes first.

pub mod actions;
pub mod app;
pub mod board;
pub mod form;
pub mod format;
pub mod keys;
pub mod launch;
pub mod panel_help;
pub mod panel_log;
pub mod panel_notes;
pub mod panel_picture;
pub mod panel_replay;
pub mod panel_status;
pub mod panel_tasks;
pub mod panel_units;
pub mod planner;
pub mod replay;
pub mod runtime;
pub mod terminal;
pub mod theme;
pub mod update;
pub mod view;

pub use app::{AppEvent, AppState, Effect, Mode, update};
pub use theme::Theme;
pub use view::render;
