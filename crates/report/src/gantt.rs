//! The plan's Gantt chart: one row per rig, the shift's time across, one bar per
//! reference check, setup and lot.
//!
//! Drawn in pixel coordinates on a plain canvas rather than on a plotters chart: the time
//! axis is ticked at whole clock steps chosen here (15 min, 30 min, 1 h …), so plotters'
//! own tick search — which can loop forever on degenerate ranges — is never asked to run.
//! A horizon that is not a positive finite number, or longer than a year, gives the
//! "no data" box instead of a chart.

use crate::charts::{
    draw, no_data, SvgMarkup, BLUE, CAPTION_PX, FONT, GREEN, GRID_BOLD, GRID_LIGHT, GUIDE, INK, LABEL_PX,
    SKY, SMALL_PX, VERMILLION,
};
use crate::ReportError;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};
use serde::{Deserialize, Serialize};

/// What a bar stands for; each kind differs by fill, and late lots also by a thick outline.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum BarKind {
    /// The reference-spring check that opens the rig's shift.
    Check,
    /// A fixture or arbor change.
    Setup,
    /// A lot's tests, ending by its ship time.
    Test,
    /// A lot's tests, ending after its ship time.
    Late,
    /// Time the rig may not be used (outside its free hours, or past its calibration).
    Unavailable,
}

/// One bar, in seconds from the shift's start.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct GanttBar {
    /// Start, s from the shift start.
    pub start_s: f64,
    /// End, s from the shift start.
    pub end_s: f64,
    /// Text written inside the bar when it is wide enough.
    pub label: String,
    /// What it is.
    pub kind: BarKind,
}

/// One rig's row.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct GanttRow {
    /// The rig's name, at the left.
    pub label: String,
    /// Its bars (any order; unavailable time is drawn first, underneath).
    pub bars: Vec<GanttBar>,
}

const WIDTH: i32 = 1000;
const LEFT: i32 = 110;
const RIGHT: i32 = 24;
const TOP: i32 = 44;
const ROW_H: i32 = 46;
const BAR_H: i32 = 30;
const AXIS_H: i32 = 30;
const LEGEND_H: i32 = 34;
/// Longest shift drawn: beyond this the chart would say nothing a table does not.
const MAX_HORIZON_S: f64 = 366.0 * 86_400.0;
/// Clock steps the axis may be ticked at, s.
const STEPS_S: [f64; 14] = [
    300.0,
    600.0,
    900.0,
    1800.0,
    3600.0,
    7200.0,
    10_800.0,
    14_400.0,
    21_600.0,
    43_200.0,
    86_400.0,
    172_800.0,
    604_800.0,
    2_592_000.0,
];
/// Most ticks across the axis.
const MAX_TICKS: f64 = 12.0;

/// The Gantt chart of a plan.
///
/// `horizon_s` is the shift's length; `clock_at_start_s` the time of day the shift starts,
/// in seconds after midnight, so ticks read as clock times (`14:00`, `+1d 02:00`).
pub fn gantt_svg(
    rows: &[GanttRow],
    horizon_s: f64,
    clock_at_start_s: f64,
    caption: &str,
) -> Result<SvgMarkup, ReportError> {
    const CHART: &str = "plan";
    if rows.is_empty() || !(horizon_s.is_finite() && horizon_s > 0.0 && horizon_s <= MAX_HORIZON_S) {
        return Ok(no_data(CHART));
    }
    let clock0 = if clock_at_start_s.is_finite() { clock_at_start_s.rem_euclid(86_400.0) } else { 0.0 };
    let plot_w = f64::from(WIDTH - LEFT - RIGHT);
    let x_of = |t: f64| LEFT + (t.clamp(0.0, horizon_s) / horizon_s * plot_w).round() as i32;
    let row_count = i32::try_from(rows.len()).unwrap_or(i32::MAX / ROW_H).min(200);
    let height = TOP + row_count * ROW_H + AXIS_H + LEGEND_H;
    let plot_bottom = TOP + row_count * ROW_H;
    let step = STEPS_S.iter().copied().find(|s| horizon_s / s <= MAX_TICKS).unwrap_or(2_592_000.0);

    draw(CHART, (WIDTH as u32, height as u32), |root| {
        let ink = |px: f64| (FONT, px).into_font().color(&INK);
        root.draw(&Text::new(
            caption.to_string(),
            (LEFT, 12),
            ink(CAPTION_PX).pos(Pos::new(HPos::Left, VPos::Top)),
        ))?;
        // Row bands and names.
        for (index, row) in rows.iter().enumerate().take(row_count as usize) {
            let top = TOP + index as i32 * ROW_H;
            if index % 2 == 1 {
                root.draw(&Rectangle::new([(LEFT, top), (WIDTH - RIGHT, top + ROW_H)], GRID_LIGHT.filled()))?;
            }
            root.draw(&Text::new(
                row.label.clone(),
                (LEFT - 10, top + ROW_H / 2),
                ink(LABEL_PX).pos(Pos::new(HPos::Right, VPos::Center)),
            ))?;
        }
        // Clock ticks: whole steps of the time of day.
        let first = ((clock0 / step).ceil() * step) - clock0;
        let mut t = first;
        let mut guard = 0;
        while t <= horizon_s && guard < 64 {
            let x = x_of(t);
            root.draw(&PathElement::new(vec![(x, TOP), (x, plot_bottom)], GRID_BOLD.stroke_width(1)))?;
            root.draw(&Text::new(
                clock_label(clock0 + t, step),
                (x, plot_bottom + 6),
                ink(SMALL_PX).pos(Pos::new(HPos::Center, VPos::Top)),
            ))?;
            t += step;
            guard += 1;
        }
        root.draw(&PathElement::new(
            vec![(LEFT, plot_bottom), (WIDTH - RIGHT, plot_bottom)],
            INK.stroke_width(1),
        ))?;
        root.draw(&PathElement::new(vec![(LEFT, TOP), (LEFT, plot_bottom)], INK.stroke_width(1)))?;

        for (index, row) in rows.iter().enumerate().take(row_count as usize) {
            let top = TOP + index as i32 * ROW_H + (ROW_H - BAR_H) / 2;
            let mut bars: Vec<&GanttBar> =
                row.bars.iter().filter(|b| b.start_s.is_finite() && b.end_s.is_finite()).collect();
            // Unavailable time underneath, so nothing planned is ever hidden by it.
            bars.sort_by_key(|b| b.kind != BarKind::Unavailable);
            for bar in bars {
                let (x0, x1) = (x_of(bar.start_s), x_of(bar.end_s));
                if x1 < x0 {
                    continue;
                }
                let x1 = x1.max(x0 + 2);
                let corners = [(x0, top), (x1, top + BAR_H)];
                let (fill, text) = match bar.kind {
                    BarKind::Check => (GREEN.filled(), WHITE),
                    BarKind::Setup => (GUIDE.mix(0.55).filled(), INK),
                    BarKind::Test | BarKind::Late => (SKY.mix(0.85).filled(), INK),
                    BarKind::Unavailable => (GRID_BOLD.mix(0.9).filled(), INK),
                };
                root.draw(&Rectangle::new(corners, fill))?;
                match bar.kind {
                    // plotters' SVG rectangles carry no stroke width, so the thick edge is a path.
                    BarKind::Late => root.draw(&outline(corners, VERMILLION.stroke_width(3)))?,
                    BarKind::Unavailable => root.draw(&Rectangle::new(corners, GUIDE.stroke_width(1)))?,
                    _ => root.draw(&Rectangle::new(corners, BLUE.stroke_width(1)))?,
                }
                // Plotters sizes text by an estimate; about 7 px a character at this size.
                let room = x1 - x0 - 8;
                if !bar.label.is_empty() && room >= 7 * bar.label.chars().count() as i32 {
                    root.draw(&Text::new(
                        bar.label.clone(),
                        (x0 + 4, top + BAR_H / 2),
                        (FONT, SMALL_PX).into_font().color(&text).pos(Pos::new(HPos::Left, VPos::Center)),
                    ))?;
                }
            }
        }

        // Legend.
        let y = plot_bottom + AXIS_H + 8;
        let mut x = LEFT;
        for (kind, name) in [
            (BarKind::Check, "reference check"),
            (BarKind::Setup, "setup"),
            (BarKind::Test, "lot tests"),
            (BarKind::Late, "ends after ship time"),
            (BarKind::Unavailable, "rig not usable"),
        ] {
            let fill = match kind {
                BarKind::Check => GREEN.filled(),
                BarKind::Setup => GUIDE.mix(0.55).filled(),
                BarKind::Test | BarKind::Late => SKY.mix(0.85).filled(),
                BarKind::Unavailable => GRID_BOLD.mix(0.9).filled(),
            };
            root.draw(&Rectangle::new([(x, y), (x + 22, y + 14)], fill))?;
            if kind == BarKind::Late {
                root.draw(&outline([(x, y), (x + 22, y + 14)], VERMILLION.stroke_width(3)))?;
            } else {
                root.draw(&Rectangle::new([(x, y), (x + 22, y + 14)], GUIDE.stroke_width(1)))?;
            }
            root.draw(&Text::new(
                name.to_string(),
                (x + 28, y + 7),
                ink(SMALL_PX).pos(Pos::new(HPos::Left, VPos::Center)),
            ))?;
            x += 40 + 7 * name.chars().count() as i32;
        }
        Ok(())
    })
}

/// A closed path around a rectangle, drawn with `style`'s width.
fn outline(corners: [(i32, i32); 2], style: ShapeStyle) -> PathElement<(i32, i32)> {
    let [(x0, y0), (x1, y1)] = corners;
    PathElement::new(vec![(x0, y0), (x1, y0), (x1, y1), (x0, y1), (x0, y0)], style)
}

/// `14:00`, or `+1d 02:00` on a later day; whole days alone when the step is a day or more.
fn clock_label(seconds_since_midnight: f64, step: f64) -> String {
    let total = seconds_since_midnight.max(0.0).round() as i64;
    let (day, rest) = (total / 86_400, total % 86_400);
    let clock = format!("{:02}:{:02}", rest / 3600, rest % 3600 / 60);
    match (day, step >= 86_400.0) {
        (0, false) => clock,
        (day, false) => format!("+{day}d {clock}"),
        (day, true) => format!("+{day}d"),
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    fn bar(start_s: f64, end_s: f64, label: &str, kind: BarKind) -> GanttBar {
        GanttBar { start_s, end_s, label: label.into(), kind }
    }

    fn texts(svg: &str) -> Vec<String> {
        svg.split("<text")
            .skip(1)
            .filter_map(|rest| Some(rest.split_once('>')?.1.split_once("</text>")?.0.trim().to_owned()))
            .collect()
    }

    #[test]
    fn rows_bars_and_clock_ticks_are_drawn() {
        let rows = vec![
            GanttRow {
                label: "RIG-A".into(),
                bars: vec![
                    bar(0.0, 120.0, "ref", BarKind::Check),
                    bar(120.0, 420.0, "", BarKind::Setup),
                    bar(420.0, 6000.0, "L2612-031", BarKind::Test),
                    bar(6000.0, 9000.0, "<b>L-9</b>", BarKind::Late),
                ],
            },
            GanttRow {
                label: "RIG-C".into(),
                bars: vec![bar(14_400.0, 28_800.0, "calibration", BarKind::Unavailable)],
            },
        ];
        // A shift from 14:00 to 22:00.
        let svg = gantt_svg(&rows, 28_800.0, 14.0 * 3600.0, "plan").unwrap().into_string();
        assert!(svg.starts_with("<svg ") && svg.trim_end().ends_with("</svg>"));
        let labels = texts(&svg);
        for wanted in ["RIG-A", "RIG-C", "14:00", "18:00", "22:00", "L2612-031", "&lt;b&gt;L-9&lt;/b&gt;"] {
            assert!(labels.iter().any(|l| l == wanted), "no {wanted:?} in {labels:?}");
        }
        assert!(!svg.contains("<b>"), "text from lot names is escaped");
        // The late lot has the thick warning outline; the check is green.
        assert!(svg.contains("stroke=\"#D55E00\" stroke-width=\"3\""));
        assert!(svg.contains("fill=\"#009E73\""));
    }

    #[test]
    fn a_shift_past_midnight_labels_the_next_day() {
        // Common practice, no published source: 22:00 + 4 h is 02:00 on the next day.
        assert_eq!(clock_label(22.0 * 3600.0 + 4.0 * 3600.0, 3600.0), "+1d 02:00");
        assert_eq!(clock_label(14.0 * 3600.0, 3600.0), "14:00");
        assert_eq!(clock_label(3.0 * 86_400.0, 86_400.0), "+3d");
    }

    #[test]
    fn degenerate_input_gives_the_no_data_box() {
        let rows = vec![GanttRow { label: "R".into(), bars: vec![bar(0.0, 1.0, "x", BarKind::Test)] }];
        for horizon in [0.0, -5.0, f64::NAN, f64::INFINITY, 1e12] {
            let svg = gantt_svg(&rows, horizon, 0.0, "plan").unwrap();
            assert!(svg.as_str().contains("no data"), "{horizon}");
        }
        assert!(gantt_svg(&[], 3600.0, 0.0, "plan").unwrap().as_str().contains("no data"));
    }

    proptest! {
        /// Whatever the numbers, the chart is drawn (or refused) and never hangs: no tick
        /// search runs, and the tick loop is bounded.
        #[test]
        fn odd_numbers_never_break_the_chart(
            horizon in prop::num::f64::ANY,
            clock in prop::num::f64::ANY,
            bars in prop::collection::vec((prop::num::f64::ANY, prop::num::f64::ANY), 0..8),
        ) {
            let rows = vec![GanttRow {
                label: "R".into(),
                bars: bars.iter().map(|(a, b)| bar(*a, *b, "lot", BarKind::Test)).collect(),
            }];
            let svg = gantt_svg(&rows, horizon, clock, "plan").unwrap();
            prop_assert!(svg.as_str().starts_with("<svg "));
        }
    }
}
