//! Ordinary least squares of y on x: the straight line every rate comes from.

use serde::Serialize;

/// A straight line fitted by ordinary least squares, with the statistics a
/// report needs to say how far the line can be trusted.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct LinearFit {
    /// Number of points fitted.
    pub n: usize,
    /// Slope (for a curve: rate, N·mm/°).
    pub slope: f64,
    /// Intercept at x = 0 (for a curve: torque at 0°, N·mm).
    pub intercept: f64,
    /// Coefficient of determination R².
    pub r2: f64,
    /// Standard error of the slope.
    pub slope_stderr: f64,
    /// Standard error of the intercept.
    pub intercept_stderr: f64,
    /// Residual standard deviation, √(SSE / (n − 2)).
    pub residual_sd: f64,
}

impl LinearFit {
    /// The fitted value at `x`.
    pub fn predict(&self, x: f64) -> f64 {
        self.intercept + self.slope * x
    }
}

/// Fits `y = intercept + slope·x` by ordinary least squares.
///
/// Returns `None` when the slices differ in length, hold fewer than three
/// points (two points leave no degrees of freedom for a standard error), hold a
/// non-finite value, or when every x is the same.
///
/// Sums are taken about the means (two passes) rather than from raw sums of
/// squares: rig angles sit far from zero relative to their spread often enough
/// that the one-pass textbook formula loses digits.
pub fn linear_fit(x: &[f64], y: &[f64]) -> Option<LinearFit> {
    let n = x.len();
    if n != y.len() || n < 3 || x.iter().chain(y).any(|v| !v.is_finite()) {
        return None;
    }
    let nf = n as f64;
    let x_mean = x.iter().sum::<f64>() / nf;
    let y_mean = y.iter().sum::<f64>() / nf;
    let (mut sxx, mut sxy, mut syy) = (0.0, 0.0, 0.0);
    for (&xi, &yi) in x.iter().zip(y) {
        let dx = xi - x_mean;
        let dy = yi - y_mean;
        sxx += dx * dx;
        sxy += dx * dy;
        syy += dy * dy;
    }
    if sxx <= 0.0 {
        return None;
    }
    let slope = sxy / sxx;
    let intercept = y_mean - slope * x_mean;
    let sse: f64 = x
        .iter()
        .zip(y)
        .map(|(&xi, &yi)| {
            let r = yi - (intercept + slope * xi);
            r * r
        })
        .sum();
    let residual_var = sse / (nf - 2.0);
    let residual_sd = residual_var.sqrt();
    let slope_stderr = (residual_var / sxx).sqrt();
    let intercept_stderr = (residual_var * (1.0 / nf + x_mean * x_mean / sxx)).sqrt();
    // A constant y is fitted perfectly by a flat line; calling that R² = 1
    // keeps the field defined instead of 0/0.
    let r2 = if syy > 0.0 { (1.0 - sse / syy).clamp(0.0, 1.0) } else { 1.0 };
    Some(LinearFit { n, slope, intercept, r2, slope_stderr, intercept_stderr, residual_sd })
}

#[cfg(test)]
pub(crate) mod tests {
    use super::*;
    use proptest::prelude::*;

    // NIST StRD linear least squares, dataset "Norris" (lower difficulty, 36 observations):
    // calibration of ozone monitors, y = customer's measurement, x = NIST's.
    pub(crate) const NORRIS_X: [f64; 36] = [
        0.2, 337.4, 118.2, 884.6, 10.1, 226.5, 666.3, 996.3, 448.6, 777.0, 558.2, 0.4, 0.6, 775.5, 666.9,
        338.0, 447.5, 11.6, 556.0, 228.1, 995.8, 887.6, 120.2, 0.3, 0.3, 556.8, 339.1, 887.2, 999.0, 779.0,
        11.1, 118.3, 229.2, 669.1, 448.9, 0.5,
    ];
    pub(crate) const NORRIS_Y: [f64; 36] = [
        0.1, 338.8, 118.1, 888.0, 9.2, 228.1, 668.5, 998.5, 449.1, 778.9, 559.2, 0.3, 0.1, 778.1, 668.8,
        339.3, 448.9, 10.8, 557.7, 228.3, 998.0, 888.8, 119.6, 0.3, 0.6, 557.6, 339.3, 888.0, 998.5, 778.9,
        10.2, 117.6, 228.9, 668.4, 449.2, 0.2,
    ];

    fn close(actual: f64, expected: f64, rel: f64) -> bool {
        (actual - expected).abs() <= rel * expected.abs()
    }

    #[test]
    fn norris_certified_values() {
        let fit = linear_fit(&NORRIS_X, &NORRIS_Y).unwrap();
        assert_eq!(fit.n, 36);
        // Source: NIST StRD, Norris.dat certified values: B0, B1 and their standard deviations.
        assert!(close(fit.intercept, -0.262323073774029, 1e-10), "{}", fit.intercept);
        assert!(close(fit.slope, 1.00211681802045, 1e-12), "{}", fit.slope);
        assert!(close(fit.intercept_stderr, 0.232818234301152, 1e-9), "{}", fit.intercept_stderr);
        assert!(close(fit.slope_stderr, 0.429796848199937E-03, 1e-9), "{}", fit.slope_stderr);
        // Source: NIST StRD, Norris.dat certified residual standard deviation and R-squared.
        assert!(close(fit.residual_sd, 0.884796396144373, 1e-9), "{}", fit.residual_sd);
        assert!(close(fit.r2, 0.999993745883712, 1e-13), "{}", fit.r2);
    }

    #[test]
    fn degenerate_inputs_give_none() {
        assert!(linear_fit(&[1.0, 2.0], &[1.0, 2.0]).is_none());
        assert!(linear_fit(&[1.0, 1.0, 1.0], &[1.0, 2.0, 3.0]).is_none());
        assert!(linear_fit(&[1.0, 2.0, 3.0], &[1.0, f64::NAN, 3.0]).is_none());
        assert!(linear_fit(&[1.0, 2.0, 3.0], &[1.0, 2.0]).is_none());
    }

    proptest! {
        // Common practice, no published source: least squares returns a noiseless line exactly.
        #[test]
        fn a_noiseless_line_is_returned(slope in -50.0f64..50.0, intercept in -500.0f64..500.0,
                                         x0 in -100.0f64..100.0, step in 0.01f64..5.0, n in 3usize..200) {
            let x: Vec<f64> = (0..n).map(|i| x0 + step * i as f64).collect();
            let y: Vec<f64> = x.iter().map(|&xi| intercept + slope * xi).collect();
            let fit = linear_fit(&x, &y).unwrap();
            let scale = slope.abs().max(1.0);
            prop_assert!((fit.slope - slope).abs() <= 1e-9 * scale);
            prop_assert!((fit.intercept - intercept).abs() <= 1e-7 * (intercept.abs() + scale * (x0.abs() + 1.0)));
            prop_assert!(fit.residual_sd <= 1e-8 * (scale * (x0.abs() + step * n as f64) + intercept.abs()));
        }
    }
}
