//! `concord extract CODEBOOK DATA -o OUT`

use std::path::{Path, PathBuf};

use clap::builder::NonEmptyStringValueParser;
use clap::ValueEnum;

use super::common::{could_not_run, stderr_style, Outcome};
use crate::check::{self, plan};
use crate::codebook::{self, conditions, model::ConditionText, model::Severity};
use crate::extract::{self, CodeStyle, ExtractError};
use crate::output::{refuse_input, AtomicFile};
use crate::report;

#[derive(clap::Args)]
pub struct Args {
    /// The codebook file: native TOML or DDI Codebook XML.
    codebook: PathBuf,
    /// The DDI fileDscr to describe, when a DDI codebook has several.
    #[arg(long, value_name = "ID")]
    file_id: Option<String>,
    /// The data file; `-` reads standard input.
    data: PathBuf,
    /// The extract to write (CSV).
    #[arg(short, long, value_name = "FILE")]
    output: PathBuf,
    /// Where to write the extract's codebook (default: OUT with extension `.codebook.toml`).
    #[arg(long, value_name = "FILE")]
    codebook_out: Option<PathBuf>,
    /// Variables to write, in this order (comma-separated or repeated).
    #[arg(long, value_delimiter = ',', value_name = "VARS", value_parser = NonEmptyStringValueParser::new())]
    keep: Option<Vec<String>>,
    /// Variables to leave out (comma-separated or repeated).
    #[arg(long, value_delimiter = ',', value_name = "VARS", value_parser = NonEmptyStringValueParser::new())]
    drop: Vec<String>,
    /// Keep only cases for which this condition is true, e.g. `district == 2`.
    #[arg(long = "where", value_name = "CONDITION")]
    filter: Option<String>,
    /// How to write categories: the label, `code|label`, or the label plus a NAME_code column.
    #[arg(long, value_enum, default_value_t = Codes::Label)]
    codes: Codes,
    /// Write missing codes as their labels (and declared blanks as their kind) instead of empty cells.
    #[arg(long)]
    missing_labels: bool,
    /// Keep direct identifiers (variables of kind `identifier`), which are left out by default.
    #[arg(long)]
    include_identifiers: bool,
}

#[derive(Clone, Copy, ValueEnum)]
enum Codes {
    Label,
    Pair,
    Column,
}

fn sidecar_path(out: &Path) -> PathBuf {
    let stem = out
        .file_stem()
        .map(|s| s.to_string_lossy().into_owned())
        .unwrap_or_default();
    out.with_file_name(format!("{stem}.codebook.toml"))
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
    let codebook = loaded.codebook;
    let errors: Vec<_> = diagnostics
        .iter()
        .filter(|d| d.severity == Severity::Error)
        .collect();
    if !errors.is_empty() {
        for d in errors {
            eprint!(
                "{}",
                report::render_miette(&d.to_report(&codebook.sources), stderr_style())
            );
        }
        eprintln!(
            "concord: the codebook {} has lint errors; fix them before extracting (see `concord lint`)",
            args.codebook.display()
        );
        return Outcome::CouldNotRun;
    }
    let sidecar_out = args
        .codebook_out
        .clone()
        .unwrap_or_else(|| sidecar_path(&args.output));
    let inputs = [args.codebook.as_path(), args.data.as_path()];
    for out in [&args.output, &sidecar_out] {
        if let Err(e) = refuse_input(out, &inputs) {
            return could_not_run(e);
        }
    }
    if args.output == sidecar_out {
        eprintln!(
            "concord: the extract and its codebook cannot both be {}; give --codebook-out another path",
            args.output.display()
        );
        return Outcome::CouldNotRun;
    }
    let options = extract::Options {
        keep: args.keep.clone(),
        drop: args.drop.clone(),
        codes: match args.codes {
            Codes::Label => CodeStyle::Label,
            Codes::Pair => CodeStyle::Pair,
            Codes::Column => CodeStyle::Column,
        },
        missing_labels: args.missing_labels,
        include_identifiers: args.include_identifiers,
    };
    let selection = match extract::select(&codebook, &options) {
        Ok(s) => s,
        Err(e) => return could_not_run(e),
    };
    let filter = match &args.filter {
        None => None,
        Some(text) => {
            let condition = ConditionText {
                text: text.clone(),
                place: None,
                exact: false,
            };
            match conditions::compile(&codebook, &condition, "--where condition") {
                Ok(c) => Some(c),
                Err(ds) => {
                    for d in &ds {
                        eprintln!(
                            "concord: {}{}",
                            d.message,
                            d.help
                                .as_ref()
                                .map(|h| format!(" ({h})"))
                                .unwrap_or_default()
                        );
                    }
                    return Outcome::CouldNotRun;
                }
            }
        }
    };
    let mut source = match crate::data::open(&args.data, &check::source_options(&codebook)) {
        Ok(s) => s,
        Err(e) => return could_not_run(e),
    };
    let header = source.headers().map(<[String]>::to_vec);
    let plan = match plan::compile(&codebook, header.as_deref()) {
        Ok(p) => p,
        Err(ds) => {
            for d in &ds {
                eprint!(
                    "{}",
                    report::render_miette(&d.to_report(&codebook.sources), stderr_style())
                );
            }
            return Outcome::CouldNotRun;
        }
    };
    let absent: Vec<&str> = selection
        .variables
        .iter()
        .filter(|&&v| plan.columns[v].field.is_none())
        .map(|&v| codebook.variables[v].name.as_str())
        .collect();
    if !absent.is_empty() {
        eprintln!(
            "concord: {} has no column for {}; run `concord check` first",
            source.name(),
            absent.join(", ")
        );
        return Outcome::CouldNotRun;
    }
    // Both files are created before the pass, so a folder that does not exist is reported
    // before the data is read.
    let mut file = match AtomicFile::create(&args.output) {
        Ok(f) => f,
        Err(e) => return could_not_run(e),
    };
    let mut side = match AtomicFile::create(&sidecar_out) {
        Ok(f) => f,
        Err(e) => return could_not_run(e),
    };
    let result = extract::extract(
        &codebook,
        &plan,
        &selection,
        &options,
        filter.as_ref(),
        &mut source,
        std::io::BufWriter::new(file.file()),
    );
    let summary = match result {
        Ok(s) => s,
        Err(ExtractError::Data(e)) => return could_not_run(e),
        Err(ExtractError::Write(e)) => {
            eprintln!("concord: cannot write {}: {e}", args.output.display());
            return Outcome::CouldNotRun;
        }
    };
    let text = extract::sidecar(
        &codebook,
        &selection,
        &options,
        &summary,
        &args.data.display().to_string(),
    );
    if let Err(e) = std::io::Write::write_all(side.file(), text.as_bytes()) {
        eprintln!("concord: cannot write {}: {e}", sidecar_out.display());
        return Outcome::CouldNotRun;
    }
    if let Err(e) = file.commit().and_then(|_| side.commit()) {
        return could_not_run(e);
    }
    notices(&args, &codebook, &selection, &summary, &sidecar_out);
    Outcome::Passed
}

fn notices(
    args: &Args,
    codebook: &crate::codebook::model::Codebook,
    selection: &extract::Selection,
    summary: &extract::Summary,
    sidecar_out: &Path,
) {
    eprintln!(
        "concord: wrote {} of {} rows and {} variables to {} (codebook: {})",
        summary.rows_written,
        summary.rows_read,
        selection.variables.len(),
        args.output.display(),
        sidecar_out.display()
    );
    if !selection.dropped_identifiers.is_empty() {
        eprintln!(
            "concord: left out direct identifiers {}; use --include-identifiers to keep them, if the data's access conditions allow",
            selection.dropped_identifiers.join(", ")
        );
    }
    if summary.ragged_rows > 0 {
        eprintln!(
            "concord: left out {} rows with the wrong number of fields; `concord check` lists them",
            summary.ragged_rows
        );
    }
    for (i, &n) in summary.invalid_cells.iter().enumerate() {
        if n > 0 {
            eprintln!(
                "concord: {n} cells of `{}` hold values the codebook does not allow and were written empty; `concord check` lists them",
                codebook.variables[selection.variables[i]].name
            );
        }
    }
}
