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
    /// Every rule, in discriminant order.
    pub const ALL: [ValueRule; 7] = [
        ValueRule::NotANumber,
        ValueRule::BadDate,
        ValueRule::UnlabelledCode,
        ValueRule::OutOfRange,
        ValueRule::TooManyDecimals,
        ValueRule::PatternMismatch,
        ValueRule::TooLong,
    ];

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

/// `str::trim`, with a fast path for the usual cell that starts and ends with a visible
/// ASCII character (no Unicode white space can be there, so nothing is trimmed).
#[inline]
pub fn trim(text: &str) -> &str {
    match text.as_bytes() {
        [] => text,
        [first, .., last] | [first @ last]
            if (0x21..0x7f).contains(first) && (0x21..0x7f).contains(last) =>
        {
            text
        }
        _ => text.trim(),
    }
}

/// Exact powers of ten as `f64` (every one up to 1e22 is representable).
const POW10: [f64; 23] = [
    1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11, 1e12, 1e13, 1e14, 1e15, 1e16,
    1e17, 1e18, 1e19, 1e20, 1e21, 1e22,
];

/// A plain decimal number: optional sign, digits, optional fraction. Returns the value and
/// the number of significant decimal places (trailing zeros do not count).
///
/// Survey cells are short, so the digits are gathered into an integer on the way: when it
/// stays below 2^53 and there are at most 22 fractional digits, `digits / 10^fraction` is one
/// correctly rounded division of two exact values, the same `f64` that `str::parse` gives
/// (Clinger's fast path). Longer numbers go to `str::parse`.
#[inline]
pub fn parse_decimal(text: &str) -> Option<(f64, u32)> {
    parse_number(text).map(|p| (p.value, p.decimals))
}

/// A cell read as a plain decimal number.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Parsed {
    pub value: f64,
    /// Significant decimal places.
    pub decimals: u32,
    /// The value as an index when it is a whole number from 0 up (`-0` and `2.00` count),
    /// known without going through `f64`; `None` for other values and very long numbers.
    pub whole: Option<usize>,
}

/// [`parse_decimal`], also giving a whole number as an index for dense code tables.
#[inline]
pub fn parse_number(text: &str) -> Option<Parsed> {
    let (negative, b) = match text.as_bytes() {
        [b'-', rest @ ..] => (true, rest),
        [b'+', rest @ ..] => (false, rest),
        b => (false, b),
    };
    let mut mantissa = 0u64;
    let mut i = 0;
    while i < b.len() {
        let d = b[i].wrapping_sub(b'0');
        if d > 9 {
            break;
        }
        mantissa = mantissa.wrapping_mul(10).wrapping_add(u64::from(d));
        i += 1;
    }
    let mut int_digits = i;
    let mut decimals = 0u32;
    let mut frac_len = 0usize;
    if i < b.len() {
        if b[i] != b'.' {
            return None;
        }
        i += 1;
        let frac_start = i;
        while i < b.len() {
            let d = b[i].wrapping_sub(b'0');
            if d > 9 {
                return None;
            }
            mantissa = mantissa.wrapping_mul(10).wrapping_add(u64::from(d));
            i += 1;
            // Significant places: up to the last digit that is not a zero.
            if d != 0 {
                decimals = (i - frac_start) as u32;
            }
        }
        frac_len = i - frac_start;
        int_digits += frac_len;
    }
    if int_digits == 0 {
        return None;
    }
    // 15 digits cannot wrap and stay below 2^53. (Converted as i64: one instruction.)
    if int_digits <= 15 {
        let n = mantissa as i64 as f64;
        let n = if frac_len == 0 {
            n
        } else {
            n / POW10[frac_len]
        };
        let whole = (decimals == 0 && (!negative || mantissa == 0))
            .then(|| (mantissa / POW10_INT[frac_len]) as usize);
        return Some(Parsed {
            value: if negative { -n } else { n },
            decimals,
            whole,
        });
    }
    text.parse::<f64>().ok().map(|value| Parsed {
        value,
        decimals,
        whole: None,
    })
}

/// Powers of ten up to the longest fraction of the fast path.
const POW10_INT: [u64; 16] = {
    let mut p = [1u64; 16];
    let mut i = 1;
    while i < 16 {
        p[i] = p[i - 1] * 10;
        i += 1;
    }
    p
};

/// Classify a trimmed cell of the variable planned in `plan`.
#[inline]
pub fn classify(plan: &ColumnPlan, cell: &str) -> Cell {
    classify_counted(plan, cell).0
}

/// Category of a valid cell for the tallies: the category its text names as a code, when
/// the variable has categories at all. (`number` is what the code lookup is given.)
#[inline]
fn category_of(plan: &ColumnPlan, cell: &str, number: Option<f64>) -> Option<u32> {
    if !plan.codes.has_categories() {
        return None;
    }
    match plan.codes.lookup(cell, number) {
        Some(CodeMeaning::Category(c)) => Some(c),
        _ => None,
    }
}

/// [`classify`], also giving the index of the category a valid cell counts towards in the
/// variable's tallies, so the row loop need not look the code up a second time.
#[inline]
pub fn classify_counted(plan: &ColumnPlan, cell: &str) -> (Cell, Option<u32>) {
    if cell.is_empty() {
        return (Cell::Blank, None);
    }
    match classify_inner(plan, cell) {
        // A category code read as a number: the lookup already said which category.
        counted @ (Cell::Valid(Seen::Number(_)), Some(_)) => counted,
        // A date counts towards a category only if its day number is a code (tallies
        // look codes up by the value conditions see).
        (valid @ Cell::Valid(Seen::Number(n)), None) => match plan.parse {
            Parse::Date { .. } => (valid, category_of(plan, cell, Some(n))),
            _ => (valid, None),
        },
        // Text seen by conditions: the category its text names as a text code.
        (valid @ Cell::Valid(Seen::Text), _) => (valid, category_of(plan, cell, None)),
        (other, _) => (other, None),
    }
}

#[inline]
fn classify_inner(plan: &ColumnPlan, cell: &str) -> (Cell, Option<u32>) {
    match &plan.parse {
        Parse::Coded => {
            let parsed = if plan.codes.has_numbers() {
                parse_number(cell)
            } else {
                None
            };
            let number = parsed.map(|p| p.value);
            match plan.codes.lookup_parsed(cell, parsed) {
                Some(CodeMeaning::Category(c)) => match number {
                    Some(n) if plan.numeric_codes => (Cell::Valid(Seen::Number(n)), Some(c)),
                    _ => (Cell::Valid(Seen::Text), None),
                },
                Some(CodeMeaning::Missing(kind)) => (Cell::Missing(kind), None),
                None if plan.numeric_codes && number.is_none() => {
                    (Cell::Invalid(ValueRule::NotANumber), None)
                }
                None => (Cell::Invalid(ValueRule::UnlabelledCode), None),
            }
        }
        Parse::Numeric { range, decimals } => {
            let parsed = parse_number(cell);
            match plan.codes.lookup_parsed(cell, parsed) {
                Some(CodeMeaning::Missing(kind)) => return (Cell::Missing(kind), None),
                Some(CodeMeaning::Category(c)) => {
                    return match parsed {
                        Some(p) => (Cell::Valid(Seen::Number(p.value)), Some(c)),
                        None => (Cell::Valid(Seen::Text), None),
                    }
                }
                None => {}
            }
            let Some(Parsed {
                value: n,
                decimals: places,
                ..
            }) = parsed
            else {
                return (Cell::Invalid(ValueRule::NotANumber), None);
            };
            let cell = if range.is_some_and(|r| !r.contains(n)) {
                Cell::Invalid(ValueRule::OutOfRange)
            } else if decimals.is_some_and(|d| places > d) {
                Cell::Invalid(ValueRule::TooManyDecimals)
            } else {
                Cell::Valid(Seen::Number(n))
            };
            (cell, None)
        }
        Parse::Date { range } => {
            if let Some(CodeMeaning::Missing(kind)) =
                plan.codes.lookup(cell, missing_number(plan, cell))
            {
                return (Cell::Missing(kind), None);
            }
            let cell = match parse_iso_date(cell) {
                Some(d) if range.is_none_or(|r| r.contains(f64::from(d))) => {
                    Cell::Valid(Seen::Number(f64::from(d)))
                }
                _ => Cell::Invalid(ValueRule::BadDate),
            };
            (cell, None)
        }
        Parse::Text {
            pattern,
            max_length,
        } => {
            if let Some(CodeMeaning::Missing(kind)) =
                plan.codes.lookup(cell, missing_number(plan, cell))
            {
                return (Cell::Missing(kind), None);
            }
            let cell = if max_length
                .is_some_and(|m| cell.len() as u64 > m && cell.chars().count() as u64 > m)
            {
                Cell::Invalid(ValueRule::TooLong)
            } else if pattern.as_ref().is_some_and(|p| !p.is_match(cell)) {
                Cell::Invalid(ValueRule::PatternMismatch)
            } else {
                Cell::Valid(Seen::Text)
            };
            (cell, None)
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
    use super::{parse_decimal, parse_number};

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

    #[test]
    fn fast_path_matches_std_parse() {
        for text in [
            "0",
            "-0",
            "7",
            "0.1",
            "0.3",
            "2.675",
            "1234.567",
            "-9.99",
            "123456789012345",
            "0.000000000000001",
            "99999999999999.9",
            "1234567890123456",
            "0.1234567890123456",
        ] {
            let (n, _) = parse_decimal(text).unwrap();
            assert_eq!(
                n.to_bits(),
                text.parse::<f64>().unwrap().to_bits(),
                "{text}"
            );
        }
    }

    /// Random strings over the characters a number cell is made of, against a reference
    /// built from general-purpose parts: the regex crate decides what is a plain decimal,
    /// the standard library's `f64` parser gives the value, and the places are counted on
    /// the text.
    #[test]
    fn random_cells_parse_like_the_reference() {
        let plain = regex::Regex::new(r"^[+-]?([0-9]+\.?[0-9]*|\.[0-9]+)$").unwrap();
        let alphabet = b"0000123456789..--+ e";
        let mut seed: u64 = 0x2545_f491_4f6c_dd1d;
        let mut numbers = 0;
        for _ in 0..20_000 {
            seed ^= seed << 13;
            seed ^= seed >> 7;
            seed ^= seed << 17;
            let len = (seed % 20) as usize;
            let text: String = (0..len)
                .map(|k| alphabet[((seed >> (3 * k % 60)) as usize + k) % alphabet.len()] as char)
                .collect();
            let got = parse_number(&text);
            if !plain.is_match(&text) {
                assert_eq!(got, None, "{text:?}");
                continue;
            }
            numbers += 1;
            let got = got.unwrap_or_else(|| panic!("{text:?} is a plain decimal"));
            let value: f64 = text.parse().unwrap();
            assert_eq!(got.value.to_bits(), value.to_bits(), "{text:?}");
            let fraction = text.split_once('.').map_or("", |(_, f)| f);
            let places = fraction.trim_end_matches('0').len() as u32;
            assert_eq!(got.decimals, places, "{text:?}");
            let digits = text.bytes().filter(u8::is_ascii_digit).count();
            let whole = (places == 0 && digits <= 15 && (value >= 0.0 || value == 0.0))
                .then_some(value.abs() as usize);
            assert_eq!(got.whole, whole, "{text:?}");
        }
        assert!(numbers > 3_000, "only {numbers} plain decimals drawn");
    }

    #[test]
    fn whole_numbers_index_dense_tables() {
        let whole = |t: &str| parse_number(t).and_then(|p| p.whole);
        assert_eq!(whole("12"), Some(12));
        assert_eq!(whole("012"), Some(12));
        assert_eq!(whole("2.00"), Some(2));
        assert_eq!(whole("-0"), Some(0));
        assert_eq!(whole("-1"), None);
        assert_eq!(whole("2.5"), None);
        assert_eq!(whole("1234567890123456"), None);
    }
}
