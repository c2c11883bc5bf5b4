//! The codebook model -> DDI Codebook 2.5 XML that validates against the published schema.
//!
//! Elements are written in the schema's order: `var` holds location, labl, valrng, invalrng,
//! universe, sumStat, catgry (catValu, labl, catStat), varFormat, notes. Missing codes are
//! written both ways DDI knows (an `invalrng` item and a `catgry missing="Y"` with its label
//! and `missType`), so any DDI reader finds them. What DDI has no element for is written as
//! `notes type="concord:KEY"`, which concord reads back; universes and checks are written as
//! prose and listed in [`Written::not_carried`].

use std::fmt::Write as _;

use super::CONCORD_NOTE;
use crate::codebook::model::*;

/// A DDI document and what it could not carry exactly.
pub struct Written {
    pub xml: String,
    /// One line per thing a DDI reader will not get back exactly.
    pub not_carried: Vec<String>,
}

const FILE_ID: &str = "F1";

/// Write the codebook as DDI Codebook 2.5.
pub fn to_ddi(codebook: &Codebook) -> Written {
    let mut x = String::new();
    let mut not_carried = Vec::new();
    let d = &codebook.dataset;
    x.push_str("<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n");
    x.push_str("<codeBook xmlns=\"ddi:codebook:2_5\" version=\"2.5\">\n");
    x.push_str("  <stdyDscr>\n    <citation>\n      <titlStmt>\n");
    let _ = writeln!(
        x,
        "        <titl>{}</titl>",
        text(d.title.as_deref().unwrap_or(&d.name))
    );
    let _ = writeln!(x, "        <IDNo>{}</IDNo>", text(&d.name));
    x.push_str("      </titlStmt>\n    </citation>\n  </stdyDscr>\n");

    let f = &codebook.file;
    let _ = writeln!(x, "  <fileDscr ID=\"{FILE_ID}\">\n    <fileTxt>");
    let _ = writeln!(x, "      <fileName>{}</fileName>", text(&d.name));
    if let Some(cases) = d.cases {
        let _ = writeln!(
            x,
            "      <dimensns>\n        <caseQnty>{cases}</caseQnty>\n      </dimensns>"
        );
    }
    let layout = match f.layout {
        Layout::Delimited => "delimited text",
        Layout::Fixed => "fixed-width text",
    };
    let _ = writeln!(
        x,
        "      <fileType charset=\"{}\">{layout}</fileType>",
        f.encoding.name()
    );
    x.push_str("    </fileTxt>\n");
    if f.layout == Layout::Delimited {
        let delimiter = match f.delimiter {
            b'\t' => "\\t".to_string(),
            b => char::from(b).to_string(),
        };
        note(&mut x, 4, "delimiter", &delimiter);
        note(&mut x, 4, "quote", &char::from(f.quote).to_string());
    }
    note(&mut x, 4, "header", if f.header { "true" } else { "false" });
    x.push_str("  </fileDscr>\n");

    x.push_str("  <dataDscr>\n");
    for (i, v) in codebook.variables.iter().enumerate() {
        variable(&mut x, i, v, codebook, &mut not_carried);
    }
    if !d.id.is_empty() {
        let names: Vec<&str> = d.id.iter().map(|n| n.name.as_str()).collect();
        note(&mut x, 4, "id", &names.join(" "));
        not_carried.push(format!(
            "the dataset id ({}) is kept only as a concord note",
            names.join(", ")
        ));
    }
    if let Some(b) = d.blank {
        note(&mut x, 4, "blank", b.name());
        not_carried.push(format!(
            "the dataset's blank meaning ({b}) is kept only as a concord note"
        ));
    }
    for c in &codebook.checks {
        let mut prose = format!("Check {} ({}): {}", c.name, c.severity, c.assert.text);
        if let Some(w) = &c.when {
            let _ = write!(prose, ", when {}", w.text);
        }
        let _ = writeln!(
            x,
            "    <notes type=\"{CONCORD_NOTE}check\">{}</notes>",
            text(&prose)
        );
        not_carried.push(format!(
            "check `{}` is written as prose in dataDscr/notes; no DDI reader applies it",
            c.name
        ));
    }
    x.push_str("  </dataDscr>\n</codeBook>\n");
    Written {
        xml: x,
        not_carried,
    }
}

fn variable(
    x: &mut String,
    i: usize,
    v: &Variable,
    codebook: &Codebook,
    not_carried: &mut Vec<String>,
) {
    let mut attrs = format!(
        "ID=\"V{}\" name=\"{}\" files=\"{FILE_ID}\"",
        i + 1,
        attr(&v.name)
    );
    match v.kind {
        Kind::Numeric => attrs.push_str(" intrvl=\"contin\""),
        Kind::Ordinal => attrs.push_str(" nature=\"ordinal\""),
        Kind::Categorical => attrs.push_str(" nature=\"nominal\""),
        _ => {}
    }
    if let Some(dcml) = v.decimals {
        let _ = write!(attrs, " dcml=\"{dcml}\"");
    }
    if codebook
        .dataset
        .weight
        .as_ref()
        .is_some_and(|w| w.name == v.name)
    {
        attrs.push_str(" wgt=\"wgt\"");
    }
    let _ = writeln!(x, "    <var {attrs}>");
    if let Some(c) = v.columns {
        let _ = writeln!(
            x,
            "      <location StartPos=\"{}\" EndPos=\"{}\" width=\"{}\" fileid=\"{FILE_ID}\"/>",
            c.start,
            c.end,
            c.end + 1 - c.start.min(c.end)
        );
    }
    if let Some(l) = &v.label {
        let _ = writeln!(x, "      <labl>{}</labl>", text(l));
    }
    if let Some(r) = &v.range {
        if r.min.is_some() || r.max.is_some() {
            let mut range = String::new();
            if let Some(b) = r.min {
                let _ = write!(range, " min=\"{b}\"");
            }
            if let Some(b) = r.max {
                let _ = write!(range, " max=\"{b}\"");
            }
            let units = if bound_is_fraction(r.min) || bound_is_fraction(r.max) {
                " UNITS=\"REAL\""
            } else {
                ""
            };
            let _ = writeln!(
                x,
                "      <valrng>\n        <range{units}{range}/>\n      </valrng>"
            );
        }
    }
    if !v.missing.is_empty() {
        x.push_str("      <invalrng>\n");
        for m in &v.missing {
            let _ = writeln!(x, "        <item VALUE=\"{}\"/>", attr(&code(&m.code)));
        }
        x.push_str("      </invalrng>\n");
    }
    if let Some(u) = &v.universe {
        let _ = writeln!(
            x,
            "      <universe clusion=\"I\">{}</universe>",
            text(&u.text)
        );
        not_carried.push(format!(
            "the universe of `{}` ({}) is written as prose in <universe>; no DDI reader applies it",
            v.name, u.text
        ));
    } else if let Some(u) = &v.universe_text {
        let _ = writeln!(x, "      <universe clusion=\"I\">{}</universe>", text(u));
    }
    if let Some(d) = &v.documented {
        let figures = [
            ("vald", d.valid.map(|n| n.to_string())),
            ("mean", d.mean.map(format_number)),
            ("stdev", d.sd.map(format_number)),
            ("min", d.min.map(format_number)),
            ("max", d.max.map(format_number)),
        ];
        for (kind, value) in figures {
            if let Some(value) = value {
                let _ = writeln!(x, "      <sumStat type=\"{kind}\">{value}</sumStat>");
            }
        }
    }
    for c in &v.categories {
        let _ = writeln!(
            x,
            "      <catgry>\n        <catValu>{}</catValu>",
            text(&code(&c.code))
        );
        let _ = writeln!(x, "        <labl>{}</labl>", text(&c.label));
        if let Some(n) = c.frequency {
            let _ = writeln!(x, "        <catStat type=\"freq\">{n}</catStat>");
        }
        x.push_str("      </catgry>\n");
    }
    for m in &v.missing {
        let _ = writeln!(
            x,
            "      <catgry missing=\"Y\" missType=\"{}\">\n        <catValu>{}</catValu>\n        <labl>{}</labl>\n      </catgry>",
            m.kind.name(),
            text(&code(&m.code)),
            text(&m.label)
        );
    }
    let text_codes =
        !v.categories.is_empty() && v.categories.iter().all(|c| matches!(c.code, Code::Text(_)));
    match v.kind {
        Kind::Date => {
            x.push_str("      <varFormat type=\"character\" category=\"date\" schema=\"ISO\"/>\n")
        }
        Kind::Text | Kind::Identifier => x.push_str("      <varFormat type=\"character\"/>\n"),
        _ if text_codes => x.push_str("      <varFormat type=\"character\"/>\n"),
        _ => {}
    }
    let mut kept = Vec::new();
    if v.kind == Kind::Identifier {
        note(x, 6, "kind", "identifier");
        kept.push("kind identifier".to_string());
    }
    if let Some(p) = &v.pattern {
        note(x, 6, "pattern", p);
        kept.push("pattern".to_string());
    }
    if let Some(n) = v.max_length {
        note(x, 6, "max-length", &n.to_string());
        kept.push("max_length".to_string());
    }
    if let Some(b) = v.blank {
        note(x, 6, "blank", b.name());
        kept.push(format!("blank meaning ({b})"));
    }
    if !kept.is_empty() {
        not_carried.push(format!(
            "`{}`: {} kept only as concord notes (other DDI tools ignore them)",
            v.name,
            kept.join(", ")
        ));
    }
    x.push_str("    </var>\n");
}

fn bound_is_fraction(b: Option<Bound>) -> bool {
    matches!(b, Some(Bound::Number(n)) if n.fract() != 0.0)
}

fn note(x: &mut String, indent: usize, key: &str, value: &str) {
    let _ = writeln!(
        x,
        "{:indent$}<notes type=\"{CONCORD_NOTE}{key}\">{}</notes>",
        "",
        text(value)
    );
}

fn code(c: &Code) -> String {
    match c {
        Code::Number(n) => format_number(*n),
        Code::Text(t) => t.clone(),
    }
}

/// Escape character data; characters XML 1.0 cannot hold are dropped.
fn text(s: &str) -> String {
    let mut out = String::with_capacity(s.len());
    for c in s.chars() {
        match c {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '\t' | '\n' | '\r' => out.push(c),
            c if (c as u32) < 0x20 || c == '\u{fffe}' || c == '\u{ffff}' => {}
            c => out.push(c),
        }
    }
    out
}

/// Escape an attribute value (quotes and whitespace characters too, so they survive
/// attribute-value normalisation).
fn attr(s: &str) -> String {
    text(s)
        .replace('"', "&quot;")
        .replace('\t', "&#9;")
        .replace('\n', "&#10;")
        .replace('\r', "&#13;")
}
