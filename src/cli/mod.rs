//! The command line: argument structs, dispatch and the exit-code contract.
//!
//! Each command has its own file holding its arguments and the wiring from arguments to
//! library calls; no checking or formatting logic lives here.

mod check;
mod common;
mod convert;
mod extract;
mod lint;
mod recode;
mod rules;
mod tally;

use std::process::ExitCode;

use clap::{Parser, Subcommand};

pub use common::{FailOn, Outcome};

/// Check survey data files against their codebook.
#[derive(Parser)]
#[command(name = "concord", version, about, long_about = None)]
struct Cli {
    #[command(subcommand)]
    command: Command,
}

#[derive(Subcommand)]
enum Command {
    /// Check a data file against its codebook.
    Check(check::Args),
    /// Write a labelled extract (CSV) and a codebook describing it.
    Extract(extract::Args),
    /// Check a codebook's own consistency before any data is read.
    Lint(lint::Args),
    /// Convert a codebook between DDI Codebook XML and native TOML.
    Convert(convert::Args),
    /// Validate a recode file against the codebook, or apply it to a data file.
    Recode(recode::Args),
    /// List every rule concord reports, or explain one.
    Rules(rules::Args),
    /// Frequency tables, cross-tabulations and by-group summaries with labels.
    Tally(tally::Args),
}

/// Run the command line and return its exit code.
pub fn main() -> ExitCode {
    let cli = match Cli::try_parse() {
        Ok(cli) => cli,
        Err(e) => {
            let _ = e.print();
            return ExitCode::from(if e.use_stderr() { 2 } else { 0 });
        }
    };
    let outcome = match cli.command {
        Command::Check(args) => check::run(args),
        Command::Extract(args) => extract::run(args),
        Command::Lint(args) => lint::run(args),
        Command::Convert(args) => convert::run(args),
        Command::Recode(args) => recode::run(args),
        Command::Rules(args) => rules::run(args),
        Command::Tally(args) => tally::run(args),
    };
    outcome.exit_code()
}
