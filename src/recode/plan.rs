//! The compiled recodes: what each derived variable does with each kind of source value.
//!
//! Validation builds the [`Plan`] once; the data pass and the audit's static rows both call
//! [`DerivePlan::derive`], so "where does source value x go" has one answer. The rules of
//! DESIGN section 7 live here:
//!
//! - a valid source value goes to its band (the first matching, in file order) or map entry;
//!   one no band takes (a gap the user chose to run through) is missing of kind `other`;
//! - a source missing code carries over (same code, kind, label) unless a `missing` entry maps
//!   it; a blank source cell keeps its blank meaning; missing codes are never banded;
//! - a source cell with a value finding is missing of kind `other`;
//! - a case where `when` is not true is `skipped`;
//! - an `expr` whose inputs are all present but whose result is not a finite number (division
//!   by zero) is `other`; with a missing input it takes the input's missing value (`skipped`
//!   first, else the first missing input in codebook order).

use super::audit::Source;
use super::intervals::Interval;
use super::quantile::QuantileType;
use super::spec::Closed;
use crate::codebook::model::{Code, MissingKind, Variable};
use crate::condition::Compiled;

/// Where a derived variable reads its `from`.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum SourceRef {
    /// Index into the codebook's variables.
    Codebook(usize),
    /// Index into the plan's derives.
    Derived(usize),
}

#[derive(Debug, Clone)]
pub enum Rule {
    /// Bands in file order with their output codes; the first that contains a value wins.
    Bands(Vec<(Interval, Code)>),
    /// Source code -> output code.
    Map(Vec<(Code, Code)>),
    Expr(Compiled),
}

/// Quantile bands: cut from the data in a first pass.
#[derive(Debug, Clone)]
pub struct QuantilePlan {
    pub bands: usize,
    pub kind: QuantileType,
    /// Codebook index of the weight, when the quantiles are weighted.
    pub weight: Option<usize>,
    pub closed: Closed,
    /// Filled after the first pass.
    pub cuts: Vec<f64>,
}

/// A value as a derive sees it: a source cell, or an earlier derived value.
#[derive(Debug, Clone, PartialEq)]
pub enum Input<'a> {
    Number(f64),
    Text(&'a str),
    /// A missing value: its kind and, when it is written as a code, the code.
    Missing(MissingKind, Option<Code>),
    /// A cell with a value finding.
    Invalid,
}

/// A derived value.
#[derive(Debug, Clone, PartialEq)]
pub enum Derived {
    /// A number computed by `expr`.
    Number(f64),
    /// An output code of a band or map entry.
    Code(Code),
    /// Missing; `None` writes an empty cell.
    Missing(MissingKind, Option<Code>),
}

#[derive(Debug, Clone)]
pub struct DerivePlan {
    pub name: String,
    pub source: Option<SourceRef>,
    pub rule: Rule,
    pub quantiles: Option<QuantilePlan>,
    pub when: Option<Compiled>,
    /// Source missing code -> (output code, kind); codes not listed carry over.
    pub missing_from: Vec<(Code, Option<Code>, MissingKind)>,
    /// Output code of each missing kind the recode produces without a source code, by
    /// `MissingKind as usize`; `None` writes an empty cell.
    pub kind_codes: [Option<Code>; 5],
    /// The derived variable as the output codebook describes it.
    pub output: Variable,
    /// The source is categorical or ordinal: the audit shows its codes, not bands.
    pub coded_source: bool,
    /// The recode method's name, for the audit.
    pub method: &'static str,
}

impl DerivePlan {
    /// The missing value a source missing value becomes.
    pub fn carry(&self, kind: MissingKind, code: Option<&Code>) -> Derived {
        match code {
            Some(c) => match self.missing_from.iter().find(|(from, _, _)| from == c) {
                Some((_, to, k)) => Derived::Missing(*k, to.clone()),
                None => Derived::Missing(kind, Some(c.clone())),
            },
            None => self.produced(kind),
        }
    }

    /// A missing value the recode produces itself.
    pub fn produced(&self, kind: MissingKind) -> Derived {
        Derived::Missing(kind, self.kind_codes[kind as usize].clone())
    }

    /// Derive the value for one case of a `from` recode, given the source input; returns
    /// the audit class of the source value too. (`when` is applied by the caller.)
    pub fn derive(&self, input: &Input) -> (Source, Derived) {
        let number = match input {
            Input::Invalid => return (Source::Invalid, self.produced(MissingKind::Other)),
            Input::Missing(kind, code) => {
                let source = match code {
                    Some(c) => Source::MissingCode(c.clone(), *kind),
                    None => Source::Blank(*kind),
                };
                return (source, self.carry(*kind, code.as_ref()));
            }
            Input::Number(n) => Some(*n),
            Input::Text(_) => None,
        };
        let text = match input {
            Input::Text(t) => t,
            _ => "",
        };
        let as_code = || match number {
            Some(n) => Code::Number(n),
            None => Code::Text(text.to_string()),
        };
        let found = match &self.rule {
            Rule::Bands(bands) => {
                let n = number.unwrap_or(f64::NAN);
                bands
                    .iter()
                    .position(|(b, _)| b.contains(n))
                    .map(|i| (i, bands[i].1.clone()))
            }
            Rule::Map(entries) => entries
                .iter()
                .position(|(from, _)| from.matches(text, number))
                .map(|i| (i, entries[i].1.clone())),
            Rule::Expr(_) => {
                return (
                    Source::Computed(f64::NAN),
                    self.produced(MissingKind::Other),
                )
            }
        };
        let banded = matches!(self.rule, Rule::Bands(_)) && !self.coded_source;
        let value = number.unwrap_or(f64::NAN);
        match found {
            Some((i, code)) if banded => (Source::Band(i as u32, value), Derived::Code(code)),
            Some((_, code)) => (Source::Code(as_code()), Derived::Code(code)),
            None if self.coded_source => {
                (Source::Code(as_code()), self.produced(MissingKind::Other))
            }
            None => (Source::NoBand(value), self.produced(MissingKind::Other)),
        }
    }
}

/// The whole recode file, compiled.
#[derive(Debug, Clone)]
pub struct Plan {
    pub derives: Vec<DerivePlan>,
    /// Number of codebook variables: names of conditions index `0..variables` for them and
    /// `variables + i` for derive `i`.
    pub variables: usize,
}

impl Plan {
    pub fn needs_first_pass(&self) -> bool {
        self.derives.iter().any(|d| d.quantiles.is_some())
    }
}
