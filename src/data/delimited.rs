//! Delimited files (CSV, TSV, any single-byte delimiter) read with the csv crate.
//!
//! The csv crate does the hard part (quotes, escaped quotes, embedded delimiters and newlines,
//! CRLF or LF). This module adds what a codebook check needs on top: a header row read once and
//! trimmed, data row numbers that exclude it, ragged rows passed through for the checker to
//! report, and a cap on record size so an unclosed quote cannot swallow the whole file into
//! memory.
//!
//! Empty lines follow the csv crate's default: a line with no bytes at all is skipped and is
//! not a record (so it takes no row number, though physical line numbers still count it). A
//! line holding only spaces, or only `""`, is a record with one field.

use std::io::{self, Read};

use super::decode::StreamFault;
use super::record::Record;
use super::DataError;

/// Counts the bytes handed to the csv reader since the current record started, and fails
/// once they pass the limit. The csv crate buffers ahead, so the count may include up to one
/// buffer of the next record; against a limit of megabytes that does not matter.
pub(super) struct RecordLimit {
    inner: Box<dyn Read + Send>,
    used: u64,
    limit: u64,
}

impl Read for RecordLimit {
    fn read(&mut self, buf: &mut [u8]) -> io::Result<usize> {
        if self.used > self.limit {
            return Err(StreamFault::RecordTooLong { limit: self.limit }.into_io());
        }
        let n = self.inner.read(buf)?;
        self.used += n as u64;
        Ok(n)
    }
}

pub(super) struct DelimitedReader {
    reader: csv::Reader<RecordLimit>,
    headers: Option<Vec<String>>,
    rows: u64,
}

impl DelimitedReader {
    pub(super) fn new(
        name: &str,
        stream: Box<dyn Read + Send>,
        delimiter: u8,
        quote: u8,
        header: bool,
        limit: u64,
    ) -> Result<Self, DataError> {
        let reader = csv::ReaderBuilder::new()
            .delimiter(delimiter)
            .quote(quote)
            // Headers are handled here, not by the csv crate, so that row numbers and the
            // "no header row" error are ours.
            .has_headers(false)
            // Ragged rows are findings (structure.row-length), not read errors.
            .flexible(true)
            .from_reader(RecordLimit {
                inner: stream,
                used: 0,
                limit,
            });
        let mut this = DelimitedReader {
            reader,
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
        self.reader.get_mut().limit = limit;
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

    fn read_raw(
        &mut self,
        name: &str,
        record: &mut Record,
        row: Option<u64>,
    ) -> Result<bool, DataError> {
        self.reader.get_mut().used = 0;
        let mut bytes = record.take_byte_record();
        match self.reader.read_byte_record(&mut bytes) {
            Ok(true) => {
                record.line = bytes.position().map_or(0, |p| p.line());
                record.set_byte_record(bytes);
                Ok(true)
            }
            Ok(false) => {
                record.restore_after_error(bytes);
                Ok(false)
            }
            Err(error) => {
                let line = bytes.position().map_or(0, |p| p.line());
                record.restore_after_error(bytes);
                let io = match error.into_kind() {
                    csv::ErrorKind::Io(io) => io,
                    other => io::Error::other(format!("{other:?}")),
                };
                Err(DataError::from_io(name, line, row, io))
            }
        }
    }
}
