//! A torsion spring on a rig, simulated point by point.
//!
//! The leg follows a triangle in angle (load to the largest angle, dwell, unload),
//! once per pre-cycle and once for the evaluated cycle. Torque follows the linear
//! law M = R·(α − α0) once the leg touches (no torque before: the slack at the start
//! when α0 > 0), plus coulomb-and-viscous-like friction that opens the hysteresis
//! loop (added on loading, subtracted on unloading), an optional stiffening where
//! coils begin to bind, and Gaussian noise on both channels.

use rand::Rng;
use rand_distr::{Distribution, Normal};
use twistlot_model::{CurveData, Stroke};

/// Everything that shapes one simulated test.
#[derive(Debug, Clone, PartialEq)]
pub struct SpringModel {
    /// Spring rate R, N·mm/°.
    pub rate_nmm_per_deg: f64,
    /// Free leg angle α0 on the rig's scale, degrees.
    pub free_angle_deg: f64,
    /// Largest angle the rig drives to, degrees.
    pub max_angle_deg: f64,
    /// Friction torque as a share of the elastic torque (each stroke).
    pub friction_share: f64,
    /// Friction torque independent of load, N·mm (each stroke).
    pub friction_nmm: f64,
    /// Angle above which coils start to bind, degrees (none when absent).
    pub bind_from_deg: Option<f64>,
    /// Extra stiffness past the bind angle, N·mm/°² (torque grows with the square).
    pub bind_stiffening_nmm_per_deg2: f64,
    /// Standard deviation of torque noise, N·mm.
    pub torque_noise_nmm: f64,
    /// Standard deviation of angle noise, degrees.
    pub angle_noise_deg: f64,
    /// Load–unload cycles run before the evaluated one.
    pub pre_cycles: u32,
    /// Points per stroke.
    pub points_per_stroke: usize,
    /// Points held at the largest angle between the strokes.
    pub dwell_points: usize,
    /// Leg speed, degrees per second (sets the time column).
    pub speed_deg_per_s: f64,
    /// Shift of α0 per cycle from setting, degrees (last cycle sits this much further per cycle).
    pub set_per_cycle_deg: f64,
}

impl SpringModel {
    /// A plain spring: given rate, free angle and test angle, light friction and noise.
    pub fn new(rate_nmm_per_deg: f64, free_angle_deg: f64, max_angle_deg: f64) -> SpringModel {
        SpringModel {
            rate_nmm_per_deg,
            free_angle_deg,
            max_angle_deg,
            friction_share: 0.01,
            friction_nmm: 0.02 * rate_nmm_per_deg,
            bind_from_deg: None,
            bind_stiffening_nmm_per_deg2: 0.0,
            torque_noise_nmm: 0.002 * rate_nmm_per_deg * max_angle_deg,
            angle_noise_deg: 0.01,
            pre_cycles: 0,
            points_per_stroke: 200,
            dwell_points: 5,
            speed_deg_per_s: 30.0,
            set_per_cycle_deg: 0.0,
        }
    }

    /// Noise-free elastic torque at an angle for a given free angle.
    pub fn elastic_torque_nmm(&self, angle_deg: f64, free_angle_deg: f64) -> f64 {
        let deflection = angle_deg - free_angle_deg;
        let mut torque = if deflection > 0.0 { self.rate_nmm_per_deg * deflection } else { 0.0 };
        if let Some(bind) = self.bind_from_deg {
            if angle_deg > bind {
                torque += self.bind_stiffening_nmm_per_deg2 * (angle_deg - bind).powi(2);
            }
        }
        torque
    }

    /// Total number of points the simulation yields.
    pub fn points(&self) -> usize {
        (self.pre_cycles as usize + 1) * (2 * self.points_per_stroke + self.dwell_points)
    }

    /// Simulates the test.
    pub fn simulate(&self, rng: &mut impl Rng) -> CurveData {
        let torque_noise = Normal::new(0.0, self.torque_noise_nmm.max(0.0)).ok();
        let angle_noise = Normal::new(0.0, self.angle_noise_deg.max(0.0)).ok();
        let n = self.points();
        let mut curve = CurveData {
            angle_deg: Vec::with_capacity(n),
            torque_nmm: Vec::with_capacity(n),
            stroke: Vec::with_capacity(n),
            cycle: Vec::with_capacity(n),
            time_s: Some(Vec::with_capacity(n)),
        };
        let step_deg = self.max_angle_deg / self.points_per_stroke as f64;
        let step_s = step_deg / self.speed_deg_per_s;
        let mut t = 0.0;
        for cycle in 1..=self.pre_cycles + 1 {
            let free = self.free_angle_deg + self.set_per_cycle_deg * f64::from(cycle - 1);
            let mut push = |true_angle: f64, stroke: Stroke, rng: &mut dyn rand::RngCore| {
                let elastic = self.elastic_torque_nmm(true_angle, free);
                let friction =
                    if elastic > 0.0 { self.friction_share * elastic + self.friction_nmm } else { 0.0 };
                let torque = match stroke {
                    Stroke::Load => elastic + friction,
                    Stroke::Unload => (elastic - friction).max(0.0),
                };
                let dt = torque_noise.map(|d| d.sample(rng)).unwrap_or(0.0);
                let da = angle_noise.map(|d| d.sample(rng)).unwrap_or(0.0);
                curve.angle_deg.push(true_angle + da);
                curve.torque_nmm.push(torque + dt);
                curve.stroke.push(stroke);
                curve.cycle.push(cycle);
                if let Some(time) = curve.time_s.as_mut() {
                    time.push(t);
                }
                t += step_s;
            };
            for i in 0..self.points_per_stroke {
                push(i as f64 * step_deg, Stroke::Load, rng);
            }
            for _ in 0..self.dwell_points {
                push(self.max_angle_deg, Stroke::Load, rng);
            }
            for i in 0..self.points_per_stroke {
                push(self.max_angle_deg - i as f64 * step_deg, Stroke::Unload, rng);
            }
        }
        curve
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::SeedableRng;
    use rand_chacha::ChaCha8Rng;

    #[test]
    fn noiseless_loading_follows_the_linear_law() {
        let mut model = SpringModel::new(2.0, 5.0, 90.0);
        model.torque_noise_nmm = 0.0;
        model.angle_noise_deg = 0.0;
        model.friction_share = 0.0;
        model.friction_nmm = 0.0;
        let curve = model.simulate(&mut ChaCha8Rng::seed_from_u64(1));
        for (a, m) in curve.angle_deg.iter().zip(&curve.torque_nmm) {
            let expected = if *a > 5.0 { 2.0 * (a - 5.0) } else { 0.0 };
            assert!((m - expected).abs() < 1e-9);
        }
        assert_eq!(curve.len(), model.points());
    }

    #[test]
    fn same_seed_same_curve() {
        let model = SpringModel::new(3.0, 0.0, 60.0);
        let a = model.simulate(&mut ChaCha8Rng::seed_from_u64(7));
        let b = model.simulate(&mut ChaCha8Rng::seed_from_u64(7));
        assert_eq!(a, b);
        let c = model.simulate(&mut ChaCha8Rng::seed_from_u64(8));
        assert_ne!(a, c);
    }

    #[test]
    fn friction_opens_a_loop() {
        let mut model = SpringModel::new(2.0, 0.0, 90.0);
        model.torque_noise_nmm = 0.0;
        model.friction_share = 0.05;
        let curve = model.simulate(&mut ChaCha8Rng::seed_from_u64(1));
        let load_at_45 = curve.torque_nmm[100];
        let unload_at_45 = curve.torque_nmm[curve.len() - 100];
        assert!(load_at_45 > unload_at_45 + 5.0, "{load_at_45} {unload_at_45}");
    }
}
