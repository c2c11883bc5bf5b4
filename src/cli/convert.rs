//! `concord convert CODEBOOK -o OUT`: DDI Codebook XML to native TOML and back.

use std::path::{Path, PathBuf};

use clap::ValueEnum;

use super::common::{could_not_run, Outcome};
use crate::codebook::{self, ddi, write_toml};

#[derive(clap::Args)]
pub struct Args {
    /// The codebook file (native TOML or DDI Codebook XML).
    codebook: PathBuf,
    /// The file to write; `.xml` writes DDI, `.toml` the native format.
    #[arg(short, long, value_name = "FILE")]
    output: PathBuf,
    /// The output format, when the extension does not tell.
    #[arg(long, value_enum)]
    to: Option<Target>,
    /// The DDI fileDscr to describe, when the codebook has several.
    #[arg(long, value_name = "ID")]
    file_id: Option<String>,
    /// Do not list what the output format cannot carry exactly.
    #[arg(short, long)]
    quiet: bool,
}

#[derive(Clone, Copy, PartialEq, Eq, ValueEnum)]
enum Target {
    /// DDI Codebook 2.5 XML.
    Ddi,
    /// The native TOML codebook.
    Toml,
}

pub fn run(args: Args) -> Outcome {
    let target = match args.to.or_else(|| from_extension(&args.output)) {
        Some(t) => t,
        None => {
            eprintln!(
                "concord: cannot tell the output format from `{}`; name it .xml or .toml, or give --to ddi|toml",
                args.output.display()
            );
            return Outcome::CouldNotRun;
        }
    };
    let options = codebook::Options {
        file_id: args.file_id.clone(),
    };
    let loaded = match codebook::load_with(&args.codebook, &options) {
        Ok(l) => l,
        Err(e) => return could_not_run(e),
    };
    let inputs: Vec<&Path> = std::iter::once(args.codebook.as_path())
        .chain(loaded.codebook.sources.iter().map(|s| s.path.as_path()))
        .collect();
    if let Err(e) = crate::output::refuse_input(&args.output, &inputs) {
        return could_not_run(e);
    }
    let (text, not_carried) = match target {
        Target::Ddi => {
            let written = ddi::write::to_ddi(&loaded.codebook);
            (written.xml, written.not_carried)
        }
        Target::Toml => {
            let origin = args
                .codebook
                .file_name()
                .map(|n| n.to_string_lossy().into_owned());
            let options = write_toml::TomlOptions {
                header: origin
                    .map(|o| format!("Written by concord from {o}."))
                    .into_iter()
                    .collect(),
                ..Default::default()
            };
            (write_toml::to_toml(&loaded.codebook, &options), Vec::new())
        }
    };
    if let Err(e) = crate::output::write_atomic(&args.output, |w| w.write_all(text.as_bytes())) {
        return could_not_run(e);
    }
    if !args.quiet && !not_carried.is_empty() {
        eprintln!(
            "concord: wrote {}; DDI cannot carry these exactly (keep them in a native overlay with `base = \"{}\"`):",
            args.output.display(),
            args.output.file_name().map(|n| n.to_string_lossy()).unwrap_or_default()
        );
        for line in &not_carried {
            eprintln!("  - {line}");
        }
    }
    Outcome::Passed
}

fn from_extension(path: &Path) -> Option<Target> {
    match path.extension()?.to_str()?.to_ascii_lowercase().as_str() {
        "xml" => Some(Target::Ddi),
        "toml" => Some(Target::Toml),
        _ => None,
    }
}
