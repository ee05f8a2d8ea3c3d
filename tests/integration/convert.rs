//! Logger conversion: no row lost, corrections against hand-worked cases, discharge equal to the
//! rating, summaries against an independent computation, clear errors for unreadable files.

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

use crate::common::{flumerate, read_csv, rel};
use flumerate::rating::RatingModel;
use flumerate::station::Station;
use predicates::prelude::*;

const DIR: &str = "tests/data/convert";

fn data(name: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join(DIR).join(name)
}

/// Output rows as maps column → text.
fn read_rows(path: &Path) -> Vec<BTreeMap<String, String>> {
    read_csv(path, b',')
}

fn convert(logger: &str, station: &str, dir: &Path, extra: &[&str]) -> (PathBuf, std::process::Output) {
    let out = dir.join(format!("{logger}.out.csv"));
    let o = flumerate()
        .arg("convert")
        .arg(data(logger))
        .arg("--station")
        .arg(data(station))
        .arg("-o")
        .arg(&out)
        .args(extra)
        .output()
        .expect("run");
    (out, o)
}

/// Non-blank lines after the header: the rows a file holds.
fn data_lines(path: &Path, skip: usize) -> Vec<usize> {
    let text = String::from_utf8_lossy(&std::fs::read(path).expect("read")).to_string();
    text.split('\n')
        .enumerate()
        .skip(skip + 1)
        .filter(|(_, l)| !l.trim().is_empty())
        .map(|(i, _)| i + 1)
        .collect()
}

#[test]
fn every_row_of_every_test_file_comes_out_once() {
    let dir = tempfile::tempdir().expect("tempdir");
    for (logger, station, extra, skip) in [
        ("messy.csv", "station.toml", vec![], 0),
        ("messy.csv", "station.toml", vec!["--sort"], 0),
        ("clean.csv", "station.toml", vec![], 0),
        (
            "drift.csv",
            "station.toml",
            vec!["--visits", "tests/data/convert/drift-visits.csv"],
            0,
        ),
        (
            "pressure.csv",
            "station-pressure.toml",
            vec!["--baro", "tests/data/convert/baro.csv"],
            0,
        ),
    ] {
        let (out, o) = convert(logger, station, dir.path(), &extra);
        assert!(o.status.success(), "{logger}: {}", String::from_utf8_lossy(&o.stderr));
        let all = read_rows(&out);
        // rows inserted into filled gaps have line 0 and an estimated flag (filled, or a range
        // flag, which is more severe)
        let (inserted, rows): (Vec<_>, Vec<_>) = all.iter().partition(|r| r["line"] == "0");
        let estimated = ["filled", "above-range", "below-range", "beyond-limits"];
        assert!(
            inserted.iter().all(|r| estimated.contains(&r["flag"].as_str())),
            "{logger}: inserted rows are estimated"
        );
        let mut lines: Vec<usize> = rows.iter().map(|r| r["line"].parse().expect("line")).collect();
        let expected = data_lines(&data(logger), skip);
        assert_eq!(rows.len(), expected.len(), "{logger} {extra:?}: rows in = rows out");
        lines.sort_unstable();
        assert_eq!(lines, expected, "{logger}: each input line exactly once");
        let flags = [
            "missing",
            "excluded",
            "out-of-water",
            "spike",
            "flat",
            "submerged",
            "above-range",
            "below-range",
            "beyond-limits",
            "filled",
            "dry",
            "ok",
        ];
        assert!(
            rows.iter().all(|r| flags.contains(&r["flag"].as_str())),
            "one known flag per row"
        );
    }
}

#[test]
fn messy_rows_are_flagged_and_reported() {
    let dir = tempfile::tempdir().expect("tempdir");
    // no gap filling: the rows' own flags
    let (out, o) = convert("messy.csv", "station.toml", dir.path(), &["--fill-max", "0"]);
    let report = String::from_utf8_lossy(&o.stdout).to_string();
    let rows = read_rows(&out);
    let by_line: BTreeMap<usize, &BTreeMap<String, String>> =
        rows.iter().map(|r| (r["line"].parse().expect("line"), r)).collect();
    let flag = |line: usize| by_line[&line]["flag"].as_str();
    // lines as numbered in messy.csv (the header is line 1)
    for missing in [10, 11, 12, 13, 14, 17, 18, 19, 25, 26] {
        assert_eq!(flag(missing), "missing", "line {missing}");
    }
    assert_eq!(
        flag(16),
        "missing",
        "a line with more fields than the header is not cut to fit"
    );
    assert_eq!(flag(23), "ok", "the second time format reads");
    assert_eq!(flag(33), "dry");
    assert_eq!(flag(34), "below-range");
    assert_eq!(flag(35), "above-range");
    assert_eq!(flag(37), "ok", "a CRLF line reads");
    // the report lists unreadable rows and the time oddities
    assert!(
        report.contains("unreadable rows (no head: missing, or filled in a short gap), lines: 10, 14, 16, 19"),
        "{report}"
    );
    assert!(report.contains("order: 1 step(s) back in time"), "{report}");
    assert!(
        report.contains("repeated instants: 2 instant(s) held by more than one row; 2 repeat row(s)"),
        "{report}"
    );
    assert!(
        report.contains("nonexistent (spring clock change): 2 row(s), lines 25, 26"),
        "{report}"
    );
    assert!(
        report.contains("repeated hour, taken as standard time: 2 row(s), lines 30, 31"),
        "{report}"
    );
    assert!(report.contains("2 blank line(s) skipped"), "{report}");
    // the overlap rows map to distinct instants one hour apart (Europe/Berlin, IANA tz database)
    assert_eq!(by_line[&28]["time"], "2026-10-25T02:00:00+02:00");
    assert_eq!(by_line[&30]["time"], "2026-10-25T02:00:00+01:00");
    let prov: serde_json::Value =
        serde_json::from_slice(&std::fs::read(format!("{}.provenance.json", out.display())).expect("provenance"))
            .expect("json");
    assert_eq!(prov["rows"]["input_rows"], prov["rows"]["output_rows"]);
    assert_eq!(
        prov["rows"]["blank_lines"],
        serde_json::json!({"total": 2, "first": [15, 36]})
    );
    assert_eq!(prov["logger"]["sha256"].as_str().expect("hash").len(), 64);
    assert_eq!(prov["station"]["sha256"].as_str().expect("hash").len(), 64);
}

#[test]
fn discharge_equals_the_rating_at_each_head() {
    let dir = tempfile::tempdir().expect("tempdir");
    let (out, o) = convert("clean.csv", "station.toml", dir.path(), &[]);
    assert!(o.status.success());
    let st = Station::load(&data("station.toml")).expect("station");
    let model = RatingModel::new(st.structure).expect("model");
    let rows = read_rows(&out);
    let mut checked = 0;
    for r in rows.iter().filter(|r| r["flag"] == "ok") {
        let h: f64 = r["head_m"].parse().expect("head");
        let q: f64 = r["discharge_m3s"].parse().expect("q");
        // the same model `flumerate rate` evaluates, solved exactly at this head
        let exact = model.discharge_m3s(h).expect("rated");
        assert!(rel(q, exact) < 1e-4, "h = {h}: {q} vs {exact} ({:e})", rel(q, exact));
        let (lo, hi): (f64, f64) = (
            r["discharge_low_m3s"].parse().expect("low"),
            r["discharge_high_m3s"].parse().expect("high"),
        );
        assert!(lo < q && q < hi);
        checked += 1;
    }
    assert!(checked > 250);
    // and one row against the rate command itself
    let r = rows.iter().find(|r| r["flag"] == "ok").expect("an ok row");
    let h = &r["head_m"];
    let doc = crate::common::rate_json(&data("station.toml"), &["--from", h, "--to", h, "--step", "1"]);
    let q_rate = doc["rows"][0]["discharge_m3s"].as_f64().expect("rate q");
    assert!(rel(r["discharge_m3s"].parse().expect("q"), q_rate) < 1e-4);
}

#[test]
fn drift_correction_against_a_hand_worked_case() {
    // logger stage 0.400 m throughout, zero 0.100 m: logger head 0.300 m. Visits: 00:00 staff
    // 300 mm (drift 0), 12:00 staff 310 mm (drift +10 mm). By hand: 06:00 → 0.305 m,
    // 11:30 → 0.300 + 0.010·11.5/12 = 0.3095833 m, 12:00 → 0.310 m, next day 00:00 (after the
    // last visit, held constant) → 0.310 m.
    let dir = tempfile::tempdir().expect("tempdir");
    let (out, o) = convert(
        "drift.csv",
        "station.toml",
        dir.path(),
        &["--visits", "tests/data/convert/drift-visits.csv"],
    );
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let rows = read_rows(&out);
    let head_at = |t: &str| -> f64 {
        rows.iter().find(|r| r["time"].starts_with(t)).expect(t)["head_m"]
            .parse()
            .expect("head")
    };
    assert!((head_at("2026-06-01T00:00") - 0.300).abs() < 1e-12);
    assert!((head_at("2026-06-01T06:00") - 0.305).abs() < 1e-12);
    assert!((head_at("2026-06-01T11:30") - 0.3095833333333333).abs() < 1e-12);
    assert!((head_at("2026-06-01T12:00") - 0.310).abs() < 1e-12);
    assert!((head_at("2026-06-02T00:00") - 0.310).abs() < 1e-12);
}

#[test]
fn barometric_compensation_against_a_hand_worked_case() {
    // depth = (p − p_baro)/(ρ(T)·g), g = 9.80665, densities from the CRC Handbook table (from
    // memory): 999.702 kg/m³ at 10 °C, 998.207 at 20 °C, 999.972 at 4 °C. Zero 0.300 m.
    // 00:00: (110 000 − 101 325)/(999.702·9.80665) = 0.884866 m, head 0.584866 m
    // 01:00: baro interpolated between 101.325 (00:00) and 101.625 kPa (03:00) to 101.425 kPa,
    //        temperature missing → the given 20 °C:
    //        8 575/(998.207·9.80665) = 0.875977 m, head 0.575977 m
    // 02:00: baro 101.525 kPa, 4 °C: 8 975/(999.972·9.80665) = 0.915221 m, head 0.615221 m
    let dir = tempfile::tempdir().expect("tempdir");
    let (out, o) = convert(
        "pressure.csv",
        "station-pressure.toml",
        dir.path(),
        &["--baro", "tests/data/convert/baro.csv"],
    );
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let rows = read_rows(&out);
    let heads: Vec<f64> = rows.iter().map(|r| r["head_m"].parse().expect("head")).collect();
    for (got, want) in heads.iter().zip([0.584866, 0.575977, 0.615221]) {
        assert!((got - want).abs() < 2e-5, "{got} vs {want}");
    }
}

#[test]
fn daily_means_and_volumes_match_an_independent_computation() {
    // tests/data/convert/clean-daily-fixture.csv was computed once by pandas 3.1.1 / numpy 2.4.6
    // (make_daily_fixture.py) from flumerate's series: grouping by Europe/Berlin calendar day,
    // including the 25-hour day of the clock change
    let dir = tempfile::tempdir().expect("tempdir");
    let daily = dir.path().join("daily.csv");
    let monthly = dir.path().join("monthly.parquet");
    let (_, o) = convert(
        "clean.csv",
        "station.toml",
        dir.path(),
        &[
            "--daily",
            daily.to_str().expect("path"),
            "--monthly",
            monthly.to_str().expect("path"),
        ],
    );
    assert!(o.status.success());
    let ours = read_rows(&daily);
    let fixture = read_rows(&data("clean-daily-fixture.csv"));
    assert_eq!(ours.len(), fixture.len());
    for (a, b) in ours.iter().zip(&fixture) {
        assert_eq!(a["date"], b["date"]);
        assert_eq!(a["rows_counted"], b["rows_counted"]);
        for k in ["mean_discharge_m3s", "volume_m3"] {
            let (x, y): (f64, f64) = (a[k].parse().expect("ours"), b[k].parse().expect("fixture"));
            assert!(rel(x, y) < 1e-9, "{} {k}: {x} vs {y}", a["date"]);
        }
        let u: f64 = a["volume_u95_m3"].parse().expect("u95");
        assert!(u > 0.0);
    }
    assert!(monthly.exists());
}

#[test]
fn parquet_output_and_plot_are_written() {
    use polars::prelude::*;
    let dir = tempfile::tempdir().expect("tempdir");
    let out = dir.path().join("series.parquet");
    let png = dir.path().join("hydro.png");
    flumerate()
        .arg("convert")
        .arg(data("messy.csv"))
        .arg("--station")
        .arg(data("station.toml"))
        .arg("-o")
        .arg(&out)
        .arg("--plot")
        .arg(&png)
        .assert()
        .success();
    let df = ParquetReader::new(std::fs::File::open(&out).expect("parquet"))
        .finish()
        .expect("read back");
    let names: Vec<String> = df.get_column_names().iter().map(|s| s.to_string()).collect();
    assert_eq!(
        names,
        [
            "time",
            "stage_m",
            "head_m",
            "discharge_m3s",
            "discharge_low_m3s",
            "discharge_high_m3s",
            "flag",
            "line",
            "counted_line"
        ]
    );
    // the same rows as the CSV output, value for value (nulls where the CSV is empty)
    let (csv_out, o) = convert("messy.csv", "station.toml", dir.path(), &[]);
    assert!(o.status.success());
    let rows = read_rows(&csv_out);
    assert_eq!(df.height(), rows.len());
    let zone = match df.column("time").expect("time").dtype() {
        DataType::Datetime(TimeUnit::Milliseconds, Some(tz)) => tz.to_string(),
        other => panic!("time column is {other:?}"),
    };
    assert_eq!(zone, "Europe/Berlin");
    let time_ms = df
        .column("time")
        .expect("time")
        .datetime()
        .expect("datetime")
        .physical()
        .clone();
    let flags = df.column("flag").expect("flag").str().expect("text").clone();
    let lines = df.column("line").expect("line").u32().expect("u32").clone();
    for (k, row) in rows.iter().enumerate() {
        let csv_time = &row["time"];
        match time_ms.get(k) {
            None => assert!(csv_time.is_empty(), "row {k}"),
            Some(ms) => {
                let t = chrono::DateTime::parse_from_rfc3339(csv_time).expect("rfc 3339");
                assert_eq!(t.timestamp_millis(), ms, "row {k}");
            }
        }
        for name in [
            "stage_m",
            "head_m",
            "discharge_m3s",
            "discharge_low_m3s",
            "discharge_high_m3s",
        ] {
            let got = df.column(name).expect("column").f64().expect("f64").get(k);
            let want = (!row[name].is_empty()).then(|| row[name].parse::<f64>().expect("number"));
            assert_eq!(got, want, "row {k} {name}");
        }
        assert_eq!(flags.get(k), Some(row["flag"].as_str()), "row {k}");
        assert_eq!(
            lines.get(k).map(|l| l.to_string()).as_deref(),
            Some(row["line"].as_str())
        );
    }
    assert_eq!(&std::fs::read(&png).expect("png")[..4], b"\x89PNG");
    let leftovers = std::fs::read_dir(dir.path()).expect("dir").filter(|e| {
        e.as_ref()
            .is_ok_and(|e| e.file_name().to_string_lossy().ends_with(".tmp"))
    });
    assert_eq!(leftovers.count(), 0);
}

#[test]
fn unreadable_inputs_are_clear_errors() {
    let dir = tempfile::tempdir().expect("tempdir");
    let out = dir.path().join("x.csv");
    let run = |logger: &Path, extra: &[&str]| {
        flumerate()
            .arg("convert")
            .arg(logger)
            .arg("--station")
            .arg(data("station.toml"))
            .arg("-o")
            .arg(&out)
            .args(extra)
            .assert()
            .code(2)
    };
    run(&dir.path().join("nope.csv"), &[]).stderr(predicate::str::contains("cannot read logger file"));
    let empty = dir.path().join("empty.csv");
    std::fs::write(&empty, "").expect("write");
    run(&empty, &[]).stderr(predicate::str::contains("no data rows"));
    let wrong = dir.path().join("wrong.csv");
    std::fs::write(&wrong, "when,level\n2026-01-01 00:00,0.3\n").expect("write");
    run(&wrong, &[])
        .stderr(predicate::str::contains("no column \"time\""))
        .stderr(predicate::str::contains("\"when\""));
    run(&data("clean.csv"), &["--timezone", "Mars/Olympus"]).stderr(predicate::str::contains("unknown time zone"));
    assert!(!out.exists(), "no output file after an error");
    // a pressure logger without a barometric file
    flumerate()
        .arg("convert")
        .arg(data("pressure.csv"))
        .arg("--station")
        .arg(data("station-pressure.toml"))
        .arg("-o")
        .arg(&out)
        .assert()
        .code(2)
        .stderr(predicate::str::contains("--baro"));
}

#[test]
fn dense_table_interpolates_within_a_hundredth_of_a_percent() {
    use flumerate::series::dense::DenseRating;
    use flumerate::tailwater::{Exit, Tailwater};
    use flumerate::uncertainty::{GumModel, Inputs};
    for file in [
        "ridgeway-canal-flume",
        "mill-lane-effluent-flume",
        "fernhill-drain-survey",
        "alder-brook-weir",
    ] {
        let st = Station::load(Path::new(&format!(
            "{}/ratings/{file}.toml",
            env!("CARGO_MANIFEST_DIR")
        )))
        .expect("station");
        let model = RatingModel::new(st.structure.clone()).expect("model");
        let gum = GumModel::new(&model, Inputs::from_station(&st.uncertainty, &st.structure)).expect("gum");
        let tw = st.tailwater.clone().map(|t| Tailwater::new(t, 9.80665));
        let t = DenseRating::new(
            &gum,
            &Exit::from(&st.exit),
            tw.as_ref(),
            1.5 * st.range.max_head_m,
            st.range.min_head_m,
        )
        .expect("table");
        assert!(t.max_relative_error < 1e-4, "{file}: {}", t.max_relative_error);
        // and at heads of our own choosing
        for k in 0..97 {
            let h = st.range.min_head_m + (st.range.max_head_m - st.range.min_head_m) * (k as f64 + 0.123) / 97.0;
            let q = t.eval(h).expect("in table").discharge_m3s;
            assert!(rel(q, model.discharge_m3s(h).expect("q")) < 1e-4, "{file} h = {h}");
        }
    }
}

#[test]
fn a_logged_tailwater_flags_drowned_rows_and_the_estimate_applies_only_to_weirs() {
    // head 0.300 m on the test flume (abrupt exit, ξ = 1.2, no tailwater section: modular limit
    // about 0.58); tailwater logger zero 0.100 m. Rows: tailwater 0.05 m below the crest, 0.12 m
    // above it (H2/H1 about 0.4), 0.25 m (about 0.83: drowned, within Villemonte's 0.90), none logged.
    let dir = tempfile::tempdir().expect("tempdir");
    let flags = |station: &Path, extra: &[&str]| -> (Vec<String>, Vec<f64>) {
        let out = dir.path().join("tw.csv");
        flumerate()
            .arg("convert")
            .arg(data("tailwater.csv"))
            .arg("--station")
            .arg(station)
            .args(["--tailwater-column", "tw", "--tailwater-zero", "0.1", "-o"])
            .arg(&out)
            .args(extra)
            .assert()
            .success();
        let rows = read_rows(&out);
        (
            rows.iter().map(|r| r["flag"].clone()).collect(),
            rows.iter().map(|r| r["discharge_m3s"].parse().expect("q")).collect(),
        )
    };
    let (f, q) = flags(&data("station.toml"), &["--submerged-estimate"]);
    assert_eq!(f, ["ok", "ok", "submerged", "ok"]);
    // a flume: Villemonte does not apply, so the drowned row keeps the free-flow value
    assert!((q[2] - q[0]).abs() < 1e-15);
    // the same structure declared a weir: the estimate replaces it (Villemonte 1947)
    let weir = dir.path().join("weir.toml");
    let text = std::fs::read_to_string(data("station.toml")).expect("read").replace(
        "[control]\n",
        "[control]\nstructure = \"weir\"\nupstream_edge = \"rounded\"\n",
    );
    std::fs::write(&weir, text).expect("write");
    let (f, q) = flags(&weir, &["--submerged-estimate"]);
    assert_eq!(f[2], "submerged");
    assert!(
        q[2] > 0.0 && q[2] < 0.8 * q[0],
        "drowned flow is estimated lower: {} vs {}",
        q[2],
        q[0]
    );
}
