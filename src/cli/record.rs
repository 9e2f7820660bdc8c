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
    /// Stamp the record with this time (RFC 3339, e.g.
    /// 2026-03-09T03:05:00Z) instead of now, for recording a drill or an
    /// exercise after the fact. Refused when earlier than the log's last
    /// record; with `-`, every line gets this time.
    #[arg(long, value_name = "RFC3339", value_parser = parse_at)]
    pub at: Option<chrono::DateTime<chrono::Utc>>,
    /// Print one JSON document: for each event, its stdin line, and the
    /// record written (`seq`, `at`, `kind`) or the reason it was refused.
    #[arg(long)]
    pub json: bool,
}

/// What became of one event, for `--json`.
#[derive(serde::Serialize)]
struct Outcome {
    /// stdin line (1 for an event given on the command line).
    line: usize,
    recorded: bool,
    seq: Option<u64>,
    at: Option<String>,
    kind: Option<&'static str>,
    event: Option<String>,
    error: Option<String>,
}

/// Parses `--at`: an RFC 3339 time, kept in UTC.
pub fn parse_at(text: &str) -> Result<chrono::DateTime<chrono::Utc>, String> {
    chrono::DateTime::parse_from_rfc3339(text.trim())
        .map(|t| t.with_timezone(&chrono::Utc))
        .map_err(|e| format!("not an RFC 3339 time (e.g. 2026-03-09T03:05:00Z): {e}"))
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
        let record = writer.append_at(&by, event, args.at)?;
        warn_repair(&writer, &log);
        if args.json {
            super::json::print_rows(&[recorded(1, &record)])?;
        } else {
            println!(
                "recorded seq {}: {}",
                record.seq,
                crate::clean::clean(&record.event.describe())
            );
        }
        return Ok(());
    }
    let mut outcomes = Vec::new();
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
            .and_then(|ev| {
                writer
                    .append_at(&by, ev, args.at)
                    .map_err(|e| e.to_string())
            });
        match outcome {
            Ok(r) => {
                ok += 1;
                if args.json {
                    outcomes.push(recorded(line_no, &r));
                } else {
                    println!(
                        "stdin:{line_no}: recorded seq {}: {}",
                        r.seq,
                        crate::clean::clean(&r.event.describe())
                    );
                }
            }
            Err(e) => {
                refused += 1;
                eprintln!("stdin:{line_no}: refused: {}", crate::clean::clean(&e));
                outcomes.push(Outcome {
                    line: line_no,
                    recorded: false,
                    seq: None,
                    at: None,
                    kind: None,
                    event: None,
                    error: Some(e),
                });
            }
        }
    }
    warn_repair(&writer, &log);
    if args.json {
        super::json::print_rows(&outcomes)?;
    }
    if refused > 0 {
        anyhow::bail!(
            "{log}: {refused} of {} events refused (the others were recorded)",
            ok + refused
        );
    }
    Ok(())
}

fn recorded(line: usize, r: &crate::log::Record) -> Outcome {
    Outcome {
        line,
        recorded: true,
        seq: Some(r.seq),
        at: Some(r.at.to_rfc3339_opts(chrono::SecondsFormat::Millis, true)),
        kind: Some(r.event.kind()),
        event: Some(r.event.describe()),
        error: None,
    }
}

fn warn_repair(writer: &LogWriter, log: &str) {
    if let Some(t) = writer.repaired_tail() {
        eprintln!(
            "warning: {log}:{}: {t}; it was cut off before appending",
            t.line
        );
    }
}
