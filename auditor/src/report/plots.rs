//! The HTML report's plots, drawn with plotters' SVG backend into strings that the page inlines: the error history
//! of one field (estimate and guaranteed bound per lens, on a log axis, with the absolute tolerance), the ratio
//! `err / allowed` of every field and lens against the tolerance line at 1, and a space × time heat map of a 1-D
//! field's per-cell error when the trace carries `profile` records.
//!
//! A log axis cannot show zero or negative values, and a plot of nothing is no help: points without a positive
//! finite value are left out, and a plot with no point left is not drawn (the caller says so in words).

use crate::analysis::Outcome;
use crate::trace::{Profile, Tolerance};
use plotters::coord::Shift;
use plotters::prelude::*;
use twinstep::sweep::{FormatRun, NeededBits};

/// Plot size in pixels: wide enough for a laptop screen, two plots fit a screen's height. Common practice, no source.
const WIDTH: u32 = 900;
const HEIGHT: u32 = 380;
/// Heat-map resolution cap: cells and snapshots beyond this are binned (max per bin), which keeps the SVG small.
const MAX_HEAT_COLUMNS: usize = 160;
const MAX_HEAT_ROWS: usize = 120;
/// Decades a log axis spans at most: enough for an error history from 1e-17 to far past any tolerance.
const MAX_DECADES: i32 = 24;

/// Line colours, one per lens, distinguishable for the common colour-vision deficiencies (Okabe & Ito's palette,
/// "Color Universal Design", 2008; from memory).
const PALETTE: [RGBColor; 6] = [
    RGBColor(0, 114, 178),
    RGBColor(213, 94, 0),
    RGBColor(0, 158, 115),
    RGBColor(204, 121, 167),
    RGBColor(230, 159, 0),
    RGBColor(86, 180, 233),
];

/// The colour of the `index`-th series.
fn colour(index: usize) -> RGBColor {
    PALETTE[index % PALETTE.len()]
}

/// The error plotters reports, as text for the page.
fn failed<E: std::fmt::Debug>(error: E) -> String {
    format!("plot could not be drawn: {error:?}")
}

fn positive(value: Option<f64>) -> Option<f64> {
    value.filter(|v| v.is_finite() && *v > 0.0)
}

/// A log-axis range that holds every value with some margin; `None` when there is nothing to show.
fn log_range(values: impl Iterator<Item = f64>) -> Option<(f64, f64)> {
    let (lo, hi) = values.fold((f64::INFINITY, 0.0_f64), |(lo, hi), v| (lo.min(v), hi.max(v)));
    if !(lo.is_finite() && hi.is_finite() && lo > 0.0) {
        return None;
    }
    // Half a decade of margin each side; a single value still gets a decade of axis. The top stays finite: a value
    // near f64::MAX times 3 would be +∞, and a log mesh up to +∞ never ends.
    Some((lo / 3.0, (hi * 3.0).min(f64::MAX)))
}

/// The step range of the x axis.
fn step_range(steps: impl Iterator<Item = u64>) -> (f64, f64) {
    let (lo, hi) = steps.fold((u64::MAX, 0), |(lo, hi), s| (lo.min(s), hi.max(s)));
    if lo >= hi {
        (lo.min(hi) as f64, hi as f64 + 1.0)
    } else {
        (lo as f64, hi as f64)
    }
}

/// One line of a chart: its label, colour, dash, and points.
struct Line {
    label: String,
    colour: RGBColor,
    dashed: bool,
    points: Vec<(f64, f64)>,
}

/// Draws lines on a log-y chart (x: steps, or bits of precision) with a caption and axis names, plus an optional horizontal reference line.
fn line_chart(
    caption: &str,
    x_name: &str,
    y_name: &str,
    lines: &[Line],
    reference: Option<(f64, &str)>,
) -> Result<Option<String>, String> {
    let ys = lines.iter().flat_map(|l| l.points.iter().map(|p| p.1)).chain(reference.map(|r| r.0));
    let Some((y_lo, y_hi)) = log_range(ys) else { return Ok(None) };
    // At most MAX_DECADES on the axis, counted down from the top (the callers put the top three decades above
    // what the judging lenses reach): errors that underflow towards 1e-320 would otherwise stretch the axis over
    // hundreds of decades, and a log mesh over subnormal numbers never ends. The bottom is at least the smallest
    // normal double (IEEE 754-2019 Table 3.5, binary64 emin = −1022); points beyond either end are drawn there.
    let y_lo = y_lo.max(y_hi / 10f64.powi(MAX_DECADES)).max(f64::MIN_POSITIVE);
    let y_hi = y_hi.max(y_lo * 10.0);
    let clamp =
        |points: &[(f64, f64)]| -> Vec<(f64, f64)> { points.iter().map(|&(x, y)| (x, y.clamp(y_lo, y_hi))).collect() };
    let (x_lo, x_hi) = step_range(lines.iter().flat_map(|l| l.points.iter().map(|p| p.0 as u64)));
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (WIDTH, HEIGHT)).into_drawing_area();
        root.fill(&WHITE).map_err(failed)?;
        let mut chart = ChartBuilder::on(&root)
            .caption(caption, ("sans-serif", 18))
            .margin(12)
            .x_label_area_size(40)
            .y_label_area_size(80)
            .build_cartesian_2d(x_lo..x_hi, (y_lo..y_hi).log_scale())
            .map_err(failed)?;
        chart
            .configure_mesh()
            .label_style(("sans-serif", 14))
            .axis_desc_style(("sans-serif", 15))
            .x_desc(x_name)
            .y_desc(y_name)
            .y_label_formatter(&|v| format!("{v:.0e}"))
            .x_label_formatter(&|v| format!("{v:.0}"))
            .draw()
            .map_err(failed)?;
        for line in lines {
            let style = line.colour.stroke_width(2);
            let colour = line.colour;
            let points = clamp(&line.points);
            let series = if line.dashed {
                chart.draw_series(DashedLineSeries::new(points, 6, 4, style))
            } else {
                chart.draw_series(LineSeries::new(points, style))
            };
            series
                .map_err(failed)?
                .label(line.label.clone())
                .legend(move |(x, y)| PathElement::new(vec![(x, y), (x + 20, y)], colour.stroke_width(2)));
        }
        if let Some((value, label)) = reference {
            let red = RGBColor(200, 0, 0);
            chart
                .draw_series(DashedLineSeries::new([(x_lo, value), (x_hi, value)], 3, 3, red.stroke_width(2)))
                .map_err(failed)?
                .label(label)
                .legend(move |(x, y)| PathElement::new(vec![(x, y), (x + 20, y)], red.stroke_width(2)));
        }
        chart
            .configure_series_labels()
            .label_font(("sans-serif", 14))
            .background_style(WHITE.mix(0.85))
            .border_style(BLACK)
            .position(SeriesLabelPosition::UpperLeft)
            .draw()
            .map_err(failed)?;
        root.present().map_err(failed)?;
    }
    Ok(Some(svg))
}

/// The outcomes among `outcomes` that judge (the analysis's one rule, [`crate::analysis::Outcome::judges`]).
fn judging(outcomes: &[Outcome]) -> impl Iterator<Item = &Outcome> {
    outcomes.iter().filter(|o| o.judges)
}

/// The top of a field's error axes and colour scale: three decades above the largest finite error the judging
/// lenses of the field reach and the absolute part of the tolerance, so that a bound that ran away (the
/// dependency effect, up to overflow) does not squash or wash out what the estimates show. Infinite (no clip)
/// when there is nothing to focus on.
pub fn ceiling(outcomes: &[Outcome], tolerance: Tolerance) -> f64 {
    let atol = match tolerance {
        Tolerance::Absolute { atol } | Tolerance::Mixed { atol, .. } => positive(Some(atol)),
        Tolerance::Relative { .. } | Tolerance::Ulps { .. } => None,
    };
    let focus = judging(outcomes)
        .flat_map(|o| o.points.iter().filter_map(|p| positive(Some(p.max_err))))
        .chain(atol)
        .fold(0.0_f64, f64::max);
    if focus > 0.0 {
        focus * 1e3
    } else {
        f64::INFINITY
    }
}

/// The error history of one field: per lens the estimate (solid) and the guaranteed bound (dashed), with the
/// absolute part of the tolerance as a red line where the tolerance has one.
pub fn field_errors(field: &str, outcomes: &[Outcome], tolerance: Tolerance) -> Result<Option<String>, String> {
    let reference = atol_line(tolerance);
    // A bound that has run away (the dependency effect) would squash the estimates into one line at the
    // bottom: the axis stops three decades above the largest estimate and tolerance, and the bound is drawn
    // clipped there, its label saying so.
    let ceiling = ceiling(outcomes, tolerance);
    let mut lines = Vec::new();
    for (index, outcome) in outcomes.iter().enumerate() {
        let estimate: Vec<(f64, f64)> = outcome
            .points
            .iter()
            .filter_map(|p| positive(Some(p.max_err)).map(|e| (p.step as f64, e.min(ceiling))))
            .collect();
        // A bound that overflowed to infinity is as lost as one above the ceiling: both are drawn at the ceiling.
        let bound: Vec<(f64, f64)> = outcome
            .points
            .iter()
            .filter_map(|p| p.bound.filter(|b| *b > 0.0).map(|b| (p.step as f64, b.min(ceiling))))
            .collect();
        if !estimate.is_empty() {
            let label = format!("{}: max error (estimate)", outcome.lens);
            lines.push(Line { label, colour: colour(index), dashed: false, points: estimate });
        }
        if !bound.is_empty() {
            let clipped = bound.iter().any(|p| p.1 >= ceiling);
            let label =
                format!("{}: guaranteed bound{}", outcome.lens, if clipped { " (clipped at the top)" } else { "" });
            lines.push(Line { label, colour: colour(index), dashed: true, points: bound });
        }
    }
    line_chart(&format!("rounding error in `{field}`"), "step", "|primal − exact| (max over cells)", &lines, reference)
}

/// Every field and lens as `err / allowed`, against the tolerance line at 1: which field crosses, and when.
pub fn tolerance_ratios(outcomes: &[Outcome]) -> Result<Option<String>, String> {
    // As in `field_errors`: three decades above what the judging lenses reach (and above the line at 1).
    let ceiling = 1e3
        * judging(outcomes)
            .flat_map(|o| o.points.iter().filter_map(|p| positive(Some(p.tol_ratio))))
            .fold(1.0, f64::max);
    let lines: Vec<Line> = outcomes
        .iter()
        .enumerate()
        .map(|(index, o)| Line {
            label: format!("{} ({})", o.field, o.lens),
            colour: colour(index),
            dashed: false,
            points: o
                .points
                .iter()
                .filter_map(|p| positive(Some(p.tol_ratio)).map(|r| (p.step as f64, r.min(ceiling))))
                .collect(),
        })
        .filter(|l| !l.points.is_empty())
        .collect();
    line_chart(
        "error / allowed, every field and lens",
        "step",
        "err / allowed (max over cells)",
        &lines,
        Some((1.0, "tolerance")),
    )
}

/// The absolute part of a tolerance as a reference line, where it has one.
fn atol_line(tolerance: Tolerance) -> Option<(f64, &'static str)> {
    match tolerance {
        Tolerance::Absolute { atol } => positive(Some(atol)).map(|a| (a, "tolerance (atol)")),
        Tolerance::Mixed { atol, .. } => positive(Some(atol)).map(|a| (a, "tolerance, absolute part (atol)")),
        Tolerance::Relative { .. } | Tolerance::Ulps { .. } => None,
    }
}

/// A precision sweep's curves of one field: its largest error against the step, one line per format's run (the
/// steps each run's trace recorded), with the absolute part of the tolerance where it has one.
pub fn format_errors(field: &str, runs: &[FormatRun], tolerance: Tolerance) -> Result<Option<String>, String> {
    let lines: Vec<Line> = runs
        .iter()
        .enumerate()
        .filter_map(|(index, run)| {
            let points: Vec<(f64, f64)> = run
                .fields
                .iter()
                .find(|f| f.name == field)?
                .history
                .iter()
                .filter_map(|&(step, err)| positive(Some(err)).map(|e| (step as f64, e)))
                .collect();
            let label = format!("{} ({} bits)", run.format, run.bits);
            (!points.is_empty()).then(|| Line { label, colour: colour(index), dashed: false, points })
        })
        .collect();
    line_chart(
        &format!("rounding error in `{field}`, per format"),
        "step",
        "|primal − exact| (max over cells)",
        &lines,
        atol_line(tolerance),
    )
}

/// A precision sweep's error at the horizon of one field against the precision p (every run, by bits), the error
/// the tolerance allows there as the reference line, and the fitted law `log2 err ≈ a + b·p` dashed where binary64
/// is not enough and there is one (drawn out to the bits it says are needed).
pub fn precision_errors(field: &str, runs: &[FormatRun], need: Option<&NeededBits>) -> Result<Option<String>, String> {
    let mut points: Vec<(f64, f64)> = runs
        .iter()
        .filter_map(|run| {
            let f = run.fields.iter().find(|f| f.name == field)?;
            positive(Some(f.horizon_err)).map(|e| (f64::from(run.bits), e))
        })
        .collect();
    points.sort_by(|a, b| a.0.total_cmp(&b.0));
    points.dedup_by(|a, b| a.0 == b.0);
    // What the tolerance allows at the widest run's worst cell: the level a format has to stay under.
    let allowed = runs
        .iter()
        .max_by_key(|r| r.bits)
        .and_then(|r| r.fields.iter().find(|f| f.name == field))
        .and_then(|f| positive(Some(f.allowed_err)));
    let mut lines = vec![Line { label: "error at the horizon".to_owned(), colour: colour(0), dashed: false, points }];
    if let Some((law, needed)) = need.and_then(|n| n.law.map(|l| (l, n.bits))) {
        let (lo, hi) = lines[0].points.iter().fold((f64::INFINITY, 0.0_f64), |(lo, hi), p| (lo.min(p.0), hi.max(p.0)));
        let hi = needed.filter(|b| b.is_finite()).map_or(hi, |b| hi.max(b.ceil()));
        if lo < hi {
            let label = format!("fitted law log2 err = {:.2} {:+.3}·p", law.a, law.b);
            let points = vec![(lo, law.at(lo)), (hi, law.at(hi))];
            lines.push(Line { label, colour: colour(1), dashed: true, points });
        }
    }
    line_chart(
        &format!("error in `{field}` at the horizon against precision"),
        "precision p (significand bits)",
        "|primal − exact| at the horizon",
        &lines,
        allowed.map(|a| (a, "allowed error")),
    )
}

/// A colour for `t` in [0, 1]: dark blue through teal to yellow, bright meaning more error. Common practice, no
/// source (a perceptually ordered ramp in the manner of viridis).
fn ramp(t: f64) -> RGBColor {
    const STOPS: [(f64, f64, f64); 4] =
        [(48.0, 18.0, 89.0), (33.0, 114.0, 141.0), (94.0, 201.0, 98.0), (253.0, 231.0, 37.0)];
    let t = if t.is_finite() { t.clamp(0.0, 1.0) } else { 0.0 };
    let scaled = t * (STOPS.len() - 1) as f64;
    let i = (scaled.floor() as usize).min(STOPS.len() - 2);
    let f = scaled - i as f64;
    let (a, b) = (STOPS[i], STOPS[i + 1]);
    // Linear interpolation per channel: a + f (b − a).
    let mix = |x: f64, y: f64| (x + f * (y - x)).round().clamp(0.0, 255.0) as u8;
    RGBColor(mix(a.0, b.0), mix(a.1, b.1), mix(a.2, b.2))
}

/// Indices `0..n` grouped into at most `max` consecutive bins.
fn bins(n: usize, max: usize) -> Vec<std::ops::Range<usize>> {
    let count = n.min(max).max(1);
    (0..count)
        .map(|b| (b * n / count)..((b + 1) * n / count).max(b * n / count + 1).min(n))
        .filter(|r| !r.is_empty())
        .collect()
}

/// A drawn heat map and, when its colour scale was clipped, the sentence that says so.
pub struct HeatMap {
    pub svg: String,
    pub clip: Option<String>,
}

/// The space × time heat map of one 1-D field under one lens: cell along x, recorded step along y (bottom = first),
/// colour = log10 of the cell's error, with a colour bar. The colour scale stops at `ceiling` (see [`ceiling`])
/// and spans at most `MAX_DECADES` below its top; values beyond are drawn in the end colours and the returned
/// `clip` sentence says so.
pub fn heat_map(field: &str, lens: &str, profiles: &[&Profile], ceiling: f64) -> Result<Option<HeatMap>, String> {
    let mut ordered: Vec<&Profile> = profiles.to_vec();
    ordered.sort_by_key(|p| p.step);
    let width = ordered.iter().map(|p| p.err.len()).max().unwrap_or(0);
    if width == 0 {
        return Ok(None);
    }
    // A profile value covers `cells_per_value` cells: the x axis counts cells, not values.
    let cells_per_value = ordered.iter().map(|p| p.cells_per_value).max().unwrap_or(1).max(1) as f64;
    let row_bins = bins(ordered.len(), MAX_HEAT_ROWS);
    let column_bins = bins(width, MAX_HEAT_COLUMNS);
    // grid[row][column] = log10 of the largest positive error in the bin.
    let grid: Vec<(u64, Vec<Option<f64>>)> = row_bins
        .iter()
        .map(|rows| {
            let step = ordered[rows.end - 1].step;
            let values = column_bins
                .iter()
                .map(|cols| {
                    let mut best: Option<f64> = None;
                    for profile in &ordered[rows.clone()] {
                        for value in cols.clone().filter_map(|c| positive(profile.err.get(c).copied().flatten())) {
                            best = Some(best.map_or(value, |b: f64| b.max(value)));
                        }
                    }
                    best.map(f64::log10)
                })
                .collect();
            (step, values)
        })
        .collect();
    let logs = grid.iter().flat_map(|(_, v)| v.iter().flatten().copied());
    let (lo, hi) = logs.fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), v| (lo.min(v), hi.max(v)));
    if !(lo.is_finite() && hi.is_finite()) {
        return Ok(None);
    }
    // Clip the scale to the meaningful range: at most the ceiling, at most MAX_DECADES deep.
    let top = if ceiling.is_finite() && ceiling > 0.0 { hi.min(ceiling.log10()) } else { hi };
    let bottom = lo.max(top - f64::from(MAX_DECADES)).min(top);
    let cells = grid.iter().flat_map(|(_, v)| v.iter().flatten());
    let (above, below, total) = cells
        .fold((0usize, 0usize, 0usize), |(a, b, t), &v| (a + usize::from(v > top), b + usize::from(v < bottom), t + 1));
    let clip = (above + below > 0).then(|| {
        let mut parts = Vec::new();
        if above > 0 {
            parts.push(format!(
                "the colour scale stops at {} (three decades above the largest error the judging lenses reach and \
                 the absolute tolerance); {above} of {total} cells lie above it and are drawn in the top colour",
                twinstep::report::format::error(10f64.powf(top))
            ));
        }
        if below > 0 {
            parts.push(format!(
                "it spans at most {MAX_DECADES} decades; {below} of {total} cells lie below {} and are drawn in the \
                 bottom colour",
                twinstep::report::format::error(10f64.powf(bottom))
            ));
        }
        format!("Clipped: {}.", parts.join("; "))
    });
    let (lo, hi) = (bottom, top);
    let grid: Vec<(u64, Vec<Option<f64>>)> =
        grid.into_iter().map(|(step, v)| (step, v.into_iter().map(|x| x.map(|x| x.clamp(lo, hi))).collect())).collect();
    let span = if hi > lo { hi - lo } else { 1.0 };
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (WIDTH, HEIGHT + 60)).into_drawing_area();
        root.fill(&WHITE).map_err(failed)?;
        let (left, right): (DrawingArea<SVGBackend, Shift>, _) = root.split_horizontally(WIDTH - 110);
        let caption = format!("per-cell rounding error in `{field}` ({lens}), space × time");
        let rows = grid.len();
        let steps: Vec<u64> = grid.iter().map(|(s, _)| *s).collect();
        let mut chart = ChartBuilder::on(&left)
            .caption(caption, ("sans-serif", 18))
            .margin(12)
            .x_label_area_size(40)
            .y_label_area_size(70)
            .build_cartesian_2d(
                0.0..width as f64 * cells_per_value,
                (0..(rows as u32).saturating_sub(1)).into_segmented(),
            )
            .map_err(failed)?;
        // One label per row at most a dozen times: each names the last step the row covers.
        chart
            .configure_mesh()
            .disable_mesh()
            .label_style(("sans-serif", 14))
            .axis_desc_style(("sans-serif", 15))
            .x_desc("cell")
            .y_desc("step")
            .y_labels(rows.min(12))
            .x_label_formatter(&|v| format!("{v:.0}"))
            .y_label_formatter(&|v| match v {
                SegmentValue::CenterOf(row) | SegmentValue::Exact(row) => {
                    steps.get(*row as usize).map_or_else(String::new, u64::to_string)
                }
                SegmentValue::Last => String::new(),
            })
            .draw()
            .map_err(failed)?;
        let rectangles = grid.iter().enumerate().flat_map(|(row, (_, values))| {
            column_bins.iter().zip(values).filter_map(move |(cols, value)| {
                value.map(|v| {
                    let corner_a = (cols.start as f64 * cells_per_value, SegmentValue::Exact(row as u32));
                    let corner_b = (cols.end as f64 * cells_per_value, SegmentValue::Exact(row as u32 + 1));
                    Rectangle::new([corner_a, corner_b], ramp((v - lo) / span).filled())
                })
            })
        });
        chart.draw_series(rectangles).map_err(failed)?;
        // The colour bar: 50 bands from lo (bottom) to hi (top), labelled in decades.
        let mut bar = ChartBuilder::on(&right)
            .margin_top(40)
            .margin_bottom(52)
            .margin_right(8)
            .y_label_area_size(60)
            .build_cartesian_2d(0.0..1.0, lo..lo + span)
            .map_err(failed)?;
        bar.configure_mesh()
            .disable_mesh()
            .disable_x_axis()
            .label_style(("sans-serif", 13))
            .axis_desc_style(("sans-serif", 14))
            .y_desc("log10 error")
            .y_label_formatter(&|v| format!("{v:.1}"))
            .draw()
            .map_err(failed)?;
        let bands = (0..50).map(|k| {
            let (a, b) = (lo + span * k as f64 / 50.0, lo + span * (k + 1) as f64 / 50.0);
            Rectangle::new([(0.0, a), (1.0, b)], ramp((k as f64 + 0.5) / 50.0).filled())
        });
        bar.draw_series(bands).map_err(failed)?;
        root.present().map_err(failed)?;
    }
    Ok(Some(HeatMap { svg, clip }))
}
