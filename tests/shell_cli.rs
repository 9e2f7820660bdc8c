//! Shell completions, manual pages and `--version`, generated from the clap
//! definitions: each must name every visible subcommand.

use assert_cmd::Command;
use clap_complete::Shell;
use oddsboard::cli::{command, shell};

fn oddsboard() -> Command {
    Command::cargo_bin("oddsboard").expect("binary")
}

/// The visible subcommands, read from the parser itself (so a new
/// subcommand is checked without editing this test).
fn subcommands() -> Vec<String> {
    let names: Vec<String> = command()
        .get_subcommands()
        .filter(|s| !s.is_hide_set())
        .map(|s| s.get_name().to_string())
        .collect();
    // A floor, so an empty list cannot pass: the commands of the README.
    for must in ["check", "odds", "plan", "report", "completions", "man"] {
        assert!(names.iter().any(|n| n == must), "{must} missing: {names:?}");
    }
    names
}

#[test]
fn completions_name_every_subcommand_in_each_shell() {
    let subs = subcommands();
    for shell in [Shell::Bash, Shell::Zsh, Shell::Fish] {
        let mut out = Vec::new();
        shell::write_completions(shell, &mut out);
        let text = String::from_utf8(out).expect("utf-8");
        for sub in &subs {
            assert!(
                text.contains(sub.as_str()),
                "{shell} completion lacks `{sub}`"
            );
        }
    }
}

#[test]
fn completions_subcommand_prints_a_script() {
    let out = oddsboard().args(["completions", "bash"]).output().unwrap();
    assert!(out.status.success());
    let text = String::from_utf8_lossy(&out.stdout);
    assert!(
        text.contains("complete -F"),
        "not a bash completion: {text}"
    );
    // An unknown shell is a usage error (exit 2).
    oddsboard().args(["completions", "tcsh"]).assert().code(2);
}

#[test]
fn man_page_lists_every_subcommand_and_each_has_a_page() {
    let subs = subcommands();
    let mut out = Vec::new();
    shell::write_man(None, &mut out).unwrap();
    let page = String::from_utf8(out).expect("utf-8");
    assert!(page.starts_with(".ie") || page.contains(".TH"), "not roff");
    assert!(page.contains(".SH SUBCOMMANDS"));
    for sub in &subs {
        assert!(
            page.contains(&format!("oddsboard\\-{sub}")),
            "man lacks {sub}"
        );
        let mut one = Vec::new();
        shell::write_man(Some(sub), &mut one).unwrap();
        let one = String::from_utf8(one).unwrap();
        assert!(one.contains(".TH"), "{sub}: not a page");
    }
    let mut out = Vec::new();
    assert!(shell::write_man(Some("nonesuch"), &mut out).is_err());
}

#[test]
fn man_dir_writes_one_page_per_subcommand() {
    let dir = tempfile::tempdir().unwrap();
    oddsboard()
        .args(["man", "--dir"])
        .arg(dir.path())
        .assert()
        .success();
    assert!(dir.path().join("oddsboard.1").is_file());
    for sub in subcommands() {
        let page = dir.path().join(format!("oddsboard-{sub}.1"));
        assert!(page.is_file(), "{} missing", page.display());
    }
}

#[test]
fn version_names_the_log_format() {
    let out = oddsboard().arg("--version").output().unwrap();
    assert!(out.status.success());
    let text = String::from_utf8_lossy(&out.stdout);
    let want = format!(
        "oddsboard {} (log format {})",
        env!("CARGO_PKG_VERSION"),
        oddsboard::log::FORMAT_VERSION
    );
    assert_eq!(text.trim(), want);
}
