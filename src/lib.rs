//! concord: check survey data files against their codebook, validate and apply recodes,
//! and write labelled extracts and tables.
//!
//! Data flows one way: codebook -> compiled plan -> record stream -> tallies -> report ->
//! renderer. Each module below owns one of those concepts.

// Errors that stop a command carry the file's text and a span for the diagnostic; they are
// built once per run, so their size does not matter.
#![allow(clippy::result_large_err)]

pub mod check;
pub mod cli;
pub mod codebook;
pub mod condition;
pub mod data;
pub mod diagnostic;
pub mod extract;
pub mod output;
pub mod recode;
pub mod report;
pub mod rules;
pub mod tables;
