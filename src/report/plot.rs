//! Charts as PNG or SVG bytes, drawn with plotters. Text uses DejaVu Sans compiled into the binary
//! (the `dejavu` crate; Bitstream Vera licence), so charts render on machines with no system fonts.

use plotters::coord::types::RangedCoordf64;
use plotters::coord::Shift;
use plotters::prelude::*;
use plotters::style::{register_font, FontStyle};

/// Chart size in pixels.
pub const SIZE: (u32, u32) = (1200, 750);

/// Registers the embedded fonts once per process.
fn fonts() {
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

fn err<E: std::fmt::Display>(e: E) -> PlotError {
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
fn tick(v: f64) -> String {
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

/// A long series reduced to one bucket per horizontal pixel for plotting: the mean discharge, the
/// band's extremes and whether any row in the bucket was flagged.
#[derive(Debug, Clone)]
pub struct HydroBuckets {
    t0_ms: i64,
    width_ms: f64,
    /// 1 / width_ms
    per_ms: f64,
    sum: Vec<f64>,
    n: Vec<u32>,
    lo: Vec<f64>,
    hi: Vec<f64>,
    flagged: Vec<bool>,
}

impl HydroBuckets {
    /// The first instant the buckets cover (UTC ms).
    pub fn start_ms(&self) -> i64 {
        self.t0_ms
    }

    /// Buckets covering `[t0_ms, t1_ms]`.
    pub fn new(t0_ms: i64, t1_ms: i64, buckets: usize) -> Self {
        let width_ms = ((t1_ms - t0_ms).max(1) as f64) / buckets as f64;
        Self {
            t0_ms,
            width_ms,
            per_ms: 1.0 / width_ms,
            sum: vec![0.0; buckets],
            n: vec![0; buckets],
            lo: vec![f64::INFINITY; buckets],
            hi: vec![f64::NEG_INFINITY; buckets],
            flagged: vec![false; buckets],
        }
    }

    /// Adds the rows gathered by another set of buckets over the same span.
    pub fn merge(&mut self, o: &HydroBuckets) {
        debug_assert!(self.t0_ms == o.t0_ms && self.sum.len() == o.sum.len());
        for k in 0..self.sum.len() {
            self.sum[k] += o.sum[k];
            self.n[k] += o.n[k];
            self.lo[k] = self.lo[k].min(o.lo[k]);
            self.hi[k] = self.hi[k].max(o.hi[k]);
            self.flagged[k] |= o.flagged[k];
        }
    }

    /// Adds many rows (times in ms, [`i64::MIN`] for none; discharges and bands; whether row k
    /// is flagged). Rows in time order share buckets, so sums are kept in registers while the
    /// bucket stays the same.
    pub fn add_rows(&mut self, t_ms: &[i64], q: &[f64], lo: &[f64], hi: &[f64], flagged: impl Fn(usize) -> bool) {
        let last = self.n.len() - 1;
        let mut cur = usize::MAX;
        let (mut sum, mut n, mut l, mut h, mut f) = (0.0, 0u32, f64::INFINITY, f64::NEG_INFINITY, false);
        for k in 0..t_ms.len() {
            if t_ms[k] == i64::MIN {
                continue;
            }
            let b = (((t_ms[k] - self.t0_ms) as f64 * self.per_ms) as usize).min(last);
            if b != cur {
                if cur != usize::MAX {
                    self.put(cur, sum, n, l, h, f);
                }
                (cur, sum, n, l, h, f) = (b, 0.0, 0, f64::INFINITY, f64::NEG_INFINITY, false);
            }
            let flag = flagged(k);
            f |= flag;
            if q[k].is_finite() && !flag {
                sum += q[k];
                n += 1;
                l = l.min(lo[k]);
                h = h.max(hi[k]);
            }
        }
        if cur != usize::MAX {
            self.put(cur, sum, n, l, h, f);
        }
    }

    fn put(&mut self, k: usize, sum: f64, n: u32, lo: f64, hi: f64, flagged: bool) {
        self.sum[k] += sum;
        self.n[k] += n;
        self.lo[k] = self.lo[k].min(lo);
        self.hi[k] = self.hi[k].max(hi);
        self.flagged[k] |= flagged;
    }

    fn time(&self, k: f64, offset_s: i32) -> chrono::NaiveDateTime {
        let ms = self.t0_ms + (k * self.width_ms) as i64 + i64::from(offset_s) * 1000;
        chrono::DateTime::from_timestamp_millis(ms)
            .unwrap_or_default()
            .naive_utc()
    }
}

/// Draws a hydrograph: discharge with its 95 % band, flagged periods shaded, units on the axes.
/// Times are shown on the clock `offset_s` east of UTC, named by `clock`.
pub fn hydrograph(
    b: &HydroBuckets,
    title: &str,
    clock: &str,
    offset_s: i32,
    format: ImageFormat,
) -> Result<Vec<u8>, PlotError> {
    fonts();
    match format {
        ImageFormat::Svg => {
            let mut s = String::new();
            {
                let root = SVGBackend::with_string(&mut s, SIZE).into_drawing_area();
                draw_hydrograph(b, title, clock, offset_s, &root)?;
            }
            Ok(s.into_bytes())
        }
        ImageFormat::Png => {
            let mut buf = vec![0u8; (SIZE.0 * SIZE.1 * 3) as usize];
            {
                let root = BitMapBackend::with_buffer(&mut buf, SIZE).into_drawing_area();
                draw_hydrograph(b, title, clock, offset_s, &root)?;
            }
            png_bytes(buf, SIZE)
        }
    }
}

/// The chart of a hydrograph: dates across, discharge up.
type TimeChart<'a, DB> =
    ChartContext<'a, DB, Cartesian2d<plotters::coord::types::RangedDateTime<chrono::NaiveDateTime>, RangedCoordf64>>;

/// The runs of consecutive indices below `n` where `keep` holds, as half-open ranges.
fn runs(n: usize, keep: impl Fn(usize) -> bool) -> Vec<std::ops::Range<usize>> {
    let mut out = Vec::new();
    let mut k = 0;
    while k < n {
        if !keep(k) {
            k += 1;
            continue;
        }
        let start = k;
        while k < n && keep(k) {
            k += 1;
        }
        out.push(start..k);
    }
    out
}

/// Shades the runs of time buckets holding flagged rows (one legend entry).
fn draw_flagged_runs<DB: DrawingBackend>(
    c: &mut TimeChart<'_, DB>,
    b: &HydroBuckets,
    offset_s: i32,
    y1: f64,
) -> Result<(), PlotError>
where
    DB::ErrorType: 'static,
{
    let shade = RGBColor(230, 120, 30).mix(0.25);
    for (i, run) in runs(b.n.len(), |k| b.flagged[k]).into_iter().enumerate() {
        let s = c
            .draw_series(std::iter::once(Rectangle::new(
                [
                    (b.time(run.start as f64, offset_s), 0.0),
                    (b.time(run.end as f64, offset_s), y1),
                ],
                shade.filled(),
            )))
            .map_err(err)?;
        if i == 0 {
            s.label("flagged rows (not ok or dry)")
                .legend(move |(x, y)| Rectangle::new([(x, y - 6), (x + 20, y + 6)], shade.filled()));
        }
    }
    Ok(())
}

/// For each run of time buckets with data: the 95 % band as a polygon and the mean discharge
/// as a line (one legend entry each).
fn draw_discharge_runs<DB: DrawingBackend>(
    c: &mut TimeChart<'_, DB>,
    b: &HydroBuckets,
    offset_s: i32,
) -> Result<(), PlotError>
where
    DB::ErrorType: 'static,
{
    let band = BLUE.mix(0.22);
    for (i, run) in runs(b.n.len(), |k| b.n[k] > 0).into_iter().enumerate() {
        let mid = |i: usize| b.time(i as f64 + 0.5, offset_s);
        let upper: Vec<_> = run.clone().map(|i| (mid(i), b.hi[i])).collect();
        let lower: Vec<_> = run.clone().rev().map(|i| (mid(i), b.lo[i])).collect();
        let poly: Vec<_> = upper.into_iter().chain(lower).collect();
        let line: Vec<_> = run.map(|i| (mid(i), b.sum[i] / f64::from(b.n[i]))).collect();
        let s = c
            .draw_series(std::iter::once(Polygon::new(poly, band.filled())))
            .map_err(err)?;
        if i == 0 {
            s.label("95 % band (GUM, k = 2)")
                .legend(move |(x, y)| Rectangle::new([(x, y - 6), (x + 20, y + 6)], band.filled()));
        }
        let s = c
            .draw_series(LineSeries::new(line, BLUE.stroke_width(2)))
            .map_err(err)?;
        if i == 0 {
            s.label("discharge")
                .legend(|(x, y)| PathElement::new(vec![(x, y), (x + 20, y)], BLUE.stroke_width(3)));
        }
    }
    Ok(())
}

fn draw_hydrograph<DB: DrawingBackend>(
    b: &HydroBuckets,
    title: &str,
    clock: &str,
    offset_s: i32,
    root: &DrawingArea<DB, Shift>,
) -> Result<(), PlotError>
where
    DB::ErrorType: 'static,
{
    use plotters::coord::types::RangedDateTime;
    root.fill(&WHITE).map_err(err)?;
    let nb = b.n.len();
    let y1 = b.hi.iter().copied().filter(|v| v.is_finite()).fold(0.0f64, f64::max);
    let y1 = if y1 > 0.0 { y1 * 1.08 } else { 1.0 };
    let (t0, t1) = (b.time(0.0, offset_s), b.time(nb as f64, offset_s));
    let root = root.titled(title, ("sans-serif", 28, FontStyle::Bold)).map_err(err)?;
    let (top, body) = root.split_vertically(30);
    top.draw(&Text::new(
        "computed from a rating by critical-flow theory; confirm by field gaugings".to_string(),
        (60, 5),
        ("sans-serif", 16).into_font(),
    ))
    .map_err(err)?;
    let mut c = ChartBuilder::on(&body)
        .margin(20)
        .x_label_area_size(55)
        .y_label_area_size(80)
        .build_cartesian_2d(RangedDateTime::from(t0..t1), 0.0..y1)
        .map_err(err)?;
    c.configure_mesh()
        .x_desc(format!("time ({clock})"))
        .y_desc("discharge Q (m³/s)")
        .y_label_formatter(&|v| tick(*v))
        .label_style(("sans-serif", 18))
        .axis_desc_style(("sans-serif", 20))
        .x_label_formatter(&|t| t.format("%Y-%m-%d").to_string())
        .draw()
        .map_err(err)?;
    draw_flagged_runs(&mut c, b, offset_s, y1)?;
    draw_discharge_runs(&mut c, b, offset_s)?;
    c.configure_series_labels()
        .background_style(WHITE.mix(0.85))
        .border_style(BLACK)
        .label_font(("sans-serif", 18))
        .position(SeriesLabelPosition::UpperLeft)
        .draw()
        .map_err(err)?;
    root.present().map_err(err)?;
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Buckets gathered in runs, in parts merged afterwards, equal a row-by-row count made here
    /// by hand (common practice, no source: the hydrograph's own reduction).
    #[test]
    fn buckets_in_runs_and_parts_equal_a_count_by_hand() {
        let t: Vec<i64> = (0..100).map(|k| if k == 7 { i64::MIN } else { k * 1000 }).collect();
        let q: Vec<f64> = (0..100)
            .map(|k| if k == 13 { f64::NAN } else { f64::from(k) })
            .collect();
        let lo: Vec<f64> = q.iter().map(|v| v - 1.0).collect();
        let hi: Vec<f64> = q.iter().map(|v| v + 1.0).collect();
        let flagged = |k: usize| k == 42;
        let mut all = HydroBuckets::new(0, 99_000, 10);
        all.add_rows(&t, &q, &lo, &hi, flagged);
        let mut parts = HydroBuckets::new(0, 99_000, 10);
        for (a, b) in [(0, 33), (33, 70), (70, 100)] {
            let mut p = HydroBuckets::new(0, 99_000, 10);
            p.add_rows(&t[a..b], &q[a..b], &lo[a..b], &hi[a..b], |k| flagged(a + k));
            parts.merge(&p);
        }
        for b in [&all, &parts] {
            // bucket width 9.9 s: rows 0–9 in the first bucket; row 7 has no time
            assert_eq!(b.n[0], 9);
            assert!((b.sum[0] - 38.0).abs() < 1e-12);
            assert!((b.lo[0] + 1.0).abs() < 1e-12 && (b.hi[0] - 10.0).abs() < 1e-12);
            // row 13 (no discharge) and row 42 (flagged) add nothing; 42 marks its bucket
            assert_eq!(b.n[1], 9);
            assert!(b.flagged[4] && !b.flagged[3]);
            assert_eq!(b.n.iter().sum::<u32>(), 97);
        }
    }
}
