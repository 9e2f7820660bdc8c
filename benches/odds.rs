//! Odds engine benchmarks on a seeded, invented incident of 600 units,
//! 40 tasks and 5 traits from the project's generator (seed 2026; the same
//! incident as `oddsboard generate --units 600 --tasks 40 --traits 5 --seed
//! 2026`), see docs/performance.md, "Odds engine".
//!
//! * `odds_whole`: what `oddsboard odds` does after reading the file: parse
//!   and validate the YAML, evaluate every task, build the JSON view and the
//!   text table.
//! * `joint_all_600x40x5` / `joint_by_tier_600x40x5`: joint odds of all
//!   open tasks (and of each tier) for the placement on the ground.
//! * `tally/1m_add_remove_evaluate`: one million incremental tally updates,
//!   each followed by reading that task's ln odds: 500 000 moves, each a
//!   unit removed from its task (then that task read) and added to another
//!   (then that task read). Moves ignore placement constraints: this
//!   times the arithmetic only.
//!
//! The incident is also written to `target/odds-bench-600.yaml` so the whole
//! process can be timed from the shell (e.g. `hyperfine 'oddsboard odds
//! target/odds-bench-600.yaml'`).

use criterion::{Criterion, criterion_group, criterion_main};
use oddsboard::cli::render::{TableOptions, footer, task_table};
use oddsboard::model::generate::{GenerateSpec, generate_yaml};
use oddsboard::model::parse_incident_str;
use oddsboard::odds::view::odds_view;
use oddsboard::odds::{TaskTally, tallies};
use rand::rngs::StdRng;
use rand::{RngExt, SeedableRng};
use std::hint::black_box;

fn benches(c: &mut Criterion) {
    let yaml = generate_yaml(&GenerateSpec::new(600, 40, 5).seed(2026));
    let target = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("target");
    let _ = std::fs::create_dir_all(&target);
    let _ = std::fs::write(target.join("odds-bench-600.yaml"), &yaml);

    c.bench_function("odds_whole_600x40x5", |b| {
        b.iter(|| {
            let inc = parse_incident_str(black_box(&yaml), "bench.yaml").expect("valid");
            let view = odds_view(&inc, &inc.placement);
            let json = serde_json::to_string(&view).expect("json");
            let text = task_table(
                &view.tasks,
                &view.worst_by_tier,
                TableOptions { traits: true },
            ) + &footer(&view.tasks);
            black_box((json.len(), text.len()))
        })
    });

    let inc = parse_incident_str(&yaml, "bench.yaml").expect("valid");
    c.bench_function("evaluate_600x40x5", |b| {
        b.iter(|| black_box(oddsboard::odds::evaluate(&inc, black_box(&inc.placement))))
    });

    // Joint odds of all open tasks and of each tier (what `odds` shows).
    let all: Vec<oddsboard::model::TaskIdx> = oddsboard::model::TaskIdx::range(inc.tasks.len())
        .filter(|&t| inc.tasks[t].is_open())
        .collect();
    let opts = oddsboard::odds::joint::JointOptions::default();
    c.bench_function("joint_all_600x40x5", |b| {
        b.iter(|| {
            black_box(oddsboard::odds::joint::joint_odds(
                &inc,
                black_box(&inc.placement),
                &all,
                opts,
            ))
        })
    });
    // The ground of this incident leaves many tasks hopeless; the
    // expected-value baseline's placement is a workable board, with more
    // shared factors per trait.
    let ev = oddsboard::solver::baselines::expected_value(&inc);
    c.bench_function("joint_all_600x40x5_ev_plan", |b| {
        b.iter(|| {
            black_box(oddsboard::odds::joint::joint_odds(
                &inc,
                black_box(&ev),
                &all,
                opts,
            ))
        })
    });
    // 15 types over 5 traits: three or more shared factors per trait, the
    // quasi-Monte Carlo path.
    let many = parse_incident_str(
        &generate_yaml(&GenerateSpec::new(600, 40, 5).types(15).seed(2026)),
        "bench15.yaml",
    )
    .expect("valid");
    let many_ev = oddsboard::solver::baselines::expected_value(&many);
    let many_all: Vec<oddsboard::model::TaskIdx> =
        oddsboard::model::TaskIdx::range(many.tasks.len()).collect();
    let j = oddsboard::odds::joint::joint_odds(&many, &many_ev, &many_all, opts);
    eprintln!(
        "joint_qmc: method {:?}, shared {}, ln {:.3}, error {:.2e}",
        j.method, j.shared_factors, j.ln_odds, j.error
    );
    c.bench_function("joint_all_600x40x5_15types_ev_plan", |b| {
        b.iter(|| {
            black_box(oddsboard::odds::joint::joint_odds(
                &many,
                black_box(&many_ev),
                &many_all,
                opts,
            ))
        })
    });
    c.bench_function("joint_by_tier_600x40x5", |b| {
        b.iter(|| {
            black_box(oddsboard::odds::joint::joint_by_tier(
                &inc,
                black_box(&inc.placement),
                opts,
            ))
        })
    });

    // Moves chosen up front so the loop times only the tallies.
    let mut rng = StdRng::seed_from_u64(7);
    let n_tasks = inc.tasks.len();
    let moves: Vec<(oddsboard::model::UnitIdx, oddsboard::model::TaskIdx)> = (0..500_000)
        .map(|_| {
            (
                oddsboard::model::UnitIdx::new(rng.random_range(0..inc.units.len())),
                oddsboard::model::TaskIdx::new(rng.random_range(0..n_tasks)),
            )
        })
        .collect();
    let mut group = c.benchmark_group("tally");
    group.sample_size(10);
    group.bench_function("1m_add_remove_evaluate", |b| {
        b.iter(|| {
            let mut placement = inc.placement.clone();
            let mut live: Vec<TaskTally> = tallies(&inc, &placement);
            let mut acc = 0.0;
            for &(u, to) in &moves {
                let from = placement.get(u);
                if let Some(from) = from {
                    live[from].remove(&inc, u);
                    acc += live[from].ln_odds(&inc.tasks[from]).max(-1e9);
                }
                live[to].add(&inc, u);
                acc += live[to].ln_odds(&inc.tasks[to]).max(-1e9);
                placement.set(u, Some(to));
            }
            black_box(acc)
        })
    });
    group.finish();
}

criterion_group!(odds, benches);
criterion_main!(odds);
