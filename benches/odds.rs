//! Odds engine benchmarks on a seeded, invented incident of 600 units,
//! 40 tasks and 5 traits (docs/performance.md, "Odds engine").
//!
//! * `odds_whole`: what `oddsboard odds` does after reading the file: parse
//!   and validate the YAML, evaluate every task, build the JSON view and the
//!   text table.
//! * `tally/1m_add_remove_evaluate`: one million incremental tally updates,
//!   each followed by reading that task's ln odds: 500 000 moves, each a
//!   unit removed from its task (then that task read) and added to another
//!   (then that task read).
//!
//! The incident is also written to `target/odds-bench-600.yaml` so the whole
//! process can be timed from the shell (e.g. `hyperfine 'oddsboard odds
//! target/odds-bench-600.yaml'`).

use criterion::{Criterion, criterion_group, criterion_main};
use oddsboard::cli::render::{TableOptions, footer, task_table};
use oddsboard::model::parse_incident_str;
use oddsboard::odds::view::odds_view;
use oddsboard::odds::{TaskTally, tallies};
use rand::rngs::StdRng;
use rand::{RngExt, SeedableRng};
use std::fmt::Write as _;
use std::hint::black_box;

const TRAITS: [(&str, &str, f64); 5] = [
    ("water", "L/min", 1500.0),
    ("crew", "persons", 4.0),
    ("lift", "t", 10.0),
    ("search", "km2/h", 2.0),
    ("power", "kW", 50.0),
];

/// A seeded, invented incident as YAML text: 8 unit types, `units` units,
/// `tasks` tasks whose needs sit near what the initial placement gives them.
fn incident_yaml(seed: u64, units: usize, tasks: usize) -> String {
    let mut rng = StdRng::seed_from_u64(seed);
    let mut y = String::from("incident: { name: Invented benchmark incident }\ntraits:\n");
    for (id, unit, _) in TRAITS {
        let _ = writeln!(y, "  - {{ id: {id}, unit: {unit} }}");
    }
    y.push_str("unit_types:\n");
    let n_types = 8;
    let mut type_means = Vec::new();
    for t in 0..n_types {
        let rho = if t % 3 == 0 {
            0.0
        } else {
            rng.random_range(0.0..0.5)
        };
        let _ = write!(y, "  - {{ id: type{t}, rho: {rho:.3}, traits: {{ ");
        let mut means = Vec::new();
        for (k, (id, _, scale)) in TRAITS.iter().enumerate() {
            // Each type is strong in two traits and weak or absent elsewhere.
            let strong = k == t % 5 || k == (t + 2) % 5;
            let mean = if strong {
                scale * rng.random_range(0.6..1.4)
            } else if rng.random_bool(0.5) {
                scale * rng.random_range(0.0..0.2)
            } else {
                0.0
            };
            let sd = mean * rng.random_range(0.05..0.35);
            let _ = write!(y, "{id}: {{ mean: {mean:.3}, sd: {sd:.3} }}, ");
            means.push(mean);
        }
        y.push_str("} }\n");
        type_means.push(means);
    }
    y.push_str("units:\n");
    let mut unit_type = Vec::new();
    for u in 0..units {
        let t = rng.random_range(0..n_types);
        unit_type.push(t);
        let _ = writeln!(y, "  - {{ id: U{u}, type: type{t} }}");
    }
    let mut placed = vec![Vec::new(); tasks];
    let mut placement = String::from("placement: {");
    for (u, &t) in unit_type.iter().enumerate() {
        if rng.random_bool(0.9) {
            let j = rng.random_range(0..tasks);
            placed[j].push(t);
            let _ = write!(placement, " U{u}: T{j},");
        }
    }
    placement.push_str(" }\n");
    y.push_str("tasks:\n");
    let tiers = ["life", "stabilization", "property"];
    for (j, on) in placed.iter().enumerate() {
        let _ = write!(y, "  - {{ id: T{j}, tier: {}, needs: {{ ", tiers[j % 3]);
        for (k, (id, _, _)) in TRAITS.iter().enumerate() {
            let have: f64 = on.iter().map(|&t| type_means[t][k]).sum();
            if have <= 0.0 || rng.random_bool(0.2) {
                continue;
            }
            let need = have * rng.random_range(0.8..1.1);
            if rng.random_bool(0.25) {
                let _ = write!(y, "{id}: {{ need: {need:.3}, sd: {:.3} }}, ", need * 0.05);
            } else {
                let _ = write!(y, "{id}: {need:.3}, ");
            }
        }
        y.push_str("} }\n");
    }
    y.push_str(&placement);
    y
}

fn benches(c: &mut Criterion) {
    let yaml = incident_yaml(2026, 600, 40);
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

    // Moves chosen up front so the loop times only the tallies.
    let mut rng = StdRng::seed_from_u64(7);
    let n_tasks = inc.tasks.len();
    let moves: Vec<(usize, usize)> = (0..500_000)
        .map(|_| {
            (
                rng.random_range(0..inc.units.len()),
                rng.random_range(0..n_tasks),
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
