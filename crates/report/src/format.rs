//! Numbers at the precision each metric supports, for `tests.csv`, the data sheet and
//! the templates (`{{ value | metric("torque") }}`).
//!
//! A computed value such as 195.31099999999998 is printed to the decimals its kind of
//! measurement can support, chosen one digit finer than what rigs resolve in practice
//! (angle encoders to about 0.01°, load cells to about 0.01 % of a 500 N·mm capacity,
//! that is 0.05 N·mm), so rounding never hides a real difference and never shows noise:
//!
//! | kind | unit | printed to |
//! | --- | --- | --- |
//! | `rate` | N·mm/° | 4 decimals |
//! | `r2` | – | 6 decimals |
//! | `stderr` | N·mm/° | 3 significant figures |
//! | `torque` | N·mm | 2 decimals |
//! | `angle` | ° | 3 decimals |
//! | `percent` | % | 3 decimals |
//! | `count` | – | whole number |
//! | anything else | – | 6 significant figures |

use serde::{Deserialize, Serialize};

/// The kind of a measured quantity, which sets how it is printed.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum MetricKind {
    /// Spring or secant rate, N·mm/°.
    Rate,
    /// Coefficient of determination of the rate fit.
    R2,
    /// Standard error of the rate, N·mm/°.
    Stderr,
    /// Torque, N·mm.
    Torque,
    /// Angle, degrees.
    Angle,
    /// Percentage (hysteresis, energy loss, linearity).
    Percent,
    /// A whole count.
    Count,
    /// A value of unknown kind (a check plugin's own figure).
    Other,
}

impl MetricKind {
    /// The kind named in a template (`rate`, `r2`, `stderr`, `torque`, `angle`, `percent`, `count`).
    pub fn named(name: &str) -> Option<MetricKind> {
        Some(match name {
            "rate" => MetricKind::Rate,
            "r2" => MetricKind::R2,
            "stderr" => MetricKind::Stderr,
            "torque" => MetricKind::Torque,
            "angle" => MetricKind::Angle,
            "percent" => MetricKind::Percent,
            "count" => MetricKind::Count,
            "other" => MetricKind::Other,
            _ => return None,
        })
    }

    /// The kind of a characteristic as findings name it (`rate`, `torque@60`, `free_angle`…).
    pub fn of_characteristic(characteristic: &str) -> MetricKind {
        match characteristic {
            "rate" | "secant_rate" | "dynamic_rate" => MetricKind::Rate,
            "free_angle" | "set" => MetricKind::Angle,
            "hysteresis" | "energy_loss" | "linearity" => MetricKind::Percent,
            c if c.starts_with("torque@") => MetricKind::Torque,
            c if c.starts_with("hysteresis@") => MetricKind::Percent,
            _ => MetricKind::Other,
        }
    }

    /// The unit a characteristic's values are in, for column headings.
    pub fn unit(self) -> &'static str {
        match self {
            MetricKind::Rate | MetricKind::Stderr => "N·mm/°",
            MetricKind::Torque => "N·mm",
            MetricKind::Angle => "°",
            MetricKind::Percent => "%",
            MetricKind::R2 | MetricKind::Count | MetricKind::Other => "",
        }
    }
}

/// `value` printed at the precision its kind supports (see the module doc); non-finite
/// values are printed as they are, never as a misleading number.
pub fn format_metric(value: f64, kind: MetricKind) -> String {
    if !value.is_finite() {
        return format!("{value}");
    }
    let text = match kind {
        MetricKind::Rate => format!("{value:.4}"),
        MetricKind::R2 => format!("{value:.6}"),
        MetricKind::Torque => format!("{value:.2}"),
        MetricKind::Angle | MetricKind::Percent => format!("{value:.3}"),
        MetricKind::Count => format!("{value:.0}"),
        MetricKind::Stderr => crate::charts::significant(value, 3),
        MetricKind::Other => crate::charts::significant(value, 6),
    };
    // "-0.00" says less than "0.00".
    if text.starts_with('-') && text[1..].chars().all(|c| c == '0' || c == '.') {
        text[1..].to_string()
    } else {
        text
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    #[test]
    fn float_noise_is_rounded_away_per_metric() {
        // Common practice, no published source: print to the metric's resolution.
        assert_eq!(format_metric(195.31099999999998, MetricKind::Torque), "195.31");
        assert_eq!(format_metric(29.214_999_999_999_996, MetricKind::Rate), "29.2150");
        assert_eq!(format_metric(0.999_987_654_3, MetricKind::R2), "0.999988");
        assert_eq!(format_metric(5.000_000_000_1, MetricKind::Angle), "5.000");
        assert_eq!(format_metric(2.345_678, MetricKind::Percent), "2.346");
        assert_eq!(format_metric(0.001_234_56, MetricKind::Stderr), "0.00123");
        assert_eq!(format_metric(-0.0001, MetricKind::Torque), "0.00");
        assert_eq!(format_metric(f64::NAN, MetricKind::Torque), "NaN");
    }

    #[test]
    fn characteristics_map_to_their_kind_and_unit() {
        assert_eq!(MetricKind::of_characteristic("torque@22.5"), MetricKind::Torque);
        assert_eq!(MetricKind::of_characteristic("free_angle").unit(), "°");
        assert_eq!(MetricKind::of_characteristic("secant_rate").unit(), "N·mm/°");
        assert_eq!(MetricKind::of_characteristic("torque-ratio"), MetricKind::Other);
        assert_eq!(MetricKind::named("percent"), Some(MetricKind::Percent));
        assert_eq!(MetricKind::named("furlongs"), None);
    }

    proptest! {
        #[test]
        fn printed_values_read_back_within_half_a_last_digit(value in -1e6f64..1e6) {
            for (kind, decimals) in [(MetricKind::Rate, 4), (MetricKind::Torque, 2), (MetricKind::Angle, 3)] {
                let text = format_metric(value, kind);
                let back: f64 = text.parse().unwrap();
                prop_assert!((back - value).abs() <= 0.5 * 10f64.powi(-decimals) + 1e-9 * value.abs(), "{} {}", value, text);
                let digits_after = text.split_once('.').map_or(0, |(_, d)| d.len());
                prop_assert_eq!(digits_after, decimals as usize);
            }
        }
    }
}
