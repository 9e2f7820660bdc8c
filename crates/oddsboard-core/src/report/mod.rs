//! Reading a log back: the timeline (one row per record with the ground odds
//! after it and the proposal in force) and the after-action report.
//!
//! Main types:
//! * [`timeline::TimelineWalker`]: steps a log record by record, keeping
//!   per-task tallies up to date incrementally.
//! * [`after_action::after_action_report`]: the Markdown report.
//! * [`calibration`]: Brier score and reliability table.
//!
//! Invariant: pure functions of the records; no terminal, no clock, no files.

pub mod after_action;
pub mod calibration;
pub mod ratings;
pub mod timeline;

pub use after_action::{
    AfterAction, CalibrationAcross, after_action, after_action_report, calibration_across,
    render_across_markdown, render_markdown,
};
pub use calibration::{brier_score, reliability_table};
pub use timeline::{ProposalOdds, Row, TimelineWalker, timeline};
