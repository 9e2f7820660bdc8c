//! Small random incidents and their brute-force enumeration, shared by the
//! tests that check the solver and its bounds against every feasible plan
//! (`tests/solver_exact.rs`, `tests/solver_relax.rs`,
//! `tests/solver_replan.rs`, `tests/solver_progress.rs`).

use oddsboard::model::{Incident, Placement, UnitStatus, parse_incident_str};
use oddsboard::odds::evaluate;
use oddsboard::solver::ObjectiveKey;
use std::fmt::Write as _;

/// A small random incident written as YAML from a seed (plain LCG so the
/// test does not depend on the crate's generator).
pub fn small_incident(seed: u64) -> Option<Incident> {
    let mut s = seed
        .wrapping_mul(6364136223846793005)
        .wrapping_add(1442695040888963407);
    let mut next = move |n: u64| {
        s = s
            .wrapping_mul(6364136223846793005)
            .wrapping_add(1442695040888963407);
        (s >> 33) % n.max(1)
    };
    let n_traits = 1 + next(3) as usize;
    let n_types = 1 + next(3) as usize;
    let n_tasks = 1 + next(4) as usize;
    // At most about 65 000 plans to enumerate: 8 units with 3 tasks, 6 with 4.
    let n_units = 1 + next(if n_tasks == 4 { 6 } else { 8 }) as usize;
    let mut y = String::new();
    let reserve_min = if next(5) == 0 { 1 } else { 0 };
    let _ = writeln!(
        y,
        "incident: {{ name: Invented test {seed}, reserve_min: {reserve_min} }}"
    );
    if next(3) == 0 {
        let _ = writeln!(y, "  # custom secure levels");
        y = y.replace(
            "reserve_min: ",
            "secure: { life: 0.9, stabilization: 0.8, property: 0.7 }, reserve_min: ",
        );
    }
    y.push_str("traits:\n");
    for k in 0..n_traits {
        let _ = writeln!(y, "  - {{ id: k{k} }}");
    }
    y.push_str("unit_types:\n");
    for t in 0..n_types {
        let rho = [0.0, 0.0, 0.3, 1.0][next(4) as usize];
        let _ = writeln!(y, "  - id: t{t}\n    rho: {rho}\n    traits:");
        for k in 0..n_traits {
            let mean = next(10) as f64;
            let sd = [0.0, 0.5, 1.0, 3.0][next(4) as usize];
            let _ = writeln!(y, "      k{k}: {{ mean: {mean}, sd: {sd} }}");
        }
    }
    y.push_str("units:\n");
    let mut unit_type = Vec::new();
    let mut out = Vec::new();
    for i in 0..n_units {
        let t = next(n_types as u64) as usize;
        unit_type.push(t);
        let _ = write!(y, "  - {{ id: U{i}, type: t{t}");
        if next(4) == 0 {
            let _ = write!(y, ", traits: {{ k0: {{ sd: {} }} }}", next(4));
        }
        let o = next(10) == 0;
        out.push(o);
        if o {
            y.push_str(", status: out_of_service");
        }
        y.push_str(" }\n");
    }
    y.push_str("tasks:\n");
    let mut accepts = Vec::new();
    let mut max = Vec::new();
    let mut closed = Vec::new();
    for j in 0..n_tasks {
        let tier = ["life", "stabilization", "property"][next(3) as usize];
        let _ = writeln!(y, "  - id: J{j}\n    tier: {tier}\n    needs:");
        for k in 0..n_traits {
            match next(4) {
                0 => {}
                1 => {
                    let _ = writeln!(
                        y,
                        "      k{k}: {{ need: {}, sd: {} }}",
                        1 + next(15),
                        next(3)
                    );
                }
                _ => {
                    let _ = writeln!(y, "      k{k}: {}", 1 + next(15));
                }
            }
        }
        let acc: Option<Vec<usize>> =
            (n_types > 1 && next(4) == 0).then(|| vec![next(n_types as u64) as usize]);
        if let Some(a) = &acc {
            let _ = writeln!(y, "    accepts: [t{}]", a[0]);
        }
        accepts.push(acc);
        if next(5) == 0 {
            y.push_str("    min_units: 2\n");
        }
        let m = (next(4) == 0).then(|| 1 + next(2) as usize);
        if let Some(m) = m {
            let _ = writeln!(y, "    max_units: {m}");
        }
        max.push(m);
        let c = next(8) == 0;
        if c {
            y.push_str("    outcome: succeeded\n");
        }
        closed.push(c);
    }
    // Ground: random valid places; one pin now and then.
    let mut load = vec![0usize; n_tasks];
    let mut ground = Vec::new();
    let ok = |u: usize, j: usize, load: &[usize]| {
        !out[u]
            && !closed[j]
            && accepts[j]
                .as_ref()
                .is_none_or(|a| a.contains(&unit_type[u]))
            && max[j].is_none_or(|m| load[j] < m)
    };
    for u in 0..n_units {
        let j = next(n_tasks as u64 + 1) as usize;
        if j < n_tasks && ok(u, j, &load) {
            load[j] += 1;
            ground.push(format!("U{u}: J{j}"));
        }
    }
    if !ground.is_empty() {
        let _ = writeln!(y, "placement: {{ {} }}", ground.join(", "));
    }
    if next(4) == 0 {
        let u = next(n_units as u64) as usize;
        let j = next(n_tasks as u64) as usize;
        let pinned_here = ground.iter().any(|g| g.starts_with(&format!("U{u}:")));
        let room = max[j].is_none_or(|m| {
            load[j] < m || (pinned_here && ground.contains(&format!("U{u}: J{j}")))
        });
        if !out[u]
            && !closed[j]
            && accepts[j]
                .as_ref()
                .is_none_or(|a| a.contains(&unit_type[u]))
            && room
        {
            let _ = writeln!(y, "pins: {{ U{u}: J{j} }}");
        }
    }
    parse_incident_str(&y, "invented.yaml").ok()
}

/// [`small_incident`] with no two units alike: each unit's means scaled and
/// shifted by its own amount, so the exact search's symmetry rule merges
/// nothing and the proof must search every branch itself.
#[allow(dead_code)] // used by the exact-solver tests only
pub fn small_distinct_incident(seed: u64) -> Option<Incident> {
    let mut inc = small_incident(seed)?;
    for (i, u) in inc.units.iter_mut().enumerate() {
        let f = (i + 1) as f64;
        for r in &mut u.ratings {
            r.mean = r.mean * (1.0 + 0.01 * f) + 0.05 * f;
        }
    }
    Some(inc)
}

/// Every feasible placement: pinned units on their pins, out-of-service
/// units in reserve, every other unit in reserve or on an open task that
/// accepts it, no task over its maximum, at least `reserve_min` available
/// units in reserve.
pub fn all_plans(inc: &Incident) -> Vec<Placement> {
    let n = inc.units.len();
    let mut options: Vec<Vec<Option<oddsboard::model::TaskIdx>>> = Vec::new();
    for u in oddsboard::model::UnitIdx::range(n) {
        if let Some(&t) = inc.pins.get(&u) {
            options.push(vec![Some(t)]);
        } else if inc.units[u].status != UnitStatus::Available {
            options.push(vec![None]);
        } else {
            let mut o = vec![None];
            o.extend(
                oddsboard::model::TaskIdx::range(inc.tasks.len())
                    .filter(|&t| inc.may_place(u, t))
                    .map(Some),
            );
            options.push(o);
        }
    }
    let mut plans = Vec::new();
    let mut idx = vec![0usize; n];
    loop {
        let p = Placement((0..n).map(|u| options[u][idx[u]]).collect());
        let within_max = inc.tasks.iter().enumerate().all(|(t, task)| {
            task.max_units
                .is_none_or(|m| p.units_on(oddsboard::model::TaskIdx::new(t)).count() as u32 <= m)
        });
        let reserve = oddsboard::model::UnitIdx::range(n)
            .filter(|&u| {
                inc.units[u].status == UnitStatus::Available
                    && !inc.pins.contains_key(&u)
                    && p.get(u).is_none()
            })
            .count() as u32;
        if within_max && reserve >= inc.reserve_min {
            plans.push(p);
        }
        let mut d = 0;
        loop {
            if d == n {
                return plans;
            }
            idx[d] += 1;
            if idx[d] < options[d].len() {
                break;
            }
            idx[d] = 0;
            d += 1;
        }
    }
}

/// Key from the full recompute (no tallies).
pub fn key_of(inc: &Incident, p: &Placement) -> ObjectiveKey {
    let ln: Vec<f64> = evaluate(inc, p).iter().map(|t| t.ln_odds).collect();
    ObjectiveKey::from_ln_odds(inc, &ln)
}

/// ln odds `a` at least threshold `t` with the key's tolerance (restated
/// from SPEC §3, not taken from the solver); −∞ is met by anything.
#[allow(dead_code)] // used by the rule's tests only
pub fn reaches(a: f64, t: f64) -> bool {
    t == f64::NEG_INFINITY || a >= t - 1e-10 * t.abs().max(1.0)
}

/// Does `k`'s capped part meet every threshold of `thr`?
#[allow(dead_code)] // used by the rule's tests only
pub fn meets(k: &ObjectiveKey, thr: &[f64]) -> bool {
    k.capped().iter().zip(thr).all(|(a, t)| reaches(*a, *t))
}

/// The rule's thresholds by enumeration (SPEC §3: entry by entry, the best
/// over every plan meeting the thresholds before it, less the slack).
#[allow(dead_code)] // used by the rule's tests only
pub fn brute_thresholds(keys: &[ObjectiveKey], slack: f64) -> Vec<f64> {
    let n = keys.first().map_or(0, |k| k.capped().len());
    let mut thr: Vec<f64> = Vec::new();
    for e in 0..n {
        let b = keys
            .iter()
            .filter(|k| meets(k, &thr))
            .map(|k| k.capped()[e])
            .fold(f64::NEG_INFINITY, f64::max);
        thr.push(if b == f64::NEG_INFINITY {
            b
        } else {
            b + (1.0 - slack).ln()
        });
    }
    thr
}
