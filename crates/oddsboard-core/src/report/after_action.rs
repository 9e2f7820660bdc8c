//! The after-action report: a Markdown document made from a log alone.

use super::calibration::ReliabilityBin;
use super::calibration::{
    Murphy, THIN_BIN, brier_score, brier_score_two_class, murphy, reliability_table,
};
use super::timeline::{ClosedTask, Row, TierWorst, TimelineWalker};
use crate::log::{Event, LogError, Move, OutcomeValue, Record};
use crate::odds::text::{pct, pct_or_dash};
use serde::Serialize;
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
        .map(|p| pct_or_dash(*p))
        .collect::<Vec<_>>()
        .join(" | ")
}

fn md_escape(s: &str) -> String {
    s.replace('|', "\\|").replace('\n', " ")
}

/// One point of the worst-odds timeline.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct WorstPoint {
    pub seq: u64,
    pub at: String,
    pub event: String,
    /// Worst ground odds per tier: life, stabilization, property.
    pub worst: TierWorst,
    /// Joint ground odds per tier (every open task of the tier at once).
    pub joint: TierWorst,
}

/// One record in words.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct EventLine {
    pub seq: u64,
    pub at: String,
    pub by: String,
    pub kind: &'static str,
    pub event: String,
}

/// A proposal and what became of it.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ProposalSummary {
    pub seq: u64,
    pub event: String,
    pub moves: Vec<Move>,
    pub worst_before: TierWorst,
    pub worst_proposed: TierWorst,
    /// `accepted`, `accepted_changed`, `rejected`, `superseded` or `pending`.
    pub resolution: &'static str,
    /// The record that accepted, rejected or superseded it.
    pub resolved_at: Option<u64>,
    /// Ground moves by hand while it was pending or after it was rejected,
    /// until the next proposal.
    pub done_instead: Vec<String>,
}

/// A closed task and the odds the ground gave it just before.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct OutcomeLine {
    pub task: String,
    pub tier: &'static str,
    pub seq: u64,
    pub outcome: &'static str,
    /// The forecast that stood while the task was worked.
    pub predicted: f64,
    /// The record after which that forecast stood.
    pub predicted_seq: u64,
    /// Units were released to reserve before the close: the forecast is the
    /// one from before the release.
    pub released_before_close: bool,
}

/// A field reading and how it moved the odds.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ReadingLine {
    pub seq: u64,
    pub at: String,
    pub event: String,
    /// The unit's rating after it, in words (`rated … → now …`).
    pub rating: String,
    /// Open tasks whose odds moved by at least 0.05 percentage points:
    /// (task, odds before, odds after).
    pub moved: Vec<(String, f64, f64)>,
}

/// Everything the after-action report says, as data (`report --json`).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct AfterAction {
    pub incident: String,
    pub started: Option<String>,
    pub log: String,
    pub records: usize,
    pub first_at: String,
    pub last_at: String,
    pub actors: Vec<String>,
    pub units_at_start: usize,
    pub tasks_at_start: usize,
    pub units_at_end: usize,
    pub tasks_at_end: usize,
    pub closed_at_end: usize,
    /// Secure levels: life, stabilization, property.
    pub secure: [f64; 3],
    /// The records after which some tier's worst odds changed (and the first).
    pub worst_timeline: Vec<WorstPoint>,
    pub events: Vec<EventLine>,
    pub proposals: Vec<ProposalSummary>,
    pub outcomes: Vec<OutcomeLine>,
    /// Brier score (binary form) over tasks closed as succeeded or failed.
    pub brier_score: Option<f64>,
    /// Brier's two-class form (twice the binary one).
    pub brier_score_two_class: Option<f64>,
    pub scored_tasks: usize,
    pub reliability: Vec<ReliabilityBin>,
    /// Murphy's decomposition of the Brier score over the table's bins.
    pub murphy: Option<Murphy>,
    /// Field readings (`observed`, `observation_withdrawn`) in log order.
    pub readings: Vec<ReadingLine>,
    pub notes: Vec<(u64, String)>,
    pub cautions: Vec<&'static str>,
}

fn time_of(at: &chrono::DateTime<chrono::Utc>) -> String {
    at.to_rfc3339_opts(chrono::SecondsFormat::Millis, true)
}

/// Builds the report data for `records` (the first must be the snapshot);
/// `source` names the log.
pub fn after_action(records: &[Record], source: &str) -> Result<AfterAction, LogError> {
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
    let mut readings: Vec<ReadingLine> = Vec::new();
    for r in rest {
        let before = rows.last().map_or([None; 3], |r| r.worst);
        let odds_before: Vec<f64> = walker.ground().iter().map(|o| o.odds()).collect();
        let row = walker.step(r)?;
        if let Event::Observed { unit, trait_id, .. }
        | Event::ObservationWithdrawn { unit, trait_id, .. } = &r.event
        {
            let state = walker.state();
            let rating = crate::odds::view::ratings_now(state)
                .into_iter()
                .find(|x| &x.unit == unit && &x.trait_id == trait_id)
                .map_or_else(|| "rated as before".to_string(), |x| x.describe());
            let moved = state
                .tasks
                .iter()
                .enumerate()
                .filter(|(_, t)| t.is_open())
                .filter_map(|(t, task)| {
                    let (a, b) = (odds_before.get(t).copied()?, walker.ground()[t].odds());
                    ((a - b).abs() >= 5e-4).then(|| (task.id.clone(), a, b))
                })
                .collect();
            readings.push(ReadingLine {
                seq: r.seq,
                at: time_of(&r.at),
                event: r.event.describe(),
                rating,
                moved,
            });
        }
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
    let last = records.last().unwrap_or(first);
    let mut actors: Vec<String> = records.iter().map(|r| r.by.clone()).collect();
    actors.sort_unstable();
    actors.dedup();
    let mut worst_timeline = Vec::new();
    let mut prev: Option<(TierWorst, TierWorst)> = None;
    for row in &rows {
        if prev.as_ref() == Some(&(row.worst, row.joint)) {
            continue;
        }
        prev = Some((row.worst, row.joint));
        worst_timeline.push(WorstPoint {
            seq: row.seq,
            at: time_of(&row.at),
            event: row.words.clone(),
            worst: row.worst,
            joint: row.joint,
        });
    }
    let forecasts = forecasts(&closed);
    Ok(AfterAction {
        incident: start_state.name.clone(),
        started: start_state.started.clone(),
        log: source.to_string(),
        records: records.len(),
        first_at: time_of(&first.at),
        last_at: time_of(&last.at),
        actors,
        units_at_start: start_state.roster_len(),
        tasks_at_start: start_state.tasks.len(),
        units_at_end: end_state.roster_len(),
        tasks_at_end: end_state.tasks.len(),
        closed_at_end: end_state.tasks.iter().filter(|t| !t.is_open()).count(),
        secure: start_state.secure.levels,
        worst_timeline,
        events: rows
            .iter()
            .map(|r| EventLine {
                seq: r.seq,
                at: time_of(&r.at),
                by: r.by.clone(),
                kind: r.kind,
                event: r.words.clone(),
            })
            .collect(),
        proposals: proposals
            .into_iter()
            .map(|p| {
                let moves = match records.get(p.seq as usize - 1).map(|x| &x.event) {
                    Some(Event::PlanProposed { moves }) => moves.clone(),
                    _ => Vec::new(),
                };
                let (resolution, resolved_at) = match p.resolution {
                    Resolution::Accepted { seq, same: true } => ("accepted", Some(seq)),
                    Resolution::Accepted { seq, same: false } => ("accepted_changed", Some(seq)),
                    Resolution::Rejected { seq } => ("rejected", Some(seq)),
                    Resolution::Superseded { seq } => ("superseded", Some(seq)),
                    Resolution::Pending => ("pending", None),
                };
                ProposalSummary {
                    seq: p.seq,
                    event: p.words,
                    moves,
                    worst_before: p.worst_before,
                    worst_proposed: p.worst_proposed,
                    resolution,
                    resolved_at,
                    done_instead: p.done_instead,
                }
            })
            .collect(),
        outcomes: closed
            .iter()
            .map(|(seq, c)| OutcomeLine {
                task: c.task.clone(),
                tier: c.tier.as_str(),
                seq: *seq,
                outcome: c.outcome.as_str(),
                predicted: c.predicted,
                predicted_seq: c.predicted_seq,
                released_before_close: c.released_before_close,
            })
            .collect(),
        brier_score: brier_score(&forecasts),
        brier_score_two_class: brier_score_two_class(&forecasts),
        scored_tasks: forecasts.len(),
        reliability: reliability_table(&forecasts, 10),
        murphy: murphy(&forecasts, 10),
        readings,
        notes: walker.replay().notes.clone(),
        cautions: crate::safety::CAUTIONS
            .iter()
            .chain(&crate::safety::NOTE_RULES)
            .copied()
            .collect(),
    })
}

/// Writes the Markdown report for `records` (the first must be the
/// snapshot); `source` names the log in the header.
pub fn after_action_report(records: &[Record], source: &str) -> Result<String, LogError> {
    Ok(render_markdown(&after_action(records, source)?))
}

/// The report as Markdown.
pub fn render_markdown(a: &AfterAction) -> String {
    let mut out = String::new();
    let _ = writeln!(out, "# After-action report: {}\n", md_escape(&a.incident));
    let _ = writeln!(
        out,
        "> Decision support only: the odds are only as good as the ratings. See the cautions at the end.\n"
    );

    let _ = writeln!(out, "## The incident\n");
    let _ = writeln!(out, "- Log: `{}`", a.log);
    if let Some(s) = &a.started {
        let _ = writeln!(out, "- Started: {s}");
    }
    let _ = writeln!(
        out,
        "- Records: {} (seq 1–{}), {} to {}",
        a.records, a.records, a.first_at, a.last_at
    );
    let _ = writeln!(out, "- Written by: {}", a.actors.join(", "));
    let _ = writeln!(
        out,
        "- At the start: {} units, {} tasks; at the end: {} units, {} tasks ({} closed)",
        a.units_at_start, a.tasks_at_start, a.units_at_end, a.tasks_at_end, a.closed_at_end
    );
    let _ = writeln!(
        out,
        "- Secure levels: life {}, stabilization {}, property {}\n",
        pct(a.secure[0]),
        pct(a.secure[1]),
        pct(a.secure[2])
    );

    let _ = writeln!(out, "## Worst odds on the ground over time\n");
    let _ = writeln!(
        out,
        "Worst odds of the open tasks of each tier after each record that changed them, \
         and the joint odds that every open task of the tier succeeds at once (\"all\").\n"
    );
    let _ = writeln!(
        out,
        "| seq | time (UTC) | event | life | stabilization | property | all life | all stab. | all prop. |"
    );
    let _ = writeln!(out, "|---:|---|---|---:|---:|---:|---:|---:|---:|");
    for w in &a.worst_timeline {
        let _ = writeln!(
            out,
            "| {} | {} | {} | {} | {} |",
            w.seq,
            short_time(&w.at),
            md_escape(&w.event),
            worst_cells(&w.worst),
            worst_cells(&w.joint)
        );
    }
    let _ = writeln!(out);

    let _ = writeln!(out, "## Events\n");
    let _ = writeln!(out, "| seq | time (UTC) | by | event |");
    let _ = writeln!(out, "|---:|---|---|---|");
    for e in &a.events {
        let _ = writeln!(
            out,
            "| {} | {} | {} | {} |",
            e.seq,
            short_time(&e.at),
            md_escape(&e.by),
            md_escape(&e.event)
        );
    }
    let _ = writeln!(out);

    if !a.readings.is_empty() {
        let _ = writeln!(out, "## Field readings\n");
        let _ = writeln!(
            out,
            "Each reading conditions the ratings (its unit's and, through the shared factor, its type-mates'); the odds of the open tasks it moved:\n"
        );
        let _ = writeln!(
            out,
            "| seq | time (UTC) | reading | rating after | odds moved |"
        );
        let _ = writeln!(out, "|---:|---|---|---|---|");
        for x in &a.readings {
            let moved = if x.moved.is_empty() {
                "none".to_string()
            } else {
                x.moved
                    .iter()
                    .map(|(t, b, c)| format!("{} {} → {}", md_escape(t), pct(*b), pct(*c)))
                    .collect::<Vec<_>>()
                    .join("; ")
            };
            let _ = writeln!(
                out,
                "| {} | {} | {} | {} | {} |",
                x.seq,
                short_time(&x.at),
                md_escape(&x.event),
                md_escape(&x.rating),
                moved
            );
        }
        let _ = writeln!(out);
    }

    let _ = writeln!(out, "## Proposals and what was done\n");
    if a.proposals.is_empty() {
        let _ = writeln!(out, "No plan was proposed in this log.\n");
    }
    for p in &a.proposals {
        let _ = writeln!(out, "### Proposal at seq {}\n", p.seq);
        let _ = writeln!(out, "- {}", md_escape(&p.event));
        let _ = writeln!(
            out,
            "- Worst odds (life / stabilization / property): before {} → proposed {}",
            worst_cells(&p.worst_before).replace(" | ", " / "),
            worst_cells(&p.worst_proposed).replace(" | ", " / ")
        );
        let at = p.resolved_at.unwrap_or(0);
        let what = match p.resolution {
            "accepted" => format!("accepted as proposed (seq {at})"),
            "accepted_changed" => format!("accepted with different moves (seq {at})"),
            "rejected" => format!("rejected (seq {at})"),
            "superseded" => {
                format!("neither accepted nor rejected; superseded by the proposal at seq {at}")
            }
            _ => "still pending when the log ends".into(),
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

    let _ = writeln!(out, "## Task outcomes against the odds\n");
    if a.outcomes.is_empty() {
        let _ = writeln!(out, "No task was closed in this log.\n");
    } else {
        let _ = writeln!(
            out,
            "Predicted odds are the forecast that stood while the task was worked: the ground's odds after the record named, which is the last before the close, or the last before its units began going back to reserve without replacement (a crew released before `task_closed` is not scored as a forecast of 0).\n"
        );
        let _ = writeln!(
            out,
            "| task | tier | closed at seq | outcome | predicted odds | forecast from |"
        );
        let _ = writeln!(out, "|---|---|---:|---|---:|---|");
        for o in &a.outcomes {
            let from = if o.released_before_close {
                format!("seq {}, before its units were released", o.predicted_seq)
            } else {
                format!("seq {}", o.predicted_seq)
            };
            let _ = writeln!(
                out,
                "| {} | {} | {} | {} | {} | {} |",
                md_escape(&o.task),
                o.tier,
                o.seq,
                o.outcome,
                pct(o.predicted),
                from
            );
        }
        let _ = writeln!(out);
    }
    let _ = writeln!(out, "### Calibration\n");
    out.push_str(&calibration_markdown(
        a.brier_score,
        a.brier_score_two_class,
        a.scored_tasks,
        &a.reliability,
        a.murphy.as_ref(),
    ));

    if !a.notes.is_empty() {
        let _ = writeln!(out, "## Notes\n");
        for (seq, text) in &a.notes {
            let _ = writeln!(out, "- seq {seq}: {}", md_escape(text));
        }
        let _ = writeln!(out);
    }

    let _ = writeln!(out, "## Cautions\n");
    for c in &a.cautions {
        let _ = writeln!(out, "- {c}");
    }
    out
}

/// `YYYY-MM-DD HH:MM:SS` of an RFC 3339 time.
fn short_time(at: &str) -> String {
    at.get(..19).unwrap_or(at).replace('T', " ")
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

/// The calibration block: Brier score, Murphy's decomposition and the
/// reliability table with counts, Wilson intervals and thin-bin warnings.
/// Shared by the report of one log and `report --all`.
pub fn calibration_markdown(
    brier: Option<f64>,
    brier_two_class: Option<f64>,
    scored: usize,
    bins: &[ReliabilityBin],
    m: Option<&Murphy>,
) -> String {
    let mut out = String::new();
    let Some(bs) = brier else {
        let _ = writeln!(
            out,
            "No task closed as succeeded or failed, so there is nothing to score (cancelled tasks are left out).\n"
        );
        return out;
    };
    let _ = writeln!(
        out,
        "Brier score (Brier 1950; mean of (odds − outcome)², outcome 1 if succeeded, 0 if failed; 0 is perfect, 0.25 is always saying 50 %): **{bs:.4}** over {scored} tasks (Brier's two-class form: {:.4}). Cancelled tasks are left out.\n",
        brier_two_class.unwrap_or(f64::NAN)
    );
    if let Some(m) = m {
        let _ = writeln!(
            out,
            "Murphy's decomposition (Murphy 1973, over the bins below): reliability {:.4} (lower is better) − resolution {:.4} (higher is better) + uncertainty {:.4} (base rate {}){} = {:.4}.\n",
            m.reliability,
            m.resolution,
            m.uncertainty,
            pct(m.base_rate),
            if m.within_bin.abs() >= 5e-5 {
                format!(" + within-bin {:+.4}", m.within_bin)
            } else {
                String::new()
            },
            m.brier
        );
    }
    let _ = writeln!(
        out,
        "| predicted odds | tasks | mean predicted | succeeded | share (95 % Wilson interval) |"
    );
    let _ = writeln!(out, "|---|---:|---:|---:|---|");
    let mut thin = 0;
    for b in bins {
        thin += usize::from(b.thin);
        let _ = writeln!(
            out,
            "| {:.0}–{:.0} % | {} | {} | {} | {} ({} – {}){} |",
            b.low * 100.0,
            b.high * 100.0,
            b.count,
            pct(b.mean_forecast),
            b.happened,
            pct(b.observed),
            pct(b.observed_low),
            pct(b.observed_high),
            if b.thin { " thin" } else { "" }
        );
    }
    let _ = writeln!(out);
    if thin > 0 {
        let _ = writeln!(
            out,
            "{thin} of {} bins hold fewer than {THIN_BIN} tasks (marked thin): their shares rest on too few outcomes to judge the ratings by; read the intervals, not the shares.\n",
            bins.len()
        );
    }
    if scored < 30 {
        let _ = writeln!(
            out,
            "With only {scored} scored tasks this says little about calibration: read it as a prompt for debriefing, not as a verdict on the ratings.\n"
        );
    }
    out
}

/// Calibration across many logs (`report --all`): every task closed as
/// succeeded or failed, scored by the forecast that stood.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CalibrationAcross {
    pub logs: Vec<String>,
    pub scored_tasks: usize,
    pub brier_score: Option<f64>,
    pub brier_score_two_class: Option<f64>,
    pub murphy: Option<Murphy>,
    pub reliability: Vec<ReliabilityBin>,
    pub cautions: Vec<&'static str>,
}

/// See [`CalibrationAcross`].
pub fn calibration_across(reports: &[AfterAction]) -> CalibrationAcross {
    let forecasts: Vec<(f64, bool)> = reports
        .iter()
        .flat_map(|a| &a.outcomes)
        .filter_map(|o| match o.outcome {
            "succeeded" => Some((o.predicted, true)),
            "failed" => Some((o.predicted, false)),
            _ => None,
        })
        .collect();
    CalibrationAcross {
        logs: reports.iter().map(|a| a.log.clone()).collect(),
        scored_tasks: forecasts.len(),
        brier_score: brier_score(&forecasts),
        brier_score_two_class: brier_score_two_class(&forecasts),
        murphy: murphy(&forecasts, 10),
        reliability: reliability_table(&forecasts, 10),
        cautions: crate::safety::CAUTIONS.to_vec(),
    }
}

/// `report --all` as Markdown.
pub fn render_across_markdown(c: &CalibrationAcross) -> String {
    let mut out = String::new();
    let _ = writeln!(
        out,
        "# Calibration across {} logs\n\n> Decision support only: the odds are only as good as the ratings.\n",
        c.logs.len()
    );
    for l in &c.logs {
        let _ = writeln!(out, "- `{l}`");
    }
    let _ = writeln!(out);
    out.push_str(&calibration_markdown(
        c.brier_score,
        c.brier_score_two_class,
        c.scored_tasks,
        &c.reliability,
        c.murphy.as_ref(),
    ));
    out
}
