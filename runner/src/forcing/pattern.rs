//! Date and time patterns in the strftime style (`"%d.%m.%Y %H:%M"`, `"%m/%d/%Y"`, `"%H:%M"`):
//! compiled once from the site file, then matched against each cell without allocating.
//!
//! Fields: `%Y` year (4 digits), `%m` month, `%d` day, `%j` day of the year, `%H` hour (0–24;
//! 24 only with minute 0, the end of the day), `%M` minute, `%S` second (must be 0), `%%` a
//! percent sign. Numeric fields take 1–2 digits (`%j` 1–3), so `1/5/1988 1:00` and
//! `01/05/1988 01:00` both match `%m/%d/%Y %H:%M`. Every other character must appear as written.

use std::fmt;

/// One piece of a compiled pattern.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Piece {
    Literal(u8),
    Year,
    Month,
    Day,
    DayOfYear,
    Hour,
    Minute,
    Second,
}

/// A compiled pattern, with the text it came from for messages.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Pattern {
    text: String,
    pieces: Vec<Piece>,
}

/// The fields a pattern found in a cell; fields the pattern lacks are `None`.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct Parts {
    /// Year.
    pub year: Option<u32>,
    /// Month, 1–12.
    pub month: Option<u32>,
    /// Day of the month.
    pub day: Option<u32>,
    /// Day of the year.
    pub doy: Option<u32>,
    /// Hour, 0–24.
    pub hour: Option<u32>,
    /// Minute.
    pub minute: Option<u32>,
}

impl Parts {
    /// Fills the fields of `self` that are unset from `other`.
    pub fn or(self, other: Parts) -> Parts {
        Parts {
            year: self.year.or(other.year),
            month: self.month.or(other.month),
            day: self.day.or(other.day),
            doy: self.doy.or(other.doy),
            hour: self.hour.or(other.hour),
            minute: self.minute.or(other.minute),
        }
    }

    /// True when the parts name a date: a year and a month and day, or a year and a day of year.
    pub fn has_date(&self) -> bool {
        self.year.is_some() && ((self.month.is_some() && self.day.is_some()) || self.doy.is_some())
    }
}

impl fmt::Display for Pattern {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&self.text)
    }
}

impl Pattern {
    /// Compiles `text`; an unknown `%` code or a pattern with no field is an error that names it.
    pub fn compile(text: &str) -> Result<Self, String> {
        let mut pieces = Vec::new();
        let mut bytes = text.bytes();
        while let Some(b) = bytes.next() {
            if b != b'%' {
                pieces.push(Piece::Literal(b));
                continue;
            }
            let piece = match bytes.next() {
                Some(b'Y') => Piece::Year,
                Some(b'm') => Piece::Month,
                Some(b'd') => Piece::Day,
                Some(b'j') => Piece::DayOfYear,
                Some(b'H') => Piece::Hour,
                Some(b'M') => Piece::Minute,
                Some(b'S') => Piece::Second,
                Some(b'%') => Piece::Literal(b'%'),
                Some(other) => {
                    return Err(format!(
                        "`%{}` in \"{text}\" is not a field isodisc reads; use %Y %m %d %j %H %M %S or %%",
                        other as char
                    ));
                }
                None => return Err(format!("\"{text}\" ends with a lone `%`")),
            };
            pieces.push(piece);
        }
        if !pieces.iter().any(|p| !matches!(p, Piece::Literal(_))) {
            return Err(format!("\"{text}\" has no field (%Y, %m, %d, %j, %H, %M)"));
        }
        Ok(Self {
            text: text.to_string(),
            pieces,
        })
    }

    /// True when the pattern has a field of the date (year, month, day or day of year).
    pub fn has_date_field(&self) -> bool {
        self.pieces.iter().any(|p| {
            matches!(
                p,
                Piece::Year | Piece::Month | Piece::Day | Piece::DayOfYear
            )
        })
    }

    /// Matches a whole cell; the error says what was expected.
    pub fn parse(&self, cell: &str) -> Result<Parts, String> {
        let b = cell.as_bytes();
        let mut at = 0;
        let mut parts = Parts::default();
        let mismatch = || format!("does not match the pattern \"{}\"", self.text);
        for piece in &self.pieces {
            let (min, max) = match piece {
                Piece::Literal(c) => {
                    if b.get(at) != Some(c) {
                        return Err(mismatch());
                    }
                    at += 1;
                    continue;
                }
                Piece::Year => (4, 4),
                Piece::DayOfYear => (1, 3),
                _ => (1, 2),
            };
            let start = at;
            while at < b.len() && at - start < max && b[at].is_ascii_digit() {
                at += 1;
            }
            if at - start < min {
                return Err(mismatch());
            }
            let value = b[start..at]
                .iter()
                .fold(0u32, |acc, d| acc * 10 + u32::from(d - b'0'));
            let slot = match piece {
                Piece::Year => &mut parts.year,
                Piece::Month => &mut parts.month,
                Piece::Day => &mut parts.day,
                Piece::DayOfYear => &mut parts.doy,
                Piece::Hour => &mut parts.hour,
                Piece::Minute => &mut parts.minute,
                Piece::Second => {
                    if value != 0 {
                        return Err("seconds must be 00: isodisc works in whole minutes".into());
                    }
                    continue;
                }
                Piece::Literal(_) => unreachable!("handled above"),
            };
            *slot = Some(value);
        }
        if at != b.len() {
            return Err(mismatch());
        }
        Ok(parts)
    }
}
