//! The re-plan after a loss (issue 11): a cancelled re-plan still returns a
//! whole plan that gives up nothing beyond the slack compared with the
//! ground; the settled heuristic re-plan against the proven one (exact
//! search) on small incidents. All incidents are invented (seeded
//! generator). No timings here: they are in benches/solver.rs (`replan`,
//! `cancel`) and docs/performance.md.

use oddsboard::model::generate::{GenerateSpec, generate};
use oddsboard::model::{Incident, Placement, TaskIdx, UnitIdx, UnitStatus};
use oddsboard::solver::stable::{Verdict, disruption, verdict};
use oddsboard::solver::{ObjectiveKey, SolveOptions, SolveReport, StopReason, solve};
use std::sync::atomic::{AtomicBool, Ordering};
use std::time::Duration;

mod small_incidents;
use small_incidents::{brute_thresholds, meets};

/// A generated incident with a solved plan on the ground (a fixed amount of
/// search: the same ground on every machine), then the placed unit with the
/// most mean capability lost.
fn after_loss(units: usize, tasks: usize, traits: usize, seed: u64) -> Incident {
    let mut inc = generate(&GenerateSpec::new(units, tasks, traits).seed(seed)).expect("loads");
    let ground = solve(
        &inc,
        &SolveOptions {
            budget: Duration::from_secs(600),
            from_scratch: true,
            max_epochs: 8,
            ..SolveOptions::default()
        },
        &AtomicBool::new(false),
        &mut |_| {},
    )
    .expect("feasible");
    assert_ne!(
        ground.stop,
        StopReason::BudgetExhausted,
        "the ground settled"
    );
    inc.placement = ground.placement;
    let capability = |u: UnitIdx| inc.units[u].ratings.iter().map(|r| r.mean).sum::<f64>();
    let lost = UnitIdx::range(inc.units.len())
        .filter(|&u| inc.placement.get(u).is_some() && !inc.pins.contains_key(&u))
        .max_by(|&a, &b| capability(a).total_cmp(&capability(b)))
        .expect("a placed unit");
    inc.remove_unit(lost);
    inc
}

/// The plan keeps every constraint, and the report's moves and disruption
/// are those of the plan against the ground.
fn check_whole(inc: &Incident, r: &SolveReport) {
    let p: &Placement = &r.placement;
    assert_eq!(p.len(), inc.units.len());
    for u in UnitIdx::range(inc.units.len()) {
        if let Some(t) = p.get(u) {
            assert!(inc.may_place(u, t), "unit {u} may not go to {t}");
        }
    }
    for (t, task) in inc.tasks.iter().enumerate() {
        if let Some(m) = task.max_units {
            assert!(
                p.units_on(TaskIdx::new(t)).count() as u32 <= m,
                "task {t} over its maximum"
            );
        }
    }
    let reserve = UnitIdx::range(inc.units.len())
        .filter(|&u| inc.units[u].status == UnitStatus::Available && p.get(u).is_none())
        .count();
    assert!(reserve >= inc.reserve_min as usize, "reserve kept");
    assert_eq!(r.moves.len(), inc.placement.moves_from(p));
    assert_eq!(r.disruption, disruption(inc, &inc.placement, p));
    assert_eq!(
        r.key.compare(&ObjectiveKey::of(inc, p)),
        std::cmp::Ordering::Equal
    );
}

/// Raised before the solve, or at the first or second progress report (the
/// first is the greedy plan; later ones come from the search), on two
/// threads with an hour's budget that never settles on its own: the solve
/// must end on the flag with a whole plan, and compared with the ground it
/// gives up no entry beyond the slack (the rule's promise, SPEC §3).
#[test]
fn a_cancelled_replan_keeps_a_whole_plan_within_the_slack_of_the_ground() {
    let inc = after_loss(100, 15, 4, 3);
    let ground_key = ObjectiveKey::of(&inc, &inc.placement);
    let opts = SolveOptions {
        budget: Duration::from_secs(3600),
        stale_rounds: u64::MAX,
        exact_max_units: 0,
        threads: 2,
        ..SolveOptions::default()
    };
    for raise_at in [0usize, 1, 2] {
        let cancel = AtomicBool::new(raise_at == 0);
        let mut reports = 0;
        let r = solve(&inc, &opts, &cancel, &mut |_| {
            reports += 1;
            if reports == raise_at {
                cancel.store(true, Ordering::Relaxed);
            }
        })
        .expect("feasible");
        assert_eq!(r.stop, StopReason::Cancelled, "raised at report {raise_at}");
        check_whole(&inc, &r);
        let v = verdict(&ground_key, &r.key, opts.slack);
        assert!(
            !matches!(v, Verdict::Worse { .. }),
            "raised at report {raise_at}: {v:?}"
        );
        if raise_at == 0 {
            // Nothing was searched: the ground itself (already acceptable
            // against the only plan found, itself) with no move.
            assert!(r.moves.is_empty(), "{:?}", r.moves);
        }
    }
}

/// The settled heuristic re-plan (no exact search) against the proven one
/// (branch and bound over every plan: thresholds and least disruption
/// exact) on small incidents after a loss. The heuristic must settle on its
/// own, give up no entry beyond the slack compared with the proven
/// recommendation, and, when it meets the proven thresholds, disturb at
/// least as much as the proven least disruption (else the proof is wrong).
#[test]
fn the_settled_heuristic_replan_matches_the_proven_one_on_small_incidents() {
    let settled = SolveOptions {
        budget: Duration::from_secs(600),
        exact_max_units: 0,
        ..SolveOptions::default()
    };
    let proven = SolveOptions {
        budget: Duration::from_secs(600),
        ..SolveOptions::default()
    };
    for seed in 0..6 {
        let inc = after_loss(14, 3, 2, seed);
        let run = |o: &SolveOptions| solve(&inc, o, &AtomicBool::new(false), &mut |_| {});
        let p = run(&proven).expect("feasible");
        assert!(p.proven_optimal, "seed {seed}: proved");
        let h = run(&settled).expect("feasible");
        assert_eq!(h.stop, StopReason::NoImprovement, "seed {seed}: settled");
        check_whole(&inc, &h);
        let v = verdict(&p.key, &h.key, settled.slack);
        assert!(
            !matches!(v, Verdict::Worse { .. }),
            "seed {seed}: heuristic {v:?} than the proven plan"
        );
        if h.key.meets(&p.thresholds) {
            assert!(
                h.disruption >= p.disruption,
                "seed {seed}: {:?} < proven {:?}",
                h.disruption,
                p.disruption
            );
        }
    }
}

// ---------------------------------------------------------------------------
// The early stop after a loss (`SolveOptions::settled_before_loss`,
// `stable::absorb_loss`), against brute-force enumeration of every plan.

/// The incident before and after its strongest placed unit is lost, the
/// ground before being the proven recommendation (the settled plan).
fn settled_then_lost(mut inc: Incident) -> Option<(Incident, Incident)> {
    let r = solve(
        &inc,
        &SolveOptions {
            budget: Duration::from_secs(600),
            ..SolveOptions::default()
        },
        &AtomicBool::new(false),
        &mut |_| {},
    )
    .ok()?;
    if !r.proven_optimal {
        return None;
    }
    inc.placement = r.placement;
    let capability = |u: UnitIdx| inc.units[u].ratings.iter().map(|r| r.mean).sum::<f64>();
    let lost = UnitIdx::range(inc.units.len())
        .filter(|&u| inc.placement.get(u).is_some() && !inc.pins.contains_key(&u))
        .max_by(|&a, &b| capability(a).total_cmp(&capability(b)))?;
    let mut after = inc.clone();
    after.remove_unit(lost);
    Some((inc, after))
}

/// The re-plan told the pre-loss ground, on the heuristic path (no exact
/// search), as a large incident would run it.
fn early(before: &Incident, after: &Incident) -> SolveReport {
    solve(
        after,
        &SolveOptions {
            budget: Duration::from_secs(600),
            exact_max_units: 0,
            settled_before_loss: Some(before.placement.clone()),
            ..SolveOptions::default()
        },
        &AtomicBool::new(false),
        &mut |_| {},
    )
    .expect("feasible")
}

/// On small random incidents (every plan enumerated): the early stop fires
/// only when its condition holds (every capped entry at least what the
/// settled ground reached before the loss, scored here by the full
/// recompute on the incident before the loss), and what it returns is
/// acceptable under the rule's thresholds after the loss (brute force) with
/// the least disruption among acceptable plans (more would be moves the
/// full rule does not ask for). It must fire on some of them, or the test
/// proves nothing.
#[test]
fn the_early_stop_after_a_loss_against_brute_force() {
    let slack = 0.01;
    let (mut fired, mut tried) = (0, 0);
    for seed in 0..300 {
        let Some(inc) = small_incidents::small_incident(seed) else {
            continue;
        };
        let Some((before, after)) = settled_then_lost(inc) else {
            continue;
        };
        tried += 1;
        let r = early(&before, &after);
        check_whole(&after, &r);
        if r.stop != StopReason::LossAbsorbed {
            assert_ne!(r.stop, StopReason::BudgetExhausted, "seed {seed}");
            continue;
        }
        fired += 1;
        let then = small_incidents::key_of(&before, &before.placement);
        let now = small_incidents::key_of(&after, &r.placement);
        assert!(
            meets(&now, then.capped()),
            "seed {seed}: stopped early below the pre-loss key: {:?} < {:?}",
            now.capped(),
            then.capped()
        );
        let plans = small_incidents::all_plans(&after);
        let keys: Vec<ObjectiveKey> = plans
            .iter()
            .map(|p| small_incidents::key_of(&after, p))
            .collect();
        let thr = brute_thresholds(&keys, slack);
        assert!(
            meets(&now, &thr),
            "seed {seed}: the early stop misses the rule's thresholds: {:?} vs {thr:?}",
            now.capped()
        );
        let least = plans
            .iter()
            .zip(&keys)
            .filter(|(_, k)| meets(k, &thr))
            .map(|(p, _)| disruption(&after, &after.placement, p))
            .min()
            .expect("an acceptable plan");
        assert!(
            r.disruption <= least,
            "seed {seed}: the early stop disturbs {:?}, the rule needs {least:?}",
            r.disruption
        );
    }
    eprintln!("early stop fired on {fired} of {tried} small incidents");
    assert!(fired >= 5, "fired on {fired} of {tried}");
}

/// An invented fire: a life task that takes at most two engines, a
/// property task for the tender, and `spares` engines with nowhere to go.
fn engines_and_tender(spares: usize) -> Incident {
    let mut y = String::from(
        r#"
incident: { name: Invented loss at the east wing }
traits: [ { id: water, unit: L/min } ]
unit_types:
  - { id: engine, traits: { water: { mean: 1000, sd: 200 } } }
  - { id: tender, traits: { water: { mean: 900, sd: 100 } } }
units:
  - { id: E1, type: engine }
  - { id: E2, type: engine }
  - { id: T1, type: tender }
"#,
    );
    for i in 0..spares {
        y.push_str(&format!("  - {{ id: X{i}, type: engine }}\n"));
    }
    y.push_str(
        r#"tasks:
  - { id: L1, tier: life, needs: { water: 1700 }, max_units: 2, accepts: [engine, tender] }
  - { id: P1, tier: property, needs: { water: 800 }, accepts: [tender] }
placement: { E1: L1, E2: L1, T1: P1 }
"#,
    );
    oddsboard::model::parse_incident_str(&y, "invented.yaml").expect("valid")
}

/// An engine lost from the life task: with an identical engine idle the loss is
/// absorbed by one dispatch (the early stop fires, and the plan is what
/// the full rule gives); without one, the only lift is the tender, whose
/// property task would fall short, so the early stop must not fire and
/// the full rule decides.
#[test]
fn the_early_stop_fires_where_the_reserve_absorbs_the_loss_and_not_otherwise() {
    for (spares, absorbable) in [(1, true), (0, false)] {
        let (before, after) = settled_then_lost(engines_and_tender(spares)).expect("solved");
        // The settled ground kept both engines on the life task (the
        // tender would lower its odds there) and lost one of them.
        let l1 = after.task_idx("L1");
        assert_eq!(before.placement.units_on(l1.expect("L1")).count(), 2);
        assert_eq!(after.placement.units_on(l1.expect("L1")).count(), 1);
        let r = early(&before, &after);
        check_whole(&after, &r);
        let full = solve(
            &after,
            &SolveOptions {
                budget: Duration::from_secs(600),
                exact_max_units: 0,
                ..SolveOptions::default()
            },
            &AtomicBool::new(false),
            &mut |_| {},
        )
        .expect("feasible");
        if absorbable {
            assert_eq!(r.stop, StopReason::LossAbsorbed);
            let x0 = after.unit_idx("X0").expect("X0");
            assert_eq!(
                r.moves,
                vec![oddsboard::solver::Move {
                    unit: x0,
                    from: None,
                    to: l1
                }]
            );
            assert_eq!(r.placement, full.placement, "as the full rule");
        } else {
            assert_ne!(r.stop, StopReason::LossAbsorbed);
            assert_eq!(r.placement, full.placement, "the full rule ran");
        }
    }
}

/// The early stop needs the ground to be the pre-loss ground but for the
/// lost units: a unit moved by hand since (or a pre-loss placement of the
/// wrong length) turns it off.
#[test]
fn the_early_stop_needs_the_same_ground_but_for_the_loss() {
    let (mut before, after) = settled_then_lost(engines_and_tender(1)).expect("solved");
    let t1 = before.unit_idx("T1").expect("T1");
    before.placement.set(t1, None);
    assert_ne!(early(&before, &after).stop, StopReason::LossAbsorbed);
    before.placement.0.pop();
    assert_ne!(early(&before, &after).stop, StopReason::LossAbsorbed);
}

/// The local search's certified tasks (`search::Certified`) against a full
/// scan: along descents with random moves in between (seeded; the moves
/// of a perturbation), on generated incidents after a loss and on small
/// random ones, the step a certified scan finds is the step a full scan
/// finds, under the plain key and under capped tiers (as the rule's
/// threshold searches rank). A stale certificate shows as a missed step:
/// ignoring changes of the other task, or of the reserve, fails here
/// (checked by hand; the generated incidents alone did not catch it).
#[test]
fn certified_tasks_find_the_step_a_full_scan_finds() {
    use oddsboard::solver::search::{
        Certified, Ctx, State, apply_step, best_step_certified, best_step_within,
    };
    let mut compared = 0;
    // Generated incidents after a loss, then small random ones (where a
    // stuck task more often becomes movable when another changes).
    let incidents = (0..3)
        .map(|seed| (seed, after_loss(60, 10, 3, seed)))
        .chain(
            (0..300).filter_map(|seed| Some((100 + seed, small_incidents::small_incident(seed)?))),
        );
    for (seed, inc) in incidents {
        let plain = Ctx::new(&inc);
        let mut caps = plain.caps;
        caps[1] = caps[1].min(0.5f64.ln());
        for ctx in [plain.clone(), plain.with_caps(caps)] {
            let mut s = State::new(&ctx, &ctx.repair(&inc.placement));
            let mut memo = Certified::new(inc.tasks.len());
            let mut rng = seed.wrapping_mul(0x9e37_79b9_7f4a_7c15) | 1;
            let (mut it_full, mut it_cert) = (0u64, 0u64);
            for round in 0..6 {
                for _ in 0..200 {
                    let full = best_step_within(&ctx, &mut s, &mut it_full, usize::MAX, true, None);
                    let cert = best_step_certified(&ctx, &mut s, &mut it_cert, &mut memo, None);
                    assert_eq!(
                        format!("{full:?}"),
                        format!("{cert:?}"),
                        "seed {seed} round {round}"
                    );
                    compared += 1;
                    let Some(step) = full else { break };
                    let was = s.place.clone();
                    apply_step(&inc, &mut s, step);
                    memo.between(&was, &s.place);
                }
                // A few random feasible moves (xorshift), marked as such.
                for _ in 0..3 {
                    rng ^= rng << 13;
                    rng ^= rng >> 7;
                    rng ^= rng << 17;
                    if ctx.movable.is_empty() {
                        break;
                    }
                    let u = ctx.movable[(rng % ctx.movable.len() as u64) as usize];
                    let opts = &ctx.allowed[u];
                    let to = (!opts.is_empty()).then(|| opts[(rng >> 20) as usize % opts.len()]);
                    let full = to.is_some_and(|t| ctx.is_full(t, s.tallies[t].count()));
                    let from_reserve = s.place[u].is_none();
                    if full || (from_reserve && !ctx.may_draw_reserve(s.reserve)) {
                        continue;
                    }
                    let was = s.place.clone();
                    s.apply_move(&inc, u, to);
                    memo.between(&was, &s.place);
                }
            }
            // Else the certificates were never used and nothing was tested.
            assert!(
                seed >= 100 || it_cert < it_full,
                "seed {seed}: {it_cert} vs {it_full}"
            );
        }
    }
    assert!(compared > 100, "{compared} steps compared");
}
