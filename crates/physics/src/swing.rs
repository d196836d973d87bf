//! The free-swing (dynamic) rate test: a spring turns a known inertia, is released, and
//! the record of angle against time is analysed.
//!
//! A linear spring with inertia I is a torsional oscillator, ω0 = √(κ/I), whose period does
//! not depend on amplitude. The analysis measures the period and the decay, and from
//! them the torsion constant κ = I·ω0²:
//!
//! 1. equilibrium from the record's middle, then from the swings' extremes;
//! 2. level crossings (with a hysteresis band above the noise, interpolated by a local line)
//!    and the peak between each pair (refined by a local parabola);
//! 3. the period from the crossings, refined by a Levenberg–Marquardt fit of
//!    θ(t) = θe + A·e^(−ζω0 t)·cos(ωd t + φ) over the swinging part of the record;
//! 4. the logarithmic decrement δ from the peaks (least squares on ln|peak|, weighted by
//!    the squared amplitude so that small, noisy peaks count less), ζ = δ/√(4π² + δ²),
//!    ω0 = ωd/√(1 − ζ²), κ = I·ω0²;
//! 5. whether the amplitude falls exponentially (viscous damping) or linearly (dry,
//!    Coulomb friction, which loses a fixed 4·M_f/κ per swing);
//! 6. the period over the record's large-amplitude half against its small-amplitude half:
//!    a linear spring shows none; a spring that stiffens with angle swings faster at large
//!    amplitude (a negative figure), coil friction or a softening mechanism slower.
//!
//! A record that cannot carry these numbers is refused with the reason ([`SwingError`]),
//! never given a number. The result is the spring-and-fixture system's dynamic rate from
//! the record supplied; the customer's drawing and specification govern acceptance.

use std::f64::consts::PI;

use serde::{Deserialize, Serialize};
use thiserror::Error;
use twistlot_model::SwingMetrics;

use crate::fit::{fit_damped_sine, line, linear_part, parabola_vertex, weighted_line};

/// Fewest samples a record may have.
pub const MIN_POINTS: usize = 32;
/// Fewest samples per period: below this the peaks and crossings are too coarse.
pub const MIN_SAMPLES_PER_PERIOD: f64 = 10.0;
/// A flat top at the record's extreme lasting this share of a period is taken as clipping.
const CLIP_SHARE_OF_PERIOD: f64 = 0.04;
/// Share of the swing's variance the damped sinusoid must explain (R²) for its period to count.
const MIN_FIT_R_SQUARED: f64 = 0.5;
/// Growth of the amplitude, over the record, beyond which it is not a free decay.
const MAX_GROWTH: f64 = 0.05;

/// Settings of the analysis.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct SwingOptions {
    /// Fewest complete swings (periods) a record must hold; at least 3.
    pub min_swings: usize,
    /// Amplitude dependence of the period, in percent, above which the result is flagged.
    pub amplitude_limit_pct: f64,
    /// Largest damping ratio ζ accepted; above it the record is refused as too damped.
    pub max_damping_ratio: f64,
    /// Largest drift of the equilibrium over the record, in percent of the first amplitude.
    pub max_equilibrium_drift_pct: f64,
}

impl Default for SwingOptions {
    /// Three swings, a 1 % amplitude-dependence flag, ζ up to 0.15, 5 % equilibrium drift.
    /// These are starting points for a plant to set, not published limits.
    fn default() -> Self {
        SwingOptions {
            min_swings: 3,
            amplitude_limit_pct: 1.0,
            max_damping_ratio: 0.15,
            max_equilibrium_drift_pct: 5.0,
        }
    }
}

/// How the swing amplitude falls over the record (typed in the model, where test records carry it).
pub use twistlot_model::record::DecayShape;

/// One peak of the swing.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct SwingPeak {
    /// Time of the peak from the record's start, s.
    pub time_s: f64,
    /// Angle at the peak, degrees.
    pub angle_deg: f64,
    /// Distance from the equilibrium, degrees.
    pub amplitude_deg: f64,
}

/// What the analysis of one free-decay record found (serialised for `swing --format json`).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SwingAnalysis {
    /// Damped period from the damped-sinusoid fit, s.
    pub period_s: f64,
    /// Observed swing frequency 1/period, Hz.
    pub frequency_hz: f64,
    /// Undamped natural frequency ω0/2π, Hz.
    pub natural_frequency_hz: f64,
    /// Undamped period 2π/ω0, s (the one the two-inertia method uses).
    pub undamped_period_s: f64,
    /// Period from the level crossings alone, s.
    pub crossing_period_s: f64,
    /// Logarithmic decrement δ per period, from the peaks.
    pub log_decrement: f64,
    /// Damping ratio ζ = δ/√(4π² + δ²).
    pub damping_ratio: f64,
    /// Damping ratio from the fitted envelope, for comparison.
    pub damping_ratio_fit: f64,
    /// Inertia the spring swung, kg·m², when given.
    pub inertia_kgm2: Option<f64>,
    /// Torsion constant κ = I·ω0², N·mm/rad, when the inertia is given.
    pub kappa_nmm_per_rad: Option<f64>,
    /// Dynamic rate κ·π/180, N·mm/°, when the inertia is given.
    pub rate_nmm_per_deg: Option<f64>,
    /// Period of the large-amplitude half against the small-amplitude half, percent
    /// (positive when the large-amplitude period is longer).
    pub amplitude_dependence_pct: f64,
    /// Whether the amplitude dependence exceeds the limit in the options.
    pub amplitude_dependence_flagged: bool,
    /// The limit it was judged against, percent.
    pub amplitude_limit_pct: f64,
    /// Period over the large-amplitude half, s.
    pub period_large_s: f64,
    /// Period over the small-amplitude half, s.
    pub period_small_s: f64,
    /// Root-mean-square peak amplitude of the large-amplitude half, degrees.
    pub amplitude_large_deg: f64,
    /// Root-mean-square peak amplitude of the small-amplitude half, degrees.
    pub amplitude_small_deg: f64,
    /// How the amplitude falls.
    pub decay: DecayShape,
    /// Amplitude lost per swing when it falls linearly, degrees.
    pub amplitude_drop_per_swing_deg: Option<f64>,
    /// Dry-friction torque M_f = κ·(drop per swing)/4 when the decay is linear and the inertia
    /// given, N·mm.
    pub friction_torque_nmm: Option<f64>,
    /// Complete swings (periods) analysed.
    pub swings: usize,
    /// Equilibrium angle from the fit, degrees.
    pub equilibrium_deg: f64,
    /// Amplitude of the first analysed peak, degrees.
    pub initial_amplitude_deg: f64,
    /// Amplitude of the last analysed peak, degrees.
    pub final_amplitude_deg: f64,
    /// Sample-to-sample noise of the angle, standard deviation, degrees.
    pub noise_deg: f64,
    /// Root-mean-square residual of the damped-sinusoid fit, degrees.
    pub fit_rms_deg: f64,
    /// Share of the swing's variance the fit explains (R²).
    pub fit_r_squared: f64,
    /// Samples per period.
    pub samples_per_period: f64,
    /// The peaks analysed.
    pub peaks: Vec<SwingPeak>,
    /// What a reader should know about the numbers.
    pub notes: Vec<String>,
}

impl SwingAnalysis {
    /// The figures a test record carries; `inertia_from` says where the inertia came from.
    pub fn metrics(&self, inertia_from: Option<&str>) -> SwingMetrics {
        SwingMetrics {
            inertia_kgm2: self.inertia_kgm2,
            inertia_from: self.inertia_kgm2.and(inertia_from).map(str::to_string),
            period_s: self.period_s,
            frequency_hz: self.frequency_hz,
            natural_frequency_hz: self.natural_frequency_hz,
            log_decrement: self.log_decrement,
            damping_ratio: self.damping_ratio,
            kappa_nmm_per_rad: self.kappa_nmm_per_rad,
            rate_nmm_per_deg: self.rate_nmm_per_deg,
            amplitude_dependence_pct: self.amplitude_dependence_pct,
            amplitude_dependence_flagged: self.amplitude_dependence_flagged,
            decay: self.decay,
            friction_torque_nmm: self.friction_torque_nmm,
            swings: self.swings,
            initial_amplitude_deg: self.initial_amplitude_deg,
            equilibrium_deg: self.equilibrium_deg,
            notes: self.notes.clone(),
        }
    }
}

/// The two-inertia result: κ without knowing the fixture's own inertia.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct TwoInertia {
    /// Torsion constant κ = 4π²·(I2 − I1)/(T2² − T1²), N·mm/rad.
    pub kappa_nmm_per_rad: f64,
    /// Dynamic rate κ·π/180, N·mm/°.
    pub rate_nmm_per_deg: f64,
    /// The fixture's own inertia implied, κ·T1²/(4π²) − I1, kg·m².
    pub fixture_inertia_kgm2: f64,
    /// The added inertias of the two records, kg·m².
    pub added_inertia_kgm2: [f64; 2],
    /// The two records' undamped periods, s.
    pub undamped_period_s: [f64; 2],
    /// What a reader should know about the numbers.
    pub notes: Vec<String>,
}

/// Why a record (or a pair of them) gives no dynamic rate.
#[derive(Debug, Clone, PartialEq, Error)]
pub enum SwingError {
    /// An option is out of its range.
    #[error("swing option `{field}` is {value}; {need}")]
    BadOption {
        /// The option's name.
        field: &'static str,
        /// The value given.
        value: f64,
        /// What it must be.
        need: &'static str,
    },
    /// An inertia is not a usable number.
    #[error("`{field}` must be a finite inertia in kg·m², {need}; found {value}")]
    BadInertia {
        /// Which inertia.
        field: &'static str,
        /// The value given.
        value: f64,
        /// What it must be.
        need: &'static str,
    },
    /// Time and angle columns differ in length.
    #[error("the record has {time_points} times but {angle_points} angles; each sample needs both")]
    LengthMismatch {
        /// Number of times.
        time_points: usize,
        /// Number of angles.
        angle_points: usize,
    },
    /// Too few samples to analyse.
    #[error("the record is too short: {points} samples, at least {needed} needed")]
    TooFewPoints {
        /// Samples in the record.
        points: usize,
        /// Samples needed.
        needed: usize,
    },
    /// A value is not a finite number.
    #[error("sample {index}: `{column}` is {value}, not a finite number")]
    NotFinite {
        /// `time_s` or `angle_deg`.
        column: &'static str,
        /// Zero-based sample index.
        index: usize,
        /// The value found.
        value: f64,
    },
    /// Time does not increase from one sample to the next.
    #[error(
        "sample {index}: time {time_s} s does not follow {previous_s} s; the record must be in \
         increasing time order without repeats"
    )]
    TimeNotIncreasing {
        /// Zero-based sample index.
        index: usize,
        /// Time of the sample before, s.
        previous_s: f64,
        /// Time of this sample, s.
        time_s: f64,
    },
    /// The angle hardly moves.
    #[error(
        "the angle moves by no more than {amplitude_deg:.4}° about its middle, within ten times \
         its noise of {noise_deg:.4}°: there is no swing to analyse"
    )]
    NoSwing {
        /// Largest distance from the middle, degrees.
        amplitude_deg: f64,
        /// Noise (standard deviation), degrees.
        noise_deg: f64,
    },
    /// No steady level for the swing to cross, or one that wanders.
    #[error("no clear equilibrium: {detail}")]
    NoEquilibrium {
        /// What was seen.
        detail: String,
    },
    /// Flat tops at the record's extreme: the sensor or the export clipped the angle.
    #[error(
        "the angle is clipped at the {side}: it stays at {level_deg}° for {duration_s:.4} s \
         ({share_pct:.1} % of a period); widen the sensor's range or lower the release angle"
    )]
    Clipped {
        /// `top` or `bottom`.
        side: &'static str,
        /// The level it stays at, degrees.
        level_deg: f64,
        /// How long, s.
        duration_s: f64,
        /// How long as a share of a period, percent.
        share_pct: f64,
    },
    /// Sampled too slowly for the swing.
    #[error(
        "only {samples_per_period:.1} samples per period (at least {needed} needed): record at a \
         higher sample rate"
    )]
    Undersampled {
        /// Samples per period found.
        samples_per_period: f64,
        /// Samples per period needed.
        needed: f64,
    },
    /// The record ends while the spring still swings.
    #[error(
        "the record is too short: it holds {swings} complete swing(s), at least {needed} needed, \
         and ends while the spring still swings; record for longer"
    )]
    RecordTooShort {
        /// Complete swings found.
        swings: usize,
        /// Swings needed.
        needed: usize,
    },
    /// The swing dies out too soon.
    #[error(
        "the swing is too damped: it dies out after {swings} complete swing(s), at least {needed} \
         needed; reduce friction in the fixture or release from a larger angle"
    )]
    TooDamped {
        /// Complete swings found.
        swings: usize,
        /// Swings needed.
        needed: usize,
    },
    /// The damping ratio is above the accepted limit.
    #[error(
        "the swing is too damped: damping ratio {damping_ratio:.4} exceeds the limit {limit}; the \
         period no longer measures the spring alone"
    )]
    DampingTooHigh {
        /// Damping ratio found.
        damping_ratio: f64,
        /// The limit.
        limit: f64,
    },
    /// The amplitude grows: something drives the swing.
    #[error(
        "the amplitude grows by {growth_pct:.1} % over the record: this is not a free decay \
         (something drives the swing)"
    )]
    Growing {
        /// Growth over the record, percent.
        growth_pct: f64,
    },
    /// The damped-sinusoid fit did not settle on the swing.
    #[error("the damped-sinusoid fit failed: {detail}")]
    FitFailed {
        /// What went wrong.
        detail: String,
    },
    /// Two-inertia mode: the pair does not fit together.
    #[error(
        "the two records do not fit the two-inertia method: added inertias {inertia_kgm2:?} kg·m² \
         gave undamped periods {period_s:?} s; the larger inertia must swing with the longer period"
    )]
    InconsistentPair {
        /// The two added inertias, kg·m².
        inertia_kgm2: [f64; 2],
        /// The two undamped periods, s.
        period_s: [f64; 2],
    },
}

impl SwingOptions {
    /// Checks the options.
    pub fn validate(&self) -> Result<(), SwingError> {
        if self.min_swings < 3 {
            return Err(SwingError::BadOption {
                field: "min_swings",
                value: self.min_swings as f64,
                need: "at least 3 swings are needed for a period and a decrement",
            });
        }
        let checks: [(&'static str, f64, &'static str, bool); 3] = [
            (
                "amplitude_limit_pct",
                self.amplitude_limit_pct,
                "it must be a finite percentage above zero",
                self.amplitude_limit_pct > 0.0,
            ),
            (
                "max_damping_ratio",
                self.max_damping_ratio,
                "it must lie above 0 and at most 0.5",
                self.max_damping_ratio > 0.0 && self.max_damping_ratio <= 0.5,
            ),
            (
                "max_equilibrium_drift_pct",
                self.max_equilibrium_drift_pct,
                "it must be a finite percentage above zero",
                self.max_equilibrium_drift_pct > 0.0,
            ),
        ];
        for (field, value, need, ok) in checks {
            if !(value.is_finite() && ok) {
                return Err(SwingError::BadOption { field, value, need });
            }
        }
        Ok(())
    }
}

/// Undamped natural period 2π·√(I/κ), s, for κ in N·mm/rad and I in kg·m².
pub fn natural_period_s(kappa_nmm_per_rad: f64, inertia_kgm2: f64) -> f64 {
    2.0 * PI * (inertia_kgm2 / (kappa_nmm_per_rad / 1000.0)).sqrt()
}

/// Torsion constant κ = I·(2π/T)², N·mm/rad, from an undamped period and an inertia.
pub fn kappa_from_period_nmm_per_rad(undamped_period_s: f64, inertia_kgm2: f64) -> f64 {
    1000.0 * inertia_kgm2 * (2.0 * PI / undamped_period_s).powi(2)
}

/// Converts a torsion constant in N·mm/rad to a rate in N·mm/°.
pub fn rate_from_kappa_nmm_per_deg(kappa_nmm_per_rad: f64) -> f64 {
    kappa_nmm_per_rad * PI / 180.0
}

/// Damping ratio from the logarithmic decrement, ζ = δ/√(4π² + δ²).
pub fn damping_ratio_from_decrement(log_decrement: f64) -> f64 {
    log_decrement / (4.0 * PI * PI + log_decrement * log_decrement).sqrt()
}

/// A level crossing.
#[derive(Debug, Clone, Copy)]
struct Crossing {
    time_s: f64,
    /// Sample index just after the crossing.
    index: usize,
    upward: bool,
}

/// Analyses one free-decay record (times in s, angles in degrees, no torque).
///
/// `inertia_kgm2` is the whole swinging inertia (fixture and added mass, about the spring's
/// axis); without it the period and damping are still measured but no κ or rate is given
/// (as in the two-inertia method, see [`two_inertia`]).
pub fn analyze_swing(
    time_s: &[f64],
    angle_deg: &[f64],
    inertia_kgm2: Option<f64>,
    options: &SwingOptions,
) -> Result<SwingAnalysis, SwingError> {
    options.validate()?;
    if let Some(value) = inertia_kgm2 {
        if !(value.is_finite() && value > 0.0) {
            return Err(SwingError::BadInertia { field: "inertia_kgm2", value, need: "above zero" });
        }
    }
    check_record(time_s, angle_deg)?;
    let t0 = time_s[0];
    let t: Vec<f64> = time_s.iter().map(|v| v - t0).collect();
    let y = angle_deg;

    let noise = noise_sd(y);
    let middle = median(y.to_vec());
    let amp0 = y.iter().fold(0.0_f64, |m, v| m.max((v - middle).abs()));
    // A swing must stand well clear of the noise; the band then keeps noise from counting
    // as crossings, without hiding swings smaller than a two-hundredth of the largest.
    if amp0 <= 10.0 * noise || amp0 == 0.0 {
        return Err(SwingError::NoSwing { amplitude_deg: amp0, noise_deg: noise });
    }
    let band = (5.0 * noise).clamp(0.005 * amp0, 0.05 * amp0);

    // Pass 1 with the middle of the record; pass 2 with a level from the swings' extremes.
    let mut level = middle;
    let mut crossings = find_crossings(&t, y, level, band);
    let rough = raw_extremes(y, &crossings);
    if rough.len() >= 3 {
        level = median(three_peak_levels(&rough));
        crossings = find_crossings(&t, y, level, band);
    }
    if crossings.len() < 2 {
        return Err(fewer_than_two_crossings(y, band, options.min_swings));
    }
    let half = crossing_half_period(&crossings)
        .ok_or_else(|| SwingError::FitFailed { detail: "the crossing times do not give a period".into() })?;
    let crossing_period = 2.0 * half;
    let samples_per_period = crossing_period * (t.len() - 1) as f64 / t[t.len() - 1];
    if samples_per_period < MIN_SAMPLES_PER_PERIOD {
        return Err(SwingError::Undersampled { samples_per_period, needed: MIN_SAMPLES_PER_PERIOD });
    }
    check_clipping(&t, y, crossings[0].index, crossing_period)?;

    let swings = (crossings.len() - 1) / 2;
    if swings < options.min_swings {
        // Still swinging when the last half period spans more than the band's width twice over.
        let tail_start = t[t.len() - 1] - half;
        let tail: Vec<f64> = t.iter().zip(y).filter(|(t, _)| **t >= tail_start).map(|(_, y)| *y).collect();
        let still_swinging = spread(&tail) > 4.0 * band;
        return Err(if still_swinging {
            SwingError::RecordTooShort { swings, needed: options.min_swings }
        } else {
            SwingError::TooDamped { swings, needed: options.min_swings }
        });
    }

    let peaks = refine_peaks(&t, y, &crossings, crossing_period);
    check_drift(&peaks, level, options)?;

    // Starting values: crossings for the frequency, the peaks' decay for σ, then the
    // linear part (level, a, b) solved exactly; the fit runs over the swinging part.
    let first = crossings[0].index.saturating_sub(1);
    let last = crossings[crossings.len() - 1].index.min(t.len() - 1);
    let ft: Vec<f64> = t[first..=last].iter().map(|v| v - t[first]).collect();
    let fy = &y[first..=last];
    let omega_start = 2.0 * PI / crossing_period;
    let sigma_start = envelope_slope(&peaks, level).map(|(_, s)| (-s).max(0.0)).unwrap_or(0.0);
    let [l0, a0, b0] = linear_part(&ft, fy, sigma_start, omega_start)
        .ok_or_else(|| SwingError::FitFailed { detail: "no starting amplitude could be solved".into() })?;
    let fit = fit_damped_sine(&ft, fy, [l0, a0, b0, sigma_start, omega_start])
        .ok_or_else(|| SwingError::FitFailed { detail: "the least-squares iteration diverged".into() })?;
    let [equilibrium, _, _, sigma_fit, omega_fit] = fit.params;
    if omega_fit <= 0.0 || (omega_fit / omega_start - 1.0).abs() > 0.1 {
        return Err(SwingError::FitFailed {
            detail: format!(
                "the fitted period {:.6} s strays more than 10 % from the crossings' {:.6} s",
                2.0 * PI / omega_fit.abs(),
                crossing_period
            ),
        });
    }
    let mean = fy.iter().sum::<f64>() / fy.len() as f64;
    let variance = fy.iter().map(|v| (v - mean).powi(2)).sum::<f64>() / fy.len() as f64;
    let fit_r_squared = 1.0 - fit.rms * fit.rms / variance;
    if fit_r_squared.is_nan() || fit_r_squared < MIN_FIT_R_SQUARED {
        return Err(SwingError::FitFailed {
            detail: format!(
                "a damped sinusoid explains only {:.0} % of the swing's variance: this is not the free \
                 decay of a spring of steady rate (several modes, a strongly non-linear spring, or a \
                 disturbed record)",
                100.0 * fit_r_squared.max(0.0)
            ),
        });
    }
    let period_s = 2.0 * PI / omega_fit;

    // Crossings and peaks again about the fitted equilibrium, for the decrement and halves.
    let refit_crossings = find_crossings(&t, y, equilibrium, band);
    if refit_crossings.len() > 2 * options.min_swings {
        crossings = refit_crossings;
    }
    let peaks: Vec<SwingPeak> = refine_peaks(&t, y, &crossings, period_s)
        .into_iter()
        .map(|(time_s, angle_deg)| SwingPeak {
            time_s,
            angle_deg,
            amplitude_deg: (angle_deg - equilibrium).abs(),
        })
        .collect();
    let swings = (crossings.len() - 1) / 2;

    let mut notes = Vec::new();
    let times: Vec<f64> = peaks.iter().map(|p| p.time_s).collect();
    let amps: Vec<f64> = peaks.iter().map(|p| p.amplitude_deg).collect();
    let (log_intercept, log_slope) = log_envelope(&times, &amps)
        .ok_or_else(|| SwingError::FitFailed { detail: "the peaks do not give a decay".into() })?;
    let span = times[times.len() - 1] - times[0];
    let growth = (log_slope * span).exp() - 1.0;
    if growth > MAX_GROWTH {
        return Err(SwingError::Growing { growth_pct: 100.0 * growth });
    }
    let log_decrement = -log_slope * period_s;
    let damping_ratio = damping_ratio_from_decrement(log_decrement);
    if damping_ratio > options.max_damping_ratio {
        return Err(SwingError::DampingTooHigh { damping_ratio, limit: options.max_damping_ratio });
    }
    if log_decrement < 0.0 {
        notes.push(format!(
            "the amplitude does not decay measurably (decrement {log_decrement:.2e}); damping is below \
             what this record resolves"
        ));
    }

    let decay = decay_shape(&times, &amps, log_intercept, log_slope);
    // Dry friction leaves each half swing a pure sinusoid at ω0, so its period needs no
    // damping correction; viscous damping lowers the frequency to ωd = ω0·√(1 − ζ²).
    let omega0 = match decay {
        DecayShape::Linear => omega_fit,
        _ => omega_fit / (1.0 - damping_ratio * damping_ratio).max(f64::MIN_POSITIVE).sqrt(),
    };
    let kappa = inertia_kgm2.map(|i| 1000.0 * i * omega0 * omega0);
    let mut drop_per_swing = None;
    let mut friction_torque_nmm = None;
    if decay == DecayShape::Linear {
        if let Some((_, slope)) = line(&times, &amps) {
            let drop_deg = -slope * period_s;
            drop_per_swing = Some(drop_deg);
            friction_torque_nmm = kappa.map(|k| k * drop_deg.to_radians() / 4.0);
            notes.push(format!(
                "the amplitude falls linearly, by {drop_deg:.4}° per swing, not exponentially: dry \
                 (Coulomb) friction dominates; the log decrement and damping ratio stand for an \
                 equivalent viscous damping only"
            ));
        }
    }

    let halves = amplitude_halves(&crossings, &peaks)?;
    let amplitude_dependence_pct = 100.0 * (halves.period_large_s / halves.period_small_s - 1.0);
    if halves.amplitude_small_deg > 0.8 * halves.amplitude_large_deg {
        notes.push(format!(
            "the two halves of the record swing at similar amplitudes ({:.3}° and {:.3}°), so the \
             amplitude dependence says little about non-linearity",
            halves.amplitude_large_deg, halves.amplitude_small_deg
        ));
    }
    let first_amp = amps[0];
    if fit.rms > 0.05 * first_amp {
        notes.push(format!(
            "the damped-sinusoid fit leaves {:.1} % of the first amplitude unexplained: the spring is \
             markedly non-linear or the record is disturbed; compare the crossing period {:.6} s",
            100.0 * fit.rms / first_amp,
            crossing_period
        ));
    }
    Ok(SwingAnalysis {
        period_s,
        frequency_hz: 1.0 / period_s,
        natural_frequency_hz: omega0 / (2.0 * PI),
        undamped_period_s: 2.0 * PI / omega0,
        crossing_period_s: crossing_period,
        log_decrement,
        damping_ratio,
        damping_ratio_fit: sigma_fit / omega0,
        inertia_kgm2,
        kappa_nmm_per_rad: kappa,
        rate_nmm_per_deg: kappa.map(rate_from_kappa_nmm_per_deg),
        amplitude_dependence_pct,
        amplitude_dependence_flagged: amplitude_dependence_pct.abs() > options.amplitude_limit_pct,
        amplitude_limit_pct: options.amplitude_limit_pct,
        period_large_s: halves.period_large_s,
        period_small_s: halves.period_small_s,
        amplitude_large_deg: halves.amplitude_large_deg,
        amplitude_small_deg: halves.amplitude_small_deg,
        decay,
        amplitude_drop_per_swing_deg: drop_per_swing,
        friction_torque_nmm,
        swings,
        equilibrium_deg: equilibrium,
        initial_amplitude_deg: first_amp,
        final_amplitude_deg: amps[amps.len() - 1],
        noise_deg: noise,
        fit_rms_deg: fit.rms,
        fit_r_squared,
        samples_per_period: period_s * (t.len() - 1) as f64 / t[t.len() - 1],
        peaks,
        notes,
    })
}

/// The two-inertia method: κ = 4π²·(I2 − I1)/(T2² − T1²) from two records of the same spring
/// swinging the fixture plus two different added inertias, when the fixture's own inertia
/// is unknown. Uses each record's undamped period.
pub fn two_inertia(
    first: &SwingAnalysis,
    added_inertia1_kgm2: f64,
    second: &SwingAnalysis,
    added_inertia2_kgm2: f64,
) -> Result<TwoInertia, SwingError> {
    for (field, value) in [("inertia1_kgm2", added_inertia1_kgm2), ("inertia2_kgm2", added_inertia2_kgm2)] {
        if !(value.is_finite() && value >= 0.0) {
            return Err(SwingError::BadInertia { field, value, need: "zero or more" });
        }
    }
    if added_inertia1_kgm2 == added_inertia2_kgm2 {
        return Err(SwingError::BadInertia {
            field: "inertia2_kgm2",
            value: added_inertia2_kgm2,
            need: "different from the first record's added inertia",
        });
    }
    let (t1, t2) = (first.undamped_period_s, second.undamped_period_s);
    let d_inertia = added_inertia2_kgm2 - added_inertia1_kgm2;
    let d_period2 = t2 * t2 - t1 * t1;
    let agreement = d_inertia * d_period2;
    if agreement.is_nan() || agreement <= 0.0 {
        return Err(SwingError::InconsistentPair {
            inertia_kgm2: [added_inertia1_kgm2, added_inertia2_kgm2],
            period_s: [t1, t2],
        });
    }
    let kappa_nm = 4.0 * PI * PI * d_inertia / d_period2;
    let fixture = kappa_nm * t1 * t1 / (4.0 * PI * PI) - added_inertia1_kgm2;
    let mut notes = Vec::new();
    if fixture < 0.0 {
        notes.push(format!(
            "the implied fixture inertia is negative ({fixture:.3e} kg·m²): the added inertias or the \
             periods are off; check both set-ups"
        ));
    }
    let kappa_nmm_per_rad = 1000.0 * kappa_nm;
    Ok(TwoInertia {
        kappa_nmm_per_rad,
        rate_nmm_per_deg: rate_from_kappa_nmm_per_deg(kappa_nmm_per_rad),
        fixture_inertia_kgm2: fixture,
        added_inertia_kgm2: [added_inertia1_kgm2, added_inertia2_kgm2],
        undamped_period_s: [t1, t2],
        notes,
    })
}

fn check_record(time_s: &[f64], angle_deg: &[f64]) -> Result<(), SwingError> {
    if time_s.len() != angle_deg.len() {
        return Err(SwingError::LengthMismatch { time_points: time_s.len(), angle_points: angle_deg.len() });
    }
    if time_s.len() < MIN_POINTS {
        return Err(SwingError::TooFewPoints { points: time_s.len(), needed: MIN_POINTS });
    }
    for (column, values) in [("time_s", time_s), ("angle_deg", angle_deg)] {
        if let Some((index, &value)) = values.iter().enumerate().find(|(_, v)| !v.is_finite()) {
            return Err(SwingError::NotFinite { column, index, value });
        }
    }
    if let Some(index) = (1..time_s.len()).find(|&i| time_s[i] <= time_s[i - 1]) {
        return Err(SwingError::TimeNotIncreasing {
            index,
            previous_s: time_s[index - 1],
            time_s: time_s[index],
        });
    }
    Ok(())
}

fn median(mut values: Vec<f64>) -> f64 {
    values.sort_by(f64::total_cmp);
    let n = values.len();
    if n == 0 {
        return f64::NAN;
    }
    if n % 2 == 1 {
        values[n / 2]
    } else {
        0.5 * (values[n / 2 - 1] + values[n / 2])
    }
}

/// Sample noise from fourth differences: for white noise of σ their spread is σ·√70, while
/// a swing sampled even ten times a period leaks less than 2 % of its amplitude into them
/// (second differences would let through 16 % and mistake a coarse swing for noise). The
/// median absolute deviation keeps rare spikes from inflating the figure.
fn noise_sd(y: &[f64]) -> f64 {
    let d4: Vec<f64> = y.windows(5).map(|w| w[4] - 4.0 * w[3] + 6.0 * w[2] - 4.0 * w[1] + w[0]).collect();
    let centre = median(d4.clone());
    let mad = median(d4.iter().map(|v| (v - centre).abs()).collect());
    1.4826 * mad / 70.0_f64.sqrt()
}

/// Crossings of `level`, counted only when the angle passes from one side of the band
/// `level ± band` to the other, so noise near the level never counts twice. Each crossing's
/// time comes from a straight line through the samples inside the band. The list stops
/// where the intervals turn irregular (the swing has sunk into the noise).
fn find_crossings(t: &[f64], y: &[f64], level: f64, band: f64) -> Vec<Crossing> {
    let mut out: Vec<Crossing> = Vec::new();
    let mut side: Option<bool> = None; // true = above the band
    let mut left_at = 0; // last sample outside the band on the current side
    for (i, &v) in y.iter().enumerate() {
        let now = if v > level + band {
            Some(true)
        } else if v < level - band {
            Some(false)
        } else {
            None
        };
        match (side, now) {
            (Some(s), Some(n)) if s != n => {
                let (ts, ys) = (&t[left_at..=i], &y[left_at..=i]);
                let time = match line(ts, ys) {
                    Some((intercept, slope)) if slope != 0.0 => (level - intercept) / slope,
                    _ => 0.5 * (t[left_at] + t[i]),
                };
                let time = time.clamp(t[left_at], t[i]);
                out.push(Crossing { time_s: time, index: i, upward: n });
                side = Some(n);
                left_at = i;
            }
            (_, Some(n)) => {
                side = Some(n);
                left_at = i;
            }
            _ => {}
        }
    }
    regular_run(out)
}

/// Keeps the crossings up to the first interval that strays from the typical half period.
fn regular_run(crossings: Vec<Crossing>) -> Vec<Crossing> {
    if crossings.len() < 3 {
        return crossings;
    }
    let intervals: Vec<f64> = crossings.windows(2).map(|w| w[1].time_s - w[0].time_s).collect();
    let typical = median(intervals.clone());
    let keep = intervals
        .iter()
        .position(|&d| !(0.6 * typical..=1.4 * typical).contains(&d))
        .unwrap_or(intervals.len());
    crossings.into_iter().take(keep + 1).collect()
}

/// Half period from the crossings: least-squares slope of crossing time against its number.
fn crossing_half_period(crossings: &[Crossing]) -> Option<f64> {
    let k: Vec<f64> = (0..crossings.len()).map(|i| i as f64).collect();
    let times: Vec<f64> = crossings.iter().map(|c| c.time_s).collect();
    let (_, slope) = line(&k, &times)?;
    (slope > 0.0).then_some(slope)
}

/// The most extreme sample between each pair of crossings.
fn raw_extremes(y: &[f64], crossings: &[Crossing]) -> Vec<f64> {
    crossings
        .windows(2)
        .filter_map(|w| {
            let part = &y[w[0].index..w[1].index];
            if w[0].upward {
                part.iter().copied().reduce(f64::max)
            } else {
                part.iter().copied().reduce(f64::min)
            }
        })
        .collect()
}

/// Equilibrium estimates from three successive extremes e1, e2, e3 (alternating sides):
/// (e1·e3 − e2²)/(e1 + e3 − 2·e2), exact for an exponential decay however heavy, and off by
/// only Δ²/(A − 2Δ) for a dry-friction decay losing 2Δ per half swing. The denominator is
/// about four amplitudes, so it never comes near zero.
fn three_peak_levels(extremes: &[f64]) -> Vec<f64> {
    extremes
        .windows(3)
        .filter_map(|w| {
            let denominator = w[0] + w[2] - 2.0 * w[1];
            (denominator != 0.0).then(|| (w[0] * w[2] - w[1] * w[1]) / denominator)
        })
        .filter(|v| v.is_finite())
        .collect()
}

fn spread(values: &[f64]) -> f64 {
    values.iter().copied().fold(f64::NEG_INFINITY, f64::max)
        - values.iter().copied().fold(f64::INFINITY, f64::min)
}

fn fewer_than_two_crossings(y: &[f64], band: f64, needed: usize) -> SwingError {
    let tail = &y[y.len() - (y.len() / 10).max(3)..];
    if spread(tail) <= 2.0 * band {
        SwingError::TooDamped { swings: 0, needed }
    } else {
        SwingError::NoEquilibrium {
            detail: "the angle crosses a steady level fewer than twice: it drifts instead of swinging, \
                     or the record is shorter than one swing"
                .into(),
        }
    }
}

/// Refuses flat tops at the extremes of the swinging part of the record (a saturated
/// sensor or a clipped export holds the same value for many samples; a free swing passes
/// its peak in a moment).
fn check_clipping(t: &[f64], y: &[f64], from: usize, period: f64) -> Result<(), SwingError> {
    let part = &y[from..];
    let top = part.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    let bottom = part.iter().copied().fold(f64::INFINITY, f64::min);
    let tol = 1e-9 * (top - bottom);
    for (side, level) in [("top", top), ("bottom", bottom)] {
        let mut best = (0, 0.0);
        let mut start = None;
        for (k, &v) in part.iter().enumerate() {
            if (v - level).abs() <= tol {
                let s = *start.get_or_insert(k);
                let len = k - s + 1;
                if len > best.0 {
                    best = (len, t[from + k] - t[from + s]);
                }
            } else {
                start = None;
            }
        }
        let (count, duration_s) = best;
        if count >= 3 && duration_s >= CLIP_SHARE_OF_PERIOD * period {
            return Err(SwingError::Clipped {
                side,
                level_deg: level,
                duration_s,
                share_pct: 100.0 * duration_s / period,
            });
        }
    }
    Ok(())
}

/// Each half swing's peak: the extreme sample, refined by a least-squares parabola through
/// the samples within a twelfth of a period of it (a parabola follows a cosine's top to
/// 0.3 % there, and the same share at every peak cancels in the decrement).
fn refine_peaks(t: &[f64], y: &[f64], crossings: &[Crossing], period: f64) -> Vec<(f64, f64)> {
    let reach = period / 12.0;
    crossings
        .windows(2)
        .filter_map(|w| {
            let (lo, hi) = (w[0].index, w[1].index);
            if hi <= lo {
                return None;
            }
            let sign = if w[0].upward { 1.0 } else { -1.0 };
            let k = (lo..hi).max_by(|&a, &b| (sign * y[a]).total_cmp(&(sign * y[b])))?;
            let mut from = k;
            while from > lo && t[k] - t[from - 1] <= reach {
                from -= 1;
            }
            let mut to = k;
            while to + 1 < hi && t[to + 1] - t[k] <= reach {
                to += 1;
            }
            if to - from < 2 {
                from = k.saturating_sub(1).max(lo);
                to = (k + 1).min(hi - 1);
            }
            // A vertex outside the samples, or a parabola opening the wrong way, is noise: keep
            // the extreme sample then.
            let refined = parabola_vertex(&t[from..=to], &y[from..=to], t[k])
                .filter(|&(tv, _, curvature)| sign * curvature < 0.0 && (t[from]..=t[to]).contains(&tv));
            Some(refined.map_or((t[k], y[k]), |(tv, yv, _)| (tv, yv)))
        })
        .collect()
}

/// Refuses a record whose equilibrium wanders: the three-peak level estimates of the first
/// and second half of the record must agree to the set share of the first amplitude.
fn check_drift(peaks: &[(f64, f64)], level: f64, options: &SwingOptions) -> Result<(), SwingError> {
    let values: Vec<f64> = peaks.iter().map(|p| p.1).collect();
    let levels = three_peak_levels(&values);
    if levels.len() < 4 {
        return Ok(());
    }
    let first_amp = (values[0] - level).abs();
    let mid = levels.len() / 2;
    let early = median(levels[..mid].to_vec());
    let late = median(levels[mid..].to_vec());
    let drift_pct = 100.0 * (late - early).abs() / first_amp;
    if drift_pct > options.max_equilibrium_drift_pct {
        return Err(SwingError::NoEquilibrium {
            detail: format!(
                "the swing's centre moves from {early:.4}° to {late:.4}° over the record ({drift_pct:.1} % \
                 of the first amplitude, limit {} %); the fixture or the spring's free position is moving",
                options.max_equilibrium_drift_pct
            ),
        });
    }
    Ok(())
}

/// Weighted line through ln|amplitude| against time, weights amplitude² (the variance of
/// ln x from a fixed noise on x is σ²/x²).
fn log_envelope(times: &[f64], amps: &[f64]) -> Option<(f64, f64)> {
    let keep: Vec<usize> = (0..amps.len()).filter(|&i| amps[i] > 0.0).collect();
    if keep.len() < 3 {
        return None;
    }
    let x: Vec<f64> = keep.iter().map(|&i| times[i]).collect();
    let ln: Vec<f64> = keep.iter().map(|&i| amps[i].ln()).collect();
    let w: Vec<f64> = keep.iter().map(|&i| amps[i] * amps[i]).collect();
    weighted_line(&x, &ln, &w)
}

fn envelope_slope(peaks: &[(f64, f64)], level: f64) -> Option<(f64, f64)> {
    let times: Vec<f64> = peaks.iter().map(|p| p.0).collect();
    let amps: Vec<f64> = peaks.iter().map(|p| (p.1 - level).abs()).collect();
    log_envelope(&times, &amps)
}

/// Exponential against linear amplitude decay, judged by the squared misfit of each in
/// amplitude; a clear call needs a quarter of the decay at least and a fourfold better fit.
fn decay_shape(times: &[f64], amps: &[f64], log_intercept: f64, log_slope: f64) -> DecayShape {
    let Some((lin_intercept, lin_slope)) = line(times, amps) else {
        return DecayShape::Undetermined;
    };
    let (t_first, t_last) = (times[0], times[times.len() - 1]);
    let decay_fraction = 1.0 - (log_slope * (t_last - t_first)).exp();
    if decay_fraction < 0.25 {
        return DecayShape::Undetermined;
    }
    let ssr_exp: f64 =
        times.iter().zip(amps).map(|(t, a)| (a - (log_intercept + log_slope * t).exp()).powi(2)).sum();
    let ssr_lin: f64 =
        times.iter().zip(amps).map(|(t, a)| (a - (lin_intercept + lin_slope * t)).powi(2)).sum();
    if ssr_lin < 0.25 * ssr_exp {
        DecayShape::Linear
    } else if ssr_exp < 0.25 * ssr_lin {
        DecayShape::Exponential
    } else {
        DecayShape::Undetermined
    }
}

struct Halves {
    period_large_s: f64,
    period_small_s: f64,
    amplitude_large_deg: f64,
    amplitude_small_deg: f64,
}

/// Splits the crossings at the middle one: the first half swings at the larger amplitudes.
fn amplitude_halves(crossings: &[Crossing], peaks: &[SwingPeak]) -> Result<Halves, SwingError> {
    let mid = crossings.len() / 2;
    let (large, small) = (&crossings[..=mid], &crossings[mid..]);
    // Each full period between same-direction crossings counts once (a least-squares slope
    // would weight the middle of a half, whose amplitude the halves' RMS does not describe),
    // and same-direction pairs cancel any offset of the level.
    let period = |part: &[Crossing]| {
        let full: Vec<f64> = part.windows(3).map(|w| w[2].time_s - w[0].time_s).collect();
        (!full.is_empty()).then(|| full.iter().sum::<f64>() / full.len() as f64)
    };
    let rms = |part: &[SwingPeak]| {
        (part.iter().map(|p| p.amplitude_deg.powi(2)).sum::<f64>() / part.len() as f64).sqrt()
    };
    let (Some(period_large_s), Some(period_small_s)) = (period(large), period(small)) else {
        return Err(SwingError::FitFailed { detail: "the record's halves do not each give a period".into() });
    };
    let split = mid.min(peaks.len());
    if split == 0 || split == peaks.len() {
        return Err(SwingError::FitFailed { detail: "the record's halves do not each hold a peak".into() });
    }
    Ok(Halves {
        period_large_s,
        period_small_s,
        amplitude_large_deg: rms(&peaks[..split]),
        amplitude_small_deg: rms(&peaks[split..]),
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::SeedableRng;
    use rand_chacha::ChaCha8Rng;
    use rand_distr::{Distribution, Normal};

    /// A viscously damped linear oscillator released from rest, sampled with seeded noise.
    #[derive(Clone, Copy)]
    struct Analytic {
        kappa_nmm_per_rad: f64,
        inertia_kgm2: f64,
        zeta: f64,
        release_deg: f64,
        equilibrium_deg: f64,
        rate_hz: f64,
        duration_s: f64,
        noise_deg: f64,
    }

    impl Analytic {
        fn new(kappa_nmm_per_rad: f64, inertia_kgm2: f64, zeta: f64) -> Analytic {
            Analytic {
                kappa_nmm_per_rad,
                inertia_kgm2,
                zeta,
                release_deg: 20.0,
                equilibrium_deg: 3.0,
                rate_hz: 500.0,
                duration_s: 10.0,
                noise_deg: 0.02,
            }
        }

        fn omega0(&self) -> f64 {
            (self.kappa_nmm_per_rad / 1000.0 / self.inertia_kgm2).sqrt()
        }

        /// Common practice, no published source: θ = θ0·e^(−ζω0t)·(cos ωd t + ζ/√(1−ζ²)·sin ωd t),
        /// the free response from rest of a viscously damped linear oscillator (standard physics).
        fn sample(&self, seed: u64) -> (Vec<f64>, Vec<f64>) {
            let (w0, z) = (self.omega0(), self.zeta);
            let wd = w0 * (1.0 - z * z).sqrt();
            let mut rng = ChaCha8Rng::seed_from_u64(seed);
            let noise = Normal::new(0.0, self.noise_deg).unwrap();
            let n = (self.duration_s * self.rate_hz) as usize + 1;
            let t: Vec<f64> = (0..n).map(|i| i as f64 / self.rate_hz).collect();
            let y = t
                .iter()
                .map(|&t| {
                    self.equilibrium_deg
                        + self.release_deg
                            * (-z * w0 * t).exp()
                            * ((wd * t).cos() + z / (1.0 - z * z).sqrt() * (wd * t).sin())
                        + noise.sample(&mut rng)
                })
                .collect();
            (t, y)
        }
    }

    fn opts() -> SwingOptions {
        SwingOptions::default()
    }

    fn rel(a: f64, b: f64) -> f64 {
        (a / b - 1.0).abs()
    }

    #[test]
    fn natural_period_is_two_pi_root_i_over_kappa() {
        // Common practice, no published source: torsional oscillator ω0 = √(κ/I), κ in N·m/rad.
        // 1000 N·mm/rad = 1 N·m/rad with I = 1e-3 kg·m² gives ω0 = √1000 rad/s.
        let period = natural_period_s(1000.0, 1.0e-3);
        assert!(rel(period, 2.0 * PI / 1000.0_f64.sqrt()) < 1e-14);
        assert!(rel(kappa_from_period_nmm_per_rad(period, 1.0e-3), 1000.0) < 1e-12);
        // Common practice, no published source: 1 rad = 180/π degrees.
        assert!(rel(rate_from_kappa_nmm_per_deg(180.0), PI) < 1e-15);
        // From memory: Thomson, Theory of Vibration with Applications, ch. 2 — logarithmic
        // decrement δ = 2πζ/√(1 − ζ²), so ζ = δ/√(4π² + δ²).
        let zeta = 0.05;
        let delta = 2.0 * PI * zeta / (1.0 - zeta * zeta).sqrt();
        assert!(rel(damping_ratio_from_decrement(delta), zeta) < 1e-12);
    }

    #[test]
    fn noisy_damped_oscillator_gives_kappa_and_zeta_back() {
        for (seed, kappa, inertia, zeta) in
            [(1, 500.0, 2.0e-3, 0.01), (2, 80.0, 5.0e-4, 0.003), (3, 2500.0, 1.0e-2, 0.03)]
        {
            let a = Analytic::new(kappa, inertia, zeta);
            let (t, y) = a.sample(seed);
            let r = analyze_swing(&t, &y, Some(inertia), &opts()).unwrap();
            // Common practice, no published source: the analytic free response (see `sample`)
            // with 0.02° seeded noise on a 20° release; κ to 0.1 %, ζ to 2 %, θe to 0.01°.
            assert!(
                rel(r.kappa_nmm_per_rad.unwrap(), kappa) < 1e-3,
                "κ {:?} for {kappa}",
                r.kappa_nmm_per_rad
            );
            assert!(rel(r.damping_ratio, zeta) < 0.02, "ζ {} for {zeta}", r.damping_ratio);
            assert!((r.equilibrium_deg - a.equilibrium_deg).abs() < 0.01);
            let wd = a.omega0() * (1.0 - zeta * zeta).sqrt();
            assert!(rel(r.period_s, 2.0 * PI / wd) < 5e-4);
            assert!(rel(r.rate_nmm_per_deg.unwrap(), kappa * PI / 180.0) < 1e-3);
            assert!(rel(r.noise_deg, a.noise_deg) < 0.2);
            assert!(r.swings >= 3 && r.fit_r_squared > 0.99);
            assert!(r.notes.iter().all(|n| !n.contains("fit") && !n.contains("linearly")), "{:?}", r.notes);
        }
    }

    #[test]
    fn linear_oscillator_shows_no_amplitude_dependence() {
        // Common practice, no published source: a linear spring's period does not depend on
        // amplitude; the halves of a record decaying from 30° to under 3° must agree.
        let mut a = Analytic::new(500.0, 2.0e-3, 0.015);
        a.release_deg = 30.0;
        a.duration_s = 15.0;
        let (t, y) = a.sample(4);
        let r = analyze_swing(&t, &y, Some(a.inertia_kgm2), &opts()).unwrap();
        assert!(r.amplitude_large_deg > 2.5 * r.amplitude_small_deg);
        assert!(r.amplitude_dependence_pct.abs() < 0.02, "{} %", r.amplitude_dependence_pct);
        assert!(!r.amplitude_dependence_flagged);
        assert_eq!(r.decay, DecayShape::Exponential);
    }

    #[test]
    fn a_leg_held_before_release_and_a_coarse_encoder_leave_the_result_alone() {
        let a = Analytic::new(500.0, 2.0e-3, 0.01);
        let (t, y) = a.sample(15);
        // Half a second held at the release angle before the swing, all read by a 0.05° encoder.
        let hold = 250;
        let held_at = a.equilibrium_deg + a.release_deg;
        let time: Vec<f64> =
            (0..hold).map(|i| f64::from(i) / a.rate_hz).chain(t.iter().map(|t| t + 0.5)).collect();
        let angle: Vec<f64> =
            std::iter::repeat_n(held_at, hold as usize).chain(y).map(|v| (v / 0.05).round() * 0.05).collect();
        let r = analyze_swing(&time, &angle, Some(a.inertia_kgm2), &opts()).unwrap();
        // Common practice, no published source: the analytic free response gives κ back.
        assert!(rel(r.kappa_nmm_per_rad.unwrap(), a.kappa_nmm_per_rad) < 1e-3);
        assert!(rel(r.damping_ratio, a.zeta) < 0.03);
    }

    #[test]
    fn stiffening_spring_period_shortens_with_amplitude_as_first_order_theory_says() {
        let model = twistlot_synth::DecayModel {
            damping_ratio: 0.01,
            stiffening_per_rad2: 0.5,
            release_deg: 30.0,
            duration_s: 15.0,
            ..twistlot_synth::DecayModel::linear(300.0, 1.0e-3)
        };
        let record = model.simulate(11).unwrap();
        let r = analyze_swing(&record.time_s, &record.angle_deg, Some(model.inertia_kgm2), &opts()).unwrap();
        // From memory: Nayfeh & Mook, Nonlinear Oscillations, Duffing equation by
        // Lindstedt–Poincaré — θ'' + ω0²(θ + εθ³) = 0 swings at ω ≈ ω0·(1 + 3εA²/8), so a
        // stiffening spring (ε > 0) swings faster at large amplitude. Predicted from the two
        // halves' RMS amplitudes; first order leaves an error of order εA² of the shift.
        let x = |amp_deg: f64| 3.0 * model.stiffening_per_rad2 * amp_deg.to_radians().powi(2) / 8.0;
        let predicted = 100.0 * ((1.0 + x(r.amplitude_small_deg)) / (1.0 + x(r.amplitude_large_deg)) - 1.0);
        assert!(predicted < -1.0);
        assert!(r.amplitude_dependence_pct < 0.0);
        assert!(
            (r.amplitude_dependence_pct - predicted).abs() < 0.1 * predicted.abs(),
            "{} % against {predicted} %",
            r.amplitude_dependence_pct
        );
        assert!(r.amplitude_dependence_flagged);
    }

    #[test]
    fn dry_friction_decay_is_linear_and_gives_the_friction_torque() {
        let model = twistlot_synth::DecayModel {
            damping_ratio: 0.0,
            friction_torque_nmm: 1.0,
            duration_s: 8.0,
            ..twistlot_synth::DecayModel::linear(400.0, 1.0e-3)
        };
        let record = model.simulate(12).unwrap();
        let r = analyze_swing(&record.time_s, &record.angle_deg, Some(model.inertia_kgm2), &opts()).unwrap();
        // From memory: Den Hartog, Mechanical Vibrations, Coulomb damping — the amplitude falls
        // by 4·M_f/κ per swing (linearly, not exponentially) and the period stays 2π·√(I/κ).
        assert_eq!(r.decay, DecayShape::Linear);
        let drop_deg = (4.0 * model.friction_torque_nmm / model.kappa_nmm_per_rad).to_degrees();
        assert!(rel(r.amplitude_drop_per_swing_deg.unwrap(), drop_deg) < 0.02);
        assert!(rel(r.friction_torque_nmm.unwrap(), model.friction_torque_nmm) < 0.03);
        assert!(rel(r.kappa_nmm_per_rad.unwrap(), model.kappa_nmm_per_rad) < 5e-3);
        assert!(r.notes.iter().any(|n| n.contains("linearly")));
    }

    #[test]
    fn two_inertia_method_recovers_kappa_and_the_fixture() {
        // Common practice, no published source: T² = 4π²·(I0 + I)/κ, so two added inertias give
        // κ = 4π²·(I2 − I1)/(T2² − T1²) without the fixture's own I0.
        let (kappa, fixture) = (500.0, 1.5e-3);
        let analyse = |added: f64, seed| {
            let a = Analytic::new(kappa, fixture + added, 0.01);
            let (t, y) = a.sample(seed);
            analyze_swing(&t, &y, None, &opts()).unwrap()
        };
        let (first, second) = (analyse(0.0, 21), analyse(2.0e-3, 22));
        assert!(first.kappa_nmm_per_rad.is_none() && first.rate_nmm_per_deg.is_none());
        let r = two_inertia(&first, 0.0, &second, 2.0e-3).unwrap();
        assert!(rel(r.kappa_nmm_per_rad, kappa) < 2e-3, "{}", r.kappa_nmm_per_rad);
        assert!(rel(r.fixture_inertia_kgm2, fixture) < 5e-3, "{}", r.fixture_inertia_kgm2);
        assert!(r.notes.is_empty());
        // Either order gives the same answer.
        let swapped = two_inertia(&second, 2.0e-3, &first, 0.0).unwrap();
        assert!(rel(swapped.kappa_nmm_per_rad, r.kappa_nmm_per_rad) < 1e-12);
        assert!(matches!(
            two_inertia(&first, 2.0e-3, &second, 0.0),
            Err(SwingError::InconsistentPair { .. })
        ));
        // Added inertias overstated by 5e-3 each: κ holds, the fixture comes out negative and says so.
        let overstated = two_inertia(&first, 5.0e-3, &second, 7.0e-3).unwrap();
        assert!(rel(overstated.kappa_nmm_per_rad, r.kappa_nmm_per_rad) < 1e-12);
        assert!(overstated.fixture_inertia_kgm2 < 0.0 && overstated.notes.len() == 1);
        assert!(matches!(two_inertia(&first, 1.0e-3, &second, 1.0e-3), Err(SwingError::BadInertia { .. })));
        assert!(matches!(two_inertia(&first, -1.0, &second, 1.0e-3), Err(SwingError::BadInertia { .. })));
    }

    #[test]
    fn json_carries_the_agreed_field_names() {
        let a = Analytic::new(500.0, 2.0e-3, 0.01);
        let (t, y) = a.sample(5);
        let r = analyze_swing(&t, &y, Some(a.inertia_kgm2), &opts()).unwrap();
        let json = serde_json::to_value(&r).unwrap();
        for key in [
            "period_s",
            "frequency_hz",
            "log_decrement",
            "damping_ratio",
            "kappa_nmm_per_rad",
            "rate_nmm_per_deg",
            "amplitude_dependence_pct",
            "equilibrium_deg",
            "fit_rms_deg",
        ] {
            assert!(json[key].is_number(), "{key}");
        }
        assert_eq!(json["swings"], serde_json::json!(r.swings));
        assert_eq!(json["decay"], "exponential");
    }

    #[test]
    fn the_record_carries_the_analysis_figures() {
        let a = Analytic::new(500.0, 2.0e-3, 0.01);
        let (t, y) = a.sample(16);
        let r = analyze_swing(&t, &y, Some(a.inertia_kgm2), &opts()).unwrap();
        let m = r.metrics(Some("export"));
        assert_eq!((m.period_s, m.rate_nmm_per_deg, m.swings), (r.period_s, r.rate_nmm_per_deg, r.swings));
        assert_eq!(m.inertia_from.as_deref(), Some("export"));
        let without = analyze_swing(&t, &y, None, &opts()).unwrap().metrics(Some("export"));
        assert_eq!((without.inertia_from, without.rate_nmm_per_deg), (None, None));
    }

    fn refuse(t: &[f64], y: &[f64]) -> SwingError {
        analyze_swing(t, y, Some(2.0e-3), &opts()).unwrap_err()
    }

    #[test]
    fn malformed_records_are_refused() {
        let (t, y) = Analytic::new(500.0, 2.0e-3, 0.01).sample(6);
        assert!(matches!(refuse(&t[..100], &y[..99]), SwingError::LengthMismatch { .. }));
        assert!(matches!(refuse(&t[..31], &y[..31]), SwingError::TooFewPoints { points: 31, needed: 32 }));
        let mut bad = y.clone();
        bad[5] = f64::NAN;
        assert!(matches!(refuse(&t, &bad), SwingError::NotFinite { column: "angle_deg", index: 5, .. }));
        let mut bad_t = t.clone();
        bad_t[7] = f64::INFINITY;
        assert!(matches!(refuse(&bad_t, &y), SwingError::NotFinite { column: "time_s", index: 7, .. }));
        let mut unsorted = t.clone();
        unsorted.swap(10, 11);
        assert!(matches!(refuse(&unsorted, &y), SwingError::TimeNotIncreasing { index: 11, .. }));
        let mut repeated = t.clone();
        repeated[12] = repeated[11];
        assert!(matches!(refuse(&repeated, &y), SwingError::TimeNotIncreasing { index: 12, .. }));
    }

    #[test]
    fn bad_options_and_inertia_are_refused() {
        let (t, y) = Analytic::new(500.0, 2.0e-3, 0.01).sample(6);
        for (options, field) in [
            (SwingOptions { min_swings: 2, ..opts() }, "min_swings"),
            (SwingOptions { amplitude_limit_pct: 0.0, ..opts() }, "amplitude_limit_pct"),
            (SwingOptions { max_damping_ratio: 0.6, ..opts() }, "max_damping_ratio"),
            (SwingOptions { max_equilibrium_drift_pct: f64::NAN, ..opts() }, "max_equilibrium_drift_pct"),
        ] {
            let err = analyze_swing(&t, &y, None, &options).unwrap_err();
            assert!(matches!(err, SwingError::BadOption { field: f, .. } if f == field), "{err:?}");
        }
        for inertia in [0.0, -1.0, f64::NAN] {
            assert!(matches!(
                analyze_swing(&t, &y, Some(inertia), &opts()),
                Err(SwingError::BadInertia { .. })
            ));
        }
    }

    #[test]
    fn records_without_a_usable_swing_are_refused() {
        let t: Vec<f64> = (0..2000).map(|i| f64::from(i) * 0.005).collect();
        let mut rng = ChaCha8Rng::seed_from_u64(7);
        let noise = Normal::new(0.0, 0.01).unwrap();
        // Only noise: nothing swings.
        let flat: Vec<f64> = t.iter().map(|_| 5.0 + noise.sample(&mut rng)).collect();
        assert!(matches!(refuse(&t, &flat), SwingError::NoSwing { .. }), "{:?}", refuse(&t, &flat));
        // A steady drift: no level to swing about.
        let ramp: Vec<f64> = t.iter().map(|t| 2.0 * t + noise.sample(&mut rng)).collect();
        assert!(matches!(refuse(&t, &ramp), SwingError::NoEquilibrium { .. }), "{:?}", refuse(&t, &ramp));
        // Creeping back to rest without a single swing (overdamped).
        let creep: Vec<f64> = t.iter().map(|t| 20.0 * (-3.0 * t).exp() + noise.sample(&mut rng)).collect();
        assert!(matches!(refuse(&t, &creep), SwingError::TooDamped { .. }), "{:?}", refuse(&t, &creep));
    }

    #[test]
    fn a_wandering_equilibrium_is_refused() {
        let a = Analytic::new(500.0, 2.0e-3, 0.01);
        let (t, mut y) = a.sample(8);
        // The centre moves by 0.4°/s, 4° (20 % of the release) over the record.
        for (y, t) in y.iter_mut().zip(&t) {
            *y += 0.4 * t;
        }
        let err = refuse(&t, &y);
        assert!(matches!(&err, SwingError::NoEquilibrium { detail } if detail.contains("moves")), "{err:?}");
    }

    #[test]
    fn a_clipped_record_is_refused() {
        let a = Analytic::new(500.0, 2.0e-3, 0.01);
        let (t, y) = a.sample(9);
        let clipped: Vec<f64> = y.iter().map(|v| v.min(a.equilibrium_deg + 12.0)).collect();
        let err = refuse(&t, &clipped);
        assert!(matches!(err, SwingError::Clipped { side: "top", .. }), "{err:?}");
        let clipped: Vec<f64> = y.iter().map(|v| v.max(a.equilibrium_deg - 12.0)).collect();
        assert!(matches!(refuse(&t, &clipped), SwingError::Clipped { side: "bottom", .. }));
    }

    #[test]
    fn short_coarse_and_damped_records_are_refused() {
        // 2.5 Hz sampled at 20 Hz: 8 samples a period.
        let mut coarse = Analytic::new(500.0, 2.0e-3, 0.01);
        coarse.rate_hz = 20.0;
        let (t, y) = coarse.sample(10);
        assert!(matches!(refuse(&t, &y), SwingError::Undersampled { .. }), "{:?}", refuse(&t, &y));
        // 0.9 s of a 0.4 s period: two swings, still swinging at the end.
        let mut short = Analytic::new(500.0, 2.0e-3, 0.01);
        short.duration_s = 0.9;
        let (t, y) = short.sample(11);
        assert!(
            matches!(refuse(&t, &y), SwingError::RecordTooShort { swings: 2, needed: 3 }),
            "{:?}",
            refuse(&t, &y)
        );
        // ζ = 0.3: the swing dies within two swings.
        let (t, y) = Analytic::new(500.0, 2.0e-3, 0.3).sample(12);
        assert!(matches!(refuse(&t, &y), SwingError::TooDamped { needed: 3, .. }), "{:?}", refuse(&t, &y));
        // ζ = 0.12 swings long enough, but above a plant's limit of 0.05.
        let (t, y) = Analytic::new(500.0, 2.0e-3, 0.12).sample(13);
        let strict = SwingOptions { max_damping_ratio: 0.05, ..opts() };
        let err = analyze_swing(&t, &y, None, &strict).unwrap_err();
        assert!(matches!(err, SwingError::DampingTooHigh { limit, .. } if limit == 0.05), "{err:?}");
    }

    #[test]
    fn a_growing_swing_is_refused() {
        let (t, y) = Analytic::new(500.0, 2.0e-3, -0.005).sample(14);
        assert!(matches!(refuse(&t, &y), SwingError::Growing { .. }), "{:?}", refuse(&t, &y));
    }

    #[test]
    fn a_fit_that_strays_from_the_crossings_is_refused() {
        // A swing whose frequency climbs from 2 to 3 Hz while it decays: no single damped
        // sinusoid follows it.
        let t: Vec<f64> = (0..5000).map(|i| f64::from(i) * 0.002).collect();
        let y: Vec<f64> = t
            .iter()
            .map(|&t| 20.0 * (-0.2 * t).exp() * (2.0 * PI * (2.0 * t + 0.05 * t * t)).cos())
            .collect();
        let err = refuse(&t, &y);
        assert!(matches!(err, SwingError::FitFailed { .. }), "{err:?}");
    }

    proptest::proptest! {
        #![proptest_config(proptest::prelude::ProptestConfig::with_cases(24))]

        #[test]
        fn any_clean_linear_swing_gives_kappa_back(
            kappa in 50.0f64..5000.0,
            inertia in 1.0e-4f64..1.0e-2,
            zeta in 0.001f64..0.05,
            release in 5.0f64..40.0,
            noise in 0.0f64..0.05,
            seed in 0u64..1000,
        ) {
            let mut a = Analytic::new(kappa, inertia, zeta);
            let f0 = a.omega0() / (2.0 * PI);
            a.release_deg = release;
            a.noise_deg = noise;
            a.rate_hz = 100.0 * f0;
            a.duration_s = 15.0 / f0;
            let (t, y) = a.sample(seed);
            let r = analyze_swing(&t, &y, Some(inertia), &opts()).unwrap();
            // Common practice, no published source: the analytic free response gives κ back.
            proptest::prop_assert!(rel(r.kappa_nmm_per_rad.unwrap(), kappa) < 2e-3);
            proptest::prop_assert!((r.damping_ratio - zeta).abs() < 0.05 * zeta + 2e-4);
        }

        #[test]
        fn arbitrary_records_give_a_result_or_a_reason(
            steps in proptest::collection::vec(1.0e-4f64..1.0, 0..300),
            values in proptest::collection::vec(-1.0e3f64..1.0e3, 0..300),
        ) {
            // Never a panic: any finite, increasing record ends as a result or a refusal.
            let n = steps.len().min(values.len());
            let mut time = 0.0;
            let t: Vec<f64> = steps[..n].iter().map(|s| { time += s; time }).collect();
            let _ = analyze_swing(&t, &values[..n], Some(1.0e-3), &opts());
        }
    }
}
