//! The tally report: plain data that every renderer (text, Markdown, CSV, JSON) formats.
//!
//! The JSON form is this model serialised as it is, and `schemas/tally.schema.json`
//! publishes its shape. Percentages are on the 0-100 scale everywhere, intervals of
//! proportions included, so a plotting tool can put an estimate and its interval on one axis.
//! A count, percent or interval that disclosure suppression hides is `None` (JSON `null`)
//! and its row says `suppressed: true`; `secondary: true` beside it says the figure was hidden
//! as a complement (secondary suppression, see [`super::suppress`]) rather than for its own
//! small count. Percents of a hidden total (a row percent whose row total is hidden, a valid
//! percent when the valid total is) are removed too: with the count they would give it back.

use serde::Serialize;

#[derive(Debug, Clone, Serialize)]
pub struct TallyReport {
    pub concord: &'static str,
    pub codebook: String,
    pub data: String,
    pub variable: VariableInfo,
    pub by: Option<VariableInfo>,
    pub weight: Option<WeightInfo>,
    /// Data rows read.
    pub rows: u64,
    /// Cases tabulated: rows less the exclusions below.
    pub cases: u64,
    /// Cases left out of every table, with the reason.
    pub excluded: Vec<Exclusion>,
    pub disclosure: Disclosure,
    /// The frequency table of the variable (without `--by`).
    pub frequency: Option<Frequency>,
    /// Summary figures of a numeric variable.
    pub summary: Option<Summary>,
    /// The cross-tabulation of a coded variable by the `--by` variable.
    pub crosstab: Option<Crosstab>,
    /// Per category of the `--by` variable: a proportion or a mean, with 95% intervals.
    pub by_group: Option<ByGroup>,
    /// Things a reader should know (exclusions, warnings about a test), one sentence each.
    pub notes: Vec<String>,
}

#[derive(Debug, Clone, Serialize)]
pub struct VariableInfo {
    pub name: String,
    pub label: Option<String>,
    pub kind: &'static str,
}

#[derive(Debug, Clone, Serialize)]
pub struct WeightInfo {
    pub variable: String,
    /// Sum of the weights of the cases tabulated.
    pub sum: f64,
    /// Kish effective sample size of the cases tabulated, `(sum w)^2 / sum w^2`.
    pub effective_n: Option<f64>,
    /// Kish design effect from weighting, `n / n_eff`.
    pub design_effect: Option<f64>,
}

#[derive(Debug, Clone, Serialize)]
pub struct Exclusion {
    /// `weight-negative`, `weight-missing`, `weight-invalid` or `row-length`.
    pub reason: &'static str,
    pub count: u64,
    pub message: String,
}

#[derive(Debug, Clone, Serialize)]
pub struct Disclosure {
    /// Cells with fewer cases than this (but at least one) are flagged `small`.
    pub min_cell: u64,
    /// Cells with fewer cases than this (but at least one) are suppressed.
    pub suppress_below: Option<u64>,
    /// Entries flagged small. Each figure counts once: the by-group proportions repeat the
    /// cross-tabulation's, and the summary beside a frequency table its valid row.
    pub small_cells: u64,
    /// Entries suppressed for their own small count (primary suppression).
    pub suppressed_cells: u64,
    /// Further entries suppressed as complements, so that no suppressed entry can be recovered
    /// by subtraction along a row, column or total (secondary suppression).
    pub secondary_suppressed_cells: u64,
    /// Rows, columns or totals left holding a single suppressed entry because every other
    /// entry in them is published elsewhere in the report: that entry can be recovered.
    pub unprotected_lines: u64,
    /// Whether the chi-square test was withheld because cells were suppressed.
    pub test_withheld: bool,
}

/// What a frequency row counts.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum RowKind {
    /// One category of a coded variable.
    Category,
    /// All valid values of a numeric variable.
    Valid,
    /// One missing kind (its codes, and blanks when the blank meaning is that kind).
    Missing,
    /// Empty cells of a variable with no blank meaning.
    Blank,
    /// Cells with a value finding (see `concord check`).
    Invalid,
}

/// Counts and percents that disclosure control may hide.
#[derive(Debug, Clone, Default, Serialize)]
pub struct Figures {
    pub count: Option<u64>,
    /// Of all cases tabulated.
    pub percent: Option<f64>,
    /// Of valid cases; `None` for missing and invalid rows.
    pub valid_percent: Option<f64>,
    pub cumulative_valid_percent: Option<f64>,
    pub weighted_count: Option<f64>,
    pub weighted_percent: Option<f64>,
    pub weighted_valid_percent: Option<f64>,
    /// 95% Wilson score interval of the valid proportion (percent scale).
    pub ci95_low: Option<f64>,
    pub ci95_high: Option<f64>,
}

#[derive(Debug, Clone, Serialize)]
pub struct FrequencyRow {
    pub kind: RowKind,
    /// The code as written (`"1"`, `"99"`), several joined by `, ` for a missing kind, with
    /// `blank` among them when empty cells count here; `None` for a numeric valid row.
    pub code: Option<String>,
    pub label: String,
    pub missing_kind: Option<&'static str>,
    #[serde(flatten)]
    pub figures: Figures,
    pub small: bool,
    pub suppressed: bool,
    /// Suppressed as a complement, not for its own count.
    pub secondary: bool,
}

#[derive(Debug, Clone, Serialize)]
pub struct Frequency {
    pub rows: Vec<FrequencyRow>,
    pub total: u64,
    /// Valid cases; `None` when the valid total is suppressed as a complement.
    pub valid: Option<u64>,
    pub weighted_total: Option<f64>,
    pub weighted_valid: Option<f64>,
    /// Kish effective sample size of the valid cases, used for the weighted intervals.
    pub valid_effective_n: Option<f64>,
    /// The valid total is suppressed (always as a complement): with it go every valid
    /// percent, cumulative percent and interval, which would give it back.
    pub valid_suppressed: bool,
}

#[derive(Debug, Clone, Default, Serialize)]
pub struct Summary {
    /// Valid cases; `None` when suppressed.
    pub n: Option<u64>,
    pub mean: Option<f64>,
    pub sd: Option<f64>,
    pub min: Option<f64>,
    pub q1: Option<f64>,
    pub median: Option<f64>,
    pub q3: Option<f64>,
    pub max: Option<f64>,
    pub weighted_mean: Option<f64>,
    pub weighted_sd: Option<f64>,
    /// Weighted quartiles: the weighted inverted empirical CDF (Hyndman and Fan type 1 with
    /// weights), set when the table is weighted and the distinct values were kept.
    pub weighted_q1: Option<f64>,
    pub weighted_median: Option<f64>,
    pub weighted_q3: Option<f64>,
    pub effective_n: Option<f64>,
    /// 95% t interval of the mean (weighted, with `effective_n`, when weighted).
    pub mean_ci95_low: Option<f64>,
    pub mean_ci95_high: Option<f64>,
    pub small: bool,
    pub suppressed: bool,
    /// The frequency table's valid row was suppressed as a complement: `n`, `effective_n` and
    /// the interval of the mean are removed (they give n back), the other statistics kept.
    pub secondary: bool,
}

/// A row or column of a cross-tabulation, or a group of a by-group summary.
#[derive(Debug, Clone, Serialize)]
pub struct Level {
    pub code: String,
    pub label: String,
}

#[derive(Debug, Clone, Default, Serialize)]
pub struct CrossCell {
    pub count: Option<u64>,
    pub weighted_count: Option<f64>,
    /// Of the row's total (weighted when weighted).
    pub row_percent: Option<f64>,
    /// Of the column's total (weighted when weighted).
    pub column_percent: Option<f64>,
    pub small: bool,
    pub suppressed: bool,
    /// Suppressed as a complement, not for its own count.
    pub secondary: bool,
}

#[derive(Debug, Clone, Serialize)]
pub struct Crosstab {
    pub rows: Vec<Level>,
    pub columns: Vec<Level>,
    /// `cells[r][c]`: rows are categories of the variable, columns of the `--by` variable.
    pub cells: Vec<Vec<CrossCell>>,
    /// Row margins: `row_percent` is 100; `column_percent` is the share of the table.
    pub row_totals: Vec<CrossCell>,
    /// Column margins: `row_percent` is the share of the table; `column_percent` is 100.
    pub column_totals: Vec<CrossCell>,
    pub total: u64,
    pub weighted_total: Option<f64>,
    pub chi_square: Option<ChiSquare>,
    /// For a weighted table: the test on the weighted proportions, corrected for the
    /// weights' design effect.
    pub rao_scott: Option<RaoScott>,
}

#[derive(Debug, Clone, Serialize)]
pub struct ChiSquare {
    /// Pearson chi-square on the unweighted counts.
    pub statistic: f64,
    pub df: u64,
    pub p_value: f64,
    pub cramers_v: Option<f64>,
    pub expected_below_5: u64,
    pub cells: u64,
    /// Cochran's rule is broken: more than 20% of expected counts below 5, or any below 1.
    pub cochran_warning: bool,
}

/// Pearson's statistic on the weighted proportions with the first-order Rao-Scott correction
/// (see [`crate::tables::stats::rao_scott`]): the weights' design effect only, each case
/// taken as sampled on its own; not clusters or strata.
#[derive(Debug, Clone, Serialize)]
pub struct RaoScott {
    /// Pearson's statistic on the weighted proportions, scaled to the number of cases.
    pub statistic: f64,
    /// Mean generalised design effect of the weights.
    pub design_effect: f64,
    /// First order: `statistic / design_effect` on `df` degrees of freedom.
    pub corrected: f64,
    pub df: u64,
    pub p_value: f64,
    /// Second order (Satterthwaite), which also allows for design effects that differ
    /// between cells: the statistic to refer to chi-square on a fractional df.
    pub second_order: SecondOrder,
}

#[derive(Debug, Clone, Serialize)]
pub struct SecondOrder {
    pub statistic: f64,
    pub df: f64,
    pub p_value: f64,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum GroupStatistic {
    /// Percent of the group's valid cases in the event category.
    Proportion,
    Mean,
}

#[derive(Debug, Clone, Serialize)]
pub struct ByGroup {
    pub statistic: GroupStatistic,
    /// The category counted for a proportion.
    pub event: Option<Level>,
    pub groups: Vec<Group>,
}

#[derive(Debug, Clone, Serialize)]
pub struct Group {
    pub code: String,
    pub label: String,
    /// Cases valid on both variables.
    pub n: Option<u64>,
    pub weighted_n: Option<f64>,
    pub effective_n: Option<f64>,
    /// A percent for a proportion, the variable's unit for a mean.
    pub estimate: Option<f64>,
    pub ci95_low: Option<f64>,
    pub ci95_high: Option<f64>,
    pub small: bool,
    pub suppressed: bool,
    /// Suppressed as a complement: for a proportion, the cross-tabulation hides the group's
    /// column total or event cell only as a complement; for a mean, the group's n is hidden
    /// so that another group's cannot be recovered from the summary's n.
    pub secondary: bool,
}
