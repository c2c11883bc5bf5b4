//! The codebook model: what a data file promises, independent of how it was written down.
//!
//! Readers (native TOML, DDI XML) produce this model; lint, the checker, recodes and
//! extracts consume it. It keeps the declared order of variables and categories, because
//! category order is the level order of every extract and table. Each part that a
//! diagnostic may point at keeps a [`Place`]: the file it came from and a byte span there.

use std::fmt;
use std::path::PathBuf;
use std::sync::Arc;

/// A codebook file's text, kept so diagnostics can show the offending lines.
#[derive(Debug)]
pub struct SourceFile {
    pub path: PathBuf,
    pub text: String,
}

/// Where in which source file a part of the codebook was written.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct Place {
    /// Index into [`Codebook::sources`].
    pub file: usize,
    pub offset: usize,
    pub len: usize,
}

impl Place {
    pub fn new(file: usize, range: std::ops::Range<usize>) -> Self {
        Place {
            file,
            offset: range.start,
            len: range.end.saturating_sub(range.start),
        }
    }
}

#[derive(Debug, Default)]
pub struct Codebook {
    pub dataset: Dataset,
    pub file: FileLayout,
    pub variables: Vec<Variable>,
    pub checks: Vec<Check>,
    /// The files the codebook was read from; `Place::file` indexes this list.
    pub sources: Vec<Arc<SourceFile>>,
}

impl Codebook {
    pub fn variable(&self, name: &str) -> Option<&Variable> {
        self.variables.iter().find(|v| v.name == name)
    }

    pub fn variable_index(&self, name: &str) -> Option<usize> {
        self.variables.iter().position(|v| v.name == name)
    }
}

#[derive(Debug, Default)]
pub struct Dataset {
    pub name: String,
    pub title: Option<String>,
    /// Documented number of cases (rows).
    pub cases: Option<u64>,
    /// Variables that together identify a case uniquely.
    pub id: Vec<Named>,
    /// Default analysis weight.
    pub weight: Option<Named>,
    /// Default meaning of an empty cell.
    pub blank: Option<MissingKind>,
    pub place: Option<Place>,
}

/// A variable name as written somewhere in the codebook (for pointing at it).
#[derive(Debug, Clone, PartialEq)]
pub struct Named {
    pub name: String,
    pub place: Option<Place>,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Layout {
    #[default]
    Delimited,
    Fixed,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Encoding {
    #[default]
    Utf8,
    Latin1,
    Windows1252,
}

impl Encoding {
    pub fn name(self) -> &'static str {
        match self {
            Encoding::Utf8 => "utf-8",
            Encoding::Latin1 => "latin1",
            Encoding::Windows1252 => "windows-1252",
        }
    }
}

#[derive(Debug, Clone)]
pub struct FileLayout {
    pub layout: Layout,
    pub delimiter: u8,
    pub header: bool,
    pub encoding: Encoding,
    pub quote: u8,
    pub place: Option<Place>,
}

impl Default for FileLayout {
    fn default() -> Self {
        FileLayout {
            layout: Layout::Delimited,
            delimiter: b',',
            header: true,
            encoding: Encoding::Utf8,
            quote: b'"',
            place: None,
        }
    }
}

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Kind {
    Categorical,
    Ordinal,
    Numeric,
    Text,
    Date,
    Identifier,
}

impl Kind {
    pub const ALL: [Kind; 6] = [
        Kind::Categorical,
        Kind::Ordinal,
        Kind::Numeric,
        Kind::Text,
        Kind::Date,
        Kind::Identifier,
    ];

    pub fn name(self) -> &'static str {
        match self {
            Kind::Categorical => "categorical",
            Kind::Ordinal => "ordinal",
            Kind::Numeric => "numeric",
            Kind::Text => "text",
            Kind::Date => "date",
            Kind::Identifier => "identifier",
        }
    }

    pub fn from_name(name: &str) -> Option<Kind> {
        Kind::ALL.into_iter().find(|k| k.name() == name)
    }

    /// Categorical and ordinal variables: valid values are exactly their categories.
    pub fn is_coded(self) -> bool {
        matches!(self, Kind::Categorical | Kind::Ordinal)
    }
}

impl fmt::Display for Kind {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.name())
    }
}

/// Why a value is missing.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum MissingKind {
    /// Legitimate skip / not applicable: the question was not put to this case.
    Skipped,
    Refused,
    DontKnow,
    NotAscertained,
    Other,
}

impl MissingKind {
    pub const ALL: [MissingKind; 5] = [
        MissingKind::Skipped,
        MissingKind::Refused,
        MissingKind::DontKnow,
        MissingKind::NotAscertained,
        MissingKind::Other,
    ];

    pub fn name(self) -> &'static str {
        match self {
            MissingKind::Skipped => "skipped",
            MissingKind::Refused => "refused",
            MissingKind::DontKnow => "dont-know",
            MissingKind::NotAscertained => "not-ascertained",
            MissingKind::Other => "other",
        }
    }

    pub fn from_name(name: &str) -> Option<MissingKind> {
        MissingKind::ALL.into_iter().find(|k| k.name() == name)
    }
}

impl fmt::Display for MissingKind {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.name())
    }
}

/// A code as written in the codebook.
///
/// A code written as a number matches any cell that parses to that number ("01" is 1); a
/// code written as a string matches the trimmed cell exactly.
#[derive(Debug, Clone, PartialEq)]
pub enum Code {
    Number(f64),
    Text(String),
}

impl Code {
    /// Does the trimmed cell text (and its parsed number, when it parses) match this code?
    pub fn matches(&self, cell: &str, number: Option<f64>) -> bool {
        match self {
            Code::Number(n) => number == Some(*n),
            Code::Text(t) => t == cell,
        }
    }

    pub fn as_number(&self) -> Option<f64> {
        match self {
            Code::Number(n) => Some(*n),
            Code::Text(_) => None,
        }
    }
}

impl fmt::Display for Code {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            Code::Number(n) => write!(f, "{}", format_number(*n)),
            Code::Text(t) => write!(f, "{t:?}"),
        }
    }
}

/// Numbers as a person would write them: integers without a trailing ".0".
pub fn format_number(n: f64) -> String {
    if n.fract() == 0.0 && n.abs() < 1e15 {
        format!("{}", n as i64)
    } else {
        format!("{n}")
    }
}

#[derive(Debug, Clone, PartialEq)]
pub struct Category {
    pub code: Code,
    pub label: String,
    /// Documented (published) unweighted count of cases with this code.
    pub frequency: Option<u64>,
    pub place: Option<Place>,
}

#[derive(Debug, Clone, PartialEq)]
pub struct MissingCode {
    pub code: Code,
    pub label: String,
    pub kind: MissingKind,
    pub place: Option<Place>,
}

/// A bound of a range: a number, or for date variables a day number.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Bound {
    Number(f64),
    /// Days since 1970-01-01 (see [`crate::codebook::date`]).
    Date(i32),
}

impl Bound {
    pub fn value(self) -> f64 {
        match self {
            Bound::Number(n) => n,
            Bound::Date(d) => f64::from(d),
        }
    }
}

impl fmt::Display for Bound {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            Bound::Number(n) => f.write_str(&format_number(*n)),
            Bound::Date(d) => f.write_str(&crate::codebook::date::format_iso_date(*d)),
        }
    }
}

/// Inclusive bounds; either may be left out.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct Range {
    pub min: Option<Bound>,
    pub max: Option<Bound>,
    pub place: Option<Place>,
}

impl Range {
    pub fn contains(&self, value: f64) -> bool {
        self.min.is_none_or(|b| value >= b.value()) && self.max.is_none_or(|b| value <= b.value())
    }
}

/// A condition in the condition language, kept as text until it is compiled.
#[derive(Debug, Clone, PartialEq)]
pub struct ConditionText {
    pub text: String,
    /// Where the condition is written. When `exact`, the place covers the condition's own
    /// characters, so an offset inside the condition maps to the file directly; otherwise
    /// (a TOML string with escapes) it covers the whole string.
    pub place: Option<Place>,
    pub exact: bool,
}

impl ConditionText {
    /// The place in the source file of a span inside the condition text.
    pub fn place_of(&self, offset: usize, len: usize) -> Option<Place> {
        let p = self.place?;
        if self.exact {
            Some(Place {
                file: p.file,
                offset: p.offset + offset.min(p.len),
                len: len.min(p.len.saturating_sub(offset)).max(1),
            })
        } else {
            Some(p)
        }
    }
}

/// Fixed-width columns: 1-based, inclusive.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Columns {
    pub start: usize,
    pub end: usize,
    pub place: Option<Place>,
}

/// Figures the data producer published for a variable.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct Documented {
    pub valid: Option<u64>,
    pub mean: Option<f64>,
    pub sd: Option<f64>,
    pub min: Option<f64>,
    pub max: Option<f64>,
    pub place: Option<Place>,
}

#[derive(Debug, Clone, PartialEq)]
pub struct Variable {
    pub name: String,
    pub label: Option<String>,
    pub kind: Kind,
    /// In declared order: the level order of extracts and tables.
    pub categories: Vec<Category>,
    pub missing: Vec<MissingCode>,
    pub range: Option<Range>,
    pub decimals: Option<u32>,
    /// Who is asked; `None` means everyone.
    pub universe: Option<ConditionText>,
    /// The universe as prose, when the codebook describes it only in words (a DDI
    /// `universe` element). Documentation only: the checker never reads it.
    pub universe_text: Option<String>,
    /// Meaning of an empty cell; overrides `dataset.blank`.
    pub blank: Option<MissingKind>,
    pub columns: Option<Columns>,
    pub pattern: Option<String>,
    pub max_length: Option<u64>,
    pub documented: Option<Documented>,
    /// Where the variable's name is written.
    pub place: Option<Place>,
    /// Where the variable's whole entry is written.
    pub entry: Option<Place>,
}

impl Variable {
    pub fn new(name: impl Into<String>, kind: Kind) -> Self {
        Variable {
            name: name.into(),
            label: None,
            kind,
            categories: Vec::new(),
            missing: Vec::new(),
            range: None,
            decimals: None,
            universe: None,
            universe_text: None,
            blank: None,
            columns: None,
            pattern: None,
            max_length: None,
            documented: None,
            place: None,
            entry: None,
        }
    }

    /// The meaning of an empty cell for this variable, given the dataset default.
    pub fn blank_meaning(&self, dataset: &Dataset) -> Option<MissingKind> {
        self.blank.or(dataset.blank)
    }

    /// Are all of this variable's codes (categories and missing codes) numbers?
    pub fn has_numeric_codes(&self) -> bool {
        self.categories
            .iter()
            .all(|c| matches!(c.code, Code::Number(_)))
            && self
                .missing
                .iter()
                .all(|m| matches!(m.code, Code::Number(_)))
    }
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub enum Severity {
    Warning,
    Error,
}

impl Severity {
    pub fn name(self) -> &'static str {
        match self {
            Severity::Warning => "warning",
            Severity::Error => "error",
        }
    }
}

impl fmt::Display for Severity {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.name())
    }
}

/// A cross-variable consistency rule.
#[derive(Debug, Clone, PartialEq)]
pub struct Check {
    pub name: String,
    pub assert: ConditionText,
    pub when: Option<ConditionText>,
    pub severity: Severity,
    pub place: Option<Place>,
}
