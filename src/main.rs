//! The `oddsboard` binary: parses arguments, runs one subcommand, maps the
//! outcome to an exit code (0 success, 1 bad input, 2 usage error).

use std::process::ExitCode;

fn main() -> ExitCode {
    oddsboard::cli::main()
}
