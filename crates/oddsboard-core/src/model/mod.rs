//! Domain types of an incident: traits, unit types, units, tasks, the
//! placement on the ground and the commander's pins.
//!
//! Everything here is index-based for speed: a [`Unit`] refers to its
//! [`UnitType`] by position in [`Incident::unit_types`], a task need refers to a
//! trait by position in [`Incident::traits`], and a [`Placement`] maps unit
//! positions to task positions. Ids (the strings of the incident file) are kept
//! for display and for the file and log formats.
//!
//! The file format itself lives in [`file`] (serde mirror types) and is turned
//! into these types by [`load`] after validation.
//!
//! Invariant: this module does no terminal I/O and reads files only through
//! [`load`].

pub mod belief;
pub mod file;
pub mod generate;
pub mod load;
pub mod locate;

pub use belief::{Belief, Observations, Reading};
pub use load::{Diagnostic, LoadError, load_incident_file, parse_incident_str};

use std::collections::BTreeMap;

/// Index of a trait in [`Incident::traits`].
pub type TraitIdx = usize;
/// Index of a unit type in [`Incident::unit_types`].
pub type TypeIdx = usize;
/// Declares a typed index into one `Vec`: a unit index cannot be used where
/// a task index is meant. Dense loops convert with `index()` / `new()`.
macro_rules! typed_index {
    ($(#[$doc:meta])* $name:ident) => {
        $(#[$doc])*
        #[derive(Copy, Clone, Debug, PartialEq, Eq, Hash, PartialOrd, Ord)]
        pub struct $name(u32);

        impl $name {
            /// Panics past `u32::MAX`, far above any incident the loader accepts.
            #[inline]
            pub fn new(i: usize) -> Self {
                $name(u32::try_from(i).expect("index fits in u32"))
            }
            #[inline]
            pub fn index(self) -> usize {
                self.0 as usize
            }
            /// Every index below `n`, in order.
            pub fn range(n: usize) -> impl DoubleEndedIterator<Item = Self> + Clone {
                (0..n).map($name::new)
            }
        }

        impl std::fmt::Display for $name {
            fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
                self.0.fmt(f)
            }
        }

        impl<T> std::ops::Index<$name> for Vec<T> {
            type Output = T;
            #[inline]
            fn index(&self, i: $name) -> &T {
                &self[i.index()]
            }
        }
        impl<T> std::ops::IndexMut<$name> for Vec<T> {
            #[inline]
            fn index_mut(&mut self, i: $name) -> &mut T {
                &mut self[i.index()]
            }
        }
        impl<T> std::ops::Index<$name> for [T] {
            type Output = T;
            #[inline]
            fn index(&self, i: $name) -> &T {
                &self[i.index()]
            }
        }
        impl<T> std::ops::IndexMut<$name> for [T] {
            #[inline]
            fn index_mut(&mut self, i: $name) -> &mut T {
                &mut self[i.index()]
            }
        }
    };
}

typed_index!(
    /// Index of a unit in [`Incident::units`].
    UnitIdx
);
typed_index!(
    /// Index of a task in [`Incident::tasks`].
    TaskIdx
);

/// A capability dimension, e.g. water delivery in L/min.
#[derive(Debug, Clone, PartialEq)]
pub struct TraitDef {
    pub id: String,
    pub label: String,
    /// Unit of measure shown beside every amount of this trait.
    pub unit: String,
    /// Spread of one field measurement (`observed` without its own `sd`);
    /// `None`: the unit's rated sd (docs/model.md, "Observations").
    pub measurement_sd: Option<f64>,
}

/// An uncertain capability: `Normal(mean, sd²)`. `sd == 0` is a certain value.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct Rating {
    pub mean: f64,
    pub sd: f64,
}

/// A kind of response unit with default ratings.
#[derive(Debug, Clone, PartialEq)]
pub struct UnitType {
    pub id: String,
    pub label: String,
    /// Within-type correlation in [0, 1]; default 0 (independent units).
    pub rho: f64,
    /// Default rating per trait, indexed by [`TraitIdx`]; a trait the file
    /// leaves out is `Rating { mean: 0, sd: 0 }`.
    pub ratings: Vec<Rating>,
    /// Optional cost of requesting one more unit of this type (for advice);
    /// `None` means "count units".
    pub cost: Option<f64>,
}

/// Whether a unit can be placed.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum UnitStatus {
    #[default]
    Available,
    OutOfService,
    /// Lost (`unit_lost`): a tombstone. The unit keeps its index so no other
    /// index changes meaning, but it is out of every roster view, the
    /// snapshot, the solver and the odds. Never written in an incident file.
    Lost,
}

impl UnitStatus {
    pub fn as_str(self) -> &'static str {
        match self {
            UnitStatus::Available => "available",
            UnitStatus::OutOfService => "out_of_service",
            UnitStatus::Lost => "lost",
        }
    }
}

/// One response unit on the roster.
#[derive(Debug, Clone, PartialEq)]
pub struct Unit {
    pub id: String,
    pub type_idx: TypeIdx,
    /// Resolved rating per trait (type default with the unit's overrides
    /// applied), indexed by [`TraitIdx`].
    pub ratings: Vec<Rating>,
    pub status: UnitStatus,
}

impl Unit {
    /// A tombstone left by `unit_lost`.
    pub fn is_lost(&self) -> bool {
        self.status == UnitStatus::Lost
    }
}

/// Priority tier of a task, in the order the trade uses.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash, Default)]
pub enum Tier {
    Life,
    Stabilization,
    #[default]
    Property,
}

impl Tier {
    /// All tiers, highest priority first.
    pub const ALL: [Tier; 3] = [Tier::Life, Tier::Stabilization, Tier::Property];

    pub fn as_str(self) -> &'static str {
        match self {
            Tier::Life => "life",
            Tier::Stabilization => "stabilization",
            Tier::Property => "property",
        }
    }

    /// Position in [`Tier::ALL`].
    pub fn index(self) -> usize {
        self as usize
    }

    pub fn parse(s: &str) -> Option<Tier> {
        match s {
            "life" => Some(Tier::Life),
            "stabilization" => Some(Tier::Stabilization),
            "property" => Some(Tier::Property),
            _ => None,
        }
    }
}

/// Secure level per tier: odds above it no longer outrank lower tiers.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SecureLevels {
    /// Indexed by [`Tier::index`].
    pub levels: [f64; 3],
}

impl Default for SecureLevels {
    /// life 0.99, stabilization 0.95, property 0.90.
    fn default() -> Self {
        SecureLevels {
            levels: [0.99, 0.95, 0.90],
        }
    }
}

impl SecureLevels {
    pub fn get(&self, tier: Tier) -> f64 {
        self.levels[tier.index()]
    }
}

/// A task's need in one trait: at least `need`, itself uncertain with `sd`.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct Need {
    pub need: f64,
    pub sd: f64,
}

impl Need {
    /// Traits whose need is 0 and that have no need sd do not count.
    pub fn counts(&self) -> bool {
        self.need > 0.0 || self.sd > 0.0
    }
}

/// How a closed task turned out.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Outcome {
    Succeeded,
    Failed,
    Cancelled,
}

impl Outcome {
    pub fn as_str(self) -> &'static str {
        match self {
            Outcome::Succeeded => "succeeded",
            Outcome::Failed => "failed",
            Outcome::Cancelled => "cancelled",
        }
    }
    pub fn parse(s: &str) -> Option<Outcome> {
        match s {
            "succeeded" => Some(Outcome::Succeeded),
            "failed" => Some(Outcome::Failed),
            "cancelled" => Some(Outcome::Cancelled),
            _ => None,
        }
    }
}

/// A task on the board.
#[derive(Debug, Clone, PartialEq)]
pub struct Task {
    pub id: String,
    pub label: String,
    pub tier: Tier,
    /// Need per trait, indexed by [`TraitIdx`]; a trait the file leaves out
    /// has `Need { need: 0, sd: 0 }` and does not count.
    pub needs: Vec<Need>,
    /// Unit types this task accepts; `None` means every type.
    pub accepts: Option<Vec<TypeIdx>>,
    pub min_units: Option<u32>,
    pub max_units: Option<u32>,
    /// `Some` once the task is closed; a closed task takes no units and does
    /// not count in the objective.
    pub outcome: Option<Outcome>,
}

impl Task {
    pub fn is_open(&self) -> bool {
        self.outcome.is_none()
    }
    pub fn accepts_type(&self, t: TypeIdx) -> bool {
        self.accepts.as_ref().is_none_or(|a| a.contains(&t))
    }
}

/// Where each unit is: `Some(task)` or `None` (reserve). Indexed by
/// [`UnitIdx`]; always as long as [`Incident::units`].
#[derive(Debug, Clone, PartialEq, Eq, Default, Hash, PartialOrd, Ord)]
pub struct Placement(pub Vec<Option<TaskIdx>>);

impl Placement {
    pub fn all_reserve(n_units: usize) -> Self {
        Placement(vec![None; n_units])
    }
    pub fn get(&self, u: UnitIdx) -> Option<TaskIdx> {
        self.0.get(u.index()).copied().flatten()
    }
    pub fn set(&mut self, u: UnitIdx, t: Option<TaskIdx>) {
        self.0[u] = t;
    }
    pub fn len(&self) -> usize {
        self.0.len()
    }
    pub fn is_empty(&self) -> bool {
        self.0.is_empty()
    }
    /// Units placed on task `t`, in roster order.
    pub fn units_on(&self, t: TaskIdx) -> impl Iterator<Item = UnitIdx> + '_ {
        self.0
            .iter()
            .enumerate()
            .filter_map(move |(u, p)| (*p == Some(t)).then_some(UnitIdx::new(u)))
    }
    /// Number of units whose position differs between the two placements.
    pub fn moves_from(&self, other: &Placement) -> usize {
        self.0.iter().zip(&other.0).filter(|(a, b)| a != b).count()
    }
}

/// A whole incident: the roster, the board, the ground and the pins.
#[derive(Debug, Clone, PartialEq)]
pub struct Incident {
    pub name: String,
    /// RFC 3339 start time, as written in the file.
    pub started: Option<String>,
    /// Keep at least this many available units in reserve.
    pub reserve_min: u32,
    pub secure: SecureLevels,
    pub traits: Vec<TraitDef>,
    pub unit_types: Vec<UnitType>,
    pub units: Vec<Unit>,
    pub tasks: Vec<Task>,
    /// What is on the ground now.
    pub placement: Placement,
    /// Units that must stay on (or go to) a task: the commander's word.
    pub pins: BTreeMap<UnitIdx, TaskIdx>,
    /// Field readings (`observed` events) and the posterior they give;
    /// empty in a file. Read the current capability through
    /// [`Incident::belief`].
    pub observations: Observations,
}

impl Incident {
    pub fn trait_idx(&self, id: &str) -> Option<TraitIdx> {
        self.traits.iter().position(|t| t.id == id)
    }
    pub fn type_idx(&self, id: &str) -> Option<TypeIdx> {
        self.unit_types.iter().position(|t| t.id == id)
    }
    /// The unit on the roster with this id (a lost unit is not).
    pub fn unit_idx(&self, id: &str) -> Option<UnitIdx> {
        self.units
            .iter()
            .position(|u| u.id == id && !u.is_lost())
            .map(UnitIdx::new)
    }
    /// The slot of this id, a lost unit's tombstone included.
    pub fn unit_slot(&self, id: &str) -> Option<UnitIdx> {
        self.units.iter().position(|u| u.id == id).map(UnitIdx::new)
    }
    /// How many units are on the roster (lost ones are not).
    pub fn roster_len(&self) -> usize {
        self.roster().count()
    }
    /// The units on the roster (not lost), with their indices.
    pub fn roster(&self) -> impl Iterator<Item = (UnitIdx, &Unit)> + '_ {
        self.units
            .iter()
            .enumerate()
            .filter(|(_, u)| !u.is_lost())
            .map(|(i, u)| (UnitIdx::new(i), u))
    }
    pub fn task_idx(&self, id: &str) -> Option<TaskIdx> {
        self.tasks.iter().position(|t| t.id == id).map(TaskIdx::new)
    }
    /// Can unit `u` be placed on task `t` at all (status, open task, accepts)?
    /// The rule is [`crate::rules::may_go`]; counts and pins are its siblings.
    pub fn may_place(&self, u: UnitIdx, t: TaskIdx) -> bool {
        crate::rules::can_go(self, u, t)
    }

    /// Takes a unit off the roster (lost): it leaves its task and its pin
    /// and stays as a tombstone, so every other index keeps its meaning.
    pub fn remove_unit(&mut self, u: UnitIdx) {
        self.units[u].status = UnitStatus::Lost;
        self.placement.set(u, None);
        self.pins.remove(&u);
    }

    /// Adds a unit to the roster, in reserve. A unit with the id of a lost
    /// one takes back its slot (and index); any other goes at the end.
    pub fn add_unit(&mut self, unit: Unit) -> UnitIdx {
        if let Some(u) = self.unit_slot(&unit.id)
            && self.units[u].is_lost()
        {
            self.units[u] = unit;
            self.placement.set(u, None);
            return u;
        }
        self.units.push(unit);
        self.placement.0.push(None);
        UnitIdx::new(self.units.len() - 1)
    }
}
