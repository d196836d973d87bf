//! Small least-squares tools for the free-swing analysis: a dense solver for a handful of
//! unknowns, straight-line and parabola fits, and a Levenberg–Marquardt fit of a damped
//! sinusoid.
//!
//! Written here rather than taken from a crate because the problems are tiny (five
//! unknowns at most) and the analysis needs full control of starting values and failure.

/// Solves `a·x = b` for a small dense system by Gaussian elimination with partial pivoting.
///
/// Returns `None` when the system is singular (or numerically so).
pub(crate) fn solve<const N: usize>(mut a: [[f64; N]; N], mut b: [f64; N]) -> Option<[f64; N]> {
    let scale = a.iter().flatten().fold(0.0_f64, |m, v| m.max(v.abs()));
    if !(scale.is_finite() && scale > 0.0) {
        return None;
    }
    for col in 0..N {
        let pivot = (col..N).max_by(|&i, &j| a[i][col].abs().total_cmp(&a[j][col].abs()))?;
        if a[pivot][col].abs() <= scale * 1e-14 {
            return None;
        }
        a.swap(col, pivot);
        b.swap(col, pivot);
        let pivot_row = a[col];
        for row in col + 1..N {
            let factor = a[row][col] / pivot_row[col];
            if factor != 0.0 {
                for (target, source) in a[row][col..].iter_mut().zip(&pivot_row[col..]) {
                    *target -= factor * source;
                }
                b[row] -= factor * b[col];
            }
        }
    }
    let mut x = [0.0; N];
    for row in (0..N).rev() {
        let mut sum = b[row];
        for k in row + 1..N {
            sum -= a[row][k] * x[k];
        }
        x[row] = sum / a[row][row];
    }
    x.iter().all(|v| v.is_finite()).then_some(x)
}

/// Weighted least-squares line `y = intercept + slope·x`; `None` with fewer than two distinct x.
pub(crate) fn weighted_line(x: &[f64], y: &[f64], w: &[f64]) -> Option<(f64, f64)> {
    let sw: f64 = w.iter().sum();
    if sw.is_nan() || sw <= 0.0 {
        return None;
    }
    let mx = x.iter().zip(w).map(|(x, w)| x * w).sum::<f64>() / sw;
    let my = y.iter().zip(w).map(|(y, w)| y * w).sum::<f64>() / sw;
    let sxx: f64 = x.iter().zip(w).map(|(x, w)| w * (x - mx) * (x - mx)).sum();
    let sxy: f64 = x.iter().zip(y).zip(w).map(|((x, y), w)| w * (x - mx) * (y - my)).sum();
    if sxx.is_nan() || sxx <= 0.0 {
        return None;
    }
    let slope = sxy / sxx;
    Some((my - slope * mx, slope))
}

/// Unweighted least-squares line.
pub(crate) fn line(x: &[f64], y: &[f64]) -> Option<(f64, f64)> {
    weighted_line(x, y, &vec![1.0; x.len()])
}

/// The vertex (position, value) and the second-order coefficient of the least-squares
/// parabola through the points, with x taken relative to `x0`; `None` when the points are
/// too few or not curved at all.
pub(crate) fn parabola_vertex(x: &[f64], y: &[f64], x0: f64) -> Option<(f64, f64, f64)> {
    if x.len() < 3 {
        return None;
    }
    let mut a = [[0.0; 3]; 3];
    let mut b = [0.0; 3];
    for (&xi, &yi) in x.iter().zip(y) {
        let u = xi - x0;
        let row = [1.0, u, u * u];
        for i in 0..3 {
            for j in 0..3 {
                a[i][j] += row[i] * row[j];
            }
            b[i] += row[i] * yi;
        }
    }
    let [c0, c1, c2] = solve(a, b)?;
    if c2 == 0.0 {
        return None;
    }
    let u = -c1 / (2.0 * c2);
    Some((x0 + u, c0 + c1 * u + c2 * u * u, c2))
}

/// A damped sinusoid θ(t) = level + e^(−σt)·(a·cos ωt + b·sin ωt), parameters in that order
/// `[level, a, b, σ, ω]`.
///
/// The (a, b) form instead of amplitude and phase keeps the problem free of a wrapping
/// angle; amplitude and phase follow from (a, b) when wanted.
pub(crate) type DampedSine = [f64; 5];

/// Value of the damped sinusoid and its gradient with respect to the parameters.
fn damped_sine(p: &DampedSine, t: f64) -> (f64, [f64; 5]) {
    let [level, a, b, sigma, omega] = *p;
    let e = (-sigma * t).exp();
    let (s, c) = (omega * t).sin_cos();
    let osc = a * c + b * s;
    let value = level + e * osc;
    let grad = [1.0, e * c, e * s, -t * e * osc, t * e * (b * c - a * s)];
    (value, grad)
}

fn ssr(p: &DampedSine, t: &[f64], y: &[f64]) -> f64 {
    t.iter().zip(y).map(|(&t, &y)| (y - damped_sine(p, t).0).powi(2)).sum()
}

/// Best level, a and b for a fixed decay rate and frequency (a linear problem).
pub(crate) fn linear_part(t: &[f64], y: &[f64], sigma: f64, omega: f64) -> Option<[f64; 3]> {
    let mut a = [[0.0; 3]; 3];
    let mut b = [0.0; 3];
    for (&ti, &yi) in t.iter().zip(y) {
        let e = (-sigma * ti).exp();
        let (s, c) = (omega * ti).sin_cos();
        let row = [1.0, e * c, e * s];
        for i in 0..3 {
            for j in 0..3 {
                a[i][j] += row[i] * row[j];
            }
            b[i] += row[i] * yi;
        }
    }
    solve(a, b)
}

/// Result of the damped-sinusoid fit.
#[derive(Debug, Clone, Copy)]
pub(crate) struct SineFit {
    /// Parameters `[level, a, b, σ, ω]`.
    pub params: DampedSine,
    /// Root-mean-square residual, in the data's unit.
    pub rms: f64,
}

/// Levenberg–Marquardt fit of a damped sinusoid from a starting point (Marquardt's scaling
/// by the diagonal of JᵀJ, so unknowns of very different size need no manual scaling).
pub(crate) fn fit_damped_sine(t: &[f64], y: &[f64], start: DampedSine) -> Option<SineFit> {
    let mut p = start;
    let mut current = ssr(&p, t, y);
    if !current.is_finite() || t.len() < 6 {
        return None;
    }
    let mut lambda = 1e-3;
    for _ in 0..200 {
        let mut jtj = [[0.0; 5]; 5];
        let mut jtr = [0.0; 5];
        for (&ti, &yi) in t.iter().zip(y) {
            let (value, g) = damped_sine(&p, ti);
            let r = yi - value;
            for ((row, rhs), gi) in jtj.iter_mut().zip(jtr.iter_mut()).zip(g) {
                for (cell, gj) in row.iter_mut().zip(g) {
                    *cell += gi * gj;
                }
                *rhs += gi * r;
            }
        }
        let mut improved = None;
        while lambda < 1e12 {
            let mut a = jtj;
            for (i, row) in a.iter_mut().enumerate() {
                row[i] += lambda * jtj[i][i].max(f64::MIN_POSITIVE);
            }
            if let Some(step) = solve(a, jtr) {
                let mut trial = p;
                for (value, delta) in trial.iter_mut().zip(step) {
                    *value += delta;
                }
                let trial_ssr = ssr(&trial, t, y);
                if trial_ssr.is_finite() && trial_ssr <= current {
                    improved = Some((trial, trial_ssr));
                    lambda = (lambda / 10.0).max(1e-12);
                    break;
                }
            }
            lambda *= 10.0;
        }
        let Some((trial, trial_ssr)) = improved else { break };
        let gain = current - trial_ssr;
        p = trial;
        current = trial_ssr;
        if gain <= 1e-13 * current.max(f64::MIN_POSITIVE) {
            break;
        }
    }
    let rms = (current / t.len() as f64).sqrt();
    p.iter().all(|v| v.is_finite()).then_some(SineFit { params: p, rms })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn solver_recovers_a_known_solution() {
        // Common practice, no published source: A·x for a chosen x, solved back.
        let a = [[4.0, 1.0, 2.0], [1.0, 5.0, 3.0], [2.0, 3.0, 6.0]];
        let x = [1.5, -2.0, 0.25];
        let b = [0, 1, 2].map(|i| (0..3).map(|j| a[i][j] * x[j]).sum::<f64>());
        let got = solve(a, b).unwrap();
        for (g, want) in got.iter().zip(x) {
            assert!((g - want).abs() < 1e-12);
        }
        assert!(solve([[1.0, 2.0], [2.0, 4.0]], [1.0, 2.0]).is_none());
    }

    #[test]
    fn parabola_vertex_of_an_exact_parabola() {
        // Common practice, no published source: y = 3 − 2(x − 0.7)² peaks at (0.7, 3).
        let x: Vec<f64> = (0..7).map(|i| 0.4 + 0.1 * f64::from(i)).collect();
        let y: Vec<f64> = x.iter().map(|x| 3.0 - 2.0 * (x - 0.7) * (x - 0.7)).collect();
        let (xv, yv, c2) = parabola_vertex(&x, &y, 0.65).unwrap();
        assert!((xv - 0.7).abs() < 1e-9 && (yv - 3.0).abs() < 1e-9 && (c2 + 2.0).abs() < 1e-9);
    }

    #[test]
    fn lm_recovers_an_exact_damped_sine_from_a_rough_start() {
        // Common practice, no published source: parameters chosen, samples made from them,
        // fitted back from a start 5 % off in frequency and 50 % off in decay.
        let truth = [1.0, 10.0, -4.0, 0.3, 7.0];
        let t: Vec<f64> = (0..2000).map(|i| f64::from(i) * 0.005).collect();
        let y: Vec<f64> = t.iter().map(|&t| damped_sine(&truth, t).0).collect();
        let [level, a, b] = linear_part(&t, &y, 0.45, 7.35).unwrap();
        let fit = fit_damped_sine(&t, &y, [level, a, b, 0.45, 7.35]).unwrap();
        for (got, want) in fit.params.iter().zip(truth) {
            assert!((got - want).abs() < 1e-7, "{got} vs {want}");
        }
        assert!(fit.rms < 1e-8);
    }
}
