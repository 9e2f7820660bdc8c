//! The after-action report: a Markdown document made from a log alone.

use super::calibration::{brier_score, brier_score_two_class, reliability_table};
use super::timeline::{ClosedTask, Row, TierWorst, TimelineWalker};
use super::{CAUTIONS, fmt_odds};
use crate::log::{Event, LogError, OutcomeValue, Record};
use crate::model::Tier;
use std::fmt::Write as _;

/// What happened to one proposal.
#[derive(Debug, Clone, PartialEq)]
enum Resolution {
    Accepted { seq: u64, same: bool },
    Rejected { seq: u64 },
    Superseded { seq: u64 },
    Pending,
}

struct ProposalTrack {
    seq: u64,
    words: String,
    worst_before: TierWorst,
    worst_proposed: TierWorst,
    resolution: Resolution,
    /// Ground moves by hand while it was pending or after it was rejected,
    /// until the next proposal.
    done_instead: Vec<String>,
}

fn worst_cells(w: &TierWorst) -> String {
    w.iter()
        .map(|p| fmt_odds(*p))
        .collect::<Vec<_>>()
        .join(" | ")
}

fn md_escape(s: &str) -> String {
    s.replace('|', "\\|").replace('\n', " ")
}

/// Writes the report for `records` (the first must be the snapshot); `source`
/// names the log in the header.
pub fn after_action_report(records: &[Record], source: &str) -> Result<String, LogError> {
    let Some((first, rest)) = records.split_first() else {
        return Err(LogError::Refused {
            seq: 0,
            message: "no records".into(),
        });
    };
    let (mut walker, first_row) = TimelineWalker::start(first)?;
    let start_state = walker.state().clone();
    let mut rows: Vec<Row> = vec![first_row];
    let mut proposals: Vec<ProposalTrack> = Vec::new();
    let mut closed: Vec<(u64, ClosedTask)> = Vec::new();
    for r in rest {
        let before = rows.last().map_or([None; 3], |r| r.worst);
        let row = walker.step(r)?;
        match &r.event {
            Event::PlanProposed { .. } => {
                if let Some(p) = proposals.last_mut()
                    && p.resolution == Resolution::Pending
                {
                    p.resolution = Resolution::Superseded { seq: r.seq };
                }
                proposals.push(ProposalTrack {
                    seq: r.seq,
                    words: r.event.describe(),
                    worst_before: before,
                    worst_proposed: row.proposal.as_ref().map_or([None; 3], |p| p.worst),
                    resolution: Resolution::Pending,
                    done_instead: Vec::new(),
                });
            }
            Event::PlanAccepted { moves } => {
                if let Some(p) = proposals.last_mut()
                    && p.resolution == Resolution::Pending
                {
                    let same = matches!(
                        records.get(p.seq as usize - 1).map(|x| &x.event),
                        Some(Event::PlanProposed { moves: m }) if m == moves
                    );
                    p.resolution = Resolution::Accepted { seq: r.seq, same };
                }
            }
            Event::PlanRejected {} => {
                if let Some(p) = proposals.last_mut()
                    && p.resolution == Resolution::Pending
                {
                    p.resolution = Resolution::Rejected { seq: r.seq };
                }
            }
            Event::Moved { .. } => {
                if let Some(p) = proposals.last_mut()
                    && !matches!(p.resolution, Resolution::Accepted { .. })
                {
                    p.done_instead
                        .push(format!("{} ({})", r.event.describe(), r.seq));
                }
            }
            _ => {}
        }
        if let Some(c) = &row.closed {
            closed.push((r.seq, c.clone()));
        }
        rows.push(row);
    }
    let end_state = walker.state();
    let mut out = String::new();
    let name = &start_state.name;
    let _ = writeln!(out, "# After-action report: {}\n", md_escape(name));
    let _ = writeln!(
        out,
        "> Decision support only: the odds are only as good as the ratings. See the cautions at the end.\n"
    );

    // The incident.
    let _ = writeln!(out, "## The incident\n");
    let _ = writeln!(out, "- Log: `{source}`");
    if let Some(s) = &start_state.started {
        let _ = writeln!(out, "- Started: {s}");
    }
    let last = records.last().unwrap_or(first);
    let _ = writeln!(
        out,
        "- Records: {} (seq 1–{}), {} to {}",
        records.len(),
        last.seq,
        first.at.to_rfc3339_opts(chrono::SecondsFormat::Secs, true),
        last.at.to_rfc3339_opts(chrono::SecondsFormat::Secs, true)
    );
    let mut actors: Vec<&str> = records.iter().map(|r| r.by.as_str()).collect();
    actors.sort_unstable();
    actors.dedup();
    let _ = writeln!(out, "- Written by: {}", actors.join(", "));
    let _ = writeln!(
        out,
        "- At the start: {} units, {} tasks; at the end: {} units, {} tasks ({} closed)",
        start_state.units.len(),
        start_state.tasks.len(),
        end_state.units.len(),
        end_state.tasks.len(),
        end_state.tasks.iter().filter(|t| !t.is_open()).count()
    );
    let _ = writeln!(
        out,
        "- Secure levels: life {}, stabilization {}, property {}\n",
        start_state.secure.get(Tier::Life),
        start_state.secure.get(Tier::Stabilization),
        start_state.secure.get(Tier::Property)
    );

    // Worst odds over time: the rows where a tier's worst odds changed.
    let _ = writeln!(out, "## Worst odds on the ground over time\n");
    let _ = writeln!(
        out,
        "Worst odds of the open tasks of each tier after each record that changed them.\n"
    );
    let _ = writeln!(
        out,
        "| seq | time | event | life | stabilization | property |"
    );
    let _ = writeln!(out, "|---:|---|---|---:|---:|---:|");
    let mut prev: Option<TierWorst> = None;
    for row in &rows {
        if prev.as_ref() == Some(&row.worst) {
            continue;
        }
        prev = Some(row.worst);
        let _ = writeln!(
            out,
            "| {} | {} | {} | {} |",
            row.seq,
            row.at.format("%H:%M:%S"),
            md_escape(&row.words),
            worst_cells(&row.worst)
        );
    }
    let _ = writeln!(out);

    // Each event.
    let _ = writeln!(out, "## Events\n");
    let _ = writeln!(out, "| seq | time (UTC) | by | event |");
    let _ = writeln!(out, "|---:|---|---|---|");
    for row in &rows {
        let _ = writeln!(
            out,
            "| {} | {} | {} | {} |",
            row.seq,
            row.at.format("%Y-%m-%d %H:%M:%S"),
            md_escape(&row.by),
            md_escape(&row.words)
        );
    }
    let _ = writeln!(out);

    // Proposals.
    let _ = writeln!(out, "## Proposals and what was done\n");
    if proposals.is_empty() {
        let _ = writeln!(out, "No plan was proposed in this log.\n");
    }
    for p in &proposals {
        let _ = writeln!(out, "### Proposal at seq {}\n", p.seq);
        let _ = writeln!(out, "- {}", md_escape(&p.words));
        let _ = writeln!(
            out,
            "- Worst odds (life | stabilization | property): before {} → proposed {}",
            worst_cells(&p.worst_before).replace(" | ", " / "),
            worst_cells(&p.worst_proposed).replace(" | ", " / ")
        );
        let what = match &p.resolution {
            Resolution::Accepted { seq, same: true } => format!("accepted as proposed (seq {seq})"),
            Resolution::Accepted { seq, same: false } => {
                format!("accepted with different moves (seq {seq})")
            }
            Resolution::Rejected { seq } => format!("rejected (seq {seq})"),
            Resolution::Superseded { seq } => {
                format!("neither accepted nor rejected; superseded by the proposal at seq {seq}")
            }
            Resolution::Pending => "still pending when the log ends".into(),
        };
        let _ = writeln!(out, "- Outcome: {what}");
        if !p.done_instead.is_empty() {
            let _ = writeln!(
                out,
                "- Done by hand instead: {}",
                md_escape(&p.done_instead.join("; "))
            );
        }
        let _ = writeln!(out);
    }

    // Outcomes and calibration.
    let _ = writeln!(out, "## Task outcomes against the odds\n");
    if closed.is_empty() {
        let _ = writeln!(out, "No task was closed in this log.\n");
    } else {
        let _ = writeln!(
            out,
            "Predicted odds are those of the placement on the ground just before the task was closed.\n"
        );
        let _ = writeln!(
            out,
            "| task | tier | closed at seq | outcome | predicted odds |"
        );
        let _ = writeln!(out, "|---|---|---:|---|---:|");
        for (seq, c) in &closed {
            let _ = writeln!(
                out,
                "| {} | {} | {} | {} | {} |",
                md_escape(&c.task),
                c.tier.as_str(),
                seq,
                c.outcome.as_str(),
                fmt_odds(Some(c.predicted))
            );
        }
        let _ = writeln!(out);
    }
    let forecasts = forecasts(&closed);
    let _ = writeln!(out, "### Calibration\n");
    match brier_score(&forecasts) {
        None => {
            let _ = writeln!(
                out,
                "No task closed as succeeded or failed, so there is nothing to score (cancelled tasks are left out).\n"
            );
        }
        Some(bs) => {
            let _ = writeln!(
                out,
                "Brier score (Brier 1950; mean of (odds − outcome)², outcome 1 if succeeded, 0 if failed; 0 is perfect, 0.25 is always saying 50 %): **{bs:.4}** over {} tasks (Brier's two-class form: {:.4}). Cancelled tasks are left out.\n",
                forecasts.len(),
                brier_score_two_class(&forecasts).unwrap_or(f64::NAN)
            );
            let _ = writeln!(
                out,
                "| predicted odds | tasks | mean predicted | succeeded |"
            );
            let _ = writeln!(out, "|---|---:|---:|---:|");
            for b in reliability_table(&forecasts, 10) {
                let _ = writeln!(
                    out,
                    "| {:.1}–{:.1} | {} | {:.3} | {:.3} |",
                    b.low, b.high, b.count, b.mean_forecast, b.observed
                );
            }
            let _ = writeln!(out);
            if forecasts.len() < 30 {
                let _ = writeln!(
                    out,
                    "With only {} scored tasks this says little about calibration: read it as a prompt for debriefing, not as a verdict on the ratings.\n",
                    forecasts.len()
                );
            }
        }
    }

    // Notes.
    let notes = &walker.replay().notes;
    if !notes.is_empty() {
        let _ = writeln!(out, "## Notes\n");
        for (seq, text) in notes {
            let _ = writeln!(out, "- seq {seq}: {}", md_escape(text));
        }
        let _ = writeln!(out);
    }

    let _ = writeln!(out, "## Cautions\n");
    for c in CAUTIONS {
        let _ = writeln!(out, "- {c}");
    }
    Ok(out)
}

/// (predicted odds, succeeded) of every task closed as succeeded or failed.
pub fn forecasts(closed: &[(u64, ClosedTask)]) -> Vec<(f64, bool)> {
    closed
        .iter()
        .filter_map(|(_, c)| match c.outcome {
            OutcomeValue::Succeeded => Some((c.predicted, true)),
            OutcomeValue::Failed => Some((c.predicted, false)),
            OutcomeValue::Cancelled => None,
        })
        .collect()
}
