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

/// The stream as the csv reader sees it, with two extra duties:
///
/// - Cap the bytes handed over since the current record started. The csv crate buffers
///   ahead, so the count may include up to one buffer of the next record; against a limit of
///   megabytes that does not matter.
/// - Remember the chunk last handed over, so the byte that ended a record can be looked up.
///   The csv crate's line count stops before the LF of a CRLF pair, so on its own it puts
///   every record of a Windows file one line too early; knowing whether a record ended on an
///   LF lets us compute the record's first line backwards from the line after it. The csv
///   reader only refills its buffer once it has used it up, so the byte just before its
///   position is always in this chunk or is the last byte of the chunk before.
pub(super) struct TrackedStream {
    inner: Box<dyn Read + Send>,
    used: u64,
    limit: u64,
    recent: Vec<u8>,
    recent_start: u64,
    before_recent: Option<u8>,
}

impl TrackedStream {
    fn byte_at(&self, offset: u64) -> Option<u8> {
        if offset >= self.recent_start {
            let index = usize::try_from(offset - self.recent_start).ok()?;
            self.recent.get(index).copied()
        } else if offset + 1 == self.recent_start {
            self.before_recent
        } else {
            None
        }
    }
}

impl Read for TrackedStream {
    fn read(&mut self, buf: &mut [u8]) -> io::Result<usize> {
        if self.used > self.limit {
            return Err(StreamFault::RecordTooLong { limit: self.limit }.into_io());
        }
        let n = self.inner.read(buf)?;
        if n > 0 {
            self.before_recent = self.recent.last().copied().or(self.before_recent);
            self.recent_start += self.recent.len() as u64;
            self.recent.clear();
            self.recent.extend_from_slice(&buf[..n]);
        }
        self.used += n as u64;
        Ok(n)
    }
}

pub(super) struct DelimitedReader {
    reader: csv::Reader<TrackedStream>,
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
            // Larger than the 8 KiB default: fewer trips through the adapter chain below.
            .buffer_capacity(64 * 1024)
            // Headers are handled here, not by the csv crate, so that row numbers and the
            // "no header row" error are ours.
            .has_headers(false)
            // Ragged rows are findings (structure.row-length), not read errors.
            .flexible(true)
            .from_reader(TrackedStream {
                inner: stream,
                used: 0,
                limit,
                recent: Vec::new(),
                recent_start: 0,
                before_recent: None,
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
                record.line = self.start_line(&bytes);
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

    /// First physical line of the record just read: the line after it, less the newlines
    /// inside its quoted fields, less one if it was ended by an LF (see [`TrackedStream`]).
    fn start_line(&self, record: &csv::ByteRecord) -> u64 {
        let after = self.reader.position();
        let bytes = record.as_slice();
        let embedded = if bytes.contains(&b'\n') {
            bytes.iter().filter(|&&b| b == b'\n').count() as u64
        } else {
            0
        };
        let ended_by_lf =
            after.byte() > 0 && self.reader.get_ref().byte_at(after.byte() - 1) == Some(b'\n');
        after
            .line()
            .saturating_sub(embedded)
            .saturating_sub(u64::from(ended_by_lf))
            .max(1)
    }
}
