//! The condition language of codebooks and recodes.
//!
//! A variable's `universe` (who is asked), a check's `assert` and `when`, and a recode's
//! `expr` are all short expressions over the case's variables:
//!
//! ```text
//! bike_days >= 1 and commute_mode in [1, 2]
//! not missing(age) and (income / household_size) > 500
//! region != "north" and interview_date >= "2024-01-01"
//! ```
//!
//! The text goes through three stages, each in its own file:
//! [`parse`] (lexer + parser) builds an [`Expr`] whose every node carries a byte [`Span`];
//! [`compile`] resolves names to variable indices through a [`Resolve`] and type checks,
//! reporting every error at once; [`Compiled::eval`] then runs once per data row without
//! allocating.
//!
//! # Semantics
//!
//! Logic is three-valued (Kleene's strong logic): any comparison or `in` that reads a
//! missing value is [`Tri::Unknown`], and `and`, `or`, `not` propagate unknowns the way
//! Kleene defines them. Arithmetic on a missing value, division by zero and non-finite
//! results are missing. `answered(x)` and `missing(x)` test for a missing value and are never
//! unknown.
//!
//! Types: numbers compare with numbers; text compares with text using `==`, `!=`, `in` and
//! `not in` only (ordering text is an error); a date variable compares with another date or
//! with a quoted ISO date literal (`"2024-01-31"`, checked at compile time). Arithmetic is
//! for numbers only. Names and keywords (`and`, `or`, `not`, `in`) are case-sensitive.
//!
//! `x not in [..]` is accepted and means `not (x in [..])`.
//!
//! # Example
//!
//! ```
//! use concord::condition::{compile_condition_str, Tri, Value, VarType};
//!
//! let names: &[(&str, VarType)] = &[("bike_days", VarType::Number), ("bike_km", VarType::Number)];
//! let check = compile_condition_str("bike_km <= 100 * bike_days", &names).unwrap();
//! assert_eq!(check.variables(), &[0, 1]);
//! assert_eq!(check.eval(&[Value::Number(2.0), Value::Number(150.0)]), Tri::True);
//! assert_eq!(check.eval(&[Value::Missing, Value::Number(150.0)]), Tri::Unknown);
//!
//! let errors = compile_condition_str("bike_kms > 0", &names).unwrap_err();
//! assert_eq!(errors[0].help.as_deref(), Some("did you mean `bike_km`?"));
//! ```

mod ast;
mod compile;
mod eval;
mod lexer;
mod parser;

use std::fmt;

pub use ast::{
    ArithmeticOp, CompareOp, Expr, ExprKind, Function, ListItem, Literal, LogicalOp, Name,
};
pub use compile::{compile, compile_condition};
pub use eval::Compiled;
pub use parser::parse;

/// A byte range in the condition text.
///
/// Offsets count bytes from the start of the condition string, not of the file it came
/// from; the caller adds the string's position in its file.
#[derive(Clone, Copy, PartialEq, Eq, Debug, Default)]
pub struct Span {
    pub offset: usize,
    pub len: usize,
}

impl Span {
    pub fn new(offset: usize, len: usize) -> Span {
        Span { offset, len }
    }

    /// The byte just past the span.
    pub fn end(self) -> usize {
        self.offset + self.len
    }

    /// The smallest span covering both.
    pub fn to(self, other: Span) -> Span {
        let start = self.offset.min(other.offset);
        let end = self.end().max(other.end());
        Span::new(start, end - start)
    }
}

impl From<Span> for miette::SourceSpan {
    fn from(span: Span) -> Self {
        (span.offset, span.len).into()
    }
}

/// The text could not be read as a condition.
#[derive(Clone, PartialEq, Eq, Debug)]
pub struct ParseError {
    pub message: String,
    pub span: Span,
    pub help: Option<String>,
}

impl fmt::Display for ParseError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&self.message)
    }
}

impl std::error::Error for ParseError {}

/// The condition parsed but does not make sense against the codebook: an unknown name or a
/// type error.
#[derive(Clone, PartialEq, Eq, Debug)]
pub struct CompileError {
    pub message: String,
    pub span: Span,
    pub help: Option<String>,
}

impl fmt::Display for CompileError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&self.message)
    }
}

impl std::error::Error for CompileError {}

impl From<ParseError> for CompileError {
    fn from(error: ParseError) -> Self {
        CompileError {
            message: error.message,
            span: error.span,
            help: error.help,
        }
    }
}

/// What kind of value a variable holds, as far as conditions care.
#[derive(Clone, Copy, PartialEq, Eq, Debug)]
pub enum VarType {
    /// Codes and quantities; the row passes [`Value::Number`].
    Number,
    /// Free text and string codes; the row passes [`Value::Text`].
    Text,
    /// Calendar dates; the row passes [`Value::Number`] holding the day number of
    /// [`crate::codebook::date::parse_iso_date`].
    Date,
}

/// Maps the names in a condition to the caller's variable indices.
pub trait Resolve {
    /// The index and type of a variable, or `None` when no variable has this name.
    fn resolve(&self, name: &str) -> Option<(usize, VarType)>;
    /// Every known name, for "did you mean" suggestions.
    fn names(&self) -> Vec<String>;
}

/// A list of names and types resolves each name to its position in the list.
impl Resolve for &[(&str, VarType)] {
    fn resolve(&self, name: &str) -> Option<(usize, VarType)> {
        self.iter()
            .position(|(candidate, _)| *candidate == name)
            .map(|index| (index, self[index].1))
    }

    fn names(&self) -> Vec<String> {
        self.iter().map(|(name, _)| (*name).to_owned()).collect()
    }
}

/// One cell as a condition sees it.
#[derive(Clone, Copy, PartialEq, Debug)]
pub enum Value<'a> {
    /// Blank, a missing-value code, or a cell with a value finding.
    Missing,
    /// A number, or a date as its day number.
    Number(f64),
    Text(&'a str),
}

/// The values of one case, by variable index.
///
/// A value of the wrong kind for its variable (text for a number variable, say) is read
/// as missing.
pub trait Row {
    fn value(&self, var: usize) -> Value<'_>;
}

/// A slice of values is a row indexed by position; indices past its end are missing.
impl Row for &[Value<'_>] {
    fn value(&self, var: usize) -> Value<'_> {
        self.get(var).copied().unwrap_or(Value::Missing)
    }
}

impl<const N: usize> Row for [Value<'_>; N] {
    fn value(&self, var: usize) -> Value<'_> {
        self.get(var).copied().unwrap_or(Value::Missing)
    }
}

impl Row for Vec<Value<'_>> {
    fn value(&self, var: usize) -> Value<'_> {
        self.get(var).copied().unwrap_or(Value::Missing)
    }
}

/// A truth value of three-valued logic.
///
/// `and`, `or` and `!` follow Kleene's strong three-valued logic: `Unknown` means "true or
/// false, we cannot tell", so `False and Unknown` is `False` and `True or Unknown` is `True`.
#[derive(Clone, Copy, PartialEq, Eq, Debug)]
pub enum Tri {
    True,
    False,
    Unknown,
}

impl Tri {
    #[must_use]
    pub fn and(self, other: Tri) -> Tri {
        match (self, other) {
            (Tri::False, _) | (_, Tri::False) => Tri::False,
            (Tri::True, Tri::True) => Tri::True,
            _ => Tri::Unknown,
        }
    }

    #[must_use]
    pub fn or(self, other: Tri) -> Tri {
        match (self, other) {
            (Tri::True, _) | (_, Tri::True) => Tri::True,
            (Tri::False, Tri::False) => Tri::False,
            _ => Tri::Unknown,
        }
    }

    pub fn is_true(self) -> bool {
        self == Tri::True
    }

    pub fn is_false(self) -> bool {
        self == Tri::False
    }

    pub fn is_unknown(self) -> bool {
        self == Tri::Unknown
    }
}

impl From<bool> for Tri {
    fn from(value: bool) -> Self {
        if value {
            Tri::True
        } else {
            Tri::False
        }
    }
}

impl std::ops::Not for Tri {
    type Output = Tri;

    fn not(self) -> Tri {
        match self {
            Tri::True => Tri::False,
            Tri::False => Tri::True,
            Tri::Unknown => Tri::Unknown,
        }
    }
}

/// Parse and compile in one step; a parse error becomes the single compile error.
pub fn compile_str(text: &str, resolver: &dyn Resolve) -> Result<Compiled, Vec<CompileError>> {
    let expr = parse(text).map_err(|error| vec![CompileError::from(error)])?;
    compile(&expr, resolver)
}

/// Like [`compile_str`], but the text must be a condition (a truth value), as a universe or
/// a check requires.
pub fn compile_condition_str(
    text: &str,
    resolver: &dyn Resolve,
) -> Result<Compiled, Vec<CompileError>> {
    let expr = parse(text).map_err(|error| vec![CompileError::from(error)])?;
    compile_condition(&expr, resolver)
}
