//! The codebook: what a data file promises, read from native TOML or DDI Codebook XML.
//!
//! [`load`] reads a codebook file into the [`model::Codebook`], telling the format from the
//! content; [`lint`] checks the model's own consistency before any data is read.

pub mod conditions;
pub mod date;
pub mod ddi;
pub mod error;
pub mod lint;
pub mod model;
pub mod native;
pub mod write_toml;

use std::path::Path;

pub use ddi::Options;
pub use error::LoadError;
pub use native::Loaded;

/// Read a codebook file.
pub fn load(path: &Path) -> Result<Loaded, LoadError> {
    load_with(path, &Options::default())
}

/// Read a codebook file, native TOML or DDI XML (told apart by the first character: `<`
/// is XML).
pub fn load_with(path: &Path, options: &Options) -> Result<Loaded, LoadError> {
    let text = error::read_text(path, "codebook")?;
    if ddi::looks_like_xml(&text) {
        ddi::parse(path, text, options, 0)
    } else {
        native::parse_with(path, text, options)
    }
}
