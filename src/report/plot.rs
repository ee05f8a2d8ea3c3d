//! Charts as PNG or SVG bytes, drawn with plotters. Text uses DejaVu Sans compiled into the binary
//! (the `dejavu` crate; Bitstream Vera licence), so charts render on machines with no system fonts.

use plotters::coord::types::RangedCoordf64;
use plotters::coord::Shift;
use plotters::prelude::*;
use plotters::style::{register_font, FontStyle};

/// Chart size in pixels.
pub const SIZE: (u32, u32) = (1200, 750);

/// Registers the embedded fonts once per process.
pub(crate) fn fonts() {
    static ONCE: std::sync::Once = std::sync::Once::new();
    ONCE.call_once(|| {
        // registering an embedded, known-good font cannot fail in practice; a failure would show
        // as a font error from the drawing calls, which is reported
        let _ = register_font("sans-serif", FontStyle::Normal, dejavu::sans::regular());
        let _ = register_font("sans-serif", FontStyle::Bold, dejavu::sans::bold());
    });
}

/// Picture format, chosen from the output file's extension.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ImageFormat {
    /// Portable Network Graphics
    Png,
    /// Scalable Vector Graphics
    Svg,
}

impl ImageFormat {
    /// From a path's extension (`.png` or `.svg`, any case).
    pub fn from_path(path: &std::path::Path) -> Option<Self> {
        match path.extension()?.to_str()?.to_ascii_lowercase().as_str() {
            "png" => Some(Self::Png),
            "svg" => Some(Self::Svg),
            _ => None,
        }
    }
}

/// A chart could not be drawn.
#[derive(Debug, thiserror::Error)]
#[error("drawing the chart: {0}")]
pub struct PlotError(pub String);

pub(crate) fn err<E: std::fmt::Display>(e: E) -> PlotError {
    PlotError(e.to_string())
}

/// One line of an XY chart.
#[derive(Debug, Clone)]
pub struct Line {
    /// Legend text.
    pub label: String,
    /// Points in chart units.
    pub points: Vec<(f64, f64)>,
    /// Colour.
    pub color: RGBColor,
    /// Dashed (drawn as short segments).
    pub dashed: bool,
}

/// An XY chart: lines, shaded x-intervals, title and axis labels with units.
#[derive(Debug, Clone)]
pub struct XyChart {
    /// Title (station name and what is shown).
    pub title: String,
    /// X-axis label with unit.
    pub x_label: String,
    /// Y-axis label with unit.
    pub y_label: String,
    /// The lines.
    pub lines: Vec<Line>,
    /// X-intervals to shade, with a legend label.
    pub shaded: Vec<(f64, f64)>,
    /// Legend text of the shading.
    pub shaded_label: String,
    /// A note printed under the title.
    pub caption: String,
}

/// The x and y ranges of a chart's lines, y padded by 5 % (an empty x range widened to 1).
fn xy_bounds(chart: &XyChart) -> Result<(f64, f64, f64, f64), PlotError> {
    let xs = chart.lines.iter().flat_map(|l| l.points.iter().map(|p| p.0));
    let ys = chart
        .lines
        .iter()
        .flat_map(|l| l.points.iter().map(|p| p.1))
        .filter(|v| v.is_finite());
    let (x0, x1) = xs.fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), x| (a.min(x), b.max(x)));
    let (y0, y1) = ys.fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), y| (a.min(y), b.max(y)));
    if !(x0.is_finite() && x1.is_finite() && y0.is_finite() && y1.is_finite()) {
        return Err(PlotError("nothing to plot".into()));
    }
    let pad = 0.05 * (y1 - y0).max(1e-9);
    let (y0, y1) = (y0 - pad, y1 + pad);
    let x1 = if x1 > x0 { x1 } else { x0 + 1.0 };
    Ok((x0, x1, y0, y1))
}

/// The shaded x-intervals (one legend entry) and the lines (a legend entry each, when labelled).
fn draw_xy_series<DB: DrawingBackend>(
    c: &mut ChartContext<'_, DB, Cartesian2d<RangedCoordf64, RangedCoordf64>>,
    chart: &XyChart,
    y0: f64,
    y1: f64,
) -> Result<(), PlotError>
where
    DB::ErrorType: 'static,
{
    let shade = RGBColor(220, 60, 60).mix(0.18);
    for (i, &(a, b)) in chart.shaded.iter().enumerate() {
        let s = c
            .draw_series(std::iter::once(Rectangle::new([(a, y0), (b, y1)], shade.filled())))
            .map_err(err)?;
        if i == 0 {
            s.label(chart.shaded_label.clone())
                .legend(move |(x, y)| Rectangle::new([(x, y - 6), (x + 20, y + 6)], shade.filled()));
        }
    }
    for line in &chart.lines {
        let color = line.color;
        let pts: Vec<(f64, f64)> = line.points.iter().copied().filter(|p| p.1.is_finite()).collect();
        let series = if line.dashed {
            c.draw_series(DashedLineSeries::new(pts, 12, 8, color.stroke_width(3)))
                .map_err(err)?
        } else {
            c.draw_series(LineSeries::new(pts, color.stroke_width(3)))
                .map_err(err)?
        };
        // an unlabelled line (the second edge of a band) has no legend entry of its own
        if !line.label.is_empty() {
            series
                .label(line.label.clone())
                .legend(move |(x, y)| PathElement::new(vec![(x, y), (x + 20, y)], color.stroke_width(3)));
        }
    }
    Ok(())
}

fn draw_xy_scaled<DB: DrawingBackend>(chart: &XyChart, root: &DrawingArea<DB, Shift>, k: f64) -> Result<(), PlotError>
where
    DB::ErrorType: 'static,
{
    let px = |v: f64| (v * k).round() as u32;
    root.fill(&WHITE).map_err(err)?;
    let (x0, x1, y0, y1) = xy_bounds(chart)?;
    let root = if chart.title.is_empty() {
        root.clone()
    } else {
        root.titled(&chart.title, ("sans-serif", px(28.0), FontStyle::Bold))
            .map_err(err)?
    };
    let body = if chart.caption.is_empty() {
        root.clone()
    } else {
        let (top, body) = root.split_vertically(px(30.0));
        top.draw(&Text::new(
            chart.caption.clone(),
            (60, 5),
            ("sans-serif", px(16.0)).into_font(),
        ))
        .map_err(err)?;
        body
    };
    let mut c = ChartBuilder::on(&body)
        .margin(px(20.0))
        .x_label_area_size(px(55.0))
        .y_label_area_size(px(80.0))
        .build_cartesian_2d(x0..x1, y0..y1)
        .map_err(err)?;
    c.configure_mesh()
        .x_desc(chart.x_label.as_str())
        .y_desc(chart.y_label.as_str())
        .x_label_formatter(&|v| tick(*v))
        .y_label_formatter(&|v| tick(*v))
        .label_style(("sans-serif", px(18.0)))
        .axis_desc_style(("sans-serif", px(20.0)))
        .draw()
        .map_err(err)?;
    draw_xy_series(&mut c, chart, y0, y1)?;
    c.configure_series_labels()
        .background_style(WHITE.mix(0.85))
        .border_style(BLACK)
        .label_font(("sans-serif", px(18.0)))
        .position(SeriesLabelPosition::UpperLeft)
        .draw()
        .map_err(err)?;
    root.present().map_err(err)?;
    Ok(())
}

/// An axis label: the value to six decimals at most, trailing zeros dropped, and never "-0".
pub(crate) fn tick(v: f64) -> String {
    let r = (v * 1e6).round() / 1e6;
    if r == 0.0 {
        "0".into()
    } else {
        format!("{r}")
    }
}

/// Draws an XY chart as PNG or SVG bytes at the standard size.
pub fn xy_chart(chart: &XyChart, format: ImageFormat) -> Result<Vec<u8>, PlotError> {
    xy_chart_sized(chart, format, SIZE, 1.0)
}

/// Draws an XY chart at `size` pixels, with text scaled by `text_scale`.
pub fn xy_chart_sized(
    chart: &XyChart,
    format: ImageFormat,
    size: (u32, u32),
    text_scale: f64,
) -> Result<Vec<u8>, PlotError> {
    fonts();
    match format {
        ImageFormat::Svg => {
            let mut s = String::new();
            {
                let root = SVGBackend::with_string(&mut s, size).into_drawing_area();
                draw_xy_scaled(chart, &root, text_scale)?;
            }
            Ok(s.into_bytes())
        }
        ImageFormat::Png => {
            let mut buf = vec![0u8; (size.0 * size.1 * 3) as usize];
            {
                let root = BitMapBackend::with_buffer(&mut buf, size).into_drawing_area();
                draw_xy_scaled(chart, &root, text_scale)?;
            }
            png_bytes(buf, size)
        }
    }
}

/// Encodes an RGB buffer as PNG.
pub fn png_bytes(rgb: Vec<u8>, size: (u32, u32)) -> Result<Vec<u8>, PlotError> {
    let img = image::RgbImage::from_raw(size.0, size.1, rgb).ok_or_else(|| PlotError("bad image buffer".into()))?;
    let mut out = std::io::Cursor::new(Vec::new());
    img.write_to(&mut out, image::ImageOutputFormat::Png).map_err(err)?;
    Ok(out.into_inner())
}
