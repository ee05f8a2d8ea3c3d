//! `flumerate network`: the demo network (three invented stations, one broken on purpose)
//! converted at once: the broken one reported, the others' parts of the dataset equal to their
//! own conversions, the summary table equal to their daily summaries, the overview one page.

use std::collections::BTreeMap;

use crate::common::{flumerate, read_csv, rel};

#[test]
fn the_demo_network_converts_reports_the_broken_station_and_agrees_with_single_runs() {
    use polars::prelude::*;
    let dir = tempfile::tempdir().expect("tempdir");
    let out = dir.path().join("net");
    let run = flumerate()
        .args([
            "network",
            "examples/network/harrow-vale.toml",
            "--date",
            "2026-12-02",
            "-o",
        ])
        .arg(&out)
        .output()
        .expect("run");
    let stdout = String::from_utf8_lossy(&run.stdout);
    assert_eq!(run.status.code(), Some(1), "one station fails: {stdout}");
    assert!(
        stdout.contains("2 of 3 stations converted") && stdout.contains("FAILED kestrel-lateral"),
        "{stdout}"
    );
    assert!(
        stdout.contains("no column \"stage_m\""),
        "the reason is named: {stdout}"
    );
    assert!(
        !out.join("series/station=kestrel-lateral").exists(),
        "no empty partition"
    );

    // each converted station's partition equals its own `convert` run, row for row
    let summary = read_csv(&out.join("daily.csv"), b',');
    for (id, station, logger, extra) in [
        (
            "mill-lane-outfall",
            "ratings/mill-lane-outfall-vnotch.toml",
            "examples/network/mill-lane-outfall-logger.csv",
            vec![],
        ),
        (
            "ridgeway",
            "ratings/ridgeway-canal-flume.toml",
            "examples/ridgeway-logger.csv",
            vec![
                "--baro",
                "examples/ridgeway-baro.csv",
                "--visits",
                "examples/ridgeway-visits.csv",
                "--edits",
                "examples/ridgeway-edits.csv",
            ],
        ),
    ] {
        let part = out.join(format!("series/station={id}/part-0.parquet"));
        let df = ParquetReader::new(std::fs::File::open(&part).expect("partition"))
            .finish()
            .expect("read back");
        let single = dir.path().join(format!("{id}.csv"));
        let daily = dir.path().join(format!("{id}-daily.csv"));
        let o = flumerate()
            .args(["convert", "--station", station, logger])
            .args(&extra)
            .arg("-o")
            .arg(&single)
            .arg("--daily")
            .arg(&daily)
            .output()
            .expect("run");
        assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
        let rows = read_csv(&single, b',');
        assert_eq!(df.height(), rows.len(), "{id}");
        let q = df.column("discharge_m3s").expect("q").f64().expect("f64").clone();
        for (k, r) in rows.iter().enumerate() {
            match (q.get(k), r["discharge_m3s"].parse::<f64>().ok()) {
                (Some(a), Some(b)) => assert!(rel(a, b) < 1e-12 || (a - b).abs() < 1e-15, "{id} row {k}"),
                (None, None) => {}
                other => panic!("{id} row {k}: {other:?}"),
            }
        }
        // the summary table's days for this station equal its own daily summary
        let own: BTreeMap<String, f64> = read_csv(&daily, b',')
            .iter()
            .map(|d| (d["date"].clone(), d["volume_m3"].parse().unwrap_or(f64::NAN)))
            .collect();
        let net: BTreeMap<String, f64> = summary
            .iter()
            .filter(|d| d["station"] == id)
            .map(|d| (d["date"].clone(), d["volume_m3"].parse().unwrap_or(f64::NAN)))
            .collect();
        assert_eq!(own.len(), net.len(), "{id}: days");
        for (day, v) in &own {
            let w = net[day];
            assert!(
                (v.is_nan() && w.is_nan()) || rel(w, *v) < 1e-12,
                "{id} {day}: {w} against {v}"
            );
        }
    }

    // the overview: one page naming every station and the failure in words
    let html = std::fs::read_to_string(out.join("overview.html")).expect("overview");
    for w in [
        "ridgeway",
        "mill-lane-outfall",
        "kestrel-lateral",
        "FAILED",
        "2026-10",
        "field gaugings",
    ] {
        assert!(html.contains(w), "{w}");
    }
    if let Some(chrome) = super::sheet::chromium() {
        let pdf = dir.path().join("overview.pdf");
        let ok = std::process::Command::new(chrome)
            .args(["--headless", "--no-sandbox", "--disable-gpu", "--no-pdf-header-footer"])
            .arg(format!("--print-to-pdf={}", pdf.display()))
            .arg(format!("file://{}", out.join("overview.html").display()))
            .output()
            .expect("chromium");
        assert!(ok.status.success());
        let info = std::process::Command::new("pdfinfo")
            .arg(&pdf)
            .output()
            .expect("pdfinfo");
        assert!(
            String::from_utf8_lossy(&info.stdout).contains("Pages:           1"),
            "one page"
        );
        let text = std::process::Command::new("pdftotext")
            .arg(&pdf)
            .arg("-")
            .output()
            .expect("pdftotext");
        let text = String::from_utf8_lossy(&text.stdout);
        for w in ["ridgeway", "mill-lane-outfall", "kestrel-lateral", "FAILED"] {
            assert!(text.contains(w), "{w} printed");
        }
    }
}

#[test]
fn a_bad_network_file_is_named() {
    let dir = tempfile::tempdir().expect("tempdir");
    for (text, says) in [
        ("name = \"n\"\n", "missing field `station`"),
        ("name = \"n\"\n[[station]]\nid = \"a b\"\nstation = \"s.toml\"\nlogger = \"l.csv\"\n", "cannot name a folder"),
        (
            "name = \"n\"\n[[station]]\nid = \"a\"\nstation = \"s.toml\"\nlogger = \"l.csv\"\n[[station]]\nid = \"a\"\nstation = \"s.toml\"\nlogger = \"l.csv\"\n",
            "appears twice",
        ),
    ] {
        let f = dir.path().join("net.toml");
        std::fs::write(&f, text).expect("write");
        let out = flumerate().arg("network").arg(&f).arg("-o").arg(dir.path().join("o")).output().expect("run");
        let err = String::from_utf8_lossy(&out.stderr);
        assert_eq!(out.status.code(), Some(2), "{err}");
        assert!(err.contains(says) && err.contains("fix:"), "{says}: {err}");
    }
}
