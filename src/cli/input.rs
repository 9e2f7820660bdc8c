//! Reading the state a command works on: an incident file (YAML) or a log
//! (the state at its end).

use crate::model::{Incident, load_incident_file};
use std::path::Path;

/// Loads an incident file, or a log's state at its end. Errors carry the
/// located diagnostics, one per line.
pub fn load_state(path: &Path) -> anyhow::Result<Incident> {
    // TODO(log): detect a log and fold it.
    Ok(load_incident_file(path)?)
}
