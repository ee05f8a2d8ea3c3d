//! Modular limit and tailwater check: up to which discharge does the structure keep measuring?
//!
//! A critical-depth control is modular while the energy available between the control and the
//! tailwater covers the losses there (Bos & Reinink 1981, "Required head loss over long-throated
//! flumes", J. Irrig. Drain. Div. ASCE 107(IR1); Clemmens et al. 2001 ch. 6; docs/references.md S5, S6):
//!
//! ```text
//! H1 − H2 ≥ ΔH_f + ξ·(v_j − v_2)²/(2g)
//! ```
//!
//! with H1 and H2 the upstream and tailwater energy heads above the crest, ΔH_f the friction loss
//! along the throat downstream of the control, v_j the mean velocity leaving the throat (taken as
//! the velocity at the control, as in Bos & Reinink 1981 (from memory)), v_2 the tailwater velocity and ξ the
//! expansion-loss coefficient of the exit. The largest H2 that satisfies it, divided by H1, is the
//! modular limit ML. The tailwater level comes from a channel in uniform flow (Manning) or from a
//! table; nothing is extrapolated.

use crate::hydraulics::{alternate_depths_m, critical_depths_m, normal_depth_m, specific_energy_m, Section};
use crate::rating::{RatingError, RatingModel, RatingPoint};
use crate::station::{ExitSpec, TailwaterSpec};

/// Kinematic viscosity of water at 20 °C (m²/s), for the throat's Reynolds number (IAPWS
/// values, 1.0016e-6 at 20 °C; rounded).
pub const WATER_KINEMATIC_VISCOSITY_M2_S: f64 = 1.0e-6;

/// The part of the throat downstream of the control, as a fraction of its length: the control is
/// taken at one third of the throat length from its downstream end (Clemmens et al. 2001,
/// from memory).
pub const THROAT_BEYOND_CONTROL: f64 = 1.0 / 3.0;

/// Submergence above which drowned-flow corrections are impractical (USBR Water Measurement Manual, 3rd ed. 2001,
/// ch. 8 on Parshall flumes: about 0.90).
pub const MAX_CORRECTABLE_SUBMERGENCE: f64 = 0.90;

/// What went wrong in the tailwater check.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum TailwaterError {
    /// The table does not cover a discharge the rating produces.
    #[error(
        "the tailwater table covers {low_m3s} to {high_m3s} m³/s, but the rating needs {discharge_m3s} m³/s: nothing is extrapolated; extend [tailwater] table to cover the rating's discharges"
    )]
    OutsideTable {
        /// The discharge asked for (m³/s).
        discharge_m3s: f64,
        /// Lowest tabulated discharge (m³/s).
        low_m3s: f64,
        /// Highest tabulated discharge (m³/s).
        high_m3s: f64,
    },
    /// The tailwater channel has no normal depth for this discharge.
    #[error("tailwater channel at {discharge_m3s} m³/s: {reason}")]
    Channel {
        /// The discharge (m³/s).
        discharge_m3s: f64,
        /// Why.
        reason: String,
    },
    /// The rating failed.
    #[error(transparent)]
    Rating(#[from] RatingError),
}

/// Expansion-loss coefficient ξ of an exit diverging at 1:N (N = 0: abrupt), interpolated linearly
/// in N between recalled values of Bos & Reinink 1981 (from memory; range recalled as
/// "about 1.0–1.2 abrupt, 0.6–0.7 at 1:4, 0.4–0.6 at 1:6 to 1:10"). Up to 1:6 the upper value
/// of each range is used, so the modular limit errs low (on the safe side); at 1:10 and flatter
/// the middle of the recalled range, 0.5, since the recollection does not place 1:10 within it.
pub fn expansion_loss_coefficient(expansion: f64) -> f64 {
    const TABLE: [(f64, f64); 4] = [(0.0, 1.2), (4.0, 0.7), (6.0, 0.6), (10.0, 0.5)];
    if expansion <= TABLE[0].0 {
        return TABLE[0].1;
    }
    for w in TABLE.windows(2) {
        let ((n0, x0), (n1, x1)) = (w[0], w[1]);
        if expansion <= n1 {
            return x0 + (x1 - x0) * (expansion - n0) / (n1 - n0);
        }
    }
    TABLE[TABLE.len() - 1].1
}

/// Friction loss (m) along the throat downstream of the control:
/// ΔH_f = C_F·(L_r/R)·v²/(2g) with L_r = L/3 and C_F = 0.074·Re^(−1/5), Re = v·L_r/ν, the mean
/// skin-friction coefficient of a smooth turbulent flat plate (Prandtl's one-seventh-power law,
/// Schlichting, *Boundary-Layer Theory*; from memory), in the flat-plate form (docs/references.md S10).
pub fn throat_friction_loss_m(control: &Section, length_m: f64, point: &RatingPoint, g: f64) -> f64 {
    let y = point.critical_depth_m;
    let area = control.area_m2(y);
    let radius = control.hydraulic_radius_m(y);
    if area <= 0.0 || radius <= 0.0 {
        return 0.0;
    }
    let v = point.discharge_m3s / area;
    let lr = length_m * THROAT_BEYOND_CONTROL;
    let re = (v * lr / WATER_KINEMATIC_VISCOSITY_M2_S).max(1.0);
    let cf = 0.074 * re.powf(-0.2);
    cf * (lr / radius) * v * v / (2.0 * g)
}

/// The tailwater as flumerate uses it: a level above the crest and a velocity for each discharge.
#[derive(Debug, Clone, PartialEq)]
pub struct Tailwater {
    spec: TailwaterSpec,
    gravity_m_s2: f64,
}

impl Tailwater {
    /// Wraps a station's `[tailwater]`.
    pub fn new(spec: TailwaterSpec, gravity_m_s2: f64) -> Self {
        Self { spec, gravity_m_s2 }
    }

    /// The same tailwater with the crest raised by `raise_m` (levels above the crest drop by it).
    pub fn with_crest_raised(&self, raise_m: f64) -> Self {
        let spec = match &self.spec {
            TailwaterSpec::Channel {
                bed_below_crest_m,
                section,
                manning_n,
                bed_slope,
            } => TailwaterSpec::Channel {
                bed_below_crest_m: bed_below_crest_m + raise_m,
                section: section.clone(),
                manning_n: *manning_n,
                bed_slope: *bed_slope,
            },
            TailwaterSpec::Table(rows) => TailwaterSpec::Table(rows.iter().map(|&(q, l)| (q, l - raise_m)).collect()),
        };
        Self {
            spec,
            gravity_m_s2: self.gravity_m_s2,
        }
    }

    /// Tailwater level above the crest (m) at `q` m³/s: Manning normal depth in the channel, or the
    /// table interpolated linearly (monotone, since the table is).
    pub fn level_m(&self, q: f64) -> Result<f64, TailwaterError> {
        match &self.spec {
            TailwaterSpec::Channel {
                bed_below_crest_m,
                section,
                manning_n,
                bed_slope,
            } => {
                if q <= 0.0 {
                    return Ok(-bed_below_crest_m);
                }
                let y = normal_depth_m(section, q, *manning_n, *bed_slope).map_err(|e| TailwaterError::Channel {
                    discharge_m3s: q,
                    reason: e.to_string(),
                })?;
                Ok(y - bed_below_crest_m)
            }
            TailwaterSpec::Table(rows) => {
                let (lo, hi) = (rows[0], rows[rows.len() - 1]);
                // a relative tolerance lets the ends of the range match the table's ends
                let tol = 1e-9 * hi.0.abs().max(1e-12);
                if q < lo.0 - tol || q > hi.0 + tol {
                    return Err(TailwaterError::OutsideTable {
                        discharge_m3s: q,
                        low_m3s: lo.0,
                        high_m3s: hi.0,
                    });
                }
                let q = q.clamp(lo.0, hi.0);
                let i = rows.partition_point(|r| r.0 <= q).clamp(1, rows.len() - 1);
                let ((q0, l0), (q1, l1)) = (rows[i - 1], rows[i]);
                Ok(l0 + (l1 - l0) * (q - q0) / (q1 - q0))
            }
        }
    }

    /// Mean tailwater velocity (m/s) at discharge `q` and level `level_m` above the crest; zero
    /// for a table, which gives no cross-section (its velocity head is then neglected).
    pub fn velocity_m_s(&self, q: f64, level_m: f64) -> f64 {
        match &self.spec {
            TailwaterSpec::Channel {
                bed_below_crest_m,
                section,
                ..
            } => {
                let a = section.area_m2(level_m + bed_below_crest_m);
                if a > 0.0 {
                    q / a
                } else {
                    0.0
                }
            }
            TailwaterSpec::Table(_) => 0.0,
        }
    }

    /// Tailwater energy head above the crest (m) at discharge `q`.
    pub fn energy_head_m(&self, q: f64) -> Result<f64, TailwaterError> {
        let level = self.level_m(q)?;
        let v = self.velocity_m_s(q, level);
        Ok(level + v * v / (2.0 * self.gravity_m_s2))
    }

    /// The tailwater level above the crest (m) whose energy head is `energy_m`, on the subcritical
    /// branch (the level a rising tailwater reaches); `None` when no subcritical tailwater flow has
    /// so little energy (the structure cannot drown below it).
    pub fn level_for_energy_m(&self, q: f64, energy_m: f64) -> Option<f64> {
        match &self.spec {
            TailwaterSpec::Channel {
                bed_below_crest_m,
                section,
                ..
            } => {
                let e = energy_m + bed_below_crest_m;
                if q <= 0.0 {
                    return Some(energy_m);
                }
                alternate_depths_m(section, e, q, 1.0, self.gravity_m_s2)
                    .ok()
                    .map(|d| d.subcritical_m - bed_below_crest_m)
            }
            TailwaterSpec::Table(_) => Some(energy_m),
        }
    }

    /// The smallest tailwater energy head above the crest (m) a subcritical tailwater flow of `q`
    /// can have: the critical energy of the channel (minus infinity for a table).
    fn min_energy_m(&self, q: f64) -> f64 {
        match &self.spec {
            TailwaterSpec::Channel {
                bed_below_crest_m,
                section,
                ..
            } if q > 0.0 => critical_depths_m(section, q, 1.0, self.gravity_m_s2)
                .ok()
                .and_then(|d| d.last().copied())
                .map_or(f64::NEG_INFINITY, |yc| {
                    specific_energy_m(section, yc, q, 1.0, self.gravity_m_s2) - bed_below_crest_m
                }),
            _ => f64::NEG_INFINITY,
        }
    }

    /// Discharge range a table covers, if this is a table.
    pub fn table_range(&self) -> Option<(f64, f64)> {
        match &self.spec {
            TailwaterSpec::Table(rows) => Some((rows[0].0, rows[rows.len() - 1].0)),
            TailwaterSpec::Channel { .. } => None,
        }
    }
}

/// The largest tailwater energy head above the crest, H2 (m), at which the control stays critical:
/// the root of H1 − H2 − ΔH_f − ξ·(v_j − v_2(H2))²/(2g) = 0, where v_2(H2) is the subcritical
/// tailwater velocity at energy H2 (zero without a tailwater section). The residual falls
/// monotonically with H2, so bisection finds the one root.
pub fn max_tailwater_energy_m(
    h1_energy_m: f64,
    v_j: f64,
    xi: f64,
    friction_m: f64,
    q: f64,
    tailwater: Option<&Tailwater>,
    g: f64,
) -> f64 {
    let v2 = |h2: f64| -> f64 {
        match tailwater {
            Some(t) => t.level_for_energy_m(q, h2).map_or(0.0, |l| t.velocity_m_s(q, l)),
            None => 0.0,
        }
    };
    let f = |h2: f64| h1_energy_m - h2 - friction_m - xi * (v_j - v2(h2)).powi(2) / (2.0 * g);
    let lo = tailwater
        .map_or(f64::NEG_INFINITY, |t| t.min_energy_m(q))
        .max(-h1_energy_m);
    let mut lo = if lo.is_finite() { lo } else { -h1_energy_m };
    let mut hi = h1_energy_m;
    if f(lo) <= 0.0 {
        // even the least energetic subcritical tailwater drowns the control
        return lo;
    }
    for _ in 0..200 {
        let mid = 0.5 * (lo + hi);
        if f(mid) > 0.0 {
            lo = mid;
        } else {
            hi = mid;
        }
        if hi - lo <= 1e-15 * h1_energy_m {
            break;
        }
    }
    0.5 * (lo + hi)
}

/// Villemonte's (1947) submerged-weir relation, Q_s/Q_free = [1 − S^n]^0.385 with S = H2/H1 and
/// n the free-flow exponent (Villemonte, J. R. 1947, "Submerged-weir discharge studies",
/// *Engineering News-Record* 139; docs/references.md S7).
pub fn villemonte_ratio(submergence: f64, exponent: f64) -> f64 {
    (1.0 - submergence.clamp(0.0, 1.0).powf(exponent)).powf(0.385)
}

/// One row of a tailwater check.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TailwaterRow {
    /// Discharge (m³/s).
    pub discharge_m3s: f64,
    /// Gauged head above the crest (m).
    pub head_m: f64,
    /// Upstream energy head above the crest (m).
    pub energy_head_m: f64,
    /// Tailwater level above the crest (m; negative below it).
    pub tailwater_m: f64,
    /// Tailwater energy head above the crest (m).
    pub tailwater_energy_m: f64,
    /// Submergence H2/H1 (0 when the tailwater energy is below the crest).
    pub submergence: f64,
    /// Modular limit H2/H1 at this discharge.
    pub modular_limit: f64,
    /// Largest tailwater level above the crest (m) for modular flow.
    pub max_tailwater_m: f64,
    /// True when the submergence does not exceed the modular limit.
    pub modular: bool,
}

/// The exit as the check uses it: loss coefficient and an optional fixed modular limit.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Exit {
    /// Expansion-loss coefficient ξ.
    pub loss_coefficient: f64,
    /// A modular limit given in the station file, used instead of the energy balance.
    pub fixed_modular_limit: Option<f64>,
}

impl From<&ExitSpec> for Exit {
    fn from(e: &ExitSpec) -> Self {
        Self {
            loss_coefficient: expansion_loss_coefficient(e.expansion),
            fixed_modular_limit: e.modular_limit,
        }
    }
}

/// Modular limit, largest modular tailwater energy and level at one rating point.
pub fn modular_limit_at(
    model: &RatingModel,
    exit: &Exit,
    tailwater: Option<&Tailwater>,
    p: &RatingPoint,
) -> (f64, f64, f64) {
    let s = model.structure();
    let g = s.gravity_m_s2;
    // a standard structure has its standard's modular limit unless the station gives one
    let standard = s.standard().map(|rule| rule.modular_limit().0);
    let h2_max = match exit.fixed_modular_limit.or(standard) {
        Some(ml) => ml * p.energy_head_m,
        None => {
            let area = s.control.area_m2(p.critical_depth_m);
            let v_j = if area > 0.0 { p.discharge_m3s / area } else { 0.0 };
            let friction = throat_friction_loss_m(&s.control, s.control_length_m, p, g);
            max_tailwater_energy_m(
                p.energy_head_m,
                v_j,
                exit.loss_coefficient,
                friction,
                p.discharge_m3s,
                tailwater,
                g,
            )
        }
    };
    let level = if standard == Some(0.0) && exit.fixed_modular_limit.is_none() {
        // a thin-plate weir: the tailwater level itself must stay below the crest
        0.0
    } else {
        tailwater
            .and_then(|t| t.level_for_energy_m(p.discharge_m3s, h2_max))
            .unwrap_or(h2_max)
    };
    (h2_max / p.energy_head_m, h2_max, level)
}

/// Checks one rating point against the tailwater.
pub fn check_point(
    model: &RatingModel,
    exit: &Exit,
    tailwater: &Tailwater,
    p: &RatingPoint,
) -> Result<TailwaterRow, TailwaterError> {
    let q = p.discharge_m3s;
    let level = tailwater.level_m(q)?;
    let energy = tailwater.energy_head_m(q)?;
    let (ml, _, max_level) = modular_limit_at(model, exit, Some(tailwater), p);
    let submergence = (energy / p.energy_head_m).max(0.0);
    Ok(TailwaterRow {
        discharge_m3s: q,
        head_m: p.head_m,
        energy_head_m: p.energy_head_m,
        tailwater_m: level,
        tailwater_energy_m: energy,
        submergence,
        modular_limit: ml,
        max_tailwater_m: max_level,
        modular: submergence <= ml,
    })
}

/// Gauged head (m) at which the model passes `q` (the rating inverted by bisection).
pub fn head_for_discharge_m(model: &RatingModel, q: f64, upper_hint_m: f64) -> Result<f64, RatingError> {
    let mut hi = upper_hint_m.max(1e-3);
    while model.discharge_m3s(hi)? < q {
        hi *= 1.5;
        if hi > 1e3 {
            return Err(RatingError::HeadNotPositive { head_m: hi });
        }
    }
    let mut lo = 0.0;
    for _ in 0..200 {
        let mid = 0.5 * (lo + hi);
        if mid <= 0.0 || model.discharge_m3s(mid)? < q {
            lo = mid;
        } else {
            hi = mid;
        }
        if hi - lo <= 1e-14 * hi {
            break;
        }
    }
    Ok(0.5 * (lo + hi))
}

/// Heads on which drowning is looked for between the ends of the range checked, whatever the
/// table's step: the verdict depends on the range, never on `--step`.
pub const SCAN_POINTS: usize = 400;

/// Drowning onsets are found to this head (m): 0.1 mm.
pub const ONSET_TOLERANCE_M: f64 = 1e-4;

/// How far the tailwater drowns the control at head `h`: submergence minus modular limit
/// (> 0 drowned), with the rating point, or `None` where the model or the tailwater has no value.
fn excess_at(model: &RatingModel, exit: &Exit, tailwater: &Tailwater, h: f64) -> Option<(f64, TailwaterRow)> {
    let p = model.point(h).ok()?;
    let row = check_point(model, exit, tailwater, &p).ok()?;
    Some((row.submergence - row.modular_limit, row))
}

/// A stretch of the range over which the tailwater drowns the control.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct DrownedBand {
    /// Discharge where drowning starts (m³/s).
    pub from_m3s: f64,
    /// Its gauged head (m).
    pub from_head_m: f64,
    /// Discharge where it ends (m³/s): the top of the range checked when `to_top`.
    pub to_m3s: f64,
    /// Its gauged head (m).
    pub to_head_m: f64,
    /// The band starts at the bottom of the range checked (drowned there already).
    pub from_bottom: bool,
    /// The band reaches the top of the range checked ("upward").
    pub to_top: bool,
}

/// The head (m) between `a` (excess `ea`) and `b` where the excess changes sign, by bisection to
/// [`ONSET_TOLERANCE_M`]. The head returned is the bracket's end on the modular side, so a band
/// bounded by two such heads covers all of the drowned stretch (errs on the safe side by less
/// than the tolerance). Where the model fails inside, the bracket found so far is used.
fn crossing_head(model: &RatingModel, exit: &Exit, tailwater: &Tailwater, a: f64, ea: f64, b: f64) -> f64 {
    let (mut lo, mut hi, drowned_lo) = (a, b, ea > 0.0);
    while hi - lo > ONSET_TOLERANCE_M {
        let mid = 0.5 * (lo + hi);
        match excess_at(model, exit, tailwater, mid) {
            Some((e, _)) if (e > 0.0) == drowned_lo => lo = mid,
            Some(_) => hi = mid,
            None => break,
        }
    }
    if drowned_lo {
        hi
    } else {
        lo
    }
}

/// Every band of heads in `[lo_m, hi_m]` where the tailwater drowns the control: the excess is
/// scanned at [`SCAN_POINTS`] heads and each change of sign is refined by bisection to
/// [`ONSET_TOLERANCE_M`] of head.
pub fn drowned_bands(
    model: &RatingModel,
    exit: &Exit,
    tailwater: &Tailwater,
    lo_m: f64,
    hi_m: f64,
) -> Vec<DrownedBand> {
    let n = SCAN_POINTS;
    let scan: Vec<(f64, Option<(f64, TailwaterRow)>)> = (0..n)
        .map(|k| {
            let h = lo_m + (hi_m - lo_m) * k as f64 / (n - 1) as f64;
            (h, excess_at(model, exit, tailwater, h))
        })
        .collect();
    let q_at = |h: f64| model.discharge_m3s(h).unwrap_or(f64::NAN);
    let mut bands = Vec::new();
    let mut open: Option<(f64, bool)> = None; // (start head, from the bottom)
    let mut last: Option<(f64, f64)> = None; // last head with a value, and its excess
    for (k, (h, v)) in scan.iter().enumerate() {
        let Some((e, _)) = v else { continue };
        let drowned = *e > 0.0;
        match (open, last) {
            (None, None) if drowned => open = Some((*h, true)),
            (None, Some((hp, ep))) if drowned => {
                open = Some((crossing_head(model, exit, tailwater, hp, ep, *h), false));
            }
            (Some((start, bottom)), Some((hp, ep))) if !drowned => {
                let end = crossing_head(model, exit, tailwater, hp, ep, *h);
                bands.push(DrownedBand {
                    from_m3s: q_at(start),
                    from_head_m: start,
                    to_m3s: q_at(end),
                    to_head_m: end,
                    from_bottom: bottom,
                    to_top: false,
                });
                open = None;
            }
            _ => {}
        }
        last = Some((*h, *e));
        if k == n - 1 {
            if let Some((start, bottom)) = open.take() {
                bands.push(DrownedBand {
                    from_m3s: q_at(start),
                    from_head_m: start,
                    to_m3s: q_at(*h),
                    to_head_m: *h,
                    from_bottom: bottom,
                    to_top: true,
                });
            }
        }
    }
    bands
}

/// Whether the discharges from `q_lo` to `q_hi` are all modular with the crest raised by `raise_m`
/// (the approach bed and the tailwater keep their elevations), judged as [`drowned_bands`] does.
fn modular_with_raise(
    model: &RatingModel,
    exit: &Exit,
    tailwater: &Tailwater,
    (q_lo, q_hi): (f64, f64),
    raise_m: f64,
) -> Result<bool, TailwaterError> {
    let mut s = model.structure().clone();
    s.sill_height_m += raise_m;
    let raised = RatingModel::new(s)?;
    let tw = tailwater.with_crest_raised(raise_m);
    let h_lo = head_for_discharge_m(&raised, q_lo, 0.1)?;
    let h_hi = head_for_discharge_m(&raised, q_hi, h_lo)?;
    Ok(drowned_bands(&raised, exit, &tw, h_lo, h_hi).is_empty())
}

/// The smallest crest raise (m, rounded up to the next millimetre) that keeps every discharge
/// from `q_lo` to `q_hi` modular, or `None` when none up to 2 m does.
pub fn required_crest_raise_m(
    model: &RatingModel,
    exit: &Exit,
    tailwater: &Tailwater,
    discharges: (f64, f64),
) -> Result<Option<f64>, TailwaterError> {
    if modular_with_raise(model, exit, tailwater, discharges, 0.0)? {
        return Ok(Some(0.0));
    }
    let (mut lo, mut hi) = (0.0, 0.01);
    while !modular_with_raise(model, exit, tailwater, discharges, hi)? {
        lo = hi;
        hi *= 2.0;
        if hi > 2.0 {
            return Ok(None);
        }
    }
    while hi - lo > 1e-4 {
        let mid = 0.5 * (lo + hi);
        if modular_with_raise(model, exit, tailwater, discharges, mid)? {
            hi = mid;
        } else {
            lo = mid;
        }
    }
    Ok(Some((hi * 1000.0).ceil() / 1000.0))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn loss_coefficient_table_is_monotone_and_interpolates() {
        assert!((expansion_loss_coefficient(0.0) - 1.2).abs() < 1e-12);
        assert!((expansion_loss_coefficient(5.0) - 0.65).abs() < 1e-12);
        assert!((expansion_loss_coefficient(20.0) - 0.5).abs() < 1e-12);
        let mut last = f64::INFINITY;
        for i in 0..=40 {
            let x = expansion_loss_coefficient(i as f64 * 0.5);
            assert!(x <= last);
            last = x;
        }
    }
}

/// A drowned-flow estimate: the free-flow discharge at the gauged head times Villemonte's ratio,
/// with n the exponent of the fitted rating equation. Offered only where that source applies: a
/// weir (Villemonte's relation was derived for weirs with heads referred to the crest), above the
/// modular limit and at submergence up to [`MAX_CORRECTABLE_SUBMERGENCE`]; `None` elsewhere. It
/// is an estimate, to be flagged as such wherever it is used.
pub fn submerged_discharge_estimate_m3s(
    model: &RatingModel,
    free_flow_m3s: f64,
    submergence: f64,
    modular_limit: f64,
    exponent: f64,
) -> Option<f64> {
    submerged_estimate(model, free_flow_m3s, submergence, modular_limit, exponent).ok()
}

/// Why a drowned row gets no estimate.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum NoEstimate {
    /// Not drowned: the submergence does not exceed the modular limit.
    Modular,
    /// The structure is a flume: Villemonte's relation was derived for weirs.
    NotAWeir,
    /// The submergence is above [`MAX_CORRECTABLE_SUBMERGENCE`]: no correction is practical.
    TooDrowned,
}

/// [`submerged_discharge_estimate_m3s`], saying why when there is no estimate.
pub fn submerged_estimate(
    model: &RatingModel,
    free_flow_m3s: f64,
    submergence: f64,
    modular_limit: f64,
    exponent: f64,
) -> Result<f64, NoEstimate> {
    if submergence <= modular_limit {
        Err(NoEstimate::Modular)
    } else if !matches!(
        model.structure().kind,
        crate::rating::StructureKind::Weir | crate::rating::StructureKind::ThinPlateWeir
    ) {
        Err(NoEstimate::NotAWeir)
    } else if submergence > MAX_CORRECTABLE_SUBMERGENCE {
        Err(NoEstimate::TooDrowned)
    } else {
        Ok(free_flow_m3s * villemonte_ratio(submergence, exponent))
    }
}

/// How the check over a range of discharges came out.
#[derive(Debug, Clone, PartialEq)]
pub enum Verdict {
    /// Modular at every head of the range checked.
    Modular,
    /// Drowned over one or more bands of the range.
    Drowns {
        /// The drowned bands, lowest first.
        bands: Vec<DrownedBand>,
        /// Crest raise (m) that would keep every discharge of the range modular, if one up to 2 m
        /// does.
        crest_raise_m: Option<f64>,
    },
}

/// Where a row of the check sits.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum RowKind {
    /// A head of the table asked for.
    Table,
    /// Drowning starts here (a root between table rows).
    DrownsFrom,
    /// Drowning ends here (a root between table rows).
    ModularFrom,
}

/// The tailwater check over a list of heads.
#[derive(Debug, Clone, PartialEq)]
pub struct TailwaterCheck {
    /// One entry per head asked for, in order, with the band edges inserted where they fall:
    /// the row, or why it could not be computed.
    pub rows: Vec<(f64, RowKind, Result<TailwaterRow, String>)>,
    /// The verdict.
    pub verdict: Verdict,
}

impl TailwaterCheck {
    /// The drowned bands (none when modular).
    pub fn bands(&self) -> &[DrownedBand] {
        match &self.verdict {
            Verdict::Modular => &[],
            Verdict::Drowns { bands, .. } => bands,
        }
    }
}

/// Checks the structure against the tailwater over the heads `heads_m` (at least one): the
/// table's rows at those heads, and the verdict from the drowned bands found by root finding
/// between the lowest and highest head ([`drowned_bands`]), whose edges are inserted as rows.
pub fn check(
    model: &RatingModel,
    exit: &Exit,
    tailwater: &Tailwater,
    heads_m: &[f64],
) -> Result<TailwaterCheck, TailwaterError> {
    let mut rows: Vec<(f64, RowKind, Result<TailwaterRow, String>)> = Vec::with_capacity(heads_m.len() + 4);
    let row_at = |h: f64| -> Result<Result<TailwaterRow, String>, TailwaterError> {
        Ok(match model.point(h) {
            Ok(p) => Ok(check_point(model, exit, tailwater, &p)?),
            Err(e) => Err(e.to_string()),
        })
    };
    for &h in heads_m {
        rows.push((h, RowKind::Table, row_at(h)?));
    }
    let lo = heads_m.iter().copied().fold(f64::INFINITY, f64::min);
    let hi = heads_m.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    if !(lo.is_finite() && hi.is_finite()) {
        return Ok(TailwaterCheck {
            rows,
            verdict: Verdict::Modular,
        });
    }
    let bands = if hi > lo {
        drowned_bands(model, exit, tailwater, lo, hi)
    } else {
        // one head: drowned or not there
        match excess_at(model, exit, tailwater, lo) {
            Some((e, row)) if e > 0.0 => vec![DrownedBand {
                from_m3s: row.discharge_m3s,
                from_head_m: lo,
                to_m3s: row.discharge_m3s,
                to_head_m: lo,
                from_bottom: true,
                to_top: true,
            }],
            _ => Vec::new(),
        }
    };
    for b in &bands {
        if !b.from_bottom {
            rows.push((b.from_head_m, RowKind::DrownsFrom, row_at(b.from_head_m)?));
        }
        if !b.to_top {
            rows.push((b.to_head_m, RowKind::ModularFrom, row_at(b.to_head_m)?));
        }
    }
    rows.sort_by(|a, b| a.0.total_cmp(&b.0));
    let verdict = if bands.is_empty() {
        Verdict::Modular
    } else {
        let (q_lo, q_hi) = (model.discharge_m3s(lo)?, model.discharge_m3s(hi)?);
        Verdict::Drowns {
            crest_raise_m: required_crest_raise_m(model, exit, tailwater, (q_lo, q_hi))?,
            bands,
        }
    };
    Ok(TailwaterCheck { rows, verdict })
}
