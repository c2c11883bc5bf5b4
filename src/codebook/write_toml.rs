//! The codebook model -> native TOML, as a person would write it.
//!
//! Hand-written rather than serialised, so the file reads like the format's documentation:
//! keys in the documented order, one category per line in the declared order (the level
//! order of every table), codes written as numbers or strings as the model holds them. A
//! universe known only as prose (from DDI) becomes a comment above the variable, since the
//! native `universe` key holds conditions. The output reads back to the same model.

use std::fmt::Write as _;

use crate::codebook::model::*;

/// Write the codebook as native TOML. `origin` (such as the DDI file's name) goes into the
/// opening comment.
pub fn to_toml(codebook: &Codebook, origin: Option<&str>) -> String {
    let mut t = String::new();
    if let Some(o) = origin {
        let _ = writeln!(t, "# Written by concord from {}.\n", one_line(o));
    }
    let d = &codebook.dataset;
    t.push_str("[dataset]\n");
    let _ = writeln!(t, "name = {}", string(&d.name));
    if let Some(title) = &d.title {
        let _ = writeln!(t, "title = {}", string(title));
    }
    if let Some(c) = d.cases {
        let _ = writeln!(t, "cases = {c}");
    }
    if !d.id.is_empty() {
        let names: Vec<String> = d.id.iter().map(|n| string(&n.name)).collect();
        let _ = writeln!(t, "id = [{}]", names.join(", "));
    }
    if let Some(w) = &d.weight {
        let _ = writeln!(t, "weight = {}", string(&w.name));
    }
    if let Some(b) = d.blank {
        let _ = writeln!(t, "blank = {}", string(b.name()));
    }

    let f = &codebook.file;
    t.push_str("\n[file]\n");
    let layout = match f.layout {
        Layout::Delimited => "delimited",
        Layout::Fixed => "fixed",
    };
    let _ = writeln!(t, "layout = {}", string(layout));
    if f.layout == Layout::Delimited {
        let _ = writeln!(
            t,
            "delimiter = {}",
            string(&char::from(f.delimiter).to_string())
        );
        let _ = writeln!(t, "quote = {}", string(&char::from(f.quote).to_string()));
    }
    let _ = writeln!(t, "header = {}", f.header);
    let _ = writeln!(t, "encoding = {}", string(f.encoding.name()));

    for v in &codebook.variables {
        variable(&mut t, v);
    }
    for c in &codebook.checks {
        t.push_str("\n[[checks]]\n");
        let _ = writeln!(t, "name = {}", string(&c.name));
        let _ = writeln!(t, "assert = {}", string(&c.assert.text));
        if let Some(w) = &c.when {
            let _ = writeln!(t, "when = {}", string(&w.text));
        }
        let _ = writeln!(t, "severity = {}", string(c.severity.name()));
    }
    t
}

fn variable(t: &mut String, v: &Variable) {
    t.push_str("\n[[variables]]\n");
    if let Some(u) = &v.universe_text {
        let _ = writeln!(t, "# Universe (prose, not a condition): {}", one_line(u));
    }
    let _ = writeln!(t, "name = {}", string(&v.name));
    if let Some(l) = &v.label {
        let _ = writeln!(t, "label = {}", string(l));
    }
    let _ = writeln!(t, "kind = {}", string(v.kind.name()));
    if !v.categories.is_empty() {
        t.push_str("categories = [\n");
        for c in &v.categories {
            let _ = write!(
                t,
                "  {{ code = {}, label = {}",
                code(&c.code),
                string(&c.label)
            );
            if let Some(n) = c.frequency {
                let _ = write!(t, ", frequency = {n}");
            }
            t.push_str(" },\n");
        }
        t.push_str("]\n");
    }
    if !v.missing.is_empty() {
        t.push_str("missing = [\n");
        for m in &v.missing {
            let _ = writeln!(
                t,
                "  {{ code = {}, label = {}, kind = {} }},",
                code(&m.code),
                string(&m.label),
                string(m.kind.name())
            );
        }
        t.push_str("]\n");
    }
    if let Some(r) = &v.range {
        let mut parts = Vec::new();
        if let Some(b) = r.min {
            parts.push(format!("min = {}", bound(b)));
        }
        if let Some(b) = r.max {
            parts.push(format!("max = {}", bound(b)));
        }
        if !parts.is_empty() {
            let _ = writeln!(t, "range = {{ {} }}", parts.join(", "));
        }
    }
    if let Some(d) = v.decimals {
        let _ = writeln!(t, "decimals = {d}");
    }
    if let Some(u) = &v.universe {
        let _ = writeln!(t, "universe = {}", string(&u.text));
    }
    if let Some(b) = v.blank {
        let _ = writeln!(t, "blank = {}", string(b.name()));
    }
    if let Some(c) = v.columns {
        let _ = writeln!(t, "columns = {{ start = {}, end = {} }}", c.start, c.end);
    }
    if let Some(p) = &v.pattern {
        let _ = writeln!(t, "pattern = {}", string(p));
    }
    if let Some(n) = v.max_length {
        let _ = writeln!(t, "max_length = {n}");
    }
    if let Some(d) = &v.documented {
        let mut parts = Vec::new();
        if let Some(n) = d.valid {
            parts.push(format!("valid = {n}"));
        }
        for (key, value) in [
            ("mean", d.mean),
            ("sd", d.sd),
            ("min", d.min),
            ("max", d.max),
        ] {
            if let Some(n) = value {
                parts.push(format!("{key} = {}", number(n)));
            }
        }
        if !parts.is_empty() {
            let _ = writeln!(t, "documented = {{ {} }}", parts.join(", "));
        }
    }
}

fn code(c: &Code) -> String {
    match c {
        Code::Number(n) => number(*n),
        Code::Text(s) => string(s),
    }
}

fn bound(b: Bound) -> String {
    match b {
        Bound::Number(n) => number(n),
        Bound::Date(_) => string(&b.to_string()),
    }
}

/// A TOML number: an integer when whole and small enough, else a float that reads back
/// exactly.
fn number(n: f64) -> String {
    if n.fract() == 0.0 && n.abs() < 9.0e15 {
        format!("{}", n as i64)
    } else if n.is_finite() {
        format!("{n:?}")
    } else {
        // Not reachable from a readable codebook; keep the output valid TOML.
        "nan".to_string()
    }
}

/// A TOML basic string.
fn string(s: &str) -> String {
    let mut out = String::with_capacity(s.len() + 2);
    out.push('"');
    for c in s.chars() {
        match c {
            '"' => out.push_str("\\\""),
            '\\' => out.push_str("\\\\"),
            '\n' => out.push_str("\\n"),
            '\t' => out.push_str("\\t"),
            '\r' => out.push_str("\\r"),
            c if (c as u32) < 0x20 || c == '\u{7f}' => {
                let _ = write!(out, "\\u{:04X}", c as u32);
            }
            c => out.push(c),
        }
    }
    out.push('"');
    out
}

fn one_line(s: &str) -> String {
    s.split_whitespace().collect::<Vec<_>>().join(" ")
}
