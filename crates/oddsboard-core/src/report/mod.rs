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
pub mod timeline;

pub use after_action::{AfterAction, after_action, after_action_report, render_markdown};
pub use calibration::{brier_score, reliability_table};
pub use timeline::{ProposalOdds, Row, TimelineWalker, timeline};

/// The cautions of decision support in the field (carried by reports).
pub const CAUTIONS: [&str; 6] = [
    "The odds are only as good as the ratings and needs they are computed from.",
    "The model assumes what it states: traits independent of each other, units of different types independent, units of one type correlated only as rated.",
    "A plan never replaces the incident commander's judgement, the incident's command structure, local operating procedures, the applicable codes and standards, or personnel-accountability practice.",
    "Life safety first: a life-safety task in the gamble regime calls for more resources, not for relying on spread.",
    "Before withdrawing units from a task in progress, confirm disengagement and accountability.",
    "A task below its minimum crew is counted as failing whatever its ratings.",
];
