//! The figures' data and their drawing on any plotters backend.

use super::{BAND, BAND_LIGHT, BLUE, FONT, GRID, INK, MUTED, ORANGE};
use plotters::chart::MeshStyle;
use plotters::coord::Shift;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};

/// Most studies drawn one by one in a forest plot; beyond that the figure shows the
/// benchmark rows and says how many studies are behind them.
pub fn forest_capacity() -> usize {
    60
}

/// One row of a forest plot (coefficient scale).
#[derive(Debug, Clone, PartialEq)]
pub struct ForestRow {
    /// Label.
    pub label: String,
    /// Estimate.
    pub estimate: f64,
    /// Lower end of its interval.
    pub lower: f64,
    /// Upper end.
    pub upper: f64,
    /// Weight in percent (marker size).
    pub weight: f64,
}

/// A study in a moderator plot.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct BubblePoint {
    /// Moderator value.
    pub x: f64,
    /// Coefficient (or transformed value).
    pub y: f64,
    /// Weight (marker area).
    pub weight: f64,
}

/// The fitted line with its bands at one moderator value.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FitBand {
    /// Moderator value.
    pub x: f64,
    /// Fitted value.
    pub fit: f64,
    /// Confidence band.
    pub ci: (f64, f64),
    /// Prediction band.
    pub pi: Option<(f64, f64)>,
}

/// How a bubble chart's axes read.
#[derive(Debug, Clone, PartialEq)]
pub enum BubbleAxes {
    /// The values as they are, with round ticks.
    Linear,
    /// The score-spread scales: x holds ln(SD) and y −ln(1 − coefficient) (higher is a
    /// higher coefficient), so that the model is a straight line; ticks sit at the given
    /// SDs and coefficients and read in those units.
    Spread {
        /// SD values to mark on the x axis.
        sd_ticks: Vec<f64>,
        /// Coefficient values to mark on the y axis.
        coefficient_ticks: Vec<f64>,
    },
}

/// A line of a sensitivity plot.
#[derive(Debug, Clone, PartialEq)]
pub struct SensitivitySeries {
    /// Legend label.
    pub label: String,
    /// (reliability, corrected value) points; `None` where the correction is impossible.
    pub points: Vec<(f64, Option<f64>)>,
}

/// What a figure shows.
#[derive(Debug, Clone, PartialEq)]
pub enum Kind {
    /// Studies with intervals, the pooled value and the expected range.
    Forest {
        /// Studies shown.
        rows: Vec<ForestRow>,
        /// The pooled value and its confidence interval.
        pooled: ForestRow,
        /// The prediction interval (expected range).
        prediction: Option<(f64, f64)>,
        /// Studies not drawn one by one.
        omitted: usize,
        /// Axis label.
        x_label: String,
    },
    /// Coefficients against a moderator with the fitted line and bands.
    Bubble {
        /// Studies.
        points: Vec<BubblePoint>,
        /// The fitted line.
        fit: Vec<FitBand>,
        /// A reference line (e.g. slope −2) and its legend label.
        reference: Option<(Vec<(f64, f64)>, String)>,
        /// How the axes read.
        axes: BubbleAxes,
        /// Axis labels.
        x_label: String,
        /// Axis label.
        y_label: String,
    },
    /// The distribution a new study's coefficient is expected to follow.
    Placement {
        /// (coefficient, density) points.
        curve: Vec<(f64, f64)>,
        /// The expected range.
        range: (f64, f64),
        /// The expected coefficient.
        expected: f64,
        /// The new study's coefficient.
        observed: f64,
        /// Axis label.
        x_label: String,
    },
    /// Corrected values over reliabilities.
    Sensitivity {
        /// Lines.
        series: Vec<SensitivitySeries>,
        /// The reliabilities used and the corrected value (marked).
        marker: Option<(f64, f64)>,
        /// Axis labels.
        x_label: String,
        /// Axis label.
        y_label: String,
    },
    /// Coefficients (transformed) against their standard errors.
    Funnel {
        /// (value, SE) points.
        points: Vec<(f64, f64)>,
        /// The pooled value.
        centre: f64,
        /// Axis labels.
        x_label: String,
        /// Axis label.
        y_label: String,
    },
}

/// A figure: what it shows and how it is named.
#[derive(Debug, Clone, PartialEq)]
pub struct Figure {
    /// File stem (`forest` → forest.svg, forest.png).
    pub name: String,
    /// Title drawn at the top.
    pub title: String,
    /// A text description of what the figure shows (for screen readers and captions).
    pub description: String,
    /// Size of the SVG in pixels.
    pub size: (u32, u32),
    /// The data.
    pub kind: Kind,
}

type DrawResult<DB> = Result<(), DrawingAreaErrorKind<<DB as DrawingBackend>::ErrorType>>;

/// A range with a little room on both sides (and a minimum width).
fn padded(lo: f64, hi: f64) -> (f64, f64) {
    let (lo, hi) = if lo <= hi { (lo, hi) } else { (hi, lo) };
    let width = (hi - lo).max(1e-6);
    (lo - 0.06 * width, hi + 0.06 * width)
}

fn finite_range(values: impl Iterator<Item = f64>) -> Option<(f64, f64)> {
    let mut lo = f64::INFINITY;
    let mut hi = f64::NEG_INFINITY;
    for v in values.filter(|v| v.is_finite()) {
        lo = lo.min(v);
        hi = hi.max(v);
    }
    (lo <= hi).then_some((lo, hi))
}

impl Figure {
    /// Draw on `root`; `scale` multiplies font sizes and line widths (2 for PNG).
    pub(super) fn draw<DB: DrawingBackend>(
        &self,
        root: &DrawingArea<DB, Shift>,
        scale: f64,
    ) -> DrawResult<DB> {
        root.fill(&WHITE)?;
        let title_style = (FONT, 17.0 * scale)
            .into_font()
            .style(FontStyle::Bold)
            .color(&INK);
        let inset = (10.0 * scale) as u32;
        let area = root
            .margin(inset, 0, 0, 0)
            .titled(&self.title, title_style)?;
        match &self.kind {
            Kind::Forest {
                rows,
                pooled,
                prediction,
                omitted,
                x_label,
            } => forest(
                &area,
                root,
                scale,
                rows,
                pooled,
                *prediction,
                *omitted,
                x_label,
            )?,
            Kind::Bubble {
                points,
                fit,
                reference,
                axes,
                x_label,
                y_label,
            } => bubble(
                &area,
                scale,
                &BubbleData {
                    points,
                    fit,
                    reference: reference.as_ref(),
                },
                axes,
                (x_label, y_label),
            )?,
            Kind::Placement {
                curve,
                range,
                expected,
                observed,
                x_label,
            } => placement(&area, scale, curve, *range, *expected, *observed, x_label)?,
            Kind::Sensitivity {
                series,
                marker,
                x_label,
                y_label,
            } => sensitivity(&area, scale, series, *marker, x_label, y_label)?,
            Kind::Funnel {
                points,
                centre,
                x_label,
                y_label,
            } => funnel(&area, scale, points, *centre, x_label, y_label)?,
        }
        Ok(())
    }
}

/// A tick label: whole numbers without decimals, others with up to three, a true minus.
fn tick(v: f64) -> String {
    let v = if v.abs() < 1e-12 { 0.0 } else { v };
    let s = if (v - v.round()).abs() < 1e-9 {
        format!("{}", v.round() as i64)
    } else {
        let s = format!("{v:.3}");
        s.trim_end_matches('0').to_string()
    };
    s.replace('-', "−")
}

fn label_font(scale: f64) -> TextStyle<'static> {
    (FONT, 14.0 * scale).into_font().color(&INK)
}

fn tick_font(scale: f64) -> TextStyle<'static> {
    (FONT, 12.0 * scale).into_font().color(&INK)
}

/// relyard's axes: labels in slate ink, a faint grid, no minor lines.
fn house_mesh<'m, 'a, 'b, X, Y, DB>(
    mesh: &'m mut MeshStyle<'a, 'b, X, Y, DB>,
    scale: f64,
) -> &'m mut MeshStyle<'a, 'b, X, Y, DB>
where
    X: Ranged<ValueType: std::fmt::Debug>,
    Y: Ranged<ValueType: std::fmt::Debug>,
    DB: DrawingBackend,
{
    mesh.axis_desc_style(label_font(scale))
        .label_style(tick_font(scale))
        .axis_style(ShapeStyle::from(&INK).stroke_width(1))
        .bold_line_style(ShapeStyle::from(&GRID).stroke_width(1))
        .light_line_style(ShapeStyle::from(&WHITE).stroke_width(0))
}

/// The legend box, in the same style on every figure.
fn legend<'c, 'a: 'c, DB: DrawingBackend + 'a, X: Ranged, Y: Ranged>(
    chart: &'c mut ChartContext<'a, DB, Cartesian2d<X, Y>>,
    scale: f64,
    position: SeriesLabelPosition,
) -> DrawResult<DB> {
    chart
        .configure_series_labels()
        .label_font(tick_font(scale))
        .background_style(WHITE.mix(0.85))
        .border_style(GRID)
        .position(position)
        .draw()
}

/// A chart with relyard's axes: labels, a faint grid, slate ink.
macro_rules! axes {
    ($area:expr, $scale:expr, $x:expr, $y:expr, $xl:expr, $yl:expr, $left:expr) => {{
        let mut chart = ChartBuilder::on($area)
            .margin((14.0 * $scale) as i32)
            .x_label_area_size((44.0 * $scale) as i32)
            .y_label_area_size(($left * $scale) as i32)
            .build_cartesian_2d($x.0..$x.1, $y.0..$y.1)?;
        house_mesh(&mut chart.configure_mesh(), $scale)
            .x_desc($xl)
            .y_desc($yl)
            .x_labels(7)
            .y_labels(7)
            .x_label_formatter(&|v| tick(*v))
            .y_label_formatter(&|v| tick(*v))
            .draw()?;
        chart
    }};
}

#[allow(clippy::too_many_arguments)]
fn forest<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    root: &DrawingArea<DB, Shift>,
    scale: f64,
    rows: &[ForestRow],
    pooled: &ForestRow,
    prediction: Option<(f64, f64)>,
    omitted: usize,
    x_label: &str,
) -> DrawResult<DB> {
    // Rows from the top: studies, a gap, the pooled value, the expected range. Marker
    // area is proportional to weight.
    let n = rows.len() as f64 + 3.0;
    let all = rows
        .iter()
        .chain(std::iter::once(pooled))
        .flat_map(|r| [r.lower, r.upper, r.estimate])
        .chain(prediction.into_iter().flat_map(|(a, b)| [a, b]));
    let (lo, hi) = finite_range(all).unwrap_or((0.0, 1.0));
    let x = padded(lo, hi);
    let label_width = 190.0;
    let (labels, plot) = area.split_horizontally((label_width * scale) as i32);
    let mut chart = ChartBuilder::on(&plot)
        .margin((14.0 * scale) as i32)
        .x_label_area_size((44.0 * scale) as i32)
        .y_label_area_size(0)
        .build_cartesian_2d(x.0..x.1, 0.0..n)?;
    house_mesh(&mut chart.configure_mesh(), scale)
        .x_desc(x_label)
        .disable_y_mesh()
        .disable_y_axis()
        .x_labels(7)
        .x_label_formatter(&|v| tick(*v))
        .draw()?;
    forest_marks(&mut chart, scale, rows, pooled, prediction)?;
    let y_of = |i: f64| forest_y(n, i);
    let yp = y_of(rows.len() as f64 + 1.0);
    // Row labels, placed level with their rows.
    let font = tick_font(scale);
    let bold = (FONT, 12.0 * scale)
        .into_font()
        .style(FontStyle::Bold)
        .color(&INK);
    let left = labels.get_pixel_range().0.start;
    let put = |text: &str, y: f64, style: &TextStyle| -> DrawResult<DB> {
        let (_, py) = chart.backend_coord(&(x.0, y));
        root.draw(&Text::new(
            text.to_string(),
            (left + (8.0 * scale) as i32, py),
            style.clone().pos(Pos::new(HPos::Left, VPos::Center)),
        ))
    };
    for (i, r) in rows.iter().enumerate() {
        put(&shorten(&r.label, 24), y_of(i as f64), &font)?;
    }
    let pooled_label = if omitted > 0 {
        format!("Pooled ({} studies)", rows.len() + omitted)
    } else {
        "Pooled (confidence interval)".to_string()
    };
    put(&pooled_label, yp, &bold)?;
    if prediction.is_some() {
        put(
            "Expected range (prediction)",
            y_of(rows.len() as f64 + 2.0),
            &bold,
        )?;
    }
    if omitted > 0 {
        put(
            &format!("{omitted} more studies not drawn"),
            y_of(rows.len() as f64),
            &tick_font(scale).color(&MUTED),
        )?;
    }
    Ok(())
}

/// Where row `i` (from the top) of a forest plot of `n` rows sits on the y axis.
fn forest_y(n: f64, i: f64) -> f64 {
    n - 0.5 - i
}

/// The forest plot's marks: the pooled guide, each study's interval and weighted
/// marker, the pooled diamond and the expected range.
fn forest_marks<'a, DB, X, Y>(
    chart: &mut ChartContext<'a, DB, Cartesian2d<X, Y>>,
    scale: f64,
    rows: &[ForestRow],
    pooled: &ForestRow,
    prediction: Option<(f64, f64)>,
) -> DrawResult<DB>
where
    DB: DrawingBackend + 'a,
    X: Ranged<ValueType = f64>,
    Y: Ranged<ValueType = f64>,
{
    let n = rows.len() as f64 + 3.0;
    let y_of = |i: f64| forest_y(n, i);
    let max_w = rows.iter().map(|r| r.weight).fold(0.0, f64::max).max(1e-12);
    let line = (1.0 * scale).ceil() as u32;
    // The pooled value, as a faint vertical guide.
    chart.draw_series(std::iter::once(PathElement::new(
        vec![(pooled.estimate, 0.0), (pooled.estimate, n)],
        ShapeStyle::from(&MUTED.mix(0.6)).stroke_width(line),
    )))?;
    for (i, r) in rows.iter().enumerate() {
        let y = y_of(i as f64);
        chart.draw_series(std::iter::once(PathElement::new(
            vec![(r.lower, y), (r.upper, y)],
            ShapeStyle::from(&INK).stroke_width(line),
        )))?;
        // Marker area proportional to weight (a floor keeps the lightest visible).
        let half = ((7.0 * (r.weight / max_w).sqrt()).max(1.5) * scale) as i32;
        chart.draw_series(std::iter::once(
            EmptyElement::at((r.estimate, y))
                + Rectangle::new([(-half, -half), (half, half)], BLUE.filled()),
        ))?;
    }
    // The pooled value: a diamond spanning its confidence interval.
    let yp = y_of(rows.len() as f64 + 1.0);
    let h = 0.38;
    chart.draw_series(std::iter::once(Polygon::new(
        vec![
            (pooled.lower, yp),
            (pooled.estimate, yp + h),
            (pooled.upper, yp),
            (pooled.estimate, yp - h),
        ],
        ORANGE.filled(),
    )))?;
    if let Some((a, b)) = prediction {
        let y = y_of(rows.len() as f64 + 2.0);
        let w = (2.0 * scale).ceil() as u32;
        chart.draw_series(std::iter::once(PathElement::new(
            vec![(a, y), (b, y)],
            ShapeStyle::from(&ORANGE).stroke_width(w),
        )))?;
        for end in [a, b] {
            chart.draw_series(std::iter::once(PathElement::new(
                vec![(end, y - 0.25), (end, y + 0.25)],
                ShapeStyle::from(&ORANGE).stroke_width(w),
            )))?;
        }
    }
    Ok(())
}

fn shorten(s: &str, max: usize) -> String {
    if s.chars().count() <= max {
        s.to_string()
    } else {
        let t: String = s.chars().take(max - 1).collect();
        format!("{t}…")
    }
}

fn band_polygon(
    points: &[FitBand],
    pick: impl Fn(&FitBand) -> Option<(f64, f64)>,
) -> Vec<(f64, f64)> {
    let mut upper: Vec<(f64, f64)> = Vec::new();
    let mut lower: Vec<(f64, f64)> = Vec::new();
    for p in points {
        if let Some((a, b)) = pick(p) {
            lower.push((p.x, a));
            upper.push((p.x, b));
        }
    }
    lower.extend(upper.into_iter().rev());
    lower
}

/// A linear axis whose ticks sit at given values (for axes labelled in other units than
/// they are drawn in).
struct TickedAxis {
    lo: f64,
    hi: f64,
    ticks: Vec<f64>,
}

impl Ranged for TickedAxis {
    type FormatOption = plotters::coord::ranged1d::DefaultFormatting;
    type ValueType = f64;

    fn map(&self, v: &f64, limit: (i32, i32)) -> i32 {
        let t = (v - self.lo) / (self.hi - self.lo);
        limit.0 + (t * f64::from(limit.1 - limit.0)).round() as i32
    }

    fn key_points<Hint: plotters::coord::ranged1d::KeyPointHint>(&self, _: Hint) -> Vec<f64> {
        self.ticks.clone()
    }

    fn range(&self) -> std::ops::Range<f64> {
        self.lo..self.hi
    }
}

/// What a bubble chart draws.
struct BubbleData<'a> {
    points: &'a [BubblePoint],
    fit: &'a [FitBand],
    reference: Option<&'a (Vec<(f64, f64)>, String)>,
}

fn bubble<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    scale: f64,
    data: &BubbleData<'_>,
    axes: &BubbleAxes,
    (x_label, y_label): (&str, &str),
) -> DrawResult<DB> {
    let (points, fit, reference) = (data.points, data.fit, data.reference);
    let xs = points.iter().map(|p| p.x).chain(fit.iter().map(|f| f.x));
    let ys = points
        .iter()
        .map(|p| p.y)
        .chain(fit.iter().flat_map(|f| {
            let (a, b) = f.pi.unwrap_or(f.ci);
            [a, b, f.fit]
        }))
        .chain(
            reference
                .into_iter()
                .flat_map(|(r, _)| r.iter().map(|p| p.1)),
        );
    let x = padded_range(xs);
    let y = padded_range(ys);
    match axes {
        BubbleAxes::Linear => {
            let mut chart = axes!(area, scale, x, y, x_label, y_label, 64.0);
            let corner = emptiest_corner(points, x, y);
            bubble_layers(&mut chart, scale, data, corner)
        }
        BubbleAxes::Spread {
            sd_ticks,
            coefficient_ticks,
        } => {
            // Ticks at the given SDs and coefficients, within the drawn ranges.
            let xk: Vec<f64> = sd_ticks
                .iter()
                .map(|s| s.ln())
                .filter(|v| *v >= x.0 && *v <= x.1)
                .collect();
            let yk: Vec<f64> = coefficient_ticks
                .iter()
                .map(|c| -(-c).ln_1p())
                .filter(|v| *v >= y.0 && *v <= y.1)
                .collect();
            let mut chart = ChartBuilder::on(area)
                .margin((14.0 * scale) as i32)
                .x_label_area_size((44.0 * scale) as i32)
                .y_label_area_size((64.0 * scale) as i32)
                .build_cartesian_2d(
                    TickedAxis {
                        lo: x.0,
                        hi: x.1,
                        ticks: xk,
                    },
                    TickedAxis {
                        lo: y.0,
                        hi: y.1,
                        ticks: yk,
                    },
                )?;
            house_mesh(&mut chart.configure_mesh(), scale)
                .x_desc(x_label)
                .y_desc(y_label)
                .x_label_formatter(&|v| tick(v.exp()))
                .y_label_formatter(&|v| tick(1.0 - (-v).exp()))
                .draw()?;
            // Coefficients rise with the spread of scores: the legend goes below.
            bubble_layers(&mut chart, scale, data, SeriesLabelPosition::LowerRight)
        }
    }
}

/// The bands, the fitted line, the reference line, the studies and the legend.
fn bubble_layers<'a, DB, X, Y>(
    chart: &mut ChartContext<'a, DB, Cartesian2d<X, Y>>,
    scale: f64,
    data: &BubbleData<'_>,
    legend_at: SeriesLabelPosition,
) -> DrawResult<DB>
where
    DB: DrawingBackend + 'a,
    X: Ranged<ValueType = f64>,
    Y: Ranged<ValueType = f64>,
{
    let (points, fit, reference) = (data.points, data.fit, data.reference);
    let line = (2.0 * scale).ceil() as u32;
    let pi = band_polygon(fit, |f| f.pi);
    if !pi.is_empty() {
        chart
            .draw_series(std::iter::once(Polygon::new(pi, BAND_LIGHT.filled())))?
            .label("prediction band")
            .legend(|(x, y)| Rectangle::new([(x, y - 5), (x + 16, y + 5)], BAND_LIGHT.filled()));
    }
    chart
        .draw_series(std::iter::once(Polygon::new(
            band_polygon(fit, |f| Some(f.ci)),
            BAND.filled(),
        )))?
        .label("confidence band")
        .legend(|(x, y)| Rectangle::new([(x, y - 5), (x + 16, y + 5)], BAND.filled()));
    chart
        .draw_series(LineSeries::new(
            fit.iter().map(|f| (f.x, f.fit)),
            ShapeStyle::from(&BLUE).stroke_width(line),
        ))?
        .label("fitted")
        .legend(move |(x, y)| {
            PathElement::new(
                vec![(x, y), (x + 16, y)],
                ShapeStyle::from(&BLUE).stroke_width(line),
            )
        });
    if let Some((r, label)) = reference {
        chart
            .draw_series(LineSeries::new(
                r.iter().copied(),
                ShapeStyle::from(&ORANGE).stroke_width(line),
            ))?
            .label(label.as_str())
            .legend(move |(x, y)| {
                PathElement::new(
                    vec![(x, y), (x + 16, y)],
                    ShapeStyle::from(&ORANGE).stroke_width(line),
                )
            });
    }
    let max_w = points
        .iter()
        .map(|p| p.weight)
        .fold(0.0, f64::max)
        .max(1e-12);
    chart.draw_series(points.iter().map(|p| {
        let r = ((10.0 * (p.weight / max_w).sqrt()).max(2.0) * scale) as i32;
        Circle::new((p.x, p.y), r, ShapeStyle::from(&INK.mix(0.55)).filled())
    }))?;
    legend(chart, scale, legend_at)?;
    Ok(())
}

/// The corner of the plot with the fewest points near it (the legend goes there, so
/// that it hides as few studies as possible); ties go to the upper right.
fn emptiest_corner(points: &[BubblePoint], x: (f64, f64), y: (f64, f64)) -> SeriesLabelPosition {
    // The legend box covers about 40% of the width and 30% of the height.
    let near = |p: &BubblePoint, right: bool, upper: bool| {
        let fx = (p.x - x.0) / (x.1 - x.0);
        let fy = (p.y - y.0) / (y.1 - y.0);
        (if right { fx > 0.6 } else { fx < 0.4 }) && (if upper { fy > 0.7 } else { fy < 0.3 })
    };
    [
        (SeriesLabelPosition::UpperRight, true, true),
        (SeriesLabelPosition::UpperLeft, false, true),
        (SeriesLabelPosition::LowerRight, true, false),
        (SeriesLabelPosition::LowerLeft, false, false),
    ]
    .into_iter()
    .min_by_key(|(_, right, upper)| points.iter().filter(|p| near(p, *right, *upper)).count())
    .map(|(c, _, _)| c)
    .unwrap_or(SeriesLabelPosition::UpperRight)
}

fn padded_range(values: impl Iterator<Item = f64>) -> (f64, f64) {
    let (lo, hi) = finite_range(values).unwrap_or((0.0, 1.0));
    padded(lo, hi)
}

fn placement<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    scale: f64,
    curve: &[(f64, f64)],
    range: (f64, f64),
    expected: f64,
    observed: f64,
    x_label: &str,
) -> DrawResult<DB> {
    let x = padded_range(
        curve
            .iter()
            .map(|p| p.0)
            .chain([observed, range.0, range.1]),
    );
    let top = curve.iter().map(|p| p.1).fold(0.0, f64::max).max(1e-12) * 1.12;
    let mut chart = axes!(area, scale, x, (0.0, top), x_label, "density", 64.0);
    let line = (2.0 * scale).ceil() as u32;
    let mut shade: Vec<(f64, f64)> = vec![(range.0, 0.0)];
    shade.extend(
        curve
            .iter()
            .copied()
            .filter(|p| p.0 >= range.0 && p.0 <= range.1),
    );
    shade.push((range.1, 0.0));
    chart
        .draw_series(std::iter::once(Polygon::new(shade, BAND.filled())))?
        .label("expected range")
        .legend(|(x, y)| Rectangle::new([(x, y - 5), (x + 16, y + 5)], BAND.filled()));
    chart.draw_series(LineSeries::new(
        curve.iter().copied(),
        ShapeStyle::from(&INK).stroke_width(line),
    ))?;
    chart
        .draw_series(std::iter::once(PathElement::new(
            vec![(expected, 0.0), (expected, top / 1.12)],
            ShapeStyle::from(&BLUE).stroke_width(line),
        )))?
        .label(format!("expected {expected:.3}"))
        .legend(move |(x, y)| {
            PathElement::new(
                vec![(x, y), (x + 16, y)],
                ShapeStyle::from(&BLUE).stroke_width(line),
            )
        });
    chart
        .draw_series(std::iter::once(PathElement::new(
            vec![(observed, 0.0), (observed, top)],
            ShapeStyle::from(&ORANGE).stroke_width(line + 1),
        )))?
        .label(format!("this study {observed:.3}"))
        .legend(move |(x, y)| {
            PathElement::new(
                vec![(x, y), (x + 16, y)],
                ShapeStyle::from(&ORANGE).stroke_width(line + 1),
            )
        });
    legend(&mut chart, scale, SeriesLabelPosition::UpperLeft)?;
    Ok(())
}

fn sensitivity<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    scale: f64,
    series: &[SensitivitySeries],
    marker: Option<(f64, f64)>,
    x_label: &str,
    y_label: &str,
) -> DrawResult<DB> {
    let x = padded_range(series.iter().flat_map(|s| s.points.iter().map(|p| p.0)));
    let y = padded_range(
        series
            .iter()
            .flat_map(|s| s.points.iter().filter_map(|p| p.1))
            .chain(marker.map(|m| m.1)),
    );
    let mut chart = axes!(area, scale, x, y, x_label, y_label, 64.0);
    let line = (2.0 * scale).ceil() as u32;
    // Blue in steps of lightness: distinguishable without relying on hue.
    let shade = |i: usize, n: usize| {
        let t = if n > 1 {
            i as f64 / (n - 1) as f64
        } else {
            0.0
        };
        let mix = |a: u8, b: u8| (f64::from(a) + t * (f64::from(b) - f64::from(a))).round() as u8;
        RGBColor(mix(0x0d, 0x4f), mix(0x3b, 0x95), mix(0x57, 0xb8))
    };
    for (i, s) in series.iter().enumerate() {
        let colour = shade(i, series.len());
        // Impossible corrections break the line.
        let mut run: Vec<(f64, f64)> = Vec::new();
        let mut runs = Vec::new();
        for p in &s.points {
            match p.1 {
                Some(v) => run.push((p.0, v)),
                None if !run.is_empty() => runs.push(std::mem::take(&mut run)),
                None => {}
            }
        }
        if !run.is_empty() {
            runs.push(run);
        }
        for (j, r) in runs.into_iter().enumerate() {
            let drawn = chart.draw_series(LineSeries::new(
                r,
                ShapeStyle::from(&colour).stroke_width(line),
            ))?;
            if j == 0 {
                drawn.label(s.label.as_str()).legend(move |(x, y)| {
                    PathElement::new(
                        vec![(x, y), (x + 16, y)],
                        ShapeStyle::from(&colour).stroke_width(line),
                    )
                });
            }
        }
    }
    if let Some(m) = marker {
        chart
            .draw_series(std::iter::once(Circle::new(
                m,
                (5.0 * scale) as i32,
                ORANGE.filled(),
            )))?
            .label("the values used")
            .legend(|(x, y)| Circle::new((x + 8, y), 5, ORANGE.filled()));
    }
    legend(&mut chart, scale, SeriesLabelPosition::UpperRight)?;
    Ok(())
}

fn funnel<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    scale: f64,
    points: &[(f64, f64)],
    centre: f64,
    x_label: &str,
    y_label: &str,
) -> DrawResult<DB> {
    let max_se = points.iter().map(|p| p.1).fold(0.0, f64::max).max(1e-12) * 1.05;
    // Standard errors downwards from 0 at the top: the most precise studies on top.
    let x = padded_range(
        points
            .iter()
            .map(|p| p.0)
            .chain([centre - 1.96 * max_se, centre + 1.96 * max_se]),
    );
    let mut chart = ChartBuilder::on(area)
        .margin((14.0 * scale) as i32)
        .x_label_area_size((44.0 * scale) as i32)
        .y_label_area_size((64.0 * scale) as i32)
        .build_cartesian_2d(x.0..x.1, -max_se..0.0)?;
    house_mesh(&mut chart.configure_mesh(), scale)
        .x_desc(x_label)
        .y_desc(y_label)
        .x_label_formatter(&|v| tick(*v))
        .y_label_formatter(&|v| tick(-v))
        .x_labels(7)
        .y_labels(6)
        .draw()?;
    let line = (1.5 * scale).ceil() as u32;
    for side in [-1.0, 1.0] {
        chart.draw_series(std::iter::once(PathElement::new(
            vec![(centre, 0.0), (centre + side * 1.96 * max_se, -max_se)],
            ShapeStyle::from(&MUTED).stroke_width(line),
        )))?;
    }
    chart.draw_series(std::iter::once(PathElement::new(
        vec![(centre, 0.0), (centre, -max_se)],
        ShapeStyle::from(&ORANGE).stroke_width(line + 1),
    )))?;
    chart.draw_series(points.iter().map(|&(v, se)| {
        Circle::new(
            (v, -se),
            (3.0 * scale) as i32,
            ShapeStyle::from(&BLUE.mix(0.7)).filled(),
        )
    }))?;
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn tick_labels_are_short() {
        assert_eq!(tick(2010.0), "2010");
        assert_eq!(tick(-0.5), "−0.5");
        assert_eq!(tick(0.05), "0.05");
        assert_eq!(tick(-1e-15), "0");
        assert_eq!(tick(0.1234), "0.123");
    }

    #[test]
    fn padded_ranges_have_room() {
        assert!(padded(1.0, 1.0).0 < 1.0);
        let (a, b) = padded(0.0, 10.0);
        assert!(a < 0.0 && b > 10.0);
        assert_eq!(
            finite_range([f64::NAN, 2.0, -1.0].into_iter()),
            Some((-1.0, 2.0))
        );
    }
}
