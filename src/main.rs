//! The `areal` command: parses, calls the library, prints.

mod cli;

use std::process::ExitCode;

fn main() -> ExitCode {
    cli::main()
}
