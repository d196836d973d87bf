//! Free-decay (free-swing) records: a spring turning a known inertia, released from rest.
//!
//! The motion solves I·θ'' + c·θ' + κ·(θ + ε·θ³) + M_f·sgn(θ') = 0 (θ in radians from the
//! equilibrium): viscous damping c = 2ζ·√(κ·I), a stiffening (Duffing-type) cubic term ε,
//! and dry (Coulomb) friction M_f. It is integrated with the classical fourth-order
//! Runge–Kutta method at a step of a two-thousandth of the shortest period, several steps
//! per sample. Dry friction makes the equation switch where the velocity passes zero, so
//! each step keeps the friction's sign from its start, and a step in which the velocity
//! changes sign is cut at the reversal (found by bisection) so that no step straddles the
//! switch; at a reversal the leg sticks for good when the spring torque no longer
//! overcomes the friction. Seeded Gaussian noise, and optionally a sensor's resolution,
//! are added to the sampled angle.
//!
//! Invented data for the demo plant and the tests, never a verdict's basis.

use rand::SeedableRng;
use rand_chacha::ChaCha8Rng;
use rand_distr::{Distribution, Normal};
use thiserror::Error;

/// Everything that shapes one simulated free-decay record.
#[derive(Debug, Clone, PartialEq)]
pub struct DecayModel {
    /// Inertia the spring swings, kg·m².
    pub inertia_kgm2: f64,
    /// Torsion constant κ, N·mm/rad.
    pub kappa_nmm_per_rad: f64,
    /// Viscous damping ratio ζ (0 for none).
    pub damping_ratio: f64,
    /// Stiffening ε of the restoring torque κ·(θ + ε·θ³), per rad² (0 for a linear spring).
    pub stiffening_per_rad2: f64,
    /// Dry (Coulomb) friction torque, N·mm (0 for none).
    pub friction_torque_nmm: f64,
    /// Equilibrium angle on the sensor's scale, degrees.
    pub equilibrium_deg: f64,
    /// Release angle from the equilibrium, degrees (released from rest).
    pub release_deg: f64,
    /// Length of the record, s.
    pub duration_s: f64,
    /// Sample rate, Hz.
    pub sample_rate_hz: f64,
    /// Standard deviation of the angle noise, degrees.
    pub noise_deg: f64,
    /// Sensor resolution the angle is rounded to, degrees (0 for none).
    pub resolution_deg: f64,
}

/// One simulated record: plain columns, ready for a writer or the analysis.
#[derive(Debug, Clone, PartialEq)]
pub struct DecayRecord {
    /// Time from release, s.
    pub time_s: Vec<f64>,
    /// Angle, degrees.
    pub angle_deg: Vec<f64>,
}

/// A model the generator cannot run.
#[derive(Debug, Clone, PartialEq, Error)]
pub enum DecayError {
    /// A quantity that must be positive is not.
    #[error("decay model: `{field}` must be a finite number above zero; found {value}")]
    NotPositive {
        /// The field's name.
        field: &'static str,
        /// The value given.
        value: f64,
    },
    /// A quantity that may be zero is negative or not a number.
    #[error("decay model: `{field}` must be a finite number of zero or more; found {value}")]
    Negative {
        /// The field's name.
        field: &'static str,
        /// The value given.
        value: f64,
    },
    /// The damping ratio leaves no oscillation to record.
    #[error("decay model: `damping_ratio` {value} must be below 1 for the spring to swing")]
    Overdamped {
        /// The value given.
        value: f64,
    },
    /// The record would be unreasonably large.
    #[error("decay model: {samples} samples is more than the {limit} a record may have")]
    TooLarge {
        /// Samples asked for.
        samples: f64,
        /// The limit.
        limit: usize,
    },
}

/// Largest record the generator makes.
const MAX_SAMPLES: usize = 10_000_000;

impl DecayModel {
    /// A linear, lightly damped spring: κ and I given, ζ = 0.005, released 20° from 0°,
    /// 10 s at 1 kHz, 0.01° noise.
    pub fn linear(kappa_nmm_per_rad: f64, inertia_kgm2: f64) -> DecayModel {
        DecayModel {
            inertia_kgm2,
            kappa_nmm_per_rad,
            damping_ratio: 0.005,
            stiffening_per_rad2: 0.0,
            friction_torque_nmm: 0.0,
            equilibrium_deg: 0.0,
            release_deg: 20.0,
            duration_s: 10.0,
            sample_rate_hz: 1000.0,
            noise_deg: 0.01,
            resolution_deg: 0.0,
        }
    }

    /// Undamped natural angular frequency √(κ/I) of the linear part, rad/s.
    pub fn omega0_rad_per_s(&self) -> f64 {
        (self.kappa_nmm_per_rad / 1000.0 / self.inertia_kgm2).sqrt()
    }

    fn validate(&self) -> Result<(), DecayError> {
        for (field, value) in [
            ("inertia_kgm2", self.inertia_kgm2),
            ("kappa_nmm_per_rad", self.kappa_nmm_per_rad),
            ("duration_s", self.duration_s),
            ("sample_rate_hz", self.sample_rate_hz),
        ] {
            if !(value.is_finite() && value > 0.0) {
                return Err(DecayError::NotPositive { field, value });
            }
        }
        for (field, value) in [
            ("damping_ratio", self.damping_ratio),
            ("stiffening_per_rad2", self.stiffening_per_rad2),
            ("friction_torque_nmm", self.friction_torque_nmm),
            ("release_deg", self.release_deg),
            ("noise_deg", self.noise_deg),
            ("resolution_deg", self.resolution_deg),
        ] {
            if !(value.is_finite() && value >= 0.0) {
                return Err(DecayError::Negative { field, value });
            }
        }
        if !self.equilibrium_deg.is_finite() {
            return Err(DecayError::Negative { field: "equilibrium_deg", value: self.equilibrium_deg });
        }
        if self.damping_ratio >= 1.0 {
            return Err(DecayError::Overdamped { value: self.damping_ratio });
        }
        let samples = self.duration_s * self.sample_rate_hz + 1.0;
        if samples > MAX_SAMPLES as f64 {
            return Err(DecayError::TooLarge { samples, limit: MAX_SAMPLES });
        }
        Ok(())
    }

    /// Simulates the record; the same seed gives the same record.
    pub fn simulate(&self, seed: u64) -> Result<DecayRecord, DecayError> {
        self.validate()?;
        let truth = self.simulate_exact()?;
        let mut rng = ChaCha8Rng::seed_from_u64(seed);
        let noise = Normal::new(0.0, self.noise_deg)
            .map_err(|_| DecayError::Negative { field: "noise_deg", value: self.noise_deg })?;
        let angle_deg = truth
            .iter()
            .map(|&theta| {
                let value = self.equilibrium_deg + theta.to_degrees() + noise.sample(&mut rng);
                if self.resolution_deg > 0.0 {
                    (value / self.resolution_deg).round() * self.resolution_deg
                } else {
                    value
                }
            })
            .collect();
        let n = truth.len();
        let time_s = (0..n).map(|i| i as f64 / self.sample_rate_hz).collect();
        Ok(DecayRecord { time_s, angle_deg })
    }

    /// The noise-free angle from the equilibrium, radians, at each sample time.
    fn simulate_exact(&self) -> Result<Vec<f64>, DecayError> {
        self.validate()?;
        let kappa = self.kappa_nmm_per_rad / 1000.0; // N·m/rad
        let inertia = self.inertia_kgm2;
        let ode = Ode {
            omega0_sq: kappa / inertia,
            two_zeta_omega0: 2.0 * self.damping_ratio * (kappa / inertia).sqrt(),
            epsilon: self.stiffening_per_rad2,
            friction_accel: self.friction_torque_nmm / 1000.0 / inertia,
        };
        let theta0 = self.release_deg.to_radians();
        // The stiffest the spring gets is at the release amplitude: ω² = ω0²·(1 + 3εθ0²).
        let omega_max = (ode.omega0_sq * (1.0 + 3.0 * ode.epsilon * theta0 * theta0)).sqrt();
        let dt_sample = 1.0 / self.sample_rate_hz;
        let h_target = 2.0 * std::f64::consts::PI / omega_max / 2000.0;
        let substeps = (dt_sample / h_target).ceil().max(1.0) as usize;
        let h = dt_sample / substeps as f64;
        let samples = (self.duration_s * self.sample_rate_hz).floor() as usize + 1;

        let mut state = State { theta: theta0, omega: 0.0, stuck: false };
        // Released from rest: friction acts against the motion that is about to start.
        let mut direction = -ode.restoring(theta0).signum();
        if ode.friction_accel >= ode.restoring(theta0).abs() {
            state.stuck = true;
        }
        let mut out = Vec::with_capacity(samples);
        out.push(state.theta);
        for _ in 1..samples {
            for _ in 0..substeps {
                ode.advance(&mut state, &mut direction, h);
            }
            out.push(state.theta);
        }
        Ok(out)
    }
}

#[derive(Debug, Clone, Copy)]
struct State {
    theta: f64,
    omega: f64,
    stuck: bool,
}

/// θ'' = −2ζω0·θ' − ω0²·(θ + εθ³) − a_f·s, with s the direction of motion held fixed over a step.
struct Ode {
    omega0_sq: f64,
    two_zeta_omega0: f64,
    epsilon: f64,
    friction_accel: f64,
}

impl Ode {
    /// The spring's restoring acceleration's magnitude and sign: ω0²·(θ + εθ³).
    fn restoring(&self, theta: f64) -> f64 {
        self.omega0_sq * (theta + self.epsilon * theta * theta * theta)
    }

    fn accel(&self, theta: f64, omega: f64, direction: f64) -> f64 {
        -self.two_zeta_omega0 * omega - self.restoring(theta) - self.friction_accel * direction
    }

    fn rk4(&self, theta: f64, omega: f64, direction: f64, h: f64) -> (f64, f64) {
        let k1 = (omega, self.accel(theta, omega, direction));
        let k2 =
            (omega + 0.5 * h * k1.1, self.accel(theta + 0.5 * h * k1.0, omega + 0.5 * h * k1.1, direction));
        let k3 =
            (omega + 0.5 * h * k2.1, self.accel(theta + 0.5 * h * k2.0, omega + 0.5 * h * k2.1, direction));
        let k4 = (omega + h * k3.1, self.accel(theta + h * k3.0, omega + h * k3.1, direction));
        (
            theta + h / 6.0 * (k1.0 + 2.0 * k2.0 + 2.0 * k3.0 + k4.0),
            omega + h / 6.0 * (k1.1 + 2.0 * k2.1 + 2.0 * k3.1 + k4.1),
        )
    }

    /// One step of length h; with dry friction, cut at a velocity reversal.
    fn advance(&self, state: &mut State, direction: &mut f64, h: f64) {
        if state.stuck {
            return;
        }
        if self.friction_accel == 0.0 {
            let (theta, omega) = self.rk4(state.theta, state.omega, 0.0, h);
            state.theta = theta;
            state.omega = omega;
            return;
        }
        let mut remaining = h;
        // A reversal can happen at most a few times in a step this small; the bound only guards
        // against an endless loop on a degenerate case.
        for _ in 0..4 {
            let (theta, omega) = self.rk4(state.theta, state.omega, *direction, remaining);
            if omega * *direction >= 0.0 {
                state.theta = theta;
                state.omega = omega;
                return;
            }
            // Velocity reverses inside the step: find where by bisection on the step length.
            let (mut lo, mut hi) = (0.0, remaining);
            for _ in 0..60 {
                let mid = 0.5 * (lo + hi);
                let (_, w) = self.rk4(state.theta, state.omega, *direction, mid);
                if w * *direction > 0.0 {
                    lo = mid;
                } else {
                    hi = mid;
                }
            }
            let (theta, _) = self.rk4(state.theta, state.omega, *direction, hi);
            state.theta = theta;
            state.omega = 0.0;
            remaining -= hi;
            let spring = self.restoring(theta);
            if spring.abs() <= self.friction_accel {
                state.stuck = true;
                return;
            }
            *direction = -spring.signum();
            if remaining <= 0.0 {
                return;
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn max_abs_diff(a: &[f64], b: &[f64]) -> f64 {
        a.iter().zip(b).map(|(x, y)| (x - y).abs()).fold(0.0, f64::max)
    }

    #[test]
    fn rk4_linear_record_matches_the_analytic_free_response() {
        let mut model = DecayModel::linear(500.0, 2.0e-3);
        model.damping_ratio = 0.02;
        model.noise_deg = 0.0;
        model.duration_s = 5.0;
        let record = model.simulate(1).unwrap();
        let w0 = model.omega0_rad_per_s();
        let z = model.damping_ratio;
        let wd = w0 * (1.0 - z * z).sqrt();
        // Common practice, no published source: the free response from rest of a viscously
        // damped linear oscillator, θ = θ0·e^(−ζω0t)·(cos ωd t + ζ/√(1−ζ²)·sin ωd t), standard physics.
        let analytic: Vec<f64> = record
            .time_s
            .iter()
            .map(|&t| {
                model.release_deg
                    * (-z * w0 * t).exp()
                    * ((wd * t).cos() + z / (1.0 - z * z).sqrt() * (wd * t).sin())
            })
            .collect();
        let err = max_abs_diff(&record.angle_deg, &analytic);
        assert!(err < 1e-8, "largest difference {err}°");
    }

    #[test]
    fn undamped_linear_record_keeps_its_period_at_every_amplitude() {
        // Common practice, no published source: a linear oscillator's period 2π·√(I/κ) does not
        // depend on amplitude; the record at 5° and at 40° must both match cos(ω0 t) scaled.
        for release in [5.0, 40.0] {
            let mut model = DecayModel::linear(200.0, 1.0e-3);
            model.damping_ratio = 0.0;
            model.noise_deg = 0.0;
            model.release_deg = release;
            model.duration_s = 3.0;
            let record = model.simulate(3).unwrap();
            let w0 = model.omega0_rad_per_s();
            let analytic: Vec<f64> = record.time_s.iter().map(|&t| release * (w0 * t).cos()).collect();
            assert!(max_abs_diff(&record.angle_deg, &analytic) < 1e-8 * release);
        }
    }

    #[test]
    fn dry_friction_loses_a_fixed_amplitude_each_half_swing() {
        let mut model = DecayModel::linear(400.0, 1.0e-3);
        model.damping_ratio = 0.0;
        model.friction_torque_nmm = 2.0;
        model.noise_deg = 0.0;
        model.release_deg = 15.0;
        model.duration_s = 6.0;
        model.sample_rate_hz = 20_000.0;
        let record = model.simulate(5).unwrap();
        let y = &record.angle_deg;
        let peaks: Vec<f64> = (1..y.len() - 1)
            .filter(|&i| y[i].abs() > y[i - 1].abs() && y[i].abs() >= y[i + 1].abs())
            .map(|i| y[i].abs())
            .collect();
        // From memory: Den Hartog, Mechanical Vibrations, Coulomb damping — each half swing
        // loses 2·M_f/κ of amplitude, and the period stays 2π·√(I/κ).
        let drop_deg = (2.0 * model.friction_torque_nmm / model.kappa_nmm_per_rad).to_degrees();
        assert!(peaks.len() > 5);
        for pair in peaks.windows(2).take(5) {
            let lost = pair[0] - pair[1];
            assert!((lost - drop_deg).abs() < 2e-3 * drop_deg + 1e-4, "lost {lost}° against {drop_deg}°");
        }
        // It comes to rest inside the dead band |θ| ≤ M_f/κ and stays there.
        let band_deg = (model.friction_torque_nmm / model.kappa_nmm_per_rad).to_degrees();
        let last = *y.last().unwrap();
        assert!(last.abs() <= band_deg + 1e-9);
        assert_eq!(y[y.len() - 2], last);
    }

    #[test]
    fn stiffening_spring_swings_faster_at_large_amplitude() {
        // From memory: Nayfeh & Mook, Nonlinear Oscillations, Duffing equation by
        // Lindstedt–Poincaré — θ'' + ω0²(θ + εθ³) = 0 swings at ω ≈ ω0·(1 + 3εA²/8).
        let mut model = DecayModel::linear(300.0, 1.0e-3);
        model.damping_ratio = 0.0;
        model.noise_deg = 0.0;
        model.stiffening_per_rad2 = 0.2;
        model.release_deg = 20.0;
        model.duration_s = 4.0;
        model.sample_rate_hz = 10_000.0;
        let record = model.simulate(2).unwrap();
        let y = &record.angle_deg;
        let t = &record.time_s;
        // Upward zero crossings, interpolated, give the period.
        let ups: Vec<f64> = (1..y.len())
            .filter(|&i| y[i - 1] < 0.0 && y[i] >= 0.0)
            .map(|i| t[i - 1] + (0.0 - y[i - 1]) / (y[i] - y[i - 1]) * (t[i] - t[i - 1]))
            .collect();
        let period = (ups[ups.len() - 1] - ups[0]) / (ups.len() - 1) as f64;
        let a = model.release_deg.to_radians();
        let w0 = model.omega0_rad_per_s();
        let predicted =
            2.0 * std::f64::consts::PI / (w0 * (1.0 + 3.0 * model.stiffening_per_rad2 * a * a / 8.0));
        let linear = 2.0 * std::f64::consts::PI / w0;
        assert!(period < linear);
        // First order leaves an error of order (εA²)² ≈ 6e-4 of the period here.
        assert!((period / predicted - 1.0).abs() < 1e-3, "period {period} s, predicted {predicted} s");
    }

    #[test]
    fn same_seed_same_record_and_noise_is_seeded() {
        let model = DecayModel::linear(500.0, 2.0e-3);
        let a = model.simulate(7).unwrap();
        let b = model.simulate(7).unwrap();
        let c = model.simulate(8).unwrap();
        assert_eq!(a, b);
        assert_ne!(a.angle_deg, c.angle_deg);
        assert_eq!(a.time_s.len(), 10_001);
        assert_eq!(a.time_s[1000], 1.0);
    }

    #[test]
    fn resolution_rounds_the_angle() {
        let mut model = DecayModel::linear(500.0, 2.0e-3);
        model.resolution_deg = 0.05;
        let record = model.simulate(1).unwrap();
        assert!(record.angle_deg.iter().all(|v| ((v / 0.05).round() * 0.05 - v).abs() < 1e-9));
    }

    #[test]
    fn bad_models_are_refused_by_field() {
        let good = DecayModel::linear(500.0, 2.0e-3);
        let mut m = good.clone();
        m.inertia_kgm2 = 0.0;
        assert!(matches!(m.simulate(1), Err(DecayError::NotPositive { field: "inertia_kgm2", .. })));
        let mut m = good.clone();
        m.friction_torque_nmm = -1.0;
        assert!(matches!(m.simulate(1), Err(DecayError::Negative { field: "friction_torque_nmm", .. })));
        let mut m = good.clone();
        m.damping_ratio = 1.0;
        assert!(matches!(m.simulate(1), Err(DecayError::Overdamped { .. })));
        let mut m = good;
        m.duration_s = 1e9;
        assert!(matches!(m.simulate(1), Err(DecayError::TooLarge { .. })));
    }
}
