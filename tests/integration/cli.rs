//! The commands as a user runs them: formats, units, files, exit codes.

use crate::common::{flumerate, rate_json, rel, station_file};
use predicates::prelude::*;

const DEMO: &str = "ratings/ridgeway-canal-flume.toml";

#[test]
fn rate_text_ends_with_the_cautions_and_names_units() {
    flumerate()
        .args(["rate", DEMO])
        .assert()
        .success()
        .stdout(predicate::str::contains("Q m³/s"))
        .stdout(predicate::str::contains("above the crest"))
        .stdout(predicate::str::contains("rating equation"))
        .stdout(predicate::str::contains("field gaugings"))
        .stdout(predicate::str::contains("licensed"));
}

#[test]
fn rate_csv_has_design_columns_and_full_precision() {
    let out = flumerate()
        .args(["rate", DEMO, "--format", "csv"])
        .output()
        .expect("run");
    assert!(out.status.success());
    let text = String::from_utf8(out.stdout).expect("utf-8");
    let mut lines = text.lines();
    let header = lines.next().expect("header");
    assert!(header.starts_with("head_m,discharge_m3s,energy_head_m,critical_depth_m,cd,cv,froude_approach"));
    assert!(header.contains(",valid,note"));
    let json = rate_json(std::path::Path::new(DEMO), &[]);
    let rows = json["rows"].as_array().expect("rows");
    let mut n = 0;
    for (line, row) in lines.zip(rows) {
        let q_text = line.split(',').nth(1).expect("discharge field");
        let digits = q_text
            .trim_start_matches(['0', '.'])
            .chars()
            .filter(char::is_ascii_digit)
            .count();
        assert!(digits >= 9, "only {digits} significant digits in {q_text}");
        let q: f64 = q_text.parse().expect("number");
        // CSV and JSON carry the same full-precision value
        assert_eq!(q.to_bits(), row["discharge_m3s"].as_f64().expect("q").to_bits());
        n += 1;
    }
    assert_eq!(n, rows.len());
    assert!(n >= 40, "a sensible default step gives 50 to 100 rows, got {n}");
}

#[test]
fn rate_us_units_convert_heads_and_discharges() {
    let si = rate_json(
        std::path::Path::new(DEMO),
        &["--from", "0.3048", "--to", "0.3048", "--step", "1"],
    );
    let us = rate_json(
        std::path::Path::new(DEMO),
        &["--from", "1", "--to", "1", "--step", "1", "--units", "us"],
    );
    let q_si = si["rows"][0]["discharge_m3s"].as_f64().expect("si");
    let q_us = us["rows"][0]["discharge_cfs"].as_f64().expect("us");
    // 1 ft³/s = 0.028316846592 m³/s exactly (docs/references.md conventions)
    assert!(rel(q_us * 0.028316846592, q_si) < 1e-12);
    assert!(us["rows"][0]["head_ft"].as_f64().is_some());
    let table = rate_json(std::path::Path::new(DEMO), &["--units", "us"]);
    assert!(table["equation"]["h0_ft"].as_f64().is_some(), "{}", table["equation"]);
    assert!(table["rows"][0]["energy_head_ft"].as_f64().is_some());
}

#[test]
fn rate_writes_the_output_file_atomically() {
    let dir = tempfile::tempdir().expect("tempdir");
    let target = dir.path().join("table.csv");
    flumerate()
        .args(["rate", DEMO, "--format", "csv", "-o"])
        .arg(&target)
        .assert()
        .success()
        .stdout(predicate::str::is_empty());
    let text = std::fs::read_to_string(&target).expect("written");
    assert!(text.starts_with("head_m,"));
    let leftovers: Vec<_> = std::fs::read_dir(dir.path())
        .expect("list")
        .filter_map(|e| e.ok())
        .filter(|e| e.file_name().to_string_lossy().ends_with(".tmp"))
        .collect();
    assert!(leftovers.is_empty(), "temporary file left behind");
}

#[test]
fn rate_rejects_bad_head_ranges_with_exit_2() {
    flumerate()
        .args(["rate", DEMO, "--from", "0.5", "--to", "0.1"])
        .assert()
        .code(2)
        .stderr(predicate::str::contains("--from below --to"));
    flumerate()
        .args(["rate", DEMO, "--step", "0"])
        .assert()
        .code(2)
        .stderr(predicate::str::contains("--step"));
}

#[test]
fn rows_outside_the_limits_are_kept_and_marked() {
    // heads far above the throat length break H1/L <= 0.7 (Clemmens et al. 2001, from memory)
    let doc = rate_json(
        std::path::Path::new(DEMO),
        &["--from", "0.4", "--to", "0.9", "--step", "0.1"],
    );
    let rows = doc["rows"].as_array().expect("rows");
    assert_eq!(rows.len(), 6, "no row dropped");
    let last = &rows[5];
    assert_eq!(last["valid"], false);
    assert!(last["note"].as_str().expect("note").contains("H1/L<=0.7"), "{last}");
    assert!(
        last["discharge_m3s"].as_f64().is_some(),
        "invalid rows still carry their discharge"
    );
    flumerate()
        .args([
            "rate", DEMO, "--from", "0.4", "--to", "0.9", "--step", "0.1", "--strict",
        ])
        .assert()
        .code(1);
}

#[test]
fn check_passes_every_demo_station() {
    for entry in std::fs::read_dir(concat!(env!("CARGO_MANIFEST_DIR"), "/ratings")).expect("ratings/") {
        let path = entry.expect("entry").path();
        flumerate()
            .arg("check")
            .arg(&path)
            .assert()
            .success()
            .stdout(predicate::str::contains("verdict: every head"))
            .stdout(predicate::str::contains("source:"));
    }
}

#[test]
fn check_exits_1_when_the_range_breaks_a_limit() {
    let dir = tempfile::tempdir().expect("tempdir");
    // a short throat rated to a high head: H1/L > 0.7 at the top of the range
    let st = crate::common::short_throat_station(dir.path());
    flumerate()
        .arg("check")
        .arg(&st)
        .assert()
        .code(1)
        .stdout(predicate::str::contains("[FAIL] H1/L<=0.7"))
        .stdout(predicate::str::contains("broken at"));
}

#[test]
fn section_reports_multiple_critical_depths_and_exits_1() {
    // slot 0.5 m wide and 0.5 m deep between 4.75 m flat berms: two critical depths at Q = 0.5
    flumerate()
        .args([
            "section",
            "--shape",
            "points",
            "--points",
            "-5,1.5 -5,0.5 -0.25,0.5 -0.25,0 0.25,0 0.25,0.5 5,0.5 5,1.5",
            "--discharge",
            "0.5",
            "--format",
            "json",
        ])
        .assert()
        .code(1)
        .stdout(predicate::str::contains("\"critical_depth_m\": null"))
        .stdout(predicate::str::contains("2 critical depths"));
}

#[test]
fn section_below_critical_energy_is_a_clear_error() {
    flumerate()
        .args([
            "section",
            "--shape",
            "rectangle",
            "--width",
            "1",
            "--discharge",
            "0.3",
            "--energy",
            "0.2",
        ])
        .assert()
        .code(2)
        .stderr(predicate::str::contains("below the critical (minimum) specific energy"));
}

#[test]
fn section_needs_the_dimensions_of_its_shape() {
    flumerate()
        .args(["section", "--shape", "trapezoid", "--width", "1", "--discharge", "0.3"])
        .assert()
        .code(2)
        .stderr(predicate::str::contains("--side-slope"));
}

#[test]
fn section_normal_depth_by_manning() {
    // Manning in a wide rectangle, checked by substituting back (Chow 1959 eq. 5-6)
    let out = flumerate()
        .args([
            "section",
            "--shape",
            "rectangle",
            "--width",
            "2",
            "--discharge",
            "1.5",
            "--manning-n",
            "0.015",
            "--slope",
            "0.001",
            "--format",
            "json",
        ])
        .output()
        .expect("run");
    assert!(out.status.success());
    let doc: serde_json::Value = serde_json::from_slice(&out.stdout).expect("json");
    let y = doc["normal_depth_m"].as_f64().expect("normal depth");
    let (a, p) = (2.0 * y, 2.0 + 2.0 * y);
    let q = a * (a / p).powf(2.0 / 3.0) * 0.001f64.sqrt() / 0.015;
    assert!(rel(q, 1.5) < 1e-9);
}

#[test]
fn unknown_commands_and_flags_are_usage_errors() {
    flumerate().arg("rat").assert().code(2);
    flumerate().args(["rate", DEMO, "--format", "xml"]).assert().code(2);
}

#[test]
fn rate_carries_u95_on_every_row_and_monte_carlo_when_asked() {
    let doc = rate_json(std::path::Path::new(DEMO), &["--step", "0.1"]);
    for row in doc["rows"].as_array().expect("rows") {
        let u = row["u95_pct"].as_f64().expect("u95_pct on every row");
        assert!(u > 1.0 && u < 10.0, "{row}");
        assert!(row.get("mc_low_m3s").is_none());
    }
    assert_eq!(doc["uncertainty"]["inputs"].as_array().expect("inputs").len(), 4);

    let doc = rate_json(
        std::path::Path::new(DEMO),
        &[
            "--step",
            "0.1",
            "--uncertainty",
            "mc",
            "--draws",
            "4000",
            "--seed",
            "3",
            "--units",
            "us",
            "--budget",
        ],
    );
    for row in doc["rows"].as_array().expect("rows") {
        let (q, lo, hi) = (
            row["discharge_cfs"].as_f64().expect("q"),
            row["mc_low_cfs"].as_f64().expect("low"),
            row["mc_high_cfs"].as_f64().expect("high"),
        );
        assert!(lo < q && q < hi, "{row}");
        let shares: f64 = ["coefficient", "dimension", "zero", "reading"]
            .iter()
            .map(|n| row[format!("share_{n}")].as_f64().expect("share"))
            .sum();
        assert!((shares - 1.0).abs() < 1e-9);
    }
    assert_eq!(doc["uncertainty"]["monte_carlo"]["draws"], 4000);
}

#[test]
fn monte_carlo_departing_from_gum_is_reported() {
    // a ±60 mm reading error at 0.07 m head makes Q(h) strongly non-linear over the spread: the
    // Monte Carlo interval is then skewed and no longer Q ± 2u (JCGM 101 §8)
    let dir = tempfile::tempdir().expect("tempdir");
    let text = std::fs::read_to_string(DEMO)
        .expect("demo")
        .replace("head_mm = 2.0", "head_mm = 60.0");
    let st = station_file(dir.path(), "noisy.toml", &text);
    let doc = rate_json(
        &st,
        &[
            "--from",
            "0.07",
            "--to",
            "0.07",
            "--step",
            "1",
            "--uncertainty",
            "mc",
            "--draws",
            "20000",
        ],
    );
    let note = doc["rows"][0]["note"].as_str().expect("note");
    assert!(note.contains("departs from GUM"), "{note}");
}

#[test]
fn budget_text_lists_every_input() {
    flumerate()
        .args(["rate", DEMO, "--step", "0.1", "--budget"])
        .assert()
        .success()
        .stdout(predicate::str::contains("uncertainty budget"))
        .stdout(predicate::str::contains("coefficient"))
        .stdout(predicate::str::contains("u95 %"));
}

#[test]
fn verify_reproduces_the_reference_values() {
    flumerate()
        .arg("verify")
        .assert()
        .success()
        .stdout(predicate::str::contains("docs/references.md C4"))
        .stdout(predicate::str::contains(" 0 failed"));
}

#[test]
fn rate_draws_the_rating_curve() {
    let dir = tempfile::tempdir().expect("tempdir");
    let (png, svg) = (dir.path().join("r.png"), dir.path().join("r.svg"));
    for p in [&png, &svg] {
        flumerate().args(["rate", DEMO, "--plot"]).arg(p).assert().success();
    }
    assert_eq!(&std::fs::read(&png).expect("png")[..4], b"\x89PNG");
    assert!(std::fs::read_to_string(&svg)
        .expect("svg")
        .contains("head h1 above the crest (m)"));
    flumerate().args(["rate", DEMO, "--plot", "r.gif"]).assert().code(2);
}
