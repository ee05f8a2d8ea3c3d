//! First-order (GUM) propagation through the whole rating model.
//!
//! u_c(Q)² = Σ (∂Q/∂x_i · u(x_i))² for independent inputs (JCGM 100:2008 eq. 10), with the
//! sensitivity coefficients ∂Q/∂x_i taken by central differences of the actual rating (the energy
//! balance with its approach-velocity coefficient and the boundary layer), not from the exponent
//! of a power law. The reason is docs/references.md C4: where Cv is solved from the approach
//! velocity, Q responds to Cd and to the width with a sensitivity above 1, and to the head with
//! one above 1.5. The expanded uncertainty uses k = 2 (about 95 %, JCGM 100 §6.3).

use super::inputs::Inputs;
use crate::rating::{Perturbation, RatingError, RatingModel};

/// Relative step of the central differences. With Q computed to about 1e-15 relative, a step of
/// 1e-6 keeps round-off near 1e-9 and the truncation error (∝ step²) near 1e-12.
const STEP: f64 = 1e-6;

/// The coverage factor of the expanded uncertainties flumerate reports (JCGM 100 §6.3: k = 2
/// gives about 95 % for a normal output).
pub const COVERAGE_FACTOR: f64 = 2.0;

/// The GUM result at one head.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct GumPoint {
    /// Discharge (m³/s).
    pub discharge_m3s: f64,
    /// ∂Q/∂f_Cd (m³/s per unit factor on Cd).
    pub dq_dcoefficient: f64,
    /// ∂Q/∂f_b (m³/s per unit factor on the width).
    pub dq_ddimension: f64,
    /// ∂Q/∂h (m²/s).
    pub dq_dhead: f64,
    /// Relative standard uncertainty u_c(Q)/Q of one reading, all inputs.
    pub u_rel: f64,
    /// Each input's share of the variance, in [`super::INPUT_NAMES`] order; they sum to 1.
    pub shares: [f64; 4],
}

impl GumPoint {
    /// Relative sensitivity to the discharge coefficient, (∂Q/∂Cd)·(Cd/Q).
    pub fn sensitivity_coefficient(&self) -> f64 {
        self.dq_dcoefficient / self.discharge_m3s
    }

    /// Relative sensitivity to the control width, (∂Q/∂b)·(b/Q).
    pub fn sensitivity_dimension(&self) -> f64 {
        self.dq_ddimension / self.discharge_m3s
    }

    /// Relative sensitivity to the head, (∂Q/∂h)·(h/Q).
    pub fn sensitivity_head(&self, head_m: f64) -> f64 {
        self.dq_dhead * head_m / self.discharge_m3s
    }

    /// Expanded (k = 2) relative uncertainty of one reading, in per cent.
    pub fn u95_pct(&self) -> f64 {
        COVERAGE_FACTOR * self.u_rel * 100.0
    }
}

/// A rating model prepared for GUM propagation: the base model and the four perturbed ones.
#[derive(Debug, Clone)]
pub struct GumModel {
    base: RatingModel,
    coefficient: [RatingModel; 2],
    dimension: [RatingModel; 2],
    inputs: Inputs,
}

impl GumModel {
    /// Builds the perturbed models once, so each head costs five rating solves.
    pub fn new(model: &RatingModel, inputs: Inputs) -> Result<Self, RatingError> {
        let p = |cd: f64, b: f64| {
            model.perturbed(&Perturbation {
                cd_factor: cd,
                width_factor: b,
            })
        };
        Ok(Self {
            base: model.clone(),
            coefficient: [p(1.0 - STEP, 1.0)?, p(1.0 + STEP, 1.0)?],
            dimension: [p(1.0, 1.0 - STEP)?, p(1.0, 1.0 + STEP)?],
            inputs,
        })
    }

    /// The inputs.
    pub fn inputs(&self) -> &Inputs {
        &self.inputs
    }

    /// The unperturbed model.
    pub fn model(&self) -> &RatingModel {
        &self.base
    }

    /// Sensitivities and combined uncertainty at one gauged head (m).
    pub fn point(&self, head_m: f64) -> Result<GumPoint, RatingError> {
        let q = self.base.discharge_m3s(head_m)?;
        self.point_with_discharge(head_m, q)
    }

    /// [`Self::point`] where the model's discharge `q` at `head_m` is already known (the same
    /// value [`RatingModel::discharge_m3s`] gives): one solve fewer.
    pub fn point_with_discharge(&self, head_m: f64, q: f64) -> Result<GumPoint, RatingError> {
        let central = |m: &[RatingModel; 2]| -> Result<f64, RatingError> {
            Ok((m[1].discharge_m3s(head_m)? - m[0].discharge_m3s(head_m)?) / (2.0 * STEP))
        };
        let dq_dcoefficient = central(&self.coefficient)?;
        let dq_ddimension = central(&self.dimension)?;
        let dh = STEP * head_m;
        let dq_dhead = (self.base.discharge_m3s(head_m + dh)? - self.base.discharge_m3s(head_m - dh)?) / (2.0 * dh);
        Ok(self.combine(q, dq_dcoefficient, dq_ddimension, dq_dhead))
    }

    /// Combines sensitivities (from [`GumModel::point`] or interpolated from a table) with the
    /// inputs into a [`GumPoint`].
    pub fn combine(&self, q: f64, dq_dcoefficient: f64, dq_ddimension: f64, dq_dhead: f64) -> GumPoint {
        let i = &self.inputs;
        let parts = [
            (dq_dcoefficient * i.coefficient.standard).powi(2),
            (dq_ddimension * i.dimension.standard).powi(2),
            (dq_dhead * i.zero.standard).powi(2),
            (dq_dhead * i.reading.standard).powi(2),
        ];
        let total: f64 = parts.iter().sum();
        let shares = if total > 0.0 {
            parts.map(|p| p / total)
        } else {
            [0.0; 4]
        };
        GumPoint {
            discharge_m3s: q,
            dq_dcoefficient,
            dq_ddimension,
            dq_dhead,
            u_rel: if q > 0.0 { total.sqrt() / q } else { f64::NAN },
            shares,
        }
    }
}
