//! The demo shift: an invented plant's lots, tested on its rigs, written as exports.
//!
//! A plan (YAML) names the rigs and their formats, and per lot the part, how many
//! parts are tested, how much the wire diameter varies, and which parts carry a
//! defect. Each part's rate follows its wire diameter (rate ∝ d⁴ at fixed coil
//! geometry, EN 13906-3's rate formula), so a lot's rate spread is physical. A lot with
//! a `swing` section is tested by free swing instead: its exports are free-decay records.
//!
//! A rig may also check its reference ("master") spring at the start of the shift: the
//! generator then writes one export of that spring reading the torque the plan says at
//! its check angle. Those draws come from their own seeded stream, so adding or changing
//! a reference check never changes a lot's exports.

use crate::decay::{DecayError, DecayModel};
use crate::spring::SpringModel;
use crate::writer::{write_decay_layout, write_gantry_json, write_layout, WriteError, WriteStyle};
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use rand_distr::{Distribution, Normal, StandardNormal};
use serde::{Deserialize, Serialize};
use std::collections::BTreeMap;
use twistlot_model::plugin::RigFormatManifest;
use twistlot_model::yaml::{parse_document, DocumentError};
use twistlot_model::PartSpec;

/// Part-to-part spread of the free leg angle, degrees (one standard deviation).
const FREE_ANGLE_SD_DEG: f64 = 0.4;

/// A defect planted in one tested part.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case", tag = "kind")]
pub enum Defect {
    /// Coil-to-coil or leg-to-arbor friction several times the normal.
    HighFriction,
    /// The free leg angle is off by this many degrees (a bent leg).
    FreeAngleOff {
        /// Offset, degrees.
        by_deg: f64,
    },
    /// The rig stopped short of the test angle (torque limit hit, part slipped).
    StopsShort {
        /// Angle reached, degrees.
        at_deg: f64,
    },
    /// Coils bind before the test angle and the curve stiffens.
    CoilBind {
        /// Angle where binding starts, degrees.
        from_deg: f64,
    },
    /// The rate is off by this share (wrong wire, wrong coil count).
    RateOff {
        /// Relative change, e.g. -0.12.
        share: f64,
    },
    /// Swing lots only: the restoring torque stiffens with angle, κ·(θ + ε·θ³), so the
    /// period shortens at large amplitude (coil contact, a non-linear spring).
    Stiffening {
        /// ε, per rad².
        per_rad2: f64,
    },
    /// Swing lots only: dry (Coulomb) friction in the fixture or between coils, so the
    /// amplitude falls linearly instead of exponentially.
    DryFriction {
        /// Friction torque, N·mm.
        torque_nmm: f64,
    },
}

/// A file that is broken on purpose, so the demo shows rejections.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum Breakage {
    /// The last line is cut in the middle.
    Truncated,
    /// One torque cell holds text.
    NonNumeric,
    /// Nothing in the file.
    Empty,
}

/// A planted defect, by position of the part in the lot's test order (from 1).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct PlantedDefect {
    /// Which tested part (1-based).
    pub part_index: usize,
    /// What is wrong with it.
    #[serde(flatten)]
    pub defect: Defect,
}

/// A broken file, by position of the part in the lot's test order (from 1).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct PlantedBreakage {
    /// Which tested part (1-based).
    pub part_index: usize,
    /// How the file is broken.
    pub breakage: Breakage,
}

/// How a lot's parts are tested by free swing: each spring turns a known inertia, is
/// released from rest, and the bench records angle against time (a free-decay export in
/// the rig's `record: free-decay` layout). The spring's torsion constant follows the
/// spec's dynamic rate (else its static rate) and the part's wire diameter, as for
/// static lots.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct DemoSwing {
    /// The whole swinging inertia, written into each export, kg·m².
    pub inertia_kgm2: f64,
    /// Viscous damping ratio ζ.
    pub damping_ratio: f64,
    /// Release angle from the equilibrium, degrees.
    pub release_deg: f64,
    /// Record length, s.
    pub duration_s: f64,
    /// Sample rate, Hz.
    pub sample_rate_hz: f64,
    /// Standard deviation of the angle noise, degrees.
    #[serde(default)]
    pub noise_deg: f64,
}

/// A rig of the demo plant.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct DemoRig {
    /// Rig name, written into the exports' metadata.
    pub name: String,
    /// Rig-format plugin its exports follow.
    pub format: String,
    /// Operator on this rig during the shift.
    pub operator: String,
    /// The reference-spring check the rig runs at the start of the shift, if any.
    #[serde(default)]
    pub reference: Option<DemoReference>,
}

/// A reference-spring check in the demo shift.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct DemoReference {
    /// Serial of the reference spring (as the plant config records it).
    pub serial: String,
    /// Angle the spring is checked at, degrees.
    pub check_angle_deg: f64,
    /// Torque the rig reads there on the loading stroke, N·mm (set it off the certified
    /// torque to plant a failing check).
    pub reads_nmm: f64,
    /// Time of day the check starts, `HH:MM`.
    pub at: String,
}

/// One lot of the demo shift.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct DemoLot {
    /// Lot identifier.
    pub lot: String,
    /// Part number; its spec is in the plan's parts folder.
    pub part: String,
    /// Parts in the lot.
    pub quantity: u32,
    /// Rig the lot is tested on (needed when `tests` is above 0).
    #[serde(default)]
    pub rig: Option<String>,
    /// Parts tested (0: the lot is listed but no rig tested it).
    pub tests: usize,
    /// Time of day the first test starts, `HH:MM` (default 14:00); tests follow every 3 minutes.
    #[serde(default)]
    pub tests_from: Option<String>,
    /// When the lot comes off the coiler (written to the lot list).
    #[serde(default)]
    pub ready: Option<String>,
    /// Its weight in the lot list.
    #[serde(default)]
    pub weight: Option<f64>,
    /// The coiler that made it.
    #[serde(default)]
    pub coiler: Option<String>,
    /// Standard deviation of wire diameter, % of nominal.
    pub wire_sd_pct: f64,
    /// Mean free-angle offset of the lot, degrees (a setting drift).
    #[serde(default)]
    pub free_angle_shift_deg: f64,
    /// When the lot must ship.
    #[serde(default)]
    pub ship_by: Option<String>,
    /// Planted defects.
    #[serde(default)]
    pub defects: Vec<PlantedDefect>,
    /// Broken files.
    #[serde(default)]
    pub broken: Vec<PlantedBreakage>,
    /// Test the lot by free swing instead of on a torque rig (the rig's format must be a
    /// `record: free-decay` layout).
    #[serde(default)]
    pub swing: Option<DemoSwing>,
}

/// The shift's hours as the lot list writes them.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct DemoHours {
    /// Start, plant-local `YYYY-MM-DDTHH:MM`.
    pub start: String,
    /// End.
    pub end: String,
}

/// The demo shift plan.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct DemoPlan {
    /// Seed for every random draw.
    pub seed: u64,
    /// Shift name.
    pub shift: String,
    /// Date the shift's tests are stamped with (`YYYY-MM-DD`).
    pub date: String,
    /// The shift's hours, written into the lot list for planning.
    #[serde(default)]
    pub hours: Option<DemoHours>,
    /// Rigs.
    pub rigs: Vec<DemoRig>,
    /// Lots.
    pub lots: Vec<DemoLot>,
}

impl DemoPlan {
    /// Parses a plan; `origin` names the file in errors.
    pub fn from_yaml(origin: &str, text: &str) -> Result<DemoPlan, DocumentError> {
        parse_document(origin, text)
    }
}

/// One file the generator produced.
#[derive(Debug, Clone, PartialEq)]
pub struct GeneratedFile {
    /// Path relative to the shift folder.
    pub relative_path: String,
    /// Its bytes.
    pub bytes: Vec<u8>,
}

/// Why the demo cannot be generated.
#[derive(Debug, thiserror::Error)]
pub enum DemoError {
    /// A lot with tests names no rig.
    #[error("lot `{0}` has tests but names no rig to test it on")]
    NoRig(String),
    /// A time of day that is not `HH:MM`.
    #[error("`{0}` is not a time of day (write HH:MM)")]
    BadClock(String),
    /// The plan names a rig that is not in its rig list.
    #[error("lot `{lot}` is tested on rig `{rig}`, which the plan does not list")]
    UnknownRig {
        /// Lot.
        lot: String,
        /// Rig.
        rig: String,
    },
    /// The plan names a part without a spec.
    #[error("lot `{lot}` is of part `{part}`, which has no spec in the parts folder")]
    UnknownPart {
        /// Lot.
        lot: String,
        /// Part.
        part: String,
    },
    /// The rig's format is not among the manifests given.
    #[error("rig `{rig}` writes format `{format}`, which is not a known rig format")]
    UnknownFormat {
        /// Rig.
        rig: String,
        /// Format.
        format: String,
    },
    /// Writing a layout failed.
    #[error(transparent)]
    Write(#[from] WriteError),
    /// The bench data set was asked for a shape it cannot have.
    #[error("{0}")]
    BenchShape(String),
    /// A swing lot's model cannot be simulated.
    #[error("lot `{lot}`: {source}")]
    Decay {
        /// Lot.
        lot: String,
        /// Why.
        #[source]
        source: DecayError,
    },
}

/// File extension each demo format uses.
fn extension(format: &str) -> &'static str {
    match format {
        "korvel-tab" => "txt",
        "ostrel-semi" => "csv",
        "pellam-fixed" => "dat",
        "gantry-json" => "tqj",
        _ => "csv",
    }
}

/// Generates every export of the plan, plus the shift's `lots.yaml`.
pub fn generate_shift(
    plan: &DemoPlan,
    specs: &BTreeMap<String, PartSpec>,
    formats: &BTreeMap<String, RigFormatManifest>,
) -> Result<Vec<GeneratedFile>, DemoError> {
    let mut rng = ChaCha8Rng::seed_from_u64(plan.seed);
    let mut files = Vec::new();
    let mut lot_list =
        String::from("# Lots waiting for a decision at the end of the shift (written by the generator).\n");
    if let Some(hours) = &plan.hours {
        lot_list.push_str(&format!("shift: {{ start: \"{}\", end: \"{}\" }}\n", hours.start, hours.end));
    }
    lot_list.push_str("lots:\n");
    files.extend(reference_checks(plan, formats)?);
    for lot in &plan.lots {
        let spec = specs
            .get(&lot.part)
            .ok_or_else(|| DemoError::UnknownPart { lot: lot.lot.clone(), part: lot.part.clone() })?;
        lot_list.push_str(&format!(
            "  - {{ lot: {}, part: {}, quantity: {}{}{}{}{} }}\n",
            lot.lot,
            lot.part,
            lot.quantity,
            lot.ready.as_ref().map(|s| format!(", ready: \"{s}\"")).unwrap_or_default(),
            lot.ship_by.as_ref().map(|s| format!(", ship_by: \"{s}\"")).unwrap_or_default(),
            lot.weight.map(|w| format!(", weight: {w}")).unwrap_or_default(),
            lot.coiler.as_ref().map(|c| format!(", coiler: {c}")).unwrap_or_default(),
        ));
        if lot.tests == 0 {
            continue;
        }
        let rig_name = lot.rig.as_ref().ok_or_else(|| DemoError::NoRig(lot.lot.clone()))?;
        let rig = plan
            .rigs
            .iter()
            .find(|r| &r.name == rig_name)
            .ok_or_else(|| DemoError::UnknownRig { lot: lot.lot.clone(), rig: rig_name.clone() })?;
        let first_minute = match &lot.tests_from {
            Some(clock) => minutes_of_day(clock)?,
            None => 14 * 60,
        };
        let nominal_rate = spec.characteristics.rate_nmm_per_deg.as_ref().map(|r| r.nominal).unwrap_or(1.0);
        let nominal_free = spec.characteristics.free_angle_deg.as_ref().map(|f| f.nominal).unwrap_or(0.0);
        let wire = Normal::new(1.0, lot.wire_sd_pct / 100.0).map_err(|_| DemoError::UnknownPart {
            lot: lot.lot.clone(),
            part: format!("{} (wire_sd_pct must be ≥ 0)", lot.part),
        })?;
        if let Some(swing) = &lot.swing {
            files.extend(swing_lot(plan, lot, rig, spec, swing, &wire, formats, first_minute, &mut rng)?);
            continue;
        }
        for index in 1..=lot.tests {
            let serial = format!("{}-{:03}", lot.lot, index);
            let diameter_ratio: f64 = wire.sample(&mut rng);
            let mut model = SpringModel::new(
                nominal_rate * diameter_ratio.powi(4),
                nominal_free
                    + lot.free_angle_shift_deg
                    + FREE_ANGLE_SD_DEG * rng.sample::<f64, _>(StandardNormal),
                spec.test.max_angle_deg,
            );
            model.pre_cycles = spec.test.pre_cycles;
            model.points_per_stroke = 150;
            model.dwell_points = 4 + rng.gen_range(0..6);
            model.friction_share = 0.008 + rng.gen_range(0.0..0.006);
            for planted in lot.defects.iter().filter(|d| d.part_index == index) {
                match planted.defect {
                    // Leg-to-arbor drag: a roughly constant torque on each stroke.
                    Defect::HighFriction => {
                        model.friction_nmm += 0.025 * model.rate_nmm_per_deg * model.max_angle_deg
                    }
                    Defect::FreeAngleOff { by_deg } => model.free_angle_deg += by_deg,
                    Defect::StopsShort { at_deg } => model.max_angle_deg = at_deg,
                    Defect::CoilBind { from_deg } => {
                        model.bind_from_deg = Some(from_deg);
                        model.bind_stiffening_nmm_per_deg2 = model.rate_nmm_per_deg * 0.08;
                    }
                    Defect::RateOff { share } => model.rate_nmm_per_deg *= 1.0 + share,
                    // Swing defects: a torque rig's curve does not show them this way.
                    Defect::Stiffening { .. } | Defect::DryFriction { .. } => {}
                }
            }
            let curve = model.simulate(&mut rng);
            let metadata = test_metadata(plan, lot, rig, &serial, first_minute + index * 3);
            let mut bytes = write_export(rig, formats, &metadata, &curve)?;
            for broken in lot.broken.iter().filter(|b| b.part_index == index) {
                bytes = break_file(bytes, broken.breakage);
            }
            files.push(GeneratedFile {
                relative_path: format!("{}/{}.{}", rig.name.to_lowercase(), serial, extension(&rig.format)),
                bytes,
            });
        }
    }
    files.push(GeneratedFile { relative_path: "lots.yaml".into(), bytes: lot_list.into_bytes() });
    Ok(files)
}

/// The metadata every demo export carries: serial, part, lot, rig, operator, and the start
/// time `minute` minutes after midnight of the plan's date.
fn test_metadata(
    plan: &DemoPlan,
    lot: &DemoLot,
    rig: &DemoRig,
    serial: &str,
    minute: usize,
) -> Vec<(&'static str, String)> {
    vec![
        ("serial", serial.to_string()),
        ("part", lot.part.clone()),
        ("lot", lot.lot.clone()),
        ("rig", rig.name.clone()),
        ("operator", rig.operator.clone()),
        ("started", format!("{}T{:02}:{:02}", plan.date, minute / 60, minute % 60)),
    ]
}

/// The free-decay exports of a lot tested by free swing.
#[allow(clippy::too_many_arguments)]
fn swing_lot(
    plan: &DemoPlan,
    lot: &DemoLot,
    rig: &DemoRig,
    spec: &PartSpec,
    swing: &DemoSwing,
    wire: &Normal<f64>,
    formats: &BTreeMap<String, RigFormatManifest>,
    first_minute: usize,
    rng: &mut ChaCha8Rng,
) -> Result<Vec<GeneratedFile>, DemoError> {
    let manifest = formats
        .get(&rig.format)
        .ok_or_else(|| DemoError::UnknownFormat { rig: rig.name.clone(), format: rig.format.clone() })?;
    let c = &spec.characteristics;
    let nominal_rate = c
        .dynamic
        .as_ref()
        .and_then(|d| d.rate_nmm_per_deg.as_ref())
        .or(c.rate_nmm_per_deg.as_ref())
        .map(|r| r.nominal)
        .unwrap_or(1.0);
    let mut files = Vec::new();
    for index in 1..=lot.tests {
        let serial = format!("{}-{:03}", lot.lot, index);
        let diameter_ratio: f64 = wire.sample(rng);
        let mut model = DecayModel {
            damping_ratio: swing.damping_ratio,
            equilibrium_deg: FREE_ANGLE_SD_DEG * rng.sample::<f64, _>(StandardNormal),
            release_deg: swing.release_deg,
            duration_s: swing.duration_s,
            sample_rate_hz: swing.sample_rate_hz,
            noise_deg: swing.noise_deg,
            ..DecayModel::linear(nominal_rate.to_degrees() * diameter_ratio.powi(4), swing.inertia_kgm2)
        };
        for planted in lot.defects.iter().filter(|d| d.part_index == index) {
            match planted.defect {
                Defect::RateOff { share } => model.kappa_nmm_per_rad *= 1.0 + share,
                Defect::Stiffening { per_rad2 } => model.stiffening_per_rad2 = per_rad2,
                Defect::DryFriction { torque_nmm } => model.friction_torque_nmm = torque_nmm,
                Defect::FreeAngleOff { by_deg } => model.equilibrium_deg += by_deg,
                // Torque-rig defects have no meaning for a swing.
                Defect::HighFriction | Defect::StopsShort { .. } | Defect::CoilBind { .. } => {}
            }
        }
        let record =
            model.simulate(rng.gen()).map_err(|source| DemoError::Decay { lot: lot.lot.clone(), source })?;
        let mut metadata = test_metadata(plan, lot, rig, &serial, first_minute + index * 3);
        metadata.push(("record", "free-decay".to_string()));
        metadata.push(("inertia_kgm2", format!("{}", swing.inertia_kgm2)));
        let mut bytes =
            write_decay_layout(manifest, &WriteStyle::for_format(&rig.format), &metadata, &record)?;
        for broken in lot.broken.iter().filter(|b| b.part_index == index) {
            bytes = break_file(bytes, broken.breakage);
        }
        files.push(GeneratedFile {
            relative_path: format!("{}/{}.{}", rig.name.to_lowercase(), serial, extension(&rig.format)),
            bytes,
        });
    }
    Ok(files)
}

/// Minutes after midnight of an `HH:MM` time of day.
fn minutes_of_day(clock: &str) -> Result<usize, DemoError> {
    let bad = || DemoError::BadClock(clock.to_string());
    let (hours, minutes) = clock.split_once(':').ok_or_else(bad)?;
    let (hours, minutes): (usize, usize) =
        (hours.parse().map_err(|_| bad())?, minutes.parse().map_err(|_| bad())?);
    if hours > 23 || minutes > 59 {
        return Err(bad());
    }
    Ok(hours * 60 + minutes)
}

/// One export in the rig's own format.
fn write_export(
    rig: &DemoRig,
    formats: &BTreeMap<String, RigFormatManifest>,
    metadata: &[(&str, String)],
    curve: &twistlot_model::CurveData,
) -> Result<Vec<u8>, DemoError> {
    if rig.format == "gantry-json" {
        return Ok(write_gantry_json(metadata, curve));
    }
    let manifest = formats
        .get(&rig.format)
        .ok_or_else(|| DemoError::UnknownFormat { rig: rig.name.clone(), format: rig.format.clone() })?;
    Ok(write_layout(manifest, &WriteStyle::for_format(&rig.format), metadata, curve)?)
}

/// Seed offset of the reference checks' own random stream.
const REFERENCE_STREAM: u64 = 0x5EF5_0001;

/// The reference-spring exports of the rigs that check one: a plain linear spring driven
/// a little past its check angle, reading `reads_nmm` there on the loading stroke (before
/// noise), with light friction.
fn reference_checks(
    plan: &DemoPlan,
    formats: &BTreeMap<String, RigFormatManifest>,
) -> Result<Vec<GeneratedFile>, DemoError> {
    let mut rng = ChaCha8Rng::seed_from_u64(plan.seed ^ REFERENCE_STREAM);
    let mut files = Vec::new();
    for rig in &plan.rigs {
        let Some(reference) = &rig.reference else { continue };
        let minute = minutes_of_day(&reference.at)?;
        let angle = reference.check_angle_deg;
        let mut model = SpringModel::new(1.0, 0.0, angle * 1.2);
        model.friction_share = 0.002;
        model.friction_nmm = 0.0;
        // Loading torque at the check angle is rate·α·(1 + friction share).
        model.rate_nmm_per_deg = reference.reads_nmm / (angle * (1.0 + model.friction_share));
        model.torque_noise_nmm = 0.0005 * reference.reads_nmm;
        model.points_per_stroke = 150;
        let curve = model.simulate(&mut rng);
        let metadata = vec![
            ("serial", reference.serial.clone()),
            ("part", "reference spring".to_string()),
            ("rig", rig.name.clone()),
            ("operator", rig.operator.clone()),
            ("started", format!("{}T{:02}:{:02}", plan.date, minute / 60, minute % 60)),
        ];
        files.push(GeneratedFile {
            relative_path: format!(
                "{}/{}.{}",
                rig.name.to_lowercase(),
                reference.serial,
                extension(&rig.format)
            ),
            bytes: write_export(rig, formats, &metadata, &curve)?,
        });
    }
    Ok(files)
}

fn break_file(mut bytes: Vec<u8>, breakage: Breakage) -> Vec<u8> {
    match breakage {
        Breakage::Empty => Vec::new(),
        Breakage::Truncated => {
            // Cut inside the last data line, just after its first delimiter or space.
            while bytes.last().is_some_and(|b| *b == b'\n' || *b == b'\r') {
                bytes.pop();
            }
            let line_start = bytes.iter().rposition(|b| *b == b'\n').map(|p| p + 1).unwrap_or(0);
            let cut = bytes[line_start..]
                .iter()
                .position(|b| matches!(b, b'\t' | b';' | b',' | b' '))
                .map(|p| line_start + p + 1)
                .unwrap_or(bytes.len());
            bytes.truncate(cut);
            bytes
        }
        Breakage::NonNumeric => {
            // Replace a digit in the middle of the file with a letter.
            let mid = bytes.len() / 2;
            if let Some(offset) = bytes[mid..].iter().position(u8::is_ascii_digit) {
                bytes[mid + offset] = b'x';
            }
            bytes
        }
    }
}

/// The bench data set: `files` exports of `points` points each, rotating through
/// the given declarative layouts, with plain springs of varied rate.
pub fn generate_bench(
    seed: u64,
    files: usize,
    points: usize,
    formats: &[RigFormatManifest],
) -> Result<Vec<GeneratedFile>, DemoError> {
    // One pre-cycle and the evaluated cycle: four strokes of equal length.
    if points < 8 || !points.is_multiple_of(4) {
        return Err(DemoError::BenchShape(format!(
            "--points must be a multiple of 4 and at least 8 (two cycles of two strokes), got {points}"
        )));
    }
    if formats.is_empty() {
        return Err(DemoError::BenchShape("no declarative rig formats to write the bench data in".into()));
    }
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let mut out = Vec::with_capacity(files);
    for index in 0..files {
        let manifest = &formats[index % formats.len()];
        let mut model = SpringModel::new(rng.gen_range(1.0..30.0), rng.gen_range(-2.0..4.0), 90.0);
        model.pre_cycles = 1;
        model.dwell_points = 0;
        model.points_per_stroke = points / 4;
        let curve = model.simulate(&mut rng);
        let serial = format!("B{index:05}");
        let metadata = vec![
            ("serial", serial.clone()),
            ("part", "BENCH-1".to_string()),
            ("lot", format!("BL{}", index / 100)),
            ("rig", manifest.name.clone()),
        ];
        let bytes = write_layout(manifest, &WriteStyle::for_format(&manifest.name), &metadata, &curve)?;
        out.push(GeneratedFile {
            relative_path: format!("{}/{serial}.{}", manifest.name, extension(&manifest.name)),
            bytes,
        });
    }
    Ok(out)
}
