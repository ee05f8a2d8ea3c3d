//! Built-in checks against published and independently computed values, so that a user can see
//! on their own machine that this build reproduces them (`flumerate verify`). The test suite checks
//! the same sources more thoroughly; this is the short version that ships with the tool.

use crate::hydraulics::{
    alternate_depths_m, critical_at_energy, critical_depths_m, specific_energy_m, Section, STANDARD_GRAVITY_M_S2 as G,
};
use crate::rating::{LossMethod, RatingModel, Structure};
use crate::station::TailwaterSpec;
use crate::station::{InputDistribution, UncertaintySpec};
use crate::tailwater::{max_tailwater_energy_m, villemonte_ratio, Tailwater};
use crate::uncertainty::{GumModel, Inputs};

/// One check.
#[derive(Debug, Clone, PartialEq)]
pub struct Check {
    /// What is computed.
    pub what: &'static str,
    /// Where the reference value comes from.
    pub source: &'static str,
    /// The reference value.
    pub expected: f64,
    /// What this build computes (NaN if it failed).
    pub got: f64,
    /// Allowed relative difference.
    pub tolerance: f64,
}

impl Check {
    /// Whether the computed value is within the tolerance.
    pub fn passed(&self) -> bool {
        ((self.got - self.expected) / self.expected).abs() <= self.tolerance
    }
}

fn rect_model(b: f64, big_b: f64, p: f64, l: f64, loss: LossMethod) -> Option<RatingModel> {
    RatingModel::new(Structure::rectangular(b, big_b, p, l, loss)).ok()
}

/// A check of `what` from `source`: `got` against `expected` within `tolerance` (relative).
fn check(what: &'static str, source: &'static str, expected: f64, got: f64, tolerance: f64) -> Check {
    Check {
        what,
        source,
        expected,
        got,
        tolerance,
    }
}

/// The first critical depth of `s` at discharge `q` (NaN if none).
fn first_critical(s: &Section, q: f64) -> f64 {
    critical_depths_m(s, q, 1.0, G)
        .ok()
        .and_then(|v| v.first().copied())
        .unwrap_or(f64::NAN)
}

/// Runs every built-in check.
pub fn checks() -> Vec<Check> {
    let mut all = critical_flow_checks();
    all.extend(rating_checks());
    all.extend(uncertainty_checks());
    all.extend(tailwater_checks());
    all.extend(standard_checks());
    all
}

/// The standard structures (docs/references.md S17–S19).
fn standard_checks() -> Vec<Check> {
    use crate::rating::standard::{rectangular_plate_m3s, triangular_profile_cd, v_notch_m3s, CFS_M3S, FOOT_M};
    use crate::rating::ParshallSize;
    let parshall = |name: &str, ha_ft: f64| {
        ParshallSize::from_name(name).map_or(f64::NAN, |s| s.discharge_m3s(ha_ft * FOOT_M) / CFS_M3S)
    };
    vec![
        check(
            "rectangular thin-plate weir, full width b = 2 m, p = 0.4 m, h = 0.3 m (m³/s)",
            "Kindsvater–Carter, ISO 1438 §9.6; the fluids library's Q_weir_rectangular_full_Kindsvater_Carter: docs/references.md S17",
            0.641560300081563,
            rectangular_plate_m3s(0.3, 2.0, 2.0, 0.4).0,
            1e-9,
        ),
        check(
            "90° V-notch at h = 1 ft (ft³/s)",
            "USBR Water Measurement Manual ch. 7: Q = 2.49·h^2.48 gives 2.490 ft³/s; Kindsvater–Shen within 0.1 %: docs/references.md S17",
            2.49,
            v_notch_m3s(FOOT_M, 90.0).0 / CFS_M3S,
            1e-3,
        ),
        check(
            "Parshall flume 1 ft at Ha = 1 ft (ft³/s)",
            "ASTM D1941 / USBR Water Measurement Manual ch. 8: Q = 4·W·Ha^(1.522·W^0.026): docs/references.md S18",
            4.0,
            parshall("1ft", 1.0),
            1e-9,
        ),
        check(
            "Parshall flume 10 ft at Ha = 2 ft (ft³/s)",
            "ASTM D1941 / USBR Water Measurement Manual ch. 8: Q = (3.6875·W + 2.5)·Ha^1.6: docs/references.md S18",
            119.3627,
            parshall("10ft", 2.0),
            1e-6,
        ),
        check(
            "triangular-profile weir Cd at h = 0.10 m",
            "ISO 4360 (from memory): Cd = 1.163·(1 − 0.0003/h)^1.5, computed independently: docs/references.md S19",
            1.15777,
            triangular_profile_cd(0.10),
            5e-6,
        ),
    ]
}

/// Critical flow in simple sections (docs/references.md C1, C2).
fn critical_flow_checks() -> Vec<Check> {
    let rect = Section::Rectangle { width_m: 1.0 };
    let trap = Section::Trapezoid {
        bottom_width_m: 2.0,
        side_slope: 1.5,
    };
    let circle = Section::Circle { diameter_m: 1.0 };
    let yc_rect = first_critical(&rect, 0.3);
    vec![
        check(
            "critical depth, rectangle, q = 0.3 m²/s (m)",
            "energy equation and critical condition (Chow 1959 ch. 3), computed independently: docs/references.md C1",
            0.2093665410,
            yc_rect,
            1e-9,
        ),
        check(
            "critical specific energy, same (m)",
            "E_c = 1.5 y_c (Chow 1959 ch. 3), computed independently: docs/references.md C1",
            0.3140498115,
            specific_energy_m(&rect, yc_rect, 0.3, 1.0, G),
            1e-9,
        ),
        check(
            "subcritical alternate depth at E = 1 m (m)",
            "specific-energy equation (Chow 1959 ch. 3), computed independently: docs/references.md C1",
            0.9953684743,
            alternate_depths_m(&rect, 1.0, 0.3, 1.0, G).map_or(f64::NAN, |a| a.subcritical_m),
            1e-9,
        ),
        check(
            "critical depth, trapezoid b = 2 m, z = 1.5, Q = 5 m³/s (m)",
            "critical condition Q²T/gA³ = 1 (Chow 1959 ch. 4), computed independently: docs/references.md C1",
            0.7143239931,
            first_critical(&trap, 5.0),
            1e-9,
        ),
        check(
            "critical depth, circle D = 1 m, Q = 0.5 m³/s (m)",
            "critical condition Q²T/gA³ = 1 (Chow 1959 ch. 4), computed independently: docs/references.md C1",
            0.3988767311,
            first_critical(&circle, 0.5),
            1e-9,
        ),
        check(
            "ideal discharge, circle D = 1 m at H = 0.8 m (m³/s)",
            "E_c = y_c + A_c/2B_c (Clemmens et al. 2001 ch. 6), computed independently: docs/references.md C2",
            0.9822876420,
            critical_at_energy(&circle, 0.8, 1.0, G).discharge_m3s,
            1e-9,
        ),
        check(
            "90° V at H = 0.3 m, (16/25)√(2g/5)·H^2.5 (m³/s)",
            "closed form for a triangular control (Henderson 1966 ch. 2): docs/references.md C1",
            0.0624846648,
            critical_at_energy(&Section::Triangle { side_slope: 1.0 }, 0.3, 1.0, G).discharge_m3s,
            1e-9,
        ),
    ]
}

/// Ratings with approach velocity, ideal and by ISO 4359's own formula (docs/references.md C2, C3).
fn rating_checks() -> Vec<Check> {
    let fixed = rect_model(1.0, 1.0, 0.3, 1.0, LossMethod::FixedCd(1.0));
    let iso = rect_model(
        0.5,
        1.0,
        0.1,
        1.0,
        LossMethod::Iso4359 {
            displacement_thickness_m: 0.003,
        },
    );
    vec![
        check(
            "rectangle Cd = 1 with approach velocity, h1 = 0.3 m (m³/s)",
            "energy equation with approach velocity (Henderson 1966 ch. 2), computed independently: docs/references.md C2",
            0.2978773982,
            fixed.and_then(|m| m.discharge_m3s(0.3).ok()).unwrap_or(f64::NAN),
            1e-9,
        ),
        check(
            "ISO 4359 rectangular throat, coefficient = \"iso-4359\", h1 = 0.2 m (m³/s)",
            "ISO 4359 rectangular-throat formulas (Cd = (1 − 0.006 L/b)(1 − 0.003 L/h)^1.5, from memory), computed independently: docs/references.md C3",
            0.0754155493,
            iso.and_then(|m| m.discharge_m3s(0.2).ok()).unwrap_or(f64::NAN),
            1e-9,
        ),
    ]
}

/// The uncertainty of one reading of docs/references.md C4's flume.
fn uncertainty_checks() -> Vec<Check> {
    let flume = rect_model(0.5, 1.0, 0.1, 1.0, LossMethod::FixedCd(0.9658535721));
    let gum = flume.as_ref().and_then(|m| {
        let spec = UncertaintySpec {
            coefficient_pct: Some(2.0),
            zero_mm: Some(1.0),
            dimension_pct: Some(0.2),
            head_mm: Some(2.0),
            distributions: [
                InputDistribution::Normal,
                InputDistribution::Normal,
                InputDistribution::Rectangular,
                InputDistribution::Normal,
            ],
            coverage_factor: 2.0,
        };
        let inputs = Inputs::from_station(&spec, m.structure());
        GumModel::new(m, inputs).ok().and_then(|g| g.point(0.2).ok())
    });
    let source = "JCGM 100:2008 §5.1.3 sensitivities, computed independently: docs/references.md C4";
    vec![
        check(
            "sensitivity of Q to Cd with Cv solved",
            source,
            1.04994,
            gum.map_or(f64::NAN, |p| p.sensitivity_coefficient()),
            1e-4,
        ),
        check(
            "sensitivity of Q to h with Cv solved",
            source,
            1.51665,
            gum.map_or(f64::NAN, |p| p.sensitivity_head(0.2)),
            1e-4,
        ),
        check(
            "GUM u_c(Q)/Q (%)",
            "JCGM 100:2008 §5.1.2 law of propagation, computed independently: docs/references.md C4",
            1.3712,
            gum.map_or(f64::NAN, |p| p.u_rel * 100.0),
            1e-4,
        ),
    ]
}

/// The exit energy balance and Villemonte's ratio (docs/references.md C6, C7).
fn tailwater_checks() -> Vec<Check> {
    let h1 = 0.25;
    let vc = (G * h1 * 2.0 / 3.0).sqrt();
    let q = 0.5 * (h1 * 2.0 / 3.0) * vc;
    let tw = Tailwater::new(
        TailwaterSpec::Channel {
            bed_below_crest_m: 0.1,
            section: Section::Rectangle { width_m: 1.0 },
            manning_n: 0.03,
            bed_slope: 0.001,
        },
        G,
    );
    vec![
        check(
            "modular limit, ξ = 1.0, friction ignored",
            "exit energy balance of Bos & Reinink 1981, computed independently: docs/references.md C6",
            0.8261,
            max_tailwater_energy_m(h1, vc, 1.0, 0.0, q, Some(&tw), G) / h1,
            1e-4,
        ),
        check(
            "Villemonte Qs/Q at S = 0.8, n = 1.5",
            "Villemonte 1947, Engineering News-Record 139: docs/references.md C7",
            0.6163070,
            villemonte_ratio(0.8, 1.5),
            1e-6,
        ),
    ]
}

#[cfg(test)]
mod tests {
    #[test]
    fn every_built_in_check_passes() {
        for c in super::checks() {
            assert!(c.passed(), "{}: got {}, expected {}", c.what, c.got, c.expected);
        }
    }
}
