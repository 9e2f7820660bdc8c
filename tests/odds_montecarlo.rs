//! The Monte Carlo simulator against closed forms, and the model against the
//! simulator. All runs are seeded; trial counts are kept modest (20 000) so
//! the whole file runs in about a second.

use oddsboard::model::{
    Incident, Need, Placement, Rating, SecureLevels, Task, Tier, TraitDef, Unit, UnitStatus,
    UnitType, parse_incident_str,
};
use oddsboard::odds::simulate::{SimulationOptions, simulate, wilson_interval};
use rand::rngs::StdRng;
use rand::{RngExt, SeedableRng};
use std::path::Path;

/// z ≈ 4: a correct model falls outside with probability about 6e−5 per
/// task, so the whole file fails by chance far less than once in a hundred
/// runs (and the seeds are fixed, so it either always passes or never).
const Z: f64 = 4.0;
const TRIALS: u64 = 20_000;

/// Sheppard's formula (W. F. Sheppard, 1899): for a standard bivariate
/// normal with correlation ρ, P(X > 0, Y > 0) = 1/4 + arcsin(ρ)/(2π).
fn sheppard(rho: f64) -> f64 {
    0.25 + rho.asin() / (2.0 * std::f64::consts::PI)
}

/// Two tasks, each with one unit of the same type and a need of exactly its
/// mean: each succeeds when its unit draws above its mean, and the two draws
/// have correlation ρ through the shared type factor.
fn two_tasks_sharing_a_type(rho: f64) -> Incident {
    let yaml = format!(
        r#"
incident: {{ name: Invented correlation check }}
traits: [ {{ id: pump, unit: L/min }} ]
unit_types:
  - {{ id: engine, rho: {rho}, traits: {{ pump: {{ mean: 1800, sd: 300 }} }} }}
units: [ {{ id: E1, type: engine }}, {{ id: E2, type: engine }} ]
tasks:
  - {{ id: A, needs: {{ pump: 1800 }} }}
  - {{ id: B, needs: {{ pump: 1800 }} }}
placement: {{ E1: A, E2: B }}
"#
    );
    parse_incident_str(&yaml, "sheppard.yaml").expect("valid")
}

#[test]
fn joint_success_follows_sheppards_formula() {
    for (i, rho) in [0.0, 0.3, 0.6, 0.9].into_iter().enumerate() {
        let inc = two_tasks_sharing_a_type(rho);
        let sim = simulate(
            &inc,
            &inc.placement,
            SimulationOptions {
                trials: TRIALS,
                seed: 11 + i as u64,
            },
        );
        let want = sheppard(rho);
        let (lo, hi) = wilson_interval(sim.all_successes, TRIALS, Z);
        assert!(
            lo <= want && want <= hi,
            "ρ = {rho}: joint rate {} not in [{lo}, {hi}] around Sheppard's {want}",
            sim.all_rate()
        );
        // Each task alone: exactly one half.
        for t in &sim.tasks {
            assert_eq!(t.model_odds, 0.5);
            let (lo, hi) = wilson_interval(t.successes, TRIALS, Z);
            assert!(lo <= 0.5 && 0.5 <= hi);
        }
    }
    // The check has teeth: at ρ = 0.9 the joint rate is far from the
    // independent 1/4.
    let inc = two_tasks_sharing_a_type(0.9);
    let sim = simulate(
        &inc,
        &inc.placement,
        SimulationOptions {
            trials: TRIALS,
            seed: 5,
        },
    );
    let (lo, _) = wilson_interval(sim.all_successes, TRIALS, Z);
    assert!(lo > 0.25);
}

#[test]
fn runs_repeat_with_the_seed() {
    let inc = two_tasks_sharing_a_type(0.5);
    let opts = SimulationOptions {
        trials: 2_000,
        seed: 42,
    };
    let a = simulate(&inc, &inc.placement, opts);
    let b = simulate(&inc, &inc.placement, opts);
    assert_eq!(a, b);
    let c = simulate(&inc, &inc.placement, SimulationOptions { seed: 43, ..opts });
    assert_ne!(a.tasks, c.tasks);
}

/// Every task with model odds in [0.01, 0.99] must have the model inside the
/// z ≈ 4 Wilson interval of its simulated rate. Returns how many tasks were
/// checked.
fn model_agrees_with_simulation(inc: &Incident, placement: &Placement, seed: u64) -> usize {
    let sim = simulate(
        inc,
        placement,
        SimulationOptions {
            trials: TRIALS,
            seed,
        },
    );
    let mut checked = 0;
    for t in &sim.tasks {
        if !(0.01..=0.99).contains(&t.model_odds) {
            continue;
        }
        let (lo, hi) = wilson_interval(t.successes, t.trials, Z);
        assert!(
            lo <= t.model_odds && t.model_odds <= hi,
            "{}: task {}: model {} outside [{lo}, {hi}] (rate {})",
            inc.name,
            inc.tasks[t.task_idx].id,
            t.model_odds,
            t.rate()
        );
        checked += 1;
    }
    checked
}

/// A random incident whose needs sit near what is placed, so that most
/// tasks have odds in the checked band.
fn random_incident(seed: u64) -> Incident {
    let mut rng = StdRng::seed_from_u64(seed);
    let n_traits = rng.random_range(1..4usize);
    let n_types = rng.random_range(1..4usize);
    let n_units = rng.random_range(3..16usize);
    let n_tasks = rng.random_range(1..5usize);
    let unit_types: Vec<UnitType> = (0..n_types)
        .map(|i| UnitType {
            id: format!("type{i}"),
            label: String::new(),
            rho: if rng.random_bool(0.3) {
                0.0
            } else {
                rng.random_range(0.0..1.0)
            },
            ratings: (0..n_traits)
                .map(|_| Rating {
                    mean: rng.random_range(0.0..100.0),
                    sd: if rng.random_bool(0.2) {
                        0.0
                    } else {
                        rng.random_range(1.0..40.0)
                    },
                })
                .collect(),
            cost: None,
        })
        .collect();
    let units: Vec<Unit> = (0..n_units)
        .map(|i| {
            let t = rng.random_range(0..n_types);
            Unit {
                id: format!("U{i}"),
                type_idx: t,
                ratings: unit_types[t].ratings.clone(),
                status: UnitStatus::Available,
            }
        })
        .collect();
    let placement = Placement(
        (0..n_units)
            .map(|_| {
                if rng.random_bool(0.15) {
                    None
                } else {
                    Some(oddsboard::model::TaskIdx::new(rng.random_range(0..n_tasks)))
                }
            })
            .collect(),
    );
    let tasks = (0..n_tasks)
        .map(|j| {
            let placed: Vec<&Unit> = placement
                .units_on(oddsboard::model::TaskIdx::new(j))
                .map(|u| &units[u])
                .collect::<Vec<_>>();
            let needs = (0..n_traits)
                .map(|k| {
                    let mean: f64 = placed.iter().map(|u| u.ratings[k].mean).sum();
                    if rng.random_bool(0.2) {
                        return Need::default();
                    }
                    Need {
                        need: (mean * rng.random_range(0.7..1.2)).max(1.0),
                        sd: if rng.random_bool(0.3) {
                            rng.random_range(1.0..20.0)
                        } else {
                            0.0
                        },
                    }
                })
                .collect();
            Task {
                id: format!("T{j}"),
                label: String::new(),
                tier: Tier::Property,
                needs,
                accepts: None,
                min_units: None,
                max_units: None,
                outcome: None,
            }
        })
        .collect();
    Incident {
        name: format!("Invented random incident {seed}"),
        started: None,
        reserve_min: 0,
        secure: SecureLevels::default(),
        traits: (0..n_traits)
            .map(|k| TraitDef {
                id: format!("k{k}"),
                label: String::new(),
                unit: "u".into(),
                measurement_sd: None,
            })
            .collect(),
        unit_types,
        units,
        tasks,
        placement,
        pins: Default::default(),
        observations: Default::default(),
    }
}

#[test]
fn model_matches_simulation_on_random_incidents() {
    let mut checked = 0;
    for seed in 0..12 {
        let inc = random_incident(seed);
        checked += model_agrees_with_simulation(&inc, &inc.placement, 1000 + seed);
    }
    // The check must actually check something.
    eprintln!("{checked} tasks checked");
    assert!(checked >= 10, "only {checked} tasks in the band");
}

/// Built-in scenarios, checked beside whatever the sample folder holds
/// (all invented).
const BUILT_IN: [&str; 3] = [GRAIN_STORE, RIVER_FLOOD, COLLAPSE];

const GRAIN_STORE: &str = r#"
incident: { name: Invented grain store fire }
traits:
  - { id: water, label: Water delivery, unit: L/min }
  - { id: crew, label: Firefighters, unit: persons }
unit_types:
  - { id: engine, rho: 0.25, traits: { water: { mean: 1900, sd: 300 }, crew: { mean: 4, sd: 0.5 } } }
  - { id: tender, traits: { water: { mean: 1200, sd: 350 }, crew: { mean: 2 } } }
units:
  - { id: E1, type: engine }
  - { id: E2, type: engine }
  - { id: E3, type: engine }
  - { id: W1, type: tender }
  - { id: W2, type: tender, traits: { water: { mean: 900 } } }
tasks:
  - { id: ATTACK, tier: life, needs: { water: 3500, crew: { need: 7, sd: 1 } } }
  - { id: EXPOSURE, tier: property, needs: { water: { need: 2400, sd: 300 } } }
placement: { E1: ATTACK, E2: ATTACK, E3: EXPOSURE, W1: EXPOSURE, W2: ATTACK }
"#;

const RIVER_FLOOD: &str = r#"
incident: { name: Invented river flood }
traits:
  - { id: pumping, label: Pumping, unit: m3/h }
  - { id: boats, label: Rescue boat capacity, unit: persons/h }
unit_types:
  - { id: hvp, label: High-volume pump, rho: 0.5, traits: { pumping: { mean: 400, sd: 90 } } }
  - { id: boat, label: Rescue boat team, rho: 0.35, traits: { boats: { mean: 12, sd: 4 } } }
units:
  - { id: P1, type: hvp }
  - { id: P2, type: hvp }
  - { id: P3, type: hvp }
  - { id: B1, type: boat }
  - { id: B2, type: boat }
  - { id: B3, type: boat }
tasks:
  - { id: EVAC, tier: life, needs: { boats: { need: 30, sd: 6 } } }
  - { id: SUBSTATION, tier: stabilization, needs: { pumping: 1150 } }
placement: { P1: SUBSTATION, P2: SUBSTATION, P3: SUBSTATION, B1: EVAC, B2: EVAC, B3: EVAC }
"#;

const COLLAPSE: &str = r#"
incident: { name: Invented building collapse }
traits:
  - { id: search, label: Search rate, unit: m2/h }
  - { id: lift, label: Lift capacity, unit: t }
unit_types:
  - { id: dog, label: Search dog team, traits: { search: { mean: 600, sd: 200 } } }
  - { id: usar, label: Heavy rescue squad, rho: 0.2, traits: { lift: { mean: 8, sd: 2.5 }, search: { mean: 150, sd: 60 } } }
  - { id: crane, label: Mobile crane, traits: { lift: { mean: 25, sd: 3 } } }
units:
  - { id: K1, type: dog }
  - { id: K2, type: dog }
  - { id: R1, type: usar }
  - { id: R2, type: usar }
  - { id: C1, type: crane }
tasks:
  - { id: VOIDS, tier: life, needs: { search: { need: 1300, sd: 250 } } }
  - { id: SLAB, tier: life, needs: { lift: { need: 38, sd: 4 }, search: 100 } }
placement: { K1: VOIDS, K2: VOIDS, R1: SLAB, R2: SLAB, C1: SLAB }
"#;

#[test]
fn model_matches_simulation_on_sample_incidents() {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("sample-incidents");
    let mut incidents: Vec<Incident> = BUILT_IN
        .iter()
        .map(|y| parse_incident_str(y, "built-in.yaml").expect("valid"))
        .collect();
    if let Ok(entries) = std::fs::read_dir(&dir) {
        let mut paths: Vec<_> = entries
            .filter_map(|e| e.ok().map(|e| e.path()))
            .filter(|p| p.extension().is_some_and(|e| e == "yaml" || e == "yml"))
            .collect();
        paths.sort();
        for p in paths {
            let inc = oddsboard::model::load_incident_file(&p)
                .unwrap_or_else(|e| panic!("sample {} must load: {e}", p.display()));
            incidents.push(inc);
        }
    }
    let mut checked = 0;
    for (i, inc) in incidents.iter().enumerate() {
        checked += model_agrees_with_simulation(inc, &inc.placement, 77 + i as u64);
    }
    assert!(checked >= 5, "only {checked} tasks in the band");
}
