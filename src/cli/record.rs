//! `oddsboard record LOG EVENT`: appends one event after checking it applies;
//! `-` reads one event a line from stdin, each line all-or-nothing.

use super::CliResult;
use super::input::actor;
use crate::log::{Event, LogWriter};
use std::io::BufRead;
use std::path::PathBuf;

#[derive(Debug, clap::Args)]
pub struct Args {
    /// The log to append to.
    pub log: PathBuf,
    /// The event as YAML or JSON text, e.g. '{kind: unit_lost, unit: E2}';
    /// `-` reads one event a line from stdin (blank lines and lines starting
    /// with `#` are skipped).
    pub event: String,
    /// Who records it (default: $USER, else "operator").
    #[arg(long)]
    pub by: Option<String>,
}

/// Parses one event from YAML or JSON text.
pub fn parse_event(text: &str) -> Result<Event, String> {
    serde_yaml::from_str::<Event>(text).map_err(|e| {
        let msg = e.to_string();
        match e.location() {
            Some(l) if !msg.contains("line ") => {
                format!("line {} column {}: {msg}", l.line(), l.column())
            }
            _ => msg,
        }
    })
}

pub fn run(args: Args) -> CliResult {
    let by = actor(args.by);
    let log = args.log.display().to_string();
    let mut writer = LogWriter::open(&args.log)?;
    if args.event != "-" {
        let event = parse_event(&args.event).map_err(|e| anyhow::anyhow!("{log}: event: {e}"))?;
        let record = writer.append(&by, event)?;
        warn_repair(&writer, &log);
        println!("recorded seq {}: {}", record.seq, record.event.describe());
        return Ok(());
    }
    let stdin = std::io::stdin();
    let (mut ok, mut refused) = (0usize, 0usize);
    for (i, line) in stdin.lock().lines().enumerate() {
        let line_no = i + 1;
        let line = line.map_err(|e| anyhow::anyhow!("stdin:{line_no}: cannot read: {e}"))?;
        let text = line.trim();
        if text.is_empty() || text.starts_with('#') {
            continue;
        }
        let outcome = parse_event(text)
            .map_err(|e| format!("event: {e}"))
            .and_then(|ev| writer.append(&by, ev).map_err(|e| e.to_string()));
        match outcome {
            Ok(r) => {
                ok += 1;
                println!(
                    "stdin:{line_no}: recorded seq {}: {}",
                    r.seq,
                    r.event.describe()
                );
            }
            Err(e) => {
                refused += 1;
                eprintln!("stdin:{line_no}: refused: {e}");
            }
        }
    }
    warn_repair(&writer, &log);
    if refused > 0 {
        anyhow::bail!(
            "{log}: {refused} of {} events refused (the others were recorded)",
            ok + refused
        );
    }
    Ok(())
}

fn warn_repair(writer: &LogWriter, log: &str) {
    if let Some(t) = writer.repaired_tail() {
        eprintln!(
            "warning: {log}:{}: {t}; it was cut off before appending",
            t.line
        );
    }
}
