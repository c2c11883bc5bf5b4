//! `concord check CODEBOOK DATA`

use std::io::IsTerminal;
use std::path::PathBuf;

use clap::ValueEnum;

use super::common::{
    could_not_run, emit, load_linted, stderr_style, stdout_style, FailOn, Outcome,
};
use crate::check::{self, CheckError};
use crate::codebook::model::Encoding;
use crate::report;

#[derive(clap::Args)]
pub struct Args {
    /// The codebook file (native TOML or DDI Codebook XML).
    codebook: PathBuf,
    /// The DDI fileDscr to describe, when a DDI codebook has several.
    #[arg(long, value_name = "ID")]
    file_id: Option<String>,
    /// The data file (CSV, TSV, fixed-width; gzip is detected); `-` reads standard input.
    data: PathBuf,
    /// Output format.
    #[arg(long, value_enum, default_value_t = Format::Text)]
    format: Format,
    /// Which findings make the command exit 1.
    #[arg(long, value_enum, default_value_t = FailOn::Error)]
    fail_on: FailOn,
    /// Examples kept per finding.
    #[arg(long, default_value_t = 5, value_name = "N")]
    max_examples: usize,
    /// Write the report to this file instead of standard output.
    #[arg(short, long, value_name = "FILE")]
    output: Option<PathBuf>,
    /// Print nothing; only the exit code tells the result.
    #[arg(short, long)]
    quiet: bool,
    /// Field delimiter, overriding the codebook's `[file] delimiter` (use `\t` for tab).
    #[arg(long, value_name = "CHAR")]
    delimiter: Option<String>,
    /// Character encoding, overriding the codebook's `[file] encoding`.
    #[arg(long, value_enum)]
    encoding: Option<EncodingArg>,
    /// The file has no header row: fields are in codebook order.
    #[arg(long)]
    no_header: bool,
}

#[derive(Clone, Copy, ValueEnum)]
enum Format {
    Text,
    Json,
    /// SARIF 2.1.0, for code-scanning dashboards.
    Sarif,
    /// JUnit XML: one test case per variable, for CI test summaries.
    Junit,
}

#[derive(Clone, Copy, ValueEnum)]
enum EncodingArg {
    #[value(name = "utf-8")]
    Utf8,
    Latin1,
    #[value(name = "windows-1252")]
    Windows1252,
}

pub fn run(args: Args) -> Outcome {
    let mut codebook = match load_linted(
        &args.codebook,
        args.file_id.clone(),
        "checking data",
        args.quiet,
    ) {
        Ok(c) => c,
        Err(o) => return o,
    };
    if let Some(d) = &args.delimiter {
        let d = if d == "\\t" || d == "tab" {
            "\t"
        } else {
            d.as_str()
        };
        match d.as_bytes() {
            [b] if b.is_ascii() => codebook.file.delimiter = *b,
            _ => {
                eprintln!("concord: --delimiter must be a single ASCII character (or \\t for tab)");
                return Outcome::CouldNotRun;
            }
        }
    }
    if let Some(e) = args.encoding {
        codebook.file.encoding = match e {
            EncodingArg::Utf8 => Encoding::Utf8,
            EncodingArg::Latin1 => Encoding::Latin1,
            EncodingArg::Windows1252 => Encoding::Windows1252,
        };
    }
    if args.no_header {
        codebook.file.header = false;
    }
    let mut source = match crate::data::open(&args.data, &check::source_options(&codebook)) {
        Ok(s) => s,
        Err(e) => return could_not_run(e),
    };
    let options = check::Options {
        max_examples: args.max_examples,
        ..check::Options::default()
    };
    let bar = progress_bar(source.total_bytes());
    let mut tick = |bytes: u64| {
        if let Some(b) = &bar {
            b.set_position(bytes);
        }
    };
    let pass = match check::check(&codebook, &mut source, &options, &mut tick) {
        Ok(p) => p,
        Err(CheckError::Codebook(ds)) => {
            for d in &ds {
                eprint!(
                    "{}",
                    report::render_miette(&d.to_report(&codebook.sources), stderr_style())
                );
            }
            return Outcome::CouldNotRun;
        }
        Err(CheckError::Data(e)) => {
            if let Some(b) = &bar {
                b.finish_and_clear();
            }
            return could_not_run(e);
        }
    };
    if let Some(b) = &bar {
        b.finish_and_clear();
    }
    let fail_on = args.fail_on;
    let result = check::report::build(
        &codebook,
        pass,
        &args.codebook.display().to_string(),
        &args.data.display().to_string(),
        |s| fail_on.fails(s),
    );
    if !args.quiet {
        let text = match args.format {
            Format::Text => {
                let style = if args.output.is_some() {
                    report::TextStyle::plain()
                } else {
                    stdout_style()
                };
                report::check::text(&result, style)
            }
            Format::Json => report::check::json(&result),
            Format::Sarif => report::sarif::sarif(&result),
            Format::Junit => report::junit::junit(&result, |f| fail_on.fails(f.severity)),
        };
        let inputs = [args.codebook.as_path(), args.data.as_path()];
        if let Err(o) = emit(&text, args.output.as_deref(), &inputs) {
            return o;
        }
    }
    if result.passed {
        Outcome::Passed
    } else {
        Outcome::Failed
    }
}

/// A progress bar on a terminal for files over a few megabytes; never in pipes or CI.
fn progress_bar(total: Option<u64>) -> Option<indicatif::ProgressBar> {
    let total = total.filter(|t| *t > 8 * 1024 * 1024)?;
    if !std::io::stderr().is_terminal() || std::env::var_os("CI").is_some() {
        return None;
    }
    let bar = indicatif::ProgressBar::new(total);
    bar.set_style(
        indicatif::ProgressStyle::with_template(
            "{bar:40} {bytes}/{total_bytes} {bytes_per_sec} {eta}",
        )
        .unwrap_or_else(|_| indicatif::ProgressStyle::default_bar()),
    );
    Some(bar)
}
