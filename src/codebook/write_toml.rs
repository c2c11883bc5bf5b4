//! Writing a codebook model as native TOML.
//!
//! Extracts travel with a codebook that describes them, and conversions produce native
//! codebooks, so the model must be writable in the same format people read. The writer is
//! hand-made rather than serde-derived so the output looks like a codebook a person would
//! write: one `[[variables]]` table each, categories as inline tables in their declared
//! order (the level order of every table), and comments where the writer has something to
//! say about a variable. A universe known only as prose (from DDI) becomes a comment above
//! the variable, since the native `universe` key holds conditions.

use std::fmt::Write;

use crate::codebook::model::*;

/// Options for the written file.
#[derive(Debug, Default)]
pub struct TomlOptions {
    /// Comment lines written at the top of the file (without the leading `#`).
    pub header: Vec<String>,
    /// Per variable name, comment lines written above its entry.
    pub notes: std::collections::HashMap<String, Vec<String>>,
}

fn quoted(s: &str) -> String {
    toml::Value::String(s.to_string()).to_string()
}

fn code(c: &Code) -> String {
    match c {
        Code::Number(n) => format_number(*n),
        Code::Text(t) => quoted(t),
    }
}

fn bound(b: &Bound) -> String {
    match b {
        Bound::Number(n) => format_number(*n),
        Bound::Date(_) => quoted(&b.to_string()),
    }
}

/// The codebook as native TOML text.
pub fn to_toml(codebook: &Codebook, options: &TomlOptions) -> String {
    let mut out = String::new();
    for line in &options.header {
        let _ = writeln!(out, "# {line}");
    }
    if !options.header.is_empty() {
        out.push('\n');
    }
    dataset(&mut out, &codebook.dataset);
    file(&mut out, &codebook.file);
    for v in &codebook.variables {
        out.push('\n');
        if let Some(notes) = options.notes.get(&v.name) {
            for line in notes {
                let _ = writeln!(out, "# {line}");
            }
        }
        variable(&mut out, v);
    }
    for c in &codebook.checks {
        out.push('\n');
        let _ = writeln!(out, "[[checks]]");
        let _ = writeln!(out, "name = {}", quoted(&c.name));
        let _ = writeln!(out, "assert = {}", quoted(&c.assert.text));
        if let Some(w) = &c.when {
            let _ = writeln!(out, "when = {}", quoted(&w.text));
        }
        let _ = writeln!(out, "severity = {}", quoted(c.severity.name()));
    }
    out
}

fn dataset(out: &mut String, d: &Dataset) {
    let _ = writeln!(out, "[dataset]");
    let _ = writeln!(out, "name = {}", quoted(&d.name));
    if let Some(t) = &d.title {
        let _ = writeln!(out, "title = {}", quoted(t));
    }
    if let Some(c) = d.cases {
        let _ = writeln!(out, "cases = {c}");
    }
    if !d.id.is_empty() {
        let ids: Vec<String> = d.id.iter().map(|n| quoted(&n.name)).collect();
        let _ = writeln!(out, "id = [{}]", ids.join(", "));
    }
    if let Some(w) = &d.weight {
        let _ = writeln!(out, "weight = {}", quoted(&w.name));
    }
    if let Some(b) = d.blank {
        let _ = writeln!(out, "blank = {}", quoted(b.name()));
    }
}

fn file(out: &mut String, f: &FileLayout) {
    let _ = writeln!(out, "\n[file]");
    let layout = match f.layout {
        Layout::Delimited => "delimited",
        Layout::Fixed => "fixed",
    };
    let _ = writeln!(out, "layout = {}", quoted(layout));
    if f.layout == Layout::Delimited {
        let _ = writeln!(
            out,
            "delimiter = {}",
            quoted(&(f.delimiter as char).to_string())
        );
        let _ = writeln!(out, "header = {}", f.header);
        let _ = writeln!(out, "quote = {}", quoted(&(f.quote as char).to_string()));
    }
    let _ = writeln!(out, "encoding = {}", quoted(f.encoding.name()));
}

fn one_line(s: &str) -> String {
    s.split_whitespace().collect::<Vec<_>>().join(" ")
}

fn variable(out: &mut String, v: &Variable) {
    if let Some(u) = &v.universe_text {
        let _ = writeln!(out, "# Universe (prose, not a condition): {}", one_line(u));
    }
    let _ = writeln!(out, "[[variables]]");
    let _ = writeln!(out, "name = {}", quoted(&v.name));
    if let Some(l) = &v.label {
        let _ = writeln!(out, "label = {}", quoted(l));
    }
    let _ = writeln!(out, "kind = {}", quoted(v.kind.name()));
    if !v.categories.is_empty() {
        let _ = writeln!(out, "categories = [");
        for c in &v.categories {
            let freq = c
                .frequency
                .map(|f| format!(", frequency = {f}"))
                .unwrap_or_default();
            let _ = writeln!(
                out,
                "  {{ code = {}, label = {}{freq} }},",
                code(&c.code),
                quoted(&c.label)
            );
        }
        let _ = writeln!(out, "]");
    }
    if !v.missing.is_empty() {
        let _ = writeln!(out, "missing = [");
        for m in &v.missing {
            let _ = writeln!(
                out,
                "  {{ code = {}, label = {}, kind = {} }},",
                code(&m.code),
                quoted(&m.label),
                quoted(m.kind.name())
            );
        }
        let _ = writeln!(out, "]");
    }
    if let Some(r) = &v.range {
        let mut parts = Vec::new();
        if let Some(b) = &r.min {
            parts.push(format!("min = {}", bound(b)));
        }
        if let Some(b) = &r.max {
            parts.push(format!("max = {}", bound(b)));
        }
        if !parts.is_empty() {
            let _ = writeln!(out, "range = {{ {} }}", parts.join(", "));
        }
    }
    if let Some(d) = v.decimals {
        let _ = writeln!(out, "decimals = {d}");
    }
    if let Some(u) = &v.universe {
        let _ = writeln!(out, "universe = {}", quoted(&u.text));
    }
    if let Some(b) = v.blank {
        let _ = writeln!(out, "blank = {}", quoted(b.name()));
    }
    if let Some(c) = &v.columns {
        let _ = writeln!(out, "columns = {{ start = {}, end = {} }}", c.start, c.end);
    }
    if let Some(p) = &v.pattern {
        let _ = writeln!(out, "pattern = {}", quoted(p));
    }
    if let Some(m) = v.max_length {
        let _ = writeln!(out, "max_length = {m}");
    }
    if let Some(d) = &v.documented {
        let mut parts = Vec::new();
        if let Some(n) = d.valid {
            parts.push(format!("valid = {n}"));
        }
        for (name, value) in [
            ("mean", d.mean),
            ("sd", d.sd),
            ("min", d.min),
            ("max", d.max),
        ] {
            if let Some(x) = value {
                parts.push(format!("{name} = {}", format_number(x)));
            }
        }
        if !parts.is_empty() {
            let _ = writeln!(out, "documented = {{ {} }}", parts.join(", "));
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::codebook::native;
    use std::path::Path;

    /// Reading what was written gives the same variables, categories, codes and ranges.
    #[test]
    fn demo_codebook_round_trips() {
        let path = Path::new(concat!(
            env!("CARGO_MANIFEST_DIR"),
            "/demo-data/codebook.toml"
        ));
        let first = crate::codebook::load(path).unwrap().codebook;
        let text = to_toml(&first, &TomlOptions::default());
        let second = native::parse(Path::new("written.toml"), text).unwrap();
        assert!(second.problems.is_empty(), "{:?}", second.problems);
        let second = second.codebook;
        assert_eq!(first.variables.len(), second.variables.len());
        for (a, b) in first.variables.iter().zip(&second.variables) {
            assert_eq!(a.name, b.name);
            assert_eq!(a.kind, b.kind);
            assert_eq!(a.label, b.label);
            let codes = |v: &Variable| {
                v.categories
                    .iter()
                    .map(|c| (c.code.clone(), c.label.clone(), c.frequency))
                    .collect::<Vec<_>>()
            };
            assert_eq!(codes(a), codes(b));
            let missing = |v: &Variable| {
                v.missing
                    .iter()
                    .map(|m| (m.code.clone(), m.kind))
                    .collect::<Vec<_>>()
            };
            assert_eq!(missing(a), missing(b));
            assert_eq!(
                a.range.map(|r| (r.min, r.max)),
                b.range.map(|r| (r.min, r.max))
            );
            assert_eq!(a.decimals, b.decimals);
            assert_eq!(
                a.universe.as_ref().map(|u| &u.text),
                b.universe.as_ref().map(|u| &u.text)
            );
            assert_eq!(
                a.documented.map(|d| (d.valid, d.mean, d.sd)),
                b.documented.map(|d| (d.valid, d.mean, d.sd))
            );
        }
        assert_eq!(first.checks.len(), second.checks.len());
        assert_eq!(first.dataset.cases, second.dataset.cases);
    }

    #[test]
    fn strings_are_escaped() {
        let mut cb = Codebook::default();
        cb.dataset.name = "x".into();
        let mut v = Variable::new("q\"1", Kind::Text);
        v.label = Some("He said \"hi\"\\".into());
        cb.variables.push(v);
        let text = to_toml(&cb, &TomlOptions::default());
        let back = native::parse(Path::new("t.toml"), text).unwrap().codebook;
        assert_eq!(back.variables[0].name, "q\"1");
        assert_eq!(back.variables[0].label.as_deref(), Some("He said \"hi\"\\"));
    }
}
