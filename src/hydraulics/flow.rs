//! Specific energy, critical flow, alternate depths, Froude number and normal depth in any
//! [`Section`].
//!
//! Sources: specific energy E = y + αQ²/(2gA²) and the critical condition αQ²T/(gA³) = 1 with
//! E_c = y_c + αA_c/(2T_c) (Chow 1959, *Open-Channel Hydraulics*, ch. 3–4; Henderson 1966,
//! *Open Channel Flow*, ch. 2); Manning's formula Q = A·R^{2/3}·S^{1/2}/n in SI units
//! (Chow 1959 §5-6). Every solver brackets its root, so it converges for valid input.

use super::roots::{brent, newton_bracketed, quadratic_roots};
use super::section::{PointsSection, Section};

/// Standard gravity (m/s²), CGPM 1901; the default everywhere in flumerate.
pub const STANDARD_GRAVITY_M_S2: f64 = 9.80665;

/// A flow computation had no physical answer.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum FlowError {
    /// The discharge must be positive and finite.
    #[error("discharge must be greater than zero (got {discharge_m3s} m³/s)")]
    DischargeNotPositive {
        /// The discharge given (m³/s).
        discharge_m3s: f64,
    },
    /// The specific energy must be positive and finite.
    #[error("specific energy must be greater than zero (got {energy_m} m)")]
    EnergyNotPositive {
        /// The energy given (m).
        energy_m: f64,
    },
    /// Below the minimum specific energy no depth carries the discharge.
    #[error(
        "specific energy {energy_m} m is below the critical (minimum) specific energy {critical_energy_m} m for this discharge: no depth carries it; raise the energy or lower the discharge"
    )]
    BelowCriticalEnergy {
        /// The energy given (m).
        energy_m: f64,
        /// The minimum specific energy for the discharge (m).
        critical_energy_m: f64,
    },
    /// A closed conduit would flow full before reaching the answer.
    #[error("the pipe would flow full (diameter {diameter_m} m): no free-surface depth satisfies this")]
    PipeFull {
        /// Pipe diameter (m).
        diameter_m: f64,
    },
    /// More than a circular pipe carries in uniform flow part-full.
    #[error("a pipe of diameter {diameter_m} m carries at most {max_discharge_m3s:.6} m³/s in uniform flow part-full (at {depth_m:.4} m, about 0.94 D): no normal depth for more")]
    PipeOverCapacity {
        /// Pipe diameter (m).
        diameter_m: f64,
        /// The largest part-full discharge (m³/s).
        max_discharge_m3s: f64,
        /// The depth at which it flows (m).
        depth_m: f64,
    },
    /// Manning's n and the bed slope must be positive.
    #[error("{what} must be greater than zero (got {value})")]
    NotPositive {
        /// Which input.
        what: &'static str,
        /// The value given.
        value: f64,
    },
    /// A root finder failed where a root was bracketed: a bug, reported rather than hidden.
    #[error("internal solver failure: {0}")]
    Solver(#[from] super::roots::RootError),
}

/// Flow state at a critical section.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct CriticalState {
    /// Critical depth above the lowest point of the section (m).
    pub depth_m: f64,
    /// Flow area at critical depth (m²).
    pub area_m2: f64,
    /// Top width at critical depth (m).
    pub top_width_m: f64,
    /// Discharge (m³/s).
    pub discharge_m3s: f64,
    /// Specific energy y_c + αA_c/(2T_c) (m).
    pub energy_m: f64,
    /// How many local critical states the section has at this energy (more than one only in
    /// compound sections; the state returned passes the largest discharge).
    pub local_maxima: usize,
}

/// Specific energy E = y + αQ²/(2gA²) (m) (Chow 1959 eq. 3-1).
pub fn specific_energy_m(section: &Section, depth_m: f64, discharge_m3s: f64, alpha: f64, g: f64) -> f64 {
    let a = section.area_m2(depth_m);
    depth_m + alpha * discharge_m3s * discharge_m3s / (2.0 * g * a * a)
}

/// Froude number Fr = V/√(g·A/T) (Chow 1959 eq. 1-8, hydraulic depth D = A/T).
pub fn froude_number(section: &Section, depth_m: f64, discharge_m3s: f64, g: f64) -> f64 {
    let a = section.area_m2(depth_m);
    let t = section.top_width_m(depth_m);
    if a <= 0.0 {
        return f64::INFINITY;
    }
    if t <= 0.0 {
        return 0.0;
    }
    (discharge_m3s / a) / (g * a / t).sqrt()
}

/// The critical state at specific energy `energy_m`: the depth at which the section passes the
/// largest discharge for that energy, Q = A·√(2g(E − y)/α), which is where E = y + αA/(2T)
/// (Henderson 1966 §2.3). For a compound section with several local maxima, the largest is
/// returned and [`CriticalState::local_maxima`] says how many there were.
pub fn critical_at_energy(section: &Section, energy_m: f64, alpha: f64, g: f64) -> CriticalState {
    if energy_m <= 0.0 || energy_m.is_nan() {
        return CriticalState {
            depth_m: 0.0,
            area_m2: 0.0,
            top_width_m: section.top_width_m(0.0),
            discharge_m3s: 0.0,
            energy_m: 0.0,
            local_maxima: 1,
        };
    }
    let e = energy_m;
    let (depth, local_maxima) = match section {
        // rectangle: E = y(1 + α/2)
        Section::Rectangle { .. } => (2.0 * e / (2.0 + alpha), 1),
        // triangle: A/T = y/2, so E = y(1 + α/4); α = 1 gives y_c = 0.8·E
        Section::Triangle { .. } => (4.0 * e / (4.0 + alpha), 1),
        // trapezoid: 2(b + 2my)(E − y) = α(by + my²), a quadratic with one positive root
        Section::Trapezoid {
            bottom_width_m: b,
            side_slope: m,
        } => {
            let roots = quadratic_roots((4.0 + alpha) * m, (2.0 + alpha) * b - 4.0 * m * e, -2.0 * b * e);
            let y = roots.into_iter().filter(|r| *r > 0.0).fold(f64::NAN, f64::max);
            (y, 1)
        }
        Section::Circle { diameter_m } => {
            // s(y) = 2T(E − y) − αA is positive near the invert and negative at min(E, D);
            // E_c rises monotonically with depth in a circle, so the root is unique.
            // Newton on s in the bracket; dT/dy = 2·cot(θ/2) for a circle (differentiating
            // T = D·sin(θ/2) and y = (D/2)(1 − cos(θ/2))), so s' = 2T'(E − y) − (2 + α)T.
            let d = *diameter_m;
            let top = energy_m.min(d);
            let s = |y: f64| {
                if y >= d {
                    return (-alpha * section.area_m2(d), -1.0);
                }
                let theta = 2.0 * (1.0 - 2.0 * y / d).clamp(-1.0, 1.0).acos();
                let (half_sin, half_cos) = (0.5 * theta).sin_cos();
                let t = d * half_sin;
                let a = d * d * (theta - theta.sin()) / 8.0;
                let dt = 2.0 * half_cos / half_sin;
                (2.0 * t * (e - y) - alpha * a, 2.0 * dt * (e - y) - (2.0 + alpha) * t)
            };
            // a parabola-like bottom has y_c ≈ 0.75·E: a good first guess at low fill
            let y = newton_bracketed(s, top * 1e-12, top, 0.75 * top).unwrap_or(top);
            (y, 1)
        }
        Section::UShape { .. } => {
            // s(y) = 2T(E − y) − αA: positive near the invert, −αA at E; A/T rises with depth
            // in a U (circle segment, then vertical walls), so E_c rises and the root is unique
            let s = |y: f64| 2.0 * section.top_width_m(y) * (e - y) - alpha * section.area_m2(y);
            (brent(s, e * 1e-12, e, 0.0).unwrap_or(e), 1)
        }
        Section::Points(p) => points_critical_at_energy(p, section, e, alpha, g),
    };
    let area = section.area_m2(depth);
    let width = section.top_width_m(depth);
    let discharge = if width > 0.0 {
        (g * area.powi(3) / (alpha * width)).sqrt()
    } else {
        0.0
    };
    CriticalState {
        depth_m: depth,
        area_m2: area,
        top_width_m: width,
        discharge_m3s: discharge,
        energy_m: depth
            + if width > 0.0 {
                alpha * area / (2.0 * width)
            } else {
                f64::INFINITY
            },
        local_maxima,
    }
}

/// Surveyed section: in each slice T = t0 + kt·u and A = a0 + t0·u + kt·u²/2 (u = y − y0), so
/// s(y) = 2T(E − y) − αA, whose sign is that of dQ/dy at fixed E, is a quadratic in u. Maxima of
/// Q are its + to − crossings, and the slice boundaries where T jumps (flat berms) and s jumps
/// from + to −.
fn points_critical_at_energy(
    p: &super::section::PointsSection,
    section: &Section,
    e: f64,
    alpha: f64,
    g: f64,
) -> (f64, usize) {
    let mut candidates: Vec<f64> = Vec::new();
    let mut s_prev_end: Option<f64> = None;
    for (y0, y1, a0, t0, kt) in p.slices() {
        if y0 >= e {
            break;
        }
        let top = y1.min(e);
        let ee = e - y0;
        let c0 = 2.0 * t0 * ee - alpha * a0;
        let c1 = 2.0 * kt * ee - (2.0 + alpha) * t0;
        let c2 = -(2.0 + 0.5 * alpha) * kt;
        let s = |u: f64| c0 + c1 * u + c2 * u * u;
        if let Some(prev) = s_prev_end {
            if prev > 0.0 && c0 <= 0.0 && y0 > 0.0 {
                candidates.push(y0);
            }
        }
        let du = top - y0;
        for u in quadratic_roots(c2, c1, c0) {
            if u > 0.0 && u < du {
                let slope = c1 + 2.0 * c2 * u;
                if slope < 0.0 {
                    candidates.push(y0 + u);
                }
            }
        }
        s_prev_end = Some(s(du));
    }
    if candidates.is_empty() {
        // s never changes sign inside (0, E): Q is largest where it stops rising
        candidates.push(e * (1.0 - 1e-12));
    }
    let q = |y: f64| section.area_m2(y) * (2.0 * g * (e - y) / alpha).max(0.0).sqrt();
    let n = candidates.len();
    let best = candidates
        .into_iter()
        .max_by(|a, b| q(*a).total_cmp(&q(*b)))
        .expect("at least one candidate");
    (best, n)
}

/// All critical depths (m) for `discharge_m3s`: the depths where αQ²T/(gA³) = 1 and the
/// specific energy has a local minimum. Every built-in shape has exactly one; a compound surveyed
/// section may have more, and all are returned in ascending order.
pub fn critical_depths_m(section: &Section, discharge_m3s: f64, alpha: f64, g: f64) -> Result<Vec<f64>, FlowError> {
    if !(discharge_m3s.is_finite() && discharge_m3s > 0.0) {
        return Err(FlowError::DischargeNotPositive { discharge_m3s });
    }
    let q2 = alpha * discharge_m3s * discharge_m3s;
    // φ(y) = ln(gA³/(αQ²T)): rises through zero at a critical depth in every built-in shape
    let phi = |y: f64| {
        let a = section.area_m2(y);
        let t = section.top_width_m(y);
        (g * a.powi(3) / (q2 * t)).ln()
    };
    let single = |v: f64| Ok(vec![v]);
    match section {
        Section::Rectangle { width_m } => single((q2 / (g * width_m * width_m)).cbrt()),
        Section::Triangle { side_slope } => single((2.0 * q2 / (g * side_slope * side_slope)).powf(0.2)),
        Section::Trapezoid {
            bottom_width_m: b,
            side_slope: m,
        } => {
            // A³/T of a trapezoid exceeds that of its bed-width rectangle and of its triangle,
            // so either of their critical depths bounds it from above.
            let rect = if *b > 0.0 {
                (q2 / (g * b * b)).cbrt()
            } else {
                f64::INFINITY
            };
            let tri = if *m > 0.0 {
                (2.0 * q2 / (g * m * m)).powf(0.2)
            } else {
                f64::INFINITY
            };
            let hi = rect.min(tri);
            single(brent(phi, hi * 1e-9, hi, 0.0)?)
        }
        Section::Circle { diameter_m } => {
            // near full, T → 0 and φ → +∞: the root lies below D for any discharge
            let hi = diameter_m * (1.0 - 1e-12);
            single(brent(phi, diameter_m * 1e-9, hi, 0.0)?)
        }
        Section::UShape { diameter_m } => {
            // above half full the U is a rectangle D wide; its critical depth, raised by the
            // half diameter, bounds the root from above
            let hi = (q2 / (g * diameter_m * diameter_m)).cbrt() + diameter_m;
            single(brent(phi, diameter_m * 1e-9, hi, 0.0)?)
        }
        Section::Points(p) => points_critical_depths_m(p, q2, g),
    }
}

/// The critical depths of a surveyed section, slice by slice (see [`critical_depths_m`];
/// `q2` = αQ²).
fn points_critical_depths_m(p: &PointsSection, q2: f64, g: f64) -> Result<Vec<f64>, FlowError> {
    // Inside a slice (u = y − y0) A = a0 + t0·u + kt·u²/2 and T = t0 + kt·u, so
    // ψ(u) = gA³ − αQ²T has dψ/du = 3gA²T − αQ²·kt, which only rises (A, T ≥ 0 and
    // rising). ψ therefore falls, then rises: at most one turning point per slice,
    // found by bracketing, leaving two monotone pieces to bracket for roots.
    let mut roots = Vec::new();
    for (y0, y1, a0, t0, kt) in p.slices() {
        let area = |u: f64| a0 + t0 * u + 0.5 * kt * u * u;
        let psi = |u: f64| g * area(u).powi(3) - q2 * (t0 + kt * u);
        let dpsi = |u: f64| 3.0 * g * area(u).powi(2) * (t0 + kt * u) - q2 * kt;
        let len = if y1.is_finite() {
            y1 - y0
        } else {
            // the last slice has constant width and growing area: double until ψ > 0
            let mut hi = y0.max(1.0);
            while psi(hi) <= 0.0 && hi < 1e9 {
                hi *= 2.0;
            }
            hi
        };
        let mut cuts = vec![0.0, len];
        if dpsi(0.0) < 0.0 && dpsi(len) > 0.0 {
            cuts.insert(1, brent(dpsi, 0.0, len, 0.0)?);
        }
        for w in cuts.windows(2) {
            let (lo, hi) = (w[0], w[1]);
            // only − to + crossings: there E(y) has a local minimum (dE/dy = 1 − Fr²)
            if psi(lo) < 0.0 && psi(hi) >= 0.0 {
                roots.push(y0 + brent(psi, lo, hi, 0.0)?);
            }
        }
        // T never decreases with depth in an open section, so a jump in T at a flat
        // berm only takes ψ from + to −: a local maximum of E, not a critical depth.
    }
    roots.sort_by(f64::total_cmp);
    roots.dedup_by(|a, b| (*a - *b).abs() <= 1e-12 * a.abs().max(1.0));
    Ok(roots)
}

/// The two depths that carry `discharge_m3s` with specific energy `energy_m`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct AlternateDepths {
    /// The depth above critical, Fr < 1 (m).
    pub subcritical_m: f64,
    /// The depth below critical, Fr > 1 (m).
    pub supercritical_m: f64,
}

/// Both alternate depths for a discharge and specific energy (Chow 1959 §3-2). Fails with
/// [`FlowError::BelowCriticalEnergy`] when E < E_c. Where a compound section has several
/// critical depths, the shallowest supercritical and deepest subcritical roots are returned.
pub fn alternate_depths_m(
    section: &Section,
    energy_m: f64,
    discharge_m3s: f64,
    alpha: f64,
    g: f64,
) -> Result<AlternateDepths, FlowError> {
    if !(energy_m.is_finite() && energy_m > 0.0) {
        return Err(FlowError::EnergyNotPositive { energy_m });
    }
    let crit = critical_depths_m(section, discharge_m3s, alpha, g)?;
    let f = |y: f64| specific_energy_m(section, y, discharge_m3s, alpha, g) - energy_m;
    let e_min = crit
        .iter()
        .map(|&y| specific_energy_m(section, y, discharge_m3s, alpha, g))
        .fold(f64::INFINITY, f64::min);
    if energy_m < e_min {
        return Err(FlowError::BelowCriticalEnergy {
            energy_m,
            critical_energy_m: e_min,
        });
    }
    // E(y) falls from +∞ to the first critical depth and rises after the last one; the
    // supercritical root is below the shallowest critical depth, the subcritical above the
    // deepest, and never deeper than E itself.
    let (y_lo, y_hi) = (crit[0], crit[crit.len() - 1]);
    let supercritical_m = if f(y_lo) >= 0.0 {
        y_lo
    } else {
        brent(f, y_lo * 1e-12, y_lo, 0.0)?
    };
    let mut top = energy_m;
    if let Some(d) = section.full_depth_m() {
        if top >= d {
            top = d * (1.0 - 1e-12);
            if f(top) < 0.0 {
                return Err(FlowError::PipeFull { diameter_m: d });
            }
        }
    }
    let subcritical_m = if f(y_hi) >= 0.0 {
        y_hi
    } else {
        brent(f, y_hi, top, 0.0)?
    };
    Ok(AlternateDepths {
        subcritical_m,
        supercritical_m,
    })
}

/// Uniform-flow (normal) depth by Manning's formula in SI units, Q = A·R^{2/3}·√S / n
/// (Chow 1959 eq. 5-6). Where the conveyance is not monotone (a pipe near full, a compound
/// section) the shallowest depth that carries the discharge is returned.
pub fn normal_depth_m(section: &Section, discharge_m3s: f64, manning_n: f64, bed_slope: f64) -> Result<f64, FlowError> {
    if let Section::Circle { .. } = section {
        return Ok(normal_depths_m(section, discharge_m3s, manning_n, bed_slope)?[0]);
    }
    normal_depth_open_m(section, discharge_m3s, manning_n, bed_slope)
}

/// Every depth (m) at which `discharge_m3s` flows uniformly (Manning), in ascending order. An open
/// section has one. A circular pipe's conveyance A·R^(2/3) peaks near 0.94·D and falls towards
/// full (Chow 1959 §6-5, from memory as to the section number): a discharge between the full-pipe
/// and the peak part-full capacity flows at two depths, both returned; above the peak there is
/// no normal depth part-full, an error that says the pipe's largest part-full discharge.
pub fn normal_depths_m(
    section: &Section,
    discharge_m3s: f64,
    manning_n: f64,
    bed_slope: f64,
) -> Result<Vec<f64>, FlowError> {
    let Section::Circle { diameter_m } = section else {
        return Ok(vec![normal_depth_open_m(section, discharge_m3s, manning_n, bed_slope)?]);
    };
    let d = *diameter_m;
    check_manning_inputs(discharge_m3s, manning_n, bed_slope)?;
    let conveyance = |y: f64| section.area_m2(y) * section.hydraulic_radius_m(y).powf(2.0 / 3.0);
    // the peak of conveyance: golden-section search on [0.5 D, D] (Kiefer 1953)
    let (mut a, mut b) = (0.5 * d, d);
    let ratio = (5f64.sqrt() - 1.0) / 2.0;
    while b - a > 1e-12 * d {
        let c = b - ratio * (b - a);
        let e = a + ratio * (b - a);
        if conveyance(c) > conveyance(e) {
            b = e;
        } else {
            a = c;
        }
    }
    let y_peak = 0.5 * (a + b);
    let target = discharge_m3s * manning_n / bed_slope.sqrt();
    let k_peak = conveyance(y_peak);
    if target > k_peak {
        return Err(FlowError::PipeOverCapacity {
            diameter_m: d,
            max_discharge_m3s: k_peak * bed_slope.sqrt() / manning_n,
            depth_m: y_peak,
        });
    }
    let f = |y: f64| conveyance(y) - target;
    let mut depths = vec![brent(f, d * 1e-12, y_peak, 0.0)?];
    if conveyance(d) <= target && y_peak < d {
        depths.push(brent(f, y_peak, d, 0.0)?);
    }
    Ok(depths)
}

fn check_manning_inputs(discharge_m3s: f64, manning_n: f64, bed_slope: f64) -> Result<(), FlowError> {
    if !(discharge_m3s.is_finite() && discharge_m3s > 0.0) {
        return Err(FlowError::DischargeNotPositive { discharge_m3s });
    }
    if !(manning_n.is_finite() && manning_n > 0.0) {
        return Err(FlowError::NotPositive {
            what: "Manning's n",
            value: manning_n,
        });
    }
    if !(bed_slope.is_finite() && bed_slope > 0.0) {
        return Err(FlowError::NotPositive {
            what: "bed slope",
            value: bed_slope,
        });
    }
    Ok(())
}

/// The normal depth of an open section (or the lower one found scanning up from the invert).
fn normal_depth_open_m(
    section: &Section,
    discharge_m3s: f64,
    manning_n: f64,
    bed_slope: f64,
) -> Result<f64, FlowError> {
    check_manning_inputs(discharge_m3s, manning_n, bed_slope)?;
    let target = discharge_m3s * manning_n / bed_slope.sqrt();
    let f = |y: f64| section.area_m2(y) * section.hydraulic_radius_m(y).powf(2.0 / 3.0) - target;
    // scan upward on a geometric grid for the first sign change, then bracket it
    let top = section.full_depth_m();
    let mut lo = match top {
        Some(d) => d * 1e-6,
        None => 1e-6,
    };
    if f(lo) >= 0.0 {
        return Ok(brent(f, 0.0, lo, 0.0).unwrap_or(lo));
    }
    loop {
        let mut hi = lo * 1.25;
        if let Some(d) = top {
            if lo >= d {
                return Err(FlowError::PipeFull { diameter_m: d });
            }
            hi = hi.min(d);
        }
        if hi > 1e6 {
            return Err(FlowError::DischargeNotPositive { discharge_m3s });
        }
        let fhi = f(hi);
        if fhi >= 0.0 {
            return Ok(brent(f, lo, hi, 0.0)?);
        }
        lo = hi;
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;
    const G: f64 = STANDARD_GRAVITY_M_S2;

    #[test]
    fn rectangle_reference_values() {
        // docs/references.md C1 (independent computation): q = 0.3 m²/s
        let s = Section::Rectangle { width_m: 1.0 };
        let yc = critical_depths_m(&s, 0.3, 1.0, G).expect("ok")[0];
        assert_relative_eq!(yc, 0.2093665410, max_relative = 1e-9);
        let alt = alternate_depths_m(&s, 1.0, 0.3, 1.0, G).expect("ok");
        assert_relative_eq!(alt.subcritical_m, 0.9953684743, max_relative = 1e-9);
        assert_relative_eq!(alt.supercritical_m, 0.0702527733, max_relative = 1e-9);
    }

    #[test]
    fn trapezoid_reference_values() {
        // docs/references.md C1 (independent computation): b = 2 m, z = 1.5, Q = 5 m³/s
        let s = Section::Trapezoid {
            bottom_width_m: 2.0,
            side_slope: 1.5,
        };
        let yc = critical_depths_m(&s, 5.0, 1.0, G).expect("ok")[0];
        assert_relative_eq!(yc, 0.7143239931, max_relative = 1e-9);
        assert_relative_eq!(
            specific_energy_m(&s, yc, 5.0, 1.0, G),
            0.9791141181,
            max_relative = 1e-9
        );
        let alt = alternate_depths_m(&s, 1.5, 5.0, 1.0, G).expect("ok");
        assert_relative_eq!(alt.subcritical_m, 1.4663892, max_relative = 1e-7);
        assert_relative_eq!(alt.supercritical_m, 0.4133741, max_relative = 1e-6);
    }

    #[test]
    fn circle_reference_values() {
        // docs/references.md C1 (independent computation): D = 1 m, Q = 0.5 m³/s
        let s = Section::Circle { diameter_m: 1.0 };
        let yc = critical_depths_m(&s, 0.5, 1.0, G).expect("ok")[0];
        assert_relative_eq!(yc, 0.3988767311, max_relative = 1e-9);
        assert_relative_eq!(specific_energy_m(&s, yc, 0.5, 1.0, G), 0.5480951, max_relative = 1e-6);
    }

    #[test]
    fn critical_at_energy_matches_reference_ideal_throats() {
        // docs/references.md C2 "ideal non-rectangular throats" (independent computation)
        let cases = [
            (
                Section::Trapezoid {
                    bottom_width_m: 0.3,
                    side_slope: 1.0,
                },
                0.25,
                0.1834935157,
                0.1013254886,
            ),
            (
                Section::Trapezoid {
                    bottom_width_m: 0.3,
                    side_slope: 1.0,
                },
                0.50,
                0.3785144316,
                0.3964415928,
            ),
            (
                Section::Trapezoid {
                    bottom_width_m: 2.0,
                    side_slope: 1.5,
                },
                1.00,
                0.7302967433,
                5.1992524228,
            ),
            (Section::Circle { diameter_m: 1.0 }, 0.40, 0.2941910852, 0.2778286580),
            (Section::Circle { diameter_m: 1.0 }, 0.80, 0.5677418978, 0.9822876420),
        ];
        for (s, e, yc, q) in cases {
            let c = critical_at_energy(&s, e, 1.0, G);
            assert_relative_eq!(c.depth_m, yc, max_relative = 1e-9);
            assert_relative_eq!(c.discharge_m3s, q, max_relative = 1e-9);
        }
    }

    #[test]
    fn below_critical_energy_is_an_error() {
        let s = Section::Rectangle { width_m: 1.0 };
        let err = alternate_depths_m(&s, 0.2, 0.3, 1.0, G).unwrap_err();
        assert!(matches!(err, FlowError::BelowCriticalEnergy { .. }));
        assert!(err.to_string().contains("below the critical"));
    }

    #[test]
    fn compound_section_reports_two_critical_depths() {
        // a narrow deep slot with wide flat berms: T jumps at the berm, so E_c(y) is not monotone
        let p = crate::hydraulics::PointsSection::new(&[
            (-5.0, 1.5),
            (-5.0, 0.5),
            (-0.25, 0.5),
            (-0.25, 0.0),
            (0.25, 0.0),
            (0.25, 0.5),
            (5.0, 0.5),
            (5.0, 1.5),
        ])
        .expect("valid");
        let s = Section::Points(p);
        // hand check: slot y_c = (Q²/(g·0.25))^(1/3) = 0.4673 m < 0.5 m; over the berms
        // A³/T = Q²/g with T = 10 m gives A = 0.6343 m², y = 0.5384 m
        let roots = critical_depths_m(&s, 0.5, 1.0, G).expect("ok");
        assert_eq!(roots.len(), 2, "{roots:?}");
        assert_relative_eq!(roots[0], (0.25 / (G * 0.25)).cbrt(), max_relative = 1e-9);
        assert_relative_eq!(
            roots[1],
            0.5 + ((10.0 * 0.25 / G).cbrt() - 0.25) / 10.0,
            max_relative = 1e-9
        );
        for &y in &roots {
            assert_relative_eq!(froude_number(&s, y, 0.5, G), 1.0, max_relative = 1e-9);
        }
    }

    #[test]
    fn normal_depth_wide_rectangle_matches_closed_form() {
        // analytic: very wide rectangle, R ≈ y, so y_n = (nq/√S)^(3/5); width 1000 m limits the error
        let s = Section::Rectangle { width_m: 1000.0 };
        let y = normal_depth_m(&s, 1000.0, 0.03, 0.001).expect("ok");
        let r = s.hydraulic_radius_m(y);
        assert_relative_eq!(
            1000.0 * y * r.powf(2.0 / 3.0) * 0.001f64.sqrt() / 0.03,
            1000.0,
            max_relative = 1e-10
        );
    }
}
