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
    let by = actor(args.by);
    let mut writer = LogWriter::create_at(&args.log, &incident, &by, args.at)?;
    // A snapshot holds ratings, not readings (docs/model.md): the field
    // readings follow it as `observed` records, each with the sd it was
    // weighed with, so the new log's odds start where the old one's ended.
    let left_out = match carry_readings(&mut writer, &incident, &by, args.at) {
        Ok(n) => n,
        Err(e) => {
            // Nothing half-written stays behind: the log was created just now.
            drop(writer);
            let _ = std::fs::remove_file(&args.log);
            return Err(e.into());
        }
    };
    if left_out > 0 {
        let readings = if left_out == 1 { "reading" } else { "readings" };
        eprintln!(
            "note: {left_out} field {readings} of units since lost do not carry into the new log (the snapshot has no lost units); their type-mates' estimates move less than in {}",
            args.file.display()
        );
    }
    let s = writer.state();
    if args.json {
        let v = serde_json::json!({
            "log": args.log.display().to_string(),
            "seq": writer.last_seq(),
            "readings_carried": writer.last_seq() - 1,
            "incident": s.name,
            "units": s.roster_len(),
            "tasks": s.tasks.len(),
        });
        println!("{v}");
        return Ok(());
    }
    let carried = writer.last_seq() - 1;
    let then = match carried {
        0 => String::new(),
        1 => ", then its 1 field reading".to_string(),
        n => format!(", then its {n} field readings"),
    };
    println!(
        "started {}: seq 1, incident snapshot of {} ({} units, {} tasks){then}",
        args.log.display(),
        crate::clean::clean(&s.name),
        s.roster_len(),
        s.tasks.len()
    );
    Ok(())
}

/// Appends one `observed` record per reading of `incident`, in the order
/// they were applied; returns how many readings of lost units were left
/// out (a snapshot has no lost units to name).
fn carry_readings(
    writer: &mut LogWriter,
    incident: &crate::model::Incident,
    by: &str,
    at: Option<chrono::DateTime<chrono::Utc>>,
) -> Result<usize, crate::log::LogError> {
    let mut left_out = 0;
    for r in incident.observations.readings() {
        if incident.units[r.unit].is_lost() {
            left_out += 1;
            continue;
        }
        let event = crate::log::Event::Observed {
            unit: incident.units[r.unit].id.clone(),
            trait_id: incident.traits[r.trait_idx].id.clone(),
            value: r.value,
            sd: Some(r.sd),
        };
        writer.append_at(by, event, at)?;
    }
    Ok(left_out)
}
