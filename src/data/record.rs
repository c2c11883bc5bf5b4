//! One record of a data file, with its position and the problems found while reading it.
//!
//! A `Record` is reused from row to row so the row loop does not allocate: the readers refill
//! its buffers in place. Field text is always UTF-8; where the file was not, the record says so
//! instead of failing, because one bad row in a million should become a finding, not stop the
//! run.

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
    /// Delimited record: `text` holds the fields one after another, `ends` where each ends
    /// (a lossy copy when the bytes were not UTF-8). Field `i` starts `gap` bytes after the
    /// end of field `i - 1`: 0 when the parser copied the fields out, 1 when `text` is the line
    /// as written and each end is the position of the (ASCII) delimiter that follows it.
    Delimited { gap: usize },
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
    /// Delimited: the parser's output (field bytes one after another; only the front is
    /// used, the rest is room) and the end of each field in it, then in `text`.
    raw: Vec<u8>,
    ends: Vec<usize>,
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
            raw: Vec::new(),
            ends: Vec::new(),
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
            Storage::Delimited { .. } => self.ends.len(),
            Storage::Line => self.bounds.len(),
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
            Storage::Delimited { gap } => {
                let end = *self.ends.get(i)?;
                let start = if i == 0 { 0 } else { self.ends[i - 1] + gap };
                self.text.get(start..end)
            }
            Storage::Line => {
                let &(start, end) = self.bounds.get(i)?;
                self.text.get(start..end)
            }
        }
    }

    /// All fields in order.
    pub fn fields(&self) -> Fields<'_> {
        Fields(match &self.storage {
            Storage::Empty => FieldsInner::Empty,
            Storage::Delimited { gap } => FieldsInner::Ends {
                text: &self.text,
                ends: self.ends.iter(),
                start: 0,
                gap: *gap,
            },
            Storage::Line => FieldsInner::Text {
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

    /// The parser's buffers for a delimited read: room for the field bytes and for the field
    /// ends (both keep their size from record to record; the reader grows them).
    pub(super) fn delimited_buffers(&mut self) -> (&mut Vec<u8>, &mut Vec<usize>) {
        self.storage = Storage::Empty;
        if self.raw.len() < 256 {
            self.raw.resize(256, 0);
        }
        let room = self.ends.capacity().max(16);
        self.ends.resize(room, 0);
        (&mut self.raw, &mut self.ends)
    }

    /// Finish a delimited read of `fields` fields (`bytes` bytes of field text) starting on
    /// `line`: the text is kept when it is UTF-8, field by field (a character split between
    /// two fields is invalid in both), and copied lossily when it is not.
    pub(super) fn set_delimited(&mut self, bytes: usize, fields: usize, line: u64) {
        self.ends.truncate(fields);
        self.line = line;
        self.length_problem = None;
        self.text.clear();
        let raw = &self.raw[..bytes];
        let valid = match std::str::from_utf8(raw) {
            Ok(text) => {
                let whole = text.is_ascii() || self.ends.iter().all(|&e| text.is_char_boundary(e));
                if whole {
                    self.text.push_str(text);
                }
                whole
            }
            Err(_) => false,
        };
        if !valid {
            let mut start = 0;
            for end in self.ends.iter_mut() {
                push_lossy(&mut self.text, &raw[start..*end]);
                start = *end;
                *end = self.text.len();
            }
        }
        self.invalid_utf8 = !valid;
        self.storage = Storage::Delimited { gap: 0 };
    }

    /// Store a delimited record that is one line with no quote character and no carriage
    /// return (the reader checked), so its fields are exactly the pieces between delimiters:
    /// the line is kept as it is and each field's end is the position of the delimiter after
    /// it (or the line's end). `delimiter` is ASCII, so every end and every end + 1 is a
    /// character boundary.
    pub(super) fn set_split_line(&mut self, line_text: &str, delimiter: u8, line: u64) {
        debug_assert!(delimiter.is_ascii());
        split_at(line_text.as_bytes(), delimiter, &mut self.ends);
        self.text.clear();
        self.text.push_str(line_text);
        self.line = line;
        self.length_problem = None;
        self.invalid_utf8 = false;
        self.storage = Storage::Delimited { gap: 1 };
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

/// Set `ends` to the position of each `delimiter` in `bytes`, then the length of `bytes`.
///
/// Eight bytes at a time: a word's bytes equal to the delimiter are found with the exact
/// zero-byte test on `word ^ pattern` (no false positives, unlike the shorter test that only
/// answers whether a zero byte exists), and their positions are read off the mask's set bits.
/// Fields are short and irregular, so a test and branch per byte would cost most of the time.
fn split_at(bytes: &[u8], delimiter: u8, ends: &mut Vec<usize>) {
    const LOW7: u64 = 0x7f7f_7f7f_7f7f_7f7f;
    let pattern = u64::from_ne_bytes([delimiter; 8]);
    ends.clear();
    let mut words = bytes.chunks_exact(8);
    let mut at = 0;
    for word in words.by_ref() {
        let x = u64::from_le_bytes(word.try_into().expect("eight bytes")) ^ pattern;
        // High bit of each byte of `x` that is zero: adding 0x7f to the low seven bits sets
        // the high bit unless they are all zero, and `| x` covers a set high bit itself.
        let mut hits = !(((x & LOW7).wrapping_add(LOW7)) | x | LOW7);
        while hits != 0 {
            ends.push(at + (hits.trailing_zeros() / 8) as usize);
            hits &= hits - 1;
        }
        at += 8;
    }
    for (i, &b) in words.remainder().iter().enumerate() {
        if b == delimiter {
            ends.push(at + i);
        }
    }
    ends.push(bytes.len());
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

/// The field of a delimited record's `text` that runs from `start` (0, or the end of the
/// field before plus the record's gap) to `end` (its entry in `ends`).
#[inline(always)]
fn delimited_field(text: &str, start: usize, end: usize) -> &str {
    debug_assert!(start <= end && text.is_char_boundary(start));
    debug_assert!(end <= text.len() && text.is_char_boundary(end));
    // SAFETY: `Record::set_delimited` made `text` hold the fields one after another with
    // `ends` their ends in it, each one a character boundary (checked there, or true of ASCII
    // text, or built so by the lossy copy), so 0 and consecutive ends delimit valid slices;
    // `Record::set_split_line` made each end but the last the position of an ASCII delimiter
    // in valid UTF-8 text, so an end and the byte after it are boundaries, and ends rise, so
    // `end + 1` of one field is at most the end of the next. Callers pass exactly those. Unchecked because this is the innermost loop of every
    // command: the checks cost more than the field.
    unsafe { text.get_unchecked(start..end) }
}

/// The fields of a [`Record`] in order, from [`Record::fields`]. Walking them in order is
/// cheaper than asking for each by index.
pub struct Fields<'a>(FieldsInner<'a>);

enum FieldsInner<'a> {
    Empty,
    Ends {
        text: &'a str,
        ends: std::slice::Iter<'a, usize>,
        start: usize,
        gap: usize,
    },
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
            FieldsInner::Ends {
                text,
                ends,
                start,
                gap,
            } => {
                let end = *ends.next()?;
                let field = delimited_field(text, *start, end);
                *start = end + *gap;
                Some(field)
            }
            FieldsInner::Text { text, bounds } => {
                let &(start, end) = bounds.next()?;
                Some(text.get(start..end).unwrap_or(""))
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The word-at-a-time split against the obvious one, for every length up to three words
    /// and more, every delimiter position pattern a small generator makes, and delimiters
    /// next to bytes that differ from them in one bit (where a sloppy zero-byte test would
    /// report false hits).
    #[test]
    fn split_at_matches_a_byte_by_byte_split() {
        let mut seed: u64 = 0x9e37_79b9_7f4a_7c15;
        let mut next = move || {
            seed ^= seed << 13;
            seed ^= seed >> 7;
            seed ^= seed << 17;
            seed
        };
        for delimiter in [b',', b'\t', b';', b'|', 0x01, 0x7f] {
            let near = [delimiter ^ 1, delimiter ^ 0x80, delimiter ^ 0x40, b'a', 0];
            for len in 0..40 {
                for _ in 0..50 {
                    let bytes: Vec<u8> = (0..len)
                        .map(|_| match next() % 3 {
                            0 => delimiter,
                            1 => near[(next() % near.len() as u64) as usize],
                            _ => (next() % 256) as u8,
                        })
                        .collect();
                    let mut expected: Vec<usize> = bytes
                        .iter()
                        .enumerate()
                        .filter(|&(_, &b)| b == delimiter)
                        .map(|(i, _)| i)
                        .collect();
                    expected.push(bytes.len());
                    let mut ends = vec![7; 3];
                    split_at(&bytes, delimiter, &mut ends);
                    assert_eq!(ends, expected, "{bytes:?} split at {delimiter}");
                }
            }
        }
    }
}
