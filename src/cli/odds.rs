//! `oddsboard odds FILE`: the odds of the placement on the ground, per task
//! (grouped by tier) and, with `--traits`, per trait; `--json` prints the
//! document of SPEC §5.

use super::CliResult;
use super::input::load_state;
use super::render::{Columns, TableOptions, footer, task_table, wrap};
use crate::odds::joint::JointDetailView;
use crate::odds::ln_one_minus_exp;
use crate::odds::text::pct_detail;
use crate::odds::view::odds_view;
use std::path::PathBuf;

#[derive(Debug, clap::Args)]
pub struct Args {
    /// Incident file or log (a log is read to its end).
    pub file: PathBuf,
    /// Show one line per trait under each task.
    #[arg(long)]
    pub traits: bool,
    /// Print one JSON document (placement, tasks, min_odds, worst_by_tier,
    /// joint_odds) instead of the table.
    #[arg(long)]
    pub json: bool,
}

pub fn run(args: Args) -> CliResult {
    let incident = load_state(&args.file)?;
    let view = odds_view(&incident, &incident.placement);
    if args.json {
        super::json::print_pretty(&view)?;
        return Ok(());
    }
    let placed = view.placement.values().filter(|t| t.is_some()).count();
    let mut out = format!(
        "{}: odds of the placement on the ground ({} of {} units placed, {} open tasks)\n\n",
        incident.name,
        placed,
        view.placement.len(),
        view.tasks.len()
    );
    if view.tasks.is_empty() {
        out.push_str("No open tasks.\n\n");
    }
    out.push_str(&task_table(
        &view.tasks,
        &view.worst_by_tier,
        TableOptions {
            traits: args.traits,
        },
    ));
    out.push_str(&joint_block(&view.joint_detail));
    out.push_str(&readings_block(&view.readings));
    out.push_str(&footer(&view.tasks));
    print!("{}", crate::clean::clean_lines(&out));
    Ok(())
}

/// The words for a joint set: "all life-safety tasks", "all open tasks".
pub fn joint_set_words(set: &str) -> &'static str {
    match set {
        "life" => "all life-safety tasks",
        "stabilization" => "all stabilization tasks",
        "property" => "all property tasks",
        _ => "all open tasks",
    }
}

/// A joint figure for people, with its error when it shows at 0.1 %.
pub fn format_joint(d: &JointDetailView) -> String {
    // ln(1 − p); None when certain.
    let ln_fail = d
        .ln_odds
        .and_then(|l| (l < 0.0).then(|| ln_one_minus_exp(l)));
    let mut text = pct_detail(d.ln_odds, ln_fail);
    if d.error >= 5e-4 {
        text.push_str(&format!(" ± {:.1} %", d.error * 100.0));
    }
    text
}

/// The joint odds block of `odds`: each tier, then all open tasks, with the
/// product beside the figures it differs from.
pub fn joint_block(details: &[JointDetailView]) -> String {
    if details.iter().all(|d| d.tasks == 0) {
        return String::new();
    }
    let mut out = String::from("Joint odds (every task of the set succeeds at once):\n");
    let mut cols = Columns::new(&["", "", ""], &[false, true, false]);
    let mut differs = false;
    for d in details {
        let note = if (d.odds - d.product).abs() >= 5e-4 {
            differs = true;
            format!("(product of task odds {:.1}%)", d.product * 100.0)
        } else {
            String::new()
        };
        cols.push(vec![
            joint_set_words(d.set).to_string(),
            format_joint(d),
            note,
        ]);
    }
    // Drop the empty header line the table helper draws.
    let table = cols.render(2);
    out.extend(table.lines().skip(1).map(|l| format!("{}\n", l.trim_end())));
    if differs {
        out.push_str(&wrap(
            "Tasks served by one correlated unit type rise and fall together, so their \
             joint odds are not the product of their odds.",
            78,
            "",
        ));
    }
    out.push('\n');
    out
}

/// Ratings moved by field readings, one line each; empty without readings.
pub fn readings_block(readings: &[crate::odds::view::RatingNow]) -> String {
    if readings.is_empty() {
        return String::new();
    }
    let mut out = String::from("Field readings (the odds above use the ratings now):\n");
    for r in readings {
        let measure = if r.measure.is_empty() {
            String::new()
        } else {
            format!(" ({})", r.measure)
        };
        out.push_str(&format!(
            "  {} {}{measure}: {}\n",
            r.unit,
            r.trait_id,
            r.describe()
        ));
    }
    out.push('\n');
    out
}
