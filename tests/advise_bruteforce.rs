//! Advice checked against brute force on small, invented incidents: every
//! feasible placement is enumerated here (not by the solver) and ranked by
//! the objective key, so the optimum is known independently of the search.

use oddsboard::advise::fragility::{task_absorbs, unit_losses};
use oddsboard::advise::requests::{tier_requests, with_extra_units};
use oddsboard::advise::{AdviseOptions, RequestOutcome, TierRequest};
use oddsboard::model::{Incident, Placement, Tier, UnitStatus, parse_incident_str};
use oddsboard::odds::tallies;
use oddsboard::solver::{ObjectiveKey, SolveOptions, solve};
use std::sync::atomic::AtomicBool;
use std::time::Duration;

/// Every placement meeting the constraints (status, open task, accepts,
/// max_units, pins, reserve minimum), by plain enumeration.
fn all_placements(inc: &Incident) -> Vec<Placement> {
    let n = inc.units.len();
    let t = inc.tasks.len();
    let mut out = Vec::new();
    let mut choice = vec![0usize; n]; // 0 = reserve, i + 1 = task i
    loop {
        let p = Placement(
            choice
                .iter()
                .map(|&c| {
                    if c == 0 {
                        None
                    } else {
                        Some(oddsboard::model::TaskIdx::new(c - 1))
                    }
                })
                .collect(),
        );
        if feasible(inc, &p) {
            out.push(p);
        }
        let mut i = 0;
        loop {
            if i == n {
                return out;
            }
            choice[i] += 1;
            if choice[i] <= t {
                break;
            }
            choice[i] = 0;
            i += 1;
        }
    }
}

fn feasible(inc: &Incident, p: &Placement) -> bool {
    for (u, unit) in inc.units.iter().enumerate() {
        let u = oddsboard::model::UnitIdx::new(u);
        if let Some(t) = p.get(u)
            && !inc.may_place(u, t)
        {
            return false;
        }
        if let Some(&pin) = inc.pins.get(&u)
            && p.get(u) != Some(pin)
        {
            return false;
        }
        let _ = unit;
    }
    for (t, task) in inc.tasks.iter().enumerate() {
        let t = oddsboard::model::TaskIdx::new(t);
        if let Some(m) = task.max_units
            && p.units_on(t).count() as u32 > m
        {
            return false;
        }
    }
    let reserve = oddsboard::model::UnitIdx::range(inc.units.len())
        .filter(|&u| inc.units[u].status == UnitStatus::Available && p.get(u).is_none())
        .count() as u32;
    reserve >= inc.reserve_min
}

/// The best key over every feasible placement, with a placement reaching it.
fn brute_best(inc: &Incident) -> (ObjectiveKey, Placement) {
    let mut best: Option<(ObjectiveKey, Placement)> = None;
    for p in all_placements(inc) {
        let k = ObjectiveKey::of(inc, &p);
        if best.as_ref().is_none_or(|(bk, _)| k.better_than(bk)) {
            best = Some((k, p));
        }
    }
    best.expect("at least the all-reserve plan is feasible")
}

fn capped(inc: &Incident, key: &ObjectiveKey) -> [Option<f64>; 3] {
    let w = key.worst_odds_per_tier();
    let mut out = [None; 3];
    for tier in Tier::ALL {
        out[tier.index()] = w[tier.index()].map(|p| p.min(inc.secure.get(tier)));
    }
    out
}

/// The re-plan's worst capped odds per tier by enumeration under the rule
/// with slack 0 (docs/solver.md): thresholds entry by entry over the capped
/// key are then the leximin-best capped key over every feasible plan.
fn sequential_worst(inc: &Incident) -> [Option<f64>; 3] {
    let capped_cmp = |a: &ObjectiveKey, b: &ObjectiveKey| {
        a.capped()
            .iter()
            .zip(b.capped())
            .map(|(x, y)| oddsboard::solver::key::cmp_ln(*x, *y))
            .find(|o| *o != std::cmp::Ordering::Equal)
            .unwrap_or(std::cmp::Ordering::Equal)
    };
    all_placements(inc)
        .iter()
        .map(|p| ObjectiveKey::of(inc, p))
        .reduce(|a, b| {
            if capped_cmp(&b, &a) == std::cmp::Ordering::Greater {
                b
            } else {
                a
            }
        })
        .map_or([None; 3], |k| capped(inc, &k))
}

fn close(a: f64, b: f64) -> bool {
    (a - b).abs() <= 1e-9 * a.abs().max(b.abs()).max(1e-300)
}

fn tier_secure_by_key(inc: &Incident, key: &ObjectiveKey, tier: Tier) -> bool {
    key.worst_odds_per_tier()[tier.index()]
        .is_none_or(|p| oddsboard::advise::reaches(p, inc.secure.get(tier)))
}

fn exact_options() -> AdviseOptions {
    AdviseOptions {
        // Small incidents: the exact search proves every re-plan.
        per_loss_budget: Duration::from_secs(5),
        baseline_budget: Duration::from_secs(5),
        per_request_budget: Duration::from_secs(5),
        request_time_limit: Duration::from_secs(60),
        slack: 0.0,
        ..AdviseOptions::default()
    }
}

/// Invented: two life tasks and a stabilization task, two engine types with
/// correlation, one task accepting only one type, a reserve unit.
const SMALL: &str = r#"
incident: { name: Invented brute-force drill }
traits:
  - { id: water, unit: L/min }
  - { id: crew, unit: persons }
unit_types:
  - { id: pumper, rho: 0.3, traits: { water: { mean: 1800, sd: 300 }, crew: { mean: 4, sd: 0.5 } } }
  - { id: tender, traits: { water: { mean: 1100, sd: 500 }, crew: { mean: 2 } } }
units:
  - { id: P1, type: pumper }
  - { id: P2, type: pumper }
  - { id: P3, type: pumper, traits: { water: { mean: 1500 } } }
  - { id: W1, type: tender }
  - { id: W2, type: tender }
tasks:
  - { id: RESCUE, tier: life, needs: { water: 2400, crew: 5 } }
  - { id: EXPOSURE, tier: life, needs: { water: 1000 }, accepts: [tender] }
  - { id: CUTOFF, tier: stabilization, needs: { water: { need: 1500, sd: 200 } } }
placement: { P1: RESCUE, P2: RESCUE, W1: EXPOSURE, P3: CUTOFF }
"#;

#[test]
fn fragility_equals_the_brute_force_optimum_after_each_loss() {
    let inc = parse_incident_str(SMALL, "small.yaml").expect("valid");
    let opts = exact_options();
    let cancel = AtomicBool::new(false);
    let base = solve(
        &inc,
        &SolveOptions {
            budget: Duration::from_secs(5),
            slack: 0.0,
            ..SolveOptions::default()
        },
        &cancel,
        &mut |_| {},
    )
    .expect("solves");
    let losses = unit_losses(&inc, &base, &opts, &cancel).expect("advice");
    assert_eq!(losses.len(), 4, "one entry per placed unit");
    let mut previous: Option<f64> = None;
    for loss in &losses {
        let u = inc.unit_idx(&loss.unit).expect("known unit");
        let mut lost = inc.clone();
        lost.remove_unit(u);
        let want = sequential_worst(&lost);
        assert!(
            loss.proven_optimal,
            "{}: small re-plans are proven",
            loss.unit
        );
        for t in &loss.after {
            let tier = Tier::parse(t.tier).expect("tier");
            let got = t.odds.min(inc.secure.get(tier));
            let w = want[tier.index()].expect("tier has tasks");
            assert!(
                close(got, w),
                "{} lost, tier {}: advice {got}, brute force {w}",
                loss.unit,
                t.tier
            );
        }
        // Ranked worst first: the key's first entry is the worst capped
        // life odds, which must not fall along the list.
        let life = want[Tier::Life.index()].expect("life tasks");
        if let Some(p) = previous {
            assert!(
                life >= p || close(life, p),
                "ranking out of order at {}",
                loss.unit
            );
        }
        previous = Some(life);
    }
}

/// The request search for `tier` of `inc`.
fn request(inc: &Incident, tier: Tier, opts: &AdviseOptions) -> Option<TierRequest> {
    let cancel = AtomicBool::new(false);
    tier_requests(inc, opts, &cancel)
        .expect("advice")
        .into_iter()
        .find(|r| r.tier == tier.as_str())
}

/// Every multiset of the incident's types (all of them, helpful or not) of
/// exactly `size` units, as counts per type.
fn multisets(n_types: usize, size: usize) -> Vec<Vec<usize>> {
    fn go(ty: usize, left: usize, cur: &mut Vec<usize>, out: &mut Vec<Vec<usize>>) {
        if ty + 1 == cur.len() {
            cur[ty] = left;
            out.push(cur.clone());
            cur[ty] = 0;
            return;
        }
        for take in 0..=left {
            cur[ty] = take;
            go(ty + 1, left - take, cur, out);
        }
        cur[ty] = 0;
    }
    let mut out = Vec::new();
    go(0, size, &mut vec![0; n_types], &mut out);
    out
}

fn counts_of(inc: &Incident, r: &TierRequest, i: usize) -> Vec<usize> {
    let RequestOutcome::Found { sets, .. } = &r.outcome else {
        panic!("expected a request, got {:?}", r.outcome);
    };
    let mut c = vec![0; inc.unit_types.len()];
    for t in &sets[i].units {
        c[inc.type_idx(&t.unit_type).expect("known type")] += t.count;
    }
    c
}

/// Invented: a rescue short of water with one pump on the incident.
const SHORT: &str = r#"
incident: { name: Invented request drill }
traits:
  - { id: water, unit: L/min }
unit_types:
  - { id: pump, label: pump team, traits: { water: { mean: 1900, sd: 200 } } }
  - { id: hv, label: high-volume pump, traits: { water: { mean: 3600, sd: 500 } } }
  - { id: drone, label: drone team, traits: { water: { mean: 0, sd: 0 } } }
units:
  - { id: P1, type: pump }
  - { id: D1, type: drone }
tasks:
  - { id: RESCUE, tier: life, needs: { water: 5200 } }
  - { id: COVER, tier: property, needs: { water: 800 } }
placement: { P1: RESCUE }
"#;

#[test]
fn requested_set_is_sufficient_and_minimal_by_brute_force() {
    let inc = parse_incident_str(SHORT, "short.yaml").expect("valid");
    let opts = exact_options();
    let r = request(&inc, Tier::Life, &opts).expect("life is short");
    let RequestOutcome::Found {
        sets,
        minimal_proven,
    } = &r.outcome
    else {
        panic!("expected a request, got {:?}", r.outcome);
    };
    assert!(*minimal_proven);
    assert!(!sets.is_empty());
    let size = sets[0].total_units;
    for (i, set) in sets.iter().enumerate() {
        // Sufficient: the brute-force optimum with the set secures life.
        let aug = with_extra_units(&inc, &counts_of(&inc, &r, i));
        let (best, _) = brute_best(&aug);
        assert!(tier_secure_by_key(&aug, &best, Tier::Life), "set {i}");
        assert!(set.total_units <= size + 1);
    }
    // Minimal: no smaller set of default-rated units secures life.
    for smaller in 0..size {
        for c in multisets(inc.unit_types.len(), smaller) {
            let aug = with_extra_units(&inc, &c);
            let (best, _) = brute_best(&aug);
            assert!(
                !tier_secure_by_key(&aug, &best, Tier::Life),
                "{c:?} ({smaller} units) already secures life"
            );
        }
    }
}

#[test]
fn with_costs_the_cheapest_sufficient_set_comes_first() {
    // The high-volume pump costs far more than two pump teams.
    let yaml = SHORT.replace(
        "{ id: hv, label: high-volume pump,",
        "{ id: hv, label: high-volume pump, cost: 10,",
    );
    let yaml = yaml
        .replace(
            "{ id: pump, label: pump team,",
            "{ id: pump, label: pump team, cost: 1,",
        )
        .replace(
            "{ id: drone, label: drone team,",
            "{ id: drone, label: drone team, cost: 1,",
        );
    let inc = parse_incident_str(&yaml, "cost.yaml").expect("valid");
    let opts = exact_options();
    let r = request(&inc, Tier::Life, &opts).expect("life is short");
    let first = counts_of(&inc, &r, 0);
    let cost = |c: &[usize]| -> f64 {
        c.iter()
            .enumerate()
            .map(|(ty, &n)| n as f64 * inc.unit_types[ty].cost.unwrap_or(0.0))
            .sum()
    };
    // Brute force over every multiset of up to 4 units: none cheaper works.
    for size in 0..=4 {
        for c in multisets(inc.unit_types.len(), size) {
            if cost(&c) < cost(&first) - 1e-9 {
                let aug = with_extra_units(&inc, &c);
                let (best, _) = brute_best(&aug);
                assert!(
                    !tier_secure_by_key(&aug, &best, Tier::Life),
                    "{c:?} is cheaper than {first:?} and secures life"
                );
            }
        }
    }
}

#[test]
fn a_need_no_type_carries_is_out_of_reach() {
    let yaml = SHORT
        .replace(
            "- { id: RESCUE, tier: life, needs: { water: 5200 } }",
            "- { id: RESCUE, tier: life, needs: { water: 5200 }, accepts: [drone] }",
        )
        .replace("placement: { P1: RESCUE }", "placement: { P1: COVER }");
    let inc = parse_incident_str(&yaml, "reach.yaml").expect("valid");
    let r = request(&inc, Tier::Life, &exact_options()).expect("life is short");
    match &r.outcome {
        RequestOutcome::OutOfReach { tasks } => {
            assert_eq!(tasks[0].task, "RESCUE");
            assert!(tasks[0].reason.contains("no unit type it accepts"));
        }
        other => panic!("expected out of reach, got {other:?}"),
    }
}

#[test]
fn a_max_units_cap_is_out_of_reach() {
    // Two high-volume pumps at most: 7200 mean against 9000.
    let yaml = SHORT.replace(
        "- { id: RESCUE, tier: life, needs: { water: 5200 } }",
        "- { id: RESCUE, tier: life, needs: { water: 9000 }, max_units: 2 }",
    );
    let inc = parse_incident_str(&yaml, "cap.yaml").expect("valid");
    let r = request(&inc, Tier::Life, &exact_options()).expect("life is short");
    match &r.outcome {
        RequestOutcome::OutOfReach { tasks } => {
            assert!(
                tasks[0].reason.contains("max_units 2"),
                "{}",
                tasks[0].reason
            );
        }
        other => panic!("expected out of reach, got {other:?}"),
    }
}

#[test]
fn a_need_beyond_the_bound_is_not_an_absurd_request() {
    // 60 000 L/min: more than 8 of the strongest type (8 × 3600 + 1900).
    let yaml = SHORT.replace("water: 5200", "water: 60000");
    let inc = parse_incident_str(&yaml, "far.yaml").expect("valid");
    let r = request(&inc, Tier::Life, &exact_options()).expect("life is short");
    match &r.outcome {
        RequestOutcome::NotWithin {
            max_extra_units,
            proven,
            ..
        } => {
            assert_eq!(*max_extra_units, 8);
            assert!(*proven, "the screen rules every set out");
        }
        other => panic!("expected nothing within 8 units, got {other:?}"),
    }
}

/// Invented: three identical engines on a rescue needing 2800 L/min.
/// Φ((3800 − 2800)/(250·√2)) = Φ(2.828) = 0.99766 ≥ 0.99 with two engines
/// (Abramowitz & Stegun Table 26.1: Φ(2.8) = 0.99744, Φ(2.85) = 0.99781);
/// one engine (1900 < 2800) is on the gamble side.
const ABSORB: &str = r#"
incident: { name: Invented absorb drill }
traits: [ { id: water, unit: L/min } ]
unit_types: [ { id: engine, traits: { water: { mean: 1900, sd: 250 } } } ]
units: [ { id: E1, type: engine }, { id: E2, type: engine }, { id: E3, type: engine } ]
tasks: [ { id: RESCUE, tier: life, needs: { water: 2800 } } ]
placement: { E1: RESCUE, E2: RESCUE, E3: RESCUE }
"#;

#[test]
fn absorbed_losses_follow_the_closed_form() {
    let cancel = AtomicBool::new(false);
    let opts = exact_options();
    for (yaml, want) in [
        (ABSORB.to_string(), 1),
        // A fourth engine in reserve takes the place of one lost.
        (
            ABSORB.replace(
                "{ id: E3, type: engine } ]",
                "{ id: E3, type: engine }, { id: E4, type: engine } ]",
            ),
            2,
        ),
    ] {
        let inc = parse_incident_str(&yaml, "absorb.yaml").expect("valid");
        let base = solve(
            &inc,
            &SolveOptions {
                slack: 0.0,
                ..SolveOptions::default()
            },
            &cancel,
            &mut |_| {},
        )
        .expect("solves");
        let a = task_absorbs(&inc, &base, &opts, &cancel).expect("advice");
        assert_eq!(a[0].absorbs, Some(want), "{yaml}");
        assert_eq!(a[0].sequence.len(), want as usize + 1);
        // Check the closed form the expectation rests on.
        let two = Placement(vec![
            Some(oddsboard::model::TaskIdx::new(0)),
            Some(oddsboard::model::TaskIdx::new(0)),
            None,
        ]);
        let ln = tallies(&inc, &two)[0].ln_odds(&inc.tasks[0]);
        if inc.units.len() == 3 {
            assert!((ln.exp() - 0.99766).abs() < 2e-5, "{}", ln.exp());
        }
    }
}
