//! Task tallies: closed forms from probability textbooks, and property tests
//! that the incremental sums equal a full recompute from the formula.

use oddsboard::model::{
    Incident, Need, Placement, Rating, SecureLevels, Task, Tier, TraitDef, Unit, UnitStatus,
    UnitType, parse_incident_str,
};
use oddsboard::odds::{
    ForcedZero, Regime, TaskTally, evaluate, evaluate_task, ln_phi, phi, tallies,
};
use proptest::prelude::*;

fn incident(yaml: &str) -> Incident {
    parse_incident_str(yaml, "test.yaml").expect("test incident is valid")
}

/// Sum of independent normals: N(3, 1²) + N(4, 2²) = N(7, 5), so against a
/// need of 5 the odds are Φ(2/√5) = 0.8144533152386512 (value from mpmath
/// `ncdf(2/sqrt(5))`; the sum rule is the textbook one for independent
/// normals).
#[test]
fn sum_of_independent_normals() {
    let inc = incident(
        r#"
incident: { name: Invented test }
traits: [ { id: water, unit: L/min } ]
unit_types:
  - { id: a, traits: { water: { mean: 3, sd: 1 } } }
  - { id: b, rho: 0.7, traits: { water: { mean: 4, sd: 2 } } }
units: [ { id: A1, type: a }, { id: B1, type: b } ]
tasks: [ { id: T, needs: { water: 5 } } ]
placement: { A1: T, B1: T }
"#,
    );
    let odds = &evaluate(&inc, &inc.placement)[0];
    assert!((odds.odds() - 0.814_453_315_238_651_2).abs() < 1e-15);
    assert!((odds.odds() - phi(2.0 / 5f64.sqrt())).abs() < 1e-15);
    let tally = &tallies(&inc, &inc.placement)[0];
    assert_eq!(tally.mean(0), 7.0);
    assert!((tally.unit_var(0) - 5.0).abs() < 1e-12);
    assert_eq!(odds.regime(), Some(Regime::Hedge));
}

/// Variance of a sum of k equicorrelated variables with common sd σ and
/// correlation ρ is k·σ²·(1 + (k − 1)ρ) (textbook); k = 4, σ = 2, ρ = 0.3
/// gives 30.4. SPEC §2's per-type formula (1 − ρ)·Σsd² + ρ·(Σsd)² must agree.
#[test]
fn equicorrelated_variance() {
    let inc = incident(
        r#"
incident: { name: Invented test }
traits: [ { id: lift, unit: t } ]
unit_types:
  - { id: crane, rho: 0.3, traits: { lift: { mean: 10, sd: 2 } } }
units: [ { id: C1, type: crane }, { id: C2, type: crane }, { id: C3, type: crane }, { id: C4, type: crane } ]
tasks: [ { id: T, needs: { lift: 45 } } ]
placement: { C1: T, C2: T, C3: T, C4: T }
"#,
    );
    let (k, sigma, rho) = (4.0_f64, 2.0_f64, 0.3_f64);
    let closed = k * sigma * sigma * (1.0 + (k - 1.0) * rho);
    assert!((closed - 30.4).abs() < 1e-12);
    let per_type = (1.0 - rho) * k * sigma * sigma + rho * (k * sigma).powi(2);
    assert!((per_type - closed).abs() < 1e-12);
    let tally = &tallies(&inc, &inc.placement)[0];
    assert!((tally.unit_var(0) - closed).abs() < 1e-12);
    let full = evaluate_task(&inc, &inc.placement, oddsboard::model::TaskIdx::new(0));
    assert!((full.traits[0].unit_sd.powi(2) - closed).abs() < 1e-12);
    // 40 t expected against 45 needed: short, so the task gambles.
    assert_eq!(full.regime(), Some(Regime::Gamble));
    assert!((full.ln_odds - ln_phi(-5.0 / closed.sqrt())).abs() < 1e-15);
}

#[test]
fn rho_one_moves_as_one_unit() {
    // SPEC §2: with ρ = 1 the variance of k identical units is k²·sd².
    let inc = incident(
        r#"
incident: { name: Invented test }
traits: [ { id: lift, unit: t } ]
unit_types:
  - { id: crane, rho: 1, traits: { lift: { mean: 10, sd: 2 } } }
units: [ { id: C1, type: crane }, { id: C2, type: crane }, { id: C3, type: crane } ]
tasks: [ { id: T, needs: { lift: 25 } } ]
placement: { C1: T, C2: T, C3: T }
"#,
    );
    let tally = &tallies(&inc, &inc.placement)[0];
    assert!((tally.unit_var(0) - 36.0).abs() < 1e-12);
}

const SMALL: &str = r#"
incident: { name: Invented test }
traits:
  - { id: water, unit: L/min }
  - { id: crew, unit: persons }
unit_types:
  - { id: engine, traits: { water: { mean: 10, sd: 3 }, crew: { mean: 4 } } }
units: [ { id: E1, type: engine }, { id: E2, type: engine } ]
tasks:
  - { id: NEEDSD, needs: { water: { need: 8, sd: 4 } } }
  - { id: EMPTY, needs: { water: 5 } }
  - { id: MIN, needs: { crew: 2 }, min_units: 2 }
  - { id: ZERO, needs: { water: 0, crew: 3 } }
placement: { E1: NEEDSD, E2: MIN }
"#;

#[test]
fn need_sd_adds_to_the_variance() {
    // Capability N(10, 3²) against need N(8, 4²): the difference is
    // N(2, 5²), so the odds are Φ(0.4).
    let inc = incident(SMALL);
    let t = evaluate_task(&inc, &inc.placement, oddsboard::model::TaskIdx::new(0));
    assert!((t.traits[0].sd - 5.0).abs() < 1e-15);
    assert!((t.traits[0].unit_sd - 3.0).abs() < 1e-15);
    assert!((t.odds() - phi(0.4)).abs() < 1e-15);
}

#[test]
fn no_units_or_below_minimum_is_zero() {
    let inc = incident(SMALL);
    let all = evaluate(&inc, &inc.placement);
    assert_eq!(all[1].forced_zero, Some(ForcedZero::NoUnits));
    assert_eq!(all[1].odds(), 0.0);
    assert_eq!(all[2].forced_zero, Some(ForcedZero::BelowMinimum));
    assert_eq!(all[2].odds(), 0.0);
    // The crew need alone would be certain: 4 ≥ 2 with sd 0.
    assert_eq!(all[2].traits[0].odds(), 1.0);
    let tally = &tallies(&inc, &inc.placement)[2];
    assert_eq!(tally.ln_odds(&inc.tasks[2]), f64::NEG_INFINITY);
}

#[test]
fn traits_with_no_need_do_not_count() {
    let mut inc = incident(SMALL);
    inc.placement.set(
        oddsboard::model::UnitIdx::new(1),
        Some(oddsboard::model::TaskIdx::new(3)),
    );
    let t = evaluate_task(&inc, &inc.placement, oddsboard::model::TaskIdx::new(3));
    assert_eq!(t.traits.len(), 1, "water (need 0, no sd) must not count");
    assert_eq!(t.traits[0].trait_idx, 1);
    assert_eq!(t.odds(), 1.0);
    assert_eq!(t.regime(), Some(Regime::Hedge));
}

#[test]
fn regime_follows_the_sign_of_z() {
    let mut inc = incident(SMALL);
    let short = evaluate_task(&inc, &inc.placement, oddsboard::model::TaskIdx::new(0));
    assert_eq!(short.regime(), Some(Regime::Hedge)); // 10 vs 8
    inc.tasks[0].needs[0].need = 12.0;
    let t = evaluate_task(&inc, &inc.placement, oddsboard::model::TaskIdx::new(0));
    assert!(t.z() < 0.0);
    assert_eq!(t.regime(), Some(Regime::Gamble));
    // Gamble: more spread raises the odds; hedge: it lowers them.
    let mut wider = inc.clone();
    wider.units[0].ratings[0].sd = 6.0;
    assert!(
        evaluate_task(&wider, &wider.placement, oddsboard::model::TaskIdx::new(0)).ln_odds
            > t.ln_odds
    );
    let mut steady = incident(SMALL);
    let before = evaluate_task(
        &steady,
        &steady.placement,
        oddsboard::model::TaskIdx::new(0),
    )
    .ln_odds;
    steady.units[0].ratings[0].sd = 6.0;
    assert!(
        evaluate_task(
            &steady,
            &steady.placement,
            oddsboard::model::TaskIdx::new(0)
        )
        .ln_odds
            < before
    );
}

// ---------------------------------------------------------------------------
// Property test: any sequence of adds and removes gives the full recompute.

/// (mean, sd) of a rating, or (need, need sd) of a need.
type Pair = (f64, f64);

#[derive(Debug, Clone)]
struct Shape {
    traits: usize,
    /// (rho, default ratings) per type.
    types: Vec<(f64, Vec<Pair>)>,
    /// (type, overrides) per unit.
    units: Vec<(usize, Vec<Option<Pair>>)>,
    /// (needs, min_units) per task.
    tasks: Vec<(Vec<Pair>, Option<u32>)>,
    moves: Vec<(usize, Option<usize>)>,
}

fn sd_strategy() -> impl Strategy<Value = f64> {
    // Zero-spread units are common (certain ratings); otherwise 0.5..50.
    prop_oneof![Just(0.0), 0.5..50.0f64]
}

fn shape() -> impl Strategy<Value = Shape> {
    (1usize..4, 1usize..4, 1usize..14, 1usize..4).prop_flat_map(|(nt, ny, nu, nk)| {
        let rho = prop_oneof![Just(0.0), Just(1.0), 0.0..1.0f64];
        let rating = || (0.0..200.0f64, sd_strategy());
        let types = prop::collection::vec((rho, prop::collection::vec(rating(), nt)), ny);
        let unit = (
            0..ny,
            prop::collection::vec(prop::option::weighted(0.3, rating()), nt),
        );
        let units = prop::collection::vec(unit, nu);
        let need = (
            prop_oneof![Just(0.0), 0.0..600.0f64],
            prop_oneof![Just(0.0), 0.0..40.0f64],
        );
        let task = (prop::collection::vec(need, nt), prop::option::of(1u32..4));
        let tasks = prop::collection::vec(task, nk);
        let moves = prop::collection::vec((0..nu, prop::option::of(0..nk)), 0..60);
        (Just(nt), types, units, tasks, moves).prop_map(|(traits, types, units, tasks, moves)| {
            Shape {
                traits,
                types,
                units,
                tasks,
                moves,
            }
        })
    })
}

fn build(s: &Shape) -> Incident {
    let traits = (0..s.traits)
        .map(|k| TraitDef {
            id: format!("k{k}"),
            label: format!("k{k}"),
            unit: "u".into(),
            measurement_sd: None,
        })
        .collect();
    let unit_types: Vec<UnitType> = s
        .types
        .iter()
        .enumerate()
        .map(|(i, (rho, r))| UnitType {
            id: format!("type{i}"),
            label: String::new(),
            rho: *rho,
            ratings: r.iter().map(|&(mean, sd)| Rating { mean, sd }).collect(),
            cost: None,
        })
        .collect();
    let units = s
        .units
        .iter()
        .enumerate()
        .map(|(i, (ty, over))| Unit {
            id: format!("U{i}"),
            type_idx: *ty,
            ratings: over
                .iter()
                .enumerate()
                .map(|(k, o)| match o {
                    Some((mean, sd)) => Rating {
                        mean: *mean,
                        sd: *sd,
                    },
                    None => unit_types[*ty].ratings[k],
                })
                .collect(),
            status: UnitStatus::Available,
        })
        .collect();
    let tasks = s
        .tasks
        .iter()
        .enumerate()
        .map(|(j, (needs, min_units))| Task {
            id: format!("T{j}"),
            label: String::new(),
            tier: Tier::Property,
            needs: needs.iter().map(|&(need, sd)| Need { need, sd }).collect(),
            accepts: None,
            min_units: *min_units,
            max_units: None,
            outcome: None,
        })
        .collect();
    Incident {
        name: "Invented property test".into(),
        started: None,
        reserve_min: 0,
        secure: SecureLevels::default(),
        traits,
        unit_types,
        placement: Placement::all_reserve(s.units.len()),
        units,
        tasks,
        pins: Default::default(),
        observations: Default::default(),
    }
}

fn rel_close(a: f64, b: f64, tol: f64) -> bool {
    a == b || (a - b).abs() <= tol * a.abs().max(b.abs()) || (a - b).abs() < 1e-12
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(300))]
    #[test]
    fn tallies_equal_full_recompute(s in shape()) {
        let inc = build(&s);
        let mut placement = Placement::all_reserve(inc.units.len());
        let mut live: Vec<TaskTally> = vec![TaskTally::for_incident(&inc); inc.tasks.len()];
        for &(u, to) in &s.moves {
            let (u, to) = (oddsboard::model::UnitIdx::new(u), to.map(oddsboard::model::TaskIdx::new));
            if let Some(from) = placement.get(u) {
                live[from].remove(&inc, u);
            }
            if let Some(to) = to {
                live[to].add(&inc, u);
            }
            placement.set(u, to);
            for (t, tally) in live.iter().enumerate() {
                let t = oddsboard::model::TaskIdx::new(t);
                let full = evaluate_task(&inc, &placement, t);
                let task = &inc.tasks[t];
                prop_assert_eq!(tally.count() as usize, full.units.len());
                for tr in &full.traits {
                    let k = tr.trait_idx;
                    prop_assert!(rel_close(tally.mean(k), tr.mean, 1e-9),
                        "mean {} vs {}", tally.mean(k), tr.mean);
                    let var = tr.unit_sd * tr.unit_sd;
                    prop_assert!(rel_close(tally.unit_var(k), var, 1e-9),
                        "var {} vs {}", tally.unit_var(k), var);
                }
                let ln = tally.ln_odds(task);
                prop_assert!(rel_close(ln, full.ln_odds, 1e-9),
                    "ln odds {} vs {}", ln, full.ln_odds);
                let view = tally.task_odds(t, task, full.units.clone());
                prop_assert_eq!(view.forced_zero, full.forced_zero);
                prop_assert_eq!(view.binding, full.binding);
                prop_assert!(rel_close(view.ln_fail, full.ln_fail, 1e-9) ,
                    "ln fail {} vs {}", view.ln_fail, full.ln_fail);
            }
        }
        // Rebuilding from scratch gives the same tallies as the live ones.
        let rebuilt = tallies(&inc, &placement);
        for (a, b) in rebuilt.iter().zip(&live) {
            for k in 0..inc.traits.len() {
                prop_assert!(rel_close(a.mean(k), b.mean(k), 1e-9));
                prop_assert!(rel_close(a.unit_var(k), b.unit_var(k), 1e-9));
            }
        }
    }
}

/// Rounding drift over a long run stays far below what the objective
/// compares (1e−10 in ln space): 200 000 random moves on the project's
/// seeded 600-unit generator incident, then every task against a full
/// recompute.
#[test]
fn long_runs_do_not_drift() {
    use oddsboard::model::generate::{GenerateSpec, generate};
    use rand::rngs::StdRng;
    use rand::{RngExt, SeedableRng};
    let inc = generate(&GenerateSpec::new(600, 40, 5).seed(9)).expect("generated incident");
    let mut placement = inc.placement.clone();
    let mut live = tallies(&inc, &placement);
    let mut rng = StdRng::seed_from_u64(9);
    for _ in 0..200_000 {
        let u = oddsboard::model::UnitIdx::new(rng.random_range(0..inc.units.len()));
        let to = if rng.random_bool(0.1) {
            None
        } else {
            Some(oddsboard::model::TaskIdx::new(
                rng.random_range(0..inc.tasks.len()),
            ))
        };
        if let Some(from) = placement.get(u) {
            live[from].remove(&inc, u);
        }
        if let Some(to) = to {
            live[to].add(&inc, u);
        }
        placement.set(u, to);
    }
    let mut worst = 0.0_f64;
    for (t, tally) in live.iter().enumerate() {
        let t = oddsboard::model::TaskIdx::new(t);
        let full = evaluate_task(&inc, &placement, t);
        let ln = tally.ln_odds(&inc.tasks[t]);
        assert!(
            rel_close(ln, full.ln_odds, 1e-9),
            "task {t}: {ln} vs {}",
            full.ln_odds
        );
        if full.ln_odds.is_finite() && full.ln_odds != 0.0 {
            worst = worst.max(((ln - full.ln_odds) / full.ln_odds).abs());
        }
        for tr in &full.traits {
            assert!(rel_close(tally.mean(tr.trait_idx), tr.mean, 1e-9));
            assert!(rel_close(
                tally.unit_var(tr.trait_idx),
                tr.unit_sd * tr.unit_sd,
                1e-9
            ));
        }
    }
    eprintln!("worst relative ln-odds drift after 200 000 moves: {worst:e}");
}
