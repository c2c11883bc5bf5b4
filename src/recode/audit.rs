//! The audit: a cross-tabulation of every source value by its derived value.
//!
//! A reviewer proving a recode right wants to see where each source category, each band of
//! a numeric source, each missing code and each blank went, and how many cases took each
//! path, including the paths no case took. [`Counter`] collects the counts in the data pass
//! (a short list of rows, found by comparison: a recode has few distinct paths); [`table`]
//! turns them into plain [`AuditTable`]s with labels, which renderers format.

use serde::Serialize;

use super::plan::{DerivePlan, Derived, Input};
use crate::codebook::model::{format_number, Code, MissingKind, Variable};

/// The class of a source value, as the audit groups it.
#[derive(Debug, Clone, PartialEq)]
pub enum Source {
    /// A code of a coded source (or a map key's value).
    Code(Code),
    /// A value of a numeric source in band `i`; the value is kept for the band's min and max.
    Band(u32, f64),
    /// A valid value no band or map entry takes.
    NoBand(f64),
    MissingCode(Code, MissingKind),
    Blank(MissingKind),
    Invalid,
    WhenNotTrue,
    /// `expr` with all inputs present: the result.
    Computed(f64),
    /// `expr` with a missing input of this kind.
    InputMissing(MissingKind),
    /// `expr` with all inputs present but no finite result (division by zero).
    NotFinite,
}

impl Source {
    fn same_row(&self, other: &Source) -> bool {
        match (self, other) {
            (Source::Band(a, _), Source::Band(b, _)) => a == b,
            (Source::NoBand(_), Source::NoBand(_)) => true,
            (Source::Computed(_), Source::Computed(_)) => true,
            _ => self == other,
        }
    }

    fn value(&self) -> Option<f64> {
        match self {
            Source::Band(_, v) | Source::NoBand(v) | Source::Computed(v) => {
                v.is_finite().then_some(*v)
            }
            Source::Code(c) => c.as_number(),
            _ => None,
        }
    }
}

/// Where a value went; every computed number is one row.
#[derive(Debug, Clone, PartialEq)]
enum Destination {
    Code(Code),
    Value,
    Missing(MissingKind, Option<Code>),
}

impl From<&Derived> for Destination {
    fn from(d: &Derived) -> Self {
        match d {
            Derived::Number(_) => Destination::Value,
            Derived::Code(c) => Destination::Code(c.clone()),
            Derived::Missing(k, c) => Destination::Missing(*k, c.clone()),
        }
    }
}

#[derive(Debug, Clone)]
struct Entry {
    source: Source,
    destination: Destination,
    count: u64,
    min: Option<f64>,
    max: Option<f64>,
}

/// Counts of one derived variable's paths.
#[derive(Debug, Clone, Default)]
pub struct Counter {
    entries: Vec<Entry>,
    /// Cases left out of the quantile computation (missing or non-positive weight).
    pub weight_excluded: u64,
}

impl Counter {
    /// A counter listing every statically known path with a count of zero, so the audit
    /// shows paths no case took: each source category or band, each missing code, the blank.
    pub fn with_static_rows(plan: &DerivePlan, source: Option<&Variable>) -> Counter {
        let mut counter = Counter::default();
        let Some(source) = source else {
            return counter;
        };
        match &plan.rule {
            super::plan::Rule::Bands(bands) if !source.kind.is_coded() => {
                for (i, (_, code)) in bands.iter().enumerate() {
                    counter.row(
                        Source::Band(i as u32, f64::NAN),
                        Destination::Code(code.clone()),
                    );
                }
            }
            _ => {
                for c in &source.categories {
                    let input = match &c.code {
                        Code::Number(n) => Input::Number(*n),
                        Code::Text(t) => Input::Text(t),
                    };
                    let (s, d) = plan.derive(&input);
                    let s = match s {
                        Source::Band(..) | Source::NoBand(_) => Source::Code(c.code.clone()),
                        other => other,
                    };
                    counter.row(s, Destination::from(&d));
                }
            }
        }
        for m in &source.missing {
            let (s, d) = plan.derive(&Input::Missing(m.kind, Some(m.code.clone())));
            counter.row(s, Destination::from(&d));
        }
        if let Some(kind) = source.blank {
            let (s, d) = plan.derive(&Input::Missing(kind, None));
            counter.row(s, Destination::from(&d));
        }
        counter
    }

    fn row(&mut self, source: Source, destination: Destination) -> &mut Entry {
        let i = match self
            .entries
            .iter()
            .position(|e| e.source.same_row(&source) && e.destination == destination)
        {
            Some(i) => i,
            None => {
                self.entries.push(Entry {
                    source,
                    destination,
                    count: 0,
                    min: None,
                    max: None,
                });
                self.entries.len() - 1
            }
        };
        &mut self.entries[i]
    }

    pub fn add(&mut self, source: Source, derived: &Derived) {
        let value = source.value();
        let entry = self.row(source, Destination::from(derived));
        entry.count += 1;
        if let Some(v) = value {
            entry.min = Some(entry.min.map_or(v, |m| m.min(v)));
            entry.max = Some(entry.max.map_or(v, |m| m.max(v)));
        }
    }

    /// Cases whose source cell had a value finding.
    pub fn invalid(&self) -> u64 {
        self.entries
            .iter()
            .filter(|e| e.source == Source::Invalid)
            .map(|e| e.count)
            .sum()
    }

    /// Cases that reached each output category, in the output's category order.
    pub fn category_counts(&self, output: &Variable) -> Vec<u64> {
        output
            .categories
            .iter()
            .map(|c| {
                self.entries
                    .iter()
                    .filter(|e| e.destination == Destination::Code(c.code.clone()))
                    .map(|e| e.count)
                    .sum()
            })
            .collect()
    }
}

/// One row of the audit: a source class, its destination and the cases that took the path.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct AuditRow {
    /// `category`, `band`, `no-band`, `missing-code`, `blank`, `invalid`, `when-not-true`,
    /// `computed`, `input-missing` or `not-finite`.
    pub source_class: &'static str,
    /// The source code or band, as written (`3`, `(10, 50]`); absent for classes without one.
    pub source: Option<String>,
    pub source_label: Option<String>,
    /// The output code (absent for an empty cell or a computed number).
    pub derived: Option<String>,
    pub derived_label: Option<String>,
    /// `valid`, or the missing kind.
    pub derived_kind: String,
    pub count: u64,
    /// Smallest and largest source value on the path (numeric sources).
    pub min: Option<f64>,
    pub max: Option<f64>,
}

/// The audit of one derived variable.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct AuditTable {
    pub name: String,
    pub from: Option<String>,
    pub method: &'static str,
    /// Computed quantile cut points.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub cut_points: Option<Vec<f64>>,
    /// Quantile type (1, 6 or 7) and whether weighted, for quantile bands.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub quantile_type: Option<u8>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub weight: Option<String>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub weight_excluded: Option<u64>,
    pub rows: Vec<AuditRow>,
}

fn code_text(c: &Code) -> String {
    match c {
        Code::Number(n) => format_number(*n),
        Code::Text(t) => t.clone(),
    }
}

fn label_of(v: &Variable, c: &Code) -> Option<String> {
    v.categories
        .iter()
        .find(|x| &x.code == c)
        .map(|x| x.label.clone())
        .or_else(|| {
            v.missing
                .iter()
                .find(|m| &m.code == c)
                .map(|m| m.label.clone())
        })
}

/// The finished audit table of one derived variable.
pub fn table(
    plan: &DerivePlan,
    counter: &Counter,
    source: Option<&Variable>,
    method: &'static str,
    weight: Option<&str>,
) -> AuditTable {
    let bands = match &plan.rule {
        super::plan::Rule::Bands(b) => b.clone(),
        _ => Vec::new(),
    };
    let rows = counter
        .entries
        .iter()
        .map(|e| {
            let (class, code, label) = match &e.source {
                Source::Code(c) => (
                    "category",
                    Some(code_text(c)),
                    source.and_then(|s| label_of(s, c)),
                ),
                Source::Band(i, _) => (
                    "band",
                    bands.get(*i as usize).map(|(b, _)| b.to_string()),
                    None,
                ),
                Source::NoBand(_) => ("no-band", None, None),
                Source::MissingCode(c, _) => (
                    "missing-code",
                    Some(code_text(c)),
                    source.and_then(|s| label_of(s, c)),
                ),
                Source::Blank(k) => ("blank", None, Some(format!("empty cell ({k})"))),
                Source::Invalid => ("invalid", None, None),
                Source::WhenNotTrue => ("when-not-true", None, None),
                Source::Computed(_) => ("computed", None, None),
                Source::InputMissing(k) => ("input-missing", None, Some(k.name().to_string())),
                Source::NotFinite => ("not-finite", None, None),
            };
            let (derived, derived_label, kind) = match &e.destination {
                Destination::Code(c) => (
                    Some(code_text(c)),
                    label_of(&plan.output, c),
                    "valid".to_string(),
                ),
                Destination::Value => (None, None, "valid".to_string()),
                Destination::Missing(k, c) => (
                    c.as_ref().map(code_text),
                    c.as_ref().and_then(|c| label_of(&plan.output, c)),
                    k.name().to_string(),
                ),
            };
            AuditRow {
                source_class: class,
                source: code,
                source_label: label,
                derived,
                derived_label,
                derived_kind: kind,
                count: e.count,
                min: e.min,
                max: e.max,
            }
        })
        .collect();
    AuditTable {
        name: plan.name.clone(),
        from: source.map(|s| s.name.clone()),
        method,
        cut_points: plan.quantiles.as_ref().map(|q| q.cuts.clone()),
        quantile_type: plan.quantiles.as_ref().map(|q| q.kind.number()),
        weight: plan
            .quantiles
            .as_ref()
            .and_then(|_| weight.map(str::to_string)),
        weight_excluded: plan
            .quantiles
            .as_ref()
            .and_then(|q| q.weight.map(|_| counter.weight_excluded)),
        rows,
    }
}
