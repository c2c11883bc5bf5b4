//! The `--by` half of a tally: the cross-tabulation with its chi-square test, and the
//! by-group proportions or means for plots, with their disclosure flags.
//!
//! The cross-tabulation is protected as one array with its margins ([`suppress::Array`]).
//! The by-group proportions show each group's n (a column total) and p * n (the event cell),
//! so they follow the cross-tabulation's final pattern instead of flagging anything of their
//! own. The by-group means have one line: the groups' n plus the cases outside any group
//! (stated in the notes) make the summary's n.

use super::build::{code_text, interval_percent, percent, Disclose};
use super::model::*;
use super::pass::{Accumulated, ByLevel, Count};
use super::stats::{self, kish_effective_n, wilson, wilson_count, Z95};
use super::suppress::{self, Entry, Role, Status, Table};
use crate::codebook::model::{format_number, Variable};

/// The `--by` levels in table order, and for each the index of its accumulated column.
pub(super) fn by_levels(by: &Variable, met: &[ByLevel]) -> (Vec<Level>, Vec<usize>) {
    let mut order: Vec<usize> = (0..met.len()).collect();
    order.sort_by(|&a, &b| match (met[a], met[b]) {
        (ByLevel::Number(x), ByLevel::Number(y)) => x.total_cmp(&y),
        _ => a.cmp(&b),
    });
    let levels = order
        .iter()
        .map(|&i| match met[i] {
            ByLevel::Category(c) => {
                let category = &by.categories[c as usize];
                Level {
                    code: code_text(&category.code),
                    label: category.label.clone(),
                }
            }
            ByLevel::Number(x) => Level {
                code: format_number(x),
                label: by
                    .categories
                    .iter()
                    .find(|c| c.code.as_number() == Some(x))
                    .map_or_else(|| format_number(x), |c| c.label.clone()),
            },
        })
        .collect();
    (levels, order)
}

fn total(counts: impl Iterator<Item = Count>) -> Count {
    counts.fold(Count::default(), |mut t, c| {
        t.n += c.n;
        t.w += c.w;
        t.w2 += c.w2;
        t
    })
}

pub(super) fn cross(
    variable: &Variable,
    acc: &Accumulated,
    columns: &[Level],
    order: &[usize],
    weighted: bool,
    disclose: &mut Disclose,
) -> Crosstab {
    let amount = |c: &Count| if weighted { c.w } else { c.n as f64 };
    let categories = variable.categories.len();
    let row_totals: Vec<Count> = (0..categories)
        .map(|r| total(order.iter().map(|&c| acc.cross[c][r])))
        .collect();
    let column_totals: Vec<Count> = order
        .iter()
        .map(|&c| total(acc.cross[c].iter().copied()))
        .collect();
    let grand = total(column_totals.iter().copied());
    let counts: Vec<Vec<u64>> = (0..categories)
        .map(|r| order.iter().map(|&c| acc.cross[c][r].n).collect())
        .collect();
    let array = suppress::Array {
        rows: categories,
        columns: order.len(),
    };
    let table = array.table(&counts, |n| disclose.is_primary(n));
    let pattern = disclose.protect(&table);
    let status = |i: usize, j: usize| pattern.status[array.at(i, j)];
    // A percent over a hidden total would give the total back with the shown count.
    let row_shown = |r: usize| !status(r, array.columns).suppressed();
    let column_shown = |j: usize| !status(array.rows, j).suppressed();
    let mut make = |c: &Count, s: Status, row: Option<f64>, column: Option<f64>| {
        let small = disclose.small(c.n);
        if s.suppressed() {
            return CrossCell {
                small,
                suppressed: true,
                secondary: s.secondary(),
                ..CrossCell::default()
            };
        }
        CrossCell {
            count: Some(c.n),
            weighted_count: weighted.then_some(c.w),
            row_percent: row,
            column_percent: column,
            small,
            suppressed: false,
            secondary: false,
        }
    };
    let cells = (0..categories)
        .map(|r| {
            order
                .iter()
                .enumerate()
                .map(|(j, &c)| {
                    let cell = &acc.cross[c][r];
                    make(
                        cell,
                        status(r, j),
                        percent(amount(cell), amount(&row_totals[r])).filter(|_| row_shown(r)),
                        percent(amount(cell), amount(&column_totals[j]))
                            .filter(|_| column_shown(j)),
                    )
                })
                .collect()
        })
        .collect();
    let row_margins = row_totals
        .iter()
        .enumerate()
        .map(|(r, t)| {
            make(
                t,
                status(r, array.columns),
                percent(amount(t), amount(t)),
                percent(amount(t), amount(&grand)),
            )
        })
        .collect();
    let column_margins = column_totals
        .iter()
        .enumerate()
        .map(|(j, t)| {
            make(
                t,
                status(array.rows, j),
                percent(amount(t), amount(&grand)),
                percent(amount(t), amount(t)),
            )
        })
        .collect();
    Crosstab {
        rows: variable
            .categories
            .iter()
            .map(|c| Level {
                code: code_text(&c.code),
                label: c.label.clone(),
            })
            .collect(),
        columns: columns.to_vec(),
        cells,
        row_totals: row_margins,
        column_totals: column_margins,
        total: grand.n,
        weighted_total: weighted.then_some(grand.w),
        chi_square: None,
        rao_scott: None,
    }
}

/// Whether any cell or margin of the table is suppressed (primary or secondary).
fn any_suppressed(table: &Crosstab) -> bool {
    table
        .cells
        .iter()
        .flatten()
        .chain(&table.row_totals)
        .chain(&table.column_totals)
        .any(|c| c.suppressed)
}

/// Add the chi-square test (and, for a weighted table, its design-adjusted form) unless a
/// suppressed cell would make it a way back to the counts.
pub(super) fn with_test(
    mut table: Crosstab,
    acc: &Accumulated,
    order: &[usize],
    weighted: bool,
    notes: &mut Vec<String>,
) -> (Crosstab, bool) {
    let rows = table.rows.len();
    let counts: Vec<Vec<u64>> = (0..rows)
        .map(|r| order.iter().map(|&c| acc.cross[c][r].n).collect())
        .collect();
    let Some(test) = stats::chi_square(&counts) else {
        notes.push("no chi-square test: fewer than two non-empty rows or columns".to_string());
        return (table, false);
    };
    if any_suppressed(&table) {
        notes.push(
            "the chi-square test is withheld: with the margins it could reveal suppressed cells"
                .to_string(),
        );
        return (table, true);
    }
    if test.cochran_warning() {
        notes.push(format!(
            "{} of {} cells have an expected count below 5 (or one below 1): the chi-square \
             approximation is doubtful (Cochran's rule, common practice)",
            test.expected_below_5, test.cells
        ));
    }
    notes.push("the chi-square test uses the unweighted counts".to_string());
    if weighted {
        let sums = |f: fn(&Count) -> f64| -> Vec<Vec<f64>> {
            (0..rows)
                .map(|r| order.iter().map(|&c| f(&acc.cross[c][r])).collect())
                .collect()
        };
        let n = counts.iter().flatten().sum();
        match stats::rao_scott(&sums(|c| c.w), &sums(|c| c.w2), n) {
            Some(t) => {
                notes.push(
                    "the Rao-Scott tests allow for the unequal weights, each case taken as sampled \
                     on its own; they do not allow for clusters or strata. The second-order test \
                     also allows for design effects that differ between cells"
                        .to_string(),
                );
                table.rao_scott = Some(RaoScott {
                    statistic: t.statistic,
                    design_effect: t.design_effect,
                    corrected: t.corrected,
                    df: t.df,
                    p_value: t.p_value,
                    second_order: SecondOrder {
                        statistic: t.second_order,
                        df: t.second_order_df,
                        p_value: t.second_order_p_value,
                    },
                });
            }
            None => notes
                .push("no Rao-Scott test: fewer than two rows or columns carry weight".to_string()),
        }
    }
    table.chi_square = Some(ChiSquare {
        statistic: test.statistic,
        df: test.df,
        p_value: test.p_value,
        cramers_v: stats::cramers_v(&test),
        expected_below_5: test.expected_below_5,
        cells: test.cells,
        cochran_warning: test.cochran_warning(),
    });
    (table, false)
}

/// The percent in the `event` category per group, hidden where the cross-tabulation `table`
/// hides the group's column total or its event cell.
pub(super) fn group_proportions(
    variable: &Variable,
    event: usize,
    acc: &Accumulated,
    table: &Crosstab,
    levels: &[Level],
    order: &[usize],
    weighted: bool,
) -> ByGroup {
    let groups = order
        .iter()
        .zip(levels)
        .enumerate()
        .map(|(j, (&c, level))| {
            let all = total(acc.cross[c].iter().copied());
            let hit = acc.cross[c][event];
            let (n, e) = (&table.column_totals[j], &table.cells[event][j]);
            let small = n.small || e.small;
            let primary = |x: &CrossCell| x.suppressed && !x.secondary;
            let status = match (primary(n) || primary(e), n.suppressed || e.suppressed) {
                (true, _) => Status::Primary,
                (false, true) => Status::Secondary,
                (false, false) => Status::Shown,
            };
            let (estimate, ci) = if weighted {
                let p = (all.w > 0.0).then(|| hit.w / all.w);
                let n_eff = kish_effective_n(all.w, all.w2);
                (p, p.zip(n_eff).and_then(|(p, n)| wilson(p, n, Z95)))
            } else {
                (
                    (all.n > 0).then(|| hit.n as f64 / all.n as f64),
                    wilson_count(hit.n, all.n),
                )
            };
            let (low, high) = interval_percent(ci);
            group(
                level,
                &all,
                weighted,
                estimate.map(|p| 100.0 * p),
                low,
                high,
                small,
                status,
            )
        })
        .collect();
    let category = &variable.categories[event];
    ByGroup {
        statistic: GroupStatistic::Proportion,
        event: Some(Level {
            code: code_text(&category.code),
            label: category.label.clone(),
        }),
        groups,
    }
}

/// The mean per group. One line protects the groups' n: with the summary's n and the cases
/// outside any group, both in the report, a lone hidden n would come back.
pub(super) fn group_means(
    acc: &Accumulated,
    levels: &[Level],
    order: &[usize],
    weighted: bool,
    disclose: &mut Disclose,
) -> ByGroup {
    let mut table = Table::default();
    for &c in order {
        let n = acc.group_running[c].count;
        table.push(Entry::new(n, Role::Cell, disclose.is_primary(n)));
    }
    let all = table.push(Entry::fixed(acc.unit.count, Role::Total));
    table.line(0..=all);
    let pattern = disclose.protect(&table);
    let groups = order
        .iter()
        .zip(levels)
        .zip(&pattern.status)
        .map(|((&c, level), &status)| {
            let running = &acc.group_running[c];
            let count = Count {
                n: running.count,
                w: running.sum_w,
                w2: running.sum_w2,
            };
            let small = disclose.small(count.n);
            let ci = running.mean_interval();
            group(
                level,
                &count,
                weighted,
                running.mean(),
                ci.map(|i| i.0),
                ci.map(|i| i.1),
                small,
                status,
            )
        })
        .collect();
    ByGroup {
        statistic: GroupStatistic::Mean,
        event: None,
        groups,
    }
}

#[allow(clippy::too_many_arguments)]
fn group(
    level: &Level,
    count: &Count,
    weighted: bool,
    estimate: Option<f64>,
    ci95_low: Option<f64>,
    ci95_high: Option<f64>,
    small: bool,
    status: Status,
) -> Group {
    let mut group = Group {
        code: level.code.clone(),
        label: level.label.clone(),
        n: Some(count.n),
        weighted_n: weighted.then_some(count.w),
        effective_n: if weighted {
            kish_effective_n(count.w, count.w2)
        } else {
            None
        },
        estimate,
        ci95_low,
        ci95_high,
        small,
        suppressed: status.suppressed(),
        secondary: status.secondary(),
    };
    if status.suppressed() {
        group.n = None;
        group.weighted_n = None;
        group.effective_n = None;
        group.estimate = None;
        group.ci95_low = None;
        group.ci95_high = None;
    }
    group
}
