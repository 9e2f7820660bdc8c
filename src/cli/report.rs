//! `oddsboard report LOG`: the after-action report (Markdown) of a log.

use super::CliResult;
use super::input::read_log_reporting;
use crate::report::{after_action, render_markdown};
use std::path::PathBuf;

#[derive(Debug, clap::Args)]
pub struct Args {
    /// The log to report on.
    pub log: PathBuf,
    /// The report's content as one JSON document instead of Markdown.
    #[arg(long)]
    pub json: bool,
}

pub fn run(args: Args) -> CliResult {
    let (_, contents) = read_log_reporting(&args.log)?;
    let name = args.log.display().to_string();
    let data = after_action(&contents.records, &name).map_err(|e| e.in_file(&name))?;
    if args.json {
        super::json::print_pretty(&data)?;
    } else {
        print!("{}", render_markdown(&data));
    }
    Ok(())
}
