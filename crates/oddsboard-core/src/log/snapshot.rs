//! The incident snapshot of a log's first record: the incident as the
//! incident file, and back.

use crate::model::file::IncidentFile;
use crate::model::{Incident, parse_incident_str};

/// The incident as the incident file (placement, pins and closed tasks
/// included), for the first record of a log.
pub fn to_file(incident: &Incident) -> IncidentFile {
    IncidentFile::from_incident(incident)
}

/// Validates a snapshot and turns it into the state. The snapshot goes
/// through the same loader as an incident file, so a log never holds a state
/// an incident file could not.
pub fn from_file(file: &IncidentFile, what: &str) -> Result<Incident, String> {
    let json = serde_json::to_string(file).map_err(|e| e.to_string())?;
    // JSON is YAML, so the incident file loader reads it as it is.
    parse_incident_str(&json, what).map_err(|e| {
        e.diagnostics()
            .iter()
            .map(|d| {
                if d.path.is_empty() {
                    d.message.clone()
                } else {
                    format!("{}: {}", d.path, d.message)
                }
            })
            .collect::<Vec<_>>()
            .join("; ")
    })
}
