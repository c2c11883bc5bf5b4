//! Turning the raw structs of a native codebook into the [`Codebook`] model.
//!
//! Problems of meaning found on the way (an unknown missing kind, a code that is not a
//! category's) become lint diagnostics, kept in [`Reader::problems`], so that `lint` reports
//! all of them at once; only what makes the file unreadable is a [`LoadError`].

use std::sync::Arc;

use toml::Spanned;

use super::raw::*;
use super::{code_of, condition_text, quote_list};
use crate::codebook::date::parse_iso_date;
use crate::codebook::error::LoadError;
use crate::codebook::model::*;
use crate::diagnostic::{nearest, Diagnostic};

pub(super) struct Reader<'a> {
    pub(super) source: &'a Arc<SourceFile>,
    pub(super) problems: Vec<Diagnostic>,
    /// Building on a `base` DDI codebook.
    pub(super) overlay: bool,
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

    pub(super) fn codebook(
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
