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

use serde::Deserialize;
use toml::Spanned;

use super::date::parse_iso_date;
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

fn quote_list(items: &[&str]) -> String {
    items
        .iter()
        .map(|i| format!("`{i}`"))
        .collect::<Vec<_>>()
        .join(", ")
}

// ---- raw structs: the file exactly as written ----

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawCodebook {
    dataset: Option<Spanned<RawDataset>>,
    file: Option<Spanned<RawFile>>,
    #[serde(default)]
    variables: Vec<Spanned<RawVariable>>,
    #[serde(default)]
    checks: Vec<Spanned<RawCheck>>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawDataset {
    name: Option<Spanned<String>>,
    title: Option<String>,
    cases: Option<Spanned<i64>>,
    id: Option<Spanned<OneOrMany>>,
    weight: Option<Spanned<String>>,
    blank: Option<Spanned<String>>,
    base: Option<Spanned<String>>,
}

#[derive(Deserialize)]
#[serde(untagged)]
enum OneOrMany {
    One(String),
    Many(Vec<String>),
}

#[derive(Deserialize)]
#[serde(rename_all = "kebab-case")]
enum RawLayout {
    Delimited,
    Fixed,
}

#[derive(Deserialize)]
enum RawEncoding {
    #[serde(rename = "utf-8", alias = "utf8", alias = "UTF-8")]
    Utf8,
    #[serde(rename = "latin1", alias = "iso-8859-1", alias = "latin-1")]
    Latin1,
    #[serde(rename = "windows-1252", alias = "cp1252")]
    Windows1252,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawFile {
    layout: Option<RawLayout>,
    delimiter: Option<Spanned<String>>,
    header: Option<bool>,
    encoding: Option<RawEncoding>,
    quote: Option<Spanned<String>>,
}

#[derive(Deserialize)]
#[serde(rename_all = "kebab-case")]
enum RawKind {
    Categorical,
    Ordinal,
    Numeric,
    Text,
    Date,
    Identifier,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawVariable {
    name: Spanned<String>,
    label: Option<String>,
    /// Required, except in an entry that overrides a variable of the `base` codebook.
    kind: Option<Spanned<RawKind>>,
    categories: Option<Vec<Spanned<RawCategory>>>,
    missing: Option<Vec<Spanned<RawMissing>>>,
    range: Option<Spanned<RawRange>>,
    decimals: Option<Spanned<i64>>,
    universe: Option<Spanned<String>>,
    blank: Option<Spanned<String>>,
    columns: Option<Spanned<RawColumns>>,
    pattern: Option<Spanned<String>>,
    max_length: Option<Spanned<i64>>,
    documented: Option<Spanned<RawDocumented>>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawCategory {
    code: Spanned<toml::Value>,
    label: String,
    frequency: Option<Spanned<i64>>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawMissing {
    code: Spanned<toml::Value>,
    label: Option<String>,
    kind: Spanned<String>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawRange {
    min: Option<Spanned<toml::Value>>,
    max: Option<Spanned<toml::Value>>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawColumns {
    start: i64,
    end: i64,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawDocumented {
    valid: Option<Spanned<i64>>,
    mean: Option<Number>,
    sd: Option<Number>,
    min: Option<Number>,
    max: Option<Number>,
}

/// A TOML integer or float, read as f64.
struct Number(f64);

impl<'de> Deserialize<'de> for Number {
    fn deserialize<D: serde::Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        struct Visitor;
        impl serde::de::Visitor<'_> for Visitor {
            type Value = Number;
            fn expecting(&self, f: &mut std::fmt::Formatter) -> std::fmt::Result {
                f.write_str("a number")
            }
            fn visit_i64<E>(self, v: i64) -> Result<Number, E> {
                Ok(Number(v as f64))
            }
            fn visit_u64<E>(self, v: u64) -> Result<Number, E> {
                Ok(Number(v as f64))
            }
            fn visit_f64<E>(self, v: f64) -> Result<Number, E> {
                Ok(Number(v))
            }
        }
        d.deserialize_any(Visitor)
    }
}

#[derive(Deserialize)]
#[serde(rename_all = "kebab-case")]
enum RawSeverity {
    Error,
    Warning,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawCheck {
    name: Spanned<String>,
    assert: Spanned<String>,
    when: Option<Spanned<String>>,
    severity: Option<RawSeverity>,
}

// ---- raw -> model ----

struct Reader<'a> {
    source: &'a Arc<SourceFile>,
    problems: Vec<Diagnostic>,
    /// Building on a `base` DDI codebook.
    overlay: bool,
}

impl Reader<'_> {
    fn place<T>(&self, s: &Spanned<T>) -> Option<Place> {
        Some(Place::new(0, s.span()))
    }

    fn error_at<T>(&self, s: &Spanned<T>, message: impl Into<String>) -> LoadError {
        LoadError::at(
            "codebook.invalid",
            &self.source.path,
            &self.source.text,
            s.span(),
            message,
        )
    }

    fn problem(&mut self, d: Diagnostic) {
        self.problems.push(d);
    }

    fn codebook(
        &mut self,
        raw: RawCodebook,
        base: Option<Codebook>,
    ) -> Result<Codebook, LoadError> {
        let Some(dataset) = raw.dataset else {
            return Err(LoadError::file(
                "codebook.no-dataset",
                &self.source.path,
                "the codebook has no [dataset] table",
            )
            .with_help("add a [dataset] table with at least `name = \"...\"`"));
        };
        let (base_dataset, base_file, mut variables) = match base {
            Some(b) => (Some(b.dataset), b.file, b.variables),
            None => (None, FileLayout::default(), Vec::new()),
        };
        let overlay = base_dataset.is_some();
        let dataset = self.dataset(dataset, base_dataset)?;
        let file = match raw.file {
            Some(f) => self.file_layout(f, base_file)?,
            None => base_file,
        };
        if raw.variables.is_empty() && !overlay {
            return Err(LoadError::file(
                "codebook.no-variables",
                &self.source.path,
                "the codebook declares no variables",
            )
            .with_help("add one [[variables]] entry per column of the data file"));
        }
        // Over a base, an entry naming a base variable overrides the keys it writes; an entry
        // naming a variable the base lacks adds it, and then must declare its kind.
        for raw in raw.variables {
            let name = raw.get_ref().name.get_ref().clone();
            let found = if overlay {
                variables.iter().position(|v| v.name == name)
            } else {
                None
            };
            match found {
                Some(i) => {
                    let merged = self.variable(raw, Some(&variables[i]))?;
                    variables[i] = merged;
                }
                None => {
                    let v = self.variable(raw, None)?;
                    variables.push(v);
                }
            }
        }
        let checks = raw.checks.into_iter().map(|c| self.check(c)).collect();
        Ok(Codebook {
            dataset,
            file,
            variables,
            checks,
            sources: Vec::new(),
        })
    }

    /// The dataset table; over a `base`, the keys written here override the base's.
    fn dataset(
        &mut self,
        raw: Spanned<RawDataset>,
        base: Option<Dataset>,
    ) -> Result<Dataset, LoadError> {
        let place = self.place(&raw);
        let raw = raw.into_inner();
        let name = match (raw.name, &base) {
            (Some(n), _) => n.into_inner(),
            (None, Some(b)) => b.name.clone(),
            (None, None) => {
                return Err(LoadError::at(
                    "codebook.invalid",
                    &self.source.path,
                    &self.source.text,
                    place.map_or(0..0, |p| p.offset..p.offset + p.len),
                    "[dataset] has no `name`",
                )
                .with_help("add `name = \"...\"`, a short machine name for the dataset"))
            }
        };
        let base = base.unwrap_or_default();
        let cases = match raw.cases {
            Some(c) if *c.get_ref() < 0 => {
                return Err(self.error_at(&c, "`cases` must not be negative"))
            }
            Some(c) => Some(*c.get_ref() as u64),
            None => base.cases,
        };
        let id = match raw.id {
            None => base.id,
            Some(id) => {
                let place = self.place(&id);
                let names = match id.into_inner() {
                    OneOrMany::One(n) => vec![n],
                    OneOrMany::Many(ns) => ns,
                };
                names
                    .into_iter()
                    .map(|name| Named { name, place })
                    .collect()
            }
        };
        let blank = match raw.blank {
            Some(b) => self.missing_kind(&b),
            None => base.blank,
        };
        Ok(Dataset {
            name,
            title: raw.title.or(base.title),
            cases,
            id,
            weight: raw
                .weight
                .map(|w| Named {
                    place: self.place(&w),
                    name: w.into_inner(),
                })
                .or(base.weight),
            blank,
            place,
        })
    }

    /// The file table; keys left out keep `defaults` (the base's layout, or the defaults).
    fn file_layout(
        &mut self,
        raw: Spanned<RawFile>,
        defaults: FileLayout,
    ) -> Result<FileLayout, LoadError> {
        let place = self.place(&raw);
        let raw = raw.into_inner();
        let delimiter = match &raw.delimiter {
            Some(d) => self.single_byte(d, "delimiter")?,
            None => defaults.delimiter,
        };
        let quote = match &raw.quote {
            Some(q) => self.single_byte(q, "quote")?,
            None => defaults.quote,
        };
        Ok(FileLayout {
            layout: match raw.layout {
                Some(RawLayout::Fixed) => Layout::Fixed,
                Some(RawLayout::Delimited) => Layout::Delimited,
                None => defaults.layout,
            },
            delimiter,
            header: raw.header.unwrap_or(defaults.header),
            encoding: match raw.encoding {
                None => defaults.encoding,
                Some(RawEncoding::Utf8) => Encoding::Utf8,
                Some(RawEncoding::Latin1) => Encoding::Latin1,
                Some(RawEncoding::Windows1252) => Encoding::Windows1252,
            },
            quote,
            place,
        })
    }

    fn single_byte(&self, s: &Spanned<String>, key: &str) -> Result<u8, LoadError> {
        match s.get_ref().as_bytes() {
            [b] if b.is_ascii() => Ok(*b),
            _ => Err(self
                .error_at(s, format!("`{key}` must be a single ASCII character"))
                .with_help("for example \",\", \";\", \"|\" or \"\\t\" for a tab")),
        }
    }

    fn missing_kind(&mut self, s: &Spanned<String>) -> Option<MissingKind> {
        let kind = MissingKind::from_name(s.get_ref());
        if kind.is_none() {
            let names = MissingKind::ALL.map(MissingKind::name);
            let help = match nearest(s.get_ref(), names) {
                Some(n) => format!("did you mean `{n}`?"),
                None => format!("use one of {}", quote_list(&names)),
            };
            let d = Diagnostic::new(
                "lint.unknown-missing-kind",
                format!("unknown missing kind `{}`", s.get_ref()),
            )
            .at(self.place(s), "not a missing kind")
            .help(help);
            self.problem(d);
        }
        kind
    }

    fn code(&self, s: &Spanned<toml::Value>) -> Result<Code, LoadError> {
        code_of(s.get_ref()).map_err(|message| {
            self.error_at(s, message)
                .with_help("write `code = 1` or `code = \"A\"`")
        })
    }

    /// A variable entry; with `base`, the entry overrides only the keys it writes.
    fn variable(
        &mut self,
        raw: Spanned<RawVariable>,
        base: Option<&Variable>,
    ) -> Result<Variable, LoadError> {
        let entry = self.place(&raw);
        let entry_span = raw.span();
        let raw = raw.into_inner();
        let kind = raw.kind.as_ref().map(|k| match k.get_ref() {
            RawKind::Categorical => Kind::Categorical,
            RawKind::Ordinal => Kind::Ordinal,
            RawKind::Numeric => Kind::Numeric,
            RawKind::Text => Kind::Text,
            RawKind::Date => Kind::Date,
            RawKind::Identifier => Kind::Identifier,
        });
        let mut v = match (base, kind) {
            (Some(b), k) => Variable {
                kind: k.unwrap_or(b.kind),
                ..b.clone()
            },
            (None, Some(k)) => Variable::new(raw.name.get_ref().clone(), k),
            (None, None) => {
                let message = if self.overlay {
                    format!(
                        "variable `{}` is not in the base codebook, so this entry adds it and needs a `kind`",
                        raw.name.get_ref()
                    )
                } else {
                    format!("variable `{}` has no `kind`", raw.name.get_ref())
                };
                return Err(LoadError::at(
                    "codebook.invalid",
                    &self.source.path,
                    &self.source.text,
                    entry_span,
                    message,
                )
                .with_help(format!(
                    "add `kind = ...`, one of {}{}",
                    quote_list(&Kind::ALL.map(Kind::name)),
                    if self.overlay {
                        "; or correct the name to one of the base's variables"
                    } else {
                        ""
                    }
                )));
            }
        };
        let kind = v.kind;
        v.place = self.place(&raw.name);
        v.entry = entry;
        if raw.label.is_some() {
            v.label = raw.label;
        }
        if raw.categories.is_some() {
            v.categories.clear();
        }
        for c in raw.categories.unwrap_or_default() {
            let place = self.place(&c);
            let c = c.into_inner();
            let frequency = match c.frequency {
                Some(f) if *f.get_ref() < 0 => {
                    return Err(self.error_at(&f, "a documented frequency must not be negative"))
                }
                Some(f) => Some(*f.get_ref() as u64),
                None => None,
            };
            v.categories.push(Category {
                code: self.code(&c.code)?,
                label: c.label,
                frequency,
                place,
            });
        }
        if raw.missing.is_some() {
            v.missing.clear();
        }
        for m in raw.missing.unwrap_or_default() {
            let place = self.place(&m);
            let m = m.into_inner();
            let kind = self.missing_kind(&m.kind).unwrap_or(MissingKind::Other);
            v.missing.push(MissingCode {
                code: self.code(&m.code)?,
                label: m.label.unwrap_or_else(|| kind.name().to_string()),
                kind,
                place,
            });
        }
        if let Some(r) = raw.range {
            let place = self.place(&r);
            let r = r.into_inner();
            v.range = Some(Range {
                min: r.min.and_then(|b| self.bound(&b, kind)),
                max: r.max.and_then(|b| self.bound(&b, kind)),
                place,
            });
        }
        if let Some(d) = raw.decimals {
            match u32::try_from(*d.get_ref()) {
                Ok(n) => v.decimals = Some(n),
                Err(_) => self.problem(
                    Diagnostic::new(
                        "lint.negative-decimals",
                        format!(
                            "`decimals` is {}, but it counts decimal places",
                            d.get_ref()
                        ),
                    )
                    .at(self.place(&d), "must be 0 or more")
                    .help("write the most decimal places a value may have, e.g. `decimals = 1`"),
                ),
            }
        }
        if let Some(u) = raw.universe {
            v.universe = Some(self.condition(u));
        }
        if let Some(b) = raw.blank {
            v.blank = self.missing_kind(&b);
        }
        if let Some(c) = raw.columns {
            let place = self.place(&c);
            let inner = c.get_ref();
            // An invalid span is kept (negative numbers as 0) so that lint knows the variable
            // has columns and does not also call them absent; nothing reads such a span.
            v.columns = Some(Columns {
                start: usize::try_from(inner.start).unwrap_or(0),
                end: usize::try_from(inner.end).unwrap_or(0),
                place,
            });
            if inner.start < 1 || inner.end < inner.start {
                self.problem(
                    Diagnostic::new(
                        "lint.bad-columns",
                        format!(
                            "columns {}-{} of `{}` are not a valid span",
                            inner.start, inner.end, v.name
                        ),
                    )
                    .at(place, "start must be 1 or more and end at least start")
                    .help("columns are 1-based and inclusive: `columns = { start = 1, end = 5 }`"),
                );
            }
        }
        if let Some(p) = raw.pattern {
            if let Err(e) = regex::Regex::new(p.get_ref()) {
                self.problem(
                    Diagnostic::new(
                        "lint.bad-pattern",
                        format!(
                            "`pattern` of `{}` is not a valid regular expression",
                            v.name
                        ),
                    )
                    .at(self.place(&p), "does not compile")
                    .help(first_line(&e.to_string())),
                );
            }
            v.pattern = Some(p.into_inner());
        }
        if let Some(m) = raw.max_length {
            match u64::try_from(*m.get_ref()) {
                Ok(n) if n > 0 => v.max_length = Some(n),
                _ => self.problem(
                    Diagnostic::new(
                        "lint.bad-max-length",
                        format!("`max_length` of `{}` must be 1 or more", v.name),
                    )
                    .at(self.place(&m), "not a length"),
                ),
            }
        }
        if let Some(d) = raw.documented {
            let place = self.place(&d);
            let d = d.into_inner();
            v.documented = Some(Documented {
                valid: match d.valid {
                    Some(n) if *n.get_ref() < 0 => {
                        return Err(self.error_at(&n, "a documented count must not be negative"))
                    }
                    n => n.map(|n| *n.get_ref() as u64),
                },
                mean: d.mean.map(|n| n.0),
                sd: d.sd.map(|n| n.0),
                min: d.min.map(|n| n.0),
                max: d.max.map(|n| n.0),
                place,
            });
        }
        Ok(v)
    }

    fn bound(&mut self, s: &Spanned<toml::Value>, kind: Kind) -> Option<Bound> {
        let bound = match (s.get_ref(), kind) {
            (toml::Value::String(t), Kind::Date) => parse_iso_date(t.trim()).map(Bound::Date),
            (toml::Value::Datetime(dt), Kind::Date) if dt.time.is_none() && dt.offset.is_none() => {
                dt.date
                    .and_then(|d| parse_iso_date(&d.to_string()))
                    .map(Bound::Date)
            }
            (toml::Value::Integer(i), k) if k != Kind::Date => Some(Bound::Number(*i as f64)),
            (toml::Value::Float(f), k) if k != Kind::Date && f.is_finite() => {
                Some(Bound::Number(*f))
            }
            _ => None,
        };
        if bound.is_none() {
            let expected = if kind == Kind::Date {
                "an ISO 8601 date such as \"2026-01-31\""
            } else {
                "a number"
            };
            self.problem(
                Diagnostic::new(
                    "lint.bad-bound",
                    format!("a range bound of a {kind} variable must be {expected}"),
                )
                .at(self.place(s), "not a usable bound"),
            );
        }
        bound
    }

    fn condition(&self, s: Spanned<String>) -> ConditionText {
        condition_text(0, &self.source.text, s)
    }

    fn check(&mut self, raw: Spanned<RawCheck>) -> Check {
        let place = self.place(&raw);
        let raw = raw.into_inner();
        Check {
            name: raw.name.into_inner(),
            assert: self.condition(raw.assert),
            when: raw.when.map(|w| self.condition(w)),
            severity: match raw.severity {
                Some(RawSeverity::Warning) => Severity::Warning,
                Some(RawSeverity::Error) | None => Severity::Error,
            },
            place,
        }
    }
}

fn first_line(text: &str) -> String {
    text.lines().last().unwrap_or(text).trim().to_string()
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
