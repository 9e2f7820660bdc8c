//! `oddsboard check FILE`: validates an incident file or a log. Exit 0 with
//! a one-line summary, or every problem as `file:line:col: path: message`
//! and exit 1. `--json` prints `{ "ok", "errors": [ … ] }` on stdout.

use super::CliResult;
use super::input::{load_state, looks_like_log};
use crate::model::{Diagnostic, Incident, LoadError, Tier, UnitStatus, load_incident_file};
use serde::Serialize;
use std::path::{Path, PathBuf};

#[derive(Debug, clap::Args)]
pub struct Args {
    /// Incident file (YAML) or log.
    pub file: PathBuf,
    /// Print one JSON document on stdout: `{ "ok": bool, "summary": text or
    /// null, "errors": [ { "file", "line", "column", "path", "message" } ] }`.
    #[arg(long)]
    pub json: bool,
}

#[derive(Serialize)]
struct Report {
    ok: bool,
    summary: Option<String>,
    errors: Vec<ErrorEntry>,
}

#[derive(Serialize)]
struct ErrorEntry {
    file: String,
    line: Option<usize>,
    column: Option<usize>,
    path: String,
    message: String,
}

impl From<Diagnostic> for ErrorEntry {
    fn from(d: Diagnostic) -> Self {
        ErrorEntry {
            file: d.file,
            line: d.line,
            column: d.column,
            path: d.path,
            message: d.message,
        }
    }
}

pub fn run(args: Args) -> CliResult {
    let is_log = looks_like_log(&args.file);
    let loaded: anyhow::Result<Incident> = if is_log {
        load_state(&args.file)
    } else {
        load_incident_file(&args.file).map_err(anyhow::Error::from)
    };
    match loaded {
        Ok(incident) => {
            let summary = summary(&incident, is_log);
            if args.json {
                let report = Report {
                    ok: true,
                    summary: Some(summary),
                    errors: Vec::new(),
                };
                super::json::print_pretty(&report)?;
            } else {
                println!("{}", crate::clean::clean_lines(&summary));
            }
            Ok(())
        }
        Err(e) => {
            if args.json {
                let report = Report {
                    ok: false,
                    summary: None,
                    errors: error_entries(&e, &args.file),
                };
                super::json::print_pretty(&report)?;
                let n = report.errors.len();
                anyhow::bail!(
                    "{}: {n} problem{} (listed on stdout)",
                    args.file.display(),
                    if n == 1 { "" } else { "s" }
                );
            }
            Err(e)
        }
    }
}

/// The located diagnostics behind `e`, or `e` itself as one entry.
fn error_entries(e: &anyhow::Error, file: &Path) -> Vec<ErrorEntry> {
    match e.downcast_ref::<LoadError>() {
        Some(load) => load.diagnostics().into_iter().map(Into::into).collect(),
        None => vec![ErrorEntry {
            file: file.display().to_string(),
            line: None,
            column: None,
            path: String::new(),
            message: super::error_text(e),
        }],
    }
}

fn plural(n: usize, one: &str, many: &str) -> String {
    format!("{n} {}", if n == 1 { one } else { many })
}

/// `ok: <name>: 12 units (1 out of service), 6 tasks (2 life, …), placement:
/// 8 placed, 2 pins`.
pub fn summary(incident: &Incident, is_log: bool) -> String {
    let out_of_service = incident
        .units
        .iter()
        .filter(|u| u.status == UnitStatus::OutOfService)
        .count();
    let mut units = plural(incident.roster_len(), "unit", "units");
    if out_of_service > 0 {
        units.push_str(&format!(" ({out_of_service} out of service)"));
    }
    let mut by_tier: Vec<String> = Tier::ALL
        .iter()
        .filter_map(|&tier| {
            let n = incident
                .tasks
                .iter()
                .filter(|t| t.is_open() && t.tier == tier)
                .count();
            (n > 0).then(|| format!("{n} {}", tier.as_str()))
        })
        .collect();
    let closed = incident.tasks.iter().filter(|t| !t.is_open()).count();
    if closed > 0 {
        by_tier.push(format!("{closed} closed"));
    }
    let mut tasks = plural(incident.tasks.len(), "task", "tasks");
    if !by_tier.is_empty() {
        tasks.push_str(&format!(" ({})", by_tier.join(", ")));
    }
    let placed = incident.placement.0.iter().filter(|p| p.is_some()).count();
    format!(
        "ok: {}{}: {units}, {tasks}, placement: {placed} placed, {}",
        incident.name,
        if is_log {
            " (log, state at its end)"
        } else {
            ""
        },
        plural(incident.pins.len(), "pin", "pins"),
    )
}
