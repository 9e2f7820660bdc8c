//! The `oddsboard` binary crate: the command line ([`cli`]) and the terminal
//! dashboard ([`tui`]), a thin shell over [`oddsboard_core`], which holds the
//! model, the odds, the solver, the log, the reports and the advice.
//!
//! The core's modules are re-exported here under their own names, so
//! `oddsboard::model` is `oddsboard_core::model`; integration tests and
//! benchmarks use either path.
//!
//! Decision support only: the odds are only as good as the ratings, and the
//! plan never replaces the incident commander's judgement.

pub use oddsboard_core::{advise, clean, log, model, odds, report, rules, safety, solver};

pub mod cli;
pub mod tui;
