//! `oddsboard ratings LOG…`: per unit type and trait, REML estimates of the
//! mean, a unit's spread, the shared share ρ and the measurement sd from the
//! `observed` events of many logs (see `report::ratings`); a table by
//! default, `--yaml` a `unit_types` block for an incident file, `--json` one
//! document.

use super::CliResult;
use super::input::read_log_reporting;
use crate::report::ratings::{Rating, RatingsData, ratings};
use crate::safety;
use serde::Serialize;
use std::collections::BTreeMap;
use std::path::PathBuf;

#[derive(Debug, clap::Args)]
pub struct Args {
    /// The logs to learn from (each one incident).
    #[arg(required = true)]
    pub logs: Vec<PathBuf>,
    /// Print a `unit_types` block an incident file can take.
    #[arg(long, conflicts_with = "json")]
    pub yaml: bool,
    /// Print one JSON document.
    #[arg(long)]
    pub json: bool,
}

#[derive(Serialize)]
struct Doc<'a> {
    ratings: &'a [Rating],
    logs: usize,
    cautions: &'static [&'static str],
}

/// A number for people and for YAML: about four significant figures.
fn num(v: f64) -> String {
    let a = v.abs();
    let d = if a >= 1000.0 {
        0
    } else if a >= 100.0 {
        1
    } else if a >= 10.0 {
        2
    } else {
        3
    };
    let s = format!("{v:.d$}");
    if s.contains('.') {
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        s
    }
}

pub fn run(args: Args) -> CliResult {
    let mut data = RatingsData::default();
    for log in &args.logs {
        let (_, contents) = read_log_reporting(log)?;
        let name = log.display().to_string();
        data.add_log(&name, &contents.records)
            .map_err(|e| e.in_file(&name))?;
    }
    let est = ratings(&data);
    if args.json {
        return super::json::print_pretty(&Doc {
            ratings: &est,
            logs: args.logs.len(),
            cautions: &safety::CAUTIONS,
        });
    }
    if est.is_empty() {
        println!(
            "No field readings (`observed` events) in {} logs: nothing to estimate.",
            args.logs.len()
        );
        return Ok(());
    }
    if args.yaml {
        print!("{}", yaml_block(&est, args.logs.len()));
        return Ok(());
    }
    let mut out = format!(
        "Ratings from the field readings of {} logs (REML; 95 % intervals)\n\n",
        args.logs.len()
    );
    out.push_str(&format!(
        "  {:<10} {:<10} {:>22} {:>22} {:>18} {:>22} {:>5} {:>5} {:>5}\n",
        "type", "trait", "mean", "sd", "rho", "measurement sd", "obs", "units", "inc."
    ));
    let iv = |e: crate::report::ratings::Estimate| {
        format!("{} ({}–{})", num(e.value), num(e.low), num(e.high))
    };
    for r in &est {
        out.push_str(&format!(
            "  {:<10} {:<10} {:>22} {:>22} {:>18} {:>22} {:>5} {:>5} {:>5}\n",
            r.unit_type,
            r.trait_id,
            iv(r.intervals.mean),
            iv(r.intervals.sd),
            iv(r.intervals.rho),
            iv(r.intervals.measurement_sd),
            r.observations,
            r.units,
            r.incidents
        ));
        for w in &r.warnings {
            out.push_str(&format!("    ! {} {}: {w}\n", r.unit_type, r.trait_id));
        }
    }
    out.push_str(&format!(
        "\nCaution: {}\n",
        super::render::wrap(
            "ratings learned from past incidents describe those incidents; check them against the crews' knowledge before an incident file uses them.",
            79,
            ""
        )
        .trim_end()
    ));
    print!("{out}");
    Ok(())
}

/// The `unit_types` block: one rho per type (the readings-weighted mean of
/// its traits' estimates, each listed in a comment) and the traits' means and
/// sds; measurement sds go in a comment for the `traits` section.
fn yaml_block(est: &[Rating], logs: usize) -> String {
    let mut by_type: BTreeMap<&str, Vec<&Rating>> = BTreeMap::new();
    for r in est {
        by_type.entry(&r.unit_type).or_default().push(r);
    }
    let mut out =
        format!("# Estimated by `oddsboard ratings` from {logs} logs (REML). Check before use.\n");
    for r in est {
        out.push_str(&format!(
            "# traits: {} measurement_sd ≈ {} (from {} readings)\n",
            r.trait_id,
            num(r.measurement_sd),
            r.observations
        ));
    }
    out.push_str("unit_types:\n");
    for (ty, rs) in by_type {
        let n: usize = rs.iter().map(|r| r.observations).sum();
        let rho = rs
            .iter()
            .map(|r| r.rho * r.observations as f64)
            .sum::<f64>()
            / n.max(1) as f64;
        out.push_str(&format!("  - id: {ty}\n"));
        let per: Vec<String> = rs
            .iter()
            .map(|r| format!("{} {}", r.trait_id, num(r.rho)))
            .collect();
        out.push_str(&format!(
            "    rho: {}   # per trait: {}\n",
            num(rho.clamp(0.0, 1.0)),
            per.join(", ")
        ));
        out.push_str("    traits:\n");
        for r in rs {
            out.push_str(&format!(
                "      {}: {{ mean: {}, sd: {} }}\n",
                r.trait_id,
                num(r.mean.max(0.0)),
                num(r.sd)
            ));
        }
    }
    out
}
