//! The codebook: what a data file promises, read from native TOML (and later DDI XML).
//!
//! [`load`] reads a codebook file into the [`model::Codebook`]; [`lint`] checks the model's
//! own consistency before any data is read.

pub mod conditions;
pub mod date;
pub mod error;
pub mod lint;
pub mod model;
pub mod native;
pub mod write_toml;

use std::path::Path;

pub use error::LoadError;
pub use native::Loaded;

/// Read a codebook file.
pub fn load(path: &Path) -> Result<Loaded, LoadError> {
    let text = error::read_text(path, "codebook")?;
    native::parse(path, text)
}
