//! `oddsboard timeline LOG`: one row per record with the worst ground odds
//! per tier after it and the proposal in force; table, `--csv` or `--json`.

use super::CliResult;
use super::input::read_log_reporting;
use crate::log::Move;
use crate::model::{Incident, Placement, Tier};
use crate::odds::joint::JointOddsView;
use crate::odds::text::pct_or_dash;
use crate::odds::view::{TaskView, task_view};
use crate::report::timeline::{ProposalOdds, Row, TierWorst, TimelineWalker};
use crate::solver::{SolveOptions, solve};
use serde::Serialize;
use std::io::Write;
use std::path::PathBuf;
use std::sync::atomic::AtomicBool;
use std::time::Duration;

#[derive(Debug, clap::Args)]
pub struct Args {
    /// The log to replay.
    pub log: PathBuf,
    /// Comma-separated values, one line per record.
    #[arg(long, conflicts_with = "json")]
    pub csv: bool,
    /// One JSON array, one object per record (`seq`, `kind`, `ground`,
    /// `proposal`, …).
    #[arg(long)]
    pub json: bool,
    /// Instead of the proposals in the log, compute the stable re-plan after
    /// each record, each warm-started from the one before.
    #[arg(long)]
    pub recompute: bool,
    /// With --recompute: solver budget per record, in milliseconds.
    #[arg(long, default_value_t = 5)]
    pub budget_ms: u64,
    /// With --recompute: seed of the solver.
    #[arg(long, default_value_t = 0)]
    pub seed: u64,
}

pub fn run(args: Args) -> CliResult {
    let (_, contents) = read_log_reporting(&args.log)?;
    let name = args.log.display().to_string();
    let records = &contents.records;
    let Some((first, rest)) = records.split_first() else {
        return Ok(());
    };
    let stdout = std::io::stdout();
    let mut out = std::io::BufWriter::with_capacity(1 << 16, stdout.lock());
    let (mut walker, row) = TimelineWalker::start(first).map_err(|e| e.in_file(&name))?;
    let mode = if args.json {
        Mode::Json
    } else if args.csv {
        Mode::Csv
    } else {
        Mode::Table
    };
    let mut replanner = args.recompute.then(|| Replanner {
        options: SolveOptions {
            budget: Duration::from_millis(args.budget_ms),
            seed: args.seed,
            ..SolveOptions::default()
        },
        previous: None,
    });
    mode.header(&mut out)?;
    let mut row = row;
    if let Some(rp) = &mut replanner {
        row.proposal = rp.replan(&mut walker, first.seq);
    }
    mode.row(&mut out, &walker, &row, true)?;
    let work = replanner.is_some().then(|| {
        super::progress::Work::new(
            "re-planning after each record",
            rest.len() as u64,
            args.json,
        )
    });
    for r in rest {
        let mut row = walker.step(r).map_err(|e| e.in_file(&name))?;
        if let Some(rp) = &mut replanner {
            row.proposal = rp.replan(&mut walker, r.seq);
        }
        mode.row(&mut out, &walker, &row, false)?;
        if let Some(w) = &work {
            w.inc(1);
        }
    }
    drop(work);
    mode.footer(&mut out)?;
    out.flush()?;
    Ok(())
}

/// The stable re-plan after each record for `--recompute`.
struct Replanner {
    options: SolveOptions,
    /// The previous re-plan by unit id (ids survive units lost or added).
    previous: Option<Vec<(String, Option<String>)>>,
}

impl Replanner {
    fn warm_start(&self, state: &Incident) -> Option<Placement> {
        let prev = self.previous.as_ref()?;
        let mut p = state.placement.clone();
        for (uid, tid) in prev {
            if let Some(u) = state.unit_idx(uid) {
                let t = tid.as_deref().and_then(|t| state.task_idx(t));
                if t.is_none_or(|t| state.may_place(u, t)) {
                    p.set(u, t);
                }
            }
        }
        Some(p)
    }

    fn replan(&mut self, walker: &mut TimelineWalker, seq: u64) -> Option<ProposalOdds> {
        let state = walker.state();
        let mut options = self.options.clone();
        options.warm_start = self.warm_start(state);
        let cancel = AtomicBool::new(false);
        let report = solve(state, &options, &cancel, &mut |_| {}).ok();
        let Some(report) = report else {
            self.previous = None;
            walker.set_proposal(None);
            return None;
        };
        let id = |t: Option<oddsboard_core::model::TaskIdx>| t.map(|t| state.tasks[t].id.clone());
        self.previous = Some(
            report
                .placement
                .0
                .iter()
                .enumerate()
                .map(|(u, t)| (state.units[u].id.clone(), id(*t)))
                .collect(),
        );
        let moves: Vec<Move> = report
            .moves
            .iter()
            .map(|m| Move {
                unit: state.units[m.unit].id.clone(),
                from: id(m.from),
                to: id(m.to),
            })
            .collect();
        let p = ProposalOdds {
            seq,
            moves,
            worst: report.key.worst_odds_per_tier(),
            min_odds: Some(report.key.min_odds()),
        };
        walker.set_proposal(Some(p.clone()));
        Some(p)
    }
}

#[derive(Clone, Copy)]
enum Mode {
    Table,
    Csv,
    Json,
}

fn moves_words(moves: &[Move]) -> String {
    crate::clean::clean(&crate::log::describe_moves(moves)).into_owned()
}

fn csv_field(s: &str) -> String {
    if s.contains([',', '"', '\n', '\r']) {
        format!("\"{}\"", s.replace('"', "\"\""))
    } else {
        s.to_string()
    }
}

fn csv_odds(p: Option<f64>) -> String {
    p.map_or(String::new(), |p| format!("{p:.6e}"))
}

/// Worst ground odds of each tier (`null` where a tier has no open task).
#[derive(Serialize)]
struct WorstJson {
    life: Option<f64>,
    stabilization: Option<f64>,
    property: Option<f64>,
}

fn finite(p: Option<f64>) -> Option<f64> {
    p.filter(|v| v.is_finite())
}

impl From<&TierWorst> for WorstJson {
    fn from(w: &TierWorst) -> Self {
        WorstJson {
            life: finite(w[Tier::Life.index()]),
            stabilization: finite(w[Tier::Stabilization.index()]),
            property: finite(w[Tier::Property.index()]),
        }
    }
}

#[derive(Serialize)]
struct ProposalJson<'a> {
    /// The record that proposed it.
    seq: u64,
    moves: &'a [Move],
    /// Worst odds per tier if the moves were made.
    worst: WorstJson,
    min_odds: Option<f64>,
}

/// One element of `timeline --json`.
#[derive(Serialize)]
struct RowJson<'a> {
    seq: u64,
    at: String,
    by: &'a str,
    kind: &'a str,
    /// The event in words.
    event: &'a str,
    /// Worst ground odds per tier after the record.
    worst: WorstJson,
    min_odds: Option<f64>,
    /// Joint ground odds of all open tasks and of each tier's open tasks
    /// (as `odds --json` `joint_odds`).
    joint_odds: JointOddsView,
    /// Open tasks on the ground after the record, as `odds --json` `tasks`.
    ground: Vec<TaskView>,
    /// The proposal in force (the last `plan_proposed` not yet accepted or
    /// rejected), or null.
    proposal: Option<ProposalJson<'a>>,
}

fn proposal_json(p: &ProposalOdds) -> ProposalJson<'_> {
    ProposalJson {
        seq: p.seq,
        moves: &p.moves,
        worst: WorstJson::from(&p.worst),
        min_odds: finite(p.min_odds),
    }
}

impl Mode {
    fn header(self, out: &mut impl Write) -> std::io::Result<()> {
        match self {
            Mode::Table => writeln!(
                out,
                "{:>6}  {:<8}  {:<12}  {:<44}  {:>9} {:>9} {:>9}  proposal (moves; worst life/stab./prop.)",
                "seq", "time", "by", "event", "life", "stab.", "property"
            ),
            Mode::Csv => writeln!(
                out,
                "seq,at,by,kind,event,worst_life,worst_stabilization,worst_property,min_odds,proposal_seq,proposal_moves,proposal_worst_life,proposal_worst_stabilization,proposal_worst_property"
            ),
            Mode::Json => write!(out, "["),
        }
    }

    fn row(
        self,
        out: &mut impl Write,
        walker: &TimelineWalker,
        row: &Row,
        first: bool,
    ) -> std::io::Result<()> {
        match self {
            Mode::Table => {
                // The proposal is shown on the row that made it.
                let proposal = row
                    .proposal
                    .as_ref()
                    .filter(|p| p.seq == row.seq)
                    .map(|p| {
                        format!(
                            "{}; {}/{}/{}",
                            moves_words(&p.moves),
                            pct_or_dash(p.worst[0]),
                            pct_or_dash(p.worst[1]),
                            pct_or_dash(p.worst[2])
                        )
                    })
                    .unwrap_or_default();
                let words = crate::clean::clean(&row.words);
                let words: String = if words.chars().count() > 44 {
                    let mut w: String = words.chars().take(43).collect();
                    w.push('…');
                    w
                } else {
                    words.into_owned()
                };
                let by: String = crate::clean::clean(&row.by).chars().take(12).collect();
                writeln!(
                    out,
                    "{:>6}  {:<8}  {:<12}  {:<44}  {:>9} {:>9} {:>9}  {}",
                    row.seq,
                    row.at.format("%H:%M:%S"),
                    by,
                    words,
                    pct_or_dash(row.worst[0]),
                    pct_or_dash(row.worst[1]),
                    pct_or_dash(row.worst[2]),
                    proposal
                )
            }
            Mode::Csv => {
                let p = row.proposal.as_ref();
                writeln!(
                    out,
                    "{},{},{},{},{},{},{},{},{},{},{},{},{},{}",
                    row.seq,
                    row.at.to_rfc3339_opts(chrono::SecondsFormat::Millis, true),
                    csv_field(&crate::clean::clean(&row.by)),
                    row.kind,
                    csv_field(&crate::clean::clean(&row.words)),
                    csv_odds(row.worst[0]),
                    csv_odds(row.worst[1]),
                    csv_odds(row.worst[2]),
                    csv_odds(row.min_odds),
                    p.map_or(String::new(), |p| p.seq.to_string()),
                    csv_field(&p.map_or(String::new(), |p| moves_words(&p.moves))),
                    csv_odds(p.and_then(|p| p.worst[0])),
                    csv_odds(p.and_then(|p| p.worst[1])),
                    csv_odds(p.and_then(|p| p.worst[2])),
                )
            }
            Mode::Json => {
                let state = walker.state();
                let ground: Vec<TaskView> = walker
                    .ground()
                    .iter()
                    .filter(|o| state.tasks[o.task_idx].is_open())
                    .map(|o| task_view(state, o))
                    .collect();
                let v = RowJson {
                    seq: row.seq,
                    at: row.at.to_rfc3339_opts(chrono::SecondsFormat::Millis, true),
                    by: &row.by,
                    kind: row.kind,
                    event: &row.words,
                    worst: WorstJson::from(&row.worst),
                    min_odds: finite(row.min_odds),
                    joint_odds: JointOddsView {
                        all: row.joint_all.unwrap_or(1.0),
                        life: row.joint[Tier::Life.index()],
                        stabilization: row.joint[Tier::Stabilization.index()],
                        property: row.joint[Tier::Property.index()],
                    },
                    ground,
                    proposal: row.proposal.as_ref().map(proposal_json),
                };
                if !first {
                    write!(out, ",")?;
                }
                writeln!(out)?;
                serde_json::to_writer(&mut *out, &super::json::versioned(&v))?;
                Ok(())
            }
        }
    }

    fn footer(self, out: &mut impl Write) -> std::io::Result<()> {
        match self {
            Mode::Json => writeln!(out, "\n]"),
            _ => Ok(()),
        }
    }
}
