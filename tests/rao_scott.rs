//! The design-adjusted tests of independence for weighted tables (Rao-Scott, first and second
//! order), checked against what lies outside them: Pearson's statistic on Agresti's published
//! table, Kish's design effect of the weights, numpy's eigenvalues of the design effect matrix
//! built case by case, the NIST/SEMATECH chi-square critical values, and their calibration
//! under independence; then through the binary in every format.

mod support;

use std::process::Command;

use concord::tables::stats::{chi_square, chi_square_critical, rao_scott};
use serde_json::Value as Json;
use support::python;

fn close(actual: f64, expected: f64, tolerance: f64, what: &str) {
    assert!(
        (actual - expected).abs() <= tolerance,
        "{what}: expected {expected}, got {actual}"
    );
}

fn as_f64(table: &[Vec<u64>]) -> Vec<Vec<f64>> {
    table
        .iter()
        .map(|r| r.iter().map(|&x| x as f64).collect())
        .collect()
}

#[test]
fn with_unit_weights_the_statistic_is_pearsons() {
    // Agresti (2007) An Introduction to Categorical Data Analysis, 2nd ed., p.39: gender by
    // party identification, chi-square 30.070149 on 2 df. With every weight 1 the weighted
    // proportions are the count proportions, so the uncorrected statistic is Pearson's.
    let table = vec![vec![762, 327, 468], vec![484, 239, 477]];
    let n = table.iter().flatten().sum();
    let counts = as_f64(&table);
    let test = rao_scott(&counts, &counts, n).unwrap();
    close(test.statistic, 30.070149, 1e-6, "Agresti p.39 statistic");
    assert_eq!(test.df, 2);
    close(
        test.statistic,
        chi_square(&table).unwrap().statistic,
        1e-9,
        "against the unweighted Pearson test",
    );
    // Unit weights are a simple random sample drawn with replacement: the design effect is
    // near 1 (not exactly: it is estimated from the table, with the n / (n - 1) factor).
    assert!(
        (0.95..1.05).contains(&test.design_effect),
        "{}",
        test.design_effect
    );
}

#[test]
fn an_independent_table_with_unit_weights_has_design_effect_n_over_n_minus_1() {
    // Worked by hand from the definition: when the proportions are exactly independent the
    // linearised expectation of X^2 under multinomial sampling is the df, times the
    // with-replacement variance factor n / (n - 1).
    let table = vec![vec![8, 16], vec![12, 24]];
    let counts = as_f64(&table);
    let test = rao_scott(&counts, &counts, 60).unwrap();
    close(test.statistic, 0.0, 1e-12, "independent table");
    close(test.design_effect, 60.0 / 59.0, 1e-12, "n / (n - 1)");
    // Every eigenvalue is n / (n - 1), so the second order changes nothing.
    close(test.second_order_df, 1.0, 1e-12, "second-order df");
    let table = vec![vec![8, 16, 4], vec![12, 24, 6], vec![20, 40, 10]];
    let counts = as_f64(&table);
    let test = rao_scott(&counts, &counts, 140).unwrap();
    close(test.design_effect, 140.0 / 139.0, 1e-12, "3 x 3");
    close(test.second_order_df, 4.0, 1e-9, "3 x 3 second-order df");
}

#[test]
fn weights_unrelated_to_the_table_give_kishs_design_effect() {
    // Kish (1965) Survey Sampling; Kish (1992) J. Official Statistics 8(2):183-200: the toy
    // weights (1, 1, 1, 3) have deff = n sum w^2 / (sum w)^2 = 4/3. Every cell holds its cases
    // in fours weighted 1, 1, 1, 3, so the weights are unrelated to the table and the design
    // effect is Kish's times that of unit weights.
    let table = vec![vec![8, 16, 4], vec![12, 24, 36]];
    let n: u64 = table.iter().flatten().sum();
    let unit = as_f64(&table);
    let w: Vec<Vec<f64>> = unit
        .iter()
        .map(|r| r.iter().map(|x| x / 4.0 * 6.0).collect())
        .collect();
    let w2: Vec<Vec<f64>> = unit
        .iter()
        .map(|r| r.iter().map(|x| x / 4.0 * 12.0).collect())
        .collect();
    let plain = rao_scott(&unit, &unit, n).unwrap();
    let weighted = rao_scott(&w, &w2, n).unwrap();
    close(
        weighted.design_effect / plain.design_effect,
        4.0 / 3.0,
        1e-12,
        "Kish's toy deff",
    );
    // The weighted proportions are the same, so the uncorrected statistic is too, and the
    // corrected one is smaller by Kish's factor.
    close(
        weighted.statistic,
        plain.statistic,
        1e-9,
        "same proportions",
    );
    close(
        plain.corrected / weighted.corrected,
        4.0 / 3.0,
        1e-12,
        "corrected",
    );
    // Every eigenvalue moves by the same factor: the second-order df stays.
    close(
        weighted.second_order_df,
        plain.second_order_df,
        1e-9,
        "second-order df",
    );
}

/// Cases of a 3 x 4 table whose weights depend on the column (column 0 holds weights of 1 and
/// 15, the others 1 and 2), so that the cells' design effects differ: (row, column, weight).
fn uneven_cases(rng: &mut Rng, n: usize) -> Vec<(usize, usize, f64)> {
    let pick = |u: f64, shares: &[f64]| {
        let mut acc = 0.0;
        shares
            .iter()
            .position(|s| {
                acc += s;
                u < acc
            })
            .unwrap_or(shares.len() - 1)
    };
    (0..n)
        .map(|_| {
            let row = pick(rng.next(), &[0.2, 0.3, 0.5]);
            let column = pick(rng.next(), &[0.25, 0.25, 0.25, 0.25]);
            let heavy = rng.next() < 0.5;
            let weight = match (column, heavy) {
                (0, true) => 15.0,
                (_, true) => 2.0,
                _ => 1.0,
            };
            (row, column, weight)
        })
        .collect()
}

fn sums(cases: &[(usize, usize, f64)], rows: usize, columns: usize) -> [Vec<Vec<f64>>; 2] {
    let mut w = vec![vec![0.0; columns]; rows];
    let mut w2 = vec![vec![0.0; columns]; rows];
    for &(r, c, weight) in cases {
        w[r][c] += weight;
        w2[r][c] += weight * weight;
    }
    [w, w2]
}

/// The sum of the eigenvalues and of their squares the slow way, from the linearised
/// residual of a case in each cell written out cell by cell (see `rao_scott`'s doc):
/// `G(c, d) = sum_ij beta_c(ij) beta_d(ij) / p0_ij` over all pairs of cells.
fn direct_sums(w: &[Vec<f64>], w2: &[Vec<f64>], n: u64) -> (f64, f64) {
    let (r, c) = (w.len(), w[0].len());
    let total: f64 = w.iter().flatten().sum();
    let a: Vec<f64> = w
        .iter()
        .map(|row| row.iter().sum::<f64>() / total)
        .collect();
    let b: Vec<f64> = (0..c)
        .map(|j| w.iter().map(|row| row[j]).sum::<f64>() / total)
        .collect();
    let beta = |x: usize, y: usize| -> Vec<f64> {
        let mut v = Vec::with_capacity(r * c);
        for i in 0..r {
            for j in 0..c {
                let own = f64::from(u8::from(i == x && j == y));
                let k = 2.0 * a[i] * b[j] - w[i][j] / total;
                v.push(
                    own - b[j] * f64::from(u8::from(i == x)) - a[i] * f64::from(u8::from(j == y))
                        + k,
                );
            }
        }
        v
    };
    let cells: Vec<(usize, usize)> = (0..r).flat_map(|x| (0..c).map(move |y| (x, y))).collect();
    let betas: Vec<Vec<f64>> = cells.iter().map(|&(x, y)| beta(x, y)).collect();
    let g = |p: usize, q: usize| -> f64 {
        (0..r * c)
            .map(|m| betas[p][m] * betas[q][m] / (a[m / c] * b[m % c]))
            .sum()
    };
    let nf = n as f64;
    let scale = nf * nf / (nf - 1.0) / (total * total);
    let s = |p: usize| w2[cells[p].0][cells[p].1];
    let sum: f64 = (0..cells.len()).map(|p| s(p) * g(p, p)).sum();
    let sum2: f64 = (0..cells.len())
        .flat_map(|p| (0..cells.len()).map(move |q| (p, q)))
        .map(|(p, q)| s(p) * s(q) * g(p, q).powi(2))
        .sum();
    (scale * sum, scale * scale * sum2)
}

#[test]
fn the_closed_form_matches_the_sums_written_out() {
    let mut rng = Rng(0x0123_4567_89ab_cdef);
    for (rows, columns) in [(2, 2), (3, 4), (6, 5), (9, 3)] {
        let mut w = vec![vec![0.0; columns]; rows];
        let mut w2 = vec![vec![0.0; columns]; rows];
        let n = 500;
        for _ in 0..n {
            let row = ((rng.next() * rows as f64) as usize).min(rows - 1);
            let column = ((rng.next().powi(2) * columns as f64) as usize).min(columns - 1);
            let weight = 0.5 + 10.0 * rng.next().powi(3) * (1 + row % 2) as f64;
            w[row][column] += weight;
            w2[row][column] += weight * weight;
        }
        let test = rao_scott(&w, &w2, n).unwrap();
        let (sum, sum2) = direct_sums(&w, &w2, n);
        let what = format!("{rows} x {columns}");
        close(test.design_effect * test.df as f64 / sum, 1.0, 1e-10, &what);
        close(test.second_order_df / (sum * sum / sum2), 1.0, 1e-10, &what);
    }
}

/// numpy (PyPI), a general-purpose reference, builds the design effect matrix the long way
/// from its definition: the covariance of the weighted cell proportions from each case's
/// linearised contribution (with-replacement, n / (n - 1)), the Jacobian of the residuals
/// `p_ij - p_i. p_.j`, and the eigenvalues of `n D^-1/2 J V J' D^-1/2` with `D = diag(p0)`.
/// Their sum and the sum of their squares must match concord's closed form. Runs when numpy
/// is importable; under CI=true it must.
#[test]
fn the_design_effects_match_numpys_eigenvalues() {
    if !support::numpy() {
        return;
    }
    let mut rng = Rng(0x5eed_0f7a_b1e5);
    let cases = uneven_cases(&mut rng, 300);
    let [w, w2] = sums(&cases, 3, 4);
    let test = rao_scott(&w, &w2, cases.len() as u64).unwrap();
    let listed: Vec<String> = cases
        .iter()
        .map(|(r, c, weight)| format!("({r}, {c}, {weight})"))
        .collect();
    let script = format!(
        r#"
import json, numpy as np
cases = [{cases}]
R, C, n = 3, 4, len(cases)
x = np.array([c[0] for c in cases]); y = np.array([c[1] for c in cases])
wt = np.array([c[2] for c in cases], dtype=float)
W = wt.sum()
P = np.zeros((R, C)); np.add.at(P, (x, y), wt); P /= W
a, b = P.sum(1), P.sum(0)
p = P.ravel()
# Per case: its weight times (its cell indicator - p), over W; covariance with n / (n - 1).
Z = np.zeros((n, R * C))
Z[np.arange(n), x * C + y] = 1.0
Z = (Z - p) * (wt / W)[:, None]
V = n / (n - 1) * Z.T @ Z
# d(p_ij - p_i. p_.j) / d p_kl = [ij = kl] - [i = k] b_j - [j = l] a_i
J = np.eye(R * C)
for i in range(R):
    for j in range(C):
        for k in range(R):
            for l in range(C):
                J[i * C + j, k * C + l] -= (i == k) * b[j] + (j == l) * a[i]
D = np.diag(1 / np.sqrt(np.outer(a, b).ravel()))
d = np.linalg.eigvalsh(n * D @ J @ V @ J.T @ D)
print(json.dumps({{"sum": float(d.sum()), "sum2": float((d ** 2).sum())}}))
"#,
        cases = listed.join(", ")
    );
    let numpy: Json =
        serde_json::from_str(&python(&script).expect("the numpy script runs")).unwrap();
    let (sum, sum2) = (
        numpy["sum"].as_f64().unwrap(),
        numpy["sum2"].as_f64().unwrap(),
    );
    let df = test.df as f64;
    close(
        test.design_effect * df / sum,
        1.0,
        1e-9,
        "sum of eigenvalues",
    );
    close(
        test.second_order_df / (sum * sum / sum2),
        1.0,
        1e-9,
        "second-order df",
    );
    close(
        test.second_order / (test.statistic * sum / sum2),
        1.0,
        1e-9,
        "second-order statistic",
    );
    // The design effects do differ here, so the second order has work to do.
    assert!(test.second_order_df < df - 0.5, "{test:?}");
}

#[test]
fn scaling_the_weights_changes_nothing() {
    // Common practice: design weights summing to the population and the same weights scaled
    // to mean 1 describe the same design.
    let w = vec![vec![3.5, 1.25, 7.0], vec![2.0, 9.5, 0.75]];
    let w2 = vec![vec![4.5, 1.0, 30.0], vec![2.5, 50.0, 0.5]];
    let a = rao_scott(&w, &w2, 40).unwrap();
    let scale = |m: &[Vec<f64>], f: f64| -> Vec<Vec<f64>> {
        m.iter()
            .map(|r| r.iter().map(|x| x * f).collect())
            .collect()
    };
    let b = rao_scott(&scale(&w, 1000.0), &scale(&w2, 1e6), 40).unwrap();
    close(a.design_effect, b.design_effect, 1e-9, "design effect");
    close(a.corrected, b.corrected, 1e-9, "corrected statistic");
}

#[test]
fn empty_rows_and_columns_are_left_out_and_degenerate_tables_refused() {
    let w = vec![
        vec![5.0, 0.0, 3.0],
        vec![0.0, 0.0, 0.0],
        vec![2.0, 0.0, 6.0],
    ];
    let test = rao_scott(&w, &w, 16).unwrap();
    assert_eq!(test.df, 1, "one row and one column carry no weight");
    assert!(rao_scott(&[vec![1.0, 2.0]], &[vec![1.0, 2.0]], 3).is_none());
    assert!(rao_scott(&w, &w, 1).is_none(), "one case");
    assert!(rao_scott(&w, &w[..2], 16).is_none(), "shapes differ");
    let negative = vec![vec![1.0, -1.0], vec![1.0, 1.0]];
    let squares = vec![vec![1.0, 1.0], vec![1.0, 1.0]];
    assert!(rao_scott(&squares, &squares, 4).is_some());
    assert!(
        rao_scott(&negative, &squares, 4).is_none(),
        "a negative weight"
    );
}

/// A small deterministic generator (xorshift64*, Vigna 2016) for the simulation below.
struct Rng(u64);

impl Rng {
    fn next(&mut self) -> f64 {
        self.0 ^= self.0 >> 12;
        self.0 ^= self.0 << 25;
        self.0 ^= self.0 >> 27;
        (self.0.wrapping_mul(0x2545_f491_4f6c_dd1d) >> 11) as f64 / (1u64 << 53) as f64
    }
}

#[test]
fn the_corrected_test_holds_its_size_under_independence() {
    // Calibration: two independent variables (2 and 3 categories), half the cases weighted 1
    // and half 9 at random, so weighting alone inflates Pearson's statistic by about Kish's
    // deff 1.64. At the 5% level (critical value 5.991 for 2 df, NIST/SEMATECH e-Handbook
    // 1.3.6.7.4) the corrected test must reject about 5% of 4000 samples of 400 cases; the
    // uncorrected statistic on the weighted proportions rejects far more often.
    let critical = chi_square_critical(2.0, 0.05).unwrap();
    close(critical, 5.991, 5e-4, "NIST df 2, alpha .05");
    let mut rng = Rng(0x9e37_79b9_7f4a_7c15);
    let (replicates, n) = (4000, 400);
    let (mut corrected, mut naive) = (0, 0);
    for _ in 0..replicates {
        let mut w = vec![vec![0.0; 3]; 2];
        let mut w2 = vec![vec![0.0; 3]; 2];
        for _ in 0..n {
            let row = usize::from(rng.next() < 0.4);
            let u = rng.next();
            let column = if u < 0.2 {
                0
            } else if u < 0.5 {
                1
            } else {
                2
            };
            let weight = if rng.next() < 0.5 { 1.0 } else { 9.0 };
            w[row][column] += weight;
            w2[row][column] += weight * weight;
        }
        let test = rao_scott(&w, &w2, n).unwrap();
        corrected += u32::from(test.corrected > critical);
        naive += u32::from(test.statistic > critical);
    }
    let size = f64::from(corrected) / replicates as f64;
    let naive_size = f64::from(naive) / replicates as f64;
    eprintln!("corrected size {size}, uncorrected size {naive_size}");
    assert!(
        (0.035..=0.065).contains(&size),
        "corrected test size {size}"
    );
    assert!(naive_size > 0.12, "uncorrected size {naive_size}");
}

#[test]
fn the_second_order_test_holds_its_size_when_design_effects_differ() {
    // Calibration as above on the 3 x 4 table of `uneven_cases`, whose column of heavy
    // weights gives its cells larger design effects than the rest: at the 5% level (the
    // chi-square quantile on the second-order df; for 6 df the NIST/SEMATECH value is
    // 12.592) the second-order test must reject about 5% of 3000 samples of 1000 cases, and
    // do better than the first order, which the uneven design effects make too liberal.
    // (With 400 cases it rejected 6.7%: the design effects are estimated, and weights of 1
    // and 15 need a larger sample.)
    close(
        chi_square_critical(6.0, 0.05).unwrap(),
        12.592,
        5e-4,
        "NIST df 6",
    );
    let mut rng = Rng(0x0000_ddba_11c0_ffee);
    let replicates = 3000;
    let (mut second, mut first) = (0, 0);
    for _ in 0..replicates {
        let cases = uneven_cases(&mut rng, 1000);
        let [w, w2] = sums(&cases, 3, 4);
        let test = rao_scott(&w, &w2, 1000).unwrap();
        second += u32::from(test.second_order_p_value < 0.05);
        first += u32::from(test.p_value < 0.05);
    }
    let size = f64::from(second) / replicates as f64;
    let first_size = f64::from(first) / replicates as f64;
    eprintln!("first-order size {first_size}, second-order size {size}");
    assert!((0.035..=0.065).contains(&size), "second-order size {size}");
    assert!(
        first_size > size + 0.01,
        "first order {first_size}, second {size}"
    );
}

fn tally(args: &[&str]) -> std::process::Output {
    let root = support::root();
    Command::new(env!("CARGO_BIN_EXE_concord"))
        .arg("tally")
        .arg(root.join("demo-data/codebook.toml"))
        .arg(root.join("demo-data/wave1.csv"))
        .args(args)
        .output()
        .unwrap()
}

#[test]
fn weighted_cross_tabulations_carry_the_test_in_every_format() {
    let out = tally(&["fuel", "--by", "district", "--format", "json"]);
    assert!(out.status.success(), "{out:?}");
    let json: Json = serde_json::from_slice(&out.stdout).unwrap();
    let test = &json["crosstab"]["rao_scott"];
    let (statistic, deff) = (
        test["statistic"].as_f64().unwrap(),
        test["design_effect"].as_f64().unwrap(),
    );
    close(
        test["corrected"].as_f64().unwrap(),
        statistic / deff,
        1e-9,
        "corrected = statistic / design effect",
    );
    assert_eq!(test["df"], json["crosstab"]["chi_square"]["df"]);
    let second = &test["second_order"];
    assert!(second["df"].as_f64().unwrap() <= test["df"].as_f64().unwrap() + 1e-9);
    assert!((0.0..=1.0).contains(&second["p_value"].as_f64().unwrap()));
    let notes = json["notes"].to_string();
    assert!(notes.contains("Rao-Scott"), "{notes}");

    let text = String::from_utf8(tally(&["fuel", "--by", "district"]).stdout).unwrap();
    assert!(text.contains("Rao-Scott chi-square"), "{text}");
    let csv =
        String::from_utf8(tally(&["fuel", "--by", "district", "--format", "csv"]).stdout).unwrap();
    let mut reader = csv::Reader::from_reader(csv.as_bytes());
    let header = reader.headers().unwrap().clone();
    let at = |name: &str| header.iter().position(|h| h == name).unwrap();
    let row = reader
        .records()
        .map(Result::unwrap)
        .find(|r| &r[at("table")] == "rao-scott")
        .expect("a rao-scott row");
    let second_row = reader_rows(&csv, "rao-scott-second-order");
    close(
        second_row[at("df")].parse().unwrap(),
        second["df"].as_f64().unwrap(),
        1e-3,
        "csv second-order df",
    );
    close(
        row[at("design_effect")].parse().unwrap(),
        deff,
        1e-6,
        "csv design effect",
    );

    // Unweighted: no design-adjusted test.
    let out = tally(&[
        "fuel",
        "--by",
        "district",
        "--unweighted",
        "--format",
        "json",
    ]);
    let json: Json = serde_json::from_slice(&out.stdout).unwrap();
    assert!(json["crosstab"]["rao_scott"].is_null());
    // Withheld with the Pearson test when cells are suppressed.
    let out = tally(&[
        "fuel",
        "--by",
        "district",
        "--suppress-below",
        "5",
        "--format",
        "json",
    ]);
    let json: Json = serde_json::from_slice(&out.stdout).unwrap();
    assert!(json["crosstab"]["rao_scott"].is_null());
    assert!(json["crosstab"]["chi_square"].is_null());
}

/// The CSV row of `table`.
fn reader_rows(csv: &str, table: &str) -> csv::StringRecord {
    let mut reader = csv::Reader::from_reader(csv.as_bytes());
    let at = reader
        .headers()
        .unwrap()
        .iter()
        .position(|h| h == "table")
        .unwrap();
    reader
        .records()
        .map(Result::unwrap)
        .find(|r| &r[at] == table)
        .unwrap_or_else(|| panic!("no {table} row"))
}
