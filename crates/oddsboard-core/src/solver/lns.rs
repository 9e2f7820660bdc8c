//! Large-neighbourhood search (LNS) around the bottleneck, run by one or
//! more workers in epochs of fixed work, so that a seed and a thread count
//! always give the same plan.
//!
//! One LNS step: pick a bottleneck task f (the worst, sometimes one of the
//! next few), release its units and those of a few tasks holding units f
//! accepts (the units it could use), refill the board with a randomised
//! greedy (the worst task that a reserve unit improves takes the best such
//! unit, now and then the runner-up), then descend by best-improvement steps
//! around the first bottlenecks (move, swap, and the ejection chain "A's unit
//! to f, a unit from B or reserve to A"). The result replaces the current
//! plan when its key is not worse. Every candidate is scored from the tallies
//! it touches, in O(traits).
//!
//! Why: the plain local search certifies a local optimum by scanning every
//! task with every move and swap (tens of milliseconds at 600 × 40) and its
//! few random moves are undone by the next descent, so it sits on one plan
//! for seconds. Releasing the bottleneck together with the tasks holding its
//! useful units lets a whole group of units change hands at once.
//!
//! **Both cores.** Epoch e is `epoch_steps(e)` rounds. In a round each of
//! `threads` workers does one step from the same plan (worker 0 on the
//! calling thread, the others in a pool that lives as long as the search,
//! so no thread is started per round), favouring a different bottleneck
//! (worker w picks the w-th worst task half the time), and [`merge`] makes
//! the next round's plan: the best key leads, and each other worker that
//! improved on the round's plan is grafted on when its changes touch other
//! units and other tasks and the joined plan is better still. Syncing
//! after every step gives each round two draws at the next improvement;
//! syncing after 16 steps each let the second worker's trajectory run on
//! from a plan the merge then threw away (docs/performance.md has the
//! work counts of both).
//!
//! **Determinism.** Worker w of epoch e draws from one generator seeded by
//! (seed, e, w) for all its steps of that epoch; a step reads only the
//! round's plan, and the merge takes the workers' plans in worker order
//! (the lowest worker on ties), whatever order they finished in. The clock
//! and the cancel flag only decide how many epochs complete; an epoch cut
//! short is dropped whole. So the plan is a function of the incident, the
//! seed, the thread count and the number of completed epochs, and when the
//! search ends on its own (`stale_epochs` or `max_epochs`) it does not
//! depend on the machine at all. One thread follows the same trajectory as
//! before the pool (one generator per epoch, steps accepted when not worse).

use super::Budget;
use super::key::{ObjectiveKey, TaskChange, cmp_ln, compare_change_capped};
use super::search::{Ctx, State, apply_step, best_step_within, ln_odds_ignoring_minimum};
use crate::model::{TaskIdx, UnitIdx};
use crate::rules;
use rand::rngs::Xoshiro256PlusPlus;
use rand::{RngExt, SeedableRng};
use std::cmp::Ordering;
use std::sync::mpsc;

/// When the LNS stops on its own.
#[derive(Debug, Clone, Copy)]
pub struct LnsLimits {
    /// Workers per epoch (at least 1); 1 runs on the calling thread.
    pub threads: usize,
    /// Stop after this many epochs in a row without a better plan.
    pub stale_epochs: u64,
    /// Stop after this many epochs in all.
    pub max_epochs: u64,
}

pub struct LnsOutcome {
    pub best: State,
    pub best_key: ObjectiveKey,
    pub iterations: u64,
    /// Epochs completed (and merged).
    pub epochs: u64,
    /// Epochs whose next plan joined the changes of two or more workers.
    pub merged: u64,
    pub stopped_by_budget: bool,
}

/// Steps each worker does in epoch `e`: short first epochs keep small
/// budgets useful, longer ones keep the threads' start-up cost small.
pub fn epoch_steps(e: u64) -> u64 {
    1u64 << e.min(4)
}

/// The bottlenecks a descent step looks at (the worst few).
const DESCENT_TASKS: usize = 3;
/// Most descent steps after one refill.
const DESCENT_STEPS: usize = 64;
/// Ejection chains tried per bottleneck: the units of other tasks that
/// lift f most.
const CHAIN_HEADS: usize = 6;

/// SplitMix64 finaliser (Steele, Lea & Flood, "Fast splittable
/// pseudorandom number generators", OOPSLA 2014) over (seed, epoch, worker):
/// well-spread, independent-looking seeds for the workers.
pub fn worker_seed(seed: u64, epoch: u64, worker: u64) -> u64 {
    let mut z = seed
        ^ 0x6c6e_735f_7365_6564
        ^ epoch.wrapping_mul(0x9E37_79B9_7F4A_7C15)
        ^ worker.wrapping_mul(0xD1B5_4A32_D192_ED03);
    z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
    z ^ (z >> 31)
}

/// Runs the LNS from `start` until the limits, the budget or the cancel
/// flag stop it. `on_epoch(best, key, iterations, improved)` is called at
/// every epoch's end (progress), `improved` when the best plan got better.
pub fn lns(
    ctx: &Ctx,
    start: State,
    seed: u64,
    limits: &LnsLimits,
    budget: &Budget,
    on_epoch: &mut dyn FnMut(&State, &ObjectiveKey, u64, bool),
) -> LnsOutcome {
    let threads = limits.threads.max(1);
    if threads == 1 {
        return run_epochs(ctx, start, seed, limits, budget, on_epoch, &mut |_| {
            Vec::new()
        });
    }
    // A pool for the whole search: workers 1.. live as long as it, take
    // one round's start plan at a time and send back their step's plan
    // tagged with their number; worker 0 is the calling thread.
    std::thread::scope(|scope| {
        let (done_tx, done_rx) = mpsc::channel::<(usize, Option<Worker>)>();
        let mut jobs = Vec::with_capacity(threads - 1);
        for w in 1..threads {
            let (tx, rx) = mpsc::channel::<Job>();
            jobs.push(tx);
            let done_tx = done_tx.clone();
            scope.spawn(move || helper(ctx, seed, w, budget, &rx, &done_tx));
        }
        drop(done_tx);
        run_epochs(ctx, start, seed, limits, budget, on_epoch, &mut |job| {
            let mut out: Vec<Option<Worker>> = (1..threads).map(|_| None).collect();
            let sent: Vec<bool> = jobs.iter().map(|tx| tx.send(job.clone()).is_ok()).collect();
            let mut waiting = sent.iter().filter(|&&x| x).count();
            while waiting > 0 {
                // A worker gone (it panicked) counts as cut short.
                let Ok((w, r)) = done_rx.recv() else { break };
                out[w - 1] = r;
                waiting -= 1;
            }
            out
        })
        // `jobs` drops here: the workers' channels close and they end.
    })
}

/// One round's start, sent to every worker.
#[derive(Clone)]
struct Job {
    epoch: u64,
    base: State,
    base_key: ObjectiveKey,
}

/// A pool worker: one LNS step per job from the job's plan, its generator
/// seeded by (seed, epoch, worker) at the first job of each epoch.
fn helper(
    ctx: &Ctx,
    seed: u64,
    worker: usize,
    budget: &Budget,
    jobs: &mpsc::Receiver<Job>,
    done: &mpsc::Sender<(usize, Option<Worker>)>,
) {
    let mut rng: Option<(u64, Xoshiro256PlusPlus)> = None;
    while let Ok(job) = jobs.recv() {
        if rng.as_ref().is_none_or(|(e, _)| *e != job.epoch) {
            let s = worker_seed(seed, job.epoch, worker as u64);
            rng = Some((job.epoch, Xoshiro256PlusPlus::seed_from_u64(s)));
        }
        let Some((_, r)) = rng.as_mut() else { break };
        // A panic is reported as a step cut short, so the caller never
        // waits for a result that will not come.
        let out = std::panic::catch_unwind(std::panic::AssertUnwindSafe(|| {
            lns_step(ctx, &job.base, &job.base_key, r, worker, budget)
        }))
        .ok()
        .flatten();
        if done.send((worker, out)).is_err() {
            break;
        }
    }
}

/// The epochs, each `epoch_steps(e)` rounds; in a round every worker does
/// one LNS step from the round's start (worker 0 here, the others through
/// `others`, which returns their results in worker order) and [`merge`]
/// makes the next round's start.
fn run_epochs(
    ctx: &Ctx,
    start: State,
    seed: u64,
    limits: &LnsLimits,
    budget: &Budget,
    on_epoch: &mut dyn FnMut(&State, &ObjectiveKey, u64, bool),
    others: &mut dyn FnMut(&Job) -> Vec<Option<Worker>>,
) -> LnsOutcome {
    let mut cur = State::new(ctx, &start.placement());
    let mut cur_key = cur.key(ctx);
    let mut best = cur.clone();
    let mut best_key = cur_key.clone();
    let mut iterations = 0u64;
    let mut stale = 0u64;
    let mut epoch = 0u64;
    let mut merged = 0u64;
    let stopped_by_budget = 'epochs: loop {
        if stale >= limits.stale_epochs || epoch >= limits.max_epochs {
            break false;
        }
        if budget.exhausted() || ctx.movable.is_empty() {
            break budget.exhausted();
        }
        let mut rng = Xoshiro256PlusPlus::seed_from_u64(worker_seed(seed, epoch, 0));
        let (mut e_cur, mut e_key) = (cur.clone(), cur_key.clone());
        let (mut e_iterations, mut e_merged) = (0u64, 0u64);
        for _ in 0..epoch_steps(epoch) {
            let job = Job {
                epoch,
                base: e_cur,
                base_key: e_key,
            };
            let rest = others(&job);
            let mine = lns_step(ctx, &job.base, &job.base_key, &mut rng, 0, budget);
            let results: Vec<Option<Worker>> = std::iter::once(mine).chain(rest).collect();
            if results.iter().any(Option::is_none) {
                // Cut short by the budget or the cancel flag: the epoch is
                // dropped whole.
                break 'epochs true;
            }
            let workers: Vec<Worker> = results.into_iter().flatten().collect();
            e_iterations += workers.iter().map(|r| r.iterations).sum::<u64>();
            let Some(next) = merge(ctx, &job.base, workers) else {
                break 'epochs false;
            };
            e_merged += u64::from(next.grafted);
            e_cur = next.state;
            e_key = next.key;
        }
        epoch += 1;
        iterations += e_iterations;
        merged += e_merged;
        cur = e_cur;
        cur_key = e_key;
        let improved = cur_key.better_than(&best_key);
        if improved {
            best = cur.clone();
            best_key = cur_key.clone();
            stale = 0;
        } else {
            stale += 1;
        }
        on_epoch(&best, &best_key, iterations, improved);
    };
    LnsOutcome {
        best,
        best_key,
        iterations,
        epochs: epoch,
        merged,
        stopped_by_budget,
    }
}

struct Worker {
    state: State,
    key: ObjectiveKey,
    iterations: u64,
}

/// An epoch's next plan.
struct Next {
    state: State,
    key: ObjectiveKey,
    /// It joins the changes of two or more workers.
    grafted: bool,
}

/// The epoch's next plan from the workers' plans, in worker order: the best
/// key (the lowest worker on ties), then each other worker that improved on
/// `base` grafted on when its changes touch units and tasks that none of
/// the plan's changes touch, the reserve stays at its minimum, and the key
/// gets better. Raising the bottleneck and, in another worker, the next
/// worst task are then both kept: the second worker's work is not lost.
fn merge(ctx: &Ctx, base: &State, workers: Vec<Worker>) -> Option<Next> {
    let inc = ctx.inc;
    let base_key = base.key(ctx);
    let lead = (0..workers.len()).fold(None, |b: Option<usize>, i| match b {
        Some(j) if !workers[i].key.better_than(&workers[j].key) => Some(j),
        _ => Some(i),
    })?;
    let diff = |s: &State| -> Vec<UnitIdx> {
        ctx.movable
            .iter()
            .copied()
            .filter(|&u| s.place[u] != base.place[u])
            .collect()
    };
    let mut unit_used = vec![false; inc.units.len()];
    let mut task_used = vec![false; inc.tasks.len()];
    let mark = |d: &[UnitIdx], s: &State, unit_used: &mut [bool], task_used: &mut [bool]| {
        for &u in d {
            unit_used[u.index()] = true;
            for t in [s.place[u], base.place[u]].into_iter().flatten() {
                task_used[t.index()] = true;
            }
        }
    };
    let mut next = Next {
        state: workers[lead].state.clone(),
        key: workers[lead].key.clone(),
        grafted: false,
    };
    if !next.key.better_than(&base_key) {
        return Some(next);
    }
    mark(
        &diff(&next.state),
        &next.state,
        &mut unit_used,
        &mut task_used,
    );
    for (i, w) in workers.iter().enumerate() {
        if i == lead || !w.key.better_than(&base_key) {
            continue;
        }
        let d = diff(&w.state);
        let clash = d.iter().any(|&u| {
            unit_used[u.index()]
                || [w.state.place[u], base.place[u]]
                    .into_iter()
                    .flatten()
                    .any(|t| task_used[t.index()])
        });
        if clash {
            continue;
        }
        let mut p = next.state.placement();
        for &u in &d {
            p.0[u.index()] = w.state.place[u];
        }
        // Task counts: each touched task is as in one feasible plan.
        let cand = State::new(ctx, &p);
        if cand.reserve < next.state.reserve.min(w.state.reserve)
            && rules::reserve_short(inc, cand.reserve as usize)
        {
            continue;
        }
        let k = cand.key(ctx);
        if k.better_than(&next.key) {
            mark(&d, &w.state, &mut unit_used, &mut task_used);
            next = Next {
                state: cand,
                key: k,
                grafted: true,
            };
        }
    }
    Some(next)
}

/// One LNS step from `start`: the step's plan when its key is not worse,
/// else `start` again. `None` when the budget ended first.
fn lns_step(
    ctx: &Ctx,
    start: &State,
    start_key: &ObjectiveKey,
    rng: &mut Xoshiro256PlusPlus,
    worker: usize,
    budget: &Budget,
) -> Option<Worker> {
    let mut iterations = 0u64;
    let mut s = start.clone();
    release(ctx, &mut s, worker, rng);
    // Any part cut by the budget makes the step (and the epoch) depend on
    // the clock: drop it.
    if !refill(ctx, &mut s, rng, &mut iterations, budget)
        || !descend(ctx, &mut s, &mut iterations, budget)
        || budget.exhausted()
    {
        return None;
    }
    // Fresh sums, so rounding never piles up across steps.
    let s = State::new(ctx, &s.placement());
    let k = s.key(ctx);
    Some(if k.compare(start_key) != Ordering::Less {
        Worker {
            state: s,
            key: k,
            iterations,
        }
    } else {
        Worker {
            state: start.clone(),
            key: start_key.clone(),
            iterations,
        }
    })
}

/// Sends the units of a bottleneck task, and those of a few tasks holding
/// units it accepts, to reserve.
fn release(ctx: &Ctx, s: &mut State, worker: usize, rng: &mut Xoshiro256PlusPlus) {
    let inc = ctx.inc;
    let order = s.bottlenecks(ctx);
    if order.is_empty() {
        return;
    }
    let top = order.len().min(4);
    // Worker w favours the w-th worst task, so that two workers tend to
    // raise different tasks and [`merge`] can keep both.
    let f = if rng.random_bool(0.5) {
        order[worker % top]
    } else {
        order[rng.random_range(0..top)]
    };
    // How many units each other task holds that f accepts.
    let mut useful = vec![0u32; inc.tasks.len()];
    for &u in &ctx.movable {
        if let Some(a) = s.place[u]
            && a != f
            && ctx.allowed_on[u][f]
        {
            useful[a] += 1;
        }
    }
    let mut holders: Vec<(f64, TaskIdx)> = TaskIdx::range(inc.tasks.len())
        .filter(|&a| useful[a] > 0)
        .map(|a| (f64::from(useful[a]) * rng.random_range(0.5..1.5), a))
        .collect();
    holders.sort_by(|x, y| y.0.total_cmp(&x.0).then(x.1.cmp(&y.1)));
    let k = 1 + rng.random_range(0..3usize);
    let mut chosen = vec![false; inc.tasks.len()];
    chosen[f] = true;
    for &(_, a) in holders.iter().take(k) {
        chosen[a] = true;
    }
    for &u in &ctx.movable {
        let Some(a) = s.place[u] else { continue };
        if !chosen[a] {
            continue;
        }
        // All of f's units; the useful ones of the holders, and the others
        // half the time (room for a different mix).
        if a == f || ctx.allowed_on[u][f] || rng.random_bool(0.5) {
            s.apply_move(inc, u, None);
        }
    }
}

/// Randomised greedy fill from reserve: the worst task (key order) that a
/// reserve unit improves takes the unit that raises its odds most, or the
/// runner-up one time in six. Returns false when the budget ended.
fn refill(
    ctx: &Ctx,
    s: &mut State,
    rng: &mut Xoshiro256PlusPlus,
    iterations: &mut u64,
    budget: &Budget,
) -> bool {
    let inc = ctx.inc;
    let mut reserve: Vec<UnitIdx> = ctx
        .movable
        .iter()
        .copied()
        .filter(|&u| s.place[u].is_none())
        .collect();
    // A task no reserve unit improves stays so: the reserve only shrinks.
    let mut dead = vec![false; inc.tasks.len()];
    let mut seen = vec![false; ctx.n_groups];
    loop {
        if reserve.is_empty() || !ctx.may_draw_reserve(s.reserve) {
            return true;
        }
        if budget.exhausted() {
            return false;
        }
        let order = s.bottlenecks(ctx);
        let mut pick: Option<(TaskIdx, usize)> = None;
        for &t in &order {
            if dead[t] || ctx.is_full(t, s.tallies[t].count()) {
                continue;
            }
            let below_min = s.ln[t] == f64::NEG_INFINITY;
            let mut best: Option<(usize, f64)> = None;
            let mut second: Option<(usize, f64)> = None;
            seen.iter_mut().for_each(|x| *x = false);
            for (i, &u) in reserve.iter().enumerate() {
                if !ctx.allowed_on[u][t] || seen[ctx.group[u]] {
                    continue;
                }
                seen[ctx.group[u]] = true;
                *iterations += 1;
                s.tallies[t].add(inc, u);
                let ln = if below_min {
                    ln_odds_ignoring_minimum(&s.tallies[t], inc, t)
                } else {
                    s.tallies[t].ln_odds(&inc.tasks[t])
                };
                s.tallies[t].remove(inc, u);
                if !below_min && cmp_ln(ln, s.ln[t]) != Ordering::Greater {
                    continue;
                }
                if best.is_none_or(|(_, b)| cmp_ln(ln, b) == Ordering::Greater) {
                    second = best;
                    best = Some((i, ln));
                } else if second.is_none_or(|(_, b)| cmp_ln(ln, b) == Ordering::Greater) {
                    second = Some((i, ln));
                }
            }
            let choice = match (best, second) {
                (Some(_), Some(b)) if rng.random_range(0..6u32) == 0 => Some(b),
                (b, _) => b,
            };
            match choice {
                Some((i, _)) => {
                    pick = Some((t, i));
                    break;
                }
                None => dead[t] = true,
            }
        }
        let Some((t, i)) = pick else {
            return true;
        };
        let u = reserve.swap_remove(i);
        s.apply_move(inc, u, Some(t));
    }
}

/// Best-improvement descent around the worst few tasks, with ejection
/// chains when no single move or swap helps. Returns false when the budget
/// ended.
fn descend(ctx: &Ctx, s: &mut State, iterations: &mut u64, budget: &Budget) -> bool {
    let inc = ctx.inc;
    for _ in 0..DESCENT_STEPS {
        let before = s.key(ctx);
        match best_step_within(ctx, s, iterations, DESCENT_TASKS, false, Some(budget)) {
            Some(step) => {
                let undo = apply_step(inc, s, step);
                if !s.key(ctx).better_than(&before) {
                    apply_step(inc, s, undo);
                    return true;
                }
            }
            None => {
                if budget.exhausted() {
                    return false;
                }
                if !ejection_chain(ctx, s, iterations, &before, budget) {
                    return true;
                }
            }
        }
    }
    true
}

/// One ejection chain around the worst task f: a unit u of task A moves to
/// f, and a unit v from reserve or a task B (≠ f, A) moves to A to make up
/// for it. The heads u are the few units that lift f most; for each, every
/// v is scored from A's and B's tallies. Applies the best chain if it makes
/// the key better; returns whether it did.
fn ejection_chain(
    ctx: &Ctx,
    s: &mut State,
    iterations: &mut u64,
    before: &ObjectiveKey,
    budget: &Budget,
) -> bool {
    let inc = ctx.inc;
    // Held keys are not separable; chains are scored by compare_change.
    if !ctx.floors.is_empty() || ctx.focus {
        return false;
    }
    let Some(&f) = s.bottlenecks(ctx).first() else {
        return false;
    };
    if ctx.is_full(f, s.tallies[f].count()) {
        return false;
    }
    // Heads: units on other tasks, ranked by f's odds with them.
    let mut heads: Vec<(f64, UnitIdx)> = Vec::new();
    for &u in &ctx.movable {
        let Some(a) = s.place[u] else { continue };
        if a == f || !ctx.allowed_on[u][f] {
            continue;
        }
        *iterations += 1;
        s.tallies[f].add(inc, u);
        let ln = s.tallies[f].ln_odds(&inc.tasks[f]);
        s.tallies[f].remove(inc, u);
        if cmp_ln(ln, s.ln[f]) == Ordering::Greater {
            heads.push((ln, u));
        }
    }
    heads.sort_by(|x, y| y.0.total_cmp(&x.0).then(x.1.cmp(&y.1)));
    heads.truncate(CHAIN_HEADS);
    let mut best: Option<(ObjectiveKey, UnitIdx, UnitIdx)> = None;
    let mut seen = vec![false; ctx.n_groups];
    for &(_, u) in &heads {
        if budget.exhausted() {
            return false;
        }
        let Some(a) = s.place[u] else { continue };
        let (f0, a0) = (s.ln[f], s.ln[a]);
        s.apply_move(inc, u, Some(f));
        let f1 = s.ln[f];
        seen.iter_mut().for_each(|x| *x = false);
        for &v in &ctx.movable {
            let b = s.place[v];
            if v == u || b == Some(a) || b == Some(f) || !ctx.allowed_on[v][a] {
                continue;
            }
            if ctx.is_full(a, s.tallies[a].count()) {
                break;
            }
            if b.is_none() {
                if seen[ctx.group[v]] || !ctx.may_draw_reserve(s.reserve) {
                    continue;
                }
                seen[ctx.group[v]] = true;
            }
            *iterations += 1;
            s.tallies[a].add(inc, v);
            let a2 = s.tallies[a].ln_odds(&inc.tasks[a]);
            s.tallies[a].remove(inc, v);
            let mut ch = [
                TaskChange {
                    task: f,
                    before: f0,
                    after: f1,
                },
                TaskChange {
                    task: a,
                    before: a0,
                    after: a2,
                },
                TaskChange {
                    task: f,
                    before: 0.0,
                    after: 0.0,
                },
            ];
            let mut n = 2;
            if let Some(b) = b {
                s.tallies[b].remove(inc, v);
                let b2 = s.tallies[b].ln_odds(&inc.tasks[b]);
                s.tallies[b].add(inc, v);
                ch[2] = TaskChange {
                    task: b,
                    before: s.ln[b],
                    after: b2,
                };
                n = 3;
            }
            if compare_change_capped(inc, &ctx.caps, &ch[..n]) != Ordering::Greater {
                continue;
            }
            // Rare: an improving chain. Rank it against the best by full key.
            s.apply_move(inc, v, Some(a));
            let k = s.key(ctx);
            s.apply_move(inc, v, b);
            if k.better_than(before) && best.as_ref().is_none_or(|(bk, _, _)| k.better_than(bk)) {
                best = Some((k, u, v));
            }
        }
        s.apply_move(inc, u, Some(a));
    }
    match best {
        Some((_, u, v)) => {
            let a = s.place[u];
            s.apply_move(inc, u, Some(f));
            s.apply_move(inc, v, a);
            true
        }
        None => false,
    }
}
