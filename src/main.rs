//! The `oddsboard` binary: parses arguments, runs one subcommand, maps the
//! outcome to an exit code (0 success, 1 bad input, 2 usage error).

use std::process::ExitCode;

fn main() -> ExitCode {
    restore_default_sigpipe();
    oddsboard::cli::main()
}

/// Rust ignores SIGPIPE, so `oddsboard timeline log | head` would panic on
/// the closed pipe. Restoring the default makes the process end quietly, as
/// command-line tools are expected to.
fn restore_default_sigpipe() {
    #[cfg(unix)]
    // SAFETY: called first thing in main, before any thread exists; setting a
    // signal's disposition to the default is async-signal-safe.
    unsafe {
        libc::signal(libc::SIGPIPE, libc::SIG_DFL);
    }
}
