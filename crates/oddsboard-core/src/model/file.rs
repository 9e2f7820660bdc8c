//! Serde mirror of the incident file (SPEC §4). This shape is fixed: outside
//! tools write it. Fields may be added, none renamed. Unknown fields are
//! refused. These types are only a mirror: [`super::load`] validates them and
//! converts them into the domain types of [`super`].

use serde::{Deserialize, Serialize};
use std::collections::BTreeMap;

/// The whole incident file.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct IncidentFile {
    pub incident: IncidentHeader,
    pub traits: Vec<TraitFile>,
    #[serde(default)]
    pub unit_types: Vec<UnitTypeFile>,
    #[serde(default)]
    pub units: Vec<UnitFile>,
    #[serde(default)]
    pub tasks: Vec<TaskFile>,
    /// unit id → task id, or null for reserve.
    #[serde(default, skip_serializing_if = "BTreeMap::is_empty")]
    pub placement: BTreeMap<String, Option<String>>,
    /// unit id → task id.
    #[serde(default, skip_serializing_if = "BTreeMap::is_empty")]
    pub pins: BTreeMap<String, String>,
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct IncidentHeader {
    pub name: String,
    /// RFC 3339.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub started: Option<String>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub reserve_min: Option<i64>,
    /// Per-tier secure levels; a tier left out keeps its default.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub secure: Option<SecureFile>,
}

#[derive(Debug, Clone, PartialEq, Default, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct SecureFile {
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub life: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub stabilization: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub property: Option<f64>,
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct TraitFile {
    pub id: String,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub label: Option<String>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub unit: Option<String>,
    /// Spread of one field measurement of this trait (an `observed` event
    /// without its own `sd`); see docs/model.md for the default.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub measurement_sd: Option<f64>,
}

/// A rating in the file: on a type both fields default to 0; on a unit's
/// override a field left out comes from the type.
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RatingFile {
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub mean: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub sd: Option<f64>,
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct UnitTypeFile {
    pub id: String,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub label: Option<String>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub rho: Option<f64>,
    #[serde(default)]
    pub traits: BTreeMap<String, RatingFile>,
    /// Optional cost of requesting one more unit of this type (advice).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub cost: Option<f64>,
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct UnitFile {
    pub id: String,
    #[serde(rename = "type")]
    pub unit_type: String,
    #[serde(default, skip_serializing_if = "BTreeMap::is_empty")]
    pub traits: BTreeMap<String, RatingFile>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub status: Option<String>,
}

/// A need: a bare number (certain) or `{ need, sd }`.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
#[serde(untagged)]
pub enum NeedFile {
    Certain(f64),
    Uncertain(UncertainNeedFile),
}

/// By hand rather than `untagged`, so that a bad `{ need, sd }` reports its
/// own field (`unknown field `sdd``) instead of "did not match any variant".
impl<'de> Deserialize<'de> for NeedFile {
    fn deserialize<D: serde::Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        struct NeedVisitor;
        impl<'de> serde::de::Visitor<'de> for NeedVisitor {
            type Value = NeedFile;
            fn expecting(&self, f: &mut std::fmt::Formatter) -> std::fmt::Result {
                f.write_str("a number or a mapping `{ need, sd }`")
            }
            fn visit_f64<E: serde::de::Error>(self, v: f64) -> Result<NeedFile, E> {
                Ok(NeedFile::Certain(v))
            }
            fn visit_i64<E: serde::de::Error>(self, v: i64) -> Result<NeedFile, E> {
                Ok(NeedFile::Certain(v as f64))
            }
            fn visit_u64<E: serde::de::Error>(self, v: u64) -> Result<NeedFile, E> {
                Ok(NeedFile::Certain(v as f64))
            }
            fn visit_map<A: serde::de::MapAccess<'de>>(self, map: A) -> Result<NeedFile, A::Error> {
                UncertainNeedFile::deserialize(serde::de::value::MapAccessDeserializer::new(map))
                    .map(NeedFile::Uncertain)
            }
        }
        d.deserialize_any(NeedVisitor)
    }
}

#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct UncertainNeedFile {
    pub need: f64,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub sd: Option<f64>,
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct TaskFile {
    pub id: String,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub label: Option<String>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub tier: Option<String>,
    #[serde(default)]
    pub needs: BTreeMap<String, NeedFile>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub accepts: Option<Vec<String>>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub min_units: Option<i64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub max_units: Option<i64>,
    /// Added field: set once a task is closed (succeeded | failed | cancelled).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub outcome: Option<String>,
}

impl IncidentFile {
    /// The file form of an incident: the snapshot written as the first record
    /// of a log, and what `start` and the dashboard save.
    ///
    /// Written minimal but explicit: a unit's `traits` carry only the fields
    /// where its rating differs from its type (a re-rating); `status` only
    /// when out of service; `rho`, `reserve_min` and secure levels only when
    /// they differ from their defaults; needs of 0 with no sd are left out;
    /// placement lists only placed units (absent means reserve); closed tasks
    /// keep their `outcome`. Parsing the result gives back an equal incident.
    pub fn from_incident(incident: &super::Incident) -> IncidentFile {
        let defaults = super::SecureLevels::default();
        let secure_of = |tier: super::Tier| {
            let v = incident.secure.get(tier);
            (v != defaults.get(tier)).then_some(v)
        };
        let secure = SecureFile {
            life: secure_of(super::Tier::Life),
            stabilization: secure_of(super::Tier::Stabilization),
            property: secure_of(super::Tier::Property),
        };
        let header = IncidentHeader {
            name: incident.name.clone(),
            started: incident.started.clone(),
            reserve_min: (incident.reserve_min != 0).then_some(i64::from(incident.reserve_min)),
            secure: (secure != SecureFile::default()).then_some(secure),
        };
        let traits = incident
            .traits
            .iter()
            .map(|t| TraitFile {
                id: t.id.clone(),
                label: Some(t.label.clone()),
                unit: (!t.unit.is_empty()).then(|| t.unit.clone()),
                measurement_sd: t.measurement_sd,
            })
            .collect();
        let trait_id = |k: usize| incident.traits[k].id.clone();
        let unit_types = incident
            .unit_types
            .iter()
            .map(|ty| UnitTypeFile {
                id: ty.id.clone(),
                label: Some(ty.label.clone()),
                rho: (ty.rho != 0.0).then_some(ty.rho),
                traits: ty
                    .ratings
                    .iter()
                    .enumerate()
                    .filter(|(_, r)| r.mean != 0.0 || r.sd != 0.0)
                    .map(|(k, r)| {
                        (
                            trait_id(k),
                            RatingFile {
                                mean: Some(r.mean),
                                sd: Some(r.sd),
                            },
                        )
                    })
                    .collect(),
                cost: ty.cost,
            })
            .collect();
        // Lost units' tombstones are not written: the file knows no such status.
        let units = incident
            .roster()
            .map(|(_, u)| {
                let base = &incident.unit_types[u.type_idx].ratings;
                let traits = u
                    .ratings
                    .iter()
                    .zip(base)
                    .enumerate()
                    .filter(|(_, (r, b))| r != b)
                    .map(|(k, (r, b))| {
                        (
                            trait_id(k),
                            RatingFile {
                                mean: (r.mean != b.mean).then_some(r.mean),
                                sd: (r.sd != b.sd).then_some(r.sd),
                            },
                        )
                    })
                    .collect();
                UnitFile {
                    id: u.id.clone(),
                    unit_type: incident.unit_types[u.type_idx].id.clone(),
                    traits,
                    status: (u.status != super::UnitStatus::Available)
                        .then(|| u.status.as_str().to_string()),
                }
            })
            .collect();
        let tasks = incident
            .tasks
            .iter()
            .map(|t| TaskFile {
                id: t.id.clone(),
                label: Some(t.label.clone()),
                tier: Some(t.tier.as_str().to_string()),
                needs: t
                    .needs
                    .iter()
                    .enumerate()
                    .filter(|(_, n)| n.need != 0.0 || n.sd != 0.0)
                    .map(|(k, n)| {
                        let need = if n.sd == 0.0 {
                            NeedFile::Certain(n.need)
                        } else {
                            NeedFile::Uncertain(UncertainNeedFile {
                                need: n.need,
                                sd: Some(n.sd),
                            })
                        };
                        (trait_id(k), need)
                    })
                    .collect(),
                accepts: t.accepts.as_ref().map(|list| {
                    list.iter()
                        .map(|&ty| incident.unit_types[ty].id.clone())
                        .collect()
                }),
                min_units: t.min_units.map(i64::from),
                max_units: t.max_units.map(i64::from),
                outcome: t.outcome.map(|o| o.as_str().to_string()),
            })
            .collect();
        let placement = incident
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
            .collect();
        let pins = incident
            .pins
            .iter()
            .map(|(&u, &t)| (incident.units[u].id.clone(), incident.tasks[t].id.clone()))
            .collect();
        IncidentFile {
            incident: header,
            traits,
            unit_types,
            units,
            tasks,
            placement,
            pins,
        }
    }
}
