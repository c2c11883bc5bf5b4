//! One record of a data file, with its position and the problems found while reading it.
//!
//! A `Record` is reused from row to row so the row loop does not allocate: the readers refill
//! its buffers in place. Field text is always UTF-8; where the file was not, the record says so
//! instead of failing, because one bad row in a million should become a finding, not stop the
//! run.

use std::mem;

use csv::{ByteRecord, StringRecord};

/// A fixed-width record whose length differs from the declared layout.
///
/// `expected` is the largest `end` of the layout's fields, in characters; `actual` is the
/// line's length in characters (line terminator excluded).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct LengthProblem {
    pub actual: usize,
    pub expected: usize,
}

impl LengthProblem {
    /// The line ends before the last declared field does (those fields read as empty).
    pub fn is_short(&self) -> bool {
        self.actual < self.expected
    }
}

/// Where a record's field text lives.
#[derive(Debug)]
pub(super) enum Storage {
    /// Nothing read yet (or the last read failed).
    Empty,
    /// Delimited record whose bytes are valid UTF-8: fields are served straight from it.
    Csv(StringRecord),
    /// Delimited record with invalid UTF-8: the raw bytes are kept for reuse and the fields
    /// are served from the lossy copy in `text`/`bounds`.
    CsvLossy(ByteRecord),
    /// Fixed-width line: `text` holds the line and `bounds` the trimmed fields.
    Line,
}

/// A record read by a [`RecordSource`](super::RecordSource). Create one with [`Record::new`]
/// and pass it to every `read_record` call.
#[derive(Debug)]
pub struct Record {
    pub(super) storage: Storage,
    pub(super) text: String,
    pub(super) bounds: Vec<(usize, usize)>,
    /// Byte offset of each character of a non-ASCII fixed-width line, plus its length.
    pub(super) char_starts: Vec<usize>,
    pub(super) row: u64,
    pub(super) line: u64,
    pub(super) invalid_utf8: bool,
    pub(super) length_problem: Option<LengthProblem>,
}

impl Default for Record {
    fn default() -> Self {
        Self::new()
    }
}

impl Record {
    pub fn new() -> Self {
        Record {
            storage: Storage::Empty,
            text: String::new(),
            bounds: Vec::new(),
            char_starts: Vec::new(),
            row: 0,
            line: 0,
            invalid_utf8: false,
            length_problem: None,
        }
    }

    /// Number of fields. For a fixed-width record this is always the number of layout fields.
    pub fn len(&self) -> usize {
        match &self.storage {
            Storage::Empty => 0,
            Storage::Csv(record) => record.len(),
            Storage::CsvLossy(_) | Storage::Line => self.bounds.len(),
        }
    }

    pub fn is_empty(&self) -> bool {
        self.len() == 0
    }

    /// UTF-8 text of field `i` (0-based). Delimited fields are returned as written (the checker
    /// trims); fixed-width fields are already trimmed, since padding is part of that layout.
    pub fn field(&self, i: usize) -> Option<&str> {
        match &self.storage {
            Storage::Empty => None,
            Storage::Csv(record) => record.get(i),
            Storage::CsvLossy(_) | Storage::Line => {
                let &(start, end) = self.bounds.get(i)?;
                self.text.get(start..end)
            }
        }
    }

    /// All fields in order.
    pub fn fields(&self) -> Fields<'_> {
        Fields(match &self.storage {
            Storage::Empty => FieldsInner::Empty,
            Storage::Csv(record) => FieldsInner::Csv(record.iter()),
            Storage::CsvLossy(_) | Storage::Line => FieldsInner::Text {
                text: &self.text,
                bounds: self.bounds.iter(),
            },
        })
    }

    /// 1-based data row number; the header row is not counted.
    pub fn row(&self) -> u64 {
        self.row
    }

    /// 1-based physical line on which the record starts.
    pub fn line(&self) -> u64 {
        self.line
    }

    /// The record held bytes that are not UTF-8 (in a file declared UTF-8). Each maximal
    /// invalid sequence was replaced by U+FFFD.
    pub fn invalid_utf8(&self) -> bool {
        self.invalid_utf8
    }

    /// Fixed-width only: the line is shorter than the layout, or longer with non-blank text
    /// after the last declared field.
    pub fn length_problem(&self) -> Option<LengthProblem> {
        self.length_problem
    }

    /// Take the reusable byte buffer of a delimited record, leaving the record empty.
    pub(super) fn take_byte_record(&mut self) -> ByteRecord {
        match mem::replace(&mut self.storage, Storage::Empty) {
            Storage::Csv(record) => record.into_byte_record(),
            Storage::CsvLossy(record) => record,
            // Only the first delimited read of a record (or after a fixed-width one) allocates.
            Storage::Empty | Storage::Line => ByteRecord::new(),
        }
    }

    /// Store a freshly read delimited record: validated in place when it is UTF-8 (no copy),
    /// copied lossily into the reused `text` buffer when it is not.
    pub(super) fn set_byte_record(&mut self, record: ByteRecord) {
        self.length_problem = None;
        match StringRecord::from_byte_record(record) {
            Ok(record) => {
                self.invalid_utf8 = false;
                self.storage = Storage::Csv(record);
            }
            Err(error) => {
                let record = error.into_byte_record();
                self.invalid_utf8 = true;
                self.text.clear();
                self.bounds.clear();
                for field in record.iter() {
                    let start = self.text.len();
                    push_lossy(&mut self.text, field);
                    self.bounds.push((start, self.text.len()));
                }
                self.storage = Storage::CsvLossy(record);
            }
        }
    }

    /// Put back a byte buffer after a failed read so it is not lost, with no fields visible.
    pub(super) fn restore_after_error(&mut self, mut record: ByteRecord) {
        record.clear();
        self.bounds.clear();
        self.storage = Storage::CsvLossy(record);
    }

    /// Store a fixed-width line as text (validated, or copied lossily); fields are set later.
    pub(super) fn set_line_text(&mut self, bytes: &[u8]) {
        self.storage = Storage::Line;
        self.text.clear();
        match std::str::from_utf8(bytes) {
            Ok(text) => {
                self.text.push_str(text);
                self.invalid_utf8 = false;
            }
            Err(_) => {
                push_lossy(&mut self.text, bytes);
                self.invalid_utf8 = true;
            }
        }
    }
}

/// Append `bytes` to `text`, replacing each maximal invalid UTF-8 sequence with U+FFFD (the
/// same substitution as `String::from_utf8_lossy`, without allocating a new string).
fn push_lossy(text: &mut String, bytes: &[u8]) {
    for chunk in bytes.utf8_chunks() {
        text.push_str(chunk.valid());
        if !chunk.invalid().is_empty() {
            text.push(char::REPLACEMENT_CHARACTER);
        }
    }
}

/// The fields of a [`Record`] in order, from [`Record::fields`]. Walking them in order is
/// cheaper than asking for each by index.
pub struct Fields<'a>(FieldsInner<'a>);

enum FieldsInner<'a> {
    Empty,
    Csv(csv::StringRecordIter<'a>),
    Text {
        text: &'a str,
        bounds: std::slice::Iter<'a, (usize, usize)>,
    },
}

impl<'a> Iterator for Fields<'a> {
    type Item = &'a str;

    #[inline]
    fn next(&mut self) -> Option<&'a str> {
        match &mut self.0 {
            FieldsInner::Empty => None,
            FieldsInner::Csv(fields) => fields.next(),
            FieldsInner::Text { text, bounds } => {
                let &(start, end) = bounds.next()?;
                Some(text.get(start..end).unwrap_or(""))
            }
        }
    }
}
