//! SVG plots (plotters' SVG backend).

use anyhow::{Result, anyhow};
use plotters::prelude::*;

/// One curve of a plot.
pub struct Series<'a> {
    /// Legend text.
    pub label: String,
    /// (frequency in Hz, value) pairs.
    pub points: &'a [(f64, f64)],
    /// Dashed line for "before" curves.
    pub dashed: bool,
}

const COLOURS: [RGBColor; 6] = [
    RGBColor(31, 119, 180),
    RGBColor(214, 39, 40),
    RGBColor(44, 160, 44),
    RGBColor(148, 103, 189),
    RGBColor(255, 127, 14),
    RGBColor(23, 190, 207),
];

/// A magnitude-versus-frequency plot with a logarithmic magnitude axis, as SVG text.
pub fn frf_svg(title: &str, y_label: &str, series: &[Series<'_>], markers_hz: &[f64]) -> Result<String> {
    curve_svg(title, "frequency [Hz]", y_label, series, markers_hz)
}

/// Magnitude curves against `x_label` (frequency or speed) with a logarithmic magnitude axis and
/// faint vertical markers, as SVG text.
pub fn curve_svg(
    title: &str,
    x_label: &str,
    y_label: &str,
    series: &[Series<'_>],
    markers_hz: &[f64],
) -> Result<String> {
    let all: Vec<(f64, f64)> = series.iter().flat_map(|s| s.points.iter().copied()).filter(|p| p.1 > 0.0).collect();
    if all.is_empty() {
        return Err(anyhow!("nothing to plot"));
    }
    let x0 = all.iter().map(|p| p.0).fold(f64::INFINITY, f64::min);
    let x1 = all.iter().map(|p| p.0).fold(f64::NEG_INFINITY, f64::max);
    let y1 = all.iter().map(|p| p.1).fold(0.0, f64::max) * 2.0;
    let y0 = (all.iter().map(|p| p.1).fold(f64::INFINITY, f64::min)).max(y1 * 1e-6);
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (960, 560)).into_drawing_area();
        root.fill(&WHITE).map_err(|e| anyhow!("{e}"))?;
        let mut chart = ChartBuilder::on(&root)
            .caption(title, ("sans-serif", 18))
            .margin(14)
            .x_label_area_size(44)
            .y_label_area_size(86)
            .build_cartesian_2d(x0..x1, (y0..y1).log_scale())
            .map_err(|e| anyhow!("{e}"))?;
        chart
            .configure_mesh()
            .x_desc(x_label)
            .y_desc(y_label)
            .y_label_formatter(&|v| format!("{v:.1e}"))
            .draw()
            .map_err(|e| anyhow!("{e}"))?;
        for &f in markers_hz {
            if f >= x0 && f <= x1 {
                chart
                    .draw_series(LineSeries::new(
                        [(f, y0), (f, y1)],
                        ShapeStyle::from(&BLACK.mix(0.15)).stroke_width(1),
                    ))
                    .map_err(|e| anyhow!("{e}"))?;
            }
        }
        for (i, s) in series.iter().enumerate() {
            let colour = COLOURS[i / 2 % COLOURS.len()];
            let style = ShapeStyle::from(&colour).stroke_width(if s.dashed { 1 } else { 2 });
            let pts: Vec<(f64, f64)> = s.points.iter().copied().filter(|p| p.1 > 0.0).collect();
            let drawn = if s.dashed {
                chart.draw_series(DashedLineSeries::new(pts, 6, 4, style))
            } else {
                chart.draw_series(LineSeries::new(pts, style))
            };
            drawn
                .map_err(|e| anyhow!("{e}"))?
                .label(s.label.clone())
                .legend(move |(x, y)| PathElement::new(vec![(x, y), (x + 24, y)], style));
        }
        chart
            .configure_series_labels()
            .position(SeriesLabelPosition::UpperRight)
            .background_style(WHITE.mix(0.9))
            .border_style(BLACK)
            .draw()
            .map_err(|e| anyhow!("{e}"))?;
        root.present().map_err(|e| anyhow!("{e}"))?;
    }
    Ok(svg)
}

/// Colour of a class word in the frequency chart.
fn class_colour(i: usize) -> RGBColor {
    COLOURS[i % COLOURS.len()]
}

/// Frequencies of the modes against their number, one colour per class word, as SVG text.
pub fn modes_svg(title: &str, modes: &[(usize, f64, String)]) -> Result<String> {
    if modes.is_empty() {
        return Err(anyhow!("nothing to plot"));
    }
    let n_max = modes.iter().map(|m| m.0).max().unwrap_or(1) as f64;
    let f_max = modes.iter().map(|m| m.1).fold(0.0, f64::max).max(1e-9) * 1.08;
    let mut kinds: Vec<&str> = Vec::new();
    for m in modes {
        if !kinds.contains(&m.2.as_str()) {
            kinds.push(&m.2);
        }
    }
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (960, 560)).into_drawing_area();
        root.fill(&WHITE).map_err(|e| anyhow!("{e}"))?;
        let mut chart = ChartBuilder::on(&root)
            .caption(title, ("sans-serif", 18))
            .margin(14)
            .x_label_area_size(44)
            .y_label_area_size(70)
            .build_cartesian_2d(0.0..n_max + 1.0, 0.0..f_max)
            .map_err(|e| anyhow!("{e}"))?;
        chart.configure_mesh().x_desc("mode").y_desc("frequency [Hz]").draw().map_err(|e| anyhow!("{e}"))?;
        for (ki, kind) in kinds.iter().enumerate() {
            let colour = class_colour(ki);
            let pts: Vec<(f64, f64)> = modes.iter().filter(|m| m.2 == *kind).map(|m| (m.0 as f64, m.1)).collect();
            chart
                .draw_series(pts.iter().map(|&(x, y)| Circle::new((x, y), 5, colour.filled())))
                .map_err(|e| anyhow!("{e}"))?
                .label(kind.to_string())
                .legend(move |(x, y)| Circle::new((x + 10, y), 5, colour.filled()));
        }
        chart
            .configure_series_labels()
            .position(SeriesLabelPosition::UpperLeft)
            .background_style(WHITE.mix(0.9))
            .border_style(BLACK)
            .draw()
            .map_err(|e| anyhow!("{e}"))?;
        root.present().map_err(|e| anyhow!("{e}"))?;
    }
    Ok(svg)
}

/// A matrix of values in [0, 1] (a MAC matrix) as a heat map, white 0 to dark blue 1; row i is
/// drawn at y = i + 1 from the bottom, column j at x = j + 1. Axis words name rows and columns.
pub fn heat_map_svg(title: &str, x_label: &str, y_label: &str, matrix: &[Vec<f64>]) -> Result<String> {
    let rows = matrix.len();
    let cols = matrix.first().map_or(0, Vec::len);
    if rows == 0 || cols == 0 {
        return Err(anyhow!("nothing to plot"));
    }
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (720, 680)).into_drawing_area();
        root.fill(&WHITE).map_err(|e| anyhow!("{e}"))?;
        let mut chart = ChartBuilder::on(&root)
            .caption(title, ("sans-serif", 18))
            .margin(14)
            .x_label_area_size(44)
            .y_label_area_size(56)
            .build_cartesian_2d(0.5..cols as f64 + 0.5, 0.5..rows as f64 + 0.5)
            .map_err(|e| anyhow!("{e}"))?;
        chart
            .configure_mesh()
            .disable_mesh()
            .x_desc(x_label)
            .y_desc(y_label)
            .x_label_formatter(&|v| format!("{v:.0}"))
            .y_label_formatter(&|v| format!("{v:.0}"))
            .draw()
            .map_err(|e| anyhow!("{e}"))?;
        let cells = matrix.iter().enumerate().flat_map(|(r, row)| {
            row.iter().enumerate().map(move |(c, &v)| {
                let v = if v.is_finite() { v.clamp(0.0, 1.0) } else { 0.0 };
                let shade = |lo: f64, hi: f64| (lo + (hi - lo) * v).round() as u8;
                let colour = RGBColor(shade(255.0, 8.0), shade(255.0, 48.0), shade(255.0, 107.0));
                let (x, y) = (c as f64 + 1.0, r as f64 + 1.0);
                Rectangle::new([(x - 0.5, y - 0.5), (x + 0.5, y + 0.5)], colour.filled())
            })
        });
        chart.draw_series(cells).map_err(|e| anyhow!("{e}"))?;
        root.present().map_err(|e| anyhow!("{e}"))?;
    }
    Ok(svg)
}

/// Amplitude profiles along a length, each scaled to a largest value of 1, as SVG text.
pub fn profiles_svg(title: &str, x_label: &str, x: &[f64], series: &[(String, Vec<f64>)]) -> Result<String> {
    if x.is_empty() || series.is_empty() {
        return Err(anyhow!("nothing to plot"));
    }
    let x0 = x.iter().copied().fold(f64::INFINITY, f64::min);
    let x1 = x.iter().copied().fold(f64::NEG_INFINITY, f64::max).max(x0 + 1e-12);
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (960, 560)).into_drawing_area();
        root.fill(&WHITE).map_err(|e| anyhow!("{e}"))?;
        let mut chart = ChartBuilder::on(&root)
            .caption(title, ("sans-serif", 18))
            .margin(14)
            .x_label_area_size(44)
            .y_label_area_size(70)
            .build_cartesian_2d(x0..x1, 0.0..1.05)
            .map_err(|e| anyhow!("{e}"))?;
        chart.configure_mesh().x_desc(x_label).y_desc("amplitude (largest = 1)").draw().map_err(|e| anyhow!("{e}"))?;
        for (i, (label, values)) in series.iter().enumerate() {
            let max = values.iter().copied().fold(0.0, f64::max);
            let scale = if max > 0.0 { 1.0 / max } else { 0.0 };
            let colour = COLOURS[i % COLOURS.len()];
            let style = ShapeStyle::from(&colour).stroke_width(2);
            chart
                .draw_series(LineSeries::new(x.iter().zip(values).map(|(&a, &v)| (a, v * scale)), style))
                .map_err(|e| anyhow!("{e}"))?
                .label(label.clone())
                .legend(move |(x, y)| PathElement::new(vec![(x, y), (x + 24, y)], style));
        }
        chart
            .configure_series_labels()
            .position(SeriesLabelPosition::UpperRight)
            .background_style(WHITE.mix(0.9))
            .border_style(BLACK)
            .draw()
            .map_err(|e| anyhow!("{e}"))?;
        root.present().map_err(|e| anyhow!("{e}"))?;
    }
    Ok(svg)
}

/// A plot of curves on linear axes with point markers (e.g. reduction against absorber mass), as
/// SVG text. Each series' points are (x, y) pairs.
pub fn xy_svg(title: &str, x_label: &str, y_label: &str, series: &[Series<'_>]) -> Result<String> {
    let all: Vec<(f64, f64)> =
        series.iter().flat_map(|s| s.points.iter().copied()).filter(|p| p.1.is_finite()).collect();
    if all.is_empty() {
        return Err(anyhow!("nothing to plot"));
    }
    let x1 = all.iter().map(|p| p.0).fold(0.0, f64::max) * 1.05;
    let y0 = all.iter().map(|p| p.1).fold(0.0, f64::min);
    let y1 = all.iter().map(|p| p.1).fold(0.0, f64::max) * 1.1 + 1e-9;
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (960, 560)).into_drawing_area();
        root.fill(&WHITE).map_err(|e| anyhow!("{e}"))?;
        let mut chart = ChartBuilder::on(&root)
            .caption(title, ("sans-serif", 18))
            .margin(14)
            .x_label_area_size(44)
            .y_label_area_size(70)
            .build_cartesian_2d(0.0..x1, y0..y1)
            .map_err(|e| anyhow!("{e}"))?;
        chart.configure_mesh().x_desc(x_label).y_desc(y_label).draw().map_err(|e| anyhow!("{e}"))?;
        for (i, s) in series.iter().enumerate() {
            let colour = COLOURS[i % COLOURS.len()];
            let style = ShapeStyle::from(&colour).stroke_width(2);
            let pts: Vec<(f64, f64)> = s.points.to_vec();
            chart
                .draw_series(LineSeries::new(pts.clone(), style))
                .map_err(|e| anyhow!("{e}"))?
                .label(s.label.clone())
                .legend(move |(x, y)| PathElement::new(vec![(x, y), (x + 24, y)], style));
            chart
                .draw_series(pts.into_iter().map(|p| Circle::new(p, 4, style.filled())))
                .map_err(|e| anyhow!("{e}"))?;
        }
        chart
            .configure_series_labels()
            .position(SeriesLabelPosition::LowerRight)
            .background_style(WHITE.mix(0.9))
            .border_style(BLACK)
            .draw()
            .map_err(|e| anyhow!("{e}"))?;
        root.present().map_err(|e| anyhow!("{e}"))?;
    }
    Ok(svg)
}

/// The interference chart of a rotating part: natural frequencies as horizontal lines against
/// speed, each order as a ray f = k·n/60 from the origin, the operating range shaded and the
/// crossings inside it marked; as SVG text. `modes` are (number, frequency in Hz), `orders` (name,
/// k), `crossings` (rpm, Hz).
pub fn interference_svg(
    title: &str,
    rpm_range: [f64; 2],
    modes: &[(usize, f64)],
    orders: &[(String, f64)],
    crossings: &[(f64, f64)],
) -> Result<String> {
    let x1 = rpm_range[1] * 1.15;
    let k_max = orders.iter().map(|o| o.1).fold(0.0, f64::max);
    let y1 = k_max * x1 / 60.0 * 1.05;
    if !(x1 > 0.0 && y1 > 0.0) {
        return Err(anyhow!("nothing to plot"));
    }
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (960, 560)).into_drawing_area();
        root.fill(&WHITE).map_err(|e| anyhow!("{e}"))?;
        let mut chart = ChartBuilder::on(&root)
            .caption(title, ("sans-serif", 18))
            .margin(14)
            .x_label_area_size(44)
            .y_label_area_size(70)
            .build_cartesian_2d(0.0..x1, 0.0..y1)
            .map_err(|e| anyhow!("{e}"))?;
        chart.configure_mesh().x_desc("speed [rev/min]").y_desc("frequency [Hz]").draw().map_err(|e| anyhow!("{e}"))?;
        chart
            .draw_series(std::iter::once(Rectangle::new(
                [(rpm_range[0], 0.0), (rpm_range[1], y1)],
                BLACK.mix(0.06).filled(),
            )))
            .map_err(|e| anyhow!("{e}"))?;
        for &(number, f) in modes.iter().filter(|m| m.1 <= y1) {
            chart
                .draw_series(LineSeries::new([(0.0, f), (x1, f)], ShapeStyle::from(&BLACK.mix(0.45)).stroke_width(1)))
                .map_err(|e| anyhow!("{e}"))?;
            chart
                .draw_series(std::iter::once(Text::new(
                    format!("mode {number}"),
                    (x1 * 0.005, f),
                    ("sans-serif", 11).into_font().color(&BLACK.mix(0.7)),
                )))
                .map_err(|e| anyhow!("{e}"))?;
        }
        for (i, (name, k)) in orders.iter().enumerate() {
            let style = ShapeStyle::from(&COLOURS[i % COLOURS.len()]).stroke_width(2);
            chart
                .draw_series(LineSeries::new([(0.0, 0.0), (x1, k * x1 / 60.0)], style))
                .map_err(|e| anyhow!("{e}"))?
                .label(name.clone())
                .legend(move |(x, y)| PathElement::new(vec![(x, y), (x + 24, y)], style));
        }
        chart
            .draw_series(crossings.iter().map(|&p| Circle::new(p, 5, ShapeStyle::from(&RED).stroke_width(2))))
            .map_err(|e| anyhow!("{e}"))?;
        chart
            .configure_series_labels()
            .position(SeriesLabelPosition::UpperLeft)
            .background_style(WHITE.mix(0.9))
            .border_style(BLACK)
            .draw()
            .map_err(|e| anyhow!("{e}"))?;
        root.present().map_err(|e| anyhow!("{e}"))?;
    }
    Ok(svg)
}
