//! Report charts as inline SVG.
//!
//! Each function returns an [`SvgMarkup`]: a complete `<svg>` element with width,
//! height and viewBox and no XML prolog, ready to sit inside an HTML page. Text is
//! written as SVG `<text>` elements, so no font file is read; the viewer's
//! `sans-serif` draws it. Bad points (NaN, infinities) are left out rather than
//! failing the report, and a chart with nothing to show becomes a small "no data" box.
//!
//! Colours come from the Okabe–Ito set, chosen because it stays distinguishable under
//! the common colour-vision deficiencies; every distinction that matters (limits,
//! flagged curves) is also made by line style or width, not by colour alone.

use crate::ReportError;
use plotters::coord::types::RangedCoordf64;
use plotters::coord::Shift;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};
use serde::{Deserialize, Deserializer, Serialize, Serializer};
use std::fmt;

pub(crate) const INK: RGBColor = RGBColor(0x22, 0x22, 0x22);
pub(crate) const SKY: RGBColor = RGBColor(0x56, 0xB4, 0xE9);
pub(crate) const BLUE: RGBColor = RGBColor(0x00, 0x72, 0xB2);
pub(crate) const GREEN: RGBColor = RGBColor(0x00, 0x9E, 0x73);
pub(crate) const VERMILLION: RGBColor = RGBColor(0xD5, 0x5E, 0x00);
pub(crate) const GRID_LIGHT: RGBColor = RGBColor(0xEE, 0xEE, 0xEE);
pub(crate) const GRID_BOLD: RGBColor = RGBColor(0xD4, 0xD4, 0xD4);
pub(crate) const GUIDE: RGBColor = RGBColor(0x88, 0x88, 0x88);
pub(crate) const FONT: &str = "sans-serif";
// plotters' SVG backend writes font-size as the given size / 1.24, so these are
// chosen to come out at about 14.5, 12 and 11 px.
pub(crate) const CAPTION_PX: f64 = 18.0;
pub(crate) const LABEL_PX: f64 = 15.0;
pub(crate) const SMALL_PX: f64 = 13.5;

/// Pixel size of the histogram and OC charts.
const WIDE: (u32, u32) = (760, 380);
/// Pixel size of the curve overlay, taller because curves need vertical resolution.
const TALL: (u32, u32) = (760, 440);
/// Points kept per curve: more adds file size without visible detail at this width.
const MAX_POINTS_PER_CURVE: usize = 600;
/// Flagged curves labelled by name; beyond this the labels would only pile up.
const MAX_CURVE_LABELS: usize = 8;

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
    pub(crate) fn generated(markup: String) -> Self {
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

/// One torque-vs-angle curve to overlay.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct CurveLine {
    /// Shown beside flagged curves (usually the serial).
    pub label: String,
    /// Angles in degrees.
    pub angle_deg: Vec<f64>,
    /// Torques in N·mm, same length as `angle_deg`.
    pub torque_nmm: Vec<f64>,
    /// Drawn on top, thicker and in the warning colour.
    pub flagged: bool,
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

/// Histogram of spring rates with LSL/USL, nominal and the normal density scaled to counts.
pub fn rate_histogram_svg(
    values: &[f64],
    lower: Option<f64>,
    upper: Option<f64>,
    nominal: Option<f64>,
    normal_fit: Option<(f64, f64)>,
    unit_label: &str,
) -> Result<SvgMarkup, ReportError> {
    const CHART: &str = "rate histogram";
    let data: Vec<f64> = values.iter().copied().filter(|v| v.is_finite()).collect();
    let Some(bins) = Bins::of(&data) else {
        return Ok(no_data(CHART));
    };
    let lower = lower.filter(|v| v.is_finite());
    let upper = upper.filter(|v| v.is_finite());
    let nominal = nominal.filter(|v| v.is_finite());
    let fit = normal_fit.filter(|(mean, sd)| mean.is_finite() && sd.is_finite() && *sd > 0.0);

    let Some((x_lo, x_hi)) = usable(padded(
        span_of([bins.start, bins.end()].into_iter().chain(lower).chain(upper).chain(nominal)),
        0.06,
    )) else {
        return Ok(no_data(CHART));
    };
    let n = data.len() as f64;
    let max_count = bins.counts.iter().copied().max().unwrap_or(0) as f64;
    let peak_of = |(mean, sd): (f64, f64)| expected_count(mean, n, bins.width, mean, sd);
    // Headroom above the tallest element keeps the limit labels clear of the bars.
    let headroom = 1.25;
    // A vanishing sd makes the peak overflow, with or without the headroom; such a fit has
    // nothing to show, and an infinite axis would stall plotters' tick search.
    let fit = fit.filter(|f| usable((0.0, peak_of(*f) * headroom)).is_some());
    let fit_peak = fit.map_or(0.0, peak_of);
    let y_hi = (max_count.max(fit_peak) * headroom).max(1.0);
    if usable((0.0, y_hi)).is_none() {
        return Ok(no_data(CHART));
    }

    let mut caption = format!("{} values", data.len());
    if let Some((mean, sd)) = fit {
        caption.push_str(&format!(", normal fit: mean {}, sd {}", sig(mean), sig(sd)));
    }
    let x_decimals = tick_decimals(x_hi - x_lo);

    draw(CHART, WIDE, |root| {
        let mut chart = ChartBuilder::on(root)
            .margin(14)
            .caption(caption, (FONT, CAPTION_PX).into_font().color(&INK))
            .x_label_area_size(44)
            .y_label_area_size(52)
            .build_cartesian_2d(x_lo..x_hi, 0.0..y_hi)?;
        draw_mesh(&mut chart, unit_label, "parts", &|v| format!("{:.*}", x_decimals, v), &|v| {
            integer_tick(*v)
        })?;

        chart.draw_series(bins.counts.iter().enumerate().filter(|(_, c)| **c > 0).flat_map(|(i, c)| {
            let x0 = bins.start + i as f64 * bins.width;
            let corners = [(x0, 0.0), (x0 + bins.width, *c as f64)];
            [Rectangle::new(corners, SKY.mix(0.75).filled()), Rectangle::new(corners, BLUE.stroke_width(1))]
        }))?;

        if let Some((mean, sd)) = fit {
            let steps = 160;
            let density = (0..=steps).map(|i| {
                let x = x_lo + (x_hi - x_lo) * i as f64 / steps as f64;
                (x, expected_count(x, n, bins.width, mean, sd))
            });
            chart.draw_series(LineSeries::new(density, BLUE.stroke_width(2)))?;
        }

        let top = y_hi * 0.985;
        for (value, name, dashed, label_y) in [
            (lower, "LSL", true, top),
            (upper, "USL", true, top),
            // Lower than the limit labels so that a nominal close to a limit stays readable.
            (nominal, "nominal", false, y_hi * 0.90),
        ] {
            let Some(x) = value else { continue };
            let line = vec![(x, 0.0), (x, y_hi)];
            if dashed {
                chart.draw_series(DashedLineSeries::new(line, 8, 5, VERMILLION.stroke_width(2)))?;
            } else {
                chart.draw_series(LineSeries::new(line, GREEN.stroke_width(2)))?;
            }
            let colour = if dashed { VERMILLION } else { GREEN };
            let style = (FONT, LABEL_PX).into_font().color(&colour).pos(Pos::new(HPos::Center, VPos::Top));
            chart.draw_series(std::iter::once(Text::new(
                format!("{name} {}", sig(x)),
                (x, label_y),
                style,
            )))?;
        }
        Ok(())
    })
}

/// Overlaid torque-vs-angle curves with each tolerance window as a vertical bar.
pub fn curves_svg(curves: &[CurveLine], windows: &[ToleranceWindow]) -> Result<SvgMarkup, ReportError> {
    const CHART: &str = "torque curves";
    let lines: Vec<(&CurveLine, Vec<(f64, f64)>)> = curves
        .iter()
        .map(|c| {
            let points: Vec<(f64, f64)> = c
                .angle_deg
                .iter()
                .zip(&c.torque_nmm)
                .map(|(a, t)| (*a, *t))
                .filter(|(a, t)| a.is_finite() && t.is_finite())
                .collect();
            (c, thin(&points, MAX_POINTS_PER_CURVE))
        })
        .filter(|(_, points)| points.len() >= 2)
        .collect();
    if lines.is_empty() {
        return Ok(no_data(CHART));
    }
    let windows: Vec<ToleranceWindow> = windows
        .iter()
        .filter(|w| w.angle_deg.is_finite())
        .map(|w| ToleranceWindow {
            angle_deg: w.angle_deg,
            lower_nmm: w.lower_nmm.filter(|v| v.is_finite()),
            upper_nmm: w.upper_nmm.filter(|v| v.is_finite()),
        })
        .filter(|w| w.lower_nmm.is_some() || w.upper_nmm.is_some())
        .collect();

    let all_points = || lines.iter().flat_map(|(_, p)| p.iter());
    let x_range =
        usable(padded(span_of(all_points().map(|p| p.0).chain(windows.iter().map(|w| w.angle_deg))), 0.04));
    let y_range = usable(padded(
        span_of(
            all_points()
                .map(|p| p.1)
                .chain(windows.iter().flat_map(|w| w.lower_nmm.into_iter().chain(w.upper_nmm))),
        ),
        0.08,
    ));
    let (Some((x_lo, x_hi)), Some((y_lo, y_hi))) = (x_range, y_range) else {
        return Ok(no_data(CHART));
    };
    let cap_half_width = (x_hi - x_lo) * 0.012;
    let x_decimals = tick_decimals(x_hi - x_lo);
    let y_decimals = tick_decimals(y_hi - y_lo);
    let flagged_count = lines.iter().filter(|(c, _)| c.flagged).count();
    let plain_count = lines.len() - flagged_count;

    draw(CHART, TALL, |root| {
        let mut chart = ChartBuilder::on(root)
            .margin(14)
            .caption(
                format!("{} curves, {} flagged", lines.len(), flagged_count),
                (FONT, CAPTION_PX).into_font().color(&INK),
            )
            .x_label_area_size(44)
            .y_label_area_size(64)
            .build_cartesian_2d(x_lo..x_hi, y_lo..y_hi)?;
        draw_mesh(&mut chart, "angle (°)", "torque (N·mm)", &|v| format!("{:.*}", x_decimals, v), &|v| {
            format!("{:.*}", y_decimals, v)
        })?;

        let plain_style = BLUE.mix(0.45).stroke_width(1);
        let flagged_style = VERMILLION.stroke_width(2);
        let window_style = INK.stroke_width(3);

        // Plain curves first so flagged ones are drawn over them.
        for (i, (_, points)) in lines.iter().filter(|(c, _)| !c.flagged).enumerate() {
            let series = chart.draw_series(LineSeries::new(points.iter().copied(), plain_style))?;
            if i == 0 {
                series
                    .label(format!("not flagged ({plain_count})"))
                    .legend(move |(x, y)| PathElement::new(vec![(x, y), (x + 18, y)], plain_style));
            }
        }
        for (i, (curve, points)) in lines.iter().filter(|(c, _)| c.flagged).enumerate() {
            let series = chart.draw_series(LineSeries::new(points.iter().copied(), flagged_style))?;
            if i == 0 {
                series
                    .label(format!("flagged ({flagged_count})"))
                    .legend(move |(x, y)| PathElement::new(vec![(x, y), (x + 18, y)], flagged_style));
            }
            if i < MAX_CURVE_LABELS && !curve.label.is_empty() {
                let peak = points.iter().copied().fold(points[0], |a, b| if b.1 > a.1 { b } else { a });
                let style =
                    (FONT, SMALL_PX).into_font().color(&VERMILLION).pos(Pos::new(HPos::Right, VPos::Bottom));
                chart.draw_series(std::iter::once(Text::new(curve.label.clone(), peak, style)))?;
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
                    .label("torque tolerance")
                    .legend(move |(x, y)| PathElement::new(vec![(x, y), (x + 18, y)], window_style));
            }
            for cap in [w.lower_nmm, w.upper_nmm].into_iter().flatten() {
                chart.draw_series(LineSeries::new(
                    [(a - cap_half_width, cap), (a + cap_half_width, cap)],
                    INK.stroke_width(2),
                ))?;
            }
            let style = (FONT, SMALL_PX).into_font().color(&INK).pos(Pos::new(HPos::Left, VPos::Center));
            chart.draw_series(std::iter::once(Text::new(
                format!("{}°", sig(a)),
                (a + cap_half_width * 1.5, top),
                style,
            )))?;
        }

        chart
            .configure_series_labels()
            .position(SeriesLabelPosition::UpperLeft)
            .background_style(WHITE.mix(0.9))
            .border_style(GRID_BOLD)
            .label_font((FONT, LABEL_PX).into_font().color(&INK))
            .draw()?;
        Ok(())
    })
}

/// The plan's operating characteristic curve with the lot's observed point marked.
///
/// `points` are (percent defective, probability of acceptance) pairs.
pub fn oc_curve_svg(
    points: &[(f64, f64)],
    lot_point: Option<(f64, f64)>,
    label: &str,
) -> Result<SvgMarkup, ReportError> {
    const CHART: &str = "OC curve";
    // Percent defective lies in 0..=100 and a probability in 0..=1; anything else is
    // not a point of an OC curve, and leaving it out keeps the axes meaningful.
    let on_chart = |(x, y): &(f64, f64)| (0.0..=100.0).contains(x) && (0.0..=1.0).contains(y);
    let mut curve: Vec<(f64, f64)> = points.iter().copied().filter(on_chart).collect();
    if curve.is_empty() {
        return Ok(no_data(CHART));
    }
    curve.sort_by(|a, b| a.0.total_cmp(&b.0));
    let lot_point = lot_point.filter(on_chart);
    let x_max = curve.iter().map(|p| p.0).chain(lot_point.map(|p| p.0)).fold(0.0, f64::max);
    let x_hi = if x_max * 1.05 >= MIN_SPAN { x_max * 1.05 } else { 1.0 };
    let y_hi = 1.05;
    let x_decimals = tick_decimals(x_hi);

    draw(CHART, WIDE, |root| {
        let mut chart = ChartBuilder::on(root)
            .margin(14)
            .caption(label, (FONT, CAPTION_PX).into_font().color(&INK))
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

        if let Some((x, y)) = lot_point {
            let guide = GUIDE.stroke_width(1);
            chart.draw_series(DashedLineSeries::new([(x, 0.0), (x, y)], 5, 4, guide))?;
            chart.draw_series(DashedLineSeries::new([(0.0, y), (x, y)], 5, 4, guide))?;
            chart.draw_series(std::iter::once(Circle::new((x, y), 6, VERMILLION.filled())))?;
            chart.draw_series(std::iter::once(Circle::new((x, y), 6, INK.stroke_width(1))))?;
            // Put the label on whichever side of the marker has room.
            let (h_pos, dx) = if x > x_hi * 0.6 { (HPos::Right, -0.015) } else { (HPos::Left, 0.015) };
            let style = (FONT, LABEL_PX).into_font().color(&INK).pos(Pos::new(h_pos, VPos::Bottom));
            chart.draw_series(std::iter::once(Text::new(
                format!("this lot: {} % defective, Pa {:.3}", sig(x), y),
                (x + dx * x_hi, y + 0.02 * y_hi),
                style,
            )))?;
        }
        Ok(())
    })
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

/// A small box saying the chart has no data; `chart` is always one of this module's names.
pub(crate) fn no_data(chart: &str) -> SvgMarkup {
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

/// Equal-width bins over the data range.
#[derive(Debug, Clone, PartialEq)]
struct Bins {
    start: f64,
    width: f64,
    counts: Vec<usize>,
}

impl Bins {
    /// Sturges' rule for the bin count (ceil(log2 n) + 1), capped so bars stay visible.
    fn of(data: &[f64]) -> Option<Bins> {
        let (lo, hi) = span_of(data.iter().copied())?;
        let span = hi - lo;
        let scale = lo.abs().max(hi.abs());
        if span.is_nan() || span <= scale * 1e-12 {
            // All values equal: one bin centred on them.
            let width = if scale > 0.0 { scale * 0.02 } else { 1.0 };
            return Some(Bins { start: lo - width / 2.0, width, counts: vec![data.len()] });
        }
        let k = ((data.len() as f64).log2().ceil() as usize + 1).clamp(1, 30);
        let width = span / k as f64;
        let mut counts = vec![0; k];
        for v in data {
            let index = (((v - lo) / width).floor() as usize).min(k - 1);
            counts[index] += 1;
        }
        Some(Bins { start: lo, width, counts })
    }

    fn end(&self) -> f64 {
        self.start + self.width * self.counts.len() as f64
    }
}

/// Count a bin of `bin_width` centred on `x` would hold under the fitted normal.
fn expected_count(x: f64, n: f64, bin_width: f64, mean: f64, sd: f64) -> f64 {
    n * bin_width * normal_pdf(x, mean, sd)
}

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

/// Counts are whole parts: fractional ticks get no label rather than a repeated one.
fn integer_tick(v: f64) -> String {
    if (v - v.round()).abs() < 1e-9 {
        format!("{v:.0}")
    } else {
        String::new()
    }
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

    #[test]
    fn histogram_draws_limits_nominal_bars_and_fit() {
        let values = spread(40, 5.0, 2.0);
        let svg = rate_histogram_svg(&values, Some(1.0), Some(9.0), Some(5.0), Some((5.0, 1.2)), "rate")
            .unwrap()
            .into_string();
        assert_inline_svg(&svg);
        let labels: Vec<String> = texts(&svg).into_iter().map(|t| t.1).collect();
        for wanted in ["LSL 1", "USL 9", "nominal 5"] {
            assert!(labels.iter().any(|l| l == wanted), "no label {wanted:?} in {labels:?}");
        }
        // Limits are dashed (drawn as many short segments) in the limit colour.
        assert!(svg.matches("stroke=\"#D55E00\" stroke-width=\"2\"").count() > 4);
        // Nominal: one solid line in its own colour.
        assert!(svg.contains("stroke=\"#009E73\" stroke-width=\"2\""));
        // Fit: a polyline in the fit colour.
        assert!(svg.contains("<polyline fill=\"none\" opacity=\"1\" stroke=\"#0072B2\" stroke-width=\"2\""));
        // Bars: filled rectangles, one per non-empty bin (40 spread values fill all 7 bins).
        let bins = Bins::of(&values).unwrap();
        assert_eq!(bins.counts.len(), 7);
        assert_eq!(svg.matches("fill=\"#56B4E9\"").count(), 7);
    }

    #[test]
    fn histogram_axis_reaches_limits_far_from_data() {
        let values = spread(20, 10.0, 0.1);
        let svg =
            rate_histogram_svg(&values, Some(5.0), Some(15.0), None, None, "rate").unwrap().into_string();
        let all = texts(&svg);
        let lsl = all.iter().find(|t| t.1.starts_with("LSL")).unwrap();
        let usl = all.iter().find(|t| t.1.starts_with("USL")).unwrap();
        let (x_lsl, x_usl) = (attr(&lsl.0, "x").unwrap(), attr(&usl.0, "x").unwrap());
        assert!(x_lsl > 0.0 && x_usl < 760.0 && x_lsl < x_usl, "{x_lsl} {x_usl}");
        assert!(!svg.contains("nominal"));
    }

    #[test]
    fn fitted_counts_add_up_to_the_sample_size() {
        // Common practice, no published source: a density times n times bin width,
        // summed over bins covering ±8 sd, gives back n.
        let (n, width, mean, sd) = (50.0, 0.1, 3.0, 0.4);
        let total: f64 =
            (-320..320).map(|i| expected_count(mean + (i as f64 + 0.5) * width, n, width, mean, sd)).sum();
        assert!((total - n).abs() < 1e-6, "{total}");
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
    fn histogram_survives_degenerate_input() {
        let one = rate_histogram_svg(&[4.2; 9], Some(4.0), None, None, Some((4.2, 0.0)), "rate").unwrap();
        assert_inline_svg(one.as_str());
        assert_eq!(one.as_str().matches("fill=\"#56B4E9\"").count(), 1);
        // A zero sd is no fit, rather than a division by zero.
        assert!(!one.as_str().contains("normal fit"));
        let zero = rate_histogram_svg(&[0.0, 0.0], None, None, None, None, "rate").unwrap();
        assert_inline_svg(zero.as_str());
    }

    #[test]
    fn empty_charts_say_no_data() {
        let all = [
            rate_histogram_svg(&[], Some(1.0), Some(2.0), None, None, "rate").unwrap(),
            rate_histogram_svg(&[f64::NAN, f64::INFINITY], None, None, None, None, "rate").unwrap(),
            curves_svg(&[], &[ToleranceWindow { angle_deg: 45.0, lower_nmm: Some(1.0), upper_nmm: None }])
                .unwrap(),
            oc_curve_svg(&[], Some((1.0, 0.5)), "plan").unwrap(),
        ];
        for svg in all {
            assert_inline_svg(svg.as_str());
            assert!(svg.as_str().contains("no data"));
            assert!(svg.is_generated());
        }
    }

    fn line(label: &str, rate: f64, flagged: bool) -> CurveLine {
        let angle_deg: Vec<f64> = (0..=90).map(f64::from).collect();
        let torque_nmm = angle_deg.iter().map(|a| rate * a).collect();
        CurveLine { label: label.into(), angle_deg, torque_nmm, flagged }
    }

    #[test]
    fn curves_mark_flagged_parts_and_tolerance_windows() {
        let curves =
            [line("SN-1", 10.0, false), line("SN-2", 10.2, false), line("<script>x</script>", 12.0, true)];
        let windows = [
            ToleranceWindow { angle_deg: 45.0, lower_nmm: Some(420.0), upper_nmm: Some(480.0) },
            ToleranceWindow { angle_deg: 80.0, lower_nmm: Some(760.0), upper_nmm: None },
        ];
        let svg = curves_svg(&curves, &windows).unwrap().into_string();
        assert_inline_svg(&svg);
        // Two plain curves (plus their legend swatch) and one flagged curve (plus swatch).
        assert_eq!(svg.matches("stroke=\"#0072B2\" stroke-width=\"1\"").count(), 3);
        assert_eq!(svg.matches("stroke=\"#D55E00\" stroke-width=\"2\"").count(), 2);
        // Window bars (and the legend swatch) in ink, width 3; caps: two + one.
        assert_eq!(svg.matches("stroke=\"#222222\" stroke-width=\"3\"").count(), 3);
        assert_eq!(
            svg.matches("<polyline fill=\"none\" opacity=\"1\" stroke=\"#222222\" stroke-width=\"2\"")
                .count(),
            3
        );
        let labels: Vec<String> = texts(&svg).into_iter().map(|t| t.1).collect();
        for wanted in ["45°", "80°", "&lt;script&gt;x&lt;/script&gt;", "flagged (1)", "not flagged (2)"] {
            assert!(labels.iter().any(|l| l == wanted), "no label {wanted:?} in {labels:?}");
        }
        assert!(!svg.contains("<script>"));
    }

    #[test]
    fn curves_skip_bad_points_and_ragged_vectors() {
        let mut ragged = line("A", 5.0, false);
        ragged.torque_nmm.truncate(10);
        ragged.torque_nmm[3] = f64::NAN;
        let lone =
            CurveLine { label: "B".into(), angle_deg: vec![1.0], torque_nmm: vec![2.0], flagged: true };
        let svg = curves_svg(&[ragged, lone], &[]).unwrap().into_string();
        assert_inline_svg(&svg);
        assert!(svg.contains("1 curves, 0 flagged"));
    }

    #[test]
    fn oc_curve_marks_the_lot() {
        let points: Vec<(f64, f64)> = (0..=20).map(|i| (i as f64, 1.0 - i as f64 / 20.0)).collect();
        let svg = oc_curve_svg(&points, Some((4.0, 0.8)), "n = 50, Ac 1").unwrap().into_string();
        assert_inline_svg(&svg);
        assert!(svg.contains("<polyline fill=\"none\" opacity=\"1\" stroke=\"#0072B2\" stroke-width=\"2\""));
        assert!(svg.contains("<circle") && svg.contains("fill=\"#D55E00\""));
        let labels: Vec<String> = texts(&svg).into_iter().map(|t| t.1).collect();
        assert!(labels.iter().any(|l| l == "this lot: 4 % defective, Pa 0.800"), "{labels:?}");
        assert!(labels.iter().any(|l| l == "n = 50, Ac 1"));
        let without = oc_curve_svg(&points, None, "plan").unwrap().into_string();
        assert!(!without.contains("<circle") && !without.contains("this lot"));
    }

    #[test]
    fn markup_is_trusted_only_when_drawn_here() {
        let drawn = oc_curve_svg(&[(0.0, 1.0), (5.0, 0.2)], None, "plan").unwrap();
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

    proptest! {
        #[test]
        fn bins_hold_every_value(values in prop::collection::vec(-1e6f64..1e6, 1..200)) {
            let bins = Bins::of(&values).unwrap();
            prop_assert_eq!(bins.counts.iter().sum::<usize>(), values.len());
            let slack = bins.width * 1e-9;
            for v in &values {
                prop_assert!(*v >= bins.start - slack && *v <= bins.end() + slack);
            }
        }

        #[test]
        fn thinning_bounds_length_and_keeps_ends(len in 0usize..3000, max in 2usize..700) {
            let points: Vec<(f64, f64)> = (0..len).map(|i| (i as f64, 0.0)).collect();
            let kept = thin(&points, max);
            prop_assert!(kept.len() <= max.max(len.min(max)));
            prop_assert_eq!(kept.first(), points.first());
            prop_assert_eq!(kept.last(), points.last());
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
                let svg = rate_histogram_svg(&values, limit, None, limit, Some((0.0, sd)), "x")
                    .map_err(|e| format!("histogram: {e}"))?;
                if !svg.as_str().starts_with("<svg ") {
                    return Err("histogram is not SVG".to_string());
                }
                let curve = CurveLine {
                    label: "p".into(),
                    angle_deg: values.clone(),
                    torque_nmm: values.iter().rev().copied().collect(),
                    flagged: true,
                };
                let window = ToleranceWindow { angle_deg: sd, lower_nmm: limit, upper_nmm: None };
                curves_svg(&[curve], &[window]).map_err(|e| format!("curves: {e}"))?;
                let oc: Vec<(f64, f64)> = values.iter().map(|v| (*v, 0.5)).collect();
                oc_curve_svg(&oc, limit.map(|l| (l, l)), "plan").map_err(|e| format!("OC: {e}"))?;
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
