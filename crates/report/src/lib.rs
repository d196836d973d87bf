//! Turns a shift's results and plan into the documents people read: lot reports, the
//! shift summary, the per-test CSV, the plan page and the operators' work lists.
//!
//! For: drawing the report charts and the plan's Gantt chart as inline SVG ([`charts`],
//! [`gantt`]), holding the plain-data
//! contexts the pipeline fills ([`context`]), and rendering them through minijinja
//! templates compiled into the binary that a plant may override file by file ([`render`]).
//!
//! Not for: computing anything statistical, judging parts or lots, or reading rig
//! files. Every number shown arrives ready-made in a context struct; this crate only
//! formats it. It depends on nothing but `twistlot-model`, whose records the contexts
//! embed, so the layers that compute results never have to know how they are shown.
//!
//! Main types: [`Renderer`], [`LotReport`], [`ShiftSummary`], [`TestsCsv`],
//! [`DataSheet`], [`PlanReport`], [`WorklistCsv`], [`SvgMarkup`], [`ReportError`]; chart
//! functions [`strip_chart_svg`], [`curves_svg`], [`oc_curve_svg`] and the plan's
//! [`gantt_svg`]; [`format_metric`] prints a value at its metric's precision.

pub mod charts;
pub mod context;
pub mod format;
pub mod gantt;
pub mod render;

pub use charts::{
    curves_svg, no_data_svg, oc_curve_svg, strip_chart_svg, CurveChart, CurveLine, FreeAngleLimits, OcChart,
    StripChart, StripPoint, SvgMarkup, ToleranceWindow,
};
pub use context::{
    default_cautions, plan_cautions, Charts, DataCell, DataColumn, DataRow, DataSheet, LotReport, PlanReport,
    ShiftSummary, TestsCsv, ValuesChart, WorkStep, WorklistCsv,
};
pub use format::{format_metric, MetricKind};
pub use gantt::{gantt_svg, BarKind, GanttBar, GanttRow};
pub use render::{csv_field, Renderer, TemplateSource};

use std::path::PathBuf;

/// Why a chart or a document could not be produced.
#[derive(Debug, thiserror::Error)]
pub enum ReportError {
    /// A template folder is missing or unreadable.
    #[error("template folder {}: {source}", path.display())]
    TemplateDir {
        /// The folder that was asked for.
        path: PathBuf,
        /// What the file system said.
        source: std::io::Error,
    },
    /// A template failed to load, parse or render.
    #[error("template `{name}`{}: {detail}", line.map(|l| format!(", line {l}")).unwrap_or_default())]
    Template {
        /// The template the error is in (an included template when the fault is there).
        name: String,
        /// The line in that template, when minijinja knows it.
        line: Option<usize>,
        /// What went wrong, with the chain of causes.
        detail: String,
    },
    /// The plotting library refused to draw a chart.
    #[error("chart `{chart}`: {detail}")]
    Chart {
        /// Which chart.
        chart: &'static str,
        /// What the plotting library said.
        detail: String,
    },
}
