//! The head→discharge model of a critical-flow control: an energy balance from the
//! head-measurement (gauging) section to the control, where the flow passes critical depth.
//!
//! Equations (references in each item):
//! - energy at the gauging section, referred to the crest: H1 = h1 + α·Q²/(2g·A1²), with A1 the
//!   approach flow area at depth h1 + p1 (Bos 1989, *Discharge Measurement Structures*, ILRI
//!   Publ. 20, §1.9; Clemmens, Wahl, Bos & Replogle 2001, *Water Measurement with Flumes and
//!   Weirs*, ILRI Publ. 58, ch. 6);
//! - critical flow at the control: E_c = y_c + A_c/(2B_c) = H1 and Q = √(g·A_c³/B_c)
//!   (Henderson 1966, *Open Channel Flow*, §2.3), for any control shape;
//! - losses in one of three ways:
//!   - the boundary-layer method after ISO 4359 (the default): the displacement thickness
//!     δ* = 0.003·L of a well-finished throat moves every wetted boundary of the control into
//!     the water, and critical flow is found in that effective section. It is the general form of
//!     ISO 4359's correction, valid for any shape; where ISO 4359 has its own formula the two
//!     differ slightly (the general method reads a few hundredths of a per cent higher for a
//!     rectangular throat and up to about 1 % higher for a trapezoidal one: README, "Method
//!     and sources");
//!   - ISO 4359's own formulas (from memory, docs/references.md S3) for the throats it covers:
//!     Q = Cd·Q_ideal(H1) with Cd = (1 − 2δ*/b)(1 − δ*/h1)^1.5, b the bed width of a rectangular
//!     or trapezoidal throat or the diameter of a U-throat, h1 the gauged head; Q_ideal(H1) is
//!     the loss-free critical-flow discharge of the throat at H1, which is the standard's
//!     (2/3)^1.5·√g·Cv·Cs·b·h1^1.5 with the shape coefficient Cs (Cu for a U-throat) and Cv
//!     exact;
//!   - a fixed discharge coefficient Q = Cd·Q_ideal(H1);
//! - the approach-velocity effect solved exactly, taking the smaller (physical) root of
//!   H1 − h1 − α·Q(H1)²/(2g·A1²) = 0, where the approach flow is subcritical (docs/references.md C2).
//!
//! The reported coefficients follow the usual definitions: Cv = Q_ideal(H1)/Q_ideal(h1) (for a
//! rectangle (H1/h1)^{3/2}, Bos 1989 §1.10) and Cd = Q/Q_ideal(H1).

use super::standard::{self, StandardRule};
use crate::hydraulics::{critical_at_energy, critical_depths_m, GeometryError, Section};

/// How losses between the gauging section and the control enter the rating.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum LossMethod {
    /// Boundary-layer displacement thickness δ* (m) applied to every wetted boundary of the control.
    BoundaryLayer {
        /// δ* in metres (ISO 4359: 0.003·L for a well-finished throat).
        displacement_thickness_m: f64,
    },
    /// A fixed discharge coefficient multiplying the ideal critical-flow discharge at H1.
    FixedCd(f64),
    /// ISO 4359's own formula: Cd = (1 − 2δ*/b)(1 − δ*/h1)^1.5 on the ideal discharge at H1
    /// (rectangular, trapezoidal and U-shaped throats only).
    Iso4359 {
        /// δ* in metres (0.003·L).
        displacement_thickness_m: f64,
    },
    /// A standard's own rating (thin-plate weirs, Parshall flumes, ISO 3846, ISO 4360).
    Standard(StandardRule),
}

impl LossMethod {}

/// What kind of structure the control belongs to; it selects the limits of application.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum StructureKind {
    /// A long-throated flume (ISO 4359; Clemmens et al. 2001).
    Flume,
    /// A round-nosed broad-crested weir across the channel (ISO 4374; critical-flow method).
    Weir,
    /// A thin-plate weir (ISO 1438): rectangular, V-notch or Cipoletti.
    ThinPlateWeir,
    /// A Parshall flume of a standard size (ASTM D1941 / ISO 9826).
    Parshall,
    /// A square-edged broad-crested weir (ISO 3846).
    SquareEdgedWeir,
    /// A triangular-profile weir (ISO 4360).
    TriangularProfileWeir,
}

impl StructureKind {
    /// The family in a few words.
    pub fn describe(self) -> &'static str {
        match self {
            StructureKind::Flume => "long-throated flume",
            StructureKind::Weir => "broad-crested weir",
            StructureKind::ThinPlateWeir => "thin-plate weir",
            StructureKind::Parshall => "Parshall flume",
            StructureKind::SquareEdgedWeir => "square-edged broad-crested weir",
            StructureKind::TriangularProfileWeir => "triangular-profile weir",
        }
    }

    /// True for the families rated by critical-flow theory from their dimensions.
    pub fn critical_flow(self) -> bool {
        matches!(self, StructureKind::Flume | StructureKind::Weir)
    }
}

/// The surveyed structure in SI units: everything the rating needs.
#[derive(Debug, Clone, PartialEq)]
pub struct Structure {
    /// The control (throat or crest) section.
    pub control: Section,
    /// Length of the throat or crest in the flow direction (m).
    pub control_length_m: f64,
    /// The approach channel at the gauging section.
    pub approach: Section,
    /// Height of the crest above the approach bed, p1 (m).
    pub sill_height_m: f64,
    /// Coriolis (velocity-distribution) coefficient of the approach flow.
    pub approach_alpha: f64,
    /// How losses enter.
    pub loss: LossMethod,
    /// Flume or weir, for the limits of application.
    pub kind: StructureKind,
    /// Gravitational acceleration (m/s²).
    pub gravity_m_s2: f64,
    /// A calibration against field gaugings, applied to every discharge (none by default).
    pub calibration: Option<super::calibration::Calibration>,
}

impl Structure {
    /// The standard's rule of a structure built to a standard (`None` for one rated by
    /// critical-flow theory).
    pub fn standard(&self) -> Option<StandardRule> {
        match self.loss {
            LossMethod::Standard(rule) => Some(rule),
            _ => None,
        }
    }

    /// A rectangular control `width_m` wide and `length_m` long in a rectangular approach
    /// `approach_width_m` wide, the crest `sill_height_m` above the approach bed; α = 1, flume
    /// limits, standard gravity. The set-up of the references' rectangular examples.
    pub fn rectangular(
        width_m: f64,
        approach_width_m: f64,
        sill_height_m: f64,
        length_m: f64,
        loss: LossMethod,
    ) -> Self {
        Self {
            control: Section::Rectangle { width_m },
            control_length_m: length_m,
            approach: Section::Rectangle {
                width_m: approach_width_m,
            },
            sill_height_m,
            approach_alpha: 1.0,
            loss,
            kind: StructureKind::Flume,
            gravity_m_s2: crate::hydraulics::STANDARD_GRAVITY_M_S2,
            calibration: None,
        }
    }
}

/// Why a rating point could not be computed.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum RatingError {
    /// Heads are measured above the crest and must be positive.
    #[error("head {head_m} m is not above the crest: heads must be greater than zero")]
    HeadNotPositive {
        /// The head (m).
        head_m: f64,
    },
    /// No subcritical approach flow satisfies the energy balance: the control does not contract
    /// the flow enough for the approach channel, which would have to run at or above critical.
    #[error(
        "at head {head_m} m the approach channel cannot feed the control subcritically (the control is about as large as the approach flow area): no critical-flow rating exists; contract the control or enlarge the approach"
    )]
    ApproachChoked {
        /// The head (m).
        head_m: f64,
    },
    /// The approach section is a pipe that would be full at this head.
    #[error("at head {head_m} m the approach pipe (diameter {diameter_m} m) would flow full")]
    ApproachFull {
        /// The head (m).
        head_m: f64,
        /// The approach pipe diameter (m).
        diameter_m: f64,
    },
    /// The boundary-layer offset of the control failed.
    #[error("boundary-layer method: {0}")]
    Geometry(#[from] GeometryError),
    /// ISO 4359's own formulas do not cover this throat.
    #[error("ISO 4359's own formulas cover rectangular, trapezoidal and U-shaped throats, not a {shape} section: use coefficient = \"boundary-layer\" (the general method after ISO 4359)")]
    IsoShape {
        /// The shape.
        shape: &'static str,
    },
}

/// One computed point of a rating.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RatingPoint {
    /// Piezometric head above the crest at the gauging section, h1 (m).
    pub head_m: f64,
    /// Energy head above the crest at the gauging section, H1 (m).
    pub energy_head_m: f64,
    /// Discharge (m³/s).
    pub discharge_m3s: f64,
    /// Water depth at the control section above the crest (m): the critical depth in the
    /// effective section plus its rise (boundary layer), or the ideal critical depth at H1.
    pub critical_depth_m: f64,
    /// Discharge coefficient Q/Q_ideal(H1).
    pub cd: f64,
    /// Approach-velocity coefficient Q_ideal(H1)/Q_ideal(h1).
    pub cv: f64,
    /// Froude number of the approach flow at the gauging section, V1/√(g·A1/B1).
    pub froude_approach: f64,
    /// Mean approach velocity (m/s).
    pub approach_velocity_m_s: f64,
    /// Number of local critical states in the control at H1 (more than one only in compound
    /// surveyed sections).
    pub control_critical_states: usize,
}

/// A rating model ready to evaluate: the structure plus its precomputed effective section.
#[derive(Debug, Clone)]
pub struct RatingModel {
    structure: Structure,
    control: Control,
    /// Multiplies the control's discharge (1 except when an uncertainty analysis perturbs Cd).
    cd_factor: f64,
}

/// A systematic change applied to a model, as an uncertainty analysis does.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Perturbation {
    /// Factor on the discharge coefficient (1 = unchanged).
    pub cd_factor: f64,
    /// Factor on the control width or diameter (1 = unchanged); see [`Section::scaled_width`].
    pub width_factor: f64,
}

/// The control as the model evaluates it.
#[derive(Debug, Clone)]
enum Control {
    /// The boundary-layer effective section and the rise of its lowest point above the crest (m).
    Effective { section: Section, rise_m: f64 },
    /// The geometric section with a fixed discharge coefficient.
    Fixed { cd: f64 },
    /// The geometric section with ISO 4359's Cd of the gauged head.
    Iso { displacement_m: f64, width_m: f64 },
    /// The geometric section with a standard's coefficient of the gauged head (ISO 3846, ISO
    /// 4360), or a standard's own equation of the gauged head (thin-plate weirs, Parshall).
    Standard(StandardRule),
}

/// Flow through the control at one energy head.
#[derive(Debug, Clone, Copy)]
struct ControlFlow {
    discharge_m3s: f64,
    /// Cd·A_c: with it, dQ²/dH = 2g·(Cd·A_c)² (m²).
    scaled_area_m2: f64,
    depth_above_crest_m: f64,
    states: usize,
}

impl RatingModel {
    /// Prepares the model; for the boundary-layer method this builds the effective section.
    pub fn new(structure: Structure) -> Result<Self, RatingError> {
        let control = match structure.loss {
            LossMethod::BoundaryLayer {
                displacement_thickness_m,
            } => {
                let (section, rise_m) = structure.control.offset_inward(displacement_thickness_m)?;
                Control::Effective { section, rise_m }
            }
            LossMethod::FixedCd(cd) => Control::Fixed { cd },
            LossMethod::Iso4359 {
                displacement_thickness_m,
            } => {
                let shape = match structure.control {
                    Section::Rectangle { .. } | Section::Trapezoid { .. } | Section::UShape { .. } => None,
                    Section::Triangle { .. } => Some("triangular"),
                    Section::Circle { .. } => Some("circular"),
                    Section::Points(_) => Some("surveyed"),
                };
                if let Some(shape) = shape {
                    return Err(RatingError::IsoShape { shape });
                }
                Control::Iso {
                    displacement_m: displacement_thickness_m,
                    width_m: structure.control.characteristic_width_m(),
                }
            }
            LossMethod::Standard(rule) => Control::Standard(rule),
        };
        Ok(Self {
            structure,
            control,
            cd_factor: 1.0,
        })
    }

    /// The same structure with its discharge coefficient scaled by `p.cd_factor` and its control
    /// width (or diameter) by `p.width_factor`; the boundary layer is recomputed for the new width.
    pub fn perturbed(&self, p: &Perturbation) -> Result<Self, RatingError> {
        let mut structure = self.structure.clone();
        if (p.width_factor - 1.0).abs() > 0.0 {
            structure.control = structure.control.scaled_width(p.width_factor);
        }
        let mut m = Self::new(structure)?;
        m.cd_factor = self.cd_factor * p.cd_factor;
        Ok(m)
    }

    /// The structure this model rates.
    pub fn structure(&self) -> &Structure {
        &self.structure
    }

    /// The same model without its calibration: the rating from the dimensions alone.
    pub fn uncalibrated(&self) -> Self {
        let mut m = self.clone();
        m.structure.calibration = None;
        m
    }

    /// The ideal (loss-free) critical-flow discharge of the control at energy head `energy_head_m`.
    pub fn ideal_discharge_m3s(&self, energy_head_m: f64) -> f64 {
        critical_at_energy(&self.structure.control, energy_head_m, 1.0, self.structure.gravity_m_s2).discharge_m3s
    }

    /// Flow through the control at energy head `energy_head_m`, the gauged head being `head_m`.
    fn control_flow(&self, energy_head_m: f64, head_m: f64) -> ControlFlow {
        let g = self.structure.gravity_m_s2;
        let (section, rise_m, cd) = match &self.control {
            Control::Effective { section, rise_m } => (section, *rise_m, self.cd_factor),
            Control::Fixed { cd } => (&self.structure.control, 0.0, *cd * self.cd_factor),
            Control::Iso {
                displacement_m,
                width_m,
            } => {
                // ISO 4359: Cd = (1 − 2δ*/b)(1 − δ*/h)^1.5, on the gauged head (from memory)
                let cd = (1.0 - 2.0 * displacement_m / width_m) * (1.0 - displacement_m / head_m).max(0.0).powf(1.5);
                (&self.structure.control, 0.0, cd * self.cd_factor)
            }
            Control::Standard(rule) => {
                let cd = match rule {
                    StandardRule::SquareEdged => standard::square_edged_cd(head_m),
                    StandardRule::TriangularProfile => standard::triangular_profile_cd(head_m),
                    // rated by their own equations in `empirical_point`
                    _ => 1.0,
                };
                (&self.structure.control, 0.0, cd * self.cd_factor)
            }
        };
        let c = critical_at_energy(section, energy_head_m - rise_m, 1.0, g);
        ControlFlow {
            discharge_m3s: cd * c.discharge_m3s,
            scaled_area_m2: cd * c.area_m2,
            depth_above_crest_m: c.depth_m + rise_m,
            states: c.local_maxima,
        }
    }

    /// Discharge (m³/s) at gauged head `head_m` above the crest.
    pub fn discharge_m3s(&self, head_m: f64) -> Result<f64, RatingError> {
        Ok(self.point(head_m)?.discharge_m3s)
    }

    /// The rating point at gauged head `head_m` (m above the crest): with a calibration
    /// ([`Structure::calibration`]), the point of the dimensions' rating at h + dz with its
    /// discharge (and Cd) times f.
    pub fn point(&self, head_m: f64) -> Result<RatingPoint, RatingError> {
        let Some(c) = &self.structure.calibration else {
            return self.point_from_dimensions(head_m);
        };
        if !head_m.is_finite() {
            return Err(RatingError::HeadNotPositive { head_m });
        }
        let mut p = self.point_from_dimensions(head_m + c.zero_offset_m)?;
        p.head_m = head_m;
        p.discharge_m3s *= c.factor;
        p.cd *= c.factor;
        Ok(p)
    }

    /// Solves the energy balance at gauged head `head_m` (m above the crest).
    ///
    /// With c = α/(2g·A1²), the residual r(H) = H − h1 − c·Q(H)² has r(h1) < 0 and, because
    /// dQ²/dH = 2g·A_c² at a critical section (envelope of Q = A√(2g(E − y))), the slope
    /// r'(H) = 1 − α·A_c²/A1² falls as H rises: r is concave. Newton's method started at h1 then
    /// climbs monotonically to the smaller root, which is the physical one (A_c < A1/√α, approach
    /// subcritical). A bisection safeguard keeps every step inside the known bracket.
    fn point_from_dimensions(&self, head_m: f64) -> Result<RatingPoint, RatingError> {
        if !(head_m.is_finite() && head_m > 0.0) {
            return Err(RatingError::HeadNotPositive { head_m });
        }
        if let Control::Standard(rule) = self.control {
            if !matches!(rule, StandardRule::SquareEdged | StandardRule::TriangularProfile) {
                return self.empirical_point(rule, head_m);
            }
        }
        let s = &self.structure;
        let g = s.gravity_m_s2;
        let approach_depth = head_m + s.sill_height_m;
        if let Some(d) = s.approach.full_depth_m() {
            if approach_depth >= d {
                return Err(RatingError::ApproachFull { head_m, diameter_m: d });
            }
        }
        let a1 = s.approach.area_m2(approach_depth);
        let b1 = s.approach.top_width_m(approach_depth);
        let c = s.approach_alpha / (2.0 * g * a1 * a1);

        let (mut lo, mut hi) = (head_m, f64::INFINITY);
        let mut h = head_m;
        let mut flow = self.control_flow(h, head_m);
        let mut converged = false;
        for _ in 0..200 {
            let r = h - head_m - c * flow.discharge_m3s * flow.discharge_m3s;
            // a residual at the rounding level of H: nothing left to gain
            if r.abs() <= 4.0 * f64::EPSILON * h {
                converged = true;
                break;
            }
            if r < 0.0 {
                lo = lo.max(h);
            } else {
                hi = hi.min(h);
            }
            let slope = 1.0 - s.approach_alpha * (flow.scaled_area_m2 / a1).powi(2);
            let newton = if slope > 0.0 { h - r / slope } else { f64::NAN };
            let next = if newton > lo && newton < hi {
                newton
            } else if hi.is_finite() {
                0.5 * (lo + hi)
            } else {
                // past the crest of the concave residual without finding a root
                return Err(RatingError::ApproachChoked { head_m });
            };
            let done = (next - h).abs() <= 4.0 * f64::EPSILON * h;
            h = next;
            flow = self.control_flow(h, head_m);
            if done || (hi.is_finite() && hi - lo <= 2e-16 * hi) {
                converged = true;
                break;
            }
        }
        if !converged {
            return Err(RatingError::ApproachChoked { head_m });
        }
        let q = flow.discharge_m3s;
        let ideal_h1 = self.ideal_discharge_m3s(h);
        let ideal_head = self.ideal_discharge_m3s(head_m);
        let v1 = q / a1;
        Ok(RatingPoint {
            head_m,
            energy_head_m: h,
            discharge_m3s: q,
            critical_depth_m: flow.depth_above_crest_m,
            cd: q / ideal_h1,
            cv: ideal_h1 / ideal_head,
            froude_approach: v1 / (g * a1 / b1).sqrt(),
            approach_velocity_m_s: v1,
            control_critical_states: flow.states,
        })
    }
}

impl RatingModel {
    /// A thin-plate weir or Parshall flume at gauged head `head_m`: the standard's equation of
    /// the gauged head, whose coefficient carries the approach velocity. The point reports the
    /// standard's effective coefficient as Cd, Cv = 1, the energy head h1 + α·V1²/2g at the
    /// approach section (for the tailwater check; Ha itself for a Parshall flume, whose
    /// submergence is a ratio of heads) and the critical depth of the control section at Q.
    fn empirical_point(&self, rule: StandardRule, head_m: f64) -> Result<RatingPoint, RatingError> {
        let s = &self.structure;
        let g = s.gravity_m_s2;
        // the control's width as surveyed (a perturbed model scales it: Q in proportion)
        let (q, coefficient) = match (rule, &s.control) {
            (StandardRule::RectangularPlate, Section::Rectangle { width_m }) => {
                let big_b = s.approach.characteristic_width_m();
                standard::rectangular_plate_m3s(head_m, *width_m, big_b, s.sill_height_m)
            }
            (StandardRule::VNotch { angle_deg }, Section::Triangle { side_slope }) => {
                let nominal = (angle_deg.to_radians() / 2.0).tan();
                let (q, ce) = standard::v_notch_m3s(head_m, angle_deg);
                (q * side_slope / nominal, ce)
            }
            (StandardRule::Cipoletti, Section::Trapezoid { bottom_width_m, .. }) => {
                standard::cipoletti_m3s(head_m, *bottom_width_m)
            }
            (StandardRule::Parshall(size), Section::Rectangle { width_m }) => {
                let q = size.discharge_m3s(head_m) * width_m / size.throat_m();
                (q, f64::NAN)
            }
            _ => return Err(RatingError::HeadNotPositive { head_m }),
        };
        let q = q * self.cd_factor;
        let approach_depth = head_m + s.sill_height_m;
        let a1 = s.approach.area_m2(approach_depth);
        let b1 = s.approach.top_width_m(approach_depth);
        let v1 = q / a1;
        let energy = match rule {
            StandardRule::Parshall(_) => head_m,
            _ => head_m + s.approach_alpha * v1 * v1 / (2.0 * g),
        };
        let critical = critical_depths_m(&s.control, q, 1.0, g)
            .ok()
            .and_then(|d| d.first().copied())
            .unwrap_or(f64::NAN);
        let cd = if coefficient.is_nan() {
            // Parshall: the ratio to the ideal critical-flow discharge of the throat at Ha
            q / self.ideal_discharge_m3s(head_m)
        } else {
            coefficient * self.cd_factor
        };
        Ok(RatingPoint {
            head_m,
            energy_head_m: energy,
            discharge_m3s: q,
            critical_depth_m: critical,
            cd,
            cv: 1.0,
            froude_approach: v1 / (g * a1 / b1).sqrt(),
            approach_velocity_m_s: v1,
            control_critical_states: 1,
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    fn rect(b: f64, big_b: f64, p: f64, l: f64, loss: LossMethod) -> RatingModel {
        RatingModel::new(Structure::rectangular(b, big_b, p, l, loss)).expect("model")
    }

    #[test]
    fn ideal_rectangle_with_exact_approach_velocity() {
        // docs/references.md C2 (independent energy-balance root), Cd = 1
        let cases = [
            (1.0, 1.0, 0.3, 0.3, 1.0634870860, 0.2978773982),
            (0.5, 1.0, 0.1, 0.2, 1.0261098904, 0.0782226132),
            (1.0, 1.0, 0.15, 0.3, 1.1283437081, 0.3160434127),
        ];
        for (b, big_b, p, h, cv, q) in cases {
            let pt = rect(b, big_b, p, 1.0, LossMethod::FixedCd(1.0))
                .point(h)
                .expect("point");
            assert_relative_eq!(pt.discharge_m3s, q, max_relative = 1e-9);
            assert_relative_eq!(pt.cv, cv, max_relative = 1e-9);
            assert_relative_eq!(pt.cd, 1.0, max_relative = 1e-12);
        }
    }

    #[test]
    fn iso_4359_rectangular_examples_by_boundary_layer() {
        // docs/references.md C3 (ISO 4359's rectangular-throat formulas, δ* = 0.003 L, computed independently)
        let cases = [
            (0.5, 1.0, 0.20, 1.0, 0.1, 0.0754155493),
            (0.5, 1.0, 0.05, 1.0, 0.1, 0.0086236095),
            (1.0, 2.0, 0.50, 2.0, 0.3, 0.5972580394),
            (0.25, 0.75, 0.30, 0.6, 0.0, 0.0706812236),
        ];
        for (b, l, h, big_b, p, q) in cases {
            let m = rect(
                b,
                big_b,
                p,
                l,
                LossMethod::BoundaryLayer {
                    displacement_thickness_m: 0.003 * l,
                },
            );
            let pt = m.point(h).expect("point");
            assert_relative_eq!(pt.discharge_m3s, q, max_relative = 1.5e-3);
        }
    }

    #[test]
    fn approach_too_small_is_reported() {
        // a "control" wider than the approach, with no sill, cannot be critical-flow controlled:
        // x − 1 = (4/27)(b/B)²x³ with x = H1/h1 has no root for b/B = 1.25 (hand check)
        let m = rect(1.0, 0.8, 0.0, 1.0, LossMethod::FixedCd(1.0));
        assert!(matches!(m.point(0.3), Err(RatingError::ApproachChoked { .. })));
    }
}
