//! The `forkmap` command line. One file per verb under `cli/`, each with its usage on top.

mod cli;

fn main() -> std::process::ExitCode {
    cli::main()
}
