//! The spring physics in a run: free-decay exports analysed and judged, and the drawing's
//! theoretical rate set beside every measured one.
//!
//! A free-decay export (a rig format with `record: free-decay`) never reaches the curve
//! metrics: its time and angle go to the physics crate's swing analysis with the inertia
//! the export states (`inertia_kgm2`, else the spec's `test.inertia_kgm2`), and its figures
//! are judged against the spec's dynamic characteristics. A record the analysis refuses
//! (too short, too damped, fewer than three swings, clipped, no clear equilibrium) is
//! rejected with that reason, like a torque curve that cannot be evaluated; it never gets
//! a number. The test then counts in its lot exactly like a torque-curve test.

use crate::evaluate::{EvaluateOptions, Evaluated};
use crate::plant::{PhysicsConfig, SpecEntry};
use twistlot_ingest::{Export, IngestError, RejectKind};
use twistlot_model::{
    CurveMetrics, Finding, GroundTopic, LotDecision, PartSpec, TestRecord, TestStatus, TheoryRate, Verdict,
};
use twistlot_physics::analyze_swing;
use twistlot_stats::{judge_swing, lot_theory_note, theory_rate};

/// Evaluates one free-decay export; `missing_spec` is the finding for a plant without a
/// spec for its part (see `evaluate::find_spec`).
pub(crate) fn evaluate_decay(
    export: &Export,
    file: String,
    spec_entry: Option<&SpecEntry>,
    missing_spec: Option<Finding>,
    options: &EvaluateOptions,
) -> Evaluated {
    let reject = |message: String| {
        Evaluated::Rejected(
            IngestError::file(RejectKind::Unusable, &file, message).with_format(&export.rig_format),
        )
    };
    let record = match export.decay() {
        Ok(record) => record,
        Err(err) => return reject(format!("the free-decay frame is not canonical: {err}")),
    };
    let meta = &export.metadata;
    let (inertia, inertia_from) = match meta.inertia_kgm2() {
        Err(reason) => return reject(reason),
        Ok(Some(inertia)) => (Some(inertia), Some("export")),
        Ok(None) => match spec_entry.and_then(|e| e.spec.test.inertia_kgm2) {
            Some(inertia) => (Some(inertia), Some("spec")),
            None => (None, None),
        },
    };
    let analysis = match analyze_swing(&record.time_s, &record.angle_deg, inertia, &options.physics.swing) {
        Ok(analysis) => analysis,
        Err(err) => return reject(format!("the free swing cannot be analysed: {err}")),
    };
    let swing = analysis.metrics(inertia_from);
    let (verdict, findings) = match (spec_entry, missing_spec) {
        (Some(entry), _) => {
            let judgement = judge_swing(&swing, &entry.spec);
            (Some(judgement.verdict), judgement.findings)
        }
        (None, Some(missing)) => (Some(Verdict::Invalid), vec![missing]),
        (None, None) => (None, Vec::new()),
    };
    let mut metrics = CurveMetrics {
        notes: vec!["a free-decay record has no torque curve; its figures are under `swing`".into()],
        ..CurveMetrics::default()
    };
    let theory = spec_entry
        .and_then(|entry| theory(&entry.spec, swing.rate_nmm_per_deg, &options.physics, &mut metrics.notes));
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
        swing: Some(swing),
        theory,
        verdict,
        findings,
        status: TestStatus::Counted,
    };
    // The lot chart overlays torque against angle; a swing has no torque to draw.
    Evaluated::Test { record: Box::new(record), preview: None }
}

/// The spec's theoretical rate and `measured`'s ratio to it; when the geometry gives no
/// rate, the reason goes into `notes` and there is no theory.
pub(crate) fn theory(
    spec: &PartSpec,
    measured: Option<f64>,
    physics: &PhysicsConfig,
    notes: &mut Vec<String>,
) -> Option<TheoryRate> {
    match theory_rate(spec, measured, physics.rate_theory_band) {
        Ok(theory) => Some(theory),
        Err(err) => {
            notes.push(format!("theoretical rate not computed from the spec's geometry: {err}"));
            None
        }
    }
}

/// Adds the lot's theory line to its grounds: the theoretical and the mean measured rate,
/// a caution when their ratio leaves the band. It decides nothing.
pub(crate) fn note_theory(decision: &mut LotDecision, tests: &[&TestRecord]) {
    if let Some((text, _)) = lot_theory_note(tests) {
        decision.note(GroundTopic::Evidence, text);
    }
}
