//! Static validation of the recode fixtures in `tests/fixtures/recodes/`, and the recode
//! file JSON Schema checked from the outside.
//!
//! Each fixture names the findings it must produce in `# expect: RULE @ LINE: FRAGMENT`
//! comments, kept next to the recode it describes; a fixture must produce exactly those.
//! The schema test converts each recode file to JSON with `toml` and `serde_json` and
//! validates it with `jsonschema`, a general-purpose JSON Schema validator, as an editor
//! would; it does not use concord's reader.

mod support;

use support::toml_to_json;

use std::fs;
use std::path::{Path, PathBuf};

use serde_json::Value as Json;

fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

fn fixtures() -> PathBuf {
    root().join("tests/fixtures/recodes")
}

/// The recode files of the fixture folder (and its `invalid/` folder when `invalid`).
fn recode_files(dir: &Path) -> Vec<PathBuf> {
    let mut files: Vec<PathBuf> = fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| p.extension().is_some_and(|e| e == "toml"))
        .filter(|p| p.file_name().is_some_and(|n| n != "codebook.toml"))
        .collect();
    files.sort();
    files
}

#[derive(Debug, PartialEq)]
struct Expected {
    rule: String,
    line: usize,
    fragment: String,
}

fn expectations(text: &str) -> Vec<Expected> {
    text.lines()
        .filter_map(|l| l.strip_prefix("# expect: "))
        .map(|rest| {
            let (rule, rest) = rest.split_once(" @ ").expect("`RULE @ LINE: FRAGMENT`");
            let (line, fragment) = rest.split_once(": ").expect("`LINE: FRAGMENT`");
            Expected {
                rule: rule.trim().to_string(),
                line: line.trim().parse().expect("a line number"),
                fragment: fragment.trim().to_string(),
            }
        })
        .collect()
}

#[test]
fn every_fixture_produces_exactly_its_expected_findings() {
    let loaded = concord::codebook::load(&fixtures().join("codebook.toml")).unwrap();
    assert!(loaded.problems.is_empty());
    let mut codebook = loaded.codebook;
    let base_sources = codebook.sources.clone();
    let mut checked = 0;
    for path in recode_files(&fixtures()) {
        let text = fs::read_to_string(&path).unwrap();
        let expected = expectations(&text);
        codebook.sources = base_sources.clone();
        let recodes = concord::recode::load(&path, codebook.sources.len())
            .unwrap_or_else(|e| panic!("{}: {e}", path.display()));
        codebook.sources.push(recodes.source.clone());
        let validated = concord::recode::validate::validate(&codebook, &recodes);
        let got: Vec<(String, usize, String)> = validated
            .diagnostics
            .iter()
            .map(|d| {
                let j = d.to_json(&codebook.sources);
                (d.rule.to_string(), j.line.unwrap_or(0), d.message.clone())
            })
            .collect();
        assert_eq!(
            got.len(),
            expected.len(),
            "{}: expected {expected:#?}\ngot {got:#?}",
            path.display()
        );
        for e in &expected {
            assert!(
                got.iter().any(|(rule, line, message)| *rule == e.rule
                    && *line == e.line
                    && message.contains(&e.fragment)),
                "{}: no finding {e:?}\ngot {got:#?}",
                path.display()
            );
        }
        checked += 1;
    }
    assert!(checked >= 15, "only {checked} fixtures");
}

#[test]
fn every_recode_rule_except_data_only_ones_has_a_fixture() {
    let mut all = String::new();
    for path in recode_files(&fixtures()) {
        all.push_str(&fs::read_to_string(path).unwrap());
    }
    for rule in concord::rules::RECODE_RULES {
        // Data-only rules are tested by applying, and the dataset-weight rule with a codebook
        // of its own, in tests/recode_cli.rs.
        if [
            "recode.empty-output",
            "recode.invalid-source",
            "recode.computed-missing-code",
            "recode.unweightable-quantiles",
        ]
        .contains(&rule.id)
        {
            continue;
        }
        assert!(
            all.contains(&format!("# expect: {} @", rule.id)),
            "no fixture expects {}",
            rule.id
        );
    }
}

fn validator() -> jsonschema::Validator {
    let text = fs::read_to_string(root().join("schemas/recodes.schema.json")).unwrap();
    let schema: Json = serde_json::from_str(&text).unwrap();
    // jsonschema 0.26 bundles the draft 2020-12 meta-schema: validate against it offline.
    let meta = jsonschema::draft202012::new(
        &serde_json::json!({ "$ref": "https://json-schema.org/draft/2020-12/schema" }),
    )
    .unwrap();
    let problems: Vec<String> = meta.iter_errors(&schema).map(|e| e.to_string()).collect();
    assert!(
        problems.is_empty(),
        "not a draft 2020-12 schema: {problems:?}"
    );
    jsonschema::draft202012::new(&schema).unwrap()
}

#[test]
fn every_recode_file_validates_against_the_schema() {
    let validator = validator();
    let mut files = recode_files(&fixtures());
    files.push(root().join("demo-data/recodes.toml"));
    for path in files {
        let text = fs::read_to_string(&path).unwrap();
        let value: toml::Value = toml::from_str(&text).unwrap();
        let json = toml_to_json(value);
        let errors: Vec<String> = validator
            .iter_errors(&json)
            .map(|e| format!("{} at {}", e, e.instance_path))
            .collect();
        assert!(errors.is_empty(), "{}: {errors:#?}", path.display());
    }
}

#[test]
fn the_schema_refuses_what_the_reader_refuses() {
    let validator = validator();
    for path in recode_files(&fixtures().join("invalid")) {
        let text = fs::read_to_string(&path).unwrap();
        let Ok(value) = toml::from_str::<toml::Value>(&text) else {
            continue; // not TOML at all
        };
        assert!(
            !validator.is_valid(&toml_to_json(value)),
            "{} validates",
            path.display()
        );
        assert!(
            concord::recode::load(&path, 0).is_err(),
            "{} loads",
            path.display()
        );
    }
}
