//! The recommendation rule on invented scenarios a commander would judge
//! (issue 10): no idle unit in reserve while a life-safety task it would
//! lift by more than the slack stays below its secure level, and no
//! life-safety task given up by more than the slack to lift a lower tier.
//! Each scenario is invented; the checks are stated from the rule itself
//! (SPEC §3 Stability), the reference plan being the plain leximin optimum
//! (from scratch, slack 0), which the brute-force test pins down
//! (tests/solver_exact.rs).

use oddsboard::model::{Incident, Placement, Tier, UnitStatus, parse_incident_str};
use oddsboard::odds::evaluate;
use oddsboard::solver::{SolveOptions, SolveReport, solve};
use std::sync::atomic::AtomicBool;
use std::time::Duration;

const SLACK: f64 = 0.01;

fn run(inc: &Incident, from_scratch: bool, slack: f64) -> SolveReport {
    let opts = SolveOptions {
        budget: Duration::from_secs(60),
        from_scratch,
        slack,
        ..SolveOptions::default()
    };
    solve(inc, &opts, &AtomicBool::new(false), &mut |_| {}).expect("feasible")
}

fn odds(inc: &Incident, p: &Placement) -> Vec<f64> {
    evaluate(inc, p).iter().map(|t| t.ln_odds.exp()).collect()
}

/// Idle units in reserve that would lift an open life-safety task below
/// its secure level by more than the slack (odds capped at the secure
/// level), as "unit → task (before → after)".
fn idle_lifts(inc: &Incident, plan: &Placement) -> Vec<String> {
    let before = odds(inc, plan);
    let secure = inc.secure.get(Tier::Life);
    let reserve = oddsboard::model::UnitIdx::range(inc.units.len())
        .filter(|&u| {
            inc.units[u].status == UnitStatus::Available
                && !inc.pins.contains_key(&u)
                && plan.get(u).is_none()
        })
        .count() as u32;
    let mut out = Vec::new();
    if reserve <= inc.reserve_min {
        return out;
    }
    for u in oddsboard::model::UnitIdx::range(inc.units.len()) {
        if plan.get(u).is_some() || inc.units[u].status != UnitStatus::Available {
            continue;
        }
        for (t, task) in inc.tasks.iter().enumerate() {
            let t = oddsboard::model::TaskIdx::new(t);
            let room = task
                .max_units
                .is_none_or(|m| (plan.units_on(t).count() as u32) < m);
            if task.tier != Tier::Life || !task.is_open() || !inc.may_place(u, t) || !room {
                continue;
            }
            let mut p = plan.clone();
            p.set(u, Some(t));
            let (b, a) = (before[t].min(secure), odds(inc, &p)[t].min(secure));
            if a * (1.0 - SLACK) > b {
                out.push(format!(
                    "{} → {} ({b:.3} → {a:.3})",
                    inc.units[u].id, task.id
                ));
            }
        }
    }
    out
}

/// Life-safety capped odds, ascending.
fn life_entries(inc: &Incident, p: &Placement) -> Vec<f64> {
    let secure = inc.secure.get(Tier::Life);
    let o = odds(inc, p);
    let mut v: Vec<f64> = inc
        .tasks
        .iter()
        .enumerate()
        .filter(|(_, t)| t.tier == Tier::Life && t.is_open())
        .map(|(i, _)| o[i].min(secure))
        .collect();
    v.sort_by(f64::total_cmp);
    v
}

/// Entries where the plan's life-safety odds fall more than the slack
/// below the leximin optimum's (entry by entry, worst first).
fn life_given_up(inc: &Incident, plan: &Placement) -> Vec<String> {
    let best = run(inc, true, 0.0);
    let (got, want) = (life_entries(inc, plan), life_entries(inc, &best.placement));
    got.iter()
        .zip(&want)
        .enumerate()
        .filter(|(_, (g, w))| **g < (1.0 - SLACK) * **w - 1e-12)
        .map(|(e, (g, w))| format!("life entry {e}: {g:.4} < 0.99 × {w:.4}"))
        .collect()
}

fn check_commander(inc: &Incident) -> SolveReport {
    let r = run(inc, false, SLACK);
    assert!(r.proven_optimal, "{}: small incidents are proven", inc.name);
    let idle = idle_lifts(inc, &r.placement);
    assert!(
        idle.is_empty(),
        "{}: idle reserve units: {idle:?}",
        inc.name
    );
    let lost = life_given_up(inc, &r.placement);
    assert!(lost.is_empty(), "{}: life given up: {lost:?}", inc.name);
    r
}

fn unit(inc: &Incident, r: &SolveReport, id: &str) -> Option<String> {
    let u = inc.unit_idx(id).expect("known unit");
    r.placement.get(u).map(|t| inc.tasks[t].id.clone())
}

/// Invented: a caravan-park search (life) held by drones is the worst life
/// task and boats cannot help it; two boat evacuations sit short while two
/// boats wait in reserve.
const IDLE_RESERVE: &str = r#"
incident: { name: Invented - Hollin Ford flood (idle reserve) }
traits:
  - { id: evac, unit: persons/h }
  - { id: search, unit: km2/h }
unit_types:
  - { id: boat, rho: 0.3, traits: { evac: { mean: 20, sd: 5 } } }
  - { id: drone, traits: { search: { mean: 2, sd: 0.8 } } }
units:
  - { id: B1, type: boat }
  - { id: B2, type: boat }
  - { id: B3, type: boat }
  - { id: B4, type: boat }
  - { id: B5, type: boat }
  - { id: B6, type: boat }
  - { id: D1, type: drone }
tasks:
  - { id: search-park, tier: life, needs: { search: 2.2 } }
  - { id: evac-east, tier: life, needs: { evac: { need: 36, sd: 4 } } }
  - { id: evac-west, tier: life, needs: { evac: { need: 34, sd: 4 } } }
  - { id: bund, tier: stabilization, needs: { evac: 10 } }
placement: { D1: search-park, B1: evac-east, B2: evac-east, B3: evac-west, B4: evac-west }
"#;

#[test]
fn idle_reserve_boats_go_to_short_evacuations() {
    let inc = parse_incident_str(IDLE_RESERVE, "idle.yaml").expect("valid");
    let before = odds(&inc, &inc.placement);
    // The scenario's premise: both evacuations short, search worse still.
    assert!(before[0] < before[1] && before[1] < 0.99 && before[2] < 0.99);
    let r = check_commander(&inc);
    assert_eq!(r.disruption.withdrawals, 0, "nobody needs withdrawing");
    assert!(unit(&inc, &r, "B5").is_some() && unit(&inc, &r, "B6").is_some());
}

/// Invented: three urban search teams hold a basement search (life) at its
/// secure level; a triage post (life) is worse and nothing here can help
/// it; a facade (stabilization) needs shoring that one search team carries.
/// Taking a team off the search would lift the facade from 0 but drop the
/// search far below its secure level.
const FACADE: &str = r#"
incident: { name: Invented - Mercer Row collapse (facade) }
traits:
  - { id: search, unit: voids/h }
  - { id: shoring, unit: m }
  - { id: care, unit: patients/h }
unit_types:
  - { id: usar, traits: { search: { mean: 1.0, sd: 0.15 }, shoring: { mean: 3, sd: 0.5 } } }
  - { id: medic, traits: { care: { mean: 4.5, sd: 1 } } }
units:
  - { id: U1, type: usar }
  - { id: U2, type: usar }
  - { id: U3, type: usar }
  - { id: M1, type: medic }
tasks:
  - { id: triage, tier: life, needs: { care: 5 } }
  - { id: search-basement, tier: life, needs: { search: 1.8 } }
  - { id: shore-facade, tier: stabilization, needs: { shoring: 2.5 } }
placement: { M1: triage, U1: search-basement, U2: search-basement, U3: search-basement }
"#;

#[test]
fn a_life_search_is_not_given_up_for_a_facade() {
    let inc = parse_incident_str(FACADE, "facade.yaml").expect("valid");
    // Premise: with two teams the search falls far below its secure level.
    let mut two = inc.placement.clone();
    two.set(inc.unit_idx("U3").expect("U3"), None);
    assert!(odds(&inc, &two)[1] < 0.9);
    let r = check_commander(&inc);
    assert_eq!(r.moves.len(), 0, "the ground is the recommendation");
}

/// Invented: a flooded-cellar rescue needs divers nobody on scene has (odds
/// 0 whatever is done); a care home is evacuated at about 75 %, a terrace
/// at under 40 % by one boat; a swift-water team waits in reserve beside a
/// sandbag crew, and a bund (stabilization) is short of sandbags.
const CELLAR: &str = include_str!("fixtures/ferry-lane-flood.yaml");

#[test]
fn the_idle_swiftwater_team_goes_to_the_terrace() {
    let inc = parse_incident_str(CELLAR, "cellar.yaml").expect("valid");
    let before = odds(&inc, &inc.placement);
    assert_eq!(before[0], 0.0, "no unit can help the cellar");
    assert!(before[2] < 0.4 && before[1] < 0.8);
    let r = check_commander(&inc);
    assert_eq!(unit(&inc, &r, "SW1").as_deref(), Some("terrace"));
    // The bund still gets the idle sandbag crew: a dispatch, no withdrawal.
    assert_eq!(unit(&inc, &r, "SB2").as_deref(), Some("bund"));
    assert_eq!(r.disruption.withdrawals, 0);
    assert_eq!(r.disruption.dispatches, 2);
}

/// The bundled samples (invented) no longer show either defect.
#[test]
fn bundled_samples_pass_the_commander_checks() {
    for f in ["river-flood", "building-collapse"] {
        let path = format!("{}/sample-incidents/{f}.yaml", env!("CARGO_MANIFEST_DIR"));
        let text = std::fs::read_to_string(&path).expect("sample");
        let inc = parse_incident_str(&text, &path).expect("valid");
        check_commander(&inc);
    }
}

/// One code path: the dashboard's planner, the advice baseline and the
/// fragility re-plans give what `solve` (the `plan` command's call) gives
/// on the same state: the same key and the same disruption (tied plans may
/// differ in which identical unit moves).
#[test]
fn dashboard_and_advice_agree_with_plan() {
    use oddsboard::advise::{AdviseOptions, baseline_plan, fragility::unit_losses};
    use oddsboard::solver::ObjectiveKey;
    use oddsboard::tui::planner::{Planner, SolverPlanner};
    let inc = parse_incident_str(CELLAR, "cellar.yaml").expect("valid");
    let cancel = AtomicBool::new(false);
    let budget = Duration::from_secs(60);
    let plan = run(&inc, false, SLACK);
    let dash = SolverPlanner::with_budget(budget)
        .plan(&inc, None, &cancel, &mut |_| {})
        .expect("plans");
    let opts = AdviseOptions {
        baseline_budget: budget,
        per_loss_budget: budget,
        slack: SLACK,
        ..AdviseOptions::default()
    };
    let advice = baseline_plan(&inc, &opts, &cancel).expect("advice");
    for (who, p) in [
        ("dashboard", &dash.placement),
        ("advice", &advice.placement),
    ] {
        assert_eq!(
            ObjectiveKey::of(&inc, p).compare(&plan.key),
            std::cmp::Ordering::Equal,
            "{who}: key"
        );
        assert_eq!(
            oddsboard::solver::stable::disruption(&inc, &inc.placement, p),
            plan.disruption,
            "{who}: disruption"
        );
    }
    let losses = unit_losses(&inc, &advice, &opts, &cancel).expect("losses");
    assert!(!losses.is_empty());
    for loss in &losses {
        let mut lost = inc.clone();
        lost.remove_unit(lost.unit_idx(&loss.unit).expect("unit"));
        let want = run(&lost, false, SLACK);
        assert!(loss.proven_optimal && want.proven_optimal);
        let worst = want.key.worst_odds_per_tier();
        for t in &loss.after {
            let tier = Tier::parse(t.tier).expect("tier");
            let w = worst[tier.index()].expect("tier has tasks");
            assert!(
                (t.odds - w).abs() <= 1e-9,
                "{} lost, {}: {} vs {w}",
                loss.unit,
                t.tier,
                t.odds
            );
        }
        assert_eq!(loss.moves, want.moves.len(), "{} lost: moves", loss.unit);
        assert_eq!(
            (loss.withdrawals, loss.dispatches),
            (want.disruption.withdrawals, want.disruption.dispatches),
            "{} lost: disruption",
            loss.unit
        );
    }
}

/// The heuristic path (no exact search) on the same scenarios: the plan
/// meets the thresholds it reports, and leaves no idle reserve unit that
/// would lift a life-safety task by more than the slack. Not proven.
#[test]
fn heuristic_path_passes_the_idle_reserve_check() {
    let mut incidents: Vec<Incident> = [IDLE_RESERVE, FACADE, CELLAR]
        .iter()
        .map(|y| parse_incident_str(y, "scenario.yaml").expect("valid"))
        .collect();
    for f in ["river-flood", "building-collapse"] {
        let path = format!("{}/sample-incidents/{f}.yaml", env!("CARGO_MANIFEST_DIR"));
        let text = std::fs::read_to_string(&path).expect("sample");
        incidents.push(parse_incident_str(&text, &path).expect("valid"));
    }
    for inc in &incidents {
        let opts = SolveOptions {
            budget: Duration::from_secs(60),
            exact_max_units: 0,
            ..SolveOptions::default()
        };
        let r = solve(inc, &opts, &AtomicBool::new(false), &mut |_| {}).expect("feasible");
        assert!(!r.proven_optimal);
        assert!(r.key.meets(&r.thresholds), "{}: thresholds", inc.name);
        let idle = idle_lifts(inc, &r.placement);
        assert!(
            idle.is_empty(),
            "{}: idle reserve units: {idle:?}",
            inc.name
        );
    }
}
