//! Streaming record sources: turn a data file, whatever its layout, encoding or compression,
//! into a sequence of UTF-8 records with row and line numbers.
//!
//! The checker should not care how a delivery was written. This module hides the differences
//! (delimited or fixed-width, UTF-8 or a legacy encoding, gzip or not, a file or standard
//! input) behind one reader that keeps memory flat and reuses one [`Record`] per row.
//!
//! ```
//! use concord::data::{from_reader, Encoding, Layout, Record, SourceOptions};
//!
//! let options = SourceOptions {
//!     layout: Layout::Delimited { delimiter: b',', quote: b'"', header: true },
//!     encoding: Encoding::Utf8,
//! };
//! let bytes = b"id,name\n1,\"Smith, J\"\n".to_vec();
//! let mut source = from_reader("demo.csv".into(), Box::new(std::io::Cursor::new(bytes)), &options)?;
//! assert_eq!(source.headers(), Some(&["id".to_string(), "name".to_string()][..]));
//! let mut record = Record::new();
//! while source.read_record(&mut record)? {
//!     assert_eq!(record.field(1), Some("Smith, J"));
//!     assert_eq!((record.row(), record.line()), (1, 2));
//! }
//! # Ok::<(), concord::data::DataError>(())
//! ```

mod decode;
mod delimited;
mod error;
mod fixed;
mod record;

use std::fs::File;
use std::io::Read;
use std::path::Path;
use std::sync::atomic::Ordering;

pub use error::DataError;
pub use record::{Fields, LengthProblem, Record};

use decode::ByteCounter;
use delimited::DelimitedReader;
use fixed::FixedReader;

/// Records longer than this stop the run: far beyond any real survey record, and a sign that
/// a quote was never closed. Without a cap that one quote would pull the rest of the file
/// into memory.
pub const MAX_RECORD_BYTES: u64 = 64 * 1024 * 1024;

/// Name used in messages for data read from standard input.
pub const STDIN_NAME: &str = "<stdin>";

/// Character encoding of a data file, as declared in the codebook's `[file] encoding`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Encoding {
    #[default]
    Utf8,
    /// ISO-8859-1 in the strict sense: byte N is U+00NN (see `decode` for why not WHATWG's).
    Latin1,
    /// windows-1252 as defined by the WHATWG Encoding Standard.
    Windows1252,
}

/// Columns of one fixed-width field: 1-based, inclusive, counted in characters.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct FixedField {
    pub start: usize,
    pub end: usize,
}

/// Physical layout of the records.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Layout {
    Delimited {
        delimiter: u8,
        quote: u8,
        header: bool,
    },
    /// One record per line; fields in layout order.
    Fixed { fields: Vec<FixedField> },
}

/// Everything needed to read a data file, usually taken from the codebook's `[file]` section.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct SourceOptions {
    pub layout: Layout,
    pub encoding: Encoding,
}

impl Default for SourceOptions {
    /// Comma-separated, double-quoted, with a header row, UTF-8: the `[file]` defaults.
    fn default() -> Self {
        SourceOptions {
            layout: Layout::Delimited {
                delimiter: b',',
                quote: b'"',
                header: true,
            },
            encoding: Encoding::Utf8,
        }
    }
}

/// Open a data file; the path `-` reads standard input. Gzip compression is recognised from
/// the file's first bytes, whatever its name.
pub fn open(path: &Path, options: &SourceOptions) -> Result<RecordSource, DataError> {
    if path.as_os_str() == "-" {
        return from_reader(STDIN_NAME.to_string(), Box::new(std::io::stdin()), options);
    }
    let name = path.display().to_string();
    let open_error = |cause| DataError::Open {
        path: name.clone(),
        cause,
    };
    // Checked before opening: on Linux a directory opens fine and only fails on the first read.
    let metadata = std::fs::metadata(path).map_err(open_error)?;
    if metadata.is_dir() {
        return Err(DataError::IsDirectory { path: name });
    }
    let file = File::open(path).map_err(open_error)?;
    let total = metadata.is_file().then_some(metadata.len());
    build(name, Box::new(file), options, total)
}

/// Read records from any byte stream (standard input, a test buffer, a network body). `name`
/// is what messages call the stream.
pub fn from_reader(
    name: String,
    reader: Box<dyn Read + Send>,
    options: &SourceOptions,
) -> Result<RecordSource, DataError> {
    build(name, reader, options, None)
}

fn build(
    name: String,
    reader: Box<dyn Read + Send>,
    options: &SourceOptions,
    total: Option<u64>,
) -> Result<RecordSource, DataError> {
    check_options(&name, options)?;
    let counter = ByteCounter::default();
    let (stream, has_bytes) = decode::decoded_stream(reader, options.encoding, counter.clone())
        .map_err(|error| DataError::from_io(&name, 1, None, error))?;
    let reader = match &options.layout {
        Layout::Delimited {
            delimiter,
            quote,
            header,
        } => {
            if !has_bytes {
                return Err(DataError::Empty {
                    path: name,
                    what: if *header {
                        "no header row"
                    } else {
                        "no records"
                    },
                });
            }
            Reader::Delimited(Box::new(DelimitedReader::new(
                &name,
                stream,
                *delimiter,
                *quote,
                *header,
                MAX_RECORD_BYTES,
            )?))
        }
        Layout::Fixed { fields } => {
            if !has_bytes {
                return Err(DataError::Empty {
                    path: name,
                    what: "no records",
                });
            }
            Reader::Fixed(FixedReader::new(&name, stream, fields, MAX_RECORD_BYTES)?)
        }
    };
    Ok(RecordSource {
        name,
        reader,
        counter,
        total,
    })
}

fn check_options(name: &str, options: &SourceOptions) -> Result<(), DataError> {
    let Layout::Delimited {
        delimiter, quote, ..
    } = options.layout
    else {
        return Ok(());
    };
    let problem = if delimiter == quote {
        "the delimiter and the quote character are the same"
    } else if matches!(delimiter, b'\n' | b'\r') {
        "the delimiter cannot be a line break"
    } else if matches!(quote, b'\n' | b'\r') {
        "the quote character cannot be a line break"
    } else {
        return Ok(());
    };
    Err(DataError::Layout {
        path: name.to_string(),
        message: problem.to_string(),
    })
}

/// An open data file, read one record at a time.
pub struct RecordSource {
    name: String,
    reader: Reader,
    counter: ByteCounter,
    total: Option<u64>,
}

enum Reader {
    /// Boxed: the parser's state tables are large.
    Delimited(Box<DelimitedReader>),
    Fixed(FixedReader),
}

impl RecordSource {
    /// The name used in messages: the path as given, or [`STDIN_NAME`].
    pub fn name(&self) -> &str {
        &self.name
    }

    /// Trimmed header names of a delimited file read with a header row (BOM removed).
    pub fn headers(&self) -> Option<&[String]> {
        match &self.reader {
            Reader::Delimited(reader) => reader.headers(),
            Reader::Fixed(_) => None,
        }
    }

    /// Read the next record into `record`, reusing its buffers. Returns `false` at the end.
    ///
    /// Problems inside a record (ragged rows, invalid UTF-8, a bad fixed-width length) are
    /// flagged on the record; an `Err` means the file cannot be read further.
    pub fn read_record(&mut self, record: &mut Record) -> Result<bool, DataError> {
        match &mut self.reader {
            Reader::Delimited(reader) => reader.read_record(&self.name, record),
            Reader::Fixed(reader) => reader.read_record(&self.name, record),
        }
    }

    /// Raw bytes consumed so far (compressed bytes for a gzip file), for a progress bar.
    /// Reading is buffered, so this runs a little ahead of the records returned.
    pub fn bytes_read(&self) -> u64 {
        self.counter.load(Ordering::Relaxed)
    }

    /// Size of the file in bytes, when it is a regular file.
    pub fn total_bytes(&self) -> Option<u64> {
        self.total
    }

    /// Change the record size cap ([`MAX_RECORD_BYTES`] by default).
    pub fn set_max_record_bytes(&mut self, limit: u64) {
        match &mut self.reader {
            Reader::Delimited(reader) => reader.set_limit(limit),
            Reader::Fixed(reader) => reader.set_limit(limit),
        }
    }
}
