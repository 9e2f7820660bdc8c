//! Advice benchmarks on seeded, invented incidents (docs/performance.md,
//! "Advice").
//!
//! * `advise/fragility_100u_15t`: the baseline plan and then the fragility of
//!   every placed unit (one warm-started stable re-plan per unit) of a
//!   100-unit, 15-task, 4-trait incident. Target: under 1 s.
//! * `advise/requests_600u_40t`: resource requests for every tier that is
//!   not secure, on a 600-unit, 40-task, 5-trait incident. Target: under 2 s.
//! * `advise/whole_100u_15t`: everything `oddsboard advise` computes on the
//!   100-unit incident (fragility, absorbable losses, requests, notes).

use criterion::{Criterion, criterion_group, criterion_main};
use oddsboard::advise::fragility::unit_losses;
use oddsboard::advise::requests::tier_requests;
use oddsboard::advise::{AdviseOptions, advise, baseline_plan};
use oddsboard::model::generate::{GenerateSpec, generate};
use std::hint::black_box;
use std::sync::atomic::AtomicBool;
use std::time::Duration;

fn benches(c: &mut Criterion) {
    let cancel = AtomicBool::new(false);
    let opts = AdviseOptions::default();
    let mid = generate(&GenerateSpec::new(100, 15, 4).seed(1)).expect("generated incident loads");
    let big = generate(&GenerateSpec::new(600, 40, 5).seed(1)).expect("generated incident loads");

    // One run of each, printed beside the timings, so the figures say what
    // was found.
    let base = baseline_plan(&mid, &opts, &cancel).expect("solves");
    let losses = unit_losses(&mid, &base, &opts, &cancel).expect("advice");
    eprintln!(
        "100-unit incident: {} placed units, {} single points of failure",
        losses.len(),
        losses.iter().filter(|l| l.single_point_of_failure).count()
    );
    let requests = tier_requests(&big, &opts, &cancel).expect("advice");
    for r in &requests {
        eprintln!(
            "600-unit incident, tier {}: {}",
            r.tier,
            r.outcome_summary()
        );
    }

    let mut g = c.benchmark_group("advise");
    g.sample_size(10);
    g.measurement_time(Duration::from_secs(12));
    g.bench_function("fragility_100u_15t", |b| {
        b.iter(|| {
            let base = baseline_plan(&mid, &opts, &cancel).expect("solves");
            black_box(unit_losses(&mid, &base, &opts, &cancel).expect("advice"))
        })
    });
    g.bench_function("requests_600u_40t", |b| {
        b.iter(|| black_box(tier_requests(&big, &opts, &cancel).expect("advice")))
    });
    g.bench_function("whole_100u_15t", |b| {
        b.iter(|| black_box(advise(&mid, &opts, &cancel).expect("advice")))
    });
    g.finish();
}

criterion_group!(advise_benches, benches);
criterion_main!(advise_benches);
