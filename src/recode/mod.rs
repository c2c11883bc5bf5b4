//! Recodes: derive analysis variables from the codebook's, prove them right, apply them.
//!
//! A recode file (the analyst's, not the data producer's) lists derived variables: bands of
//! a quantity (`cuts`, `intervals`, `quantiles`), collapsed categories (`map`) or arithmetic
//! (`expr`). [`spec`] reads the file; [`validate`] proves it against the codebook alone (gaps
//! and overlaps between bands by exact interval arithmetic, unmapped codes, missing codes
//! that would land in a real band) and compiles it into a [`plan::Plan`]; [`apply`] streams
//! a data file through the plan, writing the derived columns and the [`audit`]
//! cross-tabulation of every source value by its derived value; the extended codebook is
//! written by [`crate::codebook::write_toml`]. Nothing here prints.

pub mod apply;
pub mod audit;
pub mod intervals;
pub mod outputs;
pub mod plan;
pub mod quantile;
pub mod sources;
pub mod spec;
pub mod validate;

use std::path::Path;

use crate::codebook::LoadError;

/// Read a recode file whose places will index `file` in the sources list (usually the
/// codebook's `sources.len()`, since the recode file is appended to them).
pub fn load(path: &Path, file: usize) -> Result<spec::RecodeFile, LoadError> {
    let text = crate::codebook::error::read_text(path, "recode")?;
    spec::parse(path, text, file)
}
