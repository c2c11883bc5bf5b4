//! Comparing the file with the figures its producer documented.
//!
//! Published frequencies and summary statistics are the cheapest proof that a file is the
//! one the codebook describes. Frequencies must match exactly; statistics must match to the
//! rounding of the documented figure (half a unit in its last written decimal place).

use super::findings::{Example, Findings, Target};
use super::tally::Tally;
use crate::codebook::model::{format_number, Codebook};

/// Decimal places of a figure as it would be written (shortest round-trip form).
fn written_decimals(x: f64) -> i32 {
    let s = format!("{x}");
    match s.split_once('.') {
        Some((_, frac)) => frac.len() as i32,
        None => 0,
    }
}

/// Does `found` agree with `documented` to the documented figure's rounding?
pub fn agrees(documented: f64, found: f64) -> bool {
    let tolerance = 0.5 * 10f64.powi(-written_decimals(documented));
    (documented - found).abs() <= tolerance * (1.0 + 1e-9)
}

pub fn compare(codebook: &Codebook, tallies: &[Tally], findings: &mut Findings) {
    for (v, (var, tally)) in codebook.variables.iter().zip(tallies).enumerate() {
        let mut differ = Vec::new();
        for (cat, &found) in var.categories.iter().zip(&tally.categories) {
            if let Some(doc) = cat.frequency {
                if doc != found {
                    differ.push(Example {
                        row: None,
                        case: None,
                        value: Some(format!("{}: documented {doc}, found {found}", cat.code)),
                    });
                }
            }
        }
        if !differ.is_empty() {
            let detail = format!(
                "{} categories differ from their documented frequency",
                differ.len()
            );
            findings.set(
                "documented.frequency-mismatch",
                Target::Variable(v),
                differ.len() as u64,
                detail,
                differ,
            );
        }
        let Some(doc) = var.documented else { continue };
        let stats = &tally.stats;
        let mut differ = Vec::new();
        if let Some(d) = doc.valid {
            if d != tally.valid {
                differ.push(format!("valid: documented {d}, found {}", tally.valid));
            }
        }
        let figures = [
            ("mean", doc.mean, stats.mean()),
            ("sd", doc.sd, stats.sd()),
            ("min", doc.min, stats.min()),
            ("max", doc.max, stats.max()),
        ];
        for (name, documented, found) in figures {
            let Some(d) = documented else { continue };
            match found {
                Some(f) if agrees(d, f) => {}
                Some(f) => differ.push(format!(
                    "{name}: documented {}, found {}",
                    format_number(d),
                    round_like(f, d)
                )),
                None => differ.push(format!(
                    "{name}: documented {}, found none",
                    format_number(d)
                )),
            }
        }
        if !differ.is_empty() {
            let detail = format!("{} documented figures differ", differ.len());
            let examples = differ
                .into_iter()
                .map(|value| Example {
                    row: None,
                    case: None,
                    value: Some(value),
                })
                .collect::<Vec<_>>();
            findings.set(
                "documented.statistic-mismatch",
                Target::Variable(v),
                examples.len() as u64,
                detail,
                examples,
            );
        }
    }
}

/// Show a found figure with two more decimals than the documented one.
fn round_like(found: f64, documented: f64) -> String {
    let places = (written_decimals(documented) + 2).max(0) as usize;
    format!("{found:.places$}")
}

#[cfg(test)]
mod tests {
    use super::agrees;

    #[test]
    fn rounding_of_the_documented_figure() {
        assert!(agrees(9.27, 9.274_9));
        assert!(agrees(9.27, 9.265));
        assert!(!agrees(9.27, 9.2751));
        assert!(agrees(812.4, 812.36));
        assert!(!agrees(812.4, 812.46));
        assert!(agrees(24.0, 24.4));
        assert!(!agrees(24.0, 24.6));
    }
}
