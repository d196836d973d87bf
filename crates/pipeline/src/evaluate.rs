//! Evaluating exports: read each file, compute its curve metrics, judge it against its spec.
//! A free-decay export (a swing test) is analysed and judged in [`crate::dynamic`] instead.
//!
//! Each file's frame is dropped on the worker thread as soon as its metrics are
//! computed; the caller receives one [`TestRecord`] (and, when asked, a thinned copy of
//! the curve for charts) per file, in file order, so memory holds one result row per
//! test (DESIGN.md §8).

use crate::plant::{PhysicsConfig, SpecEntry, SpecLibrary};
use std::path::PathBuf;
use twistlot_ingest::{ingest_ordered, FileOutcome, FormatSet, IngestError, RejectKind};
use twistlot_model::{
    CharacteristicClass, CurveData, Finding, RecordKind, TestMetadata, TestRecord, TestStatus, Verdict,
};
use twistlot_stats::{curve_metrics, judge_with, CheckSet, MetricOptions};

/// Where specs come from.
#[derive(Debug, Clone, Copy)]
pub enum SpecSource<'a> {
    /// One spec for every file (`--spec FILE`).
    Fixed(&'a SpecEntry),
    /// By the part number in each export's metadata (the plant's parts folder).
    ByPart(&'a SpecLibrary),
    /// No spec: metrics only.
    None,
}

/// Options for an evaluation run.
#[derive(Debug, Clone, Default)]
pub struct EvaluateOptions {
    /// Overrides the spec's evaluation window (`[0, 1]` = the whole loading stroke).
    pub window: Option<[f64; 2]>,
    /// Read every file with this rig format.
    pub rig_format: Option<String>,
    /// Keep a thinned copy of each curve with at most this many points (0: none), for charts.
    pub preview_points: usize,
    /// The theoretical-rate band and the free-swing analysis settings.
    pub physics: PhysicsConfig,
    /// Serials of reference springs with the angle each is certified at: their exports are
    /// judged against no part spec, and the torque at that angle is read
    /// (see [`crate::reference`]).
    pub reference_angles: std::collections::BTreeMap<String, f64>,
}

/// A thinned copy of a test's curve, for charts.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct CurvePreview {
    /// Angles, degrees.
    pub angle_deg: Vec<f64>,
    /// Torques, N·mm.
    pub torque_nmm: Vec<f64>,
}

impl CurvePreview {
    /// Every k-th point, so that at most `max_points` remain.
    pub fn thinned(curve: &CurveData, max_points: usize) -> CurvePreview {
        let step = curve.len().div_ceil(max_points.max(1)).max(1);
        CurvePreview {
            angle_deg: curve.angle_deg.iter().step_by(step).copied().collect(),
            torque_nmm: curve.torque_nmm.iter().step_by(step).copied().collect(),
        }
    }
}

/// What became of one input file.
#[derive(Debug)]
pub enum Evaluated {
    /// Read and evaluated.
    Test {
        /// The result.
        record: Box<TestRecord>,
        /// The thinned curve, when asked for.
        preview: Option<CurvePreview>,
    },
    /// Not read, or its curve could not be evaluated.
    Rejected(IngestError),
}

/// Evaluates every file and hands each result to `consume`, in file order.
pub fn evaluate_each(
    files: &[PathBuf],
    formats: &FormatSet,
    specs: SpecSource<'_>,
    checks: &CheckSet,
    options: &EvaluateOptions,
    consume: impl FnMut(Evaluated),
) {
    ingest_ordered(
        files,
        formats,
        options.rig_format.as_deref(),
        |outcome| evaluate_one(outcome, specs, checks, options),
        consume,
    );
}

fn evaluate_one(
    outcome: FileOutcome,
    specs: SpecSource<'_>,
    checks: &CheckSet,
    options: &EvaluateOptions,
) -> Evaluated {
    let export = match outcome.result {
        Ok(export) => export,
        Err(err) => return Evaluated::Rejected(err),
    };
    let file = outcome.path.display().to_string();
    let (spec_entry, missing_spec) = find_spec(&export.metadata, specs);
    if export.kind == RecordKind::FreeDecay {
        return crate::dynamic::evaluate_decay(&export, file, spec_entry, missing_spec, options);
    }
    let curve = match export.curve() {
        Ok(curve) => curve,
        Err(err) => {
            return Evaluated::Rejected(IngestError::file(
                RejectKind::NoData,
                &file,
                format!("the curve frame is not canonical: {err}"),
            ))
        }
    };
    let meta = &export.metadata;
    let reference_angle = meta.serial.as_deref().and_then(|s| options.reference_angles.get(s)).copied();
    // A reference spring is judged against its certificate, not a part spec.
    let (spec_entry, missing_spec) =
        if reference_angle.is_some() { (None, None) } else { (spec_entry, missing_spec) };
    let mut metric_options = match spec_entry {
        Some(entry) => {
            MetricOptions::from_spec(&entry.spec).with_check_angles(checks.checks(), Some(&entry.spec.part))
        }
        None => MetricOptions::default(),
    };
    if let Some(window) = options.window {
        metric_options.window = window;
    }
    if let Some(angle) = reference_angle {
        metric_options.torque_angles_deg.push(angle);
    }
    let mut metrics = match curve_metrics(&curve, &metric_options) {
        Ok(metrics) => metrics,
        Err(err) => {
            return Evaluated::Rejected(
                IngestError::file(RejectKind::NoData, &file, format!("cannot evaluate the curve: {err}"))
                    .with_format(&export.rig_format),
            )
        }
    };
    let (verdict, findings) = match (spec_entry, missing_spec) {
        (Some(entry), _) => {
            let judgement = judge_with(&metrics, &entry.spec, checks);
            (Some(judgement.verdict), judgement.findings)
        }
        (None, Some(missing)) => (Some(Verdict::Invalid), vec![missing]),
        (None, None) => (None, Vec::new()),
    };
    let theory = spec_entry.and_then(|entry| {
        crate::dynamic::theory(&entry.spec, metrics.rate_nmm_per_deg, &options.physics, &mut metrics.notes)
    });
    let preview = (options.preview_points > 0).then(|| CurvePreview::thinned(&curve, options.preview_points));
    let record = TestRecord {
        test_id: meta.test_id(),
        file,
        content_hash: meta.content_hash.clone(),
        serial: meta.serial.clone(),
        part: meta.part.clone(),
        lot: meta.lot.clone(),
        rig: meta.rig.clone(),
        operator: meta.operator.clone(),
        started: meta.started.clone(),
        rig_format: export.rig_format.clone(),
        spec_file: spec_entry.map(|e| e.path.display().to_string()),
        spec_revision: spec_entry.map(|e| e.spec.revision.clone()),
        metrics,
        swing: None,
        theory,
        verdict,
        findings,
        status: TestStatus::Counted,
    };
    Evaluated::Test { record: Box::new(record), preview }
}

/// The spec that applies to an export, or, when a plant that has specs has none for it,
/// the finding that says so (instead of passing the test unjudged).
pub(crate) fn find_spec<'a>(
    meta: &TestMetadata,
    specs: SpecSource<'a>,
) -> (Option<&'a SpecEntry>, Option<Finding>) {
    match specs {
        SpecSource::Fixed(entry) => (Some(entry), None),
        SpecSource::ByPart(library) => match meta.part.as_deref().and_then(|p| library.get(p)) {
            Some(entry) => (Some(entry), None),
            None => (
                None,
                Some(Finding {
                    characteristic: "spec".into(),
                    class: CharacteristicClass::Critical,
                    value: None,
                    lower: None,
                    upper: None,
                    verdict: Verdict::Invalid,
                    message: match &meta.part {
                        Some(part) => match library.problems_for(part).next() {
                            Some(problem) => {
                                format!("the spec for part `{part}` does not load: {}", problem.reason)
                            }
                            None => format!("no spec for part `{part}` in the plant's parts folder"),
                        },
                        None => "the export names no part number, so no spec applies".into(),
                    },
                }),
            ),
        },
        SpecSource::None => (None, None),
    }
}
