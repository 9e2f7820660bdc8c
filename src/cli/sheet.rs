//! `oddsboard sheet FILE|LOG`: the briefing sheet, the assignment list a
//! commander reads out on the radio or hands to division supervisors. Per
//! task: label, tier, needs, the units on it (id, type, rating on the
//! binding trait), odds and regime, the safety notes about it; then the
//! reserve, the units out of service and the standing caution.
//!
//! Markdown by default, `--csv` (one row per unit on a task, in reserve or
//! out of service) and `--json`. Everything is read from the placement on
//! the ground; nothing is planned or written.

use super::CliResult;
use super::input::{load_state, looks_like_log, read_log_reporting};
use super::render::{format_amount, format_margin, format_z, safety_notes, tier_title};
use crate::model::{Incident, TaskIdx, Tier, UnitIdx, UnitStatus};
use crate::odds::text::{pct, pct_detail};
use crate::odds::view::{TaskView, task_views};
use crate::safety;
use serde::Serialize;
use std::fmt::Write as _;
use std::path::PathBuf;

#[derive(Debug, clap::Args)]
pub struct Args {
    /// Incident file or log (a log is read to its end).
    pub file: PathBuf,
    /// One CSV row per unit (on a task, in reserve, out of service).
    #[arg(long, conflicts_with = "json")]
    pub csv: bool,
    /// Print one JSON document instead of the Markdown sheet.
    #[arg(long)]
    pub json: bool,
}

/// The odds as people read them, through the one formatter.
fn odds_text(t: &SheetTask) -> String {
    pct_detail(t.ln_odds, t.ln_fail)
}

/// A rating in a trait's own unit.
#[derive(Debug, Clone, Serialize)]
pub struct RatingView {
    #[serde(rename = "trait")]
    pub trait_id: String,
    pub unit: String,
    /// The current estimate: the rating, or its posterior given the field
    /// readings (docs/model.md, "Observations").
    pub mean: f64,
    pub sd: f64,
    pub rated_mean: f64,
    pub rated_sd: f64,
    /// Readings of this unit in this trait (0 also for a type-mate moved
    /// only through the shared factor).
    pub readings: usize,
}

/// One unit as the sheet lists it.
#[derive(Debug, Clone, Serialize)]
pub struct SheetUnit {
    pub id: String,
    /// Unit type id.
    #[serde(rename = "type")]
    pub type_id: String,
    pub type_label: String,
    /// Pinned to its task by the commander.
    pub pinned: bool,
    /// On a task: the rating on the task's binding trait first, then on the
    /// task's other needs the unit brings something to (mean > 0). In
    /// reserve or out of service: every trait the unit brings.
    pub ratings: Vec<RatingView>,
}

/// One need of a task.
#[derive(Debug, Clone, Serialize)]
pub struct SheetNeed {
    #[serde(rename = "trait")]
    pub trait_id: String,
    pub unit: String,
    pub need: f64,
    /// The need's own spread (0 = certain).
    pub need_sd: f64,
}

/// One open task.
#[derive(Debug, Clone, Serialize)]
pub struct SheetTask {
    pub id: String,
    pub label: String,
    pub tier: &'static str,
    pub needs: Vec<SheetNeed>,
    pub odds: f64,
    /// `null` when the odds are exactly 0.
    pub ln_odds: Option<f64>,
    /// ln(1 − odds); `null` when the task is certain to succeed.
    pub ln_fail: Option<f64>,
    /// `hedge`, `gamble`, or `null` when no need counts.
    pub regime: Option<&'static str>,
    pub binding_trait: Option<String>,
    /// z on the binding trait; `null` when infinite.
    pub z: Option<f64>,
    /// Surplus (+) or shortfall (−) on the binding trait, in its unit.
    pub margin: Option<f64>,
    /// `no_units` or `below_minimum` when the odds are forced to 0.
    pub forced_zero: Option<&'static str>,
    pub units: Vec<SheetUnit>,
    /// The safety notes about this task.
    pub notes: Vec<String>,
}

/// The `sheet --json` document.
#[derive(Debug, Clone, Serialize)]
pub struct Sheet {
    pub incident: String,
    /// When the incident started (RFC 3339), if the file says.
    pub started: Option<String>,
    /// Time of the last log record the sheet reflects; `null` for a file.
    pub as_of: Option<String>,
    /// Sequence number of that record; `null` for a file.
    pub seq: Option<u64>,
    /// Open tasks, highest tier first, board order within a tier.
    pub tasks: Vec<SheetTask>,
    /// Available units on no task.
    pub reserve: Vec<SheetUnit>,
    pub out_of_service: Vec<SheetUnit>,
    /// The incident asks to keep at least this many units in reserve.
    pub reserve_min: u32,
    /// The standing cautions ([`crate::safety::CAUTIONS`]).
    pub cautions: &'static [&'static str],
}

fn unit_entry(inc: &Incident, u: UnitIdx, traits: &[usize]) -> SheetUnit {
    let unit = &inc.units[u];
    let ty = &inc.unit_types[unit.type_idx];
    SheetUnit {
        id: unit.id.clone(),
        type_id: ty.id.clone(),
        type_label: ty.label.clone(),
        pinned: inc.pins.contains_key(&u),
        ratings: traits
            .iter()
            .map(|&k| {
                let now = inc.belief(u, k);
                RatingView {
                    trait_id: inc.traits[k].id.clone(),
                    unit: inc.traits[k].unit.clone(),
                    mean: now.mean,
                    sd: now.sd(),
                    rated_mean: unit.ratings[k].mean,
                    rated_sd: unit.ratings[k].sd,
                    readings: inc.observations.count(u, k),
                }
            })
            .collect(),
    }
}

/// Traits a unit brings (mean above 0), for units on no task.
fn brings(inc: &Incident, u: UnitIdx) -> Vec<usize> {
    (0..inc.traits.len())
        .filter(|&k| inc.units[u].ratings[k].mean > 0.0)
        .collect()
}

/// The safety notes about one task, then, for a task short of its tier's
/// secure level, the reserve units that could add to its binding trait (an
/// idle unit while a task it could lift stays short is worth a look).
fn task_notes(inc: &Incident, t: TaskIdx, v: &TaskView, binding: Option<usize>) -> Vec<String> {
    let mut notes = safety_notes(std::slice::from_ref(v));
    let task = &inc.tasks[t];
    let (Some(k), true) = (binding, v.odds < inc.secure.get(task.tier)) else {
        return notes;
    };
    let full = task
        .max_units
        .is_some_and(|m| inc.placement.units_on(t).count() >= m as usize);
    let helpers: Vec<&str> = oddsboard_core::model::UnitIdx::range(inc.units.len())
        .filter(|&u| inc.placement.get(u).is_none() && inc.may_place(u, t))
        .filter(|&u| inc.units[u].ratings[k].mean > 0.0)
        .map(|u| inc.units[u].id.as_str())
        .collect();
    if !helpers.is_empty() && !full {
        notes.push(safety::reserve_could_help(
            &v.id,
            &pct(inc.secure.get(task.tier)),
            &inc.traits[k].id,
            &helpers,
        ));
    }
    notes
}

/// Builds the sheet of the placement on the ground.
pub fn build(inc: &Incident, as_of: Option<(u64, String)>) -> Sheet {
    let views = task_views(inc, &inc.placement);
    let mut tasks = Vec::new();
    for tier in Tier::ALL {
        for v in views.iter().filter(|v| v.tier() == tier) {
            let Some(t) = inc.task_idx(&v.id) else {
                continue;
            };
            let task = &inc.tasks[t];
            let binding = v.binding_trait.as_deref().and_then(|b| inc.trait_idx(b));
            let counted: Vec<usize> = (0..task.needs.len())
                .filter(|&k| task.needs[k].counts() && Some(k) != binding)
                .collect();
            tasks.push(SheetTask {
                id: v.id.clone(),
                label: v.label.clone(),
                tier: v.tier,
                needs: task
                    .needs
                    .iter()
                    .enumerate()
                    .filter(|(_, n)| n.counts())
                    .map(|(k, n)| SheetNeed {
                        trait_id: inc.traits[k].id.clone(),
                        unit: inc.traits[k].unit.clone(),
                        need: n.need,
                        need_sd: n.sd,
                    })
                    .collect(),
                odds: v.odds,
                ln_odds: v.ln_odds,
                ln_fail: v.ln_fail,
                regime: v.regime,
                binding_trait: v.binding_trait.clone(),
                z: v.z,
                margin: v.margin,
                forced_zero: v.forced_zero,
                units: inc
                    .placement
                    .units_on(t)
                    .map(|u| {
                        // The binding trait always; the task's other needs
                        // only where the unit brings something to them.
                        let traits: Vec<usize> = binding
                            .into_iter()
                            .chain(
                                counted
                                    .iter()
                                    .copied()
                                    .filter(|&k| inc.units[u].ratings[k].mean > 0.0),
                            )
                            .collect();
                        unit_entry(inc, u, &traits)
                    })
                    .collect(),
                notes: task_notes(inc, t, v, binding),
            });
        }
    }
    let idle = |status: UnitStatus| -> Vec<SheetUnit> {
        oddsboard_core::model::UnitIdx::range(inc.units.len())
            .filter(|&u| inc.units[u].status == status && inc.placement.get(u).is_none())
            .map(|u| unit_entry(inc, u, &brings(inc, u)))
            .collect()
    };
    let (seq, at) = as_of.unzip();
    Sheet {
        incident: inc.name.clone(),
        started: inc.started.clone(),
        as_of: at,
        seq,
        tasks,
        reserve: idle(UnitStatus::Available),
        out_of_service: idle(UnitStatus::OutOfService),
        reserve_min: inc.reserve_min,
        cautions: &safety::CAUTIONS,
    }
}

/// Text from a file or a feed, safe for a terminal: control characters
/// shown escaped (`\u{7}`), never sent raw.
fn plain(s: &str) -> String {
    let mut out = String::with_capacity(s.len());
    for c in s.chars() {
        if c.is_control() {
            out.extend(c.escape_default());
        } else {
            out.push(c);
        }
    }
    out
}

/// [`plain`] text that is also safe in a Markdown table cell.
fn cell(s: &str) -> String {
    plain(s).replace('|', "\\|")
}

fn n_units(n: usize) -> String {
    if n == 1 {
        "1 unit".to_string()
    } else {
        format!("{n} units")
    }
}

fn rating_text(r: &RatingView) -> String {
    let spread = |mean: f64, sd: f64| {
        if sd > 0.0 {
            format!("{} ± {}", format_amount(mean), format_amount(sd))
        } else {
            format_amount(mean)
        }
    };
    let now = spread(r.mean, r.sd);
    let rated = spread(r.rated_mean, r.rated_sd);
    if now == rated {
        format!("{} {now} {}", r.trait_id, r.unit)
    } else {
        // Field readings moved the estimate: the supervisor sees both.
        let why = crate::odds::view::readings_reason(r.readings);
        format!("{} {now} {} (rated {rated}, {why})", r.trait_id, r.unit)
    }
}

fn need_text(n: &SheetNeed) -> String {
    if n.need_sd > 0.0 {
        format!(
            "{} {} ± {} {}",
            n.trait_id,
            format_amount(n.need),
            format_amount(n.need_sd),
            n.unit
        )
    } else {
        format!("{} {} {}", n.trait_id, format_amount(n.need), n.unit)
    }
}

fn ratings_text(u: &SheetUnit) -> String {
    if u.ratings.is_empty() {
        "-".to_string()
    } else {
        u.ratings
            .iter()
            .map(rating_text)
            .collect::<Vec<_>>()
            .join("; ")
    }
}

/// The standing of a task in words: odds, regime, binding trait, margin.
fn standing(t: &SheetTask) -> String {
    let view_odds = odds_text(t);
    match (t.forced_zero, t.binding_trait.as_deref(), t.margin) {
        (Some("no_units"), ..) => format!("{view_odds} (no units on it)"),
        (Some(_), ..) => format!("{view_odds} (below its minimum number of units)"),
        (None, Some(b), Some(m)) => {
            let unit = t
                .needs
                .iter()
                .find(|n| n.trait_id == b)
                .map_or("", |n| n.unit.as_str());
            let regime = match t.regime {
                Some("gamble") => "GAMBLE",
                _ => "hedge",
            };
            format!(
                "{view_odds}, {regime} on {b} (z {}, {})",
                format_z(t.z, m),
                format_margin(m, unit)
            )
        }
        _ => format!("{view_odds} (no counted need)"),
    }
}

fn unit_table(out: &mut String, units: &[SheetUnit], rating_head: &str) {
    let _ = writeln!(out, "| Unit | Type | {rating_head} |");
    out.push_str("|---|---|---|\n");
    for u in units {
        let pin = if u.pinned { " (pinned)" } else { "" };
        let _ = writeln!(
            out,
            "| {}{pin} | {}: {} | {} |",
            cell(&u.id),
            cell(&u.type_id),
            cell(&u.type_label),
            cell(&ratings_text(u))
        );
    }
}

/// The sheet as Markdown.
pub fn markdown(sheet: &Sheet) -> String {
    let mut out = String::new();
    let _ = writeln!(out, "# Briefing sheet: {}\n", cell(&sheet.incident));
    if let Some(s) = &sheet.started {
        let _ = writeln!(out, "- Incident started: {}", cell(s));
    }
    match (&sheet.as_of, sheet.seq) {
        (Some(at), Some(seq)) => {
            let _ = writeln!(
                out,
                "- Placement on the ground as of log record {seq}, {at}"
            );
        }
        _ => out.push_str("- Placement on the ground as written in the incident file\n"),
    }
    let placed: usize = sheet.tasks.iter().map(|t| t.units.len()).sum();
    let _ = writeln!(
        out,
        "- {} on {} open tasks, {} in reserve, {} out of service\n",
        n_units(placed),
        sheet.tasks.len(),
        sheet.reserve.len(),
        sheet.out_of_service.len()
    );
    let mut tier_shown = None;
    for t in &sheet.tasks {
        let tier = Tier::parse(t.tier).unwrap_or_default();
        if tier_shown != Some(tier) {
            let _ = writeln!(out, "## {}\n", tier_title(tier));
            tier_shown = Some(tier);
        }
        let _ = writeln!(out, "### {}: {}\n", cell(&t.id), cell(&t.label));
        let needs = if t.needs.is_empty() {
            "none counted".to_string()
        } else {
            t.needs.iter().map(need_text).collect::<Vec<_>>().join("; ")
        };
        let _ = writeln!(out, "- Needs: {}", plain(&needs));
        let _ = writeln!(out, "- Odds: {}", plain(&standing(t)));
        for n in &t.notes {
            let _ = writeln!(out, "- **Note:** {}", cell(n));
        }
        out.push('\n');
        if t.units.is_empty() {
            out.push_str("No units assigned.\n\n");
        } else {
            let head = match &t.binding_trait {
                Some(b) => format!("Rating (binding: {b}; then other needs)"),
                None => "Rating".to_string(),
            };
            unit_table(&mut out, &t.units, &head);
            out.push('\n');
        }
    }
    if sheet.tasks.is_empty() {
        out.push_str("No open tasks.\n\n");
    }
    let _ = writeln!(
        out,
        "## Reserve ({}; at least {} to be kept)\n",
        n_units(sheet.reserve.len()),
        sheet.reserve_min
    );
    if sheet.reserve.is_empty() {
        out.push_str("No units in reserve.\n\n");
    } else {
        unit_table(&mut out, &sheet.reserve, "Brings");
        out.push('\n');
    }
    let _ = writeln!(
        out,
        "## Out of service ({} units)\n",
        sheet.out_of_service.len()
    );
    if sheet.out_of_service.is_empty() {
        out.push_str("None.\n\n");
    } else {
        unit_table(&mut out, &sheet.out_of_service, "Rated");
        out.push('\n');
    }
    let _ = writeln!(out, "---\n\n**Caution.** {}", sheet.cautions.join(" "));
    out
}

/// The sheet as CSV: one row per unit, with its task's standing repeated,
/// so a spreadsheet can sort and filter it. Tasks with no units get one
/// row with an empty unit.
pub fn csv_text(sheet: &Sheet) -> anyhow::Result<String> {
    let mut w = csv::Writer::from_writer(Vec::new());
    w.write_record([
        "section",
        "task",
        "label",
        "tier",
        "needs",
        "odds",
        "odds_text",
        "regime",
        "binding_trait",
        "unit",
        "type",
        "pinned",
        "rating",
        "notes",
    ])?;
    for t in &sheet.tasks {
        let odds = odds_text(t);
        let odds_number = t.odds.to_string();
        let needs = plain(&t.needs.iter().map(need_text).collect::<Vec<_>>().join("; "));
        let regime = t.regime.unwrap_or("");
        let binding = t.binding_trait.as_deref().unwrap_or("");
        let notes = plain(&t.notes.join(" "));
        let label = plain(&t.label);
        let task_cells = [
            "task",
            t.id.as_str(),
            label.as_str(),
            t.tier,
            needs.as_str(),
            odds_number.as_str(),
            odds.as_str(),
            regime,
            binding,
        ];
        if t.units.is_empty() {
            let mut row: Vec<&str> = task_cells.to_vec();
            row.extend(["", "", "", "", notes.as_str()]);
            w.write_record(&row)?;
        }
        for u in &t.units {
            let rating = plain(&ratings_text(u));
            let mut row: Vec<&str> = task_cells.to_vec();
            row.extend([
                u.id.as_str(),
                u.type_id.as_str(),
                if u.pinned { "yes" } else { "no" },
                rating.as_str(),
                notes.as_str(),
            ]);
            w.write_record(&row)?;
        }
    }
    for (section, units) in [
        ("reserve", &sheet.reserve),
        ("out_of_service", &sheet.out_of_service),
    ] {
        for u in units {
            let rating = plain(&ratings_text(u));
            let blank = [""; 8];
            let mut row: Vec<&str> = vec![section];
            row.extend(blank);
            row.extend([
                u.id.as_str(),
                u.type_id.as_str(),
                if u.pinned { "yes" } else { "no" },
                rating.as_str(),
                "",
            ]);
            w.write_record(&row)?;
        }
    }
    let bytes = w.into_inner().map_err(|e| anyhow::anyhow!("csv: {e}"))?;
    Ok(String::from_utf8(bytes)?)
}

pub fn run(args: Args) -> CliResult {
    let (incident, as_of) = if looks_like_log(&args.file) {
        let (state, contents) = read_log_reporting(&args.file)?;
        let last = contents.records.last().map(|r| {
            (
                r.seq,
                r.at.to_rfc3339_opts(chrono::SecondsFormat::Secs, true),
            )
        });
        (state, last)
    } else {
        (load_state(&args.file)?, None)
    };
    let sheet = build(&incident, as_of);
    if args.json {
        super::json::print_pretty(&sheet)?;
        return Ok(());
    }
    if args.csv {
        print!("{}", crate::clean::clean_lines(&csv_text(&sheet)?));
    } else {
        print!("{}", crate::clean::clean_lines(&markdown(&sheet)));
    }
    Ok(())
}
