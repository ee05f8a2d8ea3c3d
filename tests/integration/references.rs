//! The main computations against published or independently computed values. Each check names
//! its source: "docs/references.md Cn (independent computation)" values were computed by an
//! independent numpy/scipy program from first principles, as that file explains.

use crate::common::{flumerate, rate_one, rel, station_file, station_text};
use serde_json::Value;

const G: f64 = 9.80665;
const FT: f64 = 0.3048;
const CFS: f64 = 0.028316846592;

fn section_json(args: &[&str]) -> Value {
    let out = flumerate()
        .arg("section")
        .args(args)
        .args(["--format", "json"])
        .output()
        .expect("run");
    assert!(out.status.success(), "{}", String::from_utf8_lossy(&out.stderr));
    serde_json::from_slice(&out.stdout).expect("json")
}

fn num(v: &Value, key: &str) -> f64 {
    v[key].as_f64().unwrap_or_else(|| panic!("key {key} missing in {v}"))
}

/// One `section` check: shape dimensions (SI), shape, Q (m³/s), E for the alternate depths (m),
/// and (key, expected SI value, relative tolerance) triples.
struct SectionCase {
    dims: Vec<(&'static str, f64)>,
    shape: &'static str,
    q: f64,
    e: f64,
    checks: Vec<(&'static str, f64, f64)>,
}

fn section_cases() -> Vec<SectionCase> {
    vec![
        // docs/references.md C1 (independent computation): rectangle q = 0.3 m²/s (b = 1 m)
        SectionCase {
            dims: vec![("--width", 1.0)],
            shape: "rectangle",
            q: 0.3,
            e: 1.0,
            checks: vec![
                ("critical_depth", 0.2093665410, 1e-6),
                ("critical_energy", 0.3140498115, 1e-6),
                ("sub", 0.9953684743, 1e-6),
                ("super", 0.0702527733, 1e-6),
            ],
        },
        // docs/references.md C1 (independent computation): trapezoid b = 2 m, z = 1.5, Q = 5 m³/s, E = 1.5 m
        SectionCase {
            dims: vec![("--width", 2.0), ("--side-slope", 1.5)],
            shape: "trapezoid",
            q: 5.0,
            e: 1.5,
            checks: vec![
                ("critical_depth", 0.7143239931, 1e-6),
                ("critical_energy", 0.9791141181, 1e-6),
                ("critical_top_width", 4.1429720, 1e-6),
                // the table gives these to 7 significant figures
                ("sub", 1.4663892, 1e-6),
                ("super", 0.4133741, 1e-6),
            ],
        },
        // docs/references.md C1 (independent computation): circle D = 1 m, Q = 0.5 m³/s
        SectionCase {
            dims: vec![("--diameter", 1.0)],
            shape: "circle",
            q: 0.5,
            e: 1.0,
            checks: vec![
                ("critical_depth", 0.3988767311, 1e-6),
                ("critical_energy", 0.5480951, 1e-6),
                ("critical_top_width", 0.9793346, 1e-6),
            ],
        },
    ]
}

#[test]
fn section_reproduces_reference_sections_in_si_and_us_units() {
    for SectionCase {
        dims,
        shape,
        q,
        e,
        checks,
    } in section_cases()
    {
        for us in [false, true] {
            let (lf, qf, suffix) = if us {
                (1.0 / FT, 1.0 / CFS, "ft")
            } else {
                (1.0, 1.0, "m")
            };
            let mut args: Vec<String> = vec!["--shape".into(), shape.into()];
            for (flag, v) in &dims {
                let v = if *flag == "--side-slope" { *v } else { v * lf };
                args.push((*flag).into());
                args.push(format!("{v}"));
            }
            args.extend([
                "--discharge".into(),
                format!("{}", q * qf),
                "--energy".into(),
                format!("{}", e * lf),
                "--units".into(),
                if us { "us" } else { "si" }.into(),
            ]);
            let refs: Vec<&str> = args.iter().map(String::as_str).collect();
            let doc = section_json(&refs);
            for (key, expected_si, tol) in &checks {
                let got = match *key {
                    "sub" => doc[format!("alternate_depths_{suffix}")]["subcritical"]
                        .as_f64()
                        .expect("sub"),
                    "super" => doc[format!("alternate_depths_{suffix}")]["supercritical"]
                        .as_f64()
                        .expect("super"),
                    k => num(&doc, &format!("{k}_{suffix}")),
                };
                let expected = expected_si * lf;
                assert!(
                    rel(got, expected) <= *tol,
                    "{shape} {key} ({suffix}): got {got}, expected {expected} (rel {:e})",
                    rel(got, expected)
                );
            }
        }
    }
}

#[test]
fn section_froude_numbers_at_the_alternate_depths() {
    // docs/references.md C1 (independent computation): rectangle q = 0.3, E = 1.0: Fr = 0.096468 (sub), 5.14477 (super);
    // the table gives 5 and 6 significant figures
    let sub = section_json(&[
        "--shape",
        "rectangle",
        "--width",
        "1",
        "--discharge",
        "0.3",
        "--depth",
        "0.9953684743",
    ]);
    assert!(rel(num(&sub, "froude"), 0.096468) < 1e-5);
    let sup = section_json(&[
        "--shape",
        "rectangle",
        "--width",
        "1",
        "--discharge",
        "0.3",
        "--depth",
        "0.0702527733",
    ]);
    assert!(rel(num(&sup, "froude"), 5.14477) < 1e-5);
}

/// The gauged head h1 at which a control with ideal (H, Q) sits, for an approach of area A1(h1):
/// h1 = H − Q²/(2g·A1²), solved by plain fixed-point iteration here, independently of flumerate.
fn gauged_head(energy_m: f64, q: f64, approach_area: impl Fn(f64) -> f64) -> f64 {
    let mut h = energy_m;
    for _ in 0..200 {
        let a = approach_area(h);
        h = energy_m - q * q / (2.0 * G * a * a);
    }
    h
}

#[test]
fn rate_with_cd_one_reproduces_ideal_ratings_with_approach_velocity() {
    let dir = tempfile::tempdir().expect("tempdir");
    // docs/references.md C2 (independent energy-balance root): rectangle, exact Cv
    let rect_cases = [
        (1.0, 1.0, 0.3, 0.3, 0.2978773982, 1.0634870860),
        (0.5, 1.0, 0.1, 0.2, 0.0782226132, 1.0261098904),
        (1.0, 1.0, 0.15, 0.3, 0.3160434127, 1.1283437081),
    ];
    for (i, (b, big_b, p, h, q, cv)) in rect_cases.into_iter().enumerate() {
        let text = station_text(
            &format!("shape = \"rectangle\"\nwidth = {b}\nlength = 1.0"),
            &format!("shape = \"rectangle\"\nwidth = {big_b}\nsill_height = {p}"),
            "1.0",
            (0.05, 0.5),
        );
        let st = station_file(dir.path(), &format!("rect{i}.toml"), &text);
        let row = rate_one(&st, h, "si");
        assert!(rel(num(&row, "discharge_m3s"), q) < 1e-6, "rect {i}: {row}");
        assert!(rel(num(&row, "cv"), cv) < 1e-6, "rect {i}: {row}");
    }

    // Other throats: (H, Q) of the loss-free control from docs/references.md C2 (independent computation),
    // placed behind a 2 m wide rectangular approach with a 0.5 m sill; h1 from the energy
    // equation above. The triangle value is the closed form (16/25)·√(2g/5)·H^2.5 for a 90° V,
    // docs/references.md C1.
    let approach = "shape = \"rectangle\"\nwidth = 2.0\nsill_height = 0.5";
    let trapezoid = "shape = \"trapezoid\"\nwidth = 0.3\nside_slope = 1.0\nlength = 1.0";
    let trapezoid_points =
        "shape = \"points\"\npoints = [[-1.15, 1.0], [-0.15, 0.0], [0.15, 0.0], [1.15, 1.0]]\nlength = 1.0";
    let cases: Vec<(&str, &str, f64, f64)> = vec![
        ("trapezoid", trapezoid, 0.25, 0.1013254886),
        ("trapezoid", trapezoid, 0.50, 0.3964415928),
        ("trapezoid-points", trapezoid_points, 0.25, 0.1013254886),
        ("trapezoid-points", trapezoid_points, 0.50, 0.3964415928),
        (
            "circle",
            "shape = \"circle\"\ndiameter = 1.0\nlength = 1.5",
            0.40,
            0.2778286580,
        ),
        (
            "circle",
            "shape = \"circle\"\ndiameter = 1.0\nlength = 1.5",
            0.80,
            0.9822876420,
        ),
        (
            "triangle",
            "shape = \"triangle\"\nside_slope = 1.0\nlength = 1.0",
            0.30,
            0.0624846648,
        ),
    ];
    for (i, (label, control, energy, q)) in cases.into_iter().enumerate() {
        let st = station_file(
            dir.path(),
            &format!("ideal{i}.toml"),
            &station_text(control, approach, "1.0", (0.05, 0.8)),
        );
        let h1 = gauged_head(energy, q, |h| 2.0 * (h + 0.5));
        assert!(h1 < energy, "the approach velocity head must be positive");
        let row = rate_one(&st, h1, "si");
        let got = num(&row, "discharge_m3s");
        assert!(rel(got, q) < 1e-6, "{label} at H = {energy}: got {got}, expected {q}");
        assert!(rel(num(&row, "energy_head_m"), energy) < 1e-6, "{label}: {row}");
    }
}

#[test]
fn rate_boundary_layer_reproduces_iso_4359_rectangular_examples() {
    // docs/references.md C3 (ISO 4359's rectangular-throat formulas, computed independently:
    // Cd = (1 − 2δ*/b)(1 − δ*/h)^1.5, δ* = 0.003 L, Cv from §1.1)
    let dir = tempfile::tempdir().expect("tempdir");
    let cases = [
        (0.5, 1.0, 0.20, 1.0, 0.1, 0.0754155493),
        (0.5, 1.0, 0.05, 1.0, 0.1, 0.0086236095),
        (1.0, 2.0, 0.50, 2.0, 0.3, 0.5972580394),
        (0.25, 0.75, 0.30, 0.6, 0.0, 0.0706812236),
    ];
    for (i, (b, l, h, big_b, p, q)) in cases.into_iter().enumerate() {
        let st = station_file(
            dir.path(),
            &format!("iso{i}.toml"),
            &station_text(
                &format!("shape = \"rectangle\"\nwidth = {b}\nlength = {l}"),
                &format!("shape = \"rectangle\"\nwidth = {big_b}\nsill_height = {p}"),
                "\"boundary-layer\"",
                (0.05, 0.5),
            ),
        );
        let got = num(&rate_one(&st, h, "si"), "discharge_m3s");
        assert!(
            rel(got, q) < 0.0015,
            "ISO 4359 example {i}: got {got}, expected {q} ({:.4} %)",
            rel(got, q) * 100.0
        );
    }
}

#[test]
fn points_sections_drawn_as_built_in_shapes_rate_identically() {
    let dir = tempfile::tempdir().expect("tempdir");
    let approach = "shape = \"trapezoid\"\nwidth = 1.2\nside_slope = 1.0\nsill_height = 0.25";
    let pairs = [
        (
            "shape = \"rectangle\"\nwidth = 0.5\nlength = 0.9",
            "shape = \"points\"\npoints = [[-0.25, 0.9], [-0.25, 0.0], [0.25, 0.0], [0.25, 0.9]]\nlength = 0.9",
        ),
        (
            "shape = \"trapezoid\"\nwidth = 0.3\nside_slope = 1.5\nlength = 0.9",
            "shape = \"points\"\npoints = [[-1.5, 0.9], [-0.15, 0.0], [0.15, 0.0], [1.5, 0.9]]\nlength = 0.9",
        ),
    ];
    for (i, (built_in, points)) in pairs.into_iter().enumerate() {
        for coefficient in ["\"boundary-layer\"", "0.97"] {
            let a = station_file(
                dir.path(),
                &format!("b{i}.toml"),
                &station_text(built_in, approach, coefficient, (0.05, 0.6)),
            );
            let b = station_file(
                dir.path(),
                &format!("p{i}.toml"),
                &station_text(points, approach, coefficient, (0.05, 0.6)),
            );
            let (ra, rb) = (
                crate::common::rate_json(&a, &["--step", "0.01"]),
                crate::common::rate_json(&b, &["--step", "0.01"]),
            );
            let (ra, rb) = (
                ra["rows"].as_array().expect("rows"),
                rb["rows"].as_array().expect("rows"),
            );
            assert_eq!(ra.len(), rb.len());
            for (x, y) in ra.iter().zip(rb) {
                let (qa, qb) = (num(x, "discharge_m3s"), num(y, "discharge_m3s"));
                assert!(
                    rel(qb, qa) < 1e-9,
                    "pair {i} {coefficient} at h = {}: {qa} vs {qb}",
                    x["head_m"]
                );
            }
        }
    }
}
