//! What the integration tests share: running the built `concord` binary and reading its
//! JSON report, in a fresh temporary folder per test.

// Each test crate uses a different part of this module.
#![allow(dead_code)]

pub mod survey;
pub mod tally;

use std::fs;
use std::path::{Path, PathBuf};
use std::process::{Command, Output, Stdio};

use serde_json::Value as Json;

pub fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

pub fn demo(name: &str) -> PathBuf {
    root().join("demo-data").join(name)
}

/// One run of the binary.
pub struct Run {
    pub code: Option<i32>,
    pub stdout: String,
    pub stderr: String,
}

impl Run {
    fn from(output: Output) -> Run {
        Run {
            code: output.status.code(),
            stdout: String::from_utf8_lossy(&output.stdout).into_owned(),
            stderr: String::from_utf8_lossy(&output.stderr).into_owned(),
        }
    }

    /// The JSON report on standard output; panics with both streams when it is not JSON.
    pub fn json(&self) -> Json {
        serde_json::from_str(&self.stdout).unwrap_or_else(|e| {
            panic!(
                "stdout is not a JSON report ({e})\n--- stdout\n{}\n--- stderr\n{}",
                self.stdout, self.stderr
            )
        })
    }

    pub fn assert_code(&self, code: i32) -> &Run {
        assert_eq!(
            self.code,
            Some(code),
            "exit code\n--- stdout\n{}\n--- stderr\n{}",
            self.stdout,
            self.stderr
        );
        self
    }
}

pub fn command() -> Command {
    let mut c = Command::new(env!("CARGO_BIN_EXE_concord"));
    c.env("NO_COLOR", "1").env_remove("CI");
    c
}

/// Run `concord` with `args`, in `dir` when given.
pub fn concord<I, S>(args: I) -> Run
where
    I: IntoIterator<Item = S>,
    S: AsRef<std::ffi::OsStr>,
{
    Run::from(
        command()
            .args(args)
            .stdin(Stdio::null())
            .output()
            .expect("run concord"),
    )
}

/// Run `concord` with `args`, feeding `input` on standard input.
pub fn concord_stdin<I, S>(args: I, input: &[u8]) -> Run
where
    I: IntoIterator<Item = S>,
    S: AsRef<std::ffi::OsStr>,
{
    use std::io::Write;
    let mut child = command()
        .args(args)
        .stdin(Stdio::piped())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .expect("run concord");
    let mut stdin = child.stdin.take().unwrap();
    let input = input.to_vec();
    let writer = std::thread::spawn(move || {
        let _ = stdin.write_all(&input);
    });
    let output = child.wait_with_output().expect("wait for concord");
    writer.join().unwrap();
    Run::from(output)
}

/// `concord check --format json CODEBOOK DATA [extra...]`.
pub fn check_json(codebook: &Path, data: &Path, extra: &[&str]) -> Run {
    let mut args: Vec<std::ffi::OsString> = vec!["check".into(), "--format".into(), "json".into()];
    args.push(codebook.into());
    args.push(data.into());
    args.extend(extra.iter().map(Into::into));
    concord(args)
}

/// A temporary folder holding a codebook and a data file.
pub struct Case {
    pub dir: tempfile::TempDir,
}

impl Case {
    pub fn new() -> Case {
        Case {
            dir: tempfile::tempdir().expect("temporary folder"),
        }
    }

    pub fn path(&self, name: &str) -> PathBuf {
        self.dir.path().join(name)
    }

    pub fn write(&self, name: &str, contents: impl AsRef<[u8]>) -> PathBuf {
        let path = self.path(name);
        fs::write(&path, contents).expect("write test file");
        path
    }

    /// Check `data` (written as `data.csv`) against `codebook` (written as `codebook.toml`).
    pub fn check(&self, codebook: &str, data: impl AsRef<[u8]>, extra: &[&str]) -> Run {
        let cb = self.write("codebook.toml", codebook);
        let d = self.write("data.csv", data);
        check_json(&cb, &d, extra)
    }
}

/// The findings of a report with the given rule.
pub fn findings<'a>(report: &'a Json, rule: &str) -> Vec<&'a Json> {
    report["findings"]
        .as_array()
        .expect("findings array")
        .iter()
        .filter(|f| f["rule"] == rule)
        .collect()
}

/// The one finding of `rule` for `variable` (null for file-level findings).
pub fn finding<'a>(report: &'a Json, rule: &str, variable: Option<&str>) -> &'a Json {
    let matching: Vec<&Json> = findings(report, rule)
        .into_iter()
        .filter(|f| match variable {
            Some(v) => f["variable"] == v,
            None => f["variable"].is_null(),
        })
        .collect();
    assert_eq!(
        matching.len(),
        1,
        "expected one {rule} finding for {variable:?} in\n{report:#}"
    );
    matching[0]
}

/// Example rows of a finding.
pub fn rows(finding: &Json) -> Vec<u64> {
    finding["examples"]
        .as_array()
        .unwrap()
        .iter()
        .filter_map(|e| e["row"].as_u64())
        .collect()
}

/// Example values of a finding.
pub fn values(finding: &Json) -> Vec<String> {
    finding["examples"]
        .as_array()
        .unwrap()
        .iter()
        .map(|e| e["value"].as_str().unwrap_or("<null>").to_string())
        .collect()
}

/// The tallies of one variable.
pub fn variable<'a>(report: &'a Json, name: &str) -> &'a Json {
    report["variables"]
        .as_array()
        .unwrap()
        .iter()
        .find(|v| v["name"] == name)
        .unwrap_or_else(|| panic!("no variable {name} in\n{report:#}"))
}

/// valid + skipped + gate_unknown + missing + invalid of one variable's tallies.
pub fn tally_sum(v: &Json) -> u64 {
    let missing: u64 = v["missing"]
        .as_object()
        .unwrap()
        .values()
        .map(|n| n.as_u64().unwrap())
        .sum();
    ["valid", "skipped", "gate_unknown", "invalid"]
        .iter()
        .map(|k| v[*k].as_u64().unwrap())
        .sum::<u64>()
        + missing
}

/// Run a Python script (`python3 -c`) and return what it printed, or `None` when Python or a
/// module it imports is missing or the script fails. Tests that compare with numpy use it.
pub fn python(script: &str) -> Option<String> {
    let out = Command::new("python3")
        .arg("-c")
        .arg(script)
        .output()
        .ok()?;
    out.status
        .success()
        .then(|| String::from_utf8_lossy(&out.stdout).into_owned())
}

/// Whether numpy is importable. When it is not, the caller skips with a message; under
/// CI=true that is a failure.
pub fn numpy() -> bool {
    if python("import numpy").is_some() {
        return true;
    }
    assert!(
        std::env::var("CI").as_deref() != Ok("true"),
        "numpy is not importable, but CI=true requires this test to run (pip install numpy)"
    );
    eprintln!("skipped: numpy not importable");
    false
}

/// Whether numpy with weighted quantiles (numpy 2.0 and later) is importable. When it is not,
/// the caller skips with a message; under CI=true that is a failure.
pub fn numpy_with_weights() -> bool {
    let probe = "import numpy as np; np.quantile([1.0, 2.0], 0.5, weights=[1.0, 1.0], \
                 method='inverted_cdf')";
    if python(probe).is_some() {
        return true;
    }
    assert!(
        std::env::var("CI").as_deref() != Ok("true"),
        "numpy >= 2.0 (quantile with weights) is not importable, but CI=true requires this \
         test to run (pip install numpy)"
    );
    eprintln!("skipped: numpy >= 2.0 (quantile with weights) not importable");
    false
}

/// TOML -> JSON: tables become objects, datetimes their TOML text (`2025-03-01`). A float
/// that JSON cannot hold (nan, inf) becomes null, which the schema rejects wherever a number
/// is expected.
pub fn toml_to_json(value: toml::Value) -> Json {
    match value {
        toml::Value::String(s) => Json::String(s),
        toml::Value::Integer(i) => Json::from(i),
        toml::Value::Float(f) => serde_json::Number::from_f64(f).map_or(Json::Null, Json::Number),
        toml::Value::Boolean(b) => Json::Bool(b),
        toml::Value::Datetime(dt) => Json::String(dt.to_string()),
        toml::Value::Array(items) => Json::Array(items.into_iter().map(toml_to_json).collect()),
        toml::Value::Table(table) => Json::Object(
            table
                .into_iter()
                .map(|(k, v)| (k, toml_to_json(v)))
                .collect(),
        ),
    }
}
