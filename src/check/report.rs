//! The check report: the one model behind the text, JSON, SARIF and JUnit renderers.
//!
//! Its JSON form is the CI contract (DESIGN section 6, `schemas/report.schema.json`), so the
//! field names here are the published ones. Messages are written here, once, so every
//! renderer says the same thing.

use std::collections::BTreeMap;

use serde::Serialize;

use super::findings::{Collected, Target};
use super::run::Pass;
use crate::codebook::model::{Codebook, MissingKind, Severity};

#[derive(Debug, Serialize)]
pub struct CheckReport {
    pub concord: &'static str,
    pub codebook: String,
    pub data: String,
    pub rows: u64,
    pub passed: bool,
    pub errors: usize,
    pub warnings: usize,
    pub findings: Vec<Finding>,
    pub variables: Vec<VariableSummary>,
}

#[derive(Debug, Serialize)]
pub struct Finding {
    pub rule: &'static str,
    pub severity: Severity,
    /// The variable (or, for unexpected columns, the file column); null for file-level
    /// findings and checks.
    pub variable: Option<String>,
    /// The check's name, for `consistency.failed`.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub check: Option<String>,
    pub count: u64,
    pub message: String,
    pub examples: Vec<Example>,
}

#[derive(Debug, Serialize)]
pub struct Example {
    pub row: Option<u64>,
    pub case: Option<String>,
    pub value: Option<String>,
}

#[derive(Debug, Serialize)]
pub struct VariableSummary {
    pub name: String,
    pub valid: u64,
    pub skipped: u64,
    pub gate_unknown: u64,
    pub missing: BTreeMap<&'static str, u64>,
    pub invalid: u64,
}

impl Serialize for Severity {
    fn serialize<S: serde::Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        s.serialize_str(self.name())
    }
}

/// Build the report. `fails` says whether a finding of a severity fails the gate.
pub fn build(
    codebook: &Codebook,
    pass: Pass,
    codebook_path: &str,
    data_path: &str,
    fails: impl Fn(Severity) -> bool,
) -> CheckReport {
    let mut findings: Vec<Finding> = pass
        .findings
        .list
        .into_iter()
        .map(|f| finding(codebook, f))
        .collect();
    findings.sort_by_key(|f| order(codebook, f));
    let variables = codebook
        .variables
        .iter()
        .zip(pass.tallies)
        .map(|(v, t)| VariableSummary {
            name: v.name.clone(),
            valid: t.valid,
            skipped: t.skipped,
            gate_unknown: t.gate_unknown,
            missing: MissingKind::ALL
                .iter()
                .filter(|k| t.missing[**k as usize] > 0)
                .map(|k| (k.name(), t.missing[*k as usize]))
                .collect(),
            invalid: t.invalid,
        })
        .collect();
    let errors = findings
        .iter()
        .filter(|f| f.severity == Severity::Error)
        .count();
    let warnings = findings.len() - errors;
    CheckReport {
        concord: env!("CARGO_PKG_VERSION"),
        codebook: codebook_path.to_string(),
        data: data_path.to_string(),
        rows: pass.rows,
        passed: !findings.iter().any(|f| fails(f.severity)),
        errors,
        warnings,
        findings,
        variables,
    }
}

/// File-level findings first, then by variable in codebook order, then checks.
fn order(codebook: &Codebook, f: &Finding) -> (u8, usize, &'static str) {
    let rank = |r: &str| {
        crate::rules::CHECK_RULES
            .iter()
            .position(|x| x.id == r)
            .unwrap_or(0)
    };
    match (&f.variable, &f.check) {
        (_, Some(_)) => (3, 0, f.rule),
        (None, None) => (0, rank(f.rule), f.rule),
        (Some(name), None) => match codebook.variable_index(name) {
            Some(i) => (1, i * 64 + rank(f.rule), f.rule),
            None => (2, 0, f.rule),
        },
    }
}

fn finding(codebook: &Codebook, f: Collected) -> Finding {
    let rule = crate::rules::find(f.rule);
    let mut severity = rule.map_or(Severity::Error, |r| r.severity);
    let (variable, check) = match &f.target {
        Target::Variable(v) => (Some(codebook.variables[*v].name.clone()), None),
        Target::Column(c) => (Some(c.clone()), None),
        Target::Check(c) => {
            severity = codebook.checks[*c].severity;
            (None, Some(codebook.checks[*c].name.clone()))
        }
        Target::File => (None, None),
        Target::Key => (
            Some(
                codebook
                    .dataset
                    .id
                    .iter()
                    .map(|n| n.name.as_str())
                    .collect::<Vec<_>>()
                    .join(","),
            ),
            None,
        ),
    };
    let message = message(codebook, &f, variable.as_deref(), check.as_deref());
    Finding {
        rule: f.rule,
        severity,
        variable,
        check,
        count: f.count,
        message,
        examples: f
            .examples
            .into_iter()
            .map(|e| Example {
                row: e.row,
                case: e.case,
                value: e.value,
            })
            .collect(),
    }
}

/// "1 cell ... is" / "3 cells ... are": a count, its noun and the verb that agrees with it.
fn counted(n: u64, noun: &str, of: &str, singular: &str, plural: &str) -> String {
    if n == 1 {
        format!("1 {noun}{of} {singular}")
    } else {
        format!("{n} {noun}s{of} {plural}")
    }
}

fn rows(n: u64) -> String {
    if n == 1 {
        "1 row".to_string()
    } else {
        format!("{n} rows")
    }
}

fn message(
    codebook: &Codebook,
    f: &Collected,
    variable: Option<&str>,
    check: Option<&str>,
) -> String {
    let var = variable.unwrap_or("?");
    let v = match f.target {
        Target::Variable(i) => Some(&codebook.variables[i]),
        _ => None,
    };
    let n = f.count;
    let of = format!(" of `{var}`");
    // "3 cells of `x` are ...": subject and verb agree with the count.
    let cells = |singular: &str, plural: &str| counted(n, "cell", &of, singular, plural);
    let range = |none: &str| {
        v.and_then(|v| v.range).map_or(String::new(), |r| {
            let lo = r.min.map_or(none.to_string(), |b| b.to_string());
            let hi = r.max.map_or(none.to_string(), |b| b.to_string());
            format!(" {lo} to {hi}")
        })
    };
    match f.rule {
        "structure.column-missing" => format!("variable `{var}` has no column in the file"),
        "structure.column-unexpected" => {
            let names = codebook.variables.iter().map(|v| v.name.as_str());
            match crate::diagnostic::nearest(var, names) {
                Some(near) => {
                    format!("column `{var}` is not in the codebook (did you mean `{near}`?)")
                }
                None => format!("column `{var}` is not in the codebook"),
            }
        }
        "structure.column-duplicate" => {
            format!("column `{var}` appears more than once in the header; the first is checked")
        }
        "structure.row-length" => format!(
            "{} not checked",
            counted(
                n,
                "row",
                "",
                "has the wrong number of fields; its cells were",
                "have the wrong number of fields; their cells were"
            )
        ),
        "structure.encoding" => format!(
            "{} bytes that are not valid {}",
            counted(n, "row", "", "holds", "hold"),
            codebook.file.encoding.name()
        ),
        "structure.case-count"
        | "documented.frequency-mismatch"
        | "documented.statistic-mismatch" => {
            let detail = f.detail.clone().unwrap_or_default();
            match v {
                Some(_) => format!("`{var}`: {detail}"),
                None => detail,
            }
        }
        "structure.id-duplicate" => format!(
            "{} a key (`{var}`) that appeared earlier",
            counted(n, "row", "", "repeats", "repeat")
        ),
        "structure.id-blank" => {
            format!(
                "{} a blank key (`{var}`)",
                counted(n, "row", "", "has", "have")
            )
        }
        "value.not-a-number" => format!("{} not a plain number", cells("is", "are")),
        "value.out-of-range" => format!(
            "{} outside the range{} and not a declared code",
            cells("is", "are"),
            range("any")
        ),
        "value.unlabelled-code" => {
            format!(
                "{} a code with no category or missing code",
                cells("holds", "hold")
            )
        }
        "value.too-many-decimals" => format!(
            "{} more than {} decimal places",
            cells("has", "have"),
            v.and_then(|v| v.decimals).unwrap_or(0)
        ),
        "value.bad-date" => {
            let within = range("any date");
            let within = if within.is_empty() {
                within
            } else {
                format!(" within{within}")
            };
            format!(
                "{} not an ISO 8601 calendar date{within}",
                cells("is", "are")
            )
        }
        "value.blank" => format!(
            "{} empty and no blank meaning is declared",
            cells("is", "are")
        ),
        "value.pattern-mismatch" => format!(
            "{} not match the pattern {}",
            cells("does", "do"),
            v.and_then(|v| v.pattern.clone()).unwrap_or_default()
        ),
        "value.too-long" => format!(
            "{} longer than {} characters",
            cells("is", "are"),
            v.and_then(|v| v.max_length).unwrap_or(0)
        ),
        "routing.should-be-skipped" => format!(
            "{} answered although the universe ({}) excludes the case",
            cells("is", "are"),
            v.and_then(|v| v.universe.as_ref())
                .map_or("", |u| u.text.as_str())
        ),
        "routing.should-be-answered" => format!(
            "{} skipped although {}",
            cells("is", "are"),
            match v.and_then(|v| v.universe.as_ref()) {
                Some(u) => format!("the universe ({}) includes the case", u.text),
                None => "the question is asked of everyone".to_string(),
            }
        ),
        "consistency.failed" => {
            let c = check.unwrap_or("?");
            let text = codebook
                .checks
                .iter()
                .find(|x| x.name == c)
                .map_or(String::new(), |x| x.assert.text.clone());
            format!("check `{c}` failed for {}: {text}", rows(n))
        }
        other => format!("{other}: {}", cells("is", "are")),
    }
}
