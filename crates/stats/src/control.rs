//! Control charts over a part's lots: X̄–S with lots as subgroups, EWMA and tabular CUSUM.
//!
//! Everything here is a pure function of lot summaries (size, mean, standard deviation)
//! or of single values; the history query and the trend run live elsewhere.
//!
//! # Methods
//!
//! * **Constants.** c4(n) = √(2/(n − 1))·Γ(n/2)/Γ((n − 1)/2), computed from its
//!   definition (through ln Γ, so large subgroups do not overflow); A3 = 3/(c4·√n),
//!   B3 = max(0, 1 − 3·√(1 − c4²)/c4), B4 = 1 + 3·√(1 − c4²)/c4 (NIST/SEMATECH
//!   e-Handbook §6.3.2, ASTM E2587). The tests compare them with the published table.
//! * **X̄–S chart, lots of any size ≥ 2.** The centre line is the grand mean of all
//!   values, Σ nᵢ·x̄ᵢ / Σ nᵢ. The within-lot σ is estimated by combining the unbiased
//!   estimates sᵢ/c4(nᵢ) with weights hᵢ = c4(nᵢ)²/(1 − c4(nᵢ)²), the inverse of each
//!   estimate's relative variance, so a lot of 30 counts for more than a lot of 3.
//!   Convention stated, because texts differ for unequal sizes: with equal sizes this
//!   σ̂ is exactly S̄/c4(n), so the limits are the textbook x̄̄ ± A3·S̄, B3·S̄ and B4·S̄;
//!   with unequal sizes each lot gets its own limits, x̄̄ ± A3(nᵢ)·c4(nᵢ)·σ̂ for the
//!   mean and B3(nᵢ)·c4(nᵢ)·σ̂, B4(nᵢ)·c4(nᵢ)·σ̂ around the centre c4(nᵢ)·σ̂ for s.
//! * **EWMA.** zᵢ = λ·xᵢ + (1 − λ)·zᵢ₋₁ from z₀ = target, with the exact variance
//!   of zᵢ (not the steady-state one): for a constant σₓ it is
//!   σₓ²·λ/(2 − λ)·(1 − (1 − λ)^(2i)); for lot means of varying size the same sum is
//!   taken term by term, σₓᵢ = σ/√nᵢ. Defaults λ = 0.2, L = 3: the e-Handbook
//!   (§6.3.2.4) puts λ usually between 0.2 and 0.3 (after Hunter) and the limit
//!   factor at 3 (recalled from the page, whose worked example is checked in the tests).
//! * **Tabular CUSUM** in σ units: C⁺ᵢ = max(0, zᵢ − k + C⁺ᵢ₋₁),
//!   C⁻ᵢ = max(0, −zᵢ − k + C⁻ᵢ₋₁), zᵢ = (xᵢ − target)/σₓᵢ, signal when a sum
//!   exceeds h. Defaults k = 0.5 (to detect a shift of one σ) and h = 5, the usual
//!   design Montgomery gives (Introduction to Statistical Quality Control, §9.1:
//!   k = ½ with h = 4 or 5; recalled). After a signal the new mean is estimated as the mean of the values
//!   since the sum last left zero — for equal sizes that is exactly Montgomery's
//!   target + K + C⁺/N⁺ (or target − K − C⁻/N⁻); for lot means of varying size the
//!   means are weighted by their sizes.

use serde::Serialize;
use statrs::function::gamma::ln_gamma;

/// Why a control computation could not be made; each names what to change.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum ControlError {
    /// Fewer points than the method needs.
    #[error("{what}: {got} given, at least {needed} needed")]
    TooFew {
        /// What was counted (for example "lots with results").
        what: &'static str,
        /// How many the method needs.
        needed: usize,
        /// How many were given.
        got: usize,
    },
    /// A lot with fewer than two values cannot give a within-lot standard deviation.
    #[error(
        "lot {index} has {n} value(s); an X̄–S chart needs at least 2 per lot — test more parts of it or leave it out"
    )]
    SubgroupTooSmall {
        /// Position of the lot in the series, from 0.
        index: usize,
        /// Its number of values.
        n: usize,
    },
    /// A control-chart constant was asked for a subgroup size below 2.
    #[error("control-chart constants are defined for subgroup sizes of 2 or more, not {n}")]
    SizeTooSmall {
        /// The size asked for.
        n: usize,
    },
    /// A value that is not a finite number.
    #[error("{what}{} is {value}, not a finite number", at(.index))]
    NotFinite {
        /// Which input (for example "lot mean").
        what: &'static str,
        /// Its position in its list, from 0, when it is in one.
        index: Option<usize>,
        /// The value found.
        value: f64,
    },
    /// Two inputs that must pair up have different lengths.
    #[error("{what}: {left} against {right} — the two lists must pair up one to one")]
    LengthMismatch {
        /// What was paired.
        what: &'static str,
        /// Length of the first list.
        left: usize,
        /// Length of the second list.
        right: usize,
    },
    /// A parameter outside its range.
    #[error("{name} = {value} is out of range: {expected}")]
    Parameter {
        /// Parameter name.
        name: &'static str,
        /// Value given.
        value: f64,
        /// The range it must be in.
        expected: &'static str,
    },
    /// A quantity that must be positive is zero or negative.
    #[error("{what}{} is {value}; it must be greater than zero", at(.index))]
    NotPositive {
        /// What it is (for example "wire diameter (mm) of lot").
        what: &'static str,
        /// Its position in its list, from 0, when it is in one.
        index: Option<usize>,
        /// The value found.
        value: f64,
    },
    /// Every lot has zero spread, so there is no σ to set limits from.
    #[error(
        "every lot's values are identical (S̄ = 0): there is no within-lot spread to set limits from — check the rig's resolution and the metric"
    )]
    NoSpread,
    /// Every point sits at the same time, so no slope can be fitted.
    #[error("all {lots} lots carry the same time; a drift needs lots spread over time")]
    NoTimeSpread {
        /// Number of lots.
        lots: usize,
    },
}

/// " 4" for an item of a list, nothing for a single value.
fn at(index: &Option<usize>) -> String {
    index.map(|i| format!(" {i}")).unwrap_or_default()
}

/// Which side of the centre line a point or signal is on.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum Side {
    /// Above the centre line (or the upper limit).
    Above,
    /// Below the centre line (or the lower limit).
    Below,
}

/// The c4 constant: the expected sample standard deviation of n normal values over σ.
pub fn c4(n: usize) -> Result<f64, ControlError> {
    if n < 2 {
        return Err(ControlError::SizeTooSmall { n });
    }
    let nf = n as f64;
    Ok((2.0 / (nf - 1.0)).sqrt() * (ln_gamma(nf / 2.0) - ln_gamma((nf - 1.0) / 2.0)).exp())
}

/// The A3 constant: 3σ limits for the mean from S̄, A3 = 3/(c4·√n).
pub fn a3(n: usize) -> Result<f64, ControlError> {
    Ok(3.0 / (c4(n)? * (n as f64).sqrt()))
}

/// The B3 constant: lower 3σ limit of the S chart as a multiple of S̄.
pub fn b3(n: usize) -> Result<f64, ControlError> {
    Ok((1.0 - s_spread(n)?).max(0.0))
}

/// The B4 constant: upper 3σ limit of the S chart as a multiple of S̄.
pub fn b4(n: usize) -> Result<f64, ControlError> {
    Ok(1.0 + s_spread(n)?)
}

/// 3·σ(s)/E(s) = 3·√(1 − c4²)/c4.
fn s_spread(n: usize) -> Result<f64, ControlError> {
    let c = c4(n)?;
    Ok(3.0 * (1.0 - c * c).max(0.0).sqrt() / c)
}

/// One lot as a subgroup: its size, mean and sample standard deviation.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Subgroup {
    /// Number of values (tested parts).
    pub n: usize,
    /// Mean of the values.
    pub mean: f64,
    /// Sample standard deviation (n − 1 divisor); 0 for a single value.
    pub sd: f64,
}

impl Subgroup {
    /// Summarises one lot's values.
    ///
    /// The sums are taken about the mean (two passes): spring rates sit far from zero
    /// relative to their spread, and the one-pass formula would lose digits.
    pub fn from_values(values: &[f64]) -> Result<Self, ControlError> {
        if values.is_empty() {
            return Err(ControlError::TooFew { what: "values in the lot", needed: 1, got: 0 });
        }
        check_finite("value", values)?;
        let n = values.len();
        let mean = values.iter().sum::<f64>() / n as f64;
        let sd = if n < 2 {
            0.0
        } else {
            (values.iter().map(|v| (v - mean) * (v - mean)).sum::<f64>() / (n as f64 - 1.0)).sqrt()
        };
        Ok(Subgroup { n, mean, sd })
    }
}

/// Known standards for an X̄–S chart (limits carried over from a baseline period).
#[derive(Debug, Clone, Copy, Default, PartialEq, Serialize)]
pub struct XbarSOptions {
    /// Centre line to use instead of the grand mean of the lots charted.
    pub known_mean: Option<f64>,
    /// Within-lot σ to use instead of the one estimated from the lots charted.
    pub known_sigma: Option<f64>,
}

/// Which of the two charts of an X̄–S pair.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum ChartKind {
    /// The chart of lot means.
    Xbar,
    /// The chart of lot standard deviations.
    S,
}

/// A point outside its control limits.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct LimitSignal {
    /// Position of the lot (or point) in the series, from 0.
    pub index: usize,
    /// Which chart.
    pub chart: ChartKind,
    /// Above the upper or below the lower limit.
    pub side: Side,
    /// The plotted value.
    pub value: f64,
    /// The limit it crossed.
    pub limit: f64,
}

/// One lot on an X̄–S chart with its own limits.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct XbarSPoint {
    /// Position of the lot in the series, from 0.
    pub index: usize,
    /// Lot size.
    pub n: usize,
    /// Lot mean (plotted on the X̄ chart).
    pub mean: f64,
    /// Lot standard deviation (plotted on the S chart).
    pub sd: f64,
    /// Lower control limit for the mean.
    pub mean_lcl: f64,
    /// Upper control limit for the mean.
    pub mean_ucl: f64,
    /// Centre line of the S chart for this lot size, c4(n)·σ̂.
    pub sd_centre: f64,
    /// Lower control limit for the standard deviation.
    pub sd_lcl: f64,
    /// Upper control limit for the standard deviation.
    pub sd_ucl: f64,
    /// The mean in units of its own σ, (x̄ − centre)/(σ̂/√n), for the run rules.
    pub mean_z: f64,
}

/// An X̄–S chart of a series of lots.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct XbarSChart {
    /// Centre line of the X̄ chart.
    pub centre: f64,
    /// Within-lot σ the limits rest on.
    pub sigma_within: f64,
    /// Plain average of the lots' standard deviations (the S̄ of equal-size tables).
    pub s_bar: f64,
    /// True when every lot has the same size (limits are then constant).
    pub equal_sizes: bool,
    /// True when the centre or σ came from [`XbarSOptions`] rather than these lots.
    pub known_standards: bool,
    /// Each lot with its limits.
    pub points: Vec<XbarSPoint>,
    /// Lots outside their limits, in series order, X̄ before S for the same lot.
    pub signals: Vec<LimitSignal>,
}

impl XbarSChart {
    /// The lot means in σ units, ready for [`crate::run_rules()`].
    pub fn mean_z(&self) -> Vec<f64> {
        self.points.iter().map(|p| p.mean_z).collect()
    }
}

/// Builds an X̄–S chart with each lot as a subgroup (sizes may differ).
///
/// Needs at least two lots of at least two values each unless both standards are
/// known; limits estimated from fewer than about 20 lots are rough (20–25 subgroups
/// is the usual advice). See the module documentation for the σ estimate with
/// unequal sizes.
pub fn xbar_s_chart(lots: &[Subgroup], options: &XbarSOptions) -> Result<XbarSChart, ControlError> {
    let both_known = options.known_mean.is_some() && options.known_sigma.is_some();
    let needed = if both_known { 1 } else { 2 };
    if lots.len() < needed {
        return Err(ControlError::TooFew { what: "lots with results", needed, got: lots.len() });
    }
    for (index, lot) in lots.iter().enumerate() {
        if lot.n < 2 {
            return Err(ControlError::SubgroupTooSmall { index, n: lot.n });
        }
        finite("mean of lot", Some(index), lot.mean)?;
        finite("standard deviation of lot", Some(index), lot.sd)?;
        if lot.sd < 0.0 {
            return Err(ControlError::Parameter {
                name: "lot standard deviation",
                value: lot.sd,
                expected: "zero or more",
            });
        }
    }
    if let Some(m) = options.known_mean {
        finite("known mean", None, m)?;
    }
    if let Some(s) = options.known_sigma {
        if !(s.is_finite() && s > 0.0) {
            return Err(ControlError::Parameter {
                name: "known sigma",
                value: s,
                expected: "a finite number greater than zero",
            });
        }
    }

    let total: f64 = lots.iter().map(|l| l.n as f64).sum();
    let centre =
        options.known_mean.unwrap_or_else(|| lots.iter().map(|l| l.n as f64 * l.mean).sum::<f64>() / total);
    let sigma_within = match options.known_sigma {
        Some(s) => s,
        None => {
            let (mut num, mut den) = (0.0, 0.0);
            for lot in lots {
                let c = c4(lot.n)?;
                let h = c * c / (1.0 - c * c);
                num += h * lot.sd / c;
                den += h;
            }
            let s = num / den;
            if s <= 0.0 {
                return Err(ControlError::NoSpread);
            }
            s
        }
    };
    let s_bar = lots.iter().map(|l| l.sd).sum::<f64>() / lots.len() as f64;
    let equal_sizes = lots.iter().all(|l| l.n == lots[0].n);

    let mut points = Vec::with_capacity(lots.len());
    let mut signals = Vec::new();
    for (index, lot) in lots.iter().enumerate() {
        let c = c4(lot.n)?;
        let half = a3(lot.n)? * c * sigma_within;
        let sd_centre = c * sigma_within;
        let p = XbarSPoint {
            index,
            n: lot.n,
            mean: lot.mean,
            sd: lot.sd,
            mean_lcl: centre - half,
            mean_ucl: centre + half,
            sd_centre,
            sd_lcl: b3(lot.n)? * sd_centre,
            sd_ucl: b4(lot.n)? * sd_centre,
            mean_z: (lot.mean - centre) / (sigma_within / (lot.n as f64).sqrt()),
        };
        push_limit_signal(&mut signals, index, ChartKind::Xbar, p.mean, p.mean_lcl, p.mean_ucl);
        push_limit_signal(&mut signals, index, ChartKind::S, p.sd, p.sd_lcl, p.sd_ucl);
        points.push(p);
    }
    Ok(XbarSChart {
        centre,
        sigma_within,
        s_bar,
        equal_sizes,
        known_standards: options.known_mean.is_some() || options.known_sigma.is_some(),
        points,
        signals,
    })
}

fn push_limit_signal(out: &mut Vec<LimitSignal>, index: usize, chart: ChartKind, v: f64, lcl: f64, ucl: f64) {
    if v > ucl {
        out.push(LimitSignal { index, chart, side: Side::Above, value: v, limit: ucl });
    } else if v < lcl {
        out.push(LimitSignal { index, chart, side: Side::Below, value: v, limit: lcl });
    }
}

/// Settings of an EWMA chart.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct EwmaOptions {
    /// Weight of the newest point, 0 < λ ≤ 1 (λ = 1 is a Shewhart chart).
    pub lambda: f64,
    /// Width of the limits in standard deviations of the EWMA statistic.
    pub l: f64,
}

impl Default for EwmaOptions {
    /// λ = 0.2, L = 3 (see the module documentation for where they come from).
    fn default() -> Self {
        EwmaOptions { lambda: 0.2, l: 3.0 }
    }
}

/// One point of an EWMA chart.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct EwmaPoint {
    /// Position in the series, from 0.
    pub index: usize,
    /// The value charted (an individual or a lot mean).
    pub value: f64,
    /// Values behind it (1 for individuals).
    pub n: usize,
    /// The EWMA statistic after this point.
    pub ewma: f64,
    /// Lower control limit at this point (exact, time-varying).
    pub lcl: f64,
    /// Upper control limit at this point.
    pub ucl: f64,
}

/// An EWMA outside its limits.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct EwmaSignal {
    /// Position in the series, from 0.
    pub index: usize,
    /// Which limit was crossed.
    pub side: Side,
    /// The EWMA statistic.
    pub ewma: f64,
    /// The limit it crossed.
    pub limit: f64,
}

/// An EWMA chart of a series.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct EwmaChart {
    /// Target (z₀ and centre line).
    pub target: f64,
    /// σ of one individual value.
    pub sigma: f64,
    /// Settings used.
    pub options: EwmaOptions,
    /// Half-width the limits approach as i grows, L·σₓ·√(λ/(2 − λ)), when every point
    /// has the same size; `None` when sizes vary.
    pub asymptotic_half_width: Option<f64>,
    /// Each point.
    pub points: Vec<EwmaPoint>,
    /// Points whose EWMA lies outside the limits.
    pub signals: Vec<EwmaSignal>,
}

/// EWMA chart of individual values with known target and σ.
pub fn ewma(
    values: &[f64],
    target: f64,
    sigma: f64,
    options: &EwmaOptions,
) -> Result<EwmaChart, ControlError> {
    ewma_of_means(values, &vec![1; values.len()], target, sigma, options)
}

/// EWMA chart of lot means; each mean's σ is `sigma_within`/√n.
pub fn ewma_of_means(
    means: &[f64],
    sizes: &[usize],
    target: f64,
    sigma_within: f64,
    options: &EwmaOptions,
) -> Result<EwmaChart, ControlError> {
    check_series(means, sizes, target, sigma_within)?;
    let EwmaOptions { lambda, l } = *options;
    if !(lambda > 0.0 && lambda <= 1.0) {
        return Err(ControlError::Parameter { name: "lambda", value: lambda, expected: "0 < λ ≤ 1" });
    }
    if !(l.is_finite() && l > 0.0) {
        return Err(ControlError::Parameter { name: "L", value: l, expected: "a finite number above 0" });
    }
    let keep = 1.0 - lambda;
    let mut z = target;
    // Var(zᵢ) = λ²·σᵢ² + (1 − λ)²·Var(zᵢ₋₁): the exact variance, also for varying sizes.
    let mut var = 0.0;
    let mut points = Vec::with_capacity(means.len());
    let mut signals = Vec::new();
    for (index, (&x, &n)) in means.iter().zip(sizes).enumerate() {
        z = lambda * x + keep * z;
        var = lambda * lambda * sigma_within * sigma_within / n as f64 + keep * keep * var;
        let half = l * var.sqrt();
        let (lcl, ucl) = (target - half, target + half);
        if z > ucl {
            signals.push(EwmaSignal { index, side: Side::Above, ewma: z, limit: ucl });
        } else if z < lcl {
            signals.push(EwmaSignal { index, side: Side::Below, ewma: z, limit: lcl });
        }
        points.push(EwmaPoint { index, value: x, n, ewma: z, lcl, ucl });
    }
    let asymptotic_half_width = sizes
        .iter()
        .all(|&n| n == sizes[0])
        .then(|| l * sigma_within / (sizes[0] as f64).sqrt() * (lambda / (2.0 - lambda)).sqrt());
    Ok(EwmaChart { target, sigma: sigma_within, options: *options, asymptotic_half_width, points, signals })
}

/// Settings of a tabular CUSUM, in units of each point's σ.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct CusumOptions {
    /// Reference value k (half the shift to detect, in σ).
    pub k: f64,
    /// Decision interval h, in σ.
    pub h: f64,
    /// Start both sums again from zero after a signal (as after a corrective action).
    pub reset_after_signal: bool,
}

impl Default for CusumOptions {
    /// k = 0.5, h = 5, no reset (see the module documentation).
    fn default() -> Self {
        CusumOptions { k: 0.5, h: 5.0, reset_after_signal: false }
    }
}

/// One point of a tabular CUSUM.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct CusumPoint {
    /// Position in the series, from 0.
    pub index: usize,
    /// The value charted (an individual or a lot mean).
    pub value: f64,
    /// Values behind it (1 for individuals).
    pub n: usize,
    /// σ of this point (σ/√n), the unit of the sums.
    pub sigma_point: f64,
    /// Upper sum C⁺ in σ units.
    pub upper: f64,
    /// Lower sum C⁻ in σ units.
    pub lower: f64,
    /// Consecutive points C⁺ has been above zero (N⁺).
    pub upper_run: usize,
    /// Consecutive points C⁻ has been above zero (N⁻).
    pub lower_run: usize,
}

/// A CUSUM crossing its decision interval.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct CusumSignal {
    /// Position of the point where the sum first exceeded h, from 0.
    pub index: usize,
    /// Upward (C⁺) or downward (C⁻) shift.
    pub side: Side,
    /// First point of the run that led to it: where the shift probably began.
    pub onset_index: usize,
    /// The sum at the signal, in σ units.
    pub statistic: f64,
    /// Estimated mean after the shift (see the module documentation).
    pub estimated_mean: f64,
}

/// A tabular CUSUM of a series.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CusumChart {
    /// Target mean.
    pub target: f64,
    /// σ of one individual value.
    pub sigma: f64,
    /// Settings used.
    pub options: CusumOptions,
    /// Each point.
    pub points: Vec<CusumPoint>,
    /// One signal each time a sum crosses above h.
    pub signals: Vec<CusumSignal>,
}

/// Tabular CUSUM of individual values with known target and σ.
pub fn cusum(
    values: &[f64],
    target: f64,
    sigma: f64,
    options: &CusumOptions,
) -> Result<CusumChart, ControlError> {
    cusum_of_means(values, &vec![1; values.len()], target, sigma, options)
}

/// Tabular CUSUM of lot means; each mean's σ is `sigma_within`/√n.
pub fn cusum_of_means(
    means: &[f64],
    sizes: &[usize],
    target: f64,
    sigma_within: f64,
    options: &CusumOptions,
) -> Result<CusumChart, ControlError> {
    check_series(means, sizes, target, sigma_within)?;
    let CusumOptions { k, h, reset_after_signal } = *options;
    if !(k.is_finite() && k >= 0.0) {
        return Err(ControlError::Parameter { name: "k", value: k, expected: "a finite number, 0 or more" });
    }
    if !(h.is_finite() && h > 0.0) {
        return Err(ControlError::Parameter { name: "h", value: h, expected: "a finite number above 0" });
    }
    let (mut up, mut lo) = (0.0f64, 0.0f64);
    let (mut up_run, mut lo_run) = (0usize, 0usize);
    let mut points: Vec<CusumPoint> = Vec::with_capacity(means.len());
    let mut signals = Vec::new();
    for (index, (&x, &n)) in means.iter().zip(sizes).enumerate() {
        let sigma_point = sigma_within / (n as f64).sqrt();
        let z = (x - target) / sigma_point;
        let (was_up, was_lo) = (up, lo);
        up = (up + z - k).max(0.0);
        lo = (lo - z - k).max(0.0);
        up_run = if up > 0.0 { up_run + 1 } else { 0 };
        lo_run = if lo > 0.0 { lo_run + 1 } else { 0 };
        points.push(CusumPoint {
            index,
            value: x,
            n,
            sigma_point,
            upper: up,
            lower: lo,
            upper_run: up_run,
            lower_run: lo_run,
        });
        let mut fired = false;
        for (side, now, before, run) in [(Side::Above, up, was_up, up_run), (Side::Below, lo, was_lo, lo_run)]
        {
            // Without a reset a sum stays above h for a while; one signal per crossing.
            if now > h && (before <= h || reset_after_signal) {
                let onset_index = index + 1 - run;
                let run_points = &points[onset_index..=index];
                let weight: f64 = run_points.iter().map(|p| p.n as f64).sum();
                let estimated_mean = run_points.iter().map(|p| p.n as f64 * p.value).sum::<f64>() / weight;
                signals.push(CusumSignal { index, side, onset_index, statistic: now, estimated_mean });
                fired = true;
            }
        }
        if fired && reset_after_signal {
            (up, lo, up_run, lo_run) = (0.0, 0.0, 0, 0);
        }
    }
    Ok(CusumChart { target, sigma: sigma_within, options: *options, points, signals })
}

fn check_series(values: &[f64], sizes: &[usize], target: f64, sigma: f64) -> Result<(), ControlError> {
    if values.is_empty() {
        return Err(ControlError::TooFew { what: "points to chart", needed: 1, got: 0 });
    }
    if values.len() != sizes.len() {
        return Err(ControlError::LengthMismatch {
            what: "lot means against lot sizes",
            left: values.len(),
            right: sizes.len(),
        });
    }
    check_finite("point", values)?;
    if let Some(index) = sizes.iter().position(|&n| n == 0) {
        return Err(ControlError::NotPositive {
            what: "number of values behind point",
            index: Some(index),
            value: 0.0,
        });
    }
    finite("target", None, target)?;
    if !(sigma.is_finite() && sigma > 0.0) {
        return Err(ControlError::Parameter {
            name: "sigma",
            value: sigma,
            expected: "a finite number greater than zero",
        });
    }
    Ok(())
}

pub(crate) fn check_finite(what: &'static str, values: &[f64]) -> Result<(), ControlError> {
    match values.iter().position(|v| !v.is_finite()) {
        Some(index) => Err(ControlError::NotFinite { what, index: Some(index), value: values[index] }),
        None => Ok(()),
    }
}

pub(crate) fn finite(what: &'static str, index: Option<usize>, value: f64) -> Result<(), ControlError> {
    if value.is_finite() {
        Ok(())
    } else {
        Err(ControlError::NotFinite { what, index, value })
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    // Source: ASTM table of control-chart constants (copyright ASTM International), as
    // reproduced with permission in Joglekar, Statistical Methods for Six Sigma (Wiley 2003),
    // Appendix G "Table of Control Chart Constants": n, c4, A3, B3, B4 (B3 printed "—" = 0).
    const ASTM_TABLE: [(usize, f64, f64, f64, f64); 24] = [
        (2, 0.7979, 2.659, 0.0, 3.267),
        (3, 0.8862, 1.954, 0.0, 2.568),
        (4, 0.9213, 1.628, 0.0, 2.266),
        (5, 0.9400, 1.427, 0.0, 2.089),
        (6, 0.9515, 1.287, 0.030, 1.970),
        (7, 0.9594, 1.182, 0.118, 1.882),
        (8, 0.9650, 1.099, 0.185, 1.815),
        (9, 0.9693, 1.032, 0.239, 1.761),
        (10, 0.9727, 0.975, 0.284, 1.716),
        (11, 0.9754, 0.927, 0.321, 1.679),
        (12, 0.9776, 0.886, 0.354, 1.646),
        (13, 0.9794, 0.850, 0.382, 1.618),
        (14, 0.9810, 0.817, 0.406, 1.594),
        (15, 0.9823, 0.789, 0.428, 1.572),
        (16, 0.9835, 0.763, 0.448, 1.552),
        (17, 0.9845, 0.739, 0.466, 1.534),
        (18, 0.9854, 0.718, 0.482, 1.518),
        (19, 0.9862, 0.698, 0.497, 1.503),
        (20, 0.9869, 0.680, 0.510, 1.490),
        (21, 0.9876, 0.663, 0.523, 1.477),
        (22, 0.9882, 0.647, 0.534, 1.466),
        (23, 0.9887, 0.633, 0.545, 1.455),
        (24, 0.9892, 0.619, 0.555, 1.445),
        (25, 0.9896, 0.606, 0.565, 1.435),
    ];

    #[test]
    fn constants_match_the_published_table() {
        for &(n, tc4, ta3, tb3, tb4) in &ASTM_TABLE {
            // The table rounds to its last printed digit: allow half a unit of it.
            // Source: ASTM factor table via Joglekar (2003), Appendix G (see ASTM_TABLE).
            assert!((c4(n).unwrap() - tc4).abs() <= 0.5e-4 + 1e-12, "c4({n}) = {}", c4(n).unwrap());
            assert!((a3(n).unwrap() - ta3).abs() <= 0.5e-3 + 1e-12, "A3({n}) = {}", a3(n).unwrap());
            assert!((b3(n).unwrap() - tb3).abs() <= 0.5e-3 + 1e-12, "B3({n}) = {}", b3(n).unwrap());
            assert!((b4(n).unwrap() - tb4).abs() <= 0.5e-3 + 1e-12, "B4({n}) = {}", b4(n).unwrap());
        }
    }

    #[test]
    fn c4_in_closed_form_and_for_large_lots() {
        let pi = std::f64::consts::PI;
        // Common practice, no published source: c4's definition in closed form, Γ(1/2) = √π,
        // Γ(3/2) = √π/2, Γ(1) = Γ(2) = 1.
        assert!((c4(2).unwrap() - (2.0 / pi).sqrt()).abs() < 1e-13);
        assert!((c4(3).unwrap() - pi.sqrt() / 2.0).abs() < 1e-13);
        assert!((c4(4).unwrap() - (2.0f64 / 3.0).sqrt() * 2.0 / pi.sqrt()).abs() < 1e-13);
        for n in [100usize, 1000] {
            let nf = n as f64;
            // From memory: asymptotic series c4(n) = 1 − 1/(4n) − 7/(32n²) − O(n⁻³).
            assert!((c4(n).unwrap() - (1.0 - 1.0 / (4.0 * nf) - 7.0 / (32.0 * nf * nf))).abs() < 1e-6);
        }
        assert_eq!(c4(1), Err(ControlError::SizeTooSmall { n: 1 }));
        assert_eq!(a3(0), Err(ControlError::SizeTooSmall { n: 0 }));
    }

    fn lots_of(values: &[&[f64]]) -> Vec<Subgroup> {
        values.iter().map(|v| Subgroup::from_values(v).unwrap()).collect()
    }

    #[test]
    fn equal_lots_give_the_textbook_limits_and_flag_the_odd_lot() {
        // Twenty lots of five around 10 (lot-to-lot wobble ±0.05, within-lot s ≈ 0.16),
        // and lot 13 set 1.0 higher.
        let offsets = [-0.2, -0.1, 0.0, 0.1, 0.2];
        let data: Vec<Vec<f64>> = (0..20)
            .map(|i| {
                let base = 10.0 + 0.05 * ((i % 5) as f64 - 2.0) / 2.0 + if i == 13 { 1.0 } else { 0.0 };
                offsets
                    .iter()
                    .enumerate()
                    .map(|(j, o)| base + o * (1.0 + 0.1 * ((i + j) % 3) as f64))
                    .collect()
            })
            .collect();
        let refs: Vec<&[f64]> = data.iter().map(|v| v.as_slice()).collect();
        let chart = xbar_s_chart(&lots_of(&refs), &XbarSOptions::default()).unwrap();
        let means: Vec<f64> = data.iter().map(|v| v.iter().sum::<f64>() / 5.0).collect();
        let sds: Vec<f64> = data
            .iter()
            .zip(&means)
            .map(|(v, m)| (v.iter().map(|x| (x - m).powi(2)).sum::<f64>() / 4.0).sqrt())
            .collect();
        let grand = means.iter().sum::<f64>() / 20.0;
        let s_bar = sds.iter().sum::<f64>() / 20.0;
        assert!(chart.equal_sizes);
        assert!((chart.centre - grand).abs() < 1e-12);
        assert!((chart.s_bar - s_bar).abs() < 1e-12);
        let p = &chart.points[0];
        // Source: ASTM factor table via Joglekar (2003), Appendix G, n = 5: A3 = 1.427,
        // B3 = 0, B4 = 2.089, c4 = 0.9400; limits x̄̄ ± A3·S̄, B3·S̄, B4·S̄.
        assert!((p.mean_ucl - (grand + 1.427 * s_bar)).abs() <= 0.5e-3 * s_bar + 1e-12);
        assert!((p.mean_lcl - (grand - 1.427 * s_bar)).abs() <= 0.5e-3 * s_bar + 1e-12);
        assert!((p.sd_ucl - 2.089 * s_bar).abs() <= 0.5e-3 * s_bar + 1e-12);
        assert_eq!(p.sd_lcl, 0.0);
        assert!((p.sd_centre - s_bar).abs() < 1e-12);
        assert!((chart.sigma_within * 0.9400 - s_bar).abs() <= 0.5e-4 * chart.sigma_within + 1e-12);
        // Common practice, no published source: the lot set 1.0 (far beyond 3σ of a mean) above
        // the others is the only one beyond a limit, and its spread is not odd.
        assert_eq!(
            chart.signals.iter().map(|s| (s.index, s.chart, s.side)).collect::<Vec<_>>(),
            vec![(13, ChartKind::Xbar, Side::Above)]
        );
        assert!(chart.points[13].mean_z > 3.0);
    }

    #[test]
    fn a_lot_with_a_wide_spread_is_flagged_on_the_s_chart() {
        let mut data: Vec<Vec<f64>> =
            (0..10).map(|i| vec![10.0, 10.1 + 0.01 * i as f64, 9.9, 10.0]).collect();
        data[6] = vec![9.0, 11.0, 9.2, 10.8];
        let refs: Vec<&[f64]> = data.iter().map(|v| v.as_slice()).collect();
        let chart = xbar_s_chart(&lots_of(&refs), &XbarSOptions::default()).unwrap();
        // Common practice, no published source: s ≈ 1.0 against s ≈ 0.08 elsewhere is far
        // above B4·S̄ while its mean stays central.
        assert!(chart
            .signals
            .iter()
            .any(|s| s.index == 6 && s.chart == ChartKind::S && s.side == Side::Above));
        assert!(!chart.signals.iter().any(|s| s.chart == ChartKind::Xbar));
    }

    #[test]
    fn unequal_lots_get_their_own_limits() {
        let lots = [
            Subgroup { n: 3, mean: 10.0, sd: 0.2 },
            Subgroup { n: 12, mean: 10.1, sd: 0.25 },
            Subgroup { n: 5, mean: 9.95, sd: 0.18 },
        ];
        let chart = xbar_s_chart(&lots, &XbarSOptions::default()).unwrap();
        assert!(!chart.equal_sizes);
        // Common practice, no published source: the centre is the mean of all values.
        assert!((chart.centre - (3.0 * 10.0 + 12.0 * 10.1 + 5.0 * 9.95) / 20.0).abs() < 1e-12);
        let s = chart.sigma_within;
        for p in &chart.points {
            let n = p.n as f64;
            // Common practice, no published source: 3σ limits of a mean of n are ±3σ/√n,
            // and the S chart's centre is c4(n)·σ.
            assert!((p.mean_ucl - chart.centre - 3.0 * s / n.sqrt()).abs() < 1e-12);
            assert!((p.sd_centre - c4(p.n).unwrap() * s).abs() < 1e-12);
        }
        // The larger lot is trusted more: σ̂ lies nearer its s/c4 than the plain average does.
        let unbiased: Vec<f64> = lots.iter().map(|l| l.sd / c4(l.n).unwrap()).collect();
        let plain = unbiased.iter().sum::<f64>() / 3.0;
        assert!((s - unbiased[1]).abs() < (plain - unbiased[1]).abs());
    }

    #[test]
    fn known_standards_replace_the_estimates() {
        let lots = [Subgroup { n: 4, mean: 10.0, sd: 0.2 }, Subgroup { n: 4, mean: 10.4, sd: 0.3 }];
        let chart =
            xbar_s_chart(&lots, &XbarSOptions { known_mean: Some(10.0), known_sigma: Some(0.1) }).unwrap();
        assert!(chart.known_standards);
        assert_eq!(chart.centre, 10.0);
        // Common practice, no published source: known σ = 0.1, n = 4 gives limits ±0.15.
        assert!((chart.points[0].mean_ucl - 10.15).abs() < 1e-12);
        assert!(chart.signals.iter().any(|s| s.index == 1 && s.chart == ChartKind::Xbar));
        let one = xbar_s_chart(&lots[..1], &XbarSOptions { known_mean: Some(10.0), known_sigma: Some(0.1) });
        assert!(one.is_ok());
    }

    #[test]
    fn bad_lots_are_refused_with_the_lot_named() {
        let ok = Subgroup { n: 5, mean: 10.0, sd: 0.1 };
        let none = XbarSOptions::default();
        assert_eq!(
            xbar_s_chart(&[ok], &none),
            Err(ControlError::TooFew { what: "lots with results", needed: 2, got: 1 })
        );
        assert_eq!(
            xbar_s_chart(&[ok, Subgroup { n: 1, mean: 10.0, sd: 0.0 }], &none),
            Err(ControlError::SubgroupTooSmall { index: 1, n: 1 })
        );
        assert!(matches!(
            xbar_s_chart(&[ok, Subgroup { n: 3, mean: f64::NAN, sd: 0.1 }], &none),
            Err(ControlError::NotFinite { index: Some(1), .. })
        ));
        let flat = Subgroup { n: 3, mean: 10.0, sd: 0.0 };
        assert_eq!(xbar_s_chart(&[flat, flat], &none), Err(ControlError::NoSpread));
        let msg = ControlError::SubgroupTooSmall { index: 7, n: 1 }.to_string();
        assert!(msg.contains("lot 7") && msg.contains("at least 2"), "{msg}");
        assert!(Subgroup::from_values(&[1.0, f64::INFINITY]).is_err());
        assert_eq!(Subgroup::from_values(&[2.0]).unwrap(), Subgroup { n: 1, mean: 2.0, sd: 0.0 });
    }

    fn lot_strategy() -> impl Strategy<Value = Vec<Subgroup>> {
        prop::collection::vec((2usize..12, -5.0f64..5.0, 0.01f64..2.0), 2..30)
            .prop_map(|v| v.into_iter().map(|(n, mean, sd)| Subgroup { n, mean, sd }).collect())
    }

    fn flags(chart: &XbarSChart) -> Vec<(usize, ChartKind, Side)> {
        chart.signals.iter().map(|s| (s.index, s.chart, s.side)).collect()
    }

    proptest! {
        // Common practice, no published source: shifting every value by c shifts the centre
        // and the mean limits by c and leaves the S chart and every signal unchanged.
        #[test]
        fn xbar_s_shift_invariance(lots in lot_strategy(), c in -1000.0f64..1000.0) {
            let base = xbar_s_chart(&lots, &XbarSOptions::default()).unwrap();
            let moved: Vec<Subgroup> = lots.iter().map(|l| Subgroup { mean: l.mean + c, ..*l }).collect();
            let shifted = xbar_s_chart(&moved, &XbarSOptions::default()).unwrap();
            prop_assert!((shifted.centre - base.centre - c).abs() < 1e-9 * (1.0 + c.abs()));
            prop_assert!((shifted.sigma_within - base.sigma_within).abs() < 1e-12);
            for (a, b) in base.points.iter().zip(&shifted.points) {
                prop_assert!((b.mean_ucl - a.mean_ucl - c).abs() < 1e-9 * (1.0 + c.abs()));
                prop_assert!((b.mean_z - a.mean_z).abs() < 1e-6 * (1.0 + a.mean_z.abs()));
            }
            prop_assert_eq!(flags(&base), flags(&shifted));
        }

        // Common practice, no published source: scaling every value by a > 0 scales the
        // centre, σ and every limit by a and leaves the signals unchanged.
        #[test]
        fn xbar_s_scale_invariance(lots in lot_strategy(), a in 0.001f64..1000.0) {
            let base = xbar_s_chart(&lots, &XbarSOptions::default()).unwrap();
            let scaled: Vec<Subgroup> =
                lots.iter().map(|l| Subgroup { mean: l.mean * a, sd: l.sd * a, ..*l }).collect();
            let s = xbar_s_chart(&scaled, &XbarSOptions::default()).unwrap();
            prop_assert!((s.sigma_within - a * base.sigma_within).abs() < 1e-9 * a * base.sigma_within);
            for (p, q) in base.points.iter().zip(&s.points) {
                prop_assert!((q.mean_ucl - a * p.mean_ucl).abs() < 1e-9 * a * (p.mean_ucl.abs() + 1.0));
                prop_assert!((q.sd_ucl - a * p.sd_ucl).abs() < 1e-9 * a * p.sd_ucl);
            }
            prop_assert_eq!(flags(&base), flags(&s));
        }

        // Common practice, no published source: with equal sizes σ̂ = S̄/c4(n), so the mean
        // limits are exactly x̄̄ ± A3·S̄ and the S limits B3·S̄, B4·S̄.
        #[test]
        fn equal_sizes_reduce_to_s_bar(n in 2usize..30, stats in prop::collection::vec((-5.0f64..5.0, 0.01f64..2.0), 2..30)) {
            let lots: Vec<Subgroup> = stats.iter().map(|&(mean, sd)| Subgroup { n, mean, sd }).collect();
            let chart = xbar_s_chart(&lots, &XbarSOptions::default()).unwrap();
            let s_bar = chart.s_bar;
            let p = &chart.points[0];
            prop_assert!((p.mean_ucl - (chart.centre + a3(n).unwrap() * s_bar)).abs() < 1e-9);
            prop_assert!((p.sd_ucl - b4(n).unwrap() * s_bar).abs() < 1e-9);
            prop_assert!((p.sd_lcl - b3(n).unwrap() * s_bar).abs() < 1e-9);
        }
    }

    // Source: NIST/SEMATECH e-Handbook of Statistical Methods §6.3.2.4, "Example of
    // calculation of parameters for an EWMA control chart": target 50, s = 2.0539, λ = 0.3,
    // k = 3, twenty observations and their EWMA values to two decimals (z₀ = 50.00 first).
    // Read here from a verbatim transcription of the page, not the page itself.
    const NIST_EWMA_DATA: [f64; 20] = [
        52.0, 47.0, 53.0, 49.3, 50.1, 47.0, 51.0, 50.1, 51.2, 50.5, 49.6, 47.6, 49.9, 51.3, 47.8, 51.2, 52.6,
        52.4, 53.6, 52.1,
    ];
    const NIST_EWMA_Z: [f64; 21] = [
        50.00, 50.60, 49.52, 50.56, 50.18, 50.16, 49.21, 49.75, 49.85, 50.26, 50.33, 50.11, 49.36, 49.52,
        50.05, 49.38, 49.92, 50.73, 51.23, 51.94, 51.99,
    ];

    #[test]
    fn ewma_reproduces_the_nist_example() {
        let chart = ewma(&NIST_EWMA_DATA, 50.0, 2.0539, &EwmaOptions { lambda: 0.3, l: 3.0 }).unwrap();
        for (p, &published) in chart.points.iter().zip(&NIST_EWMA_Z[1..]) {
            // Source: e-Handbook §6.3.2.4 EWMA column, printed to 2 decimals.
            assert!((p.ewma - published).abs() <= 0.005 + 1e-9, "z{} = {}", p.index + 1, p.ewma);
        }
        let half = chart.asymptotic_half_width.unwrap();
        // Source: e-Handbook §6.3.2.4: UCL = 52.5884, LCL = 47.4115 (the page truncates its
        // √(λ/(2−λ)) factor to 0.4201, hence 1e-4).
        assert!((50.0 + half - 52.5884).abs() < 1e-4, "{}", 50.0 + half);
        assert!((50.0 - half - 47.4115).abs() < 1e-4, "{}", 50.0 - half);
        // Source: e-Handbook §6.3.2.4: every EWMA value lies between those limits.
        assert!(chart.points.iter().all(|p| (p.ewma - 50.0).abs() < half));
    }

    // Source: Montgomery, Introduction to Statistical Quality Control, Table 9.1: thirty
    // observations, the first twenty from N(10, 1), the last ten after the mean moved to 11.
    // Read here from public transcriptions of the table, not the book.
    const MONTGOMERY_9_1: [f64; 30] = [
        9.45, 7.99, 9.29, 11.66, 12.16, 10.18, 8.04, 11.46, 9.20, 10.34, 9.03, 11.47, 10.51, 9.40, 10.08,
        9.37, 10.62, 10.31, 8.52, 10.84, 10.90, 9.33, 12.29, 11.50, 10.60, 11.08, 10.38, 11.62, 11.31, 10.52,
    ];

    proptest! {
        // From memory: Montgomery ISQC eq. 9.24–9.25, exact EWMA limits
        // target ± Lσ√(λ/(2−λ)·(1 − (1−λ)^(2i))); the chart builds them by recursion.
        #[test]
        fn ewma_limits_follow_the_closed_form(lambda in 0.01f64..=1.0, l in 0.5f64..4.0,
                                              sigma in 0.01f64..100.0, n in 1usize..20, len in 1usize..80) {
            let means = vec![0.0; len];
            let chart = ewma_of_means(&means, &vec![n; len], 0.0, sigma, &EwmaOptions { lambda, l }).unwrap();
            for p in &chart.points {
                let i = (p.index + 1) as f64;
                let want = l * sigma / (n as f64).sqrt()
                    * (lambda / (2.0 - lambda) * (1.0 - (1.0 - lambda).powf(2.0 * i))).sqrt();
                prop_assert!((p.ucl - want).abs() <= 1e-9 * want);
                prop_assert!((p.lcl + want).abs() <= 1e-9 * want);
            }
        }

        // Common practice, no published source: with λ = 1 the EWMA is the value itself and
        // the limits are target ± Lσ: a Shewhart chart for individuals.
        #[test]
        fn ewma_with_lambda_one_is_shewhart(values in prop::collection::vec(-10.0f64..10.0, 1..50),
                                            target in -5.0f64..5.0, sigma in 0.1f64..5.0, l in 1.0f64..4.0) {
            let chart = ewma(&values, target, sigma, &EwmaOptions { lambda: 1.0, l }).unwrap();
            for (p, &x) in chart.points.iter().zip(&values) {
                prop_assert_eq!(p.ewma, x);
                prop_assert!((p.ucl - (target + l * sigma)).abs() < 1e-12 * (1.0 + target.abs() + l * sigma));
            }
            let shewhart: Vec<usize> =
                values.iter().enumerate().filter(|(_, x)| (*x - target).abs() > l * sigma).map(|(i, _)| i).collect();
            prop_assert_eq!(chart.signals.iter().map(|s| s.index).collect::<Vec<_>>(), shewhart);
        }

        // Common practice, no published source: an affine change of units (x → a·x + c with
        // target and σ alike) moves the EWMA and limits with it and keeps the signals.
        #[test]
        fn ewma_affine_invariance(values in prop::collection::vec(-3.0f64..3.0, 1..60),
                                  a in 0.01f64..100.0, c in -1000.0f64..1000.0, lambda in 0.05f64..1.0) {
            let o = EwmaOptions { lambda, l: 2.5 };
            let base = ewma(&values, 0.0, 1.0, &o).unwrap();
            let moved: Vec<f64> = values.iter().map(|x| a * x + c).collect();
            let m = ewma(&moved, c, a, &o).unwrap();
            for (p, q) in base.points.iter().zip(&m.points) {
                prop_assert!((q.ewma - (a * p.ewma + c)).abs() < 1e-9 * (a + c.abs()));
                prop_assert!((q.ucl - (a * p.ucl + c)).abs() < 1e-9 * (a + c.abs()));
            }
            let sig = |ch: &EwmaChart| ch.signals.iter().map(|s| (s.index, s.side)).collect::<Vec<_>>();
            prop_assert_eq!(sig(&base), sig(&m));
        }
    }

    #[test]
    fn ewma_rejects_bad_settings() {
        let v = [1.0, 2.0];
        assert!(matches!(
            ewma(&v, 0.0, 1.0, &EwmaOptions { lambda: 0.0, l: 3.0 }),
            Err(ControlError::Parameter { name: "lambda", .. })
        ));
        assert!(matches!(
            ewma(&v, 0.0, 1.0, &EwmaOptions { lambda: 1.5, l: 3.0 }),
            Err(ControlError::Parameter { name: "lambda", .. })
        ));
        assert!(matches!(
            ewma(&v, 0.0, 0.0, &EwmaOptions::default()),
            Err(ControlError::Parameter { name: "sigma", .. })
        ));
        assert!(matches!(ewma(&[], 0.0, 1.0, &EwmaOptions::default()), Err(ControlError::TooFew { .. })));
        assert!(matches!(
            ewma(&[1.0, f64::NAN], 0.0, 1.0, &EwmaOptions::default()),
            Err(ControlError::NotFinite { index: Some(1), .. })
        ));
        assert!(matches!(
            ewma_of_means(&v, &[3], 0.0, 1.0, &EwmaOptions::default()),
            Err(ControlError::LengthMismatch { .. })
        ));
        assert!(matches!(
            ewma_of_means(&v, &[3, 0], 0.0, 1.0, &EwmaOptions::default()),
            Err(ControlError::NotPositive { index: Some(1), .. })
        ));
        assert_eq!(EwmaOptions::default(), EwmaOptions { lambda: 0.2, l: 3.0 });
    }

    // Source: Montgomery ISQC Table 9.2, the upper sum C⁺ for periods 1–29 (μ₀ = 10, σ = 1,
    // K = 0.5, H = 5), read from a public transcription of the table, not the book.
    const MONTGOMERY_C_PLUS: [f64; 29] = [
        0.0, 0.0, 0.0, 1.16, 2.82, 2.50, 0.04, 1.00, 0.0, 0.0, 0.0, 0.97, 0.98, 0.0, 0.0, 0.0, 0.12, 0.0,
        0.0, 0.34, 0.74, 0.0, 1.79, 2.79, 2.89, 3.47, 3.35, 4.47, 5.28,
    ];

    #[test]
    fn cusum_reproduces_montgomerys_table() {
        let chart = cusum(&MONTGOMERY_9_1, 10.0, 1.0, &CusumOptions::default()).unwrap();
        for (p, &c) in chart.points.iter().zip(&MONTGOMERY_C_PLUS) {
            // Source: Montgomery ISQC Table 9.2, C⁺ column (exact: data and K have 2 decimals).
            assert!((p.upper - c).abs() < 1e-9, "C+{} = {}", p.index + 1, p.upper);
        }
        let first = chart.signals[0];
        // Source: Montgomery ISQC Example 9.1: C⁺ first exceeds H = 5 at period 29.
        assert_eq!((first.index, first.side), (28, Side::Above));
        // From memory: Montgomery ISQC Example 9.1: N⁺ = 7 at period 29, so the shift began
        // after period 22, and μ̂ = 10 + 0.5 + 5.28/7 = 11.25.
        assert_eq!(chart.points[28].upper_run, 7);
        assert_eq!(first.onset_index, 22);
        assert!((first.estimated_mean - 11.25).abs() < 0.005, "{}", first.estimated_mean);
        // One crossing, one signal: C⁺ stays above h at period 30 without a new signal.
        assert_eq!(chart.signals.len(), 1);
    }

    #[test]
    fn cusum_reset_starts_both_sums_again() {
        let o = CusumOptions { reset_after_signal: true, ..CusumOptions::default() };
        let chart = cusum(&MONTGOMERY_9_1, 10.0, 1.0, &o).unwrap();
        // Common practice, no published source: the signalling point keeps its sum (it is
        // what the chart shows), and the next point starts again from zero.
        assert!((chart.points[28].upper - 5.28).abs() < 1e-9);
        assert!((chart.points[29].upper - (10.52 - 10.5)).abs() < 1e-9);
        assert_eq!(chart.points[29].upper_run, 1);
    }

    proptest! {
        // Common practice, no published source: mirroring the data about the target swaps C⁺
        // and C⁻ and the sides of the signals.
        #[test]
        fn cusum_mirror_symmetry(values in prop::collection::vec(-4.0f64..4.0, 1..80), k in 0.0f64..1.5, h in 0.5f64..8.0) {
            let o = CusumOptions { k, h, reset_after_signal: false };
            let a = cusum(&values, 0.0, 1.0, &o).unwrap();
            let mirrored: Vec<f64> = values.iter().map(|x| -x).collect();
            let b = cusum(&mirrored, 0.0, 1.0, &o).unwrap();
            for (p, q) in a.points.iter().zip(&b.points) {
                prop_assert!((p.upper - q.lower).abs() < 1e-12 && (p.lower - q.upper).abs() < 1e-12);
            }
            let flip = |s: Side| if s == Side::Above { Side::Below } else { Side::Above };
            prop_assert_eq!(
                a.signals.iter().map(|s| (s.index, flip(s.side))).collect::<Vec<_>>(),
                b.signals.iter().map(|s| (s.index, s.side)).collect::<Vec<_>>()
            );
        }

        // Common practice, no published source: the sums are in σ units, so an affine change
        // of units leaves them and the signals alone and moves the estimated mean with it.
        #[test]
        fn cusum_affine_invariance(values in prop::collection::vec(-4.0f64..4.0, 1..80),
                                   a in 0.01f64..100.0, c in -1000.0f64..1000.0) {
            let o = CusumOptions::default();
            let base = cusum(&values, 0.0, 1.0, &o).unwrap();
            let moved: Vec<f64> = values.iter().map(|x| a * x + c).collect();
            let m = cusum(&moved, c, a, &o).unwrap();
            for (p, q) in base.points.iter().zip(&m.points) {
                prop_assert!((p.upper - q.upper).abs() < 1e-6 * (1.0 + p.upper));
                prop_assert!((p.lower - q.lower).abs() < 1e-6 * (1.0 + p.lower));
            }
            prop_assert_eq!(base.signals.len(), m.signals.len());
            for (s, t) in base.signals.iter().zip(&m.signals) {
                prop_assert_eq!((s.index, s.side, s.onset_index), (t.index, t.side, t.onset_index));
                prop_assert!((t.estimated_mean - (a * s.estimated_mean + c)).abs() < 1e-6 * (a + c.abs()));
            }
        }

        // Common practice, no published source: lot means of n values with within-lot σ chart
        // exactly like individuals with σ/√n.
        #[test]
        fn cusum_of_means_uses_sigma_of_the_mean(values in prop::collection::vec(-2.0f64..2.0, 1..60), n in 1usize..30) {
            let o = CusumOptions::default();
            let means = cusum_of_means(&values, &vec![n; values.len()], 0.0, 1.0, &o).unwrap();
            let single = cusum(&values, 0.0, 1.0 / (n as f64).sqrt(), &o).unwrap();
            for (p, q) in means.points.iter().zip(&single.points) {
                prop_assert!((p.upper - q.upper).abs() < 1e-9 * (1.0 + p.upper));
            }
        }
    }

    #[test]
    fn cusum_rejects_bad_settings() {
        let v = [1.0, 2.0];
        let bad_h = CusumOptions { h: 0.0, ..CusumOptions::default() };
        assert!(matches!(cusum(&v, 0.0, 1.0, &bad_h), Err(ControlError::Parameter { name: "h", .. })));
        let bad_k = CusumOptions { k: -1.0, ..CusumOptions::default() };
        assert!(matches!(cusum(&v, 0.0, 1.0, &bad_k), Err(ControlError::Parameter { name: "k", .. })));
        assert!(matches!(
            cusum(&v, f64::NAN, 1.0, &CusumOptions::default()),
            Err(ControlError::NotFinite { what: "target", index: None, .. })
        ));
        assert_eq!(CusumOptions::default(), CusumOptions { k: 0.5, h: 5.0, reset_after_signal: false });
    }
}
