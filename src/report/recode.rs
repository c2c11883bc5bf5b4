//! Recode results: validation diagnostics (miette text, JSON) and the audit
//! cross-tabulation (text, CSV, JSON).

use std::fmt::Write;
use std::sync::Arc;

use serde::Serialize;

use super::{render_miette, TextStyle};
use crate::codebook::model::{format_number, Severity, SourceFile};
use crate::diagnostic::{Diagnostic, DiagnosticJson};
use crate::recode::audit::AuditTable;

/// A finished `recode` run: the plain data every renderer reads.
pub struct RecodeReport<'a> {
    pub codebook: &'a str,
    pub recodes: &'a str,
    pub data: Option<&'a str>,
    pub rows: Option<u64>,
    pub diagnostics: &'a [Diagnostic],
    pub sources: &'a [Arc<SourceFile>],
    /// Included in the report (when not written to a file of its own).
    pub audits: Option<&'a [AuditTable]>,
    pub passed: bool,
}

impl RecodeReport<'_> {
    pub fn count(&self, severity: Severity) -> usize {
        self.diagnostics
            .iter()
            .filter(|d| d.severity == severity)
            .count()
    }
}

fn plural(n: usize) -> &'static str {
    if n == 1 {
        ""
    } else {
        "s"
    }
}

pub fn text(report: &RecodeReport, style: TextStyle) -> String {
    let mut out = String::new();
    for d in report.diagnostics {
        out.push_str(&render_miette(&d.to_report(report.sources), style));
    }
    if let Some(audits) = report.audits {
        out.push_str(&audit_text(audits));
    }
    let (errors, warnings) = (
        report.count(Severity::Error),
        report.count(Severity::Warning),
    );
    let rows = report
        .rows
        .map(|r| format!(" ({r} rows recoded)"))
        .unwrap_or_default();
    if errors + warnings == 0 {
        let _ = writeln!(out, "{}: no problems found{rows}", report.recodes);
    } else {
        let _ = writeln!(
            out,
            "{}: {errors} error{}, {warnings} warning{}{rows}",
            report.recodes,
            plural(errors),
            plural(warnings)
        );
    }
    out
}

#[derive(Serialize)]
struct ReportJson<'a> {
    concord: &'static str,
    codebook: &'a str,
    recodes: &'a str,
    #[serde(skip_serializing_if = "Option::is_none")]
    data: Option<&'a str>,
    #[serde(skip_serializing_if = "Option::is_none")]
    rows: Option<u64>,
    passed: bool,
    errors: usize,
    warnings: usize,
    diagnostics: Vec<DiagnosticJson<'a>>,
    #[serde(skip_serializing_if = "Option::is_none")]
    audit: Option<&'a [AuditTable]>,
}

pub fn json(report: &RecodeReport) -> String {
    let body = ReportJson {
        concord: env!("CARGO_PKG_VERSION"),
        codebook: report.codebook,
        recodes: report.recodes,
        data: report.data,
        rows: report.rows,
        passed: report.passed,
        errors: report.count(Severity::Error),
        warnings: report.count(Severity::Warning),
        diagnostics: report
            .diagnostics
            .iter()
            .map(|d| d.to_json(report.sources))
            .collect(),
        audit: report.audits,
    };
    let mut s = serde_json::to_string_pretty(&body).unwrap_or_default();
    s.push('\n');
    s
}

fn join(code: Option<&str>, label: Option<&str>) -> String {
    match (code, label) {
        (Some(c), Some(l)) => format!("{c} {l}"),
        (Some(c), None) => c.to_string(),
        (None, Some(l)) => l.to_string(),
        (None, None) => String::new(),
    }
}

fn source_words(class: &str, code: Option<&str>, label: Option<&str>) -> String {
    let what = join(code, label);
    match class {
        "category" => format!("code {what}"),
        "band" => format!("band {what}"),
        "no-band" => "valid value in no band".to_string(),
        "missing-code" => format!("missing {what}"),
        "blank" => what,
        "invalid" => "invalid cell (a check finding)".to_string(),
        "when-not-true" => "`when` not true".to_string(),
        "computed" => "computed value".to_string(),
        "input-missing" => format!("an input missing ({what})"),
        "not-finite" => "division by zero / not finite".to_string(),
        _ => what,
    }
}

/// The audit as aligned text tables, one per derived variable.
pub fn audit_text(audits: &[AuditTable]) -> String {
    let mut out = String::new();
    for a in audits {
        let from = a
            .from
            .as_ref()
            .map(|f| format!(" from `{f}`"))
            .unwrap_or_default();
        let _ = writeln!(out, "\naudit of `{}`{from} ({})", a.name, a.method);
        if let Some(cuts) = &a.cut_points {
            let shown: Vec<String> = cuts.iter().map(|c| format!("{c}")).collect();
            let weight = a
                .weight
                .as_ref()
                .map(|w| format!(", weighted by `{w}`"))
                .unwrap_or_default();
            let _ = writeln!(
                out,
                "  cut points (type {}{weight}): {}",
                a.quantile_type.unwrap_or(7),
                if shown.is_empty() {
                    "none (no valid values)".to_string()
                } else {
                    shown.join(", ")
                }
            );
            if let Some(x) = a.weight_excluded.filter(|x| *x > 0) {
                let _ = writeln!(
                    out,
                    "  {x} cases without a positive weight left out of the cut points"
                );
            }
        }
        let rows: Vec<[String; 4]> = a
            .rows
            .iter()
            .map(|r| {
                let range = match (r.min, r.max) {
                    (Some(lo), Some(hi)) if lo != hi && r.source_class != "category" => {
                        format!("{} to {}", format_number(lo), format_number(hi))
                    }
                    (Some(lo), Some(_)) if r.source_class != "category" => format_number(lo),
                    _ => String::new(),
                };
                let destination = match (r.derived_kind.as_str(), &r.derived) {
                    ("valid", None) => "computed number".to_string(),
                    ("valid", Some(_)) => join(r.derived.as_deref(), r.derived_label.as_deref()),
                    (kind, None) => format!("empty cell ({kind})"),
                    (kind, Some(_)) => format!(
                        "{} ({kind})",
                        join(r.derived.as_deref(), r.derived_label.as_deref())
                    ),
                };
                [
                    source_words(
                        r.source_class,
                        r.source.as_deref(),
                        r.source_label.as_deref(),
                    ),
                    r.count.to_string(),
                    range,
                    destination,
                ]
            })
            .collect();
        let headings = ["source value", "cases", "observed", "derived value"];
        let widths: Vec<usize> = (0..3)
            .map(|i| {
                rows.iter()
                    .map(|r| r[i].chars().count())
                    .chain([headings[i].len()])
                    .max()
                    .unwrap_or(0)
            })
            .collect();
        let line = |cells: [&str; 4]| {
            format!(
                "  {:<w0$}  {:>w1$}  {:<w2$}  -> {}\n",
                cells[0],
                cells[1],
                cells[2],
                cells[3],
                w0 = widths[0],
                w1 = widths[1],
                w2 = widths[2]
            )
        };
        out.push_str(&line(headings));
        for r in &rows {
            out.push_str(&line([&r[0], &r[1], &r[2], &r[3]]));
        }
    }
    out
}

/// The audit as one CSV table: one row per source class and destination.
pub fn audit_csv(audits: &[AuditTable]) -> String {
    let mut w = csv::Writer::from_writer(Vec::new());
    let _ = w.write_record([
        "variable",
        "from",
        "method",
        "source_class",
        "source",
        "source_label",
        "derived",
        "derived_label",
        "derived_kind",
        "count",
        "min",
        "max",
    ]);
    for a in audits {
        for r in &a.rows {
            let num = |x: Option<f64>| x.map(|v| format!("{v}")).unwrap_or_default();
            let _ = w.write_record([
                a.name.as_str(),
                a.from.as_deref().unwrap_or(""),
                a.method,
                r.source_class,
                r.source.as_deref().unwrap_or(""),
                r.source_label.as_deref().unwrap_or(""),
                r.derived.as_deref().unwrap_or(""),
                r.derived_label.as_deref().unwrap_or(""),
                &r.derived_kind,
                &r.count.to_string(),
                &num(r.min),
                &num(r.max),
            ]);
        }
    }
    String::from_utf8(w.into_inner().unwrap_or_default()).unwrap_or_default()
}

pub fn audit_json(audits: &[AuditTable]) -> String {
    #[derive(Serialize)]
    struct Body<'a> {
        concord: &'static str,
        audit: &'a [AuditTable],
    }
    let mut s = serde_json::to_string_pretty(&Body {
        concord: env!("CARGO_PKG_VERSION"),
        audit: audits,
    })
    .unwrap_or_default();
    s.push('\n');
    s
}
