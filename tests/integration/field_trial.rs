//! Fixes from the field trial: one rating equation everywhere, ISO 4359's own formulas, weirs
//! that say their upstream edge, implausible coefficients, validity shared by `rate` and
//! `convert`, section edge cases, heads as people write them, and the smaller faults.

use std::path::Path;

use crate::common::{flumerate, rate_json, rel, station_file, station_text};
use flumerate::rating::{RatingEquation, RatingModel};
use flumerate::station::Station;
use flumerate::units::Units;
use predicates::prelude::*;

const CANAL: &str = "ratings/ridgeway-canal-flume.toml";

/// `rate` (text, JSON, any table) and the field sheet print one equation: the same coefficients,
/// fitted over the same rows, whatever table was asked for.
#[test]
fn one_rating_equation_everywhere() {
    let st = Path::new(CANAL);
    let a = rate_json(st, &[]);
    let b = rate_json(st, &["--from", "0.1", "--to", "0.12", "--step", "0.01"]);
    for key in ["k", "h0_m", "u", "max_relative_deviation", "rows_fitted"] {
        assert_eq!(a["equation"][key], b["equation"][key], "{key}");
    }
    let text = String::from_utf8(
        flumerate()
            .arg("rate")
            .arg(st)
            .args(["--from", "0.2", "--to", "0.3"])
            .output()
            .expect("run")
            .stdout,
    )
    .expect("utf-8");
    let sentence = a["equation"]["text"].as_str().expect("text");
    assert!(text.contains(sentence), "{text}");
    let dir = tempfile::tempdir().expect("tempdir");
    let sheet = dir.path().join("s.html");
    flumerate()
        .arg("sheet")
        .arg(st)
        .arg("-o")
        .arg(&sheet)
        .assert()
        .success();
    let html = std::fs::read_to_string(&sheet).expect("sheet");
    let formula = sentence.split(", fitted").next().expect("formula");
    assert!(html.contains(formula), "the sheet prints {formula}");
}

/// The stated largest deviation is that of the coefficients as printed: recomputed here from the
/// printed K, h0 and u against the model at the same 101 heads.
#[test]
fn the_stated_deviation_is_that_of_the_printed_coefficients() {
    for units in ["si", "us"] {
        let doc = rate_json(Path::new(CANAL), &["--units", units]);
        let eq = &doc["equation"];
        let (k, u) = (eq["k"].as_f64().expect("k"), eq["u"].as_f64().expect("u"));
        let h0 = eq[if units == "si" { "h0_m" } else { "h0_ft" }].as_f64().expect("h0");
        let st = Station::load(Path::new(CANAL)).expect("station");
        let model = RatingModel::new(st.structure.clone()).expect("model");
        let (lo, hi) = (st.range.min_head_m, st.range.max_head_m);
        let (lm, qm) = if units == "si" {
            (1.0, 1.0)
        } else {
            (0.3048, 0.028316846592)
        };
        let worst = (0..101)
            .map(|i| {
                let h = lo + (hi - lo) * i as f64 / 100.0;
                let q = model.discharge_m3s(h).expect("q") / qm;
                let q_eq = k * (h / lm + h0).powf(u);
                ((q_eq - q) / q).abs()
            })
            .fold(0.0, f64::max);
        let stated = eq["max_relative_deviation"].as_f64().expect("deviation");
        assert!((worst - stated).abs() <= 1e-12, "{units}: {worst} vs {stated}");
        assert_eq!(eq["rows_fitted"], 101);
    }
}

/// With fewer than five valid rows in its range the equation is printed with a warning, and no
/// deviation is ever printed as a string of zeros.
#[test]
fn an_equation_on_few_rows_is_warned_about() {
    let dir = tempfile::tempdir().expect("tempdir");
    // a short throat rated far beyond H1/L = 0.7 (Clemmens et al. 2001, from memory): only the
    // lowest heads of the range are valid
    let st = station_file(
        dir.path(),
        "few.toml",
        &station_text(
            "shape = \"rectangle\"\nwidth = 2.0\nlength = 0.3",
            "shape = \"rectangle\"\nwidth = 8.0\nsill_height = 1.0",
            "\"boundary-layer\"",
            (0.05, 5.0),
        ),
    );
    let model = RatingModel::new(Station::load(&st).expect("station").structure).expect("model");
    let eq = RatingEquation::for_range(&model, 0.05, 5.0).expect("an equation");
    assert!(eq.rows.len() < 5 && eq.rows.len() >= 3, "{} rows", eq.rows.len());
    let out = flumerate().arg("rate").arg(&st).output().expect("run");
    let text = String::from_utf8_lossy(&out.stdout);
    assert!(text.contains("WARNING: it rests on only"), "{text}");
    assert!(!text.contains("0.0000000"), "{text}");
    let printed = eq.printed(Units::Si);
    assert!(printed.deviation_text().ends_with('%'));
}

/// `coefficient = "iso-4359"` gives ISO 4359's own formulas (recalled: docs/references.md S3)
/// for rectangular, trapezoidal and U-shaped throats, against an independent pure-Python
/// computation of the same formulas (tests/data/iso4359/iso4359_fixture.py), to 1e-6 relative;
/// the rectangular values are also docs/references.md C3's.
#[test]
fn iso_4359_formulas_are_reproduced() {
    let dir = tempfile::tempdir().expect("tempdir");
    let stations = [
        (
            "rectangle b=0.5 L=1.0 B=1.0 p=0.1",
            "shape = \"rectangle\"\nwidth = 0.5\nlength = 1.0",
            "shape = \"rectangle\"\nwidth = 1.0\nsill_height = 0.1",
        ),
        (
            "rectangle b=1.0 L=2.0 B=2.0 p=0.3",
            "shape = \"rectangle\"\nwidth = 1.0\nlength = 2.0",
            "shape = \"rectangle\"\nwidth = 2.0\nsill_height = 0.3",
        ),
        (
            "trapezoid b=0.3 m=1 L=0.9; approach b=0.6 m=1.5 p=0.2",
            "shape = \"trapezoid\"\nwidth = 0.3\nside_slope = 1.0\nlength = 0.9",
            "shape = \"trapezoid\"\nwidth = 0.6\nside_slope = 1.5\nsill_height = 0.2",
        ),
        (
            "u-shape D=0.45 L=0.6; approach B=0.9 p=0.15",
            "shape = \"u-shape\"\ndiameter = 0.45\nlength = 0.6",
            "shape = \"rectangle\"\nwidth = 0.9\nsill_height = 0.15",
        ),
    ];
    let mut r = csv::Reader::from_path("tests/data/iso4359/expected.csv").expect("fixture");
    let mut checked = 0;
    for rec in r.records() {
        let rec = rec.expect("record");
        let (case, h, q, cd): (&str, f64, f64, f64) = (
            &rec[0],
            rec[1].parse().expect("h"),
            rec[2].parse().expect("q"),
            rec[3].parse().expect("cd"),
        );
        let (_, control, approach) = stations.iter().find(|s| s.0 == case).expect("case");
        let st = station_file(
            dir.path(),
            "iso.toml",
            &station_text(control, approach, "\"iso-4359\"", (0.03, 0.6)),
        );
        let row = crate::common::rate_one(&st, h, "si");
        let got = row["discharge_m3s"].as_f64().expect("q");
        assert!(rel(got, q) < 1e-6, "{case} h = {h}: {got} vs {q}");
        // the Cd printed is Q/Q_ideal(H1): for ISO's formula that is the standard's Cd itself
        assert!(rel(row["cd"].as_f64().expect("cd"), cd) < 1e-6, "{case} h = {h}: Cd");
        checked += 1;
    }
    assert_eq!(checked, 13);
    // docs/references.md C3 (ISO 4359 rectangular throat, computed independently)
    let st = station_file(
        dir.path(),
        "c3.toml",
        &station_text(stations[0].1, stations[0].2, "\"iso-4359\"", (0.03, 0.6)),
    );
    let row = crate::common::rate_one(&st, 0.2, "si");
    assert!(rel(row["discharge_m3s"].as_f64().expect("q"), 0.0754155493) < 1e-9);
}

/// Outputs say which method ran: "after ISO 4359" for the general boundary-layer method, the
/// standard's formula only where it ran; other shapes are refused with iso-4359.
#[test]
fn the_method_label_says_which_method_ran() {
    let dir = tempfile::tempdir().expect("tempdir");
    let out = flumerate().arg("rate").arg(CANAL).output().expect("run");
    let text = String::from_utf8_lossy(&out.stdout);
    assert!(text.contains("boundary-layer method after ISO 4359"), "{text}");
    assert!(!text.contains("ISO 4359's own formula"));
    let iso = std::fs::read_to_string(CANAL)
        .expect("read")
        .replace("coefficient = \"boundary-layer\"", "coefficient = \"iso-4359\"");
    let st = station_file(dir.path(), "iso.toml", &iso);
    let out = flumerate().arg("rate").arg(&st).output().expect("run");
    assert!(String::from_utf8_lossy(&out.stdout).contains("ISO 4359's own formula"));
    let circle = station_text(
        "shape = \"circle\"\ndiameter = 0.45\nlength = 0.6",
        "shape = \"rectangle\"\nwidth = 0.9\nsill_height = 0.15",
        "\"iso-4359\"",
        (0.05, 0.3),
    );
    let st = station_file(dir.path(), "circle.toml", &circle);
    flumerate()
        .arg("check")
        .arg(&st)
        .assert()
        .code(2)
        .stderr(predicate::str::contains("control.coefficient").and(predicate::str::contains("u-shape")));
}

/// `convert` and `rate` agree on validity: a row whose head `rate` marks outside the limits of
/// application is flagged `beyond-limits`, every other rated row in the range is `ok`.
#[test]
fn convert_and_rate_agree_on_validity() {
    let dir = tempfile::tempdir().expect("tempdir");
    // a short throat: above about h1 = 0.2 m, H1/L > 0.7 (Clemmens et al. 2001, from memory)
    let text = station_text(
        "shape = \"rectangle\"\nwidth = 0.5\nlength = 0.3",
        "shape = \"rectangle\"\nwidth = 1.5\nsill_height = 0.3",
        "\"boundary-layer\"",
        (0.05, 0.4),
    ) + "\n[logger]\ntimezone = \"UTC\"\nzero = 0.0\n";
    let st = station_file(dir.path(), "short.toml", &text);
    let logger = dir.path().join("l.csv");
    let mut csv_text = String::from("time,stage\n");
    for k in 0..36 {
        csv_text.push_str(&format!(
            "2026-05-01 {:02}:{:02},{:.3}\n",
            k / 4,
            (k % 4) * 15,
            0.05 + 0.01 * k as f64
        ));
    }
    std::fs::write(&logger, csv_text).expect("write");
    let out = dir.path().join("o.csv");
    flumerate()
        .arg("convert")
        .arg(&logger)
        .arg("--station")
        .arg(&st)
        .arg("-o")
        .arg(&out)
        .assert()
        .success();
    let mut r = csv::Reader::from_path(&out).expect("csv");
    let (mut ok, mut beyond) = (0, 0);
    for rec in r.records() {
        let rec = rec.expect("record");
        let head: f64 = rec[2].parse().expect("head");
        let flag = rec[6].to_string();
        let row = crate::common::rate_one(&st, head, "si");
        let valid = row["valid"].as_bool().expect("valid");
        match flag.as_str() {
            "ok" => {
                assert!(valid, "h = {head}: ok in convert, not valid in rate");
                ok += 1;
            }
            "beyond-limits" => {
                assert!(!valid, "h = {head}: beyond-limits in convert, valid in rate");
                beyond += 1;
            }
            other => assert!(matches!(other, "above-range" | "below-range"), "{other}"),
        }
    }
    assert!(ok > 5 && beyond > 5, "ok {ok}, beyond {beyond}");
}

/// A row whose Cd falls below the range where the method's stated uncertainty holds is not valid,
/// and says why: a 0.12 m wide, 3 m long throat (invented) reads Cd ≈ 0.63–0.82.
#[test]
fn implausible_coefficients_are_not_valid() {
    let dir = tempfile::tempdir().expect("tempdir");
    let st = station_file(
        dir.path(),
        "narrow.toml",
        &station_text(
            "shape = \"rectangle\"\nwidth = 0.12\nlength = 3.0",
            "shape = \"rectangle\"\nwidth = 0.6\nsill_height = 0.2",
            "\"boundary-layer\"",
            (0.05, 0.4),
        ),
    );
    let doc = rate_json(&st, &[]);
    let mut seen = 0;
    for row in doc["rows"].as_array().expect("rows") {
        let cd = row["cd"].as_f64().expect("cd");
        if cd < 0.90 {
            assert_eq!(row["valid"], false, "Cd {cd}");
            assert!(row["note"].as_str().expect("note").contains("Cd>=0.90"));
            seen += 1;
        }
    }
    assert!(seen > 10, "{seen} rows below 0.90");
    // a fixed Cd chosen by the user is the user's: the limit does not apply
    let fixed = station_file(
        dir.path(),
        "fixed.toml",
        &station_text(
            "shape = \"rectangle\"\nwidth = 0.5\nlength = 1.0",
            "shape = \"rectangle\"\nwidth = 1.0\nsill_height = 0.2",
            "0.85",
            (0.1, 0.4),
        ),
    );
    let doc = rate_json(&fixed, &[]);
    assert!(doc["rows"]
        .as_array()
        .expect("rows")
        .iter()
        .all(|r| !r["note"].as_str().unwrap_or("").contains("Cd>=")));
}

/// Circle normal depth wherever it exists: near full a pipe carries one discharge at two depths
/// (both reported), the largest part-full discharge flows at about 0.938 D (Chow 1959, from
/// memory), and a depth above the crown is an error, never Fr = 0.
#[test]
fn section_edge_cases_of_a_pipe() {
    use flumerate::hydraulics::{normal_depths_m, Section};
    let pipe = Section::Circle { diameter_m: 1.0 };
    let (n, s): (f64, f64) = (0.013, 0.001);
    let k = |y: f64| pipe.area_m2(y) * pipe.hydraulic_radius_m(y).powf(2.0 / 3.0) * s.sqrt() / n;
    // analytic check of each depth: Manning's Q at the depth equals the discharge asked for
    let two = normal_depths_m(&pipe, 0.8, n, s).expect("two depths");
    assert_eq!(two.len(), 2);
    for y in &two {
        assert!(rel(k(*y), 0.8) < 1e-9, "{y}");
    }
    assert!(two[0] < 0.938 && two[1] > 0.938 && two[1] < 1.0);
    let one = normal_depths_m(&pipe, 0.5, n, s).expect("one depth");
    assert_eq!(one.len(), 1);
    assert!(rel(k(one[0]), 0.5) < 1e-9);
    let err = normal_depths_m(&pipe, 0.9, n, s)
        .expect_err("over capacity")
        .to_string();
    assert!(err.contains("at most 0.81"), "{err}");
    let peak_depth: f64 = err
        .split(" (at ")
        .nth(1)
        .and_then(|t| t.split(' ').next())
        .and_then(|t| t.parse().ok())
        .expect("depth");
    assert!((0.935..0.941).contains(&peak_depth), "{peak_depth}");
    // the command line
    flumerate()
        .args(["section", "--shape", "circle", "--diameter", "1", "--discharge", "0.8"])
        .args(["--manning-n", "0.013", "--slope", "0.001", "--format", "json"])
        .assert()
        .code(1)
        .stdout(predicate::str::contains("two depths"));
    flumerate()
        .args([
            "section",
            "--shape",
            "circle",
            "--diameter",
            "1",
            "--discharge",
            "0.5",
            "--depth",
            "1.2",
        ])
        .assert()
        .code(2)
        .stderr(predicate::str::contains("above the crown"));
}

/// Table heads come from whole numbers of steps, so CSV shows them as people write them, in SI
/// and in US units; --from 0 gives the Q = 0 row (analytic: no flow at the crest).
#[test]
fn heads_are_printed_as_people_write_them() {
    let heads = |args: &[&str]| -> Vec<String> {
        let out = flumerate()
            .arg("rate")
            .arg(CANAL)
            .args(["--format", "csv"])
            .args(args)
            .output()
            .expect("run");
        String::from_utf8_lossy(&out.stdout)
            .lines()
            .skip(1)
            .map(|l| l.split(',').next().unwrap_or_default().to_string())
            .collect()
    };
    assert_eq!(
        heads(&["--from", "0.03", "--to", "0.1", "--step", "0.01"]),
        ["0.03", "0.04", "0.05", "0.06", "0.07", "0.08", "0.09", "0.1"]
    );
    assert_eq!(
        heads(&["--from", "0.1", "--to", "1", "--step", "0.1", "--units", "us"]),
        ["0.1", "0.2", "0.3", "0.4", "0.5", "0.6", "0.7", "0.8", "0.9", "1"]
    );
    let doc = rate_json(Path::new(CANAL), &["--from", "0", "--to", "0.02", "--step", "0.01"]);
    let first = &doc["rows"][0];
    assert_eq!(first["head_m"], 0.0);
    assert_eq!(first["discharge_m3s"], 0.0);
    assert_eq!(first["valid"], false);
    assert!(!doc.to_string().contains("-0.0"), "no negative zero");
}

/// [range] may be left out: with --from/--to the table needs none, and without them the range
/// comes from the limits of application (said so by `check`); lengths may be in centimetres.
#[test]
fn range_is_optional_and_centimetres_are_a_unit() {
    let dir = tempfile::tempdir().expect("tempdir");
    let text = "name = \"no range, in cm (test)\"\nlength_unit = \"cm\"\n[control]\nshape = \"rectangle\"\nwidth = 50\nlength = 100\n[approach]\nshape = \"rectangle\"\nwidth = 100\nsill_height = 10\n";
    let st = station_file(dir.path(), "cm.toml", text);
    let row = crate::common::rate_one(&st, 0.2, "si");
    // the same structure in metres: docs/references.md C3's flume, rated by the default method
    let metres = station_file(
        dir.path(),
        "m.toml",
        &station_text(
            "shape = \"rectangle\"\nwidth = 0.5\nlength = 1.0",
            "shape = \"rectangle\"\nwidth = 1.0\nsill_height = 0.1",
            "\"boundary-layer\"",
            (0.05, 0.4),
        ),
    );
    let same = crate::common::rate_one(&metres, 0.2, "si");
    assert!(
        rel(
            row["discharge_m3s"].as_f64().expect("q"),
            same["discharge_m3s"].as_f64().expect("q")
        ) < 1e-12
    );
    flumerate()
        .arg("check")
        .arg(&st)
        .assert()
        .stdout(predicate::str::contains(
            "no [range] in the file: the heads the limits of application allow",
        ));
    let doc = rate_json(&st, &[]);
    let rows = doc["rows"].as_array().expect("rows");
    // flume limits (ISO 4359 and Clemmens et al. 2001, from memory): 0.07 m to 0.7 m for L = 1 m
    assert!((rows[0]["head_m"].as_f64().expect("h") - 0.07).abs() < 1e-12);
    assert!((rows[rows.len() - 1]["head_m"].as_f64().expect("h") - 0.7).abs() < 1e-12);
}

fn data(name: &str) -> std::path::PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/data/convert")
        .join(name)
}

/// Runs convert with `args` after the logger and station; returns (exit code, report, output).
fn convert(logger: &Path, station: &Path, dir: &Path, args: &[&str]) -> (Option<i32>, String, String) {
    let out = dir.join("o.csv");
    let o = flumerate()
        .arg("convert")
        .arg(logger)
        .arg("--station")
        .arg(station)
        .arg("-o")
        .arg(&out)
        .args(args)
        .output()
        .expect("run");
    (
        o.status.code(),
        String::from_utf8_lossy(&o.stdout).to_string(),
        String::from_utf8_lossy(&o.stderr).to_string(),
    )
}

/// Visits and barometric files take ISO 8601 times besides the logger's formats, and an error
/// there says how to fix it; barometric values reach the ends of the record within 3 h.
#[test]
fn side_files_take_iso_times_and_reach_the_ends() {
    let dir = tempfile::tempdir().expect("tempdir");
    // the visits of drift-visits.csv (Europe/Berlin, summer time: +02:00) written with offsets
    let visits = dir.path().join("visits.csv");
    std::fs::write(
        &visits,
        "time,head_mm\n2026-05-31T22:00:00Z,300\n2026-06-01T12:00:00+02:00,310\n",
    )
    .expect("write");
    let (code, plain, _) = convert(
        &data("drift.csv"),
        &data("station.toml"),
        dir.path(),
        &["--visits", "tests/data/convert/drift-visits.csv"],
    );
    assert_eq!(code, Some(0));
    let (code, iso, _) = convert(
        &data("drift.csv"),
        &data("station.toml"),
        dir.path(),
        &["--visits", visits.to_str().expect("utf-8")],
    );
    assert_eq!(code, Some(0));
    let drift = |r: &str| {
        r.lines()
            .filter(|l| l.starts_with("drift at visit"))
            .map(str::to_string)
            .collect::<Vec<_>>()
    };
    assert_eq!(drift(&plain), drift(&iso));
    assert_eq!(drift(&iso).len(), 2);
    std::fs::write(&visits, "time,head_mm\n01/06/2026 noon,300\n").expect("write");
    let (code, _, err) = convert(
        &data("drift.csv"),
        &data("station.toml"),
        dir.path(),
        &["--visits", visits.to_str().expect("utf-8")],
    );
    assert_eq!(code, Some(2));
    assert!(
        err.contains("visits.csv:2") && err.contains("fix: write times as 2026-10-12T10:00"),
        "{err}"
    );
    // a logger reading 1 h before the first barometric reading still gets it (held within 3 h)
    let logger = dir.path().join("p.csv");
    std::fs::write(
        &logger,
        "time,p_kpa,temp_c\n2026-05-31 22:45,110.0,10\n2026-05-31 23:00,110.0,10\n2026-05-31 23:15,110.0,10\n2026-05-31 23:30,110.0,10\n2026-06-01 00:00,110.0,10\n2026-06-01 05:00,110.0,10\n2026-06-01 07:00,110.0,10\n",
    )
    .expect("write");
    let (code, report, err) = convert(
        &logger,
        &data("station-pressure.toml"),
        dir.path(),
        &["--baro", "tests/data/convert/baro.csv"],
    );
    assert_eq!(code, Some(0), "{err}");
    // baro.csv runs 00:00 to 03:00: 22:45 and 05:00 are within 3 h of its ends, 07:00 is not
    assert!(
        report
            .contains("rows without barometric pressure within reach (no head: missing, or filled in a short gap): 1"),
        "{report}"
    );
}

/// A drift above 5 mm, or one changing sign between visits, is warned about on the console and
/// in the provenance (common practice, no source).
#[test]
fn large_or_changing_drift_is_warned_about() {
    let dir = tempfile::tempdir().expect("tempdir");
    let visits = dir.path().join("visits.csv");
    // logger head 0.300 m (stage 0.400 − zero 0.100): staff 0.308 (+8 mm), then 0.297 (−3 mm)
    std::fs::write(&visits, "time,head_m\n2026-06-01 00:00,0.308\n2026-06-01 12:00,0.297\n").expect("write");
    let (code, report, _) = convert(
        &data("drift.csv"),
        &data("station.toml"),
        dir.path(),
        &["--visits", visits.to_str().expect("utf-8")],
    );
    assert_eq!(code, Some(0));
    assert!(
        report.contains("WARNING: drift at the visit of") && report.contains("+8.0 mm, more than 5 mm"),
        "{report}"
    );
    assert!(
        report.contains("WARNING: drift changes sign between the visits"),
        "{report}"
    );
    let prov: serde_json::Value =
        serde_json::from_slice(&std::fs::read(dir.path().join("o.csv.provenance.json")).expect("prov")).expect("json");
    assert_eq!(
        prov["corrections"]["drift"]["warnings"]
            .as_array()
            .expect("warnings")
            .len(),
        2
    );
}

/// `--submerged-estimate` says, per reason, how many drowned rows got no estimate.
#[test]
fn rows_without_an_estimate_are_counted_per_reason() {
    let dir = tempfile::tempdir().expect("tempdir");
    let (_, report, _) = convert(
        &data("tailwater.csv"),
        &data("station.toml"),
        dir.path(),
        &[
            "--tailwater-column",
            "tw",
            "--tailwater-zero",
            "0.1",
            "--submerged-estimate",
        ],
    );
    assert!(
        report.contains("1 because the structure is a flume (Villemonte's relation is for weirs), 0 drowned beyond 0.90 (no correction is practical), 0 without --submerged-estimate"),
        "{report}"
    );
}

/// Smaller faults of the trial: an abrupt exit says "abrupt"; US-unit outputs show the budget's
/// lengths in feet; --skip-lines errors name the line read as the header; a level logger's
/// temperature column is accepted; plot ticks never read "-0".
#[test]
fn smaller_faults_of_the_trial() {
    let dir = tempfile::tempdir().expect("tempdir");
    let abrupt = std::fs::read_to_string(CANAL)
        .expect("read")
        .replace("expansion = 6", "expansion = 0");
    let st = station_file(dir.path(), "abrupt.toml", &abrupt);
    let out = flumerate().arg("tailwater").arg(&st).output().expect("run");
    let text = String::from_utf8_lossy(&out.stdout);
    assert!(text.contains("an abrupt exit") && !text.contains("1:0"), "{text}");
    let out = flumerate()
        .args(["rate", "ratings/alder-brook-weir.toml", "--units", "us", "--budget"])
        .output()
        .expect("run");
    let text = String::from_utf8_lossy(&out.stdout);
    assert!(text.contains("±0.0066 ft (2 mm, k = 2, normal)"), "{text}");
    let (code, _, err) = convert(
        Path::new("examples/ridgeway-logger.csv"),
        Path::new(CANAL),
        dir.path(),
        &["--baro", "examples/ridgeway-baro.csv", "--skip-lines", "0"],
    );
    assert_eq!(code, Some(2));
    assert!(
        err.contains("line 1 was read as the header (after skipping 0 line(s))"),
        "{err}"
    );
    let logger = dir.path().join("t.csv");
    std::fs::write(
        &logger,
        "time,stage,temp_c\n2026-05-01 00:00,0.40,11.2\n2026-05-01 00:15,0.41,11.0\n",
    )
    .expect("write");
    let (code, report, _) = convert(
        &logger,
        &data("station.toml"),
        dir.path(),
        &["--temperature-column", "temp_c"],
    );
    assert_eq!(code, Some(0));
    assert!(report.contains("temperature column: read, not used"));
    let svg = dir.path().join("tw.svg");
    flumerate()
        .arg("tailwater")
        .arg(CANAL)
        .arg("--plot")
        .arg(&svg)
        .assert()
        .code(1);
    let text = std::fs::read_to_string(&svg).expect("svg");
    let labels: Vec<String> = text
        .split("<text")
        .skip(1)
        .filter_map(|t| t.split_once('>').and_then(|(_, rest)| rest.split_once("</text>")))
        .map(|(inner, _)| inner.trim().to_string())
        .collect();
    assert!(
        !labels.iter().any(|l| l == "-0" || l == "-0.0"),
        "a tick reads -0: {labels:?}"
    );
    assert!(labels.iter().any(|l| l == "0"), "the zero tick is there: {labels:?}");
}
