//! `oddsboard report LOG`: the after-action report (Markdown) of a log;
//! `--charts DIR` also writes its charts as SVG files.

use super::CliResult;
use super::input::read_log_reporting;
use crate::report::{after_action, render_markdown};
use std::path::PathBuf;

#[derive(Debug, clap::Args)]
pub struct Args {
    /// The log to report on.
    pub log: PathBuf,
    /// The report's content as one JSON document instead of Markdown.
    #[arg(long)]
    pub json: bool,
    /// Also write the charts (worst odds per tier over time, reliability
    /// diagram) as SVG files into this directory.
    #[arg(long, value_name = "DIR")]
    pub charts: Option<PathBuf>,
}

pub fn run(args: Args) -> CliResult {
    let (_, contents) = read_log_reporting(&args.log)?;
    let name = args.log.display().to_string();
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
