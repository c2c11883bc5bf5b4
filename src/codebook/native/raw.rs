//! The raw structs of a native codebook: the TOML file exactly as written, read by serde.
//!
//! Unknown keys are refused (`deny_unknown_fields`) and every part that a message may point at
//! keeps its span, so the reader can say where a problem is; turning these into the model is
//! the reader's job ([`super::reader`]).

use serde::Deserialize;
use toml::Spanned;

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
pub(super) struct RawCodebook {
    pub(super) dataset: Option<Spanned<RawDataset>>,
    pub(super) file: Option<Spanned<RawFile>>,
    #[serde(default)]
    pub(super) variables: Vec<Spanned<RawVariable>>,
    #[serde(default)]
    pub(super) checks: Vec<Spanned<RawCheck>>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
pub(super) struct RawDataset {
    pub(super) name: Option<Spanned<String>>,
    pub(super) title: Option<String>,
    pub(super) cases: Option<Spanned<i64>>,
    pub(super) id: Option<Spanned<OneOrMany>>,
    pub(super) weight: Option<Spanned<String>>,
    pub(super) blank: Option<Spanned<String>>,
    pub(super) base: Option<Spanned<String>>,
}

#[derive(Deserialize)]
#[serde(untagged)]
pub(super) enum OneOrMany {
    One(String),
    Many(Vec<String>),
}

#[derive(Deserialize)]
#[serde(rename_all = "kebab-case")]
pub(super) enum RawLayout {
    Delimited,
    Fixed,
}

#[derive(Deserialize)]
pub(super) enum RawEncoding {
    #[serde(rename = "utf-8", alias = "utf8", alias = "UTF-8")]
    Utf8,
    #[serde(rename = "latin1", alias = "iso-8859-1", alias = "latin-1")]
    Latin1,
    #[serde(rename = "windows-1252", alias = "cp1252")]
    Windows1252,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
pub(super) struct RawFile {
    pub(super) layout: Option<RawLayout>,
    pub(super) delimiter: Option<Spanned<String>>,
    pub(super) header: Option<bool>,
    pub(super) encoding: Option<RawEncoding>,
    pub(super) quote: Option<Spanned<String>>,
}

#[derive(Deserialize)]
#[serde(rename_all = "kebab-case")]
pub(super) enum RawKind {
    Categorical,
    Ordinal,
    Numeric,
    Text,
    Date,
    Identifier,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
pub(super) struct RawVariable {
    pub(super) name: Spanned<String>,
    pub(super) label: Option<String>,
    /// Required, except in an entry that overrides a variable of the `base` codebook.
    pub(super) kind: Option<Spanned<RawKind>>,
    pub(super) categories: Option<Vec<Spanned<RawCategory>>>,
    pub(super) missing: Option<Vec<Spanned<RawMissing>>>,
    pub(super) range: Option<Spanned<RawRange>>,
    pub(super) decimals: Option<Spanned<i64>>,
    pub(super) universe: Option<Spanned<String>>,
    pub(super) blank: Option<Spanned<String>>,
    pub(super) columns: Option<Spanned<RawColumns>>,
    pub(super) pattern: Option<Spanned<String>>,
    pub(super) max_length: Option<Spanned<i64>>,
    pub(super) documented: Option<Spanned<RawDocumented>>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
pub(super) struct RawCategory {
    pub(super) code: Spanned<toml::Value>,
    pub(super) label: String,
    pub(super) frequency: Option<Spanned<i64>>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
pub(super) struct RawMissing {
    pub(super) code: Spanned<toml::Value>,
    pub(super) label: Option<String>,
    pub(super) kind: Spanned<String>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
pub(super) struct RawRange {
    pub(super) min: Option<Spanned<toml::Value>>,
    pub(super) max: Option<Spanned<toml::Value>>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
pub(super) struct RawColumns {
    pub(super) start: i64,
    pub(super) end: i64,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
pub(super) struct RawDocumented {
    pub(super) valid: Option<Spanned<i64>>,
    pub(super) mean: Option<Number>,
    pub(super) sd: Option<Number>,
    pub(super) min: Option<Number>,
    pub(super) max: Option<Number>,
}

/// A TOML integer or float, read as f64.
pub(super) struct Number(pub(super) f64);

impl<'de> Deserialize<'de> for Number {
    fn deserialize<D: serde::Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        struct Visitor;
        impl serde::de::Visitor<'_> for Visitor {
            type Value = Number;
            fn expecting(&self, f: &mut std::fmt::Formatter) -> std::fmt::Result {
                f.write_str("a number")
            }
            fn visit_i64<E>(self, v: i64) -> Result<Number, E> {
                Ok(Number(v as f64))
            }
            fn visit_u64<E>(self, v: u64) -> Result<Number, E> {
                Ok(Number(v as f64))
            }
            fn visit_f64<E>(self, v: f64) -> Result<Number, E> {
                Ok(Number(v))
            }
        }
        d.deserialize_any(Visitor)
    }
}

#[derive(Deserialize)]
#[serde(rename_all = "kebab-case")]
pub(super) enum RawSeverity {
    Error,
    Warning,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
pub(super) struct RawCheck {
    pub(super) name: Spanned<String>,
    pub(super) assert: Spanned<String>,
    pub(super) when: Option<Spanned<String>>,
    pub(super) severity: Option<RawSeverity>,
}
