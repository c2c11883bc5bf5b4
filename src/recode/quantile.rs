//! Sample quantiles, for `quantiles = N` bands cut at the data's own quantiles.
//!
//! Statistical packages disagree on what "the 25th percentile" of a sample is; Hyndman and
//! Fan (1996), "Sample quantiles in statistical packages", The American Statistician
//! 50(4):361-365, list nine definitions. concord implements two of them and says which it uses:
//!
//! - **type 7** (the default, and the default of R's `quantile` and numpy's `quantile`,
//!   `method="linear"`): with the n sorted values x(1) <= ... <= x(n), the quantile at
//!   probability p sits at position h = (n - 1) p + 1 and interpolates linearly between
//!   x(floor h) and x(floor h + 1).
//! - **type 6** (`quantile_type = 6`; numpy `method="weibull"`, the definition the NIST/SEMATECH
//!   e-Handbook uses): position h = (n + 1) p, clamped to the first and last value.
//! - **type 1** (`quantile_type = 1`; numpy `method="inverted_cdf"`): the inverse of the
//!   empirical distribution function, the smallest x(k) with k/n >= p; it never interpolates.
//!   Its weighted form replaces k/n by the share of the weight at or below x(k), which is what
//!   numpy computes with `weights=` (the one method numpy weights).
//!
//! **Weighted type 7.** With a weight, each sorted value x(k) with weight w(k) > 0 gets the
//! plotting position
//!
//! ```text
//! p(k) = (S(k) - w(k)/2 - w(1)/2) / (W - w(1)/2 - w(n)/2)
//! ```
//!
//! where S(k) is the running total of weights up to and including x(k) and W the total: the
//! centre of x(k)'s weight mass, rescaled so that the smallest value sits at 0 and the largest
//! at 1. The quantile at p interpolates linearly between the two values whose positions
//! bracket p. With equal weights p(k) = (k - 1) / (n - 1), so it is exactly type 7; the
//! positions are symmetric (reversing the data reflects every quantile). Cases that share a value
//! share its weight evenly before the positions are taken (their mean weight each), so the
//! order of the rows cannot move a cut point. It is not the same as repeating each case w
//! times. Cases with a zero weight carry no mass and are left out.
//!
//! No published source defines a weighted type 7: this one is concord's own. It is checked
//! against numpy (`numpy.interp` over the positions above, `tests/recode_cli.rs`) and, for
//! equal weights, against type 7 itself.

/// Which of Hyndman and Fan's definitions.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum QuantileType {
    One,
    Six,
    #[default]
    Seven,
}

impl QuantileType {
    pub fn number(self) -> u8 {
        match self {
            QuantileType::One => 1,
            QuantileType::Six => 6,
            QuantileType::Seven => 7,
        }
    }
}

/// numpy's interpolation `a + (b - a) t`, computed from the nearer end so that t = 1 gives b
/// exactly; matching it keeps cut points identical to numpy's to the last bit.
fn lerp(a: f64, b: f64, t: f64) -> f64 {
    if a == b {
        return a;
    }
    let d = b - a;
    if t >= 0.5 {
        b - d * (1.0 - t)
    } else {
        a + d * t
    }
}

/// The quantile of sorted values at probability `p` (0 to 1); `None` for no values.
pub fn quantile(sorted: &[f64], p: f64, kind: QuantileType) -> Option<f64> {
    let n = sorted.len();
    if n == 0 {
        return None;
    }
    // 0-based virtual index, as numpy computes it.
    let v = match kind {
        QuantileType::Seven => (n - 1) as f64 * p,
        QuantileType::Six => (n + 1) as f64 * p - 1.0,
        QuantileType::One => {
            // The order statistic at index n p - 1, rounded up unless it is whole (numpy's
            // `inverted_cdf`, with the same floating-point index).
            let v = n as f64 * p - 1.0;
            let below = v.floor();
            let i = if v == below { below } else { below + 1.0 };
            return Some(sorted[(i.max(0.0) as usize).min(n - 1)]);
        }
    };
    if v <= 0.0 {
        return Some(sorted[0]);
    }
    if v >= (n - 1) as f64 {
        return Some(sorted[n - 1]);
    }
    let below = v.floor();
    let i = below as usize;
    Some(lerp(sorted[i], sorted[i + 1], v - below))
}

/// The weighted type-7 quantile of `(value, weight)` pairs sorted by value, with every weight
/// positive; `None` for no pairs.
pub fn weighted_quantile(sorted: &[(f64, f64)], p: f64) -> Option<f64> {
    let positions = positions(sorted)?;
    Some(interpolate(sorted, &positions, p))
}

fn positions(sorted: &[(f64, f64)]) -> Option<Vec<f64>> {
    let weights = spread_ties(sorted);
    let (first, last) = (*weights.first()?, *weights.last()?);
    let total: f64 = weights.iter().sum();
    let span = total - first / 2.0 - last / 2.0;
    let mut running = 0.0;
    Some(
        weights
            .iter()
            .map(|w| {
                running += w;
                if span > 0.0 {
                    (running - w / 2.0 - first / 2.0) / span
                } else {
                    0.0
                }
            })
            .collect(),
    )
}

/// The weights of `sorted` with each run of equal values given its mean weight. Within a run
/// the quantile is the run's value whatever the order, but the positions of its first and
/// last cases, where interpolation towards the neighbouring values starts, would depend on
/// which of its cases came first in the file. Spreading the run's weight evenly makes the
/// result independent of row order and keeps it symmetric under reflection; equal weights
/// are unchanged, so it is still exactly type 7 for them.
fn spread_ties(sorted: &[(f64, f64)]) -> Vec<f64> {
    let mut weights = Vec::with_capacity(sorted.len());
    for run in sorted.chunk_by(|a, b| a.0 == b.0) {
        let mean = run.iter().map(|(_, w)| w).sum::<f64>() / run.len() as f64;
        weights.extend(std::iter::repeat_n(mean, run.len()));
    }
    weights
}

fn interpolate(sorted: &[(f64, f64)], positions: &[f64], p: f64) -> f64 {
    let n = sorted.len();
    // The first position above p; the quantile lies between it and the one before.
    let above = positions.partition_point(|&q| q <= p);
    if above == 0 {
        return sorted[0].0;
    }
    if above >= n {
        return sorted[n - 1].0;
    }
    let (lo, hi) = (positions[above - 1], positions[above]);
    let t = if hi > lo { (p - lo) / (hi - lo) } else { 0.0 };
    lerp(sorted[above - 1].0, sorted[above].0, t)
}

/// The N - 1 cut points that split values into N bands of (about) equal size: the quantiles
/// at 1/N, 2/N, ..., (N-1)/N. `values` are `(value, weight)`; `weighted` false ignores the
/// weights. Pairs with a weight that is not positive are dropped when weighted.
pub fn cut_points(
    mut values: Vec<(f64, f64)>,
    bands: usize,
    kind: QuantileType,
    weighted: bool,
) -> Vec<f64> {
    if weighted {
        values.retain(|(_, w)| *w > 0.0 && w.is_finite());
    }
    values.sort_by(|a, b| a.0.total_cmp(&b.0));
    let probabilities = (1..bands).map(|j| j as f64 / bands as f64);
    if weighted && kind == QuantileType::One {
        return inverted_cdf(&values, probabilities);
    }
    if weighted {
        let Some(positions) = positions(&values) else {
            return Vec::new();
        };
        probabilities
            .map(|p| interpolate(&values, &positions, p))
            .collect()
    } else {
        let sorted: Vec<f64> = values.into_iter().map(|(v, _)| v).collect();
        probabilities
            .filter_map(|p| quantile(&sorted, p, kind))
            .collect()
    }
}

/// Weighted type 1 at each of `probabilities` (increasing), in one pass: the smallest value
/// whose running share of the weight reaches p, the share computed as numpy does (running
/// total over the total, both summed in sorted order).
fn inverted_cdf(sorted: &[(f64, f64)], probabilities: impl Iterator<Item = f64>) -> Vec<f64> {
    let total: f64 = sorted.iter().map(|(_, w)| w).sum();
    if sorted.is_empty() {
        return Vec::new();
    }
    // `running` is the weight of the first `k` values; each cut is the last of the fewest
    // values whose share reaches p (or the largest value, should rounding leave it short).
    let (mut k, mut running) = (0, 0.0);
    probabilities
        .map(|p| {
            while k < sorted.len() && (k == 0 || running / total < p) {
                running += sorted[k].1;
                k += 1;
            }
            sorted[k - 1].0
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    fn close(a: f64, b: f64, tolerance: f64) -> bool {
        (a - b).abs() <= tolerance
    }

    /// Hyndman & Fan (1996), The American Statistician 50(4):361-365, definitions 6 and 7,
    /// applied to 1..10: type 7 quartiles 3.25, 5.5, 7.75 and P90 9.1 (R's and numpy's
    /// default); type 6 quartiles 2.75, 5.5, 8.25 and P90 9.9.
    #[test]
    fn hyndman_fan_types_6_and_7_on_one_to_ten() {
        let x: Vec<f64> = (1..=10).map(f64::from).collect();
        let seven = [(0.25, 3.25), (0.5, 5.5), (0.75, 7.75), (0.9, 9.1)];
        for (p, want) in seven {
            let got = quantile(&x, p, QuantileType::Seven).unwrap();
            assert!(close(got, want, 1e-12), "type 7 at {p}: {got}");
        }
        let six = [(0.25, 2.75), (0.5, 5.5), (0.75, 8.25), (0.9, 9.9)];
        for (p, want) in six {
            let got = quantile(&x, p, QuantileType::Six).unwrap();
            assert!(close(got, want, 1e-12), "type 6 at {p}: {got}");
        }
    }

    /// NIST/SEMATECH e-Handbook of Statistical Methods, section 7.2.6.2 (percentiles), worked
    /// example on 12 wafer measurements: the 90th percentile (type 6) is 95.1981.
    #[test]
    fn nist_handbook_wafer_p90() {
        let x = [
            95.1772, 95.1567, 95.1937, 95.1959, 95.1442, 95.0610, 95.1591, 95.1195, 95.1065,
            95.0925, 95.1990, 95.1682,
        ];
        let mut sorted = x.to_vec();
        sorted.sort_by(f64::total_cmp);
        let got = quantile(&sorted, 0.9, QuantileType::Six).unwrap();
        assert!(close(got, 95.1981, 5e-5), "{got}");
    }

    #[test]
    fn equal_weights_are_type_7() {
        let x: Vec<(f64, f64)> = [7.0, 1.0, 4.0, 9.0, 2.0, 2.0, 8.0]
            .iter()
            .map(|&v| (v, 2.5))
            .collect();
        let weighted = cut_points(x.clone(), 4, QuantileType::Seven, true);
        let plain = cut_points(x, 4, QuantileType::Seven, false);
        for (a, b) in weighted.iter().zip(&plain) {
            assert!(close(*a, *b, 1e-12), "{weighted:?} vs {plain:?}");
        }
    }

    #[test]
    fn weights_move_the_median_and_reflect() {
        // A heavy weight on 10 pulls the median towards it.
        let x = vec![(1.0, 1.0), (2.0, 1.0), (10.0, 6.0)];
        let median = cut_points(x.clone(), 2, QuantileType::Seven, true)[0];
        assert!(median > 2.0 && median < 10.0, "{median}");
        // Reflecting the data reflects the quantiles.
        let reflected: Vec<(f64, f64)> = x.iter().map(|&(v, w)| (-v, w)).collect();
        let q = cut_points(x, 4, QuantileType::Seven, true);
        let r = cut_points(reflected, 4, QuantileType::Seven, true);
        for (a, b) in q.iter().zip(r.iter().rev()) {
            assert!(close(*a, -*b, 1e-12), "{q:?} vs {r:?}");
        }
    }

    #[test]
    fn tied_values_give_the_same_cuts_in_any_row_order() {
        let x = vec![
            (1.0, 1.0),
            (3.0, 0.5),
            (3.0, 4.0),
            (3.0, 1.5),
            (6.0, 2.0),
            (8.0, 1.0),
        ];
        let cuts = cut_points(x.clone(), 5, QuantileType::Seven, true);
        let mut shuffled = x.clone();
        shuffled.swap(1, 3);
        shuffled.swap(2, 3);
        shuffled.reverse();
        assert_eq!(cuts, cut_points(shuffled, 5, QuantileType::Seven, true));
        // The run of 3s weighs 6 over three cases: as if each weighed 2.
        let even = vec![
            (1.0, 1.0),
            (3.0, 2.0),
            (3.0, 2.0),
            (3.0, 2.0),
            (6.0, 2.0),
            (8.0, 1.0),
        ];
        assert_eq!(cuts, cut_points(even, 5, QuantileType::Seven, true));
        // And reflection still reflects.
        let reflected: Vec<(f64, f64)> = x.iter().map(|&(v, w)| (-v, w)).collect();
        let r = cut_points(reflected, 5, QuantileType::Seven, true);
        for (a, b) in cuts.iter().zip(r.iter().rev()) {
            assert!(close(*a, -*b, 1e-12), "{cuts:?} vs {r:?}");
        }
    }

    /// Hyndman & Fan (1996) definition 1 on 1..10: the quartiles are x(3), x(5), x(8), the
    /// smallest values with k/n >= p (worked by hand from the definition).
    #[test]
    fn type_1_is_the_inverse_of_the_empirical_distribution() {
        let x: Vec<f64> = (1..=10).map(f64::from).collect();
        for (p, want) in [
            (0.25, 3.0),
            (0.5, 5.0),
            (0.75, 8.0),
            (0.1, 1.0),
            (1.0, 10.0),
        ] {
            assert_eq!(quantile(&x, p, QuantileType::One), Some(want), "at {p}");
        }
        // Weighted, with equal weights: the same cut points.
        let pairs: Vec<(f64, f64)> = x.iter().map(|&v| (v, 0.5)).collect();
        assert_eq!(
            cut_points(pairs, 4, QuantileType::One, true),
            cut_points(
                x.iter().map(|&v| (v, 1.0)).collect(),
                4,
                QuantileType::One,
                false
            )
        );
        // A weight of 3 on the smallest of four values makes it the median.
        let heavy = vec![(1.0, 3.0), (2.0, 1.0), (3.0, 1.0), (4.0, 1.0)];
        assert_eq!(cut_points(heavy, 2, QuantileType::One, true), [1.0]);
    }

    #[test]
    fn degenerate_samples() {
        assert_eq!(quantile(&[], 0.5, QuantileType::Seven), None);
        assert_eq!(quantile(&[3.0], 0.5, QuantileType::Six), Some(3.0));
        assert_eq!(weighted_quantile(&[(3.0, 2.0)], 0.2), Some(3.0));
        assert!(cut_points(vec![(1.0, 0.0)], 4, QuantileType::Seven, true).is_empty());
    }
}
