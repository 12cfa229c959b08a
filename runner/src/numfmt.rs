//! Numbers and times as text, digit by digit, without `core::fmt`: million-row outputs spend most
//! of their time turning numbers into text. Every function here writes exactly the bytes that the
//! `format!`-based spelling it replaces wrote (the checks compare them over random values).

use crate::forcing::time::LocalTime;

/// "00", "01", …, "99": two digits per table lookup.
const PAIRS: &[u8; 200] = b"\
0001020304050607080910111213141516171819\
2021222324252627282930313233343536373839\
4041424344454647484950515253545556575859\
6061626364656667686970717273747576777879\
8081828384858687888990919293949596979899";

/// Room for any number this module writes on its fast path: a sign, 10 integer digits (below
/// 9·10⁹), a point and 6 decimals.
const CAP: usize = 24;

/// The text of one number, built right to left in a stack buffer.
pub struct NumText {
    bytes: [u8; CAP],
    start: usize,
}

impl NumText {
    fn new() -> Self {
        Self {
            bytes: [0; CAP],
            start: CAP,
        }
    }

    fn push_front(&mut self, b: u8) {
        self.start -= 1;
        self.bytes[self.start] = b;
    }

    /// Writes the decimal digits of `n` in front of what is there.
    fn push_front_u64(&mut self, mut n: u64) {
        while n >= 100 {
            let pair = (n % 100) as usize * 2;
            n /= 100;
            self.push_front(PAIRS[pair + 1]);
            self.push_front(PAIRS[pair]);
        }
        if n >= 10 {
            let pair = n as usize * 2;
            self.push_front(PAIRS[pair + 1]);
            self.push_front(PAIRS[pair]);
        } else {
            self.push_front(b'0' + n as u8);
        }
    }

    /// The text written so far.
    pub fn as_bytes(&self) -> &[u8] {
        &self.bytes[self.start..]
    }

    /// The text written so far (ASCII).
    pub fn as_str(&self) -> &str {
        std::str::from_utf8(self.as_bytes()).expect("digits, sign, point and letters are ASCII")
    }
}

/// How [`crate::output::fmt_num`] spells a number, when it is short: `None` for NaN (an empty
/// cell) and for values whose micro-units reach 9·10¹⁵ (written in full by `Display` instead).
///
/// The value is rounded to micro-units with `f64::round` (half away from zero) after multiplying
/// by 10⁶, then written with its sign when the rounded micro-units are negative (so −0 and
/// −0.0000004 are `0`), the integer part, and the decimals without trailing zeros.
pub fn micro_text(value: f64) -> Option<NumText> {
    let mut t = NumText::new();
    if value.is_nan() {
        return None;
    }
    if value.is_infinite() {
        if value > 0.0 {
            for &b in b"fni" {
                t.push_front(b);
            }
        } else {
            for &b in b"fni-" {
                t.push_front(b);
            }
        }
        return Some(t);
    }
    let micro = (value * 1e6).round();
    if micro.abs() >= 9.0e15 {
        return None;
    }
    let micro = micro as i64;
    let m = micro.unsigned_abs();
    let (int, mut frac) = (m / 1_000_000, m % 1_000_000);
    if frac != 0 {
        let mut digits = 6;
        while frac % 10 == 0 {
            frac /= 10;
            digits -= 1;
        }
        let end = t.start;
        t.push_front_u64(frac);
        // Leading zeros of the decimals (0.000123).
        while end - t.start < digits {
            t.push_front(b'0');
        }
        t.push_front(b'.');
    }
    t.push_front_u64(int);
    if micro < 0 {
        t.push_front(b'-');
    }
    Some(t)
}

/// Appends `value` to `out` as [`crate::output::fmt_num`] spells it.
pub fn push_num(out: &mut Vec<u8>, value: f64) {
    match micro_text(value) {
        Some(t) => out.extend_from_slice(t.as_bytes()),
        None if value.is_nan() => {}
        None => out.extend_from_slice(value.to_string().as_bytes()),
    }
}

/// Appends the decimal digits of `n` to `out` (as `n.to_string()`).
pub fn push_u64(out: &mut Vec<u8>, n: u64) {
    let mut t = NumText::new();
    t.push_front_u64(n);
    out.extend_from_slice(t.as_bytes());
}

/// Appends `time` as its `Display` spells it (`YYYY-MM-DDTHH:MM`).
pub fn push_time(out: &mut Vec<u8>, time: LocalTime) {
    let date = time.date();
    let year = date.year();
    if !(0..=9999).contains(&year) {
        out.extend_from_slice(time.to_string().as_bytes());
        return;
    }
    let of_day = time.minutes() - date.start().minutes();
    let two = |out: &mut Vec<u8>, n: u32| {
        let i = n as usize * 2;
        out.extend_from_slice(&PAIRS[i..i + 2]);
    };
    let year = year as u32;
    two(out, year / 100);
    two(out, year % 100);
    out.push(b'-');
    two(out, date.month());
    out.push(b'-');
    two(out, date.day());
    out.push(b'T');
    two(out, (of_day / 60) as u32);
    out.push(b':');
    two(out, (of_day % 60) as u32);
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn times_spell_as_display() {
        // Common practice: the Display impl is the reference spelling.
        for minutes in [0, 59, 1439, 1440, 26_297_999, -1, -525_600, 4_000_000_000] {
            let t = LocalTime::from_minutes(minutes);
            let mut out = Vec::new();
            push_time(&mut out, t);
            assert_eq!(String::from_utf8(out).unwrap(), t.to_string(), "{minutes}");
        }
    }

    #[test]
    fn integers_spell_as_display() {
        for n in [0, 7, 10, 99, 100, 101, 12_345, u64::MAX] {
            let mut out = Vec::new();
            push_u64(&mut out, n);
            assert_eq!(String::from_utf8(out).unwrap(), n.to_string());
        }
    }
}
