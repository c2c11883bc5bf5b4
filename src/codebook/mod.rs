//! The codebook: what a data file promises, read from native TOML (and later DDI XML).

pub mod date;
