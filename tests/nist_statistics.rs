//! The streaming statistics behind `documented.statistic-mismatch` (`Running` in
//! `src/check/tally.rs`), checked against NIST StRD certified values.
//!
//! Source: NIST Statistical Reference Datasets, univariate summary statistics
//! (itl.nist.gov/div898/strd/univ/), certified to 15 significant digits; the standard
//! deviation uses n - 1. The tolerances are the realistic ones GSL's statistics tests use
//! for double precision (relative: mean 1e-15; sd 1e-9 for NumAcc3, 1e-7 for NumAcc4, 1e-13
//! for Michelso), as listed in shared/reference/check-values.md.
//!
//! The NumAcc datasets are fully specified by NIST's description (a first value, then 500
//! pairs), so they are generated here rather than vendored. Michelso is vendored in
//! `tests/fixtures/nist/michelso.txt` (see its header for where the numbers come from). Lew's
//! data are not available offline, so Lew is not tested; PiDigits, Lottery and Mavro are not
//! vendored either.

use std::path::PathBuf;
use std::process::Command;

use concord::check::tally::Running;

fn running(values: &[f64]) -> Running {
    let mut r = Running::default();
    for &x in values {
        r.push(x);
    }
    r
}

fn assert_rel(what: &str, found: f64, certified: f64, tolerance: f64) {
    let rel = ((found - certified) / certified).abs();
    assert!(
        rel <= tolerance,
        "{what}: found {found:e}, certified {certified:e}, relative error {rel:e} > {tolerance:e}"
    );
}

/// NumAcc2/3/4: `first`, then 500 pairs (`low`, `high`). NIST StRD dataset descriptions.
fn numacc(first: f64, low: f64, high: f64) -> Vec<f64> {
    let mut v = vec![first];
    for _ in 0..500 {
        v.push(low);
        v.push(high);
    }
    v
}

#[test]
fn numacc1() {
    // NIST StRD NumAcc1: 10000001, 10000003, 10000002; mean 10000002, sd 1.
    let r = running(&[10000001.0, 10000003.0, 10000002.0]);
    assert_eq!(r.count, 3);
    assert_rel("NumAcc1 mean", r.mean().unwrap(), 10000002.0, 1e-15);
    assert_rel("NumAcc1 sd", r.sd().unwrap(), 1.0, 1e-15);
    assert_eq!(r.min().unwrap(), 10000001.0);
    assert_eq!(r.max().unwrap(), 10000003.0);
}

#[test]
fn numacc2() {
    // NIST StRD NumAcc2: mean 1.2, sd 0.1.
    let r = running(&numacc(1.2, 1.1, 1.3));
    assert_eq!(r.count, 1001);
    assert_rel("NumAcc2 mean", r.mean().unwrap(), 1.2, 1e-15);
    assert_rel("NumAcc2 sd", r.sd().unwrap(), 0.1, 1e-10);
}

#[test]
fn numacc3() {
    // NIST StRD NumAcc3: mean 1000000.2, sd 0.1.
    let r = running(&numacc(1000000.2, 1000000.1, 1000000.3));
    assert_rel("NumAcc3 mean", r.mean().unwrap(), 1000000.2, 1e-15);
    assert_rel("NumAcc3 sd", r.sd().unwrap(), 0.1, 1e-9);
}

#[test]
fn numacc4() {
    // NIST StRD NumAcc4: mean 10000000.2, sd 0.1. The naive sum-of-squares formula fails here.
    let r = running(&numacc(10000000.2, 10000000.1, 10000000.3));
    assert_rel("NumAcc4 mean", r.mean().unwrap(), 10000000.2, 1e-15);
    assert_rel("NumAcc4 sd", r.sd().unwrap(), 0.1, 1e-7);
}

fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

fn michelso() -> Vec<f64> {
    let path = root().join("tests/fixtures/nist/michelso.txt");
    let text = std::fs::read_to_string(&path).unwrap();
    text.lines()
        .filter(|l| !l.starts_with('#') && !l.trim().is_empty())
        .map(|l| l.trim().parse().unwrap())
        .collect()
}

#[test]
fn michelso_certified_values() {
    // NIST StRD Michelso (lower difficulty): mean 299.852400000000, sd 0.0790105478190518.
    let values = michelso();
    assert_eq!(values.len(), 100);
    let r = running(&values);
    assert_rel("Michelso mean", r.mean().unwrap(), 299.852400000000, 1e-15);
    assert_rel("Michelso sd", r.sd().unwrap(), 0.0790105478190518, 1e-13);
}

/// Statistics of `values` computed in two parts (as two checking threads do) and merged.
fn merged(values: &[f64], at: usize) -> Running {
    let mut left = running(&values[..at]);
    left.merge(&running(&values[at..]));
    left
}

#[test]
fn merged_parts_meet_the_certified_values_wherever_the_split() {
    // The same NIST StRD certified values and tolerances as above, for every split point
    // (including an empty part on either side).
    let sets = [
        (
            "NumAcc3",
            numacc(1000000.2, 1000000.1, 1000000.3),
            1000000.2,
            0.1,
            1e-9,
        ),
        (
            "NumAcc4",
            numacc(10000000.2, 10000000.1, 10000000.3),
            10000000.2,
            0.1,
            1e-7,
        ),
        (
            "Michelso",
            michelso(),
            299.852400000000,
            0.0790105478190518,
            1e-13,
        ),
    ];
    for (name, values, mean, sd, sd_tolerance) in sets {
        for at in 0..=values.len() {
            let r = merged(&values, at);
            assert_eq!(r.count, values.len() as u64);
            assert_rel(
                &format!("{name} mean split at {at}"),
                r.mean().unwrap(),
                mean,
                1e-15,
            );
            assert_rel(
                &format!("{name} sd split at {at}"),
                r.sd().unwrap(),
                sd,
                sd_tolerance,
            );
            let min = values.iter().copied().fold(f64::INFINITY, f64::min);
            assert_eq!(r.min().unwrap(), min);
        }
    }
}

#[test]
fn too_few_values_have_no_statistics() {
    let r = running(&[]);
    assert_eq!(
        (r.mean(), r.sd(), r.min(), r.max()),
        (None, None, None, None)
    );
    let r = running(&[5.0]);
    assert_eq!((r.mean(), r.sd()), (Some(5.0), None));
}

/// Through the binary: documented figures equal to NumAcc4's certified values must agree
/// with what concord computes from the file.
#[test]
fn numacc4_documented_figures_through_the_binary() {
    let dir = tempfile::tempdir().unwrap();
    let codebook = dir.path().join("codebook.toml");
    std::fs::write(
        &codebook,
        r#"[dataset]
name = "numacc4"

[[variables]]
name = "x"
label = "NIST StRD NumAcc4"
kind = "numeric"
documented = { valid = 1001, mean = 10000000.2, sd = 0.1, min = 10000000.1, max = 10000000.3 }
"#,
    )
    .unwrap();
    let mut csv = String::from("x\n10000000.2\n");
    for _ in 0..500 {
        csv.push_str("10000000.1\n10000000.3\n");
    }
    let data = dir.path().join("numacc4.csv");
    std::fs::write(&data, csv).unwrap();
    let out = Command::new(env!("CARGO_BIN_EXE_concord"))
        .args(["check", "--format", "json"])
        .arg(&codebook)
        .arg(&data)
        .output()
        .unwrap();
    let stdout = String::from_utf8_lossy(&out.stdout);
    assert_eq!(out.status.code(), Some(0), "{stdout}");
    let report: serde_json::Value = serde_json::from_str(&stdout).unwrap();
    assert_eq!(report["findings"], serde_json::json!([]), "{stdout}");
    assert_eq!(report["variables"][0]["valid"], 1001);

    // And a documented mean off by more than its rounding is reported.
    std::fs::write(
        &codebook,
        std::fs::read_to_string(&codebook)
            .unwrap()
            .replace("mean = 10000000.2", "mean = 10000000.4"),
    )
    .unwrap();
    let out = Command::new(env!("CARGO_BIN_EXE_concord"))
        .args(["check", "--format", "json"])
        .arg(&codebook)
        .arg(&data)
        .output()
        .unwrap();
    let report: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    let findings = report["findings"].as_array().unwrap();
    assert_eq!(findings.len(), 1, "{report}");
    assert_eq!(findings[0]["rule"], "documented.statistic-mismatch");
    assert_eq!(findings[0]["count"], 1);
    assert_eq!(
        out.status.code(),
        Some(0),
        "a warning does not fail the default gate"
    );
}
