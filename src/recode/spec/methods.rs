//! Reading a derive's method (`cuts`, `intervals`, `map`, `quantiles`, `expr`) from its raw
//! entry: exactly one method, with its options checked where they are written.

use super::*;

impl Reader<'_> {
    pub(super) fn method(
        &self,
        raw: &RawDerive,
        name: &str,
        closed: Closed,
    ) -> Result<(Method, Option<Place>), LoadError> {
        if let Some(cuts) = &raw.cuts {
            let values = cuts
                .get_ref()
                .iter()
                .map(|c| self.number(c, "a cut point"))
                .collect::<Result<Vec<_>, _>>()?;
            if values.is_empty() {
                return Err(self.error_at(cuts.span(), format!("`cuts` of `{name}` is empty")));
            }
            if let Some(i) = values.windows(2).position(|w| w[1] <= w[0]) {
                return Err(self
                    .error_at(
                        cuts.get_ref()[i + 1].span(),
                        format!(
                            "cut points must increase: {} comes after {}",
                            values[i + 1],
                            values[i]
                        ),
                    )
                    .with_help("list cut points from the smallest to the largest, each once"));
            }
            return Ok((
                Method::Cuts {
                    cuts: values,
                    closed,
                },
                self.place(cuts),
            ));
        }
        if let Some(list) = &raw.intervals {
            let mut rules = Vec::new();
            for i in list.get_ref() {
                rules.push(self.interval(i)?);
            }
            if rules.is_empty() {
                return Err(self.error_at(list.span(), format!("`intervals` of `{name}` is empty")));
            }
            return Ok((Method::Intervals(rules), self.place(list)));
        }
        if let Some(map) = &raw.map {
            let mut entries = Vec::new();
            for (key, value) in map.get_ref() {
                if let toml::Value::Table(_) = value.get_ref() {
                    return Err(self
                        .error_at(
                            key.span(),
                            format!("`{}` in `map` is a dotted key, not a code", key.get_ref()),
                        )
                        .with_help("quote keys with a decimal point: `\"1.5\" = 2`"));
                }
                entries.push(MapEntry {
                    key: key.get_ref().trim().to_string(),
                    code: self.code(value)?,
                    place: Some(Place::new(self.file, key.span().start..value.span().end)),
                });
            }
            // Keep the order of the file, not of the keys.
            entries.sort_by_key(|e| e.place.map_or(0, |p| p.offset));
            if entries.is_empty() {
                return Err(self.error_at(map.span(), format!("`map` of `{name}` is empty")));
            }
            return Ok((Method::Map(entries), self.place(map)));
        }
        if let Some(q) = &raw.quantiles {
            let bands = match usize::try_from(*q.get_ref()) {
                Ok(n) if (2..=100).contains(&n) => n,
                _ => {
                    return Err(self
                        .error_at(
                            q.span(),
                            "`quantiles` must be a number of bands from 2 to 100",
                        )
                        .with_help("`quantiles = 4` makes quartile bands"))
                }
            };
            let kind = match raw.quantile_type.as_ref().map(|t| (*t.get_ref(), t.span())) {
                None | Some((7, _)) => QuantileType::Seven,
                Some((6, _)) => QuantileType::Six,
                Some((1, _)) => QuantileType::One,
                Some((_, span)) => {
                    return Err(self
                        .error_at(
                            span,
                            "`quantile_type` must be 1, 6 or 7 (Hyndman & Fan 1996)",
                        )
                        .with_help("7 is the default of R and numpy; 6 is numpy's `weibull`; 1 is numpy's `inverted_cdf`"))
                }
            };
            let weighted = raw.weighted.as_ref().map(|w| *w.get_ref());
            if let (QuantileType::Six, Some(w)) = (kind, &raw.weight) {
                if weighted != Some(false) {
                    return Err(self
                        .error_at(
                            w.span(),
                            "type-6 quantiles have no weighted form in concord",
                        )
                        .with_help("set `weighted = false`, or choose a type with a weighted form: 7 (the default) or 1"));
                }
            }
            return Ok((
                Method::Quantiles {
                    bands,
                    kind,
                    weight: raw.weight.as_ref().map(|w| Named {
                        name: w.get_ref().clone(),
                        place: self.place(w),
                    }),
                    weighted,
                    closed,
                },
                self.place(q),
            ));
        }
        let expr = raw.expr.clone().expect("one method is given");
        let place = self.place(&expr);
        Ok((Method::Expr(self.condition(expr)), place))
    }

    pub(super) fn interval(&self, raw: &Spanned<RawInterval>) -> Result<IntervalRule, LoadError> {
        let i = raw.get_ref();
        let bound = |inclusive: &Option<Spanned<toml::Value>>,
                     exclusive: &Option<Spanned<toml::Value>>,
                     names: (&str, &str),
                     infinity: f64|
         -> Result<End, LoadError> {
            match (inclusive, exclusive) {
                (Some(a), Some(_)) => Err(self
                    .error_at(
                        a.span(),
                        format!("give `{}` or `{}`, not both", names.0, names.1),
                    )
                    .with_help(format!(
                        "`{}` is an inclusive bound, `{}` an exclusive one",
                        names.0, names.1
                    ))),
                (Some(a), None) => Ok(End::closed(self.number(a, names.0)?)),
                (None, Some(b)) => Ok(End::open(self.number(b, names.1)?)),
                (None, None) => Ok(End::open(infinity)),
            }
        };
        let lower = bound(&i.min, &i.above, ("min", "above"), f64::NEG_INFINITY)?;
        let upper = bound(&i.max, &i.below, ("max", "below"), f64::INFINITY)?;
        let interval = Interval::new(lower, upper);
        if lower.value.is_infinite() && upper.value.is_infinite() {
            return Err(self
                .error_at(raw.span(), "an interval needs a bound")
                .with_help("give `min` or `above`, `max` or `below`"));
        }
        if interval.is_empty() {
            return Err(self
                .error_at(
                    raw.span(),
                    format!("the interval {interval} holds no value"),
                )
                .with_help("the lower bound must lie below the upper bound"));
        }
        Ok(IntervalRule {
            interval,
            code: self.code(&i.code)?,
            place: self.place(raw),
        })
    }
}
