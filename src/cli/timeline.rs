//! `oddsboard timeline LOG`: one row per record with the worst ground odds
//! per tier after it and the proposal in force; table, `--csv` or `--json`.

use super::CliResult;
use super::input::read_log_reporting;
use crate::log::Move;
use crate::model::{Incident, Tier};
use crate::odds::TaskOdds;
use crate::report::fmt_odds;
use crate::report::timeline::{ProposalOdds, Row, TierWorst, TimelineWalker};
use serde_json::{Value, json};
use std::io::Write;
use std::path::PathBuf;

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
    mode.header(&mut out)?;
    mode.row(&mut out, &walker, &row, true)?;
    for r in rest {
        let row = walker.step(r).map_err(|e| e.in_file(&name))?;
        mode.row(&mut out, &walker, &row, false)?;
    }
    mode.footer(&mut out)?;
    out.flush()?;
    Ok(())
}

#[derive(Clone, Copy)]
enum Mode {
    Table,
    Csv,
    Json,
}

fn moves_words(moves: &[Move]) -> String {
    if moves.is_empty() {
        return "no moves".into();
    }
    moves
        .iter()
        .map(|m| {
            format!(
                "{} {}→{}",
                m.unit,
                m.from.as_deref().unwrap_or("reserve"),
                m.to.as_deref().unwrap_or("reserve")
            )
        })
        .collect::<Vec<_>>()
        .join(", ")
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

fn num(v: f64) -> Value {
    if v.is_finite() { json!(v) } else { Value::Null }
}

/// One task as in the `tasks` of `odds --json` (SPEC §5).
pub fn task_json(state: &Incident, o: &TaskOdds) -> Value {
    let task = &state.tasks[o.task_idx];
    json!({
        "id": task.id,
        "tier": task.tier.as_str(),
        "odds": num(o.odds()),
        "ln_odds": num(o.ln_odds),
        "regime": o.regime().map(|r| r.as_str()),
        "binding_trait": o.binding_trait().map(|t| state.traits[t.trait_idx].id.as_str()),
        "z": num(o.z()),
        "units": o.units.iter().map(|&u| state.units[u].id.as_str()).collect::<Vec<_>>(),
        "traits": o.traits.iter().map(|t| json!({
            "trait": state.traits[t.trait_idx].id,
            "mean": num(t.mean),
            "sd": num(t.sd),
            "need": num(t.need),
            "need_sd": num(t.need_sd),
            "z": num(t.z),
            "odds": num(t.odds()),
        })).collect::<Vec<_>>(),
    })
}

fn worst_json(w: &TierWorst) -> Value {
    let mut m = serde_json::Map::new();
    for tier in Tier::ALL {
        m.insert(
            tier.as_str().into(),
            w[tier.index()].map_or(Value::Null, num),
        );
    }
    Value::Object(m)
}

fn proposal_json(p: &ProposalOdds) -> Value {
    json!({
        "seq": p.seq,
        "moves": p.moves,
        "worst": worst_json(&p.worst),
        "min_odds": p.min_odds.map_or(Value::Null, num),
    })
}

impl Mode {
    fn header(self, out: &mut impl Write) -> std::io::Result<()> {
        match self {
            Mode::Table => writeln!(
                out,
                "{:>6}  {:<8}  {:<12}  {:<44}  {:>8} {:>8} {:>8}  proposal (moves; worst life/stab./prop.)",
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
                            fmt_odds(p.worst[0]),
                            fmt_odds(p.worst[1]),
                            fmt_odds(p.worst[2])
                        )
                    })
                    .unwrap_or_default();
                let words: String = if row.words.chars().count() > 44 {
                    let mut w: String = row.words.chars().take(43).collect();
                    w.push('…');
                    w
                } else {
                    row.words.clone()
                };
                let by: String = row.by.chars().take(12).collect();
                writeln!(
                    out,
                    "{:>6}  {:<8}  {:<12}  {:<44}  {:>8} {:>8} {:>8}  {}",
                    row.seq,
                    row.at.format("%H:%M:%S"),
                    by,
                    words,
                    fmt_odds(row.worst[0]),
                    fmt_odds(row.worst[1]),
                    fmt_odds(row.worst[2]),
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
                    csv_field(&row.by),
                    row.kind,
                    csv_field(&row.words),
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
                let ground: Vec<Value> = walker
                    .ground()
                    .iter()
                    .filter(|o| state.tasks[o.task_idx].is_open())
                    .map(|o| task_json(state, o))
                    .collect();
                let v = json!({
                    "seq": row.seq,
                    "at": row.at.to_rfc3339_opts(chrono::SecondsFormat::Millis, true),
                    "by": row.by,
                    "kind": row.kind,
                    "event": row.words,
                    "worst": worst_json(&row.worst),
                    "min_odds": row.min_odds.map_or(Value::Null, num),
                    "ground": ground,
                    "proposal": row.proposal.as_ref().map_or(Value::Null, proposal_json),
                });
                if !first {
                    write!(out, ",")?;
                }
                writeln!(out)?;
                serde_json::to_writer(&mut *out, &v)?;
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
