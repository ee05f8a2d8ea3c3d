//! Standard structures (thin-plate weirs, Parshall flumes, ISO 3846 and ISO 4360 weirs): their
//! ratings against published or independently computed values, each naming its source; the
//! families through check, rate, tailwater and convert; bad inputs named, never a panic.

use crate::common::{flumerate, rate_one, rel, station_file};

/// 1 ft³/s in m³/s, exactly.
const CFS: f64 = 0.028316846592;
/// 1 ft in m, exactly.
const FT: f64 = 0.3048;

fn thin_plate(dir: &std::path::Path, control: &str, width_b: f64) -> std::path::PathBuf {
    station_file(
        dir,
        "plate.toml",
        &format!(
            "name = \"test plate\"\nlength_unit = \"m\"\n[control]\nstructure = \"thin-plate-weir\"\n{control}\n[approach]\nshape = \"rectangle\"\nwidth = {width_b}\n[range]\nmin_head = 0.05\nmax_head = 0.3\n"
        ),
    )
}

fn q_at(station: &std::path::Path, head_m: f64) -> f64 {
    rate_one(station, head_m, "si")["discharge_m3s"]
        .as_f64()
        .expect("discharge")
}

#[test]
fn rectangular_full_width_plate_matches_kindsvater_carter() {
    let dir = tempfile::tempdir().expect("tempdir");
    let s = thin_plate(
        dir.path(),
        "shape = \"rectangle\"\nwidth = 2.0\nplate_height = 0.4",
        2.0,
    );
    // fluids 1.3.1, Q_weir_rectangular_full_Kindsvater_Carter(h1=0.3, h2=0.4, b=2) (docs/references.md S17)
    assert!(rel(q_at(&s, 0.3), 0.641560300081563) < 1e-9);
    // hand-computed from ISO 1438's b/B = 1 line, Ce = 0.602 + 0.075 h/p, b − 0.001 m, h + 0.001 m
    // (the same formula as the `fluids` function; docs/references.md S17)
    for (h, q) in [
        (0.1, 0.11759684211693493),
        (0.2, 0.34011947937755366),
        (0.5, 1.456151877432459),
        (0.8, 3.181731190780584),
    ] {
        assert!(rel(q_at(&s, h), q) < 1e-9, "h = {h}");
    }
    // USBR Water Measurement Manual ch. 7, full width: Q = (3.22 + 0.40 h/p)(L − 0.003)(h + 0.003)^1.5
    // in ft and ft³/s; within the rounding of its coefficients (0.05 %)
    let (b, p, h) = (2.0 / FT, 0.4 / FT, 0.3 / FT);
    let usbr = (3.22 + 0.40 * h / p) * (b - 0.003) * (h + 0.003_f64).powf(1.5) * CFS;
    assert!(rel(q_at(&s, 0.3), usbr) < 5e-4);
}

#[test]
fn ninety_degree_v_notch_matches_kindsvater_shen_and_the_usbr_cone_formula() {
    let dir = tempfile::tempdir().expect("tempdir");
    let s = thin_plate(
        dir.path(),
        "shape = \"triangle\"\nnotch_angle_deg = 90\nplate_height = 1.0",
        2.0,
    );
    // Kindsvater–Shen, Ce = 0.578 and kh = 0.85 mm (USBR WMM ch. 7), computed independently in
    // Python (docs/references.md S17)
    for (h, q) in [
        (0.05, 0.000796030),
        (0.10, 0.004409523),
        (0.20, 0.024682065),
        (0.3048, 0.070511979),
        (0.38, 0.122204388),
    ] {
        assert!(rel(q_at(&s, h), q) < 2e-6, "h = {h}");
    }
    // USBR WMM ch. 7, 90° notch: Q = 2.49·h^2.48 (ft, ft³/s): 2.490 ft³/s at 1 ft, within 0.1 %
    assert!(rel(q_at(&s, FT), 2.49 * CFS) < 1e-3);
    // and within 1 % over 0.1–0.38 m (the two formulas are fits to the same experiments)
    for h in [0.1, 0.2, 0.38] {
        let cone = 2.49 * (h / FT).powf(2.48) * CFS;
        assert!(rel(q_at(&s, h), cone) < 0.01, "h = {h}");
    }
}

#[test]
fn cipoletti_matches_the_usbr_equation() {
    let dir = tempfile::tempdir().expect("tempdir");
    // USBR WMM ch. 7: Q = 3.367·L·h^1.5 (ft, ft³/s), evaluated by hand in ft and converted
    for (l_ft, h_ft, q) in [
        (1.5, 0.3, 0.02349963655466068),
        (1.5, 0.5, 0.05056316723229326),
        (3.0, 0.8, 0.20466531093252968),
        (4.0, 1.2, 0.5013255798327612),
        (2.0, 0.4, 0.04824007641134833),
    ] {
        let s = thin_plate(
            dir.path(),
            &format!("shape = \"cipoletti\"\nwidth = {}\nplate_height = 1.0", l_ft * FT),
            3.0,
        );
        assert!(rel(q_at(&s, h_ft * FT), q) < 1e-9, "L = {l_ft} ft, h = {h_ft} ft");
    }
}

fn parshall(dir: &std::path::Path, size: &str) -> std::path::PathBuf {
    station_file(
        dir,
        &format!("parshall-{size}.toml"),
        &format!(
            "name = \"test Parshall\"\nlength_unit = \"m\"\n[control]\nstructure = \"parshall\"\nsize = \"{size}\"\n"
        ),
    )
}

#[test]
fn parshall_sizes_match_their_published_equations() {
    let dir = tempfile::tempdir().expect("tempdir");
    // ASTM D1941 / USBR WMM ch. 8 free-flow equations evaluated by hand (docs/references.md S18)
    let cases = [
        ("1ft", 1.0, 4.000),                 // 4·W·Ha^(1.522·W^0.026) at Ha = 1 ft
        ("3in", 0.5, 0.339483),              // 0.992·Ha^1.547
        ("10ft", 2.0, 119.3627),             // (3.6875·W + 2.5)·Ha^1.6
        ("9in", 0.3 / FT, 0.08484688 / CFS), // 3.07·Ha^1.53
        ("20ft", 1.0 / FT, 14.449765 / CFS), // 76.25·Ha^1.6
    ];
    for (size, ha_ft, q_cfs) in cases {
        let s = parshall(dir.path(), size);
        let q = q_at(&s, ha_ft * FT) / CFS;
        assert!(rel(q, q_cfs) < 1e-6, "{size} at {ha_ft} ft: {q} ft³/s");
    }
    // Merkley 2005 (Utah State University course notes, "Flumes for open-channel flow measurement"):
    // a 2 ft flume passes 0.75 m³/s at hu = 0.66 m with Q = 1.429·hu^1.55 (SI), within 0.1 %
    let s = parshall(dir.path(), "2ft");
    assert!(rel(q_at(&s, 0.66), 0.75) < 1e-3);
    // Bos 1989 / ISO 9826 SI coefficients (from memory, docs/references.md S18), within their
    // four-figure rounding
    for (size, h, q) in [
        ("9in", 0.3, 0.5354 * 0.3f64.powf(1.53)),
        ("6ft", 0.5, 4.519 * 0.5f64.powf(1.595)),
    ] {
        let s = parshall(dir.path(), size);
        assert!(rel(q_at(&s, h), q) < 6e-4, "{size}");
    }
}

#[test]
fn square_edged_weir_follows_iso_3846_with_the_approach_velocity_solved() {
    let dir = tempfile::tempdir().expect("tempdir");
    let s = station_file(
        dir.path(),
        "square.toml",
        "name = \"t\"\nlength_unit = \"m\"\n[control]\nstructure = \"weir\"\nupstream_edge = \"square\"\nwidth = 1.0\nlength = 1.5\n[approach]\nshape = \"rectangle\"\nwidth = 1.0\nsill_height = 0.4\n[range]\nmin_head = 0.15\nmax_head = 0.45\n",
    );
    // C = 0.848 (ISO 3846, from memory), Cv from the closed iteration, computed independently
    // (docs/references.md S19)
    for (h, q) in [(0.15, 0.0850009), (0.30, 0.2449750), (0.45, 0.4580663)] {
        assert!(rel(q_at(&s, h), q) < 1e-6, "h = {h}");
    }
    // the same by fixed-point iteration of Cv = (H/h)^1.5, computed in Python for this test
    for (h, q) in [(0.2, 0.1316783321320215), (0.35, 0.31059655432957595)] {
        assert!(rel(q_at(&s, h), q) < 1e-9, "h = {h}");
    }
    // b = 1, p = 0.3, h = 0.2, B = 1: Q = 0.132815 m³/s with g = 9.81 (independent computation,
    // docs/references.md S19); Q scales with √g at a fixed Cv
    let s = station_file(
        dir.path(),
        "square2.toml",
        "name = \"t\"\nlength_unit = \"m\"\n[control]\nstructure = \"weir\"\nupstream_edge = \"square\"\nwidth = 1.0\nlength = 1.0\n[approach]\nshape = \"rectangle\"\nwidth = 1.0\nsill_height = 0.3\n[range]\nmin_head = 0.1\nmax_head = 0.3\n",
    );
    let expected = 0.132815 * (9.80665f64 / 9.81).sqrt();
    assert!(rel(q_at(&s, 0.2), expected) < 5e-6);
    // above h1/L = 0.33 the short-crest correction is not applied: those rows are marked
    let row = rate_one(&s, 0.34, "si");
    assert_eq!(row["valid"], false);
    assert!(row["note"].as_str().unwrap_or("").contains("0.08<=h1/L<=0.33"), "{row}");
}

#[test]
fn triangular_profile_weir_follows_iso_4360() {
    let dir = tempfile::tempdir().expect("tempdir");
    let s = station_file(
        dir.path(),
        "crump.toml",
        "name = \"t\"\nlength_unit = \"m\"\n[control]\nstructure = \"triangular-profile-weir\"\nwidth = 2.0\n[approach]\nshape = \"rectangle\"\nwidth = 2.0\nsill_height = 0.5\n[range]\nmin_head = 0.03\nmax_head = 1.0\n",
    );
    // Cd = 1.163·(1 − 0.0003/h)^1.5 (ISO 4360, from memory) at five heads, computed independently
    // (docs/references.md S19)
    for (h, cd) in [
        (0.03, 1.14560),
        (0.06, 1.15429),
        (0.10, 1.15777),
        (0.30, 1.16126),
        (0.50, 1.16195),
    ] {
        let row = rate_one(&s, h, "si");
        assert!(rel(row["cd"].as_f64().expect("cd"), cd) < 5e-6, "h = {h}");
    }
    // b = 2, p = 0.5, h = 0.4, B = 2: Q = 1.070610 m³/s with g = 9.81, Cv = 1.068372 (independent
    // computation, docs/references.md S19)
    let row = rate_one(&s, 0.4, "si");
    let expected = 1.070610 * (9.80665f64 / 9.81).sqrt();
    assert!(rel(row["discharge_m3s"].as_f64().expect("q"), expected) < 5e-6);
    assert!(rel(row["cv"].as_f64().expect("cv"), 1.068372) < 5e-6);
}

#[test]
fn a_head_above_a_parshall_size_range_is_marked_and_estimated_in_convert() {
    let dir = tempfile::tempdir().expect("tempdir");
    let s = parshall(dir.path(), "9in");
    // USBR WMM ch. 8 (from memory): a 9 in flume's free-flow range ends at Ha = 2.0 ft
    let row = rate_one(&s, 0.70, "si");
    assert_eq!(row["valid"], false, "{row}");
    assert!(row["note"].as_str().unwrap_or("").contains("Ha-in-range"));
    let row = rate_one(&s, 0.30, "si");
    assert_eq!(row["valid"], true, "{row}");
    // convert: a reading above the range is flagged, never passed as good data
    let logger = dir.path().join("stage.csv");
    std::fs::write(
        &logger,
        "time,stage\n2026-05-01 00:00,0.300\n2026-05-01 00:15,0.400\n2026-05-01 00:30,0.500\n2026-05-01 00:45,0.600\n2026-05-01 01:00,0.650\n2026-05-01 01:15,0.700\n2026-05-01 01:30,0.650\n",
    )
    .expect("write");
    let out = dir.path().join("q.csv");
    let run = flumerate()
        .arg("convert")
        .arg("--station")
        .arg(&s)
        .arg(&logger)
        .args([
            "--time-format",
            "%Y-%m-%d %H:%M",
            "--timezone",
            "+00:00",
            "--stage-column",
            "stage",
            "--zero",
            "0",
            "-o",
        ])
        .arg(&out)
        .output()
        .expect("run");
    assert!(run.status.success(), "{}", String::from_utf8_lossy(&run.stderr));
    let rows = crate::common::read_csv(&out, b',');
    assert_eq!(rows.len(), 7);
    assert_eq!(rows[0]["flag"], "ok");
    assert_eq!(rows[5]["flag"], "above-range", "{:?}", rows[5]);
    assert!(!rows[5]["discharge_m3s"].is_empty(), "an estimate, counted as such");
}

#[test]
fn standard_modular_limits_drive_the_tailwater_check() {
    // the demo Parshall flume: transition submergence 0.70 for a 1 ft flume (USBR WMM ch. 8)
    let out = flumerate()
        .args(["tailwater", "ratings/kestrel-lateral-parshall.toml", "--format", "json"])
        .output()
        .expect("run");
    let doc: serde_json::Value = serde_json::from_slice(&out.stdout).expect("json");
    let rows = doc["rows"].as_array().expect("rows");
    assert!(rows
        .iter()
        .all(|r| (r["modular_limit"].as_f64().expect("ml") - 0.70).abs() < 1e-12));
    // the demo V-notch: modular while the tailwater stays below the crest (ISO 1438)
    let out = flumerate()
        .args(["tailwater", "ratings/mill-lane-outfall-vnotch.toml"])
        .output()
        .expect("run");
    let text = String::from_utf8_lossy(&out.stdout);
    assert!(text.contains("tailwater below the crest"), "{text}");
    assert_eq!(out.status.code(), Some(0), "{text}");
}

#[test]
fn structures_lists_the_families_and_prints_a_size() {
    let out = flumerate().arg("structures").output().expect("run");
    assert!(out.status.success());
    let text = String::from_utf8_lossy(&out.stdout);
    for w in [
        "thin-plate-weir",
        "ISO 1438",
        "ISO 3846",
        "ISO 4360",
        "ASTM D1941",
        "50ft",
        "1in",
    ] {
        assert!(text.contains(w), "{w}");
    }
    let out = flumerate().args(["structures", "parshall-9in"]).output().expect("run");
    let text = String::from_utf8_lossy(&out.stdout);
    assert!(text.contains("3.07·Ha^1.5300") && text.contains("throat width") && text.contains("229"));
    let out = flumerate().args(["structures", "parshall-11in"]).output().expect("run");
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("parshall-9in"));
}
