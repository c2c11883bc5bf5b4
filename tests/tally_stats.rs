//! The statistics of `concord tally` checked against published values. Each check names its
//! source; values marked "from memory, recomputed" were recalled from the source's table and
//! recomputed from the formula before being written here. The weighted quartiles are checked
//! against numpy, a general-purpose reference, when it is importable.

mod support;

use support::{numpy_with_weights, python};

use std::process::Command;

use concord::tables::stats::{
    chi_square, chi_square_critical, cramers_v, kish_design_effect, kish_effective_n,
    quantile_type7, weighted_quantile_inverted_cdf, wilson_count, WeightedRunning,
};
use serde_json::Value as Json;

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

// ---- numpy as an outside reference ----

/// A deterministic sample of `n` (value, weight) pairs: a 64-bit linear congruential
/// generator (Knuth's MMIX constants). Values are quarters from 0 to 49.75, so a sample of a
/// few hundred has many ties; weights are positive reals in [0.1, 3.1) with `decimals`
/// decimals (`None`: full precision).
fn weighted_sample(n: usize, decimals: Option<usize>) -> Vec<(f64, f64)> {
    let mut state: u64 = 0x9e37_79b9_7f4a_7c15;
    let mut next = || {
        state = state
            .wrapping_mul(6_364_136_223_846_793_005)
            .wrapping_add(1_442_695_040_888_963_407);
        state >> 11
    };
    (0..n)
        .map(|_| {
            let value = (next() % 200) as f64 / 4.0;
            let weight = 0.1 + 3.0 * next() as f64 / (1u64 << 53) as f64;
            let weight = match decimals {
                Some(d) => format!("{weight:.d$}").parse().unwrap(),
                None => weight,
            };
            (value, weight)
        })
        .collect()
}

/// Distinct values in increasing order with their weight sums, as the tally pass keeps them.
fn by_value(sample: &[(f64, f64)]) -> Vec<(f64, f64)> {
    let mut sorted = sample.to_vec();
    sorted.sort_by(|a, b| a.0.total_cmp(&b.0));
    let mut out: Vec<(f64, f64)> = Vec::new();
    for (x, w) in sorted {
        match out.last_mut() {
            Some(last) if last.0 == x => last.1 += w,
            _ => out.push((x, w)),
        }
    }
    out
}

/// The reference is only sharp when no cumulative weight share lies on a probability asked
/// for: there the two sides of `>=` differ by rounding alone. Real-valued weights make that
/// practically impossible; this makes sure of it.
fn assert_no_share_near(sorted: &[(f64, f64)], probabilities: &[f64]) {
    let total: f64 = sorted.iter().map(|(_, w)| w).sum();
    let mut running = 0.0;
    for (x, w) in sorted {
        running += w;
        for p in probabilities {
            assert!(
                (running / total - p).abs() > 1e-9,
                "the share at {x} is {p}: choose another sample"
            );
        }
    }
}

const QUARTILES: [f64; 3] = [0.25, 0.5, 0.75];

#[test]
fn weighted_quartiles_match_numpy_inverted_cdf() {
    if !numpy_with_weights() {
        return;
    }
    let sample = weighted_sample(400, None);
    let sorted = by_value(&sample);
    assert!(sorted.len() < sample.len() / 2, "the sample has ties");
    let probabilities = [0.1, 0.25, 0.5, 0.75, 0.9];
    assert_no_share_near(&sorted, &probabilities);
    // Rust's `{}` writes the shortest text that reads back as the same f64 in Python.
    let list = |f: fn(&(f64, f64)) -> f64| {
        let items: Vec<String> = sample.iter().map(|p| format!("{}", f(p))).collect();
        format!("[{}]", items.join(", "))
    };
    let script = format!(
        "import json, numpy as np\n\
         a = np.array({values}); w = np.array({weights})\n\
         print(json.dumps([float(np.quantile(a, p, weights=w, method='inverted_cdf')) \
         for p in {probabilities:?}]))\n",
        values = list(|p| p.0),
        weights = list(|p| p.1),
    );
    let numpy: Vec<f64> =
        serde_json::from_str(&python(&script).expect("the numpy script runs")).unwrap();
    for (p, expected) in probabilities.into_iter().zip(numpy) {
        // numpy 2.x `numpy.quantile(a, p, weights=w, method="inverted_cdf")`, the weighted
        // form of Hyndman & Fan (1996) type 1: both pick a value of the data, so exactly.
        assert_eq!(
            weighted_quantile_inverted_cdf(&sorted, p),
            Some(expected),
            "p = {p}"
        );
    }
}

#[test]
fn tally_weighted_quartiles_match_numpy_through_the_binary() {
    if !numpy_with_weights() {
        return;
    }
    let dir = tempfile::tempdir().unwrap();
    let sample = weighted_sample(300, Some(6));
    assert_no_share_near(&by_value(&sample), &QUARTILES);
    let mut data = String::from("id,x,w\n");
    for (i, (x, w)) in sample.iter().enumerate() {
        data.push_str(&format!("C{i},{x},{w:.6}\n"));
    }
    let data_path = dir.path().join("data.csv");
    std::fs::write(&data_path, &data).unwrap();
    let codebook = dir.path().join("codebook.toml");
    std::fs::write(
        &codebook,
        "[dataset]\nname = \"numpy\"\nid = [\"id\"]\n\n\
         [[variables]]\nname = \"id\"\nkind = \"identifier\"\n\n\
         [[variables]]\nname = \"x\"\nkind = \"numeric\"\nrange = { min = 0, max = 50 }\n\n\
         [[variables]]\nname = \"w\"\nkind = \"numeric\"\nrange = { min = 0, max = 5 }\n",
    )
    .unwrap();
    let out = Command::new(env!("CARGO_BIN_EXE_concord"))
        .args(["tally"])
        .arg(&codebook)
        .arg(&data_path)
        .args(["x", "--weight", "w", "--format", "json"])
        .env_remove("CI")
        .output()
        .unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let json: Json = serde_json::from_slice(&out.stdout).unwrap();
    let summary = &json["summary"];
    assert_eq!(json["cases"], 300, "no case was left out");
    let script = format!(
        "import csv, json, numpy as np\n\
         rows = list(csv.DictReader(open({path:?})))\n\
         a = np.array([float(r['x']) for r in rows]); w = np.array([float(r['w']) for r in rows])\n\
         print(json.dumps([float(np.quantile(a, p, weights=w, method='inverted_cdf')) \
         for p in {QUARTILES:?}]))\n",
        path = data_path.display().to_string(),
    );
    let numpy: Vec<f64> =
        serde_json::from_str(&python(&script).expect("the numpy script runs")).unwrap();
    for (field, expected) in ["weighted_q1", "weighted_median", "weighted_q3"]
        .into_iter()
        .zip(numpy)
    {
        // numpy 2.x `numpy.quantile(x, p, weights=w, method="inverted_cdf")` on the same CSV.
        assert_eq!(summary[field].as_f64(), Some(expected), "{field}");
    }
    // The unweighted quartiles stay type 7, a different definition; they are still there.
    assert!(summary["q1"].as_f64().is_some());
}
