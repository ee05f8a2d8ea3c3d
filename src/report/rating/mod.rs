//! Rating tables as CSV, JSON and readable text.
//!
//! CSV and JSON carry every number at full precision (Rust's shortest round-trip form, which is
//! exact and has up to 17 significant digits); text rounds for reading and ends with the cautions.

mod rated;

pub use rated::{RateError, RateOptions, Rated, MC_DEPARTURE_WARNING};
use serde_json::{json, Map, Value};

use super::{sig, wrap, CAUTIONS};
use crate::rating::{LossMethod, RatingEquation, RatingModel, RatingRow, RatingTable, StructureKind};
use crate::uncertainty::{Inputs, McRow, INPUT_NAMES};
use crate::units::Units;

/// Uncertainty columns of a rating table, row for row.
#[derive(Debug, Clone)]
pub struct UncertaintyColumns {
    /// The inputs used.
    pub inputs: Inputs,
    /// Expanded (k = 2) GUM uncertainty of one reading, % of Q (NaN where there is no Q).
    pub u95_pct: Vec<f64>,
    /// Each input's share of the variance, when a budget was asked for.
    pub shares: Option<Vec<[f64; 4]>>,
    /// Monte Carlo results, when asked for, with the number of draws and the seed.
    pub monte_carlo: Option<(Vec<Option<McRow>>, usize, u64)>,
}

/// Everything a rating report shows.
#[derive(Debug, Clone, Copy)]
pub struct RatingReport<'a> {
    /// Station name.
    pub name: &'a str,
    /// Station file path.
    pub source: &'a str,
    /// The model (for the structure summary).
    pub model: &'a RatingModel,
    /// The table.
    pub table: &'a RatingTable,
    /// Output units.
    pub units: Units,
    /// Uncertainty columns, if computed.
    pub uncertainty: Option<&'a UncertaintyColumns>,
    /// Per row: modular limit and largest modular tailwater level above the crest (m), if computed.
    pub modular: Option<&'a [(f64, f64)]>,
    /// The station's rating equation ([`crate::rating::RatingEquation`]), if it could be fitted.
    pub equation: Option<&'a RatingEquation>,
    /// The rating period in force, in words ([`crate::station::PeriodInfo::sentence`]).
    pub period: Option<&'a str>,
}

/// One output cell.
enum Cell {
    Num(f64),
    Bool(bool),
    Text(String),
}

impl<'a> RatingReport<'a> {
    /// A report with no uncertainty or tailwater columns.
    pub fn new(
        name: &'a str,
        source: &'a str,
        model: &'a RatingModel,
        table: &'a RatingTable,
        equation: Option<&'a RatingEquation>,
        units: Units,
    ) -> Self {
        Self {
            name,
            source,
            model,
            table,
            units,
            uncertainty: None,
            modular: None,
            equation,
            period: None,
        }
    }

    /// The same report naming the station's rating period.
    pub fn with_period(mut self, period: Option<&'a str>) -> Self {
        self.period = period;
        self
    }

    /// Column names, unit suffixes per design.md.
    pub fn headers(&self) -> Vec<String> {
        let (l, q, v) = (
            self.units.length_suffix(),
            self.units.discharge_suffix(),
            self.units.velocity_suffix(),
        );
        let mut h = vec![
            format!("head_{l}"),
            format!("discharge_{q}"),
            format!("energy_head_{l}"),
            format!("critical_depth_{l}"),
            "cd".into(),
            "cv".into(),
            "froude_approach".into(),
            format!("approach_velocity_{v}"),
        ];
        if self.modular.is_some() {
            h.push("modular_limit".into());
            h.push(format!("max_tailwater_{l}"));
        }
        if let Some(u) = self.uncertainty {
            h.push("u95_pct".into());
            if u.monte_carlo.is_some() {
                h.push(format!("mc_low_{q}"));
                h.push(format!("mc_high_{q}"));
            }
            if u.shares.is_some() {
                h.extend(INPUT_NAMES.iter().map(|n| format!("share_{n}")));
            }
        }
        h.push("valid".into());
        h.push("note".into());
        h
    }

    fn cells(&self, index: usize, row: &RatingRow) -> Vec<Cell> {
        let u = self.units;
        let p = row.point;
        let num = |f: &dyn Fn(&crate::rating::RatingPoint) -> f64| Cell::Num(p.as_ref().map_or(f64::NAN, f));
        let mut cells = vec![
            Cell::Num(super::as_written(u.length_from_si(row.head_m))),
            num(&|p| u.discharge_from_si(p.discharge_m3s)),
            num(&|p| u.length_from_si(p.energy_head_m)),
            num(&|p| u.length_from_si(p.critical_depth_m)),
            num(&|p| p.cd),
            num(&|p| p.cv),
            num(&|p| p.froude_approach),
            num(&|p| u.length_from_si(p.approach_velocity_m_s)),
        ];
        if let Some(m) = self.modular {
            cells.push(Cell::Num(m[index].0));
            cells.push(Cell::Num(u.length_from_si(m[index].1)));
        }
        if let Some(unc) = self.uncertainty {
            cells.push(Cell::Num(unc.u95_pct[index]));
            if let Some((mc, _, _)) = &unc.monte_carlo {
                let m = mc[index];
                cells.push(Cell::Num(m.map_or(f64::NAN, |m| u.discharge_from_si(m.low_m3s))));
                cells.push(Cell::Num(m.map_or(f64::NAN, |m| u.discharge_from_si(m.high_m3s))));
            }
            if let Some(shares) = &unc.shares {
                cells.extend(shares[index].iter().map(|s| Cell::Num(*s)));
            }
        }
        cells.push(Cell::Bool(row.valid));
        cells.push(Cell::Text(row.notes.join("; ")));
        cells
    }

    /// The rating curve (head against discharge) with the 95 % band, rows outside the limits of
    /// application shaded.
    pub fn chart(&self) -> super::plot::XyChart {
        use plotters::style::RGBColor;
        let u = self.units;
        let (lu, qu) = u.symbols();
        let rows: Vec<(usize, crate::rating::RatingPoint, bool)> = self
            .table
            .rows
            .iter()
            .enumerate()
            .filter_map(|(i, r)| r.point.map(|p| (i, p, r.valid)))
            .collect();
        let band = |sign: f64| -> Vec<(f64, f64)> {
            rows.iter()
                .filter_map(|(i, p, _)| {
                    let u95 = self.uncertainty.map(|x| x.u95_pct[*i])?;
                    Some((
                        u.discharge_from_si(p.discharge_m3s * (1.0 + sign * u95 / 100.0)),
                        u.length_from_si(p.head_m),
                    ))
                })
                .collect()
        };
        let mut shaded = Vec::new();
        let mut start: Option<f64> = None;
        for (k, (_, p, valid)) in rows.iter().enumerate() {
            let q = u.discharge_from_si(p.discharge_m3s);
            match (valid, start) {
                (false, None) => {
                    start = Some(if k > 0 {
                        0.5 * (u.discharge_from_si(rows[k - 1].1.discharge_m3s) + q)
                    } else {
                        q
                    })
                }
                (true, Some(s)) => {
                    shaded.push((s, 0.5 * (u.discharge_from_si(rows[k - 1].1.discharge_m3s) + q)));
                    start = None;
                }
                _ => {}
            }
        }
        if let (Some(s), Some(last)) = (start, rows.last()) {
            shaded.push((s, u.discharge_from_si(last.1.discharge_m3s)));
        }
        let mut lines = vec![super::plot::Line {
            label: "rating".into(),
            points: rows
                .iter()
                .map(|(_, p, _)| (u.discharge_from_si(p.discharge_m3s), u.length_from_si(p.head_m)))
                .collect(),
            color: RGBColor(20, 70, 160),
            dashed: false,
        }];
        if self.uncertainty.is_some() {
            for (label, sign) in [("95 % band (GUM, k = 2)", 1.0), ("", -1.0)] {
                lines.push(super::plot::Line {
                    label: label.into(),
                    points: band(sign),
                    color: RGBColor(120, 140, 190),
                    dashed: true,
                });
            }
        }
        super::plot::XyChart {
            title: format!("{}: rating", self.name),
            x_label: format!("discharge Q ({qu})"),
            y_label: format!("head h1 above the crest ({lu})"),
            lines,
            shaded,
            shaded_label: "outside the limits of application".into(),
            caption: if self.model.structure().kind.critical_flow() {
                "computed by critical-flow theory; confirm by field gaugings".into()
            } else {
                "computed from the standard's published rating; confirm by field gaugings".into()
            },
        }
    }

    /// One-line description of the loss method.
    pub fn method_line(&self) -> String {
        let s = self.model.structure();
        let (lu, _) = self.units.symbols();
        match s.loss {
            LossMethod::BoundaryLayer {
                displacement_thickness_m,
            } => format!(
                "critical flow, boundary-layer method after ISO 4359: δ* = {} {lu} = {}·L moved into every wetted boundary of the control (the general form of the standard's correction, not the standard's formula: coefficient = \"iso-4359\" gives that)",
                sig(self.units.length_from_si(displacement_thickness_m), 3),
                sig(displacement_thickness_m / s.control_length_m, 3)
            ),
            LossMethod::FixedCd(cd) => format!("critical flow with a fixed discharge coefficient Cd = {cd}"),
            LossMethod::Iso4359 {
                displacement_thickness_m,
            } => format!(
                "critical flow, ISO 4359's own formula: Cd = (1 − 2δ*/b)(1 − δ*/h1)^1.5 with δ* = {} {lu} = {}·L, Cv and the shape coefficient exact (formula from memory: docs/references.md S3)",
                sig(self.units.length_from_si(displacement_thickness_m), 3),
                sig(displacement_thickness_m / s.control_length_m, 3)
            ),
            LossMethod::Standard(rule) => format!("{}: {}", rule.name(), rule.method()),
        }
    }

    /// Structure summary lines.
    pub fn structure_lines(&self) -> Vec<String> {
        let s = self.model.structure();
        let (lu, _) = self.units.symbols();
        let per = self.units.length_from_si(1.0);
        let kind = s.kind.describe();
        let mut lines = vec![match s.kind {
            StructureKind::Flume | StructureKind::Weir | StructureKind::SquareEdgedWeir => format!(
                "structure: {kind}; control {}; length {} {lu}",
                s.control.describe(lu, per),
                sig(self.units.length_from_si(s.control_length_m), 4)
            ),
            StructureKind::ThinPlateWeir => match s.loss {
                LossMethod::Standard(crate::rating::StandardRule::VNotch { angle_deg }) => {
                    format!("structure: {kind}; V-notch, {angle_deg}° between the sides")
                }
                LossMethod::Standard(crate::rating::StandardRule::Cipoletti) => format!(
                    "structure: {kind}; Cipoletti notch (1:4 sides), crest {} {lu} wide",
                    sig(self.units.length_from_si(s.control.characteristic_width_m()), 4)
                ),
                _ => format!("structure: {kind}; control {}", s.control.describe(lu, per)),
            },
            _ => format!("structure: {kind}; control {}", s.control.describe(lu, per)),
        }];
        if !matches!(s.kind, StructureKind::Parshall) {
            lines.push(format!(
                "approach: {}; crest {} {lu} above the approach bed; alpha = {}",
                s.approach.describe(lu, per),
                sig(self.units.length_from_si(s.sill_height_m), 4),
                s.approach_alpha
            ));
        }
        lines.push(format!("method: {}", self.method_line()));
        if let Some(p) = &self.period {
            lines.push(format!("rating period: {p}"));
        }
        if let Some(c) = &s.calibration {
            lines.push(format!("calibration: {}", c.sentence(lu, per)));
        }
        lines
    }

    /// CSV with a header row; numbers at full precision, missing values empty.
    pub fn to_csv(&self) -> Result<Vec<u8>, csv::Error> {
        let mut w = csv::Writer::from_writer(Vec::new());
        w.write_record(self.headers())?;
        for (i, row) in self.table.rows.iter().enumerate() {
            let rec: Vec<String> = self
                .cells(i, row)
                .into_iter()
                .map(|c| match c {
                    Cell::Num(v) if v.is_finite() => format!("{}", v + 0.0),
                    Cell::Num(_) => String::new(),
                    Cell::Bool(b) => b.to_string(),
                    Cell::Text(t) => t,
                })
                .collect();
            w.write_record(&rec)?;
        }
        w.flush()?;
        Ok(w.into_inner().map_err(|e| e.into_error())?)
    }

    /// The rating equation as JSON (in output units, coefficients as printed), or null.
    fn equation_json(&self) -> Value {
        let Some(eq) = self.equation.map(|e| e.printed(self.units)) else {
            return Value::Null;
        };
        json!({
            "form": "Q = K * (h + h0)^u",
            "k": eq.k,
            format!("h0_{}", self.units.length_suffix()): eq.h0,
            "u": eq.u,
            "max_relative_deviation": eq.max_relative_deviation,
            "rows_fitted": eq.rows,
            "rows_from": "the valid rows of 101 heads spread over the station's range",
            "few_rows_warning": eq.rests_on_few_rows(),
            "text": eq.sentence(self.units),
        })
    }

    /// The uncertainty inputs and methods as JSON, or null.
    fn uncertainty_json(&self) -> Value {
        let Some(u) = self.uncertainty else {
            return Value::Null;
        };
        let inputs: Vec<Value> = INPUT_NAMES
            .iter()
            .zip(u.inputs.all())
            .map(|(name, i)| json!({ "input": name, "stated": i.stated_in(self.units), "standard": i.standard, "source": i.source }))
            .collect();
        json!({
            "u95_pct": "GUM first order (JCGM 100), sensitivities by central differences of the whole rating, k = 2, one reading",
            "inputs": inputs,
            "monte_carlo": u.monte_carlo.as_ref().map(|(_, draws, seed)| json!({
                "method": "JCGM 101, probabilistically symmetric 95 % interval",
                "draws": draws,
                "seed": seed,
            })),
        })
    }

    /// Text lines describing the uncertainty inputs.
    fn uncertainty_lines(&self) -> Vec<String> {
        let Some(u) = self.uncertainty else {
            return Vec::new();
        };
        let mut lines = vec!["uncertainty of one reading (u95 %, GUM, k = 2) from these inputs:".to_string()];
        let kinds = [
            "systematic, on Cd",
            "systematic, on the control width",
            "systematic, gauge zero",
            "random, one head reading",
        ];
        for ((name, i), kind) in INPUT_NAMES.iter().zip(u.inputs.all()).zip(kinds) {
            lines.push(format!(
                "  {name:<12} {:<34} {kind}; {}",
                i.stated_in(self.units),
                i.source
            ));
        }
        if let Some((_, draws, seed)) = &u.monte_carlo {
            lines.push(format!(
                "Monte Carlo (JCGM 101): {draws} draws, seed {seed}; MC low/high is the probabilistically symmetric 95 % interval"
            ));
        }
        lines
    }

    /// JSON: station, units, method, rows (one object per row), equation and cautions.
    pub fn to_json(&self) -> Result<Vec<u8>, serde_json::Error> {
        let headers = self.headers();
        let rows: Vec<Value> = self
            .table
            .rows
            .iter()
            .enumerate()
            .map(|(i, row)| {
                let mut m = Map::new();
                for (h, c) in headers.iter().zip(self.cells(i, row)) {
                    let v = match c {
                        Cell::Num(v) if v.is_finite() => json!(v + 0.0),
                        Cell::Num(_) => Value::Null,
                        Cell::Bool(b) => json!(b),
                        Cell::Text(t) => json!(t),
                    };
                    m.insert(h.clone(), v);
                }
                Value::Object(m)
            })
            .collect();
        let doc = json!({
            "station": self.name,
            "station_file": self.source,
            "units": match self.units { Units::Si => "si", Units::Us => "us" },
            "method": self.method_line(),
            "calibration": self.model.structure().calibration.as_ref().map(|c| json!({
                "factor": c.factor,
                "factor_u95_pct": c.factor_u95_pct,
                "zero_offset_m": c.zero_offset_m,
                "zero_offset_u95_m": c.zero_offset_u95_m,
                "gaugings": c.gaugings,
                "from": c.from,
                "to": c.to,
                "source_sha256": c.source_sha256,
                "applied": "Q = factor · Q_rating(h + zero_offset_m)",
            })),
            "rows": rows,
            "equation": self.equation_json(),
            "uncertainty": self.uncertainty_json(),
            "cautions": CAUTIONS,
        });
        let mut out = serde_json::to_vec_pretty(&doc)?;
        out.push(b'\n');
        Ok(out)
    }

    /// Readable text: header, rounded table, equation, cautions.
    pub fn to_text(&self) -> Vec<u8> {
        let mut s = self.text_header();
        s.push('\n');
        s.push_str(&self.text_table_header());
        for i in 0..self.table.rows.len() {
            s.push_str(&self.text_row(i));
        }
        s.push_str(&self.text_budget());
        s.push('\n');
        s.push_str(&self.text_footer());
        s.into_bytes()
    }

    /// The lines above the table: station, structure, units, uncertainty basis, column notes.
    fn text_header(&self) -> String {
        let (lu, qu) = self.units.symbols();
        let mut s = String::new();
        s.push_str(&format!("flumerate rating: {}\n", self.name));
        s.push_str(&format!("station file: {}\n", self.source));
        for line in self.structure_lines() {
            s.push_str(&line);
            s.push('\n');
        }
        s.push_str(&format!(
            "units: head h1 and energy head H1 in {lu} above the crest, discharge Q in {qu}\n"
        ));
        for line in self.uncertainty_lines() {
            s.push_str(&line);
            s.push('\n');
        }
        if self.modular.is_some() {
            s.push_str(&format!(
                "tail<=: the largest tailwater level ({lu} above the crest) at which the flow stays modular (see `flumerate tailwater`)\n"
            ));
        }
        s
    }

    /// The Monte Carlo rows, when the report has them.
    fn monte_carlo_rows(&self) -> Option<&[Option<McRow>]> {
        self.uncertainty
            .and_then(|u| u.monte_carlo.as_ref())
            .map(|(rows, _, _)| rows.as_slice())
    }

    /// The table's column headings, with units.
    fn text_table_header(&self) -> String {
        let (lu, qu) = self.units.symbols();
        let mut s = format!(
            "{:>8} {:>12} {:>8} {:>8} {:>7} {:>7} {:>6} {:>6}",
            format!("h1 {lu}"),
            format!("Q {qu}"),
            format!("H1 {lu}"),
            format!("yc {lu}"),
            "Cd",
            "Cv",
            "Fr1",
            "u95 %",
        );
        if self.modular.is_some() {
            s.push_str(&format!(" {:>10}", format!("tail<= {lu}")));
        }
        if self.monte_carlo_rows().is_some() {
            s.push_str(&format!(" {:>12} {:>12}", "MC low", "MC high"));
        }
        s.push_str(&format!(" {:>6}  note\n", "valid"));
        s
    }

    /// Row `i` of the table; a value that could not be computed reads `-`.
    fn text_row(&self, i: usize) -> String {
        let u = self.units;
        let row = &self.table.rows[i];
        let p = row.point;
        let f = |g: &dyn Fn(&crate::rating::RatingPoint) -> f64, digits: usize| {
            p.as_ref()
                .map(g)
                .filter(|v| v.is_finite())
                .map_or("-".to_string(), |v| format!("{:.digits$}", v + 0.0))
        };
        let u95 = self
            .uncertainty
            .map(|x| x.u95_pct[i])
            .filter(|v| v.is_finite())
            .map_or("-".to_string(), |v| format!("{v:.2}"));
        let mut s = format!(
            "{:>8.4} {:>12} {:>8} {:>8} {:>7} {:>7} {:>6} {:>6}",
            u.length_from_si(row.head_m),
            p.as_ref()
                .map_or("-".to_string(), |p| sig(u.discharge_from_si(p.discharge_m3s), 4)),
            f(&|p| u.length_from_si(p.energy_head_m), 4),
            f(&|p| u.length_from_si(p.critical_depth_m), 4),
            f(&|p| p.cd, 4),
            f(&|p| p.cv, 4),
            f(&|p| p.froude_approach, 3),
            u95,
        );
        if let Some(m) = self.modular {
            let v = m[i].1;
            s.push_str(&format!(
                " {:>10}",
                if v.is_finite() {
                    format!("{:.4}", u.length_from_si(v))
                } else {
                    "-".into()
                }
            ));
        }
        if let Some(rows) = self.monte_carlo_rows() {
            let (lo, hi) = rows[i].map_or(("-".to_string(), "-".to_string()), |m| {
                (
                    sig(u.discharge_from_si(m.low_m3s), 4),
                    sig(u.discharge_from_si(m.high_m3s), 4),
                )
            });
            s.push_str(&format!(" {lo:>12} {hi:>12}"));
        }
        s.push_str(&format!(
            " {:>6}  {}\n",
            if row.valid { "yes" } else { "NO" },
            row.notes.join("; ")
        ));
        s
    }

    /// The uncertainty budget table (each input's share of the variance), when there is one.
    fn text_budget(&self) -> String {
        let Some(shares) = self.uncertainty.and_then(|x| x.shares.as_ref()) else {
            return String::new();
        };
        let u = self.units;
        let (lu, _) = u.symbols();
        let mut s = format!(
            "\nuncertainty budget: each input's share of the variance of Q, % (one reading)\n{:>8} {:>12} {:>10} {:>8} {:>8} {:>7}\n",
            format!("h1 {lu}"),
            "coefficient",
            "dimension",
            "zero",
            "reading",
            "u95 %"
        );
        for (i, row) in self.table.rows.iter().enumerate() {
            let sh = shares[i];
            let u95 = self.uncertainty.map_or(f64::NAN, |x| x.u95_pct[i]);
            s.push_str(&format!(
                "{:>8.4} {:>12.1} {:>10.1} {:>8.1} {:>8.1} {:>7.2}\n",
                u.length_from_si(row.head_m),
                sh[0] * 100.0,
                sh[1] * 100.0,
                sh[2] * 100.0,
                sh[3] * 100.0,
                u95
            ));
        }
        s
    }

    /// The lines below the table: the rating equation, rows out of the limits, cautions.
    fn text_footer(&self) -> String {
        let u = self.units;
        let mut s = String::new();
        match self.equation {
            Some(eq) => {
                s.push_str("rating equation: ");
                s.push_str(&eq.printed(u).sentence(u));
                s.push('\n');
            }
            None => s.push_str("rating equation: not fitted (fewer than 3 valid rows in the station's range)\n"),
        }
        let invalid = self.table.invalid_rows();
        if invalid > 0 {
            s.push_str(&format!(
                "{invalid} of {} rows lie outside the limits of application (valid = NO); run `flumerate check` for the limits and their sources\n",
                self.table.rows.len()
            ));
        }
        s.push('\n');
        s.push_str(&wrap(CAUTIONS, 100));
        s.push('\n');
        s
    }
}
