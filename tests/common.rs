//! Helpers shared by the integration tests.

use std::path::{Path, PathBuf};

use assert_cmd::Command;
use serde_json::Value;

/// The built `flumerate` binary, run from the crate root.
pub fn flumerate() -> Command {
    let mut cmd = Command::new(assert_cmd::cargo::cargo_bin!("flumerate"));
    cmd.current_dir(env!("CARGO_MANIFEST_DIR"));
    cmd
}

/// Writes a station file into `dir` and returns its path.
pub fn station_file(dir: &Path, name: &str, text: &str) -> PathBuf {
    let p = dir.join(name);
    std::fs::write(&p, text).expect("write station file");
    p
}

/// Runs `flumerate rate <station> --format json <extra...>` and returns the parsed document.
pub fn rate_json(station: &Path, extra: &[&str]) -> Value {
    let out = flumerate()
        .arg("rate")
        .arg(station)
        .args(["--format", "json"])
        .args(extra)
        .output()
        .expect("run flumerate");
    assert!(
        out.status.success(),
        "rate failed: {}",
        String::from_utf8_lossy(&out.stderr)
    );
    serde_json::from_slice(&out.stdout).expect("rate --format json gives JSON")
}

/// The single row of a one-head `rate` run at `head` (in the output unit).
pub fn rate_one(station: &Path, head: f64, units: &str) -> Value {
    let h = format!("{head}");
    let doc = rate_json(station, &["--from", &h, "--to", &h, "--step", "1", "--units", units]);
    doc["rows"][0].clone()
}

/// Relative difference |a − b|/|b|.
pub fn rel(a: f64, b: f64) -> f64 {
    ((a - b) / b).abs()
}

/// A station file around a given control and approach (SI, metres).
pub fn station_text(control: &str, approach: &str, coefficient: &str, range: (f64, f64)) -> String {
    format!(
        "name = \"test station\"\nlength_unit = \"m\"\n\n[control]\n{control}\ncoefficient = {coefficient}\n\n[approach]\n{approach}\n\n[range]\nmin_head = {}\nmax_head = {}\n",
        range.0, range.1
    )
}

/// A station whose short throat is rated to a high head, so H1/L > 0.7 at the top of its range
/// (a limit from Clemmens et al. 2001, from memory).
pub fn short_throat_station(dir: &Path) -> PathBuf {
    station_file(
        dir,
        "short.toml",
        &station_text(
            "shape = \"rectangle\"\nwidth = 0.5\nlength = 0.3",
            "shape = \"rectangle\"\nwidth = 1.5\nsill_height = 0.3",
            "\"boundary-layer\"",
            (0.05, 0.4),
        ),
    )
}

/// A CSV file as maps column → text, fields separated by `sep`.
pub fn read_csv(path: &Path, sep: u8) -> Vec<std::collections::BTreeMap<String, String>> {
    let mut r = csv::ReaderBuilder::new().delimiter(sep).from_path(path).expect("csv");
    let headers = r.headers().expect("header").clone();
    r.records()
        .map(|rec| {
            let rec = rec.expect("record");
            headers
                .iter()
                .zip(rec.iter())
                .map(|(h, v)| (h.to_string(), v.to_string()))
                .collect()
        })
        .collect()
}
