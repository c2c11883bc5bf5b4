//! The JSON Schema of the native codebook, `schemas/codebook.schema.json`, checked from the
//! outside.
//!
//! Editors (taplo / Even Better TOML) read this schema to complete and check codebooks as
//! they are typed, so it must agree with the files concord accepts. This test deliberately
//! does not use concord's own reader: it converts each TOML codebook to JSON with `toml` and
//! `serde_json` and validates it with `jsonschema`, a general-purpose JSON Schema validator,
//! exactly as a third-party tool would.
//!
//! - the schema itself must be a valid draft 2020-12 schema;
//! - every codebook under `demo-data/` and `tests/fixtures/` must validate;
//! - every file in `tests/fixtures/invalid-schema/` must fail, at the place its second line
//!   (`# expect-error-at: /json/pointer`) names;
//! - the valid fixtures in `tests/fixtures/codebooks/` together use every key of the schema.

mod support;

use support::toml_to_json;

use std::collections::BTreeSet;
use std::fs;
use std::path::{Path, PathBuf};

use jsonschema::Validator;
use serde_json::Value as Json;

const DRAFT_2020_12: &str = "https://json-schema.org/draft/2020-12/schema";

/// A first line that marks a `.toml` file as something other than a codebook.
const NOT_A_CODEBOOK: &str = "# not-a-codebook";

fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

fn schema() -> Json {
    let path = root().join("schemas/codebook.schema.json");
    let text =
        fs::read_to_string(&path).unwrap_or_else(|e| panic!("cannot read {}: {e}", path.display()));
    serde_json::from_str(&text)
        .unwrap_or_else(|e| panic!("{} is not valid JSON: {e}", path.display()))
}

fn validator() -> Validator {
    jsonschema::draft202012::new(&schema())
        .unwrap_or_else(|e| panic!("the codebook schema does not compile: {e}"))
}

fn read_codebook(path: &Path) -> (String, Json) {
    let text =
        fs::read_to_string(path).unwrap_or_else(|e| panic!("cannot read {}: {e}", path.display()));
    let table: toml::Table = text
        .parse()
        .unwrap_or_else(|e| panic!("{} is not valid TOML: {e}", path.display()));
    let json = toml_to_json(toml::Value::Table(table));
    (text, json)
}

/// Every schema violation of `instance`, one `instance path: message` line each.
fn errors(validator: &Validator, instance: &Json) -> Vec<(String, String)> {
    validator
        .iter_errors(instance)
        .map(|e| (e.instance_path.to_string(), e.to_string()))
        .collect()
}

fn relative(path: &Path) -> String {
    path.strip_prefix(root())
        .unwrap_or(path)
        .display()
        .to_string()
}

/// The `*.toml` codebooks under `dir`, recursively, in a stable order. Skipped: directories
/// named `invalid-schema`, the recode fixtures in `tests/fixtures/recodes/`, and files whose
/// first line is `# not-a-codebook`. A missing `dir` yields nothing.
fn find_codebooks(dir: &Path, found: &mut Vec<PathBuf>) {
    let Ok(entries) = fs::read_dir(dir) else {
        return;
    };
    let mut paths: Vec<PathBuf> = entries.filter_map(|e| e.ok().map(|e| e.path())).collect();
    paths.sort();
    for path in paths {
        if path.is_dir() {
            let name = path.file_name().and_then(|n| n.to_str()).unwrap_or("");
            if name == "invalid-schema" || path == root().join("tests/fixtures/recodes") {
                continue;
            }
            find_codebooks(&path, found);
        } else if path.extension().is_some_and(|e| e == "toml") {
            let text = fs::read_to_string(&path)
                .unwrap_or_else(|e| panic!("cannot read {}: {e}", path.display()));
            if text.lines().next().map(str::trim_end) != Some(NOT_A_CODEBOOK) {
                found.push(path);
            }
        }
    }
}

#[test]
fn schema_is_a_valid_draft_2020_12_schema() {
    let schema = schema();
    assert_eq!(
        schema["$schema"], DRAFT_2020_12,
        "the schema must declare draft 2020-12"
    );
    let id = schema["$id"].as_str().unwrap_or("");
    assert!(
        id.starts_with("https://concord.invalid/"),
        "`$id` should be under https://concord.invalid/ (not a real domain), found {id:?}"
    );

    // jsonschema 0.26 has no separate `meta` module; its meta-schema check is validation
    // against the draft 2020-12 meta-schema, which it bundles (no network needed). Do that
    // explicitly, so every problem is listed with its place in the schema.
    let meta = jsonschema::draft202012::new(&serde_json::json!({ "$ref": DRAFT_2020_12 }))
        .expect("the bundled draft 2020-12 meta-schema compiles");
    let problems = errors(&meta, &schema);
    assert!(
        problems.is_empty(),
        "schemas/codebook.schema.json is not a valid draft 2020-12 schema:\n{}",
        problems
            .iter()
            .map(|(at, msg)| format!("  at {at:?}: {msg}"))
            .collect::<Vec<_>>()
            .join("\n")
    );
    // Building a validator checks the schema against the meta-schema again and compiles
    // every keyword (regular expressions included).
    validator();
}

#[test]
fn every_codebook_in_the_repository_validates() {
    let validator = validator();
    let mut files = Vec::new();
    find_codebooks(&root().join("demo-data"), &mut files);
    find_codebooks(&root().join("tests/fixtures"), &mut files);

    // demo-data/ may be absent, but the fixture codebooks are always there: the test must
    // never pass by finding nothing.
    let fixtures = root().join("tests/fixtures/codebooks");
    let fixture_count = files.iter().filter(|p| p.starts_with(&fixtures)).count();
    assert!(
        fixture_count >= 3,
        "expected at least 3 codebooks in tests/fixtures/codebooks/, found {fixture_count}"
    );

    let mut report = Vec::new();
    for path in &files {
        let (_, json) = read_codebook(path);
        let problems = errors(&validator, &json);
        if !problems.is_empty() {
            report.push(format!("{}:", relative(path)));
            for (at, msg) in problems {
                report.push(format!("  at {at:?}: {msg}"));
            }
        }
    }
    assert!(
        report.is_empty(),
        "{} of {} codebooks do not match schemas/codebook.schema.json:\n{}",
        report.iter().filter(|l| !l.starts_with(' ')).count(),
        files.len(),
        report.join("\n")
    );
}

#[test]
fn every_invalid_fixture_fails_where_it_says() {
    let validator = validator();
    let dir = root().join("tests/fixtures/invalid-schema");
    let mut files: Vec<PathBuf> = fs::read_dir(&dir)
        .unwrap_or_else(|e| panic!("cannot list {}: {e}", dir.display()))
        .filter_map(|e| e.ok().map(|e| e.path()))
        .filter(|p| p.extension().is_some_and(|e| e == "toml"))
        .collect();
    files.sort();
    assert!(
        files.len() >= 8,
        "expected at least 8 invalid fixtures, found {}",
        files.len()
    );

    let mut report = Vec::new();
    for path in &files {
        let (text, json) = read_codebook(path);
        let mut lines = text.lines();
        let what = lines.next().unwrap_or("");
        assert!(
            what.starts_with("# Invalid: "),
            "{}: the first line should say what is wrong (\"# Invalid: ...\")",
            relative(path)
        );
        let expected = lines
            .next()
            .and_then(|l| l.strip_prefix("# expect-error-at:"))
            .map(|p| match p.trim() {
                "(root)" => "",
                p => p,
            })
            .unwrap_or_else(|| {
                panic!(
                    "{}: the second line should be `# expect-error-at: <JSON pointer>`",
                    relative(path)
                )
            });
        let problems = errors(&validator, &json);
        if problems.is_empty() {
            report.push(format!("{}: validates, but {}", relative(path), &what[2..]));
        } else if !problems.iter().any(|(at, _)| at == expected) {
            report.push(format!(
                "{}: fails, but not at {expected:?} as expected; errors:\n{}",
                relative(path),
                problems
                    .iter()
                    .map(|(at, msg)| format!("  at {at:?}: {msg}"))
                    .collect::<Vec<_>>()
                    .join("\n")
            ));
        }
    }
    assert!(report.is_empty(), "{}", report.join("\n"));
}

/// Every key path the schema describes, such as `variables[].missing[].kind`.
fn schema_keys(schema: &Json, node: &Json, path: &str, out: &mut BTreeSet<String>) {
    if let Some(target) = node["$ref"].as_str() {
        let name = target
            .strip_prefix("#/$defs/")
            .unwrap_or_else(|| panic!("unexpected $ref {target:?}"));
        schema_keys(schema, &schema["$defs"][name], path, out);
    }
    if let Some(props) = node["properties"].as_object() {
        for (key, sub) in props {
            let sub_path = if path.is_empty() {
                key.clone()
            } else {
                format!("{path}.{key}")
            };
            out.insert(sub_path.clone());
            schema_keys(schema, sub, &sub_path, out);
        }
    }
    if node.get("items").is_some() {
        schema_keys(schema, &node["items"], &format!("{path}[]"), out);
    }
}

/// Every key path used in a JSON document, in the same notation as [`schema_keys`].
fn instance_keys(node: &Json, path: &str, out: &mut BTreeSet<String>) {
    match node {
        Json::Object(map) => {
            for (key, sub) in map {
                let sub_path = if path.is_empty() {
                    key.clone()
                } else {
                    format!("{path}.{key}")
                };
                out.insert(sub_path.clone());
                instance_keys(sub, &sub_path, out);
            }
        }
        Json::Array(items) => {
            for item in items {
                instance_keys(item, &format!("{path}[]"), out);
            }
        }
        _ => {}
    }
}

#[test]
fn the_valid_fixtures_use_every_key_of_the_schema() {
    let schema = schema();
    let mut described = BTreeSet::new();
    schema_keys(&schema, &schema, "", &mut described);
    // `base` is reserved: the reader refuses it until DDI bases are supported.
    described.remove("dataset.base");

    let mut files = Vec::new();
    find_codebooks(&root().join("tests/fixtures/codebooks"), &mut files);
    let mut used = BTreeSet::new();
    for path in &files {
        instance_keys(&read_codebook(path).1, "", &mut used);
    }
    let unused: Vec<&String> = described.difference(&used).collect();
    assert!(
        unused.is_empty(),
        "no codebook in tests/fixtures/codebooks/ uses these keys: {unused:?}"
    );
}
