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
use twistlot_model::{ShiftRecord, TestRecord, Verdict};
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
        }
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
        context.rejected_files = event.rejected.to_vec();
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

/// The three charts of a lot report; a chart that cannot be drawn shows "no data".
fn lot_charts(event: &LotEvent<'_>, curves_per_chart: usize) -> report::Charts {
    let record = event.record;
    let spec = event.spec.map(|e| &e.spec);
    let counted = || event.tests.iter().filter(|t| t.status.is_counted());
    // A swing-tested part's rate is its dynamic rate, with the dynamic tolerance.
    let rates: Vec<f64> = counted().filter_map(|t| t.measured_rate_nmm_per_deg()).collect();
    let c = spec.map(|s| &s.characteristics);
    let rate_spec = c.and_then(|c| {
        c.rate_nmm_per_deg.as_ref().or_else(|| c.dynamic.as_ref().and_then(|d| d.rate_nmm_per_deg.as_ref()))
    });
    let rate_stats = record.statistics.iter().find(|s| s.characteristic == "rate").or_else(|| {
        record.statistics.iter().find(|s| s.characteristic == twistlot_model::spec::DYNAMIC_RATE)
    });
    // A fitted normal curve only where the normality test ran and did not reject it.
    let fit = rate_stats
        .filter(|s| s.capability.normal_curve)
        .and_then(|s| Some((s.capability.mean?, s.capability.sd?)));
    let histogram = report::rate_histogram_svg(
        &rates,
        rate_spec.and_then(|r| r.limits().lower),
        rate_spec.and_then(|r| r.limits().upper),
        rate_spec.map(|r| r.nominal),
        fit,
        "N·mm/°",
    );
    let lines: Vec<report::CurveLine> = event
        .curves
        .iter()
        .take(curves_per_chart)
        .map(|(label, flagged, preview)| report::CurveLine {
            label: label.clone(),
            angle_deg: preview.angle_deg.clone(),
            torque_nmm: preview.torque_nmm.clone(),
            flagged: *flagged,
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
    let curves = report::curves_svg(&lines, &windows);
    let shown = record.decision.as_ref().and_then(|d| d.shown_plan());
    let (oc_points, oc_lot) = match shown {
        Some(class) => {
            let plan = &class.plan;
            let points: Vec<(f64, f64)> = twistlot_sampling::attribute_oc(
                plan.sample_size,
                plan.accept,
                Some(record.quantity),
                30.0,
                61,
            )
            .into_iter()
            .map(|pt| (pt.defective_pct, pt.p_accept))
            .collect();
            let observed = (class.tested > 0).then(|| {
                let pct = 100.0 * class.defectives as f64 / class.tested as f64;
                let p_accept = twistlot_sampling::oc::attribute_p_accept(
                    plan.sample_size,
                    plan.accept,
                    Some(record.quantity),
                    pct,
                );
                (pct, p_accept)
            });
            (points, observed)
        }
        None => (Vec::new(), None),
    };
    let oc = report::oc_curve_svg(&oc_points, oc_lot, "probability of accepting a lot");
    let chart = |result: Result<report::SvgMarkup, report::ReportError>, empty: &str| {
        result.or_else(|_| report::rate_histogram_svg(&[], None, None, None, None, empty)).unwrap_or_default()
    };
    report::Charts {
        rate_histogram_svg: chart(histogram, "rate"),
        curves_svg: chart(curves, "curves"),
        oc_curve_svg: chart(oc, "OC curve"),
    }
}

/// `tests.csv`, written row by row as tests arrive.
pub struct TestsCsvWriter {
    renderer: report::Renderer,
    path: PathBuf,
    file: Option<BufWriter<File>>,
}

impl TestsCsvWriter {
    /// A writer of `out_dir/tests.csv`.
    pub fn new(renderer: report::Renderer, out_dir: &Path) -> TestsCsvWriter {
        TestsCsvWriter { renderer, path: out_dir.join("tests.csv"), file: None }
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
        self.write(&report::TestsCsv { header: true, rows: Vec::new() })
    }

    fn test(&mut self, test: &TestRecord) -> Result<(), SinkError> {
        self.write(&report::TestsCsv { header: false, rows: vec![test.clone()] })
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
