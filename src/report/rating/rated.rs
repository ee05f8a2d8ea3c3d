//! A station rated for a report: the table at the heads asked for, the station's rating
//! equation, the uncertainty of every row (GUM always, Monte Carlo when asked) and the largest
//! modular tailwater of every row. `flumerate rate` only picks the options and the format.

use super::{RatingReport, UncertaintyColumns};
use crate::rating::{RatingEquation, RatingError, RatingModel, RatingTable};
use crate::station::Station;
use crate::tailwater::{modular_limit_at, Exit, Tailwater};
use crate::uncertainty::{departure_from_gum, monte_carlo, GumModel, Inputs, McError, McOptions};
use crate::units::Units;

/// A Monte Carlo interval departing from the GUM one by more than this fraction of its width is
/// reported in the row's note (JCGM 101 §8 compares the two intervals' end points).
pub const MC_DEPARTURE_WARNING: f64 = 0.05;

/// What a rating table carries.
#[derive(Debug, Clone, PartialEq)]
pub struct RateOptions {
    /// The heads (m).
    pub heads_m: Vec<f64>,
    /// Also a Monte Carlo interval (JCGM 101).
    pub monte_carlo: Option<McOptions>,
    /// Also each input's share of the variance.
    pub budget: bool,
}

/// Why a station cannot be rated for a report.
#[derive(Debug, thiserror::Error)]
#[non_exhaustive]
pub enum RateError {
    /// The model fails.
    #[error(transparent)]
    Rating(#[from] RatingError),
    /// The Monte Carlo run cannot be set up.
    #[error(transparent)]
    MonteCarlo(#[from] McError),
}

/// A station rated at a list of heads, with what its reports show.
#[derive(Debug, Clone)]
pub struct Rated {
    /// The model.
    pub model: RatingModel,
    /// The table at the heads asked for.
    pub table: RatingTable,
    /// The station's rating equation.
    pub equation: Option<RatingEquation>,
    /// The uncertainty of every row.
    pub uncertainty: UncertaintyColumns,
    /// Per row: modular limit and largest modular tailwater level above the crest (m).
    pub modular: Vec<(f64, f64)>,
}

impl Rated {
    /// Rates `station` as `o` asks.
    pub fn compute(station: &Station, o: &RateOptions) -> Result<Self, RateError> {
        let model = RatingModel::new(station.structure.clone())?;
        let mut table = RatingTable::compute(&model, &o.heads_m);
        let inputs = Inputs::from_station(&station.uncertainty, &station.structure);
        let gum = GumModel::new(&model, inputs.clone())?;
        let points: Vec<_> = table
            .rows
            .iter()
            .map(|r| r.point.and_then(|_| gum.point(r.head_m).ok()))
            .collect();
        let monte = match &o.monte_carlo {
            Some(opts) => {
                let rows = monte_carlo(&model, &inputs, &o.heads_m, opts)?;
                for ((row, mc), gp) in table.rows.iter_mut().zip(&rows).zip(&points) {
                    if let (Some(mc), Some(gp)) = (mc, gp) {
                        let d = departure_from_gum(mc, gp.discharge_m3s, gp.u_rel * gp.discharge_m3s);
                        if d > MC_DEPARTURE_WARNING {
                            row.notes.push(format!(
                                "Monte Carlo interval departs from GUM by {:.0} % of its width",
                                d * 100.0
                            ));
                        }
                    }
                }
                Some((rows, opts.draws, opts.seed))
            }
            None => None,
        };
        let uncertainty = UncertaintyColumns {
            inputs,
            u95_pct: points.iter().map(|p| p.map_or(f64::NAN, |p| p.u95_pct())).collect(),
            shares: o
                .budget
                .then(|| points.iter().map(|p| p.map_or([f64::NAN; 4], |p| p.shares)).collect()),
            monte_carlo: monte,
        };
        let modular = modular_column(station, &model, &table);
        Ok(Self {
            equation: RatingEquation::for_range(&model, station.range.min_head_m, station.range.max_head_m),
            model,
            table,
            uncertainty,
            modular,
        })
    }

    /// The report of this rating, in `units`.
    pub fn report<'a>(&'a self, station: &'a Station, units: Units) -> RatingReport<'a> {
        RatingReport {
            uncertainty: Some(&self.uncertainty),
            modular: Some(&self.modular),
            ..RatingReport::new(
                &station.name,
                &station.source,
                &self.model,
                &self.table,
                self.equation.as_ref(),
                units,
            )
            .with_period(station.period.line.as_deref())
        }
    }
}

/// The modular limit and the largest modular tailwater level of every row with flow.
fn modular_column(station: &Station, model: &RatingModel, table: &RatingTable) -> Vec<(f64, f64)> {
    let exit = Exit::from(&station.exit);
    let tailwater = station
        .tailwater
        .clone()
        .map(|t| Tailwater::new(t, station.structure.gravity_m_s2));
    table
        .rows
        .iter()
        .map(|r| match r.point {
            Some(p) if p.discharge_m3s > 0.0 => {
                let (ml, _, level) = modular_limit_at(model, &exit, tailwater.as_ref(), &p);
                (ml, level)
            }
            _ => (f64::NAN, f64::NAN),
        })
        .collect()
}
