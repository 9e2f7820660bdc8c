//! `oddsboard start FILE --log LOG`: creates a log whose first record is the
//! incident in FILE. Never overwrites.

use super::CliResult;
use super::input::{actor, load_state};
use crate::log::LogWriter;
use std::path::PathBuf;

#[derive(Debug, clap::Args)]
pub struct Args {
    /// Incident file (or a log: its state at the end starts the new log).
    pub file: PathBuf,
    /// The log to create; refused if it exists.
    #[arg(long)]
    pub log: PathBuf,
    /// Who opens the log (default: $USER, else "operator").
    #[arg(long)]
    pub by: Option<String>,
    /// Stamp the opening record with this time (RFC 3339) instead of now,
    /// for recording a drill or an exercise after the fact.
    #[arg(long, value_name = "RFC3339", value_parser = super::record::parse_at)]
    pub at: Option<chrono::DateTime<chrono::Utc>>,
    /// Print what was created as one JSON document.
    #[arg(long)]
    pub json: bool,
}

pub fn run(args: Args) -> CliResult {
    let incident = load_state(&args.file)?;
    if !incident.observations.is_empty() {
        // A snapshot holds ratings, not readings (docs/model.md).
        eprintln!(
            "note: the {} field readings of {} do not carry into the new log; its odds start from the ratings as rated (re-rate units first to keep what the readings showed)",
            incident.observations.readings().len(),
            args.file.display()
        );
    }
    let writer = LogWriter::create_at(&args.log, &incident, &actor(args.by), args.at)?;
    let s = writer.state();
    if args.json {
        let v = serde_json::json!({
            "log": args.log.display().to_string(),
            "seq": writer.last_seq(),
            "incident": s.name,
            "units": s.roster_len(),
            "tasks": s.tasks.len(),
        });
        println!("{v}");
        return Ok(());
    }
    println!(
        "started {}: seq 1, incident snapshot of {} ({} units, {} tasks)",
        args.log.display(),
        crate::clean::clean(&s.name),
        s.roster_len(),
        s.tasks.len()
    );
    Ok(())
}
