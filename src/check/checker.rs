//! Checking one record against the plan, and the counts that build up as records pass.
//!
//! Per row, cells are classified on their own (value rules) in one pass over the record's
//! fields, and cells of variables without a universe are routed and counted straight away.
//! Cells of routed variables wait until every cell is classified, because a universe reads
//! other cells (and a cell with a value finding counts as missing there); then the checks
//! run. Buffers are reused from row to row and nothing allocates unless a finding keeps an
//! example. Most cells are short codes of variables that only need counting; for those
//! fields each short whole number's counter and category slot are worked out when the
//! checker is made (an [`Action`]), so such a cell costs a parse and two increments.
//!
//! A [`RowChecker`] holds only what the rows add up to, so several can check parts of one
//! file on different threads and be [merged](RowChecker::merge) afterwards. Keys are the
//! exception: repeats depend on file order, so the caller classifies them ([`super::keys`])
//! and hands the result in.

use super::class::{classify_class, short_whole, Class, TAGS};
use super::findings::{Example, Findings, Target};
use super::keys::{key_text, KeyStatus};
use super::plan::Plan;
use super::route::{
    COUNTERS, FINDING, FINDING_RULES, GATE_UNKNOWN, INVALID, MISSING, SKIPPED, VALID,
};

const _: () = assert!(COUNTERS <= FINDING as usize);
use super::row::ClassRow;
use super::run::Pass;
use super::tally::{Running, Tally};
use crate::codebook::model::{Codebook, Kind, MissingKind};
use crate::condition::{Row, Tri, Value};
use crate::data::Record;

/// What the loop needs of one record field, kept together (a column's full plan is large,
/// and reading it for every cell would touch a cache line per variable per row).
#[derive(Clone, Copy)]
struct FieldUse<'a> {
    /// The column's table of short whole numbers.
    quick: &'a [Class],
    /// Packed outcomes by tag when the universe is true (the only case for a variable
    /// without a universe).
    routes: [u8; TAGS],
    var: u32,
    /// The field is not a codebook variable (or repeats a header name).
    unused: bool,
    /// The variable has a universe: route it after the whole row is classified.
    routed: bool,
    /// A universe or check reads the variable (or it has a universe): keep its class for
    /// the rest of the row.
    kept: bool,
    statistics: bool,
    /// Where the variable's category counts start in `Counts::categories`.
    categories: u32,
    /// Where the field's [actions](Action) start in `RowChecker::actions`, and how many
    /// (0: none, every cell goes the general way).
    actions: u32,
    actions_len: u32,
}

/// What a short whole number in a field comes to, decided once per field and number for a
/// field whose cells need nothing but counting (no universe, not read by a condition, no
/// statistics): the counter to add to, and the category slot (the sink slot when none).
/// [`SLOW`] marks numbers that need more (a finding with its example); they, and every cell
/// that is not a short whole number, go the general way.
type Action = u32;
const SLOW: Action = 1 << 4;
const ACTION_COUNTER: Action = 0xf;
const ACTION_SLOT_SHIFT: u32 = 5;

/// Counters of one column: the routing counters, then room up to [`FINDING`] so that any
/// packed counter outcome indexes it without a bounds check.
type Counters = [u64; FINDING as usize];

/// What the rows add up to.
struct Counts {
    /// Per record field (the loop walks fields and counters together); a variable's are at
    /// its column's field.
    counters: Vec<Counters>,
    /// Every variable's category counts, one after another.
    categories: Vec<u64>,
    /// Where each variable's category counts start.
    offsets: Vec<usize>,
    stats: Vec<Running>,
}

pub struct RowChecker<'a> {
    codebook: &'a Codebook,
    plan: &'a Plan,
    pub rows: u64,
    findings: Findings,
    counts: Counts,
    /// Per variable: the class of its cell in the current row, and its number.
    classes: Vec<Class>,
    numbers: Vec<f64>,
    /// Per record field.
    fields: Vec<FieldUse<'a>>,
    /// Every field's actions, one field after another.
    actions: Vec<Action>,
    /// Variables with a universe and a column.
    routed: Vec<usize>,
    key_text: String,
}

impl<'a> RowChecker<'a> {
    pub fn new(codebook: &'a Codebook, plan: &'a Plan, max_examples: usize) -> Self {
        let mut offsets = Vec::with_capacity(plan.columns.len());
        let mut total = 0;
        for v in &codebook.variables {
            offsets.push(total);
            total += v.categories.len();
        }
        let unused = FieldUse {
            quick: &[],
            routes: [0; TAGS],
            var: 0,
            unused: true,
            routed: false,
            kept: false,
            statistics: false,
            categories: 0,
            actions: 0,
            actions_len: 0,
        };
        let mut read = vec![false; plan.columns.len()];
        let conditions = plan.columns.iter().filter_map(|c| c.universe.as_ref());
        let checks = plan
            .checks
            .iter()
            .flat_map(|c| std::iter::once(&c.assert).chain(&c.when));
        for condition in conditions.chain(checks) {
            for &v in condition.variables() {
                read[v] = true;
            }
        }
        let mut fields = Vec::new();
        for col in &plan.columns {
            if let Some(f) = col.field {
                if fields.len() <= f {
                    fields.resize(f + 1, unused);
                }
                fields[f] = FieldUse {
                    quick: col.quick.table(),
                    routes: *col.routes.under(Tri::True),
                    var: col.var as u32,
                    unused: false,
                    routed: col.universe.is_some(),
                    kept: read[col.var] || col.universe.is_some(),
                    statistics: col.statistics,
                    categories: offsets[col.var] as u32,
                    actions: 0,
                    actions_len: 0,
                };
            }
        }
        // The last category slot is a sink for cells that count towards no category.
        let sink = total;
        let mut actions = Vec::new();
        // (Slots must fit an action's bits: far beyond any codebook, but checked.)
        let slots_fit = (sink as u64) < 1 << (32 - ACTION_SLOT_SHIFT);
        for field in fields.iter_mut() {
            if !slots_fit || field.unused || field.kept || field.routed || field.statistics {
                continue;
            }
            field.actions = actions.len() as u32;
            field.actions_len = field.quick.len() as u32;
            actions.extend(field.quick.iter().map(|class| {
                let outcome = field.routes[class.tag()];
                match class.category() {
                    _ if outcome >= FINDING => SLOW,
                    Some(c) if outcome == VALID as u8 => {
                        let slot = field.categories as usize + c as usize;
                        (slot as Action) << ACTION_SLOT_SHIFT
                    }
                    _ => Action::from(outcome) | (sink as Action) << ACTION_SLOT_SHIFT,
                }
            }));
        }
        let vars = plan.columns.len();
        RowChecker {
            codebook,
            plan,
            rows: 0,
            findings: Findings::new(max_examples),
            counts: Counts {
                counters: vec![[0; FINDING as usize]; fields.len()],
                categories: vec![0; total + 1],
                offsets,
                stats: vec![Running::default(); vars],
            },
            // Absent columns keep this class: their cells are not ascertained.
            classes: vec![Class::NOT_ASCERTAINED; vars],
            numbers: vec![0.0; vars],
            fields,
            actions,
            routed: plan
                .columns
                .iter()
                .filter(|c| c.universe.is_some() && c.field.is_some())
                .map(|c| c.var)
                .collect(),
            key_text: String::new(),
        }
    }

    /// Check one record (already counted in `rows`) whose key is `key`.
    pub fn check(&mut self, record: &Record, key: KeyStatus) {
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
        if let Some(detail) = ragged(plan, record) {
            self.findings
                .add("structure.row-length", Target::File, || Example {
                    row: Some(row),
                    case: case_of(plan, record),
                    value: Some(detail),
                });
            return;
        }

        let Counts {
            counters,
            categories,
            stats,
            ..
        } = &mut self.counts;
        let walk = record.fields().zip(&self.fields).zip(counters.iter_mut());
        for ((text, field), counter) in walk {
            if field.actions_len != 0 {
                if let Some(n) = short_whole(text).filter(|&n| n < field.actions_len as usize) {
                    let action = self.actions[field.actions as usize + n];
                    if action & SLOW == 0 {
                        counter[(action & ACTION_COUNTER) as usize] += 1;
                        categories[(action >> ACTION_SLOT_SHIFT) as usize] += 1;
                        continue;
                    }
                }
            }
            if field.unused {
                continue;
            }
            let var = field.var as usize;
            let mut number = 0.0;
            let class = classify_class(field.quick, &plan.columns, var, text, &mut number);
            if field.kept {
                self.classes[var] = class;
                self.numbers[var] = number;
            }
            if field.routed {
                continue;
            }
            let outcome = field.routes[class.tag()];
            if outcome == VALID as u8 {
                counter[VALID] += 1;
                if field.statistics && class.is_number() {
                    stats[var].push(number);
                }
                if let Some(c) = class.category() {
                    categories[field.categories as usize + c as usize] += 1;
                }
            } else if outcome < FINDING {
                counter[usize::from(outcome)] += 1;
            } else {
                counter[INVALID] += 1;
                finding(&mut self.findings, plan, var, outcome, record);
            }
        }
        let view = ClassRow {
            classes: &self.classes,
            numbers: &self.numbers,
            plan,
            record,
        };
        for &var in &self.routed {
            let col = &plan.columns[var];
            let universe = col.universe.as_ref().map_or(Tri::True, |u| u.eval(&view));
            let class = self.classes[var];
            let outcome = col.routes.under(universe)[class.tag()];
            let f = col.field.expect("routed variables have a column");
            let counter = &mut self.counts.counters[f];
            if outcome == VALID as u8 {
                counter[VALID] += 1;
                if col.statistics && class.is_number() {
                    self.counts.stats[var].push(self.numbers[var]);
                }
                if let Some(c) = class.category() {
                    self.counts.categories[self.fields[f].categories as usize + c as usize] += 1;
                }
            } else if outcome < FINDING {
                counter[usize::from(outcome)] += 1;
            } else {
                counter[INVALID] += 1;
                finding(&mut self.findings, plan, var, outcome, record);
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
        match key {
            KeyStatus::None | KeyStatus::Fresh => {}
            KeyStatus::Blank => {
                key_text(plan, record, &mut self.key_text);
                let text = &self.key_text;
                self.findings
                    .add("structure.id-blank", Target::Key, || Example {
                        row: Some(row),
                        case: None,
                        value: Some(text.trim_end_matches('\u{1f}').replace('\u{1f}', "/")),
                    });
            }
            KeyStatus::Repeat => {
                self.findings
                    .add("structure.id-duplicate", Target::Key, || Example {
                        row: Some(row),
                        case: case_of(plan, record),
                        value: case_of(plan, record),
                    });
            }
        }
    }

    /// Hand over the running statistics of the rows checked since the last call (a chunk
    /// of the file) in `out`, and start afresh. The caller combines chunks in file order,
    /// so the result does not depend on which thread checked which chunk.
    pub fn take_statistics(&mut self, out: &mut Vec<Running>) {
        out.clear();
        out.resize(self.counts.stats.len(), Running::default());
        std::mem::swap(&mut self.counts.stats, out);
    }

    /// Put the statistics of the whole file, combined by the caller, in place for
    /// [`finish`](Self::finish).
    pub fn set_statistics(&mut self, stats: Vec<Running>) {
        debug_assert_eq!(stats.len(), self.counts.stats.len());
        self.counts.stats = stats;
    }

    /// Add what `other` counted (rows checked elsewhere) to this checker. Statistics are
    /// not merged here: they are taken chunk by chunk ([`take_statistics`](Self::take_statistics)).
    pub fn merge(&mut self, other: RowChecker) {
        self.rows += other.rows;
        self.findings.merge(other.findings);
        let (mine, theirs) = (&mut self.counts, other.counts);
        for (a, b) in mine.counters.iter_mut().zip(theirs.counters) {
            for (x, y) in a.iter_mut().zip(b) {
                *x += y;
            }
        }
        for (x, y) in mine.categories.iter_mut().zip(theirs.categories) {
            *x += y;
        }
        debug_assert!(theirs.stats.iter().all(|s| s.count == 0));
    }

    /// The counts as tallies, for the report.
    pub fn finish(self) -> Pass {
        let Counts {
            counters,
            categories,
            offsets,
            stats,
        } = self.counts;
        let plan = self.plan;
        let tallies = stats
            .into_iter()
            .enumerate()
            .map(|(var, stats)| {
                let c = plan.columns[var]
                    .field
                    .map_or([0; FINDING as usize], |f| counters[f]);
                let start = offsets[var];
                // (The last slot is the sink.)
                let end = offsets
                    .get(var + 1)
                    .copied()
                    .unwrap_or(categories.len() - 1);
                let categories = categories[start..end].to_vec();
                let mut missing = [0; 5];
                for (k, slot) in missing.iter_mut().enumerate().skip(1) {
                    *slot = c[MISSING + k];
                }
                Tally {
                    valid: c[VALID],
                    skipped: c[SKIPPED],
                    gate_unknown: c[GATE_UNKNOWN],
                    missing,
                    invalid: c[INVALID],
                    categories,
                    stats,
                }
            })
            .collect();
        Pass {
            rows: self.rows,
            findings: self.findings,
            tallies,
        }
    }
}

/// Report a cell of `var` that is a finding (`outcome` packed, at least [`FINDING`]).
#[cold]
#[inline(never)]
fn finding(findings: &mut Findings, plan: &Plan, var: usize, outcome: u8, record: &Record) {
    let rule = FINDING_RULES[usize::from(outcome - FINDING)];
    findings.add(rule, Target::Variable(var), || Example {
        row: Some(record.row()),
        case: case_of(plan, record),
        value: plan.columns[var]
            .field
            .and_then(|f| record.field(f))
            .map(str::to_string),
    });
}

/// A row-length problem of `record`, described.
fn ragged(plan: &Plan, record: &Record) -> Option<String> {
    match plan.expected_fields {
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
    }
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
fn check_values(codebook: &Codebook, vars: &[usize], view: &dyn Row) -> String {
    vars.iter()
        .map(|&v| {
            let shown = match view.value(v) {
                Value::Number(n) if codebook.variables[v].kind == Kind::Date => {
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

// `MissingKind` indexes the counters: skipped must stay first, counted apart.
const _: () = assert!(MissingKind::Skipped as usize == 0);
