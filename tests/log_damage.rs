//! A log torn or damaged on disk: every byte offset of a truncation, damage
//! in the middle, a log from a newer format, refused events.

#[path = "log_fixtures/common.rs"]
mod common;

use common::*;
use oddsboard::log::{Event, FORMAT_VERSION, LogError, Record, encode_line, parse_log, read_log};

#[test]
fn truncation_at_every_byte_offset() {
    let dir = tempfile::tempdir().expect("tempdir");
    let path = sample_log(dir.path());
    let bytes = std::fs::read(&path).expect("read");
    let full = read_log(&path).expect("the whole log reads");
    assert!(full.torn_tail.is_none());
    let n_records = full.records.len();
    assert_eq!(n_records, 9);
    // Line boundaries: offsets just after each newline.
    let ends: Vec<usize> = bytes
        .iter()
        .enumerate()
        .filter(|(_, b)| **b == b'\n')
        .map(|(i, _)| i + 1)
        .collect();
    for k in 0..=bytes.len() {
        let cut = &bytes[..k];
        let complete = ends.iter().filter(|&&e| e <= k).count();
        match parse_log(cut, "cut.log") {
            Ok(c) => {
                // Exactly the complete records, each as written.
                assert_eq!(c.records.len(), complete, "offset {k}");
                assert_eq!(&c.records[..], &full.records[..complete], "offset {k}");
                let at_boundary = k == 0 || ends.contains(&k);
                assert_eq!(c.torn_tail.is_some(), !at_boundary, "offset {k}");
                assert_eq!(c.end_offset as usize, ends[complete - 1], "offset {k}");
                if let Some(t) = c.torn_tail {
                    assert_eq!(t.line, complete + 1);
                    assert_eq!(t.offset as usize + t.bytes as usize, k);
                }
            }
            Err(e) => {
                // Only a log without a complete snapshot fails, and it says so.
                assert_eq!(complete, 0, "offset {k}: {e}");
                let msg = e.to_string();
                assert!(msg.starts_with("cut.log:1:"), "offset {k}: {msg}");
                assert!(msg.contains("snapshot"), "offset {k}: {msg}");
            }
        }
    }
}

#[test]
fn torn_tail_is_reported_by_the_commands_and_cut_by_the_next_writer() {
    let dir = tempfile::tempdir().expect("tempdir");
    let path = sample_log(dir.path());
    let bytes = std::fs::read(&path).expect("read");
    let keep = bytes.len() - 25;
    std::fs::write(&path, &bytes[..keep]).expect("truncate");
    bin()
        .args(["timeline".as_ref(), path.as_os_str()])
        .assert()
        .success()
        .stderr(predicates::str::contains(format!(
            "{}:9: torn last record (line 9) left out",
            path.display()
        )));
    bin()
        .args([
            "record".as_ref(),
            path.as_os_str(),
            "{kind: note, text: after}".as_ref(),
        ])
        .assert()
        .success()
        .stdout(predicates::str::contains("recorded seq 9"))
        .stderr(predicates::str::contains("cut off before appending"));
    let c = read_log(&path).expect("clean again");
    assert!(c.torn_tail.is_none());
    assert_eq!(c.records.len(), 9);
}

#[test]
fn damage_in_the_middle_names_its_line() {
    let dir = tempfile::tempdir().expect("tempdir");
    let path = sample_log(dir.path());
    let bytes = std::fs::read(&path).expect("read");
    let text = String::from_utf8(bytes.clone()).expect("utf8");
    let lines: Vec<&str> = text.split_inclusive('\n').collect();

    // A changed byte in line 4.
    let mut damaged = bytes.clone();
    let at = lines[..3].iter().map(|l| l.len()).sum::<usize>() + 20;
    damaged[at] ^= 0x04;
    let err = parse_log(&damaged, "d.log").expect_err("damage refused");
    assert!(matches!(err, LogError::Damaged { line: 4, .. }), "{err}");
    assert!(
        err.to_string().starts_with("d.log:4: damaged record"),
        "{err}"
    );

    // A missing line 5.
    let missing: String = lines
        .iter()
        .enumerate()
        .filter(|(i, _)| *i != 4)
        .map(|(_, l)| *l)
        .collect();
    let err = parse_log(missing.as_bytes(), "d.log").expect_err("gap refused");
    assert!(
        err.to_string()
            .starts_with("d.log:5: sequence number 6 where 5"),
        "{err}"
    );

    // A repeated line.
    let mut repeated = text.clone();
    repeated.push_str(lines[3]);
    let err = parse_log(repeated.as_bytes(), "d.log").expect_err("repeat refused");
    assert!(matches!(err, LogError::Damaged { line: 10, .. }), "{err}");

    // A blank line in the middle.
    let blank = format!("{}\n{}", lines[..2].concat(), lines[2..].concat());
    let err = parse_log(blank.as_bytes(), "d.log").expect_err("blank refused");
    assert!(err.to_string().starts_with("d.log:3: empty line"), "{err}");

    // Damage of the last complete line's checksum is a torn tail.
    let mut last = bytes.clone();
    let n = last.len();
    last[n - 5] = if last[n - 5] == b'0' { b'1' } else { b'0' };
    let c = parse_log(&last, "d.log").expect("torn tail, not an error");
    assert_eq!(c.records.len(), 8);
    assert_eq!(c.torn_tail.expect("reported").line, 9);

    // Through the binary: file and line named, exit 1.
    std::fs::write(&path, &damaged).expect("write");
    for cmd in ["timeline", "report", "record"] {
        let mut c = bin();
        c.arg(cmd).arg(&path);
        if cmd == "record" {
            c.arg("{kind: note, text: x}");
        }
        c.assert()
            .code(1)
            .stderr(predicates::str::contains(format!("{}:4:", path.display())));
    }
    assert_eq!(
        std::fs::read(&path).expect("read"),
        damaged,
        "nothing written"
    );
}

#[test]
fn a_log_from_a_newer_format_is_refused() {
    let dir = tempfile::tempdir().expect("tempdir");
    let path = sample_log(dir.path());
    let c = read_log(&path).expect("read");
    let Event::IncidentOpened { incident, .. } = &c.records[0].event else {
        panic!("first record is the snapshot")
    };
    let future = Record {
        seq: 1,
        at: c.records[0].at,
        by: "ic".into(),
        event: Event::IncidentOpened {
            format: FORMAT_VERSION + 1,
            incident: incident.clone(),
        },
    };
    let newer = dir.path().join("newer.log");
    std::fs::write(&newer, encode_line(&future)).expect("write");
    let err = read_log(&newer).expect_err("refused");
    assert!(
        matches!(err, LogError::FutureFormat { found, .. } if found == 2),
        "{err}"
    );
    bin()
        .arg("timeline")
        .arg(&newer)
        .assert()
        .code(1)
        .stderr(predicates::str::contains(
            "written by a newer program (log format 2",
        ));
}

fn digest(path: &std::path::Path) -> (u32, usize) {
    let b = std::fs::read(path).expect("read");
    (crc32fast::hash(&b), b.len())
}

#[test]
fn refused_events_leave_the_log_byte_identical() {
    let dir = tempfile::tempdir().expect("tempdir");
    let path = sample_log(dir.path());
    let before = digest(&path);
    for (event, says) in [
        ("{kind: moved, unit: E9, to: T1}", "unknown unit `E9`"),
        ("{kind: moved, unit: E3, to: T9}", "unknown task `T9`"),
        (
            "{kind: moved, unit: C1, to: T1}",
            "does not accept unit type `crane`",
        ),
        ("{kind: moved, unit: E1, to: T2}", "pinned to T1"),
        (
            "{kind: unit_rerated, unit: E1, trait: foam, mean: 3}",
            "unknown trait `foam`",
        ),
        (
            "{kind: need_changed, task: T3, trait: lift, need: 2}",
            "task T3 is closed",
        ),
        (
            "{kind: unit_teleported, unit: E1}",
            "unknown variant `unit_teleported`",
        ),
        (
            "{kind: plan_accepted, moves: [{unit: E3, from: T1, to: T2}]}",
            "E3 is on T2, not T1",
        ),
        (
            "{kind: unit_rerated, unit: E1, trait: water, sd: -4}",
            "sd: must be a finite number ≥ 0",
        ),
        (
            "{kind: unit_added, unit: {id: E1, type: engine}}",
            "already on the roster",
        ),
        (
            "{kind: task_added, task: {id: T5, needs: {foam: 3}}}",
            "unknown trait `foam`",
        ),
        ("not: [valid", "event:"),
    ] {
        bin()
            .arg("record")
            .arg(&path)
            .arg(event)
            .assert()
            .code(1)
            .stderr(predicates::str::contains(says));
        assert_eq!(digest(&path), before, "{event} changed the log");
    }
    // max_units 3 on T1: E1 and E4 are there; E3 makes 3 — allowed.
    bin()
        .arg("record")
        .arg(&path)
        .args(["{kind: moved, unit: E3, to: T1}", "--by", "ic"])
        .assert()
        .success();
    assert_ne!(digest(&path), before);
}

#[test]
fn start_refuses_to_overwrite() {
    let dir = tempfile::tempdir().expect("tempdir");
    let path = sample_log(dir.path());
    let before = digest(&path);
    bin()
        .args(["start", "tests/log_fixtures/drill.yaml", "--log"])
        .arg(&path)
        .assert()
        .code(1)
        .stderr(predicates::str::contains("already exists"));
    assert_eq!(digest(&path), before);
}

#[test]
fn read_from_returns_new_complete_records_only() {
    use oddsboard::log::{LogWriter, read_from};
    use std::io::Write;
    let dir = tempfile::tempdir().expect("tempdir");
    let path = sample_log(dir.path());
    let start = read_log(&path).expect("read");
    let (none, same) = read_from(&path, start.end_offset).expect("nothing new");
    assert!(none.is_empty());
    assert_eq!(same, start.end_offset);
    let mut w = LogWriter::open(&path).expect("open");
    w.append("radio", ev("{kind: note, text: one}"))
        .expect("append");
    w.append("radio", ev("{kind: note, text: two}"))
        .expect("append");
    // A line still being written (no newline yet) is left for later.
    let mut f = std::fs::OpenOptions::new()
        .append(true)
        .open(&path)
        .expect("open raw");
    f.write_all(b"{\"seq\":12,\"at\"").expect("partial");
    let (new, end) = read_from(&path, start.end_offset).expect("new records");
    assert_eq!(new.iter().map(|r| r.seq).collect::<Vec<_>>(), vec![10, 11]);
    let len = std::fs::metadata(&path).expect("meta").len();
    assert_eq!(end, len - 14);
}
