//! The gaugings check as text, CSV, JSON, a `[calibration]` table, and two charts: the rating
//! curve with the gaugings and their error bars, and the deviation against head and time with
//! its 95 % band.

use plotters::coord::Shift;
use plotters::prelude::*;
use plotters::style::FontStyle;
use serde_json::{json, Value};

use super::plot::{err, fonts, png_bytes, tick, ImageFormat, PlotError, SIZE};
use super::{sig, wrap, CAUTIONS};
use crate::gaugings::{FitOutcome, GaugingCheck, Status};
use crate::rating::RatingModel;
use crate::station::Station;
use crate::uncertainty::COVERAGE_FACTOR;

/// Draws on a PNG or SVG canvas of `size` with `$draw(&root)`.
macro_rules! render {
    ($format:expr, $size:expr, $draw:expr) => {{
        fonts();
        let size: (u32, u32) = $size;
        match $format {
            ImageFormat::Svg => {
                let mut s = String::new();
                {
                    let root = SVGBackend::with_string(&mut s, size).into_drawing_area();
                    $draw(&root)?;
                    root.present().map_err(err)?;
                }
                Ok(s.into_bytes())
            }
            ImageFormat::Png => {
                let mut buf = vec![0u8; (size.0 * size.1 * 3) as usize];
                {
                    let root = BitMapBackend::with_buffer(&mut buf, size).into_drawing_area();
                    $draw(&root)?;
                    root.present().map_err(err)?;
                }
                png_bytes(buf, size)
            }
        }
    }};
}

/// Everything the gaugings report shows.
#[derive(Debug, Clone, Copy)]
pub struct GaugingsReport<'a> {
    /// The station.
    pub station: &'a Station,
    /// The gaugings file, as named.
    pub file: &'a str,
    /// Its SHA-256.
    pub sha256: &'a str,
    /// How times were read.
    pub clock: &'a str,
    /// The check.
    pub check: &'a GaugingCheck,
}

/// The calibration the check gives: factor, its U95 %, zero (m), its U95 (m).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Proposed {
    /// Factor f.
    pub factor: f64,
    /// Expanded uncertainty of f, %.
    pub factor_u95_pct: f64,
    /// Zero correction dz (m).
    pub zero_m: f64,
    /// Expanded uncertainty of dz (m).
    pub zero_u95_m: f64,
    /// Whether the zero was fitted (else it is the station's zero with its own uncertainty).
    pub zero_fitted: bool,
    /// Correlation of f and dz in the fit (0 when the zero was not fitted).
    pub correlation: f64,
}

impl GaugingsReport<'_> {
    /// The calibration the gaugings support, if any.
    pub fn proposed(&self) -> Option<Proposed> {
        let zero_u95_m = COVERAGE_FACTOR
            * crate::uncertainty::Inputs::from_station(&self.station.uncertainty, &{
                let mut s = self.station.structure.clone();
                s.calibration = None;
                s
            })
            .zero
            .standard;
        match &self.check.fit {
            FitOutcome::Both(f) => {
                let (uf, uz) = f.u_scaled();
                Some(Proposed {
                    factor: f.factor,
                    factor_u95_pct: 100.0 * COVERAGE_FACTOR * uf / f.factor,
                    zero_m: f.zero_m,
                    zero_u95_m: COVERAGE_FACTOR * uz,
                    zero_fitted: true,
                    correlation: f.correlation(),
                })
            }
            FitOutcome::FactorOnly { factor, u, .. } => Some(Proposed {
                factor: *factor,
                factor_u95_pct: 100.0 * COVERAGE_FACTOR * u / factor,
                zero_m: 0.0,
                zero_u95_m,
                zero_fitted: false,
                correlation: 0.0,
            }),
            FitOutcome::Nothing(_) => None,
        }
    }

    /// The first and last dates of the used gaugings (`YYYY-MM-DD`, UTC).
    fn dates(&self) -> (String, String) {
        let times: Vec<i64> = self.check.used().map(|r| r.gauging.time_ms).collect();
        let date = |t: Option<&i64>| {
            t.and_then(|t| chrono::DateTime::from_timestamp_millis(*t))
                .map_or_else(String::new, |d| d.format("%Y-%m-%d").to_string())
        };
        (date(times.iter().min()), date(times.iter().max()))
    }

    /// The `[calibration]` table for the station file, in its length unit.
    pub fn calibration_toml(&self) -> Option<String> {
        let p = self.proposed()?;
        let per_m = 1.0 / self.station.length_unit.metres();
        let (from, to) = self.dates();
        let mean = self.check.mean?;
        Some(format!(
            "[calibration]\n# written by flumerate gaugings from {} ({} gauging(s)); Q = factor · Q_rating(h + zero_offset)\n# confirm before use: see the gaugings report and the cautions\nfactor = {:.6}\nfactor_u95_pct = {:.3}\nzero_offset = {:.6}\nzero_offset_u95 = {:.6}\ngaugings = {}\nfrom = \"{from}\"\nto = \"{to}\"\nsource_sha256 = \"{}\"\nmean_deviation_pct = {:.3}\nmean_deviation_u95_pct = {:.3}\n# the budget treats factor and zero as independent, which overstates the calibrated\n# rating's uncertainty when they are negatively correlated (as here, usually)\nfactor_zero_correlation = {:.4}\n",
            self.file.replace('"', "'"),
            self.check.used().count(),
            p.factor,
            p.factor_u95_pct,
            p.zero_m * per_m,
            p.zero_u95_m * per_m,
            self.check.used().count(),
            self.sha256,
            mean.mean,
            COVERAGE_FACTOR * mean.u_scaled(),
            p.correlation,
        ))
    }

    /// Readable text: the gaugings, the statistics, the fit, the advice, the cautions.
    pub fn to_text(&self) -> String {
        let c = self.check;
        let mut s = format!(
            "flumerate gaugings: {}\nstation file: {}\ngaugings file: {} (SHA-256 {})\n{}\nrating checked: from the dimensions (any calibration in the station file left out)\n\n",
            self.station.name, self.station.source, self.file, self.sha256, self.clock
        );
        s.push_str(&format!(
            "{:>4} {:<16} {:>9} {:>11} {:>11} {:>9} {:>8} {:>7}  {}\n",
            "line", "time (UTC)", "head m", "gauged m³/s", "rated m³/s", "dev %", "U95 %", "verdict", "note"
        ));
        for r in &c.rows {
            let verdict = match r.status {
                Status::Used if r.agrees => "agrees".to_string(),
                Status::Used => "departs".to_string(),
                other => other.as_str().to_string(),
            };
            s.push_str(&format!(
                "{:>4} {:<16} {:>9.4} {:>11} {:>11} {:>+9.2} {:>8.2} {:>7}  {}\n",
                r.gauging.line,
                utc_minutes(r.gauging.time_ms),
                r.gauging.head_m,
                sig(r.gauging.discharge_m3s, 4),
                sig(r.rated_m3s, 4),
                r.deviation_pct,
                r.difference_u95_pct,
                verdict,
                r.gauging.note
            ));
        }
        for r in &c.refused {
            s.push_str(&format!("line {}: refused: {}\n", r.line, r.reason));
        }
        s.push_str("\nU95: the rating's and the gauging's uncertainty combined (k = 2); a gauging agrees when its deviation lies within it.\n\n");
        if let Some(m) = c.mean {
            s.push_str(&format!(
                "mean deviation (weighted by each gauging's independent uncertainty): {:+.3} % ± {:.3} % (95 %; χ²/ν = {:.2})\n",
                m.mean,
                COVERAGE_FACTOR * m.u_scaled(),
                if m.dof > 0 { m.chi2 / m.dof as f64 } else { f64::NAN }
            ));
        }
        for (what, line, unit) in [
            ("head", &c.trend_head, "% per m"),
            ("time", &c.trend_time, "% per year"),
        ] {
            if let Some(l) = line {
                s.push_str(&format!(
                    "trend with {what}: {:+.4} {unit} ± {:.4} (95 %)\n",
                    l.b,
                    COVERAGE_FACTOR * l.u_b_scaled()
                ));
            }
        }
        s.push_str(&format!(
            "the rating's own systematic uncertainty (coefficient, width, zero) at mid-range: ±{:.2} % (95 %)\n",
            c.systematic_u95_pct
        ));
        s.push_str(&self.fit_text());
        s.push('\n');
        for a in &c.advice {
            s.push_str(&wrap(&format!("- {a}"), 100));
            s.push('\n');
        }
        if let Some(t) = self.calibration_toml() {
            s.push_str("\nthe calibration these gaugings support (--write-calibration FILE writes it into a copy of the station file):\n");
            s.push_str(&t);
        }
        s.push('\n');
        s.push_str(&wrap(CAUTIONS, 100));
        s.push('\n');
        s
    }

    fn fit_text(&self) -> String {
        match &self.check.fit {
            FitOutcome::Both(f) => {
                let (uf, uz) = f.u_scaled();
                format!(
                    "fit Q = f · Q_rating(h + dz), weighted least squares: f = {:.5} ± {:.5}, dz = {:+.2} ± {:.2} mm (95 %), correlation {:+.3}, χ²/ν = {:.2}\n",
                    f.factor,
                    COVERAGE_FACTOR * uf,
                    f.zero_m * 1000.0,
                    COVERAGE_FACTOR * uz * 1000.0,
                    f.correlation(),
                    if f.dof > 0 { f.chi2 / f.dof as f64 } else { f64::NAN }
                )
            }
            FitOutcome::FactorOnly { factor, u, .. } => format!(
                "fit Q = f · Q_rating(h), weighted least squares (zero not separable): f = {factor:.5} ± {:.5} (95 %)\n",
                COVERAGE_FACTOR * u
            ),
            FitOutcome::Nothing(why) => format!("no fit: {why}\n"),
        }
    }

    /// One CSV row per gauging (refused rows included, with their reason).
    pub fn to_csv(&self) -> Vec<u8> {
        let mut w = csv::Writer::from_writer(Vec::new());
        let _ = w.write_record([
            "line",
            "time",
            "head_m",
            "discharge_m3s",
            "rated_m3s",
            "deviation_pct",
            "difference_u95_pct",
            "gauging_u95_pct",
            "rating_u95_pct",
            "normalised_residual",
            "status",
            "verdict",
            "method",
            "note",
        ]);
        for r in &self.check.rows {
            let g = &r.gauging;
            let _ = w.write_record([
                g.line.to_string(),
                g.time_text.clone(),
                g.head_m.to_string(),
                g.discharge_m3s.to_string(),
                r.rated_m3s.to_string(),
                r.deviation_pct.to_string(),
                r.difference_u95_pct.to_string(),
                g.u95_pct.to_string(),
                r.rating_u95_pct.to_string(),
                if r.normalised_residual.is_finite() {
                    r.normalised_residual.to_string()
                } else {
                    String::new()
                },
                r.status.as_str().to_string(),
                if r.agrees { "agrees" } else { "departs" }.to_string(),
                g.method.clone(),
                g.note.clone(),
            ]);
        }
        for r in &self.check.refused {
            let _ = w.write_record([
                r.line.to_string(),
                String::new(),
                String::new(),
                String::new(),
                String::new(),
                String::new(),
                String::new(),
                String::new(),
                String::new(),
                String::new(),
                "refused".into(),
                String::new(),
                String::new(),
                r.reason.clone(),
            ]);
        }
        w.into_inner().unwrap_or_default()
    }

    /// One JSON object (design.md's keys first).
    pub fn to_json(&self) -> Result<Vec<u8>, serde_json::Error> {
        let c = self.check;
        let p = self.proposed();
        let mean = c.mean;
        let line_json = |l: &Option<crate::gaugings::fit::Line>| {
            l.map(
                |l| json!({"slope": l.b, "slope_u95": COVERAGE_FACTOR * l.u_b_scaled(), "chi2": l.chi2, "dof": l.dof}),
            )
        };
        let doc = json!({
            "factor": p.map(|p| p.factor),
            "factor_u95_pct": p.map(|p| p.factor_u95_pct),
            "zero_offset_m": p.map(|p| p.zero_m),
            "zero_offset_u95_m": p.map(|p| p.zero_u95_m),
            "zero_fitted": p.map(|p| p.zero_fitted),
            "mean_deviation_pct": mean.map(|m| m.mean),
            "mean_deviation_u95_pct": mean.map(|m| COVERAGE_FACTOR * m.u_scaled()),
            "gaugings": c.rows.iter().map(|r| json!({
                "line": r.gauging.line,
                "time": r.gauging.time_text,
                "time_utc_ms": r.gauging.time_ms,
                "head_m": r.gauging.head_m,
                "discharge_m3s": r.gauging.discharge_m3s,
                "rated_m3s": r.rated_m3s,
                "deviation_pct": r.deviation_pct,
                "difference_u95_pct": r.difference_u95_pct,
                "gauging_u95_pct": r.gauging.u95_pct,
                "gauging_u95_source": r.gauging.u95_source,
                "rating_u95_pct": r.rating_u95_pct,
                "normalised_residual": if r.normalised_residual.is_finite() { json!(r.normalised_residual) } else { Value::Null },
                "status": r.status.as_str(),
                "agrees": r.agrees,
                "method": r.gauging.method,
                "note": r.gauging.note,
            })).collect::<Vec<_>>(),
            "refused": c.refused.iter().map(|r| json!({"line": r.line, "reason": r.reason})).collect::<Vec<_>>(),
            "trend_with_head_pct_per_m": line_json(&c.trend_head),
            "trend_with_time_pct_per_year": line_json(&c.trend_time),
            "outlier_lines": c.outliers,
            "fit": match &c.fit {
                FitOutcome::Both(f) => json!({"kind": "factor and zero", "factor": f.factor, "zero_m": f.zero_m,
                    "covariance": f.covariance, "correlation": f.correlation(), "chi2": f.chi2, "dof": f.dof}),
                FitOutcome::FactorOnly { factor, u, reason, .. } => json!({"kind": "factor only", "factor": factor, "factor_u": u, "reason": reason}),
                FitOutcome::Nothing(why) => json!({"kind": "none", "reason": why}),
            },
            "systematic_u95_pct": c.systematic_u95_pct,
            "advice": c.advice,
            "station": self.station.name,
            "station_file": self.station.source,
            "gaugings_file": self.file,
            "gaugings_sha256": self.sha256,
            "clock": self.clock,
            "cautions": CAUTIONS,
        });
        let mut out = serde_json::to_vec_pretty(&doc)?;
        out.push(b'\n');
        Ok(out)
    }

    /// The rating curve (head up, discharge across) with the gaugings and their error bars, and
    /// the calibrated curve when the fit gives one.
    pub fn curve_chart(&self, model: &RatingModel, format: ImageFormat) -> Result<Vec<u8>, PlotError> {
        render!(format, SIZE, |root| self.draw_curve(model, root))
    }

    /// Deviation (%) against head and against time, each gauging with its 95 % bar, the mean
    /// and its band.
    pub fn deviation_chart(&self, format: ImageFormat) -> Result<Vec<u8>, PlotError> {
        render!(format, (SIZE.0, SIZE.1 + 150), |root| self.draw_deviation(root))
    }

    fn draw_curve<DB: DrawingBackend>(
        &self,
        model: &RatingModel,
        root: &DrawingArea<DB, Shift>,
    ) -> Result<(), PlotError>
    where
        DB::ErrorType: 'static,
    {
        let range = self.station.range;
        let base = model.uncalibrated();
        let heads: Vec<f64> = (0..=100)
            .map(|k| range.min_head_m + (range.max_head_m - range.min_head_m) * f64::from(k) / 100.0)
            .collect();
        let curve: Vec<(f64, f64)> = heads
            .iter()
            .filter_map(|&h| base.discharge_m3s(h).ok().map(|q| (q, h)))
            .collect();
        let p = self.proposed();
        let calibrated: Vec<(f64, f64)> = p
            .map(|p| {
                heads
                    .iter()
                    .filter_map(|&h| base.discharge_m3s(h + p.zero_m).ok().map(|q| (p.factor * q, h)))
                    .collect()
            })
            .unwrap_or_default();
        let rows = &self.check.rows;
        let qmax = rows
            .iter()
            .map(|r| r.gauging.discharge_m3s * (1.0 + r.gauging.u95_pct / 100.0))
            .chain(curve.iter().map(|c| c.0))
            .fold(0.0f64, f64::max)
            * 1.05;
        let hmax = rows.iter().map(|r| r.gauging.head_m).fold(range.max_head_m, f64::max) * 1.05;
        root.fill(&WHITE).map_err(err)?;
        let root = root
            .titled(
                &format!("{}: rating and gaugings", self.station.name),
                ("sans-serif", 26, FontStyle::Bold),
            )
            .map_err(err)?;
        let mut c = ChartBuilder::on(&root)
            .margin(20)
            .x_label_area_size(55)
            .y_label_area_size(80)
            .build_cartesian_2d(0.0..qmax, 0.0..hmax)
            .map_err(err)?;
        c.configure_mesh()
            .x_desc("discharge Q (m³/s)")
            .y_desc("head h1 (m above the crest)")
            .x_label_formatter(&|v| tick(*v))
            .y_label_formatter(&|v| tick(*v))
            .label_style(("sans-serif", 18))
            .axis_desc_style(("sans-serif", 20))
            .draw()
            .map_err(err)?;
        let blue = RGBColor(20, 60, 200);
        c.draw_series(LineSeries::new(curve, blue.stroke_width(3)))
            .map_err(err)?
            .label("rating from the dimensions")
            .legend(move |(x, y)| PathElement::new(vec![(x, y), (x + 20, y)], blue.stroke_width(3)));
        if !calibrated.is_empty() {
            let orange = RGBColor(215, 110, 0);
            c.draw_series(DashedLineSeries::new(calibrated, 10, 6, orange.stroke_width(3)))
                .map_err(err)?
                .label("calibrated: f · Q(h + dz)")
                .legend(move |(x, y)| PathElement::new(vec![(x, y), (x + 20, y)], orange.stroke_width(3)));
        }
        draw_points(
            &mut c,
            rows.iter().map(|r| {
                let q = r.gauging.discharge_m3s;
                let e = q * r.gauging.u95_pct / 100.0;
                ((q, r.gauging.head_m), (q - e, q + e), r.status == Status::Used, true)
            }),
        )?;
        legend(&mut c)
    }

    fn draw_deviation<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> Result<(), PlotError>
    where
        DB::ErrorType: 'static,
    {
        root.fill(&WHITE).map_err(err)?;
        let root = root
            .titled(
                &format!("{}: gauged against rated discharge", self.station.name),
                ("sans-serif", 26, FontStyle::Bold),
            )
            .map_err(err)?;
        let (top, bottom) = root.split_vertically(root.dim_in_pixel().1 / 2);
        let rows = &self.check.rows;
        let t0 = rows.iter().map(|r| r.gauging.time_ms).min().unwrap_or(0);
        let days = |t: i64| (t - t0) as f64 / 86_400_000.0;
        let heads: Vec<f64> = rows.iter().map(|r| r.gauging.head_m).collect();
        let times: Vec<f64> = rows.iter().map(|r| days(r.gauging.time_ms)).collect();
        let first =
            chrono::DateTime::from_timestamp_millis(t0).map_or_else(String::new, |d| d.format("%Y-%m-%d").to_string());
        self.deviation_panel(&top, &heads, "head h1 (m above the crest)")?;
        self.deviation_panel(&bottom, &times, &format!("days since the first gauging ({first}, UTC)"))?;
        Ok(())
    }

    fn deviation_panel<DB: DrawingBackend>(
        &self,
        area: &DrawingArea<DB, Shift>,
        x: &[f64],
        x_desc: &str,
    ) -> Result<(), PlotError>
    where
        DB::ErrorType: 'static,
    {
        let rows = &self.check.rows;
        let (x0, x1) = x
            .iter()
            .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), v| (a.min(*v), b.max(*v)));
        let pad = 0.05 * (x1 - x0).max(1e-3);
        let (x0, x1) = (x0 - pad, x1 + pad);
        let ymax = rows
            .iter()
            .map(|r| r.deviation_pct.abs() + r.difference_u95_pct)
            .fold(1.0f64, f64::max)
            * 1.1;
        let mut c = ChartBuilder::on(area)
            .margin(15)
            .x_label_area_size(50)
            .y_label_area_size(80)
            .build_cartesian_2d(x0..x1, -ymax..ymax)
            .map_err(err)?;
        c.configure_mesh()
            .x_desc(x_desc)
            .y_desc("deviation (gauged − rated) / rated, %")
            .x_label_formatter(&|v| tick(*v))
            .y_label_formatter(&|v| tick(*v))
            .label_style(("sans-serif", 16))
            .axis_desc_style(("sans-serif", 17))
            .draw()
            .map_err(err)?;
        c.draw_series(LineSeries::new(vec![(x0, 0.0), (x1, 0.0)], BLACK.stroke_width(1)))
            .map_err(err)?;
        if let Some(m) = self.check.mean {
            let u = COVERAGE_FACTOR * m.u_scaled();
            let band = RGBColor(20, 60, 200).mix(0.15);
            c.draw_series(std::iter::once(Rectangle::new(
                [(x0, m.mean - u), (x1, m.mean + u)],
                band.filled(),
            )))
            .map_err(err)?
            .label("mean deviation with its 95 % band")
            .legend(move |(x, y)| Rectangle::new([(x, y - 6), (x + 20, y + 6)], band.filled()));
            let blue = RGBColor(20, 60, 200);
            c.draw_series(LineSeries::new(vec![(x0, m.mean), (x1, m.mean)], blue.stroke_width(2)))
                .map_err(err)?;
        }
        draw_points(
            &mut c,
            rows.iter().zip(x).map(|(r, &x)| {
                let d = r.deviation_pct;
                (
                    (x, d),
                    (d - r.difference_u95_pct, d + r.difference_u95_pct),
                    r.status == Status::Used,
                    false,
                )
            }),
        )?;
        legend(&mut c)
    }
}

/// The text of a station file with `table` (a `[calibration]` table) in place of any
/// `[calibration]` table it has, at its end.
pub fn with_calibration(station_text: &str, table: &str) -> String {
    let mut out = String::new();
    let mut skipping = false;
    for line in station_text.split_inclusive('\n') {
        let t = line.trim_start();
        if t.starts_with('[') {
            skipping = t.starts_with("[calibration]");
        }
        if !skipping {
            out.push_str(line);
        }
    }
    if !out.ends_with('\n') {
        out.push('\n');
    }
    out.push('\n');
    out.push_str(table);
    out
}

/// `YYYY-MM-DD HH:MM` in UTC.
fn utc_minutes(t_ms: i64) -> String {
    chrono::DateTime::from_timestamp_millis(t_ms).map_or_else(String::new, |d| d.format("%Y-%m-%d %H:%M").to_string())
}

type XyChart<'a, DB> =
    ChartContext<'a, DB, Cartesian2d<plotters::coord::types::RangedCoordf64, plotters::coord::types::RangedCoordf64>>;

/// Points with error bars: ((x, y), (low, high), used, horizontal bar). Used gaugings are
/// filled circles; others hollow squares.
fn draw_points<'a, DB: DrawingBackend + 'a>(
    c: &mut XyChart<'a, DB>,
    points: impl Iterator<Item = ((f64, f64), (f64, f64), bool, bool)>,
) -> Result<(), PlotError>
where
    DB::ErrorType: 'static,
{
    let red = RGBColor(190, 30, 30);
    let grey = RGBColor(110, 110, 110);
    let (mut first_used, mut first_other) = (true, true);
    for ((x, y), (lo, hi), used, horizontal) in points {
        let color = if used { red } else { grey };
        let bar = if horizontal {
            vec![(lo, y), (hi, y)]
        } else {
            vec![(x, lo), (x, hi)]
        };
        c.draw_series(std::iter::once(PathElement::new(bar, color.stroke_width(2))))
            .map_err(err)?;
        if used {
            let s = c
                .draw_series(std::iter::once(Circle::new((x, y), 5, color.filled())))
                .map_err(err)?;
            if std::mem::take(&mut first_used) {
                s.label("gauging with its 95 % bar")
                    .legend(move |(x, y)| Circle::new((x + 10, y), 5, red.filled()));
            }
        } else {
            let s = c
                .draw_series(std::iter::once(Circle::new((x, y), 5, color.stroke_width(2))))
                .map_err(err)?;
            if std::mem::take(&mut first_other) {
                s.label("gauging not used (outside the range, or a repeated time)")
                    .legend(move |(x, y)| Circle::new((x + 10, y), 5, grey.stroke_width(2)));
            }
        }
    }
    Ok(())
}

fn legend<'a, DB: DrawingBackend + 'a>(c: &mut XyChart<'a, DB>) -> Result<(), PlotError>
where
    DB::ErrorType: 'static,
{
    c.configure_series_labels()
        .background_style(WHITE.mix(0.9))
        .border_style(BLACK)
        .label_font(("sans-serif", 16))
        .position(SeriesLabelPosition::UpperLeft)
        .draw()
        .map_err(err)
}
