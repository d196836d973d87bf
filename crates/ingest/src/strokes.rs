//! Deriving load/unload strokes and cycles from the angle when a rig does not record them.
//!
//! A direction change is only believed once the angle has come back from its
//! running extreme by more than a threshold (a fraction of the tested range), so
//! noise and a dwell at the turning point never start a spurious stroke; the
//! threshold grows with the angle channel's own noise. Points
//! after the extreme are then given to the new stroke retroactively.

use twistlot_model::Stroke;

/// Share of the angle range the leg must travel back before a reversal counts.
pub const REVERSAL_FRACTION: f64 = 0.02;
/// A reversal must also exceed this many standard deviations of the angle noise.
pub const NOISE_MULTIPLE: f64 = 4.0;
/// How many second differences the noise estimate looks at.
const NOISE_SAMPLES: usize = 400;
/// The threshold never exceeds this share of the range, however noisy the channel.
const MAX_REVERSAL_FRACTION: f64 = 0.25;

/// Standard deviation of the angle channel's noise, from second differences
/// (which cancel the leg's steady motion): σ ≈ 1.4826·median|Δ²a| / √6.
fn angle_noise_sd(angle_deg: &[f64]) -> f64 {
    if angle_deg.len() < 3 {
        return 0.0;
    }
    // A few hundred evenly spread windows estimate the median as well as all of them.
    let stride = (angle_deg.len() / NOISE_SAMPLES).max(1);
    let mut second: Vec<f64> =
        angle_deg.windows(3).step_by(stride).map(|w| (w[2] - 2.0 * w[1] + w[0]).abs()).collect();
    let mid = second.len() / 2;
    let (_, median, _) = second.select_nth_unstable_by(mid, f64::total_cmp);
    1.4826 * *median / 6f64.sqrt()
}

/// Strokes and cycles (from 1) for each point of `angle_deg`.
///
/// The loading direction is the first direction the leg moves in; points before
/// that first movement (slack, a settling dwell) belong to the first loading stroke.
pub fn derive_strokes(angle_deg: &[f64]) -> (Vec<Stroke>, Vec<u32>) {
    let n = angle_deg.len();
    let mut strokes = vec![Stroke::Load; n];
    let mut cycles = vec![1u32; n];
    if n < 2 {
        return (strokes, cycles);
    }
    let (lo, hi) =
        angle_deg.iter().fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), &a| (lo.min(a), hi.max(a)));
    let range = hi - lo;
    let threshold = (range * REVERSAL_FRACTION)
        .max(NOISE_MULTIPLE * angle_noise_sd(angle_deg))
        .min(range * MAX_REVERSAL_FRACTION);
    if threshold <= 0.0 {
        return (strokes, cycles);
    }
    let start = angle_deg[0];
    let Some(first_move) = angle_deg.iter().position(|&a| (a - start).abs() > threshold) else {
        return (strokes, cycles);
    };
    let direction = if angle_deg[first_move] > start { 1.0 } else { -1.0 };

    let mut stroke = Stroke::Load;
    let mut cycle = 1u32;
    // Running extreme of the current stroke, in the loading direction's sign.
    let mut extreme = direction * start;
    let mut extreme_at = 0usize;
    for i in 0..n {
        let a = direction * angle_deg[i];
        strokes[i] = stroke;
        cycles[i] = cycle;
        match stroke {
            Stroke::Load => {
                if a >= extreme {
                    extreme = a;
                    extreme_at = i;
                } else if extreme - a > threshold {
                    stroke = Stroke::Unload;
                    strokes[extreme_at + 1..=i].fill(stroke);
                    extreme = a;
                    extreme_at = i;
                }
            }
            Stroke::Unload => {
                if a <= extreme {
                    extreme = a;
                    extreme_at = i;
                } else if a - extreme > threshold {
                    stroke = Stroke::Load;
                    cycle += 1;
                    strokes[extreme_at + 1..=i].fill(stroke);
                    cycles[extreme_at + 1..=i].fill(cycle);
                    extreme = a;
                    extreme_at = i;
                }
            }
        }
    }
    (strokes, cycles)
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    /// Load 0→90°, optional dwell, unload 90→0°, repeated `cycles` times.
    fn triangle(cycles: usize, per_stroke: usize, dwell: usize, noise: f64) -> Vec<f64> {
        let mut out = Vec::new();
        let mut k = 0u64;
        let mut jitter = || {
            // Deterministic pseudo-noise in [-noise, noise].
            k = k.wrapping_mul(6364136223846793005).wrapping_add(1442695040888963407);
            ((k >> 11) as f64 / (1u64 << 53) as f64 * 2.0 - 1.0) * noise
        };
        for _ in 0..cycles {
            for i in 0..per_stroke {
                out.push(90.0 * i as f64 / per_stroke as f64 + jitter());
            }
            for _ in 0..dwell {
                out.push(90.0 + jitter());
            }
            for i in 0..per_stroke {
                out.push(90.0 - 90.0 * i as f64 / per_stroke as f64 + jitter());
            }
        }
        out
    }

    fn count_strokes(strokes: &[Stroke]) -> usize {
        1 + strokes.windows(2).filter(|w| w[0] != w[1]).count()
    }

    #[test]
    fn one_clean_cycle() {
        let angle = triangle(1, 100, 0, 0.0);
        let (strokes, cycles) = derive_strokes(&angle);
        assert_eq!(count_strokes(&strokes), 2);
        assert_eq!(strokes[..=100].iter().filter(|s| **s == Stroke::Load).count(), 101);
        assert!(strokes[101..].iter().all(|s| *s == Stroke::Unload));
        assert!(cycles.iter().all(|c| *c == 1));
    }

    #[test]
    fn noise_and_dwell_do_not_add_strokes() {
        let angle = triangle(3, 200, 40, 0.3);
        let (strokes, cycles) = derive_strokes(&angle);
        assert_eq!(count_strokes(&strokes), 6);
        assert_eq!(*cycles.last().unwrap(), 3);
        // The loading stroke's last point is near the top, the unloading stroke's first too.
        let turn = strokes.iter().position(|s| *s == Stroke::Unload).unwrap();
        assert!(angle[turn - 1] > 88.0 && angle[turn] > 87.0, "{} {}", angle[turn - 1], angle[turn]);
    }

    #[test]
    fn negative_loading_direction() {
        let angle: Vec<f64> = triangle(2, 50, 5, 0.0).iter().map(|a| -a).collect();
        let (strokes, cycles) = derive_strokes(&angle);
        assert_eq!(strokes[10], Stroke::Load);
        assert_eq!(strokes[60], Stroke::Unload);
        assert_eq!(count_strokes(&strokes), 4);
        assert_eq!(*cycles.last().unwrap(), 2);
    }

    #[test]
    fn slack_at_start_is_loading() {
        let mut angle = vec![0.0; 30];
        angle.extend(triangle(1, 100, 0, 0.0));
        let (strokes, _) = derive_strokes(&angle);
        assert!(strokes[..30].iter().all(|s| *s == Stroke::Load));
    }

    #[test]
    fn flat_and_tiny_inputs() {
        assert_eq!(derive_strokes(&[]).0.len(), 0);
        assert_eq!(derive_strokes(&[1.0]).0, vec![Stroke::Load]);
        assert!(derive_strokes(&[2.0; 10]).0.iter().all(|s| *s == Stroke::Load));
    }

    proptest! {
        #[test]
        fn stroke_count_matches_cycles_under_noise(cycles in 1usize..5, per in 20usize..200, dwell in 0usize..30, noise in 0.0f64..1.0) {
            let angle = triangle(cycles, per, dwell, noise);
            let (strokes, cyc) = derive_strokes(&angle);
            prop_assert_eq!(count_strokes(&strokes), 2 * cycles);
            prop_assert_eq!(*cyc.last().unwrap() as usize, cycles);
        }
    }
}
