//! The native codebook format: TOML, version 1.
//!
//! Reading happens in two steps. serde reads the text into raw structs that mirror the file
//! exactly (unknown keys are refused, every part keeps its span); then the raw structs are
//! turned into the [`Codebook`] model. Problems the TOML grammar or the key set rule out
//! are [`LoadError`]s (the command cannot run). Problems of meaning found on the way, such
//! as an unknown missing kind, become lint diagnostics so that `lint` reports all of them
//! at once.

use std::path::Path;
use std::sync::Arc;

use toml::Spanned;

mod raw;
mod reader;

use raw::RawCodebook;
use reader::Reader;

use super::error::LoadError;
use super::model::*;
use crate::diagnostic::{nearest, Diagnostic};

/// A readable codebook, with the problems of meaning noticed while reading it.
#[derive(Debug)]
pub struct Loaded {
    pub codebook: Codebook,
    pub problems: Vec<Diagnostic>,
}

/// Read a native TOML codebook from its text. `path` is used in messages only.
pub fn parse(path: &Path, text: String) -> Result<Loaded, LoadError> {
    parse_with(path, text, &super::Options::default())
}

/// Read a native TOML codebook; `options` apply to a DDI `base` it builds on.
pub fn parse_with(
    path: &Path,
    text: String,
    options: &super::Options,
) -> Result<Loaded, LoadError> {
    if text.trim().is_empty() {
        return Err(
            LoadError::file("codebook.empty", path, "the codebook file is empty").with_help(
                "a codebook needs a [dataset] table and at least one [[variables]] entry",
            ),
        );
    }
    let raw: RawCodebook = toml::from_str(&text).map_err(|e| toml_error(path, &text, &e))?;
    let source = Arc::new(SourceFile {
        path: path.to_path_buf(),
        text,
    });
    // A `base` DDI codebook is read first; its places point at sources[1].
    let base = match raw.dataset.as_ref().and_then(|d| d.get_ref().base.as_ref()) {
        Some(b) => Some(read_base(path, &source, b, options)?),
        None => None,
    };
    let mut reader = Reader {
        source: &source,
        problems: Vec::new(),
        overlay: base.is_some(),
    };
    let (base, mut problems, base_source) = match base {
        Some(b) => {
            let source = b.codebook.sources.last().cloned();
            (Some(b.codebook), b.problems, source)
        }
        None => (None, Vec::new(), None),
    };
    let codebook = reader.codebook(raw, base)?;
    problems.extend(reader.problems);
    let mut sources = vec![source.clone()];
    sources.extend(base_source);
    Ok(Loaded {
        codebook: Codebook {
            sources,
            ..codebook
        },
        problems,
    })
}

/// Read the DDI codebook named by `[dataset] base`, relative to the native file's folder.
fn read_base(
    path: &Path,
    source: &SourceFile,
    base: &Spanned<String>,
    options: &super::Options,
) -> Result<Loaded, LoadError> {
    let error =
        |message: String| LoadError::at("codebook.base", path, &source.text, base.span(), message);
    let base_path = path
        .parent()
        .unwrap_or_else(|| Path::new(""))
        .join(base.get_ref());
    let text = super::error::read_text(&base_path, "DDI codebook").map_err(|e| {
        error(format!("cannot read the base codebook: {e}"))
            .with_help("`base` is a path relative to this file's folder")
    })?;
    if !super::ddi::looks_like_xml(&text) {
        return Err(error(format!(
            "the base `{}` is not DDI Codebook XML",
            base.get_ref()
        ))
        .with_help(
            "`base` names a DDI Codebook XML file; a native codebook cannot build on another",
        ));
    }
    super::ddi::parse(&base_path, text, options, 1)
}

pub(crate) fn toml_error(path: &Path, text: &str, e: &toml::de::Error) -> LoadError {
    // serde names Rust types ("expected i64"); say what a codebook author writes.
    let range = e.span().unwrap_or(0..0);
    // The parser's message may run over several lines ("invalid array\nexpected `]`"), and
    // is empty when the file ends where a value should be.
    let message = match e.message().trim() {
        "" if text[range.start.min(text.len())..].trim().is_empty() => {
            "the file ends where a value should be; it may be truncated".to_string()
        }
        "" => "a value is missing or malformed here".to_string(),
        m => m
            .lines()
            .map(str::trim)
            .collect::<Vec<_>>()
            .join("; ")
            .replace("expected i64", "expected a whole number"),
    };
    let mut help = None;
    for prefix in ["unknown field `", "unknown variant `"] {
        if let Some(rest) = message.strip_prefix(prefix) {
            let word = rest.split('`').next().unwrap_or("");
            let expected: Vec<&str> = rest
                .split_once("expected")
                .map(|(_, list)| list.split('`').skip(1).step_by(2).collect())
                .unwrap_or_default();
            help = Some(match nearest(word, expected.iter().copied()) {
                Some(near) => format!("did you mean `{near}`?"),
                None if expected.is_empty() => "remove it".to_string(),
                None => format!("expected one of {}", quote_list(&expected)),
            });
        }
    }
    let err = LoadError::at("codebook.syntax", path, text, range, message);
    match help {
        Some(h) => err.with_help(h),
        None => err.with_help("fix the TOML at this place; see the codebook format in the README"),
    }
}

pub(super) fn quote_list(items: &[&str]) -> String {
    items
        .iter()
        .map(|i| format!("`{i}`"))
        .collect::<Vec<_>>()
        .join(", ")
}

/// A condition's text from a TOML string, with its place in file `file`: exact (covering the
/// condition's own characters, so a parse error points at the very character) when the
/// string is written without escapes, else the whole string.
pub(crate) fn condition_text(file: usize, source: &str, s: Spanned<String>) -> ConditionText {
    let span = s.span();
    let text = s.into_inner();
    let raw = source.get(span.clone()).unwrap_or("");
    let exact = ['"', '\''].iter().any(|q| {
        raw.len() == text.len() + 2 && raw.starts_with(*q) && raw[1..raw.len() - 1] == text
    });
    let range = if exact {
        span.start + 1..span.end - 1
    } else {
        span
    };
    ConditionText {
        text,
        place: Some(Place::new(file, range)),
        exact,
    }
}

/// A code as written in TOML: a number (integer or finite float) or a trimmed string; the
/// error says what was written instead.
pub(crate) fn code_of(value: &toml::Value) -> Result<Code, String> {
    match value {
        toml::Value::Integer(i) => Ok(Code::Number(*i as f64)),
        toml::Value::Float(f) if f.is_finite() => Ok(Code::Number(*f)),
        toml::Value::String(t) => Ok(Code::Text(t.trim().to_string())),
        other => Err(format!(
            "a code must be a number or a string, not {}",
            other.type_str()
        )),
    }
}
