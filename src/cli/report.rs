//! `oddsboard report LOG`: the after-action report (Markdown) of a log;
//! `--charts DIR` also writes its charts as SVG files; `--all LOG…` scores
//! the closed tasks of many logs together (calibration only).

use super::CliResult;
use super::input::read_log_reporting;
use crate::report::{after_action, calibration_across, render_across_markdown, render_markdown};
use std::path::PathBuf;

#[derive(Debug, clap::Args)]
pub struct Args {
    /// The log to report on (with `--all`: every log to score).
    #[arg(required = true)]
    pub logs: Vec<PathBuf>,
    /// Score every closed task of all the logs together: Brier score with
    /// Murphy's decomposition and a reliability table with counts.
    #[arg(long, conflicts_with = "charts")]
    pub all: bool,
    /// The report's content as one JSON document instead of Markdown.
    #[arg(long)]
    pub json: bool,
    /// Also write the charts (worst odds per tier over time, reliability
    /// diagram) as SVG files into this directory.
    #[arg(long, value_name = "DIR")]
    pub charts: Option<PathBuf>,
}

pub fn run(args: Args) -> CliResult {
    if args.all {
        let mut reports = Vec::with_capacity(args.logs.len());
        for log in &args.logs {
            let (_, contents) = read_log_reporting(log)?;
            let name = log.display().to_string();
            reports.push(after_action(&contents.records, &name).map_err(|e| e.in_file(&name))?);
        }
        let c = calibration_across(&reports);
        if args.json {
            super::json::print_pretty(&c)?;
        } else {
            print!("{}", render_across_markdown(&c));
        }
        return Ok(());
    }
    let [log] = args.logs.as_slice() else {
        // A usage error (exit 2), worded by clap like the others.
        super::command()
            .error(
                clap::error::ErrorKind::TooManyValues,
                "report takes one log; give --all to score several together",
            )
            .exit();
    };
    let (_, contents) = read_log_reporting(log)?;
    let name = log.display().to_string();
    let data = after_action(&contents.records, &name).map_err(|e| e.in_file(&name))?;
    let charts = match &args.charts {
        Some(dir) => super::charts::write_charts(&data, dir)?,
        None => Vec::new(),
    };
    if args.json {
        super::json::print_pretty(&data)?;
        for (_, path) in &charts {
            eprintln!("chart written: {}", path.display());
        }
    } else {
        print!("{}", crate::clean::clean_lines(&render_markdown(&data)));
        if !charts.is_empty() {
            println!("\n## Charts\n");
            for (title, path) in &charts {
                println!("![{title}]({})\n", path.display());
            }
        }
    }
    Ok(())
}
