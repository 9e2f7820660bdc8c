//! The large-neighbourhood search (issue 11): the same seed gives the same
//! plan, whatever the thread count; more work never gives a worse search key; the
//! parallel search stops when the cancel flag is raised. Work is bounded by
//! epochs (`max_epochs`), never by the clock, so nothing here depends on the
//! machine's speed. Incidents are the seeded, invented generator's.

use oddsboard::model::generate::{GenerateSpec, generate};
use oddsboard::model::{Incident, Placement};
use oddsboard::solver::{ObjectiveKey, SolveOptions, SolveReport, StopReason, solve};
use std::sync::Arc;
use std::sync::atomic::{AtomicBool, Ordering};
use std::time::Duration;

fn incident(units: usize, tasks: usize, traits: usize, seed: u64) -> Incident {
    generate(&GenerateSpec::new(units, tasks, traits).seed(seed)).expect("generated incident loads")
}

/// From scratch, heuristic path, a budget the work limit always ends first.
fn by_epochs(seed: u64, threads: usize, epochs: u64) -> SolveOptions {
    SolveOptions {
        budget: Duration::from_secs(3600),
        seed,
        from_scratch: true,
        exact_max_units: 0,
        stale_rounds: u64::MAX,
        threads,
        max_epochs: epochs,
        ..SolveOptions::default()
    }
}

/// The report and the search's own best key (the last improving progress
/// report, before the rule picks among acceptable plans).
fn run(inc: &Incident, opts: &SolveOptions) -> (SolveReport, ObjectiveKey) {
    let mut last: Option<ObjectiveKey> = None;
    let r = solve(inc, opts, &AtomicBool::new(false), &mut |p| {
        if p.improved {
            last = Some(p.key.clone());
        }
    })
    .expect("feasible");
    let key = last.expect("at least the first plan is reported");
    (r, key)
}

fn rows(p: &Placement) -> Vec<Option<u32>> {
    p.0.iter().map(|t| t.map(|t| t.index() as u32)).collect()
}

#[test]
fn same_seed_and_threads_same_plan() {
    let inc = incident(100, 15, 4, 3);
    for threads in [1, 2, 3] {
        let (a, ka) = run(&inc, &by_epochs(5, threads, 6));
        let (b, kb) = run(&inc, &by_epochs(5, threads, 6));
        assert_eq!(rows(&a.placement), rows(&b.placement), "{threads} threads");
        assert_eq!(ka.entries(), kb.entries());
        assert_eq!(a.iterations, b.iterations, "same work, {threads} threads");
        assert_ne!(a.stop, StopReason::Cancelled);
    }
}

/// The speculative LNS commits the same steps whatever the thread count:
/// one, two and three threads give the same plan and the same work, on a
/// small and a mid-size incident, with the search ended by epochs and by
/// its stale rule.
#[test]
fn thread_count_does_not_change_the_plan() {
    for (u, t, k, seed, stale) in [(100, 15, 4, 3, u64::MAX), (300, 40, 5, 1, 32)] {
        let inc = incident(u, t, k, seed);
        let opts = |threads| SolveOptions {
            stale_rounds: stale,
            ..by_epochs(9, threads, 8)
        };
        let (one, k1) = run(&inc, &opts(1));
        for threads in [2, 3] {
            let (r, kr) = run(&inc, &opts(threads));
            assert_eq!(
                rows(&one.placement),
                rows(&r.placement),
                "{u}x{t}x{k}: {threads} threads"
            );
            assert_eq!(k1.entries(), kr.entries(), "{u}x{t}x{k}: {threads} threads");
            assert_eq!(
                one.iterations, r.iterations,
                "{u}x{t}x{k}: {threads} threads"
            );
        }
    }
}

#[test]
fn more_epochs_never_worse() {
    for (u, t, k, seed) in [(100, 15, 4, 1), (200, 20, 5, 2)] {
        let inc = incident(u, t, k, seed);
        for threads in [1, 2] {
            let mut prev: Option<ObjectiveKey> = None;
            for epochs in [0, 1, 3, 6, 9] {
                let (_, key) = run(&inc, &by_epochs(7, threads, epochs));
                if let Some(p) = &prev {
                    assert!(
                        !p.better_than(&key),
                        "{u}x{t}x{k}, {threads} threads: {epochs} epochs worse than fewer"
                    );
                }
                prev = Some(key);
            }
        }
    }
}

#[test]
fn parallel_search_stops_on_cancel() {
    let inc = incident(600, 40, 5, 1);
    let cancel = Arc::new(AtomicBool::new(false));
    let flag = cancel.clone();
    let opts = SolveOptions {
        budget: Duration::from_secs(3600),
        from_scratch: true,
        stale_rounds: u64::MAX,
        threads: 2,
        ..SolveOptions::default()
    };
    let mut reports = 0;
    let r = solve(&inc, &opts, &cancel, &mut |_| {
        // Raised at the second report (the first is the greedy plan): the
        // search is under way and must then end instead of running to its
        // hour.
        reports += 1;
        if reports == 2 {
            flag.store(true, Ordering::Relaxed);
        }
    })
    .expect("feasible");
    assert!(reports >= 2, "the search reported progress");
    assert_eq!(r.stop, StopReason::Cancelled);
    // The plan returned is whole: every unit has a place or reserve, and
    // the rule's report is consistent with it.
    assert_eq!(r.placement.len(), inc.units.len());
    assert_eq!(
        r.key.entries(),
        ObjectiveKey::of(&inc, &r.placement).entries()
    );
}

/// Workers finishing in any order give the same plan: the same solve is
/// repeated with and without busy threads competing for the cores (which
/// reorders when each worker runs and finishes). Committing results in the
/// order they finished, or using a step run ahead from a plan that a
/// committed step then changed, would differ between the runs.
#[test]
fn workers_finishing_in_any_order_same_plan() {
    let inc = incident(120, 15, 4, 4);
    for threads in [2, 3] {
        let opts = by_epochs(11, threads, 6);
        let (first, key) = run(&inc, &opts);
        for round in 0..3 {
            let stop = Arc::new(AtomicBool::new(false));
            // Rounds 1 and 2 run beside 2 and 4 spinning threads.
            let spinners: Vec<_> = (0..2 * round)
                .map(|_| {
                    let stop = stop.clone();
                    std::thread::spawn(move || {
                        let mut x = 0u64;
                        while !stop.load(Ordering::Relaxed) {
                            x = std::hint::black_box(x.wrapping_mul(31).wrapping_add(7));
                        }
                    })
                })
                .collect();
            let (again, k) = run(&inc, &opts);
            stop.store(true, Ordering::Relaxed);
            for s in spinners {
                s.join().expect("spinner ends");
            }
            assert_eq!(
                rows(&first.placement),
                rows(&again.placement),
                "{threads} threads, round {round}"
            );
            assert_eq!(
                key.entries(),
                k.entries(),
                "{threads} threads, round {round}"
            );
            assert_eq!(first.iterations, again.iterations);
        }
    }
}

/// The LNS itself, one thread against two and three, from the same start:
/// the same best plan, key, work and committed steps, and some steps did
/// change the plan (so the two-thread run had steps run ahead from a plan
/// that then changed, which it must have stopped and run again).
#[test]
fn lns_commits_the_same_steps_on_any_thread_count() {
    use oddsboard::model::Placement;
    use oddsboard::solver::Budget;
    use oddsboard::solver::lns::{LnsLimits, lns};
    use oddsboard::solver::search::{Ctx, State, greedy_fill};
    let inc = incident(300, 40, 5, 1);
    let ctx = Ctx::new(&inc);
    let mut start = State::new(&ctx, &Placement::all_reserve(inc.units.len()));
    greedy_fill(&ctx, &mut start, None);
    let never = AtomicBool::new(false);
    let budget = Budget::new(Duration::from_secs(3600), &never);
    let run = |threads| {
        let limits = LnsLimits {
            threads,
            stale_epochs: u64::MAX,
            max_epochs: 7,
        };
        lns(
            &ctx,
            start.clone(),
            4,
            &limits,
            &budget,
            &mut |_, _, _, _| {},
        )
    };
    let one = run(1);
    assert!(one.changed > 0, "some step changed the plan");
    assert!(one.best_key.better_than(&start.key(&ctx)));
    for threads in [2, 3] {
        let r = run(threads);
        assert_eq!(one.best.place, r.best.place, "{threads} threads");
        assert_eq!(one.best_key.entries(), r.best_key.entries());
        assert_eq!(
            (one.iterations, one.steps, one.changed, one.epochs),
            (r.iterations, r.steps, r.changed, r.epochs),
            "{threads} threads"
        );
        assert!(!r.stopped_by_budget);
    }
}
