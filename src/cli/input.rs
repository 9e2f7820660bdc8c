//! Reading the state a command works on: an incident file (YAML) or a log
//! (the state at its end).

use crate::model::{Incident, load_incident_file};
use std::path::Path;

/// True when `path` looks like an incident log rather than an incident file.
pub fn looks_like_log(_path: &Path) -> bool {
    // TODO(log): a log is JSON lines whose first record carries `seq`.
    false
}

/// Loads an incident file, or a log's state at its end. Errors carry the
/// located diagnostics, one per line.
pub fn load_state(path: &Path) -> anyhow::Result<Incident> {
    // TODO(log): detect a log and fold it.
    Ok(load_incident_file(path)?)
}
