//! The bound the search reports while it goes (`Progress::bound`): valid
//! against brute force on small incidents (every plan enumerated), told once
//! the first descent is done, and not computed on budgets under a second.

use std::sync::atomic::AtomicBool;
use std::time::Duration;

use oddsboard::model::{Incident, Placement, Tier};
use oddsboard::solver::relax::TierBound;
use oddsboard::solver::{SolveOptions, solve};

mod small_incidents;
use small_incidents::{all_plans, key_of, small_incident};

/// The best worst odds of `tier` over every plan keeping each tier above at
/// least at `reference`'s worst, capped at the tier's secure level (the
/// question the bound answers).
fn brute_force_tier(inc: &Incident, reference: &Placement, tier: Tier) -> f64 {
    let r = key_of(inc, reference).worst_odds_per_tier();
    let mut best = 0.0f64;
    for p in all_plans(inc) {
        let w = key_of(inc, &p).worst_odds_per_tier();
        let kept = Tier::ALL.iter().take(tier.index()).all(|above| {
            match (r[above.index()], w[above.index()]) {
                (Some(r), Some(w)) => w >= r.min(inc.secure.get(*above)) * (1.0 - 1e-12),
                _ => true,
            }
        });
        if kept && let Some(w) = w[tier.index()] {
            best = best.max(w);
        }
    }
    best
}

/// The first report that carries a bound, with the plan reported beside it
/// (the plan it was computed against), and the number of reports.
fn first_bound(
    inc: &Incident,
    budget: Duration,
    seed: u64,
) -> (Option<(TierBound, Placement)>, usize) {
    let options = SolveOptions {
        budget,
        seed,
        from_scratch: true,
        threads: 1,
        // The heuristic path (the exact search would prove these at once).
        exact_max_units: 0,
        ..SolveOptions::default()
    };
    let cancel = AtomicBool::new(false);
    let mut found = None;
    let mut reports = 0;
    solve(inc, &options, &cancel, &mut |p| {
        reports += 1;
        if found.is_none()
            && let Some(b) = p.bound
        {
            found = Some((b.clone(), p.placement.clone()));
        }
    })
    .expect("solves");
    (found, reports)
}

#[test]
fn the_search_bound_covers_brute_force() {
    let mut told = 0;
    for seed in 0..40u64 {
        let Some(inc) = small_incident(seed) else {
            continue;
        };
        let (found, _) = first_bound(&inc, Duration::from_secs(1), seed);
        let Some((b, reference)) = found else {
            continue;
        };
        // Told only for a tier short of its secure level under its plan.
        assert!(b.worst_odds < inc.secure.get(b.tier), "seed {seed}: {b:?}");
        let Some(u) = b.upper_bound else { continue };
        told += 1;
        let truth = brute_force_tier(&inc, &reference, b.tier);
        assert!(
            u >= truth * (1.0 - 1e-9) - 1e-12,
            "seed {seed}: {} bound {u} below the brute-force best {truth}",
            b.tier.as_str()
        );
    }
    // The check above must have had something to check.
    assert!(told >= 5, "a bound was told on only {told} of 40 incidents");
}

#[test]
fn no_search_bound_on_a_short_budget() {
    let mut reports = 0;
    for seed in 0..10u64 {
        let Some(inc) = small_incident(seed) else {
            continue;
        };
        let (found, n) = first_bound(&inc, Duration::from_millis(900), seed);
        assert!(found.is_none(), "seed {seed}: a bound on a 0.9 s budget");
        reports += n;
    }
    assert!(reports > 0);
}

/// A long first descent reports better plans while it goes (every 250 ms),
/// not only when it ends: at least two better plans are reported between
/// the first plan and the first report with the bound, and every better
/// plan reported beats the one before it.
#[test]
fn a_long_descent_reports_while_it_goes() {
    use oddsboard::model::generate::{GenerateSpec, generate};
    use oddsboard::solver::ObjectiveKey;
    let inc = generate(&GenerateSpec::new(300, 40, 5).seed(1)).expect("generated incident loads");
    let options = SolveOptions {
        budget: Duration::from_secs(3),
        from_scratch: true,
        threads: 1,
        ..SolveOptions::default()
    };
    let cancel = AtomicBool::new(false);
    let mut keys: Vec<ObjectiveKey> = Vec::new();
    let mut before_bound = 0;
    let mut descent_end = Duration::ZERO;
    let mut bound_seen = false;
    solve(&inc, &options, &cancel, &mut |p| {
        bound_seen |= p.bound.is_some();
        if p.improved {
            if !bound_seen && p.iterations > 0 {
                before_bound += 1;
                descent_end = p.elapsed;
            }
            keys.push(p.key.clone());
        }
    })
    .expect("solves");
    // The descent takes about 2 s in a debug build here; a machine fast
    // enough to end it within two report periods has nothing to report.
    if descent_end >= Duration::from_millis(600) {
        assert!(
            before_bound >= 2,
            "{before_bound} better plans reported during a first descent of {descent_end:?}"
        );
    }
    for w in keys.windows(2) {
        assert!(
            w[1].better_than(&w[0]),
            "a reported plan no better than the one before"
        );
    }
}
