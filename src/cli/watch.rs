//! `oddsboard watch`: the duty officer's read-only dashboard, following the
//! records others append to a live log (polled every 250 ms).

use super::CliResult;
use super::dash::state_from_records;
use crate::log::read_log;
use crate::tui::app::Mode;
use crate::tui::launch::{Launch, run as launch};
use crate::tui::planner::NotesAdvisor;
use crate::tui::theme::Theme;
use std::path::PathBuf;
use std::sync::Arc;

#[derive(Debug, clap::Args)]
pub struct Args {
    /// The log to follow.
    pub log: PathBuf,
}

pub fn run(args: Args) -> CliResult {
    let contents = read_log(&args.log)?;
    if let Some(t) = &contents.torn_tail {
        eprintln!(
            "warning: {}:{}",
            args.log.display(),
            crate::clean::clean(&t.to_string())
        );
    }
    let state = state_from_records(Mode::Watch, &contents.records, Theme::from_env())?;
    launch(
        state,
        Launch {
            planner: None,
            // Read-only advice: computed in memory, nothing written.
            advisor: Some(Arc::new(NotesAdvisor::default())),
            log: None,
            follow: Some((args.log, contents.end_offset)),
        },
    )
}
