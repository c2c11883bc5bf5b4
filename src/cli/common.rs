//! What every command shares: the gate, the outcome and its exit code, output helpers.

use std::io::{IsTerminal, Write};
use std::path::Path;
use std::process::ExitCode;

use clap::ValueEnum;

use crate::codebook::model::Severity;
use crate::report::TextStyle;

/// The exit-code contract: 0 passed, 1 the gate failed, 2 the command could not run.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Outcome {
    Passed,
    Failed,
    CouldNotRun,
}

impl Outcome {
    pub fn exit_code(self) -> ExitCode {
        ExitCode::from(match self {
            Outcome::Passed => 0,
            Outcome::Failed => 1,
            Outcome::CouldNotRun => 2,
        })
    }
}

/// Which findings fail the gate.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum, Default)]
pub enum FailOn {
    /// Fail on errors (the default).
    #[default]
    Error,
    /// Fail on warnings and errors.
    Warning,
    /// Never fail because of findings.
    Never,
}

impl FailOn {
    pub fn fails(self, severity: Severity) -> bool {
        match self {
            FailOn::Error => severity >= Severity::Error,
            FailOn::Warning => true,
            FailOn::Never => false,
        }
    }
}

/// Text style for a stream: colour only on a terminal and when NO_COLOR is unset.
pub fn style_for(terminal: bool) -> TextStyle {
    let colour = terminal && std::env::var_os("NO_COLOR").is_none();
    let width = if terminal {
        terminal_width().unwrap_or(100)
    } else {
        100
    };
    TextStyle { colour, width }
}

fn terminal_width() -> Option<usize> {
    std::env::var("COLUMNS").ok()?.parse().ok()
}

pub fn stdout_style() -> TextStyle {
    style_for(std::io::stdout().is_terminal())
}

pub fn stderr_style() -> TextStyle {
    style_for(std::io::stderr().is_terminal())
}

/// Print a diagnostic that stops the command, and return the matching outcome.
pub fn could_not_run(error: impl miette::Diagnostic + Send + Sync + 'static) -> Outcome {
    let report = miette::Report::new(error);
    eprint!("{}", crate::report::render_miette(&report, stderr_style()));
    Outcome::CouldNotRun
}

/// Write rendered output to stdout, or atomically to `path`. A closed pipe is not an error:
/// the reader has seen what it wanted.
pub fn emit(text: &str, path: Option<&Path>, inputs: &[&Path]) -> Result<(), Outcome> {
    match path {
        Some(p) => {
            crate::output::refuse_input(p, inputs).map_err(could_not_run)?;
            crate::output::write_atomic(p, |w| w.write_all(text.as_bytes())).map_err(could_not_run)
        }
        None => {
            let mut out = std::io::stdout().lock();
            match out.write_all(text.as_bytes()).and_then(|_| out.flush()) {
                Err(e) if e.kind() != std::io::ErrorKind::BrokenPipe => {
                    eprintln!("concord: cannot write to standard output: {e}");
                    Err(Outcome::CouldNotRun)
                }
                _ => Ok(()),
            }
        }
    }
}

/// Load a codebook for a command that reads data. A codebook with lint errors is refused
/// (exit 2) with its diagnostics: its findings, extracts or tables would mislead. `purpose`
/// completes "fix them before ...".
pub fn load_linted(
    path: &Path,
    file_id: Option<String>,
    purpose: &str,
    quiet: bool,
) -> Result<crate::codebook::model::Codebook, Outcome> {
    let loaded = crate::codebook::load_with(path, &crate::codebook::Options { file_id })
        .map_err(could_not_run)?;
    let mut diagnostics = loaded.problems;
    diagnostics.extend(crate::codebook::lint::lint(&loaded.codebook));
    let codebook = loaded.codebook;
    let errors: Vec<_> = diagnostics
        .iter()
        .filter(|d| d.severity == Severity::Error)
        .collect();
    if errors.is_empty() {
        return Ok(codebook);
    }
    if !quiet {
        for d in errors {
            eprint!(
                "{}",
                crate::report::render_miette(&d.to_report(&codebook.sources), stderr_style())
            );
        }
        eprintln!(
            "concord: the codebook {} has lint errors; fix them before {purpose} (see `concord lint`)",
            path.display()
        );
    }
    Err(Outcome::CouldNotRun)
}
