//! Field readings (`observed`) condition the odds exactly: checked against
//! numpy's multivariate normal conditional (committed fixture and script)
//! and against Monte Carlo with rejection on the reading (Wilson interval).

use oddsboard::log::{Event, apply};
use oddsboard::model::{Incident, Placement, TaskIdx, UnitIdx, parse_incident_str};
use oddsboard::odds::simulate::wilson_interval;
use oddsboard::odds::{evaluate, phi, tallies};
use rand::rngs::StdRng;
use rand::{RngExt, SeedableRng};
use serde_json::Value;

/// One invented type with the given units (per-unit ratings) and one task
/// `ALL` that takes every unit and needs `need` water.
fn incident(rho: f64, means: &[f64], sds: &[f64], need: f64) -> Incident {
    let mut y = format!(
        "incident: {{ name: Invented observation test }}\n\
         traits: [ {{ id: water }} ]\n\
         unit_types: [ {{ id: engine, rho: {rho}, traits: {{ water: {{ mean: 1000, sd: 100 }} }} }} ]\n\
         units:\n"
    );
    for (i, (m, s)) in means.iter().zip(sds).enumerate() {
        y += &format!(
            "  - {{ id: U{i}, type: engine, traits: {{ water: {{ mean: {m}, sd: {s} }} }} }}\n"
        );
    }
    y += &format!("tasks: [ {{ id: ALL, needs: {{ water: {need} }} }} ]\n");
    parse_incident_str(&y, "observed.yaml").expect("invented incident loads")
}

fn observe(inc: &mut Incident, u: usize, value: f64, sd: Option<f64>) {
    let e = Event::Observed {
        unit: format!("U{u}"),
        trait_id: "water".into(),
        value,
        sd,
    };
    apply(inc, &e).expect("the reading applies");
}

fn close(a: f64, b: f64, rel: f64) -> bool {
    (a - b).abs() <= rel * (1.0 + a.abs().max(b.abs()))
}

/// numpy (PyPI), tests/fixtures/belief_numpy.py: the posterior mean vector
/// and covariance of every unit of the type equal the plain multivariate
/// normal conditional; the task taking all units gets mean Σμ and variance
/// 1ᵀΣ1 in the tallies and in the full recompute.
#[test]
fn posterior_matches_the_multivariate_normal_conditional() {
    let text = std::fs::read_to_string("tests/fixtures/belief_numpy.json").expect("fixture");
    let doc: Value = serde_json::from_str(&text).expect("json");
    let f = |v: &Value| v.as_f64().expect("number");
    let cases = doc["cases"].as_array().expect("cases");
    assert!(cases.len() >= 8);
    for (c, case) in cases.iter().enumerate() {
        let rho = f(&case["rho"]);
        let means: Vec<f64> = case["means"].as_array().unwrap().iter().map(f).collect();
        let sds: Vec<f64> = case["sds"].as_array().unwrap().iter().map(f).collect();
        let n = means.len();
        let total_mean: f64 = means.iter().sum();
        let mut inc = incident(rho, &means, &sds, total_mean);
        for r in case["readings"].as_array().unwrap() {
            let u = r["unit"].as_u64().unwrap() as usize;
            observe(&mut inc, u, f(&r["value"]), Some(f(&r["sd"])));
        }
        let pm: Vec<f64> = case["posterior_mean"]
            .as_array()
            .unwrap()
            .iter()
            .map(f)
            .collect();
        let pc: Vec<Vec<f64>> = case["posterior_cov"]
            .as_array()
            .unwrap()
            .iter()
            .map(|row| row.as_array().unwrap().iter().map(f).collect())
            .collect();
        let b: Vec<_> = (0..n).map(|i| inc.belief(UnitIdx::new(i), 0)).collect();
        let scale = sds.iter().fold(0.0_f64, |a, s| a.max(s * s));
        for i in 0..n {
            assert!(
                close(b[i].mean, pm[i], 1e-9),
                "case {c} unit {i}: mean {} vs numpy {}",
                b[i].mean,
                pm[i]
            );
            for j in 0..n {
                let own = if i == j { b[i].own * b[i].own } else { 0.0 };
                let cov = b[i].load * b[j].load + own;
                assert!(
                    (cov - pc[i][j]).abs() <= 1e-9 * scale,
                    "case {c} cov[{i}][{j}]: {cov} vs numpy {}",
                    pc[i][j]
                );
            }
        }
        // The task odds read the posterior: mean Σμ, variance 1ᵀΣ1.
        let mut placement = Placement::all_reserve(n);
        for i in 0..n {
            placement.set(UnitIdx::new(i), Some(TaskIdx::new(0)));
        }
        inc.placement = placement.clone();
        let var: f64 = pc.iter().flatten().sum();
        let mean: f64 = pm.iter().sum();
        let want = phi((mean - total_mean) / var.sqrt());
        let full = evaluate(&inc, &placement)[0].odds();
        let tally = tallies(&inc, &placement)[0].ln_odds(&inc.tasks[0]).exp();
        assert!(close(full, want, 1e-9), "case {c}: full {full} vs {want}");
        assert!(
            close(tally, want, 1e-9),
            "case {c}: tally {tally} vs {want}"
        );
    }
}

/// Standard normal by Box–Muller from the seeded generator.
fn normal(rng: &mut StdRng) -> f64 {
    let u1: f64 = 1.0 - rng.random::<f64>();
    let u2: f64 = rng.random::<f64>();
    (-2.0 * u1.ln()).sqrt() * (std::f64::consts::TAU * u2).cos()
}

/// Monte Carlo with rejection: draw the prior of SPEC §2 and a reading of
/// U0, keep the draws whose reading falls within ±5 of the one recorded,
/// and count how often U1 + U2 (U1 unobserved: it moves only through the
/// shared factor) meets the need. The model's posterior odds must lie in the
/// z = 4 Wilson interval of that rate (a window of ±5 against sds of 100s
/// biases the rate far less than the interval's width).
#[test]
fn posterior_odds_match_rejection_sampling() {
    let (rho, m, s, sd_e, y) = (
        0.6,
        [1900.0, 1900.0, 1500.0],
        [250.0, 250.0, 300.0],
        100.0,
        1550.0,
    );
    let mut inc = incident(rho, &m, &s, 0.0);
    observe(&mut inc, 0, y, Some(sd_e));
    // A task with U1 and U2: the reading of U0 moves both through Z.
    let need = 3300.0;
    inc.tasks[0].needs[0].need = need;
    let mut placement = Placement::all_reserve(3);
    placement.set(UnitIdx::new(1), Some(TaskIdx::new(0)));
    placement.set(UnitIdx::new(2), Some(TaskIdx::new(0)));
    let model = evaluate(&inc, &placement)[0].odds();
    let prior = {
        let fresh = incident(rho, &m, &s, need);
        evaluate(&fresh, &placement)[0].odds()
    };
    let mut rng = StdRng::seed_from_u64(20261204);
    let (mut kept, mut met) = (0_u64, 0_u64);
    while kept < 15_000 {
        let z = normal(&mut rng);
        let v: Vec<f64> = (0..3)
            .map(|i| m[i] + s[i] * (rho.sqrt() * z + (1.0 - rho).sqrt() * normal(&mut rng)))
            .collect();
        let reading = v[0] + sd_e * normal(&mut rng);
        if (reading - y).abs() > 5.0 {
            continue;
        }
        kept += 1;
        if v[1] + v[2] >= need {
            met += 1;
        }
    }
    let (lo, hi) = wilson_interval(met, kept, 4.0);
    assert!(
        (lo..=hi).contains(&model),
        "posterior odds {model} outside [{lo}, {hi}] ({met}/{kept})"
    );
    // And the reading mattered: the prior odds are outside that interval.
    assert!(!(lo..=hi).contains(&prior), "prior {prior} vs [{lo}, {hi}]");
}

/// The event's own checks: unknown unit or trait, a negative or
/// non-finite value, a negative sd, a unit rated as certain.
#[test]
fn readings_that_do_not_apply_are_refused() {
    let mut inc = incident(0.2, &[1000.0, 900.0], &[100.0, 0.0], 1500.0);
    let before = inc.clone();
    for (unit, tr, value, sd) in [
        ("U9", "water", 100.0, None),
        ("U0", "foam", 100.0, None),
        ("U0", "water", -1.0, None),
        ("U0", "water", f64::NAN, None),
        ("U0", "water", f64::INFINITY, None),
        ("U0", "water", 100.0, Some(-3.0)),
        ("U1", "water", 100.0, None),
    ] {
        let e = Event::Observed {
            unit: unit.into(),
            trait_id: tr.into(),
            value,
            sd,
        };
        assert!(apply(&mut inc, &e).is_err(), "{e:?}");
        assert_eq!(inc, before);
    }
    // The default sd is the unit's rated sd (docs/model.md): with ρ = 0.2 a
    // reading of U0 without sd equals one with sd 100.
    let mut a = inc.clone();
    observe(&mut a, 0, 800.0, None);
    let mut b = inc.clone();
    observe(&mut b, 0, 800.0, Some(100.0));
    assert_eq!(a.belief(UnitIdx::new(0), 0), b.belief(UnitIdx::new(0), 0));
}

/// The joint odds read the posterior loadings: two tasks each worked by one
/// unit of a correlated type, after a reading of a third unit of it, against
/// rejection Monte Carlo of both succeeding at once (z = 4 Wilson interval).
#[test]
fn joint_odds_after_a_reading_match_rejection_sampling() {
    use oddsboard::odds::joint::{JointOptions, joint_odds};
    let (rho, m, s, sd_e, y) = (
        0.7_f64,
        [1900.0, 1800.0, 1700.0],
        [250.0, 300.0, 200.0],
        80.0,
        1600.0,
    );
    let mut inc = parse_incident_str(
        &format!(
            "incident: {{ name: Invented joint observation test }}\n\
             traits: [ {{ id: water }} ]\n\
             unit_types: [ {{ id: engine, rho: {rho}, traits: {{ water: {{ mean: 1000, sd: 100 }} }} }} ]\n\
             units:\n\
             - {{ id: U0, type: engine, traits: {{ water: {{ mean: {}, sd: {} }} }} }}\n\
             - {{ id: U1, type: engine, traits: {{ water: {{ mean: {}, sd: {} }} }} }}\n\
             - {{ id: U2, type: engine, traits: {{ water: {{ mean: {}, sd: {} }} }} }}\n\
             tasks: [ {{ id: A, needs: {{ water: 1650 }} }}, {{ id: B, needs: {{ water: 1600 }} }} ]\n\
             placement: {{ U1: A, U2: B }}\n",
            m[0], s[0], m[1], s[1], m[2], s[2]
        ),
        "joint.yaml",
    )
    .expect("invented incident loads");
    observe(&mut inc, 0, y, Some(sd_e));
    let placement = inc.placement.clone();
    let both = [TaskIdx::new(0), TaskIdx::new(1)];
    let model = joint_odds(&inc, &placement, &both, JointOptions::default()).odds();
    let product: f64 = evaluate(&inc, &placement)
        .iter()
        .map(|t| t.odds())
        .product();
    let mut rng = StdRng::seed_from_u64(20261207);
    let (mut kept, mut met) = (0_u64, 0_u64);
    while kept < 15_000 {
        let z = normal(&mut rng);
        let v: Vec<f64> = (0..3)
            .map(|i| m[i] + s[i] * (rho.sqrt() * z + (1.0 - rho).sqrt() * normal(&mut rng)))
            .collect();
        if (v[0] + sd_e * normal(&mut rng) - y).abs() > 5.0 {
            continue;
        }
        kept += 1;
        if v[1] >= 1650.0 && v[2] >= 1600.0 {
            met += 1;
        }
    }
    let (lo, hi) = wilson_interval(met, kept, 4.0);
    assert!(
        (lo..=hi).contains(&model),
        "joint {model} outside [{lo}, {hi}] ({met}/{kept})"
    );
    // The dependence through the shared factor matters here.
    assert!(
        !(lo..=hi).contains(&product),
        "product {product} vs [{lo}, {hi}]"
    );
}
