//! Dates and times as the store writes them: `YYYY-MM-DD`, and UTC times to the
//! millisecond, `YYYY-MM-DDTHH:MM:SS.mmmZ` (the same text in every table and audit image).

use chrono::{DateTime, NaiveDate, Utc};

/// The first and last year of the dates shardlog keeps. Every date it writes has four digits
/// and reads back; a year outside this range is a typing slip, not a breakage on record.
pub const FIRST_YEAR: i32 = 1900;
pub const LAST_YEAR: i32 = 2199;

/// Whether a date lies in the range shardlog keeps ([`FIRST_YEAR`] to [`LAST_YEAR`]).
pub fn date_in_range(d: NaiveDate) -> bool {
    use chrono::Datelike;
    (FIRST_YEAR..=LAST_YEAR).contains(&d.year())
}

/// Why a date outside the range is refused, naming it and the range.
pub fn out_of_range_message(shown: impl std::fmt::Display) -> String {
    format!("{shown} is outside the dates shardlog keeps ({FIRST_YEAR}-01-01 to {LAST_YEAR}-12-31)")
}

/// A time as stored.
pub(crate) fn fmt_time(at: DateTime<Utc>) -> String {
    use chrono::{Datelike, Timelike};
    format!(
        "{:04}-{:02}-{:02}T{:02}:{:02}:{:02}.{:03}Z",
        at.year(),
        at.month(),
        at.day(),
        at.hour(),
        at.minute(),
        at.second(),
        at.timestamp_subsec_millis().min(999)
    )
}

/// A stored time; None for text that is not one.
pub(crate) fn parse_time(s: &str) -> Option<DateTime<Utc>> {
    DateTime::parse_from_rfc3339(s)
        .ok()
        .map(|d| d.with_timezone(&Utc))
}

/// A date as stored.
pub(crate) fn fmt_date(d: NaiveDate) -> String {
    use chrono::Datelike;
    format!("{:04}-{:02}-{:02}", d.year(), d.month(), d.day())
}

/// A stored date; None for text that is not one.
pub(crate) fn parse_date(s: &str) -> Option<NaiveDate> {
    // fast path for the form the store writes (YYYY-MM-DD): the format parser is most of
    // the cost of reading a million dates for fleet statistics
    let b = s.as_bytes();
    let digits = |r: std::ops::Range<usize>| {
        b[r].iter().try_fold(0u32, |n, c| {
            c.is_ascii_digit().then(|| n * 10 + u32::from(c - b'0'))
        })
    };
    if b.len() == 10 && b[4] == b'-' && b[7] == b'-' {
        if let (Some(y), Some(m), Some(d)) = (digits(0..4), digits(5..7), digits(8..10)) {
            return NaiveDate::from_ymd_opt(y as i32, m, d);
        }
    }
    NaiveDate::parse_from_str(s, "%Y-%m-%d").ok()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn time_format_round_trips() {
        let t = DateTime::parse_from_rfc3339("2026-03-14T09:10:00.120Z")
            .unwrap()
            .with_timezone(&Utc);
        assert_eq!(fmt_time(t), "2026-03-14T09:10:00.120Z");
        assert_eq!(parse_time(&fmt_time(t)), Some(t));
    }

    #[test]
    fn parse_date_fast_path_agrees_with_the_format_parser() {
        for s in [
            "2024-01-01",
            "2024-02-29",
            "2023-02-29",
            "2026-12-31",
            "2026-13-01",
            "2026-00-10",
            "2026-04-31",
            "0999-05-05",
            "2026-1-1",
            "2026-01-1x",
            "20x6-01-01",
            "+2026-01-01",
            "",
        ] {
            assert_eq!(
                parse_date(s),
                NaiveDate::parse_from_str(s, "%Y-%m-%d").ok(),
                "{s}"
            );
        }
        assert_eq!(
            parse_date("2024-02-29"),
            NaiveDate::from_ymd_opt(2024, 2, 29)
        );
        assert_eq!(parse_date("2023-02-29"), None);
    }
}
