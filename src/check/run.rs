//! The row loop: one pass over the records, classifying cells, applying routing and
//! checks, and counting.
//!
//! Per row, cells are first classified on their own (value rules); then universes and
//! checks are evaluated over the classified values, because a cell with a value finding
//! counts as missing when a condition reads it. Buffers (the record, the per-variable
//! classifications) are reused from row to row.

use std::collections::HashSet;
use std::hash::{BuildHasherDefault, Hash, Hasher};

use super::cell::{classify, Cell, Seen};
use super::findings::{Example, Findings, Target};
use super::plan::{CodeMeaning, ColumnPlan, Plan};
use super::tally::Tally;
use crate::codebook::model::{Codebook, MissingKind};
use crate::condition::{Row, Tri, Value};
use crate::data::{DataError, Record, RecordSource};

/// What the row loop hands on to the report.
pub struct Pass {
    pub rows: u64,
    pub findings: Findings,
    pub tallies: Vec<Tally>,
}

/// Called now and then with the bytes read so far, for a progress bar.
pub type Progress<'a> = &'a mut dyn FnMut(u64);

/// The values conditions see for the current row.
struct RowView<'a> {
    cells: &'a [Cell],
    plan: &'a Plan,
    record: &'a Record,
}

impl Row for RowView<'_> {
    #[inline]
    fn value(&self, var: usize) -> Value<'_> {
        match self.cells[var] {
            Cell::Valid(Seen::Number(n)) => Value::Number(n),
            Cell::Valid(Seen::Text) => match self.plan.columns[var]
                .field
                .and_then(|f| self.record.field(f))
            {
                Some(t) => Value::Text(t.trim()),
                None => Value::Missing,
            },
            _ => Value::Missing,
        }
    }
}

/// Keys are remembered by a 64-bit hash, which keeps memory at a few bytes per case; two
/// different keys share a hash with probability about n^2 / 2^65 (below 1e-6 for 4 million
/// cases).
#[derive(Default)]
struct PassThrough(u64);

impl Hasher for PassThrough {
    fn finish(&self) -> u64 {
        self.0
    }
    fn write(&mut self, _: &[u8]) {}
    fn write_u64(&mut self, n: u64) {
        self.0 = n;
    }
}

type KeySet = HashSet<u64, BuildHasherDefault<PassThrough>>;

pub fn run(
    codebook: &Codebook,
    plan: &Plan,
    source: &mut RecordSource,
    max_examples: usize,
    progress: Progress,
) -> Result<Pass, DataError> {
    let mut findings = Findings::new(max_examples);
    let mut tallies: Vec<Tally> = codebook
        .variables
        .iter()
        .map(|v| Tally::new(v.categories.len()))
        .collect();
    let mut cells = vec![Cell::Blank; plan.columns.len()];
    let mut record = Record::new();
    let mut keys = KeySet::default();
    let mut key_text = String::new();
    let mut rows = 0u64;

    while source.read_record(&mut record)? {
        rows += 1;
        if rows % 65_536 == 0 {
            progress(source.bytes_read());
        }
        let row = record.row();
        if record.invalid_utf8() {
            findings.add("structure.encoding", Target::File, || Example {
                row: Some(row),
                case: case_of(plan, &record),
                value: None,
            });
        }
        let ragged = match plan.expected_fields {
            Some(n) => (record.len() != n).then(|| {
                let got = record.len();
                format!(
                    "{got} field{}, expected {n}",
                    if got == 1 { "" } else { "s" }
                )
            }),
            None => record
                .length_problem()
                .map(|p| format!("record length {}, expected {}", p.actual, p.expected)),
        };
        if let Some(detail) = ragged {
            findings.add("structure.row-length", Target::File, || Example {
                row: Some(row),
                case: case_of(plan, &record),
                value: Some(detail),
            });
            continue;
        }

        for (col, cell) in plan.columns.iter().zip(cells.iter_mut()) {
            *cell = match col.field.and_then(|f| record.field(f)) {
                Some(text) => classify(col, text.trim()),
                None => Cell::Missing(MissingKind::NotAscertained),
            };
        }
        let view = RowView {
            cells: &cells,
            plan,
            record: &record,
        };
        for col in &plan.columns {
            let Some(field) = col.field else { continue };
            let universe = col.universe.as_ref().map_or(Tri::True, |u| u.eval(&view));
            let tally = &mut tallies[col.var];
            let outcome = route(col, cells[col.var], universe, tally);
            if let Some(rule) = outcome {
                tally.invalid += 1;
                findings.add(rule, Target::Variable(col.var), || Example {
                    row: Some(row),
                    case: case_of(plan, &record),
                    value: record.field(field).map(|s| s.to_string()),
                });
            } else if let (Cell::Valid(Seen::Number(n)), true) =
                (cells[col.var], universe != Tri::Unknown)
            {
                tally.stats.push(n);
                if !tally.categories.is_empty() {
                    let text = record.field(field).unwrap_or("").trim();
                    if let Some(CodeMeaning::Category(c)) = col.codes.lookup(text, Some(n)) {
                        tally.categories[c as usize] += 1;
                    }
                }
            } else if let (Cell::Valid(Seen::Text), true) =
                (cells[col.var], universe != Tri::Unknown)
            {
                if !tally.categories.is_empty() {
                    let text = record.field(field).unwrap_or("").trim();
                    if let Some(CodeMeaning::Category(c)) = col.codes.lookup(text, None) {
                        tally.categories[c as usize] += 1;
                    }
                }
            }
        }
        for (i, check) in plan.checks.iter().enumerate() {
            let applies = check.when.as_ref().map_or(Tri::True, |w| w.eval(&view));
            if applies == Tri::True && check.assert.eval(&view) == Tri::False {
                findings.add("consistency.failed", Target::Check(i), || Example {
                    row: Some(row),
                    case: case_of(plan, &record),
                    value: Some(check_values(codebook, check.assert.variables(), &view)),
                });
            }
        }
        if !plan.key.is_empty() {
            key_text.clear();
            let mut blank = false;
            for &k in &plan.key {
                let text = plan.columns[k]
                    .field
                    .and_then(|f| record.field(f))
                    .unwrap_or("")
                    .trim();
                blank |= text.is_empty();
                key_text.push_str(text);
                key_text.push('\u{1f}');
            }
            if blank {
                findings.add("structure.id-blank", Target::Key, || Example {
                    row: Some(row),
                    case: None,
                    value: Some(key_text.trim_end_matches('\u{1f}').replace('\u{1f}', "/")),
                });
            } else if !keys.insert(hash_key(&key_text)) {
                findings.add("structure.id-duplicate", Target::Key, || Example {
                    row: Some(row),
                    case: case_of(plan, &record),
                    value: case_of(plan, &record),
                });
            }
        }
    }
    progress(source.bytes_read());
    Ok(Pass {
        rows,
        findings,
        tallies,
    })
}

/// Apply routing to a classified cell and count it; returns the rule of a finding, if any.
#[inline]
fn route(col: &ColumnPlan, cell: Cell, universe: Tri, tally: &mut Tally) -> Option<&'static str> {
    let skipped = match cell {
        Cell::Invalid(rule) => return Some(rule.id()),
        Cell::Blank => match col.blank {
            // Reported once, as structure.id-blank; counted as invalid so the tallies add up.
            _ if col.key => {
                tally.invalid += 1;
                return None;
            }
            _ if col.identifier => return Some("value.blank"),
            Some(MissingKind::Skipped) => true,
            Some(kind) if universe != Tri::False => {
                if universe == Tri::Unknown {
                    tally.gate_unknown += 1;
                } else {
                    tally.add_missing(kind);
                }
                return None;
            }
            Some(_) => true,
            None if col.universe.is_none() => return Some("value.blank"),
            None => true,
        },
        Cell::Missing(kind) => kind == MissingKind::Skipped,
        Cell::Valid(_) => false,
    };
    match universe {
        Tri::Unknown => {
            tally.gate_unknown += 1;
            None
        }
        Tri::False if skipped => {
            tally.skipped += 1;
            None
        }
        Tri::False => Some("routing.should-be-skipped"),
        Tri::True if skipped => Some("routing.should-be-answered"),
        Tri::True => {
            match cell {
                Cell::Missing(kind) => tally.add_missing(kind),
                _ => tally.valid += 1,
            }
            None
        }
    }
}

fn hash_key(key: &str) -> u64 {
    let mut h = std::collections::hash_map::DefaultHasher::new();
    key.hash(&mut h);
    h.finish()
}

/// The case id of a row for examples: the key values joined by "/".
fn case_of(plan: &Plan, record: &Record) -> Option<String> {
    if plan.key.is_empty() {
        return None;
    }
    let parts: Vec<&str> = plan
        .key
        .iter()
        .map(|&k| {
            plan.columns[k]
                .field
                .and_then(|f| record.field(f))
                .unwrap_or("")
                .trim()
        })
        .collect();
    Some(parts.join("/"))
}

/// The values a failed check read, as `name=value` pairs.
fn check_values(codebook: &Codebook, vars: &[usize], view: &RowView) -> String {
    vars.iter()
        .map(|&v| {
            let shown = match view.value(v) {
                Value::Number(n)
                    if codebook.variables[v].kind == crate::codebook::model::Kind::Date =>
                {
                    crate::codebook::date::format_iso_date(n as i32)
                }
                Value::Number(n) => crate::codebook::model::format_number(n),
                Value::Text(t) => format!("{t:?}"),
                Value::Missing => "missing".to_string(),
            };
            format!("{}={shown}", codebook.variables[v].name)
        })
        .collect::<Vec<_>>()
        .join(", ")
}
