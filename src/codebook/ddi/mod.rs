//! DDI Codebook XML (2.5, 2.6, no namespace, and the older ICPSR namespace): read it into
//! the codebook model, and write the model back as DDI Codebook 2.5.
//!
//! Archives publish codebooks as DDI; concord reads them directly, and a native codebook can
//! build on one (`[dataset] base = "survey.xml"`) to add what DDI cannot say, such as
//! machine-readable routing. The full mapping, with examples, is in `docs/ddi.md`.
//!
//! # Reading
//!
//! | DDI | concord |
//! | --- | --- |
//! | `var/@name`, first `var/labl` | name, label (full text, markup ignored, whitespace collapsed) |
//! | `catgry` (not missing) | categories, in document order; `catValu` trimmed; plain decimal codes become numbers ("01" is 1), others stay strings |
//! | `catgry/@missing="Y"`, `invalrng/item`, `invalrng/range` | missing codes; a range becomes one code per whole number (at most 1000) |
//! | `catgry/@missType` (else the label) | missing kind: refused; don't know/dontknow/dk -> dont-know; not applicable/inapplicable/inap./legitimate skip/skip -> skipped; not ascertained/NA -> not-ascertained; else other |
//! | `valrng/range` | range (several ranges: their envelope; exclusive integer bounds move by one) |
//! | `valrng/item` | categories labelled with their own value when the variable has no `catgry`; otherwise only used to check categories |
//! | `varFormat/@category="date"` or `representationType="datetime"` | date |
//! | `nature="ordinal"` with categories | ordinal |
//! | `intrvl="contin"` | numeric (categories then label special values) |
//! | categories | categorical |
//! | `varFormat/@type="character"` or `representationType="text"` | text |
//! | anything else | numeric |
//! | `var/@dcml` | decimals |
//! | `var/@wgt="wgt"` (the first) | dataset weight |
//! | `location` StartPos with EndPos or width | fixed columns, and then `[file] layout = "fixed"`, no header |
//! | `fileDscr/fileTxt/dimensns/caseQnty` | dataset cases |
//! | `fileDscr/fileTxt/fileType/@charset` | file encoding |
//! | `catStat` type freq (the default), not weighted | category frequency |
//! | `sumStat` vald, mean, stdev, min, max, not weighted | documented figures |
//! | `universe` | `universe_text`: documentation only, never a condition |
//! | `titlStmt/IDNo`, `titlStmt/titl` | dataset name, title |
//! | `notes type="concord:KEY"` | what concord wrote for keys DDI has no element for (kind identifier, pattern, max-length, blank, dataset id, delimiter, quote, header) |
//!
//! Absent attributes take the schema's defaults (missing N, intrvl discrete, wgtd not-wgtd,
//! catStat type freq, clusion I). With several `fileDscr`, [`Options::file_id`] chooses one;
//! variables whose `files` or `location/@fileid` name another file are left out.
//!
//! Problems of meaning become lint diagnostics (`lint.ddi-*`): references to IDs that do not
//! exist, numeric attributes that are not numbers, duplicate IDs, categories outside the
//! valid range. XML that cannot be read, a root that is not `codeBook`, a truncated file, a
//! DOCTYPE declaring entities, or a `var` without a name are [`LoadError`]s with a line and
//! column.
//!
//! # Writing
//!
//! [`write::to_ddi`] writes DDI Codebook 2.5 that validates against the published schema.
//! Routing and checks have no place in DDI: universes go into `universe` as their condition
//! text and checks into `dataDscr/notes`, both prose to a DDI reader (concord included), and
//! the writer lists them as not carried exactly.

mod read;
mod variable;
pub mod write;
mod xml;

use std::path::Path;

use crate::codebook::error::LoadError;
use crate::codebook::model::{Code, MissingKind};
use crate::codebook::native::Loaded;

/// The `type` prefix of the notes concord writes for keys DDI has no element for.
pub const CONCORD_NOTE: &str = "concord:";

/// Choices for reading a codebook.
#[derive(Debug, Clone, Default)]
pub struct Options {
    /// The ID of the DDI `fileDscr` to describe, when the codebook has several.
    pub file_id: Option<String>,
}

/// Read a DDI codebook from its text. Its places point at `Codebook::sources[file]`.
pub fn parse(
    path: &Path,
    text: String,
    options: &Options,
    file: usize,
) -> Result<Loaded, LoadError> {
    read::parse(path, text, options, file)
}

/// Does the text look like XML (its first character, after a byte-order mark and
/// whitespace, is `<`)?
pub fn looks_like_xml(text: &str) -> bool {
    text.trim_start_matches('\u{feff}')
        .trim_start()
        .starts_with('<')
}

/// A code as DDI writes it: a plain decimal number becomes a number ("01" is 1), anything
/// else a string.
pub fn parse_code(text: &str) -> Code {
    let t = text.trim();
    match parse_plain_number(t) {
        Some(n) => Code::Number(n),
        None => Code::Text(t.to_string()),
    }
}

/// A plain decimal number: optional sign, digits, optional fraction. No exponents, no
/// "inf" or "NaN", no thousands separators.
pub fn parse_plain_number(text: &str) -> Option<f64> {
    let t = text.trim();
    let digits = t.strip_prefix(['-', '+']).unwrap_or(t);
    let (whole, fraction) = digits.split_once('.').unwrap_or((digits, ""));
    let ok = !(whole.is_empty() && fraction.is_empty())
        && whole.bytes().all(|b| b.is_ascii_digit())
        && fraction.bytes().all(|b| b.is_ascii_digit());
    if ok {
        t.parse().ok()
    } else {
        None
    }
}

/// The missing kind a free-text `missType` (or label) describes.
pub fn classify_missing(text: &str) -> MissingKind {
    let lower = text.to_lowercase().replace(['\'', '\u{2019}'], "");
    let words: String = lower
        .chars()
        .map(|c| if c.is_alphanumeric() { c } else { ' ' })
        .collect();
    let compact: String = words.split_whitespace().collect();
    let has = |w: &str| compact.contains(w);
    if has("refus") {
        MissingKind::Refused
    } else if compact == "dk" || has("dontknow") || has("donotknow") {
        MissingKind::DontKnow
    } else if has("notapplicable")
        || has("inapplicable")
        || compact.starts_with("inap")
        || has("skip")
    {
        MissingKind::Skipped
    } else if has("notascertained") || compact == "na" {
        MissingKind::NotAscertained
    } else {
        MissingKind::Other
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn numbers_are_plain_decimals() {
        assert_eq!(parse_code(" 01 "), Code::Number(1.0));
        assert_eq!(parse_code("-1"), Code::Number(-1.0));
        assert_eq!(parse_code("2.50"), Code::Number(2.5));
        assert_eq!(parse_code("1e3"), Code::Text("1e3".into()));
        assert_eq!(parse_code("NaN"), Code::Text("NaN".into()));
        assert_eq!(parse_code("."), Code::Text(".".into()));
        assert_eq!(parse_code("X"), Code::Text("X".into()));
    }

    #[test]
    fn missing_kinds_from_free_text() {
        use MissingKind::*;
        for (text, kind) in [
            ("refused", Refused),
            ("Refusal", Refused),
            ("dontKnow", DontKnow),
            ("Don't know", DontKnow),
            ("DK", DontKnow),
            ("inap.", Skipped),
            ("Not applicable", Skipped),
            ("Inapplicable", Skipped),
            ("legitimate skip", Skipped),
            ("NA", NotAscertained),
            ("not ascertained", NotAscertained),
            ("system missing", Other),
        ] {
            assert_eq!(classify_missing(text), kind, "{text}");
        }
    }

    #[test]
    fn xml_is_told_from_toml() {
        assert!(looks_like_xml("\u{feff}  \n<?xml version=\"1.0\"?>"));
        assert!(!looks_like_xml("[dataset]\nname = \"x\""));
        assert!(!looks_like_xml("# <comment>"));
    }
}
