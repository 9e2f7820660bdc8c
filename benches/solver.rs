//! Solver benchmarks on seeded, invented incidents (see docs/performance.md,
//! section Solver).
//!
//! `cargo bench --bench solver` times, with criterion:
//! * the first plan at 600 × 40 × 5 (budget 0: greedy fill only);
//! * the proof at 12 × 3 × 2;
//! * the re-plan after one placed unit is lost at 100 × 15 × 4.
//!
//! With `ODDSBOARD_FIGURES=1` it first prints the figures that are not a
//! single timing: how far proof reaches within 1 s and 10 s (with and
//! without identical units), the key after 0.1, 0.5 and 2 s at 600 × 40 × 5,
//! the re-plan time distribution, and the baselines side by side.

use criterion::{Criterion, criterion_group};
use oddsboard::model::Incident;
use oddsboard::model::generate::{GenerateSpec, generate};
use oddsboard::solver::{ObjectiveKey, SolveOptions, SolveReport, baselines, solve};
use std::hint::black_box;
use std::sync::atomic::AtomicBool;
use std::time::{Duration, Instant};

fn incident(units: usize, tasks: usize, traits: usize, seed: u64) -> Incident {
    match generate(&GenerateSpec::new(units, tasks, traits).seed(seed)) {
        Ok(i) => i,
        Err(e) => panic!("generated incident does not load: {e}"),
    }
}

/// Every unit a little different from every other (means scaled by
/// 1 + 0.001·i): no two units are interchangeable.
fn distinct(mut inc: Incident) -> Incident {
    for (i, u) in inc.units.iter_mut().enumerate() {
        for r in &mut u.ratings {
            r.mean *= 1.0 + 0.001 * (i + 1) as f64;
        }
    }
    inc
}

/// Every unit back to its type's ratings and in service: many identical units.
fn identical(mut inc: Incident) -> Incident {
    for u in &mut inc.units {
        u.ratings = inc.unit_types[u.type_idx].ratings.clone();
        u.status = oddsboard::model::UnitStatus::Available;
    }
    inc
}

fn run(inc: &Incident, opts: &SolveOptions) -> SolveReport {
    match solve(inc, opts, &AtomicBool::new(false), &mut |_| {}) {
        Ok(r) => r,
        Err(e) => panic!("infeasible: {e}"),
    }
}

fn scratch(budget: Duration) -> SolveOptions {
    SolveOptions {
        budget,
        from_scratch: true,
        ..SolveOptions::default()
    }
}

/// The 100 × 15 × 4 incident with a solved plan on the ground, and the same
/// incident after the placed unit with the most mean capability is lost.
fn loss_pair(seed: u64) -> (Incident, Incident) {
    let mut inc = incident(100, 15, 4, seed);
    // A fixed amount of search work (not a clock budget), so the ground and
    // hence the re-plan figures are the same on every machine and run.
    let r = run(
        &inc,
        &SolveOptions {
            max_epochs: 40,
            ..scratch(Duration::from_secs(60))
        },
    );
    inc.placement = r.placement;
    let lost = oddsboard::model::UnitIdx::range(inc.units.len())
        .filter(|&u| inc.placement.get(u).is_some() && !inc.pins.contains_key(&u))
        .max_by(|&a, &b| {
            let s = |u: oddsboard::model::UnitIdx| {
                inc.units[u].ratings.iter().map(|r| r.mean).sum::<f64>()
            };
            s(a).total_cmp(&s(b))
        })
        .unwrap_or(oddsboard::model::UnitIdx::new(0));
    let mut after = inc.clone();
    after.remove_unit(lost);
    (inc, after)
}

/// The incident of [`loss_pair`] with its ground re-settled by the stable
/// rule (up to three re-plans, until one proposes no move): the ground a
/// commander who accepted each recommendation would have, before the loss.
fn resettled(seed: u64) -> Incident {
    let (mut inc, _) = loss_pair(seed);
    for _ in 0..3 {
        let r = run(&inc, &replan_options());
        if r.moves.is_empty() {
            break;
        }
        inc.placement = r.placement;
    }
    inc
}

/// As [`loss_pair`], but the unit lost is the strongest (or the weakest)
/// one placed on a task above its tier's secure level (a well-resourced
/// task; `None` when no task is): a loss the task may absorb.
fn loss_pair_above_cap(seed: u64, strongest: bool) -> Option<(Incident, Incident)> {
    let (inc, _) = loss_pair(seed);
    lose_above_cap(inc, strongest)
}

/// The loss of [`loss_pair_above_cap`] from `inc`'s ground.
fn lose_above_cap(inc: Incident, strongest: bool) -> Option<(Incident, Incident)> {
    let odds = oddsboard::odds::evaluate(&inc, &inc.placement);
    let above = |t: oddsboard::model::TaskIdx| {
        let cap = oddsboard::solver::key::ln_cap(&inc, inc.tasks[t].tier);
        odds[t.index()].ln_odds > cap
    };
    let lost = oddsboard::model::UnitIdx::range(inc.units.len())
        .filter(|&u| !inc.pins.contains_key(&u) && inc.placement.get(u).is_some_and(above))
        .max_by(|&a, &b| {
            let s = |u: oddsboard::model::UnitIdx| {
                inc.units[u].ratings.iter().map(|r| r.mean).sum::<f64>()
            };
            if strongest {
                s(a).total_cmp(&s(b))
            } else {
                s(b).total_cmp(&s(a))
            }
        })?;
    let mut after = inc.clone();
    after.remove_unit(lost);
    Some((inc, after))
}

fn replan_options() -> SolveOptions {
    SolveOptions {
        budget: Duration::from_millis(1000),
        exact_max_units: 0,
        stale_rounds: 5,
        ..SolveOptions::default()
    }
}

fn fmt_key(k: &ObjectiveKey) -> String {
    let w = k.worst_odds_per_tier();
    let f = |x: Option<f64>| x.map_or("-".to_string(), |p| format!("{p:.4}"));
    format!(
        "life {} stab {} prop {} min {:.4}",
        f(w[0]),
        f(w[1]),
        f(w[2]),
        k.min_odds()
    )
}

/// `ODDSBOARD_FIGURES=1` prints every section; a section's name (`reach`,
/// `budget`, `replan`, `samples`, `baselines`, `search`, `speedup`,
/// `cancel`, `work`) prints only that one.
fn section(name: &str) -> bool {
    std::env::var("ODDSBOARD_FIGURES").is_ok_and(|v| v == "1" || v == name)
}

fn figures() {
    if section("reach") {
        proof_reach();
    }
    if section("budget") {
        key_after_budget();
    }
    if section("replan") {
        replan_after_loss();
    }
    if section("samples") {
        samples();
    }
    if section("baselines") {
        baselines_side_by_side();
    }
    if section("search") {
        search_after_budget();
    }
    if section("speedup") {
        speedup();
    }
    if section("cancel") {
        cancel_latency();
    }
    if section("work") {
        speedup_in_work();
    }
}

/// The load average over the last minute (Linux), to print beside times.
fn load() -> String {
    std::fs::read_to_string("/proc/loadavg")
        .ok()
        .and_then(|s| s.split_whitespace().next().map(str::to_string))
        .unwrap_or_else(|| "?".into())
}

/// The both-cores speed-up: wall time to a fixed key, one thread against
/// two, straight through the LNS. For each seed (1–`ODDSBOARD_SEEDS`,
/// default 10) the start is the greedy plan and one descent (as in a solve
/// from scratch; not timed), then `ODDSBOARD_EPOCHS` (default 30) LNS
/// epochs with one thread and with two. The fixed key is the worst of the
/// one-thread final keys, so every run reaches it; each run's time to it is
/// its first epoch report at least as good. The two runs of a seed commit
/// the same steps (the speculative LNS), so they reach the key at the same
/// epoch; the work beside them counts the steps run ahead and thrown away.
/// The times depend on the machine and its load (printed).
fn speedup_in_work() {
    use oddsboard::solver::lns::{LnsLimits, lns};
    use oddsboard::solver::search::{Ctx, SearchLimits, State, greedy_fill, local_search};
    let env = |k: &str, d: u64| {
        std::env::var(k)
            .ok()
            .and_then(|x| x.parse().ok())
            .unwrap_or(d)
    };
    let (epochs, seeds) = (env("ODDSBOARD_EPOCHS", 30), env("ODDSBOARD_SEEDS", 10));
    println!(
        "== time to a fixed key, one vs two threads (LNS from the first descent, seeds 1-{seeds}, {epochs} epochs) =="
    );
    let never = AtomicBool::new(false);
    let budget = oddsboard::solver::Budget::new(Duration::from_secs(3600), &never);
    for (name, inc) in search_incidents() {
        let ctx = Ctx::new(&inc);
        // (seed, threads, [(s, key) per epoch], steps, changed, discarded, s)
        let mut runs = Vec::new();
        println!("  {name}: load {} before", load());
        for seed in 1..=seeds {
            let mut s = State::new(
                &ctx,
                &oddsboard::model::Placement::all_reserve(inc.units.len()),
            );
            greedy_fill(&ctx, &mut s, None);
            let limits = SearchLimits {
                stale_rounds: 1,
                max_rounds: 1,
            };
            let start = local_search(&ctx, s, seed, &limits, &budget, &mut |_, _, _| {}).best;
            for threads in [1usize, 2] {
                let mut trace: Vec<(f64, ObjectiveKey)> = Vec::new();
                let t0 = Instant::now();
                let out = lns(
                    &ctx,
                    start.clone(),
                    seed,
                    &LnsLimits {
                        threads,
                        stale_epochs: u64::MAX,
                        max_epochs: epochs,
                    },
                    &budget,
                    &mut |_, k, _, _| trace.push((t0.elapsed().as_secs_f64(), k.clone())),
                );
                let total = t0.elapsed().as_secs_f64();
                runs.push((
                    seed,
                    threads,
                    trace,
                    out.steps,
                    out.changed,
                    out.discarded,
                    total,
                ));
            }
        }
        let Some(target) = runs
            .iter()
            .filter(|r| r.1 == 1)
            .filter_map(|r| r.2.last().map(|x| x.1.clone()))
            .min_by(|a, b| a.compare(b))
        else {
            continue;
        };
        println!("  {name}: fixed key {}", fmt_key(&target));
        let mut to_key = [0f64; 2];
        let mut all = [0f64; 2];
        let mut work = [0u64; 2];
        for (seed, threads, trace, steps, changed, discarded, total) in &runs {
            let i = threads - 1;
            let hit = trace
                .iter()
                .position(|(_, k)| k.compare(&target) != std::cmp::Ordering::Less);
            let Some(p) = hit else {
                println!("    seed {seed} t{threads}: not reached");
                continue;
            };
            to_key[i] += trace[p].0;
            all[i] += total;
            work[i] += steps + discarded;
            println!(
                "    seed {seed} t{threads}: key at epoch {} in {:.3} s; {epochs} epochs {:.3} s, {steps} steps ({changed} changed), {discarded} discarded; final {}",
                p + 1,
                trace[p].0,
                total,
                trace.last().map_or("-".into(), |x| fmt_key(&x.1))
            );
        }
        println!(
            "  {name}: time to the key, sum over seeds: 1 thread {:.2} s, 2 threads {:.2} s: speed-up {:.2}x; all {epochs} epochs {:.2} s / {:.2} s: {:.2}x; steps run {} / {} (load {} after)",
            to_key[0],
            to_key[1],
            to_key[0] / to_key[1].max(1e-9),
            all[0],
            all[1],
            all[0] / all[1].max(1e-9),
            work[0],
            work[1],
            load()
        );
    }
}

/// How long a solve takes to return after its cancel flag is raised, two
/// threads, from scratch, flag raised 50–500 ms in (by a timer thread);
/// then the stable re-plan from the ground of a 10 000 × 1 000 × 6 incident
/// (first plan, rule), flag raised 20–500 ms in.
fn cancel_latency() {
    println!("== cancel latency, two threads (from scratch) ==");
    for (name, inc) in search_incidents() {
        cancel_runs(name, &inc, true, &[50, 120, 200, 350, 500]);
    }
    let only = std::env::var("ODDSBOARD_INCIDENT").unwrap_or_default();
    if only.is_empty() || only.split(',').any(|o| o == "10000x1000x6") {
        println!("== cancel latency, two threads (re-plan from the ground) ==");
        let inc = incident(10_000, 1_000, 6, 1);
        cancel_runs("10000x1000x6", &inc, false, &[20, 100, 300, 500, 900]);
    }
}

fn cancel_runs(name: &str, inc: &Incident, from_scratch: bool, delays: &[u64]) {
    let mut lat = Vec::new();
    for (i, &delay_ms) in delays.iter().enumerate() {
        let cancel = std::sync::Arc::new(AtomicBool::new(false));
        let flag = cancel.clone();
        let raised = std::sync::Arc::new(std::sync::Mutex::new(None::<Instant>));
        let at = raised.clone();
        let timer = std::thread::spawn(move || {
            std::thread::sleep(Duration::from_millis(delay_ms));
            if let Ok(mut g) = at.lock() {
                *g = Some(Instant::now());
            }
            flag.store(true, std::sync::atomic::Ordering::Relaxed);
        });
        let opts = SolveOptions {
            threads: 2,
            seed: i as u64,
            stale_rounds: u64::MAX,
            from_scratch,
            ..scratch(Duration::from_secs(600))
        };
        let r = match solve(inc, &opts, &cancel, &mut |_| {}) {
            Ok(r) => r,
            Err(e) => panic!("infeasible: {e}"),
        };
        let end = Instant::now();
        let _ = timer.join();
        let t0 = raised.lock().ok().and_then(|g| *g);
        if let Some(t0) = t0 {
            lat.push(end.duration_since(t0).as_secs_f64() * 1e3);
        }
        println!("  {name} cancel at {delay_ms} ms: stop {}", r.stop.as_str());
    }
    lat.sort_by(f64::total_cmp);
    println!("  {name}: latency ms (sorted) {lat:.2?}");
}

/// The benchmark incidents of issue 11 (seeded generator, seed 1; invented).
fn search_incidents() -> Vec<(&'static str, Incident)> {
    let only = std::env::var("ODDSBOARD_INCIDENT").unwrap_or_default();
    [
        ("600x40x5", (600, 40, 5)),
        ("300x40x5", (300, 40, 5)),
        ("2000x100x6", (2000, 100, 6)),
        ("60x12x3", (60, 12, 3)),
    ]
    .into_iter()
    .filter(|(n, _)| only.is_empty() || only.split(',').any(|o| o == *n))
    .map(|(n, (u, t, k))| (n, incident(u, t, k, 1)))
    .collect()
}

/// A solve from scratch that also returns the search's own best key (the
/// last improving progress report, before the rule) and the time each
/// improving report arrived.
fn run_search(inc: &Incident, opts: &SolveOptions) -> (SolveReport, Vec<(f64, ObjectiveKey)>) {
    let mut trace = Vec::new();
    let r = match solve(inc, opts, &AtomicBool::new(false), &mut |p| {
        if p.improved {
            trace.push((p.elapsed.as_secs_f64(), p.key.clone()));
        }
    }) {
        Ok(r) => r,
        Err(e) => panic!("infeasible: {e}"),
    };
    (r, trace)
}

/// Search key (before the rule) and the recommended plan after each budget,
/// one and two threads. `ODDSBOARD_BUDGETS=100,2000` picks the budgets (ms).
fn search_after_budget() {
    let budgets: Vec<u64> = std::env::var("ODDSBOARD_BUDGETS")
        .unwrap_or_else(|_| "100,500,2000,10000".into())
        .split(',')
        .filter_map(|x| x.parse().ok())
        .collect();
    println!("== search key after a budget (from scratch, seed 1) ==");
    for (name, inc) in search_incidents() {
        for &ms in &budgets {
            for threads in [1usize, 2] {
                let opts = SolveOptions {
                    threads,
                    seed: 1,
                    ..scratch(Duration::from_millis(ms))
                };
                let (r, trace) = run_search(&inc, &opts);
                let search = trace.last().map_or("-".into(), |(_, k)| fmt_key(k));
                println!(
                    "  {name} {ms:>5} ms t{threads}: search {search} | plan {} (stop {}, {:.0} ms, {} it)",
                    fmt_key(&r.key),
                    r.stop.as_str(),
                    r.elapsed.as_secs_f64() * 1e3,
                    r.iterations
                );
            }
        }
    }
}

/// Time for the search to reach a fixed key: the key one thread reaches
/// with `ODDSBOARD_TARGET_MS` (default 2000) of budget, seed 1; then each
/// thread count's first improving report at least as good, over seeds 1–5.
fn speedup() {
    let target_ms: u64 = std::env::var("ODDSBOARD_TARGET_MS")
        .ok()
        .and_then(|x| x.parse().ok())
        .unwrap_or(2000);
    println!("== time to a fixed key, one vs two threads (from scratch) ==");
    for (name, inc) in search_incidents() {
        for seed in 1..=5u64 {
            let base = SolveOptions {
                seed,
                ..scratch(Duration::from_millis(target_ms))
            };
            let (_, t1) = run_search(
                &inc,
                &SolveOptions {
                    threads: 1,
                    ..base.clone()
                },
            );
            let Some((_, target)) = t1.last().cloned() else {
                continue;
            };
            let reach = |trace: &[(f64, ObjectiveKey)]| {
                trace
                    .iter()
                    .find(|(_, k)| k.compare(&target) != std::cmp::Ordering::Less)
                    .map(|(t, _)| *t)
            };
            let (_, t2) = run_search(
                &inc,
                &SolveOptions {
                    threads: 2,
                    budget: Duration::from_millis(2 * target_ms),
                    ..base.clone()
                },
            );
            let (a, b) = (reach(&t1), reach(&t2));
            println!(
                "  {name} seed {seed}: target {} | 1 thread {:?} s, 2 threads {:?} s",
                fmt_key(&target),
                a,
                b
            );
        }
    }
}

/// The exact re-plan (the rule, from the ground) on the bundled samples.
fn samples() {
    println!("== bundled samples, stable re-plan (default options, 10 s budget) ==");
    for f in ["warehouse-fire", "river-flood", "building-collapse"] {
        let path = format!("{}/sample-incidents/{f}.yaml", env!("CARGO_MANIFEST_DIR"));
        let text = std::fs::read_to_string(&path).unwrap_or_default();
        let Ok(inc) = oddsboard::model::parse_incident_str(&text, &path) else {
            println!("  {f}: does not load");
            continue;
        };
        for from_scratch in [false, true] {
            let mut times = Vec::new();
            let mut last = None;
            for _ in 0..5 {
                let r = run(
                    &inc,
                    &SolveOptions {
                        budget: Duration::from_secs(10),
                        from_scratch,
                        ..SolveOptions::default()
                    },
                );
                times.push(r.elapsed.as_secs_f64() * 1e3);
                last = Some(r);
            }
            times.sort_by(f64::total_cmp);
            if let Some(r) = last {
                println!(
                    "  {f} from_scratch={from_scratch}: proven={} p50 {:.1} ms (min {:.1}, max {:.1}), {} iterations, {} withdrawals, {} dispatches",
                    r.proven_optimal,
                    times[2],
                    times[0],
                    times[4],
                    r.iterations,
                    r.disruption.withdrawals,
                    r.disruption.dispatches
                );
            }
        }
    }
}

fn proof_reach() {
    println!("== proof reach (from scratch, exact search at any size) ==");
    let sizes = [
        (12, 3, 2),
        (20, 4, 2),
        (30, 6, 3),
        (35, 7, 3),
        (40, 8, 3),
        (50, 10, 3),
        (60, 12, 3),
        (80, 15, 4),
        (100, 15, 4),
        (150, 20, 4),
    ];
    for ident in [false, true] {
        for budget_s in [1u64, 10] {
            let mut reach = None;
            for (u, t, k) in sizes {
                let inc = if ident {
                    identical(incident(u, t, k, 11))
                } else {
                    distinct(incident(u, t, k, 11))
                };
                let opts = SolveOptions {
                    exact_max_units: usize::MAX,
                    ..scratch(Duration::from_secs(budget_s))
                };
                let r = run(&inc, &opts);
                println!(
                    "  identical={ident} budget={budget_s}s {u}x{t}x{k}: proven={} in {:.1} ms ({} iterations)",
                    r.proven_optimal,
                    r.elapsed.as_secs_f64() * 1e3,
                    r.iterations
                );
                if r.proven_optimal {
                    reach = Some((u, t, k));
                } else {
                    break;
                }
            }
            println!("  => identical={ident} budget={budget_s}s: largest proved {reach:?}");
        }
    }
}

fn key_after_budget() {
    println!("== key after a budget, 600 x 40 x 5 (from scratch, seed 0) ==");
    let big = incident(600, 40, 5, 1);
    for ms in [0u64, 100, 500, 2000] {
        let r = run(&big, &scratch(Duration::from_millis(ms)));
        println!(
            "  {ms:>5} ms: {} (stop {}, {:.1} ms, {} iterations)",
            fmt_key(&r.key),
            r.stop.as_str(),
            r.elapsed.as_secs_f64() * 1e3,
            r.iterations
        );
    }
}

/// Seeds of the `replan` section: `ODDSBOARD_REPLAN_SEEDS=a-b` (inclusive),
/// default 0-9.
fn replan_seeds() -> std::ops::RangeInclusive<u64> {
    let v = std::env::var("ODDSBOARD_REPLAN_SEEDS").unwrap_or_default();
    let mut it = v.split('-').map(|x| x.trim().parse::<u64>());
    match (it.next(), it.next()) {
        (Some(Ok(a)), Some(Ok(b))) if a <= b => a..=b,
        _ => 0..=9,
    }
}

/// An early-stop run against the full rule's: time, stop, disruption,
/// verdict, and a flag when it gives up an entry beyond the slack or
/// disturbs more.
fn against_full(full: &SolveReport, early: &SolveReport) -> String {
    use oddsboard::solver::stable::{Verdict, verdict};
    let v = verdict(&full.key, &early.key, replan_options().slack);
    let bad = matches!(v, Verdict::Worse { .. }) || early.disruption > full.disruption;
    format!(
        "{:.2} ms, stop {}, {} withdrawals, {} dispatches ({}){}; {}",
        early.elapsed.as_secs_f64() * 1e3,
        early.stop.as_str(),
        early.disruption.withdrawals,
        early.disruption.dispatches,
        v.as_str(),
        if bad { " WORSE THAN THE FULL RULE" } else { "" },
        fmt_key(&early.key)
    )
}

fn replan_after_loss() {
    let seeds = replan_seeds();
    println!(
        "== re-plan after one loss, 100 x 15 x 4 (seeds {}-{}) ==",
        seeds.start(),
        seeds.end()
    );
    let mut first = Vec::new();
    let mut settled = Vec::new();
    let mut settled_slack0 = Vec::new();
    let mut with_ground = Vec::new();
    let mut absorbed = Vec::new();
    for seed in seeds {
        let (before, after) = loss_pair(seed);
        // The rule without threshold searches (slack 0), for the cost of
        // the sequential thresholds.
        let r00 = run(
            &after,
            &SolveOptions {
                slack: 0.0,
                ..replan_options()
            },
        );
        settled_slack0.push(r00.elapsed.as_secs_f64() * 1e3);
        let quick = SolveOptions {
            budget: Duration::ZERO,
            ..replan_options()
        };
        let t = Instant::now();
        let r0 = run(&after, &quick);
        first.push(t.elapsed().as_secs_f64() * 1e3);
        let r = run(&after, &replan_options());
        settled.push(r.elapsed.as_secs_f64() * 1e3);
        let r5 = run(
            &after,
            &SolveOptions {
                budget: Duration::from_millis(5),
                ..replan_options()
            },
        );
        let same = if r5.key.compare(&r.key) == std::cmp::Ordering::Less {
            "worse than settled"
        } else {
            "as good as settled"
        };
        println!(
            "  seed {seed}: 5 ms budget: {} moves, key {same} ({})",
            r5.moves.len(),
            fmt_key(&r5.key)
        );
        println!(
            "  seed {seed}: first proposal {:.2} ms ({} moves), settled {:.1} ms, stop {} ({} moves: {} withdrawals, {} dispatches; {}; {} moves scored)",
            first[first.len() - 1],
            r0.moves.len(),
            r.elapsed.as_secs_f64() * 1e3,
            r.stop.as_str(),
            r.moves.len(),
            r.disruption.withdrawals,
            r.disruption.dispatches,
            fmt_key(&r.key),
            r.iterations
        );
        // The settled key in full (ln, capped entries), to compare runs.
        println!("  seed {seed}: settled capped key {:?}", r.key.capped());
        // The same re-plan told that the ground before the loss was the
        // settled plan: it stops early where the loss is absorbed.
        let ra = run(
            &after,
            &SolveOptions {
                settled_before_loss: Some(before.placement.clone()),
                ..replan_options()
            },
        );
        with_ground.push(ra.elapsed.as_secs_f64() * 1e3);
        if ra.stop == oddsboard::solver::StopReason::LossAbsorbed {
            absorbed.push(ra.elapsed.as_secs_f64() * 1e3);
        }
        println!(
            "  seed {seed}: with the pre-loss ground: {}",
            against_full(&r, &ra)
        );
        println!("  seed {seed}: its capped key {:?}", ra.key.capped());
    }
    let p50 = |v: &mut Vec<f64>| {
        v.sort_by(f64::total_cmp);
        v[v.len() / 2]
    };
    println!(
        "  p50 first proposal {:.2} ms, p50 settled {:.1} ms, p50 settled with slack 0 {:.1} ms",
        p50(&mut first),
        p50(&mut settled),
        p50(&mut settled_slack0)
    );
    let (fired, n) = (absorbed.len(), with_ground.len());
    println!(
        "  with the pre-loss ground: the loss absorbed on {fired} of {n} seeds; p50 {:.2} ms over all seeds{}",
        p50(&mut with_ground),
        if fired > 0 {
            format!(", {:.2} ms over those absorbed", p50(&mut absorbed))
        } else {
            String::new()
        }
    );
    // A unit lost from a task above its secure level instead: the
    // strongest such unit, then the weakest; then the same from a ground
    // re-settled by the stable rule before the loss.
    for (which, strongest, settle) in [
        ("strongest", true, false),
        ("weakest", false, false),
        ("re-settled, strongest", true, true),
        ("re-settled, weakest", false, true),
    ] {
        let (mut full, mut early, mut hits, mut n) = (Vec::new(), Vec::new(), 0, 0);
        for seed in replan_seeds() {
            let pair = if settle {
                lose_above_cap(resettled(seed), strongest)
            } else {
                loss_pair_above_cap(seed, strongest)
            };
            let Some((before, after)) = pair else {
                println!("  seed {seed}, {which} above the cap: no task above its secure level");
                continue;
            };
            n += 1;
            let r = run(&after, &replan_options());
            let ra = run(
                &after,
                &SolveOptions {
                    settled_before_loss: Some(before.placement.clone()),
                    ..replan_options()
                },
            );
            full.push(r.elapsed.as_secs_f64() * 1e3);
            early.push(ra.elapsed.as_secs_f64() * 1e3);
            hits += usize::from(ra.stop == oddsboard::solver::StopReason::LossAbsorbed);
            println!(
                "  seed {seed}, {which} above the cap: full rule {:.1} ms ({} withdrawals, {} dispatches); with the pre-loss ground: {}",
                r.elapsed.as_secs_f64() * 1e3,
                r.disruption.withdrawals,
                r.disruption.dispatches,
                against_full(&r, &ra)
            );
        }
        if n > 0 {
            println!(
                "  {which} above the cap: absorbed on {hits} of {n} seeds; p50 full rule {:.1} ms, p50 with the pre-loss ground {:.2} ms",
                p50(&mut full),
                p50(&mut early)
            );
        }
    }
}

fn baselines_side_by_side() {
    println!("== baselines side by side (from scratch, 1 s) ==");
    for (u, t, k) in [(30, 6, 3), (100, 15, 4)] {
        let inc = incident(u, t, k, 1);
        let r = run(&inc, &scratch(Duration::from_secs(1)));
        println!("  {u}x{t}x{k} recommended: {}", fmt_key(&r.key));
        let ev = baselines::expected_value(&inc);
        let ms = baselines::mean_minus_spread(&inc, 1.0);
        let rnd = baselines::random_feasible(&inc, 0);
        for (name, p) in [
            ("expected value", ev),
            ("mean - spread", ms),
            ("random", rnd),
        ] {
            println!(
                "  {u}x{t}x{k} {name}: {}",
                fmt_key(&ObjectiveKey::of(&inc, &p))
            );
        }
    }
}

fn benches(c: &mut Criterion) {
    let big = incident(600, 40, 5, 1);
    c.bench_function("first_plan_600x40x5", |b| {
        b.iter(|| run(black_box(&big), &scratch(Duration::ZERO)))
    });
    let small = incident(12, 3, 2, 11);
    c.bench_function("proof_12x3x2", |b| {
        b.iter(|| {
            let r = run(black_box(&small), &scratch(Duration::from_secs(10)));
            assert!(r.proven_optimal);
            r
        })
    });
    let (_, after) = loss_pair(0);
    c.bench_function("replan_after_loss_100x15x4_first_proposal", |b| {
        b.iter(|| {
            run(
                black_box(&after),
                &SolveOptions {
                    budget: Duration::ZERO,
                    ..replan_options()
                },
            )
        })
    });
    c.bench_function("replan_after_loss_100x15x4_settled", |b| {
        b.iter(|| run(black_box(&after), &replan_options()))
    });
}

criterion_group! {
    name = solver;
    config = Criterion::default().sample_size(10).measurement_time(Duration::from_secs(5));
    targets = benches
}

fn main() {
    if let Ok(v) = std::env::var("ODDSBOARD_FIGURES") {
        figures();
        if v != "1" {
            // One section asked for: no criterion run.
            return;
        }
    }
    solver();
    Criterion::default().configure_from_args().final_summary();
}
