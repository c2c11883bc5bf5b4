//! The row loop: one pass over the records, classifying cells, applying routing and
//! checks, and counting.
//!
//! Per row, cells are first classified on their own (value rules); then universes and
//! checks are evaluated over the classified values, because a cell with a value finding
//! counts as missing when a condition reads it. Buffers (the record, the per-variable
//! classifications) are reused from row to row.

use std::collections::{HashMap, HashSet};
use std::hash::{BuildHasherDefault, Hash, Hasher};

use super::cell::{classify_counted, trim, Cell, Seen};
use super::findings::{Example, Findings, Target};
use super::plan::{ColumnPlan, Plan};
use super::row::CellRow;
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

/// Hash-set keys are already hashes: pass them through.
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

/// The keys seen so far, to find repeats (`structure.id-duplicate`).
///
/// Memory is the only thing here that grows with the file, so keys are stored compactly,
/// in two exact-or-hashed parts that never hold the same key:
///
/// * **Serial keys.** Most survey keys are a fixed prefix and a fixed-width serial number
///   (`P00012345`, `10423`). The first key seen fixes the shape (the text before its
///   trailing digits, and how many digits there are); every key of that shape is the same
///   text exactly when it has the same number, so it is remembered *exactly* as one bit in
///   a paged bitmap indexed by the number: 4 million consecutive ids take 0.5 MB, and a
///   repeat is never missed nor invented.
/// * **Everything else** (other shapes, composite keys, serials so sparse that the bitmap
///   would cost more than hashes) is remembered by a 64-bit hash, 10 to 21 bytes per key in
///   a `HashSet<u64>` (9 bytes a slot, at most 7/8 full, doubling as it grows, with both
///   tables alive for a moment while it does). Two different keys share a hash with
///   probability about n^2 / 2^65 (below 1e-6 for 4 million cases), which would report a
///   false repeat.
///
/// When the bitmap turns out sparse (more than [`SPARSE_BYTES_PER_KEY`] per key beyond its
/// first megabyte), its keys are moved into the hash set, rebuilding their text so they
/// hash exactly as they would have from the start, and serial storage stops.
#[derive(Default)]
struct KeySet {
    serial: Serial,
    hashes: HashSet<u64, BuildHasherDefault<PassThrough>>,
}

/// Bits per bitmap page (4 KiB).
const PAGE_BITS: u64 = 1 << 15;
/// A bitmap denser than this (bytes per key) is cheaper than hashing.
const SPARSE_BYTES_PER_KEY: u64 = 16;
/// At most 18 digits, so a serial number fits a `u64`.
const MAX_SERIAL_DIGITS: usize = 18;

#[derive(Default)]
enum Serial {
    /// No key seen yet.
    #[default]
    Unset,
    Active(Bitmap),
    /// Not used for this file (a composite key, a first key without a trailing number, or a
    /// bitmap that grew sparse).
    Off,
}

struct Bitmap {
    prefix: String,
    digits: usize,
    /// Page number -> index in `bits`. A map, because serials need not start near zero.
    pages: HashMap<u64, usize>,
    bits: Vec<Box<[u64; (PAGE_BITS / 64) as usize]>>,
    /// The page used last (page number, index): consecutive keys skip the map.
    last: (u64, usize),
    /// Keys stored, for the density rule.
    members: u64,
}

/// Split a key into the text before its trailing ASCII digits and their number.
fn split_serial(key: &str) -> Option<(&str, usize, u64)> {
    let digits = key.bytes().rev().take_while(u8::is_ascii_digit).count();
    if digits == 0 || digits > MAX_SERIAL_DIGITS {
        return None;
    }
    let (prefix, number) = key.split_at(key.len() - digits);
    Some((prefix, digits, number.parse().ok()?))
}

impl KeySet {
    /// Remember `key` (the trimmed key values, each followed by U+001F); false if it was
    /// already there. `parts` is the number of key variables.
    fn insert(&mut self, key: &str, parts: usize) -> bool {
        if let Serial::Unset = self.serial {
            self.serial = match (parts, split_serial(key.trim_end_matches('\u{1f}'))) {
                (1, Some((prefix, digits, _))) => Serial::Active(Bitmap {
                    prefix: prefix.to_string(),
                    digits,
                    pages: HashMap::new(),
                    bits: Vec::new(),
                    last: (u64::MAX, 0),
                    members: 0,
                }),
                _ => Serial::Off,
            };
        }
        if let Serial::Active(bitmap) = &mut self.serial {
            let serial = split_serial(key.trim_end_matches('\u{1f}'))
                .filter(|&(p, d, _)| d == bitmap.digits && p == bitmap.prefix);
            if let Some((_, _, n)) = serial {
                let fresh = bitmap.insert(n);
                if fresh && bitmap.is_sparse() {
                    self.stop_serial();
                }
                return fresh;
            }
        }
        self.hashes.insert(hash_key(key))
    }

    /// Move the bitmap's keys into the hash set and stop using it.
    fn stop_serial(&mut self) {
        let Serial::Active(bitmap) = std::mem::replace(&mut self.serial, Serial::Off) else {
            return;
        };
        let mut text = String::new();
        for (&page, &index) in &bitmap.pages {
            for (w, &word) in bitmap.bits[index].iter().enumerate() {
                let mut word = word;
                while word != 0 {
                    let bit = u64::from(word.trailing_zeros());
                    word &= word - 1;
                    let n = page * PAGE_BITS + w as u64 * 64 + bit;
                    text.clear();
                    use std::fmt::Write;
                    let _ = write!(text, "{}{n:0w$}\u{1f}", bitmap.prefix, w = bitmap.digits);
                    self.hashes.insert(hash_key(&text));
                }
            }
        }
    }
}

impl Bitmap {
    /// Set the bit of `n`; false if it was set already.
    #[inline]
    fn insert(&mut self, n: u64) -> bool {
        let page = n / PAGE_BITS;
        if self.last.0 != page {
            let bits = &mut self.bits;
            let index = *self.pages.entry(page).or_insert_with(|| {
                bits.push(Box::new([0; (PAGE_BITS / 64) as usize]));
                bits.len() - 1
            });
            self.last = (page, index);
        }
        let bit = n % PAGE_BITS;
        let word = &mut self.bits[self.last.1][(bit / 64) as usize];
        let mask = 1u64 << (bit % 64);
        let fresh = *word & mask == 0;
        *word |= mask;
        self.members += u64::from(fresh);
        fresh
    }

    fn is_sparse(&self) -> bool {
        let bytes = self.pages.len() as u64 * (PAGE_BITS / 8);
        bytes > (1 << 20) + SPARSE_BYTES_PER_KEY * self.members
    }
}

/// Below this many bytes a file is checked on one thread: starting a reader thread is not
/// worth it.
const PIPELINE_MIN_BYTES: u64 = 4 * 1024 * 1024;

/// Records handed from the reader thread to the checking thread at a time.
const BATCH_RECORDS: usize = 256;

pub fn run(
    codebook: &Codebook,
    plan: &Plan,
    source: &mut RecordSource,
    max_examples: usize,
    progress: Progress,
) -> Result<Pass, DataError> {
    let mut checker = RowChecker::new(codebook, plan, max_examples);
    let two_cores = std::thread::available_parallelism().is_ok_and(|n| n.get() > 1);
    // Standard input and gzip have no known size and may be large: pipeline them too.
    let big = source.total_bytes().is_none_or(|n| n >= PIPELINE_MIN_BYTES);
    if two_cores && big {
        pipelined(&mut checker, source, progress)?;
    } else {
        let mut record = Record::new();
        while source.read_record(&mut record)? {
            checker.rows += 1;
            if checker.rows % 65_536 == 0 {
                progress(source.bytes_read());
            }
            checker.check(&record);
        }
        progress(source.bytes_read());
    }
    Ok(Pass {
        rows: checker.rows,
        findings: checker.findings,
        tallies: checker.tallies,
    })
}

/// A batch of records read ahead by the reader thread.
struct Batch {
    /// Reused from batch to batch; only the first `len` hold records of this batch.
    records: Vec<Record>,
    len: usize,
    /// `source.bytes_read()` after the batch, for the progress bar.
    bytes_read: u64,
    /// Set on the last batch: the end of the file, or the error that stopped reading.
    end: Option<Result<(), DataError>>,
}

/// Two threads: one reads and splits records (csv parsing, UTF-8 validation), the other
/// checks them in file order through the same [`RowChecker::check`] as the one-thread loop,
/// so the result is the same. Batches circulate between the two, so memory stays bounded
/// (a handful of batches exist at any time) and records are not reallocated.
fn pipelined(
    checker: &mut RowChecker,
    source: &mut RecordSource,
    progress: Progress,
) -> Result<(), DataError> {
    use std::sync::mpsc;
    // Full batches wait here (the reader blocks when it is this far ahead)...
    let (full_tx, full_rx) = mpsc::sync_channel::<Batch>(4);
    // ...and come back here emptied, for reuse.
    let (empty_tx, empty_rx) = mpsc::channel::<Batch>();
    std::thread::scope(|scope| {
        scope.spawn(move || loop {
            let mut batch = empty_rx.try_recv().unwrap_or_else(|_| Batch {
                records: Vec::with_capacity(BATCH_RECORDS),
                len: 0,
                bytes_read: 0,
                end: None,
            });
            batch.len = 0;
            while batch.len < BATCH_RECORDS {
                if batch.records.len() == batch.len {
                    batch.records.push(Record::new());
                }
                match source.read_record(&mut batch.records[batch.len]) {
                    Ok(true) => batch.len += 1,
                    Ok(false) => {
                        batch.end = Some(Ok(()));
                        break;
                    }
                    Err(e) => {
                        batch.end = Some(Err(e));
                        break;
                    }
                }
            }
            batch.bytes_read = source.bytes_read();
            let last = batch.end.is_some();
            // A send fails only when the checking side has stopped listening.
            if full_tx.send(batch).is_err() || last {
                return;
            }
        });
        let mut last_bytes = 0;
        for mut batch in full_rx.iter() {
            for record in &batch.records[..batch.len] {
                checker.rows += 1;
                if checker.rows % 65_536 == 0 {
                    progress(batch.bytes_read);
                }
                checker.check(record);
            }
            last_bytes = batch.bytes_read;
            if let Some(end) = batch.end.take() {
                progress(last_bytes);
                return end;
            }
            // The reader may have stopped already; then the batch is simply dropped.
            let _ = empty_tx.send(batch);
        }
        // The reader ended without a last batch: it panicked, and the scope re-raises that
        // when it joins the thread.
        progress(last_bytes);
        Ok(())
    })
}

/// The state of the pass: everything counted so far, and the buffers reused per row.
struct RowChecker<'a> {
    codebook: &'a Codebook,
    plan: &'a Plan,
    rows: u64,
    findings: Findings,
    tallies: Vec<Tally>,
    cells: Vec<Cell>,
    /// Category each valid cell counts towards, found while classifying it.
    categories: Vec<Option<u32>>,
    keys: KeySet,
    key_text: String,
}

impl<'a> RowChecker<'a> {
    fn new(codebook: &'a Codebook, plan: &'a Plan, max_examples: usize) -> Self {
        RowChecker {
            codebook,
            plan,
            rows: 0,
            findings: Findings::new(max_examples),
            tallies: codebook
                .variables
                .iter()
                .map(|v| Tally::new(v.categories.len()))
                .collect(),
            cells: vec![Cell::Blank; plan.columns.len()],
            categories: vec![None; plan.columns.len()],
            keys: KeySet::default(),
            key_text: String::new(),
        }
    }

    /// Check one record (already counted in `rows`).
    fn check(&mut self, record: &Record) {
        let (codebook, plan) = (self.codebook, self.plan);
        let row = record.row();
        if record.invalid_utf8() {
            self.findings
                .add("structure.encoding", Target::File, || Example {
                    row: Some(row),
                    case: case_of(plan, record),
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
            self.findings
                .add("structure.row-length", Target::File, || Example {
                    row: Some(row),
                    case: case_of(plan, record),
                    value: Some(detail),
                });
            return;
        }

        for ((col, cell), category) in plan
            .columns
            .iter()
            .zip(self.cells.iter_mut())
            .zip(self.categories.iter_mut())
        {
            (*cell, *category) = match col.field.and_then(|f| record.field(f)) {
                Some(text) => classify_counted(col, trim(text)),
                None => (Cell::Missing(MissingKind::NotAscertained), None),
            };
        }
        let view = CellRow {
            cells: &self.cells,
            plan,
            record,
        };
        for col in &plan.columns {
            let Some(field) = col.field else { continue };
            let universe = col.universe.as_ref().map_or(Tri::True, |u| u.eval(&view));
            let tally = &mut self.tallies[col.var];
            let outcome = route(col, self.cells[col.var], universe, tally);
            if let Some(rule) = outcome {
                tally.invalid += 1;
                self.findings
                    .add(rule, Target::Variable(col.var), || Example {
                        row: Some(row),
                        case: case_of(plan, record),
                        value: record.field(field).map(|s| s.to_string()),
                    });
            } else if let (Cell::Valid(seen), true) =
                (self.cells[col.var], universe != Tri::Unknown)
            {
                if let (Seen::Number(n), true) = (seen, col.statistics) {
                    tally.stats.push(n);
                }
                if let Some(c) = self.categories[col.var] {
                    tally.categories[c as usize] += 1;
                }
            }
        }
        for (i, check) in plan.checks.iter().enumerate() {
            let applies = check.when.as_ref().map_or(Tri::True, |w| w.eval(&view));
            if applies == Tri::True && check.assert.eval(&view) == Tri::False {
                self.findings
                    .add("consistency.failed", Target::Check(i), || Example {
                        row: Some(row),
                        case: case_of(plan, record),
                        value: Some(check_values(codebook, check.assert.variables(), &view)),
                    });
            }
        }
        if !plan.key.is_empty() {
            self.key_text.clear();
            let mut blank = false;
            for &k in &plan.key {
                let text = plan.columns[k]
                    .field
                    .and_then(|f| record.field(f))
                    .unwrap_or("");
                let text = trim(text);
                blank |= text.is_empty();
                self.key_text.push_str(text);
                self.key_text.push('\u{1f}');
            }
            if blank {
                self.findings
                    .add("structure.id-blank", Target::Key, || Example {
                        row: Some(row),
                        case: None,
                        value: Some(
                            self.key_text
                                .trim_end_matches('\u{1f}')
                                .replace('\u{1f}', "/"),
                        ),
                    });
            } else if !self.keys.insert(&self.key_text, plan.key.len()) {
                self.findings
                    .add("structure.id-duplicate", Target::Key, || Example {
                        row: Some(row),
                        case: case_of(plan, record),
                        value: case_of(plan, record),
                    });
            }
        }
    }
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
fn check_values(codebook: &Codebook, vars: &[usize], view: &CellRow) -> String {
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

#[cfg(test)]
mod tests {
    use super::KeySet;

    fn key(text: &str) -> String {
        format!("{text}\u{1f}")
    }

    #[test]
    fn serial_keys_repeat_exactly() {
        let mut keys = KeySet::default();
        for n in 1..=70_000u64 {
            assert!(keys.insert(&key(&format!("P{n:08}")), 1));
        }
        assert!(!keys.insert(&key("P00000001"), 1));
        assert!(!keys.insert(&key("P00070000"), 1));
        // Same number, other shapes: different keys.
        assert!(keys.insert(&key("P1"), 1));
        assert!(keys.insert(&key("Q00000001"), 1));
        assert!(keys.insert(&key("00000001"), 1));
        assert!(!keys.insert(&key("P1"), 1));
        assert!(!keys.insert(&key("00000001"), 1));
        assert!(keys.hashes.len() == 3);
    }

    #[test]
    fn sparse_serials_move_to_hashes_and_keep_their_repeats() {
        let mut keys = KeySet::default();
        let spread = |n: u64| key(&format!("{:012}", n * 1_000_003));
        for n in 0..2_000 {
            assert!(keys.insert(&spread(n), 1), "{n}");
        }
        assert!(matches!(keys.serial, super::Serial::Off));
        for n in 0..2_000 {
            assert!(!keys.insert(&spread(n), 1), "{n}");
        }
        assert!(keys.insert(&spread(2_000), 1));
    }

    #[test]
    fn composite_and_unnumbered_keys_are_hashed() {
        let mut keys = KeySet::default();
        assert!(keys.insert("H001\u{1f}1\u{1f}", 2));
        assert!(keys.insert("H001\u{1f}2\u{1f}", 2));
        assert!(!keys.insert("H001\u{1f}1\u{1f}", 2));
        let mut keys = KeySet::default();
        assert!(keys.insert(&key("abc"), 1));
        assert!(keys.insert(&key("abd1"), 1));
        assert!(!keys.insert(&key("abd1"), 1));
    }
}
