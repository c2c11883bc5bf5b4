//! Lint results as text (miette, with source snippets) and JSON.

use std::sync::Arc;

use serde::Serialize;

use super::{render_miette, TextStyle};
use crate::codebook::model::{Severity, SourceFile};
use crate::diagnostic::{Diagnostic, DiagnosticJson};

/// A finished lint run: the plain data every renderer reads.
pub struct LintReport<'a> {
    pub codebook: &'a str,
    pub diagnostics: &'a [Diagnostic],
    pub sources: &'a [Arc<SourceFile>],
}

impl LintReport<'_> {
    pub fn count(&self, severity: Severity) -> usize {
        self.diagnostics
            .iter()
            .filter(|d| d.severity == severity)
            .count()
    }
}

pub fn text(report: &LintReport, style: TextStyle) -> String {
    let mut out = String::new();
    for d in report.diagnostics {
        out.push_str(&render_miette(&d.to_report(report.sources), style));
        out.push('\n');
    }
    let (errors, warnings) = (
        report.count(Severity::Error),
        report.count(Severity::Warning),
    );
    if errors + warnings == 0 {
        out.push_str(&format!("{}: no problems found\n", report.codebook));
    } else {
        out.push_str(&format!(
            "{}: {errors} error{}, {warnings} warning{}\n",
            report.codebook,
            plural(errors),
            plural(warnings)
        ));
    }
    out
}

fn plural(n: usize) -> &'static str {
    if n == 1 {
        ""
    } else {
        "s"
    }
}

#[derive(Serialize)]
struct LintJson<'a> {
    concord: &'static str,
    codebook: &'a str,
    passed: bool,
    errors: usize,
    warnings: usize,
    diagnostics: Vec<DiagnosticJson<'a>>,
}

/// `passed` follows the gate the caller applied.
pub fn json(report: &LintReport, passed: bool) -> String {
    let body = LintJson {
        concord: env!("CARGO_PKG_VERSION"),
        codebook: report.codebook,
        passed,
        errors: report.count(Severity::Error),
        warnings: report.count(Severity::Warning),
        diagnostics: report
            .diagnostics
            .iter()
            .map(|d| d.to_json(report.sources))
            .collect(),
    };
    let mut s = serde_json::to_string_pretty(&body).unwrap_or_default();
    s.push('\n');
    s
}
