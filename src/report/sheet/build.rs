//! The field sheet assembled from a station: the grid of heads (coarse rows × fine columns), the
//! largest modular tailwater per row, the rating curve, equation and uncertainty, and the facts a
//! reader needs. The command line only chooses where the page goes.

use super::{Paper, Sheet, SheetCell, SheetRow};
use crate::rating::limits::LIMITS;
use crate::rating::{RatingEquation, RatingError, RatingModel, RatingTable, StructureKind};
use crate::report::plot::{xy_chart_sized, ImageFormat, PlotError};
use crate::report::rating::RatingReport;
use crate::report::{sig, with_feet};
use crate::station::Station;
use crate::tailwater::{modular_limit_at, Exit, Tailwater};
use crate::uncertainty::{GumModel, Inputs};
use crate::units::Units;

/// Largest number of grid rows before a coarser step is chosen (one printed page).
pub const MAX_ROWS: usize = 45;

/// How the sheet is laid out.
#[derive(Debug, Clone, PartialEq)]
pub struct SheetOptions {
    /// Output units.
    pub units: Units,
    /// Coarse head step between rows, in the output unit; `None` picks one from the 1–2–5 series.
    pub step: Option<f64>,
    /// Paper.
    pub paper: Paper,
    /// The "generated" time printed on the sheet.
    pub generated: String,
    /// Tabulate by staff reading (the station's `[staff] crest_reading` added to every head)
    /// instead of by head above the crest.
    pub by_staff: bool,
}

/// Why a sheet cannot be made.
#[derive(Debug, thiserror::Error)]
#[non_exhaustive]
pub enum SheetError {
    /// The step cannot make a page.
    #[error("--step {step}: {problem}")]
    Step {
        /// The step.
        step: f64,
        /// Why.
        problem: String,
    },
    /// The rating fails.
    #[error(transparent)]
    Rating(#[from] RatingError),
    /// The curve cannot be drawn.
    #[error("the rating curve: {0}")]
    Plot(#[from] PlotError),
}

/// The grid's layout in the output unit: the coarse step, and the first and last fine head as
/// whole numbers of fine steps (exact multiples, so labels and heads do not drift).
struct Layout {
    coarse: f64,
    first: i64,
    last: i64,
    /// What a row's reading adds to the head (m): the staff reading at crest level, or 0.
    shift_m: f64,
}

impl Layout {
    fn new(station: &Station, o: &SheetOptions) -> Result<Self, SheetError> {
        let shift_m = if o.by_staff { station.staff.crest_reading_m } else { 0.0 };
        let (lo_u, hi_u) = (
            o.units.length_from_si(station.range.min_head_m + shift_m),
            o.units.length_from_si(station.range.max_head_m + shift_m),
        );
        let candidates: &[f64] = match o.units {
            Units::Si => &[0.01, 0.02, 0.05, 0.1, 0.2, 0.5],
            Units::Us => &[0.1, 0.2, 0.5, 1.0, 2.0],
        };
        let rows_for = |c: f64| ((hi_u / c).floor() - (lo_u / c).floor()) as usize + 1;
        let coarse = match o.step {
            Some(s) if s.is_finite() && s > 0.0 => s,
            Some(step) => {
                return Err(SheetError::Step {
                    step,
                    problem: "give a positive head step".into(),
                })
            }
            None => candidates
                .iter()
                .copied()
                .find(|c| rows_for(*c) <= MAX_ROWS)
                .unwrap_or(candidates[candidates.len() - 1]),
        };
        if rows_for(coarse) > 200 {
            return Err(SheetError::Step {
                step: coarse,
                problem: format!("gives {} rows: use a larger step", rows_for(coarse)),
            });
        }
        Ok(Self {
            coarse,
            first: (lo_u / coarse + 1e-9).floor() as i64 * 10,
            last: (hi_u / coarse + 1e-9).floor() as i64 * 10 + 9,
            shift_m,
        })
    }

    fn fine(&self) -> f64 {
        self.coarse / 10.0
    }
}

impl Sheet {
    /// The sheet of `station`.
    pub fn for_station(station: &Station, o: &SheetOptions) -> Result<Self, SheetError> {
        let model = RatingModel::new(station.structure.clone())?;
        let layout = Layout::new(station, o)?;
        let (rows, table) = grid(station, &model, &layout, o.units);
        let equation = RatingEquation::for_range(&model, station.range.min_head_m, station.range.max_head_m);
        let report = RatingReport::new(
            &station.name,
            &station.source,
            &model,
            &table,
            equation.as_ref(),
            o.units,
        )
        .with_period(station.period.line.as_deref());
        // the curve is the rating report's chart, without the title and caption the sheet prints
        let mut chart = report.chart();
        chart.title.clear();
        chart.caption.clear();
        let svg = String::from_utf8_lossy(&xy_chart_sized(&chart, ImageFormat::Svg, (480, 300), 0.62)?).into_owned();
        let kind = match station.structure.kind {
            StructureKind::Flume => "flume",
            StructureKind::Weir => "weir",
            StructureKind::ThinPlateWeir => "thin-plate weir",
            StructureKind::Parshall => "Parshall flume",
            StructureKind::SquareEdgedWeir | StructureKind::TriangularProfileWeir => "weir",
        };
        Ok(Sheet {
            name: station.name.clone(),
            datum: station.datum.clone(),
            source: station.source.clone(),
            sha256: station.sha256.clone(),
            generated: o.generated.clone(),
            structure: report
                .structure_lines()
                .into_iter()
                .map(|l| l.replace("structure:", &format!("{kind}:")))
                .collect(),
            zero: zero_line(station, o.units),
            units: o.units,
            paper: o.paper,
            by_staff: o
                .by_staff
                .then(|| o.units.length_from_si(station.staff.crest_reading_m)),
            row_unit: match o.units {
                Units::Si => "cm".into(),
                Units::Us => "ft".into(),
            },
            columns: columns(&layout, o.units),
            rows,
            equation: match &equation {
                Some(eq) => eq.printed(o.units).sentence(o.units),
                None => "not fitted (fewer than 3 valid rows in the station's range)".into(),
            },
            uncertainty: uncertainty(station, &model, o.units)?,
            // inline SVG in HTML needs no namespace declaration; dropping it keeps the file free
            // of URLs
            svg: svg.replace(" xmlns=\"http://www.w3.org/2000/svg\"", ""),
            figures: 4,
            limits: limit_texts(o.units),
        })
    }
}

/// The grid's rows and the rating table of every head in the station's range.
fn grid(station: &Station, model: &RatingModel, layout: &Layout, units: Units) -> (Vec<SheetRow>, RatingTable) {
    let fine = layout.fine();
    let per_unit = units.length_to_si(1.0);
    let heads: Vec<f64> = (layout.first..=layout.last)
        .map(|k| k as f64 * fine * per_unit - layout.shift_m)
        .collect();
    let eps = 1e-9;
    let in_range = |h: f64| h >= station.range.min_head_m * (1.0 - eps) && h <= station.range.max_head_m * (1.0 + eps);
    let rated: Vec<f64> = heads.iter().copied().filter(|h| in_range(*h)).collect();
    let table = RatingTable::compute(model, &rated);
    let exit = Exit::from(&station.exit);
    let tailwater = station
        .tailwater
        .clone()
        .map(|t| Tailwater::new(t, station.structure.gravity_m_s2));
    let mut rows = Vec::new();
    let mut table_rows = table.rows.iter();
    for (r, row_heads) in heads.chunks(10).enumerate() {
        let mut row = SheetRow {
            label: match units {
                Units::Si => format!("{}", ((layout.first + 10 * r as i64) as f64 * fine * 100.0).round()),
                Units::Us => format!("{:.1}", (layout.first + 10 * r as i64) as f64 * fine),
            },
            cells: Vec::new(),
            max_tailwater_m: None,
            broken: Vec::new(),
        };
        for &h in row_heads {
            let rated_row = if in_range(h) { table_rows.next() } else { None };
            let Some(tr) = rated_row else {
                row.cells.push(SheetCell {
                    head_m: h,
                    discharge_m3s: None,
                    valid: true,
                });
                continue;
            };
            if let (Some(p), None) = (tr.point, row.max_tailwater_m) {
                row.max_tailwater_m = Some(modular_limit_at(model, &exit, tailwater.as_ref(), &p).2);
            }
            for n in &tr.notes {
                let id = n.trim_start_matches("outside ").to_string();
                if !row.broken.contains(&id) {
                    row.broken.push(id);
                }
            }
            row.cells.push(SheetCell {
                head_m: h,
                discharge_m3s: tr.point.map(|p| p.discharge_m3s),
                valid: tr.valid,
            });
        }
        // a row with no head in the rated range carries nothing to read
        if row.cells.iter().any(|c| c.discharge_m3s.is_some()) {
            rows.push(row);
        }
    }
    (rows, table)
}

/// The fine steps' headings.
fn columns(layout: &Layout, units: Units) -> Vec<String> {
    let fine = layout.fine();
    (0..10)
        .map(|j| match units {
            Units::Si => format!("+{} mm", (j as f64 * fine * 1000.0).round()),
            Units::Us => format!("+{:.2}", j as f64 * fine),
        })
        .collect()
}

/// U95 of one reading at four heads across the range.
fn uncertainty(station: &Station, model: &RatingModel, units: Units) -> Result<Vec<(String, f64)>, RatingError> {
    let gum = GumModel::new(model, Inputs::from_station(&station.uncertainty, &station.structure))?;
    let r = station.range;
    Ok([0.0, 1.0 / 3.0, 2.0 / 3.0, 1.0]
        .iter()
        .filter_map(|f| {
            let h = r.min_head_m + f * (r.max_head_m - r.min_head_m);
            gum.point(h)
                .ok()
                .map(|p| (sig(units.length_from_si(h), 3), p.u95_pct()))
        })
        .collect())
}

/// Where the gauges read zero.
fn zero_line(station: &Station, units: Units) -> String {
    let (lu, _) = units.symbols();
    let staff = format!(
        "Gauge zero: the staff gauge reads {} {lu} at crest level{}",
        sig(units.length_from_si(station.staff.crest_reading_m), 4),
        station
            .staff
            .datum
            .as_ref()
            .map_or(String::new(), |d| format!(" (staff zero: {d})"))
    );
    match station
        .logger
        .as_ref()
        .and_then(|l| l.zero.map(|z| (z, l.stage_unit.clone())))
    {
        Some((z, u)) => format!(
            "{staff}; the logger reads {z} {} there.",
            u.unwrap_or_else(|| "m".into())
        ),
        None => format!("{staff}."),
    }
}

/// Every limit's identifier with its rule and source, lengths in feet too for US units.
fn limit_texts(units: Units) -> Vec<(String, String)> {
    LIMITS
        .iter()
        .chain(crate::rating::limits::STANDARD_LIMITS)
        .map(|l| {
            let rule = match units {
                Units::Si => l.rule.to_string(),
                Units::Us => with_feet(l.rule),
            };
            (l.id.to_string(), format!("{}: {rule} ({})", l.id, l.source))
        })
        .collect()
}
