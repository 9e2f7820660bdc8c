//! Tier bounds of the convex relaxation (`solver::relax`) against outside
//! references:
//!
//! * brute force: every feasible placement of small random incidents is
//!   enumerated (the same generator as `tests/solver_exact.rs`); for each
//!   tier, the best worst odds over the plans that keep every tier above at
//!   least at the given plan's worst (capped at its secure level) must not
//!   exceed the tier's bound, and the overall bound must not be below the
//!   brute-force max-min;
//! * closed forms: two tasks sharing 2n identical independent units, where
//!   the best plan gives n to each, so the worst odds are
//!   Φ((n·m − need)/(√n·sd)); Φ from Abramowitz & Stegun 26.2.17 (written
//!   here, error below 7.5e−8), on the hedge and the gamble side;
//! * longer runs: bounds from a short solve on seeded benchmark incidents
//!   are not below what a longer solve reaches.

use oddsboard::model::generate::{GenerateSpec, generate};
use oddsboard::model::{Incident, Placement, Tier, parse_incident_str};
use oddsboard::solver::relax::{RelaxOptions, tier_bounds};
use oddsboard::solver::{SolveOptions, solve};
use proptest::prelude::*;
use std::fmt::Write as _;
use std::sync::atomic::AtomicBool;
use std::time::Duration;

mod small_incidents;
use small_incidents::{all_plans, key_of, small_incident};

fn relax_options() -> RelaxOptions {
    RelaxOptions {
        time_limit: Duration::from_secs(20),
        ..RelaxOptions::default()
    }
}

/// The best worst odds of `tier` over `plans` that keep every tier above at
/// least at `reference`'s worst (capped at the tier's secure level).
fn brute_force_tier(
    inc: &Incident,
    plans: &[(Placement, [Option<f64>; 3])],
    reference: &[Option<f64>; 3],
    tier: Tier,
) -> f64 {
    let mut best = 0.0f64;
    for (_, worst) in plans {
        let kept = Tier::ALL.iter().take(tier.index()).all(|above| {
            match (reference[above.index()], worst[above.index()]) {
                (Some(r), Some(w)) => w >= r.min(inc.secure.get(*above)) * (1.0 - 1e-12),
                _ => true,
            }
        });
        if kept && let Some(w) = worst[tier.index()] {
            best = best.max(w);
        }
    }
    best
}

fn check_bounds_seed(seed: u64) -> Result<(), TestCaseError> {
    let Some(inc) = small_incident(seed) else {
        return Ok(());
    };
    let plans: Vec<(Placement, [Option<f64>; 3])> = all_plans(&inc)
        .into_iter()
        .map(|p| {
            let w = key_of(&inc, &p).worst_odds_per_tier();
            (p, w)
        })
        .collect();
    if plans.is_empty() {
        return Ok(());
    }
    let cancel = AtomicBool::new(false);
    // Two reference plans: one drawn from the seed (any feasible plan) and
    // the brute-force best by key.
    let drawn = (seed as usize / 7) % plans.len();
    let best = (0..plans.len())
        .max_by(|&a, &b| key_of(&inc, &plans[a].0).compare(&key_of(&inc, &plans[b].0)))
        .unwrap_or(0);
    let max_min = plans
        .iter()
        .map(|(p, _)| key_of(&inc, p).min_odds())
        .fold(0.0f64, f64::max);
    for r in [drawn, best] {
        let (reference, ref_worst) = &plans[r];
        let bounds = tier_bounds(&inc, reference, &relax_options(), &cancel);
        for b in &bounds.tiers {
            let truth = brute_force_tier(&inc, &plans, ref_worst, b.tier);
            let Some(u) = b.upper_bound else { continue };
            prop_assert!(
                u >= truth * (1.0 - 1e-9) - 1e-12,
                "seed {seed}: {} bound {u} below the brute-force best {truth}",
                b.tier.as_str()
            );
            prop_assert!(u >= b.worst_odds * (1.0 - 1e-9) - 1e-12);
        }
        if let Some(o) = bounds.overall {
            prop_assert!(
                o >= max_min * (1.0 - 1e-9) - 1e-12,
                "seed {seed}: overall bound {o} below the brute-force max-min {max_min}"
            );
        }
    }
    Ok(())
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 64, ..ProptestConfig::default() })]
    #[test]
    fn tier_bounds_cover_brute_force(seed in any::<u64>()) {
        check_bounds_seed(seed)?;
    }
}

#[test]
fn tier_bounds_cover_brute_force_fixed_seeds() {
    for seed in 0..40u64 {
        check_bounds_seed(seed).expect("bound below the brute-force best");
    }
}

/// Φ(z) by Abramowitz & Stegun 26.2.17 (|error| < 7.5e−8).
fn phi_as(z: f64) -> f64 {
    let (p, b) = (
        0.231_641_9,
        [
            0.319_381_530,
            -0.356_563_782,
            1.781_477_937,
            -1.821_255_978,
            1.330_274_429,
        ],
    );
    let x = z.abs();
    let t = 1.0 / (1.0 + p * x);
    let density = (-0.5 * x * x).exp() / (2.0 * std::f64::consts::PI).sqrt();
    let poly = t * (b[0] + t * (b[1] + t * (b[2] + t * (b[3] + t * b[4]))));
    let upper = density * poly;
    if z >= 0.0 { 1.0 - upper } else { upper }
}

/// Two tasks of one tier, each needing `need`, and 2n identical units
/// (mean m, sd s, ρ = 0): the best plan gives n units to each.
fn two_tasks(n: usize, m: f64, s: f64, need: f64) -> Incident {
    let mut y = String::from("incident: { name: Invented closed-form check }\n");
    y.push_str("traits: [ { id: water } ]\n");
    let _ = writeln!(
        y,
        "unit_types: [ {{ id: engine, traits: {{ water: {{ mean: {m}, sd: {s} }} }} }} ]"
    );
    y.push_str("units:\n");
    for i in 0..2 * n {
        let _ = writeln!(y, "  - {{ id: E{i}, type: engine }}");
    }
    let _ = writeln!(
        y,
        "tasks:\n  - {{ id: A, tier: property, needs: {{ water: {need} }} }}\n  - {{ id: B, tier: property, needs: {{ water: {need} }} }}"
    );
    parse_incident_str(&y, "closed-form.yaml").expect("closed-form incident loads")
}

#[test]
fn relaxation_is_exact_on_two_tasks_of_identical_units() {
    let cancel = AtomicBool::new(false);
    // (n, mean, sd, need): hedge side (n·m > need) and gamble side.
    for (n, m, s, need) in [
        (3usize, 1000.0, 300.0, 2500.0),
        (5, 1000.0, 150.0, 4600.0),
        (4, 1000.0, 400.0, 4500.0),
        (6, 500.0, 250.0, 3400.0),
    ] {
        let inc = two_tasks(n, m, s, need);
        let nf = n as f64;
        let z = (nf * m - need) / (nf.sqrt() * s);
        let truth = phi_as(z);
        // Any plan: everything in reserve is enough (the bound does not
        // depend on the plan in a single tier).
        let plan = Placement::all_reserve(inc.units.len());
        let bounds = tier_bounds(&inc, &plan, &relax_options(), &cancel);
        let b = bounds
            .get(Tier::Property)
            .and_then(|b| b.upper_bound)
            .expect("a bound");
        assert!(b >= truth - 1e-7, "n={n}: bound {b} below Φ(z*) = {truth}");
        // Tight: within the bisection's precision (z to 1e−2).
        let slack = phi_as(z + 1e-2);
        assert!(
            b <= slack + 1e-7,
            "n={n}: bound {b} above Φ(z* + 0.01) = {slack} (z* = {z})"
        );
        // The per-task bound alone (all 2n units on one task) is looser.
        let alone = phi_as((2.0 * nf * m - need) / ((2.0 * nf).sqrt() * s));
        assert!(b < alone, "n={n}: no better than the per-task bound");
    }
}

/// Units of one seeded benchmark incident: the bounds of a short solve's
/// plan are not below what a longer solve reaches (for every tier whose
/// higher tiers the longer plan keeps at the short plan's level).
#[test]
fn bounds_cover_longer_runs_on_benchmark_incidents() {
    let cancel = AtomicBool::new(false);
    for (units, tasks, traits, seed) in [(30, 6, 3, 1u64), (60, 12, 3, 2)] {
        let inc = generate(&GenerateSpec::new(units, tasks, traits).seed(seed)).expect("loads");
        let run = |ms: u64| {
            let options = SolveOptions {
                budget: Duration::from_millis(ms),
                from_scratch: true,
                seed,
                ..SolveOptions::default()
            };
            solve(&inc, &options, &cancel, &mut |_| {}).expect("solves")
        };
        let short = run(50);
        let long = run(3000);
        let bounds = tier_bounds(&inc, &short.placement, &relax_options(), &cancel);
        let short_worst = short.key.worst_odds_per_tier();
        let long_worst = long.key.worst_odds_per_tier();
        let plans = vec![(long.placement.clone(), long_worst)];
        for b in &bounds.tiers {
            let truth = brute_force_tier(&inc, &plans, &short_worst, b.tier);
            let u = b.upper_bound.expect("a bound");
            assert!(
                u >= truth * (1.0 - 1e-9),
                "{units}x{tasks}: {} bound {u} below a longer run's {truth}",
                b.tier.as_str()
            );
        }
        let o = bounds.overall.expect("an overall bound");
        assert!(o >= long.key.min_odds() * (1.0 - 1e-9));
    }
}

/// `plan --json` carries `bounds`: one object per tier with open tasks, in
/// the trade's order, each with `tier`, `worst_odds` (the plan's, as in
/// `tasks`) and `upper_bound` (a number at least the worst, or null); the
/// overall `upper_bound` is at least `min_odds`. The text report shows the
/// gap through the one odds formatter.
#[test]
fn plan_json_has_bounds_per_tier() {
    use assert_cmd::Command;
    let text = r#"
incident: { name: Invented bound drill }
traits: [ { id: water, unit: L/min } ]
unit_types:
  - { id: engine, traits: { water: { mean: 1900, sd: 250 } } }
  - { id: tender, traits: { water: { mean: 1200, sd: 600 } } }
units:
  - { id: E1, type: engine }
  - { id: E2, type: engine }
  - { id: W1, type: tender }
  - { id: W2, type: tender }
tasks:
  - { id: T1, tier: life, needs: { water: 2500 } }
  - { id: T2, tier: stabilization, needs: { water: 2600 } }
  - { id: T3, tier: property, needs: { water: 1500 } }
"#;
    let dir = tempfile::tempdir().expect("temp dir");
    let path = dir.path().join("drill.yaml");
    std::fs::write(&path, text).expect("write");
    let out = Command::cargo_bin("oddsboard")
        .expect("binary")
        .args(["plan", path.to_str().expect("path"), "--json"])
        .output()
        .expect("runs");
    assert!(out.status.success());
    let doc: serde_json::Value = serde_json::from_slice(&out.stdout).expect("one JSON document");
    let bounds = doc["bounds"].as_array().expect("bounds is an array");
    let tiers: Vec<&str> = bounds
        .iter()
        .map(|b| b["tier"].as_str().expect("tier"))
        .collect();
    assert_eq!(tiers, ["life", "stabilization", "property"]);
    let tasks = doc["tasks"].as_array().expect("tasks");
    for b in bounds {
        let obj = b.as_object().expect("object");
        assert_eq!(obj.len(), 4, "tier, worst_odds, upper_bound, complete: {b}");
        assert_eq!(b["complete"], serde_json::Value::Bool(true), "{b}");
        let worst = b["worst_odds"].as_f64().expect("worst_odds");
        let tier_worst = tasks
            .iter()
            .filter(|t| t["tier"] == b["tier"])
            .map(|t| t["odds"].as_f64().expect("odds"))
            .fold(1.0f64, f64::min);
        assert!((worst - tier_worst).abs() < 1e-12, "{b}");
        match &b["upper_bound"] {
            serde_json::Value::Null => {}
            u => {
                let u = u.as_f64().expect("number or null");
                assert!((worst * (1.0 - 1e-9)..=1.0).contains(&u), "{b}");
            }
        }
    }
    let overall = doc["upper_bound"].as_f64().expect("overall bound");
    assert!(overall >= doc["min_odds"].as_f64().expect("min_odds") * (1.0 - 1e-9));

    let text_out = Command::cargo_bin("oddsboard")
        .expect("binary")
        .args(["plan", path.to_str().expect("path")])
        .output()
        .expect("runs");
    let stdout = String::from_utf8_lossy(&text_out.stdout);
    assert!(
        stdout.contains("Worst stabilization ") && stdout.contains("possible"),
        "{stdout}"
    );
}

/// Reproducible bounds: the bisection runs over a fixed bracket, so the
/// first tier's bound is the same for any plan (here a short solve's and
/// all-reserve), and every tier's is the same twice over for one plan. The
/// old bracket (from the plan's worst to the per-task bound) gave a
/// different figure per plan.
#[test]
fn bounds_depend_on_the_input_only() {
    let cancel = AtomicBool::new(false);
    for (units, tasks, traits, seed) in [(30, 6, 3, 1u64), (60, 12, 3, 1)] {
        let inc = generate(&GenerateSpec::new(units, tasks, traits).seed(seed)).expect("loads");
        let options = SolveOptions {
            budget: Duration::from_millis(200),
            from_scratch: true,
            seed,
            ..SolveOptions::default()
        };
        let solved = solve(&inc, &options, &cancel, &mut |_| {}).expect("solves");
        let empty = Placement::all_reserve(inc.units.len());
        let a = tier_bounds(&inc, &solved.placement, &relax_options(), &cancel);
        let b = tier_bounds(&inc, &solved.placement, &relax_options(), &cancel);
        let c = tier_bounds(&inc, &empty, &relax_options(), &cancel);
        assert_eq!(a, b, "{units}x{tasks}: two runs on one plan differ");
        assert!(a.cut.is_empty(), "{units}x{tasks}: {a:?}");
        let first = a.tiers.first().expect("a tier");
        let first_empty = c.get(first.tier).expect("the same tier");
        assert_eq!(
            first.upper_bound.map(f64::to_bits),
            first_empty.upper_bound.map(f64::to_bits),
            "{units}x{tasks}: first tier's bound depends on the plan: {a:?} vs {c:?}"
        );
        assert_eq!(a.overall.map(f64::to_bits), c.overall.map(f64::to_bits));
    }
}

/// Two `plan --json` runs of one generated incident print the same bounds
/// (the first tier's whatever the plan; every tier's when the plans tie).
#[test]
fn plan_json_bounds_are_reproducible() {
    use assert_cmd::Command;
    let inc = Command::cargo_bin("oddsboard")
        .expect("binary")
        .args(["generate", "--units", "30", "--tasks", "6", "--traits", "3"])
        .args(["--seed", "3"])
        .output()
        .expect("runs");
    assert!(inc.status.success());
    let dir = tempfile::tempdir().expect("temp dir");
    let path = dir.path().join("generated.yaml");
    std::fs::write(&path, &inc.stdout).expect("write");
    let run = || {
        let out = Command::cargo_bin("oddsboard")
            .expect("binary")
            .args(["plan", path.to_str().expect("path"), "--json"])
            .args(["--from-scratch", "--seed", "1", "--budget-ms", "1500"])
            .output()
            .expect("runs");
        assert!(out.status.success());
        serde_json::from_slice::<serde_json::Value>(&out.stdout).expect("one JSON document")
    };
    let (a, b) = (run(), run());
    let (ba, bb) = (&a["bounds"], &b["bounds"]);
    assert!(ba[0]["upper_bound"].is_number(), "{ba}");
    assert_eq!(ba[0]["complete"], serde_json::Value::Bool(true), "{ba}");
    assert_eq!(ba[0]["upper_bound"], bb[0]["upper_bound"], "{ba} vs {bb}");
    if a["tasks"] == b["tasks"] {
        assert_eq!(ba, bb);
    }
}
