//! The incident snapshot of a log's first record: the incident as the
//! incident file, and back.

use crate::model::file::{
    IncidentFile, IncidentHeader, NeedFile, RatingFile, SecureFile, TaskFile, TraitFile,
    UncertainNeedFile, UnitFile, UnitTypeFile,
};
use crate::model::{Incident, Rating, UnitStatus, parse_incident_str};

/// The incident as the incident file (placement, pins and closed tasks
/// included), for the first record of a log.
pub fn to_file(incident: &Incident) -> IncidentFile {
    // Interim: written here until the model offers the conversion itself.
    let secure = &incident.secure.levels;
    let rating = |r: &Rating| RatingFile {
        mean: Some(r.mean),
        sd: Some(r.sd),
    };
    IncidentFile {
        incident: IncidentHeader {
            name: incident.name.clone(),
            started: incident.started.clone(),
            reserve_min: (incident.reserve_min > 0).then_some(i64::from(incident.reserve_min)),
            secure: Some(SecureFile {
                life: Some(secure[0]),
                stabilization: Some(secure[1]),
                property: Some(secure[2]),
            }),
        },
        traits: incident
            .traits
            .iter()
            .map(|t| TraitFile {
                id: t.id.clone(),
                label: Some(t.label.clone()),
                unit: (!t.unit.is_empty()).then(|| t.unit.clone()),
            })
            .collect(),
        unit_types: incident
            .unit_types
            .iter()
            .map(|ty| UnitTypeFile {
                id: ty.id.clone(),
                label: Some(ty.label.clone()),
                rho: Some(ty.rho),
                traits: incident
                    .traits
                    .iter()
                    .zip(&ty.ratings)
                    .filter(|(_, r)| r.mean != 0.0 || r.sd != 0.0)
                    .map(|(t, r)| (t.id.clone(), rating(r)))
                    .collect(),
                cost: ty.cost,
            })
            .collect(),
        units: incident
            .units
            .iter()
            .map(|u| UnitFile {
                id: u.id.clone(),
                unit_type: incident.unit_types[u.type_idx].id.clone(),
                traits: incident
                    .traits
                    .iter()
                    .zip(&u.ratings)
                    .zip(&incident.unit_types[u.type_idx].ratings)
                    .filter(|((_, r), d)| r != d)
                    .map(|((t, r), _)| (t.id.clone(), rating(r)))
                    .collect(),
                status: (u.status != UnitStatus::Available).then(|| u.status.as_str().to_string()),
            })
            .collect(),
        tasks: incident
            .tasks
            .iter()
            .map(|t| TaskFile {
                id: t.id.clone(),
                label: Some(t.label.clone()),
                tier: Some(t.tier.as_str().to_string()),
                needs: incident
                    .traits
                    .iter()
                    .zip(&t.needs)
                    .filter(|(_, n)| n.counts())
                    .map(|(k, n)| {
                        let need = if n.sd > 0.0 {
                            NeedFile::Uncertain(UncertainNeedFile {
                                need: n.need,
                                sd: Some(n.sd),
                            })
                        } else {
                            NeedFile::Certain(n.need)
                        };
                        (k.id.clone(), need)
                    })
                    .collect(),
                accepts: t.accepts.as_ref().map(|a| {
                    a.iter()
                        .map(|&ty| incident.unit_types[ty].id.clone())
                        .collect()
                }),
                min_units: t.min_units.map(i64::from),
                max_units: t.max_units.map(i64::from),
                outcome: t.outcome.map(|o| o.as_str().to_string()),
            })
            .collect(),
        placement: incident
            .placement
            .0
            .iter()
            .enumerate()
            .filter_map(|(u, t)| {
                t.map(|t| {
                    (
                        incident.units[u].id.clone(),
                        Some(incident.tasks[t].id.clone()),
                    )
                })
            })
            .collect(),
        pins: incident
            .pins
            .iter()
            .map(|(&u, &t)| (incident.units[u].id.clone(), incident.tasks[t].id.clone()))
            .collect(),
    }
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
