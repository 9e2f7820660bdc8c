//! `oddsboard dash`: the commander's dashboard. From an incident file it
//! creates the log (`--log`, default beside the file with the extension
//! `.log`) and starts; from a log it resumes. Started again on the same file,
//! it resumes the default log when that log holds the same incident. Every action is written to the
//! log before the screen shows it as done.

use super::CliResult;
use super::input::{actor, looks_like_log};
use crate::log::{LogWriter, read_log};
use crate::model::load_incident_file;
use crate::tui::app::{AppEvent, AppState, Mode, update};
use crate::tui::launch::{Launch, run as launch};
use crate::tui::planner::{NotesAdvisor, SolverPlanner};
use crate::tui::theme::Theme;
use anyhow::Context;
use std::path::{Path, PathBuf};
use std::sync::Arc;
use std::time::Duration;

#[derive(Debug, clap::Args)]
pub struct Args {
    /// Incident file (YAML) to start from, or a log to resume.
    pub file: PathBuf,
    /// Log to create when starting from an incident file (default: the
    /// file's path with the extension `.log`). Refuses to overwrite.
    #[arg(long)]
    pub log: Option<PathBuf>,
    /// Name written as `by` on this dashboard's records (default: $USER).
    #[arg(long)]
    pub by: Option<String>,
    /// Budget of each background re-plan, in milliseconds (default 2000).
    #[arg(long, default_value_t = 2000)]
    pub budget_ms: u64,
}

/// Builds a dashboard state from a log's records: the snapshot, then every
/// record in turn (so the recent log and the odds history are complete).
pub fn state_from_records(
    mode: Mode,
    records: &[crate::log::Record],
    theme: Theme,
) -> anyhow::Result<AppState> {
    let first = crate::log::fold(&records[..1.min(records.len())])?;
    Ok(state_from(mode, first, records, theme))
}

/// Like [`state_from_records`], with the state of the snapshot record
/// already at hand (`first`), so the snapshot is not loaded again.
pub fn state_from(
    mode: Mode,
    first: crate::model::Incident,
    records: &[crate::log::Record],
    theme: Theme,
) -> AppState {
    let mut state = AppState::new(mode, first, theme);
    for r in records {
        let _ = update(&mut state, AppEvent::RecordAppended(r.clone()));
    }
    state.generation = 0;
    state.advice_generation = 0;
    // A resumed dashboard does not log again the proposal already logged.
    state.last_written_proposal = state.last_proposed.as_ref().map(|(_, m)| m.clone());
    state
}

/// The incident name in a log's snapshot record, read from the record as it
/// is (no load): enough to tell whether a log is of the same incident.
fn logged_name(path: &Path) -> Option<String> {
    let contents = read_log(path).ok()?;
    match &contents.records.first()?.event {
        crate::log::Event::IncidentOpened { incident, .. } => Some(incident.incident.name.clone()),
        _ => None,
    }
}

/// The default log beside an incident file.
pub fn default_log_path(file: &Path) -> PathBuf {
    file.with_extension("log")
}

pub fn run(args: Args) -> CliResult {
    let by = actor(args.by);
    let mut resumed_note = None;
    let (mut writer, log_path) = if looks_like_log(&args.file) {
        let w = LogWriter::open(&args.file)?;
        (w, args.file.clone())
    } else {
        let incident = load_incident_file(&args.file)?;
        let explicit = args.log.is_some();
        let path = args.log.unwrap_or_else(|| default_log_path(&args.file));
        if path.exists() {
            // Re-running the same command after a crash or a closed terminal
            // must pick the incident up where it was, never start it afresh
            // beside a live log. An explicit --log is never reused silently.
            match logged_name(&path) {
                Some(name) if !explicit && name == incident.name => {
                    resumed_note = Some(format!(
                        "Resumed {} (same incident); --log NEW.log starts afresh",
                        path.display()
                    ));
                    (LogWriter::open(&path)?, path)
                }
                _ => anyhow::bail!(
                    "{}: a log already exists there (of another incident, or named with --log); \
                     resume it with `oddsboard dash {}` or choose a new one with --log",
                    path.display(),
                    path.display()
                ),
            }
        } else {
            let w = LogWriter::create(&path, &incident, &by)
                .with_context(|| format!("creating the log {}", path.display()))?;
            (w, path)
        }
    };
    let contents = read_log(&log_path)?;
    if let Some(t) = &contents.torn_tail {
        eprintln!(
            "warning: {}:{}",
            log_path.display(),
            crate::clean::clean(&t.to_string())
        );
    }
    // The writer has the snapshot's state already (it wrote or folded the
    // log): the snapshot is not loaded a second time.
    let mut state = match writer.take_first_state() {
        Some(first) => state_from(Mode::Command, first, &contents.records, Theme::from_env()),
        None => state_from_records(Mode::Command, &contents.records, Theme::from_env())?,
    };
    state.operator = by;
    if let Some(text) = resumed_note {
        state.flash = Some(crate::tui::app::Flash { error: false, text });
    }
    let planner = SolverPlanner::with_budget(Duration::from_millis(args.budget_ms));
    launch(
        state,
        Launch {
            planner: Some(Arc::new(planner)),
            advisor: Some(Arc::new(NotesAdvisor::default())),
            log: Some(Box::new(writer)),
            follow: Some((log_path, contents.end_offset)),
        },
    )
}
