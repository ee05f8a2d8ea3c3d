//! A station's rating checked against its field gaugings: per gauging the rated discharge, the
//! deviation and whether it is real given both uncertainties; over all gaugings the weighted
//! mean deviation, trends with head and time, outliers, and whether the gaugings point to the
//! coefficient or to the gauge zero (a weighted fit of Q = f · Q_rating(h + dz)).
//!
//! The rating checked is the one from the dimensions: a station's existing calibration is left
//! out, so a new calibration replaces it rather than stacking on it.

use super::fit::{
    fit_factor, fit_factor_zero, weighted_line, weighted_mean, FactorZeroFit, FitError, Line, WeightedMean,
};
use super::read::{Gauging, GaugingsFile, Refused};
use crate::rating::{RatingError, RatingModel};
use crate::station::Station;
use crate::uncertainty::{GumModel, Inputs, COVERAGE_FACTOR};

/// A normalised residual above this names an outlier.
pub const OUTLIER_LIMIT: f64 = 3.0;

/// |correlation of f and dz| above this: the gaugings cannot tell the two apart (common
/// practice, no source).
pub const INSEPARABLE_CORRELATION: f64 = 0.95;

/// How a gauging takes part.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Status {
    /// In the statistics and the fit.
    Used,
    /// Outside the station's rated range: shown, not used.
    OutsideRange,
    /// At the same time as an earlier gauging: shown, not used.
    DuplicateTime,
}

impl Status {
    /// A word for reports.
    pub fn as_str(self) -> &'static str {
        match self {
            Status::Used => "used",
            Status::OutsideRange => "outside-range",
            Status::DuplicateTime => "duplicate-time",
        }
    }
}

/// One gauging against the rating.
#[derive(Debug, Clone, PartialEq)]
pub struct CheckRow {
    /// The gauging.
    pub gauging: Gauging,
    /// The rated discharge at its head (m³/s).
    pub rated_m3s: f64,
    /// The rating's expanded uncertainty there (%).
    pub rating_u95_pct: f64,
    /// (gauged − rated) / rated, %.
    pub deviation_pct: f64,
    /// Expanded uncertainty of the deviation: rating and gauging combined (%).
    pub difference_u95_pct: f64,
    /// Whether the deviation lies within its expanded uncertainty.
    pub agrees: bool,
    /// The independent standard uncertainty (%) that weighs it: the gauging's and one head
    /// reading's.
    pub independent_u_pct: f64,
    /// (deviation − mean) / independent u; NaN when not used.
    pub normalised_residual: f64,
    /// How it takes part.
    pub status: Status,
}

/// What the fit of f and dz gave.
#[derive(Debug, Clone, PartialEq)]
pub enum FitOutcome {
    /// Both, told apart.
    Both(FactorZeroFit),
    /// The factor alone (dz fixed at 0), with why the zero could not be fitted.
    FactorOnly {
        /// The factor.
        factor: f64,
        /// Its standard uncertainty (scaled where the scatter exceeds the stated one).
        u: f64,
        /// The two-parameter fit, where one was made.
        both: Option<FactorZeroFit>,
        /// Why the zero is not separated.
        reason: String,
    },
    /// None.
    Nothing(String),
}

/// The check of a rating against gaugings.
#[derive(Debug, Clone)]
pub struct GaugingCheck {
    /// Every usable gauging, in file order.
    pub rows: Vec<CheckRow>,
    /// The rows refused while reading.
    pub refused: Vec<Refused>,
    /// The weighted mean deviation (%) of the used gaugings.
    pub mean: Option<WeightedMean>,
    /// Deviation (%) against head (m).
    pub trend_head: Option<Line>,
    /// Deviation (%) against time (years since the first gauging).
    pub trend_time: Option<Line>,
    /// Lines of the outliers.
    pub outliers: Vec<usize>,
    /// The fit of f and dz.
    pub fit: FitOutcome,
    /// The rating's own systematic expanded uncertainty at mid-range (%): coefficient, width and
    /// zero.
    pub systematic_u95_pct: f64,
    /// Plain-language conclusions.
    pub advice: Vec<String>,
}

impl GaugingCheck {
    /// Checks `station`'s rating (from its dimensions) against `file`.
    pub fn compute(station: &Station, file: &GaugingsFile) -> Result<Self, RatingError> {
        let model = RatingModel::new(station.structure.clone())?.uncalibrated();
        let mut structure = station.structure.clone();
        structure.calibration = None;
        let inputs = Inputs::from_station(&station.uncertainty, &structure);
        let gum = GumModel::new(&model, inputs)?;
        let reading_u_m = gum.inputs().reading.standard;
        let range = station.range;
        let mut seen: Vec<i64> = Vec::new();
        let mut rows = Vec::with_capacity(file.gaugings.len());
        for g in &file.gaugings {
            let p = gum.point(g.head_m)?;
            let rated = p.discharge_m3s;
            let deviation_pct = 100.0 * (g.discharge_m3s - rated) / rated;
            let u_rating = p.u95_pct() / COVERAGE_FACTOR;
            let u_gauging = g.u95_pct / COVERAGE_FACTOR;
            let difference_u95_pct = COVERAGE_FACTOR * u_rating.hypot(u_gauging);
            let u_read = 100.0 * p.dq_dhead * reading_u_m / rated;
            let status = if g.head_m < range.min_head_m || g.head_m > range.max_head_m {
                Status::OutsideRange
            } else if seen.contains(&g.time_ms) {
                Status::DuplicateTime
            } else {
                Status::Used
            };
            seen.push(g.time_ms);
            rows.push(CheckRow {
                gauging: g.clone(),
                rated_m3s: rated,
                rating_u95_pct: p.u95_pct(),
                deviation_pct,
                difference_u95_pct,
                agrees: deviation_pct.abs() <= difference_u95_pct,
                independent_u_pct: u_gauging.hypot(u_read),
                normalised_residual: f64::NAN,
                status,
            });
        }
        let mid = gum.point(0.5 * (range.min_head_m + range.max_head_m))?;
        let i = gum.inputs();
        let systematic = (mid.dq_dcoefficient * i.coefficient.standard)
            .hypot(mid.dq_ddimension * i.dimension.standard)
            .hypot(mid.dq_dhead * i.zero.standard);
        let mut check = GaugingCheck {
            rows,
            refused: file.refused.clone(),
            mean: None,
            trend_head: None,
            trend_time: None,
            outliers: Vec::new(),
            fit: FitOutcome::Nothing("no gauging in the rated range".into()),
            systematic_u95_pct: 100.0 * COVERAGE_FACTOR * systematic / mid.discharge_m3s,
            advice: Vec::new(),
        };
        check.statistics();
        check.fit = check.fit_factor_and_zero(&model);
        check.advice = check.advise();
        Ok(check)
    }

    /// The used rows.
    pub fn used(&self) -> impl Iterator<Item = &CheckRow> {
        self.rows.iter().filter(|r| r.status == Status::Used)
    }

    fn statistics(&mut self) {
        let used: Vec<&CheckRow> = self.used().collect();
        let d: Vec<f64> = used.iter().map(|r| r.deviation_pct).collect();
        let u: Vec<f64> = used.iter().map(|r| r.independent_u_pct).collect();
        let h: Vec<f64> = used.iter().map(|r| r.gauging.head_m).collect();
        let t0 = used.iter().map(|r| r.gauging.time_ms).min().unwrap_or(0);
        let years: Vec<f64> = used
            .iter()
            .map(|r| (r.gauging.time_ms - t0) as f64 / (365.25 * 86_400_000.0))
            .collect();
        self.mean = weighted_mean(&d, &u);
        self.trend_head = weighted_line(&h, &d, &u);
        self.trend_time = weighted_line(&years, &d, &u);
        if let Some(m) = self.mean {
            for r in self.rows.iter_mut().filter(|r| r.status == Status::Used) {
                r.normalised_residual = (r.deviation_pct - m.mean) / r.independent_u_pct;
                if r.normalised_residual.abs() > OUTLIER_LIMIT {
                    self.outliers.push(r.gauging.line);
                }
            }
        }
    }

    fn fit_factor_and_zero(&self, model: &RatingModel) -> FitOutcome {
        let used: Vec<&CheckRow> = self.used().collect();
        if used.is_empty() {
            return FitOutcome::Nothing("no gauging in the rated range".into());
        }
        let heads: Vec<f64> = used.iter().map(|r| r.gauging.head_m).collect();
        let q: Vec<f64> = used.iter().map(|r| r.gauging.discharge_m3s).collect();
        // σ: the gauging's uncertainty and one head reading's, in m³/s
        let sigma: Vec<f64> = used
            .iter()
            .map(|r| r.independent_u_pct / 100.0 * r.gauging.discharge_m3s)
            .collect();
        let rate = |h: f64| model.discharge_m3s(h).ok();
        let slope = |h: f64| {
            let d = 1e-6;
            Some((model.discharge_m3s(h + d).ok()? - model.discharge_m3s(h - d).ok()?) / (2.0 * d))
        };
        let rated: Vec<f64> = used.iter().map(|r| r.rated_m3s).collect();
        let factor_only = |both: Option<FactorZeroFit>, reason: String| match fit_factor(&q, &rated, &sigma) {
            Some((f, u, chi2, dof)) => FitOutcome::FactorOnly {
                factor: f,
                u: u * super::fit::birge(chi2, dof),
                both,
                reason,
            },
            None => FitOutcome::Nothing(reason),
        };
        match fit_factor_zero(&heads, &q, &sigma, &rate, &slope) {
            Ok(fit) if fit.correlation().abs() <= INSEPARABLE_CORRELATION => FitOutcome::Both(fit),
            Ok(fit) => {
                let (lo, hi) = heads
                    .iter()
                    .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), h| (a.min(*h), b.max(*h)));
                factor_only(
                    Some(fit),
                    format!(
                        "the gaugings span heads {lo:.3}–{hi:.3} m only: the factor and the zero are correlated ({:.3}), so they cannot be told apart; gaugings over a wider range of heads would",
                        fit.correlation()
                    ),
                )
            }
            Err(FitError::TooFew(n)) => factor_only(
                None,
                format!("{n} gauging(s) in the rated range: the zero needs at least 3, so only the factor is fitted"),
            ),
            Err(e) => factor_only(None, e.to_string()),
        }
    }

    fn advise(&self) -> Vec<String> {
        let mut a = Vec::new();
        let Some(m) = self.mean else {
            a.push("no gauging in the rated range: the rating cannot be checked".into());
            return a;
        };
        let u = COVERAGE_FACTOR * m.u_scaled();
        let n = self.used().count();
        a.push(if m.mean.abs() > u {
            format!(
                "the rating departs from the {n} gauging(s) by {:+.2} % ± {:.2} % (95 %): the difference is real",
                m.mean, u
            )
        } else {
            format!(
                "the rating agrees with the {n} gauging(s): mean deviation {:+.2} % ± {:.2} % (95 %)",
                m.mean, u
            )
        });
        if m.mean.abs() > self.systematic_u95_pct {
            a.push(format!(
                "the mean deviation exceeds the rating's own stated systematic uncertainty (±{:.2} %): revisit the survey and the structure's condition",
                self.systematic_u95_pct
            ));
        }
        for (what, line, unit) in [
            ("head", &self.trend_head, "% per m"),
            ("time", &self.trend_time, "% per year"),
        ] {
            if let Some(l) = line {
                let ub = COVERAGE_FACTOR * l.u_b_scaled();
                if l.b.abs() > ub {
                    a.push(format!(
                        "the deviation changes with {what}: {:+.3} {unit} ± {:.3} (95 %){}",
                        l.b,
                        ub,
                        if what == "time" {
                            " — the structure may be silting, wearing or moving, or the gauge drifting"
                        } else {
                            " — a zero error or a changed control shape shows this way"
                        }
                    ));
                }
            }
        }
        if !self.outliers.is_empty() {
            a.push(format!(
                "outlier(s) more than {OUTLIER_LIMIT} standard uncertainties from the mean, lines {}: check those gaugings",
                self.outliers.iter().map(|l| l.to_string()).collect::<Vec<_>>().join(", ")
            ));
        }
        a.extend(self.fit_advice());
        a
    }

    fn fit_advice(&self) -> Vec<String> {
        match &self.fit {
            FitOutcome::Both(fit) => {
                let (uf, uz) = fit.u_scaled();
                let (f_real, z_real) = (
                    (fit.factor - 1.0).abs() > COVERAGE_FACTOR * uf,
                    fit.zero_m.abs() > COVERAGE_FACTOR * uz,
                );
                let zero = format!(
                    "the gaugings point to the gauge zero reading {:.1} mm {} (dz = {:+.1} ± {:.1} mm, 95 %)",
                    fit.zero_m.abs() * 1000.0,
                    if fit.zero_m > 0.0 { "low" } else { "high" },
                    fit.zero_m * 1000.0,
                    COVERAGE_FACTOR * uz * 1000.0
                );
                let coefficient = format!(
                    "the coefficient is {:+.2} % ± {:.2} % from theory (f = {:.4})",
                    (fit.factor - 1.0) * 100.0,
                    COVERAGE_FACTOR * uf * 100.0,
                    fit.factor
                );
                vec![match (f_real, z_real) {
                    (false, false) => format!("neither the coefficient nor the gauge zero departs significantly ({coefficient}; dz = {:+.1} ± {:.1} mm): no calibration is needed", fit.zero_m * 1000.0, COVERAGE_FACTOR * uz * 1000.0),
                    (false, true) => format!("{zero}; the coefficient agrees with theory"),
                    (true, false) => format!("{coefficient}; the gauge zero agrees (dz = {:+.1} ± {:.1} mm)", fit.zero_m * 1000.0, COVERAGE_FACTOR * uz * 1000.0),
                    (true, true) => format!("{zero}, and {coefficient}"),
                }]
            }
            FitOutcome::FactorOnly { factor, u, reason, .. } => vec![
                reason.clone(),
                format!(
                    "with the zero taken as right, the factor is {factor:.4} ± {:.4} (95 %)",
                    COVERAGE_FACTOR * u
                ),
            ],
            FitOutcome::Nothing(reason) => vec![reason.clone()],
        }
    }
}
