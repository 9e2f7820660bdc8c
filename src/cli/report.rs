//! `oddsboard report LOG`: the after-action report (Markdown) of a log.

use super::CliResult;
use super::input::read_log_reporting;
use crate::report::after_action_report;
use std::path::PathBuf;

#[derive(Debug, clap::Args)]
pub struct Args {
    /// The log to report on.
    pub log: PathBuf,
}

pub fn run(args: Args) -> CliResult {
    let (_, contents) = read_log_reporting(&args.log)?;
    let name = args.log.display().to_string();
    let md = after_action_report(&contents.records, &name).map_err(|e| e.in_file(&name))?;
    print!("{md}");
    Ok(())
}
