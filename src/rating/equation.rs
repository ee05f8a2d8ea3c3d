//! The station's rating equation: one fit, over one set of rows, printed the same everywhere.
//!
//! Every output that shows a rating equation (`rate` in every format, the field sheet, `check`,
//! the conversion's provenance) shows this one: Q = K·(h + h0)^u fitted by [`fit_power_law`] to
//! the valid rows among [`EQUATION_ROWS`] heads spread evenly over the station's `[range]`,
//! whatever table the user asked for. It is printed with K and u to five significant figures and
//! h0 to four, and its stated largest deviation is computed with those printed, rounded
//! coefficients, in the output's units, so a reader who types the equation in gets what the
//! output says.

use super::fit::{fit_power_law, PowerLaw};
use super::limits::broken_limits;
use super::model::RatingModel;
use crate::units::Units;

/// Heads over the station's range to which the equation is fitted.
pub const EQUATION_ROWS: usize = 101;

/// With fewer valid rows than this the equation is printed with a warning.
pub const FEW_ROWS: usize = 5;

/// The fitted equation and the rows it was fitted to (SI).
#[derive(Debug, Clone, PartialEq)]
pub struct RatingEquation {
    /// The fit in SI units.
    pub fit: PowerLaw,
    /// The (head m, discharge m³/s) rows fitted: the valid ones among [`EQUATION_ROWS`].
    pub rows: Vec<(f64, f64)>,
}

/// The equation as printed in one unit system: rounded coefficients and the deviation they give.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PrintedEquation {
    /// K as printed (output units).
    pub k: f64,
    /// h0 as printed (output length unit).
    pub h0: f64,
    /// u as printed.
    pub u: f64,
    /// Largest |Q_printed − Q|/Q over the rows fitted.
    pub max_relative_deviation: f64,
    /// Rows fitted.
    pub rows: usize,
    /// Significant figures of K and u.
    sig_ku: usize,
    /// Significant figures of h0.
    sig_h0: usize,
}

/// `v` rounded to `n` significant figures, as the printed text reads.
fn round_sig(v: f64, n: usize) -> f64 {
    if v == 0.0 || !v.is_finite() {
        return v;
    }
    crate::report::sig(v, n).parse().unwrap_or(v)
}

impl RatingEquation {
    /// Fits the equation over the station's range `[min_head_m, max_head_m]`; `None` when fewer
    /// than three rows there are valid.
    pub fn for_range(model: &RatingModel, min_head_m: f64, max_head_m: f64) -> Option<Self> {
        let rows: Vec<(f64, f64)> = (0..EQUATION_ROWS)
            .filter_map(|k| {
                let h = min_head_m + (max_head_m - min_head_m) * k as f64 / (EQUATION_ROWS - 1) as f64;
                let p = model.point(h).ok()?;
                broken_limits(model.structure(), &p)
                    .is_empty()
                    .then_some((h, p.discharge_m3s))
            })
            .collect();
        let fit = fit_power_law(&rows)?;
        Some(Self { fit, rows })
    }

    /// The equation in `units`, with coefficients rounded as printed and the deviation they give.
    pub fn printed(&self, units: Units) -> PrintedEquation {
        let (sig_ku, sig_h0) = (5, 4);
        // Q_u = Kq·K·(h_u·Lm + h0)^u with Lm = metres per unit: K_u = Kq·K·Lm^u
        let lm = units.length_to_si(1.0);
        let k = round_sig(units.discharge_from_si(self.fit.k) * lm.powf(self.fit.u), sig_ku);
        // an offset below a ten-thousandth of a millimetre (or foot) is printed as none; the
        // deviation below is computed with it so
        let h0 = round_sig(units.length_from_si(self.fit.h0_m), sig_h0);
        let h0 = if h0.abs() < 1e-7 { 0.0 } else { h0 };
        let u = round_sig(self.fit.u, sig_ku);
        let max_relative_deviation = self
            .rows
            .iter()
            .map(|&(h, q)| {
                let x = units.length_from_si(h) + h0;
                let q_eq = if x > 0.0 { k * x.powf(u) } else { 0.0 };
                let q_u = units.discharge_from_si(q);
                ((q_eq - q_u) / q_u).abs()
            })
            .fold(0.0, f64::max);
        PrintedEquation {
            k,
            h0,
            u,
            max_relative_deviation,
            rows: self.rows.len(),
            sig_ku,
            sig_h0,
        }
    }
}

impl PrintedEquation {
    /// `Q = K·(h1 ± h0)^u (Q in …, h1 in …)`.
    pub fn formula(&self, units: Units) -> String {
        let (lu, qu) = units.symbols();
        format!(
            "Q = {} × (h1 {} {})^{} (Q in {qu}, h1 in {lu})",
            crate::report::sig(self.k, self.sig_ku),
            if self.h0 < 0.0 { "−" } else { "+" },
            crate::report::sig(self.h0.abs(), self.sig_h0),
            crate::report::sig(self.u, self.sig_ku)
        )
    }

    /// The largest deviation as people write it: two significant figures, "below 0.01 %" for
    /// less.
    pub fn deviation_text(&self) -> String {
        let pct = self.max_relative_deviation * 100.0;
        if pct < 0.01 {
            "below 0.01 %".into()
        } else {
            format!("{} %", crate::report::sig(pct, 2))
        }
    }

    /// Whether the equation rests on fewer than [`FEW_ROWS`] rows.
    pub fn rests_on_few_rows(&self) -> bool {
        self.rows < FEW_ROWS
    }

    /// The whole statement: formula, rows, deviation and any warning.
    pub fn sentence(&self, units: Units) -> String {
        let mut s = format!(
            "{}, fitted to the {} valid rows of {EQUATION_ROWS} heads spread over the station's range; with the coefficients as printed it is within {} of the computed rating there",
            self.formula(units),
            self.rows,
            self.deviation_text()
        );
        if self.rests_on_few_rows() {
            s.push_str(&format!(
                ". WARNING: it rests on only {} valid rows; read the table, not the equation",
                self.rows
            ));
        }
        s
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn rounding_follows_the_printed_text() {
        assert!((round_sig(1.234567, 5) - 1.2346).abs() < 1e-12);
        assert!((round_sig(0.00123456, 4) - 0.001235).abs() < 1e-15);
        assert!((round_sig(-0.0123456, 4) + 0.01235).abs() < 1e-15);
    }
}
