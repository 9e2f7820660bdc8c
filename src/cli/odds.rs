//! `oddsboard odds FILE`: the odds of the placement on the ground, per task
//! (grouped by tier) and, with `--traits`, per trait; `--json` prints the
//! document of SPEC §5.

use super::CliResult;
use super::input::load_state;
use super::render::{TableOptions, footer, task_table};
use crate::odds::view::odds_view;
use std::path::PathBuf;

#[derive(Debug, clap::Args)]
pub struct Args {
    /// Incident file or log (a log is read to its end).
    pub file: PathBuf,
    /// Show one line per trait under each task.
    #[arg(long)]
    pub traits: bool,
    /// Print one JSON document (placement, tasks, min_odds, worst_by_tier)
    /// instead of the table.
    #[arg(long)]
    pub json: bool,
}

pub fn run(args: Args) -> CliResult {
    let incident = load_state(&args.file)?;
    let view = odds_view(&incident, &incident.placement);
    if args.json {
        super::json::print_pretty(&view)?;
        return Ok(());
    }
    let placed = view.placement.values().filter(|t| t.is_some()).count();
    let mut out = format!(
        "{}: odds of the placement on the ground ({} of {} units placed, {} open tasks)\n\n",
        incident.name,
        placed,
        view.placement.len(),
        view.tasks.len()
    );
    if view.tasks.is_empty() {
        out.push_str("No open tasks.\n\n");
    }
    out.push_str(&task_table(
        &view.tasks,
        &view.worst_by_tier,
        TableOptions {
            traits: args.traits,
        },
    ));
    out.push_str(&footer(&view.tasks));
    print!("{out}");
    Ok(())
}
