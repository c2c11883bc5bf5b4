//! Classifying one cell: a valid value, a missing value of some kind, a blank, or a value
//! finding.
//!
//! This is the value half of DESIGN section 5; routing (whether the cell should have been
//! answered at all) is decided afterwards in the row loop, because it needs the values of
//! other cells. Nothing here allocates.

use super::plan::{CodeMeaning, ColumnPlan, Parse};
use crate::codebook::date::parse_iso_date;
use crate::codebook::model::MissingKind;

/// The value rules, in the order they are tried.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ValueRule {
    NotANumber,
    BadDate,
    UnlabelledCode,
    OutOfRange,
    TooManyDecimals,
    PatternMismatch,
    TooLong,
}

impl ValueRule {
    pub fn id(self) -> &'static str {
        match self {
            ValueRule::NotANumber => "value.not-a-number",
            ValueRule::BadDate => "value.bad-date",
            ValueRule::UnlabelledCode => "value.unlabelled-code",
            ValueRule::OutOfRange => "value.out-of-range",
            ValueRule::TooManyDecimals => "value.too-many-decimals",
            ValueRule::PatternMismatch => "value.pattern-mismatch",
            ValueRule::TooLong => "value.too-long",
        }
    }
}

/// What a condition sees of a valid cell.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Seen {
    Number(f64),
    /// The trimmed text of the cell, read from the record when needed.
    Text,
}

#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Cell {
    Valid(Seen),
    Missing(MissingKind),
    /// An empty cell; its meaning depends on the variable's blank meaning and routing.
    Blank,
    Invalid(ValueRule),
}

/// A plain decimal number: optional sign, digits, optional fraction. Returns the value and
/// the number of significant decimal places (trailing zeros do not count).
#[inline]
pub fn parse_decimal(text: &str) -> Option<(f64, u32)> {
    let b = text.as_bytes();
    let mut i = usize::from(matches!(b.first(), Some(b'+' | b'-')));
    let digits_start = i;
    while i < b.len() && b[i].is_ascii_digit() {
        i += 1;
    }
    let mut int_digits = i - digits_start;
    let mut decimals = 0u32;
    if i < b.len() && b[i] == b'.' {
        i += 1;
        let frac_start = i;
        while i < b.len() && b[i].is_ascii_digit() {
            i += 1;
        }
        let frac = &b[frac_start..i];
        decimals = frac
            .iter()
            .rposition(|&c| c != b'0')
            .map_or(0, |p| p as u32 + 1);
        int_digits += frac.len();
    }
    if i != b.len() || int_digits == 0 {
        return None;
    }
    text.parse::<f64>().ok().map(|n| (n, decimals))
}

/// Classify a trimmed cell of the variable planned in `plan`.
#[inline]
pub fn classify(plan: &ColumnPlan, cell: &str) -> Cell {
    if cell.is_empty() {
        return Cell::Blank;
    }
    match &plan.parse {
        Parse::Coded => {
            let number = if plan.codes.has_numbers() {
                parse_decimal(cell).map(|(n, _)| n)
            } else {
                None
            };
            match plan.codes.lookup(cell, number) {
                Some(CodeMeaning::Category(_)) => Cell::Valid(match number {
                    Some(n) if plan.numeric_codes => Seen::Number(n),
                    _ => Seen::Text,
                }),
                Some(CodeMeaning::Missing(kind)) => Cell::Missing(kind),
                None if plan.numeric_codes && number.is_none() => {
                    Cell::Invalid(ValueRule::NotANumber)
                }
                None => Cell::Invalid(ValueRule::UnlabelledCode),
            }
        }
        Parse::Numeric { range, decimals } => {
            let parsed = parse_decimal(cell);
            match plan.codes.lookup(cell, parsed.map(|(n, _)| n)) {
                Some(CodeMeaning::Missing(kind)) => return Cell::Missing(kind),
                Some(CodeMeaning::Category(_)) => {
                    return Cell::Valid(parsed.map_or(Seen::Text, |(n, _)| Seen::Number(n)))
                }
                None => {}
            }
            let Some((n, places)) = parsed else {
                return Cell::Invalid(ValueRule::NotANumber);
            };
            if range.is_some_and(|r| !r.contains(n)) {
                Cell::Invalid(ValueRule::OutOfRange)
            } else if decimals.is_some_and(|d| places > d) {
                Cell::Invalid(ValueRule::TooManyDecimals)
            } else {
                Cell::Valid(Seen::Number(n))
            }
        }
        Parse::Date { range } => {
            if let Some(CodeMeaning::Missing(kind)) =
                plan.codes.lookup(cell, missing_number(plan, cell))
            {
                return Cell::Missing(kind);
            }
            match parse_iso_date(cell) {
                Some(d) if range.is_none_or(|r| r.contains(f64::from(d))) => {
                    Cell::Valid(Seen::Number(f64::from(d)))
                }
                _ => Cell::Invalid(ValueRule::BadDate),
            }
        }
        Parse::Text {
            pattern,
            max_length,
        } => {
            if let Some(CodeMeaning::Missing(kind)) =
                plan.codes.lookup(cell, missing_number(plan, cell))
            {
                return Cell::Missing(kind);
            }
            if max_length.is_some_and(|m| cell.len() as u64 > m && cell.chars().count() as u64 > m)
            {
                Cell::Invalid(ValueRule::TooLong)
            } else if pattern.as_ref().is_some_and(|p| !p.is_match(cell)) {
                Cell::Invalid(ValueRule::PatternMismatch)
            } else {
                Cell::Valid(Seen::Text)
            }
        }
    }
}

fn missing_number(plan: &ColumnPlan, cell: &str) -> Option<f64> {
    if plan.codes.has_numbers() {
        parse_decimal(cell).map(|(n, _)| n)
    } else {
        None
    }
}

#[cfg(test)]
mod tests {
    use super::parse_decimal;

    #[test]
    fn plain_decimals_only() {
        assert_eq!(parse_decimal("12"), Some((12.0, 0)));
        assert_eq!(parse_decimal("01"), Some((1.0, 0)));
        assert_eq!(parse_decimal("-3.25"), Some((-3.25, 2)));
        assert_eq!(parse_decimal("2.50"), Some((2.5, 1)));
        assert_eq!(parse_decimal("7."), Some((7.0, 0)));
        assert_eq!(parse_decimal(".5"), Some((0.5, 1)));
        for bad in [
            "", "-", ".", "1e3", "inf", "NaN", "12,5", "1 2", "0x10", "--1",
        ] {
            assert_eq!(parse_decimal(bad), None, "{bad}");
        }
    }
}
