//! The hydrograph of a conversion: every row with a discharge, measured in a solid line and
//! estimated (filled, beyond the rating's range or limits, drowned) in a dashed one, the 95 %
//! band, periods without a discharge left as gaps and shaded, field visits and edit windows
//! marked, and optionally a panel of the head below.
//!
//! A long series is first reduced to one bucket per horizontal pixel ([`HydroBuckets`]), built
//! chunk by chunk while the conversion runs, so the plot costs no second pass over the rows.

use plotters::coord::types::{RangedCoordf64, RangedDateTime};
use plotters::coord::Shift;
use plotters::prelude::*;
use plotters::style::FontStyle;

use super::plot::{err, fonts, png_bytes, tick, ImageFormat, PlotError, SIZE};

/// How a row counts on the hydrograph.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum RowKind {
    /// No discharge (missing, excluded, screened).
    NoDischarge,
    /// A measured discharge (`ok`, `dry`).
    Measured,
    /// An estimated discharge (filled, beyond range or limits, drowned).
    Estimated,
}

/// A long series reduced to buckets of equal time: per bucket the mean discharge of the rows
/// that have one, the band's extremes, whether any of them is estimated, whether any row has no
/// discharge, and the mean head of the rows with a head.
#[derive(Debug, Clone)]
pub struct HydroBuckets {
    t0_ms: i64,
    width_ms: f64,
    /// 1 / width_ms
    per_ms: f64,
    sum: Vec<f64>,
    n: Vec<u32>,
    estimated: Vec<u32>,
    lo: Vec<f64>,
    hi: Vec<f64>,
    without: Vec<u32>,
    head_sum: Vec<f64>,
    head_n: Vec<u32>,
}

/// One row for the buckets.
#[derive(Debug, Clone, Copy)]
pub struct BucketRow {
    /// UTC ms, `i64::MIN` for none.
    pub t_ms: i64,
    /// Discharge (m³/s).
    pub q: f64,
    /// Band (m³/s).
    pub lo: f64,
    /// Band (m³/s).
    pub hi: f64,
    /// Head (m), NaN where none.
    pub head: f64,
    /// How it counts.
    pub kind: RowKind,
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
            estimated: vec![0; buckets],
            lo: vec![f64::INFINITY; buckets],
            hi: vec![f64::NEG_INFINITY; buckets],
            without: vec![0; buckets],
            head_sum: vec![0.0; buckets],
            head_n: vec![0; buckets],
        }
    }

    /// Adds the rows gathered by another set of buckets over the same span.
    pub fn merge(&mut self, o: &HydroBuckets) {
        debug_assert!(self.t0_ms == o.t0_ms && self.sum.len() == o.sum.len());
        for k in 0..self.sum.len() {
            self.sum[k] += o.sum[k];
            self.n[k] += o.n[k];
            self.estimated[k] += o.estimated[k];
            self.lo[k] = self.lo[k].min(o.lo[k]);
            self.hi[k] = self.hi[k].max(o.hi[k]);
            self.without[k] += o.without[k];
            self.head_sum[k] += o.head_sum[k];
            self.head_n[k] += o.head_n[k];
        }
    }

    /// Adds rows (`row(k)` for k in `0..n`).
    pub fn add_rows(&mut self, n: usize, row: impl Fn(usize) -> BucketRow) {
        let last = self.n.len() - 1;
        for k in 0..n {
            let r = row(k);
            if r.t_ms == i64::MIN {
                continue;
            }
            let b = (((r.t_ms - self.t0_ms) as f64 * self.per_ms) as usize).min(last);
            if r.head.is_finite() {
                self.head_sum[b] += r.head;
                self.head_n[b] += 1;
            }
            if r.kind == RowKind::NoDischarge || !r.q.is_finite() {
                self.without[b] += 1;
                continue;
            }
            self.sum[b] += r.q;
            self.n[b] += 1;
            self.estimated[b] += u32::from(r.kind == RowKind::Estimated);
            self.lo[b] = self.lo[b].min(r.lo);
            self.hi[b] = self.hi[b].max(r.hi);
        }
    }

    /// The time one bucket covers (ms).
    pub fn width_ms(&self) -> f64 {
        self.width_ms
    }

    /// The last instant the buckets cover (UTC ms).
    pub fn end_ms(&self) -> i64 {
        self.t0_ms + (self.width_ms * self.n.len() as f64) as i64
    }

    fn len(&self) -> usize {
        self.n.len()
    }

    fn time(&self, k: f64, offset_s: i32) -> chrono::NaiveDateTime {
        let ms = self.t0_ms + (k * self.width_ms) as i64 + i64::from(offset_s) * 1000;
        Self::clock(ms)
    }

    fn clock(ms: i64) -> chrono::NaiveDateTime {
        chrono::DateTime::from_timestamp_millis(ms)
            .unwrap_or_default()
            .naive_utc()
    }
}

/// What the hydrograph shows besides the buckets.
#[derive(Debug, Clone)]
pub struct HydroChart<'a> {
    /// The buckets.
    pub buckets: &'a HydroBuckets,
    /// Title.
    pub title: String,
    /// The clock's name (`UTC+01:00`).
    pub clock: String,
    /// The clock's offset east of UTC (s).
    pub offset_s: i32,
    /// Discharge axis: its label with the unit, and the factor from m³/s.
    pub flow: (String, f64),
    /// Field visits (UTC ms).
    pub visits: Vec<i64>,
    /// Edit windows (UTC ms, from and to, open ends clipped to the record).
    pub edits: Vec<(i64, i64)>,
    /// A panel of the head below, with the rated range's ends (m).
    pub stage_panel: Option<(f64, f64)>,
}

/// Draws the hydrograph as PNG or SVG bytes.
pub fn hydrograph(chart: &HydroChart<'_>, format: ImageFormat) -> Result<Vec<u8>, PlotError> {
    fonts();
    let size = if chart.stage_panel.is_some() {
        (SIZE.0, SIZE.1 + 300)
    } else {
        SIZE
    };
    match format {
        ImageFormat::Svg => {
            let mut s = String::new();
            {
                let root = SVGBackend::with_string(&mut s, size).into_drawing_area();
                draw(chart, &root)?;
            }
            Ok(s.into_bytes())
        }
        ImageFormat::Png => {
            let mut buf = vec![0u8; (size.0 * size.1 * 3) as usize];
            {
                let root = BitMapBackend::with_buffer(&mut buf, size).into_drawing_area();
                draw(chart, &root)?;
            }
            png_bytes(buf, size)
        }
    }
}

/// Dates across, a value up.
type TimeChart<'a, DB> = ChartContext<'a, DB, Cartesian2d<RangedDateTime<chrono::NaiveDateTime>, RangedCoordf64>>;

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

const MEASURED: RGBColor = RGBColor(20, 60, 200);
const ESTIMATED: RGBColor = RGBColor(215, 110, 0);

fn draw<DB: DrawingBackend>(chart: &HydroChart<'_>, root: &DrawingArea<DB, Shift>) -> Result<(), PlotError>
where
    DB::ErrorType: 'static,
{
    root.fill(&WHITE).map_err(err)?;
    let root = root
        .titled(&chart.title, ("sans-serif", 28, FontStyle::Bold))
        .map_err(err)?;
    let (top, body) = root.split_vertically(30);
    top.draw(&Text::new(
        "computed from a rating by critical-flow theory; confirm by field gaugings".to_string(),
        (60, 5),
        ("sans-serif", 16).into_font(),
    ))
    .map_err(err)?;
    let (flow_area, stage_area) = match chart.stage_panel {
        Some(_) => {
            let (a, b) = body.split_vertically(body.dim_in_pixel().1 * 66 / 100);
            (a, Some(b))
        }
        None => (body, None),
    };
    draw_flow(chart, &flow_area)?;
    if let (Some(area), Some(range)) = (stage_area, chart.stage_panel) {
        draw_stage(chart, &area, range)?;
    }
    root.present().map_err(err)?;
    Ok(())
}

/// The x range of the chart.
fn span(chart: &HydroChart<'_>) -> std::ops::Range<chrono::NaiveDateTime> {
    let b = chart.buckets;
    b.time(0.0, chart.offset_s)..b.time(b.len() as f64, chart.offset_s)
}

fn draw_flow<DB: DrawingBackend>(chart: &HydroChart<'_>, area: &DrawingArea<DB, Shift>) -> Result<(), PlotError>
where
    DB::ErrorType: 'static,
{
    let b = chart.buckets;
    let f = chart.flow.1;
    let y1 = b.hi.iter().copied().filter(|v| v.is_finite()).fold(0.0f64, f64::max) * f;
    let y1 = if y1 > 0.0 { y1 * 1.08 } else { 1.0 };
    let mut c = ChartBuilder::on(area)
        .margin(20)
        .x_label_area_size(55)
        .y_label_area_size(80)
        .build_cartesian_2d(RangedDateTime::from(span(chart)), 0.0..y1)
        .map_err(err)?;
    c.configure_mesh()
        .x_desc(format!("time ({})", chart.clock))
        .y_desc(chart.flow.0.as_str())
        .y_label_formatter(&|v| tick(*v))
        .label_style(("sans-serif", 18))
        .axis_desc_style(("sans-serif", 20))
        .x_label_formatter(&|t| t.format("%Y-%m-%d").to_string())
        .draw()
        .map_err(err)?;
    draw_marks(chart, &mut c, y1)?;
    draw_discharge(chart, &mut c)?;
    c.configure_series_labels()
        .background_style(WHITE.mix(0.9))
        .border_style(BLACK)
        .label_font(("sans-serif", 17))
        .position(SeriesLabelPosition::UpperRight)
        .draw()
        .map_err(err)?;
    Ok(())
}

/// Shades the buckets with rows that have no discharge or with no rows at all, the edit
/// windows, and the visits.
fn draw_marks<DB: DrawingBackend>(chart: &HydroChart<'_>, c: &mut TimeChart<'_, DB>, y1: f64) -> Result<(), PlotError>
where
    DB::ErrorType: 'static,
{
    let (b, off) = (chart.buckets, chart.offset_s);
    let grey = RGBColor(120, 120, 120).mix(0.28);
    for (i, run) in runs(b.len(), |k| b.without[k] > 0 || b.n[k] == 0)
        .into_iter()
        .enumerate()
    {
        let s = c
            .draw_series(std::iter::once(Rectangle::new(
                [(b.time(run.start as f64, off), 0.0), (b.time(run.end as f64, off), y1)],
                grey.filled(),
            )))
            .map_err(err)?;
        if i == 0 {
            s.label("no discharge: missing time, or rows missing, excluded or screened")
                .legend(move |(x, y)| Rectangle::new([(x, y - 6), (x + 20, y + 6)], grey.filled()));
        }
    }
    let shift = i64::from(off) * 1000;
    let visit = RGBColor(0, 130, 60);
    for (i, &t) in chart.visits.iter().enumerate() {
        let x = HydroBuckets::clock(t + shift);
        let s = c
            .draw_series(DashedLineSeries::new(
                vec![(x, 0.0), (x, y1)],
                8,
                6,
                visit.stroke_width(2),
            ))
            .map_err(err)?;
        if i == 0 {
            s.label("field visit")
                .legend(move |(x, y)| PathElement::new(vec![(x, y), (x + 20, y)], visit.stroke_width(2)));
        }
    }
    let edit = RGBColor(150, 60, 170);
    for (i, &(from, to)) in chart.edits.iter().enumerate() {
        let (x0, x1) = (HydroBuckets::clock(from + shift), HydroBuckets::clock(to + shift));
        let s = c
            .draw_series(std::iter::once(Rectangle::new(
                [(x0, 0.0), (x1, y1 * 0.03)],
                edit.filled(),
            )))
            .map_err(err)?;
        if i == 0 {
            s.label("edit window (bar along the axis; see the provenance)")
                .legend(move |(x, y)| Rectangle::new([(x, y - 4), (x + 20, y + 4)], edit.filled()));
        }
    }
    Ok(())
}

/// The band and the discharge: segments touching an estimated bucket dashed and orange.
fn draw_discharge<DB: DrawingBackend>(chart: &HydroChart<'_>, c: &mut TimeChart<'_, DB>) -> Result<(), PlotError>
where
    DB::ErrorType: 'static,
{
    let (b, off, f) = (chart.buckets, chart.offset_s, chart.flow.1);
    let band = MEASURED.mix(0.2);
    let mid = |i: usize| b.time(i as f64 + 0.5, off);
    let mean = |i: usize| f * b.sum[i] / f64::from(b.n[i]);
    let (mut first_band, mut first_measured, mut first_estimated) = (true, true, true);
    for run in runs(b.len(), |k| b.n[k] > 0) {
        let upper: Vec<_> = run.clone().map(|i| (mid(i), f * b.hi[i])).collect();
        let lower: Vec<_> = run.clone().rev().map(|i| (mid(i), f * b.lo[i])).collect();
        let s = c
            .draw_series(std::iter::once(Polygon::new(
                upper.into_iter().chain(lower).collect::<Vec<_>>(),
                band.filled(),
            )))
            .map_err(err)?;
        if std::mem::take(&mut first_band) {
            s.label("95 % band (GUM, k = 2; wider where estimated)")
                .legend(move |(x, y)| Rectangle::new([(x, y - 6), (x + 20, y + 6)], band.filled()));
        }
        // one-bucket runs get a short tick so that they show
        let points: Vec<usize> = run.collect();
        if points.len() == 1 {
            let i = points[0];
            let color = if b.estimated[i] > 0 { ESTIMATED } else { MEASURED };
            c.draw_series(std::iter::once(Circle::new((mid(i), mean(i)), 2, color.filled())))
                .map_err(err)?;
        }
        // consecutive segments of the same kind are drawn as one line
        let kind = |w: &[usize]| b.estimated[w[0]] > 0 || b.estimated[w[1]] > 0;
        let segments: Vec<(bool, Vec<usize>)> = points.windows(2).fold(Vec::new(), |mut acc, w| {
            match acc.last_mut() {
                Some((k, pts)) if *k == kind(w) => pts.push(w[1]),
                _ => acc.push((kind(w), vec![w[0], w[1]])),
            }
            acc
        });
        for (estimated, pts) in segments {
            let line: Vec<_> = pts.iter().map(|&i| (mid(i), mean(i))).collect();
            if estimated {
                let s = c
                    .draw_series(DashedLineSeries::new(line, 10, 6, ESTIMATED.stroke_width(3)))
                    .map_err(err)?;
                if std::mem::take(&mut first_estimated) {
                    s.label("discharge, estimated (filled, beyond range or limits, drowned)")
                        .legend(|(x, y)| PathElement::new(vec![(x, y), (x + 20, y)], ESTIMATED.stroke_width(3)));
                }
            } else {
                let s = c
                    .draw_series(LineSeries::new(line, MEASURED.stroke_width(2)))
                    .map_err(err)?;
                if std::mem::take(&mut first_measured) {
                    s.label("discharge, measured")
                        .legend(|(x, y)| PathElement::new(vec![(x, y), (x + 20, y)], MEASURED.stroke_width(3)));
                }
            }
        }
    }
    Ok(())
}

/// The head panel: the mean head of each bucket (screened readings included, so a spike or a
/// flat line shows), and the rated range's ends.
fn draw_stage<DB: DrawingBackend>(
    chart: &HydroChart<'_>,
    area: &DrawingArea<DB, Shift>,
    (min_head, max_head): (f64, f64),
) -> Result<(), PlotError>
where
    DB::ErrorType: 'static,
{
    let (b, off) = (chart.buckets, chart.offset_s);
    let heads: Vec<Option<f64>> = (0..b.len())
        .map(|k| (b.head_n[k] > 0).then(|| b.head_sum[k] / f64::from(b.head_n[k])))
        .collect();
    let lo = heads.iter().flatten().copied().fold(0.0f64, f64::min);
    let hi = heads.iter().flatten().copied().fold(max_head, f64::max);
    let pad = 0.06 * (hi - lo).max(1e-3);
    let mut c = ChartBuilder::on(area)
        .margin(20)
        .x_label_area_size(45)
        .y_label_area_size(80)
        .build_cartesian_2d(RangedDateTime::from(span(chart)), (lo - pad)..(hi + pad))
        .map_err(err)?;
    c.configure_mesh()
        .y_desc("head h1 (m above the crest)")
        .y_label_formatter(&|v| tick(*v))
        .label_style(("sans-serif", 16))
        .axis_desc_style(("sans-serif", 18))
        .x_label_formatter(&|t| t.format("%Y-%m-%d").to_string())
        .draw()
        .map_err(err)?;
    let (t0, t1) = (b.time(0.0, off), b.time(b.len() as f64, off));
    let range = RGBColor(180, 30, 30);
    for (i, h) in [min_head, max_head].into_iter().enumerate() {
        let s = c
            .draw_series(DashedLineSeries::new(
                vec![(t0, h), (t1, h)],
                10,
                6,
                range.stroke_width(1),
            ))
            .map_err(err)?;
        if i == 0 {
            s.label("rated range (station file)")
                .legend(move |(x, y)| PathElement::new(vec![(x, y), (x + 20, y)], range.stroke_width(2)));
        }
    }
    let mut first = true;
    for run in runs(b.len(), |k| heads[k].is_some()) {
        let line: Vec<_> = run
            .map(|i| (b.time(i as f64 + 0.5, off), heads[i].unwrap_or(f64::NAN)))
            .collect();
        let s = c
            .draw_series(LineSeries::new(line, BLACK.stroke_width(2)))
            .map_err(err)?;
        if std::mem::take(&mut first) {
            s.label("head as logged, corrected (screened readings included)")
                .legend(|(x, y)| PathElement::new(vec![(x, y), (x + 20, y)], BLACK.stroke_width(2)));
        }
    }
    c.configure_series_labels()
        .background_style(WHITE.mix(0.9))
        .border_style(BLACK)
        .label_font(("sans-serif", 15))
        .position(SeriesLabelPosition::UpperRight)
        .draw()
        .map_err(err)?;
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Buckets gathered in parts merged afterwards equal a row-by-row count made here by hand
    /// (common practice, no source: the hydrograph's own reduction).
    #[test]
    fn buckets_in_parts_equal_a_count_by_hand() {
        let t: Vec<i64> = (0..100).map(|k| if k == 7 { i64::MIN } else { k * 1000 }).collect();
        let row = |k: usize| BucketRow {
            t_ms: t[k],
            q: if k == 13 { f64::NAN } else { k as f64 },
            lo: k as f64 - 1.0,
            hi: k as f64 + 1.0,
            head: 0.1,
            kind: match k {
                42 => RowKind::NoDischarge,
                50..=52 => RowKind::Estimated,
                _ => RowKind::Measured,
            },
        };
        let mut all = HydroBuckets::new(0, 99_000, 10);
        all.add_rows(100, row);
        let mut parts = HydroBuckets::new(0, 99_000, 10);
        for (a, b) in [(0, 33), (33, 70), (70, 100)] {
            let mut p = HydroBuckets::new(0, 99_000, 10);
            p.add_rows(b - a, |k| row(a + k));
            parts.merge(&p);
        }
        for b in [&all, &parts] {
            // bucket width 9.9 s: rows 0–9 in the first bucket; row 7 has no time
            assert_eq!(b.n[0], 9);
            assert!((b.sum[0] - 38.0).abs() < 1e-12);
            assert!((b.lo[0] + 1.0).abs() < 1e-12 && (b.hi[0] - 10.0).abs() < 1e-12);
            // row 13 (no discharge) and row 42 (none) add nothing but mark their buckets
            assert_eq!(b.n[1], 9);
            assert_eq!(b.without[1], 1);
            assert_eq!(b.without[4], 1);
            assert_eq!(b.estimated[5], 3);
            assert_eq!(b.n.iter().sum::<u32>(), 97);
            assert_eq!(b.head_n.iter().sum::<u32>(), 99);
        }
    }

    #[test]
    fn runs_split_where_the_test_fails() {
        assert_eq!(runs(7, |k| k != 2 && k != 3), vec![0..2, 4..7]);
        assert!(runs(3, |_| false).is_empty());
    }
}
