//! Number formatting for messages a person reads.

/// Formats a measured value with four significant digits and no trailing
/// zeros (`4.41`, `240`, `0.1235`), which is as many as a rig supports and few
/// enough to read at a glance.
pub(crate) fn num(value: f64) -> String {
    if !value.is_finite() {
        return value.to_string();
    }
    if value == 0.0 {
        return "0".to_string();
    }
    let magnitude = value.abs().log10().floor() as i32;
    let decimals = (3 - magnitude).clamp(0, 12) as usize;
    let text = format!("{value:.decimals$}");
    let text = if text.contains('.') { text.trim_end_matches('0').trim_end_matches('.') } else { &text };
    if text == "-0" {
        "0".to_string()
    } else {
        text.to_string()
    }
}

#[cfg(test)]
mod tests {
    use super::num;

    #[test]
    fn four_significant_digits() {
        assert_eq!(num(4.41), "4.41");
        assert_eq!(num(4.4137), "4.414");
        assert_eq!(num(240.0), "240");
        assert_eq!(num(0.123456), "0.1235");
        assert_eq!(num(-3.0), "-3");
        assert_eq!(num(12345.6), "12346");
        assert_eq!(num(0.0), "0");
    }
}
