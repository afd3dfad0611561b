//! SVG plots (plotters): a run's profile along the reactor, a sweep's line or heat map.
//! Axis labels carry units; each series is labelled at its line's end, so no legend hunt.

use plotters::coord::types::RangedCoordf64;
use plotters::prelude::*;

/// Colours for the lines (a plain qualitative set of our own).
const COLOURS: [RGBColor; 8] = [
    RGBColor(31, 90, 160),
    RGBColor(200, 80, 30),
    RGBColor(40, 140, 60),
    RGBColor(150, 50, 150),
    RGBColor(120, 100, 40),
    RGBColor(20, 150, 150),
    RGBColor(200, 40, 90),
    RGBColor(90, 90, 90),
];

fn bounds(values: impl Iterator<Item = f64>) -> (f64, f64) {
    let (mut lo, mut hi) = (f64::INFINITY, f64::NEG_INFINITY);
    for v in values.filter(|v| v.is_finite()) {
        lo = lo.min(v);
        hi = hi.max(v);
    }
    if !lo.is_finite() {
        return (0.0, 1.0);
    }
    if hi - lo <= 1e-300 {
        let pad = if lo.abs() > 0.0 { 0.05 * lo.abs() } else { 1.0 };
        return (lo - pad, hi + pad);
    }
    let pad = 0.05 * (hi - lo);
    (lo - pad, hi + pad)
}

/// Lines y_k(x) with names, and an optional marked point (x, y, label).
pub struct LinePlot<'a> {
    pub title: &'a str,
    pub x_label: &'a str,
    pub y_label: &'a str,
    pub x: &'a [f64],
    pub series: Vec<(String, Vec<f64>)>,
    pub mark: Option<(f64, f64, String)>,
}

/// Draw a line plot into an SVG string.
pub fn line_svg(p: &LinePlot) -> Result<String, String> {
    stacked_svg(std::slice::from_ref(p))
}

/// A line plot with further marked points (x, y, label) besides `p.mark`.
pub fn line_svg_marked(p: &LinePlot, marks: &[(f64, f64, String)]) -> Result<String, String> {
    let mut out = String::new();
    {
        let root = SVGBackend::with_string(&mut out, (900, 560)).into_drawing_area();
        root.fill(&WHITE).map_err(|e| e.to_string())?;
        draw_lines(&root, p, marks)?;
        root.present().map_err(|e| e.to_string())?;
    }
    Ok(out)
}

/// The heat generated G(T) and removed R(T) by a CSTR, kW against the reactor temperature, with
/// its steady states (the crossings) marked `label`.
pub fn heat_balance_svg(
    title: &str,
    t: &[f64],
    generated: &[f64],
    removed: &[f64],
    states: &[(f64, f64, String)],
) -> Result<String, String> {
    let kw = |v: &[f64]| v.iter().map(|q| q / 1e3).collect::<Vec<f64>>();
    let marks: Vec<(f64, f64, String)> = states
        .iter()
        .map(|(x, q, l)| (*x, q / 1e3, l.clone()))
        .collect();
    line_svg_marked(
        &LinePlot {
            title,
            x_label: "reactor temperature T [K]",
            y_label: "heat rate [kW]",
            x: t,
            series: vec![
                ("heat generated G(T)".to_string(), kw(generated)),
                ("heat removed R(T)".to_string(), kw(removed)),
            ],
            mark: None,
        },
        &marks,
    )
}

/// Draw line plots one above the other (sharing the width) into an SVG string: quantities of
/// different units against the same input.
pub fn stacked_svg(plots: &[LinePlot]) -> Result<String, String> {
    let mut out = String::new();
    {
        let height = 560 + 400 * plots.len().saturating_sub(1) as u32;
        let root = SVGBackend::with_string(&mut out, (900, height)).into_drawing_area();
        root.fill(&WHITE).map_err(|e| e.to_string())?;
        for (area, p) in root.split_evenly((plots.len().max(1), 1)).iter().zip(plots) {
            draw_lines(area, p, &[])?;
        }
        root.present().map_err(|e| e.to_string())?;
    }
    Ok(out)
}

/// The chart every line-type plot here draws on: a caption, room on the right for the labels
/// at the lines' ends, axis descriptions (with units) and a light grid.
fn framed_chart<'a, DB: DrawingBackend>(
    area: &'a DrawingArea<DB, plotters::coord::Shift>,
    title: &str,
    margin_right: u32,
    x: std::ops::Range<f64>,
    y: std::ops::Range<f64>,
    x_desc: &str,
    y_desc: &str,
) -> Result<ChartContext<'a, DB, Cartesian2d<RangedCoordf64, RangedCoordf64>>, String>
where
    DB::ErrorType: 'static,
{
    let mut chart = ChartBuilder::on(area)
        .caption(title, ("sans-serif", 20))
        .margin(15)
        .margin_right(margin_right)
        .x_label_area_size(50)
        .y_label_area_size(80)
        .build_cartesian_2d(x, y)
        .map_err(|e| e.to_string())?;
    chart
        .configure_mesh()
        .x_desc(x_desc)
        .y_desc(y_desc)
        .light_line_style(RGBColor(235, 235, 235))
        .draw()
        .map_err(|e| e.to_string())?;
    Ok(chart)
}

/// A line's name written at its last point, in its colour (no legend to hunt through).
fn label_line_end<DB: DrawingBackend>(
    chart: &mut ChartContext<'_, DB, Cartesian2d<RangedCoordf64, RangedCoordf64>>,
    name: &str,
    line: &[(f64, f64)],
    colour: RGBColor,
) -> Result<(), String>
where
    DB::ErrorType: 'static,
{
    if let Some(&(xl, yl)) = line.last() {
        chart
            .draw_series(std::iter::once(Text::new(
                format!(" {name}"),
                (xl, yl),
                ("sans-serif", 15).into_font().color(&colour),
            )))
            .map_err(|e| e.to_string())?;
    }
    Ok(())
}

fn draw_lines<DB: DrawingBackend>(
    root: &DrawingArea<DB, plotters::coord::Shift>,
    p: &LinePlot,
    marks: &[(f64, f64, String)],
) -> Result<(), String>
where
    DB::ErrorType: 'static,
{
    let (x0, x1) = bounds(p.x.iter().copied());
    let (y0, y1) = bounds(p.series.iter().flat_map(|(_, v)| v.iter().copied()));
    let mut chart = framed_chart(root, p.title, 120, x0..x1, y0..y1, p.x_label, p.y_label)?;
    for (k, (name, ys)) in p.series.iter().enumerate() {
        let colour = COLOURS[k % COLOURS.len()];
        let pts: Vec<(f64, f64)> =
            p.x.iter()
                .copied()
                .zip(ys.iter().copied())
                .filter(|(_, y)| y.is_finite())
                .collect();
        chart
            .draw_series(LineSeries::new(pts.clone(), colour.stroke_width(2)))
            .map_err(|e| e.to_string())?;
        label_line_end(&mut chart, name, &pts, colour)?;
    }
    for (mx, my, label) in p.mark.iter().chain(marks) {
        chart
            .draw_series(std::iter::once(Circle::new(
                (*mx, *my),
                6,
                BLACK.stroke_width(2),
            )))
            .map_err(|e| e.to_string())?;
        chart
            .draw_series(std::iter::once(Text::new(
                format!("  {label}"),
                (*mx, *my),
                ("sans-serif", 14).into_font(),
            )))
            .map_err(|e| e.to_string())?;
    }
    Ok(())
}

/// A heat map of z over a grid (xs × ys), z[i][j] at (xs[i], ys[j]); None cells are grey.
pub struct HeatMap<'a> {
    pub title: &'a str,
    pub x_label: &'a str,
    pub y_label: &'a str,
    pub z_label: &'a str,
    pub xs: &'a [f64],
    pub ys: &'a [f64],
    pub z: Vec<Vec<Option<f64>>>,
}

fn heat_colour(t: f64) -> RGBColor {
    // Light yellow (low) to dark blue (high), a sequential ramp of our own.
    let t = t.clamp(0.0, 1.0);
    let lerp = |a: f64, b: f64| (a + (b - a) * t).round() as u8;
    RGBColor(lerp(250.0, 20.0), lerp(240.0, 50.0), lerp(180.0, 130.0))
}

/// Draw a heat map into an SVG string, with a colour bar.
pub fn heat_svg(h: &HeatMap) -> Result<String, String> {
    let mut out = String::new();
    {
        let root = SVGBackend::with_string(&mut out, (900, 600)).into_drawing_area();
        root.fill(&WHITE).map_err(|e| e.to_string())?;
        let (main, bar) = root.split_horizontally(760);
        let step = |v: &[f64]| {
            if v.len() > 1 {
                (v[v.len() - 1] - v[0]) / (v.len() - 1) as f64
            } else {
                1.0
            }
        };
        let (dx, dy) = (step(h.xs), step(h.ys));
        let (x0, x1) = (h.xs[0] - dx / 2.0, h.xs[h.xs.len() - 1] + dx / 2.0);
        let (y0, y1) = (h.ys[0] - dy / 2.0, h.ys[h.ys.len() - 1] + dy / 2.0);
        let (zlo, zhi) = bounds(h.z.iter().flatten().flatten().copied());
        let mut chart = ChartBuilder::on(&main)
            .caption(h.title, ("sans-serif", 20))
            .margin(15)
            .x_label_area_size(50)
            .y_label_area_size(80)
            .build_cartesian_2d(x0..x1, y0..y1)
            .map_err(|e| e.to_string())?;
        chart
            .configure_mesh()
            .x_desc(h.x_label)
            .y_desc(h.y_label)
            .disable_mesh()
            .draw()
            .map_err(|e| e.to_string())?;
        for (i, x) in h.xs.iter().enumerate() {
            for (j, y) in h.ys.iter().enumerate() {
                let colour = match h.z[i][j] {
                    Some(z) => heat_colour((z - zlo) / (zhi - zlo)),
                    None => RGBColor(200, 200, 200),
                };
                chart
                    .draw_series(std::iter::once(Rectangle::new(
                        [(x - dx / 2.0, y - dy / 2.0), (x + dx / 2.0, y + dy / 2.0)],
                        colour.filled(),
                    )))
                    .map_err(|e| e.to_string())?;
            }
        }
        let mut cb = ChartBuilder::on(&bar)
            .margin(15)
            .margin_top(50)
            .y_label_area_size(70)
            .caption(h.z_label, ("sans-serif", 14))
            .build_cartesian_2d(0.0..1.0, zlo..zhi)
            .map_err(|e| e.to_string())?;
        cb.configure_mesh()
            .disable_x_axis()
            .disable_mesh()
            .y_label_style(("sans-serif", 13))
            .draw()
            .map_err(|e| e.to_string())?;
        let n = 60;
        for k in 0..n {
            let a = zlo + (zhi - zlo) * k as f64 / n as f64;
            let b = zlo + (zhi - zlo) * (k + 1) as f64 / n as f64;
            cb.draw_series(std::iter::once(Rectangle::new(
                [(0.0, a), (1.0, b)],
                heat_colour(k as f64 / n as f64).filled(),
            )))
            .map_err(|e| e.to_string())?;
        }
        root.present().map_err(|e| e.to_string())?;
    }
    Ok(out)
}

/// One species of a fit plot: the model on a fine grid (a line) and the data (markers).
pub struct FitSeries {
    pub name: String,
    pub model_x: Vec<f64>,
    pub model_y: Vec<f64>,
    pub data: Vec<(f64, f64)>,
}

/// Data (markers) against the fitted model (lines) along one run.
pub fn fit_run_svg(
    title: &str,
    x_label: &str,
    y_label: &str,
    series: &[FitSeries],
) -> Result<String, String> {
    let mut out = String::new();
    {
        let root = SVGBackend::with_string(&mut out, (900, 560)).into_drawing_area();
        root.fill(&WHITE).map_err(|e| e.to_string())?;
        let xs = series
            .iter()
            .flat_map(|s| s.model_x.iter().copied().chain(s.data.iter().map(|d| d.0)));
        let ys = series
            .iter()
            .flat_map(|s| s.model_y.iter().copied().chain(s.data.iter().map(|d| d.1)));
        let (x0, x1) = bounds(xs);
        let (y0, y1) = bounds(ys);
        let mut chart = framed_chart(&root, title, 120, x0..x1, y0..y1, x_label, y_label)?;
        for (k, s) in series.iter().enumerate() {
            let colour = COLOURS[k % COLOURS.len()];
            let line: Vec<(f64, f64)> = s
                .model_x
                .iter()
                .copied()
                .zip(s.model_y.iter().copied())
                .filter(|(x, y)| x.is_finite() && y.is_finite())
                .collect();
            chart
                .draw_series(LineSeries::new(line.clone(), colour.stroke_width(2)))
                .map_err(|e| e.to_string())?;
            chart
                .draw_series(
                    s.data
                        .iter()
                        .filter(|(x, y)| x.is_finite() && y.is_finite())
                        .map(|&(x, y)| Circle::new((x, y), 4, colour.stroke_width(2))),
                )
                .map_err(|e| e.to_string())?;
            label_line_end(&mut chart, &s.name, &line, colour)?;
        }
        root.present().map_err(|e| e.to_string())?;
    }
    Ok(out)
}

/// The parity plot of a fit: model against measured, one colour per species, with the line
/// model = measured. `points` are (species, measured, model).
pub fn parity_svg(
    title: &str,
    unit: &str,
    points: &[(String, f64, f64)],
) -> Result<String, String> {
    let mut out = String::new();
    {
        let root = SVGBackend::with_string(&mut out, (700, 700)).into_drawing_area();
        root.fill(&WHITE).map_err(|e| e.to_string())?;
        let (lo, hi) = bounds(points.iter().flat_map(|p| [p.1, p.2]));
        let mut chart = framed_chart(
            &root,
            title,
            100,
            lo..hi,
            lo..hi,
            &format!("measured ({unit})"),
            &format!("model ({unit})"),
        )?;
        chart
            .draw_series(LineSeries::new(
                vec![(lo, lo), (hi, hi)],
                RGBColor(150, 150, 150).stroke_width(1),
            ))
            .map_err(|e| e.to_string())?;
        let mut names: Vec<&str> = Vec::new();
        for p in points {
            if !names.contains(&p.0.as_str()) {
                names.push(&p.0);
            }
        }
        for (k, name) in names.iter().enumerate() {
            let colour = COLOURS[k % COLOURS.len()];
            chart
                .draw_series(
                    points
                        .iter()
                        .filter(|p| p.0 == *name && p.1.is_finite() && p.2.is_finite())
                        .map(|p| Circle::new((p.1, p.2), 4, colour.stroke_width(2))),
                )
                .map_err(|e| e.to_string())?;
            chart
                .draw_series(std::iter::once(Text::new(
                    format!("● {name}"),
                    (hi, hi - (hi - lo) * 0.05 * (k as f64 + 1.0)),
                    ("sans-serif", 15).into_font().color(&colour),
                )))
                .map_err(|e| e.to_string())?;
        }
        root.present().map_err(|e| e.to_string())?;
    }
    Ok(out)
}
