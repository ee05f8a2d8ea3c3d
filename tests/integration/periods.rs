//! Rating periods: each row converted by the rating in force at its instant (checked against
//! each rating on its own), a day spanning the change summed from its rows, `--at` choosing the
//! period, and bad period tables named.

use crate::common::{flumerate, rate_json, read_csv, rel, station_file};

const TWO_PERIODS: &str = r#"name = "Two-period test flume (invented)"
length_unit = "m"
rating_id = "T-2024-1"
status = "approved"
approved_by = "A. Hydrographer"
approved_on = "2024-01-10"

[control]
shape = "rectangle"
width = 0.30
length = 0.9

[approach]
shape = "rectangle"
width = 0.8
sill_height = 0.2

[range]
min_head = 0.05
max_head = 0.5

[logger]
time_column = "time"
time_format = "%Y-%m-%d %H:%M"
timezone = "+01:00"
stage_column = "stage"
stage_unit = "m"
zero = 0.0

[[period]]
valid_from = "2025-04-01T12:00:00+01:00"
rating_id = "T-2025-1"
status = "draft"
[period.control]
width = 0.36
"#;

/// The rating of one period on its own: a single-period file with that period's width.
fn single(dir: &std::path::Path, width: f64) -> std::path::PathBuf {
    let text = TWO_PERIODS.split("[[period]]").next().expect("first period");
    station_file(
        dir,
        &format!("single-{width}.toml"),
        &text.replace("width = 0.30", &format!("width = {width}")),
    )
}

#[test]
fn each_row_uses_the_rating_in_force_and_a_day_across_the_change_sums_its_rows() {
    let dir = tempfile::tempdir().expect("tempdir");
    let station = station_file(dir.path(), "two.toml", TWO_PERIODS);
    // hourly readings across the change at 12:00 local on 1 April 2025, two whole local days
    let mut csv = String::from("time,stage\n");
    for h in 0..48 {
        let stage = 0.20 + 0.1 * ((h as f64) / 7.0).sin();
        let date = if h < 24 { "2025-04-01" } else { "2025-04-02" };
        csv.push_str(&format!("{date} {:02}:00,{stage:.4}\n", h % 24));
    }
    let logger = dir.path().join("logger.csv");
    std::fs::write(&logger, csv).expect("write");
    let out = dir.path().join("q.csv");
    let daily = dir.path().join("daily.csv");
    let run = flumerate()
        .args(["convert", "--station"])
        .arg(&station)
        .arg(&logger)
        .arg("-o")
        .arg(&out)
        .arg("--daily")
        .arg(&daily)
        .output()
        .expect("run");
    assert!(run.status.success(), "{}", String::from_utf8_lossy(&run.stderr));
    let rows = read_csv(&out, b',');
    assert_eq!(rows.len(), 48);
    // each row against the rating of its own period, rated on its own (`rate` at that head)
    let (before, after) = (single(dir.path(), 0.30), single(dir.path(), 0.36));
    for (k, r) in rows.iter().enumerate() {
        let head: f64 = r["head_m"].parse().expect("head");
        let q: f64 = r["discharge_m3s"].parse().expect("q");
        let h = format!("{head}");
        let file = if k < 12 { &before } else { &after };
        let doc = rate_json(file, &["--from", &h, "--to", &h, "--step", "1"]);
        let expected = doc["rows"][0]["discharge_m3s"].as_f64().expect("q");
        assert!(
            rel(q, expected) < 1e-4,
            "row {k}: {q} against {expected} (dense table within 1e-4)"
        );
    }
    // the first day spans the change: its volume is the sum of its rows' discharge × 1 h
    let days = read_csv(&daily, b',');
    let day1: f64 = rows[..24]
        .iter()
        .map(|r| r["discharge_m3s"].parse::<f64>().expect("q") * 3600.0)
        .sum();
    let v: f64 = days[0]["volume_m3"].parse().expect("volume");
    assert!(rel(v, day1) < 1e-9, "{v} against {day1}");
    // and the wider throat passes more at the same head after the change
    let q11: f64 = rows[11]["discharge_m3s"].parse().expect("q");
    let q12: f64 = rows[12]["discharge_m3s"].parse().expect("q");
    let (h11, h12): (f64, f64) = (
        rows[11]["head_m"].parse().expect("h"),
        rows[12]["head_m"].parse().expect("h"),
    );
    assert!(q12 / h12.powf(1.5) > 1.1 * q11 / h11.powf(1.5));
}

#[test]
fn at_chooses_the_period_and_the_header_names_it() {
    let dir = tempfile::tempdir().expect("tempdir");
    let station = station_file(dir.path(), "two.toml", TWO_PERIODS);
    let text = |at: Option<&str>| {
        let mut c = flumerate();
        c.arg("rate").arg(&station).args(["--step", "0.1"]);
        if let Some(at) = at {
            c.args(["--at", at]);
        }
        String::from_utf8(c.output().expect("run").stdout).expect("utf-8")
    };
    let latest = text(None);
    assert!(
        latest.contains("width 0.3600 m")
            && latest.contains("rating T-2025-1, valid from 2025-04-01T12:00:00+01:00, draft")
    );
    // one second before the change (11:00:00Z = 12:00+01:00)
    let first = text(Some("2025-04-01T10:59:59Z"));
    assert!(first.contains("width 0.3000 m"), "{first}");
    assert!(first
        .contains("rating T-2024-1, valid from the start of the record, approved by A. Hydrographer on 2024-01-10"));
    assert!(text(Some("2025-04-01T11:00:00Z")).contains("width 0.3600 m"));
}

#[test]
fn bad_periods_are_named() {
    let dir = tempfile::tempdir().expect("tempdir");
    let vf = "valid_from = \"2025-04-01T12:00:00+01:00\"";
    for (from, to, says) in [
        (format!("{vf}\n"), String::new(), "valid_from"),
        (
            vf.to_string(),
            "valid_from = \"2025-04-01\"".to_string(),
            "not a time with its zone",
        ),
        (
            vf.to_string(),
            "valid_from = \"2023-01-01T00:00:00Z\"\n[[period]]\nvalid_from = \"2022-01-01T00:00:00Z\"".to_string(),
            "follow each other in time",
        ),
        (
            "status = \"draft\"".to_string(),
            "status = \"final\"".to_string(),
            "unknown status",
        ),
        (
            "width = 0.36\n".to_string(),
            "width = 0.36\n[period.logger]\nzero = 0.1\n".to_string(),
            "not the logger",
        ),
    ] {
        let text = TWO_PERIODS.replace(&from, &to);
        let station = station_file(dir.path(), "bad.toml", &text);
        let out = flumerate().arg("check").arg(&station).output().expect("run");
        let err = String::from_utf8_lossy(&out.stderr);
        assert_eq!(out.status.code(), Some(2), "{err}");
        assert!(err.contains(says) && err.contains("fix:"), "{says}: {err}");
    }
}
