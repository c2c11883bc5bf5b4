//! `concord convert` and DDI overlays, checked from the outside.
//!
//! - every DDI file `convert` writes validates with xmllint against the DDI Alliance's
//!   published 2.5 schema (read from `../shared/ddi`, never copied);
//! - native -> DDI -> native keeps the model (variables, category order, missing codes and
//!   kinds, ranges, decimals, columns, documented figures), and DDI -> native -> DDI keeps
//!   every variable, category, missing code, range and location;
//! - a native overlay with `base = "<converted>.xml"` that adds the universes back checks
//!   `demo-data/wave2.csv` with exactly the findings of the original native codebook.

use std::path::{Path, PathBuf};
use std::process::Command;

use assert_cmd::cargo::CommandCargoExt;
use concord::codebook::model::*;
use concord::codebook::{self, ddi, write_toml};

fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

fn schema() -> PathBuf {
    PathBuf::from(concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/../shared/ddi/2.5/schemas/codebook.xsd"
    ))
}

/// Validate with xmllint; false (and a note) when it is absent outside CI.
fn validates(file: &Path) -> bool {
    let ci = std::env::var("CI").is_ok_and(|v| v == "true");
    if Command::new("xmllint").arg("--version").output().is_err() || !schema().exists() {
        assert!(
            !ci,
            "CI=true but xmllint or {} is missing",
            schema().display()
        );
        eprintln!("skipped: xmllint or the DDI schema is not available");
        return false;
    }
    let out = Command::new("xmllint")
        .arg("--noout")
        .arg("--schema")
        .arg(schema())
        .arg(file)
        .output()
        .unwrap();
    assert!(
        out.status.success(),
        "{} does not validate against DDI 2.5:\n{}",
        file.display(),
        String::from_utf8_lossy(&out.stderr)
    );
    true
}

fn native_inputs() -> Vec<PathBuf> {
    let mut files: Vec<PathBuf> = std::fs::read_dir(root().join("tests/fixtures/codebooks"))
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| p.extension().is_some_and(|e| e == "toml"))
        .collect();
    files.sort();
    files.push(root().join("demo-data/codebook.toml"));
    files
}

fn concord() -> Command {
    Command::cargo_bin("concord").unwrap()
}

fn convert(input: &Path, output: &Path) -> String {
    let out = concord()
        .arg("convert")
        .arg(input)
        .arg("-o")
        .arg(output)
        .output()
        .unwrap();
    let stderr = String::from_utf8_lossy(&out.stderr).into_owned();
    assert!(
        out.status.success(),
        "convert {}: {stderr}",
        input.display()
    );
    stderr
}

/// Documented valid count, mean, sd, min and max.
type Figures = (
    Option<u64>,
    Option<f64>,
    Option<f64>,
    Option<f64>,
    Option<f64>,
);

/// What a DDI round trip must keep, without places.
#[derive(Debug, PartialEq)]
struct Kept {
    name: String,
    label: Option<String>,
    kind: Kind,
    categories: Vec<(Code, String, Option<u64>)>,
    missing: Vec<(Code, String, MissingKind)>,
    range: Option<(Option<Bound>, Option<Bound>)>,
    decimals: Option<u32>,
    columns: Option<(usize, usize)>,
    documented: Option<Figures>,
    pattern: Option<String>,
    max_length: Option<u64>,
    blank: Option<MissingKind>,
}

fn kept(v: &Variable) -> Kept {
    Kept {
        name: v.name.clone(),
        label: v.label.clone(),
        kind: v.kind,
        categories: v
            .categories
            .iter()
            .map(|c| (c.code.clone(), c.label.clone(), c.frequency))
            .collect(),
        missing: v
            .missing
            .iter()
            .map(|m| (m.code.clone(), m.label.clone(), m.kind))
            .collect(),
        range: v.range.map(|r| (r.min, r.max)),
        decimals: v.decimals,
        columns: v.columns.map(|c| (c.start, c.end)),
        documented: v.documented.map(|d| (d.valid, d.mean, d.sd, d.min, d.max)),
        pattern: v.pattern.clone(),
        max_length: v.max_length,
        blank: v.blank,
    }
}

#[test]
fn native_to_ddi_to_native_keeps_the_model() {
    let dir = tempfile::tempdir().unwrap();
    for input in native_inputs() {
        let original = codebook::load(&input).unwrap().codebook;
        let xml = dir.path().join("out.xml");
        let stderr = convert(&input, &xml);
        validates(&xml);
        let back = codebook::load(&xml).unwrap();
        assert!(
            back.problems.is_empty(),
            "{}: {:?}",
            input.display(),
            back.problems
        );
        let back = back.codebook;
        let a: Vec<Kept> = original.variables.iter().map(kept).collect();
        let b: Vec<Kept> = back.variables.iter().map(kept).collect();
        assert_eq!(a, b, "{}", input.display());
        let (d, e) = (&original.dataset, &back.dataset);
        assert_eq!(
            (&d.name, &d.title, d.cases, d.blank),
            (&e.name, &e.title, e.cases, e.blank)
        );
        let ids = |x: &Dataset| x.id.iter().map(|n| n.name.clone()).collect::<Vec<_>>();
        assert_eq!(ids(d), ids(e));
        assert_eq!(
            d.weight.as_ref().map(|w| &w.name),
            e.weight.as_ref().map(|w| &w.name)
        );
        let (f, g) = (&original.file, &back.file);
        assert_eq!(
            (f.layout, f.delimiter, f.header, f.encoding, f.quote),
            (g.layout, g.delimiter, g.header, g.encoding, g.quote),
            "{}",
            input.display()
        );
        // Universes and checks come back as prose only, and convert says so.
        for v in &original.variables {
            if let Some(u) = &v.universe {
                let w = back.variable(&v.name).unwrap();
                assert!(w.universe.is_none());
                assert_eq!(w.universe_text.as_deref(), Some(u.text.as_str()));
                assert!(
                    stderr.contains(&format!("universe of `{}`", v.name)),
                    "{stderr}"
                );
            }
        }
        for c in &original.checks {
            assert!(stderr.contains(&format!("check `{}`", c.name)), "{stderr}");
        }
        assert!(back.checks.is_empty());

        // And the native writer: TOML written from the model reads back the same and lints
        // as cleanly as the original.
        let toml = dir.path().join("out.toml");
        convert(&input, &toml);
        let again = codebook::load(&toml).unwrap();
        let c: Vec<Kept> = again.codebook.variables.iter().map(kept).collect();
        assert_eq!(a, c, "{}", input.display());
        assert_eq!(original.checks.len(), again.codebook.checks.len());
        assert_eq!(
            codebook::lint::lint(&original).len(),
            codebook::lint::lint(&again.codebook).len()
        );
    }
}

#[test]
fn ddi_to_native_to_ddi_keeps_what_ddi_says() {
    let dir = tempfile::tempdir().unwrap();
    for name in ["orchard-2-5-prefixed.xml", "ferry-fixed-2-6.xml"] {
        let input = root().join("tests/fixtures/ddi").join(name);
        let original = codebook::load(&input).unwrap().codebook;
        let toml = dir.path().join("mid.toml");
        convert(&input, &toml);
        let lint = concord().arg("lint").arg(&toml).output().unwrap();
        assert!(
            lint.status.success(),
            "{}",
            String::from_utf8_lossy(&lint.stdout)
        );
        let xml = dir.path().join("back.xml");
        convert(&toml, &xml);
        validates(&xml);
        let back = codebook::load(&xml).unwrap().codebook;
        let a: Vec<Kept> = original.variables.iter().map(kept).collect();
        let b: Vec<Kept> = back.variables.iter().map(kept).collect();
        assert_eq!(a, b, "{name}");
        // Universe prose has no native key: it survives as a comment in the native file,
        // for the person who writes the universe condition into an overlay.
        let native = std::fs::read_to_string(&toml).unwrap();
        for v in &original.variables {
            if let Some(u) = &v.universe_text {
                assert!(native.contains(&format!("# Universe (prose, not a condition): {u}")));
            }
        }
    }
}

#[test]
fn two_file_ddi_converts_with_a_file_id() {
    let dir = tempfile::tempdir().unwrap();
    let input = root().join("tests/fixtures/ddi/two-files-2-5.xml");
    let out = dir.path().join("plots.toml");
    let failed = concord()
        .arg("convert")
        .arg(&input)
        .arg("-o")
        .arg(&out)
        .output()
        .unwrap();
    assert_eq!(failed.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&failed.stderr).contains("--file-id"));
    let ok = concord()
        .args(["convert", "--file-id", "plots"])
        .arg(&input)
        .arg("-o")
        .arg(&out)
        .output()
        .unwrap();
    assert!(ok.status.success());
    let c = codebook::load(&out).unwrap().codebook;
    assert_eq!(c.variables.len(), 3);
    let lint = concord()
        .args(["lint", "--file-id", "households"])
        .arg(&input)
        .output()
        .unwrap();
    assert!(lint.status.success());
}

#[test]
fn convert_refuses_to_overwrite_its_input_and_unknown_formats() {
    let dir = tempfile::tempdir().unwrap();
    let input = dir.path().join("cb.toml");
    std::fs::copy(root().join("tests/fixtures/codebooks/minimal.toml"), &input).unwrap();
    let out = concord()
        .arg("convert")
        .arg(&input)
        .arg("-o")
        .arg(&input)
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(2));
    let out = concord()
        .arg("convert")
        .arg(&input)
        .arg("-o")
        .arg(dir.path().join("cb.json"))
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("--to"));
}

/// The findings of a check report, without the codebook path.
fn findings(codebook: &Path, data: &Path) -> (serde_json::Value, serde_json::Value) {
    let out = concord()
        .arg("check")
        .arg(codebook)
        .arg(data)
        .args(["--format", "json"])
        .output()
        .unwrap();
    assert!(
        matches!(out.status.code(), Some(0) | Some(1)),
        "check {} could not run: {}",
        codebook.display(),
        String::from_utf8_lossy(&out.stderr)
    );
    let report: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    let findings: Vec<serde_json::Value> = report["findings"]
        .as_array()
        .unwrap()
        .iter()
        .map(|f| {
            serde_json::json!({
                "rule": f["rule"], "severity": f["severity"], "variable": f["variable"],
                "check": f["check"], "count": f["count"], "examples": f["examples"],
            })
        })
        .collect();
    (
        serde_json::Value::Array(findings),
        report["variables"].clone(),
    )
}

#[test]
fn an_overlay_on_converted_ddi_checks_like_the_native_codebook() {
    let dir = tempfile::tempdir().unwrap();
    let native = root().join("demo-data/codebook.toml");
    let data = root().join("demo-data/wave2.csv");
    let xml = dir.path().join("fennick.xml");
    convert(&native, &xml);
    validates(&xml);
    // What DDI cannot hold: routing (universes) and checks, plus the blank meanings of the
    // routed questions written out explicitly (concord notes would carry them, but an overlay
    // should not depend on that).
    let overlay = dir.path().join("overlay.toml");
    std::fs::write(
        &overlay,
        r#"[dataset]
base = "fennick.xml"

[[variables]]
name = "stove_age"
universe = "wood_stove == 1"
blank = "skipped"

[[variables]]
name = "wheeze_night"
universe = "wheeze == 1"
blank = "skipped"

[[checks]]
name = "no-heating-no-hours"
assert = "heat_hours == 0"
when = "answered(fuel) and fuel == 7"
severity = "error"

[[checks]]
name = "wood-fuel-has-stove"
assert = "fuel != 4 or wood_stove == 1"
severity = "warning"
"#,
    )
    .unwrap();
    let lint = concord().arg("lint").arg(&overlay).output().unwrap();
    assert!(
        lint.status.success(),
        "{}",
        String::from_utf8_lossy(&lint.stdout)
    );
    let expected = findings(&native, &data);
    let found = findings(&overlay, &data);
    assert!(!expected.0.as_array().unwrap().is_empty());
    assert_eq!(expected.0, found.0);
    assert_eq!(expected.1, found.1);
}

#[test]
fn overlay_rules() {
    let dir = tempfile::tempdir().unwrap();
    let xml = dir.path().join("base.xml");
    std::fs::copy(
        root().join("tests/fixtures/ddi/orchard-2-5-prefixed.xml"),
        &xml,
    )
    .unwrap();
    let write = |text: &str| {
        let p = dir.path().join("overlay.toml");
        std::fs::write(&p, text).unwrap();
        p
    };
    // Overrides only what it writes; adds a variable that declares its kind; [file] overrides.
    let p = write(
        r#"[dataset]
base = "base.xml"
blank = "not-ascertained"

[file]
delimiter = ";"

[[variables]]
name = "hours"
label = "Hours given last month"
universe = "role != 3"

[[variables]]
name = "note"
kind = "text"
"#,
    );
    let loaded = codebook::load(&p).unwrap();
    let c = &loaded.codebook;
    assert_eq!(c.sources.len(), 2);
    assert_eq!(c.dataset.name, "orchard-volunteers-2025");
    assert_eq!(c.dataset.cases, Some(240));
    assert_eq!(c.dataset.blank, Some(MissingKind::NotAscertained));
    assert_eq!(c.file.delimiter, b';');
    let hours = c.variable("hours").unwrap();
    assert_eq!(hours.label.as_deref(), Some("Hours given last month"));
    assert_eq!(hours.missing.len(), 3);
    assert_eq!(hours.decimals, Some(1));
    assert_eq!(hours.universe.as_ref().unwrap().text, "role != 3");
    // The universe points into the overlay; the categories still into the DDI file.
    assert_eq!(hours.universe.as_ref().unwrap().place.unwrap().file, 0);
    assert_eq!(
        c.variable("role").unwrap().categories[0]
            .place
            .unwrap()
            .file,
        1
    );
    assert_eq!(c.variables.last().unwrap().name, "note");
    assert!(codebook::lint::lint(c).is_empty());

    // A new name without a kind is an error that says why.
    let p = write("[dataset]\nbase = \"base.xml\"\n\n[[variables]]\nname = \"hourz\"\nuniverse = \"role == 1\"\n");
    let err = codebook::load(&p).unwrap_err();
    assert!(err.message.contains("not in the base codebook"), "{err}");
    assert!(err.position.is_some());

    // Without a base, kind is still required.
    let p = write("[dataset]\nname = \"x\"\n\n[[variables]]\nname = \"a\"\n");
    let err = codebook::load(&p).unwrap_err();
    assert!(err.message.contains("has no `kind`"), "{err}");

    // A base that is missing or not XML.
    let p = write("[dataset]\nbase = \"nowhere.xml\"\n");
    assert_eq!(codebook::load(&p).unwrap_err().code, "codebook.base");
    std::fs::write(dir.path().join("other.toml"), "[dataset]\nname = \"y\"\n").unwrap();
    let p = write("[dataset]\nbase = \"other.toml\"\n");
    let err = codebook::load(&p).unwrap_err();
    assert!(err.message.contains("not DDI Codebook XML"), "{err}");
}

#[test]
fn writers_escape_what_they_must() {
    let mut c = Codebook::default();
    c.dataset.name = "esc".into();
    let mut v = Variable::new("t&x", Kind::Categorical);
    v.label = Some("Tom & \"Jerry\" <b>\n".into());
    v.categories.push(Category {
        code: Code::Text("<A>".into()),
        label: "back\\slash \u{1} bell".into(),
        frequency: None,
        place: None,
    });
    c.variables.push(v);
    let written = ddi::write::to_ddi(&c);
    let dir = tempfile::tempdir().unwrap();
    let xml = dir.path().join("esc.xml");
    std::fs::write(&xml, &written.xml).unwrap();
    validates(&xml);
    let back = codebook::load(&xml).unwrap().codebook;
    assert_eq!(back.variables[0].name, "t&x");
    assert_eq!(
        back.variables[0].label.as_deref(),
        Some("Tom & \"Jerry\" <b>")
    );
    assert_eq!(
        back.variables[0].categories[0].code,
        Code::Text("<A>".into())
    );
    let toml = write_toml::to_toml(&c, &write_toml::TomlOptions::default());
    let path = dir.path().join("esc.toml");
    std::fs::write(&path, toml).unwrap();
    let again = codebook::load(&path).unwrap().codebook;
    assert_eq!(
        again.variables[0].categories[0].label,
        "back\\slash \u{1} bell"
    );
}
