//! Verb dispatch, logging set-up and error reporting.

mod check;
mod completions;
mod curves;
mod gather;
mod map;
mod plan;
mod run;
mod sketch;

use clap::{Parser, Subcommand};
use std::process::ExitCode;

/// Map how a small panel's findings depend on the analysis choices made.
#[derive(Parser)]
#[command(name = "forkmap", version, about, long_about = None)]
pub struct Cli {
    /// More log output (-v info, -vv debug); RUST_LOG overrides.
    #[arg(short, long, action = clap::ArgAction::Count, global = true)]
    verbose: u8,
    #[command(subcommand)]
    verb: Verb,
}

#[derive(Subcommand)]
enum Verb {
    Plan(plan::Args),
    Run(run::Args),
    Check(check::Args),
    Gather(gather::Args),
    Map(map::Args),
    Sketch(sketch::Args),
    Completions(completions::Args),
    Curves(curves::Args),
}

fn init_logging(verbose: u8) {
    let default = match verbose {
        0 => "warn",
        1 => "info",
        _ => "debug",
    };
    let filter = tracing_subscriber::EnvFilter::try_from_default_env()
        .unwrap_or_else(|_| tracing_subscriber::EnvFilter::new(default));
    let _ = tracing_subscriber::fmt()
        .with_env_filter(filter)
        .with_writer(std::io::stderr)
        .with_ansi(std::io::IsTerminal::is_terminal(&std::io::stderr()))
        .try_init();
}

pub fn main() -> ExitCode {
    let cli = Cli::parse();
    init_logging(cli.verbose);
    let result = match cli.verb {
        Verb::Plan(a) => plan::exec(a),
        Verb::Run(a) => run::exec(a),
        Verb::Check(a) => check::exec(a),
        Verb::Gather(a) => gather::exec(a),
        Verb::Map(a) => map::exec(a),
        Verb::Sketch(a) => sketch::exec(a),
        Verb::Completions(a) => completions::exec(a),
        Verb::Curves(a) => curves::exec(a),
    };
    match result {
        Ok(code) => code,
        Err(e) => {
            eprintln!("forkmap: error: {e}");
            ExitCode::from(2)
        }
    }
}

/// Worker threads: the flag, else all cores.
pub(crate) fn threads(flag: Option<usize>) -> usize {
    flag.filter(|&n| n > 0).unwrap_or_else(|| {
        std::thread::available_parallelism()
            .map(|n| n.get())
            .unwrap_or(1)
    })
}
