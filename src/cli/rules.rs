//! `concord rules [ID]`: the rule table, or one rule's long help.

use super::common::Outcome;
use crate::rules;

#[derive(clap::Args)]
pub struct Args {
    /// A rule id, such as `value.out-of-range`, to explain.
    id: Option<String>,
}

pub fn run(args: Args) -> Outcome {
    match args.id {
        None => {
            let width = rules::all().map(|r| r.id.len()).max().unwrap_or(0);
            let mut out = String::new();
            for r in rules::all() {
                out.push_str(&format!(
                    "{:<width$}  {:<7}  {}\n",
                    r.id,
                    r.severity.name(),
                    r.summary
                ));
            }
            print_or_fail(&out)
        }
        Some(id) => match rules::find(&id) {
            Some(r) => print_or_fail(&format!(
                "{} ({} by default)\n{}\n\n{}\n",
                r.id,
                r.severity.name(),
                r.summary,
                r.explain
            )),
            None => {
                let near = crate::diagnostic::nearest(&id, rules::all().map(|r| r.id));
                eprintln!(
                    "concord: there is no rule `{id}`{}; `concord rules` lists them all",
                    near.map(|n| format!(" (did you mean `{n}`?)"))
                        .unwrap_or_default()
                );
                Outcome::CouldNotRun
            }
        },
    }
}

fn print_or_fail(text: &str) -> Outcome {
    match super::common::emit(text, None, &[]) {
        Ok(()) => Outcome::Passed,
        Err(o) => o,
    }
}
