//! A classified cell packed into one word, and a per-column table that classifies the
//! commonest cells (short whole numbers) with a single lookup.
//!
//! Why this exists: the check loop classifies every cell of every row, and most survey
//! cells are one- or two-digit codes. Returning a [`Cell`] enum with its float through
//! memory, then matching it again to route and count it, cost more than parsing the CSV.
//! Here a cell's class is a `u32` (a tag and the category it counts towards) and its number,
//! when it has one, goes to a separate slot. The table is filled by running the ordinary
//! classifier ([`classify_counted`]) on each whole number, so a table hit gives exactly the
//! answer the classifier would have given; anything the table does not cover goes through
//! the classifier itself.

use super::cell::{classify_counted, parse_number, trim, Cell, Seen, ValueRule};
use super::plan::{CodeMeaning, ColumnPlan, Parse};
use crate::codebook::model::{MissingKind, Range};

/// A classified cell: which of the [`TAGS`] kinds of cell it is, and the category index a
/// valid cell counts towards in the tallies.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct Class(u32);

/// Number of distinct tags: valid number, valid text, five missing kinds, blank, seven
/// value rules (and one unused).
pub const TAGS: usize = 16;

const VALID_NUMBER: u32 = 0;
const VALID_TEXT: u32 = 1;
const MISSING: u32 = 2;
const BLANK: u32 = 7;
const INVALID: u32 = 8;
const TAG_MASK: u32 = 0xf;

impl Class {
    /// The class of an absent column's cells.
    pub const NOT_ASCERTAINED: Class = Class(MISSING + MissingKind::NotAscertained as u32);

    pub fn new(cell: Cell, category: Option<u32>) -> Class {
        let tag = match cell {
            Cell::Valid(Seen::Number(_)) => VALID_NUMBER,
            Cell::Valid(Seen::Text) => VALID_TEXT,
            Cell::Missing(kind) => MISSING + kind as u32,
            Cell::Blank => BLANK,
            Cell::Invalid(rule) => INVALID + rule as u32,
        };
        Class(tag | category.map_or(0, |c| (c + 1) << 4))
    }

    #[inline]
    pub fn tag(self) -> usize {
        (self.0 & TAG_MASK) as usize
    }

    /// The category a valid cell counts towards.
    #[inline]
    pub fn category(self) -> Option<u32> {
        (self.0 >> 4).checked_sub(1)
    }

    #[inline]
    pub fn is_number(self) -> bool {
        self.0 & TAG_MASK == VALID_NUMBER
    }

    #[inline]
    pub fn is_text(self) -> bool {
        self.0 & TAG_MASK == VALID_TEXT
    }

    /// A cell of the given tag (numbers read as 0), for building tables keyed by tag.
    pub fn cell_of_tag(tag: usize) -> Option<Cell> {
        let tag = tag as u32;
        Some(match tag {
            VALID_NUMBER => Cell::Valid(Seen::Number(0.0)),
            VALID_TEXT => Cell::Valid(Seen::Text),
            t if (MISSING..BLANK).contains(&t) => {
                Cell::Missing(MissingKind::ALL[(t - MISSING) as usize])
            }
            BLANK => Cell::Blank,
            t => Cell::Invalid(*ValueRule::ALL.get((t - INVALID) as usize)?),
        })
    }
}

/// Whole numbers below this are tabled for numeric variables (ages, counts, hours).
const NUMERIC_TABLE: usize = 1024;

/// Classes of the whole numbers `0..len` written without sign, point or spaces, and for a
/// numeric variable whose codes are all in that table's range of indices, its range and
/// decimals (any other number is then checked against those alone).
#[derive(Debug, Default, Clone)]
pub struct Quick {
    table: Vec<Class>,
    plain: Option<Plain>,
}

#[derive(Debug, Clone)]
struct Plain {
    range: Option<Range>,
    decimals: Option<u32>,
    /// Codes outside the table (negative, fractional or large ones, such as `-9` for
    /// "don't know") and their classes.
    extra: Vec<(f64, Class)>,
}

impl Quick {
    pub fn table(&self) -> &[Class] {
        &self.table
    }

    /// The table for a column, or an empty one where a table could give a different answer
    /// from the classifier: text codes are compared as written, so `01` and `1` can differ.
    pub fn build(col: &ColumnPlan) -> Quick {
        if col.codes.has_texts() {
            return Quick::default();
        }
        let len = match col.parse {
            Parse::Coded if col.numeric_codes => col.codes.dense_len(),
            Parse::Numeric { .. } => NUMERIC_TABLE,
            _ => 0,
        };
        let table = (0..len)
            .map(|n| {
                let (cell, category) = classify_counted(col, &n.to_string());
                Class::new(cell, category)
            })
            .collect();
        // Every code of the variable is a whole number below the table's end, so a number
        // that misses the table cannot be a code.
        let plain = match col.parse {
            Parse::Numeric { range, decimals } if col.codes.dense_len() <= len => {
                let extra = col
                    .codes
                    .other_numbers()
                    .iter()
                    .map(|&(code, meaning)| {
                        let class = match meaning {
                            CodeMeaning::Category(c) => {
                                Class::new(Cell::Valid(Seen::Number(code)), Some(c))
                            }
                            CodeMeaning::Missing(kind) => Class::new(Cell::Missing(kind), None),
                        };
                        (code, class)
                    })
                    .collect();
                Some(Plain {
                    range,
                    decimals,
                    extra,
                })
            }
            _ => None,
        };
        Quick { table, plain }
    }
}

/// A cell of one to four digits and nothing else, as a number: the cells a [`Quick`] table
/// answers.
#[inline(always)]
pub fn short_whole(text: &str) -> Option<usize> {
    let b = text.as_bytes();
    if b.is_empty() || b.len() > 4 {
        return None;
    }
    let mut n = 0usize;
    let mut digits = true;
    for &c in b {
        let d = c.wrapping_sub(b'0');
        digits &= d < 10;
        n = n * 10 + usize::from(d);
    }
    digits.then_some(n)
}

/// Classify a cell of variable `var` as written (untrimmed), storing its number in `number`
/// when it has one. `table` is the column's [`Quick::table`], passed apart so that the quick
/// path does not touch the column's (large) plan.
#[inline(always)]
pub fn classify_class(
    table: &[Class],
    columns: &[ColumnPlan],
    var: usize,
    text: &str,
    number: &mut f64,
) -> Class {
    if text.is_empty() {
        return Class(BLANK);
    }
    if !table.is_empty() {
        if let Some(n) = short_whole(text).filter(|&n| n < table.len()) {
            *number = n as f64;
            return table[n];
        }
    }
    let col = &columns[var];
    if let Some(plain) = &col.quick.plain {
        if let Some(class) = classify_plain(plain, &col.quick.table, text, number) {
            return class;
        }
    }
    let (cell, category) = classify_counted(col, trim(text));
    if let Cell::Valid(Seen::Number(x)) = cell {
        *number = x;
    }
    Class::new(cell, category)
}

/// A number of a [`Plain`] variable that is not a short whole number: its range and
/// decimals decide, after the codes outside the table. `None` sends the cell to the
/// classifier (not a plain number).
#[inline]
fn classify_plain(plain: &Plain, table: &[Class], text: &str, number: &mut f64) -> Option<Class> {
    let parsed = parse_number(text)?;
    let n = parsed.value;
    match parsed.whole {
        Some(whole) if whole < table.len() => {
            *number = n;
            return Some(table[whole]);
        }
        Some(_) => {}
        // A whole number written too long for `whole` (`0000000000000001`) can still be a
        // code of the table.
        None if n >= 0.0 && n < table.len() as f64 && n.fract() == 0.0 => return None,
        None => {}
    }
    if let Some(&(_, class)) = plain.extra.iter().find(|(code, _)| *code == n) {
        if class.is_number() {
            *number = n;
        }
        return Some(class);
    }
    let tag = if plain.range.is_some_and(|r| !r.contains(n)) {
        INVALID + ValueRule::OutOfRange as u32
    } else if plain.decimals.is_some_and(|d| parsed.decimals > d) {
        INVALID + ValueRule::TooManyDecimals as u32
    } else {
        *number = n;
        VALID_NUMBER
    };
    Some(Class(tag))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::check::plan;

    const CODEBOOK: &str = r#"
[dataset]
name = "t"
[[variables]]
name = "coded"
kind = "categorical"
categories = [{ code = 1, label = "a" }, { code = 2, label = "b" }, { code = 10, label = "c" }]
missing = [{ code = 8, label = "r", kind = "refused" }, { code = 9, label = "d", kind = "dont-know" }]
[[variables]]
name = "texty"
kind = "categorical"
categories = [{ code = 1, label = "a" }, { code = "01", label = "b" }]
[[variables]]
name = "age"
kind = "numeric"
range = { min = 16, max = 99 }
decimals = 0
missing = [{ code = 998, label = "r", kind = "refused" }]
[[variables]]
name = "income"
kind = "numeric"
range = { min = 0.5, max = 5000 }
decimals = 2
missing = [{ code = 9999, label = "r", kind = "refused" }, { code = -1, label = "n", kind = "not-ascertained" }, { code = 99999, label = "x", kind = "other" }]
categories = [{ code = -2.5, label = "owes" }]
[[variables]]
name = "hours"
kind = "numeric"
range = { min = 0, max = 80 }
decimals = 1
categories = [{ code = 0, label = "none" }]
[[variables]]
name = "day"
kind = "date"
[[variables]]
name = "note"
kind = "text"
"#;

    /// The quick path gives exactly what the classifier gives, for every column kind.
    #[test]
    fn quick_classes_are_the_classifiers() {
        let loaded =
            crate::codebook::native::parse(std::path::Path::new("t.toml"), CODEBOOK.into())
                .unwrap();
        let plan = plan::compile(&loaded.codebook, None).unwrap();
        let mut cells: Vec<String> = (0..1100).map(|n| n.to_string()).collect();
        for extra in [
            "",
            " ",
            "01",
            "007",
            "0010",
            " 1",
            "1 ",
            "2.00",
            "2.5",
            "-1",
            "-0",
            "+3",
            "0000000000000001",
            "0000000000000010",
            "1e3",
            "abc",
            "99.99",
            "998",
            "9999",
            "12345",
            "16.0",
            "-3.25",
            "0.499",
            "5000.01",
            "79.95",
            "80.0",
            "2026-02-30",
            "2026-01-31",
            "1.",
            ".5",
            "\u{a0}1",
            "99999",
            "99999.0",
            "-2.5",
            "-2.50",
            "-1.0",
            "4096",
            "-0.0",
            "1024",
            "1023",
        ] {
            cells.push(extra.to_string());
        }
        for col in &plan.columns {
            for cell in &cells {
                let (expected, category) = classify_counted(col, trim(cell));
                let mut number = f64::NAN;
                let class =
                    classify_class(col.quick.table(), &plan.columns, col.var, cell, &mut number);
                assert_eq!(
                    class,
                    Class::new(expected, category),
                    "{cell:?} in {}",
                    col.var
                );
                if let Cell::Valid(Seen::Number(n)) = expected {
                    assert_eq!(number.to_bits(), n.to_bits(), "{cell:?} in {}", col.var);
                }
            }
        }
        // The quick paths are in use where they can be, and not where they cannot.
        assert!(!plan.columns[0].quick.table().is_empty());
        assert!(plan.columns[1].quick.table().is_empty());
        assert!(plan.columns[2].quick.plain.is_some());
        assert!(
            plan.columns[3].quick.plain.is_some(),
            "codes outside the table"
        );
    }

    #[test]
    fn every_tag_round_trips() {
        for tag in 0..TAGS {
            if let Some(cell) = Class::cell_of_tag(tag) {
                assert_eq!(Class::new(cell, None).tag(), tag);
                assert_eq!(Class::new(cell, Some(41)).category(), Some(41));
            }
        }
        assert_eq!(Class::cell_of_tag(15), None);
        assert_eq!(Class::NOT_ASCERTAINED.tag(), 2 + 3);
    }
}
