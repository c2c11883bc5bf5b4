//! A row's classified cells as the condition language sees them.
//!
//! Universes, checks, extract filters and recode expressions all read a row through the
//! same rule: a valid cell gives its value (its number, or its trimmed text), anything else
//! (blank, missing code, value finding, absent column) is missing.

use super::cell::{trim, Cell, Seen};
use super::class::Class;
use super::plan::Plan;
use crate::condition::{Row, Value};
use crate::data::Record;

pub struct CellRow<'a> {
    pub cells: &'a [Cell],
    pub plan: &'a Plan,
    pub record: &'a Record,
}

impl Row for CellRow<'_> {
    #[inline]
    fn value(&self, var: usize) -> Value<'_> {
        match self.cells.get(var) {
            Some(Cell::Valid(Seen::Number(n))) => Value::Number(*n),
            Some(Cell::Valid(Seen::Text)) => {
                match self.plan.columns[var]
                    .field
                    .and_then(|f| self.record.field(f))
                {
                    Some(t) => Value::Text(trim(t)),
                    None => Value::Missing,
                }
            }
            _ => Value::Missing,
        }
    }
}

/// The same view over the packed classes of the check loop.
pub struct ClassRow<'a> {
    pub classes: &'a [Class],
    pub numbers: &'a [f64],
    pub plan: &'a Plan,
    pub record: &'a Record,
}

impl Row for ClassRow<'_> {
    #[inline(always)]
    fn value(&self, var: usize) -> Value<'_> {
        match self.classes.get(var) {
            Some(c) if c.is_number() => Value::Number(self.numbers[var]),
            Some(c) if c.is_text() => match self.plan.columns[var]
                .field
                .and_then(|f| self.record.field(f))
            {
                Some(t) => Value::Text(trim(t)),
                None => Value::Missing,
            },
            _ => Value::Missing,
        }
    }
}
