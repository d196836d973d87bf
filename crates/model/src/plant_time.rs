//! Plant-local wall-clock times, as the shift files write them.
//!
//! A plant plans in its own local time: `2026-12-02T06:00` means six in the morning on
//! the shop floor, whatever the time zone or daylight-saving rule. The files therefore
//! carry no offset, and twistlot never converts: every time in one shift is in the same
//! local frame. A shift that spans a daylight-saving change is planned as if the clock
//! did not jump (the hour gained or lost is not modelled).

use serde::{Deserialize, Serialize};
use std::fmt;
use std::str::FromStr;
use time::{Date, Duration, Month, PrimitiveDateTime, Time};

/// A plant-local date and time to the whole second, written `YYYY-MM-DDTHH:MM[:SS]`
/// with no offset (ISO 8601 local time).
///
/// Displayed and serialised as `YYYY-MM-DDTHH:MM:SS`, which parses back unchanged.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub struct PlantTime(PrimitiveDateTime);

/// A text that is not a plant-local time, or a time of day.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
#[error("`{text}` is not {expected}")]
pub struct BadTime {
    /// The text as given.
    pub text: String,
    /// What was expected instead, in words.
    pub expected: &'static str,
}

const DATE_TIME_FORM: &str = "a plant-local date and time (write YYYY-MM-DDTHH:MM or YYYY-MM-DDTHH:MM:SS, \
                              no offset, e.g. 2026-12-02T06:00)";
const CLOCK_FORM: &str = "a time of day (write HH:MM or HH:MM:SS, e.g. 22:00)";

impl PlantTime {
    /// Wraps a date-time, dropping any fraction of a second.
    pub fn new(at: PrimitiveDateTime) -> PlantTime {
        PlantTime(at.replace_nanosecond(0).unwrap_or(at))
    }

    /// The date-time inside.
    pub fn get(self) -> PrimitiveDateTime {
        self.0
    }

    /// The calendar date.
    pub fn date(self) -> Date {
        self.0.date()
    }

    /// The time of day.
    pub fn time(self) -> Time {
        self.0.time()
    }

    /// Seconds from `earlier` to `self` (negative when `self` comes first).
    pub fn seconds_since(self, earlier: PlantTime) -> i64 {
        (self.0 - earlier.0).whole_seconds()
    }

    /// This time moved by `seconds` (either sign); `None` past the calendar's range.
    pub fn checked_add_seconds(self, seconds: i64) -> Option<PlantTime> {
        self.0.checked_add(Duration::seconds(seconds)).map(PlantTime)
    }
}

impl From<PrimitiveDateTime> for PlantTime {
    fn from(at: PrimitiveDateTime) -> Self {
        PlantTime::new(at)
    }
}

impl fmt::Display for PlantTime {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let (date, clock) = (self.0.date(), self.0.time());
        write!(
            f,
            "{:04}-{:02}-{:02}T{:02}:{:02}:{:02}",
            date.year(),
            u8::from(date.month()),
            date.day(),
            clock.hour(),
            clock.minute(),
            clock.second()
        )
    }
}

fn digits(text: &str, width: usize) -> Option<u32> {
    if text.len() != width || !text.bytes().all(|b| b.is_ascii_digit()) {
        return None;
    }
    text.parse().ok()
}

/// Parses `HH:MM` or `HH:MM:SS` (24-hour clock, two digits each).
fn parse_clock(text: &str) -> Option<Time> {
    let mut parts = text.split(':');
    let hour = digits(parts.next()?, 2)?;
    let minute = digits(parts.next()?, 2)?;
    let second = match parts.next() {
        Some(s) => digits(s, 2)?,
        None => 0,
    };
    if parts.next().is_some() {
        return None;
    }
    Time::from_hms(u8::try_from(hour).ok()?, u8::try_from(minute).ok()?, u8::try_from(second).ok()?).ok()
}

fn parse_date(text: &str) -> Option<Date> {
    let mut parts = text.split('-');
    let year = digits(parts.next()?, 4)?;
    let month = digits(parts.next()?, 2)?;
    let day = digits(parts.next()?, 2)?;
    if parts.next().is_some() {
        return None;
    }
    let month = Month::try_from(u8::try_from(month).ok()?).ok()?;
    Date::from_calendar_date(i32::try_from(year).ok()?, month, u8::try_from(day).ok()?).ok()
}

impl FromStr for PlantTime {
    type Err = BadTime;

    fn from_str(text: &str) -> Result<Self, BadTime> {
        let bad = || BadTime { text: text.to_string(), expected: DATE_TIME_FORM };
        let (date, clock) = text.trim().split_once('T').ok_or_else(bad)?;
        let date = parse_date(date).ok_or_else(bad)?;
        let clock = parse_clock(clock).ok_or_else(bad)?;
        Ok(PlantTime(PrimitiveDateTime::new(date, clock)))
    }
}

impl Serialize for PlantTime {
    fn serialize<S: serde::Serializer>(&self, serializer: S) -> Result<S::Ok, S::Error> {
        serializer.collect_str(self)
    }
}

/// Deserialises any `FromStr` type from a string through a visitor, so that YAML errors
/// carry the scalar's own line and field path (an error raised after the string is read
/// would point at the enclosing mapping instead).
pub(crate) struct ParseVisitor<T>(std::marker::PhantomData<T>, &'static str);

impl<T> ParseVisitor<T> {
    pub(crate) fn new(expected: &'static str) -> Self {
        ParseVisitor(std::marker::PhantomData, expected)
    }
}

impl<T> serde::de::Visitor<'_> for ParseVisitor<T>
where
    T: FromStr,
    T::Err: fmt::Display,
{
    type Value = T;

    fn expecting(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.1)
    }

    fn visit_str<E: serde::de::Error>(self, text: &str) -> Result<T, E> {
        text.parse().map_err(E::custom)
    }
}

impl<'de> Deserialize<'de> for PlantTime {
    fn deserialize<D: serde::Deserializer<'de>>(deserializer: D) -> Result<Self, D::Error> {
        deserializer.deserialize_str(ParseVisitor::new(DATE_TIME_FORM))
    }
}

/// A plant-local time of day (`HH:MM[:SS]`), for hours that recur every shift.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub struct ClockTime(Time);

impl ClockTime {
    /// Wraps a time of day, dropping any fraction of a second.
    pub fn new(at: Time) -> ClockTime {
        ClockTime(at.replace_nanosecond(0).unwrap_or(at))
    }

    /// The time of day inside.
    pub fn get(self) -> Time {
        self.0
    }

    /// The occurrence of this time of day nearest to `near` (the later one when two are
    /// equally near, twelve hours either side).
    pub fn nearest_to(self, near: PlantTime) -> PlantTime {
        let date = near.date();
        let candidates = [date.previous_day(), Some(date), date.next_day()];
        let mut best: Option<(i64, PlantTime)> = None;
        for day in candidates.into_iter().flatten() {
            let at = PlantTime(PrimitiveDateTime::new(day, self.0));
            let distance = at.seconds_since(near).abs();
            if best.is_none_or(|(d, _)| distance <= d) {
                best = Some((distance, at));
            }
        }
        best.map_or(near, |(_, at)| at)
    }

    /// The first occurrence of this time of day strictly after `after`.
    pub fn next_after(self, after: PlantTime) -> PlantTime {
        let same_day = PlantTime(PrimitiveDateTime::new(after.date(), self.0));
        if same_day > after {
            return same_day;
        }
        match after.date().next_day() {
            Some(day) => PlantTime(PrimitiveDateTime::new(day, self.0)),
            None => same_day,
        }
    }
}

impl fmt::Display for ClockTime {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{:02}:{:02}:{:02}", self.0.hour(), self.0.minute(), self.0.second())
    }
}

impl FromStr for ClockTime {
    type Err = BadTime;

    fn from_str(text: &str) -> Result<Self, BadTime> {
        parse_clock(text.trim())
            .map(ClockTime)
            .ok_or_else(|| BadTime { text: text.to_string(), expected: CLOCK_FORM })
    }
}

impl Serialize for ClockTime {
    fn serialize<S: serde::Serializer>(&self, serializer: S) -> Result<S::Ok, S::Error> {
        serializer.collect_str(self)
    }
}

impl<'de> Deserialize<'de> for ClockTime {
    fn deserialize<D: serde::Deserializer<'de>>(deserializer: D) -> Result<Self, D::Error> {
        deserializer.deserialize_str(ParseVisitor::new(CLOCK_FORM))
    }
}

/// A plant's offset from UTC as its config states it (`utc_offset: "+01:00"`), for
/// stamping outputs with the plant's wall-clock time to the second.
///
/// A fixed offset, not a time-zone rule: a plant whose clocks change for daylight saving
/// changes the config at the changeover. Every stamp carries its offset, so a stamp is
/// never ambiguous whichever offset was in force.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct PlantOffset {
    minutes: i32,
}

const OFFSET_FORM: &str = "an offset from UTC (write +HH:MM or -HH:MM, e.g. +01:00, or UTC)";

impl PlantOffset {
    /// UTC itself.
    pub const UTC: PlantOffset = PlantOffset { minutes: 0 };

    /// Minutes east of UTC (negative west of it).
    pub fn minutes(self) -> i32 {
        self.minutes
    }

    /// The plant's wall-clock time at `unix_seconds` (seconds since 1970-01-01T00:00Z).
    pub fn local(self, unix_seconds: i64) -> Option<PlantTime> {
        let epoch = PlantTime(PrimitiveDateTime::new(
            Date::from_calendar_date(1970, Month::January, 1).ok()?,
            Time::MIDNIGHT,
        ));
        epoch.checked_add_seconds(unix_seconds.checked_add(i64::from(self.minutes) * 60)?)
    }

    /// `YYYY-MM-DD HH:MM:SS ±HH:MM` at `unix_seconds`: the plant's wall clock to the second.
    pub fn stamp(self, unix_seconds: i64) -> String {
        match self.local(unix_seconds) {
            Some(local) => format!("{} {self}", local.to_string().replace('T', " ")),
            None => format!("{unix_seconds} s after 1970-01-01T00:00Z"),
        }
    }
}

impl fmt::Display for PlantOffset {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let sign = if self.minutes < 0 { '-' } else { '+' };
        let minutes = self.minutes.unsigned_abs();
        write!(f, "{sign}{:02}:{:02}", minutes / 60, minutes % 60)
    }
}

impl FromStr for PlantOffset {
    type Err = BadTime;

    fn from_str(text: &str) -> Result<Self, BadTime> {
        let bad = || BadTime { text: text.to_string(), expected: OFFSET_FORM };
        let trimmed = text.trim();
        if trimmed.eq_ignore_ascii_case("utc") || trimmed == "Z" {
            return Ok(PlantOffset::UTC);
        }
        let (sign, rest) = match trimmed.chars().next() {
            Some('+') => (1, &trimmed[1..]),
            Some('-') | Some('−') => (-1, trimmed.trim_start_matches(['-', '−'])),
            _ => return Err(bad()),
        };
        let (hours, minutes) = rest.split_once(':').ok_or_else(bad)?;
        let hours = digits(hours, 2).ok_or_else(bad)?;
        let minutes = digits(minutes, 2).ok_or_else(bad)?;
        // Offsets in use run from −12:00 to +14:00.
        if minutes >= 60 || hours > 14 || (hours == 14 && minutes > 0) {
            return Err(bad());
        }
        Ok(PlantOffset { minutes: sign * (hours * 60 + minutes) as i32 })
    }
}

impl Serialize for PlantOffset {
    fn serialize<S: serde::Serializer>(&self, serializer: S) -> Result<S::Ok, S::Error> {
        serializer.collect_str(self)
    }
}

impl<'de> Deserialize<'de> for PlantOffset {
    fn deserialize<D: serde::Deserializer<'de>>(deserializer: D) -> Result<Self, D::Error> {
        deserializer.deserialize_str(ParseVisitor::new(OFFSET_FORM))
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    #[test]
    fn offsets_parse_print_and_stamp_to_the_second() {
        let offset = |t: &str| t.parse::<PlantOffset>().unwrap();
        assert_eq!(offset("+01:00").minutes(), 60);
        assert_eq!(offset("-05:30").to_string(), "-05:30");
        assert_eq!(offset("UTC"), PlantOffset::UTC);
        assert_eq!(PlantOffset::UTC.to_string(), "+00:00");
        for bad in ["01:00", "+1:00", "+15:00", "+01:60", "CET", "", "+01"] {
            let err = bad.parse::<PlantOffset>().unwrap_err();
            assert!(err.to_string().contains("+HH:MM"), "{bad}: {err}");
        }
        // Source: POSIX time 946684800 is 2000-01-01T00:00:00Z (IEEE Std 1003.1, "Seconds Since the Epoch").
        assert_eq!(offset("+01:00").stamp(946_684_800), "2000-01-01 01:00:00 +01:00");
        assert_eq!(offset("-05:30").stamp(946_684_800 + 59), "1999-12-31 18:30:59 -05:30");
        assert_eq!(PlantOffset::UTC.stamp(946_684_800), "2000-01-01 00:00:00 +00:00");
    }

    fn at(text: &str) -> PlantTime {
        text.parse().unwrap()
    }

    #[test]
    fn minutes_and_seconds_forms_parse() {
        assert_eq!(at("2026-12-02T06:00"), at("2026-12-02T06:00:00"));
        assert_eq!(at("2026-12-02T06:00").to_string(), "2026-12-02T06:00:00");
        assert_eq!(at("2026-12-02T06:00:30").seconds_since(at("2026-12-01T22:00")), 8 * 3600 + 30);
    }

    #[test]
    fn bad_times_are_refused_with_the_expected_form() {
        for text in [
            "2026-12-02",
            "2026-12-02 06:00",
            "2026-13-02T06:00",
            "2026-02-30T06:00",
            "2026-12-02T24:00",
            "2026-12-02T06:60",
            "2026-12-02T06:00+01:00",
            "2026-12-02T06:00Z",
            "2026-12-02T06:00:00.5",
            "26-12-02T06:00",
            "2026-12-2T06:00",
            "",
        ] {
            let err = text.parse::<PlantTime>().unwrap_err();
            assert!(err.to_string().contains("YYYY-MM-DDTHH:MM"), "{text}: {err}");
        }
    }

    #[test]
    fn times_of_day_resolve_around_a_shift_start() {
        let start = at("2026-12-01T22:00");
        let clock = |t: &str| t.parse::<ClockTime>().unwrap();
        assert_eq!(clock("21:00").nearest_to(start), at("2026-12-01T21:00"));
        assert_eq!(clock("02:00").nearest_to(start), at("2026-12-02T02:00"));
        // Twelve hours either side: the later one.
        assert_eq!(clock("10:00").nearest_to(start), at("2026-12-02T10:00"));
        assert_eq!(clock("06:00").next_after(at("2026-12-01T22:00")), at("2026-12-02T06:00"));
        assert_eq!(clock("23:00").next_after(at("2026-12-01T22:00")), at("2026-12-01T23:00"));
        assert_eq!(clock("22:00").next_after(at("2026-12-01T22:00")), at("2026-12-02T22:00"));
        assert!("25:00".parse::<ClockTime>().is_err());
        assert!("7:00".parse::<ClockTime>().is_err());
    }

    #[test]
    fn serde_uses_the_written_form() {
        let yaml = serde_yaml::to_string(&at("2026-12-02T06:05")).unwrap();
        assert_eq!(yaml.trim().trim_matches('\''), "2026-12-02T06:05:00");
        let back: PlantTime = serde_yaml::from_str("2026-12-02T06:05").unwrap();
        assert_eq!(back, at("2026-12-02T06:05"));
        let err = serde_yaml::from_str::<PlantTime>("'06:05'").unwrap_err();
        assert!(err.to_string().contains("not a plant-local date and time"), "{err}");
    }

    proptest! {
        #[test]
        fn display_parses_back(days in 0i64..40_000, seconds in 0i64..86_400) {
            let origin = at("1970-01-01T00:00");
            let time = origin.checked_add_seconds(days * 86_400 + seconds).unwrap();
            let text = time.to_string();
            prop_assert_eq!(text.parse::<PlantTime>().unwrap(), time);
            prop_assert_eq!(time.seconds_since(origin), days * 86_400 + seconds);
        }

        #[test]
        fn arbitrary_text_never_panics(text in "\\PC{0,24}") {
            let _ = text.parse::<PlantTime>();
            let _ = text.parse::<ClockTime>();
        }
    }
}
