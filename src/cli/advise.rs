//! `oddsboard advise FILE|LOG`: fragile units, per-task absorbable losses,
//! resource requests for tiers that are not secure, and the life-safety
//! notes that follow; `--json` prints one document. Also the `--what-if`
//! helper of the plan command.

use super::CliResult;
use super::input::load_state;
use super::render::{Columns, caution_text, tier_title, wrap};
pub use crate::advise::what_if::WhatIfSummary;
use crate::advise::what_if::what_if;
use crate::advise::{Advice, AdviseOptions, RequestOutcome, TierOdds, advise};
use crate::model::{Incident, Tier};
use crate::odds::text::pct;
use std::path::{Path, PathBuf};
use std::sync::atomic::AtomicBool;
use std::time::Duration;

#[derive(Debug, clap::Args)]
pub struct Args {
    /// Incident file or log (a log is read to its end).
    pub file: PathBuf,
    /// Solver budget of each re-plan after one loss, in milliseconds.
    #[arg(long, default_value_t = 8)]
    pub loss_budget_ms: u64,
    /// Largest resource request considered, in units.
    #[arg(long, default_value_t = 8)]
    pub max_extra: usize,
    /// Seed of every solve (same seed, same advice).
    #[arg(long, default_value_t = 0)]
    pub seed: u64,
    /// Leave out the per-task count of absorbable losses (faster).
    #[arg(long)]
    pub no_absorb: bool,
    /// Time limit of the one-loss assessment of all placed units, in
    /// seconds (units on life-safety tasks first; the rest is counted as not
    /// assessed).
    #[arg(long, default_value_t = 15.0, value_parser = limit_seconds)]
    pub loss_limit_s: f64,
    /// Time limit of the absorbable-loss counts of all tasks, in seconds
    /// (life-safety tasks first).
    #[arg(long, default_value_t = 10.0, value_parser = limit_seconds)]
    pub absorb_limit_s: f64,
    /// Print one JSON document instead of the report.
    #[arg(long)]
    pub json: bool,
}

fn limit_seconds(s: &str) -> Result<f64, String> {
    match s.parse::<f64>() {
        Ok(v) if v.is_finite() && (0.0..=86_400.0).contains(&v) => Ok(v),
        _ => Err(format!("a number of seconds from 0 to 86400, got `{s}`")),
    }
}

fn tiers_cell(tiers: &[TierOdds]) -> String {
    tiers
        .iter()
        .map(|t| {
            format!(
                "{} {}{}",
                &t.tier[..4.min(t.tier.len())],
                pct(t.odds),
                if t.is_secure { "" } else { "*" }
            )
        })
        .collect::<Vec<_>>()
        .join("  ")
}

pub fn run(args: Args) -> CliResult {
    if args.max_extra > 16 {
        anyhow::bail!("--max-extra: at most 16, got {}", args.max_extra);
    }
    let incident = load_state(&args.file)?;
    let options = AdviseOptions {
        per_loss_budget: Duration::from_millis(args.loss_budget_ms),
        max_extra_units: args.max_extra,
        seed: args.seed,
        absorb: !args.no_absorb,
        loss_time_limit: Duration::from_secs_f64(args.loss_limit_s),
        absorb_time_limit: Duration::from_secs_f64(args.absorb_limit_s),
        ..AdviseOptions::default()
    };
    let cancel = AtomicBool::new(false);
    let work = super::progress::Work::spinner("advising (losses, requests)", args.json);
    let advice = advise(&incident, &options, &cancel)
        .map_err(|e| anyhow::anyhow!("{}: {e}", args.file.display()))?;
    drop(work);
    if args.json {
        super::json::print_pretty(&advice)?;
        return Ok(());
    }
    print!(
        "{}",
        crate::clean::clean_lines(&render(&incident, &advice, &options))
    );
    Ok(())
}

/// The text report.
pub fn render(incident: &Incident, advice: &Advice, options: &AdviseOptions) -> String {
    let mut out = format!("{}: advice\n\n", advice.incident);
    out.push_str(&format!(
        "Best plan now (nothing lost{}): {}\n  (* = below the tier's secure level)\n\n",
        if advice.baseline_proven {
            ", proven optimal"
        } else {
            ""
        },
        tiers_cell(&advice.baseline)
    ));

    out.push_str("Fragility: each placed unit lost now, the rest re-placed (worst first)\n");
    if advice.fragility.is_empty() {
        out.push_str("  No units are placed on open tasks.\n");
    } else {
        let mut cols = Columns::new(
            &[
                "unit",
                "type",
                "on",
                "worst odds after the loss",
                "moves",
                "SPOF",
            ],
            &[false, false, false, false, true, false],
        );
        for l in &advice.fragility {
            let after = match &l.infeasible {
                Some(e) => format!("no feasible plan: {e}"),
                None => tiers_cell(&l.after),
            };
            cols.push(vec![
                l.unit.clone(),
                l.unit_type.clone(),
                l.task.clone(),
                after,
                l.moves.to_string(),
                if l.single_point_of_failure {
                    "YES".into()
                } else {
                    "".into()
                },
            ]);
        }
        out.push_str(&cols.render(2));
    }
    if advice.losses_not_assessed > 0 {
        out.push_str(&format!(
            "  Not assessed: {} more placed unit{} (the loss time limit, {:.0} s, was reached; life-safety tasks' units come first).\n",
            advice.losses_not_assessed,
            if advice.losses_not_assessed == 1 { "" } else { "s" },
            options.loss_time_limit.as_secs_f64()
        ));
    }
    out.push_str(&wrap(
        "SPOF (single point of failure): the loss takes a life-safety task below its secure level or to the gamble side, even after re-planning.",
        76,
        "  ",
    ));
    out.push('\n');

    if !advice.absorb.is_empty() {
        out.push_str(&wrap(
            "Losses each task absorbs before it leaves its secure level (greedy: its most important unit lost first, then re-planned; an upper bound on the worst order)",
            78,
            "",
        ));
        let mut cols = Columns::new(
            &["task", "tier", "units", "absorbs", "losses in order"],
            &[false, false, true, true, false],
        );
        for a in &advice.absorb {
            let absorbs = match (a.secure_now, a.absorbs) {
                _ if a.not_assessed => "not assessed (time limit)".to_string(),
                (false, _) => "not secure now".to_string(),
                (true, None) => "-".to_string(),
                (true, Some(n)) if a.at_least => format!("{n}+"),
                (true, Some(n)) => n.to_string(),
            };
            cols.push(vec![
                a.task.clone(),
                a.tier.to_string(),
                a.units.to_string(),
                absorbs,
                a.sequence.join(" "),
            ]);
        }
        out.push_str(&cols.render(2));
        out.push('\n');
    }

    let moved = if incident.observations.is_empty() {
        ""
    } else {
        ", moved by their type-mates' field readings"
    };
    out.push_str(&format!(
        "Resource requests (unit types at their default ratings{moved}, up to {} extra units)\n",
        options.max_extra_units
    ));
    if advice.requests.is_empty() {
        out.push_str("  None: every tier reaches its secure level with the best plan.\n");
    }
    for r in &advice.requests {
        let tier = Tier::parse(r.tier).unwrap_or_default();
        out.push_str(&format!(
            "  {} (secure at {}; best now {}; short: {})\n",
            tier_title(tier),
            pct(r.secure),
            pct(r.best_now),
            r.short_tasks.join(", ")
        ));
        match &r.outcome {
            RequestOutcome::Found {
                sets,
                minimal_proven,
            } => {
                for (i, s) in sets.iter().enumerate() {
                    let cost = s
                        .total_cost
                        .map(|c| format!(", cost {c}"))
                        .unwrap_or_default();
                    out.push_str(&format!(
                        "    {} {} ({} unit{}{cost}) → {}\n",
                        if i == 0 { "request" } else { "or     " },
                        s.describe(),
                        s.total_units,
                        if s.total_units == 1 { "" } else { "s" },
                        tiers_cell(&s.after)
                    ));
                }
                if !minimal_proven {
                    out.push_str(
                        "    (best found: the search could not prove that no smaller set works)\n",
                    );
                }
            }
            RequestOutcome::OutOfReach { tasks } => {
                for u in tasks {
                    out.push_str(&wrap(
                        &format!("OUT OF REACH: {} ({}): {}.", u.task, u.trait_id, u.reason),
                        72,
                        "    ",
                    ));
                }
            }
            RequestOutcome::NotWithin {
                max_extra_units,
                candidates_checked,
                proven,
            } => out.push_str(&wrap(
                &format!(
                    "{}: no set of up to {max_extra_units} extra units of the incident's types secures this tier ({candidates_checked} sets placed by the solver{}).",
                    if *proven { "OUT OF REACH" } else { "Not found" },
                    if *proven {
                        "; every other set was ruled out"
                    } else {
                        "; anytime solves, a set may have been missed"
                    }
                ),
                72,
                "    ",
            )),
            RequestOutcome::TimeLimit { candidates_checked } => out.push_str(&format!(
                "    The search reached its time limit after {candidates_checked} sets without finding one.\n"
            )),
        }
    }
    out.push('\n');

    if !advice.notes.is_empty() {
        out.push_str("Notes:\n");
        for n in &advice.notes {
            out.push_str(&wrap(
                &n.text,
                74,
                if n.level == crate::advise::NoteLevel::Urgent {
                    "  !! "
                } else {
                    "  !  "
                },
            ));
        }
        out.push('\n');
    }
    out.push_str(&caution_text());
    out
}

/// `plan --what-if EVENT`: the incident after the event (applied to a copy
/// as the log would apply it) and the summary for the report.
pub fn what_if_state(
    incident: Incident,
    event_text: &str,
    file: &Path,
) -> anyhow::Result<(Incident, WhatIfSummary)> {
    let event = super::record::parse_event(event_text)
        .map_err(|e| anyhow::anyhow!("--what-if: event: {e}"))?;
    let w = what_if(&incident, &event).map_err(|e| {
        anyhow::anyhow!(
            "--what-if: `{}` does not apply to {}: {e}",
            event.kind(),
            file.display()
        )
    })?;
    Ok((w.incident, w.summary))
}

/// The what-if header printed above the plan.
pub fn what_if_header(summary: &WhatIfSummary) -> String {
    format!(
        "What if: {} (nothing is written)\n  worst odds on the ground now:         {}\n  on the ground right after the event:  {}\n  the re-plan that would follow is below.\n\n",
        summary.event,
        tiers_cell(&summary.ground_now),
        tiers_cell(&summary.ground_after)
    )
}
