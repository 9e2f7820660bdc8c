//! Several writers on one log: 4 processes × 25 `record` calls each.

#[path = "log_fixtures/common.rs"]
mod common;

use common::*;
use oddsboard::log::{Event, read_log};

#[test]
fn four_writers_twenty_five_records_each() {
    let dir = tempfile::tempdir().expect("tempdir");
    let path = sample_log(dir.path());
    let base = read_log(&path).expect("read").records.len();
    let bin = assert_cmd::cargo::cargo_bin("oddsboard");
    let writers: Vec<_> = (0..4)
        .map(|w| {
            let path = path.clone();
            let bin = bin.clone();
            std::thread::spawn(move || {
                for i in 0..25 {
                    let out = std::process::Command::new(&bin)
                        .arg("record")
                        .arg(&path)
                        .arg(format!("{{kind: note, text: \"writer {w} note {i}\"}}"))
                        .args(["--by", &format!("feed-{w}")])
                        .output()
                        .expect("runs");
                    assert!(
                        out.status.success(),
                        "{}",
                        String::from_utf8_lossy(&out.stderr)
                    );
                }
            })
        })
        .collect();
    for w in writers {
        w.join().expect("writer thread");
    }
    // read_log checks every checksum and that seq runs 1, 2, 3… without gap.
    let c = read_log(&path).expect("the log reads clean");
    assert!(c.torn_tail.is_none());
    assert_eq!(c.records.len(), base + 100);
    for (i, r) in c.records.iter().enumerate() {
        assert_eq!(r.seq, i as u64 + 1);
    }
    // Each writer's notes are all there, once, in its own order.
    for w in 0..4 {
        let mine: Vec<String> = c.records[base..]
            .iter()
            .filter(|r| r.by == format!("feed-{w}"))
            .map(|r| match &r.event {
                Event::Note { text } => text.clone(),
                other => panic!("unexpected {other:?}"),
            })
            .collect();
        let expected: Vec<String> = (0..25).map(|i| format!("writer {w} note {i}")).collect();
        assert_eq!(mine, expected);
    }
}
