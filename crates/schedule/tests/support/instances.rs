//! Random planning instances (invented numbers) for tests, the benchmark and the
//! quality example. The same seed and shape give the same instance.

#![allow(dead_code)]

use twistlot_model::{Availability, PlantTime, ReferenceSpring, Rig, ShiftClock};
use twistlot_schedule::{Job, ShiftWindow};

/// What kind of instance to draw.
#[derive(Debug, Clone, Copy)]
pub struct Shape {
    /// Lots.
    pub lots: usize,
    /// Rigs.
    pub rigs: usize,
    /// Work over rig time: about 1 fills the rigs for the whole shift.
    pub load: f64,
    /// Add rigs with short free hours or a calibration that lapses, and lots no rig takes.
    pub awkward: bool,
}

/// A planning instance.
#[derive(Debug, Clone)]
pub struct Instance {
    /// The shift.
    pub shift: ShiftWindow,
    /// Rigs.
    pub rigs: Vec<Rig>,
    /// Lots.
    pub jobs: Vec<Job>,
}

/// SplitMix64.
pub struct Draw(u64);

impl Draw {
    pub fn new(seed: u64) -> Draw {
        Draw(seed)
    }

    pub fn next(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }

    /// Uniform in [0, 1).
    pub fn unit(&mut self) -> f64 {
        (self.next() >> 11) as f64 / (1u64 << 53) as f64
    }

    pub fn range(&mut self, lo: f64, hi: f64) -> f64 {
        lo + (hi - lo) * self.unit()
    }

    pub fn below(&mut self, n: usize) -> usize {
        (self.next() % n as u64) as usize
    }

    pub fn pick<T: Copy>(&mut self, items: &[T]) -> T {
        items[self.below(items.len())]
    }
}

pub const SHIFT_START: &str = "2026-12-01T22:00";
pub const SHIFT_HOURS: i64 = 8;

pub fn shift() -> ShiftWindow {
    let start: PlantTime = SHIFT_START.parse().unwrap();
    ShiftWindow { start, end: start.checked_add_seconds(SHIFT_HOURS * 3600).unwrap() }
}

/// A rig with every field the planner needs.
pub fn full_rig(name: &str, capacity_nmm: f64) -> Rig {
    Rig {
        name: name.to_string(),
        format: "native".to_string(),
        capacity_nmm: Some(capacity_nmm),
        max_angle_deg: Some(360.0),
        speed_deg_per_s: Some(30.0),
        handling_s: 20.0,
        setup_s: 300.0,
        arbors_mm: vec![4.0, 6.0, 8.0, 10.0, 12.0, 16.0],
        calibration_due: Some("2027-06-01T00:00".parse().unwrap()),
        available: None,
        reference: Some(ReferenceSpring {
            serial: format!("REF-{name}"),
            check_angle_deg: 90.0,
            certified_torque_nmm: capacity_nmm / 2.0,
            allowed_deviation_pct: 1.0,
        }),
    }
}

/// A lot the `full_rig` of 5000 N·mm takes.
pub fn plain_job(lot: &str, samples: u32) -> Job {
    Job {
        lot: lot.to_string(),
        part: "P-1".to_string(),
        samples,
        ready: None,
        due: None,
        weight: 1.0,
        max_torque_nmm: 2000.0,
        max_angle_deg: 90.0,
        cycles: 1,
        wound_down_inside_d_mm: 12.0,
        fixture: String::new(),
        coiler: None,
    }
}

pub fn random_instance(seed: u64, shape: &Shape) -> Instance {
    let mut draw = Draw::new(seed);
    let shift = shift();
    let horizon = (SHIFT_HOURS * 3600) as f64;
    let at = |s: f64| shift.start.checked_add_seconds(s.round() as i64).unwrap();
    let mut rigs = Vec::with_capacity(shape.rigs);
    for r in 0..shape.rigs {
        let capacity = draw.pick(&[500.0, 1000.0, 2000.0, 5000.0, 10000.0]);
        let mut rig = full_rig(&format!("RIG-{r:02}"), capacity);
        rig.max_angle_deg = Some(draw.pick(&[180.0, 270.0, 360.0, 720.0]));
        rig.speed_deg_per_s = Some(draw.range(15.0, 60.0));
        rig.handling_s = draw.range(10.0, 40.0).round();
        rig.setup_s = draw.range(60.0, 600.0).round();
        let all = [3.0, 4.0, 5.0, 6.0, 8.0, 10.0, 12.0, 16.0, 20.0];
        rig.arbors_mm = all.iter().copied().filter(|_| draw.unit() < 0.6).collect();
        if rig.arbors_mm.len() < 2 {
            rig.arbors_mm = vec![4.0, 8.0];
        }
        if shape.awkward {
            match draw.below(6) {
                // Calibration lapses mid-shift.
                0 => rig.calibration_due = Some(at(draw.range(0.2, 0.8) * horizon)),
                // Free only part of the shift, as times of day or as date-times.
                1 => {
                    rig.available = Some(Availability {
                        from: ShiftClock::Daily("23:30".parse().unwrap()),
                        to: ShiftClock::Daily("03:15".parse().unwrap()),
                    })
                }
                2 => {
                    let from = draw.range(0.0, 0.5) * horizon;
                    rig.available = Some(Availability {
                        from: ShiftClock::At(at(from)),
                        to: ShiftClock::At(at(from + draw.range(0.2, 0.6) * horizon)),
                    })
                }
                // Calibration already lapsed: the rig cannot be used at all.
                3 if shape.rigs > 2 => rig.calibration_due = Some(at(-3600.0)),
                _ => {}
            }
        }
        rigs.push(rig);
    }
    let rig_time = horizon * shape.rigs as f64;
    let mean_processing = shape.load * rig_time / shape.lots.max(1) as f64;
    let mut jobs = Vec::with_capacity(shape.lots);
    for j in 0..shape.lots {
        let home = &rigs[draw.below(rigs.len())];
        let capacity = home.capacity_nmm.unwrap();
        let mut torque = capacity * draw.range(0.12, 0.88);
        if shape.awkward && draw.below(12) == 0 {
            torque = 50_000.0; // no rig's cell takes it
        }
        let angle = draw.pick(&[45.0f64, 90.0, 120.0, 180.0]).min(home.max_angle_deg.unwrap());
        let smallest_arbor = home.arbors_mm.iter().copied().fold(f64::MAX, f64::min);
        let inside = smallest_arbor / 0.9 + draw.range(0.0, 12.0);
        let per_part = 25.0 + 2.0 * angle / 35.0;
        let samples = ((mean_processing / per_part) * draw.range(0.4, 1.6)).round().clamp(1.0, 500.0) as u32;
        let ready = draw.range(0.0, 0.3) * horizon;
        let processing = f64::from(samples) * per_part;
        let due = ready + processing * draw.range(1.0, 2.0) + draw.range(0.0, 0.3) * shape.load * horizon;
        jobs.push(Job {
            lot: format!("L{j:03}"),
            part: format!("P-{}", draw.below(5)),
            samples,
            ready: Some(at(ready)),
            due: if draw.below(10) == 0 { None } else { Some(at(due)) },
            weight: draw.pick(&[0.5, 1.0, 1.0, 2.0, 3.0]),
            max_torque_nmm: torque,
            max_angle_deg: angle,
            cycles: draw.pick(&[1, 1, 2]),
            wound_down_inside_d_mm: inside,
            fixture: draw.pick(&["leg-A", "leg-B"]).to_string(),
            coiler: Some(format!("C-{}", draw.below(4))),
        });
    }
    Instance { shift, rigs, jobs }
}
