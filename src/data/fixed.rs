//! Fixed-width files: every line is a record and each variable sits at declared columns.
//!
//! Positions in a codebook are 1-based inclusive *character* positions (DDI `location` and the
//! native `columns = { start, end }` both count that way). Most fixed-width files are ASCII, so
//! bytes are characters and slicing is direct; a line with any non-ASCII character is indexed
//! by character instead, so a 'é' in a name does not shift every later field.
//!
//! Decisions a reader of such files has to make, made here:
//! - Fields are trimmed: padding is part of the layout, not of the value.
//! - A line shorter than the largest declared `end` is a length problem, even when the missing
//!   part would only have held spaces: the declared layout is the contract, and producers that
//!   strip trailing blanks should be told. Fields past the end of the line read as empty.
//! - A line longer than the layout is a length problem only if the extra part holds non-blank
//!   text; trailing padding is harmless.
//! - Empty lines at the end of the file are not records. An empty line *between* records is a
//!   record (all fields empty, a length problem), because in a fixed-width file it stands for a
//!   case that is missing its data.

use std::io::{BufRead, BufReader, Read};

use super::decode::StreamFault;
use super::record::{LengthProblem, Record};
use super::{DataError, FixedField};

pub(super) struct FixedReader {
    input: BufReader<Box<dyn Read + Send>>,
    fields: Vec<FixedField>,
    /// Largest `end` over the fields: the record length the layout implies.
    expected: usize,
    limit: u64,
    line: Vec<u8>,
    /// Physical lines consumed so far.
    lines: u64,
    rows: u64,
    /// Empty lines seen but not yet returned: they become records only if a non-empty line
    /// follows, which is then held in `line` until they are out.
    pending_empty: u64,
    holding: bool,
}

impl FixedReader {
    pub(super) fn new(
        name: &str,
        stream: Box<dyn Read + Send>,
        fields: &[FixedField],
        limit: u64,
    ) -> Result<Self, DataError> {
        let layout_error = |message: String| DataError::Layout {
            path: name.to_string(),
            message,
        };
        if fields.is_empty() {
            return Err(layout_error(
                "a fixed-width layout needs at least one field".into(),
            ));
        }
        for (i, field) in fields.iter().enumerate() {
            if field.start == 0 || field.end < field.start {
                return Err(layout_error(format!(
                    "field {} has columns {}-{}; columns are 1-based and `end` may not be before `start`",
                    i + 1,
                    field.start,
                    field.end
                )));
            }
        }
        Ok(FixedReader {
            input: BufReader::with_capacity(64 * 1024, stream),
            fields: fields.to_vec(),
            expected: fields.iter().map(|f| f.end).max().unwrap_or(0),
            limit,
            line: Vec::new(),
            lines: 0,
            rows: 0,
            pending_empty: 0,
            holding: false,
        })
    }

    pub(super) fn set_limit(&mut self, limit: u64) {
        self.limit = limit;
    }

    pub(super) fn read_record(
        &mut self,
        name: &str,
        record: &mut Record,
    ) -> Result<bool, DataError> {
        if !self.holding {
            loop {
                if !self.next_line(name)? {
                    // Trailing empty lines are dropped here.
                    return Ok(false);
                }
                if !self.line.is_empty() {
                    break;
                }
                self.pending_empty += 1;
            }
            self.holding = true;
        }
        let (line_number, text): (u64, &[u8]) = if self.pending_empty > 0 {
            let number = self.lines - self.pending_empty;
            self.pending_empty -= 1;
            (number, &[])
        } else {
            self.holding = false;
            (self.lines, &self.line)
        };
        self.rows += 1;
        record.row = self.rows;
        record.line = line_number;
        record.set_line_text(text);
        record.length_problem = slice_fields(record, &self.fields, self.expected);
        Ok(true)
    }

    /// Read the next physical line into `self.line` without its LF or CRLF terminator.
    fn next_line(&mut self, name: &str) -> Result<bool, DataError> {
        self.line.clear();
        let line = self.lines + 1;
        let row = Some(self.rows + self.pending_empty + 1);
        let read = (&mut self.input)
            .take(self.limit.saturating_add(1))
            .read_until(b'\n', &mut self.line);
        let n = match read {
            Ok(n) => n,
            Err(error) => return Err(DataError::from_io(name, line, row, error)),
        };
        if n == 0 {
            return Ok(false);
        }
        self.lines = line;
        if self.line.last() == Some(&b'\n') {
            self.line.pop();
        } else if self.line.len() as u64 > self.limit {
            let fault = StreamFault::RecordTooLong { limit: self.limit }.into_io();
            return Err(DataError::from_io(name, line, row, fault));
        }
        if self.line.last() == Some(&b'\r') {
            self.line.pop();
        }
        Ok(true)
    }
}

/// Fill `record.bounds` with the trimmed byte range of each field of the line in
/// `record.text`, and say whether the line's length fits the layout.
fn slice_fields(
    record: &mut Record,
    fields: &[FixedField],
    expected: usize,
) -> Option<LengthProblem> {
    let text = record.text.as_str();
    record.bounds.clear();
    let ascii = text.is_ascii();
    record.char_starts.clear();
    if !ascii {
        record
            .char_starts
            .extend(text.char_indices().map(|(i, _)| i));
        record.char_starts.push(text.len());
    }
    let chars = if ascii {
        text.len()
    } else {
        record.char_starts.len() - 1
    };
    // Byte offset of character position `pos` (0-based), clipped to the end of the line.
    let offset = |pos: usize| -> usize {
        let pos = pos.min(chars);
        if ascii {
            pos
        } else {
            record.char_starts[pos]
        }
    };
    for field in fields {
        let start = offset(field.start - 1);
        let end = offset(field.end);
        let (from, to) = if ascii {
            trim_ascii(text.as_bytes(), start, end)
        } else {
            let raw = &text[start..end];
            let leading = raw.len() - raw.trim_start().len();
            (start + leading, start + leading + raw.trim().len())
        };
        record.bounds.push((from, to));
    }
    let problem = LengthProblem {
        actual: chars,
        expected,
    };
    if chars < expected || (chars > expected && !text[offset(expected)..].trim().is_empty()) {
        Some(problem)
    } else {
        None
    }
}

/// `bytes[start..end]` without leading and trailing white space, as `str::trim` would give
/// for ASCII text (whose only white space characters are these six), byte by byte instead of
/// decoding characters: most fields of a fixed-width file are padded.
#[inline]
fn trim_ascii(bytes: &[u8], mut start: usize, mut end: usize) -> (usize, usize) {
    let space = |b: u8| matches!(b, b' ' | b'\t' | b'\n' | 0x0b | 0x0c | b'\r');
    while start < end && space(bytes[start]) {
        start += 1;
    }
    while end > start && space(bytes[end - 1]) {
        end -= 1;
    }
    (start, end)
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::io;

    fn read_all(
        input: &str,
        fields: &[(usize, usize)],
    ) -> Vec<(u64, u64, Vec<String>, Option<LengthProblem>)> {
        let fields: Vec<FixedField> = fields
            .iter()
            .map(|&(start, end)| FixedField { start, end })
            .collect();
        let stream: Box<dyn Read + Send> = Box::new(io::Cursor::new(input.as_bytes().to_vec()));
        let mut reader = FixedReader::new("t.dat", stream, &fields, 1 << 20).unwrap();
        let mut record = Record::new();
        let mut out = Vec::new();
        while reader.read_record("t.dat", &mut record).unwrap() {
            out.push((
                record.row(),
                record.line(),
                record.fields().map(str::to_string).collect(),
                record.length_problem(),
            ));
        }
        out
    }

    #[test]
    fn ascii_trim_is_str_trim() {
        let text = " \t a b\x0b\x0c\r\n x \x0b";
        for start in 0..text.len() {
            for end in start..=text.len() {
                let (from, to) = trim_ascii(text.as_bytes(), start, end);
                assert_eq!(&text[from..to], text[start..end].trim(), "{start}..{end}");
            }
        }
    }

    #[test]
    fn empty_lines_inside_are_records_trailing_are_not() {
        let rows = read_all("ab\n\n\ncd\r\n\n\n", &[(1, 1), (2, 2)]);
        let lines: Vec<(u64, u64)> = rows.iter().map(|r| (r.0, r.1)).collect();
        assert_eq!(lines, vec![(1, 1), (2, 2), (3, 3), (4, 4)]);
        assert_eq!(rows[1].2, vec!["", ""]);
        assert_eq!(
            rows[1].3,
            Some(LengthProblem {
                actual: 0,
                expected: 2
            })
        );
        assert_eq!(rows[3].2, vec!["c", "d"]);
        assert_eq!(rows[3].3, None);
    }

    #[test]
    fn longer_lines_are_a_problem_only_when_not_blank() {
        let rows = read_all("ab   \nabX\n", &[(1, 2)]);
        assert_eq!(rows[0].3, None);
        assert_eq!(
            rows[1].3,
            Some(LengthProblem {
                actual: 3,
                expected: 2
            })
        );
    }

    #[test]
    fn bad_layout_is_an_error() {
        let stream: Box<dyn Read + Send> = Box::new(io::empty());
        let error = FixedReader::new("t.dat", stream, &[FixedField { start: 0, end: 3 }], 10)
            .err()
            .unwrap();
        assert!(error
            .to_string()
            .starts_with("t.dat: cannot read with this layout: field 1"));
    }
}
