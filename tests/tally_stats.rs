//! The statistics of `concord tally` checked against published values. Each check names its
//! source; values marked "from memory, recomputed" were recalled from the source's table and
//! recomputed from the formula before being written here.

use concord::tables::stats::{
    chi_square, chi_square_critical, cramers_v, kish_design_effect, kish_effective_n,
    quantile_type7, wilson_count, WeightedRunning,
};

fn round4(x: f64) -> f64 {
    (x * 1e4).round() / 1e4
}

fn close(actual: f64, expected: f64, tolerance: f64, what: &str) {
    assert!(
        (actual - expected).abs() <= tolerance,
        "{what}: expected {expected}, got {actual}"
    );
}

#[test]
fn wilson_matches_newcombe_1998() {
    // Newcombe (1998) Statistics in Medicine 17:857-872, worked examples for method 3
    // (Wilson score interval), 95%.
    let cases = [
        // (successes, n, low, high, provenance)
        (81, 263, 0.2553, 0.3662, "Newcombe 1998, confirmed"),
        (15, 148, 0.0624, 0.1605, "Newcombe 1998, confirmed"),
        (0, 20, 0.0, 0.1611, "Newcombe 1998, from memory, recomputed"),
        (
            1,
            29,
            0.0061,
            0.1718,
            "Newcombe 1998, from memory, recomputed",
        ),
    ];
    for (x, n, low, high, source) in cases {
        let (l, h) = wilson_count(x, n).unwrap();
        assert_eq!((round4(l), round4(h)), (low, high), "{x}/{n} ({source})");
    }
}

#[test]
fn chi_square_matches_agresti_2007() {
    // Agresti (2007) An Introduction to Categorical Data Analysis, 2nd ed., p.39: gender by
    // party identification.
    let test = chi_square(&[vec![762, 327, 468], vec![484, 239, 477]]).unwrap();
    close(test.statistic, 30.070149, 1e-6, "X^2");
    assert_eq!(test.df, 2);
    close(test.p_value, 2.953589e-07, 1e-12, "p");
}

#[test]
// The p-value is written as the docstring prints it, past f64's precision.
#[allow(clippy::excessive_precision)]
fn chi_square_matches_scipy_chi2_contingency_docstring() {
    // scipy.stats.chi2_contingency docstring example.
    let test = chi_square(&[vec![10, 10, 20], vec![20, 20, 20]]).unwrap();
    close(test.statistic, 2.7777777777777777, 1e-12, "X^2");
    assert_eq!(test.df, 2);
    close(test.p_value, 0.24935220877729619, 1e-12, "p");
}

#[test]
fn cramers_v_matches_scipy_association_docstring() {
    // scipy.stats.contingency.association docstring example (method="cramer").
    let test = chi_square(&[
        vec![100, 150],
        vec![203, 322],
        vec![420, 700],
        vec![320, 210],
    ])
    .unwrap();
    close(cramers_v(&test).unwrap(), 0.18617813077483678, 1e-12, "V");
}

#[test]
fn kish_matches_the_toy_example() {
    // Kish (1965) Survey Sampling; Kish (1992) J. Official Statistics 8(2):183-200:
    // n_eff = (sum w)^2 / sum w^2, deff = n sum w^2 / (sum w)^2. Weights (1, 1, 1, 3).
    let w = [1.0f64, 1.0, 1.0, 3.0];
    let (sum, sum2) = (w.iter().sum::<f64>(), w.iter().map(|x| x * x).sum::<f64>());
    close(kish_effective_n(sum, sum2).unwrap(), 3.0, 1e-12, "n_eff");
    close(
        round4(kish_design_effect(4, sum, sum2).unwrap()),
        1.3333,
        0.0,
        "deff",
    );
}

#[test]
fn chi_square_critical_values_match_nist_sematech() {
    // NIST/SEMATECH e-Handbook of Statistical Methods, 1.3.6.7.4, upper-tail critical values
    // of the chi-square distribution, at alpha 0.10, 0.05, 0.01.
    let table = [
        (1.0, [2.706, 3.841, 6.635]),
        (2.0, [4.605, 5.991, 9.210]),
        (5.0, [9.236, 11.070, 15.086]),
        (10.0, [15.987, 18.307, 23.209]),
    ];
    for (df, values) in table {
        for (alpha, expected) in [0.10, 0.05, 0.01].into_iter().zip(values) {
            let x = chi_square_critical(df, alpha).unwrap();
            assert_eq!(
                (x * 1000.0).round() / 1000.0,
                expected,
                "df {df}, alpha {alpha}"
            );
        }
    }
}

#[test]
fn quartiles_match_hyndman_fan_type_7() {
    // Hyndman & Fan (1996) Am. Stat. 50:361-365, type 7 (R and numpy default) on 1..10.
    let sorted: Vec<(f64, u64)> = (1..=10).map(|i| (f64::from(i), 1)).collect();
    close(quantile_type7(&sorted, 0.25).unwrap(), 3.25, 1e-12, "Q1");
    close(quantile_type7(&sorted, 0.5).unwrap(), 5.5, 1e-12, "Q2");
    close(quantile_type7(&sorted, 0.75).unwrap(), 7.75, 1e-12, "Q3");
    close(quantile_type7(&sorted, 0.9).unwrap(), 9.1, 1e-12, "P90");
    // Repeated values held as counts give the same order statistics.
    let counted = [(1.0, 2), (2.0, 2)];
    close(
        quantile_type7(&counted, 0.5).unwrap(),
        1.5,
        1e-12,
        "median of 1,1,2,2",
    );
}

#[test]
fn running_mean_and_sd_match_nist_strd() {
    // NIST StRD univariate summary statistics, certified values. NumAcc1: 10000001,
    // 10000003, 10000002 (mean 10000002, s 1). NumAcc4: 10000000.2 then 500 pairs
    // (10000000.1, 10000000.3) (mean 10000000.2, s 0.1; tolerance 1e-7 as in GSL's tests).
    let mut one = WeightedRunning::default();
    for x in [10000001.0, 10000003.0, 10000002.0] {
        one.push(x, 1.0);
    }
    close(one.mean().unwrap(), 10000002.0, 1e-15 * 1e7, "NumAcc1 mean");
    close(one.sd().unwrap(), 1.0, 1e-9, "NumAcc1 s");
    let mut four = WeightedRunning::default();
    four.push(10000000.2, 1.0);
    for _ in 0..500 {
        four.push(10000000.1, 1.0);
        four.push(10000000.3, 1.0);
    }
    close(
        four.mean().unwrap(),
        10000000.2,
        1e-15 * 1e7,
        "NumAcc4 mean",
    );
    close(four.sd().unwrap(), 0.1, 1e-7, "NumAcc4 s");
}
