//! The shift's own sinks: lot reports and the shift summary, `tests.csv`,
//! `summary.json`, and the plant's exec sink plugins.
//!
//! Every file is written to a temporary name in its folder and then renamed, so a run
//! that stops part-way leaves each output either complete or absent, never half written.

use crate::sink::{FailurePolicy, LotEvent, ShiftSink, ShiftStart, SinkError};
use std::fs::File;
use std::io::{BufWriter, Write};
use std::path::{Path, PathBuf};
use twistlot_model::plugin::SinkManifest;
use twistlot_model::{Approval, DecidingPlan, ShiftRecord, TestRecord, Verdict};
use twistlot_report as report;

/// Writes `bytes` to `path` through a temporary file in the same folder and a rename.
pub fn write_atomic(path: &Path, bytes: &[u8]) -> Result<(), SinkError> {
    let write_error = |source| SinkError::Write { path: path.to_path_buf(), source };
    if let Some(parent) = path.parent() {
        std::fs::create_dir_all(parent).map_err(write_error)?;
    }
    let temporary = temporary_path(path);
    let result = File::create(&temporary).and_then(|mut file| {
        file.write_all(bytes)?;
        file.sync_all()
    });
    result.and_then(|()| std::fs::rename(&temporary, path)).map_err(|source| {
        let _ = std::fs::remove_file(&temporary);
        write_error(source)
    })
}

fn temporary_path(path: &Path) -> PathBuf {
    let name = path.file_name().map(|n| n.to_string_lossy().to_string()).unwrap_or_default();
    path.with_file_name(format!(".{name}.partial"))
}

/// A file name from a lot identifier (lots are free text in exports).
pub fn lot_file_name(lot: &str) -> String {
    let name: String = lot
        .chars()
        .map(|c| if c.is_ascii_alphanumeric() || c == '-' || c == '_' || c == '.' { c } else { '_' })
        .collect();
    if name.is_empty() || name.starts_with('.') {
        format!("lot_{name}")
    } else {
        name
    }
}

/// Lot reports (HTML and Markdown, one pair per lot) and the shift summary page.
pub struct ReportWriter {
    renderer: report::Renderer,
    out_dir: PathBuf,
    shift: String,
    plant: String,
    generated_at: String,
    curves_per_chart: usize,
    approval: Approval,
}

impl ReportWriter {
    /// A writer into `out_dir`, drawing at most `curves_per_chart` curves per lot.
    pub fn new(renderer: report::Renderer, out_dir: &Path, curves_per_chart: usize) -> ReportWriter {
        ReportWriter {
            renderer,
            out_dir: out_dir.to_path_buf(),
            shift: String::new(),
            plant: String::new(),
            generated_at: String::new(),
            curves_per_chart,
            approval: Approval::default(),
        }
    }

    /// The names for the reports' approval block (blank lines where none are given).
    pub fn with_approval(mut self, approval: Approval) -> ReportWriter {
        self.approval = approval;
        self
    }

    fn render(&self, template: &str, context: &impl serde::Serialize) -> Result<String, SinkError> {
        self.renderer
            .render(template, context)
            .map_err(|source| SinkError::Render { what: template.to_string(), source })
    }
}

impl ShiftSink for ReportWriter {
    fn name(&self) -> String {
        "lot reports".into()
    }

    fn start(&mut self, shift: &ShiftStart<'_>) -> Result<(), SinkError> {
        self.shift = shift.shift.to_string();
        self.plant = shift.plant.to_string();
        self.generated_at = shift.generated_at.to_string();
        Ok(())
    }

    fn lot(&mut self, event: &LotEvent<'_>) -> Result<(), SinkError> {
        let record = event.record;
        let tests: Vec<TestRecord> = event.tests.iter().map(|t| (*t).clone()).collect();
        let spec = event.spec.map(|e| (e.spec.clone(), e.path.display().to_string()));
        let mut context = report::LotReport::new(record.clone(), tests, spec);
        context.generated_at = self.generated_at.clone();
        context.shift = self.shift.clone();
        context.plant = self.plant.clone();
        context.unassigned_files = event.unassigned_rejected;
        context.approval = self.approval.clone();
        context.charts = lot_charts(event, self.curves_per_chart);
        let html = self.render("lot_report.html.j2", &context)?;
        write_atomic(&self.out_dir.join(&record.report_html), html.as_bytes())?;
        let md = self.render("lot_report.md.j2", &context)?;
        write_atomic(&self.out_dir.join(&record.report_md), md.as_bytes())
    }

    fn end(&mut self, shift: &ShiftRecord) -> Result<(), SinkError> {
        let context = report::ShiftSummary {
            generated_at: self.generated_at.clone(),
            plant: self.plant.clone(),
            summary: shift.clone(),
        };
        let html = self.render("shift_summary.html.j2", &context)?;
        write_atomic(&self.out_dir.join("shift_summary.html"), html.as_bytes())
    }
}

/// The charts of a lot report; a chart that cannot be drawn shows "no data".
fn lot_charts(event: &LotEvent<'_>, curves_per_chart: usize) -> report::Charts {
    let record = event.record;
    let spec = event.spec.map(|e| &e.spec);
    let counted: Vec<&TestRecord> = event.tests.iter().copied().filter(|t| t.status.is_counted()).collect();
    // A chart that fails to draw becomes a "no data" box rather than failing the report.
    let no_data = |chart: Result<report::SvgMarkup, report::ReportError>, what: &str| {
        chart.unwrap_or_else(|_| report::no_data_svg(what))
    };

    // One strip per characteristic with statistics (rate first), from the counted tests' findings.
    let mut values = Vec::new();
    for stats in &record.statistics {
        let points: Vec<report::StripPoint> = counted
            .iter()
            .filter_map(|t| {
                let finding = t.findings.iter().find(|f| f.characteristic == stats.characteristic)?;
                Some(report::StripPoint { value: finding.value?, verdict: finding.verdict })
            })
            .collect();
        if points.is_empty() {
            continue;
        }
        let nominal = spec.and_then(|s| nominal_of(s, &stats.characteristic));
        // A fitted normal only where the normality test ran and did not reject it.
        let fit = stats
            .capability
            .normal_curve
            .then(|| Some((stats.capability.mean?, stats.capability.sd?)))
            .flatten();
        let chart = report::StripChart {
            characteristic: &stats.characteristic,
            unit: &stats.unit,
            points: &points,
            lower: stats.lower,
            upper: stats.upper,
            nominal,
            normal_fit: fit,
        };
        values.push(report::ValuesChart {
            characteristic: stats.characteristic.clone(),
            svg: no_data(report::strip_chart_svg(&chart), &stats.characteristic),
        });
    }

    let lines: Vec<report::CurveLine> = event
        .curves
        .iter()
        .take(curves_per_chart)
        .map(|curve| report::CurveLine {
            label: curve.label.clone(),
            angle_deg: curve.preview.angle_deg.clone(),
            torque_nmm: curve.preview.torque_nmm.clone(),
            verdict: curve.verdict.unwrap_or(Verdict::Invalid),
        })
        .collect();
    let windows: Vec<report::ToleranceWindow> = spec
        .map(|s| {
            s.characteristics
                .torque_at
                .iter()
                .map(|t| report::ToleranceWindow {
                    angle_deg: t.angle_deg,
                    lower_nmm: t.limits().lower,
                    upper_nmm: t.limits().upper,
                })
                .collect()
        })
        .unwrap_or_default();
    let free_angle = spec.and_then(|s| s.characteristics.free_angle_deg.as_ref()).map(|f| {
        let limits = f.limits();
        report::FreeAngleLimits { lower_deg: limits.lower, upper_deg: limits.upper }
    });
    let curves = report::curves_svg(&report::CurveChart {
        curves: &lines,
        windows: &windows,
        free_angle,
        curves_in_lot: event.curves_seen,
    });

    let (oc, oc_note) = oc_chart(record);
    report::Charts {
        values,
        curves_svg: no_data(curves, "curves"),
        oc_curve_svg: no_data(oc, "OC curve"),
        oc_note,
    }
}

/// The drawing's nominal of a characteristic named as the statistics name it.
fn nominal_of(spec: &twistlot_model::PartSpec, characteristic: &str) -> Option<f64> {
    let c = &spec.characteristics;
    match characteristic {
        "rate" => c.rate_nmm_per_deg.as_ref().map(|r| r.nominal),
        "free_angle" => c.free_angle_deg.as_ref().map(|f| f.nominal),
        other => c
            .torque_at
            .iter()
            .find(|t| twistlot_model::spec::torque_label(t.angle_deg) == other)
            .map(|t| t.nominal_nmm),
    }
}

/// The OC chart of a variables plan that decided a lot.
fn variables_oc_chart(
    v: &twistlot_model::VariablesDecision,
) -> (Result<report::SvgMarkup, report::ReportError>, String) {
    let Some(k) = v.k else {
        return (Ok(report::SvgMarkup::default()), "The variables plan could not be designed.".to_string());
    };
    let p_accept = |pct: f64| {
        if v.sigma_known {
            twistlot_sampling::oc::variables_p_accept_known(v.sample_size, k, pct)
        } else {
            twistlot_sampling::oc::variables_p_accept_unknown(v.sample_size, k, pct)
        }
    };
    let x_max =
        (twistlot_sampling::pct_where_p_accept_falls_to(p_accept, OC_RANGE_P_ACCEPT) * 1.15).min(100.0);
    let points: Vec<(f64, f64)> =
        (0..=80).map(|i| x_max * f64::from(i) / 80.0).map(|x| (x, p_accept(x))).collect();
    let caption = format!("variables on {}: n {}, k {:.3}", v.characteristic, v.sample_size, k);
    let chart = report::oc_curve_svg(&report::OcChart {
        points: &points,
        lot_point: None,
        aql_pct: None,
        caption: &caption,
    });
    let note = format!(
        "Operating characteristic of the variables plan, which decided the lot ({caption}): the probability that a \
         lot of a given percent defective is accepted (one limit, normal values), drawn up to where it falls below \
         {:.0} %. The k-method judges the mean and spread rather than a count, so no observed percent defective is \
         marked.",
        OC_RANGE_P_ACCEPT * 100.0
    );
    (chart, note)
}

/// Below this probability of acceptance the OC chart's range ends: the plan's fall from
/// accepting to rejecting is then in full view whatever its sample size.
const OC_RANGE_P_ACCEPT: f64 = 0.05;

/// The OC chart of the plan that decided the lot (or, for a lot held on the evidence, of
/// the plan with the largest sample), with a sentence saying which and why.
fn oc_chart(record: &twistlot_model::LotRecord) -> (Result<report::SvgMarkup, report::ReportError>, String) {
    let Some(decision) = record.decision.as_ref() else {
        return (Ok(report::SvgMarkup::default()), "No sampling plan applies to this lot.".to_string());
    };
    let lot_size = record.quantity;
    let (class, why) = match decision.deciding_plan() {
        Some(DecidingPlan::Class(class)) => (Some(class), "the plan whose ground decided the lot"),
        Some(DecidingPlan::Variables(v)) => return variables_oc_chart(v),
        None => (
            decision.shown_plan(),
            "no plan decided the lot (it was held on the evidence); shown is the plan with the largest sample",
        ),
    };
    let Some(class) = class else {
        return (Ok(report::SvgMarkup::default()), "No attribute plan applies to this lot.".to_string());
    };
    let plan = &class.plan;
    let p_accept = |pct: f64| {
        twistlot_sampling::oc::attribute_p_accept(plan.sample_size, plan.accept, Some(lot_size), pct)
    };
    let observed = (class.tested > 0).then(|| 100.0 * class.defectives as f64 / class.tested as f64);
    let mut x_max = twistlot_sampling::pct_where_p_accept_falls_to(p_accept, OC_RANGE_P_ACCEPT) * 1.15;
    if let Some(pct) = observed {
        x_max = x_max.max(pct * 1.1);
    }
    let x_max = x_max.min(100.0);
    let points: Vec<(f64, f64)> =
        (0..=80).map(|i| x_max * f64::from(i) / 80.0).map(|x| (x, p_accept(x))).collect();
    let caption = format!(
        "{}: n {}, Ac {} Re {} ({}, letter {})",
        class.class, plan.sample_size, plan.accept, plan.reject, plan.severity, plan.code_letter
    );
    let chart = report::oc_curve_svg(&report::OcChart {
        points: &points,
        lot_point: observed.map(|pct| (pct, p_accept(pct))),
        aql_pct: class.aql_pct,
        caption: &caption,
    });
    let note = format!(
        "Operating characteristic of {why} ({caption}): the probability that a lot of a given percent defective \
         is accepted, drawn up to where it falls below {:.0} %. The marked point is this lot's observed percent \
         defective ({} of {} tested).",
        OC_RANGE_P_ACCEPT * 100.0,
        class.defectives,
        class.tested
    );
    (chart, note)
}

/// `tests.csv`, written row by row as tests arrive.
pub struct TestsCsvWriter {
    renderer: report::Renderer,
    path: PathBuf,
    file: Option<BufWriter<File>>,
    torque_angles: Vec<String>,
    hysteresis_angles: Vec<String>,
}

impl TestsCsvWriter {
    /// A writer of `out_dir/tests.csv`.
    pub fn new(renderer: report::Renderer, out_dir: &Path) -> TestsCsvWriter {
        TestsCsvWriter {
            renderer,
            path: out_dir.join("tests.csv"),
            file: None,
            torque_angles: Vec::new(),
            hysteresis_angles: Vec::new(),
        }
    }

    /// One torque column per angle in `torque_angles` and one hysteresis column per angle
    /// in `hysteresis_angles` (metric map keys such as `60`); values at other angles go
    /// to the `other_angles` column.
    pub fn with_angles(
        mut self,
        torque_angles: Vec<String>,
        hysteresis_angles: Vec<String>,
    ) -> TestsCsvWriter {
        self.torque_angles = torque_angles;
        self.hysteresis_angles = hysteresis_angles;
        self
    }

    fn context(&self, header: bool, rows: Vec<TestRecord>) -> report::TestsCsv {
        report::TestsCsv {
            header,
            torque_angles: self.torque_angles.clone(),
            hysteresis_angles: self.hysteresis_angles.clone(),
            rows,
        }
    }

    fn write(&mut self, context: &report::TestsCsv) -> Result<(), SinkError> {
        let text = self
            .renderer
            .render("tests.csv.j2", context)
            .map_err(|source| SinkError::Render { what: "tests.csv.j2".into(), source })?;
        let path = self.path.clone();
        let file = self.file.as_mut().ok_or_else(|| SinkError::Other("tests.csv is not open".into()))?;
        file.write_all(text.as_bytes()).map_err(|source| SinkError::Write { path, source })
    }
}

impl ShiftSink for TestsCsvWriter {
    fn name(&self) -> String {
        "tests.csv".into()
    }

    fn start(&mut self, _shift: &ShiftStart<'_>) -> Result<(), SinkError> {
        let write_error = |source| SinkError::Write { path: self.path.clone(), source };
        if let Some(parent) = self.path.parent() {
            std::fs::create_dir_all(parent).map_err(write_error)?;
        }
        let file = File::create(temporary_path(&self.path)).map_err(write_error)?;
        self.file = Some(BufWriter::new(file));
        let context = self.context(true, Vec::new());
        self.write(&context)
    }

    fn test(&mut self, test: &TestRecord) -> Result<(), SinkError> {
        let context = self.context(false, vec![test.clone()]);
        self.write(&context)
    }

    fn end(&mut self, _shift: &ShiftRecord) -> Result<(), SinkError> {
        let path = self.path.clone();
        let write_error = |source| SinkError::Write { path: path.clone(), source };
        let file = self.file.take().ok_or_else(|| SinkError::Other("tests.csv is not open".into()))?;
        let file = file.into_inner().map_err(|e| write_error(e.into_error()))?;
        file.sync_all().map_err(write_error)?;
        std::fs::rename(temporary_path(&path), &path).map_err(write_error)
    }
}

/// `summary.json`, written when the shift ends.
pub struct SummaryJsonWriter {
    path: PathBuf,
}

impl SummaryJsonWriter {
    /// A writer of `out_dir/summary.json`.
    pub fn new(out_dir: &Path) -> SummaryJsonWriter {
        SummaryJsonWriter { path: out_dir.join("summary.json") }
    }
}

impl ShiftSink for SummaryJsonWriter {
    fn name(&self) -> String {
        "summary.json".into()
    }

    fn end(&mut self, shift: &ShiftRecord) -> Result<(), SinkError> {
        let json = serde_json::to_string_pretty(shift).map_err(|e| SinkError::Other(e.to_string()))?;
        write_atomic(&self.path, json.as_bytes())
    }
}

/// An exec sink plugin: each decided lot goes to a program as JSON on stdin.
pub struct ExecSink {
    manifest: SinkManifest,
    folder: PathBuf,
    out_dir: PathBuf,
}

impl ExecSink {
    /// The plugin `manifest`, run in `folder`, with `{out}` standing for `out_dir`.
    pub fn new(manifest: SinkManifest, folder: PathBuf, out_dir: &Path) -> ExecSink {
        let out_dir = std::path::absolute(out_dir).unwrap_or_else(|_| out_dir.to_path_buf());
        ExecSink { manifest, folder, out_dir }
    }
}

impl ShiftSink for ExecSink {
    fn name(&self) -> String {
        format!("sink `{}`", self.manifest.name)
    }

    fn failure_policy(&self) -> FailurePolicy {
        FailurePolicy::Record
    }

    fn lot(&mut self, event: &LotEvent<'_>) -> Result<(), SinkError> {
        let counted: Vec<&TestRecord> =
            event.tests.iter().copied().filter(|t| t.status.is_counted()).collect();
        let request = serde_json::json!({
            "protocol": twistlot_model::plugin::EXEC_PROTOCOL,
            "plugin": self.manifest.name,
            "lot": event.record,
            "tests": counted,
        });
        twistlot_ingest::exec::run_program(
            &self.manifest.exec,
            &self.folder,
            &[("{out}", &self.out_dir.to_string_lossy())],
            request.to_string().as_bytes(),
        )
        .map(|_| ())
        .map_err(SinkError::Plugin)
    }
}

/// Counts of a lot's counted tests by verdict: (tested, failed, invalid).
pub fn verdict_counts<'a>(tests: impl Iterator<Item = &'a TestRecord>) -> (u64, u64, u64) {
    tests.filter(|t| t.status.is_counted()).fold((0, 0, 0), |(n, failed, invalid), t| match t.verdict {
        Some(Verdict::Fail) => (n + 1, failed + 1, invalid),
        Some(Verdict::Invalid) | None => (n + 1, failed, invalid + 1),
        Some(Verdict::Pass) => (n + 1, failed, invalid),
    })
}
