//! The recode file format: TOML with one `[[derive]]` entry per derived variable.
//!
//! As with the codebook, reading is two steps: serde reads raw structs that mirror the file
//! (unknown keys refused with a suggestion, spans kept), then they become the [`Derive`]
//! model. Problems of shape that leave the recode meaningless (no method, two methods, cuts
//! that do not increase) are [`LoadError`]s, so the command cannot run; problems that need
//! the codebook to see (an unknown source, a gap between bands) are found by
//! [`super::validate`]. The format is described in `docs/recodes.md`.

mod methods;

use std::collections::BTreeMap;
use std::path::Path;
use std::sync::Arc;

use serde::Deserialize;
use toml::Spanned;

use super::intervals::{End, Interval};
use super::quantile::QuantileType;
use crate::codebook::model::{
    Category, Code, ConditionText, Kind, MissingKind, Named, Place, SourceFile,
};
use crate::codebook::LoadError;
use crate::diagnostic::nearest;

/// A recode file, read.
#[derive(Debug)]
pub struct RecodeFile {
    /// The file's text; its index in the sources list is `file`.
    pub source: Arc<SourceFile>,
    pub file: usize,
    pub derives: Vec<Derive>,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Closed {
    /// Bands (a, b]: the default.
    Right,
    /// Bands [a, b).
    Left,
}

#[derive(Debug, Clone)]
pub struct IntervalRule {
    pub interval: Interval,
    pub code: Code,
    pub place: Option<Place>,
}

#[derive(Debug, Clone)]
pub struct MapEntry {
    /// The key as written; read as a source code by validation.
    pub key: String,
    pub code: Code,
    pub place: Option<Place>,
}

/// One `missing` entry: map a source missing code (`from`), or give the output code of a
/// missing kind the recode itself produces (`kind` without `from`).
#[derive(Debug, Clone)]
pub struct MissingRule {
    pub from: Option<Code>,
    pub kind: Option<MissingKind>,
    pub code: Code,
    pub label: Option<String>,
    pub place: Option<Place>,
}

#[derive(Debug, Clone)]
pub enum Method {
    Cuts {
        cuts: Vec<f64>,
        closed: Closed,
    },
    Intervals(Vec<IntervalRule>),
    Map(Vec<MapEntry>),
    Quantiles {
        bands: usize,
        kind: QuantileType,
        weight: Option<Named>,
        weighted: Option<bool>,
        closed: Closed,
    },
    Expr(ConditionText),
}

impl Method {
    pub fn name(&self) -> &'static str {
        match self {
            Method::Cuts { .. } => "cuts",
            Method::Intervals(_) => "intervals",
            Method::Map(_) => "map",
            Method::Quantiles { .. } => "quantiles",
            Method::Expr(_) => "expr",
        }
    }

    pub fn is_banding(&self) -> bool {
        matches!(
            self,
            Method::Cuts { .. } | Method::Intervals(_) | Method::Quantiles { .. }
        )
    }
}

/// Bands of `cuts` (or of quantile cut points), in increasing order.
pub fn bands_of_cuts(cuts: &[f64], closed: Closed) -> Vec<Interval> {
    let mut edges = vec![f64::NEG_INFINITY];
    edges.extend_from_slice(cuts);
    edges.push(f64::INFINITY);
    edges
        .windows(2)
        .map(|w| {
            let (lo, hi) = (w[0], w[1]);
            let finite = |v: f64, closed: bool| End {
                value: v,
                closed: closed && v.is_finite(),
            };
            match closed {
                Closed::Right => Interval::new(finite(lo, false), finite(hi, true)),
                Closed::Left => Interval::new(finite(lo, true), finite(hi, false)),
            }
        })
        .collect()
}

#[derive(Debug, Clone)]
pub struct Derive {
    pub name: String,
    /// Where the name is written.
    pub place: Option<Place>,
    /// The whole `[[derive]]` entry.
    pub entry: Option<Place>,
    pub label: Option<String>,
    pub kind: Kind,
    pub from: Option<Named>,
    pub method: Method,
    /// Where the method's key (`cuts`, `map`, ...) value is written.
    pub method_place: Option<Place>,
    pub when: Option<ConditionText>,
    pub categories: Vec<Category>,
    pub missing: Vec<MissingRule>,
}

// ---- raw structs ----

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawRecodes {
    #[serde(default)]
    derive: Vec<Spanned<RawDerive>>,
}

#[derive(Deserialize)]
#[serde(rename_all = "kebab-case")]
enum RawKind {
    Categorical,
    Ordinal,
    Numeric,
}

#[derive(Deserialize)]
#[serde(rename_all = "kebab-case")]
enum RawClosed {
    Right,
    Left,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawDerive {
    name: Spanned<String>,
    label: Option<String>,
    kind: Option<RawKind>,
    from: Option<Spanned<String>>,
    cuts: Option<Spanned<Vec<Spanned<toml::Value>>>>,
    closed: Option<Spanned<RawClosed>>,
    intervals: Option<Spanned<Vec<Spanned<RawInterval>>>>,
    map: Option<Spanned<BTreeMap<Spanned<String>, Spanned<toml::Value>>>>,
    quantiles: Option<Spanned<i64>>,
    quantile_type: Option<Spanned<i64>>,
    weight: Option<Spanned<String>>,
    weighted: Option<Spanned<bool>>,
    expr: Option<Spanned<String>>,
    when: Option<Spanned<String>>,
    categories: Option<Vec<Spanned<RawCategory>>>,
    missing: Option<Vec<Spanned<RawMissing>>>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawInterval {
    min: Option<Spanned<toml::Value>>,
    max: Option<Spanned<toml::Value>>,
    above: Option<Spanned<toml::Value>>,
    below: Option<Spanned<toml::Value>>,
    code: Spanned<toml::Value>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawCategory {
    code: Spanned<toml::Value>,
    label: String,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawMissing {
    from: Option<Spanned<toml::Value>>,
    kind: Option<Spanned<String>>,
    code: Spanned<toml::Value>,
    label: Option<String>,
}

/// Read a recode file's text; `file` is the index its places will carry in the sources list.
pub fn parse(path: &Path, text: String, file: usize) -> Result<RecodeFile, LoadError> {
    if text.trim().is_empty() {
        return Err(
            LoadError::file("recode.empty", path, "the recode file is empty")
                .with_help("a recode file holds one or more [[derive]] entries"),
        );
    }
    let raw: RawRecodes = toml::from_str(&text).map_err(|e| {
        let mut err = crate::codebook::native::toml_error(path, &text, &e);
        err.code = "recode.syntax";
        if err.help.as_deref().is_some_and(|h| h.contains("README")) {
            err.help = Some("fix the TOML at this place; see docs/recodes.md".to_string());
        }
        err
    })?;
    let source = Arc::new(SourceFile {
        path: path.to_path_buf(),
        text,
    });
    if raw.derive.is_empty() {
        return Err(LoadError::file(
            "recode.empty",
            path,
            "the recode file has no [[derive]] entries",
        )
        .with_help("add `[[derive]]` tables with `name`, `from` and a method such as `cuts`"));
    }
    let reader = Reader {
        source: &source,
        file,
    };
    let derives = raw
        .derive
        .into_iter()
        .map(|d| reader.derive(d))
        .collect::<Result<Vec<_>, _>>()?;
    Ok(RecodeFile {
        source,
        file,
        derives,
    })
}

struct Reader<'a> {
    source: &'a Arc<SourceFile>,
    file: usize,
}

const METHODS: [&str; 5] = ["cuts", "intervals", "map", "quantiles", "expr"];

impl Reader<'_> {
    fn place<T>(&self, s: &Spanned<T>) -> Option<Place> {
        Some(Place::new(self.file, s.span()))
    }

    fn error_at(&self, span: std::ops::Range<usize>, message: impl Into<String>) -> LoadError {
        LoadError::at(
            "recode.invalid",
            &self.source.path,
            &self.source.text,
            span,
            message,
        )
    }

    fn number(&self, s: &Spanned<toml::Value>, what: &str) -> Result<f64, LoadError> {
        match s.get_ref() {
            toml::Value::Integer(i) => Ok(*i as f64),
            toml::Value::Float(f) if f.is_finite() => Ok(*f),
            other => Err(self.error_at(
                s.span(),
                format!("{what} must be a finite number, not {}", other.type_str()),
            )),
        }
    }

    fn code(&self, s: &Spanned<toml::Value>) -> Result<Code, LoadError> {
        crate::codebook::native::code_of(s.get_ref()).map_err(|message| {
            self.error_at(s.span(), message)
                .with_help("write `code = 1` or `code = \"A\"`")
        })
    }

    fn derive(&self, raw: Spanned<RawDerive>) -> Result<Derive, LoadError> {
        let entry = self.place(&raw);
        let span = raw.span();
        let raw = raw.into_inner();
        let name = raw.name.get_ref().clone();
        let given: Vec<&str> = [
            raw.cuts.is_some(),
            raw.intervals.is_some(),
            raw.map.is_some(),
            raw.quantiles.is_some(),
            raw.expr.is_some(),
        ]
        .iter()
        .zip(METHODS)
        .filter(|(g, _)| **g)
        .map(|(_, m)| m)
        .collect();
        let name_span = raw.name.span();
        match given.len() {
            0 => {
                return Err(self
                    .error_at(
                        name_span,
                        format!("`{name}` says neither how nor what to derive"),
                    )
                    .with_help("give one of `cuts`, `intervals`, `map`, `quantiles` or `expr`"))
            }
            1 => {}
            _ => {
                return Err(self
                    .error_at(
                        name_span,
                        format!(
                            "`{name}` gives {} methods ({}); a derived variable has one",
                            given.len(),
                            given.join(", ")
                        ),
                    )
                    .with_help("split it into two [[derive]] entries with different names"))
            }
        }
        let closed = match &raw.closed {
            Some(c) if raw.cuts.is_none() && raw.quantiles.is_none() => {
                return Err(self
                    .error_at(c.span(), "`closed` applies to `cuts` and `quantiles` only")
                    .with_help("interval bounds say themselves whether they are inclusive: `min`/`max` are, `above`/`below` are not"))
            }
            Some(c) => match c.get_ref() {
                RawClosed::Right => Closed::Right,
                RawClosed::Left => Closed::Left,
            },
            None => Closed::Right,
        };
        for (key, present) in [
            (
                "quantile_type",
                raw.quantile_type.as_ref().map(Spanned::span),
            ),
            ("weight", raw.weight.as_ref().map(Spanned::span)),
            ("weighted", raw.weighted.as_ref().map(Spanned::span)),
        ] {
            if let (Some(s), None) = (present, &raw.quantiles) {
                return Err(self.error_at(s, format!("`{key}` applies to `quantiles` only")));
            }
        }
        let (method, method_place) = self.method(&raw, &name, closed)?;
        match (&method, &raw.from) {
            (Method::Expr(_), Some(f)) => {
                return Err(self
                    .error_at(f.span(), "`from` and `expr` do not go together")
                    .with_help("an `expr` names its variables itself; remove `from`"))
            }
            (Method::Expr(_), None) => {}
            (m, None) => {
                return Err(self
                    .error_at(
                        span.start..span.start,
                        format!("`{name}` has `{}` but no `from`", m.name()),
                    )
                    .with_help("name the source variable: `from = \"age\"`"))
            }
            _ => {}
        }
        let kind = match raw.kind {
            Some(RawKind::Categorical) => Kind::Categorical,
            Some(RawKind::Ordinal) => Kind::Ordinal,
            Some(RawKind::Numeric) => Kind::Numeric,
            None => match method {
                Method::Map(_) => Kind::Categorical,
                Method::Expr(_) => Kind::Numeric,
                _ => Kind::Ordinal,
            },
        };
        let mut categories = Vec::new();
        for c in raw.categories.unwrap_or_default() {
            let place = self.place(&c);
            let c = c.into_inner();
            categories.push(Category {
                code: self.code(&c.code)?,
                label: c.label,
                frequency: None,
                place,
            });
        }
        let mut missing = Vec::new();
        for m in raw.missing.unwrap_or_default() {
            let place = self.place(&m);
            let span = m.span();
            let m = m.into_inner();
            let kind = match &m.kind {
                Some(k) => Some(self.missing_kind(k)?),
                None => None,
            };
            if m.from.is_none() && kind.is_none() {
                return Err(self
                    .error_at(span, "a `missing` entry needs `from` (a source missing code) or `kind`")
                    .with_help("`{ from = 97, code = 997 }` maps a source code; `{ kind = \"other\", code = -9 }` gives the code of a kind the recode produces"));
            }
            missing.push(MissingRule {
                from: m.from.as_ref().map(|f| self.code(f)).transpose()?,
                kind,
                code: self.code(&m.code)?,
                label: m.label,
                place,
            });
        }
        Ok(Derive {
            place: self.place(&raw.name),
            name,
            entry,
            label: raw.label,
            kind,
            from: raw.from.map(|f| Named {
                place: self.place(&f),
                name: f.into_inner(),
            }),
            method,
            method_place,
            when: raw.when.map(|w| self.condition(w)),
            categories,
            missing,
        })
    }

    fn missing_kind(&self, s: &Spanned<String>) -> Result<MissingKind, LoadError> {
        MissingKind::from_name(s.get_ref()).ok_or_else(|| {
            let names = MissingKind::ALL.map(MissingKind::name);
            let help = match nearest(s.get_ref(), names) {
                Some(n) => format!("did you mean `{n}`?"),
                None => format!("use one of {}", names.join(", ")),
            };
            self.error_at(s.span(), format!("unknown missing kind `{}`", s.get_ref()))
                .with_help(help)
        })
    }

    fn condition(&self, s: Spanned<String>) -> ConditionText {
        crate::codebook::native::condition_text(self.file, &self.source.text, s)
    }
}
