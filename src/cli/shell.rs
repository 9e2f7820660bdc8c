//! `oddsboard completions SHELL` and `oddsboard man`: shell completions and
//! manual pages, generated from the same clap definitions as the parser, so
//! they never drift from the real flags.

use super::CliResult;
use std::io::Write;
use std::path::PathBuf;

#[derive(Debug, clap::Args)]
pub struct CompletionsArgs {
    /// The shell to complete for.
    #[arg(value_enum)]
    pub shell: clap_complete::Shell,
}

#[derive(Debug, clap::Args)]
pub struct ManArgs {
    /// The page of one subcommand (e.g. `plan`) instead of the main page.
    pub subcommand: Option<String>,
    /// Write every page (oddsboard.1, oddsboard-plan.1, …) into this
    /// directory instead of one page on stdout.
    #[arg(long, value_name = "DIR", conflicts_with = "subcommand")]
    pub dir: Option<PathBuf>,
}

/// Writes the completion script for `shell` to `out`.
pub fn write_completions(shell: clap_complete::Shell, out: &mut dyn Write) {
    let mut cmd = super::command();
    clap_complete::generate(shell, &mut cmd, "oddsboard", out);
}

/// The main page and one page per visible subcommand, each with the
/// program's version in its footer.
fn pages() -> Vec<clap_mangen::Man> {
    let mut cmd = super::command().disable_help_subcommand(true);
    // Building fills in the subcommands' bin names (`oddsboard plan`) as
    // clap_mangen expects.
    cmd.build();
    let source = format!("oddsboard {}", super::version_text());
    let subs: Vec<clap::Command> = cmd
        .get_subcommands()
        .filter(|s| !s.is_hide_set())
        .cloned()
        .collect();
    std::iter::once(cmd)
        .chain(subs)
        .map(|c| {
            clap_mangen::Man::new(c)
                .source(source.clone())
                .manual("oddsboard manual")
        })
        .collect()
}

/// Writes one manual page (roff) to `out`: the main page, which lists every
/// subcommand, or the page of `subcommand`.
pub fn write_man(subcommand: Option<&str>, out: &mut dyn Write) -> anyhow::Result<()> {
    let want = match subcommand {
        None => "oddsboard".to_string(),
        Some(name) => format!("oddsboard-{name}"),
    };
    let page = pages()
        .into_iter()
        .find(|p| p.get_filename() == format!("{want}.1"))
        .ok_or_else(|| {
            anyhow::anyhow!(
                "man: no subcommand `{}` (see `oddsboard --help`)",
                subcommand.unwrap_or_default()
            )
        })?;
    page.render(out)?;
    Ok(())
}

pub fn run_completions(args: CompletionsArgs) -> CliResult {
    let mut out = std::io::stdout().lock();
    write_completions(args.shell, &mut out);
    out.flush()?;
    Ok(())
}

pub fn run_man(args: ManArgs) -> CliResult {
    if let Some(dir) = args.dir {
        std::fs::create_dir_all(&dir)
            .map_err(|e| anyhow::anyhow!("{}: cannot create: {e}", dir.display()))?;
        for page in pages() {
            page.generate_to(&dir)
                .map_err(|e| anyhow::anyhow!("{}: cannot write the pages: {e}", dir.display()))?;
        }
        eprintln!("manual pages written to {}", dir.display());
        return Ok(());
    }
    let mut out = std::io::stdout().lock();
    write_man(args.subcommand.as_deref(), &mut out)?;
    out.flush()?;
    Ok(())
}
