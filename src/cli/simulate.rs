//! `oddsboard simulate FILE`: Monte Carlo of the placement on the ground,
//! per-task and all-tasks success rates with Wilson score intervals beside
//! the model's odds.

use super::CliResult;
use super::input::load_state;
use super::render::{Columns, caution_text, wrap};
use crate::odds::simulate::{SimulationOptions, simulate, simulation_view};
use crate::odds::text::{pct, pct_detail};
use std::path::PathBuf;

#[derive(Debug, clap::Args)]
pub struct Args {
    /// Incident file or log (a log is read to its end).
    pub file: PathBuf,
    /// Number of simulated draws of the whole incident.
    #[arg(long, default_value_t = 100_000, value_parser = clap::value_parser!(u64).range(1..))]
    pub trials: u64,
    /// Seed of the random generator (runs with the same seed repeat exactly).
    #[arg(long, default_value_t = 0)]
    pub seed: u64,
    /// Confidence level of the intervals, strictly between 0 and 1.
    #[arg(long, default_value_t = 0.99, value_parser = parse_confidence)]
    pub confidence: f64,
    /// Print one JSON document instead of the table.
    #[arg(long)]
    pub json: bool,
}

fn parse_confidence(s: &str) -> Result<f64, String> {
    let c: f64 = s.parse().map_err(|_| format!("not a number: {s}"))?;
    if c > 0.0 && c < 1.0 {
        Ok(c)
    } else {
        Err(format!("must be strictly between 0 and 1, got {s}"))
    }
}

pub fn run(args: Args) -> CliResult {
    let incident = load_state(&args.file)?;
    let options = SimulationOptions {
        trials: args.trials,
        seed: args.seed,
    };
    let sim = simulate(&incident, &incident.placement, options);
    let view = simulation_view(&incident, &sim, args.confidence);
    if args.json {
        super::json::print_pretty(&view)?;
        return Ok(());
    }
    let level = format!("{}%", args.confidence * 100.0);
    let mut out = format!(
        "{}: Monte Carlo of the placement on the ground ({} trials, seed {})\n\n",
        incident.name, view.trials, view.seed
    );
    let mut cols = Columns::new(
        &[
            "Task",
            "Tier",
            "Model",
            "Simulated",
            &format!("{level} interval"),
            "",
        ],
        &[false, false, true, true, false, false],
    );
    for t in &view.tasks {
        cols.push(vec![
            t.id.clone(),
            t.tier.to_string(),
            pct_detail(t.model_ln_odds, t.model_ln_fail),
            pct(t.rate),
            format!("{} – {}", pct(t.low), pct(t.high)),
            if t.model_inside {
                String::new()
            } else {
                "<< model outside".to_string()
            },
        ]);
    }
    cols.push(vec![
        "all tasks".to_string(),
        String::new(),
        pct(view.all_tasks.model_joint),
        pct(view.all_tasks.rate),
        format!("{} – {}", pct(view.all_tasks.low), pct(view.all_tasks.high)),
        if view.all_tasks.model_inside {
            String::new()
        } else {
            "<< model outside".to_string()
        },
    ]);
    out.push_str(&cols.render(2));
    out.push('\n');
    if view.outside.is_empty() {
        out.push_str(&wrap(
            &format!("Every task's model odds lie inside its {level} Wilson interval."),
            78,
            "",
        ));
    } else {
        out.push_str(&wrap(
            &format!(
                "Model odds outside the {level} Wilson interval: {}. At this level about \
                 {:.0} in 100 tasks fall outside by chance alone; a task far outside, or \
                 outside again with another seed, points at a problem.",
                view.outside.join(", "),
                (1.0 - args.confidence) * 100.0
            ),
            78,
            "",
        ));
    }
    out.push_str(&wrap(
        "The all-tasks model figure is the joint odds: tasks served by one correlated unit \
         type rise and fall together, in the model as in the simulation, which draws the \
         shared factor once per type for all tasks.",
        78,
        "",
    ));
    out.push('\n');
    out.push_str(&caution_text());
    print!("{}", crate::clean::clean_lines(&out));
    Ok(())
}
