//! Writing a codebook model as native TOML (DESIGN section 3), for the codebook that
//! describes a recoded file.
//!
//! The writer covers every field of the model that the native reader reads, so that the
//! written file reads back to the same model. Strings are written through the `toml` crate's
//! own quoting, so labels with quotes, backslashes or newlines survive.

use std::fmt::Write;

use crate::codebook::model::{
    Bound, Code, Codebook, Encoding, Layout, MissingKind, Severity, Variable,
};

fn quote(s: &str) -> String {
    toml::Value::String(s.to_string()).to_string()
}

fn number(n: f64) -> String {
    let text = crate::codebook::model::format_number(n);
    if n.is_finite() {
        text
    } else {
        "nan".to_string()
    }
}

fn code(c: &Code) -> String {
    match c {
        Code::Number(n) => number(*n),
        Code::Text(t) => quote(t),
    }
}

fn bound(b: &Bound) -> String {
    match b {
        Bound::Number(n) => number(*n),
        Bound::Date(d) => quote(&crate::codebook::date::format_iso_date(*d)),
    }
}

fn kind_name(k: MissingKind) -> String {
    quote(k.name())
}

/// The codebook as native TOML text. `header` is written as the first comment lines.
pub fn write(codebook: &Codebook, header: &str) -> String {
    let mut out = String::new();
    for line in header.lines() {
        let _ = writeln!(out, "# {line}");
    }
    let d = &codebook.dataset;
    out.push_str("\n[dataset]\n");
    let _ = writeln!(out, "name = {}", quote(&d.name));
    if let Some(t) = &d.title {
        let _ = writeln!(out, "title = {}", quote(t));
    }
    if let Some(c) = d.cases {
        let _ = writeln!(out, "cases = {c}");
    }
    if !d.id.is_empty() {
        let ids: Vec<String> = d.id.iter().map(|n| quote(&n.name)).collect();
        let _ = writeln!(out, "id = [{}]", ids.join(", "));
    }
    if let Some(w) = &d.weight {
        let _ = writeln!(out, "weight = {}", quote(&w.name));
    }
    if let Some(b) = d.blank {
        let _ = writeln!(out, "blank = {}", kind_name(b));
    }
    let f = &codebook.file;
    out.push_str("\n[file]\n");
    let _ = writeln!(
        out,
        "layout = {}",
        quote(match f.layout {
            Layout::Delimited => "delimited",
            Layout::Fixed => "fixed",
        })
    );
    if f.layout == Layout::Delimited {
        let _ = writeln!(
            out,
            "delimiter = {}",
            quote(&(f.delimiter as char).to_string())
        );
        let _ = writeln!(out, "header = {}", f.header);
        if f.quote != b'"' {
            let _ = writeln!(out, "quote = {}", quote(&(f.quote as char).to_string()));
        }
    }
    let _ = writeln!(
        out,
        "encoding = {}",
        quote(match f.encoding {
            Encoding::Utf8 => "utf-8",
            Encoding::Latin1 => "latin1",
            Encoding::Windows1252 => "windows-1252",
        })
    );
    for v in &codebook.variables {
        variable(&mut out, v);
    }
    for c in &codebook.checks {
        out.push_str("\n[[checks]]\n");
        let _ = writeln!(out, "name = {}", quote(&c.name));
        let _ = writeln!(out, "assert = {}", quote(&c.assert.text));
        if let Some(w) = &c.when {
            let _ = writeln!(out, "when = {}", quote(&w.text));
        }
        let _ = writeln!(
            out,
            "severity = {}",
            quote(match c.severity {
                Severity::Error => "error",
                Severity::Warning => "warning",
            })
        );
    }
    out
}

fn variable(out: &mut String, v: &Variable) {
    out.push_str("\n[[variables]]\n");
    let _ = writeln!(out, "name = {}", quote(&v.name));
    if let Some(l) = &v.label {
        let _ = writeln!(out, "label = {}", quote(l));
    }
    let _ = writeln!(out, "kind = {}", quote(v.kind.name()));
    if !v.categories.is_empty() {
        out.push_str("categories = [\n");
        for c in &v.categories {
            let frequency = c
                .frequency
                .map(|f| format!(", frequency = {f}"))
                .unwrap_or_default();
            let _ = writeln!(
                out,
                "  {{ code = {}, label = {}{frequency} }},",
                code(&c.code),
                quote(&c.label)
            );
        }
        out.push_str("]\n");
    }
    if !v.missing.is_empty() {
        out.push_str("missing = [\n");
        for m in &v.missing {
            let _ = writeln!(
                out,
                "  {{ code = {}, label = {}, kind = {} }},",
                code(&m.code),
                quote(&m.label),
                kind_name(m.kind)
            );
        }
        out.push_str("]\n");
    }
    if let Some(r) = &v.range {
        let mut parts = Vec::new();
        if let Some(b) = &r.min {
            parts.push(format!("min = {}", bound(b)));
        }
        if let Some(b) = &r.max {
            parts.push(format!("max = {}", bound(b)));
        }
        let _ = writeln!(out, "range = {{ {} }}", parts.join(", "));
    }
    if let Some(d) = v.decimals {
        let _ = writeln!(out, "decimals = {d}");
    }
    if let Some(u) = &v.universe {
        let _ = writeln!(out, "universe = {}", quote(&u.text));
    }
    if let Some(b) = v.blank {
        let _ = writeln!(out, "blank = {}", kind_name(b));
    }
    if let Some(c) = &v.columns {
        let _ = writeln!(out, "columns = {{ start = {}, end = {} }}", c.start, c.end);
    }
    if let Some(p) = &v.pattern {
        let _ = writeln!(out, "pattern = {}", quote(p));
    }
    if let Some(m) = v.max_length {
        let _ = writeln!(out, "max_length = {m}");
    }
    if let Some(d) = &v.documented {
        let mut parts = Vec::new();
        if let Some(x) = d.valid {
            parts.push(format!("valid = {x}"));
        }
        for (name, value) in [
            ("mean", d.mean),
            ("sd", d.sd),
            ("min", d.min),
            ("max", d.max),
        ] {
            if let Some(x) = value {
                parts.push(format!("{name} = {}", float(x)));
            }
        }
        if !parts.is_empty() {
            let _ = writeln!(out, "documented = {{ {} }}", parts.join(", "));
        }
    }
}

/// A TOML float that reads back as the same f64.
fn float(x: f64) -> String {
    toml::Value::Float(x).to_string()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn demo_codebook_round_trips() {
        let path = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("demo-data/codebook.toml");
        let loaded = crate::codebook::load(&path).unwrap();
        let text = write(&loaded.codebook, "written by a test");
        let again = crate::codebook::native::parse(&path, text.clone()).unwrap();
        assert!(again.problems.is_empty(), "{:?}", again.problems);
        let (a, b) = (&loaded.codebook, &again.codebook);
        assert_eq!(a.variables.len(), b.variables.len());
        for (x, y) in a.variables.iter().zip(&b.variables) {
            assert_eq!(x.name, y.name);
            assert_eq!(x.categories.len(), y.categories.len(), "{}", x.name);
            for (c, d) in x.categories.iter().zip(&y.categories) {
                assert_eq!(
                    (&c.code, &c.label, c.frequency),
                    (&d.code, &d.label, d.frequency)
                );
            }
            assert_eq!(
                x.range.map(|r| (r.min, r.max)),
                y.range.map(|r| (r.min, r.max))
            );
            assert_eq!(
                x.universe.as_ref().map(|u| &u.text),
                y.universe.as_ref().map(|u| &u.text)
            );
            assert_eq!(
                x.documented.map(|d| (d.valid, d.mean, d.sd)),
                y.documented.map(|d| (d.valid, d.mean, d.sd))
            );
        }
        assert_eq!(a.checks.len(), b.checks.len());
        assert!(crate::codebook::lint::lint(b)
            .iter()
            .all(|d| d.severity != Severity::Error));
    }
}
