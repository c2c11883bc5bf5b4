//! Why a data file could not be read, said so that the user knows which file, where, and what
//! to do next.
//!
//! These are errors that stop a run (exit code 2). Problems *inside* readable records, such as
//! ragged rows, invalid UTF-8 or a short fixed-width line, are not errors: they are flagged on
//! the [`Record`](super::Record) so the checker can report them as findings and carry on.

use std::io;

use super::decode::StreamFault;

/// A data file that cannot be opened or read to its end.
#[derive(Debug, thiserror::Error, miette::Diagnostic)]
#[non_exhaustive]
pub enum DataError {
    #[error("cannot open data file `{path}`: {}", describe(.cause))]
    #[diagnostic(
        code(concord::data::open),
        help("check the path and the file's permissions; use `-` to read from standard input")
    )]
    Open { path: String, cause: io::Error },

    #[error("{path} is a directory, not a data file")]
    #[diagnostic(
        code(concord::data::directory),
        help("give the path of the data file inside the directory")
    )]
    IsDirectory { path: String },

    #[error("{path} is empty: {what}")]
    #[diagnostic(
        code(concord::data::empty),
        help("check that the delivery is complete; a file without a header row needs `header = false` in [file]")
    )]
    Empty { path: String, what: &'static str },

    #[error("{path}: {}: cannot read the data: {}", place(*.line, *.row), describe(.cause))]
    #[diagnostic(
        code(concord::data::read),
        help("the file may be truncated or its device failing; try copying it again")
    )]
    Read {
        path: String,
        line: u64,
        row: Option<u64>,
        cause: io::Error,
    },

    #[error("{path}: {}: the gzip data is damaged: {}", place(*.line, *.row), describe(.cause))]
    #[diagnostic(
        code(concord::data::gzip),
        help("the file starts like a gzip file but does not decompress; it is probably truncated, so fetch it again")
    )]
    Gzip {
        path: String,
        line: u64,
        row: Option<u64>,
        cause: io::Error,
    },

    #[error("{path}: {}: a record is longer than {limit} bytes", place(*.line, *.row))]
    #[diagnostic(
        code(concord::data::record_too_long),
        help("a quoted field is probably never closed: look for an unmatched quote character at or after this line, or check the [file] quote and delimiter settings")
    )]
    RecordTooLong {
        path: String,
        line: u64,
        row: Option<u64>,
        limit: u64,
    },

    #[error("{path}: {}: a record has more than {limit} fields", place(*.line, *.row))]
    #[diagnostic(
        code(concord::data::too_many_fields),
        help("check the [file] delimiter setting: a file read with the wrong delimiter, or a line of nothing but delimiters, splits into this many fields")
    )]
    TooManyFields {
        path: String,
        line: u64,
        row: Option<u64>,
        limit: usize,
    },

    #[error("{path} is UTF-16 text, which concord does not read")]
    #[diagnostic(
        code(concord::data::utf16),
        help("re-save the file as UTF-8 (for example with `iconv -f UTF-16 -t UTF-8`), or as the encoding the codebook's [file] table declares")
    )]
    Utf16 { path: String },

    #[error("{path}: cannot read with this layout: {message}")]
    #[diagnostic(
        code(concord::data::layout),
        help("fix the [file] section or the variables' `columns` in the codebook")
    )]
    Layout { path: String, message: String },
}

impl DataError {
    /// Turn an I/O error met while reading a record that starts at `line` into the matching
    /// variant. `row` is the data row being read, if a header is not being read.
    pub(crate) fn from_io(path: &str, line: u64, row: Option<u64>, error: io::Error) -> Self {
        let path = path.to_string();
        let fault = error
            .get_ref()
            .and_then(|inner| inner.downcast_ref::<StreamFault>());
        match fault {
            Some(StreamFault::Utf16) => DataError::Utf16 { path },
            Some(StreamFault::RecordTooLong { limit }) => DataError::RecordTooLong {
                path,
                line,
                row,
                limit: *limit,
            },
            Some(StreamFault::Gzip(_)) => {
                // Unwrap our marker to report the decoder's own message.
                let cause = match error.into_inner().map(|e| e.downcast::<StreamFault>()) {
                    Some(Ok(fault)) => match *fault {
                        StreamFault::Gzip(inner) => inner,
                        other => io::Error::other(other),
                    },
                    _ => io::Error::other("unknown gzip error"),
                };
                DataError::Gzip {
                    path,
                    line,
                    row,
                    cause,
                }
            }
            None => DataError::Read {
                path,
                line,
                row,
                cause: error,
            },
        }
    }
}

/// "line 12, row 11" or "line 1" (header).
fn place(line: u64, row: Option<u64>) -> String {
    match row {
        Some(row) => format!("line {line}, row {row}"),
        None => format!("line {line}"),
    }
}

/// The operating system's message without the " (os error 2)" suffix, which means nothing to
/// the people who read these messages.
fn describe(error: &io::Error) -> String {
    let text = error.to_string();
    match text.rfind(" (os error ") {
        Some(at) if text.ends_with(')') => text[..at].to_string(),
        _ => text,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn messages_name_file_and_place() {
        let error = DataError::from_io(
            "x.csv",
            12,
            Some(11),
            io::Error::from_raw_os_error(5), // EIO
        );
        let text = error.to_string();
        assert!(text.starts_with("x.csv: line 12, row 11: cannot read the data: "));
        assert!(!text.contains("os error"), "{text}");

        let fault = StreamFault::RecordTooLong { limit: 10 }.into_io();
        let error = DataError::from_io("x.csv", 3, None, fault);
        assert_eq!(
            error.to_string(),
            "x.csv: line 3: a record is longer than 10 bytes"
        );
    }
}
