//! Numbers and times as text, digit by digit, without `core::fmt`: million-row outputs spend most
//! of their time turning numbers into text. Every function here writes exactly the bytes that the
//! `format!`-based spelling it replaces wrote (the checks compare them over random values).

use crate::forcing::time::{LocalDate, LocalTime};

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

/// Number of decimal digits of `n` (1 for 0).
fn digit_count(n: u64) -> usize {
    let mut count = 1;
    let mut p = 10;
    while count < 20 && n >= p {
        count += 1;
        p = p.wrapping_mul(10);
    }
    count
}

/// Writes the decimal digits of `n` into `out` (exactly as long as the digits), two at a time
/// from the right.
fn write_digits(out: &mut [u8], mut n: u64) {
    let mut end = out.len();
    while end >= 2 {
        let pair = (n % 100) as usize * 2;
        n /= 100;
        out[end - 2..end].copy_from_slice(&PAIRS[pair..pair + 2]);
        end -= 2;
    }
    if end == 1 {
        out[0] = b'0' + n as u8;
    }
}

/// `x` rounded half away from zero, as `f64::round` does, for |x| < 9·10¹⁵ (exact: for |x| ≥ 1
/// the truncation is within a factor of two of `x`, so `x − trunc(x)` has no rounding error).
#[inline]
fn round_half_away(x: f64) -> i64 {
    let t = x as i64;
    let rest = x - t as f64;
    if rest >= 0.5 {
        t + 1
    } else if rest <= -0.5 {
        t - 1
    } else {
        t
    }
}

/// Writes the spelling of [`crate::output::fmt_num`] into `b` and returns its length, when it is
/// short; `None` for NaN, infinities and values whose micro-units reach 9·10¹⁵ (their spelling is
/// empty, or `Display`'s).
///
/// The value is rounded to micro-units (half away from zero, as `f64::round`) after multiplying
/// by 10⁶, then written with its sign when the rounded micro-units are negative (so −0 and
/// −0.0000004 are `0`), the integer part, and the decimals without trailing zeros.
#[inline]
fn write_micro(b: &mut [u8; CAP], value: f64) -> Option<usize> {
    let scaled = value * 1e6;
    // Past 2⁵² every double is a whole number, so the rounding cannot move a value across 9·10¹⁵.
    // NaN, infinities and values beyond 9·10⁹ take the `Display` path (or none).
    if scaled.is_nan() || scaled.abs() >= 9.0e15 {
        return None;
    }
    let micro = round_half_away(scaled);
    let m = micro.unsigned_abs();
    let int = m / 1_000_000;
    let frac = (m - int * 1_000_000) as u32;
    b[0] = b'-';
    let mut at = usize::from(micro < 0);
    if int < 10 {
        b[at] = b'0' + int as u8;
        at += 1;
    } else if int < 100 {
        let i = int as usize * 2;
        b[at..at + 2].copy_from_slice(&PAIRS[i..i + 2]);
        at += 2;
    } else if int < 10_000 {
        let (high, low) = ((int / 100) as usize, (int % 100) as usize * 2);
        if high < 10 {
            b[at] = b'0' + high as u8;
            at += 1;
        } else {
            b[at..at + 2].copy_from_slice(&PAIRS[high * 2..high * 2 + 2]);
            at += 2;
        }
        b[at..at + 2].copy_from_slice(&PAIRS[low..low + 2]);
        at += 2;
    } else {
        let n = digit_count(int);
        write_digits(&mut b[at..at + n], int);
        at += n;
    }
    if frac != 0 {
        b[at] = b'.';
        let (hi, mid, lo) = (frac / 10_000, frac / 100 % 100, frac % 100);
        // Trailing zeros of the six decimals (`hi` is not 00 when the others are: frac ≠ 0).
        let zeros = if lo != 0 {
            usize::from(lo % 10 == 0)
        } else if mid != 0 {
            2 + usize::from(mid % 10 == 0)
        } else {
            4 + usize::from(hi % 10 == 0)
        };
        for (k, pair) in [hi, mid, lo].into_iter().enumerate() {
            let i = pair as usize * 2;
            b[at + 1 + 2 * k..at + 3 + 2 * k].copy_from_slice(&PAIRS[i..i + 2]);
        }
        at += 7 - zeros;
    }
    Some(at)
}

/// The text of one number in a stack buffer.
pub struct NumText {
    bytes: [u8; CAP],
    len: usize,
}

impl NumText {
    /// The text.
    pub fn as_bytes(&self) -> &[u8] {
        &self.bytes[..self.len]
    }

    /// The text (ASCII).
    pub fn as_str(&self) -> &str {
        std::str::from_utf8(self.as_bytes()).expect("digits, sign and point are ASCII")
    }
}

/// How [`crate::output::fmt_num`] spells a number, when it is short: `None` for NaN (an empty
/// cell), infinities and values whose micro-units reach 9·10¹⁵ (written by `Display`).
pub fn micro_text(value: f64) -> Option<NumText> {
    let mut bytes = [0; CAP];
    write_micro(&mut bytes, value).map(|len| NumText { bytes, len })
}

/// Appends `value` to `out` as [`crate::output::fmt_num`] spells it.
#[inline]
pub fn push_num(out: &mut Vec<u8>, value: f64) {
    let mut b = [0; CAP];
    match write_micro(&mut b, value) {
        Some(len) => {
            // The whole buffer (a fixed-size copy), then cut to the text.
            let end = out.len() + len;
            out.extend_from_slice(&b);
            out.truncate(end);
        }
        None if value.is_nan() => {}
        None => out.extend_from_slice(value.to_string().as_bytes()),
    }
}

/// Appends the decimal digits of `n` to `out` (as `n.to_string()`).
pub fn push_u64(out: &mut Vec<u8>, n: u64) {
    let mut digits = [0u8; 20];
    let len = digit_count(n);
    write_digits(&mut digits[..len], n);
    out.extend_from_slice(&digits[..len]);
}

/// Two digits of `n` < 100.
fn push_two(out: &mut Vec<u8>, n: u32) {
    let i = n as usize * 2;
    out.extend_from_slice(&PAIRS[i..i + 2]);
}

/// Appends `date` as its `Display` spells it (`YYYY-MM-DD`).
pub fn push_date(out: &mut Vec<u8>, date: LocalDate) {
    let year = date.year();
    if !(0..=9999).contains(&year) {
        out.extend_from_slice(date.to_string().as_bytes());
        return;
    }
    let year = year as u32;
    push_two(out, year / 100);
    push_two(out, year % 100);
    out.push(b'-');
    push_two(out, date.month());
    out.push(b'-');
    push_two(out, date.day());
}

/// Appends `time` as its `Display` spells it (`YYYY-MM-DDTHH:MM`).
pub fn push_time(out: &mut Vec<u8>, time: LocalTime) {
    let date = time.date();
    let of_day = time.minutes() - date.start().minutes();
    push_date(out, date);
    out.push(b'T');
    push_two(out, (of_day / 60) as u32);
    out.push(b':');
    push_two(out, (of_day % 60) as u32);
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
            let mut out = Vec::new();
            push_date(&mut out, t.date());
            assert_eq!(
                String::from_utf8(out).unwrap(),
                t.date().to_string(),
                "{minutes}"
            );
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
