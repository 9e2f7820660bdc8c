//! The core crate (`crates/oddsboard-core`: model, odds, solver, log, report,
//! advise) is a library any front end could use. Cargo keeps the boundary —
//! the core cannot name a crate its manifest does not list — and this test
//! keeps the manifest honest: it fails if the core gains a terminal, runtime,
//! command-line or application-error dependency, or if core code prints.

use std::path::Path;

/// Crates that belong to the binary (terminal, async runtime, argument
/// parsing, application errors), never to the core.
const FORBIDDEN: &[&str] = &[
    "ratatui",
    "crossterm",
    "tokio",
    "futures",
    "clap",
    "anyhow",
    "tui-input",
    "libc",
    "indicatif",
];

fn core_dir() -> std::path::PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("crates/oddsboard-core")
}

/// The dependency names of every `[*dependencies*]` table of a manifest.
fn dependency_names(manifest: &str) -> Vec<String> {
    let mut names = Vec::new();
    let mut in_deps = false;
    for line in manifest.lines() {
        let line = line.trim();
        if line.starts_with('[') {
            in_deps = line.contains("dependencies");
            // `[dependencies.foo]` names the crate in the header itself.
            if let Some(rest) = line.strip_prefix('[').and_then(|l| l.strip_suffix(']'))
                && let Some(name) = rest.split_once("dependencies.").map(|(_, n)| n)
            {
                names.push(name.trim().to_string());
                in_deps = false;
            }
            continue;
        }
        if in_deps
            && !line.starts_with('#')
            && let Some((name, _)) = line.split_once('=')
        {
            names.push(name.trim().trim_matches('"').to_string());
        }
    }
    names
}

#[test]
fn core_manifest_names_no_terminal_or_runtime_crate() {
    let manifest = std::fs::read_to_string(core_dir().join("Cargo.toml")).expect("core manifest");
    let names = dependency_names(&manifest);
    assert!(
        names.iter().any(|n| n == "serde"),
        "parser found no dependencies: {names:?}"
    );
    let bad: Vec<&String> = names
        .iter()
        .filter(|n| FORBIDDEN.contains(&n.as_str()))
        .collect();
    assert!(bad.is_empty(), "the core must not depend on {bad:?}");
}

#[test]
fn dependency_parser_sees_a_forbidden_crate() {
    // The check above must be able to fail: a manifest naming tokio is caught.
    let names = dependency_names(
        "[dependencies]\nserde = \"1\"\ntokio = { version = \"1\" }\n[dev-dependencies.clap]\nversion = \"4\"\n",
    );
    assert!(names.contains(&"tokio".to_string()));
    assert!(names.contains(&"clap".to_string()));
}

fn scan(dir: &Path, bad: &mut Vec<String>) {
    for entry in std::fs::read_dir(dir).expect("source folder readable") {
        let path = entry.expect("dir entry").path();
        if path.is_dir() {
            scan(&path, bad);
        } else if path.extension().is_some_and(|e| e == "rs") {
            let text = std::fs::read_to_string(&path).expect("source readable");
            for (i, line) in text.lines().enumerate() {
                let code = line.split("//").next().unwrap_or("");
                for forbidden in [
                    "println!",
                    "eprintln!",
                    "print!(",
                    "eprint!(",
                    "std::io::stdout",
                    "std::io::stderr",
                ] {
                    if code.contains(forbidden) {
                        bad.push(format!("{}:{}: {forbidden}", path.display(), i + 1));
                    }
                }
            }
        }
    }
}

#[test]
fn core_code_never_prints() {
    let mut bad = Vec::new();
    scan(&core_dir().join("src"), &mut bad);
    assert!(
        bad.is_empty(),
        "the core must not print:\n{}",
        bad.join("\n")
    );
}
