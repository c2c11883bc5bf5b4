//! The pass over the records: read them, check each with a [`RowChecker`], and add up.
//!
//! Small files are read and checked on one thread. Larger ones (and standard input or gzip,
//! whose size is unknown) use three threads: a reader that parses records and classifies
//! their keys in file order (a repeat is the second occurrence, so keys cannot be split),
//! and [`WORKERS`] checkers that take batches of records in turn. Each checker counts its
//! own rows; at the end their counts are merged in a fixed order, so the result does not
//! depend on timing. Batches circulate between the threads and are reused, so memory stays
//! bounded whatever the file size.
//!
//! Counts, categories and findings come out the same on either path (examples are the
//! first by row). Means and standard deviations of a pipelined run are merged from the
//! checkers' running statistics and can differ from a one-thread run in the last bits.

use std::sync::mpsc;

use super::checker::RowChecker;
use super::findings::Findings;
use super::keys::{KeyStatus, Keys};
use super::plan::Plan;
use super::tally::Tally;
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

/// Checking threads of a pipelined run. Fixed, not the number of cores, so that a file's
/// statistics are merged the same way on every machine.
const WORKERS: usize = 2;

/// Records handed from the reader to a checker at a time.
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
    while source.read_record(&mut record)? {
        checker.rows += 1;
        if checker.rows % 65_536 == 0 {
            progress(source.bytes_read());
        }
        let key = keys.status(plan, &record);
        checker.check(&record, key);
    }
    progress(source.bytes_read());
    Ok(checker.finish())
}

/// A batch of records read ahead by the reader thread.
struct Batch {
    /// Reused from batch to batch; only the first `len` hold records of this batch.
    records: Vec<Record>,
    /// The key of each record, classified by the reader.
    keys: Vec<KeyStatus>,
    len: usize,
    /// `source.bytes_read()` after the batch, for the progress bar.
    bytes_read: u64,
    /// Set on the last batch: the end of the file, or the error that stopped reading.
    end: Option<Result<(), DataError>>,
}

impl Batch {
    fn new() -> Batch {
        Batch {
            records: Vec::with_capacity(BATCH_RECORDS),
            keys: Vec::with_capacity(BATCH_RECORDS),
            len: 0,
            bytes_read: 0,
            end: None,
        }
    }

    /// Read up to [`BATCH_RECORDS`] records, classifying their keys.
    fn fill(&mut self, source: &mut RecordSource, plan: &Plan, keys: &mut Keys) {
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
                Ok(false) => {
                    self.end = Some(Ok(()));
                    break;
                }
                Err(e) => {
                    self.end = Some(Err(e));
                    break;
                }
            }
        }
        self.bytes_read = source.bytes_read();
    }
}

/// What one checking thread ends with.
struct Worked<'a> {
    checker: RowChecker<'a>,
    /// The end of the input, if the last batch came to this thread.
    end: Option<Result<(), DataError>>,
}

fn pipelined(
    codebook: &Codebook,
    plan: &Plan,
    source: &mut RecordSource,
    max_examples: usize,
    progress: Progress,
) -> Result<Pass, DataError> {
    // Emptied batches come back here for reuse...
    let (empty_tx, empty_rx) = mpsc::channel::<Batch>();
    // ...and full ones go to the checkers in turn (the reader blocks when it is far ahead).
    let (full_txs, mut full_rxs): (Vec<_>, Vec<_>) =
        (0..WORKERS).map(|_| mpsc::sync_channel::<Batch>(2)).unzip();
    // Each checker gets its own copy of the plan: a regular expression keeps a cache that is
    // quick only for the thread that used it first.
    let copies: Vec<Plan> = (1..WORKERS).map(|_| plan.clone()).collect();
    std::thread::scope(|scope| {
        scope.spawn(move || {
            let mut keys = Keys::default();
            for turn in (0..WORKERS).cycle() {
                let mut batch = empty_rx.try_recv().unwrap_or_else(|_| Batch::new());
                batch.fill(source, plan, &mut keys);
                let last = batch.end.is_some();
                // A send fails only when that checker has stopped listening.
                if full_txs[turn].send(batch).is_err() || last {
                    return;
                }
            }
        });
        let first = full_rxs.remove(0);
        let others: Vec<_> = full_rxs
            .into_iter()
            .zip(&copies)
            .map(|(rx, plan)| {
                let empty_tx = empty_tx.clone();
                scope.spawn(move || work(codebook, plan, max_examples, &rx, &empty_tx, &mut |_| {}))
            })
            .collect();
        // This thread is the first checker, and keeps the progress bar.
        let Worked {
            mut checker,
            mut end,
        } = work(codebook, plan, max_examples, &first, &empty_tx, progress);
        for other in others {
            // A checker that panicked: raise it here, as the scope would.
            let worked = other
                .join()
                .unwrap_or_else(|p| std::panic::resume_unwind(p));
            checker.merge(worked.checker);
            end = end.or(worked.end);
        }
        // No last batch means the reader panicked; the scope raises that when it ends.
        end.unwrap_or(Ok(())).map(|()| checker.finish())
    })
}

/// Check the batches arriving on `full` until the reader stops.
fn work<'a>(
    codebook: &'a Codebook,
    plan: &'a Plan,
    max_examples: usize,
    full: &mpsc::Receiver<Batch>,
    empty: &mpsc::Sender<Batch>,
    progress: Progress,
) -> Worked<'a> {
    let mut checker = RowChecker::new(codebook, plan, max_examples);
    let mut end = None;
    let mut batches = 0u64;
    for mut batch in full.iter() {
        for (record, &key) in batch.records[..batch.len].iter().zip(&batch.keys) {
            checker.rows += 1;
            checker.check(record, key);
        }
        batches += 1;
        if batches % 128 == 0 {
            progress(batch.bytes_read);
        }
        if let Some(last) = batch.end.take() {
            progress(batch.bytes_read);
            end = Some(last);
            break;
        }
        // The reader may have stopped already; then the batch is simply dropped.
        let _ = empty.send(batch);
    }
    Worked { checker, end }
}
