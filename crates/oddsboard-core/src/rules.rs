//! The placement rules (SPEC §3, "Constraints"), each written once: where a
//! unit may go, how many units a task takes, the reserve, and which pins can
//! hold.
//!
//! The loader, [`crate::log::apply()`], the solver (through
//! [`crate::solver::search::Ctx`], which precomputes these answers for its
//! inner loop), the baselines and the advice all ask this module; none keeps
//! its own copy. To add a constraint, add it here and make it refuse with a
//! [`Refusal`] variant; every caller then enforces it.

use crate::model::{
    Incident, Outcome, Placement, Task, TaskIdx, TypeIdx, Unit, UnitIdx, UnitStatus,
};

/// Why a unit may not be where it was asked to be. Each variant has one
/// wording ([`Refusal::reason`]); callers add who and where.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Refusal {
    /// The unit is out of service.
    OutOfService,
    /// The unit was lost (a tombstone, kept so indices stay stable).
    Lost,
    /// The task is closed.
    Closed(Outcome),
    /// The task does not accept the unit's type.
    TypeNotAccepted(TypeIdx),
}

impl Refusal {
    /// The reason in words, e.g. "the task is closed (succeeded)".
    pub fn reason(self, inc: &Incident) -> String {
        match self {
            Refusal::OutOfService => "the unit is out of service".into(),
            Refusal::Lost => "the unit was lost".into(),
            Refusal::Closed(o) => format!("the task is closed ({})", o.as_str()),
            Refusal::TypeNotAccepted(ty) => format!(
                "the task does not accept unit type `{}`",
                inc.unit_types.get(ty).map_or("?", |t| t.id.as_str())
            ),
        }
    }
}

/// Whether a unit can be placed at all: in service and not lost.
pub fn placeable(unit: &Unit) -> bool {
    unit.status == UnitStatus::Available
}

/// May unit `u` stand on (or be pinned to) task `t` at all: unit in service,
/// task open, type accepted. Counts (capacity, reserve) are separate rules.
/// Allocates nothing: the solver's context and advice call it per pair.
pub fn may_go(inc: &Incident, u: UnitIdx, t: TaskIdx) -> Result<(), Refusal> {
    let unit = &inc.units[u];
    let task = &inc.tasks[t];
    match unit.status {
        UnitStatus::Available => {}
        UnitStatus::OutOfService => return Err(Refusal::OutOfService),
        UnitStatus::Lost => return Err(Refusal::Lost),
    }
    if let Some(o) = task.outcome {
        return Err(Refusal::Closed(o));
    }
    if !task.accepts_type(unit.type_idx) {
        return Err(Refusal::TypeNotAccepted(unit.type_idx));
    }
    Ok(())
}

/// [`may_go`] as a yes or no.
pub fn can_go(inc: &Incident, u: UnitIdx, t: TaskIdx) -> bool {
    may_go(inc, u, t).is_ok()
}

/// [`may_go`], and the unit is not pinned to another task: where a plan may
/// put it.
pub fn plan_may_put(inc: &Incident, u: UnitIdx, t: TaskIdx) -> bool {
    can_go(inc, u, t) && inc.pins.get(&u).is_none_or(|&p| p == t)
}

/// The most units `task` takes. `max_units` absent means no limit, and so
/// does any value above the roster: callers use this as a count to compare
/// with, never as a size to allocate.
pub fn capacity(task: &Task) -> usize {
    task.max_units.map_or(usize::MAX, |m| m as usize)
}

/// Would `count` units on `task` be more than it takes?
pub fn over_capacity(task: &Task, count: usize) -> bool {
    count > capacity(task)
}

/// Does `task`, holding `count` units, have room for one more?
pub fn has_room(task: &Task, count: usize) -> bool {
    count < capacity(task)
}

/// Units that count toward the reserve when not placed: available ones.
pub fn counts_in_reserve(unit: &Unit) -> bool {
    placeable(unit)
}

/// Units in reserve under placement `p` that could be placed.
pub fn reserve_count(inc: &Incident, p: &Placement) -> usize {
    inc.units
        .iter()
        .enumerate()
        .filter(|(u, unit)| counts_in_reserve(unit) && p.get(UnitIdx::new(*u)).is_none())
        .count()
}

/// The reserve minimum a plan holds the reserve exactly at (`None` when
/// the incident asks for no reserve or the plan leaves more). A unit such a
/// plan takes off a task into reserve is there for the minimum, and the
/// commander is told so ([`reserve_reason`]).
pub fn reserve_held_at_minimum(inc: &Incident, plan: &Placement) -> Option<u32> {
    (inc.reserve_min > 0 && reserve_count(inc, plan) == inc.reserve_min as usize)
        .then_some(inc.reserve_min)
}

/// Why a move from a task to reserve is proposed, when the plan holds the
/// reserve at its minimum (`held`, from [`reserve_held_at_minimum`]).
pub fn reserve_reason(
    held: Option<u32>,
    from: Option<TaskIdx>,
    to: Option<TaskIdx>,
) -> Option<String> {
    match (held, from, to) {
        (Some(n), Some(_), None) => Some(format!("keeps the reserve at its minimum of {n}")),
        _ => None,
    }
}

/// May one more unit leave a reserve of `reserve` units?
pub fn may_draw_reserve(reserve_min: u32, reserve: usize) -> bool {
    reserve > reserve_min as usize
}

/// Is a reserve of `reserve` units below the incident's minimum?
pub fn reserve_short(inc: &Incident, reserve: usize) -> bool {
    reserve < inc.reserve_min as usize
}

/// Units that may make up the reserve in every plan: available and not
/// pinned (a pinned unit must go to its task).
pub fn free_for_reserve(inc: &Incident) -> usize {
    inc.units
        .iter()
        .enumerate()
        .filter(|(u, unit)| counts_in_reserve(unit) && !inc.pins.contains_key(&UnitIdx::new(*u)))
        .count()
}

/// Units pinned to task `t`, leaving out unit `except` if given.
pub fn pinned_to(inc: &Incident, t: TaskIdx, except: Option<UnitIdx>) -> usize {
    inc.pins
        .iter()
        .filter(|&(&pu, &pt)| pt == t && Some(pu) != except)
        .count()
}

/// A broken constraint of a whole incident, with the file field it is about.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Violation {
    pub field: String,
    pub message: String,
}

/// Why the pin of unit `u` to task `t` cannot hold, in the words of every
/// caller (the loader, the solver's feasibility check).
pub fn pin_violation(inc: &Incident, u: UnitIdx, t: TaskIdx) -> Option<Violation> {
    let refusal = may_go(inc, u, t).err()?;
    let (uid, tid) = (&inc.units[u].id, &inc.tasks[t].id);
    Some(Violation {
        field: format!("pins.{uid}"),
        message: format!(
            "`{uid}` cannot be pinned to `{tid}`: {}",
            refusal.reason(inc)
        ),
    })
}

/// Counting constraints no plan could meet: more units pinned to a task than
/// it takes, fewer free units than the reserve asks. With `ground`, also the
/// units standing on a task over its maximum (the loader's check; after a
/// loss the ground may be over and only a plan must fix it).
pub fn count_violations(inc: &Incident, ground: bool) -> Vec<Violation> {
    let mut out = Vec::new();
    for (t, task) in inc.tasks.iter().enumerate() {
        let t = crate::model::TaskIdx::new(t);
        let Some(max) = task.max_units else { continue };
        let pinned = pinned_to(inc, t, None);
        if over_capacity(task, pinned) {
            out.push(Violation {
                field: format!("tasks[{t}].max_units"),
                message: format!(
                    "{pinned} units are pinned to `{}` but its max_units is {max}",
                    task.id
                ),
            });
        }
        let placed = inc.placement.units_on(t).count();
        if ground && over_capacity(task, placed) {
            out.push(Violation {
                field: format!("tasks[{t}].max_units"),
                message: format!(
                    "{placed} units are placed on `{}` but its max_units is {max}",
                    task.id
                ),
            });
        }
    }
    let free = free_for_reserve(inc);
    if reserve_short(inc, free) {
        out.push(Violation {
            field: "incident.reserve_min".into(),
            message: format!(
                "reserve_min is {} but only {free} units are available and not pinned",
                inc.reserve_min
            ),
        });
    }
    out
}

/// Why a new pin of `u` to `t` cannot be added to the incident as it is
/// (the log's `pinned`): the unit may not go there, the task has as many
/// pins as it takes, or the reserve could no longer be kept.
pub fn new_pin_problem(inc: &Incident, u: UnitIdx, t: TaskIdx) -> Option<String> {
    let (unit, task) = (&inc.units[u], &inc.tasks[t]);
    if let Err(r) = may_go(inc, u, t) {
        return Some(format!(
            "{} cannot be pinned to {}: {}",
            unit.id,
            task.id,
            r.reason(inc)
        ));
    }
    let pinned = pinned_to(inc, t, Some(u));
    if !has_room(task, pinned) {
        return Some(format!(
            "task {} takes at most {} units and {pinned} are already pinned to it",
            task.id,
            capacity(task)
        ));
    }
    let available = inc.units.iter().filter(|x| counts_in_reserve(x)).count();
    let pinned_after = inc.pins.len() + usize::from(!inc.pins.contains_key(&u));
    let left = available.saturating_sub(pinned_after);
    if reserve_short(inc, left) {
        return Some(format!(
            "the incident keeps at least {} units in reserve; this pin would leave {left} unpinned",
            inc.reserve_min
        ));
    }
    None
}

/// Why the ground placement `new`, differing from the current one in
/// `changed`, cannot stand: a unit moved off its pin or onto a task it may
/// not go to, a task over its maximum, the reserve below its minimum. A
/// constraint already broken before (after a loss, say) refuses only a
/// change that makes it worse.
pub fn ground_problem(
    inc: &Incident,
    new: &Placement,
    changed: &[UnitIdx],
    verb: &str,
) -> Option<String> {
    let old = &inc.placement;
    let task_name = |t: Option<TaskIdx>| t.map_or("reserve", |t| inc.tasks[t].id.as_str());
    for &u in changed {
        let unit = &inc.units[u];
        let to = new.get(u);
        if let Some(&pt) = inc.pins.get(&u)
            && to != Some(pt)
        {
            return Some(format!(
                "{} is pinned to {}; unpin it before moving it to {}",
                unit.id,
                inc.tasks[pt].id,
                task_name(to)
            ));
        }
        let Some(t) = to else { continue };
        if let Err(r) = may_go(inc, u, t) {
            return Some(format!(
                "{} cannot be {verb} on {}: {}",
                unit.id,
                inc.tasks[t].id,
                r.reason(inc)
            ));
        }
    }
    let mut dests: Vec<TaskIdx> = changed.iter().filter_map(|&u| new.get(u)).collect();
    dests.sort_unstable();
    dests.dedup();
    for t in dests {
        let task = &inc.tasks[t];
        let after = new.units_on(t).count();
        let before = old.units_on(t).count();
        if over_capacity(task, after) && after > before {
            return Some(format!(
                "task {} takes at most {} units; this would put {after} on it",
                task.id,
                capacity(task)
            ));
        }
    }
    let (before, after) = (reserve_count(inc, old), reserve_count(inc, new));
    if reserve_short(inc, after) && after < before {
        return Some(format!(
            "the incident keeps at least {} units in reserve; this would leave {after}",
            inc.reserve_min
        ));
    }
    None
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::parse_incident_str;

    // Invented incident: E3 out of service, T2 closed, T1 takes engines only,
    // at most 1 unit.
    const YAML: &str = "
incident: { name: Invented rules test, reserve_min: 1 }
traits: [ { id: water } ]
unit_types: [ { id: engine, traits: { water: { mean: 1000, sd: 100 } } }, { id: boat } ]
units:
  - { id: E1, type: engine }
  - { id: E2, type: engine }
  - { id: E3, type: engine, status: out_of_service }
  - { id: B1, type: boat }
tasks:
  - { id: T1, needs: { water: 1500 }, max_units: 1, accepts: [engine] }
  - { id: T2, needs: { water: 500 }, outcome: succeeded }
  - { id: T3, needs: { water: 500 }, max_units: 4294967295 }
placement: { E1: T1 }
";

    #[test]
    fn each_refusal_has_its_reason() {
        let inc = parse_incident_str(YAML, "t.yaml").expect("valid");
        assert_eq!(may_go(&inc, UnitIdx::new(1), TaskIdx::new(0)), Ok(()));
        assert_eq!(
            may_go(&inc, UnitIdx::new(2), TaskIdx::new(0)),
            Err(Refusal::OutOfService)
        );
        assert_eq!(
            may_go(&inc, UnitIdx::new(0), TaskIdx::new(1)),
            Err(Refusal::Closed(Outcome::Succeeded))
        );
        let r = may_go(&inc, UnitIdx::new(3), TaskIdx::new(0)).expect_err("boat on T1");
        assert_eq!(r.reason(&inc), "the task does not accept unit type `boat`");
        assert!(can_go(&inc, UnitIdx::new(3), TaskIdx::new(2)));
        // A lost unit keeps its slot but may go nowhere, and no longer
        // counts toward the reserve.
        let mut lost = inc.clone();
        lost.remove_unit(UnitIdx::new(1));
        assert_eq!(
            may_go(&lost, UnitIdx::new(1), TaskIdx::new(2)),
            Err(Refusal::Lost)
        );
        assert_eq!(reserve_count(&lost, &lost.placement), 1);
        assert_eq!(lost.unit_idx("E2"), None);
        assert_eq!(lost.unit_slot("E2"), Some(UnitIdx::new(1)));
    }

    #[test]
    fn capacity_and_reserve_count() {
        let inc = parse_incident_str(YAML, "t.yaml").expect("valid");
        assert!(!has_room(&inc.tasks[0], 1) && has_room(&inc.tasks[0], 0));
        assert!(over_capacity(&inc.tasks[0], 2));
        // The largest max_units the file allows is a count, not a size.
        assert!(has_room(&inc.tasks[2], 10_000_000));
        // E2 and B1 in reserve (E3 out of service does not count).
        assert_eq!(reserve_count(&inc, &inc.placement), 2);
        assert!(may_draw_reserve(inc.reserve_min, 2) && !may_draw_reserve(inc.reserve_min, 1));
        let mut over = inc.clone();
        over.reserve_min = 4; // E1, E2 and B1 are free: three, not four
        let v = count_violations(&over, true);
        assert_eq!(v.len(), 1);
        assert_eq!(v[0].field, "incident.reserve_min");
    }

    #[test]
    fn a_move_that_makes_a_broken_count_worse_is_refused() {
        let inc = parse_incident_str(YAML, "t.yaml").expect("valid");
        let mut p = inc.placement.clone();
        p.set(UnitIdx::new(1), Some(TaskIdx::new(0)));
        let why = ground_problem(&inc, &p, &[UnitIdx::new(1)], "placed").expect("over max");
        assert!(why.contains("at most 1 units"), "{why}");
        p.set(UnitIdx::new(1), Some(TaskIdx::new(2)));
        p.set(UnitIdx::new(3), Some(TaskIdx::new(2)));
        let why = ground_problem(&inc, &p, &[UnitIdx::new(1), UnitIdx::new(3)], "placed")
            .expect("reserve");
        assert!(why.contains("at least 1 units in reserve"), "{why}");
    }
}
