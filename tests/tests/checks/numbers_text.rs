//! Numbers as text: the digit-by-digit writers of `isodisc_runner::numfmt` against the Rust standard
//! library's formatter as reference (`format!` / `Display` of the same rounded integers), and the
//! number reader against `str::parse::<f64>`, over random values and bit patterns.

use crate::common::proptest_config;
use isodisc_runner::numfmt::{NumRow, micro_text, parse_f64, push_num, trim_text};
use isodisc_runner::output::fmt_num;
use proptest::prelude::*;
use std::fmt::Write as _;

/// The spelling of a CSV number through `core::fmt` (the Rust standard library's formatter as
/// reference): micro-units rounded half away from zero, the integer part by `{}`, the six decimals
/// by `{:06}` with trailing zeros dropped, `Display` in full beyond 9·10¹⁵ micro-units.
fn reference(value: f64) -> String {
    if value.is_nan() {
        return String::new();
    }
    if value.is_infinite() {
        return if value > 0.0 { "inf" } else { "-inf" }.to_string();
    }
    let micro = (value * 1e6).round();
    if micro.abs() >= 9.0e15 {
        return format!("{value}");
    }
    let micro = micro as i64;
    let mut s = String::new();
    if micro < 0 {
        s.push('-');
    }
    let m = micro.unsigned_abs();
    let _ = write!(s, "{}", m / 1_000_000);
    let frac = format!("{:06}", m % 1_000_000);
    let frac = frac.trim_end_matches('0');
    if !frac.is_empty() {
        s.push('.');
        s.push_str(frac);
    }
    s
}

fn spelled(value: f64) -> (String, String) {
    let mut a = String::new();
    fmt_num(&mut a, value);
    let mut b = Vec::new();
    push_num(&mut b, value);
    (a, String::from_utf8(b).unwrap())
}

#[test]
fn edge_values_spell_as_the_reference() {
    // Ties of the micro-unit rounding (half away from zero), signed zeros, the largest values of
    // the digit path and the first of the `Display` path, NaN and infinities (common practice).
    let cases = [
        0.0,
        -0.0,
        0.5e-6,
        -0.5e-6,
        1.5e-6,
        2.5e-6,
        -2.5e-6,
        0.4999999e-6,
        -0.4e-6,
        0.1,
        0.000001,
        123_456.789_012_5,
        8_999_999_999.999_999,
        8_999_999_999.999_999_5,
        9.0e9,
        -9.0e9,
        1e20,
        -1e300,
        f64::MIN_POSITIVE,
        -f64::MIN_POSITIVE,
        5e-324,
        f64::MAX,
        f64::MIN,
        f64::NAN,
        -f64::NAN,
        f64::INFINITY,
        f64::NEG_INFINITY,
    ];
    for v in cases {
        let (a, b) = spelled(v);
        assert_eq!(a, reference(v), "fmt_num({v:e})");
        assert_eq!(b, reference(v), "push_num({v:e})");
    }
    // The documented spellings (docs: empty for a missing value, six decimals, no trailing zeros).
    for (v, want) in [
        (f64::NAN, ""),
        (25.0, "25"),
        (-8.5, "-8.5"),
        (15.2635449, "15.263545"),
    ] {
        assert_eq!(spelled(v).0, want);
    }
}

/// What `str::parse::<f64>` reads from the bytes (the reference for [`parse_f64`]).
fn std_parse(text: &[u8]) -> Option<f64> {
    std::str::from_utf8(text).ok()?.parse().ok()
}

/// Same value, bit for bit (NaN equal to NaN).
fn same(a: Option<f64>, b: Option<f64>) -> bool {
    match (a, b) {
        (Some(x), Some(y)) => x.to_bits() == y.to_bits() || (x.is_nan() && y.is_nan()),
        (None, None) => true,
        _ => false,
    }
}

#[test]
fn edge_texts_read_as_the_standard_library_reads_them() {
    // Signs, lone points, signed zeros, the largest exact mantissa 2^53 and the first above it,
    // 19 and 20 digits, decimals past 10^22, exponents, words and white space (common practice:
    // the standard library's correctly rounded reader is the reference).
    for text in [
        "",
        "-",
        "+",
        ".",
        "-.",
        "1.",
        ".5",
        "+3",
        "-0",
        "-0.0",
        "0.1",
        "0.3",
        "2037.1",
        "-27.453009",
        "9007199254740992",
        "9007199254740993",
        "900719925474099.3",
        "1234567890123456789",
        "12345678901234567890",
        "0.0000000000000000000000001",
        "1.0000000000000000000000001",
        "1e5",
        "1E-3",
        "1e",
        "inf",
        "-inf",
        "Infinity",
        "NaN",
        "nan",
        "1.2.3",
        " 1",
        "1 ",
        "1,5",
        "0x10",
        "１",
        "1_000",
        "00000000000000000001.5",
    ] {
        let b = text.as_bytes();
        assert!(
            same(parse_f64(b), std_parse(b)),
            "`{text}`: {:?} vs {:?}",
            parse_f64(b),
            std_parse(b)
        );
    }
    assert!(same(parse_f64(&[b'1', 0xFF]), None));
}

#[test]
fn trimming_matches_str_trim() {
    // Unicode White_Space at either end, including U+000B, U+0085, U+00A0 and U+3000, which
    // `str::trim` removes (the Rust standard library as reference).
    for text in [
        "",
        " ",
        " 25 ",
        "\t25\r",
        "\u{b}25\u{c}",
        "\u{85}25\u{a0}",
        "\u{3000}x\u{2003}",
        "a b",
        "\u{a0}",
        "é ",
        " é",
    ] {
        assert_eq!(
            trim_text(text.as_bytes()),
            text.trim().as_bytes(),
            "{text:?}"
        );
    }
}

proptest! {
    #![proptest_config(proptest_config("numbers_text", 20_000))]

    /// Decimal texts as instruments and spreadsheets write them: up to 20 digits around a point,
    /// either sign; and the shortest spelling of any double (`Display`).
    #[test]
    fn decimal_texts_read_as_the_standard_library_reads_them(
        sign in prop::sample::select(vec!["", "-", "+"]),
        int in "[0-9]{0,12}",
        frac in prop::option::of("[0-9]{0,10}"),
        bits in any::<u64>(),
    ) {
        let text = match &frac {
            Some(f) => format!("{sign}{int}.{f}"),
            None => format!("{sign}{int}"),
        };
        let b = text.as_bytes();
        prop_assert!(same(parse_f64(b), std_parse(b)), "`{}`", text);
        let shortest = f64::from_bits(bits).to_string();
        let b = shortest.as_bytes();
        prop_assert!(same(parse_f64(b), std_parse(b)), "`{}`", shortest);
    }

    /// A row of numbers spelled through the reused buffer, with values that repeat from row to
    /// row in some columns, is the reference spelling of each, comma-separated.
    #[test]
    fn rows_spell_each_number_as_the_reference(
        rows in prop::collection::vec(prop::collection::vec(
            prop_oneof![
                Just(25.0), Just(f64::NAN), Just(f64::INFINITY), Just(1e300), -1.0e6f64..1.0e6,
            ], 6), 1..6),
    ) {
        let mut row = NumRow::new(4);
        for values in &rows {
            row.clear();
            let mut want = String::new();
            for (i, v) in values.iter().enumerate() {
                row.push(i, *v);
                row.push_byte(b',');
                want.push_str(&reference(*v));
                want.push(',');
            }
            prop_assert_eq!(String::from_utf8(row.as_bytes().to_vec()).unwrap(), want);
        }
    }

    /// Any bit pattern: subnormals, huge values, NaN payloads, both zeros.
    #[test]
    fn any_f64_spells_as_the_reference(bits in any::<u64>()) {
        let v = f64::from_bits(bits);
        let (a, b) = spelled(v);
        prop_assert_eq!(&a, &reference(v));
        prop_assert_eq!(&b, &reference(v));
    }

    /// Values at the scale of the outputs, and exact ties k/2 µ.
    #[test]
    fn output_scale_values_spell_as_the_reference(
        v in -1.0e6f64..1.0e6,
        k in -2_000_000_000i64..2_000_000_000,
        scale in 0u32..10,
    ) {
        prop_assert_eq!(spelled(v).0, reference(v));
        let tie = (k as f64 + 0.5) / 1e6 * 10f64.powi(scale as i32 - 5);
        prop_assert_eq!(spelled(tie).0, reference(tie));
        let t = micro_text(tie).map(|t| t.as_str().to_string()).unwrap_or_default();
        prop_assert_eq!(t, reference(tie));
    }
}
