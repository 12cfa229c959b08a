//! Local standard time as whole minutes since 1970-01-01T00:00, with the civil (proleptic
//! Gregorian) calendar written out here so the runner needs no date crate.
//!
//! The day count from a calendar date uses the usual trick of starting the year on 1 March, so
//! the leap day is the last day of the counted year and every 400-year era has 146 097 days.

use std::fmt;

/// Minutes in a day.
const MINUTES_PER_DAY: i64 = 1440;
/// Days from 0000-03-01 to 1970-01-01 in the proleptic Gregorian calendar.
const EPOCH_SHIFT_DAYS: i64 = 719_468;
/// Days in a 400-year Gregorian era.
const DAYS_PER_ERA: i64 = 146_097;

/// A time that could not be read or built: what was wrong and the form that is expected.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct TimeError(String);

impl fmt::Display for TimeError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&self.0)
    }
}

impl std::error::Error for TimeError {}

/// A moment in the site's local standard time (fixed UTC offset, no daylight saving), counted in
/// whole minutes since 1970-01-01T00:00 of that time. Years 1 to 9999 can be built and printed.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub struct LocalTime {
    minutes: i64,
}

/// A calendar day in the site's local standard time (the key for daily aggregation), counted in
/// days since 1970-01-01. Prints as `YYYY-MM-DD`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub struct LocalDate {
    days: i64,
}

fn is_leap_year(year: i64) -> bool {
    (year % 4 == 0 && year % 100 != 0) || year % 400 == 0
}

fn days_in_month(year: i64, month: u32) -> u32 {
    match month {
        4 | 6 | 9 | 11 => 30,
        2 if is_leap_year(year) => 29,
        2 => 28,
        _ => 31,
    }
}

/// Days since 1970-01-01 of a valid calendar date.
pub(crate) fn days_from_civil(year: i64, month: u32, day: u32) -> i64 {
    // January and February count as months 10 and 11 of the previous March-based year.
    let y = if month <= 2 { year - 1 } else { year };
    let era = y.div_euclid(400);
    let year_of_era = y.rem_euclid(400);
    let month_from_march = i64::from((month + 9) % 12);
    // Month lengths from March repeat 31,30,31,30,31 — (153·m + 2)/5 counts the days before month m.
    let day_of_year = (153 * month_from_march + 2) / 5 + i64::from(day) - 1;
    let day_of_era = year_of_era * 365 + year_of_era / 4 - year_of_era / 100 + day_of_year;
    era * DAYS_PER_ERA + day_of_era - EPOCH_SHIFT_DAYS
}

/// Calendar date (year, month, day) of a day count since 1970-01-01; inverse of `days_from_civil`.
pub(crate) fn civil_from_days(days: i64) -> (i64, u32, u32) {
    let z = days + EPOCH_SHIFT_DAYS;
    let era = z.div_euclid(DAYS_PER_ERA);
    let day_of_era = z.rem_euclid(DAYS_PER_ERA);
    // Remove the leap days (one per 4 years, less one per century, plus one per era) to get years.
    let year_of_era = (day_of_era - day_of_era / 1460 + day_of_era / 36_524
        - day_of_era / (DAYS_PER_ERA - 1))
        / 365;
    let day_of_year = day_of_era - (365 * year_of_era + year_of_era / 4 - year_of_era / 100);
    let month_from_march = (5 * day_of_year + 2) / 153;
    let day = day_of_year - (153 * month_from_march + 2) / 5 + 1;
    let month = if month_from_march < 10 {
        month_from_march + 3
    } else {
        month_from_march - 9
    };
    let year = year_of_era + era * 400 + i64::from(month <= 2);
    (year, month as u32, day as u32)
}

/// Parses an unsigned decimal field of exactly `s.len()` ASCII digits.
fn digits(s: &str) -> Option<u32> {
    if s.is_empty() || !s.bytes().all(|b| b.is_ascii_digit()) {
        return None;
    }
    s.parse().ok()
}

impl LocalTime {
    /// The time `minutes` whole minutes after 1970-01-01T00:00 local standard time.
    pub fn from_minutes(minutes: i64) -> Self {
        Self { minutes }
    }

    /// Whole minutes since 1970-01-01T00:00 local standard time.
    pub fn minutes(self) -> i64 {
        self.minutes
    }

    /// Builds a time from a calendar date (year 1–9999, month 1–12, day of month) and a time of day
    /// (hour 0–23, minute 0–59), rejecting impossible dates such as 2025-02-29.
    pub fn from_ymdhm(
        year: i32,
        month: u32,
        day: u32,
        hour: u32,
        minute: u32,
    ) -> Result<Self, TimeError> {
        let y = i64::from(year);
        if !(1..=9999).contains(&year) {
            return Err(TimeError(format!("year {year} is outside 1–9999")));
        }
        if !(1..=12).contains(&month) {
            return Err(TimeError(format!("month {month} is outside 1–12")));
        }
        let last = days_in_month(y, month);
        if day < 1 || day > last {
            return Err(TimeError(format!(
                "day {day} does not exist in {year:04}-{month:02} (it has {last} days)"
            )));
        }
        if hour > 23 || minute > 59 {
            return Err(TimeError(format!(
                "time of day {hour:02}:{minute:02} is outside 00:00–23:59"
            )));
        }
        let days = days_from_civil(y, month, day);
        Ok(Self {
            minutes: days * MINUTES_PER_DAY + i64::from(hour * 60 + minute),
        })
    }

    /// Like [`LocalTime::from_ymdhm`], but also accepts hour 24 with minute 0, the end of the day's
    /// last hour (as hour-ending files write it): that is 00:00 of the next day.
    pub fn from_ymdhm_24(
        year: i32,
        month: u32,
        day: u32,
        hour: u32,
        minute: u32,
    ) -> Result<Self, TimeError> {
        if hour == 24 && minute == 0 {
            return Ok(Self::from_ymdhm(year, month, day, 0, 0)?.plus_minutes(MINUTES_PER_DAY));
        }
        Self::from_ymdhm(year, month, day, hour, minute)
    }

    /// A time from a year, a day of the year (1 on 1 January) and a time of day (hour 0–24, where
    /// 24 needs minute 0 and means the end of the day).
    pub fn from_year_doy(year: i32, doy: u32, hour: u32, minute: u32) -> Result<Self, TimeError> {
        if !(1..=9999).contains(&year) {
            return Err(TimeError(format!("year {year} is outside 1–9999")));
        }
        let last = if is_leap_year(i64::from(year)) {
            366
        } else {
            365
        };
        if doy < 1 || doy > last {
            return Err(TimeError(format!(
                "day of year {doy} does not exist in {year:04} (it has {last} days)"
            )));
        }
        let jan1 = Self::from_ymdhm_24(year, 1, 1, hour, minute)?;
        Ok(jan1.plus_minutes(i64::from(doy - 1) * MINUTES_PER_DAY))
    }

    /// The same day of the year's calendar date and time of day in another `year` (a typical
    /// year's relabelling); 29 February cannot move to a year without one.
    pub fn with_year(self, year: i32) -> Result<Self, TimeError> {
        let of_day = self.minutes.rem_euclid(MINUTES_PER_DAY);
        let d = self.date();
        Self::from_ymdhm(
            year,
            d.month(),
            d.day(),
            (of_day / 60) as u32,
            (of_day % 60) as u32,
        )
    }

    /// Parses ISO 8601 `YYYY-MM-DDTHH:MM`, optionally with `:SS` (which must be `00`: isodisc works
    /// in whole minutes) and with a space instead of the `T`.
    pub fn parse_iso(s: &str) -> Result<Self, TimeError> {
        Self::parse_iso_with(s, false)
    }

    /// [`LocalTime::parse_iso`], with `allow_24`: `T24:00` is accepted as the end of the day.
    pub fn parse_iso_with(s: &str, allow_24: bool) -> Result<Self, TimeError> {
        let expected = "expected YYYY-MM-DDTHH:MM[:SS] (a space may replace the T)";
        let b = s.as_bytes();
        let shape_ok = (b.len() == 16 || b.len() == 19)
            && b[4] == b'-'
            && b[7] == b'-'
            && (b[10] == b'T' || b[10] == b' ')
            && b[13] == b':'
            && (b.len() == 16 || b[16] == b':');
        if !shape_ok {
            return Err(TimeError(expected.to_string()));
        }
        let field = |r: std::ops::Range<usize>| digits(&s[r]);
        let (Some(y), Some(mo), Some(d), Some(h), Some(mi)) = (
            field(0..4),
            field(5..7),
            field(8..10),
            field(11..13),
            field(14..16),
        ) else {
            return Err(TimeError(expected.to_string()));
        };
        if b.len() == 19 {
            match field(17..19) {
                Some(0) => {}
                Some(_) => {
                    return Err(TimeError(
                        "seconds must be 00: isodisc works in whole minutes".to_string(),
                    ));
                }
                None => return Err(TimeError(expected.to_string())),
            }
        }
        if allow_24 {
            Self::from_ymdhm_24(y as i32, mo, d, h, mi)
        } else {
            Self::from_ymdhm(y as i32, mo, d, h, mi)
        }
    }

    /// Parses the compact `YYYYMMDDHHMM` form used by flux-tower files (e.g. `202506011330`).
    pub fn parse_yyyymmddhhmm(s: &str) -> Result<Self, TimeError> {
        Self::parse_yyyymmddhhmm_with(s, false)
    }

    /// [`LocalTime::parse_yyyymmddhhmm`], with `allow_24`: hour `2400` is the end of the day.
    pub fn parse_yyyymmddhhmm_with(s: &str, allow_24: bool) -> Result<Self, TimeError> {
        let expected = || TimeError("expected 12 digits YYYYMMDDHHMM".to_string());
        if s.len() != 12 || !s.bytes().all(|b| b.is_ascii_digit()) {
            return Err(expected());
        }
        let field = |r: std::ops::Range<usize>| digits(&s[r]).ok_or_else(expected);
        let build = if allow_24 {
            Self::from_ymdhm_24
        } else {
            Self::from_ymdhm
        };
        build(
            field(0..4)? as i32,
            field(4..6)?,
            field(6..8)?,
            field(8..10)?,
            field(10..12)?,
        )
    }

    /// Parses a date `YYYY-MM-DD` (as given to `--from` and `--to`) as midnight at its start.
    pub fn parse_date(s: &str) -> Result<Self, TimeError> {
        let expected = || TimeError("expected a date YYYY-MM-DD".to_string());
        let b = s.as_bytes();
        if b.len() != 10 || b[4] != b'-' || b[7] != b'-' {
            return Err(expected());
        }
        let field = |r: std::ops::Range<usize>| digits(&s[r]).ok_or_else(expected);
        Self::from_ymdhm(field(0..4)? as i32, field(5..7)?, field(8..10)?, 0, 0)
    }

    /// This time moved by `minutes` (negative to go back).
    pub fn plus_minutes(self, minutes: i64) -> Self {
        Self {
            minutes: self.minutes + minutes,
        }
    }

    /// The calendar day this time falls in.
    pub fn date(self) -> LocalDate {
        LocalDate {
            days: self.minutes.div_euclid(MINUTES_PER_DAY),
        }
    }

    /// Calendar year.
    pub fn year(self) -> i32 {
        self.date().year()
    }

    /// Month of the year, 1–12.
    pub fn month(self) -> u32 {
        self.date().month()
    }

    /// Day of the month, 1–31.
    pub fn day(self) -> u32 {
        self.date().day()
    }

    /// Day of the year, 1 on 1 January (366 on 31 December of a leap year).
    pub fn day_of_year(self) -> u32 {
        self.date().day_of_year()
    }

    /// Hours since local midnight, in [0, 24).
    pub fn hour_fraction(self) -> f64 {
        self.minutes.rem_euclid(MINUTES_PER_DAY) as f64 / 60.0
    }
}

impl fmt::Display for LocalTime {
    /// ISO 8601 `YYYY-MM-DDTHH:MM`.
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let of_day = self.minutes.rem_euclid(MINUTES_PER_DAY);
        write!(f, "{}T{:02}:{:02}", self.date(), of_day / 60, of_day % 60)
    }
}

impl LocalDate {
    /// Days since 1970-01-01.
    pub fn days(self) -> i64 {
        self.days
    }

    /// Midnight at the start of this day.
    pub fn start(self) -> LocalTime {
        LocalTime::from_minutes(self.days * MINUTES_PER_DAY)
    }

    /// Calendar year.
    pub fn year(self) -> i32 {
        civil_from_days(self.days).0 as i32
    }

    /// Month of the year, 1–12.
    pub fn month(self) -> u32 {
        civil_from_days(self.days).1
    }

    /// Day of the month, 1–31.
    pub fn day(self) -> u32 {
        civil_from_days(self.days).2
    }

    /// Day of the year, 1 on 1 January.
    pub fn day_of_year(self) -> u32 {
        let year = civil_from_days(self.days).0;
        (self.days - days_from_civil(year, 1, 1) + 1) as u32
    }
}

impl fmt::Display for LocalDate {
    /// ISO 8601 `YYYY-MM-DD`.
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let (y, m, d) = civil_from_days(self.days);
        write!(f, "{y:04}-{m:02}-{d:02}")
    }
}
