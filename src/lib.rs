//! concord: check survey data files against their codebook, validate and apply recodes,
//! and write labelled extracts and tables.
//!
//! Data flows one way: codebook -> compiled plan -> record stream -> tallies -> report ->
//! renderer. Each module below owns one of those concepts.

pub mod codebook;
pub mod data;
