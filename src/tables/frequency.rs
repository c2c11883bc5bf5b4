//! The frequency table of one variable (without `--by`), with its disclosure control.
//!
//! The table publishes, besides its rows, two sums: the valid total (the categories added up;
//! not a row, but every valid percent is a count over it) and the overall total, the number
//! of cases tabulated, which the report states anyway. So its lines for secondary suppression
//! ([`super::suppress`]) are the categories with the valid total, and the valid total with
//! every other row (missing kinds, blanks, invalid cells) and the overall total, which is
//! fixed. A numeric variable has one `Valid values` row, which is its valid total.

use super::build::{code_text, interval_percent, percent, Disclose};
use super::model::*;
use super::pass::{Accumulated, Count};
use super::stats::{kish_effective_n, wilson, wilson_count, Z95};
use super::suppress::{Entry, Pattern, Role, Status, Table};
use crate::codebook::model::{Codebook, MissingKind, Variable};

/// The order missing kinds are listed in a frequency table.
const MISSING_ORDER: [MissingKind; 5] = [
    MissingKind::Refused,
    MissingKind::DontKnow,
    MissingKind::NotAscertained,
    MissingKind::Other,
    MissingKind::Skipped,
];

/// A row before disclosure control: what it counts, and how many.
struct Draft {
    kind: RowKind,
    code: Option<String>,
    label: String,
    missing_kind: Option<&'static str>,
    count: Count,
}

/// What every row's figures are computed from.
struct Basis<'a> {
    acc: &'a Accumulated,
    weighted: bool,
    valid: Count,
    valid_n_eff: Option<f64>,
    /// The valid total is suppressed: no figure over it may be shown.
    valid_hidden: bool,
}

impl Basis<'_> {
    /// Count and percents of all cases, which every shown row has.
    fn base(&self, c: &Count) -> Figures {
        let all = &self.acc.all;
        Figures {
            count: Some(c.n),
            percent: percent(c.n as f64, all.n as f64),
            weighted_count: self.weighted.then_some(c.w),
            weighted_percent: if self.weighted {
                percent(c.w, all.w)
            } else {
                None
            },
            ..Figures::default()
        }
    }

    /// A shown category: the base figures, and those over the valid total unless it is hidden.
    fn category(&self, c: &Count, cumulative: Option<f64>) -> Figures {
        if self.valid_hidden {
            return self.base(c);
        }
        let ci = if self.weighted {
            self.valid_n_eff
                .and_then(|n| wilson(c.w / self.valid.w, n, Z95))
        } else {
            wilson_count(c.n, self.valid.n)
        };
        let (ci95_low, ci95_high) = interval_percent(ci);
        Figures {
            valid_percent: percent(c.n as f64, self.valid.n as f64),
            cumulative_valid_percent: cumulative.map(|s| s.min(100.0)),
            weighted_valid_percent: if self.weighted {
                percent(c.w, self.valid.w)
            } else {
                None
            },
            ci95_low,
            ci95_high,
            ..self.base(c)
        }
    }

    /// The `Valid values` row of a numeric variable.
    fn valid_row(&self, c: &Count) -> Figures {
        Figures {
            valid_percent: (c.n > 0).then_some(100.0),
            weighted_valid_percent: (self.weighted && c.n > 0).then_some(100.0),
            ..self.base(c)
        }
    }
}

pub(super) fn frequency_table(
    codebook: &Codebook,
    variable: &Variable,
    targets: &super::pass::Targets,
    acc: &Accumulated,
    disclose: &mut Disclose,
) -> Frequency {
    let weighted = targets.weight.is_some();
    let valid = acc.valid.iter().fold(Count::default(), |mut t, c| {
        t.n += c.n;
        t.w += c.w;
        t.w2 += c.w2;
        t
    });
    let drafts = drafts(codebook, variable, targets, acc);
    let (pattern, valid_status) = protect(&drafts, valid.n, acc.all.n, disclose);
    let basis = Basis {
        acc,
        weighted,
        valid,
        valid_n_eff: kish_effective_n(valid.w, valid.w2),
        valid_hidden: valid_status.suppressed(),
    };
    let mut rows = Vec::with_capacity(drafts.len());
    let mut cumulative = Some(0.0);
    for (draft, &status) in drafts.into_iter().zip(&pattern.status) {
        let c = &draft.count;
        let small = disclose.small(c.n);
        if draft.kind == RowKind::Category {
            let p = percent(c.n as f64, valid.n as f64);
            cumulative = match (cumulative, p, status.suppressed()) {
                (Some(sum), Some(p), false) => Some(sum + p),
                _ => None,
            };
        }
        let figures = match (status.suppressed(), draft.kind) {
            (true, _) => Figures::default(),
            (false, RowKind::Category) => basis.category(c, cumulative),
            (false, RowKind::Valid) => basis.valid_row(c),
            (false, _) => basis.base(c),
        };
        rows.push(FrequencyRow {
            kind: draft.kind,
            code: draft.code,
            label: draft.label,
            missing_kind: draft.missing_kind,
            figures,
            small,
            suppressed: status.suppressed(),
            secondary: status.secondary(),
        });
    }
    let shown = !basis.valid_hidden;
    Frequency {
        rows,
        total: acc.all.n,
        valid: shown.then_some(valid.n),
        weighted_total: weighted.then_some(acc.all.w),
        weighted_valid: (weighted && shown).then_some(valid.w),
        valid_effective_n: if weighted && shown {
            basis.valid_n_eff
        } else {
            None
        },
        valid_suppressed: basis.valid_hidden,
    }
}

/// The table's pattern (one status per row) and the valid total's status: the rows, the valid
/// total (the `Valid values` row itself for a numeric variable) and the fixed overall total.
fn protect(drafts: &[Draft], valid: u64, total: u64, disclose: &mut Disclose) -> (Pattern, Status) {
    let mut table = Table::default();
    // The rows are the first entries, in table order: entry i is row i.
    for d in drafts {
        table.push(Entry::new(
            d.count.n,
            Role::Cell,
            disclose.is_primary(d.count.n),
        ));
    }
    let rows_of = |wanted: fn(RowKind) -> bool| {
        drafts
            .iter()
            .enumerate()
            .filter(move |(_, d)| wanted(d.kind))
            .map(|(i, _)| i)
    };
    let valid_entry = match drafts.iter().position(|d| d.kind == RowKind::Valid) {
        Some(i) => i,
        None => {
            let v = table.push(Entry::new(valid, Role::Margin, false));
            table.line(rows_of(|k| k == RowKind::Category).chain([v]));
            v
        }
    };
    let total = table.push(Entry::fixed(total, Role::Total));
    let others = rows_of(|k| !matches!(k, RowKind::Category | RowKind::Valid));
    table.line(std::iter::once(valid_entry).chain(others).chain([total]));
    let pattern = disclose.protect(&table);
    let valid_status = pattern.status[valid_entry];
    (pattern, valid_status)
}

/// The rows in table order: categories (or the valid row), each missing kind, blanks, invalid.
fn drafts(
    codebook: &Codebook,
    variable: &Variable,
    targets: &super::pass::Targets,
    acc: &Accumulated,
) -> Vec<Draft> {
    let mut drafts = Vec::new();
    if targets.numeric {
        drafts.push(Draft {
            kind: RowKind::Valid,
            code: None,
            label: "Valid values".to_string(),
            missing_kind: None,
            count: acc.valid[0],
        });
    } else {
        for (category, c) in variable.categories.iter().zip(&acc.valid) {
            drafts.push(Draft {
                kind: RowKind::Category,
                code: Some(code_text(&category.code)),
                label: category.label.clone(),
                missing_kind: None,
                count: *c,
            });
        }
    }
    let blank_meaning = variable.blank_meaning(&codebook.dataset);
    for kind in MISSING_ORDER {
        let c = acc.missing[kind as usize];
        let declared: Vec<_> = variable.missing.iter().filter(|m| m.kind == kind).collect();
        let blank_here = blank_meaning == Some(kind);
        if declared.is_empty() && !blank_here && c.n == 0 {
            continue;
        }
        let mut codes: Vec<String> = declared.iter().map(|m| code_text(&m.code)).collect();
        let mut labels: Vec<String> = declared.iter().map(|m| m.label.clone()).collect();
        if blank_here {
            codes.push("blank".to_string());
            if labels.is_empty() {
                labels.push(format!("Blank ({})", kind.name()));
            }
        }
        drafts.push(Draft {
            kind: RowKind::Missing,
            code: Some(codes.join(", ")),
            label: labels.join("; "),
            missing_kind: Some(kind.name()),
            count: c,
        });
    }
    if acc.blank.n > 0 {
        drafts.push(Draft {
            kind: RowKind::Blank,
            code: Some("blank".to_string()),
            label: "Blank (no blank meaning declared)".to_string(),
            missing_kind: None,
            count: acc.blank,
        });
    }
    if acc.invalid.n > 0 {
        drafts.push(Draft {
            kind: RowKind::Invalid,
            code: None,
            label: "Invalid (value findings; run `concord check`)".to_string(),
            missing_kind: None,
            count: acc.invalid,
        });
    }
    drafts
}
