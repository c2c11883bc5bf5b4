//! `concord recode` through the built binary: applying the demo recodes end to end, bad
//! input, division by zero, and the quantile and cut banding compared with numpy.

mod support;

use support::{numpy_with_weights, python};

use std::collections::HashMap;
use std::fs;
use std::path::{Path, PathBuf};
use std::process::Command;

use assert_cmd::cargo::CommandCargoExt;
use serde_json::Value as Json;

fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

fn concord() -> Command {
    Command::cargo_bin("concord").unwrap()
}

fn run(args: &[&dyn AsRef<std::ffi::OsStr>]) -> (i32, String, String) {
    let out = concord().args(args).output().unwrap();
    (
        out.status.code().unwrap_or(-1),
        String::from_utf8_lossy(&out.stdout).into_owned(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

fn read_csv(path: &Path) -> (Vec<String>, Vec<Vec<String>>) {
    let mut r = csv::Reader::from_path(path).unwrap();
    let header = r.headers().unwrap().iter().map(str::to_string).collect();
    let rows = r
        .records()
        .map(|x| x.unwrap().iter().map(str::to_string).collect())
        .collect();
    (header, rows)
}

fn column(header: &[String], name: &str) -> usize {
    header.iter().position(|h| h == name).unwrap()
}

#[test]
fn demo_recodes_apply_and_the_output_passes_check() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("out.csv");
    let audit = dir.path().join("audit.json");
    let codebook = root().join("demo-data/codebook.toml");
    let (code, stdout, stderr) = run(&[
        &"recode",
        &codebook,
        &root().join("demo-data/recodes.toml"),
        &root().join("demo-data/wave1.csv"),
        &"-o",
        &out,
        &"--audit",
        &audit,
    ]);
    assert_eq!(code, 0, "{stdout}\n{stderr}");
    let out_codebook = dir.path().join("out.codebook.toml");
    assert!(out_codebook.is_file());
    let (lint, lint_out, _) = run(&[&"lint", &out_codebook]);
    assert_eq!(lint, 0, "{lint_out}");
    let (check, check_out, check_err) = run(&[&"check", &out_codebook, &out]);
    assert_eq!(check, 0, "{check_out}\n{check_err}");

    // Independent recounts from the written file, against the audit.
    let (header, rows) = read_csv(&out);
    let audit: Json = serde_json::from_str(&fs::read_to_string(&audit).unwrap()).unwrap();
    let table = |name: &str| {
        audit["audit"]
            .as_array()
            .unwrap()
            .iter()
            .find(|t| t["name"] == name)
            .unwrap()
            .clone()
    };
    // solid_fuel: count (fuel code, derived code) pairs in the file.
    let (fuel, solid) = (column(&header, "fuel"), column(&header, "solid_fuel"));
    let mut pairs: HashMap<(String, String), u64> = HashMap::new();
    for r in &rows {
        *pairs
            .entry((r[fuel].clone(), r[solid].clone()))
            .or_default() += 1;
    }
    for row in table("solid_fuel")["rows"].as_array().unwrap() {
        let key = (
            row["source"].as_str().unwrap().to_string(),
            row["derived"].as_str().unwrap_or("").to_string(),
        );
        assert_eq!(
            pairs.get(&key).copied().unwrap_or(0),
            row["count"].as_u64().unwrap(),
            "solid_fuel {key:?}"
        );
    }
    // heat_band: recount each band of heat_hours by hand, and the missing codes.
    let (hours, band) = (column(&header, "heat_hours"), column(&header, "heat_band"));
    let mut by_band = [0u64; 4];
    let mut missing: HashMap<String, u64> = HashMap::new();
    for r in &rows {
        match r[hours].trim() {
            "97" | "98" => {
                assert_eq!(r[band], r[hours].trim(), "missing codes carry over");
                *missing.entry(r[hours].trim().to_string()).or_default() += 1;
            }
            text => {
                let h: f64 = text.parse().unwrap();
                let expected = if h <= 4.0 {
                    1
                } else if h <= 8.0 {
                    2
                } else if h <= 12.0 {
                    3
                } else {
                    4
                };
                assert_eq!(r[band], expected.to_string(), "heat_hours {h}");
                by_band[expected - 1] += 1;
            }
        }
    }
    let t = table("heat_band");
    let rows_of = |class: &str| -> Vec<Json> {
        t["rows"]
            .as_array()
            .unwrap()
            .iter()
            .filter(|r| r["source_class"] == class)
            .cloned()
            .collect()
    };
    let bands: Vec<u64> = rows_of("band")
        .iter()
        .map(|r| r["count"].as_u64().unwrap())
        .collect();
    assert_eq!(bands, by_band);
    for r in rows_of("missing-code") {
        let code = r["source"].as_str().unwrap();
        assert_eq!(r["count"].as_u64().unwrap(), missing[code], "{code}");
    }
    // stove_age_band: cases without a wood stove are skipped (empty), counted as `when`.
    let (stove, age_band) = (
        column(&header, "wood_stove"),
        column(&header, "stove_age_band"),
    );
    let not_stove = rows.iter().filter(|r| r[stove].trim() != "1").count() as u64;
    assert!(rows
        .iter()
        .filter(|r| r[stove].trim() != "1")
        .all(|r| r[age_band].is_empty()));
    let when: u64 = table("stove_age_band")["rows"]
        .as_array()
        .unwrap()
        .iter()
        .filter(|r| r["source_class"] == "when-not-true")
        .map(|r| r["count"].as_u64().unwrap())
        .sum();
    assert_eq!(when, not_stove);
    // The quantile cut points are printed in the audit.
    assert_eq!(
        table("heat_quartile")["cut_points"]
            .as_array()
            .unwrap()
            .len(),
        3
    );
}

#[test]
fn static_validation_exit_codes() {
    let fx = root().join("tests/fixtures/recodes");
    let codebook = fx.join("codebook.toml");
    let (ok, stdout, _) = run(&[&"recode", &codebook, &fx.join("clean.toml")]);
    assert_eq!(ok, 0, "{stdout}");
    let (gap, stdout, _) = run(&[&"recode", &codebook, &fx.join("gap-decimals.toml")]);
    assert_eq!(gap, 1);
    assert!(stdout.contains("recode.gap"), "{stdout}");
    assert!(
        stdout.contains("values 29.1 to 29.9 (the interval (29, 30))"),
        "{stdout}"
    );
    let (json, stdout, _) = run(&[
        &"recode",
        &codebook,
        &fx.join("gap-decimals.toml"),
        &"--format",
        &"json",
    ]);
    assert_eq!(json, 1);
    let body: Json = serde_json::from_str(&stdout).unwrap();
    assert_eq!(body["errors"], 3);
    assert_eq!(body["diagnostics"][1]["line"], 9);
    let (never, _, _) = run(&[
        &"recode",
        &codebook,
        &fx.join("gap-decimals.toml"),
        &"--fail-on",
        &"never",
    ]);
    assert_eq!(never, 0);
}

/// Run a recode file against the fixture data; returns exit code, stderr and whether any
/// file appeared in the output folder.
fn apply_fixture(recodes: &str, data: &str) -> (i32, String, bool, PathBuf, tempfile::TempDir) {
    let fx = root().join("tests/fixtures/recodes");
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("out.csv");
    let (code, stdout, stderr) = run(&[
        &"recode",
        &fx.join("codebook.toml"),
        &fx.join(recodes),
        &fx.join(data),
        &"-o",
        &out,
    ]);
    let written = fs::read_dir(dir.path()).unwrap().count() > 0;
    (code, format!("{stdout}{stderr}"), written, out, dir)
}

#[test]
fn bad_input_is_refused_and_nothing_is_written() {
    for (fixture, exit, needle) in [
        ("unknown-source.toml", 2, "did you mean `age`?"),
        ("bands-on-text.toml", 2, "recode.not-numeric"),
        (
            "map-key-not-a-code.toml",
            1,
            "`5` in the `map` of `active` is not a code",
        ),
        ("invalid/syntax-error.toml", 2, "recode.syntax"),
        ("invalid/unknown-key.toml", 2, "did you mean `from`?"),
        ("invalid/two-methods.toml", 2, "gives 2 methods (cuts, map)"),
    ] {
        let (code, output, written, _, _dir) = apply_fixture(fixture, "division.csv");
        assert_eq!(code, exit, "{fixture}: {output}");
        assert!(output.contains(needle), "{fixture}: {output}");
        assert!(!written, "{fixture} wrote a file");
    }
}

#[test]
fn an_output_over_an_input_is_refused() {
    let fx = root().join("tests/fixtures/recodes");
    let dir = tempfile::tempdir().unwrap();
    let data = dir.path().join("data.csv");
    fs::copy(fx.join("division.csv"), &data).unwrap();
    let before = fs::read(&data).unwrap();
    let (code, _, stderr) = run(&[
        &"recode",
        &fx.join("codebook.toml"),
        &fx.join("division.toml"),
        &data,
        &"-o",
        &data,
    ]);
    assert_eq!(code, 2, "{stderr}");
    assert_eq!(fs::read(&data).unwrap(), before);
}

#[test]
fn division_by_zero_is_missing_of_kind_other_and_counted() {
    let (code, output, _, out, _dir) = apply_fixture("division.toml", "division.csv");
    assert_eq!(code, 0, "{output}");
    let (header, rows) = read_csv(&out);
    let per_a = column(&header, "per_a");
    let cells: Vec<&str> = rows.iter().map(|r| r[per_a].as_str()).collect();
    // 10/2, 12/0, 0/0, a refused (-7 carries over), 8/4.
    assert_eq!(cells, ["5", "-9", "-9", "-7", "2"]);
    assert!(output.contains("division by zero / not finite"), "{output}");
    let line = output
        .lines()
        .find(|l| l.contains("division by zero"))
        .unwrap();
    assert!(line.contains(" 2 "), "{line}");
    let written = fs::read_to_string(out.with_extension("codebook.toml")).unwrap();
    assert!(
        written.contains("code = -9, label = \"Not computable\", kind = \"other\""),
        "{written}"
    );
}

/// Type 1 (the inverse of the empirical distribution function), unweighted and weighted,
/// against numpy (PyPI), a general-purpose reference: `numpy.quantile(method="inverted_cdf")`,
/// with `weights=` for the weighted form (numpy 2.0 and later). Cut points must be equal to
/// the last bit, and so must every case's band (`numpy.digitize(x, cuts, right=True)` numbers
/// right-closed bands). Runs when numpy is importable; under CI=true it must.
#[test]
fn type_1_quantile_bands_match_numpy_weighted_and_not() {
    if !numpy_with_weights() {
        return;
    }
    let values = sample(613);
    let dir = weighted_folder(&values, 0x1234_5678_9abc_def1, &[]);
    let labels = band_labels(5);
    let recodes = format!(
        "[[derive]]\nname = \"q1\"\nfrom = \"x\"\nquantiles = 5\nquantile_type = 1\nweighted = false\ncategories = [{labels}]\n\n\
         [[derive]]\nname = \"q1w\"\nfrom = \"x\"\nquantiles = 5\nquantile_type = 1\ncategories = [{labels}]\n"
    );
    let (out, audit) = apply_in(dir.path(), &recodes);
    let script = format!(
        r#"
import csv, json, numpy as np
rows = list(csv.DictReader(open({data:?})))
x = np.array([float(r["x"]) for r in rows])
w = np.array([float(r["w"]) for r in rows])
p = [j / 5 for j in range(1, 5)]
out = {{}}
for name, weights in [("q1", None), ("q1w", w)]:
    cuts = np.quantile(x, p, method="inverted_cdf", weights=weights)
    out[name] = {{"cuts": [float(c) for c in cuts],
                  "bands": [int(b) + 1 for b in np.digitize(x, cuts, right=True)]}}
print(json.dumps(out))
"#,
        data = dir.path().join("data.csv").display().to_string()
    );
    let numpy: Json =
        serde_json::from_str(&python(&script).expect("the numpy script runs")).unwrap();
    let (header, rows) = read_csv(&out);
    for name in ["q1", "q1w"] {
        assert_eq!(
            audit_table(&audit, name)["cut_points"],
            numpy[name]["cuts"],
            "{name} cut points"
        );
        assert_bands(&header, &rows, &numpy, name);
    }
    assert_ne!(
        numpy["q1"]["cuts"], numpy["q1w"]["cuts"],
        "the weights move the cut points"
    );
}

/// Weighted type 7 has no published definition; concord's (`src/recode/quantile.rs`) puts
/// each sorted value at the centre of its weight, rescaled so the extremes sit at 0 and 1,
/// after cases sharing a value have shared their weight evenly, and interpolates linearly.
/// numpy (PyPI), a general-purpose reference, computes the same from that description
/// (`numpy.unique` for the runs, `numpy.cumsum`, `numpy.interp`): cut points must agree to
/// 1e-9 and every case's band exactly, on values with few ties and on values with many.
/// Runs when numpy is importable; under CI=true it must.
#[test]
fn weighted_type_7_quantile_bands_match_numpy_interp() {
    if !numpy_with_weights() {
        return;
    }
    let values = sample(587);
    // `t` has about three cases on each of its values, so cut points fall between runs of
    // tied values as well as inside them.
    let dir = weighted_folder(&values, 0x0bad_5eed_1234_5678, &["t"]);
    let labels = band_labels(5);
    let recodes = format!(
        "[[derive]]\nname = \"xw\"\nfrom = \"x\"\nquantiles = 5\ncategories = [{labels}]\n\n\
         [[derive]]\nname = \"tw\"\nfrom = \"t\"\nquantiles = 5\ncategories = [{labels}]\n"
    );
    let (out, audit) = apply_in(dir.path(), &recodes);
    let script = format!(
        r#"
import csv, json, numpy as np
rows = list(csv.DictReader(open({data:?})))
w = np.array([float(r["w"]) for r in rows])
p = [j / 5 for j in range(1, 5)]
out = {{}}
for name, column in [("xw", "x"), ("tw", "t")]:
    x = np.array([float(r[column]) for r in rows])
    order = np.argsort(x, kind="stable")
    xs, ws = x[order], w[order]
    _, run, size = np.unique(xs, return_inverse=True, return_counts=True)
    ws = (np.bincount(run, weights=ws) / size)[run]
    s = np.cumsum(ws)
    positions = (s - ws / 2 - ws[0] / 2) / (s[-1] - ws[0] / 2 - ws[-1] / 2)
    cuts = np.interp(p, positions, xs)
    out[name] = {{"cuts": [float(c) for c in cuts],
                  "bands": [int(b) + 1 for b in np.digitize(x, cuts, right=True)]}}
print(json.dumps(out))
"#,
        data = dir.path().join("data.csv").display().to_string()
    );
    let numpy: Json =
        serde_json::from_str(&python(&script).expect("the numpy script runs")).unwrap();
    let (header, rows) = read_csv(&out);
    for name in ["xw", "tw"] {
        let ours = audit_table(&audit, name)["cut_points"].as_array().unwrap();
        let theirs = numpy[name]["cuts"].as_array().unwrap();
        assert_eq!(ours.len(), theirs.len(), "{name}");
        for (a, b) in ours.iter().zip(theirs) {
            let (a, b) = (a.as_f64().unwrap(), b.as_f64().unwrap());
            assert!(
                (a - b).abs() <= 1e-9,
                "{name} cut points: {ours:?} vs {theirs:?}"
            );
        }
        assert_bands(&header, &rows, &numpy, name);
    }
}

/// A folder with `data.csv` (`id`, `x` from `values`, the optional `t` = `x` floored to a
/// half, and a weight `w` from 0.1 to 3.1 drawn from `seed`) and a `codebook.toml` naming
/// `w` the dataset weight.
fn weighted_folder(values: &[f64], seed: u64, extra: &[&str]) -> tempfile::TempDir {
    let with_t = extra.contains(&"t");
    let dir = tempfile::tempdir().unwrap();
    let mut state = seed;
    let mut data = String::from(if with_t { "id,x,t,w\n" } else { "id,x,w\n" });
    for (i, v) in values.iter().enumerate() {
        state = state
            .wrapping_mul(6_364_136_223_846_793_005)
            .wrapping_add(1_442_695_040_888_963_407);
        let w = 0.1 + ((state >> 33) % 30_000) as f64 / 10_000.0;
        let t = if with_t {
            format!(",{}", (v * 2.0).floor() / 2.0)
        } else {
            String::new()
        };
        data.push_str(&format!("C{i},{v}{t},{w:.4}\n"));
    }
    fs::write(dir.path().join("data.csv"), &data).unwrap();
    let t = if with_t {
        "[[variables]]\nname = \"t\"\nkind = \"numeric\"\nrange = { min = 0, max = 100 }\ndecimals = 1\n\n"
    } else {
        ""
    };
    fs::write(
        dir.path().join("codebook.toml"),
        format!(
            "[dataset]\nname = \"numpy\"\nid = [\"id\"]\nweight = \"w\"\n\n[[variables]]\nname = \"id\"\nkind = \"identifier\"\n\n\
             [[variables]]\nname = \"x\"\nkind = \"numeric\"\nrange = {{ min = 0, max = 100 }}\ndecimals = 2\n\n{t}\
             [[variables]]\nname = \"w\"\nkind = \"numeric\"\nrange = {{ min = 0, max = 10 }}\ndecimals = 4\n"
        ),
    )
    .unwrap();
    dir
}

/// Categories `band 1` to `band n` for a recode's `categories = [...]`.
fn band_labels(n: usize) -> String {
    (1..=n)
        .map(|k| format!("{{ code = {k}, label = \"band {k}\" }}"))
        .collect::<Vec<_>>()
        .join(", ")
}

/// The audit table of derived variable `name`.
fn audit_table<'a>(audit: &'a Json, name: &str) -> &'a Json {
    audit["audit"]
        .as_array()
        .unwrap()
        .iter()
        .find(|t| t["name"] == name)
        .unwrap_or_else(|| panic!("no audit table for {name}: {audit}"))
}

/// Type-6 quantiles have no weighted form: with a dataset weight in the codebook they must be
/// asked for unweighted, not quietly weighted by another definition.
#[test]
fn type_6_quantiles_with_a_dataset_weight_must_say_unweighted() {
    let dir = tempfile::tempdir().unwrap();
    let codebook = dir.path().join("codebook.toml");
    fs::write(
        &codebook,
        "[dataset]\nname = \"q\"\nweight = \"wt\"\n\n[[variables]]\nname = \"x\"\nkind = \"numeric\"\n\n[[variables]]\nname = \"wt\"\nkind = \"numeric\"\n",
    )
    .unwrap();
    let recodes = |extra: &str| {
        let path = dir.path().join(format!("r{}.toml", extra.len()));
        fs::write(
            &path,
            format!("[[derive]]\nname = \"xq\"\nfrom = \"x\"\nquantiles = 2\nquantile_type = 6\ncategories = [{{ code = 1, label = \"low\" }}, {{ code = 2, label = \"high\" }}]\n{extra}"),
        )
        .unwrap();
        path
    };
    let data = dir.path().join("data.csv");
    fs::write(&data, "x,wt\n1,1\n2,5\n3,1\n4,1\n").unwrap();
    let out = dir.path().join("out.csv");

    let (code, stdout, _) = run(&[&"recode", &codebook, &recodes("")]);
    assert_eq!(code, 1, "{stdout}");
    assert!(stdout.contains("recode.unweightable-quantiles"), "{stdout}");
    assert!(stdout.contains("`wt` would weight them"), "{stdout}");
    // Applying: the gate fails before anything is written.
    let (code, _, _) = run(&[&"recode", &codebook, &recodes(""), &data, &"-o", &out]);
    assert_eq!(code, 1);
    assert!(!out.exists());
    // Said unweighted: type-6 bands. On 1, 2, 3, 4 the type-6 median is 2.5 (Hyndman & Fan
    // 1996, definition 6: position (n + 1) p = 2.5), so 1 and 2 fall in band 1.
    let unweighted = recodes("weighted = false\n");
    let (code, stdout, _) = run(&[&"recode", &codebook, &unweighted]);
    assert_eq!(code, 0, "{stdout}");
    let (code, stdout, _) = run(&[&"recode", &codebook, &unweighted, &data, &"-o", &out]);
    assert_eq!(code, 0, "{stdout}");
    let (header, rows) = read_csv(&out);
    let xq = column(&header, "xq");
    let bands: Vec<&str> = rows.iter().map(|r| r[xq].as_str()).collect();
    assert_eq!(bands, ["1", "1", "2", "2"]);
}

#[test]
fn a_computed_value_equal_to_a_missing_code_fails_the_gate() {
    let (code, output, _, out, _dir) = apply_fixture("computed-missing-code.toml", "division.csv");
    assert_eq!(code, 1, "{output}");
    assert!(output.contains("recode.computed-missing-code"), "{output}");
    assert!(
        output
            .contains("1 computed value of `per_a` equals its missing code 5, first on data row 1"),
        "{output}"
    );
    // The data is still written, as computed: 10/2, then 12/0 and 0/0 (other), a refused
    // input carried over, 8/4.
    let (header, rows) = read_csv(&out);
    let per_a = column(&header, "per_a");
    let cells: Vec<&str> = rows.iter().map(|r| r[per_a].as_str()).collect();
    assert_eq!(cells, ["5", "5", "5", "-7", "2"]);
    // Codes the expression cannot reach: no finding.
    let (code, output, _, _, _dir) = apply_fixture("division.toml", "division.csv");
    assert_eq!(code, 0, "{output}");
    assert!(!output.contains("recode.computed-missing-code"), "{output}");
}

// ---- numpy as an outside reference ----

/// Every case's band in column `name` of the output equals numpy's (`numpy[name]["bands"]`).
fn assert_bands(header: &[String], rows: &[Vec<String>], numpy: &Json, name: &str) {
    let col = column(header, name);
    let ours: Vec<i64> = rows.iter().map(|r| r[col].parse().unwrap()).collect();
    let theirs: Vec<i64> = numpy[name]["bands"]
        .as_array()
        .unwrap()
        .iter()
        .map(|b| b.as_i64().unwrap())
        .collect();
    assert_eq!(ours, theirs, "{name}: bands differ from numpy");
}

/// Apply `recodes` to `codebook.toml` and `data.csv` in `dir`, which must succeed; returns the
/// output file and the audit, parsed.
fn apply_in(dir: &Path, recodes: &str) -> (PathBuf, Json) {
    fs::write(dir.join("recodes.toml"), recodes).unwrap();
    let out = dir.join("out.csv");
    let audit = dir.join("audit.json");
    let (code, stdout, stderr) = run(&[
        &"recode",
        &dir.join("codebook.toml"),
        &dir.join("recodes.toml"),
        &dir.join("data.csv"),
        &"-o",
        &out,
        &"--audit",
        &audit,
    ]);
    assert_eq!(code, 0, "{stdout}\n{stderr}");
    let audit = serde_json::from_str(&fs::read_to_string(&audit).unwrap()).unwrap();
    (out, audit)
}

/// A deterministic sample: a 64-bit linear congruential generator (Knuth's MMIX constants),
/// values with two decimals and some ties.
fn sample(n: usize) -> Vec<f64> {
    let mut state: u64 = 0x2545_f491_4f6c_dd1d;
    (0..n)
        .map(|_| {
            state = state
                .wrapping_mul(6_364_136_223_846_793_005)
                .wrapping_add(1_442_695_040_888_963_407);
            ((state >> 33) % 10_000) as f64 / 100.0
        })
        .collect()
}

/// numpy (PyPI), a general-purpose reference: `numpy.quantile(method="linear")` is
/// Hyndman & Fan type 7, `method="weibull"` type 6; `numpy.digitize(x, cuts, right=True)`
/// numbers right-closed bands (a, b] from 0, `right=False` left-closed ones [a, b). Runs
/// when numpy is importable; under CI=true it must.
#[test]
fn quantile_and_cut_bands_match_numpy() {
    if !support::numpy() {
        return;
    }
    let dir = tempfile::tempdir().unwrap();
    let values = sample(997);
    let mut data = String::from("id,x\n");
    for (i, v) in values.iter().enumerate() {
        data.push_str(&format!("C{i},{v}\n"));
    }
    fs::write(dir.path().join("data.csv"), &data).unwrap();
    fs::write(
        dir.path().join("codebook.toml"),
        "[dataset]\nname = \"numpy\"\nid = [\"id\"]\n\n[[variables]]\nname = \"id\"\nkind = \"identifier\"\n\n\
         [[variables]]\nname = \"x\"\nkind = \"numeric\"\nrange = { min = 0, max = 100 }\ndecimals = 2\n",
    )
    .unwrap();
    let labels = |n: usize| {
        (1..=n)
            .map(|k| format!("{{ code = {k}, label = \"band {k}\" }}"))
            .collect::<Vec<_>>()
            .join(", ")
    };
    let recodes = format!(
        "[[derive]]\nname = \"q7\"\nfrom = \"x\"\nquantiles = 5\ncategories = [{l5}]\n\n\
         [[derive]]\nname = \"q6\"\nfrom = \"x\"\nquantiles = 4\nquantile_type = 6\ncategories = [{l4}]\n\n\
         [[derive]]\nname = \"q7_left\"\nfrom = \"x\"\nquantiles = 4\nclosed = \"left\"\ncategories = [{l4}]\n\n\
         [[derive]]\nname = \"cut_right\"\nfrom = \"x\"\ncuts = [10, 25.5, 50, 80]\ncategories = [{l5}]\n\n\
         [[derive]]\nname = \"cut_left\"\nfrom = \"x\"\ncuts = [10, 25.5, 50, 80]\nclosed = \"left\"\ncategories = [{l5}]\n",
        l4 = labels(4),
        l5 = labels(5)
    );
    let (out, audit) = apply_in(dir.path(), &recodes);
    let script = format!(
        r#"
import csv, json, numpy as np
rows = list(csv.DictReader(open({data:?})))
x = np.array([float(r["x"]) for r in rows])
out = {{}}
for name, n, method in [("q7", 5, "linear"), ("q6", 4, "weibull"), ("q7_left", 4, "linear")]:
    cuts = np.quantile(x, [j / n for j in range(1, n)], method=method)
    right = name != "q7_left"
    out[name] = {{"cuts": [float(c) for c in cuts],
                  "bands": [int(b) + 1 for b in np.digitize(x, cuts, right=right)]}}
cuts = np.array([10, 25.5, 50, 80])
out["cut_right"] = {{"bands": [int(b) + 1 for b in np.digitize(x, cuts, right=True)]}}
out["cut_left"] = {{"bands": [int(b) + 1 for b in np.searchsorted(cuts, x, side="right")]}}
print(json.dumps(out))
"#,
        data = dir.path().join("data.csv").display().to_string()
    );
    let numpy: Json =
        serde_json::from_str(&python(&script).expect("the numpy script runs")).unwrap();
    let (header, rows) = read_csv(&out);
    for name in ["q7", "q6", "q7_left", "cut_right", "cut_left"] {
        assert_bands(&header, &rows, &numpy, name);
        if let Some(cuts) = numpy[name]["cuts"].as_array() {
            let table = audit["audit"]
                .as_array()
                .unwrap()
                .iter()
                .find(|t| t["name"] == name)
                .unwrap();
            let ours = table["cut_points"].as_array().unwrap();
            assert_eq!(ours.len(), cuts.len(), "{name}");
            for (a, b) in ours.iter().zip(cuts) {
                let (a, b) = (a.as_f64().unwrap(), b.as_f64().unwrap());
                assert!(
                    (a - b).abs() <= 1e-12 * b.abs().max(1.0),
                    "{name}: cut {a} vs numpy {b}"
                );
            }
        }
    }
}
