//! The README documents every check rule, and its quick start names files that exist.

const README: &str = include_str!("../README.md");

#[test]
fn every_check_rule_is_in_the_readme_table() {
    for rule in concord::rules::CHECK_RULES {
        let row = format!("| `{}` | ", rule.id);
        assert!(
            README.contains(&row),
            "README.md has no table row for {}",
            rule.id
        );
    }
}

#[test]
fn quick_start_files_exist() {
    let root = env!("CARGO_MANIFEST_DIR");
    for file in [
        "demo-data/codebook.toml",
        "demo-data/wave1.csv",
        "demo-data/wave2.csv",
    ] {
        assert!(README.contains(file), "README no longer mentions {file}");
        assert!(
            std::path::Path::new(root).join(file).is_file(),
            "{file} is missing"
        );
    }
    assert!(README.contains("cargo test"), "README has no test command");
}

#[test]
fn rule_ids_are_unique_and_severities_documented() {
    let mut seen = std::collections::HashSet::new();
    for rule in concord::rules::all() {
        assert!(seen.insert(rule.id), "rule {} is listed twice", rule.id);
        assert!(
            !rule.summary.is_empty() && !rule.explain.is_empty(),
            "{}",
            rule.id
        );
    }
}
