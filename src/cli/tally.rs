//! `concord tally CODEBOOK DATA VAR [--by VAR]`

use std::path::PathBuf;

use clap::builder::NonEmptyStringValueParser;
use clap::ValueEnum;

use super::common::{could_not_run, emit, load_linted, stderr_style, Outcome};
use crate::report;
use crate::tables::{self, render, Request, TallyError, WeightChoice};

#[derive(clap::Args)]
pub struct Args {
    /// The codebook file: native TOML or DDI Codebook XML.
    codebook: PathBuf,
    /// The DDI fileDscr to describe, when a DDI codebook has several.
    #[arg(long, value_name = "ID")]
    file_id: Option<String>,
    /// The data file (CSV, TSV, fixed-width; gzip is detected); `-` reads standard input.
    data: PathBuf,
    /// The variable to tabulate: categories and missing kinds, or a summary when numeric.
    #[arg(value_parser = NonEmptyStringValueParser::new())]
    variable: String,
    /// Cross-tabulate by this variable (its categories, or the distinct values of a
    /// numeric variable with at most 50 of them).
    #[arg(long, value_name = "VAR", value_parser = NonEmptyStringValueParser::new())]
    by: Option<String>,
    /// Weight variable; the codebook's `dataset.weight` is used when this is not given.
    #[arg(
        long,
        value_name = "VAR",
        conflicts_with = "unweighted",
        value_parser = NonEmptyStringValueParser::new()
    )]
    weight: Option<String>,
    /// Do not weight, even when the codebook names a weight.
    #[arg(long)]
    unweighted: bool,
    /// With --by: give the percent in this category per group (default: the first category
    /// of a variable with exactly two).
    #[arg(long, value_name = "CODE")]
    event: Option<String>,
    /// Flag cells with fewer cases than this (at least one). 10 is a common-practice
    /// threshold in statistical disclosure control; follow your local rules.
    #[arg(long, value_name = "N", default_value_t = tables::DEFAULT_MIN_CELL)]
    min_cell: u64,
    /// Remove counts, percents and intervals of cells with fewer cases than this, and of
    /// further cells so that none can be recovered by subtraction along a row, column or total.
    #[arg(long, value_name = "N")]
    suppress_below: Option<u64>,
    /// Output format.
    #[arg(long, value_enum, default_value_t = Format::Text)]
    format: Format,
    /// Write the tables to this file instead of standard output.
    #[arg(short, long, value_name = "FILE")]
    output: Option<PathBuf>,
}

#[derive(Clone, Copy, ValueEnum)]
enum Format {
    Text,
    Csv,
    Json,
    Markdown,
}

pub fn run(args: Args) -> Outcome {
    let inputs = [args.codebook.as_path(), args.data.as_path()];
    // Refused before reading anything, so a mistyped -o never costs a pass over the file.
    if let Some(out) = &args.output {
        if let Err(e) = crate::output::refuse_input(out, &inputs) {
            return could_not_run(e);
        }
    }
    let codebook = match load_linted(&args.codebook, args.file_id.clone(), "making tables", false) {
        Ok(c) => c,
        Err(o) => return o,
    };
    let request = Request {
        variable: args.variable.clone(),
        by: args.by.clone(),
        weight: match (&args.weight, args.unweighted) {
            (_, true) => WeightChoice::None,
            (Some(w), false) => WeightChoice::Named(w.clone()),
            (None, false) => WeightChoice::Default,
        },
        event: args.event.clone(),
        min_cell: args.min_cell,
        suppress_below: args.suppress_below,
        codebook_name: args.codebook.display().to_string(),
        data_name: args.data.display().to_string(),
    };
    let mut source = match crate::data::open(&args.data, &crate::check::source_options(&codebook)) {
        Ok(s) => s,
        Err(e) => return could_not_run(e),
    };
    let result = match tables::tally(&codebook, &mut source, &request) {
        Ok(r) => r,
        Err(TallyError::Codebook(ds)) => {
            for d in &ds {
                eprint!(
                    "{}",
                    report::render_miette(&d.to_report(&codebook.sources), stderr_style())
                );
            }
            return Outcome::CouldNotRun;
        }
        Err(e) => return could_not_run(e),
    };
    for exclusion in &result.excluded {
        eprintln!("concord: note: {}", exclusion.message);
    }
    let text = match args.format {
        Format::Text => render::text(&result),
        Format::Markdown => render::markdown(&result),
        Format::Csv => render::csv(&result),
        Format::Json => render::json(&result),
    };
    match emit(&text, args.output.as_deref(), &inputs) {
        Ok(()) => Outcome::Passed,
        Err(o) => o,
    }
}
