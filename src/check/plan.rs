//! The compiled plan: the codebook turned into per-column instructions before the row loop.
//!
//! Everything that can be decided once is decided here: which record field holds which
//! variable, how its cells parse, a dense table for small integer codes, compiled
//! regular expressions, universes and checks compiled to variable indices. The row loop
//! then does no lookups by name and no allocation.

use regex::Regex;

use super::cell::Parsed;
use super::class::Quick;
use super::route::Routes;

use crate::codebook::conditions;
use crate::codebook::model::{Code, Codebook, Kind, Layout, MissingKind, Range, Severity};
use crate::condition::Compiled;
use crate::diagnostic::Diagnostic;

/// What a code stands for.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum CodeMeaning {
    /// Index into the variable's categories.
    Category(u32),
    Missing(MissingKind),
}

/// Codes of one variable: a dense table for small non-negative integers, a list for the rest.
#[derive(Debug, Default, Clone)]
pub struct CodeTable {
    dense: Vec<Option<CodeMeaning>>,
    other_numbers: Vec<(f64, CodeMeaning)>,
    texts: Vec<(String, CodeMeaning)>,
    /// Some code names a category (not only missing codes).
    categories: bool,
}

/// Integer codes up to this size go into the dense table.
const DENSE_LIMIT: f64 = 4096.0;

impl CodeTable {
    fn add(&mut self, code: &Code, meaning: CodeMeaning) {
        self.categories |= matches!(meaning, CodeMeaning::Category(_));
        match code {
            Code::Number(n) if n.fract() == 0.0 && *n >= 0.0 && *n < DENSE_LIMIT => {
                let i = *n as usize;
                if self.dense.len() <= i {
                    self.dense.resize(i + 1, None);
                }
                self.dense[i].get_or_insert(meaning);
            }
            Code::Number(n) => self.other_numbers.push((*n, meaning)),
            Code::Text(t) => self.texts.push((t.clone(), meaning)),
        }
    }

    pub fn has_numbers(&self) -> bool {
        !self.dense.is_empty() || !self.other_numbers.is_empty()
    }

    /// Length of the dense table: integer codes below it are looked up by index.
    pub fn dense_len(&self) -> usize {
        self.dense.len()
    }

    /// Codes that are numbers outside the dense table (negative, fractional, large).
    pub fn other_numbers(&self) -> &[(f64, CodeMeaning)] {
        &self.other_numbers
    }

    pub fn has_texts(&self) -> bool {
        !self.texts.is_empty()
    }

    pub fn has_categories(&self) -> bool {
        self.categories
    }

    /// [`CodeTable::lookup`] for a cell already parsed: a whole number indexes the dense
    /// table directly.
    #[inline]
    pub fn lookup_parsed(&self, cell: &str, parsed: Option<Parsed>) -> Option<CodeMeaning> {
        match parsed {
            // The same branch `lookup` takes for this value (a whole number below the
            // table's length), without the float round trip.
            Some(Parsed { whole: Some(i), .. }) if i < self.dense.len() => {
                self.dense[i].or_else(|| self.lookup_text(cell))
            }
            Some(p) => self.lookup(cell, Some(p.value)),
            None => self.lookup(cell, None),
        }
    }

    #[inline]
    fn lookup_text(&self, cell: &str) -> Option<CodeMeaning> {
        self.texts.iter().find(|(t, _)| t == cell).map(|(_, m)| *m)
    }

    /// The meaning of a trimmed cell, given its number when it parses as one.
    #[inline]
    pub fn lookup(&self, cell: &str, number: Option<f64>) -> Option<CodeMeaning> {
        if let Some(n) = number {
            // `n as usize` truncates (and saturates), so an integer is one that survives the
            // round trip; cheaper than `fract`, which is a libm call on baseline x86-64.
            let i = n as usize;
            if n >= 0.0 && i as f64 == n && i < self.dense.len() {
                if let Some(m) = self.dense[i] {
                    return Some(m);
                }
            } else if let Some((_, m)) = self.other_numbers.iter().find(|(c, _)| *c == n) {
                return Some(*m);
            }
        }
        self.lookup_text(cell)
    }
}

/// How cells of one variable are read.
#[derive(Debug, Clone)]
pub enum Parse {
    /// Categorical or ordinal: valid values are exactly the categories.
    Coded,
    Numeric {
        range: Option<Range>,
        decimals: Option<u32>,
    },
    Date {
        range: Option<Range>,
    },
    Text {
        pattern: Option<Regex>,
        max_length: Option<u64>,
    },
}

#[derive(Debug, Clone)]
pub struct ColumnPlan {
    /// Index of the variable in the codebook.
    pub var: usize,
    /// Index of the record field holding it; `None` when the column is absent.
    pub field: Option<usize>,
    pub parse: Parse,
    pub codes: CodeTable,
    /// Values of a coded variable are numbers (else text); used for conditions.
    pub numeric_codes: bool,
    pub blank: Option<MissingKind>,
    pub universe: Option<Compiled>,
    /// Identifiers must not be blank.
    pub identifier: bool,
    /// Part of `dataset.id`.
    pub key: bool,
    /// Keep running statistics: only variables with documented mean, sd, min or max need
    /// them, and skipping the update elsewhere saves a division per cell.
    pub statistics: bool,
    /// Classes of short whole numbers, filled once the rest of the plan is known.
    pub quick: Quick,
    /// Routing outcomes by universe value and cell tag, filled with `quick`.
    pub routes: Routes,
}

#[derive(Debug, Clone)]
pub struct CheckPlan {
    pub name: String,
    pub assert: Compiled,
    pub when: Option<Compiled>,
    pub severity: Severity,
}

/// Column-level facts found while matching the header to the codebook.
#[derive(Debug, Default, Clone)]
pub struct Structure {
    /// Codebook variables with no column.
    pub missing_columns: Vec<usize>,
    /// File columns not in the codebook: (field index, name).
    pub unexpected_columns: Vec<(usize, String)>,
    /// Header names given more than once: (field index of the repeat, name).
    pub duplicate_columns: Vec<(usize, String)>,
}

#[derive(Debug, Clone)]
pub struct Plan {
    /// One per codebook variable, in codebook order.
    pub columns: Vec<ColumnPlan>,
    pub checks: Vec<CheckPlan>,
    /// Variable indices of the key, in `dataset.id` order.
    pub key: Vec<usize>,
    /// Fields each delimited row must have; `None` for fixed-width (records are checked by length).
    pub expected_fields: Option<usize>,
    pub structure: Structure,
}

/// Compile a codebook for a file with the given header (`None` when the file has none, in
/// which case fields are in codebook order, or are sliced by fixed columns).
///
/// Fails with the lint diagnostics when a condition does not compile; callers should have
/// refused a codebook with lint errors already.
pub fn compile(codebook: &Codebook, header: Option<&[String]>) -> Result<Plan, Vec<Diagnostic>> {
    let mut structure = Structure::default();
    let fields: Vec<Option<usize>> = match (codebook.file.layout, header) {
        (Layout::Fixed, _) => (0..codebook.variables.len()).map(Some).collect(),
        (Layout::Delimited, None) => (0..codebook.variables.len()).map(Some).collect(),
        (Layout::Delimited, Some(names)) => {
            let mut first_at = std::collections::HashMap::new();
            for (i, name) in names.iter().enumerate() {
                if first_at.contains_key(name.as_str()) {
                    structure.duplicate_columns.push((i, name.clone()));
                } else {
                    first_at.insert(name.as_str(), i);
                    if codebook.variable(name).is_none() {
                        structure.unexpected_columns.push((i, name.clone()));
                    }
                }
            }
            codebook
                .variables
                .iter()
                .map(|v| first_at.get(v.name.as_str()).copied())
                .collect()
        }
    };
    let mut errors = Vec::new();
    let mut columns = Vec::with_capacity(codebook.variables.len());
    for (i, v) in codebook.variables.iter().enumerate() {
        if fields[i].is_none() {
            structure.missing_columns.push(i);
        }
        let mut codes = CodeTable::default();
        for (c, cat) in v.categories.iter().enumerate() {
            codes.add(&cat.code, CodeMeaning::Category(c as u32));
        }
        for m in &v.missing {
            codes.add(&m.code, CodeMeaning::Missing(m.kind));
        }
        let parse = match v.kind {
            Kind::Categorical | Kind::Ordinal => Parse::Coded,
            Kind::Numeric => Parse::Numeric {
                range: v.range,
                decimals: v.decimals,
            },
            Kind::Date => Parse::Date { range: v.range },
            Kind::Text | Kind::Identifier => Parse::Text {
                pattern: v
                    .pattern
                    .as_deref()
                    .and_then(|p| Regex::new(&format!("^(?:{p})$")).ok()),
                max_length: v.max_length,
            },
        };
        let universe = match &v.universe {
            Some(u) => match conditions::compile(codebook, u, &format!("universe of `{}`", v.name))
            {
                Ok(c) => Some(c),
                Err(ds) => {
                    errors.extend(ds);
                    None
                }
            },
            None => None,
        };
        columns.push(ColumnPlan {
            var: i,
            field: fields[i],
            parse,
            codes,
            numeric_codes: v.has_numeric_codes(),
            blank: v.blank_meaning(&codebook.dataset),
            universe,
            identifier: v.kind == Kind::Identifier,
            key: codebook.dataset.id.iter().any(|n| n.name == v.name),
            statistics: v.documented.is_some_and(|d| {
                d.mean.is_some() || d.sd.is_some() || d.min.is_some() || d.max.is_some()
            }),
            quick: Quick::default(),
            routes: Routes::empty(),
        });
        let col = columns.last_mut().expect("just pushed");
        col.quick = Quick::build(col);
        col.routes = Routes::build(col);
    }
    let mut checks = Vec::new();
    for c in &codebook.checks {
        let what = format!("check `{}`", c.name);
        let assert = conditions::compile(codebook, &c.assert, &format!("assert of {what}"));
        let when = c
            .when
            .as_ref()
            .map(|w| conditions::compile(codebook, w, &format!("when of {what}")))
            .transpose();
        match (assert, when) {
            (Ok(assert), Ok(when)) => checks.push(CheckPlan {
                name: c.name.clone(),
                assert,
                when,
                severity: c.severity,
            }),
            (a, w) => {
                errors.extend(a.err().unwrap_or_default());
                errors.extend(w.err().unwrap_or_default());
            }
        }
    }
    if !errors.is_empty() {
        return Err(errors);
    }
    let key = codebook
        .dataset
        .id
        .iter()
        .filter_map(|n| codebook.variable_index(&n.name))
        .collect();
    let expected_fields = match codebook.file.layout {
        Layout::Fixed => None,
        Layout::Delimited => Some(header.map_or(codebook.variables.len(), <[String]>::len)),
    };
    Ok(Plan {
        columns,
        checks,
        key,
        expected_fields,
        structure,
    })
}
