//! The objective key (SPEC §3): the one place where plans are ranked.
//!
//! A plan's key is, tier by tier (life, stabilization, property), the
//! ascending vector of its open tasks' ln odds capped at the tier's secure
//! level, followed by the ascending vector of every open task's ln odds,
//! uncapped. Keys compare lexicographically, first difference wins, with a
//! tolerance of [`LN_TOLERANCE`] in ln space so that rounding never decides.
//! With one tier and no task near its secure level this is plain leximin; its
//! first entry is the max-min of the worst task's odds.
//!
//! Closed tasks do not count. A task with no counting need and no
//! `min_units` has ln odds 0 (it is certain) and so never decides anything.
//!
//! Leximin comparisons are separable (Moulin, *Axioms of Cooperative Decision
//! Making*, 1988, on the leximin ordering): if two vectors share some entries,
//! dropping the shared entries leaves the comparison unchanged, because the
//! sorted comparison is decided by the lowest value at which the two counting
//! functions differ, and shared entries add the same amount to both.
//! [`compare_change`] uses this to rank a move from the handful of tasks it
//! touches, in O(tasks touched) instead of O(tasks · log tasks).

use crate::model::{Incident, Placement, TaskIdx, Tier};
use crate::odds::{TaskTally, tallies};
use std::cmp::Ordering;

/// Two ln odds closer than this (scaled by their size above 1) are equal.
pub const LN_TOLERANCE: f64 = 1e-10;

/// Compares two ln odds with the tolerance; −∞ equals −∞.
pub fn cmp_ln(a: f64, b: f64) -> Ordering {
    if a == b {
        return Ordering::Equal;
    }
    let tol = LN_TOLERANCE * a.abs().max(b.abs()).max(1.0);
    if a.is_finite() && b.is_finite() && (a - b).abs() <= tol {
        Ordering::Equal
    } else if a < b {
        Ordering::Less
    } else {
        Ordering::Greater
    }
}

/// Is ln odds `a` at least threshold `t` (with the tolerance)? A threshold
/// of −∞ is met by anything.
pub fn reaches(a: f64, t: f64) -> bool {
    t == f64::NEG_INFINITY || a >= t - LN_TOLERANCE * t.abs().max(1.0)
}

/// Does task `t` count in the objective?
pub fn counts(incident: &Incident, t: TaskIdx) -> bool {
    incident.tasks[t].is_open()
}

/// ln of the secure level of `tier`.
pub fn ln_cap(incident: &Incident, tier: Tier) -> f64 {
    incident.secure.get(tier).ln()
}

/// The cap of every tier in ln space, indexed by [`Tier::index`]. The key
/// caps each tier at its secure level; the stable re-plan also ranks plans
/// with lower caps (a tier held at its threshold, see `super::stable`),
/// which only ln space can express for odds far in the tail.
pub type LnCaps = [f64; 3];

/// The incident's own caps: ln of each tier's secure level.
pub fn ln_caps(incident: &Incident) -> LnCaps {
    Tier::ALL.map(|tier| ln_cap(incident, tier))
}

/// A plan's rank: see the module docs.
#[derive(Debug, Clone)]
pub struct ObjectiveKey {
    /// Tier 0 capped (ascending), tier 1 capped, tier 2 capped, then all
    /// uncapped (ascending).
    entries: Vec<f64>,
    /// Number of counted tasks per tier.
    tier_len: [usize; 3],
    /// Worst uncapped ln odds per tier.
    worst: [Option<f64>; 3],
}

impl ObjectiveKey {
    /// Key from the ln odds of every task (index = task index; entries of
    /// tasks that do not count are ignored).
    pub fn from_ln_odds(incident: &Incident, ln_odds: &[f64]) -> Self {
        Self::from_ln_odds_capped(incident, ln_odds, &ln_caps(incident))
    }

    /// Like [`Self::from_ln_odds`] with each tier capped at `caps` instead
    /// of its secure level.
    pub fn from_ln_odds_capped(incident: &Incident, ln_odds: &[f64], caps: &LnCaps) -> Self {
        let mut per_tier: [Vec<f64>; 3] = Default::default();
        let mut all = Vec::new();
        let mut worst = [None::<f64>; 3];
        for (t, task) in incident.tasks.iter().enumerate() {
            let t = crate::model::TaskIdx::new(t);
            if !counts(incident, t) {
                continue;
            }
            let ln = ln_odds[t];
            let ti = task.tier.index();
            per_tier[ti].push(ln.min(caps[ti]));
            all.push(ln);
            worst[ti] = Some(worst[ti].map_or(ln, |w: f64| w.min(ln)));
        }
        let by = |a: &f64, b: &f64| a.partial_cmp(b).unwrap_or(Ordering::Equal);
        let mut entries = Vec::with_capacity(all.len() * 2);
        let mut tier_len = [0; 3];
        for (i, mut v) in per_tier.into_iter().enumerate() {
            v.sort_by(by);
            tier_len[i] = v.len();
            entries.extend(v);
        }
        all.sort_by(by);
        entries.extend(all);
        ObjectiveKey {
            entries,
            tier_len,
            worst,
        }
    }

    /// Key of the tasks' current tallies.
    pub fn from_tallies(incident: &Incident, tallies: &[TaskTally]) -> Self {
        let ln: Vec<f64> = tallies
            .iter()
            .zip(&incident.tasks)
            .map(|(tl, task)| tl.ln_odds(task))
            .collect();
        Self::from_ln_odds(incident, &ln)
    }

    /// Key of `placement` (a full recompute).
    pub fn of(incident: &Incident, placement: &Placement) -> Self {
        Self::from_tallies(incident, &tallies(incident, placement))
    }

    /// Lexicographic comparison with the tolerance.
    pub fn compare(&self, other: &ObjectiveKey) -> Ordering {
        for (a, b) in self.entries.iter().zip(&other.entries) {
            match cmp_ln(*a, *b) {
                Ordering::Equal => continue,
                o => return o,
            }
        }
        self.entries.len().cmp(&other.entries.len())
    }

    /// Strictly better than `other` (beyond the tolerance).
    pub fn better_than(&self, other: &ObjectiveKey) -> bool {
        self.compare(other) == Ordering::Greater
    }

    /// The key's entries: capped per tier, then all uncapped (ln odds).
    pub fn entries(&self) -> &[f64] {
        &self.entries
    }

    /// Worst (uncapped) odds per tier, indexed by [`Tier::index`]; `None`
    /// for a tier with no open task.
    pub fn worst_odds_per_tier(&self) -> [Option<f64>; 3] {
        self.worst.map(|w| w.map(f64::exp))
    }

    /// The first tier whose worst odds are below its cap in `caps` (its
    /// secure level with [`ln_caps`]), if any.
    pub fn first_short_tier(&self, caps: &LnCaps) -> Option<Tier> {
        let secure = self.worst_capped_ln_per_tier();
        Tier::ALL
            .into_iter()
            .find(|t| secure[t.index()].is_some_and(|v| !reaches(v, caps[t.index()])))
    }

    /// Worst capped ln odds per tier (the first entry of each tier's part).
    pub fn worst_capped_ln_per_tier(&self) -> [Option<f64>; 3] {
        let mut out = [None; 3];
        let mut start = 0;
        for (i, len) in self.tier_len.iter().enumerate() {
            if *len > 0 {
                out[i] = Some(self.entries[start]);
            }
            start += len;
        }
        out
    }

    /// Number of capped entries (open tasks, every tier).
    pub fn capped_len(&self) -> usize {
        self.tier_len.iter().sum()
    }

    /// The capped part: tier by tier, each tier's capped ln odds ascending.
    pub fn capped(&self) -> &[f64] {
        &self.entries[..self.capped_len()]
    }

    /// The tier of each capped entry, in order.
    pub fn entry_tiers(&self) -> Vec<Tier> {
        Tier::ALL
            .iter()
            .zip(self.tier_len)
            .flat_map(|(t, n)| std::iter::repeat_n(*t, n))
            .collect()
    }

    /// The key with its first `floors.len()` capped entries held at most at
    /// the given thresholds: every plan meeting them ties there, so the key
    /// then ranks by the next entry (how a threshold's best value is found).
    /// Monotone in every task's odds, like the key itself.
    pub fn held(mut self, floors: &[f64]) -> Self {
        for (e, f) in self.entries.iter_mut().zip(floors) {
            if *e > *f {
                *e = *f;
            }
        }
        self
    }

    /// [`Self::held`], and every entry after the first free one set equal
    /// (0): the key then ranks plans by that entry alone, which is all a
    /// threshold search needs (ties there need no further search).
    pub fn held_focus(self, floors: &[f64]) -> Self {
        let mut k = self.held(floors);
        for e in k.entries.iter_mut().skip(floors.len() + 1) {
            *e = 0.0;
        }
        k
    }

    /// Does every capped entry reach its threshold (`thresholds[i]` for
    /// entry i; entries past the list are free)?
    pub fn meets(&self, thresholds: &[f64]) -> bool {
        self.capped()
            .iter()
            .zip(thresholds)
            .all(|(e, t)| reaches(*e, *t))
    }

    /// The first capped entry below its threshold, if any.
    pub fn first_short(&self, thresholds: &[f64]) -> Option<usize> {
        self.capped()
            .iter()
            .zip(thresholds)
            .position(|(e, t)| !reaches(*e, *t))
    }

    /// Worst odds over all open tasks (1 when there is none).
    pub fn min_odds(&self) -> f64 {
        self.min_ln_odds().exp()
    }

    /// ln of [`Self::min_odds`].
    pub fn min_ln_odds(&self) -> f64 {
        let n: usize = self.tier_len.iter().sum();
        self.entries.get(n).copied().unwrap_or(0.0)
    }
}

impl PartialEq for ObjectiveKey {
    /// Equal within the tolerance.
    fn eq(&self, other: &Self) -> bool {
        self.compare(other) == Ordering::Equal
    }
}

impl PartialOrd for ObjectiveKey {
    fn partial_cmp(&self, other: &Self) -> Option<Ordering> {
        Some(self.compare(other))
    }
}

/// One task's ln odds before and after a change.
#[derive(Debug, Clone, Copy)]
pub struct TaskChange {
    pub task: TaskIdx,
    pub before: f64,
    pub after: f64,
}

/// How a change of a few tasks' ln odds moves the key: `Greater` when the
/// plan after is better. Exact by separability (module docs), up to the
/// tolerance. Changes of tasks that do not count are ignored.
pub fn compare_change(incident: &Incident, changes: &[TaskChange]) -> Ordering {
    compare_change_capped(incident, &ln_caps(incident), changes)
}

/// Like [`compare_change`] with each tier capped at `caps`.
pub fn compare_change_capped(
    incident: &Incident,
    caps: &LnCaps,
    changes: &[TaskChange],
) -> Ordering {
    let mut before = [0.0f64; 8];
    let mut after = [0.0f64; 8];
    // Per tier, the capped parts.
    for tier in Tier::ALL {
        let cap = caps[tier.index()];
        let mut n = 0;
        for c in changes {
            if counts(incident, c.task) && incident.tasks[c.task].tier == tier && n < 8 {
                before[n] = c.before.min(cap);
                after[n] = c.after.min(cap);
                n += 1;
            }
        }
        if n > 0 {
            let o = cmp_sorted(&mut after[..n], &mut before[..n]);
            if o != Ordering::Equal {
                return o;
            }
        }
    }
    let mut n = 0;
    for c in changes {
        if counts(incident, c.task) && n < 8 {
            before[n] = c.before;
            after[n] = c.after;
            n += 1;
        }
    }
    cmp_sorted(&mut after[..n], &mut before[..n])
}

fn cmp_sorted(a: &mut [f64], b: &mut [f64]) -> Ordering {
    let by = |x: &f64, y: &f64| x.partial_cmp(y).unwrap_or(Ordering::Equal);
    a.sort_by(by);
    b.sort_by(by);
    for (x, y) in a.iter().zip(b.iter()) {
        match cmp_ln(*x, *y) {
            Ordering::Equal => continue,
            o => return o,
        }
    }
    Ordering::Equal
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::parse_incident_str;

    fn incident() -> Incident {
        parse_incident_str(
            r#"
incident: { name: Invented key check }
traits: [ { id: water } ]
unit_types: [ { id: e, traits: { water: { mean: 1, sd: 1 } } } ]
units: [ { id: E1, type: e } ]
tasks:
  - { id: L1, tier: life, needs: { water: 1 } }
  - { id: L2, tier: life, needs: { water: 1 } }
  - { id: P1, tier: property, needs: { water: 1 } }
"#,
            "k.yaml",
        )
        .expect("valid")
    }

    #[test]
    fn tiers_come_first_then_uncapped() {
        let inc = incident();
        let ln = |p: f64| p.ln();
        // Life tier secure in both: the property task decides.
        let a = ObjectiveKey::from_ln_odds(&inc, &[ln(0.995), ln(0.999), ln(0.5)]);
        let b = ObjectiveKey::from_ln_odds(&inc, &[ln(0.9999), ln(0.9999), ln(0.4)]);
        assert!(a.better_than(&b));
        // A life task short of its secure level outranks any property gain.
        let c = ObjectiveKey::from_ln_odds(&inc, &[ln(0.98), ln(0.999), ln(0.99)]);
        assert!(a.better_than(&c));
        // Both capped equal everywhere: uncapped decides.
        let d = ObjectiveKey::from_ln_odds(&inc, &[ln(0.9999), ln(0.999), ln(0.5)]);
        assert!(d.better_than(&a));
        assert_eq!(
            a.worst_odds_per_tier()[0].map(|p| (p * 1e3).round()),
            Some(995.0)
        );
        assert!((a.min_odds() - 0.5).abs() < 1e-12);
    }

    #[test]
    fn tolerance_and_negative_infinity() {
        let inc = incident();
        let a = ObjectiveKey::from_ln_odds(&inc, &[-1.0, -2.0, f64::NEG_INFINITY]);
        let b = ObjectiveKey::from_ln_odds(&inc, &[-1.0 + 1e-12, -2.0, f64::NEG_INFINITY]);
        assert_eq!(a.compare(&b), Ordering::Equal);
        let c = ObjectiveKey::from_ln_odds(&inc, &[-1.0, -2.0, -1e6]);
        assert!(c.better_than(&a));
    }

    #[test]
    fn change_comparison_matches_full_keys() {
        let inc = incident();
        let base = [-0.5, -0.01, -3.0];
        for (t, after) in [(0, -0.6), (1, -0.2), (2, -1.0), (0, -0.001)] {
            let mut v = base;
            v[t] = after;
            let full = ObjectiveKey::from_ln_odds(&inc, &v)
                .compare(&ObjectiveKey::from_ln_odds(&inc, &base));
            let delta = compare_change(
                &inc,
                &[TaskChange {
                    task: crate::model::TaskIdx::new(t),
                    before: base[t],
                    after,
                }],
            );
            assert_eq!(full, delta, "task {t} → {after}");
        }
    }
}
