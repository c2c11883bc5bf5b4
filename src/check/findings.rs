//! Collecting findings during the row loop: a count and the first few examples each.
//!
//! A finding groups one rule and one target (a variable, a file column, a check, or the
//! file itself). Memory stays bounded: whatever the file size, each finding keeps at most
//! `max_examples` examples.

use std::collections::HashMap;

/// What a finding is about.
#[derive(Debug, Clone, PartialEq, Eq, Hash)]
pub enum Target {
    /// A codebook variable, by index.
    Variable(usize),
    /// A file column that is not a codebook variable.
    Column(String),
    /// A `[[checks]]` entry, by index.
    Check(usize),
    /// The file as a whole (row length, case count, encoding).
    File,
    /// The dataset key.
    Key,
}

#[derive(Debug, Clone, PartialEq)]
pub struct Example {
    pub row: Option<u64>,
    pub case: Option<String>,
    pub value: Option<String>,
}

#[derive(Debug, Clone)]
pub struct Collected {
    pub rule: &'static str,
    pub target: Target,
    pub count: u64,
    pub examples: Vec<Example>,
    /// Extra words for the message, such as documented versus found figures.
    pub detail: Option<String>,
}

#[derive(Debug)]
pub struct Findings {
    max_examples: usize,
    index: HashMap<(&'static str, Target), usize>,
    pub list: Vec<Collected>,
}

impl Findings {
    pub fn new(max_examples: usize) -> Self {
        Findings {
            max_examples,
            index: HashMap::new(),
            list: Vec::new(),
        }
    }

    fn entry(&mut self, rule: &'static str, target: Target) -> &mut Collected {
        let list = &mut self.list;
        let i = *self.index.entry((rule, target.clone())).or_insert_with(|| {
            list.push(Collected {
                rule,
                target,
                count: 0,
                examples: Vec::new(),
                detail: None,
            });
            list.len() - 1
        });
        &mut self.list[i]
    }

    /// Count one more affected cell or row; `example` is only called while examples are
    /// still being kept, so building it may allocate.
    pub fn add(&mut self, rule: &'static str, target: Target, example: impl FnOnce() -> Example) {
        let max = self.max_examples;
        let f = self.entry(rule, target);
        f.count += 1;
        if f.examples.len() < max {
            f.examples.push(example());
        }
    }

    /// Add the findings of rows counted elsewhere: counts add up, and the examples kept are
    /// the first by row of both (each side kept its own first ones, so none is lost).
    pub fn merge(&mut self, other: Findings) {
        let max = self.max_examples;
        for theirs in other.list {
            let f = self.entry(theirs.rule, theirs.target);
            f.count += theirs.count;
            f.examples.extend(theirs.examples);
            f.examples.sort_by_key(|e| e.row);
            f.examples.truncate(max);
            if f.detail.is_none() {
                f.detail = theirs.detail;
            }
        }
    }

    /// A finding with a fixed count and detail (documented figures, case count).
    pub fn set(
        &mut self,
        rule: &'static str,
        target: Target,
        count: u64,
        detail: String,
        examples: Vec<Example>,
    ) {
        let max = self.max_examples;
        let f = self.entry(rule, target);
        f.count = count;
        f.detail = Some(detail);
        f.examples = examples.into_iter().take(max).collect();
    }
}
