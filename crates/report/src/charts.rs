//! Report charts as inline SVG, in the project's own look.
//!
//! Each function returns an [`SvgMarkup`]: a complete `<svg>` element with width,
//! height and viewBox and no XML prolog, ready to sit inside an HTML page. Text is
//! written as SVG `<text>` elements, so no font file is read; the viewer's
//! `sans-serif` draws it. Bad points (NaN, infinities) are left out rather than
//! failing the report, and a chart with nothing to show becomes a small "no data" box.
//!
//! The charts show what the lot's decision rests on, not a general statistics layout:
//! - [`strip_chart_svg`]: every part's value of one characteristic as a dot, stacked
//!   where values coincide, over the drawing's tolerance as a shaded band whose edges are
//!   labelled as the drawing's limits; a normal model is drawn only when the caller says
//!   normality was not rejected.
//! - [`curves_svg`]: the torque–angle curves, failed and invalid parts in their own
//!   colours and line styles with their serials in a margin column (labels never
//!   overlap), the torque limits at the test angles and the free-angle limits; when not
//!   every curve is drawn the caption says how many were.
//! - [`oc_curve_svg`]: the deciding plan's operating characteristic over a range the
//!   caller chooses from the plan, with the AQL and the lot's observed percent defective.
//!
//! Colours come from the Okabe–Ito set, chosen because it stays distinguishable under
//! the common colour-vision deficiencies; every distinction that matters (pass, fail,
//! invalid, limits) is also made by shape, line style or width, not by colour alone.

use crate::ReportError;
use plotters::coord::types::RangedCoordf64;
use plotters::coord::Shift;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};
use serde::{Deserialize, Deserializer, Serialize, Serializer};
use std::fmt;
use twistlot_model::Verdict;

pub(crate) const INK: RGBColor = RGBColor(0x22, 0x22, 0x22);
pub(crate) const SKY: RGBColor = RGBColor(0x56, 0xB4, 0xE9);
pub(crate) const BLUE: RGBColor = RGBColor(0x00, 0x72, 0xB2);
pub(crate) const GREEN: RGBColor = RGBColor(0x00, 0x9E, 0x73);
const ORANGE: RGBColor = RGBColor(0xE6, 0x9F, 0x00);
pub(crate) const VERMILLION: RGBColor = RGBColor(0xD5, 0x5E, 0x00);
const PURPLE: RGBColor = RGBColor(0xCC, 0x79, 0xA7);
/// The drawing's tolerance band: a pale tint of the limit colour.
const BAND: RGBColor = RGBColor(0xDF, 0xF2, 0xEA);
pub(crate) const GRID_LIGHT: RGBColor = RGBColor(0xEE, 0xEE, 0xEE);
pub(crate) const GRID_BOLD: RGBColor = RGBColor(0xD4, 0xD4, 0xD4);
pub(crate) const GUIDE: RGBColor = RGBColor(0x88, 0x88, 0x88);
pub(crate) const FONT: &str = "sans-serif";
// plotters' SVG backend writes font-size as the given size / 1.24, so these are
// chosen to come out at about 14.5, 12 and 11 px.
pub(crate) const CAPTION_PX: f64 = 18.0;
pub(crate) const LABEL_PX: f64 = 15.0;
pub(crate) const SMALL_PX: f64 = 13.5;

/// Pixel size of the OC chart.
const WIDE: (u32, u32) = (760, 380);
/// Pixel size of the curve overlay, taller because curves need vertical resolution.
const TALL: (u32, u32) = (760, 460);
/// Width of a strip chart; its height grows when a normal model is drawn.
const STRIP_WIDTH: u32 = 760;
/// Points kept per flagged curve: more adds file size without visible detail at this width.
const MAX_POINTS_PER_CURVE: usize = 600;
/// Points kept per passing curve: they are drawn thin and many, so fewer points suffice.
const MAX_POINTS_PER_PASSING_CURVE: usize = 160;
/// Flagged curves named in the margin; beyond this a "+N more" line points to the data sheet.
const MAX_CURVE_LABELS: usize = 16;
/// Width of the margin column that holds the curve labels, px.
const LABEL_COLUMN_PX: u32 = 150;

/// SVG markup for embedding in a report.
///
/// Markup made by this crate's chart functions is inserted into HTML unescaped. Markup
/// that arrived any other way (deserialized, for instance) is not trusted: templates
/// see it as missing and print "—", so foreign text can never become live HTML.
#[derive(Debug, Clone, PartialEq)]
pub struct SvgMarkup {
    markup: String,
    generated: bool,
}

impl SvgMarkup {
    fn generated(markup: String) -> Self {
        SvgMarkup { markup, generated: true }
    }

    /// The markup text.
    pub fn as_str(&self) -> &str {
        &self.markup
    }

    /// Whether this crate drew it (and templates may insert it unescaped).
    pub fn is_generated(&self) -> bool {
        self.generated
    }

    /// The markup text, owned.
    pub fn into_string(self) -> String {
        self.markup
    }
}

impl Default for SvgMarkup {
    /// An empty chart; templates print nothing for it.
    fn default() -> Self {
        SvgMarkup::generated(String::new())
    }
}

impl fmt::Display for SvgMarkup {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&self.markup)
    }
}

impl From<SvgMarkup> for String {
    fn from(svg: SvgMarkup) -> String {
        svg.markup
    }
}

impl Serialize for SvgMarkup {
    fn serialize<S: Serializer>(&self, serializer: S) -> Result<S::Ok, S::Error> {
        if minijinja::value::serializing_for_value() {
            if self.generated {
                minijinja::Value::from_safe_string(self.markup.clone()).serialize(serializer)
            } else {
                serializer.serialize_none()
            }
        } else {
            serializer.serialize_str(&self.markup)
        }
    }
}

impl<'de> Deserialize<'de> for SvgMarkup {
    fn deserialize<D: Deserializer<'de>>(deserializer: D) -> Result<Self, D::Error> {
        let markup = String::deserialize(deserializer)?;
        Ok(SvgMarkup { markup, generated: false })
    }
}

/// One part's value of a characteristic, for a strip chart.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct StripPoint {
    /// The measured value.
    pub value: f64,
    /// The verdict on this characteristic: pass, fail (outside the drawing) or invalid.
    pub verdict: Verdict,
}

/// The individual values of one characteristic against the drawing's limits.
#[derive(Debug, Clone, Copy)]
pub struct StripChart<'a> {
    /// Characteristic name, e.g. `rate`, `torque@60`, `free_angle`.
    pub characteristic: &'a str,
    /// Unit label, e.g. `N·mm/°`.
    pub unit: &'a str,
    /// One point per part.
    pub points: &'a [StripPoint],
    /// The drawing's lower limit.
    pub lower: Option<f64>,
    /// The drawing's upper limit.
    pub upper: Option<f64>,
    /// The drawing's nominal.
    pub nominal: Option<f64>,
    /// Mean and standard deviation of a normal model; give it only when the lot's values
    /// passed the normality test, because a drawn curve reads as a claim about the lot.
    pub normal_fit: Option<(f64, f64)>,
}

/// Every part's value as a dot over the drawing's tolerance band (see the module doc).
pub fn strip_chart_svg(strip: &StripChart<'_>) -> Result<SvgMarkup, ReportError> {
    const CHART: &str = "individual values";
    let points: Vec<StripPoint> = strip.points.iter().copied().filter(|p| p.value.is_finite()).collect();
    if points.is_empty() {
        return Ok(no_data(CHART));
    }
    let lower = strip.lower.filter(|v| v.is_finite());
    let upper = strip.upper.filter(|v| v.is_finite());
    let nominal = strip.nominal.filter(|v| v.is_finite());
    let fit = strip.normal_fit.filter(|(mean, sd)| mean.is_finite() && sd.is_finite() && *sd > 0.0);
    let values = points.iter().map(|p| p.value);
    let Some((x_lo, x_hi)) = usable(padded(span_of(values.chain(lower).chain(upper).chain(nominal)), 0.08))
    else {
        return Ok(no_data(CHART));
    };
    let count = |verdict: Verdict| points.iter().filter(|p| p.verdict == verdict).count();
    let (within, outside, invalid) = (count(Verdict::Pass), count(Verdict::Fail), count(Verdict::Invalid));
    let height = if fit.is_some() { 250 } else { 200 };
    let x_decimals = tick_decimals(x_hi - x_lo);
    // Caption line, then three rows for limit and nominal labels above the plot.
    let top_margin = 76;

    draw(CHART, (STRIP_WIDTH, height), |root| {
        let mut chart = ChartBuilder::on(root)
            .margin_left(14)
            .margin_right(28)
            .margin_top(top_margin)
            .margin_bottom(6)
            .x_label_area_size(42)
            .y_label_area_size(8)
            .build_cartesian_2d(x_lo..x_hi, 0.0..1.0)?;
        chart
            .configure_mesh()
            .disable_y_mesh()
            .disable_y_axis()
            .y_labels(0)
            .light_line_style(GRID_LIGHT)
            .bold_line_style(GRID_BOLD)
            .max_light_lines(1)
            .axis_style(INK)
            .label_style((FONT, LABEL_PX).into_font().color(&INK))
            .x_desc(format!("{} ({})", strip.characteristic, strip.unit))
            .x_label_formatter(&|v| format!("{:.*}", x_decimals, v))
            .draw()?;

        if lower.is_some() || upper.is_some() {
            let band = [(lower.unwrap_or(x_lo), 0.0), (upper.unwrap_or(x_hi), 1.0)];
            chart.draw_series(std::iter::once(Rectangle::new(band, BAND.filled())))?;
            for edge in [lower, upper].into_iter().flatten() {
                chart.draw_series(LineSeries::new([(edge, 0.0), (edge, 1.0)], GREEN.stroke_width(2)))?;
            }
        }
        if let Some(x) = nominal {
            chart.draw_series(LineSeries::new([(x, 0.0), (x, 1.0)], INK.mix(0.5).stroke_width(1)))?;
        }
        // Dots stacked in pixel columns one dot wide, so coinciding values stay visible.
        let (x_pixels, y_pixels) = chart.plotting_area().get_pixel_range();
        let plot_w = f64::from((x_pixels.end - x_pixels.start).max(1));
        let plot_h = f64::from((y_pixels.end - y_pixels.start).max(1));
        let diameter = 9.0;
        let mut sorted = points.clone();
        sorted.sort_by(|a, b| a.value.total_cmp(&b.value));
        let column_of = |v: f64| ((v - x_lo) / (x_hi - x_lo) * plot_w / diameter).floor() as i64;
        let mut heights: std::collections::BTreeMap<i64, usize> = std::collections::BTreeMap::new();
        for p in &sorted {
            *heights.entry(column_of(p.value)).or_default() += 1;
        }
        let tallest = heights.values().copied().max().unwrap_or(1) as f64;
        // Room for the model's peak too, so the dots and the model share one scale.
        let column_width = diameter * (x_hi - x_lo) / plot_w;
        let expected_at =
            |x: f64, (mean, sd): (f64, f64)| points.len() as f64 * column_width * normal_pdf(x, mean, sd);
        let model_peak = fit.map_or(0.0, |f| expected_at(f.0, f));
        let step = diameter.min((plot_h - 6.0) / tallest.max(model_peak)).max(1.0);
        if let Some(model) = fit {
            // The model as dots it expects per column: a dot plot is a histogram whose bins
            // are one dot wide, so the curve and the stacks are read on one scale.
            // Drawn where it expects at least a fiftieth of a dot, not as a line along the axis.
            let steps = 200;
            let curve = (0..=steps)
                .map(|i| x_lo + (x_hi - x_lo) * i as f64 / steps as f64)
                .filter(|x| expected_at(*x, model) >= 0.02)
                .map(|x| (x, ((3.0 + expected_at(x, model) * step) / plot_h).min(1.0)));
            chart.draw_series(LineSeries::new(curve, ORANGE.stroke_width(2)))?;
        }
        heights.clear();
        for p in &sorted {
            let level = heights.entry(column_of(p.value)).or_default();
            let y = (3.0 + (*level as f64 + 0.5) * step) / plot_h;
            *level += 1;
            let at = (p.value, y);
            match p.verdict {
                Verdict::Pass => {
                    chart.draw_series(std::iter::once(Circle::new(at, 4, BLUE.filled())))?;
                }
                Verdict::Fail => {
                    chart.draw_series(std::iter::once(TriangleMarker::new(at, 6, VERMILLION.filled())))?;
                }
                Verdict::Invalid => {
                    chart.draw_series(std::iter::once(Circle::new(at, 4, PURPLE.stroke_width(2))))?;
                }
            }
        }

        // Labels of the limits and the nominal, in rows above the plot that never overlap.
        let plot_top = y_pixels.start;
        let mut rows =
            LabelRows::new(&[plot_top - 4, plot_top - 20, plot_top - 36], (2, STRIP_WIDTH as i32 - 2));
        let x_px = |x: f64| chart.backend_coord(&(x, 0.0)).0;
        let with_unit = |x: f64| match strip.unit {
            "°" => format!("{}°", sig(x)),
            "" => sig(x),
            unit => format!("{} {unit}", sig(x)),
        };
        let mut labels: Vec<(String, i32, HPos, RGBColor)> = Vec::new();
        if let Some(x) = lower {
            labels.push((format!("drawing min {}", with_unit(x)), x_px(x), HPos::Left, GREEN));
        }
        if let Some(x) = upper {
            labels.push((format!("drawing max {}", with_unit(x)), x_px(x), HPos::Right, GREEN));
        }
        if let Some(x) = nominal {
            labels.push((format!("nominal {}", sig(x)), x_px(x), HPos::Center, INK));
        }
        for (text, x, h_pos, colour) in labels {
            let (left, y) = rows.place(x, h_pos, text_width_px(&text, SMALL_PX));
            let style = (FONT, SMALL_PX).into_font().color(&colour).pos(Pos::new(HPos::Left, VPos::Bottom));
            root.draw(&Text::new(text, (left, y), style))?;
        }

        let caption = format!("{}: {} parts", strip.characteristic, points.len());
        let caption_style = (FONT, CAPTION_PX).into_font().color(&INK).pos(Pos::new(HPos::Left, VPos::Top));
        root.draw(&Text::new(caption, (14, 6), caption_style))?;
        let mut legend = Legend::right_aligned(STRIP_WIDTH as i32 - 14, 16);
        if let Some((mean, sd)) = fit {
            legend.item(
                root,
                &format!("normal model, mean {} sd {}", sig(mean), sig(sd)),
                Swatch::Line(ORANGE),
            )?;
        }
        if invalid > 0 {
            legend.item(root, &format!("invalid ({invalid})"), Swatch::Ring(PURPLE))?;
        }
        legend.item(root, &format!("outside drawing ({outside})"), Swatch::Triangle(VERMILLION))?;
        legend.item(root, &format!("within drawing ({within})"), Swatch::Dot(BLUE))?;
        Ok(())
    })
}

/// One torque-vs-angle curve to overlay.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct CurveLine {
    /// Shown beside failed and invalid curves (usually the serial).
    pub label: String,
    /// Angles in degrees.
    pub angle_deg: Vec<f64>,
    /// Torques in N·mm, same length as `angle_deg`.
    pub torque_nmm: Vec<f64>,
    /// The test's verdict: failed and invalid curves get their own colour, style and label.
    pub verdict: Verdict,
}

/// A torque tolerance at one angle, drawn as a vertical bar.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct ToleranceWindow {
    /// Angle of the check in degrees.
    pub angle_deg: f64,
    /// Lowest torque allowed in N·mm, when there is a lower limit.
    pub lower_nmm: Option<f64>,
    /// Highest torque allowed in N·mm, when there is an upper limit.
    pub upper_nmm: Option<f64>,
}

/// The drawing's free-angle limits, drawn as a bar along zero torque.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct FreeAngleLimits {
    /// Smallest free angle allowed, degrees.
    pub lower_deg: Option<f64>,
    /// Largest free angle allowed, degrees.
    pub upper_deg: Option<f64>,
}

/// What the curve overlay shows.
#[derive(Debug, Clone, Copy)]
pub struct CurveChart<'a> {
    /// The curves kept for the chart, failed and invalid ones first.
    pub curves: &'a [CurveLine],
    /// Torque limits at the test angles.
    pub windows: &'a [ToleranceWindow],
    /// Free-angle limits, when the drawing gives them.
    pub free_angle: Option<FreeAngleLimits>,
    /// Tests of the lot that had a curve; when more than are drawn, the caption says so.
    pub curves_in_lot: usize,
}

/// The lot's torque–angle curves with the drawing's limits (see the module doc).
pub fn curves_svg(overlay: &CurveChart<'_>) -> Result<SvgMarkup, ReportError> {
    const CHART: &str = "torque curves";
    let lines: Vec<(&CurveLine, Vec<(f64, f64)>)> = overlay
        .curves
        .iter()
        .map(|c| {
            let points: Vec<(f64, f64)> = c
                .angle_deg
                .iter()
                .zip(&c.torque_nmm)
                .map(|(a, t)| (*a, *t))
                .filter(|(a, t)| a.is_finite() && t.is_finite())
                .collect();
            let max =
                if c.verdict == Verdict::Pass { MAX_POINTS_PER_PASSING_CURVE } else { MAX_POINTS_PER_CURVE };
            (c, thin(&points, max))
        })
        .filter(|(_, points)| points.len() >= 2)
        .collect();
    if lines.is_empty() {
        return Ok(no_data(CHART));
    }
    let windows: Vec<ToleranceWindow> = overlay
        .windows
        .iter()
        .filter(|w| w.angle_deg.is_finite())
        .map(|w| ToleranceWindow {
            angle_deg: w.angle_deg,
            lower_nmm: w.lower_nmm.filter(|v| v.is_finite()),
            upper_nmm: w.upper_nmm.filter(|v| v.is_finite()),
        })
        .filter(|w| w.lower_nmm.is_some() || w.upper_nmm.is_some())
        .collect();
    let free = overlay
        .free_angle
        .map(|f| (f.lower_deg.filter(|v| v.is_finite()), f.upper_deg.filter(|v| v.is_finite())))
        .filter(|(lo, hi)| lo.is_some() || hi.is_some());

    let all_points = || lines.iter().flat_map(|(_, p)| p.iter());
    let free_ends = free.iter().flat_map(|(lo, hi)| lo.iter().chain(hi.iter()).copied());
    let x_range = usable(padded(
        span_of(all_points().map(|p| p.0).chain(windows.iter().map(|w| w.angle_deg)).chain(free_ends)),
        0.04,
    ));
    let zero = free.map(|_| 0.0);
    let y_range = usable(padded(
        span_of(
            all_points()
                .map(|p| p.1)
                .chain(windows.iter().flat_map(|w| w.lower_nmm.into_iter().chain(w.upper_nmm)))
                .chain(zero),
        ),
        0.08,
    ));
    let (Some((x_lo, x_hi)), Some((y_lo, y_hi))) = (x_range, y_range) else {
        return Ok(no_data(CHART));
    };
    let cap_half_width = (x_hi - x_lo) * 0.012;
    let x_decimals = tick_decimals(x_hi - x_lo);
    let y_decimals = tick_decimals(y_hi - y_lo);
    let count = |verdict: Verdict| lines.iter().filter(|(c, _)| c.verdict == verdict).count();
    let (passed, failed, invalid) = (count(Verdict::Pass), count(Verdict::Fail), count(Verdict::Invalid));
    let drawn = lines.len();
    let in_lot = overlay.curves_in_lot.max(drawn);
    let caption = if drawn < in_lot {
        format!("{drawn} of {in_lot} curves drawn (failed and invalid first)")
    } else {
        format!("all {drawn} curves")
    };

    draw(CHART, TALL, |root| {
        let mut chart = ChartBuilder::on(root)
            .margin(14)
            .margin_top(40)
            .margin_right(LABEL_COLUMN_PX)
            .x_label_area_size(44)
            .y_label_area_size(64)
            .build_cartesian_2d(x_lo..x_hi, y_lo..y_hi)?;
        draw_mesh(&mut chart, "angle (°)", "torque (N·mm)", &|v| format!("{:.*}", x_decimals, v), &|v| {
            format!("{:.*}", y_decimals, v)
        })?;

        let passing_style = BLUE.mix(0.4).stroke_width(1);
        let failed_style = VERMILLION.stroke_width(2);
        let invalid_style = PURPLE.stroke_width(2);
        let window_style = INK.stroke_width(3);
        let free_style = GREEN.mix(0.85).stroke_width(6);

        // Passing curves first so that flagged ones are drawn over them.
        for (i, (_, points)) in lines.iter().filter(|(c, _)| c.verdict == Verdict::Pass).enumerate() {
            let series = chart.draw_series(LineSeries::new(points.iter().copied(), passing_style))?;
            if i == 0 {
                series
                    .label(format!("within the drawing ({passed})"))
                    .legend(move |(x, y)| PathElement::new(vec![(x, y), (x + 18, y)], passing_style));
            }
        }
        for (i, (_, points)) in lines.iter().filter(|(c, _)| c.verdict == Verdict::Invalid).enumerate() {
            let series =
                chart.draw_series(DashedLineSeries::new(points.iter().copied(), 7, 4, invalid_style))?;
            if i == 0 {
                series
                    .label(format!("invalid, dashed ({invalid})"))
                    .legend(move |(x, y)| PathElement::new(vec![(x, y), (x + 18, y)], invalid_style));
            }
        }
        for (i, (_, points)) in lines.iter().filter(|(c, _)| c.verdict == Verdict::Fail).enumerate() {
            let series = chart.draw_series(LineSeries::new(points.iter().copied(), failed_style))?;
            if i == 0 {
                series
                    .label(format!("failed ({failed})"))
                    .legend(move |(x, y)| PathElement::new(vec![(x, y), (x + 18, y)], failed_style));
            }
        }

        for (i, w) in windows.iter().enumerate() {
            let a = w.angle_deg;
            // A one-sided limit runs to the plot edge with no cap on the open end.
            let bottom = w.lower_nmm.unwrap_or(y_lo);
            let top = w.upper_nmm.unwrap_or(y_hi);
            let series = chart.draw_series(LineSeries::new([(a, bottom), (a, top)], window_style))?;
            if i == 0 {
                series
                    .label("drawing's torque limits")
                    .legend(move |(x, y)| PathElement::new(vec![(x, y), (x + 18, y)], window_style));
            }
            for cap in [w.lower_nmm, w.upper_nmm].into_iter().flatten() {
                chart.draw_series(LineSeries::new(
                    [(a - cap_half_width, cap), (a + cap_half_width, cap)],
                    INK.stroke_width(2),
                ))?;
            }
            let style = (FONT, SMALL_PX).into_font().color(&INK).pos(Pos::new(HPos::Center, VPos::Bottom));
            chart.draw_series(std::iter::once(Text::new(format!("@{}°", sig(a)), (a, top), style)))?;
        }

        if let Some((lo, hi)) = free {
            let (start, end) = (lo.unwrap_or(x_lo), hi.unwrap_or(x_hi));
            let series = chart.draw_series(LineSeries::new([(start, 0.0), (end, 0.0)], free_style))?;
            series
                .label("drawing's free-angle limits (at zero torque)")
                .legend(move |(x, y)| PathElement::new(vec![(x, y), (x + 18, y)], free_style));
            let tick = (y_hi - y_lo) * 0.025;
            for edge in [lo, hi].into_iter().flatten() {
                chart.draw_series(LineSeries::new([(edge, -tick), (edge, tick)], GREEN.stroke_width(2)))?;
            }
        }

        chart
            .configure_series_labels()
            .position(SeriesLabelPosition::UpperLeft)
            .background_style(WHITE.mix(0.92))
            .border_style(GRID_BOLD)
            .label_font((FONT, SMALL_PX).into_font().color(&INK))
            .draw()?;

        // Serials of flagged curves in the margin column, spread so that none overlap,
        // each tied to its curve's highest point by a thin leader.
        let (x_pixels, y_pixels) = chart.plotting_area().get_pixel_range();
        let flagged: Vec<(&CurveLine, (f64, f64))> = lines
            .iter()
            .filter(|(c, _)| c.verdict != Verdict::Pass && !c.label.is_empty())
            .map(|(c, points)| {
                let peak = points.iter().copied().fold(points[0], |a, b| if b.1 > a.1 { b } else { a });
                (*c, peak)
            })
            .collect();
        let shown = flagged.len().min(MAX_CURVE_LABELS);
        let mut anchors: Vec<(i32, i32, &CurveLine)> = flagged[..shown]
            .iter()
            .map(|(c, peak)| {
                let (x, y) = chart.backend_coord(peak);
                (x, y, *c)
            })
            .collect();
        anchors.sort_by_key(|(_, y, _)| *y);
        let wanted: Vec<i32> = anchors.iter().map(|(_, y, _)| *y).collect();
        let bottom = y_pixels.end - if flagged.len() > shown { 18 } else { 0 };
        let spread = spread_apart(&wanted, 15, y_pixels.start + 6, bottom - 6);
        let label_x = x_pixels.end + 12;
        for ((x, y, curve), label_y) in anchors.iter().zip(spread) {
            let colour = if curve.verdict == Verdict::Fail { VERMILLION } else { PURPLE };
            root.draw(&PathElement::new(
                vec![(*x + 2, *y), (label_x - 3, label_y)],
                colour.mix(0.7).stroke_width(1),
            ))?;
            let style = (FONT, SMALL_PX).into_font().color(&colour).pos(Pos::new(HPos::Left, VPos::Center));
            root.draw(&Text::new(
                clip_label(&curve.label, LABEL_COLUMN_PX - 16, SMALL_PX),
                (label_x, label_y),
                style,
            ))?;
        }
        if flagged.len() > shown {
            let style = (FONT, SMALL_PX).into_font().color(&INK).pos(Pos::new(HPos::Left, VPos::Center));
            let more = format!("+{} more (data sheet)", flagged.len() - shown);
            root.draw(&Text::new(more, (label_x, y_pixels.end - 8), style))?;
        }

        let caption_style = (FONT, CAPTION_PX).into_font().color(&INK).pos(Pos::new(HPos::Left, VPos::Top));
        root.draw(&Text::new(caption, (14, 8), caption_style))?;
        Ok(())
    })
}

/// What the OC chart shows.
#[derive(Debug, Clone, Copy)]
pub struct OcChart<'a> {
    /// (percent defective, probability of acceptance) along the plan's curve, over the
    /// range the caller chose for the plan (e.g. up to where Pa falls below 5 %).
    pub points: &'a [(f64, f64)],
    /// The lot's observed percent defective and the plan's Pa there.
    pub lot_point: Option<(f64, f64)>,
    /// The plan's AQL, percent, when it has one.
    pub aql_pct: Option<f64>,
    /// The plan, in words, above the chart.
    pub caption: &'a str,
}

/// The deciding plan's operating characteristic curve (see the module doc).
pub fn oc_curve_svg(oc: &OcChart<'_>) -> Result<SvgMarkup, ReportError> {
    const CHART: &str = "OC curve";
    // Percent defective lies in 0..=100 and a probability in 0..=1; anything else is
    // not a point of an OC curve, and leaving it out keeps the axes meaningful.
    let on_chart = |(x, y): &(f64, f64)| (0.0..=100.0).contains(x) && (0.0..=1.0).contains(y);
    let mut curve: Vec<(f64, f64)> = oc.points.iter().copied().filter(on_chart).collect();
    if curve.is_empty() {
        return Ok(no_data(CHART));
    }
    curve.sort_by(|a, b| a.0.total_cmp(&b.0));
    let lot_point = oc.lot_point.filter(on_chart);
    let aql = oc.aql_pct.filter(|a| a.is_finite() && (0.0..=100.0).contains(a));
    let x_max = curve
        .iter()
        .map(|p| p.0)
        .chain(lot_point.map(|p| p.0 * 1.08))
        .chain(aql.map(|a| a * 1.08))
        .fold(0.0, f64::max);
    let x_hi = if x_max >= MIN_SPAN { x_max } else { 1.0 };
    let y_hi = 1.05;
    let x_decimals = tick_decimals(x_hi);

    draw(CHART, WIDE, |root| {
        let mut chart = ChartBuilder::on(root)
            .margin(14)
            .margin_top(50)
            .x_label_area_size(44)
            .y_label_area_size(52)
            .build_cartesian_2d(0.0..x_hi, 0.0..y_hi)?;
        draw_mesh(
            &mut chart,
            "lot percent defective",
            "probability of acceptance",
            &|v| format!("{:.*}", x_decimals, v),
            &|v| format!("{v:.1}"),
        )?;

        chart.draw_series(LineSeries::new(curve.iter().copied(), BLUE.stroke_width(2)))?;

        if let Some(a) = aql {
            let guide = GREEN.stroke_width(1);
            chart.draw_series(DashedLineSeries::new([(a, 0.0), (a, 1.0)], 3, 3, guide))?;
            let style = (FONT, SMALL_PX).into_font().color(&GREEN).pos(Pos::new(HPos::Left, VPos::Bottom));
            chart.draw_series(std::iter::once(Text::new(
                format!("AQL {} %", sig(a)),
                (a + 0.01 * x_hi, 0.03),
                style,
            )))?;
        }
        if let Some((x, y)) = lot_point {
            let guide = GUIDE.stroke_width(1);
            chart.draw_series(DashedLineSeries::new([(x, 0.0), (x, y)], 5, 4, guide))?;
            chart.draw_series(DashedLineSeries::new([(0.0, y), (x, y)], 5, 4, guide))?;
            chart.draw_series(std::iter::once(Circle::new((x, y), 6, VERMILLION.filled())))?;
            chart.draw_series(std::iter::once(Circle::new((x, y), 6, INK.stroke_width(1))))?;
            // The lot's figures go in the legend line above the plot, where they can never
            // sit on the curve, the guides or the AQL label.
            let mut legend = Legend::right_aligned(WIDE.0 as i32 - 14, 36);
            legend.item(
                root,
                &format!("this lot: {} % defective, Pa {:.3}", sig(x), y),
                Swatch::Dot(VERMILLION),
            )?;
        }
        let caption_style = (FONT, CAPTION_PX).into_font().color(&INK).pos(Pos::new(HPos::Left, VPos::Top));
        root.draw(&Text::new(oc.caption.to_string(), (14, 8), caption_style))?;
        Ok(())
    })
}

/// Rows of labels above a plot: each label goes to the first row where it fits without
/// touching another, so limit and nominal labels never overlap however close they are.
struct LabelRows {
    /// Baseline (text bottom) of each row, px.
    rows: Vec<(i32, Vec<(i32, i32)>)>,
    /// Leftmost and rightmost pixel a label may use.
    bounds: (i32, i32),
}

impl LabelRows {
    fn new(baselines: &[i32], bounds: (i32, i32)) -> LabelRows {
        LabelRows { rows: baselines.iter().map(|y| (*y, Vec::new())).collect(), bounds }
    }

    /// Places a label of `width` px anchored at `x` (left edge, right edge or centre);
    /// returns its left edge and baseline. When no row has room it goes to the last row.
    fn place(&mut self, x: i32, anchor: HPos, width: f64) -> (i32, i32) {
        let width = width.ceil() as i32;
        let left = match anchor {
            HPos::Left => x + 3,
            HPos::Right => x - 3 - width,
            HPos::Center => x - width / 2,
        };
        let left = left.clamp(self.bounds.0, (self.bounds.1 - width).max(self.bounds.0));
        let span = (left - 4, left + width + 4);
        let free = |taken: &Vec<(i32, i32)>| taken.iter().all(|(a, b)| span.1 <= *a || span.0 >= *b);
        let index = self.rows.iter().position(|(_, taken)| free(taken)).unwrap_or(self.rows.len() - 1);
        let (baseline, taken) = &mut self.rows[index];
        taken.push(span);
        (left, *baseline)
    }
}

/// The positions nearest to `wanted` (sorted, px) that keep neighbours `gap` apart inside
/// `[top, bottom]`; when they cannot all fit, they are spaced evenly over the range.
fn spread_apart(wanted: &[i32], gap: i32, top: i32, bottom: i32) -> Vec<i32> {
    let n = wanted.len() as i32;
    if n == 0 {
        return Vec::new();
    }
    if gap * (n - 1) > bottom - top {
        let step = if n > 1 { f64::from(bottom - top) / f64::from(n - 1) } else { 0.0 };
        return (0..n).map(|i| top + (f64::from(i) * step).round() as i32).collect();
    }
    let mut placed: Vec<i32> = Vec::with_capacity(wanted.len());
    for &y in wanted {
        let floor = placed.last().map_or(top, |last| last + gap);
        placed.push(y.clamp(top, bottom).max(floor));
    }
    // Pushed past the bottom: walk back up, keeping the gap.
    let mut ceiling = bottom;
    for y in placed.iter_mut().rev() {
        *y = (*y).min(ceiling);
        ceiling = *y - gap;
    }
    placed
}

/// Rough width of `text` at `size_px` (plotters' size, before its /1.24), for layout:
/// sans-serif glyphs average a little over half the font size.
fn text_width_px(text: &str, size_px: f64) -> f64 {
    text.chars().count() as f64 * size_px / 1.24 * 0.6
}

/// `text` shortened with an ellipsis to fit `width` px at `size_px`.
fn clip_label(text: &str, width: u32, size_px: f64) -> String {
    let fits = (f64::from(width) / (size_px / 1.24 * 0.6)).floor() as usize;
    if text.chars().count() <= fits || fits < 2 {
        return text.to_string();
    }
    let mut clipped: String = text.chars().take(fits - 1).collect();
    clipped.push('…');
    clipped
}

/// A legend drawn right to left along one line at the top of a chart.
struct Legend {
    right: i32,
    y: i32,
}

/// The mark a legend item shows.
#[derive(Clone, Copy)]
enum Swatch {
    Dot(RGBColor),
    Triangle(RGBColor),
    Ring(RGBColor),
    Line(RGBColor),
}

impl Legend {
    fn right_aligned(right: i32, y: i32) -> Legend {
        Legend { right, y }
    }

    /// Draws one item to the left of the previous one.
    fn item(&mut self, root: &DrawingArea<SVGBackend<'_>, Shift>, text: &str, swatch: Swatch) -> DrawResult {
        let width = text_width_px(text, SMALL_PX).ceil() as i32;
        let text_left = self.right - width;
        let style = (FONT, SMALL_PX).into_font().color(&INK).pos(Pos::new(HPos::Left, VPos::Center));
        root.draw(&Text::new(text.to_string(), (text_left, self.y), style))?;
        let mark = (text_left - 10, self.y);
        match swatch {
            Swatch::Dot(colour) => root.draw(&Circle::new(mark, 4, colour.filled()))?,
            Swatch::Triangle(colour) => root.draw(&TriangleMarker::new(mark, 6, colour.filled()))?,
            Swatch::Ring(colour) => root.draw(&Circle::new(mark, 4, colour.stroke_width(2)))?,
            Swatch::Line(colour) => root.draw(&PathElement::new(
                vec![(mark.0 - 8, mark.1), (mark.0 + 6, mark.1)],
                colour.stroke_width(2),
            ))?,
        }
        self.right = text_left - 28;
        Ok(())
    }
}

pub(crate) type DrawResult =
    Result<(), DrawingAreaErrorKind<<SVGBackend<'static> as DrawingBackend>::ErrorType>>;

/// The plain f64 × f64 chart every function here draws on.
type Chart2d<'a, 'b> = ChartContext<'a, SVGBackend<'b>, Cartesian2d<RangedCoordf64, RangedCoordf64>>;

/// The grid, axes and tick labels all charts share, so they look like one family.
fn draw_mesh(
    chart: &mut Chart2d<'_, '_>,
    x_desc: &str,
    y_desc: &str,
    x_label: &dyn Fn(&f64) -> String,
    y_label: &dyn Fn(&f64) -> String,
) -> DrawResult {
    chart
        .configure_mesh()
        .light_line_style(GRID_LIGHT)
        .bold_line_style(GRID_BOLD)
        .max_light_lines(2)
        .axis_style(INK)
        .label_style((FONT, LABEL_PX).into_font().color(&INK))
        .x_desc(x_desc)
        .y_desc(y_desc)
        .x_label_formatter(x_label)
        .y_label_formatter(y_label)
        .draw()
}

/// Runs a drawing closure on a fresh SVG canvas and returns the markup.
pub(crate) fn draw(
    chart: &'static str,
    size: (u32, u32),
    body: impl FnOnce(&DrawingArea<SVGBackend<'_>, Shift>) -> DrawResult,
) -> Result<SvgMarkup, ReportError> {
    let mut buf = String::new();
    {
        let root = SVGBackend::with_string(&mut buf, size).into_drawing_area();
        let fail = |e: DrawingAreaErrorKind<_>| ReportError::Chart { chart, detail: e.to_string() };
        root.fill(&WHITE).map_err(fail)?;
        body(&root).map_err(fail)?;
        root.present().map_err(fail)?;
    }
    Ok(SvgMarkup::generated(buf))
}

/// A small box saying a chart has nothing to show (the pipeline also puts it in place of a
/// chart that failed to draw, so a report is never lost for a chart).
pub fn no_data_svg(chart: &str) -> SvgMarkup {
    no_data(chart)
}

/// A small box saying the chart has no data; `chart` is escaped for SVG text.
pub(crate) fn no_data(chart: &str) -> SvgMarkup {
    let chart = chart.replace('&', "&amp;").replace('<', "&lt;").replace('>', "&gt;");
    let (w, h) = (360, 72);
    SvgMarkup::generated(format!(
        "<svg width=\"{w}\" height=\"{h}\" viewBox=\"0 0 {w} {h}\" xmlns=\"http://www.w3.org/2000/svg\">\n\
         <rect x=\"0.5\" y=\"0.5\" width=\"{}\" height=\"{}\" fill=\"#F7F7F7\" stroke=\"#BBBBBB\"/>\n\
         <text x=\"{}\" y=\"{}\" text-anchor=\"middle\" font-family=\"{FONT}\" font-size=\"14\" \
         fill=\"#555555\">{chart}: no data</text>\n</svg>\n",
        w - 1,
        h - 1,
        w / 2,
        h / 2 + 5,
    ))
}

/// Density of the normal distribution with this mean and standard deviation.
fn normal_pdf(x: f64, mean: f64, sd: f64) -> f64 {
    let z = (x - mean) / sd;
    (-0.5 * z * z).exp() / (sd * (2.0 * std::f64::consts::PI).sqrt())
}

/// Smallest and largest finite value, if any.
fn span_of(values: impl Iterator<Item = f64>) -> Option<(f64, f64)> {
    values.filter(|v| v.is_finite()).fold(None, |acc, v| match acc {
        None => Some((v, v)),
        Some((lo, hi)) => Some((lo.min(v), hi.max(v))),
    })
}

/// Widens a range by `fraction` of its span on each side; a span too small to tick gets a small one.
fn padded(range: Option<(f64, f64)>, fraction: f64) -> (f64, f64) {
    let (lo, hi) = range.unwrap_or((0.0, 1.0));
    let span = hi - lo;
    if span >= least_span(lo, hi) {
        (lo - span * fraction, hi + span * fraction)
    } else {
        let magnitude = lo.abs().max(hi.abs());
        let half = if magnitude * 0.05 >= MIN_SPAN { magnitude * 0.05 } else { 0.5 };
        let mid = lo / 2.0 + hi / 2.0;
        (mid - half, mid + half)
    }
}

/// Smallest absolute axis span drawn as is; values closer together than this are one value.
const MIN_SPAN: f64 = 1e-9;

/// Smallest span f64 can split into distinct ticks around these ends. plotters' tick search
/// never ends on a span that underflows or that rounding swallows, so narrower ranges are widened.
fn least_span(lo: f64, hi: f64) -> f64 {
    (lo.abs().max(hi.abs()) * 1e-9).max(MIN_SPAN)
}

/// A range plotters can map to pixels: finite ends and a finite span wide enough to tick.
fn usable((lo, hi): (f64, f64)) -> Option<(f64, f64)> {
    let span = hi - lo;
    (lo.is_finite() && hi.is_finite() && span.is_finite() && span >= least_span(lo, hi)).then_some((lo, hi))
}

/// Decimals for axis ticks so that about ten ticks across `span` stay distinct.
fn tick_decimals(span: f64) -> usize {
    if !span.is_finite() || span <= 0.0 {
        return 2;
    }
    (1.0 - (span / 10.0).log10().floor()).clamp(0.0, 6.0) as usize
}

/// Four significant figures without trailing zeros: short enough for a chart label.
fn sig(v: f64) -> String {
    let text = significant(v, 4);
    if text.contains('.') {
        text.trim_end_matches('0').trim_end_matches('.').to_owned()
    } else {
        text
    }
}

/// `v` rounded to `figures` significant figures (never fewer than zero decimals).
pub(crate) fn significant(v: f64, figures: u32) -> String {
    if v == 0.0 || !v.is_finite() {
        return format!("{v}");
    }
    let magnitude = v.abs().log10().floor() as i32;
    let decimals = (figures as i32 - 1 - magnitude).clamp(0, 12) as usize;
    format!("{v:.decimals$}")
}

/// Keeps every k-th point (and the last) so a curve has at most `max` points.
fn thin(points: &[(f64, f64)], max: usize) -> Vec<(f64, f64)> {
    if points.len() <= max || max < 2 {
        return points.to_vec();
    }
    let step = points.len().div_ceil(max - 1);
    let mut kept: Vec<(f64, f64)> = points.iter().copied().step_by(step).collect();
    if kept.last() != points.last() {
        kept.extend(points.last().copied());
    }
    kept
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    /// (opening tag, text content) of every `<text>` element.
    fn texts(svg: &str) -> Vec<(String, String)> {
        svg.split("<text")
            .skip(1)
            .filter_map(|rest| {
                let (tag, after) = rest.split_once('>')?;
                let (content, _) = after.split_once("</text>")?;
                Some((tag.to_owned(), content.trim().to_owned()))
            })
            .collect()
    }

    fn attr(tag: &str, name: &str) -> Option<f64> {
        let start = tag.find(&format!(" {name}=\""))? + name.len() + 3;
        tag[start..].split('"').next()?.parse().ok()
    }

    fn assert_inline_svg(svg: &str) {
        assert!(svg.starts_with("<svg "), "{}", &svg[..svg.len().min(80)]);
        assert!(!svg.contains("<?xml"));
        for a in ["width=", "height=", "viewBox="] {
            assert!(svg[..svg.find('>').unwrap()].contains(a), "missing {a}");
        }
        assert!(svg.trim_end().ends_with("</svg>"));
    }

    fn spread(n: usize, centre: f64, half_width: f64) -> Vec<f64> {
        (0..n).map(|i| centre - half_width + 2.0 * half_width * i as f64 / (n - 1) as f64).collect()
    }

    fn points(values: &[f64], verdict: Verdict) -> Vec<StripPoint> {
        values.iter().map(|v| StripPoint { value: *v, verdict }).collect()
    }

    fn strip<'a>(points: &'a [StripPoint], lower: Option<f64>, upper: Option<f64>) -> StripChart<'a> {
        StripChart {
            characteristic: "rate",
            unit: "N·mm/°",
            points,
            lower,
            upper,
            nominal: Some(29.2),
            normal_fit: None,
        }
    }

    /// Left and right pixel edge and baseline of each label text, as the layout estimates them.
    fn label_boxes(svg: &str, starts: &[&str]) -> Vec<(f64, f64, f64)> {
        texts(svg)
            .into_iter()
            .filter(|(_, t)| starts.iter().any(|s| t.starts_with(s)))
            .map(|(tag, t)| {
                let x = attr(&tag, "x").unwrap();
                let y = attr(&tag, "y").unwrap();
                (x, x + text_width_px(&t, SMALL_PX), y)
            })
            .collect()
    }

    #[test]
    fn strip_shows_each_part_over_the_drawing_band() {
        let mut all = points(&spread(40, 29.2, 1.0), Verdict::Pass);
        all.extend(points(&[31.9, 32.4], Verdict::Fail));
        all.extend(points(&[28.0], Verdict::Invalid));
        let svg = strip_chart_svg(&strip(&all, Some(26.86), Some(31.54))).unwrap().into_string();
        assert_inline_svg(&svg);
        // One mark per part, each kind in its own colour and shape.
        assert_eq!(svg.matches("<circle").filter(|_| true).count(), 40 + 1 + 2, "dots plus two legend dots");
        assert_eq!(
            svg.matches("fill=\"#0072B2\"").count(),
            40 + 1,
            "within: filled blue (and its legend dot)"
        );
        assert_eq!(svg.matches("stroke=\"#CC79A7\" stroke-width=\"2\"").count(), 1 + 1, "invalid: ring");
        assert_eq!(svg.matches("<polygon").count(), 2 + 1, "outside: triangles (and the legend's)");
        // The band is shaded, its edges are drawn, and they are labelled as the drawing's.
        assert!(svg.contains("fill=\"#DFF2EA\""));
        let labels: Vec<String> = texts(&svg).into_iter().map(|t| t.1).collect();
        for wanted in [
            "drawing min 26.86 N·mm/°",
            "drawing max 31.54 N·mm/°",
            "nominal 29.2",
            "within drawing (40)",
            "outside drawing (2)",
            "invalid (1)",
            "rate: 43 parts",
        ] {
            assert!(labels.iter().any(|l| l == wanted), "no label {wanted:?} in {labels:?}");
        }
        // No normal model unless the caller gives one.
        assert!(!svg.contains("normal model") && !svg.contains("#E69F00"));
    }

    #[test]
    fn strip_draws_the_normal_model_only_when_given() {
        let all = points(&spread(30, 29.2, 1.0), Verdict::Pass);
        let chart = StripChart { normal_fit: Some((29.2, 0.4)), ..strip(&all, Some(26.86), Some(31.54)) };
        let svg = strip_chart_svg(&chart).unwrap().into_string();
        assert!(svg.contains("<polyline fill=\"none\" opacity=\"1\" stroke=\"#E69F00\" stroke-width=\"2\""));
        assert!(svg.contains("normal model, mean 29.2 sd 0.4"));
        // A zero or missing spread is no model, rather than a division by zero.
        let chart = StripChart { normal_fit: Some((29.2, 0.0)), ..strip(&all, None, None) };
        assert!(!strip_chart_svg(&chart).unwrap().as_str().contains("normal model"));
    }

    #[test]
    fn strip_labels_never_overlap_even_when_limits_crowd_together() {
        // Limits a hair apart with the nominal between them, and data far away: the three
        // labels would sit on top of each other in one row.
        let all = points(&[10.0, 40.0], Verdict::Fail);
        let chart = StripChart { nominal: Some(25.05), ..strip(&all, Some(25.0), Some(25.1)) };
        let svg = strip_chart_svg(&chart).unwrap().into_string();
        let boxes = label_boxes(&svg, &["drawing min", "drawing max", "nominal"]);
        assert_eq!(boxes.len(), 3);
        for (i, a) in boxes.iter().enumerate() {
            for b in &boxes[i + 1..] {
                let same_row = (a.2 - b.2).abs() < 1.0;
                let apart = a.1 <= b.0 || b.1 <= a.0;
                assert!(!same_row || apart, "labels overlap: {a:?} {b:?}");
            }
            assert!(a.0 >= 0.0 && a.1 <= f64::from(STRIP_WIDTH), "label off the chart: {a:?}");
        }
    }

    #[test]
    fn strip_axis_reaches_limits_far_from_the_data() {
        let all = points(&spread(20, 10.0, 0.1), Verdict::Pass);
        let chart = StripChart { nominal: None, ..strip(&all, Some(5.0), Some(15.0)) };
        let svg = strip_chart_svg(&chart).unwrap().into_string();
        let boxes = label_boxes(&svg, &["drawing min"]);
        let max_boxes = label_boxes(&svg, &["drawing max"]);
        assert!(boxes[0].0 > 0.0 && max_boxes[0].1 < 760.0 && boxes[0].0 < max_boxes[0].0);
        assert!(!svg.contains("nominal"));
    }

    #[test]
    fn coinciding_values_stack_instead_of_hiding_each_other() {
        let all = points(&[4.2; 9], Verdict::Pass);
        let svg = strip_chart_svg(&strip(&all, Some(4.0), None)).unwrap().into_string();
        let ys: std::collections::BTreeSet<i64> = svg
            .split("<circle")
            .skip(1)
            .filter(|c| c.contains("fill=\"#0072B2\""))
            .filter_map(|c| attr(&format!(" {c}"), "cy"))
            .map(|y| y as i64)
            .collect();
        // Nine dots at nine heights (plus the legend dot at its own).
        assert!(ys.len() >= 9, "{ys:?}");
    }

    #[test]
    fn normal_density_matches_statrs() {
        use statrs::distribution::{Continuous, Normal};
        let reference = Normal::new(12.0, 0.3).unwrap();
        for x in [11.0, 11.7, 12.0, 12.45, 13.5] {
            // Source: statrs 0.18 Normal::pdf as an independent reference.
            assert!((normal_pdf(x, 12.0, 0.3) - reference.pdf(x)).abs() < 1e-12);
        }
    }

    #[test]
    fn empty_charts_say_no_data() {
        let nothing = points(&[f64::NAN, f64::INFINITY], Verdict::Pass);
        let all = [
            strip_chart_svg(&strip(&[], Some(1.0), Some(2.0))).unwrap(),
            strip_chart_svg(&strip(&nothing, None, None)).unwrap(),
            curves_svg(&CurveChart {
                curves: &[],
                windows: &[ToleranceWindow { angle_deg: 45.0, lower_nmm: Some(1.0), upper_nmm: None }],
                free_angle: None,
                curves_in_lot: 0,
            })
            .unwrap(),
            oc_curve_svg(&OcChart {
                points: &[],
                lot_point: Some((1.0, 0.5)),
                aql_pct: None,
                caption: "plan",
            })
            .unwrap(),
        ];
        for svg in all {
            assert_inline_svg(svg.as_str());
            assert!(svg.as_str().contains("no data"));
            assert!(svg.is_generated());
        }
    }

    fn line(label: &str, rate: f64, verdict: Verdict) -> CurveLine {
        let angle_deg: Vec<f64> = (0..=90).map(f64::from).collect();
        let torque_nmm = angle_deg.iter().map(|a| rate * a).collect();
        CurveLine { label: label.into(), angle_deg, torque_nmm, verdict }
    }

    fn overlay<'a>(curves: &'a [CurveLine], windows: &'a [ToleranceWindow], in_lot: usize) -> CurveChart<'a> {
        CurveChart { curves, windows, free_angle: None, curves_in_lot: in_lot }
    }

    #[test]
    fn curves_mark_failed_and_invalid_parts_apart_and_draw_the_limits() {
        let curves = [
            line("SN-1", 10.0, Verdict::Pass),
            line("SN-2", 10.2, Verdict::Pass),
            line("<script>x</script>", 12.0, Verdict::Fail),
            line("SN-9", 9.0, Verdict::Invalid),
        ];
        let windows = [
            ToleranceWindow { angle_deg: 45.0, lower_nmm: Some(420.0), upper_nmm: Some(480.0) },
            ToleranceWindow { angle_deg: 80.0, lower_nmm: Some(760.0), upper_nmm: None },
        ];
        let chart = CurveChart {
            free_angle: Some(FreeAngleLimits { lower_deg: Some(-3.0), upper_deg: Some(3.0) }),
            ..overlay(&curves, &windows, 4)
        };
        let svg = curves_svg(&chart).unwrap().into_string();
        assert_inline_svg(&svg);
        // Two passing curves (and their legend swatch); one failed, one invalid (each with a swatch).
        assert_eq!(svg.matches("stroke=\"#0072B2\" stroke-width=\"1\"").count(), 3);
        assert_eq!(
            svg.matches("<polyline fill=\"none\" opacity=\"1\" stroke=\"#D55E00\" stroke-width=\"2\"")
                .count(),
            2
        );
        assert!(svg.matches("stroke=\"#CC79A7\" stroke-width=\"2\"").count() > 2, "invalid: dashed segments");
        // Window bars (and the legend swatch) in ink, width 3; caps: two + one.
        assert_eq!(svg.matches("stroke=\"#222222\" stroke-width=\"3\"").count(), 3);
        // The free-angle limits: a bar along zero torque (and its legend swatch), two end ticks.
        assert_eq!(svg.matches("stroke-width=\"6\"").count(), 2);
        let labels: Vec<String> = texts(&svg).into_iter().map(|t| t.1).collect();
        for wanted in [
            "@45°",
            "@80°",
            "&lt;script&gt;x&lt;/script&gt;",
            "SN-9",
            "failed (1)",
            "invalid, dashed (1)",
            "within the drawing (2)",
            "drawing&apos;s free-angle limits (at zero torque)",
            "all 4 curves",
        ] {
            assert!(labels.iter().any(|l| l == wanted), "no label {wanted:?} in {labels:?}");
        }
        assert!(!svg.contains("<script>"));
        assert!(!labels.iter().any(|l| l == "SN-1"), "passing curves are not labelled");
    }

    #[test]
    fn the_caption_says_when_not_every_curve_is_drawn() {
        let curves = [line("A", 5.0, Verdict::Pass), line("B", 6.0, Verdict::Fail)];
        let svg = curves_svg(&overlay(&curves, &[], 50)).unwrap().into_string();
        assert!(svg.contains("2 of 50 curves drawn (failed and invalid first)"), "{svg}");
    }

    #[test]
    fn many_flagged_curves_get_labels_that_do_not_overlap() {
        // Twenty failed curves ending within a few newtons of each other.
        let curves: Vec<CurveLine> = (0..20)
            .map(|i| line(&format!("L2612-040-{i:03}"), 10.0 + 0.01 * f64::from(i), Verdict::Fail))
            .collect();
        let svg = curves_svg(&overlay(&curves, &[], 20)).unwrap().into_string();
        let mut ys: Vec<f64> = texts(&svg)
            .into_iter()
            .filter(|(_, t)| t.starts_with("L2612-040-"))
            .map(|(tag, _)| attr(&tag, "y").unwrap())
            .collect();
        assert_eq!(ys.len(), MAX_CURVE_LABELS);
        ys.sort_by(f64::total_cmp);
        for pair in ys.windows(2) {
            assert!(pair[1] - pair[0] >= 14.0, "labels {pair:?} overlap");
        }
        assert!(svg.contains(&format!("+{} more (data sheet)", 20 - MAX_CURVE_LABELS)));
    }

    #[test]
    fn spreading_keeps_order_gap_and_bounds() {
        assert_eq!(spread_apart(&[100, 101, 102], 15, 0, 400), vec![100, 115, 130]);
        assert_eq!(spread_apart(&[395, 396], 15, 0, 400), vec![385, 400]);
        assert_eq!(spread_apart(&[5, 5, 5], 15, 0, 20), vec![0, 10, 20], "too many: even spacing");
        assert!(spread_apart(&[], 15, 0, 10).is_empty());
    }

    #[test]
    fn oc_curve_marks_the_lot_and_the_aql() {
        let points: Vec<(f64, f64)> = (0..=20).map(|i| (i as f64, 1.0 - i as f64 / 20.0)).collect();
        let chart = OcChart {
            points: &points,
            lot_point: Some((4.0, 0.8)),
            aql_pct: Some(1.0),
            caption: "n 50, Ac 1",
        };
        let svg = oc_curve_svg(&chart).unwrap().into_string();
        assert_inline_svg(&svg);
        assert!(svg.contains("<polyline fill=\"none\" opacity=\"1\" stroke=\"#0072B2\" stroke-width=\"2\""));
        assert!(svg.contains("<circle") && svg.contains("fill=\"#D55E00\""));
        let labels: Vec<String> = texts(&svg).into_iter().map(|t| t.1).collect();
        for wanted in ["this lot: 4 % defective, Pa 0.800", "n 50, Ac 1", "AQL 1 %"] {
            assert!(labels.iter().any(|l| l == wanted), "no label {wanted:?} in {labels:?}");
        }
        let without =
            oc_curve_svg(&OcChart { lot_point: None, aql_pct: None, ..chart }).unwrap().into_string();
        assert!(!without.contains("<circle") && !without.contains("this lot") && !without.contains("AQL"));
    }

    #[test]
    fn oc_axis_ends_where_the_points_end() {
        // The caller chooses the range from the plan; the chart does not stretch it to 30 %.
        let points: Vec<(f64, f64)> =
            (0..=50).map(|i| (i as f64 * 0.12, (-(i as f64) / 10.0).exp())).collect();
        let chart = OcChart { points: &points, lot_point: Some((0.0, 1.0)), aql_pct: None, caption: "plan" };
        let svg = oc_curve_svg(&chart).unwrap().into_string();
        let ticks: Vec<f64> = texts(&svg).into_iter().filter_map(|(_, t)| t.parse::<f64>().ok()).collect();
        let largest = ticks.iter().copied().fold(0.0, f64::max);
        assert!((5.0..=6.0).contains(&largest), "{ticks:?}");
    }

    #[test]
    fn markup_is_trusted_only_when_drawn_here() {
        let drawn = oc_curve_svg(&OcChart {
            points: &[(0.0, 1.0), (5.0, 0.2)],
            lot_point: None,
            aql_pct: None,
            caption: "plan",
        })
        .unwrap();
        assert!(minijinja::Value::from_serialize(&drawn).is_safe());
        let json = serde_json::to_string(&drawn).unwrap();
        assert_eq!(serde_json::from_str::<String>(&json).unwrap(), drawn.as_str());
        let back: SvgMarkup = serde_json::from_str(&json).unwrap();
        assert!(!back.is_generated());
        assert!(minijinja::Value::from_serialize(&back).is_none());
    }

    #[test]
    fn labels_keep_four_significant_figures() {
        // Common practice, no published source: rounding to significant figures.
        assert_eq!(sig(12.3456), "12.35");
        assert_eq!(sig(0.00123456), "0.001235");
        assert_eq!(sig(45.0), "45");
        assert_eq!(sig(12345.6), "12346");
        assert_eq!(significant(11.2, 4), "11.20");
    }

    #[test]
    fn long_labels_are_clipped_to_the_margin() {
        assert_eq!(clip_label("SN-1", 150, SMALL_PX), "SN-1");
        let long = "a-very-long-serial-number-from-a-rig-export";
        let clipped = clip_label(long, 150, SMALL_PX);
        assert!(clipped.ends_with('…') && text_width_px(&clipped, SMALL_PX) <= 150.0, "{clipped}");
    }

    proptest! {
        #[test]
        fn thinning_bounds_length_and_keeps_ends(len in 0usize..3000, max in 2usize..700) {
            let points: Vec<(f64, f64)> = (0..len).map(|i| (i as f64, 0.0)).collect();
            let kept = thin(&points, max);
            prop_assert!(kept.len() <= max.max(len.min(max)));
            prop_assert_eq!(kept.first(), points.first());
            prop_assert_eq!(kept.last(), points.last());
        }

        #[test]
        fn spread_labels_stay_apart(mut wanted in prop::collection::vec(0i32..500, 0..30)) {
            wanted.sort_unstable();
            let placed = spread_apart(&wanted, 15, 40, 440);
            prop_assert_eq!(placed.len(), wanted.len());
            for pair in placed.windows(2) {
                prop_assert!(pair[1] - pair[0] >= 13, "{:?}", placed);
            }
            prop_assert!(placed.iter().all(|y| (40..=440).contains(y)));
        }

        #[test]
        fn charts_never_fail_on_odd_numbers(
            values in prop::collection::vec(prop::num::f64::ANY, 0..40),
            limit in prop::option::of(prop::num::f64::ANY),
            sd in prop::num::f64::ANY,
        ) {
            let outcome = all_charts_within_deadline(values.clone(), limit, sd);
            prop_assert!(outcome.is_ok(), "{:?} on values {:?}, limit {:?}, sd {}", outcome, values, limit, sd);
        }
    }

    /// Draws every chart from the same odd numbers on a worker thread; a hang becomes an error
    /// naming the chart instead of a test run that never ends.
    fn all_charts_within_deadline(values: Vec<f64>, limit: Option<f64>, sd: f64) -> Result<(), String> {
        let (done, finished) = std::sync::mpsc::channel();
        std::thread::spawn(move || {
            let outcome = (|| {
                let marks: Vec<StripPoint> = values
                    .iter()
                    .enumerate()
                    .map(|(i, v)| StripPoint {
                        value: *v,
                        verdict: [Verdict::Pass, Verdict::Fail, Verdict::Invalid][i % 3],
                    })
                    .collect();
                let chart = StripChart {
                    characteristic: "x",
                    unit: "u",
                    points: &marks,
                    lower: limit,
                    upper: None,
                    nominal: limit,
                    normal_fit: Some((0.0, sd)),
                };
                let svg = strip_chart_svg(&chart).map_err(|e| format!("strip: {e}"))?;
                if !svg.as_str().starts_with("<svg ") {
                    return Err("strip chart is not SVG".to_string());
                }
                let curve = CurveLine {
                    label: "p".into(),
                    angle_deg: values.clone(),
                    torque_nmm: values.iter().rev().copied().collect(),
                    verdict: Verdict::Fail,
                };
                let window = ToleranceWindow { angle_deg: sd, lower_nmm: limit, upper_nmm: None };
                let free = FreeAngleLimits { lower_deg: limit, upper_deg: Some(sd) };
                curves_svg(&CurveChart {
                    curves: &[curve],
                    windows: &[window],
                    free_angle: Some(free),
                    curves_in_lot: values.len(),
                })
                .map_err(|e| format!("curves: {e}"))?;
                let oc: Vec<(f64, f64)> = values.iter().map(|v| (*v, 0.5)).collect();
                oc_curve_svg(&OcChart {
                    points: &oc,
                    lot_point: limit.map(|l| (l, l)),
                    aql_pct: limit,
                    caption: "plan",
                })
                .map_err(|e| format!("OC: {e}"))?;
                Ok(())
            })();
            let _ = done.send(outcome);
        });
        // Generous for a debug build on a loaded machine; a finished chart takes milliseconds.
        match finished.recv_timeout(std::time::Duration::from_secs(20)) {
            Ok(outcome) => outcome,
            Err(_) => Err("a chart did not finish within 20 s".to_string()),
        }
    }

    #[test]
    fn ranges_that_rounding_swallows_still_draw() {
        // Each of these once sent plotters' tick search into a loop that never ended:
        // spans that underflow, spans lost in the rounding of large values, lone tiny values.
        let smallest = f64::from_bits(1);
        let cases: Vec<(Vec<f64>, Option<f64>, f64)> = vec![
            (vec![smallest], None, 1.0),
            (vec![smallest, 2.0 * smallest], Some(smallest), smallest),
            (vec![f64::MIN_POSITIVE; 3], Some(-f64::MIN_POSITIVE), 0.0),
            (vec![1e300, 1e300 * (1.0 + f64::EPSILON)], None, 1e300),
            (vec![1e15, 1e15 + 0.125], Some(1e15), 1e15),
            (vec![f64::MAX, -f64::MAX], Some(f64::MAX), f64::MAX),
            (vec![-0.0, 0.0], Some(0.0), -0.0),
            (vec![1e-12, 3e-12, 2e-12], Some(5e-12), 1e-12),
            (vec![0.0, 0.0, -1.987806989563402e170, -0.0], None, 6.3168491955134895e-139),
        ];
        for (values, limit, sd) in cases {
            let outcome = all_charts_within_deadline(values.clone(), limit, sd);
            assert!(outcome.is_ok(), "{outcome:?} on values {values:?}, limit {limit:?}, sd {sd}");
        }
    }

    #[test]
    fn a_narrow_range_is_widened_to_one_plotters_can_tick() {
        let (lo, hi) = padded(Some((1e15, 1e15 + 0.125)), 0.06);
        assert!(hi - lo >= least_span(lo, hi));
        assert!(lo <= 1e15 && hi >= 1e15 + 0.125);
        let (lo, hi) = padded(Some((f64::from_bits(1), f64::from_bits(2))), 0.06);
        assert_eq!((lo, hi), (-0.5, 0.5));
        assert_eq!(usable((0.0, f64::from_bits(1))), None);
        assert_eq!(usable((10.0, 12.0)), Some((10.0, 12.0)));
    }
}
