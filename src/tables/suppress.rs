//! Secondary (complementary) cell suppression: hiding further figures of a table so that no
//! suppressed figure can be worked out by subtraction along one of the table's sums.
//!
//! Primary suppression hides a cell with too few cases, but the table's totals stay visible:
//! if the cell is the only hidden figure of its row, the row total less the other cells gives
//! it back. The rule here is common practice in statistical disclosure control (secondary or
//! complementary suppression); see e.g. Hundepool et al. (2012) Statistical Disclosure
//! Control, Wiley, ch. 4 — reference from memory.
//!
//! A table is a list of [`Entry`]s (its cells and its margins) and of *lines*: sets of entries
//! where one is the sum of the others (a row of a cross-tabulation with its row total, the
//! categories of a frequency table with the valid total). Starting from the primary pattern,
//! the lines are visited in order, again and again until a whole visit changes nothing; a
//! line with exactly one hidden entry gets one more: the visible entry with the smallest
//! positive count, inner cells before margins before the table total ([`Role`]), ties going to
//! the first in table order. A line with no positive entry left gets its smallest (zero)
//! entry instead, so that it never keeps a lone hidden entry. Each step hides one more entry,
//! so the visits end.
//!
//! The limit: every line then holds no hidden entry or at least two, so no single subtraction
//! gives a hidden figure back, but the rule does not guarantee a protection interval. Several
//! lines taken together (a linear-programming attack) can still narrow a hidden figure down,
//! sometimes to its value. Entries that the report publishes elsewhere whatever the table
//! shows (the number of cases tabulated) are fixed ([`Entry`]): never chosen, always visible;
//! a line whose only other entries are fixed cannot be protected, and [`Pattern::unprotected`]
//! counts such lines so the report can say so.

/// What an entry is to its table, in the order complements are preferred.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord)]
pub enum Role {
    /// An inner cell (a cross-tabulation cell, a frequency row).
    Cell,
    /// A row or column total, or a frequency table's valid total.
    Margin,
    /// The table's grand total.
    Total,
}

/// One published figure of a table.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Entry {
    /// Unweighted cases; the complement is chosen on these.
    pub count: u64,
    pub role: Role,
    /// Hidden by primary suppression (too few cases).
    pub primary: bool,
    /// Published elsewhere in the report whatever the table shows: never hidden, never chosen.
    pub fixed: bool,
}

impl Entry {
    pub fn new(count: u64, role: Role, primary: bool) -> Self {
        Entry {
            count,
            role,
            primary,
            fixed: false,
        }
    }

    /// An entry the report publishes elsewhere.
    pub fn fixed(count: u64, role: Role) -> Self {
        Entry {
            count,
            role,
            primary: false,
            fixed: true,
        }
    }
}

/// Whether an entry is shown, and if not, why.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Status {
    Shown,
    /// Too few cases of its own.
    Primary,
    /// Hidden as a complement, so that a primary one cannot be recovered.
    Secondary,
}

impl Status {
    pub fn suppressed(self) -> bool {
        self != Status::Shown
    }

    pub fn secondary(self) -> bool {
        self == Status::Secondary
    }
}

/// The final suppression pattern of a table.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Pattern {
    /// One per entry, in the table's order.
    pub status: Vec<Status>,
    /// Lines left with a lone hidden entry because every other entry is fixed or hidden.
    pub unprotected: u64,
}

impl Pattern {
    /// Entries hidden for too few cases (fixed entries are never hidden).
    pub fn primary(&self) -> u64 {
        self.count(Status::Primary)
    }

    /// Entries hidden as complements.
    pub fn secondary(&self) -> u64 {
        self.count(Status::Secondary)
    }

    fn count(&self, status: Status) -> u64 {
        self.status.iter().filter(|s| **s == status).count() as u64
    }
}

/// A table's entries and its lines (sets of entry indices where one entry is the sum of the
/// others).
#[derive(Debug, Clone, Default)]
pub struct Table {
    entries: Vec<Entry>,
    lines: Vec<Vec<usize>>,
}

impl Table {
    /// Add an entry; returns its index. Indices are the table order that breaks ties.
    pub fn push(&mut self, entry: Entry) -> usize {
        self.entries.push(entry);
        self.entries.len() - 1
    }

    /// Add a line over entries already pushed.
    pub fn line(&mut self, members: impl IntoIterator<Item = usize>) {
        self.lines.push(members.into_iter().collect());
    }

    /// The primary pattern completed by secondary suppression (see the module docs).
    pub fn protect(&self) -> Pattern {
        let mut status: Vec<Status> = self
            .entries
            .iter()
            .map(|e| {
                if e.primary && !e.fixed {
                    Status::Primary
                } else {
                    Status::Shown
                }
            })
            .collect();
        loop {
            let mut added = false;
            for line in &self.lines {
                if hidden(line, &status) != 1 {
                    continue;
                }
                if let Some(e) = self.complement(line, &status) {
                    status[e] = Status::Secondary;
                    added = true;
                }
            }
            if !added {
                break;
            }
        }
        let unprotected = self
            .lines
            .iter()
            .filter(|line| hidden(line, &status) == 1)
            .count() as u64;
        Pattern {
            status,
            unprotected,
        }
    }

    /// The entry of `line` to hide next: positive counts first, then inner cells before
    /// margins, then the smallest count, then table order.
    fn complement(&self, line: &[usize], status: &[Status]) -> Option<usize> {
        line.iter()
            .copied()
            .filter(|&e| !status[e].suppressed() && !self.entries[e].fixed)
            .min_by_key(|&e| {
                let entry = &self.entries[e];
                (entry.count == 0, entry.role, entry.count, e)
            })
    }
}

fn hidden(line: &[usize], status: &[Status]) -> usize {
    line.iter().filter(|&&e| status[e].suppressed()).count()
}

/// The layout of a cross-tabulation as one (rows + 1) x (columns + 1) array: the inner cells,
/// each row's total in the last column, the column totals in the last row, the grand total in
/// the corner. Entries are numbered row by row.
#[derive(Debug, Clone, Copy)]
pub struct Array {
    pub rows: usize,
    pub columns: usize,
}

impl Array {
    /// The entry at row `i` (`rows` for the column totals), column `j` (`columns` for the row
    /// totals).
    pub fn at(&self, i: usize, j: usize) -> usize {
        i * (self.columns + 1) + j
    }

    /// The table of `cells[i][j]` with its margins: every row and every column of the array is
    /// a line. The grand total is fixed: it follows from the number of cases tabulated and the
    /// cases left out, which the report states. A cell missing from `cells` counts as 0.
    pub fn table(&self, cells: &[Vec<u64>], primary: impl Fn(u64) -> bool) -> Table {
        let cell = |i: usize, j: usize| cells.get(i).and_then(|r| r.get(j)).copied().unwrap_or(0);
        let row_totals: Vec<u64> = (0..self.rows)
            .map(|i| (0..self.columns).map(|j| cell(i, j)).sum())
            .collect();
        let column_totals: Vec<u64> = (0..self.columns)
            .map(|j| (0..self.rows).map(|i| cell(i, j)).sum())
            .collect();
        let mut table = Table::default();
        for (i, &total) in row_totals.iter().enumerate() {
            for j in 0..self.columns {
                let n = cell(i, j);
                table.push(Entry::new(n, Role::Cell, primary(n)));
            }
            table.push(Entry::new(total, Role::Margin, primary(total)));
        }
        for &total in &column_totals {
            table.push(Entry::new(total, Role::Margin, primary(total)));
        }
        table.push(Entry::fixed(row_totals.iter().sum(), Role::Total));
        for i in 0..=self.rows {
            table.line((0..=self.columns).map(|j| self.at(i, j)));
        }
        for j in 0..=self.columns {
            table.line((0..=self.rows).map(|i| self.at(i, j)));
        }
        table
    }
}

#[cfg(test)]
mod tests {
    use super::Status::{Primary as P, Secondary as S, Shown as O};
    use super::*;

    fn below(threshold: u64) -> impl Fn(u64) -> bool {
        move |n| n > 0 && n < threshold
    }

    /// The inner pattern of a cross-tabulation, with the row totals as a last column and the
    /// column totals as a last row (the grand total is left out: it is fixed).
    fn cross(cells: &[Vec<u64>], threshold: u64) -> (Vec<Vec<Status>>, u64) {
        let array = Array {
            rows: cells.len(),
            columns: cells[0].len(),
        };
        let pattern = array.table(cells, below(threshold)).protect();
        let grid = (0..=array.rows)
            .map(|i| {
                (0..=array.columns)
                    .filter(|&j| i < array.rows || j < array.columns)
                    .map(|j| pattern.status[array.at(i, j)])
                    .collect()
            })
            .collect();
        (grid, pattern.unprotected)
    }

    /// Every line of the table has no hidden entry or at least two.
    fn no_lone_entry(table: &Table, pattern: &Pattern) -> bool {
        table.lines.iter().all(|l| hidden(l, &pattern.status) != 1)
    }

    #[test]
    fn a_small_cell_gets_the_rectangle_that_hides_it() {
        // Worked by hand from the rule above (common practice). Lines in order: rows 0, 1, 2,
        // the column totals, then columns 0, 1, 2, the row totals. (0,0) = 2 is under 5. Row 0
        // hides its smallest other cell, (0,1) = 15; column 0 its smallest other, (1,0) = 12;
        // column 1 now holds (0,1) alone and hides (1,1) = 11, the smallest below it. Row 1
        // then holds (1,0) and (1,1): every line has none or two.
        let cells = vec![vec![2, 15, 30], vec![12, 11, 40], vec![20, 25, 50]];
        let (grid, unprotected) = cross(&cells, 5);
        assert_eq!(
            grid,
            vec![
                vec![P, S, O, O],
                vec![S, S, O, O],
                vec![O, O, O, O],
                vec![O, O, O],
            ]
        );
        assert_eq!(unprotected, 0);
    }

    #[test]
    fn a_margin_is_hidden_only_when_no_cell_of_the_line_can_be() {
        // Worked by hand from the rule above (common practice). Lines in order: rows 0, 1, 2,
        // the column totals, then columns 0, 1, the row totals. (1,0) = 3 is under 5.
        // First visit: row 1 hides (1,1) = 40; column 0 hides (2,0) = 50 (the 0 above it is
        // not positive); column 1 holds (1,1) alone and hides (0,1) = 7. Second visit: row 0
        // holds (0,1) alone, and its only other cell is 0, so its total 7 is hidden; row 2
        // holds (2,0) alone and hides (2,1) = 60; the row totals hold row 0's alone and hide
        // the smallest other, 43 (row 1). A third visit changes nothing.
        let cells = vec![vec![0, 7], vec![3, 40], vec![50, 60]];
        let (grid, unprotected) = cross(&cells, 5);
        assert_eq!(
            grid,
            vec![vec![O, S, S], vec![P, S, S], vec![S, S, O], vec![O, O],]
        );
        assert_eq!(unprotected, 0);
    }

    #[test]
    fn ties_go_to_the_first_entry_in_table_order() {
        let cells = vec![vec![3, 9, 9], vec![9, 9, 9]];
        let (grid, _) = cross(&cells, 5);
        // Row 0 hides (0,1), the first of its two 9s; column 0 hides (1,0); column 1 holds
        // (0,1) alone and hides (1,1); row 1 then holds two.
        assert_eq!(grid[0], vec![P, S, O, O]);
        assert_eq!(grid[1], vec![S, S, O, O]);
    }

    #[test]
    fn a_line_with_no_positive_entry_left_hides_a_zero() {
        // Worked by hand from the rule above (common practice): a line 3 + 0 = 3 whose total
        // is fixed, and whose 3 is hidden: the only entry left to hide is the 0.
        let mut table = Table::default();
        let small = table.push(Entry::new(3, Role::Cell, true));
        let zero = table.push(Entry::new(0, Role::Cell, false));
        let total = table.push(Entry::fixed(3, Role::Total));
        table.line([small, zero, total]);
        let pattern = table.protect();
        assert_eq!(pattern.status, vec![P, S, O]);
        assert_eq!(pattern.unprotected, 0);
    }

    #[test]
    fn a_line_of_fixed_entries_is_counted_as_unprotected() {
        let mut table = Table::default();
        let small = table.push(Entry::new(3, Role::Cell, true));
        let total = table.push(Entry::fixed(3, Role::Total));
        table.line([small, total]);
        let pattern = table.protect();
        assert_eq!(pattern.status, vec![P, O]);
        assert_eq!(pattern.unprotected, 1);
    }

    #[test]
    fn a_frequency_table_with_one_small_category_gets_a_complement() {
        // Worked by hand from the rule above (common practice): categories 50, 4, 20, 30 sum
        // to the valid total 104; that and a missing row of 12 sum to the fixed total 116.
        // The 4 is under 5; the smallest other category, 20, is hidden with it.
        let mut table = Table::default();
        let categories: Vec<usize> = [50, 4, 20, 30]
            .into_iter()
            .map(|n| table.push(Entry::new(n, Role::Cell, below(5)(n))))
            .collect();
        let missing = table.push(Entry::new(12, Role::Cell, false));
        let valid = table.push(Entry::new(104, Role::Margin, false));
        let total = table.push(Entry::fixed(116, Role::Total));
        table.line(categories.iter().copied().chain([valid]));
        table.line([valid, missing, total]);
        let pattern = table.protect();
        assert_eq!(pattern.status, vec![O, P, S, O, O, O, O]);
        assert_eq!((pattern.primary(), pattern.secondary()), (1, 1));
    }

    #[test]
    fn a_small_missing_row_is_protected_by_the_valid_total_and_then_a_category() {
        // Worked by hand from the rule above (common practice): the missing row 2 is alone
        // with the valid total 98 in the line to the fixed total, so the valid total is
        // hidden; the categories' line then hides its smallest category, 18.
        let mut table = Table::default();
        let a = table.push(Entry::new(80, Role::Cell, false));
        let b = table.push(Entry::new(18, Role::Cell, false));
        let missing = table.push(Entry::new(2, Role::Cell, true));
        let valid = table.push(Entry::new(98, Role::Margin, false));
        let total = table.push(Entry::fixed(100, Role::Total));
        table.line([a, b, valid]);
        table.line([valid, missing, total]);
        let pattern = table.protect();
        assert_eq!(pattern.status, vec![O, S, P, S, O]);
        assert!(no_lone_entry(&table, &pattern));
    }

    #[test]
    fn no_line_keeps_a_lone_hidden_entry_on_many_tables() {
        // A deterministic spread of tables with small and zero cells: with at least two rows
        // and two columns every line has an entry other than the fixed grand total to hide,
        // so no line ends holding exactly one hidden entry.
        let mut seed = 7u64;
        let mut next = || {
            seed = seed
                .wrapping_mul(6364136223846793005)
                .wrapping_add(1442695040888963407);
            (seed >> 33) % 40
        };
        for _ in 0..500 {
            let rows = 2 + (next() % 4) as usize;
            let columns = 2 + (next() % 4) as usize;
            let cells: Vec<Vec<u64>> = (0..rows)
                .map(|_| (0..columns).map(|_| next().saturating_sub(8)).collect())
                .collect();
            let array = Array { rows, columns };
            let table = array.table(&cells, below(6));
            let pattern = table.protect();
            assert!(no_lone_entry(&table, &pattern), "{cells:?}");
            assert_eq!(pattern.unprotected, 0, "{cells:?}");
            // Primary entries stay primary; nothing hidden is shown again.
            for (e, s) in table.entries.iter().zip(&pattern.status) {
                assert_eq!(e.primary && !e.fixed, *s == P);
            }
        }
    }
}
