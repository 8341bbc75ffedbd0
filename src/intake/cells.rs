//! One cell of text into one number, with the reason when it is not one.

pub const BLANK: &str = "blank";
pub const NON_NUMERIC: &str = "non-numeric";
pub const NON_FINITE: &str = "non-finite";

/// Parses a cell. With `decimal_comma` (files delimited by `;` or tab) a single comma is the
/// decimal mark. Thousands separators are never accepted: `1,234.5` and `1.234,5` are text.
#[inline]
pub fn parse_cell(raw: &[u8], decimal_comma: bool) -> Result<f64, &'static str> {
    let s = trim(raw);
    if s.is_empty() {
        return Err(BLANK);
    }
    let parsed = if let Some(v) = fast_parse(s) {
        v
    } else if !matches!(
        s[0],
        b'0'..=b'9' | b'+' | b'-' | b'.' | b'i' | b'I' | b'n' | b'N'
    ) {
        // Text such as a part id or a lot code: no number starts this way.
        return Err(NON_NUMERIC);
    } else {
        let text = std::str::from_utf8(s).map_err(|_| NON_NUMERIC)?;
        if decimal_comma && text.bytes().filter(|&b| b == b',').count() == 1 && !text.contains('.')
        {
            text.replacen(',', ".", 1)
                .parse::<f64>()
                .map_err(|_| NON_NUMERIC)?
        } else {
            // `parse` also takes "inf", "NaN" and overflowing exponents (1e999 -> inf).
            text.parse::<f64>().map_err(|_| NON_NUMERIC)?
        }
    };
    if parsed.is_finite() {
        Ok(parsed)
    } else {
        Err(NON_FINITE)
    }
}

/// Plain decimal numbers (`-12.345`, `+0.5`, `3`) without an exponent, the common case in
/// inspection exports, parsed without going through `str`. Falls back (`None`) on anything
/// else, and on more than 15 digits, where the std parser's exact rounding is needed.
#[inline]
fn fast_parse(s: &[u8]) -> Option<f64> {
    let (neg, digits) = match s[0] {
        b'-' => (true, &s[1..]),
        b'+' => (false, &s[1..]),
        _ => (false, s),
    };
    if digits.is_empty() {
        return None;
    }
    let mut mantissa: u64 = 0;
    let mut count = 0u32;
    let mut frac_digits: i32 = 0;
    let mut seen_dot = false;
    for &b in digits {
        match b {
            b'0'..=b'9' => {
                mantissa = mantissa * 10 + (b - b'0') as u64;
                count += 1;
                if seen_dot {
                    frac_digits += 1;
                }
            }
            b'.' if !seen_dot => seen_dot = true,
            _ => return None,
        }
    }
    if count == 0 || count > 15 {
        return None;
    }
    // mantissa < 1e15 < 2^53 and 10^frac_digits <= 1e15 are both exact doubles, so one
    // correctly rounded division gives the correctly rounded result.
    let v = mantissa as f64 / POW10[frac_digits as usize];
    Some(if neg { -v } else { v })
}

pub const POW10: [f64; 16] = [
    1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11, 1e12, 1e13, 1e14, 1e15,
];

#[inline]
pub fn trim(s: &[u8]) -> &[u8] {
    let start = s
        .iter()
        .position(|b| !b.is_ascii_whitespace())
        .unwrap_or(s.len());
    let end = s
        .iter()
        .rposition(|b| !b.is_ascii_whitespace())
        .map_or(start, |e| e + 1);
    &s[start..end]
}

/// Shortest text that reads back as the same number.
pub fn format_number(v: f64) -> String {
    format!("{v}")
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn parses_plain_and_signed_decimals_exactly_as_std_does() {
        for s in [
            "0",
            "-0.5",
            "+12.250",
            "42.0049",
            "0.000001",
            "123456789012345",
            ".5",
            "5.",
        ] {
            assert_eq!(
                parse_cell(s.as_bytes(), false),
                Ok(s.parse::<f64>().unwrap()),
                "{s}"
            );
        }
    }

    #[test]
    fn decimal_comma_only_when_asked_and_never_thousands() {
        assert_eq!(parse_cell(b"12,5", true), Ok(12.5));
        assert_eq!(parse_cell(b"12,5", false), Err(NON_NUMERIC));
        assert_eq!(parse_cell(b"1.234,5", true), Err(NON_NUMERIC));
        assert_eq!(parse_cell(b"1,234,5", true), Err(NON_NUMERIC));
    }

    #[test]
    fn names_blank_text_and_non_finite_cells() {
        assert_eq!(parse_cell(b"  ", false), Err(BLANK));
        assert_eq!(parse_cell(b"n/a", false), Err(NON_NUMERIC));
        assert_eq!(parse_cell(b"NaN", false), Err(NON_FINITE));
        assert_eq!(parse_cell(b"inf", false), Err(NON_FINITE));
        assert_eq!(parse_cell(b"1e999", false), Err(NON_FINITE));
        assert_eq!(parse_cell(b"1.5e-3", false), Ok(1.5e-3));
    }
}
