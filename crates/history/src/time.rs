//! Points in time as the store keeps them: milliseconds since 1970-01-01T00:00:00.
//!
//! No date library is needed for the little the store does with time (parse a rig's
//! start time, stamp a write, print both), so the civil-date arithmetic is here, after
//! H. Hinnant's `days_from_civil` / `civil_from_days` algorithms.

use std::fmt;
use std::time::{SystemTime, UNIX_EPOCH};

/// Milliseconds since 1970-01-01T00:00:00, on whatever clock the value came from.
///
/// Start times are the rigs' (the plant's local clock, no zone); the times the store
/// stamps itself (`stored_at`, a default `decided_at`) are UTC. Parquet keeps both as a
/// timestamp in milliseconds without a zone.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub struct Timestamp {
    unix_ms: i64,
}

const MS_PER_DAY: i64 = 86_400_000;

/// Days from 1970-01-01 to the given proleptic Gregorian date.
fn days_from_civil(year: i64, month: u32, day: u32) -> i64 {
    let year = if month <= 2 { year - 1 } else { year };
    let era = if year >= 0 { year } else { year - 399 } / 400;
    let year_of_era = year - era * 400;
    let month_from_march = i64::from((month + 9) % 12);
    let day_of_year = (153 * month_from_march + 2) / 5 + i64::from(day) - 1;
    let day_of_era = year_of_era * 365 + year_of_era / 4 - year_of_era / 100 + day_of_year;
    era * 146_097 + day_of_era - 719_468
}

/// The proleptic Gregorian date `days` after 1970-01-01.
fn civil_from_days(days: i64) -> (i64, u32, u32) {
    let z = days + 719_468;
    let era = if z >= 0 { z } else { z - 146_096 } / 146_097;
    let day_of_era = z - era * 146_097;
    let year_of_era = (day_of_era - day_of_era / 1460 + day_of_era / 36_524 - day_of_era / 146_096) / 365;
    let day_of_year = day_of_era - (365 * year_of_era + year_of_era / 4 - year_of_era / 100);
    let month_from_march = (5 * day_of_year + 2) / 153;
    let day = (day_of_year - (153 * month_from_march + 2) / 5 + 1) as u32;
    let month = if month_from_march < 10 { month_from_march + 3 } else { month_from_march - 9 } as u32;
    let year = year_of_era + era * 400 + i64::from(month <= 2);
    (year, month, day)
}

impl Timestamp {
    /// The instant `unix_ms` milliseconds after 1970-01-01T00:00:00.
    pub fn from_unix_ms(unix_ms: i64) -> Timestamp {
        Timestamp { unix_ms }
    }

    /// Milliseconds after 1970-01-01T00:00:00.
    pub fn unix_ms(self) -> i64 {
        self.unix_ms
    }

    /// Now, UTC, from the system clock (1970 if the clock is set before it).
    pub fn now() -> Timestamp {
        let ms = SystemTime::now().duration_since(UNIX_EPOCH).map(|d| d.as_millis()).unwrap_or(0);
        Timestamp { unix_ms: i64::try_from(ms).unwrap_or(i64::MAX) }
    }

    /// A time as rigs and people write it (`2026-12-01T14:03`, `2026-12-01 14:03:07.5`,
    /// `01.12.2026 14:03`, or a date alone), read by [`twistlot_model::record::start_key`];
    /// `None` when unreadable or not a calendar date (`2026-02-30`). Fractions beyond
    /// milliseconds are dropped.
    pub fn parse(text: &str) -> Option<Timestamp> {
        let key = twistlot_model::record::start_key(text)?;
        // The key is `YYYY-MM-DDTHH:MM:SS.fffffffff`, digits in fixed places.
        let field = |range: std::ops::Range<usize>| key.get(range)?.parse::<u32>().ok();
        let (year, month, day) = (field(0..4)?, field(5..7)?, field(8..10)?);
        let (hour, minute, second) = (field(11..13)?, field(14..16)?, field(17..19)?);
        let millis = field(20..23)?;
        let days = days_from_civil(i64::from(year), month, day);
        if civil_from_days(days) != (i64::from(year), month, day) {
            return None;
        }
        let seconds = i64::from(hour) * 3600 + i64::from(minute) * 60 + i64::from(second);
        Some(Timestamp { unix_ms: days * MS_PER_DAY + seconds * 1000 + i64::from(millis) })
    }
}

impl fmt::Display for Timestamp {
    /// `YYYY-MM-DDTHH:MM:SS.mmm`.
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let days = self.unix_ms.div_euclid(MS_PER_DAY);
        let ms_of_day = self.unix_ms.rem_euclid(MS_PER_DAY);
        let (year, month, day) = civil_from_days(days);
        let (seconds, millis) = (ms_of_day / 1000, ms_of_day % 1000);
        write!(
            f,
            "{year:04}-{month:02}-{day:02}T{:02}:{:02}:{:02}.{millis:03}",
            seconds / 3600,
            seconds / 60 % 60,
            seconds % 60
        )
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    #[test]
    fn known_instants_match_unix_time() {
        // From memory: POSIX time 946684800 is 2000-01-01T00:00:00Z.
        assert_eq!(Timestamp::parse("2000-01-01T00:00").map(Timestamp::unix_ms), Some(946_684_800_000));
        // From memory: POSIX time 951782400 is 2000-02-29T00:00:00Z (a leap day of a leap century).
        assert_eq!(Timestamp::parse("29.02.2000 00:00").map(Timestamp::unix_ms), Some(951_782_400_000));
        // From memory: POSIX time 1234567890 is 2009-02-13T23:31:30Z.
        assert_eq!(Timestamp::from_unix_ms(1_234_567_890_000).to_string(), "2009-02-13T23:31:30.000");
        assert_eq!(Timestamp::parse("1969-12-31 23:59:59.5").map(Timestamp::unix_ms), Some(-500));
    }

    #[test]
    fn impossible_dates_are_unreadable() {
        // Common practice, no published source: 1900 is not a leap year (divisible by 100, not 400).
        assert_eq!(Timestamp::parse("1900-02-29T00:00"), None);
        assert_eq!(Timestamp::parse("2026-04-31"), None);
        assert_eq!(Timestamp::parse("yesterday"), None);
    }

    proptest! {
        #[test]
        fn printing_and_parsing_round_trip(unix_ms in -62_135_596_800_000i64..253_402_300_799_999) {
            let stamp = Timestamp::from_unix_ms(unix_ms);
            prop_assert_eq!(Timestamp::parse(&stamp.to_string()), Some(stamp));
        }
    }
}
