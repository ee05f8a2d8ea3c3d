//! Every file in tests/data/bad/ is a station file that is wrong in one way. Each must be
//! rejected by `check` and `rate` with exit code 2 (never a panic), and the message must name the
//! file, the line marked `# <- error` in the file, and a fix.

use crate::common::flumerate;
use std::path::PathBuf;

fn bad_files() -> Vec<PathBuf> {
    let dir = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("tests/data/bad");
    let mut files: Vec<PathBuf> = std::fs::read_dir(&dir)
        .expect("tests/data/bad exists")
        .map(|e| e.expect("dir entry").path())
        .filter(|p| p.extension().is_some_and(|e| e == "toml"))
        .collect();
    files.sort();
    files
}

#[test]
fn there_are_at_least_twenty_malformed_station_files() {
    assert!(bad_files().len() >= 20, "only {} files", bad_files().len());
}

#[test]
fn every_malformed_station_file_gives_a_located_error_and_exit_2() {
    for file in bad_files() {
        let text = std::fs::read_to_string(&file).expect("read");
        let marker = text
            .lines()
            .position(|l| l.contains("<- error"))
            .unwrap_or_else(|| panic!("{} has no `# <- error` marker", file.display()))
            + 1;
        let rel = file.strip_prefix(env!("CARGO_MANIFEST_DIR")).expect("inside the crate");
        for cmd in ["check", "rate"] {
            let out = flumerate().arg(cmd).arg(rel).output().expect("run");
            let stderr = String::from_utf8_lossy(&out.stderr);
            assert_eq!(out.status.code(), Some(2), "{cmd} {}: {stderr}", rel.display());
            assert!(
                !stderr.contains("panicked"),
                "{cmd} {} panicked: {stderr}",
                rel.display()
            );
            let location = format!("{}:{marker}:", rel.display());
            assert!(stderr.contains(&location), "{cmd}: expected {location} in: {stderr}");
            assert!(stderr.contains("fix:"), "{cmd} {}: no fix in: {stderr}", rel.display());
            assert!(
                out.stdout.is_empty(),
                "{cmd} {}: wrote output despite the error",
                rel.display()
            );
        }
    }
}

#[test]
fn error_messages_name_the_key_and_the_rule() {
    // spot checks of the wording, so messages stay useful
    let cases = [
        ("negative-width", "control.width", "greater than zero"),
        ("unknown-shape", "control.shape", "unknown shape \"hexagon\""),
        ("missing-length", "control.length", "required"),
        ("points-decreasing", "control.points", "offsets must not decrease"),
        ("number-in-quotes", "control.width", "invalid type"),
        ("unknown-key", "control.widht", "unknown field"),
        ("tailwater-table-not-monotone", "tailwater.table", "not monotone"),
        ("points-triple", "control.points", "3 numbers"),
    ];
    for (name, key, rule) in cases {
        let out = flumerate()
            .args(["check", &format!("tests/data/bad/{name}.toml")])
            .output()
            .expect("run");
        let stderr = String::from_utf8_lossy(&out.stderr);
        assert!(stderr.contains(key), "{name}: key {key} not named: {stderr}");
        assert!(stderr.contains(rule), "{name}: rule '{rule}' not stated: {stderr}");
    }
}

#[test]
fn a_missing_station_file_is_a_clear_error() {
    let out = flumerate()
        .args(["rate", "ratings/no-such-station.toml"])
        .output()
        .expect("run");
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert_eq!(out.status.code(), Some(2));
    assert!(
        stderr.contains("ratings/no-such-station.toml") && stderr.contains("fix:"),
        "{stderr}"
    );
}
