//! Upper bounds on a task's odds, given the units already on it and the units
//! that may still join it. Used by the exact search to prune and by every
//! solve to report a bound on the worst odds.
//!
//! Per trait, with N(S) = Σ mean − need and D(S) the variance of
//! (capability − need) for the units S on the task, the odds are Φ(N/√D).
//! The odds are not monotone in S (spread helps on the gamble side and hurts
//! on the hedge side), so the bound takes the two sides separately:
//!
//! * **Hedge side** (z ≥ 0). Adding a unit with sd s to a set whose variance
//!   is V gives at least V + s² whatever the within-type correlation ρ ≥ 0,
//!   because (A + B)² ≥ A² + B² for the per-type sums of sd. So
//!   z ≤ N(S)/√(D_fixed + Σ_{i∈S} s_i²). We bound the maximum of that ratio
//!   over the continuous relaxation x ∈ [0, 1]ⁿ: its partial derivative in
//!   x_i has the sign of m_i/s_i² − N/(2D), one threshold for every unit, so
//!   every stationary point (and so the maximum on the box) lies on the path
//!   that adds units fully in descending order of m_i/s_i² (certain units
//!   first), one fraction at a time. On each segment of that path the ratio
//!   (N + t·m)/√(D + t·s²) has one stationary point t = N/m − 2D/s²; we take
//!   the best of it (clamped to [0, 1]) and the segment's ends.
//! * **Gamble side** (z < 0). N ≤ N_max (every unit with positive mean
//!   joins) and D ≤ D_max (every candidate joins: the variance only grows as
//!   units are added), so z = N/√D ≤ N_max/√D_max when N_max < 0.
//!
//! A task's bound is the product of its per-trait bounds (the traits are
//! independent, each factor is bounded on its own). Units of a type being
//! correlated or not, both sides stay valid. The tests compare the bound with
//! brute-force enumeration on small incidents.

use crate::model::{Incident, TaskIdx, UnitIdx};
use crate::odds::{TaskTally, ln_phi};

/// Upper bound on z for one trait.
///
/// * `n_fixed`: Σ mean − need of the units already on the task;
/// * `d_fixed`: their variance plus the need's variance;
/// * `d_max`: the variance (plus the need's) if every candidate joined;
/// * `candidates`: (mean, sd) of the units that may join, in descending
///   order of mean/sd² (sd = 0 first).
pub fn z_upper_bound(n_fixed: f64, d_fixed: f64, d_max: f64, candidates: &[(f64, f64)]) -> f64 {
    let n_max = n_fixed + candidates.iter().map(|c| c.0.max(0.0)).sum::<f64>();
    if n_max < 0.0 {
        return if d_max > 0.0 {
            n_max / d_max.sqrt()
        } else {
            f64::NEG_INFINITY
        };
    }
    let ratio = |n: f64, d: f64| -> f64 {
        if d > 0.0 {
            n / d.sqrt()
        } else if n >= 0.0 {
            f64::INFINITY
        } else {
            f64::NEG_INFINITY
        }
    };
    let (mut n, mut d) = (n_fixed, d_fixed);
    let mut best = ratio(n, d).max(0.0);
    for &(m, s) in candidates {
        let v = s * s;
        if v == 0.0 {
            if m > 0.0 {
                n += m;
                best = best.max(ratio(n, d));
            }
            continue;
        }
        if m > 0.0 && d > 0.0 {
            let t = (n / m - 2.0 * d / v).clamp(0.0, 1.0);
            best = best.max(ratio(n + t * m, d + t * v));
        }
        n += m;
        d += v;
        best = best.max(ratio(n, d));
    }
    best
}

/// For every trait, all units in descending order of mean/sd² (certain units
/// first, then by index): the order the hedge-side bound walks.
pub fn ratio_orders(incident: &Incident) -> Vec<Vec<UnitIdx>> {
    (0..incident.traits.len())
        .map(|k| {
            let key = |u: UnitIdx| {
                let r = incident.belief(u, k);
                if r.has_spread() {
                    r.mean / (r.sd() * r.sd())
                } else {
                    f64::INFINITY
                }
            };
            let mut order: Vec<UnitIdx> =
                crate::model::UnitIdx::range(incident.units.len()).collect();
            order.sort_by(|&a, &b| {
                key(b)
                    .partial_cmp(&key(a))
                    .unwrap_or(std::cmp::Ordering::Equal)
                    .then(a.cmp(&b))
            });
            order
        })
        .collect()
}

/// Upper bound on task `t`'s ln odds when the units of `fixed` stay and any
/// subset of the units for which `may_join` is true may join.
pub fn task_ln_upper_bound(
    incident: &Incident,
    t: TaskIdx,
    fixed: &TaskTally,
    orders: &[Vec<UnitIdx>],
    may_join: &dyn Fn(UnitIdx) -> bool,
    buf: &mut Vec<(f64, f64)>,
) -> f64 {
    task_ln_upper_bound_traits(incident, t, fixed, orders, may_join, buf, None)
}

/// Per trait of a task: ln of the trait's bound on Φ(z) and the variance
/// (plus the need's) with every candidate on the task, the most it can
/// reach. A trait that does not count has (0, 0).
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct TraitBound {
    pub ln_ub: f64,
    pub var_max: f64,
}

/// [`task_ln_upper_bound`], also writing each trait's [`TraitBound`] into
/// `per_trait` (resized to the traits) when given. With the task's bound
/// −∞ from `min_units` or the no-unit rule the entries are left at default.
pub fn task_ln_upper_bound_traits(
    incident: &Incident,
    t: TaskIdx,
    fixed: &TaskTally,
    orders: &[Vec<UnitIdx>],
    may_join: &dyn Fn(UnitIdx) -> bool,
    buf: &mut Vec<(f64, f64)>,
    mut per_trait: Option<&mut Vec<TraitBound>>,
) -> f64 {
    if let Some(p) = per_trait.as_deref_mut() {
        p.clear();
        p.resize(incident.traits.len(), TraitBound::default());
    }
    let task = &incident.tasks[t];
    let joinable = orders
        .first()
        .map_or(0, |o| o.iter().filter(|&&u| may_join(u)).count()) as u32;
    let has_needs = task.needs.iter().any(|n| n.counts());
    let most = fixed.count() + joinable;
    if task.min_units.is_some_and(|m| most < m) || (has_needs && most == 0) {
        return f64::NEG_INFINITY;
    }
    let mut all = fixed.clone();
    if let Some(o) = orders.first() {
        for &u in o {
            if may_join(u) {
                all.add(incident, u);
            }
        }
    }
    let mut ln = 0.0;
    for (k, need) in task.needs.iter().enumerate() {
        if !need.counts() {
            continue;
        }
        let nv = need.sd * need.sd;
        buf.clear();
        for &u in &orders[k] {
            if may_join(u) {
                let r = incident.belief(u, k);
                buf.push((r.mean, r.sd()));
            }
        }
        let var_max = all.unit_var(k) + nv;
        let z = z_upper_bound(
            fixed.mean(k) - need.need,
            fixed.unit_var(k) + nv,
            var_max,
            buf,
        );
        let l = ln_phi(z);
        if let Some(p) = per_trait.as_deref_mut() {
            p[k] = TraitBound { ln_ub: l, var_max };
        }
        ln += l;
    }
    ln
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Brute force over subsets of independent units (ρ = 0).
    fn best_z(n0: f64, d0: f64, c: &[(f64, f64)]) -> f64 {
        let mut best = f64::NEG_INFINITY;
        for mask in 0u32..(1 << c.len()) {
            let (mut n, mut d) = (n0, d0);
            for (i, (m, s)) in c.iter().enumerate() {
                if mask & (1 << i) != 0 {
                    n += m;
                    d += s * s;
                }
            }
            let z = if d > 0.0 {
                n / d.sqrt()
            } else if n >= 0.0 {
                f64::INFINITY
            } else {
                f64::NEG_INFINITY
            };
            best = best.max(z);
        }
        best
    }

    #[test]
    fn bound_covers_brute_force_on_both_sides() {
        type Case = (f64, f64, Vec<(f64, f64)>);
        let cases: Vec<Case> = vec![
            (
                -10.0,
                1.0,
                vec![(3.0, 1.0), (4.0, 3.0), (2.0, 0.1), (0.0, 2.0)],
            ),
            (-100.0, 4.0, vec![(3.0, 1.0), (4.0, 30.0), (2.0, 0.1)]),
            (-5.0, 0.0, vec![(5.0, 0.0), (1.0, 1.0)]),
            (2.0, 1.0, vec![(1.0, 5.0), (0.5, 0.1)]),
        ];
        for (n0, d0, mut c) in cases {
            let d_max = d0 + c.iter().map(|x| x.1 * x.1).sum::<f64>();
            let truth = best_z(n0, d0, &c);
            c.sort_by(|a, b| {
                let ra = if a.1 > 0.0 {
                    a.0 / (a.1 * a.1)
                } else {
                    f64::INFINITY
                };
                let rb = if b.1 > 0.0 {
                    b.0 / (b.1 * b.1)
                } else {
                    f64::INFINITY
                };
                rb.partial_cmp(&ra).unwrap_or(std::cmp::Ordering::Equal)
            });
            let ub = z_upper_bound(n0, d0, d_max, &c);
            assert!(ub >= truth - 1e-12, "ub {ub} < truth {truth} for {c:?}");
        }
    }
}
