//! Why a codebook could not be read at all.
//!
//! A [`LoadError`] means the command cannot run (exit 2): the file is missing, unreadable,
//! not valid TOML, or uses keys and values the format does not have. Semantic problems in a
//! readable codebook are lint diagnostics instead. Every error names the file and, when it
//! can, the line and column, and carries a miette span so the terminal shows the text.

use std::fmt;
use std::path::{Path, PathBuf};

use miette::{LabeledSpan, NamedSource, SourceSpan};

use crate::diagnostic::line_column;

#[derive(Debug)]
pub struct LoadError {
    pub code: &'static str,
    pub path: PathBuf,
    /// 1-based line and column, when the problem has a position.
    pub position: Option<(usize, usize)>,
    pub message: String,
    pub help: Option<String>,
    snippet: Option<(NamedSource<String>, SourceSpan)>,
}

impl LoadError {
    /// A problem with the file as a whole (missing, unreadable, empty).
    pub fn file(code: &'static str, path: &Path, message: impl Into<String>) -> Self {
        LoadError {
            code,
            path: path.to_path_buf(),
            position: None,
            message: message.into(),
            help: None,
            snippet: None,
        }
    }

    /// A problem at a byte range of the file's text.
    pub fn at(
        code: &'static str,
        path: &Path,
        text: &str,
        range: std::ops::Range<usize>,
        message: impl Into<String>,
    ) -> Self {
        let start = range.start.min(text.len());
        let len = range.end.min(text.len()).saturating_sub(start);
        LoadError {
            code,
            path: path.to_path_buf(),
            position: Some(line_column(text, start)),
            message: message.into(),
            help: None,
            snippet: Some((
                NamedSource::new(path.display().to_string(), text.to_string()),
                SourceSpan::new(start.into(), len),
            )),
        }
    }

    pub fn with_help(mut self, help: impl Into<String>) -> Self {
        self.help = Some(help.into());
        self
    }
}

impl fmt::Display for LoadError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self.position {
            Some((line, column)) => write!(
                f,
                "{}: line {line}, column {column}: {}",
                self.path.display(),
                self.message
            ),
            None => write!(f, "{}: {}", self.path.display(), self.message),
        }
    }
}

impl std::error::Error for LoadError {}

impl miette::Diagnostic for LoadError {
    fn code<'a>(&'a self) -> Option<Box<dyn fmt::Display + 'a>> {
        Some(Box::new(self.code))
    }

    fn help<'a>(&'a self) -> Option<Box<dyn fmt::Display + 'a>> {
        self.help
            .as_ref()
            .map(|h| Box::new(h) as Box<dyn fmt::Display>)
    }

    fn source_code(&self) -> Option<&dyn miette::SourceCode> {
        self.snippet
            .as_ref()
            .map(|(s, _)| s as &dyn miette::SourceCode)
    }

    fn labels(&self) -> Option<Box<dyn Iterator<Item = LabeledSpan> + '_>> {
        self.snippet.as_ref().map(|(_, span)| {
            Box::new(std::iter::once(LabeledSpan::new_with_span(
                Some("here".to_string()),
                *span,
            ))) as Box<dyn Iterator<Item = LabeledSpan>>
        })
    }
}

/// Read a codebook (or recode) file as UTF-8 text, with errors that say what to do.
pub fn read_text(path: &Path, what: &str) -> Result<String, LoadError> {
    if path.is_dir() {
        return Err(LoadError::file(
            "io.is-directory",
            path,
            format!("is a directory, not a {what} file"),
        )
        .with_help(format!("give the path of the {what} file itself")));
    }
    let bytes = std::fs::read(path).map_err(|e| {
        LoadError::file(
            "io.unreadable",
            path,
            format!("cannot read {what} file: {e}"),
        )
        .with_help("check the path and that you may read the file")
    })?;
    if bytes.starts_with(&[0xff, 0xfe]) || bytes.starts_with(&[0xfe, 0xff]) {
        return Err(LoadError::file(
            "io.not-utf8",
            path,
            "the file is UTF-16 (it starts with a UTF-16 byte-order mark), not UTF-8",
        )
        .with_help(format!(
            "{what} files must be UTF-8; re-save the file as UTF-8 (for example with \
             `iconv -f UTF-16 -t UTF-8`)"
        )));
    }
    match String::from_utf8(bytes) {
        Ok(text) => Ok(text
            .strip_prefix('\u{feff}')
            .map(str::to_string)
            .unwrap_or(text)),
        Err(e) => {
            let valid = e.utf8_error().valid_up_to();
            let prefix = String::from_utf8_lossy(&e.as_bytes()[..valid]).into_owned();
            let (line, column) = line_column(&prefix, prefix.len());
            let mut err = LoadError::file(
                "io.not-utf8",
                path,
                format!("byte {valid} is not valid UTF-8"),
            )
            .with_help(format!(
                "{what} files must be UTF-8; re-save the file as UTF-8 (for example with \
                 `iconv -f latin1 -t utf-8`)"
            ));
            err.position = Some((line, column));
            Err(err)
        }
    }
}
