//! The one table of every rule concord reports: lint rules about the codebook and check
//! rules about the data.
//!
//! Each rule's id, default severity, one-line summary and long help live here and nowhere
//! else: `concord rules` prints this table, reports take their rule metadata from it, and
//! the README's rule list is checked against it by a test.

use crate::codebook::model::Severity;

#[derive(Debug, Clone, Copy)]
pub struct Rule {
    pub id: &'static str,
    pub severity: Severity,
    pub summary: &'static str,
    /// What it checks, why it matters and what to do.
    pub explain: &'static str,
}

const fn rule(
    id: &'static str,
    severity: Severity,
    summary: &'static str,
    explain: &'static str,
) -> Rule {
    Rule {
        id,
        severity,
        summary,
        explain,
    }
}

use Severity::{Error, Warning};

/// Rules about the codebook itself, reported by `concord lint`.
pub const LINT_RULES: &[Rule] = &[
    rule("lint.duplicate-variable", Error, "two variables share a name",
        "Every variable name must be unique: the checker matches variables to file columns by name, \
         so a second entry would silently shadow the first. Rename or remove one of them."),
    rule("lint.duplicate-code", Error, "a code is listed twice for one variable",
        "A code may appear once among a variable's categories and missing codes. Listed twice, one of \
         its two labels is never used, and tables would show whichever came first. Keep one entry."),
    rule("lint.category-and-missing", Error, "a code is both a category and a missing code",
        "A code cannot be a substantive answer and a missing-value code at once: a checker would have \
         to guess whether `9` is a real value or 'not recorded'. Decide which it is and keep one entry."),
    rule("lint.no-categories", Error, "a categorical or ordinal variable has no categories",
        "The valid values of a categorical or ordinal variable are exactly its categories. Without \
         categories every answer would be an unlabelled code. List them, or change the kind."),
    rule("lint.categories-not-allowed", Error, "categories on a text, date or identifier variable",
        "Text, date and identifier variables hold free values, so categories on them are never \
         consulted. Make the variable categorical, or remove the categories."),
    rule("lint.duplicate-label", Warning, "two categories of one variable share a label",
        "Two codes with the same label become indistinguishable in labelled extracts and tables. \
         Give each category its own label, or merge the codes with a recode."),
    rule("lint.range-inverted", Error, "a range has min greater than max",
        "With min above max no value can be valid, so every answered cell would be out of range. \
         Swap the bounds."),
    rule("lint.bad-bound", Error, "a range bound has the wrong type for the variable",
        "Range bounds of numeric variables are numbers; those of date variables are ISO 8601 dates \
         written as strings, such as \"2026-01-31\"."),
    rule("lint.negative-decimals", Error, "decimals is negative",
        "`decimals` counts the most decimal places a value may have; it must be 0 or more."),
    rule("lint.missing-in-range", Warning, "a missing-value code lies inside the valid range",
        "A numeric missing code such as 99 inside a range of 0 to 120 can be mistaken for a real value \
         by any tool that does not read the codebook. Prefer codes outside the range (for example \
         997, 998), or narrow the range."),
    rule("lint.option-not-applicable", Warning, "an option that the variable's kind never uses",
        "`pattern` and `max_length` apply to text and identifier variables, `decimals` to numeric \
         ones. Elsewhere they are ignored, which usually means the kind is wrong."),
    rule("lint.unknown-missing-kind", Error, "a missing kind that concord does not know",
        "Missing kinds are skipped (legitimate skip / not applicable), refused, dont-know, \
         not-ascertained and other."),
    rule("lint.unknown-variable", Error, "a universe, check, id or weight names an unknown variable",
        "Conditions and dataset keys must name variables declared in the codebook. A misspelt name \
         would otherwise make every condition unknown."),
    rule("lint.condition-syntax", Error, "a universe, assert or when condition does not parse",
        "Conditions use the condition language: names, numbers, quoted strings, == != < <= > >=, \
         in [..], and, or, not, parentheses, + - * /, answered(x), missing(x)."),
    rule("lint.condition-type", Error, "a condition compares values of different types",
        "A condition compared text with a number, ordered text values, or used a number where a \
         truth value is needed (or the reverse). Fix the condition or the variable's kind."),
    rule("lint.universe-cycle", Error, "universes depend on each other in a cycle",
        "A variable's universe may not depend, directly or through other universes, on the variable \
         itself: whether it was asked would then depend on its own answer."),
    rule("lint.duplicate-check", Error, "two checks share a name",
        "Check names identify findings in reports; give each [[checks]] entry its own name."),
    rule("lint.weight-not-numeric", Error, "the dataset weight is not a numeric variable",
        "An analysis weight must be a number for every case. Point `dataset.weight` at a numeric \
         variable."),
    rule("lint.bad-pattern", Error, "a pattern is not a valid regular expression",
        "`pattern` uses the regex crate's syntax and is matched against the whole trimmed cell."),
    rule("lint.bad-max-length", Error, "max_length is not a positive number",
        "`max_length` is the most characters a text cell may hold; it must be 1 or more."),
    rule("lint.bad-columns", Error, "fixed columns are not a valid span",
        "Fixed-width columns are 1-based and inclusive: start must be at least 1 and end at least \
         start."),
    rule("lint.fixed-columns-absent", Error, "a variable has no columns in a fixed-width layout",
        "With `layout = \"fixed\"` every variable needs `columns = { start, end }` to be read."),
    rule("lint.fixed-columns-overlap", Error, "two variables' fixed columns overlap",
        "Overlapping columns read the same characters into two variables; one of the spans is \
         almost certainly mistyped."),
    rule("lint.fixed-columns-gap", Warning, "fixed columns leave characters unread",
        "Characters between two variables' columns are read by no variable. Often that is filler, \
         but it can also be a variable missing from the codebook."),
    // DDI Codebook XML: problems a schema validator does not see, found while reading.
    rule("lint.ddi-broken-reference", Error, "a DDI reference (IDREF) points at no element",
        "`var/@files`, `location/@fileid` and `var/@wgt-var` name other elements by their ID. A \
         reference to an ID that no element has leaves the variable without its file or weight; \
         usually the ID is mistyped."),
    rule("lint.ddi-not-a-number", Error, "a DDI attribute or value that must be a number is not",
        "DDI writes positions, decimals, case counts, frequencies and statistics as strings, so \
         `StartPos=\"one\"` is schema valid. concord needs the numbers; the value was ignored."),
    rule("lint.ddi-duplicate-id", Error, "two DDI elements share an ID",
        "IDs must be unique across the document, or references to them are ambiguous."),
    rule("lint.ddi-range-disagrees", Error, "a DDI category lies outside the variable's valid range",
        "A category code outside the variable's `valrng` that is not a missing code contradicts the \
         range: either the range is too narrow, the code is a missing-value code that lacks \
         `missing=\"Y\"`, or the code is mistyped. Also reported for a missing-value range concord \
         cannot list as codes."),
    rule("lint.ddi-category-without-value", Error, "a DDI category has no code (catValu)",
        "A `catgry` without `catValu` labels no code, so it was ignored. Give it its code."),
];

/// Rules about a data file, reported by `concord check`.
pub const CHECK_RULES: &[Rule] = &[
    rule("structure.column-missing", Error, "codebook variable absent from the file",
        "A variable of the codebook has no column in the data file's header. Its values cannot be \
         checked, and every condition that reads it is unknown. Ask for the column, or remove the \
         variable from the codebook if the delivery legitimately lacks it."),
    rule("structure.column-unexpected", Warning, "file column not in the codebook",
        "The file has a column the codebook does not describe. Nothing about it can be checked, and \
         it may be a renamed variable. Add it to the codebook or ask why it was delivered."),
    rule("structure.column-duplicate", Error, "a header name appears twice",
        "Two columns share a name, so it is unclear which one holds the variable. concord checks \
         the first and reports the rest."),
    rule("structure.row-length", Error, "a row has the wrong number of fields (or record length)",
        "A delimited row with more or fewer fields than the header, or a fixed-width record shorter \
         than the layout, has shifted or lost values. Its cells are not checked further: fix the \
         row (often an unquoted delimiter inside a text answer)."),
    rule("structure.case-count", Error, "rows differ from dataset.cases",
        "The file holds a different number of cases than the codebook documents: cases were lost or \
         added, or the codebook describes another delivery."),
    rule("structure.encoding", Error, "a row holds bytes that are not valid in the declared encoding",
        "The row is not valid UTF-8 (or the declared encoding). Usually the file was saved in another \
         encoding: set `[file] encoding` (latin1, windows-1252) or re-save the file as UTF-8. The \
         offending bytes were read as U+FFFD."),
    rule("structure.id-duplicate", Error, "a key value repeats",
        "Each case must have its own key (`dataset.id`). Every row whose key already appeared earlier \
         is counted, so a pair of duplicates counts once."),
    rule("structure.id-blank", Error, "a key cell is blank",
        "A case without a key cannot be linked to other files or followed up."),
    rule("value.not-a-number", Error, "numeric/coded cell that does not parse",
        "A numeric variable, or a categorical one with number codes, holds text that is not a plain \
         decimal number (for example `12,5`, `n/a` or `1e3`)."),
    rule("value.out-of-range", Error, "number outside `range` and not a declared code",
        "The value lies outside the variable's declared range and is neither a missing code nor a \
         labelled special value. Often a missing code that is not in the codebook (99 for refused)."),
    rule("value.unlabelled-code", Error, "categorical/ordinal code with no category and no missing code",
        "The code is not among the variable's categories or missing codes, so no label can be given \
         and no analysis knows what it means."),
    rule("value.too-many-decimals", Warning, "more decimals than `decimals`",
        "The value has more significant decimal places than the codebook allows; trailing zeros do \
         not count. Often a unit or rounding problem."),
    rule("value.bad-date", Error, "not a valid calendar date or outside its range",
        "Date variables hold ISO 8601 calendar dates (YYYY-MM-DD) that exist (no 2026-02-30) and lie \
         inside the declared range."),
    rule("value.blank", Error, "empty cell where no blank meaning applies",
        "The cell is empty and neither the variable nor the dataset says what an empty cell means. \
         Declare `blank = \"skipped\"` (or another missing kind) if empty cells are expected."),
    rule("value.pattern-mismatch", Error, "text or identifier cell that does not match `pattern`",
        "The trimmed cell does not match the variable's regular expression as a whole."),
    rule("value.too-long", Error, "text cell longer than `max_length` (characters)",
        "The cell holds more characters than `max_length`: it may have been truncated or merged."),
    rule("routing.should-be-skipped", Error, "answered although the universe excludes the case",
        "The case is outside the variable's universe, so the question was never put: the cell must be \
         blank or a skipped code. A refused or don't-know code here is also wrong."),
    rule("routing.should-be-answered", Error, "skipped although the universe includes the case",
        "The case is inside the variable's universe (or the variable is asked of everyone), but the \
         cell is a legitimate-skip blank or code. Either the routing or the data is wrong."),
    rule("consistency.failed", Error, "a `[[checks]]` assertion is false",
        "A cross-variable check's assertion is false for the row (its `when`, if any, being true). An \
         assertion that is unknown because a value is missing is not a failure. Severity comes from \
         the check."),
    rule("documented.frequency-mismatch", Error, "a category's count differs from its documented frequency",
        "The producer documented how many cases have this code; the file has a different count. The \
         file or the codebook is from another delivery, or cases were recoded."),
    rule("documented.statistic-mismatch", Warning,
        "valid count, mean, sd, min or max differ from the documented figure (beyond rounding)",
        "A documented summary figure differs from the file by more than the figure's own rounding \
         (half a unit of its last written decimal). The standard deviation uses n - 1."),
];

/// Rules about a recode file, reported by `concord recode` (statically, and with data).
pub const RECODE_RULES: &[Rule] = &[
    rule("recode.gap", Error, "a valid source value no band takes",
        "Some value the source's codebook allows (inside its range, on its grid of `decimals` \
         places, or a labelled special value) falls in no band. The gap is computed exactly, by \
         interval arithmetic, and named: e.g. bands 16-29 and 30-64 leave 29.1 to 29.9 uncovered \
         when the source has one decimal. Close the gap (`above = 29` instead of `min = 30`) or \
         narrow the source's range."),
    rule("recode.overlap", Error, "two bands share values",
        "Two intervals of one recode both take some valid values, so the recode depends on which \
         is tried first. concord names the shared values; make one bound exclusive (`above`/`below`)."),
    rule("recode.unmapped-code", Error, "a source category is not in `map`",
        "A category of the source variable has no entry in the recode's `map`: cases with that code \
         would get no derived value. Map it, even if to a catch-all category."),
    rule("recode.missing-into-valid", Error, "a source missing code lands in a substantive band or code",
        "A missing-value code of the source (say 99 = refused) lies inside a band, or is a key of \
         `map` with a valid output code. Tools that do not read the codebook would turn it into a \
         real value. concord never bands or maps missing codes (they carry over to the same missing \
         kind, or as `missing = [{ from = 99, code = ... }]` says), but the recode should say what \
         it means: bound the band by the valid range, or remove the key."),
    rule("recode.unlabelled-output", Error, "an output code has no label in `categories`",
        "Every code a derived variable can take needs a label, or labelled extracts and tables show \
         bare numbers. Add `{ code = N, label = \"...\" }` to the recode's `categories`."),
    rule("recode.empty-output", Warning, "a derived category no case reached (data only)",
        "With data, a category of a derived variable received no case. Often harmless, but also the \
         sign of a band placed outside the data (a unit mistake) or of quantile cut points that tie."),
    rule("recode.unknown-source", Error, "`from`, an expression or a weight names an unknown variable",
        "A recode reads a variable that is neither in the codebook nor derived earlier in the recode \
         file. With data the recode cannot run (exit 2)."),
    rule("recode.unknown-code", Error, "a `map` key, missing mapping or category is not a code it could be",
        "A `map` key or a `missing` entry's `from` is not a code of the source variable, or a \
         `categories` entry labels a code the recode never produces. Usually a typo or a recode \
         written for another wave."),
    rule("recode.not-numeric", Error, "bands or quantiles on a variable without numeric values",
        "`cuts`, `intervals` and `quantiles` compare numbers; they need a numeric source, or a \
         categorical/ordinal one whose codes are all numbers. Use `map` for text codes."),
    rule("recode.expression", Error, "an `expr` or `when` does not parse or has a type error",
        "Recode expressions use the condition language: `expr` must yield a number, `when` a truth \
         value; names resolve to codebook variables and to variables derived earlier in the file."),
    rule("recode.order", Error, "a derived variable is used before it is derived, or in a cycle",
        "A derived variable may read only codebook variables and variables derived above it in the \
         recode file. Move the entry it depends on up."),
    rule("recode.duplicate-name", Error, "a derived variable's name is already taken",
        "The name of a derived variable must differ from every codebook variable and every other \
         derived variable, or the output file would have two columns of one name."),
    rule("recode.missing-code", Error, "derived missing values have no unambiguous code",
        "Each missing kind a derived variable can produce needs an output code (or the empty cell, \
         for one kind only), and an output missing code may not equal a valid output code or mean \
         two kinds. Declare `missing = [{ kind = \"other\", code = -9 }]` (or `from = ...`)."),
    rule("recode.unweightable-quantiles", Error, "type-6 quantiles with the codebook's dataset weight",
        "Type-6 quantiles (`quantile_type = 6`) have no weighted form in concord, and the codebook \
         names a dataset weight, which quantile bands use unless told otherwise. Say which you \
         mean: `weighted = false` cuts unweighted type-6 quantiles; `quantile_type = 7` (the \
         default) or `1` cut weighted ones."),
    rule("recode.quantile-source", Error, "quantiles from a variable derived in the same file",
        "Quantile cut points are computed in a first pass over the data, before any derived value \
         exists. Their `from`, `weight` and `when` must read codebook variables, or variables \
         derived without quantiles."),
    rule("recode.computed-missing-code", Error, "an `expr` result equals a missing code of the derived variable (data only)",
        "A value computed by `expr` is the same number as one of the derived variable's missing \
         codes: a code carried over from an input, or one given in its `missing` entries. Anyone \
         reading the output with its codebook (`concord check` included) would take that computed \
         value for a missing value. Give the derived variable missing codes its expression cannot \
         reach, for example negative codes for a quantity that cannot be negative."),
    rule("recode.invalid-source", Warning, "source cells with value findings (data only)",
        "Some source cells break their codebook (a value finding of `concord check`); their derived \
         value is missing of kind `other`. Run `concord check` on the data and fix it first."),
];

/// Every rule: lint, check and recode.
pub fn all() -> impl Iterator<Item = &'static Rule> {
    LINT_RULES
        .iter()
        .chain(CHECK_RULES.iter())
        .chain(RECODE_RULES.iter())
}

/// Look a rule up by id.
pub fn find(id: &str) -> Option<&'static Rule> {
    all().find(|r| r.id == id)
}
