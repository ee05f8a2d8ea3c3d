//! `flumerate structures`: the structure families flumerate rates and the standard sizes, with
//! their published sources; one family or one Parshall size in detail.

use std::fmt::Write as _;

use crate::rating::standard::{
    ParshallSpec, CFS_M3S, FOOT_M, KC_KH_M, KC_LINES, KS_TABLE, SQUARE_EDGED_C, V_NOTCH_ANGLE_RANGE_DEG,
};
use crate::rating::{ParshallSize, StandardRule};

/// The names `flumerate structures NAME` takes besides `parshall-SIZE`.
pub const FAMILY_NAMES: [&str; 5] = [
    "critical-flow",
    "thin-plate-weir",
    "square-edged-weir",
    "triangular-profile-weir",
    "parshall",
];

/// What `flumerate structures` prints: every family and every Parshall size.
pub fn overview() -> String {
    let mut t = String::from("structure families flumerate rates (station file: [control] structure = ...)\n\n");
    let rows = [
        ("flume", "critical-flow", "long-throated flume, any throat shape: critical-flow theory with the boundary-layer method after ISO 4359 (Clemmens, Wahl, Bos & Replogle 2001)"),
        ("weir", "critical-flow", "round-nosed broad-crested weir (upstream_edge = \"rounded\"): the same method (ISO 4374, Bos 1989 §4.1)"),
        ("weir", "square-edged-weir", "square-edged broad-crested weir (upstream_edge = \"square\"): ISO 3846, C = 0.848, Cv solved exactly"),
        ("thin-plate-weir", "thin-plate-weir", "rectangular (Kindsvater–Carter), V-notch 20°–100° (Kindsvater–Shen), Cipoletti: ISO 1438:2017, USBR Water Measurement Manual ch. 7"),
        ("triangular-profile-weir", "triangular-profile-weir", "1:2/1:5 triangular-profile weir: ISO 4360, Cd = 1.163·(1 − 0.0003/h)^1.5, Cv solved exactly"),
        ("parshall", "parshall-SIZE", "Parshall flume of a standard size: Q = C·Ha^n, ASTM D1941, ISO 9826, USBR Water Measurement Manual ch. 8"),
    ];
    let _ = writeln!(
        t,
        "{:<24} {:<24} method and source",
        "structure =", "details: structures NAME"
    );
    for (key, name, what) in rows {
        let _ = writeln!(t, "{key:<24} {name:<24} {what}");
    }
    t.push_str("\nParshall flumes, standard sizes (size = ... in the station file; Q = C·Ha^n in ft and ft³/s):\n\n");
    let _ = writeln!(
        t,
        "{:<8} {:>9} {:>8} {:>7} {:>6} {:>17} {:>19}",
        "size", "W mm", "C (US)", "n", "Hb/Ha", "Ha range m", "Q range m³/s"
    );
    for s in ParshallSize::all() {
        let p = s.spec();
        let (lo, hi) = s.head_range_m();
        let _ = writeln!(
            t,
            "{:<8} {:>9.1} {:>8.4} {:>7.4} {:>6.2} {:>8.3} – {:<6.3} {:>8.5} – {:<8.4}",
            p.name,
            s.throat_m() * 1000.0,
            p.coefficient_us,
            p.exponent,
            p.transition,
            lo,
            hi,
            s.discharge_m3s(lo),
            s.discharge_m3s(hi)
        );
    }
    t.push_str(
        "\nHead ranges from memory of the USBR Water Measurement Manual ch. 8 tables: confirm against the standard.\n",
    );
    t.push_str(CAUTION);
    t
}

const CAUTION: &str = "\nPublished ratings hold for structures built and kept to the standard: confirm by field gaugings, \
and follow local codes and licensed professional practice where flows are used for compliance, billing or water rights.\n";

/// The details of one family or Parshall size, or `None` for an unknown name.
pub fn details(name: &str) -> Option<String> {
    let key = name.trim().to_ascii_lowercase();
    if let Some(size) = key.strip_prefix("parshall-").and_then(ParshallSize::from_name) {
        return Some(parshall(size));
    }
    let mut t = String::new();
    match key.as_str() {
        "parshall" => return Some(overview()),
        "thin-plate-weir" => thin_plate(&mut t),
        "square-edged-weir" => {
            let (u, us) = StandardRule::SquareEdged.coefficient_u95();
            let (ml, mls) = StandardRule::SquareEdged.modular_limit();
            let _ = writeln!(t, "square-edged broad-crested weir, ISO 3846 (values from memory)\n");
            let _ = writeln!(t, "Q = (2/3)^1.5·√g·C·Cv·b·h1^1.5 with C = {SQUARE_EDGED_C} for 0.08 ≤ h1/L ≤ 0.33; Cv solved exactly from the approach section");
            let _ = writeln!(t, "above h1/L = 0.33 the standard corrects C for a short crest; flumerate does not, and marks those rows outside the limits");
            let _ = writeln!(t, "coefficient uncertainty: ±{u} % ({us})\nmodular limit: {ml} ({mls})");
            let _ = writeln!(t, "station file: [control] structure = \"weir\", upstream_edge = \"square\", shape = \"rectangle\", width, length; [approach] with sill_height");
        }
        "triangular-profile-weir" => {
            let (u, us) = StandardRule::TriangularProfile.coefficient_u95();
            let (ml, mls) = StandardRule::TriangularProfile.modular_limit();
            let _ = writeln!(
                t,
                "triangular-profile weir (1:2 upstream, 1:5 downstream), ISO 4360 (values from memory)\n"
            );
            let _ = writeln!(
                t,
                "Q = (2/3)^1.5·√g·Cd·Cv·b·h1^1.5 with Cd = 1.163·(1 − 0.0003/h1)^1.5 (h1 in m); Cv solved exactly"
            );
            let _ = writeln!(t, "coefficient uncertainty: ±{u} % ({us})\nmodular limit: {ml} ({mls})");
            let _ = writeln!(t, "drowned flow needs the crest tapping of ISO 4360, which flumerate does not read: rows beyond the modular limit are flagged submerged");
            let _ = writeln!(t, "station file: [control] structure = \"triangular-profile-weir\", width; [approach] with shape, width, sill_height");
        }
        "critical-flow" => {
            let _ = writeln!(t, "long-throated flumes and round-nosed broad-crested weirs, rated from their surveyed dimensions by critical-flow theory:");
            let _ = writeln!(t, "energy balance from the gauging section to the control, E_c = y_c + A_c/(2·B_c) for any throat shape, the boundary layer after ISO 4359 (δ* = 0.003·L),");
            let _ = writeln!(t, "the approach velocity solved exactly (Bos 1989; Clemmens, Wahl, Bos & Replogle 2001); see README, \"Method and sources\".");
        }
        _ => return None,
    }
    t.push_str(CAUTION);
    Some(t)
}

fn thin_plate(t: &mut String) {
    let _ = writeln!(
        t,
        "thin-plate weirs, ISO 1438:2017 (coefficients from memory unless marked)\n"
    );
    let _ = writeln!(t, "rectangular, Kindsvater–Carter (§9.6): Q = Ce·(2/3)·√(2g)·(b + kb)·(h + kh)^1.5, kh = {KC_KH_M} m, Ce = a + c·h/p");
    let _ = writeln!(t, "{:>6} {:>7} {:>8} {:>8}", "b/B", "a", "c", "kb mm");
    for (r, a, c, kb) in KC_LINES {
        let _ = writeln!(t, "{r:>6.1} {a:>7.3} {c:>8.4} {:>8.1}", kb * 1000.0);
    }
    let _ = writeln!(
        t,
        "\nV-notch, Kindsvater–Shen (§10.5), fully contracted, {}° to {}°: Q = Ce·(8/15)·√(2g)·tan(θ/2)·(h + kh)^2.5",
        V_NOTCH_ANGLE_RANGE_DEG.0, V_NOTCH_ANGLE_RANGE_DEG.1
    );
    let _ = writeln!(t, "{:>6} {:>7} {:>8}", "θ °", "Ce", "kh mm");
    for [a, ce, kh] in KS_TABLE {
        let _ = writeln!(t, "{a:>6.0} {ce:>7.3} {:>8.2}", kh * 1000.0);
    }
    let _ = writeln!(
        t,
        "(90°: Ce = 0.578, kh = 0.85 mm as published in USBR Water Measurement Manual ch. 7)"
    );
    let _ = writeln!(t, "\nCipoletti (trapezoidal, 1:4 sides): Q = 3.367·L·h^1.5 (ft, ft³/s) = 1.859·b·h^1.5 (m, m³/s), USBR Water Measurement Manual ch. 7");
    let _ = writeln!(t, "\nmodular: the nappe springs clear and is aerated, the tailwater below the crest (USBR: at least 0.2 ft below)");
    let _ = writeln!(t, "station file: [control] structure = \"thin-plate-weir\", shape = \"triangle\" | \"rectangle\" | \"cipoletti\", notch_angle_deg or width, plate_height; [approach] shape, width");
}

/// Feet as feet and inches, to the 1/16 in.
fn ft_in(ft: f64) -> String {
    if ft.is_nan() {
        return "—".into();
    }
    let sixteenths = (ft * 12.0 * 16.0).round() as i64;
    let (feet, rest) = (sixteenths / (12 * 16), sixteenths % (12 * 16));
    let inches = rest as f64 / 16.0;
    if feet == 0 {
        format!("{inches} in")
    } else {
        format!("{feet} ft {inches} in")
    }
}

fn parshall(size: ParshallSize) -> String {
    let p: ParshallSpec = size.spec();
    let (lo, hi) = size.head_range_m();
    let mut t = String::new();
    let _ = writeln!(
        t,
        "Parshall flume, {} throat (W = {:.1} mm)\n",
        p.name,
        size.throat_m() * 1000.0
    );
    let c_si = p.coefficient_us * CFS_M3S / FOOT_M.powf(p.exponent);
    let _ = writeln!(
        t,
        "free flow: Q = {}·Ha^{:.4} (Ha in ft, Q in ft³/s) = {:.4}·Ha^{:.4} (Ha in m, Q in m³/s); ASTM D1941, ISO 9826, USBR Water Measurement Manual ch. 8",
        p.coefficient_us, p.exponent, c_si, p.exponent
    );
    let _ = writeln!(
        t,
        "free-flow range: Ha {lo:.3} m to {hi:.3} m, Q {:.5} to {:.4} m³/s (ranges from memory)",
        size.discharge_m3s(lo),
        size.discharge_m3s(hi)
    );
    let _ = writeln!(t, "transition submergence Hb/Ha = {:.2}: above it the flow is submerged; flumerate flags those rows and applies no correction", p.transition);
    let _ = writeln!(
        t,
        "head Ha measured at the gauge point, 2/3·A along the converging wall upstream of the crest\n"
    );
    let d = p.dims_ft;
    let _ = writeln!(t, "standard dimensions (from memory of the USBR Water Measurement Manual ch. 8 table; check against ASTM D1941 before accepting a survey):");
    let rows = [
        ("W", "throat width", p.throat_ft),
        ("A", "length of the converging wall", d.a),
        ("2/3 A", "gauge point from the crest, along the wall", d.gauge),
        ("B", "axial length of the converging section", d.b),
        ("C", "outlet width", d.c),
        ("D", "entrance width", d.d),
        ("E", "wall depth", d.e),
        ("F", "throat length", d.f),
        ("G", "length of the diverging section", d.g),
        ("K", "outlet floor above the throat's lowest point", d.k),
        ("N", "depth of the throat floor below the crest", d.n),
    ];
    let _ = writeln!(t, "{:<6} {:<46} {:>14} {:>10}", "", "", "ft-in", "mm");
    for (k, what, ft) in rows {
        let mm = if ft.is_nan() {
            "—".to_string()
        } else {
            format!("{:.0}", ft * FOOT_M * 1000.0)
        };
        let _ = writeln!(t, "{k:<6} {what:<46} {:>14} {mm:>10}", ft_in(ft));
    }
    t.push_str(CAUTION);
    t
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn every_size_and_family_has_details() {
        for s in ParshallSize::all() {
            let name = format!("parshall-{}", s.spec().name);
            let d = details(&name).expect("a size");
            assert!(d.contains("transition submergence"), "{name}");
        }
        for f in FAMILY_NAMES {
            assert!(details(f).is_some(), "{f}");
        }
        assert!(details("parshall-11in").is_none());
        assert_eq!(ft_in(1.5), "1 ft 6 in");
        assert_eq!(ft_in(9.0 / 12.0), "9 in");
    }
}
