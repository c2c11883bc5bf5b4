//! Diagnostics about codebook and recode files, as plain data.
//!
//! Lint and recode validation produce [`Diagnostic`]s that point at a [`Place`] in one of
//! the loaded source files. They stay plain data so the JSON renderer and tests can read
//! them; only the text renderer turns them into miette reports with source snippets.

use std::sync::Arc;

use miette::{LabeledSpan, NamedSource, SourceSpan};
use serde::Serialize;

use crate::codebook::model::{Place, Severity, SourceFile};

#[derive(Debug, Clone, PartialEq)]
pub struct Diagnostic {
    /// Rule id, such as `lint.duplicate-code`.
    pub rule: &'static str,
    pub severity: Severity,
    pub message: String,
    /// What to do about it.
    pub help: Option<String>,
    pub place: Option<Place>,
    /// Short text shown under the pointed-at span.
    pub label: Option<String>,
}

impl Diagnostic {
    /// A diagnostic of a rule in [`crate::rules`], with the rule's default severity.
    pub fn new(rule: &'static str, message: impl Into<String>) -> Self {
        Diagnostic {
            rule,
            severity: crate::rules::find(rule).map_or(Severity::Error, |r| r.severity),
            message: message.into(),
            help: None,
            place: None,
            label: None,
        }
    }

    pub fn at(mut self, place: Option<Place>, label: impl Into<String>) -> Self {
        self.place = place;
        self.label = Some(label.into());
        self
    }

    pub fn help(mut self, help: impl Into<String>) -> Self {
        self.help = Some(help.into());
        self
    }
}

/// Line and column (both 1-based) of a byte offset in a text.
pub fn line_column(text: &str, offset: usize) -> (usize, usize) {
    let offset = offset.min(text.len());
    let before = &text[..floor_char_boundary(text, offset)];
    let line = before.matches('\n').count() + 1;
    let column = before
        .rfind('\n')
        .map_or(before, |i| &before[i + 1..])
        .chars()
        .count()
        + 1;
    (line, column)
}

fn floor_char_boundary(text: &str, mut offset: usize) -> usize {
    while !text.is_char_boundary(offset) {
        offset -= 1;
    }
    offset
}

/// The JSON shape of a diagnostic, with the place resolved to file, line and column.
#[derive(Debug, Serialize)]
pub struct DiagnosticJson<'a> {
    pub rule: &'a str,
    pub severity: &'a str,
    pub message: &'a str,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub help: Option<&'a str>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub file: Option<String>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub line: Option<usize>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub column: Option<usize>,
}

impl Diagnostic {
    pub fn to_json<'a>(&'a self, sources: &[Arc<SourceFile>]) -> DiagnosticJson<'a> {
        let located = self.place.and_then(|p| sources.get(p.file).map(|s| (p, s)));
        let (file, line, column) = match located {
            Some((p, s)) => {
                let (l, c) = line_column(&s.text, p.offset);
                (Some(s.path.display().to_string()), Some(l), Some(c))
            }
            None => (None, None, None),
        };
        DiagnosticJson {
            rule: self.rule,
            severity: self.severity.name(),
            message: &self.message,
            help: self.help.as_deref(),
            file,
            line,
            column,
        }
    }

    /// A miette report for the text renderer.
    pub fn to_report(&self, sources: &[Arc<SourceFile>]) -> miette::Report {
        let severity = match self.severity {
            Severity::Error => miette::Severity::Error,
            Severity::Warning => miette::Severity::Warning,
        };
        let mut labels = Vec::new();
        let mut source = None;
        if let Some(p) = self.place {
            if let Some(s) = sources.get(p.file) {
                labels.push(LabeledSpan::new_with_span(
                    self.label.clone(),
                    SourceSpan::new(p.offset.into(), p.len),
                ));
                source = Some(s.clone());
            }
        }
        let diagnostic = miette::MietteDiagnostic {
            message: self.message.clone(),
            code: Some(self.rule.to_string()),
            severity: Some(severity),
            help: self.help.clone(),
            url: None,
            labels: if labels.is_empty() {
                None
            } else {
                Some(labels)
            },
        };
        let report = miette::Report::new(diagnostic);
        match source {
            Some(s) => report.with_source_code(NamedSource::new(
                s.path.display().to_string(),
                s.text.clone(),
            )),
            None => report,
        }
    }
}

/// The nearest of `candidates` to `word`, when it is close enough to be a likely typo.
pub fn nearest<'a, I>(word: &str, candidates: I) -> Option<&'a str>
where
    I: IntoIterator<Item = &'a str>,
{
    candidates
        .into_iter()
        .map(|c| (strsim::jaro_winkler(word, c), c))
        .filter(|(score, _)| *score >= 0.8)
        .max_by(|a, b| a.0.total_cmp(&b.0))
        .map(|(_, c)| c)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn line_and_column_are_one_based() {
        let text = "ab\ncdé\nf";
        assert_eq!(line_column(text, 0), (1, 1));
        assert_eq!(line_column(text, 3), (2, 1));
        assert_eq!(line_column(text, 5), (2, 3));
        assert_eq!(line_column(text, 8), (3, 1));
        assert_eq!(line_column(text, 99), (3, 2));
    }

    #[test]
    fn nearest_finds_typos_only() {
        let keys = ["label", "name", "kind", "categories"];
        assert_eq!(nearest("lable", keys), Some("label"));
        assert_eq!(nearest("categorys", keys), Some("categories"));
        assert_eq!(nearest("zzz", keys), None);
    }
}
