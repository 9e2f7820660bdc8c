//! `oddsboard generate` (not built yet).

use super::CliResult;
use std::path::PathBuf;

#[derive(Debug, clap::Args)]
pub struct Args {
    /// Incident file or log.
    pub file: PathBuf,
}

pub fn run(_args: Args) -> CliResult {
    anyhow::bail!("`generate` is not built yet")
}
