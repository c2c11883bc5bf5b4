//! Routing: what one classified cell means once its universe is known, decided once per
//! column before the row loop.
//!
//! The decision (DESIGN section 5: a blank's meaning, legitimate skips, cells answered
//! outside their universe, gates that cannot be evaluated) depends only on the column, the
//! cell's tag and the universe's truth value, never on the number in the cell. So
//! [`decide`] is run for every combination when the plan is built, and the row loop does a
//! table lookup.

use super::cell::Cell;
use super::class::{Class, TAGS};
use super::plan::ColumnPlan;
use crate::codebook::model::MissingKind;
use crate::condition::Tri;

/// The tally counters of one variable, in the order of [`Outcome::Count`].
pub const VALID: usize = 0;
pub const SKIPPED: usize = 1;
pub const GATE_UNKNOWN: usize = 2;
/// `MISSING + kind` for the kinds other than skipped (skips count in `SKIPPED`).
pub const MISSING: usize = 3;
pub const INVALID: usize = MISSING + MissingKind::ALL.len();
pub const COUNTERS: usize = INVALID + 1;

#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Outcome {
    /// Add one to this counter; no finding.
    Count(usize),
    /// A finding of this rule; the cell counts as invalid.
    Finding(&'static str),
}

/// Rules a routed cell can be a finding of; a packed outcome of `FINDING + i` is rule `i`.
pub const FINDING_RULES: [&str; 10] = [
    "value.not-a-number",
    "value.bad-date",
    "value.unlabelled-code",
    "value.out-of-range",
    "value.too-many-decimals",
    "value.pattern-mismatch",
    "value.too-long",
    "value.blank",
    "routing.should-be-skipped",
    "routing.should-be-answered",
];

/// Packed outcomes below this are counters; from it up, findings.
pub const FINDING: u8 = 16;

impl Outcome {
    /// The outcome in a byte: the counter, or [`FINDING`] plus the rule's place in
    /// [`FINDING_RULES`].
    pub fn pack(self) -> u8 {
        match self {
            Outcome::Count(counter) => counter as u8,
            Outcome::Finding(rule) => {
                let i = FINDING_RULES
                    .iter()
                    .position(|r| *r == rule)
                    .expect("every routing finding is listed in FINDING_RULES");
                FINDING + i as u8
            }
        }
    }
}

/// Packed outcomes by universe value and cell tag.
#[derive(Debug, Clone)]
pub struct Routes([[u8; TAGS]; 3]);

impl Routes {
    /// A placeholder until the column is complete.
    pub fn empty() -> Routes {
        Routes([[INVALID as u8; TAGS]; 3])
    }

    pub fn build(col: &ColumnPlan) -> Routes {
        let mut table = Routes::empty().0;
        for (u, universe) in [Tri::True, Tri::False, Tri::Unknown]
            .into_iter()
            .enumerate()
        {
            for (tag, slot) in table[u].iter_mut().enumerate() {
                if let Some(cell) = Class::cell_of_tag(tag) {
                    *slot = decide(col, cell, universe).pack();
                }
            }
        }
        Routes(table)
    }

    /// Packed outcomes by tag, for one universe value.
    #[inline]
    pub fn under(&self, universe: Tri) -> &[u8; TAGS] {
        &self.0[universe_index(universe)]
    }
}

#[inline]
fn universe_index(universe: Tri) -> usize {
    match universe {
        Tri::True => 0,
        Tri::False => 1,
        Tri::Unknown => 2,
    }
}

fn missing(kind: MissingKind) -> Outcome {
    Outcome::Count(if kind == MissingKind::Skipped {
        SKIPPED
    } else {
        MISSING + kind as usize
    })
}

/// Apply routing to a classified cell.
pub fn decide(col: &ColumnPlan, cell: Cell, universe: Tri) -> Outcome {
    let skipped = match cell {
        Cell::Invalid(rule) => return Outcome::Finding(rule.id()),
        Cell::Blank => match col.blank {
            // Reported once, as structure.id-blank; counted as invalid so the tallies add up.
            _ if col.key => return Outcome::Count(INVALID),
            _ if col.identifier => return Outcome::Finding("value.blank"),
            Some(MissingKind::Skipped) => true,
            Some(kind) if universe != Tri::False => {
                return if universe == Tri::Unknown {
                    Outcome::Count(GATE_UNKNOWN)
                } else {
                    missing(kind)
                };
            }
            Some(_) => true,
            None if col.universe.is_none() => return Outcome::Finding("value.blank"),
            None => true,
        },
        Cell::Missing(kind) => kind == MissingKind::Skipped,
        Cell::Valid(_) => false,
    };
    match universe {
        Tri::Unknown => Outcome::Count(GATE_UNKNOWN),
        Tri::False if skipped => Outcome::Count(SKIPPED),
        Tri::False => Outcome::Finding("routing.should-be-skipped"),
        Tri::True if skipped => Outcome::Finding("routing.should-be-answered"),
        Tri::True => match cell {
            Cell::Missing(kind) => missing(kind),
            _ => Outcome::Count(VALID),
        },
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::check::cell::ValueRule;

    #[test]
    fn every_finding_packs_and_value_rules_come_first() {
        for (i, rule) in ValueRule::ALL.iter().enumerate() {
            assert_eq!(FINDING_RULES[i], rule.id());
        }
        for rule in FINDING_RULES {
            let packed = Outcome::Finding(rule).pack();
            assert_eq!(FINDING_RULES[usize::from(packed - FINDING)], rule);
        }
        assert!(COUNTERS <= usize::from(FINDING));
    }
}
