//! Reading DDI Codebook XML, checked against the published DDI Codebook schemas.
//!
//! - every fixture in `tests/fixtures/ddi/` validates with xmllint against the DDI
//!   Alliance's schema (2.5.1 for `*-2-5*`, 2.6 for `*-2-6*`), read from `../shared/ddi`
//!   beside the repository; `tests/fixtures/ddi-wild/` holds files as found in the wild
//!   (no namespace, the old namespace, broken references) that are not schema valid;
//! - each fixture reads into the model the mapping in `src/codebook/ddi/mod.rs` promises;
//! - bad input (`tests/fixtures/ddi-bad/`) gives an error with a line and column, never a
//!   panic.
//!
//! xmllint (Debian package libxml2-utils) is required when `CI=true`; elsewhere a test that
//! needs it says it is skipped and returns.

use std::path::{Path, PathBuf};
use std::process::Command;

use concord::codebook::model::*;
use concord::codebook::{self, Options};

fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

fn fixture(dir: &str, name: &str) -> PathBuf {
    root().join("tests/fixtures").join(dir).join(name)
}

/// The DDI Alliance's published schema, beside the repository (never copied into it).
pub fn schema(version: &str) -> PathBuf {
    match version {
        "2.5" => PathBuf::from(concat!(
            env!("CARGO_MANIFEST_DIR"),
            "/../shared/ddi/2.5/schemas/codebook.xsd"
        )),
        _ => PathBuf::from(concat!(
            env!("CARGO_MANIFEST_DIR"),
            "/../shared/ddi/2.6/schemas/codebook.xsd"
        )),
    }
}

/// Validate with xmllint; `None` when xmllint or the schema is absent outside CI.
fn xmllint(file: &Path, version: &str) -> Option<Result<(), String>> {
    let ci = std::env::var("CI").is_ok_and(|v| v == "true");
    let schema = schema(version);
    let found = Command::new("xmllint").arg("--version").output().is_ok();
    if !found || !schema.exists() {
        assert!(
            !ci,
            "CI=true but xmllint (apt-get install libxml2-utils) or the schema {} is missing",
            schema.display()
        );
        eprintln!("skipped: xmllint or {} not available", schema.display());
        return None;
    }
    let out = Command::new("xmllint")
        .arg("--noout")
        .arg("--schema")
        .arg(&schema)
        .arg(file)
        .output()
        .expect("xmllint runs");
    Some(if out.status.success() {
        Ok(())
    } else {
        Err(String::from_utf8_lossy(&out.stderr).into_owned())
    })
}

#[test]
fn every_fixture_validates_against_the_published_schema() {
    let dir = root().join("tests/fixtures/ddi");
    let mut files: Vec<_> = std::fs::read_dir(&dir)
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| p.extension().is_some_and(|e| e == "xml"))
        .collect();
    files.sort();
    assert!(files.len() >= 3);
    for f in files {
        let version = if f.to_string_lossy().contains("-2-6") {
            "2.6"
        } else {
            "2.5"
        };
        match xmllint(&f, version) {
            None => return,
            Some(Ok(())) => {}
            Some(Err(e)) => panic!(
                "{} does not validate against DDI {version}:\n{e}",
                f.display()
            ),
        }
    }
}

fn load(dir: &str, name: &str) -> codebook::Loaded {
    load_with(dir, name, None)
}

fn load_with(dir: &str, name: &str, file_id: Option<&str>) -> codebook::Loaded {
    let path = fixture(dir, name);
    codebook::load_with(
        &path,
        &Options {
            file_id: file_id.map(str::to_string),
        },
    )
    .unwrap_or_else(|e| panic!("{}: {e}", path.display()))
}

fn var<'a>(c: &'a Codebook, name: &str) -> &'a Variable {
    c.variable(name)
        .unwrap_or_else(|| panic!("no variable `{name}`"))
}

fn codes(v: &Variable) -> Vec<(Code, String)> {
    v.categories
        .iter()
        .map(|c| (c.code.clone(), c.label.clone()))
        .collect()
}

fn missing(v: &Variable) -> Vec<(Code, MissingKind)> {
    v.missing.iter().map(|m| (m.code.clone(), m.kind)).collect()
}

fn n(x: f64) -> Code {
    Code::Number(x)
}

#[test]
fn prefixed_2_5_file_reads_into_the_model() {
    let loaded = load("ddi", "orchard-2-5-prefixed.xml");
    assert!(loaded.problems.is_empty(), "{:?}", loaded.problems);
    let c = &loaded.codebook;
    assert_eq!(c.dataset.name, "orchard-volunteers-2025");
    assert_eq!(
        c.dataset.title.as_deref(),
        Some("Pennyworth Orchard Volunteers Survey 2025")
    );
    assert_eq!(c.dataset.cases, Some(240));
    assert_eq!(
        c.dataset.weight.as_ref().map(|w| w.name.as_str()),
        Some("wt")
    );
    assert_eq!(c.file.layout, Layout::Delimited);
    let names: Vec<&str> = c.variables.iter().map(|v| v.name.as_str()).collect();
    assert_eq!(names, ["vol_id", "role", "hours", "enjoy", "wt"]);

    assert_eq!(var(c, "vol_id").kind, Kind::Text);

    let role = var(c, "role");
    // Mixed content: the emph markup is dropped, the line break collapses to a space.
    assert_eq!(role.label.as_deref(), Some("Main role in the orchard"));
    assert_eq!(role.kind, Kind::Categorical);
    assert_eq!(
        codes(role),
        [
            (n(1.0), "Pruning and grafting".to_string()),
            (n(2.0), "Harvest & pressing".to_string()),
            (n(3.0), "Beekeeping".to_string()),
        ]
    );
    // Unweighted frequencies only; catStat without a type is a frequency.
    let freqs: Vec<_> = role.categories.iter().map(|c| c.frequency).collect();
    assert_eq!(freqs, [Some(88), Some(101), Some(49)]);
    // Listed in invalrng, labelled by its catgry: a missing code of kind other.
    assert_eq!(missing(role), [(n(9.0), MissingKind::Other)]);
    assert_eq!(role.missing[0].label, "Not recorded");
    assert_eq!(role.universe_text.as_deref(), Some("All volunteers"));
    assert!(role.universe.is_none());

    let hours = var(c, "hours");
    assert_eq!(hours.kind, Kind::Numeric);
    assert_eq!(hours.decimals, Some(1));
    let r = hours.range.unwrap();
    assert_eq!(
        (r.min, r.max),
        (Some(Bound::Number(0.0)), Some(Bound::Number(160.0)))
    );
    assert_eq!(
        missing(hours),
        [
            (n(997.0), MissingKind::Refused),
            (n(998.0), MissingKind::DontKnow),
            (n(999.0), MissingKind::Skipped),
        ]
    );
    let d = hours.documented.unwrap();
    assert_eq!(
        (d.valid, d.mean, d.sd, d.min, d.max),
        (Some(221), Some(12.4), Some(9.8), Some(0.0), Some(96.0))
    );

    let enjoy = var(c, "enjoy");
    assert_eq!(enjoy.kind, Kind::Ordinal);
    assert_eq!(missing(enjoy), [(n(-9.0), MissingKind::NotAscertained)]);
    assert_eq!(var(c, "wt").decimals, Some(3));
}

#[test]
fn places_point_into_the_xml() {
    let loaded = load("ddi", "orchard-2-5-prefixed.xml");
    let c = &loaded.codebook;
    let text = &c.sources[0].text;
    let p = var(c, "hours").place.unwrap();
    assert_eq!(&text[p.offset..p.offset + p.len], "hours");
    let cat = var(c, "role").categories[0].place.unwrap();
    assert!(text[cat.offset..].starts_with("<ddi:catgry>"));
}

#[test]
fn fixed_width_2_6_file_gives_columns_dates_and_text_codes() {
    let c = load("ddi", "ferry-fixed-2-6.xml").codebook;
    assert_eq!(c.file.layout, Layout::Fixed);
    assert!(!c.file.header);
    assert_eq!(c.file.encoding, Encoding::Latin1);
    assert_eq!(c.dataset.cases, Some(1500));
    let cols: Vec<_> = c
        .variables
        .iter()
        .map(|v| v.columns.map(|c| (c.start, c.end)))
        .collect();
    // sail_date gives StartPos and width.
    assert_eq!(
        cols,
        [Some((1, 6)), Some((7, 16)), Some((17, 17)), Some((18, 20))]
    );
    let date = var(&c, "sail_date");
    assert_eq!(date.kind, Kind::Date);
    assert!(matches!(date.range.unwrap().min, Some(Bound::Date(_))));
    let deck = var(&c, "deck");
    assert_eq!(deck.kind, Kind::Categorical);
    assert_eq!(deck.categories[0].code, Code::Text("A".into()));
    assert_eq!(
        missing(deck),
        [(Code::Text("Z".into()), MissingKind::NotAscertained)]
    );
    // An invalrng range of whole numbers lists each code; catgry labels two of them and
    // their labels give the kind.
    let p = var(&c, "passengers");
    assert_eq!(
        missing(p),
        [
            (n(997.0), MissingKind::Refused),
            (n(998.0), MissingKind::DontKnow),
            (n(999.0), MissingKind::Other),
        ]
    );
    assert!(concord::codebook::lint::lint(&c).is_empty());
}

#[test]
fn two_files_need_a_file_id() {
    let path = fixture("ddi", "two-files-2-5.xml");
    let err = codebook::load(&path).unwrap_err();
    assert_eq!(err.code, "ddi.ambiguous-file");
    assert!(err.message.contains("households, plots"), "{}", err.message);
    assert!(err.position.is_some());

    let h = load_with("ddi", "two-files-2-5.xml", Some("households")).codebook;
    let names: Vec<&str> = h.variables.iter().map(|v| v.name.as_str()).collect();
    assert_eq!(names, ["member", "members_in_home"]);
    assert_eq!(h.dataset.cases, Some(80));

    let p = load_with("ddi", "two-files-2-5.xml", Some("plots")).codebook;
    let names: Vec<&str> = p.variables.iter().map(|v| v.name.as_str()).collect();
    assert_eq!(names, ["member", "plot_size", "water"]);
    assert_eq!(p.dataset.cases, Some(130));

    let err = codebook::load_with(
        &path,
        &Options {
            file_id: Some("gardens".into()),
        },
    )
    .unwrap_err();
    assert_eq!(err.code, "ddi.unknown-file-id");
    assert!(err.message.contains("households, plots"));
}

#[test]
fn files_in_the_wild_read_too() {
    let c = load("ddi-wild", "no-namespace.xml").codebook;
    let books = var(&c, "books");
    assert_eq!(books.label.as_deref(), Some("Books read this year"));
    assert_eq!(missing(books), [(n(-1.0), MissingKind::Refused)]);
    let genre = var(&c, "genre");
    // Markup inside catValu: the text is the code.
    assert_eq!(genre.categories[0].code, n(1.0));
    assert_eq!(missing(genre), [(n(8.0), MissingKind::DontKnow)]);
    // valrng items and no catgry: the items are the categories.
    let group = var(&c, "group");
    assert_eq!(group.kind, Kind::Categorical);
    assert_eq!(
        codes(group),
        [
            (Code::Text("N".into()), "N".to_string()),
            (Code::Text("S".into()), "S".to_string())
        ]
    );

    let c = load("ddi-wild", "icpsr-namespace.xml").codebook;
    assert_eq!(missing(var(&c, "boat")), [(n(0.0), MissingKind::Skipped)]);
}

#[test]
fn reader_reports_every_ddi_lint_rule() {
    let loaded = load("ddi-wild", "lint-problems.xml");
    let mut rules: Vec<&str> = loaded.problems.iter().map(|d| d.rule).collect();
    rules.sort();
    rules.dedup();
    assert_eq!(
        rules,
        [
            "lint.ddi-broken-reference",
            "lint.ddi-category-without-value",
            "lint.ddi-duplicate-id",
            "lint.ddi-not-a-number",
            "lint.ddi-range-disagrees",
        ]
    );
    let messages: Vec<&str> = loaded.problems.iter().map(|d| d.message.as_str()).collect();
    let has = |s: &str| messages.iter().any(|m| m.contains(s));
    assert!(has("`F9`") && has("`W7`"), "{messages:?}");
    assert!(
        has("\"one\"") && has("\"x\"") && has("\"many\""),
        "{messages:?}"
    );
    assert!(has("category 7 of `score`"), "{messages:?}");
    for d in &loaded.problems {
        assert!(
            concord::rules::find(d.rule).is_some(),
            "{} not in the rule table",
            d.rule
        );
        assert!(d.place.is_some(), "{} has no place", d.rule);
    }
}

#[test]
fn bad_input_is_an_error_with_a_position() {
    for (name, code, words) in [
        ("html.xml", "ddi.not-ddi", "root element is <html>"),
        ("truncated.xml", "ddi.syntax", "not well formed"),
        ("entities.xml", "ddi.entities", "entities"),
        (
            "unnamed-variable.xml",
            "ddi.variable-without-name",
            "no `name`",
        ),
        ("unknown-entity.xml", "ddi.syntax", "eacute"),
        ("mismatched.xml", "ddi.syntax", "</labl>"),
    ] {
        let path = fixture("ddi-bad", name);
        let err = codebook::load(&path).expect_err(name);
        assert_eq!(err.code, code, "{name}: {err}");
        assert!(err.message.contains(words), "{name}: {err}");
        assert!(err.position.is_some(), "{name} has no line and column");
    }
    // Not XML at all is read as TOML, and fails as TOML.
    let err = codebook::load(&fixture("ddi-bad", "not-xml.txt")).unwrap_err();
    assert_eq!(err.code, "codebook.syntax");
}

#[test]
fn every_truncation_of_a_fixture_is_an_error_not_a_panic() {
    let text = std::fs::read_to_string(fixture("ddi", "orchard-2-5-prefixed.xml")).unwrap();
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("cut.xml");
    let mut cut = 1;
    while cut < text.len() {
        if text.is_char_boundary(cut) {
            let result = concord::codebook::ddi::parse(
                &path,
                text[..cut].to_string(),
                &Options::default(),
                0,
            );
            if let Err(e) = result {
                assert!(
                    e.position.is_some() || e.code == "codebook.no-variables",
                    "{e}"
                );
            }
        }
        cut += 7;
    }
}

#[test]
fn a_large_codebook_streams() {
    // 5000 variables of four categories each: about 3 MB of XML.
    let mut x = String::from(
        "<codeBook xmlns=\"ddi:codebook:2_5\" version=\"2.5\"><stdyDscr><citation><titlStmt>\
         <titl>Generated</titl></titlStmt></citation></stdyDscr><dataDscr>\n",
    );
    for i in 0..5000 {
        x.push_str(&format!(
            "<var ID=\"V{i}\" name=\"q{i}\"><labl>Question {i}</labl>"
        ));
        for code in 1..=4 {
            x.push_str(&format!(
                "<catgry><catValu>{code}</catValu><labl>Answer {code}</labl><catStat>{}</catStat></catgry>",
                i + code
            ));
        }
        x.push_str(
            "<catgry missing=\"Y\" missType=\"refused\"><catValu>9</catValu></catgry></var>\n",
        );
    }
    x.push_str("</dataDscr></codeBook>\n");
    let loaded =
        concord::codebook::ddi::parse(Path::new("big.xml"), x, &Options::default(), 0).unwrap();
    assert_eq!(loaded.codebook.variables.len(), 5000);
    assert!(loaded.problems.is_empty());
    let last = &loaded.codebook.variables[4999];
    assert_eq!(last.name, "q4999");
    assert_eq!(last.categories.len(), 4);
    assert_eq!(last.missing[0].kind, MissingKind::Refused);
}

#[test]
fn deep_nesting_is_refused() {
    let mut x = String::from("<codeBook><dataDscr><var name=\"a\"><labl>");
    x.push_str(&"<emph>".repeat(5000));
    x.push_str(&"</emph>".repeat(5000));
    x.push_str("</labl></var></dataDscr></codeBook>");
    let err = concord::codebook::ddi::parse(Path::new("deep.xml"), x, &Options::default(), 0)
        .unwrap_err();
    assert_eq!(err.code, "ddi.too-deep");
}
