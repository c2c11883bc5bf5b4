//! Check reports as text for a person at a terminal, and as JSON for CI.
//!
//! The text groups findings by variable (what a data manager sends back to a field team),
//! with counts, the first examples and a pointer to the rule's long help. The JSON is the
//! report model serialised as it is: that shape is the published contract.

use std::fmt::Write;

use super::TextStyle;
use crate::check::report::{CheckReport, Finding};
use crate::codebook::model::Severity;

const BOLD: &str = "\x1b[1m";
const RED: &str = "\x1b[31m";
const YELLOW: &str = "\x1b[33m";
const GREEN: &str = "\x1b[32m";
const DIM: &str = "\x1b[2m";
const RESET: &str = "\x1b[0m";

struct Paint(bool);

impl Paint {
    fn wrap(&self, code: &str, text: &str) -> String {
        if self.0 {
            format!("{code}{text}{RESET}")
        } else {
            text.to_string()
        }
    }
}

pub fn text(report: &CheckReport, style: TextStyle) -> String {
    let paint = Paint(style.colour);
    let mut out = String::new();
    let _ = writeln!(
        out,
        "{} {} against {}",
        paint.wrap(BOLD, "concord check:"),
        report.data,
        report.codebook
    );
    let mut current: Option<(&Option<String>, &Option<String>)> = None;
    for f in &report.findings {
        let group = (&f.variable, &f.check);
        if current != Some(group) {
            current = Some(group);
            let heading = match (&f.variable, &f.check) {
                (_, Some(c)) => format!("check {c}"),
                (Some(v), None) => format!("variable {v}"),
                (None, None) => "file".to_string(),
            };
            let _ = writeln!(out, "\n{}", paint.wrap(BOLD, &heading));
        }
        finding(&mut out, f, &paint);
    }
    let verdict = if report.passed {
        paint.wrap(GREEN, "PASSED")
    } else {
        paint.wrap(RED, "FAILED")
    };
    let _ = writeln!(
        out,
        "\n{} rows, {} error finding{}, {} warning finding{}: {verdict}",
        report.rows,
        report.errors,
        if report.errors == 1 { "" } else { "s" },
        report.warnings,
        if report.warnings == 1 { "" } else { "s" },
    );
    out
}

fn finding(out: &mut String, f: &Finding, paint: &Paint) {
    let severity = match f.severity {
        Severity::Error => paint.wrap(RED, "error  "),
        Severity::Warning => paint.wrap(YELLOW, "warning"),
    };
    let _ = writeln!(out, "  {severity} {}  {}", f.rule, f.message);
    for e in &f.examples {
        let mut line = String::new();
        if let Some(row) = e.row {
            let _ = write!(line, "row {row}");
        }
        if let Some(case) = &e.case {
            let _ = write!(line, " (case {case})");
        }
        if let Some(value) = &e.value {
            if line.is_empty() {
                line.push_str(value);
            } else {
                let _ = write!(line, ": {value:?}");
            }
        }
        let _ = writeln!(out, "          {}", line.trim_start());
    }
    if f.count > f.examples.len() as u64 && !f.examples.is_empty() {
        let _ = writeln!(
            out,
            "          ... and {} more",
            f.count - f.examples.len() as u64
        );
    }
    let _ = writeln!(
        out,
        "          {}",
        paint.wrap(DIM, &format!("help: concord rules {}", f.rule))
    );
}

pub fn json(report: &CheckReport) -> String {
    let mut s = serde_json::to_string_pretty(report).unwrap_or_default();
    s.push('\n');
    s
}
