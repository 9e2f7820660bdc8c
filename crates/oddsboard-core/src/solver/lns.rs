//! Large-neighbourhood search (LNS) around the bottleneck: one sequence of
//! steps, run by one thread or, speculatively, by several, so that a seed
//! gives the same plan whatever the thread count.
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
//! **The sequence.** Step n starts from the plan left by step n − 1 and
//! draws from its own generator, seeded by (seed, n); its result is a
//! function of those two alone. Most steps find nothing better and leave the
//! plan as it was, so step n + 1 usually starts from the same plan as step
//! n. Epoch e is `epoch_steps(e)` steps (progress and the stop rules are
//! checked at epoch ends).
//!
//! **Both cores: speculation.** With several threads, workers in a pool run
//! steps n, n + 1, … ahead, each from the plan as it stands when the step is
//! handed out, and the calling thread commits their results in step order.
//! A result is used only if its start plan is still the current one; when a
//! committed step changes the plan, every step handed out from the old plan
//! is stopped (its own abort flag) and handed out again from the new one.
//! So every committed step is exactly the step the one-thread run makes, and
//! the plan after e epochs is the same for every thread count; the threads
//! only change how soon it is reached (a second draw per round, as the
//! earlier design did, caps the gain below 2× even with idle cores: see
//! docs/performance.md). The clock and the cancel flag only decide how many
//! epochs complete; an epoch cut short is dropped whole. When the search
//! ends on its own (`stale_epochs` or `max_epochs`) the plan does not depend
//! on the machine or the thread count at all.

use super::Budget;
use super::key::{ObjectiveKey, TaskChange, cmp_ln, compare_change_capped};
use super::search::{Ctx, State, apply_step, best_step_within, ln_odds_ignoring_minimum};
use crate::model::{TaskIdx, UnitIdx};
use rand::rngs::Xoshiro256PlusPlus;
use rand::{RngExt, SeedableRng};
use std::cmp::Ordering;
use std::collections::BTreeMap;
use std::sync::Arc;
use std::sync::atomic::{AtomicBool, Ordering as AtomicOrdering};
use std::sync::mpsc;
use std::time::Duration;

/// When the LNS stops on its own.
#[derive(Debug, Clone, Copy)]
pub struct LnsLimits {
    /// Threads running steps (at least 1); 1 runs on the calling thread.
    /// It changes the speed, never the plan.
    pub threads: usize,
    /// Stop after this many epochs in a row without a better plan.
    pub stale_epochs: u64,
    /// Stop after this many epochs in all.
    pub max_epochs: u64,
}

pub struct LnsOutcome {
    pub best: State,
    pub best_key: ObjectiveKey,
    /// Moves scored by the committed steps of the completed epochs (the
    /// same for every thread count).
    pub iterations: u64,
    /// Epochs completed.
    pub epochs: u64,
    /// Steps of the completed epochs.
    pub steps: u64,
    /// Of those, the steps that changed the plan.
    pub changed: u64,
    /// Steps run ahead and thrown away (started from a plan a committed
    /// step then changed, or past the end): the price of speculation. It
    /// depends on timing, unlike everything else here.
    pub discarded: u64,
    pub stopped_by_budget: bool,
}

/// Steps in epoch `e`: short first epochs keep small budgets useful.
pub fn epoch_steps(e: u64) -> u64 {
    1u64 << e.min(4)
}

/// Steps run on the calling thread before the pool may start.
const SOLO_STEPS: u64 = 3;
/// The pool starts when the steps so far took at least this long each.
const POOL_MIN_STEP: Duration = Duration::from_millis(1);

/// Steps handed out ahead of the next one to commit, per thread: enough
/// that a worker finishing early goes on instead of waiting.
const AHEAD_PER_THREAD: u64 = 2;

/// The bottlenecks a descent step looks at (the worst few).
const DESCENT_TASKS: usize = 3;
/// Most descent steps after one refill.
const DESCENT_STEPS: usize = 64;
/// Ejection chains tried per bottleneck: the units of other tasks that
/// lift f most.
const CHAIN_HEADS: usize = 6;

/// SplitMix64 finaliser (Steele, Lea & Flood, "Fast splittable
/// pseudorandom number generators", OOPSLA 2014) over (seed, a, b):
/// well-spread, independent-looking seeds.
pub fn worker_seed(seed: u64, a: u64, b: u64) -> u64 {
    let mut z = seed
        ^ 0x6c6e_735f_7365_6564
        ^ a.wrapping_mul(0x9E37_79B9_7F4A_7C15)
        ^ b.wrapping_mul(0xD1B5_4A32_D192_ED03);
    z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
    z ^ (z >> 31)
}

/// The generator of step `n`: the step's draws depend on nothing else.
fn step_rng(seed: u64, n: u64) -> Xoshiro256PlusPlus {
    Xoshiro256PlusPlus::seed_from_u64(worker_seed(seed, n, 0))
}

/// A plan and its key, shared read-only by the steps that start from it.
struct Base {
    state: State,
    key: ObjectiveKey,
}

/// One step's result.
struct Worker {
    state: State,
    key: ObjectiveKey,
    iterations: u64,
}

/// The committed sequence: the current plan, the epoch it is in, the best
/// plan of the completed epochs and the stop rules. Both the one-thread
/// loop and the pool feed it the same results in the same order.
struct Trail<'c, 'b> {
    ctx: &'c Ctx<'c>,
    limits: &'c LnsLimits,
    budget: &'c Budget<'b>,
    cur: Arc<Base>,
    /// Bumped whenever `cur` changes: a step's result is used only if it
    /// started from this version.
    version: u64,
    /// The next step to commit.
    step: u64,
    epoch: u64,
    /// The step that ends the current epoch.
    epoch_end: u64,
    best: State,
    best_key: ObjectiveKey,
    stale: u64,
    iterations: u64,
    e_iterations: u64,
    changed: u64,
    e_changed: u64,
    steps: u64,
}

/// Whether the search goes on, and if not, whether the budget ended it.
enum Flow {
    Go,
    Stop { by_budget: bool },
}

impl<'c, 'b> Trail<'c, 'b> {
    fn new(ctx: &'c Ctx<'c>, start: State, limits: &'c LnsLimits, budget: &'c Budget<'b>) -> Self {
        let state = State::new(ctx, &start.placement());
        let key = state.key(ctx);
        Trail {
            ctx,
            limits,
            budget,
            best: state.clone(),
            best_key: key.clone(),
            cur: Arc::new(Base { state, key }),
            version: 0,
            step: 0,
            epoch: 0,
            epoch_end: epoch_steps(0),
            stale: 0,
            iterations: 0,
            e_iterations: 0,
            changed: 0,
            e_changed: 0,
            steps: 0,
        }
    }

    /// Whether another epoch may start.
    fn check(&self) -> Flow {
        if self.stale >= self.limits.stale_epochs || self.epoch >= self.limits.max_epochs {
            return Flow::Stop { by_budget: false };
        }
        if self.budget.exhausted() || self.ctx.movable.is_empty() {
            return Flow::Stop {
                by_budget: self.budget.exhausted(),
            };
        }
        Flow::Go
    }

    /// Commits the result of step `self.step` (started from the current
    /// version); at an epoch's end reports it and checks the stop rules.
    fn commit(
        &mut self,
        r: Worker,
        on_epoch: &mut dyn FnMut(&State, &ObjectiveKey, u64, bool),
    ) -> Flow {
        self.e_iterations += r.iterations;
        if r.state.place != self.cur.state.place {
            self.cur = Arc::new(Base {
                state: r.state,
                key: r.key,
            });
            self.version += 1;
            self.e_changed += 1;
        }
        self.step += 1;
        if self.step < self.epoch_end {
            return Flow::Go;
        }
        self.epoch += 1;
        self.epoch_end += epoch_steps(self.epoch);
        self.iterations += std::mem::take(&mut self.e_iterations);
        self.changed += std::mem::take(&mut self.e_changed);
        self.steps = self.step;
        let improved = self.cur.key.better_than(&self.best_key);
        if improved {
            self.best = self.cur.state.clone();
            self.best_key = self.cur.key.clone();
            self.stale = 0;
        } else {
            self.stale += 1;
        }
        on_epoch(&self.best, &self.best_key, self.iterations, improved);
        self.check()
    }

    fn outcome(self, stopped_by_budget: bool, discarded: u64) -> LnsOutcome {
        LnsOutcome {
            best: self.best,
            best_key: self.best_key,
            iterations: self.iterations,
            epochs: self.epoch,
            steps: self.steps,
            changed: self.changed,
            discarded,
            stopped_by_budget,
        }
    }
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
    let mut trail = Trail::new(ctx, start, limits, budget);
    if let Flow::Stop { by_budget } = trail.check() {
        return trail.outcome(by_budget, 0);
    }
    let threads = limits.threads.max(1);
    // The first steps run here; the pool starts once steps are long enough
    // for its hand-offs to cost little (tiny incidents never start it). The
    // plan does not depend on when, or whether, it starts.
    let solo = budget.elapsed();
    loop {
        if threads > 1
            && trail.step >= SOLO_STEPS
            && (budget.elapsed().saturating_sub(solo)).as_secs_f64()
                >= POOL_MIN_STEP.as_secs_f64() * trail.step as f64
        {
            break;
        }
        let base = trail.cur.clone();
        let mut rng = step_rng(seed, trail.step);
        let Some(r) = lns_step(ctx, &base.state, &base.key, &mut rng, budget) else {
            return trail.outcome(true, 0);
        };
        if let Flow::Stop { by_budget } = trail.commit(r, on_epoch) {
            return trail.outcome(by_budget, 0);
        }
    }
    let aborts: Vec<AtomicBool> = (0..threads).map(|_| AtomicBool::new(false)).collect();
    std::thread::scope(|scope| {
        let (done_tx, done_rx) = mpsc::channel::<Done>();
        let mut jobs = Vec::with_capacity(threads);
        for (w, abort) in aborts.iter().enumerate() {
            let (tx, rx) = mpsc::channel::<Job>();
            jobs.push(tx);
            let done_tx = done_tx.clone();
            let wb = budget.with_abort(abort);
            scope.spawn(move || helper(ctx, seed, w, &wb, &rx, &done_tx));
        }
        drop(done_tx);
        let (by_budget, discarded) = pool(&mut trail, &jobs, &done_rx, &aborts, on_epoch);
        // Stop whatever still runs; `jobs` drops here, so the workers end.
        for a in &aborts {
            a.store(true, AtomicOrdering::Relaxed);
        }
        drop(jobs);
        trail.outcome(by_budget, discarded)
    })
}

/// One step handed to a worker.
struct Job {
    step: u64,
    version: u64,
    base: Arc<Base>,
}

/// (worker, step, version, result; `None` when cut short).
type Done = (usize, u64, u64, Option<Worker>);

/// The calling thread's side of the pool: hands out steps ahead of the
/// next to commit, commits results in step order, and re-issues the steps
/// whose start plan a commit changed. Returns (stopped by the budget,
/// steps discarded).
fn pool(
    trail: &mut Trail,
    jobs: &[mpsc::Sender<Job>],
    done: &mpsc::Receiver<Done>,
    aborts: &[AtomicBool],
    on_epoch: &mut dyn FnMut(&State, &ObjectiveKey, u64, bool),
) -> (bool, u64) {
    let ahead = AHEAD_PER_THREAD * jobs.len() as u64;
    // (step, version) each worker runs.
    let mut busy: Vec<Option<(u64, u64)>> = vec![None; jobs.len()];
    // Results from the current version, by step.
    let mut ready: BTreeMap<u64, Worker> = BTreeMap::new();
    let mut next = trail.step;
    let mut discarded = 0u64;
    loop {
        for (w, tx) in jobs.iter().enumerate() {
            if busy[w].is_some() || next >= trail.step + ahead {
                continue;
            }
            // The worker is idle: it reads its flag only during a job.
            aborts[w].store(false, AtomicOrdering::Relaxed);
            let job = Job {
                step: next,
                version: trail.version,
                base: trail.cur.clone(),
            };
            if tx.send(job).is_err() {
                // A worker gone: it can no longer take steps.
                return (true, discarded);
            }
            busy[w] = Some((next, trail.version));
            next += 1;
        }
        // A worker gone (it panicked) counts as cut short.
        let Ok((w, step, version, out)) = done.recv() else {
            return (true, discarded);
        };
        busy[w] = None;
        if version != trail.version {
            discarded += 1;
            continue;
        }
        let Some(r) = out else {
            // The budget or the cancel flag: the epoch is dropped whole.
            return (true, discarded);
        };
        ready.insert(step, r);
        while let Some(r) = ready.remove(&trail.step) {
            let version = trail.version;
            let flow = trail.commit(r, on_epoch);
            if let Flow::Stop { by_budget } = flow {
                discarded += ready.len() as u64 + busy.iter().flatten().count() as u64;
                return (by_budget, discarded);
            }
            if trail.version != version {
                // Every step run ahead started from the old plan.
                discarded += ready.len() as u64;
                ready.clear();
                for (w, b) in busy.iter().enumerate() {
                    if b.is_some() {
                        aborts[w].store(true, AtomicOrdering::Relaxed);
                    }
                }
                next = trail.step;
            }
        }
    }
}

/// A pool worker: one LNS step per job from the job's plan, with the
/// generator of the job's step.
fn helper(
    ctx: &Ctx,
    seed: u64,
    worker: usize,
    budget: &Budget,
    jobs: &mpsc::Receiver<Job>,
    done: &mpsc::Sender<Done>,
) {
    while let Ok(job) = jobs.recv() {
        let mut rng = step_rng(seed, job.step);
        // A panic is reported as a step cut short, so the caller never
        // waits for a result that will not come.
        let out = std::panic::catch_unwind(std::panic::AssertUnwindSafe(|| {
            lns_step(ctx, &job.base.state, &job.base.key, &mut rng, budget)
        }))
        .ok()
        .flatten();
        if done.send((worker, job.step, job.version, out)).is_err() {
            break;
        }
    }
}

/// One LNS step from `start`: the step's plan when its key is not worse,
/// else `start` again. `None` when the budget ended first.
fn lns_step(
    ctx: &Ctx,
    start: &State,
    start_key: &ObjectiveKey,
    rng: &mut Xoshiro256PlusPlus,
    budget: &Budget,
) -> Option<Worker> {
    let mut iterations = 0u64;
    let mut s = start.clone();
    release(ctx, &mut s, rng);
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
fn release(ctx: &Ctx, s: &mut State, rng: &mut Xoshiro256PlusPlus) {
    let inc = ctx.inc;
    let order = s.bottlenecks(ctx);
    if order.is_empty() {
        return;
    }
    let top = order.len().min(4);
    // The worst task half the time, else one of the next few.
    let f = if rng.random_bool(0.5) {
        order[0]
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
