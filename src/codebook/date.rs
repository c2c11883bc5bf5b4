//! ISO 8601 calendar dates (`YYYY-MM-DD`) as day numbers.
//!
//! Survey files carry interview and event dates; the checker must reject impossible dates
//! (2023-02-29) and compare dates against range bounds and condition literals. A day number
//! (days since 1970-01-01, proleptic Gregorian) makes every comparison an integer comparison,
//! and parsing needs no allocation, which matters in the row loop.

/// Parse an ISO 8601 calendar date in the extended form `YYYY-MM-DD`.
///
/// Returns the day number (days since 1970-01-01) or `None` when the text is not a valid
/// calendar date. Surrounding whitespace is not accepted; callers trim cells first.
pub fn parse_iso_date(text: &str) -> Option<i32> {
    let b = text.as_bytes();
    if b.len() != 10 || b[4] != b'-' || b[7] != b'-' {
        return None;
    }
    let year = digits(&b[0..4])? as i32;
    let month = digits(&b[5..7])?;
    let day = digits(&b[8..10])?;
    if !(1..=12).contains(&month) || day < 1 || day > days_in_month(year, month) {
        return None;
    }
    Some(days_from_civil(year, month, day))
}

/// Format a day number back as `YYYY-MM-DD`.
pub fn format_iso_date(days: i32) -> String {
    let (y, m, d) = civil_from_days(days);
    format!("{y:04}-{m:02}-{d:02}")
}

fn digits(b: &[u8]) -> Option<u32> {
    let mut n = 0u32;
    for &c in b {
        if !c.is_ascii_digit() {
            return None;
        }
        n = n * 10 + u32::from(c - b'0');
    }
    Some(n)
}

fn is_leap(year: i32) -> bool {
    (year % 4 == 0 && year % 100 != 0) || year % 400 == 0
}

fn days_in_month(year: i32, month: u32) -> u32 {
    match month {
        2 if is_leap(year) => 29,
        2 => 28,
        4 | 6 | 9 | 11 => 30,
        _ => 31,
    }
}

// Howard Hinnant's days_from_civil / civil_from_days algorithms ("chrono-Compatible
// Low-Level Date Algorithms"), valid over the whole proleptic Gregorian calendar.
fn days_from_civil(y: i32, m: u32, d: u32) -> i32 {
    let y = if m <= 2 { y - 1 } else { y };
    let era = if y >= 0 { y } else { y - 399 } / 400;
    let yoe = (y - era * 400) as u32;
    let mp = (m + 9) % 12;
    let doy = (153 * mp + 2) / 5 + d - 1;
    let doe = yoe * 365 + yoe / 4 - yoe / 100 + doy;
    era * 146_097 + doe as i32 - 719_468
}

fn civil_from_days(z: i32) -> (i32, u32, u32) {
    let z = z + 719_468;
    let era = if z >= 0 { z } else { z - 146_096 } / 146_097;
    let doe = (z - era * 146_097) as u32;
    let yoe = (doe - doe / 1460 + doe / 36_524 - doe / 146_096) / 365;
    let y = yoe as i32 + era * 400;
    let doy = doe - (365 * yoe + yoe / 4 - yoe / 100);
    let mp = (5 * doy + 2) / 153;
    let d = doy - (153 * mp + 2) / 5 + 1;
    let m = if mp < 10 { mp + 3 } else { mp - 9 };
    (if m <= 2 { y + 1 } else { y }, m, d)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn epoch_and_known_days() {
        // 1970-01-01 is day 0 by definition of the Unix epoch (POSIX.1, "Seconds Since the Epoch").
        assert_eq!(parse_iso_date("1970-01-01"), Some(0));
        // 2000-03-01 is 11017 days after the epoch (POSIX formula: 30 years, 7 leap days, 59 days).
        assert_eq!(parse_iso_date("2000-03-01"), Some(11_017));
        assert_eq!(parse_iso_date("1969-12-31"), Some(-1));
    }

    #[test]
    fn gregorian_leap_rules() {
        // ISO 8601 uses the Gregorian calendar: century years are leap only when divisible by 400.
        assert!(parse_iso_date("2000-02-29").is_some());
        assert!(parse_iso_date("1900-02-29").is_none());
        assert!(parse_iso_date("2024-02-29").is_some());
        assert!(parse_iso_date("2023-02-29").is_none());
        assert!(parse_iso_date("2023-04-31").is_none());
        assert!(parse_iso_date("2023-13-01").is_none());
        assert!(parse_iso_date("2023-00-10").is_none());
    }

    #[test]
    fn rejects_other_shapes() {
        for bad in [
            "2023-1-01",
            "20230101",
            "2023/01/01",
            " 2023-01-01",
            "2023-01-0a",
            "",
        ] {
            assert!(parse_iso_date(bad).is_none(), "{bad}");
        }
    }

    #[test]
    fn round_trip() {
        for d in [-600_000, -1, 0, 1, 11_017, 19_000, 2_932_896] {
            assert_eq!(parse_iso_date(&format_iso_date(d)), Some(d));
        }
    }
}
