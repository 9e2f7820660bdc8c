//! End to end in a real pseudo-terminal (tmux): `dash` on an invented
//! incident, a loss and an accept by keys, `q`; and `watch` picking up a
//! record another process appends. Skips with a message when tmux is absent.

mod tui_common;

use std::path::Path;
use std::process::Command;
use std::time::{Duration, Instant};

use oddsboard::log::{Event, LogWriter, read_log};

fn have_tmux() -> bool {
    Command::new("tmux")
        .arg("-V")
        .output()
        .is_ok_and(|o| o.status.success())
}

struct Session(String);

impl Session {
    fn start(name: &str, cmd: &str) -> Session {
        let name = format!("{name}-{}", std::process::id());
        let status = Command::new("tmux")
            .args([
                "new-session",
                "-d",
                "-s",
                &name,
                "-x",
                "140",
                "-y",
                "45",
                cmd,
            ])
            .env("NO_COLOR", "1")
            .status()
            .expect("tmux runs");
        assert!(status.success(), "tmux session starts");
        Session(name)
    }
    fn screen(&self) -> String {
        let out = Command::new("tmux")
            .args(["capture-pane", "-p", "-t", &self.0])
            .output()
            .expect("capture-pane");
        String::from_utf8_lossy(&out.stdout).into_owned()
    }
    fn keys(&self, keys: &[&str]) {
        for k in keys {
            let status = Command::new("tmux")
                .args(["send-keys", "-t", &self.0, k])
                .status()
                .expect("send-keys");
            assert!(status.success());
        }
    }
    fn text(&self, text: &str) {
        Command::new("tmux")
            .args(["send-keys", "-t", &self.0, "-l", text])
            .status()
            .expect("send-keys -l");
    }
    /// Waits until the screen contains `what` (at most `limit`); returns the
    /// time it took, or panics with the screen.
    fn wait_for(&self, what: &str, limit: Duration) -> Duration {
        let start = Instant::now();
        loop {
            let s = self.screen();
            if s.contains(what) {
                return start.elapsed();
            }
            if start.elapsed() > limit {
                panic!("screen never showed {what:?}; it shows:\n{s}");
            }
            std::thread::sleep(Duration::from_millis(40));
        }
    }
    fn alive(&self) -> bool {
        Command::new("tmux")
            .args(["has-session", "-t", &self.0])
            .output()
            .is_ok_and(|o| o.status.success())
    }
}

impl Drop for Session {
    fn drop(&mut self) {
        let _ = Command::new("tmux")
            .args(["kill-session", "-t", &self.0])
            .output();
    }
}

fn bin() -> &'static str {
    env!("CARGO_BIN_EXE_oddsboard")
}

fn kinds(log: &Path) -> Vec<Event> {
    read_log(log)
        .expect("log reads")
        .records
        .into_iter()
        .map(|r| r.event)
        .collect()
}

#[test]
fn dash_loss_and_accept_by_keys_then_quit() {
    if !have_tmux() {
        eprintln!("SKIPPED: tmux is not installed; the end-to-end dashboard test needs it");
        return;
    }
    let dir = tempfile::tempdir().unwrap();
    // The shipped sample (invented), copied so its log is created beside it.
    let sample = Path::new(env!("CARGO_MANIFEST_DIR")).join("sample-incidents/warehouse-fire.yaml");
    let file = dir.path().join("warehouse-fire.yaml");
    std::fs::copy(&sample, &file).expect("sample incident present");
    let log = dir.path().join("warehouse-fire.log");
    let s = Session::start(
        "oddsboard-dash",
        &format!("{} dash {} --by ic --budget-ms 300", bin(), file.display()),
    );
    s.wait_for("re-plan: done", Duration::from_secs(20));
    assert!(s.screen().contains("LIFE SAFETY"));
    assert!(s.screen().contains("rescue-cold-store"));
    assert!(s.screen().contains("Decision support only"));
    s.keys(&["l"]);
    s.wait_for("Mark a unit lost", Duration::from_secs(5));
    s.text("E17");
    s.keys(&["Enter"]);
    s.text("pump failure");
    s.keys(&["Enter"]);
    s.wait_for("E17 lost (pump failure)", Duration::from_secs(5));
    // The re-plan after the loss proposes moves; accept them all.
    s.wait_for("Proposed moves", Duration::from_secs(20));
    s.wait_for("re-plan: done", Duration::from_secs(20));
    s.keys(&["y"]);
    s.wait_for("plan accepted", Duration::from_secs(5));
    s.keys(&["q"]);
    let start = Instant::now();
    while s.alive() && start.elapsed() < Duration::from_secs(5) {
        std::thread::sleep(Duration::from_millis(50));
    }
    assert!(!s.alive(), "q quits the dashboard");

    let events = kinds(&log);
    let lost = events
        .iter()
        .position(|e| {
            matches!(e, Event::UnitLost { unit, reason }
                if unit == "E17" && reason.as_deref() == Some("pump failure"))
        })
        .expect("the loss is in the log");
    let accepted = events
        .iter()
        .position(|e| matches!(e, Event::PlanAccepted { moves } if !moves.is_empty()))
        .expect("the accept is in the log");
    assert!(lost < accepted);
    // What was accepted is what was last proposed before it.
    let proposed = events[..accepted]
        .iter()
        .rev()
        .find_map(|e| match e {
            Event::PlanProposed { moves } => Some(moves.clone()),
            _ => None,
        })
        .expect("a proposal before the accept");
    match &events[accepted] {
        Event::PlanAccepted { moves } => assert_eq!(moves, &proposed),
        _ => unreachable!(),
    }
}

#[test]
fn watch_shows_a_record_appended_by_another_process() {
    if !have_tmux() {
        eprintln!("SKIPPED: tmux is not installed; the end-to-end watch test needs it");
        return;
    }
    let dir = tempfile::tempdir().unwrap();
    let log = dir.path().join("drill.log");
    let mut writer = LogWriter::create(&log, &tui_common::drill(), "ic").unwrap();
    let s = Session::start(
        "oddsboard-watch",
        &format!("{} watch {}", bin(), log.display()),
    );
    s.wait_for("WATCH", Duration::from_secs(20));
    let appended = Instant::now();
    writer
        .append(
            "radio",
            Event::Note {
                text: "Crews report partial roof collapse".into(),
            },
        )
        .unwrap();
    s.wait_for("Crews report partial", Duration::from_secs(10));
    // Reported, not asserted: speed targets live in the benchmarks.
    eprintln!(
        "watch showed the appended record after {:?}",
        appended.elapsed()
    );
    s.keys(&["q"]);
}

impl Session {
    fn title(&self) -> String {
        let out = Command::new("tmux")
            .args(["display", "-p", "-t", &self.0, "#{pane_title}"])
            .output()
            .expect("tmux display");
        String::from_utf8_lossy(&out.stdout).trim().to_string()
    }
}

/// The case of the issue: another process appends a note whose text would
/// set the window title (OSC 0) and clear the screen (CSI 2J). The pane
/// title stays as it was and `watch` shows the sequences escaped.
#[test]
fn watch_shows_a_note_with_escape_sequences_escaped() {
    if !have_tmux() {
        eprintln!("SKIPPED: tmux is not installed; the end-to-end watch test needs it");
        return;
    }
    let dir = tempfile::tempdir().unwrap();
    let log = dir.path().join("drill.log");
    LogWriter::create(&log, &tui_common::drill(), "ic").unwrap();
    let s = Session::start(
        "oddsboard-watch-esc",
        &format!("{} watch {}", bin(), log.display()),
    );
    s.wait_for("WATCH", Duration::from_secs(20));
    let title = s.title();
    let out = Command::new(bin())
        .arg("record")
        .arg(&log)
        .args(["--by", "feed"])
        .arg(r#"{"kind":"note","text":"hostile \u001b]0;PWNED\u0007 then \u001b[2J end"}"#)
        .output()
        .expect("record runs");
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    // The log panel may cut the line short; its start is enough.
    s.wait_for(r"note: hostile \u{1b}]0;PW", Duration::from_secs(10));
    assert_eq!(s.title(), title, "the pane title is unchanged");
    assert!(!s.title().contains("PWNED"));
    assert!(
        s.screen().contains("LIFE SAFETY"),
        "the screen was not cleared"
    );
    s.keys(&["q"]);
}

/// SIGTERM, SIGHUP and SIGINT sent to a running dashboard restore the
/// terminal and end it with 128 + the signal's number (POSIX shells report
/// a process ended by signal n as 128 + n).
#[test]
fn signals_restore_the_terminal_and_exit_128_plus_n() {
    if !have_tmux() {
        eprintln!("SKIPPED: tmux is not installed; the end-to-end signal test needs it");
        return;
    }
    for (name, number) in [("TERM", 15), ("HUP", 1), ("INT", 2)] {
        let dir = tempfile::tempdir().unwrap();
        let log = dir.path().join("drill.log");
        LogWriter::create(&log, &tui_common::drill(), "ic").unwrap();
        let pid = dir.path().join("pid");
        let code = dir.path().join("code");
        // The inner shell writes its pid and becomes the dashboard (exec);
        // the outer one keeps the exit code and shows a prompt-like line.
        let inner = format!(
            "echo $$ > {}; exec {} watch {}",
            pid.display(),
            bin(),
            log.display()
        );
        let cmd = format!(
            "sh -c '{inner}'; echo $? > {}; echo back-in-the-shell; sleep 30",
            code.display()
        );
        let s = Session::start("oddsboard-signal", &cmd);
        s.wait_for("WATCH", Duration::from_secs(20));
        let p = std::fs::read_to_string(&pid).expect("pid written");
        let status = Command::new("kill")
            .args([&format!("-{name}"), p.trim()])
            .status()
            .expect("kill runs");
        assert!(status.success());
        s.wait_for("back-in-the-shell", Duration::from_secs(10));
        let c = std::fs::read_to_string(&code).expect("exit code written");
        assert_eq!(c.trim(), (128 + number).to_string(), "SIG{name}");
        // The alternate screen is left: the board is gone from the pane.
        assert!(
            !s.screen().contains("LIFE SAFETY"),
            "SIG{name}: {}",
            s.screen()
        );
    }
}
