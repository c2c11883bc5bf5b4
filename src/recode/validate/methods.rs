//! The per-method half of validation: bands, maps and quantile bands checked against their
//! source variable, and the weight quantile bands use.

use super::super::intervals::Interval;
use super::super::outputs::{self, Built};
use super::super::plan::{QuantilePlan, Rule, SourceRef};
use super::super::quantile::QuantileType;
use super::super::sources;
use super::super::spec::{bands_of_cuts, Derive, Method};
use super::Validator;
use crate::codebook::model::{Code, Kind, Variable};
use crate::diagnostic::Diagnostic;

impl Validator<'_> {
    /// Bands and maps: check against the source and build the rule.
    #[allow(clippy::type_complexity)]
    pub(super) fn source_rule(
        &mut self,
        d: &Derive,
        source: SourceRef,
        var: &Variable,
        has_when: bool,
    ) -> Option<(Built, Rule, Option<QuantilePlan>)> {
        let numeric_values = var.kind == Kind::Numeric
            || (var.kind.is_coded() && var.has_numeric_codes() && !var.categories.is_empty());
        if d.method.is_banding() && !numeric_values {
            self.push(
                Diagnostic::new(
                    "recode.not-numeric",
                    format!(
                        "`{}` bands `{}`, a {} variable{}",
                        d.name,
                        var.name,
                        var.kind,
                        if var.kind.is_coded() {
                            " with text codes"
                        } else {
                            ""
                        }
                    ),
                )
                .at(d.method_place, "bands need numbers")
                .help("band a numeric variable, or collapse codes with `map`"),
            );
            return None;
        }
        let domain = sources::domain_of(var);
        let (rule, codes, quantiles) = match &d.method {
            Method::Cuts { cuts, closed } => {
                let bands = bands_of_cuts(cuts, *closed);
                sources::missing_in_bands(&mut self.out, d, var, &bands, true);
                let coded: Vec<(Interval, Code)> = bands
                    .into_iter()
                    .enumerate()
                    .map(|(k, b)| (b, Code::Number((k + 1) as f64)))
                    .collect();
                let codes = coded
                    .iter()
                    .map(|(b, c)| (c.clone(), b.to_string()))
                    .collect();
                (Rule::Bands(coded), codes, None)
            }
            Method::Quantiles {
                bands,
                kind,
                weight,
                weighted,
                closed,
            } => {
                if let SourceRef::Derived(_) = source {
                    self.push(
                        Diagnostic::new(
                            "recode.quantile-source",
                            format!(
                                "the quantile bands of `{}` are cut from `{}`, a derived variable",
                                d.name, var.name
                            ),
                        )
                        .at(
                            d.from.as_ref().and_then(|f| f.place),
                            "derived, not in the codebook",
                        )
                        .help("cut quantiles from a codebook variable"),
                    );
                    return None;
                }
                let mut weight = self.quantile_weight(d, weight.as_ref(), *weighted)?;
                // An explicit weight with type 6 is refused when the file is read; the
                // codebook's dataset weight only shows here.
                if let (QuantileType::Six, Some(w)) = (kind, weight) {
                    self.push(
                        Diagnostic::new(
                            "recode.unweightable-quantiles",
                            format!(
                                "`{}` asks for type-6 quantiles, which have no weighted form, but the codebook's dataset weight `{}` would weight them",
                                d.name, self.codebook.variables[w].name
                            ),
                        )
                        .at(d.method_place, "type 6 with a weight")
                        .help("set `weighted = false` for unweighted type-6 quantiles, or choose a type with a weighted form: 7 (the default) or 1"),
                    );
                    // Run anyway (`--fail-on never`), the bands are what the entry says.
                    weight = None;
                }
                let codes = (1..=*bands)
                    .map(|k| {
                        (
                            Code::Number(k as f64),
                            format!("quantile band {k} of {bands}"),
                        )
                    })
                    .collect();
                let plan = QuantilePlan {
                    bands: *bands,
                    kind: *kind,
                    weight,
                    closed: *closed,
                    cuts: Vec::new(),
                };
                (Rule::Bands(Vec::new()), codes, Some(plan))
            }
            Method::Intervals(rules) => {
                let bands: Vec<Interval> = rules.iter().map(|r| r.interval).collect();
                for gap in domain.uncovered(&bands) {
                    self.push(
                        Diagnostic::new("recode.gap", format!("{} of `{}` {} no band of `{}`", sources::describe(&gap, var), var.name, if sources::single(&gap) { "falls in" } else { "fall in" }, d.name))
                            .at(d.method_place, format!("{gap} uncovered"))
                            .help("extend a band to take these values (`above`/`below` make a bound exclusive), or narrow the source's range"),
                    );
                }
                for (a, ra) in rules.iter().enumerate() {
                    for rb in &rules[a + 1..] {
                        for shared in domain.shared(&ra.interval, &rb.interval) {
                            self.push(
                                Diagnostic::new(
                                    "recode.overlap",
                                    format!(
                                        "the bands {} and {} of `{}` share {}",
                                        ra.interval,
                                        rb.interval,
                                        d.name,
                                        sources::describe(&shared, var)
                                    ),
                                )
                                .at(rb.place, format!("overlaps {}", ra.interval))
                                .help("make one of the bounds exclusive with `above` or `below`"),
                            );
                        }
                    }
                }
                sources::missing_in_bands(&mut self.out, d, var, &bands, false);
                let mut codes: Vec<(Code, String)> = Vec::new();
                for r in rules {
                    if !codes.iter().any(|(c, _)| *c == r.code) {
                        codes.push((r.code.clone(), r.interval.to_string()));
                    }
                }
                (
                    Rule::Bands(rules.iter().map(|r| (r.interval, r.code.clone())).collect()),
                    codes,
                    None,
                )
            }
            Method::Map(entries) => {
                let pairs = sources::map_entries(&mut self.out, d, var, &domain, entries);
                let mut codes: Vec<(Code, String)> = Vec::new();
                for e in entries {
                    if !codes.iter().any(|(c, _)| *c == e.code) {
                        codes.push((e.code.clone(), format!("code {}", e.code)));
                    }
                }
                (Rule::Map(pairs), codes, None)
            }
            Method::Expr(_) => unreachable!("handled by the caller"),
        };
        let built = outputs::build(
            self.codebook,
            d,
            &[var],
            Some(&codes),
            has_when,
            false,
            &mut self.out,
        )?;
        Some((built, rule, quantiles))
    }

    fn quantile_weight(
        &mut self,
        d: &Derive,
        weight: Option<&crate::codebook::model::Named>,
        weighted: Option<bool>,
    ) -> Option<Option<usize>> {
        if weighted == Some(false) {
            return Some(None);
        }
        let named = weight.or(self.codebook.dataset.weight.as_ref());
        let Some(named) = named else {
            if weighted == Some(true) {
                self.push(
                    Diagnostic::new("recode.unknown-source", format!("`{}` asks for weighted quantiles but names no weight", d.name))
                        .at(d.method_place, "no weight")
                        .help("add `weight = \"...\"` to the entry, or `weight` to the codebook's [dataset]"),
                );
                return None;
            }
            return Some(None);
        };
        match self.codebook.variable_index(&named.name) {
            Some(k) if self.codebook.variables[k].kind == Kind::Numeric => Some(Some(k)),
            Some(_) => {
                self.push(
                    Diagnostic::new(
                        "recode.not-numeric",
                        format!(
                            "the weight `{}` of `{}` is not a numeric variable",
                            named.name, d.name
                        ),
                    )
                    .at(
                        weight.and_then(|w| w.place).or(d.method_place),
                        "not numeric",
                    ),
                );
                None
            }
            // An unknown dataset weight is a lint error of the codebook.
            None if weight.is_none() => Some(None),
            None => {
                self.push(
                    Diagnostic::new(
                        "recode.unknown-source",
                        format!(
                            "the weight `{}` of `{}` is not a codebook variable",
                            named.name, d.name
                        ),
                    )
                    .at(named.place, "unknown variable"),
                );
                None
            }
        }
    }
}
