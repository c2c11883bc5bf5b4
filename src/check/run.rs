//! The pass over the records: read them, check each with a [`RowChecker`], and add up.
//!
//! Small files are read and checked on one thread. Larger ones (and standard input or gzip,
//! whose size is unknown) are read by this thread, which parses records and classifies their
//! keys in file order (a repeat is the second occurrence, so keys cannot be split), into
//! batches that checking threads take as they come free. When they are all busy and the
//! queue is full the reader checks a batch itself, so every core stays at work whichever
//! of reading and checking costs more for the file at hand. Batches circulate and are
//! reused, so memory stays bounded whatever the file size.
//!
//! Which thread checks which batch depends on timing, so nothing may depend on it. Counts,
//! categories and findings add up (examples are the first by row). Running statistics do
//! not add up exactly in floating point, so they are taken per batch, on either path, and
//! combined in file order: a file gives the same means and standard deviations to the last
//! bit on any machine, on one thread or many.

use std::collections::BTreeMap;
use std::sync::mpsc::{self, TrySendError};
use std::sync::Mutex;

use super::checker::RowChecker;
use super::findings::Findings;
use super::keys::{KeyStatus, Keys};
use super::plan::Plan;
use super::tally::{Running, Tally};
use crate::codebook::model::Codebook;
use crate::data::{DataError, Record, RecordSource};

/// What the row loop hands on to the report.
pub struct Pass {
    pub rows: u64,
    pub findings: Findings,
    pub tallies: Vec<Tally>,
}

/// Called now and then with the bytes read so far, for a progress bar.
pub type Progress<'a> = &'a mut dyn FnMut(u64);

/// Below this many bytes a file is checked on one thread: starting threads is not worth it.
const PIPELINE_MIN_BYTES: u64 = 4 * 1024 * 1024;

/// Most checking threads a pipelined run starts (besides the reader, which also checks).
const MAX_CHECKERS: usize = 7;

/// Batches the reader may queue ahead of the checkers before it checks one itself.
const QUEUED_BATCHES: usize = 2;

/// Records handed from the reader to a checker at a time, and the rows whose statistics
/// are taken together (on one thread too, so both paths combine them alike).
const BATCH_RECORDS: usize = 256;

/// How the pass is run.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Threads {
    /// Pipelined for large inputs when the machine has more than one core.
    Auto,
    /// One thread, whatever the input.
    One,
    /// Pipelined, whatever the input (for tests).
    Pipelined,
}

pub fn run(
    codebook: &Codebook,
    plan: &Plan,
    source: &mut RecordSource,
    max_examples: usize,
    threads: Threads,
    progress: Progress,
) -> Result<Pass, DataError> {
    let pipelined = match threads {
        Threads::One => false,
        Threads::Pipelined => true,
        Threads::Auto => {
            let cores = std::thread::available_parallelism().is_ok_and(|n| n.get() > 1);
            cores && source.total_bytes().is_none_or(|n| n >= PIPELINE_MIN_BYTES)
        }
    };
    if pipelined {
        return self::pipelined(codebook, plan, source, max_examples, progress);
    }
    let mut checker = RowChecker::new(codebook, plan, max_examples);
    let mut keys = Keys::default();
    let mut record = Record::new();
    let mut combined = InOrder::default();
    let mut chunk = Vec::new();
    while source.read_record(&mut record)? {
        checker.rows += 1;
        let key = keys.status(plan, &record);
        checker.check(&record, key);
        if checker.rows % BATCH_RECORDS as u64 == 0 {
            checker.take_statistics(&mut chunk);
            combined.add(checker.rows / BATCH_RECORDS as u64 - 1, &mut chunk);
            if checker.rows % 65_536 == 0 {
                progress(source.bytes_read());
            }
        }
    }
    checker.take_statistics(&mut chunk);
    combined.add(checker.rows / BATCH_RECORDS as u64, &mut chunk);
    progress(source.bytes_read());
    checker.set_statistics(combined.finish());
    Ok(checker.finish())
}

/// Running statistics of batches, combined in file order whatever order they come in.
#[derive(Default)]
struct InOrder {
    total: Vec<Running>,
    next: u64,
    waiting: BTreeMap<u64, Vec<Running>>,
}

impl InOrder {
    /// Add the statistics of batch `seq` (numbered from 0). The next batch in order is
    /// combined at once and `stats` left for reuse; one that comes early is kept (taken out
    /// of `stats`) until the batches before it have come.
    fn add(&mut self, seq: u64, stats: &mut Vec<Running>) {
        if seq != self.next {
            self.waiting.insert(seq, std::mem::take(stats));
            return;
        }
        self.combine(stats);
        while let Some(stats) = self.waiting.remove(&self.next) {
            self.combine(&stats);
        }
    }

    fn combine(&mut self, stats: &[Running]) {
        if self.total.is_empty() {
            self.total = stats.to_vec();
        } else {
            for (total, part) in self.total.iter_mut().zip(stats) {
                total.merge(part);
            }
        }
        self.next += 1;
    }

    fn finish(self) -> Vec<Running> {
        debug_assert!(self.waiting.is_empty(), "a batch's statistics went missing");
        self.total
    }
}

/// A batch of records read ahead by the reader.
struct Batch {
    /// Its place in the file: batches are numbered from 0.
    seq: u64,
    /// Reused from batch to batch; only the first `len` hold records of this batch.
    records: Vec<Record>,
    /// The key of each record, classified by the reader.
    keys: Vec<KeyStatus>,
    len: usize,
    /// The running statistics of this batch's rows, once checked.
    stats: Vec<Running>,
}

impl Batch {
    fn new() -> Batch {
        Batch {
            seq: 0,
            records: Vec::with_capacity(BATCH_RECORDS),
            keys: Vec::with_capacity(BATCH_RECORDS),
            len: 0,
            stats: Vec::new(),
        }
    }

    /// Read up to [`BATCH_RECORDS`] records, classifying their keys. `Some` at the end of
    /// the input: the end of the file, or the error that stopped reading.
    fn fill(
        &mut self,
        source: &mut RecordSource,
        plan: &Plan,
        keys: &mut Keys,
    ) -> Option<Result<(), DataError>> {
        self.len = 0;
        self.keys.clear();
        while self.len < BATCH_RECORDS {
            if self.records.len() == self.len {
                self.records.push(Record::new());
            }
            let record = &mut self.records[self.len];
            match source.read_record(record) {
                Ok(true) => {
                    self.keys.push(keys.status(plan, record));
                    self.len += 1;
                }
                Ok(false) => return Some(Ok(())),
                Err(e) => return Some(Err(e)),
            }
        }
        None
    }

    /// Check the batch's records, and keep their statistics in the batch.
    fn check(&mut self, checker: &mut RowChecker) {
        for (record, &key) in self.records[..self.len].iter().zip(&self.keys) {
            checker.rows += 1;
            checker.check(record, key);
        }
        checker.take_statistics(&mut self.stats);
    }
}

fn pipelined(
    codebook: &Codebook,
    plan: &Plan,
    source: &mut RecordSource,
    max_examples: usize,
    progress: Progress,
) -> Result<Pass, DataError> {
    let checkers = std::thread::available_parallelism()
        .map_or(1, |n| n.get().saturating_sub(1))
        .clamp(1, MAX_CHECKERS);
    // Full batches go to whichever checker is free...
    let (full_tx, full_rx) = mpsc::sync_channel::<Batch>(QUEUED_BATCHES);
    let full_rx = Mutex::new(full_rx);
    // ...and come back here, checked, for their statistics and for reuse.
    let (done_tx, done_rx) = mpsc::channel::<Batch>();
    // Each checker gets its own copy of the plan: a regular expression keeps a cache that is
    // quick only for the thread that used it first.
    let copies: Vec<Plan> = (0..checkers).map(|_| plan.clone()).collect();
    std::thread::scope(|scope| {
        let threads: Vec<_> = copies
            .iter()
            .map(|plan| {
                let (full_rx, done_tx) = (&full_rx, done_tx.clone());
                scope.spawn(move || work(codebook, plan, max_examples, full_rx, &done_tx))
            })
            .collect();
        drop(done_tx);
        let mut keys = Keys::default();
        let mut mine = RowChecker::new(codebook, plan, max_examples);
        let mut combined = InOrder::default();
        let mut spare: Option<Batch> = None;
        let mut seq = 0;
        let end = loop {
            let mut batch = match spare.take().or_else(|| done_rx.try_recv().ok()) {
                Some(mut batch) => {
                    combined.add(batch.seq, &mut batch.stats);
                    batch
                }
                None => Batch::new(),
            };
            let end = batch.fill(source, plan, &mut keys);
            batch.seq = seq;
            seq += 1;
            if seq % 128 == 0 {
                progress(source.bytes_read());
            }
            match full_tx.try_send(batch) {
                Ok(()) => {}
                Err(TrySendError::Full(mut batch)) => {
                    batch.check(&mut mine);
                    spare = Some(batch);
                }
                // Every checker has stopped, which only a panic does; joining raises it.
                Err(TrySendError::Disconnected(_)) => break Some(Ok(())),
            }
            if end.is_some() {
                break end;
            }
        };
        drop(full_tx);
        for thread in threads {
            // A checker that panicked: raise it here, as the scope would.
            let checker = thread
                .join()
                .unwrap_or_else(|p| std::panic::resume_unwind(p));
            mine.merge(checker);
        }
        if let Some(mut batch) = spare {
            combined.add(batch.seq, &mut batch.stats);
        }
        for mut batch in done_rx.try_iter() {
            combined.add(batch.seq, &mut batch.stats);
        }
        progress(source.bytes_read());
        end.unwrap_or(Ok(())).map(|()| {
            mine.set_statistics(combined.finish());
            mine.finish()
        })
    })
}

/// Check the batches arriving on `full`, sending each back on `done`, until the reader
/// stops.
fn work<'a>(
    codebook: &'a Codebook,
    plan: &'a Plan,
    max_examples: usize,
    full: &Mutex<mpsc::Receiver<Batch>>,
    done: &mpsc::Sender<Batch>,
) -> RowChecker<'a> {
    let mut checker = RowChecker::new(codebook, plan, max_examples);
    loop {
        // Another checker can only have poisoned the lock by panicking, which the reader
        // raises when it joins that thread; the receiver itself is sound.
        let next = full.lock().unwrap_or_else(|p| p.into_inner()).recv();
        let Ok(mut batch) = next else {
            return checker;
        };
        batch.check(&mut checker);
        if done.send(batch).is_err() {
            return checker;
        }
    }
}
