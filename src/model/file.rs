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
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(untagged)]
pub enum NeedFile {
    Certain(f64),
    Uncertain(UncertainNeedFile),
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
