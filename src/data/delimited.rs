//! Delimited files (CSV, TSV, any single-byte delimiter) read with the `csv-core` parser.
//!
//! `csv-core` does the hard part (quotes, escaped quotes, embedded delimiters and newlines,
//! CRLF or LF) and is the parser of the csv crate. It is driven directly here rather than
//! through the csv crate's reader so that a record's fields land in the record's own reused
//! buffers (one byte buffer, one array of field ends) and every byte consumed is seen once:
//! that gives exact line numbers cheaply and lets the checker walk fields without going
//! through a record type it cannot see into. On top of the parser this module adds what a
//! codebook check needs: a header row read once and trimmed, data row numbers that exclude it,
//! ragged rows passed through for the checker to report, and a cap on record size so an
//! unclosed quote cannot swallow the whole file into memory.
//!
//! Most survey lines hold no quote character at all, and their fields are then exactly the
//! pieces between delimiters. Such a line, when it lies whole in the buffer and the parser
//! is at the start of a record, is split directly (`memchr` finds its end and checks it for
//! quotes and carriage returns): the line is stored as it is, in one copy, and the parser
//! is told only that a line went by. Every other line (quoted fields, a lone CR, an empty
//! line, invalid UTF-8, a line across a buffer boundary, the first record, which may start
//! with a byte order mark) goes through `csv-core`. The two paths give the same records; a
//! differential test holds them to the csv crate's reader.
//!
//! Empty lines follow `csv-core`: a line with no bytes at all is skipped and is not a record
//! (so it takes no row number, though physical line numbers still count it). A line holding
//! only spaces, or only `""`, is a record with one field.

use std::io::{self, Read};

use csv_core::ReadRecordResult;

use super::decode::StreamFault;
use super::record::Record;
use super::DataError;

/// Bytes read from the stream at a time.
const CHUNK: usize = 64 * 1024;

/// Fields a record may have: far beyond any survey file (the widest have tens of thousands of
/// variables), and a bound on the memory of a line of nothing but delimiters, which the byte
/// cap alone would allow to take eight bytes per delimiter.
pub const MAX_FIELDS: usize = 1 << 20;

pub(super) struct DelimitedReader {
    parser: csv_core::Reader,
    input: Box<dyn Read + Send>,
    buf: Box<[u8]>,
    /// `buf[pos..len]` is read but not yet parsed.
    pos: usize,
    len: usize,
    eof: bool,
    limit: u64,
    headers: Option<Vec<String>>,
    rows: u64,
    delimiter: u8,
    quote: u8,
    /// The parser stands at the start of a record with nothing pending (not straight after
    /// a CR that a LF may follow, not before the first record): a plain line may be split
    /// without it.
    at_line_start: bool,
}

impl DelimitedReader {
    pub(super) fn new(
        name: &str,
        input: Box<dyn Read + Send>,
        delimiter: u8,
        quote: u8,
        header: bool,
        limit: u64,
    ) -> Result<Self, DataError> {
        let parser = csv_core::ReaderBuilder::new()
            .delimiter(delimiter)
            .quote(quote)
            .build();
        let mut this = DelimitedReader {
            parser,
            input,
            buf: vec![0; CHUNK].into_boxed_slice(),
            pos: 0,
            len: 0,
            eof: false,
            limit,
            headers: None,
            rows: 0,
            delimiter,
            quote,
            at_line_start: false,
        };
        if header {
            let mut record = Record::new();
            if !this.read_raw(name, &mut record, None)? {
                return Err(DataError::Empty {
                    path: name.to_string(),
                    what: "no header row",
                });
            }
            // A header with invalid UTF-8 keeps its U+FFFD replacements: the names will then
            // not match the codebook and be reported as unexpected columns.
            this.headers = Some(
                record
                    .fields()
                    .map(|name| name.trim().to_string())
                    .collect(),
            );
        }
        Ok(this)
    }

    pub(super) fn headers(&self) -> Option<&[String]> {
        self.headers.as_deref()
    }

    pub(super) fn set_limit(&mut self, limit: u64) {
        self.limit = limit;
    }

    pub(super) fn read_record(
        &mut self,
        name: &str,
        record: &mut Record,
    ) -> Result<bool, DataError> {
        let row = self.rows + 1;
        if !self.read_raw(name, record, Some(row))? {
            return Ok(false);
        }
        self.rows = row;
        record.row = row;
        Ok(true)
    }

    /// Refill `buf` once it is used up; at the end of the stream `eof` is set instead.
    fn fill(&mut self) -> io::Result<()> {
        if self.pos < self.len || self.eof {
            return Ok(());
        }
        loop {
            match self.input.read(&mut self.buf) {
                Ok(0) => {
                    self.eof = true;
                    break;
                }
                Ok(n) => {
                    self.len = n;
                    break;
                }
                Err(e) if e.kind() == io::ErrorKind::Interrupted => continue,
                Err(e) => return Err(e),
            }
        }
        self.pos = 0;
        if self.eof {
            self.len = 0;
        }
        Ok(())
    }

    /// Parse the next record into `record`; false at the end of the file.
    fn read_raw(
        &mut self,
        name: &str,
        record: &mut Record,
        row: Option<u64>,
    ) -> Result<bool, DataError> {
        if self.at_line_start && self.split_plain_line(record) {
            return Ok(true);
        }
        let (raw, ends) = record.delimited_buffers();
        let (mut out, mut nends) = (0, 0);
        // Line of the record's first byte: found when the first byte that is not a line
        // terminator is parsed (the parser skips empty lines before a record).
        let mut start_line = None;
        let mut consumed: u64 = 0;
        loop {
            // The parser counts lines: 1 plus the line feeds it has consumed.
            let fault =
                |this: &Self, e: io::Error| DataError::from_io(name, this.parser.line(), row, e);
            self.fill().map_err(|e| fault(self, e))?;
            let line = self.parser.line();
            let input = &self.buf[self.pos..self.len];
            let (result, nin, nout, nend) =
                self.parser
                    .read_record(input, &mut raw[out..], &mut ends[nends..]);
            if start_line.is_none() {
                let parsed = &input[..nin];
                match parsed.iter().position(|&b| b != b'\n' && b != b'\r') {
                    Some(first) => start_line = Some(line + count_lf(&parsed[..first])),
                    None if result == ReadRecordResult::Record => start_line = Some(line),
                    None => {}
                }
            }
            self.pos += nin;
            out += nout;
            nends += nend;
            consumed += nin as u64;
            if consumed > self.limit {
                let e = StreamFault::RecordTooLong { limit: self.limit }.into_io();
                return Err(fault(self, e));
            }
            match result {
                ReadRecordResult::InputEmpty => {}
                ReadRecordResult::OutputFull => {
                    let grown = raw.len().max(64) * 2;
                    raw.resize(grown, 0);
                }
                ReadRecordResult::OutputEndsFull => {
                    if ends.len() >= MAX_FIELDS {
                        return Err(DataError::TooManyFields {
                            path: name.to_string(),
                            line: start_line.unwrap_or(self.parser.line()),
                            row,
                            limit: MAX_FIELDS,
                        });
                    }
                    let grown = (ends.len().max(16) * 2).min(MAX_FIELDS);
                    ends.resize(grown, 0);
                }
                ReadRecordResult::Record => {
                    // A record that ended on a LF leaves the parser clean; one that ended on
                    // a CR leaves it waiting to swallow a LF.
                    self.at_line_start = nin > 0 && input[nin - 1] == b'\n';
                    let line = start_line.unwrap_or(self.parser.line());
                    record.set_delimited(out, nends, line);
                    return Ok(true);
                }
                ReadRecordResult::End => {
                    record.set_delimited(0, 0, self.parser.line());
                    return Ok(false);
                }
            }
        }
    }
}

impl DelimitedReader {
    /// Read the next line as a record without the parser if it is plain: whole in the
    /// buffer, not empty, valid UTF-8, within the size cap, and free of the quote character
    /// and of carriage returns (but for one before its LF). False leaves everything as it
    /// was for the parser to read.
    #[inline]
    fn split_plain_line(&mut self, record: &mut Record) -> bool {
        if !self.delimiter.is_ascii() || !self.quote.is_ascii() {
            return false;
        }
        let input = &self.buf[self.pos..self.len];
        let Some(lf) = memchr::memchr(b'\n', input) else {
            return false;
        };
        let line = match &input[..lf] {
            [text @ .., b'\r'] => text,
            text => text,
        };
        if line.is_empty()
            || lf as u64 >= self.limit
            || memchr::memchr2(self.quote, b'\r', line).is_some()
        {
            return false;
        }
        let Ok(text) = std::str::from_utf8(line) else {
            return false;
        };
        let number = self.parser.line();
        record.set_split_line(text, self.delimiter, number);
        self.parser.set_line(number + 1);
        self.pos += lf + 1;
        true
    }
}

/// Line feeds in `bytes`.
#[inline]
fn count_lf(bytes: &[u8]) -> u64 {
    bytes.iter().filter(|&&b| b == b'\n').count() as u64
}
