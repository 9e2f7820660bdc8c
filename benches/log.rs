//! Incident log benchmarks on seeded, invented logs (no timed assertions):
//!
//! * `timeline` of a 10 000-record log of a 100-unit incident, whole process
//!   (target: under 2 s), as a table, CSV and JSON;
//! * `timeline --recompute` of a 1 000-record log, whole process (target:
//!   under 10 s);
//! * `report` of the 10 000-record log, whole process;
//! * in process: reading (checksums), replay with incremental ground odds,
//!   and appending with the lock and fsync.
//!
//! Run with `cargo bench --bench log`; figures go to docs/performance.md.

use oddsboard::log::generate::generate_log;
use oddsboard::log::{LogWriter, encode_line, read_log};
use oddsboard::model::generate::{GenerateSpec, generate};
use oddsboard::report::timeline::timeline;
use std::path::Path;
use std::process::{Command, Stdio};
use std::time::{Duration, Instant};

const RUNS: usize = 5;

fn median(mut v: Vec<Duration>) -> (Duration, Duration) {
    v.sort();
    (v[v.len() / 2], v[0])
}

fn time<F: FnMut()>(name: &str, runs: usize, mut f: F) {
    let samples: Vec<Duration> = (0..runs)
        .map(|_| {
            let t = Instant::now();
            f();
            t.elapsed()
        })
        .collect();
    let (med, min) = median(samples);
    println!(
        "{name:<58} median {:>9.1} ms   min {:>9.1} ms   ({runs} runs)",
        med.as_secs_f64() * 1e3,
        min.as_secs_f64() * 1e3
    );
}

fn write_log(path: &Path, records: usize, seed: u64) {
    let incident = generate(&GenerateSpec::new(100, 25, 3).seed(seed)).expect("generated incident");
    let start = chrono::DateTime::from_timestamp(1_778_750_400, 0).expect("time");
    let (recs, _) = generate_log(&incident, records, seed + 1, start);
    assert_eq!(recs.len(), records, "the generator made the full log");
    let text: String = recs.iter().map(encode_line).collect();
    std::fs::write(path, text).expect("write log");
}

fn run_bin(args: &[&str], log: &Path) {
    let status = Command::new(env!("CARGO_BIN_EXE_oddsboard"))
        .args(args.iter().take(1))
        .arg(log)
        .args(args.iter().skip(1))
        .stdout(Stdio::null())
        .stderr(Stdio::null())
        .status()
        .expect("runs");
    assert!(status.success(), "{args:?}");
}

fn main() {
    // `cargo bench` passes `--bench`; anything else (e.g. `cargo test
    // --benches`) gets one quick run.
    let runs = if std::env::args().any(|a| a == "--bench") {
        RUNS
    } else {
        1
    };
    let dir = tempfile::tempdir().expect("tempdir");
    let big = dir.path().join("big.log");
    let small = dir.path().join("small.log");
    write_log(&big, 10_000, 42);
    write_log(&small, 1_000, 43);
    let size = std::fs::metadata(&big).map(|m| m.len()).unwrap_or(0);
    println!(
        "10 000-record log of a 100-unit, 25-task, 3-trait invented incident: {:.1} MiB",
        size as f64 / (1 << 20) as f64
    );

    time("read_log 10 000 records (decode + CRC-32)", runs, || {
        read_log(&big).expect("reads");
    });
    let records = read_log(&big).expect("reads").records;
    time(
        "replay 10 000 records with ground odds (in process)",
        runs,
        || {
            timeline(&records).expect("replays");
        },
    );
    time(
        "whole process: timeline (table), 10 000 records",
        runs,
        || run_bin(&["timeline"], &big),
    );
    time(
        "whole process: timeline --csv, 10 000 records",
        runs,
        || run_bin(&["timeline", "--csv"], &big),
    );
    time(
        "whole process: timeline --json, 10 000 records",
        runs,
        || run_bin(&["timeline", "--json"], &big),
    );
    time("whole process: report, 10 000 records", runs, || {
        run_bin(&["report"], &big)
    });
    time(
        "whole process: timeline --recompute (5 ms/record), 1 000 records",
        runs.min(3),
        || run_bin(&["timeline", "--recompute"], &small),
    );
    time(
        "whole process: timeline --recompute (2 ms/record), 1 000 records",
        runs.min(3),
        || run_bin(&["timeline", "--recompute", "--budget-ms", "2"], &small),
    );
    // Appending: lock, catch up, check, write, fsync.
    let incident = generate(&GenerateSpec::new(100, 25, 3).seed(42)).expect("generated");
    let path = dir.path().join("append.log");
    let mut w = LogWriter::create(&path, &incident, "bench").expect("create");
    let n = 200;
    time("append 200 notes (lock + fsync each), per note", 1, || {
        for i in 0..n {
            w.append(
                "bench",
                oddsboard::log::Event::Note {
                    text: format!("note {i}"),
                },
            )
            .expect("appends");
        }
    });
    println!("(divide the append figure by {n} for one note)");
}
