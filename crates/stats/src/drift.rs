//! Drift of a characteristic across lots: the least-squares slope of the lot means
//! against time, its confidence interval, and when the fitted mean would reach a
//! specification limit.
//!
//! Times are plain `f64` days from any origin (the caller converts dates), so this
//! crate needs no date type. The slope is ordinary least squares of the lot means on
//! time ([`crate::linear_fit`], checked against NIST StRD Norris); its two-sided
//! interval is slope ± t(1 − α/2; n − 2)·SE with Student's t from statrs. The lots
//! are weighted equally: a lot's mean is one reading of where the process stood.
//!
//! A projection is made only when the interval excludes zero — an insignificant
//! slope extrapolated would put a date on noise — and only towards the limit the
//! drift heads to. It extends the fitted line from the last lot's time, and counts
//! lots at the series' mean cadence. It is a straight-line extrapolation: it says
//! when, if nothing changes, not that the process will keep drifting.

use serde::Serialize;
use statrs::distribution::{ContinuousCDF, StudentsT};
use twistlot_model::Limits;

use crate::control::{check_finite, ControlError};

/// Days in a week, for the per-week figures.
pub const DAYS_PER_WEEK: f64 = 7.0;

/// The fitted drift of a series of lot means.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Drift {
    /// Number of lots fitted.
    pub lots: usize,
    /// Slope, units of the characteristic per day.
    pub slope_per_day: f64,
    /// Standard error of the slope, per day.
    pub slope_stderr_per_day: f64,
    /// Slope per week (the figure to report).
    pub slope_per_week: f64,
    /// Lower end of the slope's confidence interval, per week.
    pub ci_low_per_week: f64,
    /// Upper end of the slope's confidence interval, per week.
    pub ci_high_per_week: f64,
    /// Two-sided confidence level of the interval (0.95 by default).
    pub confidence: f64,
    /// The Student t quantile used.
    pub t_quantile: f64,
    /// Degrees of freedom, lots − 2.
    pub degrees_of_freedom: usize,
    /// Fitted mean at day 0 of the caller's time origin.
    pub intercept: f64,
    /// Time of the last lot, days.
    pub last_day: f64,
    /// Fitted mean at the last lot's time.
    pub fitted_at_last: f64,
    /// Mean days between consecutive lots.
    pub cadence_days: f64,
    /// True when the confidence interval excludes zero.
    pub significant: bool,
    /// Where the fitted mean is heading, or why no projection is made.
    pub projection: Projection,
}

/// Which specification limit.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum LimitSide {
    /// The lower specification limit.
    Lower,
    /// The upper specification limit.
    Upper,
}

/// The outlook of a drift against the specification.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum Projection {
    /// The fitted mean reaches a limit after the last lot.
    Reaches {
        /// Which limit.
        limit: LimitSide,
        /// Its value.
        limit_value: f64,
        /// Days from the last lot until the fitted mean reaches it.
        days_from_last: f64,
        /// The same in weeks.
        weeks_from_last: f64,
        /// Lots from the last one at the mean cadence (rounded up).
        lots_from_last: u64,
        /// The day it is reached, on the caller's time axis.
        at_day: f64,
    },
    /// The fitted mean is already at or beyond the limit at the last lot.
    AlreadyBeyond {
        /// Which limit.
        limit: LimitSide,
        /// Its value.
        limit_value: f64,
    },
    /// No projection, and why.
    None {
        /// The reason.
        reason: NoProjection,
    },
}

/// Why no projection was made.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum NoProjection {
    /// The slope's confidence interval includes zero.
    NotSignificant,
    /// The specification gives no limits for this characteristic.
    NoLimits,
    /// The drift heads away from the only limit there is.
    HeadsAway,
}

impl NoProjection {
    /// The reason in plain words.
    pub fn describe(self) -> &'static str {
        match self {
            NoProjection::NotSignificant => {
                "no significant drift: the slope's confidence interval includes zero"
            }
            NoProjection::NoLimits => "the specification sets no limit for this characteristic",
            NoProjection::HeadsAway => "the drift heads away from the only specification limit",
        }
    }
}

/// Fits the drift of lot means against time (days) and projects it onto `spec`.
///
/// `confidence` is the two-sided level of the slope's interval (0.95 for 95 %).
/// Needs at least three lots, spread over more than one instant.
pub fn drift(days: &[f64], means: &[f64], spec: &Limits, confidence: f64) -> Result<Drift, ControlError> {
    if days.len() != means.len() {
        return Err(ControlError::LengthMismatch {
            what: "lot times against lot means",
            left: days.len(),
            right: means.len(),
        });
    }
    if means.len() < 3 {
        return Err(ControlError::TooFew { what: "lots for a drift", needed: 3, got: means.len() });
    }
    check_finite("lot time (days)", days)?;
    check_finite("lot mean", means)?;
    if !(confidence > 0.0 && confidence < 1.0) {
        return Err(ControlError::Parameter {
            name: "confidence",
            value: confidence,
            expected: "between 0 and 1 (0.95 for 95 %)",
        });
    }
    for (name, v) in [("lower limit", spec.lower), ("upper limit", spec.upper)] {
        if let Some(v) = v {
            if !v.is_finite() {
                return Err(ControlError::Parameter { name, value: v, expected: "a finite number" });
            }
        }
    }
    let fit = crate::linear_fit(days, means).ok_or(ControlError::NoTimeSpread { lots: days.len() })?;
    let dof = fit.n - 2;
    let t = StudentsT::new(0.0, 1.0, dof as f64)
        .map_err(|_| ControlError::TooFew { what: "lots for a drift", needed: 3, got: fit.n })?
        .inverse_cdf(0.5 + confidence / 2.0);
    let half = t * fit.slope_stderr;
    let (lo, hi) = (fit.slope - half, fit.slope + half);
    let significant = lo > 0.0 || hi < 0.0;

    let first_day = days.iter().copied().fold(f64::INFINITY, f64::min);
    let last_day = days.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    let cadence_days = (last_day - first_day) / (fit.n - 1) as f64;
    let fitted_at_last = fit.predict(last_day);

    let projection = if !significant {
        Projection::None { reason: NoProjection::NotSignificant }
    } else if spec.lower.is_none() && spec.upper.is_none() {
        Projection::None { reason: NoProjection::NoLimits }
    } else {
        let target = if fit.slope > 0.0 {
            spec.upper.map(|v| (LimitSide::Upper, v))
        } else {
            spec.lower.map(|v| (LimitSide::Lower, v))
        };
        match target {
            None => Projection::None { reason: NoProjection::HeadsAway },
            Some((limit, limit_value)) => {
                let beyond = match limit {
                    LimitSide::Upper => fitted_at_last >= limit_value,
                    LimitSide::Lower => fitted_at_last <= limit_value,
                };
                if beyond {
                    Projection::AlreadyBeyond { limit, limit_value }
                } else {
                    let days_from_last = (limit_value - fitted_at_last) / fit.slope;
                    Projection::Reaches {
                        limit,
                        limit_value,
                        days_from_last,
                        weeks_from_last: days_from_last / DAYS_PER_WEEK,
                        lots_from_last: (days_from_last / cadence_days).ceil() as u64,
                        at_day: last_day + days_from_last,
                    }
                }
            }
        }
    };

    Ok(Drift {
        lots: fit.n,
        slope_per_day: fit.slope,
        slope_stderr_per_day: fit.slope_stderr,
        slope_per_week: fit.slope * DAYS_PER_WEEK,
        ci_low_per_week: lo * DAYS_PER_WEEK,
        ci_high_per_week: hi * DAYS_PER_WEEK,
        confidence,
        t_quantile: t,
        degrees_of_freedom: dof,
        intercept: fit.intercept,
        last_day,
        fitted_at_last,
        cadence_days,
        significant,
        projection,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    // NIST StRD linear least squares, dataset "Norris" (x = NIST's ozone reading, y = the
    // customer's); here x stands in for days and y for lot means.
    use crate::fit::tests::{NORRIS_X, NORRIS_Y};

    fn no_limits() -> Limits {
        Limits { lower: None, upper: None }
    }

    #[test]
    fn slope_and_interval_on_norris() {
        let d = drift(&NORRIS_X, &NORRIS_Y, &no_limits(), 0.95).unwrap();
        let (b1, se) = (1.00211681802045, 0.429796848199937E-03);
        // Source: NIST StRD, Norris.dat certified B1 and its standard deviation.
        assert!((d.slope_per_day - b1).abs() <= 1e-12 * b1);
        assert!((d.slope_stderr_per_day - se).abs() <= 1e-9 * se);
        assert_eq!(d.degrees_of_freedom, 34);
        // Source: statrs StudentsT(34).inverse_cdf(0.975), computed here independently.
        let t = StudentsT::new(0.0, 1.0, 34.0).unwrap().inverse_cdf(0.975);
        assert!((d.t_quantile - t).abs() < 1e-12);
        // From memory: Student t table, two-sided 95 %, 34 degrees of freedom: 2.032.
        assert!((t - 2.032).abs() < 5e-4, "{t}");
        // Source: NIST StRD Norris B1 ± t·SE, in weeks.
        assert!((d.ci_low_per_week - 7.0 * (b1 - t * se)).abs() < 1e-9);
        assert!((d.ci_high_per_week - 7.0 * (b1 + t * se)).abs() < 1e-9);
        assert!((d.slope_per_week - 7.0 * b1).abs() < 1e-9);
        assert!(d.significant);
        assert_eq!(d.projection, Projection::None { reason: NoProjection::NoLimits });
    }

    /// Eleven weekly lots on an exact line 10 + 0.01·day.
    fn weekly_line(slope_per_day: f64) -> (Vec<f64>, Vec<f64>) {
        let days: Vec<f64> = (0..11).map(|i| 7.0 * i as f64).collect();
        let means = days.iter().map(|d| 10.0 + slope_per_day * d).collect();
        (days, means)
    }

    #[test]
    fn a_rising_line_reaches_the_upper_limit() {
        let (days, means) = weekly_line(0.01);
        let spec = Limits { lower: Some(9.0), upper: Some(11.5) };
        let d = drift(&days, &means, &spec, 0.95).unwrap();
        // Common practice, no published source: on 10 + 0.01·day the fitted mean is 10.7 at
        // day 70 and reaches 11.5 after 80 more days, 12 lots at one a week (11.43 rounded up).
        assert!((d.fitted_at_last - 10.7).abs() < 1e-9);
        assert!((d.cadence_days - 7.0).abs() < 1e-12);
        match d.projection {
            Projection::Reaches {
                limit,
                limit_value,
                days_from_last,
                weeks_from_last,
                lots_from_last,
                at_day,
            } => {
                assert_eq!((limit, limit_value, lots_from_last), (LimitSide::Upper, 11.5, 12));
                assert!((days_from_last - 80.0).abs() < 1e-6);
                assert!((weeks_from_last - 80.0 / 7.0).abs() < 1e-6);
                assert!((at_day - 150.0).abs() < 1e-6);
            }
            other => panic!("{other:?}"),
        }
    }

    #[test]
    fn a_falling_line_heads_for_the_lower_limit() {
        let (days, means) = weekly_line(-0.005);
        let spec = Limits { lower: Some(9.5), upper: Some(11.0) };
        let d = drift(&days, &means, &spec, 0.95).unwrap();
        // Common practice, no published source: 9.65 at day 70, 9.5 after 30 more days (5 lots
        // at one a week would be 35 days; 30/7 = 4.3 rounds up to 5).
        match d.projection {
            Projection::Reaches { limit: LimitSide::Lower, days_from_last, lots_from_last: 5, .. } => {
                assert!((days_from_last - 30.0).abs() < 1e-6)
            }
            other => panic!("{other:?}"),
        }
        let only_upper = Limits { lower: None, upper: Some(11.0) };
        assert_eq!(
            drift(&days, &means, &only_upper, 0.95).unwrap().projection,
            Projection::None { reason: NoProjection::HeadsAway }
        );
        let passed = Limits { lower: Some(9.7), upper: None };
        assert_eq!(
            drift(&days, &means, &passed, 0.95).unwrap().projection,
            Projection::AlreadyBeyond { limit: LimitSide::Lower, limit_value: 9.7 }
        );
    }

    #[test]
    fn no_projection_without_a_significant_slope() {
        // A palindrome in time has a least-squares slope of exactly zero.
        let days: Vec<f64> = (0..8).map(|i| 3.5 * i as f64).collect();
        let means = [10.0, 10.2, 9.9, 10.1, 10.1, 9.9, 10.2, 10.0];
        let d = drift(&days, &means, &Limits { lower: Some(9.0), upper: Some(11.0) }, 0.95).unwrap();
        // Common practice, no published source: a zero slope with scatter is not significant.
        assert!(d.slope_per_day.abs() < 1e-12);
        assert!(!d.significant && d.ci_low_per_week < 0.0 && d.ci_high_per_week > 0.0);
        assert_eq!(d.projection, Projection::None { reason: NoProjection::NotSignificant });
        assert!(NoProjection::NotSignificant.describe().contains("confidence interval"));
    }

    #[test]
    fn bad_series_are_refused() {
        let spec = no_limits();
        assert!(matches!(drift(&[0.0, 1.0], &[1.0, 2.0], &spec, 0.95), Err(ControlError::TooFew { .. })));
        assert_eq!(
            drift(&[5.0; 4], &[1.0, 2.0, 3.0, 4.0], &spec, 0.95),
            Err(ControlError::NoTimeSpread { lots: 4 })
        );
        assert!(matches!(
            drift(&[0.0, 1.0, 2.0], &[1.0, f64::NAN, 3.0], &spec, 0.95),
            Err(ControlError::NotFinite { index: Some(1), .. })
        ));
        assert!(matches!(drift(&[0.0, 1.0], &[1.0], &spec, 0.95), Err(ControlError::LengthMismatch { .. })));
        assert!(matches!(
            drift(&[0.0, 1.0, 2.0], &[1.0, 2.0, 3.0], &spec, 1.0),
            Err(ControlError::Parameter { name: "confidence", .. })
        ));
    }

    proptest! {
        // Common practice, no published source: moving the time origin or adding a constant to
        // every mean changes neither the slope, its interval, nor the days to a limit moved
        // with the means.
        #[test]
        fn drift_is_invariant_to_origins(means in prop::collection::vec(9.0f64..11.0, 3..40),
                                         t0 in -1000.0f64..30000.0, c in -50.0f64..50.0) {
            let days: Vec<f64> = (0..means.len()).map(|i| 3.0 * i as f64 + 0.5 * (i % 2) as f64).collect();
            let spec = Limits { lower: Some(8.0), upper: Some(12.0) };
            let a = drift(&days, &means, &spec, 0.95).unwrap();
            let moved_days: Vec<f64> = days.iter().map(|d| d + t0).collect();
            let moved_means: Vec<f64> = means.iter().map(|m| m + c).collect();
            let moved_spec = Limits { lower: Some(8.0 + c), upper: Some(12.0 + c) };
            let b = drift(&moved_days, &moved_means, &moved_spec, 0.95).unwrap();
            let tol = 1e-6 * (1.0 + a.slope_per_week.abs());
            prop_assert!((a.slope_per_week - b.slope_per_week).abs() < tol);
            prop_assert!((a.ci_low_per_week - b.ci_low_per_week).abs() < tol);
            prop_assert_eq!(a.significant, b.significant);
            prop_assert!((a.slope_per_week - 7.0 * a.slope_per_day).abs() < 1e-12 * (1.0 + a.slope_per_week.abs()));
            if let (Projection::Reaches { days_from_last: x, .. }, Projection::Reaches { days_from_last: y, .. }) =
                (&a.projection, &b.projection)
            {
                prop_assert!((x - y).abs() < 1e-3 * (1.0 + x.abs()));
            }
        }
    }
}
