//! `concord extract CODEBOOK DATA -o OUT`

use std::path::{Path, PathBuf};

use clap::builder::NonEmptyStringValueParser;
use clap::ValueEnum;

use super::common::{could_not_run, load_linted, stderr_style, Outcome};
use crate::check::{self, plan};
use crate::codebook::{conditions, model::ConditionText, model::Severity};
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
    /// A recode file: its derived variables can be kept, dropped and filtered on like any other.
    #[arg(long, value_name = "FILE")]
    recodes: Option<PathBuf>,
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
    let mut codebook = match load_linted(&args.codebook, args.file_id.clone(), "extracting", false)
    {
        Ok(c) => c,
        Err(o) => return o,
    };
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
    // With recodes, the derived variables are computed first into a temporary file, which
    // is then extracted like any data file.
    let derived = match &args.recodes {
        Some(recodes) => match derive_first(&mut codebook, recodes, &args.data) {
            Ok(file) => Some(file),
            Err(outcome) => return outcome,
        },
        None => None,
    };
    let data_path = derived.as_ref().map_or(args.data.as_path(), |f| f.path());
    let selection = match extract::select(&codebook, &options) {
        Ok(s) => s,
        Err(e) => return could_not_run(e),
    };
    let filter = match compile_filter(&codebook, args.filter.as_deref()) {
        Ok(f) => f,
        Err(outcome) => return outcome,
    };
    let mut source = match crate::data::open(data_path, &check::source_options(&codebook)) {
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
    if let Err(e) = crate::output::commit_all(vec![file, side]) {
        return could_not_run(e);
    }
    notices(&args, &codebook, &selection, &summary, &sidecar_out);
    Outcome::Passed
}

fn compile_filter(
    codebook: &crate::codebook::model::Codebook,
    text: Option<&str>,
) -> Result<Option<crate::condition::Compiled>, Outcome> {
    let Some(text) = text else { return Ok(None) };
    let condition = ConditionText {
        text: text.to_string(),
        place: None,
        exact: false,
    };
    conditions::compile(codebook, &condition, "--where condition")
        .map(Some)
        .map_err(|ds| {
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
            Outcome::CouldNotRun
        })
}

/// Validate and apply a recode file to the data, into a temporary CSV; `codebook` becomes
/// the codebook of that file (the source variables plus the derived ones).
fn derive_first(
    codebook: &mut crate::codebook::model::Codebook,
    recodes: &Path,
    data: &Path,
) -> Result<tempfile::NamedTempFile, Outcome> {
    use crate::recode::{self, apply, validate};
    let spec = recode::load(recodes, codebook.sources.len()).map_err(could_not_run)?;
    codebook.sources.push(spec.source.clone());
    let validated = validate::validate(codebook, &spec);
    let errors: Vec<_> = validated
        .diagnostics
        .iter()
        .filter(|d| d.severity == Severity::Error)
        .collect();
    let plan = match validated.plan.clone() {
        Some(p) if errors.is_empty() => p,
        _ => {
            for d in errors {
                eprint!(
                    "{}",
                    report::render_miette(&d.to_report(&codebook.sources), stderr_style())
                );
            }
            eprintln!(
                "concord: the recodes in {} have errors; `concord recode` explains them",
                recodes.display()
            );
            return Err(Outcome::CouldNotRun);
        }
    };
    let mut plan = plan;
    let options = check::source_options(codebook);
    let mut excluded = vec![0; plan.derives.len()];
    let failed = |e: apply::ApplyError| match e {
        apply::ApplyError::Data(e) => could_not_run(e),
        apply::ApplyError::Codebook(_) => Outcome::CouldNotRun,
        apply::ApplyError::Write(e) => {
            eprintln!("concord: cannot write a temporary file: {e}");
            Outcome::CouldNotRun
        }
        apply::ApplyError::ColumnsMissing { data, names } => {
            eprintln!(
                "concord: {data} has no column for {}, which the recodes read; nothing was written",
                names.join(", ")
            );
            Outcome::CouldNotRun
        }
    };
    if plan.needs_first_pass() {
        if data.as_os_str() == "-" {
            eprintln!(
                "concord: quantile bands read the data twice, so DATA cannot be standard input"
            );
            return Err(Outcome::CouldNotRun);
        }
        let mut source = crate::data::open(data, &options).map_err(could_not_run)?;
        excluded = apply::cut_quantiles(codebook, &mut plan, &mut source).map_err(failed)?;
    }
    let mut source = crate::data::open(data, &options).map_err(could_not_run)?;
    let mut temp = tempfile::NamedTempFile::new().map_err(|e| {
        eprintln!("concord: cannot create a temporary file: {e}");
        Outcome::CouldNotRun
    })?;
    let places: Vec<_> = spec.derives.iter().map(|d| d.place).collect();
    {
        let mut w = std::io::BufWriter::new(temp.as_file_mut());
        apply::apply(
            codebook,
            &plan,
            &mut source,
            &mut w,
            apply::Columns::All,
            &places,
            &excluded,
        )
        .map_err(failed)?;
        std::io::Write::flush(&mut w).map_err(|e| {
            eprintln!("concord: cannot write a temporary file: {e}");
            Outcome::CouldNotRun
        })?;
    }
    let mut derived = apply::output_codebook(codebook, &plan, apply::Columns::All);
    derived.file = crate::codebook::model::FileLayout::default();
    derived.sources = codebook.sources.clone();
    *codebook = derived;
    Ok(temp)
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
