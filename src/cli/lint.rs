//! `concord lint CODEBOOK`

use std::path::PathBuf;

use clap::ValueEnum;

use super::common::{could_not_run, emit, stdout_style, FailOn, Outcome};
use crate::codebook;
use crate::report::lint::{self as render, LintReport};

#[derive(clap::Args)]
pub struct Args {
    /// The codebook file (native TOML or DDI Codebook XML).
    codebook: PathBuf,
    /// The DDI fileDscr to describe, when a DDI codebook has several.
    #[arg(long, value_name = "ID")]
    file_id: Option<String>,
    /// Output format.
    #[arg(long, value_enum, default_value_t = Format::Text)]
    format: Format,
    /// Which diagnostics make the command exit 1.
    #[arg(long, value_enum, default_value_t = FailOn::Error)]
    fail_on: FailOn,
    /// Write the report to this file instead of standard output.
    #[arg(short, long)]
    output: Option<PathBuf>,
    /// Print nothing when there are no problems.
    #[arg(short, long)]
    quiet: bool,
}

#[derive(Clone, Copy, ValueEnum)]
enum Format {
    Text,
    Json,
}

pub fn run(args: Args) -> Outcome {
    let loaded = match codebook::load_with(
        &args.codebook,
        &codebook::Options {
            file_id: args.file_id.clone(),
        },
    ) {
        Ok(l) => l,
        Err(e) => return could_not_run(e),
    };
    let mut diagnostics = loaded.problems;
    diagnostics.extend(codebook::lint::lint(&loaded.codebook));
    let name = args.codebook.display().to_string();
    let report = LintReport {
        codebook: &name,
        diagnostics: &diagnostics,
        sources: &loaded.codebook.sources,
    };
    let passed = !diagnostics.iter().any(|d| args.fail_on.fails(d.severity));
    if !(args.quiet && diagnostics.is_empty()) {
        let text = match args.format {
            Format::Text => {
                let style = if args.output.is_some() {
                    crate::report::TextStyle::plain()
                } else {
                    stdout_style()
                };
                render::text(&report, style)
            }
            Format::Json => render::json(&report, passed),
        };
        if let Err(o) = emit(&text, args.output.as_deref(), &[args.codebook.as_path()]) {
            return o;
        }
    }
    if passed {
        Outcome::Passed
    } else {
        Outcome::Failed
    }
}
