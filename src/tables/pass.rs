//! The one pass over the records: classify the cells of the tabulated variables with the
//! checker's compiled plan and add each case to running counts and sums.
//!
//! Cells are read exactly as `concord check` reads them ([`classify`] and the plan's code
//! table), so a table never counts a "99 = not recorded" as a category. Memory stays flat:
//! counts per category, running sums, and at most [`MAX_DISTINCT`] distinct values of a
//! numeric variable (with their counts and weight sums) for its quartiles.

use std::collections::HashMap;

use super::stats::WeightedRunning;
use crate::check::cell::{classify, parse_decimal, Cell, Seen};
use crate::check::plan::{CodeMeaning, ColumnPlan, Plan};
use crate::codebook::model::MissingKind;
use crate::data::{DataError, Record, RecordSource};

/// Distinct values of a numeric variable kept for exact quartiles; past this the quartiles
/// are left out rather than letting memory grow with the file.
pub const MAX_DISTINCT: usize = 100_000;

/// Distinct values a numeric `--by` variable may have before it must be banded first.
pub const MAX_BY_LEVELS: usize = 50;

/// Which variables the pass reads, as indices into the codebook and its plan.
pub struct Targets {
    pub var: usize,
    pub by: Option<usize>,
    pub weight: Option<usize>,
    /// Whether `var` is numeric (summarised) rather than coded (counted by category).
    pub numeric: bool,
    /// Whether `by` is numeric (its distinct values become the levels).
    pub by_numeric: bool,
}

/// A count with its weighted total.
#[derive(Debug, Clone, Copy, Default)]
pub struct Count {
    pub n: u64,
    pub w: f64,
    pub w2: f64,
}

impl Count {
    #[inline]
    fn add(&mut self, w: f64) {
        self.n += 1;
        self.w += w;
        self.w2 += w * w;
    }
}

/// What one pass found.
#[derive(Debug, Default)]
pub struct Accumulated {
    pub rows: u64,
    pub ragged: u64,
    pub weight_negative: u64,
    pub weight_missing: u64,
    pub weight_invalid: u64,
    /// All cases tabulated.
    pub all: Count,
    /// Per category of a coded variable; one entry (all valid values) for a numeric one.
    pub valid: Vec<Count>,
    pub missing: [Count; 5],
    pub blank: Count,
    pub invalid: Count,
    /// Numeric variable: running sums over valid values, weighted.
    pub running: WeightedRunning,
    /// The same with every weight 1.
    pub unit: WeightedRunning,
    /// Numeric variable: per distinct value (by bit pattern), its count and the sum of its
    /// weights, while under the cap. The counts give the unweighted quartiles, the weight sums
    /// the weighted ones, so both come from one map and one cap.
    pub distinct: Option<HashMap<u64, (u64, f64)>>,
    /// `--by`: the levels, as category indices (all of them, in codebook order) or numbers
    /// (in order of first sight).
    pub by_levels: Vec<ByLevel>,
    /// Coded variable by `--by`: `cross[level][category]`.
    pub cross: Vec<Vec<Count>>,
    /// Numeric variable by `--by`: running sums per level.
    pub group_running: Vec<WeightedRunning>,
    /// Cases valid on the variable but not on `--by`.
    pub by_not_valid: u64,
    /// A numeric `--by` variable had more than [`MAX_BY_LEVELS`] distinct values.
    pub too_many_levels: bool,
}

#[derive(Debug, Clone, Copy, PartialEq)]
pub enum ByLevel {
    Category(u32),
    Number(f64),
}

/// What a cell of the tabulated variable holds.
enum Value {
    Category(usize),
    Number(f64),
    /// A valid value that is neither (a text code on a numeric variable).
    Other,
    Missing(MissingKind),
    Blank,
    Invalid,
}

fn read_value(plan: &ColumnPlan, cell: &str) -> Value {
    match classify(plan, cell) {
        Cell::Valid(seen) => {
            let number = match seen {
                Seen::Number(n) => Some(n),
                Seen::Text => None,
            };
            if matches!(plan.parse, crate::check::plan::Parse::Coded) {
                let number = number.or_else(|| parse_decimal(cell).map(|(n, _)| n));
                match plan.codes.lookup(cell, number) {
                    Some(CodeMeaning::Category(c)) => Value::Category(c as usize),
                    _ => Value::Invalid,
                }
            } else {
                number.map_or(Value::Other, Value::Number)
            }
        }
        Cell::Missing(kind) => Value::Missing(kind),
        Cell::Blank => match plan.blank {
            Some(kind) => Value::Missing(kind),
            None => Value::Blank,
        },
        Cell::Invalid(_) => Value::Invalid,
    }
}

/// Stream every record of `source` once.
pub fn run(
    plan: &Plan,
    targets: &Targets,
    categories: usize,
    by_categories: usize,
    source: &mut RecordSource,
) -> Result<Accumulated, DataError> {
    let mut acc = Accumulated {
        valid: vec![Count::default(); if targets.numeric { 1 } else { categories }],
        distinct: targets.numeric.then(HashMap::new),
        ..Accumulated::default()
    };
    // A coded `--by` variable has its categories as columns, in codebook order, met or not.
    if targets.by.is_some() && !targets.by_numeric {
        for c in 0..by_categories {
            acc.by_levels.push(ByLevel::Category(c as u32));
            acc.cross.push(vec![Count::default(); categories]);
            acc.group_running.push(WeightedRunning::default());
        }
    }
    let field_of = |var: usize| plan.columns[var].field;
    let mut record = Record::new();
    while source.read_record(&mut record)? {
        acc.rows += 1;
        let ragged = match plan.expected_fields {
            Some(n) => record.len() != n,
            None => record.length_problem().is_some(),
        };
        if ragged {
            acc.ragged += 1;
            continue;
        }
        let text = |var: usize| {
            field_of(var)
                .and_then(|f| record.field(f))
                .unwrap_or("")
                .trim()
        };
        let w = match targets.weight {
            None => 1.0,
            Some(wv) => {
                let cell = text(wv);
                match classify(&plan.columns[wv], cell) {
                    Cell::Valid(Seen::Number(n)) if n >= 0.0 && n.is_finite() => n,
                    Cell::Valid(Seen::Number(_)) => {
                        acc.weight_negative += 1;
                        continue;
                    }
                    Cell::Missing(_) | Cell::Blank => {
                        acc.weight_missing += 1;
                        continue;
                    }
                    _ => {
                        if parse_decimal(cell).is_some_and(|(n, _)| n < 0.0) {
                            acc.weight_negative += 1;
                        } else {
                            acc.weight_invalid += 1;
                        }
                        continue;
                    }
                }
            }
        };
        acc.all.add(w);
        let value = read_value(&plan.columns[targets.var], text(targets.var));
        let valid = match value {
            Value::Category(c) => {
                acc.valid[c].add(w);
                true
            }
            Value::Number(x) => {
                acc.valid[0].add(w);
                acc.running.push(x, w);
                acc.unit.push(x, 1.0);
                if let Some(map) = &mut acc.distinct {
                    // -0.0 and 0.0 are one value.
                    let entry = map.entry((x + 0.0).to_bits()).or_insert((0, 0.0));
                    entry.0 += 1;
                    entry.1 += w;
                    if map.len() > MAX_DISTINCT {
                        acc.distinct = None;
                    }
                }
                true
            }
            Value::Other => {
                acc.valid[0].add(w);
                false
            }
            Value::Missing(kind) => {
                acc.missing[kind as usize].add(w);
                false
            }
            Value::Blank => {
                acc.blank.add(w);
                false
            }
            Value::Invalid => {
                acc.invalid.add(w);
                false
            }
        };
        let Some(by) = targets.by else { continue };
        if !valid {
            continue;
        }
        let level = match read_value(&plan.columns[by], text(by)) {
            Value::Category(c) if !targets.by_numeric => Some(ByLevel::Category(c as u32)),
            Value::Category(_) | Value::Other => None,
            Value::Number(x) => Some(ByLevel::Number(x + 0.0)),
            _ => None,
        };
        let Some(level) = level else {
            acc.by_not_valid += 1;
            continue;
        };
        let found = match level {
            ByLevel::Category(c) => Some(c as usize),
            ByLevel::Number(_) => acc.by_levels.iter().position(|l| *l == level),
        };
        let column = match found {
            Some(i) => i,
            None => {
                if acc.by_levels.len() >= MAX_BY_LEVELS {
                    acc.too_many_levels = true;
                    return Ok(acc);
                }
                acc.by_levels.push(level);
                acc.cross.push(vec![Count::default(); categories]);
                acc.group_running.push(WeightedRunning::default());
                acc.by_levels.len() - 1
            }
        };
        match value {
            Value::Category(c) => acc.cross[column][c].add(w),
            Value::Number(x) => acc.group_running[column].push(x, w),
            _ => {}
        }
    }
    Ok(acc)
}
