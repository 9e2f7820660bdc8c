//! Field readings benchmarks on seeded, invented logs (no timed
//! assertions):
//!
//! * `ratings` over 200 logs with 20 000 `observed` events: in process
//!   (reading the events out of the records and the REML fits) and as a
//!   whole process over 200 log files (target: under 1 s);
//! * folding a log with 1 000 observations against folding a 1 000-record
//!   log of the usual event mix (target: within 2×).
//!
//! Run with `cargo bench --bench ratings`; figures go to docs/performance.md.

use oddsboard::log::generate::generate_log;
use oddsboard::log::{Event, Record, encode_line, fold};
use oddsboard::model::generate::{GenerateSpec, generate};
use oddsboard::model::{Incident, UnitIdx};
use oddsboard::report::ratings::{RatingsData, ratings};
use rand::rngs::StdRng;
use rand::{RngExt, SeedableRng};
use std::process::{Command, Stdio};
use std::time::{Duration, Instant};

fn time<F: FnMut()>(name: &str, runs: usize, mut f: F) -> Duration {
    let mut v: Vec<Duration> = (0..runs)
        .map(|_| {
            let t = Instant::now();
            f();
            t.elapsed()
        })
        .collect();
    v.sort();
    println!(
        "{name:<64} median {:>9.1} ms   min {:>9.1} ms   ({runs} runs)",
        v[v.len() / 2].as_secs_f64() * 1e3,
        v[0].as_secs_f64() * 1e3
    );
    v[v.len() / 2]
}

/// The snapshot of an invented incident and `n` readings of units with a
/// rated spread (value: rating + noise, some without sd).
fn observed_log(seed: u64, n: usize) -> Vec<Record> {
    let incident: Incident =
        generate(&GenerateSpec::new(100, 25, 3).seed(seed)).expect("generated incident");
    let start = chrono::DateTime::from_timestamp(1_778_750_400, 0).expect("time");
    let (mut recs, _) = generate_log(&incident, 1, seed, start);
    let mut rng = StdRng::seed_from_u64(seed);
    let candidates: Vec<(usize, usize)> = (0..incident.units.len())
        .flat_map(|u| (0..incident.traits.len()).map(move |k| (u, k)))
        .filter(|&(u, k)| incident.units[UnitIdx::new(u)].ratings[k].sd > 0.0)
        .collect();
    for i in 0..n {
        let (u, k) = candidates[rng.random_range(0..candidates.len())];
        let r = incident.units[UnitIdx::new(u)].ratings[k];
        let value = (r.mean + r.sd * (rng.random::<f64>() - 0.5) * 2.0).max(0.0);
        recs.push(Record {
            seq: i as u64 + 2,
            at: start + chrono::Duration::seconds(i as i64),
            by: "bench".into(),
            event: Event::Observed {
                unit: incident.units[UnitIdx::new(u)].id.clone(),
                trait_id: incident.traits[k].id.clone(),
                value,
                sd: rng.random_bool(0.5).then_some(r.sd * 0.3),
            },
        });
    }
    recs
}

fn main() {
    let runs = if std::env::args().any(|a| a == "--bench") {
        5
    } else {
        1
    };
    let logs: Vec<Vec<Record>> = (0..200).map(|i| observed_log(1000 + i, 100)).collect();
    time(
        "ratings, 200 logs / 20 000 readings (in process)",
        runs,
        || {
            let mut data = RatingsData::default();
            for (i, l) in logs.iter().enumerate() {
                data.add_log(&format!("log{i}"), l).expect("folds");
            }
            assert!(!ratings(&data).is_empty());
        },
    );
    let dir = tempfile::tempdir().expect("tempdir");
    let mut paths = Vec::new();
    for (i, l) in logs.iter().enumerate() {
        let p = dir.path().join(format!("l{i:03}.log"));
        std::fs::write(&p, l.iter().map(encode_line).collect::<String>()).expect("write");
        paths.push(p);
    }
    time(
        "whole process: ratings, 200 log files / 20 000 readings",
        runs,
        || {
            let st = Command::new(env!("CARGO_BIN_EXE_oddsboard"))
                .arg("ratings")
                .args(&paths)
                .stdout(Stdio::null())
                .stderr(Stdio::null())
                .status()
                .expect("runs");
            assert!(st.success());
        },
    );

    let obs = observed_log(7, 1000);
    let incident = generate(&GenerateSpec::new(100, 25, 3).seed(7)).expect("generated");
    let start = chrono::DateTime::from_timestamp(1_778_750_400, 0).expect("time");
    let (mix, _) = generate_log(&incident, 1001, 8, start);
    let a = time("fold, 1 000 records of the usual mix", runs * 4, || {
        fold(&mix).expect("folds");
    });
    let b = time("fold, 1 000 observed records", runs * 4, || {
        fold(&obs).expect("folds");
    });
    println!(
        "observed / usual mix fold time: {:.2}×",
        b.as_secs_f64() / a.as_secs_f64()
    );
}
