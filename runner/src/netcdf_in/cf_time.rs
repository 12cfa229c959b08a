//! CF time coordinates: `units = "<unit> since <reference date>"` and the `calendar` attribute
//! (CF conventions 1.8, section 4.4 "Time Coordinate" and 4.4.1 "Calendar").
//!
//! Supported calendars: `standard`/`gregorian` (from 1582-10-15 on, where it equals the proleptic
//! Gregorian calendar; earlier dates are refused), `proleptic_gregorian`, `noleap`/`365_day`,
//! `all_leap`/`366_day` and `360_day`. Units: seconds, minutes, hours and days; `months` and
//! `years` are refused because CF defines them as fractions of a tropical year, which no weather
//! file means. Values are decoded to the nearest whole second.

use std::fmt;

use crate::forcing::time::{civil_from_days as gregorian_date, days_from_civil as gregorian_days};

/// A CF calendar.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Calendar {
    /// Mixed Julian/Gregorian; only dates from 1582-10-15 are accepted.
    Standard,
    /// The Gregorian calendar extended before 1582.
    ProlepticGregorian,
    /// Every year 365 days.
    NoLeap,
    /// Every year 366 days.
    AllLeap,
    /// Twelve months of 30 days.
    Day360,
}

/// Days before each month in a 365-day year.
const CUM_365: [i64; 13] = [0, 31, 59, 90, 120, 151, 181, 212, 243, 273, 304, 334, 365];
/// Days before each month in a 366-day year.
const CUM_366: [i64; 13] = [0, 31, 60, 91, 121, 152, 182, 213, 244, 274, 305, 335, 366];
/// The first day of the Gregorian calendar in the `standard` calendar.
const GREGORIAN_START: (i64, u32, u32) = (1582, 10, 15);

/// A date and time in a file's own calendar.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct CfDateTime {
    pub year: i64,
    pub month: u32,
    pub day: u32,
    pub hour: u32,
    pub minute: u32,
    pub second: u32,
}

impl fmt::Display for CfDateTime {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(
            f,
            "{:04}-{:02}-{:02}T{:02}:{:02}:{:02}",
            self.year, self.month, self.day, self.hour, self.minute, self.second
        )
    }
}

fn gregorian_leap(y: i64) -> bool {
    (y % 4 == 0 && y % 100 != 0) || y % 400 == 0
}

impl Calendar {
    /// The calendar named by a `calendar` attribute (case-insensitive); None (no attribute) is
    /// `standard`, as CF prescribes.
    pub fn parse(name: Option<&str>) -> Result<Calendar, String> {
        let Some(name) = name else {
            return Ok(Calendar::Standard);
        };
        match name.trim().to_ascii_lowercase().as_str() {
            "standard" | "gregorian" => Ok(Calendar::Standard),
            "proleptic_gregorian" => Ok(Calendar::ProlepticGregorian),
            "noleap" | "365_day" => Ok(Calendar::NoLeap),
            "all_leap" | "366_day" => Ok(Calendar::AllLeap),
            "360_day" => Ok(Calendar::Day360),
            other => Err(format!(
                "calendar \"{other}\" is not one isodisc reads (standard, gregorian, \
                 proleptic_gregorian, noleap, 365_day, all_leap, 366_day, 360_day)"
            )),
        }
    }

    /// The attribute value naming this calendar.
    pub fn name(self) -> &'static str {
        match self {
            Calendar::Standard => "standard",
            Calendar::ProlepticGregorian => "proleptic_gregorian",
            Calendar::NoLeap => "noleap",
            Calendar::AllLeap => "all_leap",
            Calendar::Day360 => "360_day",
        }
    }

    fn month_days(self, y: i64, m: u32) -> u32 {
        match self {
            Calendar::Day360 => 30,
            Calendar::NoLeap => (CUM_365[m as usize] - CUM_365[m as usize - 1]) as u32,
            Calendar::AllLeap => (CUM_366[m as usize] - CUM_366[m as usize - 1]) as u32,
            Calendar::Standard | Calendar::ProlepticGregorian => {
                let cum = if gregorian_leap(y) {
                    &CUM_366
                } else {
                    &CUM_365
                };
                (cum[m as usize] - cum[m as usize - 1]) as u32
            }
        }
    }

    /// Day number of a date (any fixed origin per calendar), after checking it exists.
    fn days(self, y: i64, m: u32, d: u32) -> Result<i64, String> {
        if !(1..=12).contains(&m) || d == 0 || d > self.month_days(y, m) {
            return Err(format!(
                "{y:04}-{m:02}-{d:02} is not a date of the {} calendar",
                self.name()
            ));
        }
        if self == Calendar::Standard && (y, m, d) < GREGORIAN_START {
            return Err(format!(
                "{y:04}-{m:02}-{d:02} lies before 1582-10-15, where the standard calendar is \
                 Julian; isodisc reads standard-calendar dates from 1582-10-15 on (use \
                 proleptic_gregorian if that is what the file means)"
            ));
        }
        let (m0, d0) = (i64::from(m) - 1, i64::from(d) - 1);
        Ok(match self {
            Calendar::Day360 => y * 360 + m0 * 30 + d0,
            Calendar::NoLeap => y * 365 + CUM_365[m0 as usize] + d0,
            Calendar::AllLeap => y * 366 + CUM_366[m0 as usize] + d0,
            Calendar::Standard | Calendar::ProlepticGregorian => gregorian_days(y, m, d),
        })
    }

    fn date(self, n: i64) -> Result<(i64, u32, u32), String> {
        let in_year = |n: i64, len: i64, cum: &[i64; 13]| {
            let y = n.div_euclid(len);
            let r = n.rem_euclid(len);
            let m = (1..=12).find(|&m| cum[m] > r).unwrap_or(12);
            (y, m as u32, (r - cum[m - 1] + 1) as u32)
        };
        let date = match self {
            Calendar::Day360 => {
                let (y, r) = (n.div_euclid(360), n.rem_euclid(360));
                (y, (r / 30 + 1) as u32, (r % 30 + 1) as u32)
            }
            Calendar::NoLeap => in_year(n, 365, &CUM_365),
            Calendar::AllLeap => in_year(n, 366, &CUM_366),
            Calendar::Standard | Calendar::ProlepticGregorian => gregorian_date(n),
        };
        if self == Calendar::Standard && date < GREGORIAN_START {
            return Err(format!(
                "the time falls before 1582-10-15 ({:04}-{:02}-{:02} proleptic Gregorian), where \
                 the standard calendar is Julian; isodisc reads standard-calendar dates from \
                 1582-10-15 on",
                date.0, date.1, date.2
            ));
        }
        Ok(date)
    }
}

/// A time coordinate's `units` and `calendar`, parsed.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TimeUnits {
    /// Seconds per unit.
    seconds_per_unit: f64,
    calendar: Calendar,
    /// Reference: day number in the calendar and seconds into that day (UTC).
    ref_day: i64,
    ref_second: f64,
}

/// Parses `H[:M[:S[.f]]]`.
fn parse_clock(s: &str) -> Option<f64> {
    let mut parts = s.split(':');
    let h: f64 = parts.next()?.parse().ok()?;
    let m: f64 = parts.next().map_or(Some(0.0), |p| p.parse().ok())?;
    let sec: f64 = parts.next().map_or(Some(0.0), |p| p.parse().ok())?;
    if parts.next().is_some() || !(0.0..24.0).contains(&h) || !(0.0..60.0).contains(&m) {
        return None;
    }
    if !(0.0..61.0).contains(&sec) {
        return None;
    }
    Some(h * 3600.0 + m * 60.0 + sec)
}

/// Parses a time-zone offset (`Z`, `UTC`, `+HH:MM`, `-HHMM`, `+H`) into seconds east of UTC.
fn parse_zone(s: &str) -> Option<f64> {
    let s = s.trim();
    if s.is_empty() || s.eq_ignore_ascii_case("utc") || s.eq_ignore_ascii_case("z") {
        return Some(0.0);
    }
    let (sign, rest) = match s.as_bytes()[0] {
        b'+' => (1.0, &s[1..]),
        b'-' => (-1.0, &s[1..]),
        _ => return None,
    };
    let (h, m) = match rest.split_once(':') {
        Some((h, m)) => (h.parse::<f64>().ok()?, m.parse::<f64>().ok()?),
        None if rest.len() == 4 => (rest[..2].parse().ok()?, rest[2..].parse().ok()?),
        None => (rest.parse().ok()?, 0.0),
    };
    (h <= 14.0 && m < 60.0).then_some(sign * (h * 3600.0 + m * 60.0))
}

impl TimeUnits {
    /// Parses `units` ("hours since 2001-01-01 00:00:00", "days since 1850-1-1", ...) in
    /// `calendar`.
    pub fn parse(units: &str, calendar: Calendar) -> Result<TimeUnits, String> {
        let bad = |why: &str| Err(format!("time units \"{units}\": {why}"));
        let lower = units.trim().to_ascii_lowercase();
        let Some((unit, reference)) = lower.split_once(" since ") else {
            return bad("expected \"<unit> since <date>\" (CF conventions, section 4.4)");
        };
        let seconds_per_unit = match unit.trim() {
            "second" | "seconds" | "sec" | "secs" | "s" => 1.0,
            "minute" | "minutes" | "min" | "mins" => 60.0,
            "hour" | "hours" | "hr" | "hrs" | "h" => 3600.0,
            "day" | "days" | "d" => 86_400.0,
            "month" | "months" | "year" | "years" | "common_year" | "common_years" => {
                return bad(
                    "months and years are fractions of a tropical year in CF (UDUNITS), not \
                     calendar months; write the time in days, hours, minutes or seconds",
                );
            }
            other => return bad(&format!("unknown time unit \"{other}\"")),
        };
        // "YYYY-MM-DD[( |T)hh:mm[:ss[.f]]][ zone]" ; a zone may also follow the clock directly.
        let reference = reference.trim();
        let (date, rest) = match reference.find(['t', ' ']) {
            Some(i) => (&reference[..i], reference[i + 1..].trim()),
            None => (reference, ""),
        };
        let mut fields = date.splitn(3, '-');
        let (Some(y), Some(m), Some(d)) = (fields.next(), fields.next(), fields.next()) else {
            return bad("the reference date is not YYYY-MM-DD");
        };
        let (Ok(y), Ok(m), Ok(d)) = (y.parse::<i64>(), m.parse::<u32>(), d.parse::<u32>()) else {
            return bad("the reference date is not YYYY-MM-DD");
        };
        let (clock, zone) = match rest.split_once(' ') {
            Some((c, z)) => (c, z),
            None => match rest.find(['+', 'z']).or_else(|| rest.rfind('-')) {
                Some(i) if i > 0 => (&rest[..i], &rest[i..]),
                _ => (rest, ""),
            },
        };
        let (clock, zone) = if clock.eq_ignore_ascii_case("utc") {
            ("", "utc")
        } else {
            (clock, zone)
        };
        let second = if clock.is_empty() {
            0.0
        } else {
            match parse_clock(clock) {
                Some(s) => s,
                None => return bad("the reference time of day is not hh:mm[:ss]"),
            }
        };
        let Some(zone_s) = parse_zone(zone) else {
            return bad(&format!("the time zone \"{zone}\" is not Z, UTC or ±hh:mm"));
        };
        let ref_day = match calendar.days(y, m, d) {
            Ok(n) => n,
            Err(e) => return bad(&e),
        };
        Ok(TimeUnits {
            seconds_per_unit,
            calendar,
            ref_day,
            ref_second: second - zone_s,
        })
    }

    /// The calendar.
    pub fn calendar(&self) -> Calendar {
        self.calendar
    }

    /// The UTC date and time of a coordinate value, in the file's calendar.
    pub fn decode(&self, value: f64) -> Result<CfDateTime, String> {
        if !value.is_finite() {
            return Err(format!("time value {value} is not a finite number"));
        }
        let total = (value * self.seconds_per_unit + self.ref_second).round();
        if total.abs() > 1e15 {
            return Err(format!(
                "time value {value} is too far from the reference date"
            ));
        }
        let total = total as i64;
        let day = self.ref_day + total.div_euclid(86_400);
        let s = total.rem_euclid(86_400);
        let (year, month, d) = self.calendar.date(day)?;
        Ok(CfDateTime {
            year,
            month,
            day: d,
            hour: (s / 3600) as u32,
            minute: (s % 3600 / 60) as u32,
            second: (s % 60) as u32,
        })
    }
}

#[cfg(test)]
mod tests {
    use super::{Calendar, gregorian_date, gregorian_days};

    /// The day-number round trip over every day of 400 years and the 1970 origin.
    #[test]
    fn gregorian_day_numbers_round_trip() {
        assert_eq!(gregorian_days(1970, 1, 1), 0);
        assert_eq!(gregorian_days(2000, 3, 1), 11_017);
        for n in -146_097..146_097 {
            let (y, m, d) = gregorian_date(n);
            assert_eq!(gregorian_days(y, m, d), n, "{y}-{m}-{d}");
        }
        for cal in [Calendar::NoLeap, Calendar::AllLeap, Calendar::Day360] {
            for n in -2000..2000 {
                let (y, m, d) = cal.date(n).unwrap();
                assert_eq!(cal.days(y, m, d).unwrap(), n);
            }
        }
    }
}
