//! Writing output files safely.
//!
//! Outputs are written to a temporary file in the destination's folder and renamed into
//! place only when complete, so a failed run never leaves a partial file, and an output
//! path that names one of the inputs is refused before anything is written.

use std::io::{self, Write};
use std::path::{Path, PathBuf};

#[derive(Debug, thiserror::Error, miette::Diagnostic)]
pub enum OutputError {
    #[error("refusing to write `{path}`: it is also an input of this command")]
    #[diagnostic(
        code(concord::output::is_input),
        help("choose another output path; inputs are never modified")
    )]
    IsInput { path: PathBuf },
    #[error("cannot write `{path}`: the folder `{}` does not exist", folder.display())]
    #[diagnostic(
        code(concord::output::no_folder),
        help("create the folder first, or choose an output path in an existing folder")
    )]
    NoFolder { path: PathBuf, folder: PathBuf },
    // `cause`, not `source`: the cause is already in the message, and a `source` field
    // would be printed a second time as the error's chain.
    #[error("cannot write `{path}`: {cause}")]
    #[diagnostic(
        code(concord::output::unwritable),
        help("check that the folder exists and that you may write there")
    )]
    Io { path: PathBuf, cause: io::Error },
    #[error("cannot move `{path}` into place ({cause}); already written: {}", done.iter().map(|p| format!("`{}`", p.display())).collect::<Vec<_>>().join(", "))]
    #[diagnostic(
        code(concord::output::partial_set),
        help("the outputs of this run do not belong together: delete the ones already written and run again")
    )]
    PartialSet {
        path: PathBuf,
        cause: io::Error,
        done: Vec<PathBuf>,
    },
}

/// The folder `path` is written in.
fn folder_of(path: &Path) -> &Path {
    match path.parent() {
        Some(p) if !p.as_os_str().is_empty() => p,
        _ => Path::new("."),
    }
}

/// A temporary file beside `path`, named `.concord-*` so a leftover is easy to recognise.
fn temporary_beside(path: &Path) -> Result<tempfile::NamedTempFile, OutputError> {
    let dir = folder_of(path);
    if !dir.is_dir() {
        return Err(OutputError::NoFolder {
            path: path.to_path_buf(),
            folder: dir.to_path_buf(),
        });
    }
    tempfile::Builder::new()
        .prefix(".concord-")
        .tempfile_in(dir)
        .map_err(|e| OutputError::Io {
            path: path.to_path_buf(),
            // tempfile's error names its own random file; the user knows only `path`.
            cause: io::Error::from(e.kind()),
        })
}

/// Fail when `output` is the same file as any of `inputs`.
pub fn refuse_input(output: &Path, inputs: &[&Path]) -> Result<(), OutputError> {
    let out = std::fs::canonicalize(output).ok();
    for input in inputs {
        let same = match (&out, std::fs::canonicalize(input).ok()) {
            (Some(a), Some(b)) => *a == b,
            _ => output == *input,
        };
        if same {
            return Err(OutputError::IsInput {
                path: output.to_path_buf(),
            });
        }
    }
    Ok(())
}

/// An output file being written: it appears under its name only on [`AtomicFile::commit`];
/// dropped without a commit, it leaves nothing behind.
pub struct AtomicFile {
    path: PathBuf,
    tmp: tempfile::NamedTempFile,
}

impl AtomicFile {
    pub fn create(path: &Path) -> Result<Self, OutputError> {
        let tmp = temporary_beside(path)?;
        Ok(AtomicFile {
            path: path.to_path_buf(),
            tmp,
        })
    }

    pub fn file(&mut self) -> &mut std::fs::File {
        self.tmp.as_file_mut()
    }

    pub fn path(&self) -> &Path {
        &self.path
    }

    /// Flush and move the file into place.
    pub fn commit(mut self) -> Result<(), OutputError> {
        let path = self.path.clone();
        let err = |cause| OutputError::Io {
            path: path.clone(),
            cause,
        };
        self.tmp.as_file_mut().flush().map_err(err)?;
        self.tmp.persist(&self.path).map_err(|e| err(e.error))?;
        Ok(())
    }
}

/// Commit outputs that belong together (a data file and its codebook, say). Everything that
/// can fail on the way (flushing and syncing each file to disk) is done for all of them
/// before the first is renamed into place, so a full disk leaves none of them. Only a
/// failed rename can still leave some in place, and the error then names them.
pub fn commit_all(files: Vec<AtomicFile>) -> Result<(), OutputError> {
    let mut files = files;
    for f in &mut files {
        let path = f.path.clone();
        let file = f.tmp.as_file_mut();
        file.flush()
            .and_then(|()| file.sync_all())
            .map_err(|cause| OutputError::Io { path, cause })?;
    }
    let mut done = Vec::new();
    for f in files {
        let path = f.path.clone();
        match f.tmp.persist(&path) {
            Ok(_) => done.push(path),
            Err(e) if done.is_empty() => {
                return Err(OutputError::Io {
                    path,
                    cause: e.error,
                })
            }
            Err(e) => {
                return Err(OutputError::PartialSet {
                    path,
                    cause: e.error,
                    done,
                })
            }
        }
    }
    Ok(())
}

/// Write a file atomically: `write` fills a temporary file that is renamed to `path` only
/// when it returns Ok.
pub fn write_atomic<F>(path: &Path, write: F) -> Result<(), OutputError>
where
    F: FnOnce(&mut dyn Write) -> io::Result<()>,
{
    let err = |cause| OutputError::Io {
        path: path.to_path_buf(),
        cause,
    };
    let mut tmp = temporary_beside(path)?;
    {
        let mut buffered = io::BufWriter::new(tmp.as_file_mut());
        write(&mut buffered).map_err(err)?;
        buffered.flush().map_err(err)?;
    }
    tmp.persist(path).map_err(|e| err(e.error))?;
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    fn written(path: &Path, text: &str) -> AtomicFile {
        let mut f = AtomicFile::create(path).unwrap();
        f.file().write_all(text.as_bytes()).unwrap();
        f
    }

    /// Files left in `dir` (outputs and temporary files alike).
    fn entries(dir: &Path) -> Vec<String> {
        let mut names: Vec<String> = std::fs::read_dir(dir)
            .unwrap()
            .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
            .collect();
        names.sort();
        names
    }

    #[test]
    fn a_set_of_outputs_appears_together() {
        let dir = tempfile::tempdir().unwrap();
        let (a, b) = (dir.path().join("a.csv"), dir.path().join("a.toml"));
        let set = vec![written(&a, "data"), written(&b, "codebook")];
        assert_eq!(entries(dir.path()).len(), 2, "two temporary files");
        commit_all(set).unwrap();
        assert_eq!(entries(dir.path()), ["a.csv", "a.toml"]);
        assert_eq!(std::fs::read_to_string(&b).unwrap(), "codebook");
    }

    #[test]
    fn a_failed_rename_names_what_was_already_written() {
        let dir = tempfile::tempdir().unwrap();
        let a = dir.path().join("a.csv");
        // A folder in the way of the second output: renaming a file onto it fails.
        let b = dir.path().join("b");
        std::fs::create_dir(&b).unwrap();
        std::fs::write(b.join("keep"), "x").unwrap();
        let err = commit_all(vec![written(&a, "data"), written(&b, "cb")]).unwrap_err();
        match &err {
            OutputError::PartialSet { path, done, .. } => {
                assert_eq!(path, &b);
                assert_eq!(done, std::slice::from_ref(&a));
            }
            other => panic!("{other:?}"),
        }
        assert!(err.to_string().contains("already written"), "{err}");
        // Failing first: nothing is moved, and no temporary file is left.
        std::fs::remove_file(&a).unwrap();
        let err = commit_all(vec![written(&b, "cb"), written(&a, "data")]).unwrap_err();
        assert!(matches!(err, OutputError::Io { .. }), "{err:?}");
        assert_eq!(entries(dir.path()), ["b"]);
    }

    #[test]
    fn failed_write_leaves_nothing() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("out.txt");
        let result = write_atomic(&path, |w| {
            w.write_all(b"partial")?;
            Err(io::Error::other("boom"))
        });
        assert!(result.is_err());
        assert!(!path.exists());
        assert_eq!(std::fs::read_dir(dir.path()).unwrap().count(), 0);
    }

    #[test]
    fn missing_folder_is_named_once() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("no-such-folder").join("out.txt");
        let err = write_atomic(&path, |w| w.write_all(b"x")).unwrap_err();
        let message = err.to_string();
        assert!(
            message.contains("no-such-folder` does not exist"),
            "{message}"
        );
        assert!(!message.contains(".concord-"), "{message}");
        assert!(std::error::Error::source(&err).is_none());
    }

    #[test]
    fn refuses_an_input() {
        let dir = tempfile::tempdir().unwrap();
        let input = dir.path().join("in.csv");
        std::fs::write(&input, "a\n1\n").unwrap();
        let dotted = dir.path().join(".").join("in.csv");
        assert!(refuse_input(&dotted, &[&input]).is_err());
        assert!(refuse_input(&dir.path().join("out.csv"), &[&input]).is_ok());
    }
}
