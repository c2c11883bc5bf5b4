//! Per-variable tallies kept during the row loop, and accurate streaming statistics.
//!
//! Tallies say how every cell of a variable was classified (valid, each missing kind,
//! legitimately skipped, gate unknown, invalid), which is what a reviewer reads first. The
//! running mean and variance use Welford's update, which stays accurate where the naive
//! sum-of-squares formula loses every digit (values near 1e7 differing in the last place).
//! The update runs on each value minus the first one: survey values cluster, so the
//! differences are small and exact, and the result meets the NIST StRD certified values to
//! the tolerances of a two-pass algorithm (plain Welford misses Michelso's sd by 4e-13).

use crate::codebook::model::MissingKind;

#[derive(Debug, Clone, Default)]
pub struct Tally {
    pub valid: u64,
    pub skipped: u64,
    pub gate_unknown: u64,
    /// Indexed like [`MissingKind::ALL`]; skipped codes and blanks count in `skipped` instead.
    pub missing: [u64; 5],
    pub invalid: u64,
    /// Valid cells per category, in the codebook's category order.
    pub categories: Vec<u64>,
    pub stats: Running,
}

impl Tally {
    pub fn new(categories: usize) -> Self {
        Tally {
            categories: vec![0; categories],
            ..Tally::default()
        }
    }

    #[inline]
    pub fn add_missing(&mut self, kind: MissingKind) {
        if kind == MissingKind::Skipped {
            self.skipped += 1;
        } else {
            self.missing[kind as usize] += 1;
        }
    }
}

/// Count, mean, variance, minimum and maximum of a stream of numbers, in one pass.
#[derive(Debug, Clone, Copy)]
pub struct Running {
    pub count: u64,
    /// The first value; `mean` and `m2` are of the values minus it.
    shift: f64,
    mean: f64,
    m2: f64,
    pub min: f64,
    pub max: f64,
}

impl Default for Running {
    fn default() -> Self {
        Running {
            count: 0,
            shift: 0.0,
            mean: 0.0,
            m2: 0.0,
            min: f64::INFINITY,
            max: f64::NEG_INFINITY,
        }
    }
}

impl Running {
    #[inline]
    pub fn push(&mut self, x: f64) {
        if self.count == 0 {
            self.shift = x;
        }
        self.count += 1;
        let y = x - self.shift;
        let delta = y - self.mean;
        self.mean += delta / self.count as f64;
        self.m2 += delta * (y - self.mean);
        self.min = self.min.min(x);
        self.max = self.max.max(x);
    }

    /// Combine with the statistics of another stream, as if its values had followed these
    /// (Chan, Golub and LeVeque's pairwise update, with `other`'s mean moved to this
    /// stream's shift first).
    pub fn merge(&mut self, other: &Running) {
        if other.count == 0 {
            return;
        }
        if self.count == 0 {
            *self = *other;
            return;
        }
        let (na, nb) = (self.count as f64, other.count as f64);
        let n = na + nb;
        let other_mean = (other.shift - self.shift) + other.mean;
        let delta = other_mean - self.mean;
        self.mean += delta * (nb / n);
        self.m2 += other.m2 + delta * delta * (na * nb / n);
        self.count += other.count;
        self.min = self.min.min(other.min);
        self.max = self.max.max(other.max);
    }

    pub fn mean(&self) -> Option<f64> {
        (self.count > 0).then_some(self.shift + self.mean)
    }

    /// Sample standard deviation (divisor n - 1).
    pub fn sd(&self) -> Option<f64> {
        (self.count > 1).then(|| (self.m2 / (self.count - 1) as f64).sqrt())
    }

    pub fn min(&self) -> Option<f64> {
        (self.count > 0).then_some(self.min)
    }

    pub fn max(&self) -> Option<f64> {
        (self.count > 0).then_some(self.max)
    }
}
