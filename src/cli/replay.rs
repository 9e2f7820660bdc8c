//! `oddsboard replay`: the trainer's dashboard over a saved log: step back
//! and forth, jump to a sequence number or a time, play at a chosen speed,
//! and see what was recommended beside what was done.

use super::CliResult;
use crate::log::read_log;
use crate::tui::app::replay_state;
use crate::tui::launch::{Launch, run as launch};
use crate::tui::theme::Theme;
use std::path::PathBuf;

#[derive(Debug, clap::Args)]
pub struct Args {
    /// The log to replay.
    pub log: PathBuf,
    /// Start at this sequence number (default: the first record).
    #[arg(long)]
    pub at: Option<u64>,
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
    let mut state = replay_state(contents.records, Theme::from_env())?;
    if let Some(seq) = args.at {
        let i = crate::tui::app::replay_target(&state, &seq.to_string())
            .map_err(|e| anyhow::anyhow!("--at: {e}"))?;
        crate::tui::app::replay_seek(&mut state, i);
    }
    launch(
        state,
        Launch {
            planner: None,
            // Advice is not computed in a replay: stepping would restart
            // a second-long computation on every record.
            advisor: None,
            log: None,
            follow: None,
        },
    )
}
