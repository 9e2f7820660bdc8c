//! Reading the state a command works on: an incident file (YAML) or a log
//! (the state at its end).

use crate::log::{LogContents, load_log, looks_like_log_bytes};
use crate::model::{Incident, load_incident_file};
use std::io::Read;
use std::path::Path;

/// True when `path` looks like an incident log rather than an incident file:
/// its name ends in `.log` or `.jsonl`, or its first non-blank byte opens a
/// JSON object whose first line has a `"seq"` member. Reads at most 4 KiB.
pub fn looks_like_log(path: &Path) -> bool {
    if path
        .extension()
        .is_some_and(|e| e.eq_ignore_ascii_case("log") || e.eq_ignore_ascii_case("jsonl"))
    {
        return true;
    }
    let Ok(f) = std::fs::File::open(path) else {
        return false;
    };
    let mut head = Vec::with_capacity(4096);
    if f.take(4096).read_to_end(&mut head).is_err() {
        return false;
    }
    looks_like_log_bytes(&head)
}

/// Reads a log, reporting a torn tail on stderr.
pub fn read_log_reporting(path: &Path) -> anyhow::Result<(Incident, LogContents)> {
    let (state, contents) = load_log(path)?;
    if let Some(t) = &contents.torn_tail {
        eprintln!(
            "warning: {}:{}: {}",
            path.display(),
            t.line,
            crate::clean::clean(&t.to_string())
        );
    }
    Ok((state, contents))
}

/// Loads an incident file, or a log's state at its end (a torn tail is
/// reported on stderr). Errors carry the located diagnostics, one per line.
pub fn load_state(path: &Path) -> anyhow::Result<Incident> {
    if looks_like_log(path) {
        Ok(read_log_reporting(path)?.0)
    } else {
        Ok(load_incident_file(path)?)
    }
}

/// Who writes a record: `--by`, else `$USER`, else `operator`.
pub fn actor(by: Option<String>) -> String {
    by.filter(|s| !s.trim().is_empty())
        .or_else(|| std::env::var("USER").ok().filter(|s| !s.trim().is_empty()))
        .unwrap_or_else(|| "operator".to_string())
}
