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

/// Line feeds in `bytes`.
#[inline]
fn count_lf(bytes: &[u8]) -> u64 {
    bytes.iter().filter(|&&b| b == b'\n').count() as u64
}
