//! A tight decimal tokenizer for the numbers rigs write.
//!
//! Rig exports hold millions of short decimals (`12.345`, `-0,0123`, `1.5e-3`).
//! The common case takes Clinger's fast path: at most 15 significant digits and a
//! power of ten within ±22 are exact in f64, so one multiply or divide gives the
//! correctly rounded result. Anything else (long mantissas, big exponents, `NaN`)
//! goes to the standard library's parser, so results always equal `str::parse`.

/// Why a cell is not a usable number.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum NumberError {
    /// Not a decimal number at all.
    NotANumber,
    /// A NaN or an infinity.
    NotFinite,
}

const POW10: [f64; 23] = [
    1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11, 1e12, 1e13, 1e14, 1e15, 1e16, 1e17, 1e18,
    1e19, 1e20, 1e21, 1e22,
];

/// Accumulates decimal digits from `cell[i..]`; returns the new position.
#[inline(always)]
fn digits(cell: &[u8], mut i: usize, mantissa: &mut u64) -> usize {
    while let Some(&byte) = cell.get(i) {
        let digit = byte.wrapping_sub(b'0');
        if digit > 9 {
            break;
        }
        *mantissa = mantissa.wrapping_mul(10).wrapping_add(u64::from(digit));
        i += 1;
    }
    i
}

/// Parses one cell (already trimmed) with the given decimal separator.
#[inline(always)]
pub fn parse_decimal(cell: &[u8], decimal: u8) -> Result<f64, NumberError> {
    let n = cell.len();
    let negative = cell.first() == Some(&b'-');
    let mut i = usize::from(matches!(cell.first(), Some(b'-' | b'+')));
    let mut mantissa: u64 = 0;
    let int_start = i;
    i = digits(cell, i, &mut mantissa);
    let mut total_digits = i - int_start;
    let mut exponent: i32 = 0;
    if i < n && cell[i] == decimal {
        let frac_start = i + 1;
        i = digits(cell, frac_start, &mut mantissa);
        total_digits += i - frac_start;
        exponent = -((i - frac_start) as i32);
    }
    // 19 digits always fit a u64; more (or none) go the careful way.
    if total_digits == 0 || total_digits > 19 {
        return slow_path(cell, decimal);
    }
    if i < n && (cell[i] == b'e' || cell[i] == b'E') {
        i += 1;
        let mut exp_negative = false;
        if i < n && (cell[i] == b'-' || cell[i] == b'+') {
            exp_negative = cell[i] == b'-';
            i += 1;
        }
        let start = i;
        let mut value: i32 = 0;
        while i < n && cell[i].is_ascii_digit() {
            value = value.saturating_mul(10).saturating_add(i32::from(cell[i] - b'0'));
            i += 1;
        }
        if i == start {
            return Err(NumberError::NotANumber);
        }
        exponent = exponent.saturating_add(if exp_negative { -value } else { value });
    }
    if i != n {
        return Err(NumberError::NotANumber);
    }
    // Clinger's fast path: an exactly representable mantissa and power of ten.
    if mantissa > (1u64 << 53) || !(-22..=22).contains(&exponent) {
        return slow_path(cell, decimal);
    }
    let mut value = mantissa as f64;
    if exponent >= 0 {
        value *= POW10[exponent as usize];
    } else {
        value /= POW10[(-exponent) as usize];
    }
    Ok(if negative { -value } else { value })
}

/// Parses a plain decimal (`[-+]digits[.digits]`) at the start of `bytes` and says
/// how many bytes it took; `None` for anything else (exponents, long mantissas,
/// no digits), which the caller then reads the careful way. The result equals
/// [`parse_decimal`] on the same bytes.
#[inline(always)]
pub fn parse_decimal_prefix(bytes: &[u8], decimal: u8) -> Option<(f64, usize)> {
    let n = bytes.len();
    let negative = bytes.first() == Some(&b'-');
    let mut i = usize::from(matches!(bytes.first(), Some(b'-' | b'+')));
    let mut mantissa: u64 = 0;
    let int_start = i;
    i = digits(bytes, i, &mut mantissa);
    let mut total_digits = i - int_start;
    let mut exponent: i32 = 0;
    if i < n && bytes[i] == decimal {
        let frac_start = i + 1;
        i = digits(bytes, frac_start, &mut mantissa);
        total_digits += i - frac_start;
        exponent = -((i - frac_start) as i32);
    }
    // What follows (a delimiter, or anything else such as an exponent) is the caller's to judge.
    if total_digits == 0 || total_digits > 19 || mantissa > (1u64 << 53) || exponent < -22 {
        return None;
    }
    let mut value = mantissa as f64;
    if exponent < 0 {
        value /= POW10[(-exponent) as usize];
    }
    Some((if negative { -value } else { value }, i))
}

fn slow_path(cell: &[u8], decimal: u8) -> Result<f64, NumberError> {
    let text = std::str::from_utf8(cell).map_err(|_| NumberError::NotANumber)?;
    let lowered = text.to_ascii_lowercase();
    let unsigned = lowered.trim_start_matches(['+', '-']);
    if matches!(unsigned, "nan" | "inf" | "infinity") {
        return Err(NumberError::NotFinite);
    }
    // The standard parser accepts forms a rig never writes (`inf`, `1.`), and only `.`.
    if !text.bytes().any(|b| b.is_ascii_digit()) {
        return Err(NumberError::NotANumber);
    }
    let value: f64 = if decimal == b'.' {
        text.parse().map_err(|_| NumberError::NotANumber)?
    } else {
        if text.contains('.') {
            return Err(NumberError::NotANumber);
        }
        text.replace(decimal as char, ".").parse().map_err(|_| NumberError::NotANumber)?
    };
    if value.is_finite() {
        Ok(value)
    } else {
        Err(NumberError::NotFinite)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    #[test]
    fn common_forms() {
        assert_eq!(parse_decimal(b"12.345", b'.'), Ok(12.345));
        assert_eq!(parse_decimal(b"-0,0123", b','), Ok(-0.0123));
        assert_eq!(parse_decimal(b"+7", b'.'), Ok(7.0));
        assert_eq!(parse_decimal(b"1.5e-3", b'.'), Ok(0.0015));
        assert_eq!(parse_decimal(b".5", b'.'), Ok(0.5));
        assert_eq!(parse_decimal(b"0.000000", b'.'), Ok(0.0));
        assert_eq!(parse_decimal(b"123456789012345678901234", b'.'), Ok(1.2345678901234568e23));
    }

    #[test]
    fn refusals() {
        for bad in [&b""[..], b"-", b"12,5x", b"1.2.3", b"abc", b"1e", b"--1", b"1 2", b"12.5"] {
            let decimal = if bad == b"12.5" { b',' } else { b'.' };
            assert_eq!(
                parse_decimal(bad, decimal),
                Err(NumberError::NotANumber),
                "{:?}",
                std::str::from_utf8(bad)
            );
        }
        for bad in [&b"NaN"[..], b"nan", b"-inf", b"Infinity", b"1e999"] {
            assert_eq!(
                parse_decimal(bad, b'.'),
                Err(NumberError::NotFinite),
                "{:?}",
                std::str::from_utf8(bad)
            );
        }
    }

    proptest! {
        #[test]
        fn the_prefix_parser_agrees_with_the_whole_cell_parser(value in -1e6f64..1e6, places in 0usize..8, tail in "[,;\t \n]?") {
            let text = format!("{value:.places$}");
            let cell = format!("{text}{tail}");
            let (parsed, used) = parse_decimal_prefix(cell.as_bytes(), b'.').unwrap();
            prop_assert_eq!(used, text.len());
            prop_assert_eq!(Ok(parsed), parse_decimal(text.as_bytes(), b'.'));
        }

        // The fast path must agree bit for bit with the standard library's parser.
        #[test]
        fn agrees_with_std_on_fixed_notation(value in -1e7f64..1e7, places in 0usize..9) {
            let text = format!("{value:.places$}");
            let expected: f64 = text.parse().unwrap();
            prop_assert_eq!(parse_decimal(text.as_bytes(), b'.'), Ok(expected));
            let comma = text.replace('.', ",");
            prop_assert_eq!(parse_decimal(comma.as_bytes(), b','), Ok(expected));
        }

        #[test]
        fn agrees_with_std_on_scientific_notation(value in proptest::num::f64::NORMAL) {
            let text = format!("{value:e}");
            let expected: f64 = text.parse().unwrap();
            prop_assert_eq!(parse_decimal(text.as_bytes(), b'.'), Ok(expected));
        }

        #[test]
        fn never_panics(bytes in proptest::collection::vec(any::<u8>(), 0..24)) {
            let _ = parse_decimal(&bytes, b'.');
            let _ = parse_decimal(&bytes, b',');
        }
    }
}
