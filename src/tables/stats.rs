//! The statistics behind frequency tables and cross-tabulations, each with its source.
//!
//! Everything here is a plain function of counts or running sums, so it can be checked
//! against published worked examples (see `tests/tally_stats.rs`). Distributions come from
//! `statrs`; nothing here reads data or formats output.

use statrs::distribution::{ChiSquared, ContinuousCDF, StudentsT};

/// The 97.5th percentile of the standard normal distribution: the z of a two-sided 95%
/// interval (qnorm(0.975) = 1.959963984540054).
pub const Z95: f64 = 1.959_963_984_540_054;

/// Wilson score interval for a proportion `p` observed on `n` cases.
///
/// Wilson (1927) J. Am. Stat. Assoc. 22:209-212; written as in Newcombe (1998) Statistics in
/// Medicine 17:857-872, method 3:
/// `L, U = [2np + z^2 -/+ z sqrt(z^2 + 4np(1-p))] / [2(n + z^2)]`.
///
/// `n` may be fractional: for weighted data the callers pass the weighted proportion and the
/// Kish effective sample size ([`kish_effective_n`]), the common practice for an approximate
/// interval under unequal weights. Returns `None` when `n` is not positive or `p` is outside
/// [0, 1].
pub fn wilson(p: f64, n: f64, z: f64) -> Option<(f64, f64)> {
    if !n.is_finite() || n <= 0.0 || !(0.0..=1.0).contains(&p) {
        return None;
    }
    let z2 = z * z;
    let centre = 2.0 * n * p + z2;
    let spread = z * (z2 + 4.0 * n * p * (1.0 - p)).sqrt();
    let denominator = 2.0 * (n + z2);
    let low = ((centre - spread) / denominator).max(0.0);
    let high = ((centre + spread) / denominator).min(1.0);
    Some((low, high))
}

/// Wilson 95% interval for `successes` out of `n` cases.
pub fn wilson_count(successes: u64, n: u64) -> Option<(f64, f64)> {
    if n == 0 || successes > n {
        return None;
    }
    wilson(successes as f64 / n as f64, n as f64, Z95)
}

/// Kish's effective sample size for unequal weights: `n_eff = (sum w)^2 / sum w^2`.
///
/// Kish (1965) Survey Sampling, section 11.7; Kish (1992) J. Official Statistics 8(2):183-200.
/// The design effect from weighting alone is `deff = n / n_eff = n sum w^2 / (sum w)^2`.
pub fn kish_effective_n(sum_w: f64, sum_w2: f64) -> Option<f64> {
    (sum_w2 > 0.0 && sum_w.is_finite()).then(|| sum_w * sum_w / sum_w2)
}

/// Kish's design effect from unequal weights, `deff = n sum w^2 / (sum w)^2` (see
/// [`kish_effective_n`]).
pub fn kish_design_effect(n: u64, sum_w: f64, sum_w2: f64) -> Option<f64> {
    kish_effective_n(sum_w, sum_w2).map(|n_eff| n as f64 / n_eff)
}

/// Pearson's chi-square test of independence on a table of counts.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ChiSquareTest {
    pub statistic: f64,
    pub df: u64,
    pub p_value: f64,
    /// Cells (of rows and columns with a non-zero total) whose expected count is below 5.
    pub expected_below_5: u64,
    /// Cells whose expected count is below 1.
    pub expected_below_1: u64,
    /// Cells the test used: rows times columns, after dropping empty rows and columns.
    pub cells: u64,
    /// Rows and columns the test used.
    pub rows: usize,
    pub columns: usize,
    /// Total count.
    pub n: u64,
}

impl ChiSquareTest {
    /// Cochran's rule (Cochran 1954, Biometrics 10:417-451), common practice: the chi-square
    /// approximation is doubtful when more than 20% of expected counts are below 5 or any is
    /// below 1.
    pub fn cochran_warning(&self) -> bool {
        self.expected_below_1 > 0 || self.expected_below_5 * 5 > self.cells
    }
}

/// Pearson chi-square test of independence, `X^2 = sum (O - E)^2 / E` with
/// `E = row total x column total / N` and `df = (r - 1)(c - 1)`; the p-value is the upper tail
/// of the chi-square distribution. Pearson (1900) Phil. Mag. 50:157-175; as in Agresti (2007)
/// An Introduction to Categorical Data Analysis, 2nd ed., section 2.4.
///
/// Rows and columns whose total is zero carry no information and would give E = 0; they are
/// left out before the degrees of freedom are counted. Returns `None` when fewer than two rows
/// or columns remain.
pub fn chi_square(table: &[Vec<u64>]) -> Option<ChiSquareTest> {
    let columns = table.first().map_or(0, Vec::len);
    if table.iter().any(|r| r.len() != columns) {
        return None;
    }
    let row_totals: Vec<u64> = table.iter().map(|r| r.iter().sum()).collect();
    let column_totals: Vec<u64> = (0..columns)
        .map(|c| table.iter().map(|r| r[c]).sum())
        .collect();
    let rows_used: Vec<usize> = (0..table.len()).filter(|&r| row_totals[r] > 0).collect();
    let columns_used: Vec<usize> = (0..columns).filter(|&c| column_totals[c] > 0).collect();
    if rows_used.len() < 2 || columns_used.len() < 2 {
        return None;
    }
    let n: u64 = row_totals.iter().sum();
    let total = n as f64;
    let mut statistic = 0.0;
    let (mut below_5, mut below_1) = (0, 0);
    for &r in &rows_used {
        for &c in &columns_used {
            let expected = row_totals[r] as f64 * column_totals[c] as f64 / total;
            let diff = table[r][c] as f64 - expected;
            statistic += diff * diff / expected;
            below_5 += u64::from(expected < 5.0);
            below_1 += u64::from(expected < 1.0);
        }
    }
    let df = ((rows_used.len() - 1) * (columns_used.len() - 1)) as u64;
    Some(ChiSquareTest {
        statistic,
        df,
        p_value: chi_square_upper_tail(statistic, df as f64)?,
        expected_below_5: below_5,
        expected_below_1: below_1,
        cells: (rows_used.len() * columns_used.len()) as u64,
        rows: rows_used.len(),
        columns: columns_used.len(),
        n,
    })
}

/// Pearson's chi-square on weighted proportions, with the Rao-Scott corrections.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RaoScottTest {
    /// `n sum (p - p0)^2 / p0` over the weighted cell proportions `p`, with
    /// `p0 = p(row) p(column)` and `n` the number of cases: what the Pearson statistic would
    /// be if the weighted proportions had come from a simple random sample of `n`.
    pub statistic: f64,
    /// The mean generalised design effect: the mean of the eigenvalues of the design effect
    /// matrix of the interaction contrasts, estimated from the weights.
    pub design_effect: f64,
    /// First order: `statistic / design_effect`, referred to chi-square on `df` degrees of
    /// freedom.
    pub corrected: f64,
    pub df: u64,
    pub p_value: f64,
    /// Second order (Satterthwaite): `statistic sum(d) / sum(d^2)` over the eigenvalues `d`,
    /// referred to chi-square on `second_order_df = sum(d)^2 / sum(d^2)` degrees of freedom
    /// (at most `df`; fractional).
    pub second_order: f64,
    pub second_order_df: f64,
    pub second_order_p_value: f64,
}

/// Pearson's test of independence for a weighted table, corrected for the design effect of
/// the weights: the corrections of Rao and Scott (1981) J. Am. Stat. Assoc. 76:221-230 and
/// (1984) Annals of Statistics 12:46-60 (citations from memory). Under the design, `X^2`
/// behaves as `sum d_k Z_k^2` with `Z_k` independent standard normal and `d_k` the
/// eigenvalues of the generalised design effect matrix. The first-order correction divides
/// `X^2` by their mean and keeps `(r-1)(c-1)` degrees of freedom; the second-order one
/// (Satterthwaite's approximation) matches the first two moments: `X^2 sum d / sum d^2` on
/// `(sum d)^2 / sum d^2` degrees of freedom, which holds its level better when the design
/// effects differ between cells.
///
/// `w[r][c]` and `w2[r][c]` are each cell's sum of weights and sum of squared weights; `n` the
/// number of cases. The design is taken to be the one the weights alone imply: every case its
/// own primary sampling unit, drawn with replacement, no strata. Clusters and strata, which
/// a codebook does not describe, are not accounted for.
///
/// The eigenvalues are not computed one by one: only `sum d` (a trace) and `sum d^2` (the
/// trace of the square) are needed. With the residuals `r_ij = p_ij - p_i. p_.j`, which
/// linearise to `e_ij - p_.j e_i. - p_i. e_.j` in `e = p_hat - p`, the matrix whose
/// eigenvalues are the `d_k` is `T = c sum_ab S_ab u_ab u_ab'` over the cells `ab`, with
/// `S_ab` the cell's sum of squared weights, `c = n^2 / (n - 1) / W^2` (the with-replacement
/// variance of a ratio of weighted totals), and `u_ab` the linearised residuals of a case in
/// cell `ab`, scaled by `1 / sqrt(p0)`. So `sum d = c sum_ab S_ab G(ab, ab)` and
/// `sum d^2 = c^2 sum_ab sum_kl S_ab S_kl G(ab, kl)^2`, with `G` the inner products of the
/// `u`, which take a closed form because `p0 = p_i. p_.j` factorises (see the comments in
/// the code). With equal weights on a table whose proportions are exactly independent every
/// `d` is `n / (n - 1)`; with weights unrelated to the table they approach Kish's design
/// effect `n sum w^2 / (sum w)^2`.
///
/// Rows and columns with no weight are left out, as in [`chi_square`]. `None` when fewer
/// than two rows or columns remain, `n < 2`, or the shapes disagree. The work grows with the
/// number of cells times the number of rows and columns (a 1000 x 50 table took 0.2 s, a
/// 50 x 50 one a millisecond).
pub fn rao_scott(w: &[Vec<f64>], w2: &[Vec<f64>], n: u64) -> Option<RaoScottTest> {
    let columns = w.first().map_or(0, Vec::len);
    if w2.len() != w.len()
        || w.iter().chain(w2).any(|r| r.len() != columns)
        || n < 2
        || w.iter()
            .chain(w2)
            .flatten()
            .any(|x| !x.is_finite() || *x < 0.0)
    {
        return None;
    }
    let row_w: Vec<f64> = w.iter().map(|r| r.iter().sum()).collect();
    let column_w: Vec<f64> = (0..columns).map(|c| w.iter().map(|r| r[c]).sum()).collect();
    let rows_used: Vec<usize> = (0..w.len()).filter(|&r| row_w[r] > 0.0).collect();
    let columns_used: Vec<usize> = (0..columns).filter(|&c| column_w[c] > 0.0).collect();
    let (nr, nc) = (rows_used.len(), columns_used.len());
    if nr < 2 || nc < 2 {
        return None;
    }
    let total: f64 = row_w.iter().sum();
    // Row and column shares `a` and `b`; per used cell (row-major), the constant part `k` of
    // its linearised residual, `2 p0 - p`, and its sum of squared weights.
    let a: Vec<f64> = rows_used.iter().map(|&i| row_w[i] / total).collect();
    let b: Vec<f64> = columns_used.iter().map(|&j| column_w[j] / total).collect();
    let mut k = vec![0.0; nr * nc];
    let mut squares = vec![0.0; nr * nc];
    let mut pearson = 0.0;
    for (x, &i) in rows_used.iter().enumerate() {
        for (y, &j) in columns_used.iter().enumerate() {
            let (p, p0) = (w[i][j] / total, a[x] * b[y]);
            pearson += (p - p0) * (p - p0) / p0;
            k[x * nc + y] = 2.0 * p0 - p;
            squares[x * nc + y] = w2[i][j];
        }
    }
    // A case in cell (x, y) has the linearised residual `k + s_xy` at each cell, where
    // `s_xy` is 1 at (x, y), minus b(column) along row x and minus a(row) down column y.
    // Inner products weighted by 1 / p0 = 1 / (a b):
    //   k.k                     = sum k^2 / p0
    //   k.s_xy                  = k_xy / p0_xy - (sum of row x of k) / a_x
    //                             - (sum of column y of k) / b_y
    //   s_xy.s_uv               = ([x = u] / a_x - 2) ([y = v] / b_y - 1) + [y = v] / b_y
    // (the last from expanding the product and using sum a = sum b = 1).
    let kk: f64 = (0..nr * nc)
        .map(|c| k[c] * k[c] / (a[c / nc] * b[c % nc]))
        .sum();
    let row_k: Vec<f64> = (0..nr)
        .map(|x| k[x * nc..(x + 1) * nc].iter().sum())
        .collect();
    let column_k: Vec<f64> = (0..nc)
        .map(|y| (0..nr).map(|x| k[x * nc + y]).sum())
        .collect();
    let ks: Vec<f64> = (0..nr * nc)
        .map(|c| {
            let (x, y) = (c / nc, c % nc);
            k[c] / (a[x] * b[y]) - row_k[x] / a[x] - column_k[y] / b[y]
        })
        .collect();
    // So G(c, d) = h_c + h_d + e(c, d), with h_c = k.s_c + (k.k + 2) / 2 and
    // e = [same row] [same column] / (a b) - [same row] / a - [same column] / b, which is zero
    // unless the two cells share a row or a column. The sum over all pairs of the part
    // without `e` has a closed form; the pairs that share a row or a column are added one by
    // one. That keeps the work to cells x (rows + columns) rather than cells squared.
    let h: Vec<f64> = ks.iter().map(|x| x + (kk + 2.0) / 2.0).collect();
    let e = |c: usize, d: usize| {
        let (x, y, u, v) = (c / nc, c % nc, d / nc, d % nc);
        match (x == u, y == v) {
            (true, true) => 1.0 / (a[x] * b[y]) - 1.0 / a[x] - 1.0 / b[y],
            (true, false) => -1.0 / a[x],
            (false, true) => -1.0 / b[y],
            (false, false) => 0.0,
        }
    };
    let total_squares: f64 = squares.iter().sum();
    let weighted_h: f64 = squares.iter().zip(&h).map(|(s, h)| s * h).sum();
    let weighted_h2: f64 = squares.iter().zip(&h).map(|(s, h)| s * h * h).sum();
    let trace: f64 = (0..nr * nc)
        .map(|c| squares[c] * (2.0 * h[c] + e(c, c)))
        .sum();
    // Over all ordered pairs, sum S_c S_d (h_c + h_d)^2 = 2 S sum S h^2 + 2 (sum S h)^2.
    let mut trace_square = 2.0 * total_squares * weighted_h2 + 2.0 * weighted_h * weighted_h;
    let mut add_pair = |c: usize, d: usize| {
        let (base, extra) = (h[c] + h[d], e(c, d));
        trace_square += squares[c] * squares[d] * extra * (2.0 * base + extra);
    };
    for x in 0..nr {
        for y in 0..nc {
            for v in 0..nc {
                add_pair(x * nc + y, x * nc + v);
            }
        }
    }
    for y in 0..nc {
        for x in 0..nr {
            for u in (0..nr).filter(|&u| u != x) {
                add_pair(x * nc + y, u * nc + y);
            }
        }
    }
    let nf = n as f64;
    let scale = nf * nf / (nf - 1.0) / (total * total);
    let (sum_d, sum_d2) = (scale * trace, scale * scale * trace_square);
    let df = ((nr - 1) * (nc - 1)) as u64;
    let design_effect = sum_d / df as f64;
    if !design_effect.is_finite() || design_effect <= 0.0 || !sum_d2.is_finite() || sum_d2 <= 0.0 {
        return None;
    }
    let statistic = nf * pearson;
    let corrected = statistic / design_effect;
    let second_order = statistic * sum_d / sum_d2;
    let second_order_df = sum_d * sum_d / sum_d2;
    Some(RaoScottTest {
        statistic,
        design_effect,
        corrected,
        df,
        p_value: chi_square_upper_tail(corrected, df as f64)?,
        second_order,
        second_order_df,
        second_order_p_value: chi_square_upper_tail(second_order, second_order_df)?,
    })
}

/// P(X >= x) for X chi-square with `df` degrees of freedom.
pub fn chi_square_upper_tail(x: f64, df: f64) -> Option<f64> {
    Some(ChiSquared::new(df).ok()?.sf(x))
}

/// The chi-square value with upper-tail probability `alpha` (a critical value), as tabled in
/// the NIST/SEMATECH e-Handbook of Statistical Methods, section 1.3.6.7.4.
pub fn chi_square_critical(df: f64, alpha: f64) -> Option<f64> {
    Some(ChiSquared::new(df).ok()?.inverse_cdf(1.0 - alpha))
}

/// Cramer's V, `sqrt(X^2 / (N (min(r, c) - 1)))`, from a chi-square test's statistic, total
/// and the rows and columns it used. Cramer (1946) Mathematical Methods of Statistics, p.282.
pub fn cramers_v(test: &ChiSquareTest) -> Option<f64> {
    let k = test.rows.min(test.columns);
    (k > 1 && test.n > 0).then(|| (test.statistic / (test.n as f64 * (k - 1) as f64)).sqrt())
}

/// Two-sided 95% t interval for a mean: `mean -/+ t(0.975, df) sd / sqrt(n)` with
/// `df = n - 1` (Student 1908, Biometrika 6:1-25). `n` may be fractional: weighted callers
/// pass the Kish effective sample size and the weighted sd scaled to it (see
/// [`WeightedRunning::sd`]), an approximation that is common practice under unequal weights.
/// Returns `None` when `n <= 1` or `sd` is not finite.
pub fn t_interval(mean: f64, sd: f64, n: f64) -> Option<(f64, f64)> {
    if !n.is_finite() || n <= 1.0 || !sd.is_finite() || !mean.is_finite() {
        return None;
    }
    let t = StudentsT::new(0.0, 1.0, n - 1.0).ok()?.inverse_cdf(0.975);
    let half = t * sd / n.sqrt();
    Some((mean - half, mean + half))
}

/// Weighted count, mean and variance of a stream, in one pass: West's (1979) weighted form of
/// Welford's update (Comm. ACM 22:532-535), accurate where sums of squares lose every digit.
/// With all weights 1 it is Welford's algorithm exactly.
#[derive(Debug, Clone, Copy, Default)]
pub struct WeightedRunning {
    /// Cases pushed (with any weight, zero included).
    pub count: u64,
    pub sum_w: f64,
    pub sum_w2: f64,
    mean: f64,
    /// Sum of w (x - mean)^2.
    m2: f64,
    min: Option<f64>,
    max: Option<f64>,
}

impl WeightedRunning {
    #[inline]
    pub fn push(&mut self, x: f64, w: f64) {
        self.count += 1;
        self.min = Some(self.min.map_or(x, |m| m.min(x)));
        self.max = Some(self.max.map_or(x, |m| m.max(x)));
        if w <= 0.0 {
            return;
        }
        self.sum_w += w;
        self.sum_w2 += w * w;
        let delta = x - self.mean;
        self.mean += delta * w / self.sum_w;
        self.m2 += w * delta * (x - self.mean);
    }

    pub fn mean(&self) -> Option<f64> {
        (self.sum_w > 0.0).then_some(self.mean)
    }

    /// Kish effective sample size of the weights pushed; with unit weights, the count.
    pub fn effective_n(&self) -> Option<f64> {
        kish_effective_n(self.sum_w, self.sum_w2)
    }

    /// Standard deviation `sqrt(sum w (x - mean)^2 / sum w x n_eff / (n_eff - 1))`: with unit
    /// weights this is the sample sd with divisor n - 1; with unequal weights the divisor
    /// correction uses the effective sample size.
    pub fn sd(&self) -> Option<f64> {
        let n_eff = self.effective_n()?;
        (n_eff > 1.0).then(|| {
            (self.m2 / self.sum_w * n_eff / (n_eff - 1.0))
                .max(0.0)
                .sqrt()
        })
    }

    pub fn min(&self) -> Option<f64> {
        self.min
    }

    pub fn max(&self) -> Option<f64> {
        self.max
    }

    /// The 95% t interval of the mean with the effective sample size ([`t_interval`]).
    pub fn mean_interval(&self) -> Option<(f64, f64)> {
        t_interval(self.mean()?, self.sd()?, self.effective_n()?)
    }
}

/// Sample quantile of type 7 (linear interpolation between order statistics; the default of
/// R and numpy), Hyndman & Fan (1996) Am. Stat. 50:361-365: with 0-based `h = (n - 1) p`,
/// `Q(p) = x[floor h] + (h - floor h)(x[floor h + 1] - x[floor h])`.
///
/// `sorted` holds the distinct values in increasing order with their counts, which keeps the
/// memory of a streaming pass to the number of distinct values.
pub fn quantile_type7(sorted: &[(f64, u64)], p: f64) -> Option<f64> {
    let n: u64 = sorted.iter().map(|(_, c)| c).sum();
    if n == 0 || !(0.0..=1.0).contains(&p) {
        return None;
    }
    let h = (n - 1) as f64 * p;
    let lower = h.floor() as u64;
    let below = order_statistic(sorted, lower)?;
    let above = order_statistic(sorted, (lower + 1).min(n - 1))?;
    Some(below + (h - h.floor()) * (above - below))
}

/// Weighted sample quantile by the inverted empirical distribution function: with `W` the
/// total weight and `S(x)` the sum of the weights of the values `<= x`,
/// `Q(p) = min { x : S(x) / W >= p }`.
///
/// This is Hyndman & Fan (1996) Am. Stat. 50:361-365, type 1, with each value's share `1/n`
/// replaced by its share of the weight; it is the definition of numpy's `quantile` with
/// `weights=` and `method="inverted_cdf"` (numpy 2.0 and later). With equal weights it is
/// type 1 exactly, and it is the same as repeating each case `w` times, so a weight of 2
/// counts a case twice. It never interpolates: every quantile is a value of the data.
///
/// `sorted` holds the distinct values in increasing order, each with the sum of its cases'
/// weights. Values whose weights sum to zero carry no mass and are passed over, so `Q(0)` is
/// the smallest value with positive weight. Returns `None` when there are no values, the total
/// weight is not positive and finite, or `p` is outside [0, 1].
pub fn weighted_quantile_inverted_cdf(sorted: &[(f64, f64)], p: f64) -> Option<f64> {
    // The total is summed over the same weights in the same order as the running total, so
    // the last share is exactly 1 and p = 1 always finds the largest value of positive weight.
    let total: f64 = sorted.iter().map(|&(_, w)| w).filter(|&w| w > 0.0).sum();
    if !total.is_finite() || total <= 0.0 || !(0.0..=1.0).contains(&p) {
        return None;
    }
    let mut running = 0.0;
    let mut last = None;
    for &(value, weight) in sorted {
        if weight <= 0.0 {
            continue;
        }
        running += weight;
        last = Some(value);
        if running / total >= p {
            return last;
        }
    }
    last
}

/// The 0-based k-th smallest value of a sorted list of (value, count).
fn order_statistic(sorted: &[(f64, u64)], k: u64) -> Option<f64> {
    let mut seen = 0;
    for &(value, count) in sorted {
        seen += count;
        if k < seen {
            return Some(value);
        }
    }
    None
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn weighted_running_with_unit_weights_is_welford() {
        let mut r = WeightedRunning::default();
        for x in [2.0, 4.0, 4.0, 4.0, 5.0, 5.0, 7.0, 9.0] {
            r.push(x, 1.0);
        }
        assert_eq!(r.mean(), Some(5.0));
        // Sample sd (n - 1) of this textbook set: sqrt(32 / 7).
        assert!((r.sd().unwrap() - (32.0f64 / 7.0).sqrt()).abs() < 1e-12);
        assert_eq!((r.min(), r.max()), (Some(2.0), Some(9.0)));
    }

    #[test]
    fn degenerate_inputs_give_none() {
        assert_eq!(wilson_count(0, 0), None);
        assert_eq!(wilson_count(3, 2), None);
        assert_eq!(chi_square(&[vec![1, 2]]), None);
        assert_eq!(chi_square(&[vec![0, 0], vec![0, 0]]), None);
        assert_eq!(t_interval(1.0, 1.0, 1.0), None);
        assert_eq!(kish_effective_n(0.0, 0.0), None);
        assert_eq!(quantile_type7(&[], 0.5), None);
        assert_eq!(weighted_quantile_inverted_cdf(&[], 0.5), None);
        assert_eq!(weighted_quantile_inverted_cdf(&[(1.0, 0.0)], 0.5), None);
        assert_eq!(weighted_quantile_inverted_cdf(&[(1.0, 1.0)], 1.5), None);
        assert_eq!(weighted_quantile_inverted_cdf(&[(1.0, 1.0)], -0.1), None);
        assert_eq!(
            weighted_quantile_inverted_cdf(&[(1.0, 1.0)], f64::NAN),
            None
        );
    }

    /// Worked example, checked by hand from the definition Q(p) = min { x : S(x) / W >= p }.
    #[test]
    fn weighted_inverted_cdf_worked_example() {
        let q = |sorted: &[(f64, f64)], p| weighted_quantile_inverted_cdf(sorted, p).unwrap();
        // 1, 2, 3, 4 with weight 1 each: the shares are 0.25, 0.5, 0.75, 1, so the quartiles
        // are the type-1 quartiles 1, 2, 3 (the share reaches p exactly at each of them).
        let even = [(1.0, 1.0), (2.0, 1.0), (3.0, 1.0), (4.0, 1.0)];
        assert_eq!(
            (q(&even, 0.25), q(&even, 0.5), q(&even, 0.75)),
            (1.0, 2.0, 3.0)
        );
        assert_eq!(
            (q(&even, 0.0), q(&even, 0.26), q(&even, 1.0)),
            (1.0, 2.0, 4.0)
        );
        // 1 with weight 3, 2 with weight 1: 1 holds 3/4 of the weight, so the median and the
        // upper quartile are 1; only past p = 0.75 is the answer 2.
        let heavy = [(1.0, 3.0), (2.0, 1.0)];
        assert_eq!(
            (q(&heavy, 0.5), q(&heavy, 0.75), q(&heavy, 0.76)),
            (1.0, 1.0, 2.0)
        );
        // A value of zero weight is not in the distribution, not even at p = 0.
        let zero = [(0.5, 0.0), (1.0, 2.0), (7.0, 2.0)];
        assert_eq!(
            (q(&zero, 0.0), q(&zero, 0.5), q(&zero, 0.51)),
            (1.0, 1.0, 7.0)
        );
    }
}
