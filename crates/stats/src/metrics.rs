//! Per-test curve metrics (DESIGN.md §6): rate, free angle, torque at angles,
//! hysteresis, energy loss, linearity, secant rate and set.
//!
//! # Conventions
//!
//! * The evaluated cycle is the last one unless [`MetricOptions::evaluated_cycle`]
//!   names another: pre-cycles come first and settle the spring.
//! * The **tested deflection** runs from the loading stroke's start angle (its
//!   smallest angle, which is robust to noise on the first points) to
//!   [`MetricOptions::test_max_angle_deg`] when given, otherwise to the largest
//!   angle the loading stroke reached. [`MetricOptions::from_spec`] gives the
//!   spec's `test.max_angle_deg`, so every part of a drawing is evaluated in the
//!   same angular window: a rig that overshoots or a part that stops short does
//!   not drag the window with it, and a part that stops short of the window's
//!   upper end gets no rate at all (with the reason) instead of a rate over a
//!   different range.
//! * Torque (and hysteresis) at an angle is read by linear interpolation on the
//!   stroke sorted by angle, never extrapolated: an angle outside the angles the
//!   stroke covered gives no value, and the map has no entry for it.
//! * Map keys are angles written the way `format!("{}", angle)` writes an `f64`:
//!   `45.0` → `"45"`, `22.5` → `"22.5"` (see [`angle_key`]).

use crate::fit::{linear_fit, LinearFit};
use crate::text::num;
use std::collections::BTreeMap;
use twistlot_model::plugin::CheckManifest;
use twistlot_model::{CurveData, PartSpec, Stroke};

/// Fewest loading points in the window a rate is fitted from, unless told otherwise.
pub const DEFAULT_MIN_POINTS: usize = 5;

/// How far (as a fraction of the window's width) the loading stroke may stop
/// short of the window's upper end and still count as covering it: rigs stop a
/// few hundredths of a degree either side of their target.
pub const WINDOW_REACH_TOLERANCE: f64 = 0.01;

/// What to compute from a curve, and where.
#[derive(Debug, Clone, PartialEq)]
pub struct MetricOptions {
    /// Evaluation window as fractions `[lo, hi]` of the tested deflection
    /// (`[0, 1]` is the whole loading stroke).
    pub window: [f64; 2],
    /// End of the tested deflection, degrees; `None` uses the largest angle reached.
    pub test_max_angle_deg: Option<f64>,
    /// Angles (degrees) at which torque is read from the loading stroke.
    pub torque_angles_deg: Vec<f64>,
    /// Angles (degrees) at which hysteresis is taken.
    pub hysteresis_angles_deg: Vec<f64>,
    /// Secant rate between these two angles (degrees), when wanted.
    pub secant_deg: Option<(f64, f64)>,
    /// Fewest loading points inside the window for a rate (and what derives from it).
    pub min_points: usize,
    /// Cycle to evaluate (from 1); `None` means the last.
    pub evaluated_cycle: Option<u32>,
}

impl Default for MetricOptions {
    fn default() -> Self {
        MetricOptions {
            window: [0.2, 0.8],
            test_max_angle_deg: None,
            torque_angles_deg: Vec::new(),
            hysteresis_angles_deg: Vec::new(),
            secant_deg: None,
            min_points: DEFAULT_MIN_POINTS,
            evaluated_cycle: None,
        }
    }
}

impl MetricOptions {
    /// Options that measure everything `spec` has limits for, in its window and
    /// over its tested deflection.
    pub fn from_spec(spec: &PartSpec) -> Self {
        let c = &spec.characteristics;
        let mut options = MetricOptions {
            window: spec.test.window,
            test_max_angle_deg: Some(spec.test.max_angle_deg),
            secant_deg: c.secant_rate.as_ref().map(|s| (s.from_deg, s.to_deg)),
            ..MetricOptions::default()
        };
        for torque in &c.torque_at {
            push_angle(&mut options.torque_angles_deg, torque.angle_deg);
        }
        if let Some(hysteresis) = &c.hysteresis {
            for &angle in &hysteresis.at_angles_deg {
                push_angle(&mut options.hysteresis_angles_deg, angle);
            }
        }
        options
    }

    /// Adds the angles check plugins read, so their expressions find a value.
    ///
    /// Looks for `torque_nmm_at["<angle>"]` and `hysteresis_pct_at["<angle>"]`
    /// (either quote) in each expression; checks that apply to other parts
    /// are skipped when `part` is given.
    pub fn with_check_angles(mut self, checks: &[CheckManifest], part: Option<&str>) -> Self {
        for check in checks {
            if let Some(part) = part {
                if !check.parts.is_empty() && !check.parts.iter().any(|p| p == part) {
                    continue;
                }
            }
            for angle in subscript_angles(&check.expression, "torque_nmm_at") {
                push_angle(&mut self.torque_angles_deg, angle);
            }
            for angle in subscript_angles(&check.expression, "hysteresis_pct_at") {
                push_angle(&mut self.hysteresis_angles_deg, angle);
            }
        }
        self
    }
}

fn push_angle(angles: &mut Vec<f64>, angle: f64) {
    if !angles.contains(&angle) {
        angles.push(angle);
    }
}

/// Angles written as string subscripts of `map` in an expression.
fn subscript_angles(expression: &str, map: &str) -> Vec<f64> {
    let mut out = Vec::new();
    let mut rest = expression;
    while let Some(at) = rest.find(map) {
        rest = &rest[at + map.len()..];
        let tail = rest.trim_start();
        let Some(tail) = tail.strip_prefix('[') else { continue };
        let tail = tail.trim_start();
        let Some(quote) = tail.chars().next().filter(|c| *c == '"' || *c == '\'') else { continue };
        let tail = &tail[1..];
        let Some(end) = tail.find(quote) else { continue };
        if let Ok(angle) = tail[..end].trim().parse::<f64>() {
            if angle.is_finite() {
                out.push(angle);
            }
        }
    }
    out
}

pub use twistlot_model::record::angle_key;

pub use twistlot_model::CurveMetrics;

/// Why a curve cannot be evaluated at all.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum MetricsError {
    /// The curve has no points.
    #[error("the curve has no points")]
    Empty,
    /// Columns of different lengths.
    #[error(
        "the curve's columns differ in length (angle {angle}, torque {torque}, stroke {stroke}, cycle {cycle})"
    )]
    RaggedColumns {
        /// Angle values.
        angle: usize,
        /// Torque values.
        torque: usize,
        /// Stroke labels.
        stroke: usize,
        /// Cycle numbers.
        cycle: usize,
    },
    /// A value that is not a finite number.
    #[error("point {index}: {column} is {value}, not a finite number")]
    NotFinite {
        /// Point index from 0.
        index: usize,
        /// `angle_deg` or `torque_nmm`.
        column: &'static str,
        /// The value found.
        value: f64,
    },
    /// The evaluated cycle has no loading points.
    #[error("cycle {cycle} has no loading-stroke points (the curve has {cycles} cycle(s))")]
    NoLoadingPoints {
        /// Cycle asked for.
        cycle: u32,
        /// Cycles present.
        cycles: u32,
    },
    /// The loading stroke does not move, or starts beyond the tested deflection's end.
    #[error("no deflection to evaluate: the loading stroke runs from {start_deg}° to {end_deg}°")]
    NoDeflection {
        /// Start of the tested deflection, degrees.
        start_deg: f64,
        /// End of the tested deflection, degrees.
        end_deg: f64,
    },
    /// Options that make no sense.
    #[error("invalid metric options: {0}")]
    Options(String),
}

/// A stroke as torque against angle, sorted by angle, one torque per angle.
///
/// Noise makes a stroke's angles go back and forth a little; sorting and
/// averaging torques at equal angles turns it into a function that can be
/// interpolated, which is what "torque at 45°" means.
#[derive(Debug, Clone)]
struct Profile {
    points: Vec<(f64, f64)>,
}

impl Profile {
    fn new(mut points: Vec<(f64, f64)>) -> Profile {
        points.sort_by(|a, b| a.0.total_cmp(&b.0));
        let mut merged: Vec<(f64, f64)> = Vec::with_capacity(points.len());
        let mut count = 0usize;
        for (angle, torque) in points {
            match merged.last_mut() {
                Some(last) if last.0 == angle => {
                    count += 1;
                    last.1 += (torque - last.1) / count as f64;
                }
                _ => {
                    merged.push((angle, torque));
                    count = 1;
                }
            }
        }
        Profile { points: merged }
    }

    fn is_empty(&self) -> bool {
        self.points.is_empty()
    }

    fn min_angle(&self) -> f64 {
        self.points.first().map_or(f64::NAN, |p| p.0)
    }

    fn max_angle(&self) -> f64 {
        self.points.last().map_or(f64::NAN, |p| p.0)
    }

    /// Torque at `angle` by linear interpolation; `None` outside the covered angles.
    fn at(&self, angle: f64) -> Option<f64> {
        let first = self.points.first()?;
        let last = self.points.last()?;
        if !(angle >= first.0 && angle <= last.0) {
            return None;
        }
        let upper = self.points.partition_point(|p| p.0 < angle);
        let (a2, m2) = self.points[upper];
        if a2 == angle || upper == 0 {
            return Some(m2);
        }
        let (a1, m1) = self.points[upper - 1];
        Some(m1 + (m2 - m1) * (angle - a1) / (a2 - a1))
    }

    /// ∫ torque d(angle) from `lo` to `hi` (both inside the covered angles), trapezoid rule.
    fn integral(&self, lo: f64, hi: f64) -> f64 {
        let mut area = 0.0;
        for pair in self.points.windows(2) {
            let (a1, a2) = (pair[0].0.max(lo), pair[1].0.min(hi));
            if a2 <= a1 {
                continue;
            }
            let (Some(m1), Some(m2)) = (self.at(a1), self.at(a2)) else { continue };
            area += 0.5 * (m1 + m2) * (a2 - a1);
        }
        area
    }
}

fn check_curve(curve: &CurveData) -> Result<(), MetricsError> {
    let lengths = (curve.angle_deg.len(), curve.torque_nmm.len(), curve.stroke.len(), curve.cycle.len());
    if lengths.0 != lengths.1 || lengths.0 != lengths.2 || lengths.0 != lengths.3 {
        return Err(MetricsError::RaggedColumns {
            angle: lengths.0,
            torque: lengths.1,
            stroke: lengths.2,
            cycle: lengths.3,
        });
    }
    if curve.is_empty() {
        return Err(MetricsError::Empty);
    }
    for (index, (&angle, &torque)) in curve.angle_deg.iter().zip(&curve.torque_nmm).enumerate() {
        if !angle.is_finite() {
            return Err(MetricsError::NotFinite { index, column: "angle_deg", value: angle });
        }
        if !torque.is_finite() {
            return Err(MetricsError::NotFinite { index, column: "torque_nmm", value: torque });
        }
    }
    Ok(())
}

fn check_options(options: &MetricOptions) -> Result<(), MetricsError> {
    let [lo, hi] = options.window;
    if !(lo.is_finite()
        && hi.is_finite()
        && (0.0..=1.0).contains(&lo)
        && (0.0..=1.0).contains(&hi)
        && lo < hi)
    {
        return Err(MetricsError::Options(format!("the window [{lo}, {hi}] must satisfy 0 ≤ lo < hi ≤ 1")));
    }
    if options.min_points < 3 {
        return Err(MetricsError::Options(format!(
            "min_points is {}, but a fit with a standard error needs at least 3 points",
            options.min_points
        )));
    }
    if let Some(end) = options.test_max_angle_deg {
        if !end.is_finite() {
            return Err(MetricsError::Options(format!("the test's largest angle {end} is not a number")));
        }
    }
    let angles = options
        .torque_angles_deg
        .iter()
        .chain(&options.hysteresis_angles_deg)
        .chain(options.secant_deg.iter().flat_map(|(a, b)| [a, b]));
    if let Some(bad) = angles.into_iter().find(|a| !a.is_finite()) {
        return Err(MetricsError::Options(format!("requested angle {bad} is not a number")));
    }
    if let Some((from, to)) = options.secant_deg {
        if from == to {
            return Err(MetricsError::Options(format!("the secant needs two different angles, got {from}°")));
        }
    }
    Ok(())
}

/// One stroke of one cycle as (angle, torque) pairs, in recorded order.
fn stroke_points(curve: &CurveData, cycle: u32, stroke: Stroke) -> Vec<(f64, f64)> {
    (0..curve.len())
        .filter(|&i| curve.cycle[i] == cycle && curve.stroke[i] == stroke)
        .map(|i| (curve.angle_deg[i], curve.torque_nmm[i]))
        .collect()
}

/// Points of `points` with angle inside `[lo, hi]`.
fn in_window(points: &[(f64, f64)], lo: f64, hi: f64) -> (Vec<f64>, Vec<f64>) {
    // Window ends are computed from fractions, so a point set exactly on an
    // end may land a rounding error outside it.
    let slack = 1e-9 * (hi - lo).abs().max(1.0);
    points.iter().filter(|(a, _)| *a >= lo - slack && *a <= hi + slack).map(|&(a, m)| (a, m)).unzip()
}

/// A rate fit in the window, or the reason there is none.
fn window_fit(
    load: &[(f64, f64)],
    reached_deg: f64,
    window: [f64; 2],
    min_points: usize,
) -> (usize, Result<LinearFit, String>) {
    let [lo, hi] = window;
    let (x, y) = in_window(load, lo, hi);
    let count = x.len();
    if reached_deg < hi - WINDOW_REACH_TOLERANCE * (hi - lo) {
        return (
            count,
            Err(format!(
                "the loading stroke reaches {}° only, short of the evaluation window's upper end {}°",
                num(reached_deg),
                num(hi)
            )),
        );
    }
    if count < min_points {
        return (
            count,
            Err(format!(
                "only {count} loading point(s) in the evaluation window {}–{}°; a rate needs at least {min_points}",
                num(lo),
                num(hi)
            )),
        );
    }
    match linear_fit(&x, &y) {
        Some(fit) => (count, Ok(fit)),
        None => (count, Err("the points in the evaluation window do not span an angle range".to_string())),
    }
}

fn free_angle(fit: &LinearFit) -> Option<f64> {
    (fit.slope != 0.0).then(|| -fit.intercept / fit.slope)
}

/// Computes a test's metrics from its curve.
///
/// Errors only when the curve as a whole cannot be evaluated (no points, ragged
/// columns, a non-finite value, no loading stroke in the evaluated cycle, no
/// deflection) or the options are inconsistent. Anything narrower — an angle
/// never reached, too few points in the window, no unloading stroke — leaves
/// that metric `None` and says why.
pub fn curve_metrics(curve: &CurveData, options: &MetricOptions) -> Result<CurveMetrics, MetricsError> {
    check_curve(curve)?;
    check_options(options)?;
    let cycles = curve.cycles();
    let cycle = options.evaluated_cycle.unwrap_or(cycles);
    let load_points = stroke_points(curve, cycle, Stroke::Load);
    if load_points.is_empty() {
        return Err(MetricsError::NoLoadingPoints { cycle, cycles });
    }
    let load = Profile::new(load_points.clone());
    let unload = Profile::new(stroke_points(curve, cycle, Stroke::Unload));
    let start = load.min_angle();
    let reached = load.max_angle();
    let end = options.test_max_angle_deg.unwrap_or(reached);
    if end <= start {
        return Err(MetricsError::NoDeflection { start_deg: start, end_deg: end });
    }
    let span = end - start;
    let window_deg = [start + options.window[0] * span, start + options.window[1] * span];
    let mut notes = Vec::new();

    let max_torque = load.points.iter().map(|p| p.1).fold(f64::NEG_INFINITY, f64::max);
    let (points_in_window, fit) = window_fit(&load_points, reached, window_deg, options.min_points);
    let (fit, rate_unavailable) = match fit {
        Ok(fit) => (Some(fit), None),
        Err(reason) => {
            notes.push(format!("rate not measured: {reason}"));
            (None, Some(reason))
        }
    };
    let linearity_pct = fit.as_ref().and_then(|fit| {
        let (x, y) = in_window(&load_points, window_deg[0], window_deg[1]);
        let worst = x.iter().zip(&y).map(|(&a, &m)| (m - fit.predict(a)).abs()).fold(0.0, f64::max);
        (max_torque > 0.0).then(|| worst / max_torque * 100.0)
    });

    let covered = |profile: &Profile| format!("{}–{}°", num(profile.min_angle()), num(profile.max_angle()));
    let mut torque_nmm_at = BTreeMap::new();
    for &angle in &options.torque_angles_deg {
        match load.at(angle) {
            Some(torque) => {
                torque_nmm_at.insert(angle_key(angle), torque);
            }
            None => notes.push(format!(
                "torque at {}° not measured: the loading stroke covers {}",
                num(angle),
                covered(&load)
            )),
        }
    }

    let mut hysteresis_pct_at = BTreeMap::new();
    let mut energy_loss_pct = None;
    let wants_hysteresis = !options.hysteresis_angles_deg.is_empty();
    if unload.is_empty() {
        notes.push(format!("cycle {cycle} has no unloading stroke: hysteresis and energy loss not measured"));
    } else {
        for &angle in &options.hysteresis_angles_deg {
            match (load.at(angle), unload.at(angle)) {
                (Some(up), Some(down)) if up > 0.0 => {
                    hysteresis_pct_at.insert(angle_key(angle), (up - down) / up * 100.0);
                }
                (Some(_), Some(_)) => notes.push(format!(
                    "hysteresis at {}° not measured: the loading torque there is not above zero",
                    num(angle)
                )),
                _ => notes.push(format!(
                    "hysteresis at {}° not measured: loading covers {}, unloading {}",
                    num(angle),
                    covered(&load),
                    covered(&unload)
                )),
            }
        }
        let lo = load.min_angle().max(unload.min_angle());
        let hi = load.max_angle().min(unload.max_angle());
        if hi > lo {
            let up = load.integral(lo, hi);
            let down = unload.integral(lo, hi);
            if up > 0.0 {
                energy_loss_pct = Some((up - down) / up * 100.0);
            }
        }
        if energy_loss_pct.is_none() && wants_hysteresis {
            notes.push("energy loss not measured: the strokes share no angle range with loading work".into());
        }
    }

    let secant_rate = options.secant_deg.and_then(|(from, to)| match (load.at(from), load.at(to)) {
        (Some(m1), Some(m2)) => Some((m2 - m1) / (to - from)),
        _ => {
            notes.push(format!(
                "secant rate {}–{}° not measured: the loading stroke covers {}",
                num(from),
                num(to),
                covered(&load)
            ));
            None
        }
    });

    let set_deg = if cycles >= 2 {
        let first = curve.cycle.iter().copied().min().unwrap_or(1);
        let alpha0 = |c: u32| {
            let points = stroke_points(curve, c, Stroke::Load);
            let reached = points.iter().map(|p| p.0).fold(f64::NEG_INFINITY, f64::max);
            window_fit(&points, reached, window_deg, options.min_points).1.ok().as_ref().and_then(free_angle)
        };
        match (alpha0(first), alpha0(cycles)) {
            (Some(a_first), Some(a_last)) if first != cycles => Some(a_last - a_first),
            _ => {
                notes.push(format!("set not measured: no free angle in cycle {first} or cycle {cycles}"));
                None
            }
        }
    } else {
        None
    };

    Ok(CurveMetrics {
        evaluated_cycle: cycle,
        cycles,
        rate_nmm_per_deg: fit.map(|f| f.slope),
        rate_r2: fit.map(|f| f.r2),
        rate_stderr_nmm_per_deg: fit.map(|f| f.slope_stderr),
        intercept_nmm: fit.map(|f| f.intercept),
        free_angle_deg: fit.as_ref().and_then(free_angle),
        rate_unavailable,
        torque_nmm_at,
        hysteresis_pct_at,
        energy_loss_pct,
        linearity_pct,
        max_torque_nmm: max_torque,
        max_angle_deg: reached,
        secant_rate_nmm_per_deg: secant_rate,
        secant_deg: options.secant_deg.map(|(a, b)| [a, b]),
        set_deg,
        deflection_deg: [start, end],
        window_deg,
        points_in_window,
        notes,
    })
}

#[cfg(test)]
pub(crate) mod tests {
    use super::*;
    use proptest::prelude::*;

    /// A synthetic test built from the linear law M = R·(α − α0), clamped at
    /// zero below α0 (the leg has not engaged: slack), with the unloading
    /// stroke `band` N·mm below the loading one.
    pub(crate) struct Law {
        pub rate: f64,
        pub alpha0: f64,
        pub band: f64,
        pub max_deg: f64,
        pub step_deg: f64,
        pub cycles: u32,
        /// α0 added per cycle after the first (set).
        pub set_per_cycle: f64,
    }

    impl Law {
        pub(crate) fn new(rate: f64, alpha0: f64) -> Law {
            Law { rate, alpha0, band: 0.0, max_deg: 90.0, step_deg: 0.5, cycles: 1, set_per_cycle: 0.0 }
        }

        pub(crate) fn load_torque(&self, cycle: u32, angle: f64) -> f64 {
            let alpha0 = self.alpha0 + self.set_per_cycle * f64::from(cycle - 1);
            (self.rate * (angle - alpha0)).max(0.0)
        }

        pub(crate) fn curve(&self) -> CurveData {
            let mut curve = CurveData::default();
            let steps = (self.max_deg / self.step_deg).round() as usize;
            for cycle in 1..=self.cycles {
                for i in 0..=steps {
                    let angle = i as f64 * self.step_deg;
                    curve.angle_deg.push(angle);
                    curve.torque_nmm.push(self.load_torque(cycle, angle));
                    curve.stroke.push(Stroke::Load);
                    curve.cycle.push(cycle);
                }
                for i in (0..=steps).rev() {
                    let angle = i as f64 * self.step_deg;
                    curve.angle_deg.push(angle);
                    curve.torque_nmm.push(self.load_torque(cycle, angle) - self.band);
                    curve.stroke.push(Stroke::Unload);
                    curve.cycle.push(cycle);
                }
            }
            curve
        }
    }

    fn close(a: f64, b: f64, tol: f64) -> bool {
        (a - b).abs() <= tol * b.abs().max(1.0)
    }

    #[test]
    fn the_linear_law_comes_back() {
        let mut law = Law::new(4.0, -2.0);
        law.band = 6.0;
        let options = MetricOptions {
            torque_angles_deg: vec![30.0, 60.0],
            hysteresis_angles_deg: vec![45.0],
            secant_deg: Some((30.0, 60.0)),
            ..MetricOptions::default()
        };
        let m = curve_metrics(&law.curve(), &options).unwrap();
        // Common practice, no published source: the law M = R·(α − α0) read back from its own curve.
        assert!(close(m.rate_nmm_per_deg.unwrap(), 4.0, 1e-12));
        assert!(close(m.intercept_nmm.unwrap(), 8.0, 1e-12));
        assert!(close(m.free_angle_deg.unwrap(), -2.0, 1e-12));
        assert!(close(m.rate_r2.unwrap(), 1.0, 1e-12));
        assert!(m.rate_stderr_nmm_per_deg.unwrap() < 1e-10);
        assert!(m.linearity_pct.unwrap() < 1e-10);
        assert!(close(m.torque_nmm_at["30"], 4.0 * 32.0, 1e-12));
        assert!(close(m.torque_nmm_at["60"], 4.0 * 62.0, 1e-12));
        assert!(close(m.secant_rate_nmm_per_deg.unwrap(), 4.0, 1e-12));
        // The band is constant, so hysteresis at 45° is band / M(45°).
        assert!(close(m.hysteresis_pct_at["45"], 6.0 / (4.0 * 47.0) * 100.0, 1e-12));
        // Energy loss: band·90° over ∫0..90 4·(α + 2) dα = 4·(90²/2 + 2·90).
        let loading_area = 4.0 * (90.0f64.powi(2) / 2.0 + 2.0 * 90.0);
        assert!(close(m.energy_loss_pct.unwrap(), 6.0 * 90.0 / loading_area * 100.0, 1e-12));
        assert_eq!(m.window_deg, [18.0, 72.0]);
        assert_eq!(m.points_in_window, 109);
        assert_eq!(m.max_angle_deg, 90.0);
        assert!(close(m.max_torque_nmm, 4.0 * 92.0, 1e-12));
        assert_eq!(m.set_deg, None);
        assert!(m.notes.is_empty(), "{:?}", m.notes);
    }

    #[test]
    fn slack_at_the_start_does_not_bias_the_rate() {
        // The leg engages at 12°: below that the torque is flat zero.
        let law = Law::new(2.5, 12.0);
        let m = curve_metrics(&law.curve(), &MetricOptions::default()).unwrap();
        // Common practice, no published source: the window (from 18°) lies beyond the slack.
        assert!(close(m.rate_nmm_per_deg.unwrap(), 2.5, 1e-12));
        assert!(close(m.free_angle_deg.unwrap(), 12.0, 1e-12));
        // With the whole stroke in the fit the slack drags the rate: the window is what protects it.
        let whole = MetricOptions { window: [0.0, 1.0], ..MetricOptions::default() };
        let biased = curve_metrics(&law.curve(), &whole).unwrap();
        assert!(biased.rate_nmm_per_deg.unwrap() < 2.45, "{:?}", biased.rate_nmm_per_deg);
        assert!(biased.linearity_pct.unwrap() > 1.0);
    }

    #[test]
    fn noisy_non_monotone_loading_is_interpolated_by_angle() {
        // Angles jitter back and forth by ±0.2° around a 1° grid; torque follows the law exactly.
        let mut curve = CurveData::default();
        for i in 0..=90 {
            let jitter = if i % 2 == 0 { 0.2 } else { -0.2 };
            let angle = f64::from(i) + jitter;
            curve.angle_deg.push(angle);
            curve.torque_nmm.push(3.0 * angle);
            curve.stroke.push(Stroke::Load);
            curve.cycle.push(1);
        }
        // One point going backwards below its predecessor.
        curve.angle_deg[41] = 39.9;
        curve.torque_nmm[41] = 3.0 * 39.9;
        let options = MetricOptions { torque_angles_deg: vec![40.0, 45.5], ..MetricOptions::default() };
        let m = curve_metrics(&curve, &options).unwrap();
        // Common practice, no published source: interpolation on a line returns the line.
        assert!(close(m.torque_nmm_at["40"], 120.0, 1e-12));
        assert!(close(m.torque_nmm_at["45.5"], 136.5, 1e-12));
        assert!(close(m.rate_nmm_per_deg.unwrap(), 3.0, 1e-12));
    }

    #[test]
    fn an_angle_never_reached_has_no_torque() {
        let law = Law { max_deg: 50.0, ..Law::new(4.0, 0.0) };
        let options = MetricOptions {
            torque_angles_deg: vec![30.0, 60.0],
            hysteresis_angles_deg: vec![60.0],
            test_max_angle_deg: Some(90.0),
            ..MetricOptions::default()
        };
        let m = curve_metrics(&law.curve(), &options).unwrap();
        assert!(m.torque_nmm_at.contains_key("30"));
        assert!(!m.torque_nmm_at.contains_key("60"));
        assert!(m.hysteresis_pct_at.is_empty());
        // The window runs to 72° of the 90° test; a curve stopping at 50° gives no rate.
        assert_eq!(m.rate_nmm_per_deg, None);
        assert!(m.rate_unavailable.as_deref().unwrap().contains("reaches 50° only"), "{m:?}");
        assert!(m.notes.iter().any(|n| n.contains("torque at 60°")), "{:?}", m.notes);
    }

    #[test]
    fn too_few_points_in_the_window_leave_the_rate_out() {
        let law = Law { step_deg: 15.0, ..Law::new(4.0, 0.0) };
        let m = curve_metrics(&law.curve(), &MetricOptions::default()).unwrap();
        // 30°, 45° and 60° fall in 18–72°: three points, five needed.
        assert_eq!(m.points_in_window, 3);
        assert_eq!(m.rate_nmm_per_deg, None);
        assert_eq!(m.free_angle_deg, None);
        assert_eq!(m.linearity_pct, None);
        assert!(m.rate_unavailable.unwrap().contains("only 3"));
        let relaxed = MetricOptions { min_points: 3, ..MetricOptions::default() };
        assert!(curve_metrics(&law.curve(), &relaxed).unwrap().rate_nmm_per_deg.is_some());
    }

    #[test]
    fn set_is_the_shift_of_the_free_angle_over_the_cycles() {
        let law = Law { cycles: 3, set_per_cycle: 0.4, ..Law::new(4.0, 1.0) };
        let m = curve_metrics(&law.curve(), &MetricOptions::default()).unwrap();
        assert_eq!(m.evaluated_cycle, 3);
        // Common practice, no published source: α0 of cycle 3 (1.8°) minus α0 of cycle 1 (1°).
        assert!(close(m.set_deg.unwrap(), 0.8, 1e-12));
        assert!(close(m.free_angle_deg.unwrap(), 1.8, 1e-12));
        let first = MetricOptions { evaluated_cycle: Some(1), ..MetricOptions::default() };
        let m1 = curve_metrics(&law.curve(), &first).unwrap();
        assert!(close(m1.free_angle_deg.unwrap(), 1.0, 1e-12));
    }

    #[test]
    fn symmetric_parabola_gives_its_closed_form_linearity() {
        // M = 100 + c·u² on a symmetric grid u ∈ [−h, h] inside the window: the fitted line
        // is flat at the mean of c·u², which on N equally spaced points is c·h²·(N+1)/(3(N−1)).
        let (c, h, n) = (0.05, 30.0, 121usize);
        let mut curve = CurveData::default();
        for i in 0..n {
            let u = -h + 2.0 * h * i as f64 / (n - 1) as f64;
            curve.angle_deg.push(45.0 + u);
            curve.torque_nmm.push(100.0 + c * u * u);
            curve.stroke.push(Stroke::Load);
            curve.cycle.push(1);
        }
        let options = MetricOptions { window: [0.0, 1.0], ..MetricOptions::default() };
        let m = curve_metrics(&curve, &options).unwrap();
        let mean = c * h * h * (n as f64 + 1.0) / (3.0 * (n as f64 - 1.0));
        let worst = (c * h * h - mean).max(mean);
        // Common practice, no published source: closed-form least squares of a line through a symmetric parabola.
        assert!(close(m.linearity_pct.unwrap(), worst / (100.0 + c * h * h) * 100.0, 1e-9));
        assert!(m.rate_nmm_per_deg.unwrap().abs() < 1e-12);
    }

    #[test]
    fn structural_problems_are_errors() {
        assert_eq!(curve_metrics(&CurveData::default(), &MetricOptions::default()), Err(MetricsError::Empty));
        let mut curve = Law::new(1.0, 0.0).curve();
        curve.torque_nmm[7] = f64::NAN;
        let err = curve_metrics(&curve, &MetricOptions::default()).unwrap_err();
        assert!(matches!(err, MetricsError::NotFinite { index: 7, column: "torque_nmm", .. }), "{err}");
        let mut curve = Law::new(1.0, 0.0).curve();
        curve.stroke.pop();
        assert!(matches!(
            curve_metrics(&curve, &MetricOptions::default()),
            Err(MetricsError::RaggedColumns { .. })
        ));
        let curve = Law::new(1.0, 0.0).curve();
        let other = MetricOptions { evaluated_cycle: Some(4), ..MetricOptions::default() };
        let err = curve_metrics(&curve, &other).unwrap_err();
        assert_eq!(err, MetricsError::NoLoadingPoints { cycle: 4, cycles: 1 });
        assert!(err.to_string().contains("cycle 4"));
        let bad = MetricOptions { window: [0.8, 0.2], ..MetricOptions::default() };
        assert!(matches!(curve_metrics(&curve, &bad), Err(MetricsError::Options(_))));
    }

    #[test]
    fn check_angles_are_found_in_expressions() {
        let angles = subscript_angles(
            r#"metrics.torque_nmm_at["60"] / metrics.torque_nmm_at[ '30' ] > metrics.torque_nmm_at.x"#,
            "torque_nmm_at",
        );
        assert_eq!(angles, vec![60.0, 30.0]);
        assert_eq!(angle_key(45.0), "45");
        assert_eq!(angle_key(22.5), "22.5");
    }

    #[test]
    fn options_follow_the_spec_and_json_names_are_stable() {
        let spec = PartSpec::from_yaml("ts.yaml", crate::checks::tests::SPEC).unwrap();
        let options = MetricOptions::from_spec(&spec);
        assert_eq!(options.window, [0.2, 0.8]);
        assert_eq!(options.test_max_angle_deg, Some(90.0));
        assert_eq!(options.torque_angles_deg, vec![60.0]);
        assert_eq!(options.hysteresis_angles_deg, vec![45.0]);
        let m = curve_metrics(&Law::new(4.0, 0.0).curve(), &options).unwrap();
        let json = serde_json::to_value(&m).unwrap();
        for field in [
            "rate_nmm_per_deg",
            "rate_r2",
            "rate_stderr_nmm_per_deg",
            "intercept_nmm",
            "free_angle_deg",
            "torque_nmm_at",
            "hysteresis_pct_at",
            "energy_loss_pct",
            "linearity_pct",
            "max_torque_nmm",
            "max_angle_deg",
            "secant_rate_nmm_per_deg",
            "set_deg",
            "window_deg",
            "points_in_window",
            "evaluated_cycle",
        ] {
            assert!(json.get(field).is_some(), "{field} missing from {json}");
        }
        assert_eq!(json["torque_nmm_at"]["60"], 240.0);
        assert!(json["set_deg"].is_null());
    }

    proptest! {
        // Common practice, no published source: the fitted rate of a noiseless linear curve is the law's rate.
        #[test]
        fn noiseless_law_rate_is_recovered(rate in 0.05f64..50.0, alpha0 in -20.0f64..15.0,
                                            step in 0.05f64..2.0) {
            let law = Law { step_deg: step, ..Law::new(rate, alpha0) };
            let m = curve_metrics(&law.curve(), &MetricOptions::default()).unwrap();
            prop_assert!(m.rate_nmm_per_deg.is_some(), "{:?}", m.rate_unavailable);
            prop_assert!(close(m.rate_nmm_per_deg.unwrap(), rate, 1e-9));
            prop_assert!((m.free_angle_deg.unwrap() - alpha0).abs() < 1e-8);
        }
    }
}
