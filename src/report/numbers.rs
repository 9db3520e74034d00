//! How numbers are printed in listings, TSV and JSON: a fixed number of
//! significant digits (six unless asked for more), written the way C's
//! `printf("%.Ng")` writes them, so every spreadsheet and every language's
//! number parser reads them back. Fields of text written into TSV are
//! escaped here too, so that no value can break the columns.

use std::borrow::Cow;

/// Significant digits printed by default.
pub const DEFAULT_PRECISION: usize = 6;
/// The most significant digits anyone can ask for: 17 digits tell every
/// binary64 value apart (IEEE 754-2019, section 5.12.2), so more would only
/// print noise.
pub const MAX_PRECISION: usize = 17;

/// Prints numbers with a fixed number of significant digits.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct Numbers {
    significant: usize,
}

impl Default for Numbers {
    fn default() -> Numbers {
        Numbers::with_precision(DEFAULT_PRECISION)
    }
}

impl Numbers {
    /// `significant` digits, clamped to `1..=MAX_PRECISION`.
    pub fn with_precision(significant: usize) -> Numbers {
        Numbers {
            significant: significant.clamp(1, MAX_PRECISION),
        }
    }

    /// The number of significant digits.
    pub fn precision(&self) -> usize {
        self.significant
    }

    /// `value` as `%.Ng` prints it (N the precision): scientific notation
    /// when the decimal exponent is below -4 or at least N, plain decimals
    /// otherwise, trailing zeros and a bare decimal point removed, an
    /// exponent of at least two digits; `nan`, `inf` and `-inf` for values
    /// that are not finite.
    pub fn text(&self, value: f64) -> String {
        if value.is_nan() {
            return "nan".to_string();
        }
        if value.is_infinite() {
            return if value > 0.0 { "inf" } else { "-inf" }.to_string();
        }
        let digits = self.significant;
        // The exponent after rounding to `digits` significant digits decides
        // the style (ISO C11 7.21.6.1, the g conversion).
        let scientific = format!("{:.*e}", digits - 1, value);
        let (mantissa, exponent) = scientific
            .split_once('e')
            .expect("Rust's {:e} always writes an exponent");
        let exponent: i64 = exponent.parse().expect("Rust's {:e} writes a whole exponent");
        if exponent < -4 || exponent >= digits as i64 {
            let mantissa = strip_zeros(mantissa);
            let sign = if exponent < 0 { '-' } else { '+' };
            format!("{mantissa}e{sign}{:02}", exponent.unsigned_abs())
        } else {
            let decimals = (digits as i64 - 1 - exponent) as usize;
            strip_zeros(&format!("{value:.decimals$}")).to_string()
        }
    }

    /// `value` rounded to the precision, as the nearest binary64 value (what
    /// JSON output carries, so that it prints no more digits than the text).
    pub fn round(&self, value: f64) -> f64 {
        if !value.is_finite() {
            return value;
        }
        self.text(value).parse().unwrap_or(value)
    }

    /// Rounds every non-integer number in a JSON value, in place.
    pub fn round_json(&self, value: &mut serde_json::Value) {
        use serde_json::Value;
        match value {
            Value::Number(number) if number.is_f64() => {
                if let Some(rounded) = number
                    .as_f64()
                    .and_then(|x| serde_json::Number::from_f64(self.round(x)))
                {
                    *number = rounded;
                }
            }
            Value::Array(items) => items.iter_mut().for_each(|item| self.round_json(item)),
            Value::Object(fields) => fields.values_mut().for_each(|item| self.round_json(item)),
            _ => {}
        }
    }
}

/// Drops trailing zeros after a decimal point, and the point if nothing follows it.
fn strip_zeros(text: &str) -> &str {
    if text.contains('.') {
        text.trim_end_matches('0').trim_end_matches('.')
    } else {
        text
    }
}

/// A text value made safe for one TSV field: backslash, tab, line feed and
/// carriage return are written `\\`, `\t`, `\n` and `\r`, the escapes
/// PostgreSQL's text COPY format and most TSV readers use; anything else is
/// kept as it is. Borrows when nothing needs escaping.
pub fn tsv_field(text: &str) -> Cow<'_, str> {
    if !text.contains(['\\', '\t', '\n', '\r']) {
        return Cow::Borrowed(text);
    }
    let mut out = String::with_capacity(text.len() + 8);
    for character in text.chars() {
        match character {
            '\\' => out.push_str("\\\\"),
            '\t' => out.push_str("\\t"),
            '\n' => out.push_str("\\n"),
            '\r' => out.push_str("\\r"),
            other => out.push(other),
        }
    }
    Cow::Owned(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn six_significant_digits_as_printf_g_writes_them() {
        // Source: ISO C11 7.21.6.1 (the g conversion); expected strings are
        // what C's printf("%.6g") (here Python's "%.6g" % x, which follows
        // it) prints for these values.
        let numbers = Numbers::default();
        let cases: [(f64, &str); 16] = [
            (0.0, "0"),
            (1.0, "1"),
            (0.5, "0.5"),
            (0.123456789, "0.123457"),
            (0.0001, "0.0001"),
            (0.00001, "1e-05"),
            (0.000_055_302_755_063_332_9, "5.53028e-05"),
            (123456.0, "123456"),
            (1234567.0, "1.23457e+06"),
            (999999.5, "1e+06"),
            (9.9999996, "10"),
            (-0.0271828182845904, "-0.0271828"),
            (1e-300, "1e-300"),
            (2.5e-308, "2.5e-308"),
            (100.0, "100"),
            (1234.5678, "1234.57"),
        ];
        for (value, expected) in cases {
            assert_eq!(numbers.text(value), expected, "{value:e}");
        }
        assert_eq!(numbers.text(f64::NAN), "nan");
        assert_eq!(numbers.text(f64::INFINITY), "inf");
        assert_eq!(numbers.text(f64::NEG_INFINITY), "-inf");
    }

    #[test]
    fn other_precisions_as_printf_g_writes_them() {
        // Source: ISO C11 7.21.6.1; printf("%.3g"), printf("%.10g") and
        // printf("%.17g") of these values.
        assert_eq!(Numbers::with_precision(3).text(0.0123456), "0.0123");
        assert_eq!(Numbers::with_precision(3).text(98765.0), "9.88e+04");
        assert_eq!(Numbers::with_precision(1).text(0.25), "0.2");
        assert_eq!(Numbers::with_precision(10).text(1.0 / 3.0), "0.3333333333");
        assert_eq!(Numbers::with_precision(17).text(0.1), "0.10000000000000001");
        // 17 significant digits read back to the same binary64 value
        // (IEEE 754-2019, 5.12.2).
        let value = 0.000_055_302_755_063_332_9_f64;
        assert_eq!(
            Numbers::with_precision(17).text(value).parse::<f64>().unwrap(),
            value
        );
    }

    #[test]
    fn json_numbers_are_rounded_and_integers_kept() {
        // Source: RFC 8259 section 6 (a JSON number may carry an exponent);
        // rounding to six digits is this module's own rule.
        let mut value = serde_json::json!({
            "share": 0.123456789,
            "count": 12345678901u64,
            "rows": [[1, 0.000_055_302_755_063_332_9]],
        });
        Numbers::default().round_json(&mut value);
        assert_eq!(
            serde_json::to_string(&value).unwrap(),
            r#"{"share":0.123457,"count":12345678901,"rows":[[1,0.0000553028]]}"#
        );
    }

    #[test]
    fn tsv_fields_escape_what_would_break_columns() {
        // Source: IANA media type text/tab-separated-values (a field holds no
        // tab or line break); the escapes are those of PostgreSQL's COPY
        // text format (backslash, t, n, r).
        assert_eq!(tsv_field("plain id"), "plain id");
        assert!(matches!(tsv_field("plain id"), Cow::Borrowed(_)));
        assert_eq!(tsv_field("a\tb\nc\rd\\e"), "a\\tb\\nc\\rd\\\\e");
    }
}
