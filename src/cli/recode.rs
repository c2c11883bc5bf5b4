//! `concord recode CODEBOOK RECODES [DATA -o OUT]`

use std::io::Write;
use std::path::{Path, PathBuf};

use clap::ValueEnum;

use super::common::{could_not_run, emit, stderr_style, stdout_style, FailOn, Outcome};
use crate::codebook::{self, model::Severity};
use crate::diagnostic::Diagnostic;
use crate::output::{AtomicFile, OutputError};
use crate::recode::{self, apply, validate};
use crate::report::{self, recode as render};

#[derive(clap::Args)]
pub struct Args {
    /// The codebook file: native TOML or DDI Codebook XML.
    codebook: PathBuf,
    /// The recode file (TOML, `[[derive]]` entries).
    recodes: PathBuf,
    /// The DDI fileDscr to describe, when a DDI codebook has several.
    #[arg(long, value_name = "ID")]
    file_id: Option<String>,
    /// A data file to apply the recodes to; without it the recodes are only validated.
    data: Option<PathBuf>,
    /// Where to write the data with the derived columns (CSV); required with DATA.
    #[arg(short, long, value_name = "OUT")]
    output: Option<PathBuf>,
    /// Where to write the output's codebook (default: OUT with `.codebook.toml`).
    #[arg(long, value_name = "FILE")]
    codebook_out: Option<PathBuf>,
    /// Write only the case id, the variables derived universes read, and derived columns.
    #[arg(long)]
    only_derived: bool,
    /// Write the audit cross-tabulation to this file instead of the report.
    #[arg(long, value_name = "FILE")]
    audit: Option<PathBuf>,
    /// Format of the audit file (default: from its extension, else text).
    #[arg(long, value_enum)]
    audit_format: Option<AuditFormat>,
    /// Format of the report on standard output.
    #[arg(long, value_enum, default_value_t = Format::Text)]
    format: Format,
    /// Which findings make the command exit 1.
    #[arg(long, value_enum, default_value_t = FailOn::Error)]
    fail_on: FailOn,
    /// Print nothing; only the exit code tells the result.
    #[arg(short, long)]
    quiet: bool,
}

#[derive(Clone, Copy, ValueEnum)]
enum Format {
    Text,
    Json,
}

#[derive(Clone, Copy, ValueEnum, PartialEq, Eq)]
enum AuditFormat {
    Text,
    Csv,
    Json,
}

/// `out.csv` -> `out.codebook.toml`.
pub fn default_codebook_out(out: &Path) -> PathBuf {
    out.with_extension("codebook.toml")
}

fn print_diagnostics(ds: &[&Diagnostic], sources: &[std::sync::Arc<codebook::model::SourceFile>]) {
    for d in ds {
        eprint!(
            "{}",
            report::render_miette(&d.to_report(sources), stderr_style())
        );
    }
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
    let mut lint = loaded.problems;
    lint.extend(codebook::lint::lint(&loaded.codebook));
    let mut codebook = loaded.codebook;
    let lint_errors: Vec<&Diagnostic> = lint
        .iter()
        .filter(|d| d.severity == Severity::Error)
        .collect();
    if !lint_errors.is_empty() {
        if !args.quiet {
            print_diagnostics(&lint_errors, &codebook.sources);
            eprintln!(
                "concord: the codebook {} has lint errors; fix them before recoding (see `concord lint`)",
                args.codebook.display()
            );
        }
        return Outcome::CouldNotRun;
    }
    let recodes = match recode::load(&args.recodes, codebook.sources.len()) {
        Ok(r) => r,
        Err(e) => return could_not_run(e),
    };
    codebook.sources.push(recodes.source.clone());
    let validated = validate::validate(&codebook, &recodes);
    let fail_on = args.fail_on;
    let Some(data) = &args.data else {
        let passed = !validated
            .diagnostics
            .iter()
            .any(|d| fail_on.fails(d.severity));
        return finish(&args, &codebook, &validated.diagnostics, None, None, passed);
    };
    let Some(output) = &args.output else {
        eprintln!("concord: applying recodes to data needs `-o OUT.csv`");
        return Outcome::CouldNotRun;
    };
    let blocking: Vec<&Diagnostic> = validated.blocking().collect();
    let Some(mut plan) = validated.plan.clone().filter(|_| blocking.is_empty()) else {
        if !args.quiet {
            print_diagnostics(&blocking, &codebook.sources);
            eprintln!(
                "concord: the recodes in {} cannot be applied; nothing was written",
                args.recodes.display()
            );
        }
        return Outcome::CouldNotRun;
    };
    if validated
        .diagnostics
        .iter()
        .any(|d| fail_on.fails(d.severity))
    {
        if !args.quiet {
            let all: Vec<&Diagnostic> = validated.diagnostics.iter().collect();
            print_diagnostics(&all, &codebook.sources);
            eprintln!(
                "concord: the recodes in {} have findings at or above --fail-on; nothing was written",
                args.recodes.display()
            );
        }
        return Outcome::Failed;
    }
    let codebook_out = args
        .codebook_out
        .clone()
        .unwrap_or_else(|| default_codebook_out(output));
    let inputs = [
        args.codebook.as_path(),
        args.recodes.as_path(),
        data.as_path(),
    ];
    let mut outputs = vec![output.as_path(), codebook_out.as_path()];
    if let Some(a) = &args.audit {
        outputs.push(a.as_path());
    }
    for (i, out) in outputs.iter().enumerate() {
        let mut others: Vec<&Path> = inputs.to_vec();
        others.extend_from_slice(&outputs[..i]);
        if let Err(e) = crate::output::refuse_input(out, &others) {
            return could_not_run(e);
        }
    }
    // Every output is created (as a temporary file) before the data pass, so a folder that
    // does not exist is reported at once, and all of them appear together at the end or
    // not at all.
    let create = |path: &Path| AtomicFile::create(path);
    let mut data_file = match create(output) {
        Ok(f) => f,
        Err(e) => return could_not_run(e),
    };
    let mut codebook_file = match create(&codebook_out) {
        Ok(f) => f,
        Err(e) => return could_not_run(e),
    };
    let mut audit_file = match args.audit.as_deref().map(create).transpose() {
        Ok(f) => f,
        Err(e) => return could_not_run(e),
    };
    let options = crate::check::source_options(&codebook);
    let mut excluded = vec![0; plan.derives.len()];
    if plan.needs_first_pass() {
        if data.as_os_str() == "-" {
            eprintln!(
                "concord: quantile bands read the data twice, so DATA cannot be standard input"
            );
            return Outcome::CouldNotRun;
        }
        let mut source = match crate::data::open(data, &options) {
            Ok(s) => s,
            Err(e) => return could_not_run(e),
        };
        match apply::cut_quantiles(&codebook, &mut plan, &mut source) {
            Ok(x) => excluded = x,
            Err(e) => return apply_failed(e, &codebook, output),
        }
    }
    let mut source = match crate::data::open(data, &options) {
        Ok(s) => s,
        Err(e) => return could_not_run(e),
    };
    let columns = if args.only_derived {
        apply::Columns::OnlyDerived
    } else {
        apply::Columns::All
    };
    let places: Vec<_> = recodes.derives.iter().map(|d| d.place).collect();
    let applied = match apply::apply(
        &codebook,
        &plan,
        &mut source,
        &mut std::io::BufWriter::new(data_file.file()),
        columns,
        &places,
        &excluded,
    ) {
        Ok(a) => a,
        Err(e) => return apply_failed(e, &codebook, output),
    };
    let out_codebook = apply::output_codebook(&codebook, &plan, columns);
    let header = format!(
        "Codebook of {}, written by concord {}:\n{} with the variables derived by {}.",
        output.display(),
        env!("CARGO_PKG_VERSION"),
        args.codebook.display(),
        args.recodes.display()
    );
    let options = crate::codebook::write_toml::TomlOptions {
        header: header.lines().map(str::to_string).collect(),
        ..Default::default()
    };
    let text = crate::codebook::write_toml::to_toml(&out_codebook, &options);
    if let Err(e) = write_all(&mut codebook_file, &text) {
        return could_not_run(e);
    }
    if let (Some(path), Some(file)) = (&args.audit, audit_file.as_mut()) {
        let format =
            args.audit_format
                .unwrap_or_else(|| match path.extension().and_then(|e| e.to_str()) {
                    Some("csv") => AuditFormat::Csv,
                    Some("json") => AuditFormat::Json,
                    _ => AuditFormat::Text,
                });
        let text = match format {
            AuditFormat::Text => render::audit_text(&applied.audits),
            AuditFormat::Csv => render::audit_csv(&applied.audits),
            AuditFormat::Json => render::audit_json(&applied.audits),
        };
        if let Err(e) = write_all(file, &text) {
            return could_not_run(e);
        }
    }
    let committed = crate::output::commit_all(
        [data_file, codebook_file]
            .into_iter()
            .chain(audit_file)
            .collect(),
    );
    if let Err(e) = committed {
        return could_not_run(e);
    }
    let mut diagnostics = validated.diagnostics;
    diagnostics.extend(applied.diagnostics);
    let passed = !diagnostics.iter().any(|d| fail_on.fails(d.severity));
    let audits = args.audit.is_none().then_some(applied.audits.as_slice());
    finish(
        &args,
        &codebook,
        &diagnostics,
        Some(applied.rows),
        audits,
        passed,
    )
}

fn write_all(file: &mut AtomicFile, text: &str) -> Result<(), OutputError> {
    file.file()
        .write_all(text.as_bytes())
        .map_err(|cause| OutputError::Io {
            path: file.path().to_path_buf(),
            cause,
        })
}

fn apply_failed(e: apply::ApplyError, codebook: &codebook::model::Codebook, out: &Path) -> Outcome {
    match e {
        apply::ApplyError::Data(e) => could_not_run(e),
        apply::ApplyError::Codebook(ds) => {
            print_diagnostics(&ds.iter().collect::<Vec<_>>(), &codebook.sources);
            Outcome::CouldNotRun
        }
        apply::ApplyError::ColumnsMissing { data, names } => {
            eprintln!(
                "concord: {data} has no column for {}, which the recodes read; nothing was written (run `concord check` to compare the file with the codebook)",
                names.join(", ")
            );
            Outcome::CouldNotRun
        }
        apply::ApplyError::Write(e) => {
            eprintln!("concord: cannot write {}: {e}", out.display());
            Outcome::CouldNotRun
        }
    }
}

fn finish(
    args: &Args,
    codebook: &codebook::model::Codebook,
    diagnostics: &[Diagnostic],
    rows: Option<u64>,
    audits: Option<&[recode::audit::AuditTable]>,
    passed: bool,
) -> Outcome {
    if !args.quiet {
        let (name, recodes) = (
            args.codebook.display().to_string(),
            args.recodes.display().to_string(),
        );
        let data = args.data.as_ref().map(|d| d.display().to_string());
        let report = render::RecodeReport {
            codebook: &name,
            recodes: &recodes,
            data: data.as_deref(),
            rows,
            diagnostics,
            sources: &codebook.sources,
            audits,
            passed,
        };
        let text = match args.format {
            Format::Text => render::text(&report, stdout_style()),
            Format::Json => render::json(&report),
        };
        if let Err(o) = emit(&text, None, &[]) {
            return o;
        }
    }
    if passed {
        Outcome::Passed
    } else {
        Outcome::Failed
    }
}
