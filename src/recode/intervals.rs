//! Interval arithmetic for bands: which valid source values no band takes, and which two
//! bands share.
//!
//! Sampling values would miss a gap of one decimal place; this module computes gaps exactly.
//! Bands and the source's range are intervals with open or closed ends; the set differences
//! are computed on the real line, and each resulting piece is then snapped to the source's
//! grid of 10^-decimals when the codebook declares `decimals`. So bands 16-29 and 30-64 leave
//! the piece (29, 30), which holds no value of a variable with 0 decimals but holds 29.1 to
//! 29.9 with 1 decimal.

use std::fmt;

use crate::codebook::model::format_number;

/// One end of an interval; an infinite value is always open.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct End {
    pub value: f64,
    pub closed: bool,
}

impl End {
    pub fn closed(value: f64) -> End {
        End {
            value,
            closed: true,
        }
    }

    pub fn open(value: f64) -> End {
        End {
            value,
            closed: false,
        }
    }
}

#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Interval {
    pub lower: End,
    pub upper: End,
}

impl Interval {
    pub const ALL: Interval = Interval {
        lower: End {
            value: f64::NEG_INFINITY,
            closed: false,
        },
        upper: End {
            value: f64::INFINITY,
            closed: false,
        },
    };

    pub fn new(lower: End, upper: End) -> Interval {
        Interval { lower, upper }
    }

    pub fn point(value: f64) -> Interval {
        Interval::new(End::closed(value), End::closed(value))
    }

    pub fn contains(&self, x: f64) -> bool {
        let above = x > self.lower.value || (self.lower.closed && x == self.lower.value);
        let below = x < self.upper.value || (self.upper.closed && x == self.upper.value);
        above && below
    }

    pub fn is_empty(&self) -> bool {
        self.lower.value > self.upper.value
            || (self.lower.value == self.upper.value && !(self.lower.closed && self.upper.closed))
    }

    pub fn intersect(&self, other: &Interval) -> Interval {
        let lower = if self.lower.value > other.lower.value
            || (self.lower.value == other.lower.value && !self.lower.closed)
        {
            self.lower
        } else {
            other.lower
        };
        let upper = if self.upper.value < other.upper.value
            || (self.upper.value == other.upper.value && !self.upper.closed)
        {
            self.upper
        } else {
            other.upper
        };
        Interval { lower, upper }
    }

    /// `self` without `other`: zero, one or two pieces.
    pub fn subtract(&self, other: &Interval) -> Vec<Interval> {
        if self.intersect(other).is_empty() {
            return vec![*self];
        }
        let left = Interval::new(
            End::open(f64::NEG_INFINITY),
            End {
                value: other.lower.value,
                closed: !other.lower.closed,
            },
        );
        let right = Interval::new(
            End {
                value: other.upper.value,
                closed: !other.upper.closed,
            },
            End::open(f64::INFINITY),
        );
        [self.intersect(&left), self.intersect(&right)]
            .into_iter()
            .filter(|i| !i.is_empty())
            .collect()
    }
}

impl fmt::Display for Interval {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        if self.lower.closed && self.upper.closed && self.lower.value == self.upper.value {
            return write!(f, "{{{}}}", format_number(self.lower.value));
        }
        let show = |v: f64| {
            if v.is_infinite() {
                if v > 0.0 { "inf" } else { "-inf" }.to_string()
            } else {
                format_number(v)
            }
        };
        write!(
            f,
            "{}{}, {}{}",
            if self.lower.closed { '[' } else { '(' },
            show(self.lower.value),
            show(self.upper.value),
            if self.upper.closed { ']' } else { ')' }
        )
    }
}

/// The valid values of a numeric source.
#[derive(Debug, Clone)]
pub struct Domain {
    /// The declared range (the whole line when none is declared); `None` for a coded source,
    /// whose valid values are exactly `points`.
    pub range: Option<Interval>,
    /// Decimal places of the grid; `None` means any real number.
    pub decimals: Option<u32>,
    /// Valid values outside the grid: labelled special values, or a coded source's codes.
    pub points: Vec<f64>,
    /// Values that are not valid although inside the range: missing codes.
    pub excluded: Vec<f64>,
}

/// A set of valid values, as reported in a gap or overlap.
#[derive(Debug, Clone, PartialEq)]
pub enum Stretch {
    /// Every grid value from `first` to `last` (`count` of them), lying in `hull`.
    Grid {
        first: f64,
        last: f64,
        count: u64,
        decimals: u32,
        hull: Interval,
    },
    /// Every real number in the interval.
    Continuous(Interval),
    /// One value.
    Point(f64),
}

impl Stretch {
    /// An interval holding the stretch, for lookups in tests and messages.
    pub fn hull(&self) -> Interval {
        match self {
            Stretch::Grid { hull, .. } => *hull,
            Stretch::Continuous(i) => *i,
            Stretch::Point(v) => Interval::point(*v),
        }
    }
}

impl fmt::Display for Stretch {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            Stretch::Grid {
                first,
                last,
                count,
                decimals,
                hull,
            } => {
                let d = *decimals as usize;
                if count == &1 {
                    write!(f, "the value {first:.d$}")
                } else {
                    write!(f, "values {first:.d$} to {last:.d$} (the interval {hull})")
                }
            }
            Stretch::Continuous(i) if i.lower.value == i.upper.value => {
                write!(f, "the value {}", format_number(i.lower.value))
            }
            Stretch::Continuous(i) => write!(f, "values in {i}"),
            Stretch::Point(v) => write!(f, "the value {}", format_number(*v)),
        }
    }
}

/// `x` times `scale` as an integer when it is one up to rounding error.
fn exact(x: f64) -> Option<f64> {
    let r = x.round();
    ((x - r).abs() <= 1e-9 * x.abs().max(1.0)).then_some(r)
}

/// The grid values (as integers in units of 10^-decimals) inside an interval: first, last.
fn snap(interval: &Interval, decimals: u32) -> Option<(f64, f64)> {
    let scale = 10f64.powi(decimals as i32);
    let lower = interval.lower.value * scale;
    let upper = interval.upper.value * scale;
    let first = match exact(lower) {
        Some(l) if interval.lower.closed => l,
        Some(l) => l + 1.0,
        None => lower.ceil(),
    };
    let last = match exact(upper) {
        Some(u) if interval.upper.closed => u,
        Some(u) => u - 1.0,
        None => upper.floor(),
    };
    (first <= last && first.is_finite() && last.is_finite()).then_some((first, last))
}

impl Domain {
    /// The valid values inside `interval`, as stretches (grid-snapped when decimals are known).
    fn valid_in(&self, pieces: Vec<Interval>) -> Vec<Stretch> {
        let mut out = Vec::new();
        let Some(range) = self.range else {
            return out;
        };
        let mut pieces: Vec<Interval> = pieces
            .iter()
            .map(|p| p.intersect(&range))
            .filter(|p| !p.is_empty())
            .collect();
        for x in &self.excluded {
            pieces = pieces
                .iter()
                .flat_map(|p| p.subtract(&Interval::point(*x)))
                .collect();
        }
        for piece in pieces {
            match self.decimals {
                None => out.push(Stretch::Continuous(piece)),
                Some(d) => {
                    if let Some((first, last)) = snap(&piece, d) {
                        let scale = 10f64.powi(d as i32);
                        out.push(Stretch::Grid {
                            first: first / scale,
                            last: last / scale,
                            count: (last - first) as u64 + 1,
                            decimals: d,
                            hull: piece,
                        });
                    }
                }
            }
        }
        out
    }

    fn valid_points(&self) -> impl Iterator<Item = f64> + '_ {
        self.points
            .iter()
            .copied()
            .filter(|p| !self.excluded.contains(p))
    }

    /// Valid values that no band takes, in increasing order.
    pub fn uncovered(&self, bands: &[Interval]) -> Vec<Stretch> {
        let mut rest = vec![Interval::ALL];
        for band in bands {
            rest = rest.iter().flat_map(|r| r.subtract(band)).collect();
        }
        let mut out = self.valid_in(rest);
        for p in self.valid_points() {
            let in_range = self.range.is_some_and(|r| r.contains(p));
            if !in_range && !bands.iter().any(|b| b.contains(p)) {
                out.push(Stretch::Point(p));
            }
        }
        out.sort_by(|a, b| a.hull().lower.value.total_cmp(&b.hull().lower.value));
        out
    }

    /// Valid values both bands take.
    pub fn shared(&self, a: &Interval, b: &Interval) -> Vec<Stretch> {
        let both = a.intersect(b);
        if both.is_empty() {
            return Vec::new();
        }
        let mut out = self.valid_in(vec![both]);
        for p in self.valid_points() {
            if both.contains(p) && !self.range.is_some_and(|r| r.contains(p)) {
                out.push(Stretch::Point(p));
            }
        }
        out
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn closed(a: f64, b: f64) -> Interval {
        Interval::new(End::closed(a), End::closed(b))
    }

    fn age(decimals: Option<u32>) -> Domain {
        Domain {
            range: Some(closed(0.0, 120.0)),
            decimals,
            points: Vec::new(),
            excluded: Vec::new(),
        }
    }

    fn at_least(a: f64) -> Interval {
        Interval::new(End::closed(a), End::open(f64::INFINITY))
    }

    #[test]
    fn no_gap_between_29_and_30_with_whole_numbers() {
        let bands = [closed(16.0, 29.0), closed(30.0, 64.0), at_least(65.0)];
        let gaps = age(Some(0)).uncovered(&bands);
        assert_eq!(gaps.len(), 1, "{gaps:?}");
        assert_eq!(gaps[0].to_string(), "values 0 to 15 (the interval [0, 16))");
    }

    #[test]
    fn gap_between_29_and_30_with_one_decimal() {
        let bands = [closed(16.0, 29.0), closed(30.0, 64.0), at_least(65.0)];
        let gaps = age(Some(1)).uncovered(&bands);
        let shown: Vec<String> = gaps.iter().map(ToString::to_string).collect();
        assert_eq!(
            shown,
            [
                "values 0.0 to 15.9 (the interval [0, 16))",
                "values 29.1 to 29.9 (the interval (29, 30))",
                "values 64.1 to 64.9 (the interval (64, 65))",
            ]
        );
        match &gaps[1] {
            Stretch::Grid { count, .. } => assert_eq!(*count, 9),
            other => panic!("{other:?}"),
        }
    }

    #[test]
    fn below_and_above_leave_exactly_the_boundary() {
        let bands = [
            Interval::new(End::open(f64::NEG_INFINITY), End::open(50.0)),
            Interval::new(End::open(50.0), End::open(f64::INFINITY)),
        ];
        let gaps = age(None).uncovered(&bands);
        assert_eq!(gaps.len(), 1);
        assert_eq!(gaps[0].to_string(), "the value 50");
        let gaps = age(Some(2)).uncovered(&bands);
        assert_eq!(gaps[0].to_string(), "the value 50.00");
    }

    #[test]
    fn missing_codes_are_not_gaps_and_specials_are() {
        let mut domain = age(Some(0));
        domain.excluded.push(99.0);
        domain.points.push(150.0);
        let bands = [closed(0.0, 98.0), closed(100.0, 120.0)];
        let gaps = domain.uncovered(&bands);
        assert_eq!(gaps, vec![Stretch::Point(150.0)]);
    }

    #[test]
    fn overlap_is_named() {
        let domain = age(Some(0));
        let shared = domain.shared(&closed(16.0, 30.0), &closed(30.0, 64.0));
        assert_eq!(shared.len(), 1);
        assert_eq!(shared[0].to_string(), "the value 30");
        assert!(domain
            .shared(&closed(16.0, 29.5), &closed(29.6, 64.0))
            .is_empty());
        assert_eq!(
            age(None).shared(&closed(16.0, 30.0), &closed(29.0, 64.0))[0].to_string(),
            "values in [29, 30]"
        );
    }

    #[test]
    fn floating_bounds_snap_exactly() {
        // 29.1 * 10 is 291.00000000000003 in binary floating point.
        let domain = age(Some(1));
        let gaps = domain.uncovered(&[closed(0.0, 29.0), closed(29.1, 120.0)]);
        assert!(gaps.is_empty(), "{gaps:?}");
    }
}
