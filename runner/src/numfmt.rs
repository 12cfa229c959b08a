//! Numbers and times as text, digit by digit, without `core::fmt`: million-row outputs spend most
//! of their time turning numbers into text. Every function here writes exactly the bytes that the
//! `format!`-based spelling it replaces wrote, and [`parse_f64`] reads exactly the values that
//! `str::parse::<f64>` reads (the checks compare them over random values).

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
// Inlined into its callers: the call itself cost about a sixth of a number's instructions.
#[inline(always)]
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

/// One CSV row of numbers spelled as [`push_num`] spells them, into a buffer reused row after
/// row, with the last value of each column and its text remembered: settings and constant
/// conditions repeat row after row and are copied, not spelled again.
pub struct NumRow {
    buf: Vec<u8>,
    len: usize,
    last: Vec<(u64, [u8; CAP], usize)>,
}

impl NumRow {
    /// A row of `columns` numbers (more may be pushed; only the first `columns` are remembered).
    pub fn new(columns: usize) -> Self {
        Self {
            buf: vec![0; (CAP + 1) * (columns + 1)],
            len: 0,
            // A NaN never matches: it is not remembered.
            last: vec![(f64::NAN.to_bits(), [0; CAP], 0); columns],
        }
    }

    /// Starts a new row.
    #[inline]
    pub fn clear(&mut self) {
        self.len = 0;
    }

    /// The row's text so far.
    #[inline]
    pub fn as_bytes(&self) -> &[u8] {
        &self.buf[..self.len]
    }

    /// Appends a separator byte.
    #[inline]
    pub fn push_byte(&mut self, b: u8) {
        self.room(1);
        self.buf[self.len] = b;
        self.len += 1;
    }

    fn room(&mut self, bytes: usize) {
        if self.buf.len() < self.len + bytes {
            self.buf.resize(self.len + bytes + 256, 0);
        }
    }

    /// Appends column `col`'s `value` as [`push_num`] spells it. Inlined into the row's loop: the
    /// call cost a fifth of a number's instructions.
    #[inline(always)]
    pub fn push(&mut self, col: usize, value: f64) {
        self.room(CAP);
        let at = self.len;
        let cell: &mut [u8; CAP] = (&mut self.buf[at..at + CAP]).try_into().expect("CAP bytes");
        let bits = value.to_bits();
        if let Some((b, text, len)) = self.last.get_mut(col) {
            if *b == bits {
                *cell = *text;
                self.len += *len;
                return;
            }
            if let Some(n) = write_micro(cell, value) {
                (*b, *text, *len) = (bits, *cell, n);
                self.len += n;
                return;
            }
        } else if let Some(n) = write_micro(cell, value) {
            self.len += n;
            return;
        }
        self.push_display(value);
    }

    /// NaN (nothing), infinities and values beyond the digit path, as `Display` spells them.
    #[cold]
    fn push_display(&mut self, value: f64) {
        if !value.is_nan() {
            let text = value.to_string();
            self.room(text.len());
            self.buf[self.len..self.len + text.len()].copy_from_slice(text.as_bytes());
            self.len += text.len();
        }
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

/// 10⁰ … 10²²: the powers of ten that a double holds exactly.
const POW10: [f64; 23] = [
    1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11, 1e12, 1e13, 1e14, 1e15, 1e16,
    1e17, 1e18, 1e19, 1e20, 1e21, 1e22,
];

/// The number in `text` as `str::parse::<f64>` reads it (`None` where it refuses the text).
///
/// Plain decimals (a sign, at most 19 digits with one point, no exponent) whose digits make an
/// integer m ≤ 2⁵³ are read as m / 10ᵏ: both are exact doubles, so the one division rounds
/// correctly and gives the standard library's (correctly rounded) value (Clinger 1990, "How to
/// read floating point numbers accurately", the fast path). Everything else (exponents, long
/// digit strings, `inf`, `NaN`, errors) goes to `str::parse`.
#[inline]
pub fn parse_f64(text: &[u8]) -> Option<f64> {
    match plain_decimal(text) {
        Some(v) => Some(v),
        None => std::str::from_utf8(text).ok()?.parse().ok(),
    }
}

#[inline]
fn plain_decimal(text: &[u8]) -> Option<f64> {
    let (negative, body) = match text.first()? {
        b'-' => (true, &text[1..]),
        b'+' => (false, &text[1..]),
        _ => (false, text),
    };
    if body.len() > 20 {
        return None;
    }
    let mut m: u64 = 0;
    let mut digits = 0;
    let mut point = None;
    for (i, &b) in body.iter().enumerate() {
        let d = b.wrapping_sub(b'0');
        if d < 10 {
            // At most 19 digits: m < 10¹⁹ cannot overflow.
            if digits == 19 {
                return None;
            }
            m = m * 10 + u64::from(d);
            digits += 1;
        } else if b == b'.' && point.is_none() {
            point = Some(i);
        } else {
            return None;
        }
    }
    if digits == 0 || m > 1 << 53 {
        return None;
    }
    let decimals = point.map_or(0, |p| body.len() - p - 1);
    let v = m as f64 / POW10[decimals];
    Some(if negative { -v } else { v })
}

/// `text` without the white space around it, as `str::trim` trims it (ASCII white space here,
/// and `str::trim` itself when a non-ASCII byte is at either end).
#[inline]
pub fn trim_text(text: &[u8]) -> &[u8] {
    let space = |b: &u8| b.is_ascii_whitespace() || *b == 0x0B;
    let start = text.iter().position(|b| !space(b)).unwrap_or(text.len());
    let end = text
        .iter()
        .rposition(|b| !space(b))
        .map_or(start, |i| i + 1);
    let t = &text[start..end];
    match (t.first(), t.last()) {
        (Some(&a), Some(&z)) if a >= 0x80 || z >= 0x80 => match std::str::from_utf8(t) {
            Ok(s) => s.trim().as_bytes(),
            Err(_) => t,
        },
        _ => t,
    }
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
