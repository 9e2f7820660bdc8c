//! The core (model, odds, solver, log, report, advise) is a library any front
//! end could use: it must not depend on the terminal stack. This test reads
//! the sources and fails if a core module names ratatui, crossterm or tokio.

use std::path::Path;

fn scan(dir: &Path, bad: &mut Vec<String>) {
    for entry in std::fs::read_dir(dir).expect("source folder readable") {
        let path = entry.expect("dir entry").path();
        if path.is_dir() {
            scan(&path, bad);
        } else if path.extension().is_some_and(|e| e == "rs") {
            let text = std::fs::read_to_string(&path).expect("source readable");
            for (i, line) in text.lines().enumerate() {
                let code = line.split("//").next().unwrap_or("");
                for forbidden in ["ratatui", "crossterm", "tokio"] {
                    if code.contains(forbidden) {
                        bad.push(format!("{}:{}: uses {forbidden}", path.display(), i + 1));
                    }
                }
            }
        }
    }
}

#[test]
fn core_modules_do_not_touch_the_terminal() {
    let root = Path::new(env!("CARGO_MANIFEST_DIR")).join("src");
    let mut bad = Vec::new();
    for core in ["model", "odds", "solver", "log", "report", "advise"] {
        scan(&root.join(core), &mut bad);
    }
    assert!(
        bad.is_empty(),
        "core modules must not use the terminal stack:\n{}",
        bad.join("\n")
    );
}
