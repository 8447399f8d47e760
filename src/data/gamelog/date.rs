//! Calendar dates of game logs and `--as-of`: ISO 8601 `YYYY-MM-DD`, checked by jiff.

pub use jiff::civil::Date;

/// Parse exactly `YYYY-MM-DD` (jiff alone would also take `20210401` or a date with a time, which
/// in a game log more likely means a wrong column). The error names what is wrong.
pub fn parse_iso_date(text: &[u8]) -> Result<Date, String> {
    let shown = || super::super::input::shown(&String::from_utf8_lossy(text));
    let expected = || {
        format!(
            "expected an ISO 8601 date (YYYY-MM-DD), found '{}'",
            shown()
        )
    };
    if text.len() != 10 || text[4] != b'-' || text[7] != b'-' {
        return Err(expected());
    }
    let number = |r: std::ops::Range<usize>| -> Option<i16> {
        text[r].iter().try_fold(0i16, |acc, &b| {
            b.is_ascii_digit().then(|| acc * 10 + i16::from(b - b'0'))
        })
    };
    let (Some(year), Some(month), Some(day)) = (number(0..4), number(5..7), number(8..10)) else {
        return Err(expected());
    };
    // Months and days of two digits fit an i8.
    let (month, day) = (month as i8, day as i8);
    if !(1..=12).contains(&month) {
        return Err(format!("{} (there is no month {month})", expected()));
    }
    Date::new(year, month, day).map_err(|_| {
        let days = Date::new(year, month, 1).map_or(31, Date::days_in_month);
        let name = Date::new(year, month, 1)
            .map_or_else(|_| String::new(), |d| d.strftime("%B %Y").to_string());
        format!("{} ({name} has {days} days)", expected())
    })
}

/// `--as-of DATE`: the same rules, for the command line.
pub fn parse_as_of(text: &str) -> Result<Date, String> {
    parse_iso_date(text.trim().as_bytes())
}

/// The date `n` days earlier (proleptic Gregorian calendar), or jiff's first day (-9999-01-01)
/// if that is earlier still.
pub fn days_earlier(date: Date, n: u32) -> Date {
    date.checked_sub(jiff::Span::new().days(i64::from(n)))
        .unwrap_or(Date::MIN)
}

/// A date as one integer that sorts as the date does (years 0 to 9999, as `parse_iso_date` gives).
pub(super) fn packed(d: Date) -> u32 {
    (d.year().max(0) as u32) << 9 | (d.month() as u32) << 5 | d.day() as u32
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn dates_check_the_calendar() {
        // Leap years: every fourth year, except centuries not divisible by 400 (Gregorian rule).
        assert!(parse_iso_date(b"2024-02-29").is_ok());
        assert!(parse_iso_date(b"2000-02-29").is_ok());
        let e = parse_iso_date(b"2023-02-29").unwrap_err();
        assert!(e.contains("February 2023 has 28 days"), "{e}");
        assert!(parse_iso_date(b"1900-02-29").is_err());
        assert!(
            parse_iso_date(b"2024-13-01")
                .unwrap_err()
                .contains("no month 13")
        );
        assert!(
            parse_iso_date(b"2024-04-31")
                .unwrap_err()
                .contains("April 2024 has 30 days")
        );
        assert!(parse_iso_date(b"24-04-01").is_err());
        assert!(parse_iso_date(b"20240401").is_err());
        assert!(parse_iso_date(b"2024/04/01").is_err());
        assert!(parse_iso_date(b"2024-04-01T10").is_err());
        let (a, b) = (
            parse_iso_date(b"2024-04-01").unwrap(),
            parse_iso_date(b"2024-04-02").unwrap(),
        );
        assert!(a < b && packed(a) < packed(b));
        assert!(packed(parse_iso_date(b"2023-12-31").unwrap()) < packed(a));
        assert_eq!(
            parse_as_of(" 2026-04-02 ").unwrap().to_string(),
            "2026-04-02"
        );
    }

    #[test]
    fn control_characters_are_never_echoed_raw() {
        let e = parse_iso_date(b"2024-\x1b[31m").unwrap_err();
        assert!(!e.contains('\x1b') && e.contains("\\x1b"), "{e}");
    }
}
