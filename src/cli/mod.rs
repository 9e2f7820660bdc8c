//! The command line: clap definitions and one module per subcommand.
//!
//! Each subcommand module owns its `Args` (clap) and a `run(Args)` function
//! returning [`CliResult`]. Exit codes: 0 success, 1 bad input (any error a
//! subcommand returns), 2 usage error (clap).

use clap::{CommandFactory, FromArgMatches, Parser, Subcommand};
use std::process::ExitCode;

pub mod advise;
pub mod charts;
pub mod check;
pub mod dash;
pub mod generate;
pub mod input;
pub mod json;
pub mod odds;
pub mod plan;
pub mod progress;
pub mod ratings;
pub mod record;
pub mod render;
pub mod replay;
pub mod report;
pub mod sheet;
pub mod shell;
pub mod simulate;
pub mod start;
pub mod timeline;
pub mod watch;

/// What a subcommand returns; an error is printed and exits 1.
pub type CliResult = anyhow::Result<()>;

const EXIT_CODES: &str = "\
Exit codes:
  0  success
  1  bad input (an invalid file, log or event; the error names file, line, field)
  2  usage error (unknown command or flag)";

/// The exit codes and the standing caution, after `--help`.
fn after_help() -> String {
    format!(
        "{EXIT_CODES}\n\n{}",
        render::wrap(&crate::safety::standing_caution(), 79, "").trim_end()
    )
}

/// Risk-adaptive re-tasking of response units during an emergency incident.
#[derive(Debug, Parser)]
#[command(name = "oddsboard", version, about, after_help = after_help())]
pub struct Cli {
    #[command(subcommand)]
    pub command: Command,
}

#[derive(Debug, Subcommand)]
pub enum Command {
    /// Validate an incident file or a log.
    Check(check::Args),
    /// Odds of the placement on the ground, per task and trait, with regime.
    Odds(odds::Args),
    /// Recommend a placement: moves, odds before → after, baselines.
    Plan(plan::Args),
    /// Monte Carlo of the placement: success rates beside the model's odds.
    Simulate(simulate::Args),
    /// Create a log whose first record is the incident in FILE.
    Start(start::Args),
    /// Append one event (or one per line from stdin) to a log.
    Record(record::Args),
    /// The commander's interactive dashboard.
    Dash(dash::Args),
    /// Read-only dashboard that follows a live log.
    Watch(watch::Args),
    /// Replay a saved log step by step.
    Replay(replay::Args),
    /// One row per log record with the odds after it.
    Timeline(timeline::Args),
    /// After-action report (Markdown) of a log.
    Report(report::Args),
    /// Ratings learned from the field readings of many logs (REML).
    Ratings(ratings::Args),
    /// Fragile units, resource requests and life-safety notes.
    Advise(advise::Args),
    /// The briefing sheet: per task its units, odds and notes; reserve.
    Sheet(sheet::Args),
    /// Print a shell completion script (bash, zsh, fish, …) on stdout.
    Completions(shell::CompletionsArgs),
    /// Print the manual page (roff) on stdout, or write every page with --dir.
    Man(shell::ManArgs),
    /// Write a seeded, invented incident of a given size (benchmarks, tests).
    #[command(hide = true)]
    Generate(generate::Args),
}

/// What `--version` prints after the program's name: the program's version
/// and the log format it writes (a log of a newer format is refused).
pub fn version_text() -> String {
    format!(
        "{} (log format {})",
        env!("CARGO_PKG_VERSION"),
        crate::log::FORMAT_VERSION
    )
}

/// The clap command with the full version text; the parser, the completions
/// and the manual pages all come from it.
pub fn command() -> clap::Command {
    Cli::command().version(version_text())
}

/// Entry point of the binary.
pub fn main() -> ExitCode {
    let parsed = command()
        .try_get_matches()
        .and_then(|mut m| Cli::from_arg_matches_mut(&mut m));
    let cli = match parsed {
        Ok(cli) => cli,
        Err(e) => {
            let code = if e.use_stderr() { 2 } else { 0 };
            let _ = e.print();
            return ExitCode::from(code);
        }
    };
    match run(cli.command) {
        Ok(()) => ExitCode::SUCCESS,
        Err(e) => {
            if let Some(crate::tui::launch::Signalled(n)) = e.downcast_ref() {
                // The terminal is restored and every action is in the log.
                eprintln!("oddsboard: stopped by signal {n}");
                return ExitCode::from(u8::try_from(128 + n).unwrap_or(255));
            }
            eprintln!("error: {}", crate::clean::clean_lines(&error_text(&e)));
            ExitCode::from(1)
        }
    }
}

/// The error and its causes on one line, each said once: the core's errors
/// already name their cause (`file: cannot read: No such file…`), so a
/// cause whose text is already there is not repeated.
pub fn error_text(e: &anyhow::Error) -> String {
    let mut text = String::new();
    for cause in e.chain() {
        let c = cause.to_string();
        if text.contains(&c) {
            continue;
        }
        if !text.is_empty() {
            text.push_str(": ");
        }
        text.push_str(&c);
    }
    text
}

pub fn run(command: Command) -> CliResult {
    match command {
        Command::Check(a) => check::run(a),
        Command::Odds(a) => odds::run(a),
        Command::Plan(a) => plan::run(a),
        Command::Simulate(a) => simulate::run(a),
        Command::Start(a) => start::run(a),
        Command::Record(a) => record::run(a),
        Command::Dash(a) => dash::run(a),
        Command::Watch(a) => watch::run(a),
        Command::Replay(a) => replay::run(a),
        Command::Timeline(a) => timeline::run(a),
        Command::Report(a) => report::run(a),
        Command::Ratings(a) => ratings::run(a),
        Command::Advise(a) => advise::run(a),
        Command::Sheet(a) => sheet::run(a),
        Command::Completions(a) => shell::run_completions(a),
        Command::Man(a) => shell::run_man(a),
        Command::Generate(a) => generate::run(a),
    }
}
