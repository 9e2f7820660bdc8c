//! `oddsboard generate` (hidden): writes a seeded, invented incident of a
//! given size, for benchmarks and tests.

use super::CliResult;
use crate::model::generate::{GenerateSpec, generate_file};
use anyhow::Context;
use std::path::PathBuf;

#[derive(Debug, clap::Args)]
pub struct Args {
    /// Number of units.
    #[arg(long, default_value_t = 30)]
    pub units: usize,
    /// Number of tasks.
    #[arg(long, default_value_t = 6)]
    pub tasks: usize,
    /// Number of traits (capability dimensions).
    #[arg(long, default_value_t = 3)]
    pub traits: usize,
    /// Number of unit types (default: the number of traits, at least 2).
    #[arg(long)]
    pub types: Option<usize>,
    /// Seed of the generator; the same seed gives the same incident.
    #[arg(long, default_value_t = 0)]
    pub seed: u64,
    /// Leave every unit in reserve (no placement on the ground).
    #[arg(long)]
    pub no_placement: bool,
    /// Write to this file instead of stdout (refuses to overwrite).
    #[arg(long)]
    pub out: Option<PathBuf>,
}

pub fn run(args: Args) -> CliResult {
    if args.traits == 0 {
        anyhow::bail!("--traits: must be at least 1");
    }
    let mut spec = GenerateSpec::new(args.units, args.tasks, args.traits)
        .seed(args.seed)
        .placed(!args.no_placement);
    if let Some(t) = args.types {
        if t == 0 {
            anyhow::bail!("--types: must be at least 1");
        }
        spec = spec.types(t);
    }
    let yaml = serde_yaml::to_string(&generate_file(&spec)).context("cannot write YAML")?;
    let text = format!(
        "# Invented incident written by `oddsboard generate` (seed {}); not real data.\n{yaml}",
        args.seed
    );
    match args.out {
        None => print!("{text}"),
        Some(path) => {
            use std::io::Write;
            let mut f = std::fs::OpenOptions::new()
                .write(true)
                .create_new(true)
                .open(&path)
                .with_context(|| format!("{}: cannot create", path.display()))?;
            f.write_all(text.as_bytes())
                .with_context(|| format!("{}: cannot write", path.display()))?;
        }
    }
    Ok(())
}
