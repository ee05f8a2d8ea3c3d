//! `rate --breakpoints N | --max-error PCT | --segments N`: the short head→discharge table a
//! logger or plant control system can hold, or a piecewise power-law equation, as text, CSV or
//! JSON, each with its stated largest error.

use std::fmt::Write as _;

use serde_json::json;

use super::{sig, CAUTIONS};
use crate::rating::breakpoints::{breakpoints_within, fewest_error, interpolation_error, segment_bounds, Breakpoint};
use crate::rating::{RatingEquation, RatingError, RatingModel};
use crate::units::Units;

/// Heads per segment at which a short table's stated error is checked after it is built.
pub const VERIFY_POINTS: usize = 2000;

/// A short table with its stated error.
#[derive(Debug, Clone)]
pub struct ShortTable {
    /// The breakpoints (m, m³/s).
    pub points: Vec<Breakpoint>,
    /// The largest relative error of linear interpolation between them, checked at
    /// [`VERIFY_POINTS`] heads per segment and raised by 0.1 % of itself.
    pub max_error: f64,
    /// What was asked, in words.
    pub asked: String,
}

impl ShortTable {
    /// The fewest breakpoints within `max_error_pct` % (`Some`), or the best `count` (`None`).
    pub fn build(
        model: &RatingModel,
        lo_m: f64,
        hi_m: f64,
        max_error_pct: Option<f64>,
        count: usize,
    ) -> Result<Self, RatingError> {
        let (points, asked) = match max_error_pct {
            Some(pct) => (
                breakpoints_within(model, lo_m, hi_m, pct / 100.0)?,
                format!("the fewest breakpoints within {pct} %"),
            ),
            None => (
                fewest_error(model, lo_m, hi_m, count)?.1,
                format!("the smallest error with {count} breakpoints"),
            ),
        };
        let mut max_error = 0.0f64;
        for w in points.windows(2) {
            max_error = max_error.max(interpolation_error(model, w[0], w[1], VERIFY_POINTS)?);
        }
        // the stated error is an upper bound: the largest found at the checked heads, plus 0.1 %
        // of itself for the heads between them (the error is smooth, flat at its peak)
        let max_error = max_error * 1.001;
        Ok(Self {
            points,
            max_error,
            asked,
        })
    }

    /// Text, CSV or JSON in `units`.
    pub fn render(&self, name: &str, units: Units, format: &str) -> Vec<u8> {
        let (lu, qu) = units.symbols();
        let rows = self
            .points
            .iter()
            .map(|&(h, q)| (units.length_from_si(h), units.discharge_from_si(q)));
        match format {
            "csv" => {
                let mut t = format!(
                    "head_{},discharge_{}\n",
                    units.length_suffix(),
                    units.discharge_suffix()
                );
                for (h, q) in rows {
                    let _ = writeln!(t, "{h},{q}");
                }
                t.into_bytes()
            }
            "json" => {
                let doc = json!({
                    "station": name,
                    "asked": self.asked,
                    "max_relative_error_pct": 100.0 * self.max_error,
                    "interpolation": "linear in head between breakpoints",
                    "breakpoints": rows.map(|(h, q)| json!([h, q])).collect::<Vec<_>>(),
                    "units": { "head": lu, "discharge": qu },
                    "cautions": CAUTIONS,
                });
                let mut b = serde_json::to_vec_pretty(&doc).expect("JSON values serialise");
                b.push(b'\n');
                b
            }
            _ => {
                let mut t = format!("flumerate short table: {name}\n{}: {} breakpoints; linear interpolation between them is within {} % of the rating (checked at {VERIFY_POINTS} heads per segment)\n\n", self.asked, self.points.len(), sig(100.0 * self.max_error, 3));
                let _ = writeln!(t, "{:>12} {:>14}", format!("h1 {lu}"), format!("Q {qu}"));
                for (h, q) in rows {
                    let _ = writeln!(t, "{:>12} {:>14}", sig(h, 6), sig(q, 6));
                }
                t.push('\n');
                t.push_str(CAUTIONS);
                t.push('\n');
                t.into_bytes()
            }
        }
    }
}

/// A piecewise power-law equation: `n` segments of equal head ratio, each fitted and stated with
/// its largest deviation (with its coefficients as printed), as text.
pub fn segments_text(model: &RatingModel, name: &str, lo_m: f64, hi_m: f64, n: usize, units: Units) -> Vec<u8> {
    let (lu, _) = units.symbols();
    let bounds = segment_bounds(lo_m, hi_m, n);
    let mut t = format!("flumerate piecewise rating equation: {name}\n{} segments of equal head ratio, each Q = K·(h1 + h0)^u fitted to the computed rating over its heads\n\n", bounds.len() - 1);
    for w in bounds.windows(2) {
        let (a, b) = (w[0], w[1]);
        let line = match RatingEquation::for_range(model, a, b) {
            Some(eq) => {
                let p = eq.printed(units);
                format!("{}; largest deviation {}", p.formula(units), p.deviation_text())
            }
            None => "no equation: fewer than the rows needed lie within the limits here".to_string(),
        };
        let _ = writeln!(
            t,
            "h1 {} to {} {lu}: {line}",
            sig(units.length_from_si(a), 4),
            sig(units.length_from_si(b), 4)
        );
    }
    t.push('\n');
    t.push_str(CAUTIONS);
    t.push('\n');
    t.into_bytes()
}
