//! `oddsboard plan FILE`: recommends a placement. Prints the moves (unit:
//! from → to), each task's odds before → after with regime and binding trait,
//! whether the plan is proven optimal (or the bound on the worst odds), the
//! time taken, and with `--compare` the baselines side by side. `--json`
//! prints one document with the fields of SPEC §5.

use super::CliResult;
use super::input::load_state;
use super::render::{Columns, footer, regime_words, tier_title, wrap};
use crate::model::{Incident, Placement, Tier};
use crate::odds::joint::{
    JointByTier, JointDetailView, JointOddsView, JointOptions, joint_by_tier,
};
use crate::odds::text::{pct, pct_detail, pct_or_dash};
use crate::odds::view::{TaskView, placement_view, task_views, worst_by_tier};
use crate::safety;
use crate::solver::relax::{RelaxOptions, TierBounds, tier_bounds};
use crate::solver::stable::{Disruption, Verdict, disruption, unit_disruption, verdict};
use crate::solver::{Move, ObjectiveKey, SolveOptions, SolveReport, baselines, solve};
use serde::Serialize;
use std::collections::BTreeMap;
use std::path::PathBuf;
use std::sync::atomic::AtomicBool;
use std::time::{Duration, Instant};

#[derive(Debug, clap::Args)]
pub struct Args {
    /// Incident file or log (a log is read to its end).
    pub file: PathBuf,
    /// Ignore the placement on the ground: plan as if every unit were free.
    #[arg(long)]
    pub from_scratch: bool,
    /// Time the whole plan may take, in milliseconds: the search, then the
    /// bounds on each tier (at least a quarter of it, 0.1–3 s).
    #[arg(long, default_value_t = 1000)]
    pub budget_ms: u64,
    /// Seed of the solver's random choices (same seed, same plan).
    #[arg(long, default_value_t = 0)]
    pub seed: u64,
    /// Search threads (default: the cores available). They change how soon
    /// a plan is found, not which: the plan depends on the seed, not on
    /// this number or the machine's speed, when the search ends before its
    /// budget.
    #[arg(long, value_parser = clap::value_parser!(u16).range(1..=256))]
    pub threads: Option<u16>,
    /// Slack of the rule: no task's odds (capped at its tier's secure level)
    /// are given up by more than this share of the best they can reach;
    /// among such plans the least disruption wins (0.01 = 1 %; 0 = plain
    /// leximin).
    #[arg(long, default_value_t = 0.01)]
    pub slack: f64,
    /// Show the baselines (expected-value, mean-minus-spread, random) beside
    /// the recommendation.
    #[arg(long)]
    pub compare: bool,
    /// λ of the mean-minus-spread baseline.
    #[arg(long, default_value_t = 1.0)]
    pub lambda: f64,
    /// Print one JSON document instead of the report.
    #[arg(long)]
    pub json: bool,
    /// Plan as if this event (log shape, YAML or JSON, e.g.
    /// '{kind: unit_lost, unit: E4}') had happened; nothing is written.
    #[arg(long, value_name = "EVENT")]
    pub what_if: Option<String>,
}

#[derive(Serialize)]
struct MoveView {
    unit: String,
    from: Option<String>,
    to: Option<String>,
}

#[derive(Serialize)]
struct RegimeCounts {
    hedge: usize,
    gamble: usize,
}

#[derive(Serialize)]
struct CompareRow {
    name: String,
    /// Worst odds per tier with open tasks (tier → odds).
    worst_by_tier: BTreeMap<&'static str, f64>,
    /// Mean odds per tier with open tasks (tier → odds).
    mean_by_tier: BTreeMap<&'static str, f64>,
    min_odds: f64,
    /// Joint odds that every open task succeeds (shared correlated types
    /// included; not the product of the task odds).
    all_tasks_odds: f64,
    regimes: RegimeCounts,
    moves: usize,
    withdrawals: usize,
    dispatches: usize,
    /// Meets every threshold of the rule.
    acceptable: bool,
    solve_ms: f64,
    /// Against the recommendation, entry by entry within the slack:
    /// "recommended", "worse", "within slack", "better".
    verdict: &'static str,
    /// Why, in words (which task decides, or why a plan within the slack
    /// was not chosen).
    why: String,
}

#[derive(Serialize)]
struct BoundView {
    tier: &'static str,
    worst_odds: f64,
    upper_bound: Option<f64>,
    /// The bisection ran all its steps: the same input gives the same figure.
    complete: bool,
}

fn bound_views(bounds: &TierBounds) -> Vec<BoundView> {
    bounds
        .tiers
        .iter()
        .map(|b| BoundView {
            tier: b.tier.as_str(),
            worst_odds: b.worst_odds,
            upper_bound: b.upper_bound,
            complete: bounds.complete(b.tier),
        })
        .collect()
}

/// The overall bound: the solver's, lowered by the first tier's relaxation
/// (both are valid, so the smaller is).
fn overall_bound(report: &SolveReport, bounds: &TierBounds) -> Option<f64> {
    match (report.upper_bound, bounds.overall) {
        (Some(a), Some(b)) => Some(a.min(b)),
        (a, b) => a.or(b),
    }
}

/// Time kept for the tier bounds out of the budget: a quarter, within
/// 0.1–3 s. The search gets the rest.
fn bound_reserve(budget_ms: u64) -> Duration {
    Duration::from_millis((budget_ms / 4).clamp(100, 3000))
}

/// Time for the tier bounds: what is left of the budget after `spent`, at
/// most half the budget (within 0.2–3 s), at least 0.1 s.
fn bound_time(budget_ms: u64, spent: Duration) -> Duration {
    let most = Duration::from_millis((budget_ms / 2).clamp(200, 3000));
    Duration::from_millis(budget_ms)
        .saturating_sub(spent)
        .min(most)
        .max(Duration::from_millis(100))
}

#[derive(Serialize)]
struct PlanJson<'a> {
    incident: &'a str,
    placement: BTreeMap<String, Option<String>>,
    moves: Vec<MoveView>,
    /// Units taken off open tasks they are working.
    withdrawals: usize,
    /// Units sent to a task from reserve.
    dispatches: usize,
    tasks: Vec<TaskView>,
    tasks_before: Vec<TaskView>,
    min_odds: f64,
    min_odds_before: f64,
    joint_odds: JointOddsView,
    joint_odds_before: JointOddsView,
    joint_detail: Vec<JointDetailView>,
    proven_optimal: bool,
    upper_bound: Option<f64>,
    /// Per tier with open tasks: the plan's worst odds and a bound on how
    /// high they could go with the tiers above kept (docs/json-output.md).
    bounds: Vec<BoundView>,
    solve_ms: f64,
    iterations: u64,
    stop: &'static str,
    seed: u64,
    slack: f64,
    from_scratch: bool,
    #[serde(skip_serializing_if = "Option::is_none")]
    compare: Option<Vec<CompareRow>>,
    #[serde(skip_serializing_if = "Option::is_none")]
    what_if: Option<super::advise::WhatIfSummary>,
    notes: Vec<String>,
    cautions: &'static [&'static str],
}

fn task_name(incident: &Incident, t: Option<oddsboard_core::model::TaskIdx>) -> String {
    t.map_or_else(|| "reserve".to_string(), |t| incident.tasks[t].id.clone())
}

fn move_views(incident: &Incident, moves: &[Move]) -> Vec<MoveView> {
    moves
        .iter()
        .map(|m| MoveView {
            unit: incident.units[m.unit].id.clone(),
            from: m.from.map(|t| incident.tasks[t].id.clone()),
            to: m.to.map(|t| incident.tasks[t].id.clone()),
        })
        .collect()
}

/// The worst task's odds, shown from its own ln values (deep tails too).
fn worst_cell(tasks: &[TaskView]) -> String {
    tasks
        .iter()
        .min_by(|a, b| {
            let l = |t: &TaskView| t.ln_odds.unwrap_or(f64::NEG_INFINITY);
            l(a).total_cmp(&l(b))
        })
        .map_or_else(
            || "-".to_string(),
            |t| format!("{} ({})", pct_detail(t.ln_odds, t.ln_fail), t.id),
        )
}

fn min_odds(tasks: &[TaskView]) -> f64 {
    tasks.iter().map(|t| t.odds).fold(1.0, f64::min)
}

/// "1 unit" / "3 units".
fn units_n(n: usize) -> String {
    format!("{n} unit{}", if n == 1 { "" } else { "s" })
}

/// The disruption in words, withdrawals first.
fn disruption_words(d: Disruption) -> String {
    match (d.withdrawals, d.dispatches) {
        (0, 0) => "nothing moved".into(),
        (w, 0) => format!("{} withdrawn from working tasks", units_n(w)),
        (0, n) => format!("{} dispatched from reserve", units_n(n)),
        (w, n) => format!(
            "{} withdrawn from working tasks, {} dispatched from reserve",
            units_n(w),
            units_n(n)
        ),
    }
}

/// The task behind capped entry `e` of `placement`'s key, and its odds:
/// entries are each tier's tasks, worst first.
fn entry_task(incident: &Incident, tasks: &[TaskView], key: &ObjectiveKey, e: usize) -> String {
    let tiers = key.entry_tiers();
    let Some(&tier) = tiers.get(e) else {
        return "-".into();
    };
    let rank = tiers[..e].iter().filter(|t| **t == tier).count();
    let mut in_tier: Vec<&TaskView> = tasks.iter().filter(|t| t.tier() == tier).collect();
    in_tier.sort_by(|a, b| {
        let l = |t: &TaskView| t.ln_odds.unwrap_or(f64::NEG_INFINITY);
        l(a).total_cmp(&l(b)).then(a.id.cmp(&b.id))
    });
    in_tier.get(rank).map_or_else(
        || "-".into(),
        |t| {
            let p = t.odds.min(incident.secure.get(tier));
            format!("{} at {}", t.id, pct(p))
        },
    )
}

/// "life, worst" / "property, 2nd worst": which capped entry decides.
fn entry_name(key: &ObjectiveKey, e: usize) -> String {
    let tiers = key.entry_tiers();
    let Some(&tier) = tiers.get(e) else {
        return "-".into();
    };
    let rank = tiers[..e].iter().filter(|t| **t == tier).count() + 1;
    let nth = match rank {
        1 => String::new(),
        2 => "2nd ".into(),
        3 => "3rd ".into(),
        n => format!("{n}th "),
    };
    format!("{}, {nth}worst", tier.as_str())
}

struct Recommended<'a> {
    key: &'a ObjectiveKey,
    tasks: Vec<TaskView>,
    cost: Disruption,
    thresholds: &'a [f64],
    slack: f64,
    from_scratch: bool,
}

fn compare_row(
    incident: &Incident,
    name: &str,
    placement: &Placement,
    rec: &Recommended,
    solve_ms: f64,
    is_recommended: bool,
) -> CompareRow {
    let tasks = task_views(incident, placement);
    let key = ObjectiveKey::of(incident, placement);
    let worst = worst_by_tier(incident, &tasks)
        .into_iter()
        .map(|w| (w.tier, w.odds))
        .collect();
    let mean = Tier::ALL
        .iter()
        .filter_map(|&tier| {
            let v: Vec<f64> = tasks
                .iter()
                .filter(|t| t.tier() == tier)
                .map(|t| t.odds)
                .collect();
            (!v.is_empty()).then(|| (tier.as_str(), v.iter().sum::<f64>() / v.len() as f64))
        })
        .collect();
    let cost = disruption(incident, &incident.placement, placement);
    let acceptable = key.meets(rec.thresholds);
    let slack_words = format!("within {} %", rec.slack * 100.0);
    let short = |e: usize| {
        format!(
            "{}: {} is below its threshold {}",
            entry_name(&key, e),
            entry_task(incident, &tasks, &key, e),
            pct(rec.thresholds[e].exp())
        )
    };
    let (verdict_word, why) = if is_recommended {
        ("recommended", disruption_words(cost))
    } else {
        let v = verdict(rec.key, &key, rec.slack);
        let why = match v {
            Verdict::Worse { entry } => format!(
                "{}: {} against {}",
                entry_name(&key, entry),
                entry_task(incident, &tasks, &key, entry),
                entry_task(incident, &rec.tasks, rec.key, entry)
            ),
            Verdict::WithinSlack | Verdict::Better { .. } => {
                let lead = match v {
                    Verdict::Better { entry } => format!(
                        "{}: {} against {}, but ",
                        entry_name(&key, entry),
                        entry_task(incident, &tasks, &key, entry),
                        entry_task(incident, &rec.tasks, rec.key, entry)
                    ),
                    _ => format!("{slack_words}; "),
                };
                let reason = if let Some(e) = key.first_short(rec.thresholds) {
                    short(e)
                } else if rec.from_scratch {
                    match key.compare(rec.key) {
                        std::cmp::Ordering::Greater => {
                            "a better key (the search was not exhaustive)".into()
                        }
                        std::cmp::Ordering::Equal => "the same odds".into(),
                        std::cmp::Ordering::Less => "lower odds further down the key".into(),
                    }
                } else if cost.withdrawals > rec.cost.withdrawals {
                    format!(
                        "needs {} more withdrawal{}",
                        cost.withdrawals - rec.cost.withdrawals,
                        if cost.withdrawals - rec.cost.withdrawals == 1 {
                            ""
                        } else {
                            "s"
                        }
                    )
                } else if cost.withdrawals == rec.cost.withdrawals
                    && cost.dispatches > rec.cost.dispatches
                {
                    format!(
                        "needs {} more dispatch{}",
                        cost.dispatches - rec.cost.dispatches,
                        if cost.dispatches - rec.cost.dispatches == 1 {
                            ""
                        } else {
                            "es"
                        }
                    )
                } else if cost == rec.cost {
                    match key.compare(rec.key) {
                        std::cmp::Ordering::Greater => {
                            "same disruption, better odds (the search was not exhaustive)".into()
                        }
                        std::cmp::Ordering::Equal => "same disruption, same odds".into(),
                        std::cmp::Ordering::Less => "same disruption, lower odds".into(),
                    }
                } else {
                    format!(
                        "less disruption ({}; the search was not exhaustive)",
                        disruption_words(cost)
                    )
                };
                lead + &reason
            }
        };
        (v.as_str(), why)
    };
    CompareRow {
        name: name.to_string(),
        worst_by_tier: worst,
        mean_by_tier: mean,
        min_odds: min_odds(&tasks),
        all_tasks_odds: joint_by_tier(incident, placement, JointOptions::default())
            .all
            .odds(),
        regimes: RegimeCounts {
            hedge: tasks.iter().filter(|t| t.regime == Some("hedge")).count(),
            gamble: tasks.iter().filter(|t| t.regime == Some("gamble")).count(),
        },
        moves: cost.withdrawals + cost.dispatches,
        withdrawals: cost.withdrawals,
        dispatches: cost.dispatches,
        acceptable,
        solve_ms,
        verdict: verdict_word,
        why,
    }
}

fn compare_rows(incident: &Incident, args: &Args, report: &SolveReport) -> Vec<CompareRow> {
    let ms = |d: Duration| d.as_secs_f64() * 1e3;
    let rec = Recommended {
        key: &report.key,
        tasks: task_views(incident, &report.placement),
        cost: report.disruption,
        thresholds: &report.thresholds,
        slack: args.slack,
        from_scratch: args.from_scratch,
    };
    let mut rows = vec![compare_row(
        incident,
        "recommended (risk-adaptive)",
        &report.placement,
        &rec,
        ms(report.elapsed),
        true,
    )];
    let mut timed = |name: String, f: &dyn Fn() -> Placement| {
        let start = Instant::now();
        let p = f();
        let row = compare_row(incident, &name, &p, &rec, ms(start.elapsed()), false);
        rows.push(row);
    };
    timed("expected value (risk-neutral)".into(), &|| {
        baselines::expected_value(incident)
    });
    timed(
        format!("mean - {}·spread (risk-averse)", args.lambda),
        &|| baselines::mean_minus_spread(incident, args.lambda),
    );
    timed(format!("random feasible (seed {})", args.seed), &|| {
        baselines::random_feasible(incident, args.seed)
    });
    rows.push(compare_row(
        incident,
        "on the ground now",
        &incident.placement,
        &rec,
        0.0,
        false,
    ));
    rows
}

/// Joint odds per tier and of all open tasks, before → after.
fn joint_before_after(before: &JointByTier, after: &JointByTier) -> String {
    let (b, a) = (before.details(), after.details());
    if a.iter().all(|d| d.tasks == 0) {
        return String::new();
    }
    let mut out = String::from("Joint odds before → after (every task of the set at once):\n");
    let mut cols = Columns::new(&["", "", "", ""], &[false, true, false, true]);
    for (b, a) in b.iter().zip(&a) {
        cols.push(vec![
            super::odds::joint_set_words(a.set).to_string(),
            super::odds::format_joint(b),
            "→".into(),
            super::odds::format_joint(a),
        ]);
    }
    let table = cols.render(2);
    out.extend(table.lines().skip(1).map(|l| format!("{}\n", l.trim_end())));
    out.push('\n');
    out
}

/// Notes that depend on the plan (SPEC §8), beside the ones about the tasks.
fn plan_notes(incident: &Incident, report: &SolveReport, after: &[TaskView]) -> Vec<String> {
    let mut notes = Vec::new();
    for m in &report.moves {
        if let Some(from) = m.from
            && incident.tasks[from].is_open()
        {
            notes.push(safety::withdrawal(
                &[&incident.units[m.unit].id],
                &incident.tasks[from].id,
            ));
        }
    }
    for t in after {
        if t.tier() == Tier::Life && t.regime == Some("gamble") {
            notes.push(safety::life_gamble(&t.id, safety::When::WithBestPlan, ""));
        }
    }
    notes
}

/// "Worst stabilization 81.0 %, at most 93.0 % possible", one line per tier
/// below its secure level, or "at most" unknown.
fn bound_lines(bounds: &TierBounds) -> String {
    let mut out = String::new();
    for b in &bounds.tiers {
        let cap = match b.upper_bound {
            Some(u) if bounds.complete(b.tier) => format!("at most {} possible", pct(u)),
            Some(u) => format!(
                "at most {} possible (bound cut short by the time limit; a longer budget may lower it)",
                pct(u)
            ),
            None => "no bound known".to_string(),
        };
        out.push_str(&format!(
            "    Worst {} {}, {cap}\n",
            b.tier.as_str(),
            pct(b.worst_odds)
        ));
    }
    if !out.is_empty() {
        out.insert_str(
            0,
            "  Bounds (with the tiers above kept at least where this plan has them):\n",
        );
        out.push('\n');
    }
    out
}

/// The one-line progress of a long plan: the worst odds of the first tier
/// below its secure level (else of all tasks) and the work done.
fn progress_words(incident: &Incident, p: &crate::solver::Progress) -> String {
    let worst = p.key.worst_odds_per_tier();
    let short = p
        .key
        .first_short_tier(&crate::solver::key::ln_caps(incident));
    let head = match short {
        Some(t) => format!("worst {} {}", t.as_str(), pct_or_dash(worst[t.index()])),
        None => format!("every tier secure, worst {}", pct(p.key.min_odds())),
    };
    // The search's bound is of the first tier short when it was computed;
    // the search may have lifted that tier since.
    let bound = match p.bound.and_then(|b| Some((b.tier, b.upper_bound?))) {
        Some((tier, u)) if short == Some(tier) => format!(", at most {} possible", pct(u)),
        Some((tier, u)) => format!(" ({} at most {} possible)", tier.as_str(), pct(u)),
        None => String::new(),
    };
    format!(
        "{head}{bound}; {} moves scored, {:.1} s",
        p.iterations,
        p.elapsed.as_secs_f64()
    )
}

fn check_args(args: &Args) -> anyhow::Result<()> {
    if !(0.0..1.0).contains(&args.slack) || args.slack.is_nan() {
        anyhow::bail!("--slack: must be in [0, 1), got {}", args.slack);
    }
    if !args.lambda.is_finite() || args.lambda < 0.0 {
        anyhow::bail!("--lambda: must be a finite number ≥ 0, got {}", args.lambda);
    }
    Ok(())
}

pub fn run(args: Args) -> CliResult {
    check_args(&args)?;
    let incident = load_state(&args.file)?;
    let (incident, what_if) = match &args.what_if {
        Some(ev) => {
            let (inc, summary) = super::advise::what_if_state(incident, ev, &args.file)?;
            (inc, Some(summary))
        }
        None => (incident, None),
    };
    // The budget counts from here (loading aside).
    let start = Instant::now();
    let options = SolveOptions {
        budget: Duration::from_millis(args.budget_ms).saturating_sub(bound_reserve(args.budget_ms)),
        seed: args.seed,
        slack: args.slack,
        from_scratch: args.from_scratch,
        threads: args
            .threads
            .map_or_else(crate::solver::available_threads, usize::from),
        ..SolveOptions::default()
    };
    let cancel = AtomicBool::new(false);
    let what = format!("planning (budget {:.1} s)", args.budget_ms as f64 / 1e3);
    let work = (args.budget_ms > 1000).then(|| super::progress::Work::spinner(&what, args.json));
    let report = solve(&incident, &options, &cancel, &mut |p| {
        if let Some(w) = &work {
            w.set_message(&format!("{what}: {}", progress_words(&incident, p)));
        }
    });
    drop(work);
    let report = report.map_err(|e| anyhow::anyhow!("{}: {e}", args.file.display()))?;
    let before = task_views(&incident, &incident.placement);
    let after = task_views(&incident, &report.placement);
    let compare = args
        .compare
        .then(|| compare_rows(&incident, &args, &report));
    let notes = plan_notes(&incident, &report, &after);
    let joint_before = joint_by_tier(&incident, &incident.placement, JointOptions::default());
    let joint_after = joint_by_tier(&incident, &report.placement, JointOptions::default());
    // Last, in what is left of the budget (the joint odds take 0.3 s at
    // 10 000 × 1 000).
    let bounds = tier_bounds(
        &incident,
        &report.placement,
        &RelaxOptions {
            time_limit: bound_time(args.budget_ms, start.elapsed()),
            ..RelaxOptions::default()
        },
        &cancel,
    );
    let upper_bound = overall_bound(&report, &bounds);
    let solve_ms = report.elapsed.as_secs_f64() * 1e3;

    if args.json {
        let doc = PlanJson {
            incident: &incident.name,
            placement: placement_view(&incident, &report.placement),
            moves: move_views(&incident, &report.moves),
            withdrawals: report.disruption.withdrawals,
            dispatches: report.disruption.dispatches,
            min_odds: min_odds(&after),
            min_odds_before: min_odds(&before),
            joint_odds: joint_after.view(),
            joint_odds_before: joint_before.view(),
            joint_detail: joint_after.details(),
            tasks: after,
            tasks_before: before,
            proven_optimal: report.proven_optimal,
            upper_bound,
            bounds: bound_views(&bounds),
            solve_ms,
            iterations: report.iterations,
            stop: report.stop.as_str(),
            seed: args.seed,
            slack: args.slack,
            from_scratch: args.from_scratch,
            compare,
            what_if,
            notes,
            cautions: &safety::CAUTIONS,
        };
        super::json::print_pretty(&doc)?;
        return Ok(());
    }

    let mut out = what_if
        .as_ref()
        .map_or_else(String::new, super::advise::what_if_header);
    out.push_str(&format!("{}: recommended placement\n", incident.name));
    let proof = if report.proven_optimal {
        "proven optimal".to_string()
    } else {
        match upper_bound {
            Some(b) => format!(
                "best found, not proven; the worst odds of any plan are at most {}",
                pct(b)
            ),
            None => "best found, not proven".to_string(),
        }
    };
    out.push_str(&format!(
        "  {proof}; solved in {solve_ms:.1} ms ({}, seed {}{})\n\n",
        report.stop.as_str().replace('_', " "),
        args.seed,
        if args.from_scratch {
            ", from scratch"
        } else {
            ""
        }
    ));

    if report.moves.is_empty() {
        out.push_str(
            "Moves: none. The placement on the ground keeps every task within the slack of the best it can reach.\n\n",
        );
    } else {
        out.push_str(&format!(
            "Moves ({}): {}\n",
            report.moves.len(),
            disruption_words(report.disruption)
        ));
        // Withdrawals first: they need disengagement and accountability.
        let mut listed: Vec<&Move> = report.moves.iter().collect();
        listed.sort_by_key(|m| {
            std::cmp::Reverse(unit_disruption(&incident, m.from, m.to).withdrawals)
        });
        // A unit taken off a task into reserve is there for the reserve
        // minimum when the plan leaves the reserve exactly at it: say so.
        let held = crate::rules::reserve_held_at_minimum(&incident, &report.placement);
        for m in listed {
            let why = crate::rules::reserve_reason(held, m.from, m.to)
                .map(|r| format!(" ({r})"))
                .unwrap_or_default();
            out.push_str(&format!(
                "  {}: {} → {}{why}\n",
                incident.units[m.unit].id,
                task_name(&incident, m.from),
                task_name(&incident, m.to)
            ));
        }
        out.push('\n');
    }

    out.push_str("Odds before → after:\n");
    for tier in Tier::ALL {
        let rows: Vec<(&TaskView, &TaskView)> = before
            .iter()
            .zip(&after)
            .filter(|(b, _)| b.tier() == tier)
            .collect();
        if rows.is_empty() {
            continue;
        }
        out.push_str(&format!(
            "  {} (secure at {})\n",
            tier_title(tier),
            pct(incident.secure.get(tier))
        ));
        let mut cols = Columns::new(
            &["task", "before", "", "after", "regime", "binding", "units"],
            &[false, true, false, true, false, false, false],
        );
        for (b, a) in rows {
            cols.push(vec![
                a.id.clone(),
                pct_detail(b.ln_odds, b.ln_fail),
                "→".into(),
                pct_detail(a.ln_odds, a.ln_fail),
                regime_words(a.regime).to_string(),
                a.binding_trait.clone().unwrap_or_else(|| "-".into()),
                a.units.join(" "),
            ]);
        }
        out.push_str(&cols.render(4));
    }
    out.push_str(&format!(
        "\n  Worst odds: {} → {}\n\n",
        worst_cell(&before),
        worst_cell(&after)
    ));
    out.push_str(&bound_lines(&bounds));
    out.push_str(&joint_before_after(&joint_before, &joint_after));

    if let Some(rows) = &compare {
        out.push_str(&format!(
            "Compared (every plan scored by the same odds model; per tier worst / mean odds; verdict entry by entry within the {} % slack):\n",
            args.slack * 100.0
        ));
        let mut cols = Columns::new(
            &[
                "plan",
                "life",
                "stab.",
                "property",
                "all tasks",
                "hedge/gamble",
                "withdrawn",
                "dispatched",
                "ms",
                "verdict",
            ],
            &[false, true, true, true, true, true, true, true, true, false],
        );
        for r in rows {
            let tier = |t: &str| match (r.worst_by_tier.get(t), r.mean_by_tier.get(t)) {
                (Some(w), Some(m)) => format!("{} / {}", pct(*w), pct(*m)),
                _ => "-".to_string(),
            };
            cols.push(vec![
                r.name.clone(),
                tier("life"),
                tier("stabilization"),
                tier("property"),
                pct(r.all_tasks_odds),
                format!("{}/{}", r.regimes.hedge, r.regimes.gamble),
                r.withdrawals.to_string(),
                r.dispatches.to_string(),
                format!("{:.1}", r.solve_ms),
                r.verdict.to_string(),
            ]);
        }
        out.push_str(&cols.render(2));
        for r in rows.iter().skip(1) {
            let text = wrap(
                &format!("{}: {} — {}", r.name, r.verdict, r.why),
                74,
                "    ",
            );
            out.push_str("  ·");
            out.push_str(text.get(3..).unwrap_or_default());
        }
        out.push('\n');
    }

    if !notes.is_empty() {
        out.push_str("Before moving:\n");
        for n in &notes {
            out.push_str(&wrap(n, 76, "  ! "));
        }
        out.push('\n');
    }
    out.push_str(&footer(&after));
    print!("{}", crate::clean::clean_lines(&out));
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_bounds_get_what_the_search_left_of_the_budget() {
        let ms = Duration::from_millis;
        // The search keeps a quarter for the bounds (0.1–3 s).
        assert_eq!(bound_reserve(2000), ms(500));
        assert_eq!(bound_reserve(0), ms(100));
        assert_eq!(bound_reserve(60_000), ms(3000));
        // What is left, up to half the budget (0.2–3 s), at least 0.1 s.
        assert_eq!(bound_time(2000, ms(1800)), ms(200));
        assert_eq!(bound_time(2000, ms(100)), ms(1000));
        assert_eq!(bound_time(2000, ms(2500)), ms(100));
        assert_eq!(bound_time(0, ms(0)), ms(100));
        assert_eq!(bound_time(60_000, ms(1000)), ms(3000));
    }
}
