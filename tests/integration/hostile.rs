//! Hostile and careless inputs: impossible readings, awkward exports, outputs that would destroy
//! inputs, sizes that would exhaust memory, and the clear error each deserves. Every file-safety
//! test works in a temporary directory of its own (never against the real /dev).

use std::path::{Path, PathBuf};

use crate::common::flumerate;
use predicates::prelude::*;

fn data(name: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/data/convert")
        .join(name)
}

fn sha(path: &Path) -> String {
    use sha2::Digest;
    format!("{:x}", sha2::Sha256::digest(std::fs::read(path).expect("read")))
}

/// Files in `dir` whose names start with a dot: the temporaries and kept previous outputs.
fn hidden_files(dir: &Path) -> Vec<String> {
    std::fs::read_dir(dir)
        .expect("dir")
        .filter_map(|e| e.ok())
        .map(|e| e.file_name().to_string_lossy().to_string())
        .filter(|n| n.starts_with('.'))
        .collect()
}

/// Output rows as (line, flag).
fn flags(path: &Path) -> Vec<(u32, String)> {
    let mut r = csv::Reader::from_path(path).expect("csv");
    let h = r.headers().expect("header").clone();
    let li = h.iter().position(|c| c == "line").expect("line");
    let fi = h.iter().position(|c| c == "flag").expect("flag");
    r.records()
        .map(|rec| {
            let rec = rec.expect("record");
            (rec[li].parse().expect("line"), rec[fi].to_string())
        })
        .collect()
}

#[test]
fn a_short_newest_first_export_converts() {
    let dir = tempfile::tempdir().expect("tempdir");
    let logger = dir.path().join("newest.csv");
    std::fs::write(
        &logger,
        "time,stage\n2026-05-01 01:00,0.40\n2026-05-01 00:45,0.39\n2026-05-01 00:30,0.38\n",
    )
    .expect("write");
    let out = dir.path().join("out.csv");
    flumerate()
        .arg("convert")
        .arg(&logger)
        .arg("--station")
        .arg(data("station.toml"))
        .arg("-o")
        .arg(&out)
        .assert()
        .success()
        .stdout(predicate::str::contains("order: newest first"))
        .stdout(predicate::str::contains("nominal interval 900 s"));
    assert!(flags(&out).iter().all(|(_, f)| f == "ok"));
}

#[test]
fn impossible_readings_are_flagged_missing_never_zero_flow() {
    let dir = tempfile::tempdir().expect("tempdir");
    // a level logger (depth over its sensor): far below the sensor, and a reading in millimetres
    // where metres were expected
    let logger = dir.path().join("level.csv");
    std::fs::write(
        &logger,
        "time,stage\n2026-05-01 00:00,0.40\n2026-05-01 00:15,-0.50\n2026-05-01 00:30,-0.05\n2026-05-01 00:45,412\n2026-05-01 01:00,0.41\n",
    )
    .expect("write");
    let out = dir.path().join("out.csv");
    let o = flumerate()
        .arg("convert")
        .arg(&logger)
        .arg("--station")
        .arg(data("station.toml"))
        .arg("-o")
        .arg(&out)
        .args(["--fill-max", "0"])
        .output()
        .expect("run");
    assert!(o.status.success());
    let report = String::from_utf8_lossy(&o.stdout);
    assert!(
        report.contains(
            "impossible readings, more than 0.10 m below the sensor's dry reading (no head: missing, or filled in a short gap): 1 row(s), lines 3"
        ),
        "{report}"
    );
    assert!(
        report.contains("more water over the sensor than [logger] max_depth (no head: missing, or filled in a short gap): 1 row(s), lines 5"),
        "{report}"
    );
    let f = flags(&out);
    assert_eq!(f[1], (3, "missing".to_string()));
    // 5 cm below the dry reading is not impossible, but the sensor (below the crest) reads no
    // water over it: out of the water, not a dry channel (issue 13)
    assert_eq!(f[2], (4, "out-of-water".to_string()), "not impossible, not dry");
    assert_eq!(f[3], (5, "missing".to_string()));

    // an absolute-pressure logger: a negative pressure and one far above atmosphere + water
    let logger = dir.path().join("pressure.csv");
    std::fs::write(
        &logger,
        "time,p_kpa,temp_c\n2026-06-01 00:00,110.000,10\n2026-06-01 01:00,-5.0,10\n2026-06-01 02:00,900.0,10\n2026-06-01 03:00,110.2,10\n",
    )
    .expect("write");
    let out = dir.path().join("p.csv");
    let o = flumerate()
        .arg("convert")
        .arg(&logger)
        .arg("--station")
        .arg(data("station-pressure.toml"))
        .arg("--baro")
        .arg(data("baro.csv"))
        .arg("-o")
        .arg(&out)
        .args(["--fill-max", "0"])
        .output()
        .expect("run");
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let report = String::from_utf8_lossy(&o.stdout);
    assert!(
        report.contains("negative absolute pressure (no head: missing, or filled in a short gap): 1 row(s), lines 3"),
        "{report}"
    );
    assert!(
        report.contains("max_depth (no head: missing, or filled in a short gap): 1 row(s), lines 4"),
        "{report}"
    );
    let f = flags(&out);
    assert_eq!(f[1].1, "missing");
    assert_eq!(f[2].1, "missing");
    let prov: serde_json::Value =
        serde_json::from_slice(&std::fs::read(format!("{}.provenance.json", out.display())).expect("prov"))
            .expect("json");
    assert_eq!(prov["rows"]["impossible_readings"]["total"], 2);
}

#[test]
fn decimal_commas_with_a_comma_separator_read_only_when_quoted() {
    let dir = tempfile::tempdir().expect("tempdir");
    let out = dir.path().join("out.csv");
    let logger = dir.path().join("comma.csv");
    std::fs::write(&logger, "time,stage\n2026-05-01 00:00,0,40\n2026-05-01 00:15,0,41\n").expect("write");
    flumerate()
        .arg("convert")
        .arg(&logger)
        .arg("--station")
        .arg(data("station.toml"))
        .args(["--decimal-comma", "-o"])
        .arg(&out)
        .assert()
        .code(2)
        .stderr(predicate::str::contains("decimal comma").and(predicate::str::contains("fix:")));
    let quoted = dir.path().join("quoted.csv");
    std::fs::write(
        &quoted,
        "\"time\",\"stage\"\n\"2026-05-01 00:00\",\"0,40\"\n\"2026-05-01 00:15\",\"0,41\"\n",
    )
    .expect("write");
    flumerate()
        .arg("convert")
        .arg(&quoted)
        .arg("--station")
        .arg(data("station.toml"))
        .args(["--decimal-comma", "-o"])
        .arg(&out)
        .assert()
        .success();
    let mut r = csv::Reader::from_path(&out).expect("csv");
    let stage: Vec<f64> = r.records().map(|x| x.expect("rec")[1].parse().expect("num")).collect();
    assert_eq!(stage.len(), 2);
    assert!((stage[0] - 0.40).abs() < 1e-12 && (stage[1] - 0.41).abs() < 1e-12);
}

/// Runs convert on the test station with the given logger and extra arguments.
fn convert_in(dir: &Path, logger: &Path, extra: &[&std::ffi::OsStr]) -> assert_cmd::assert::Assert {
    flumerate()
        .current_dir(dir)
        .arg("convert")
        .arg(logger)
        .arg("--station")
        .arg(data("station.toml"))
        .args(extra)
        .assert()
}

#[test]
fn an_output_that_names_an_input_or_another_output_is_refused_before_writing() {
    let dir = tempfile::tempdir().expect("tempdir");
    let logger = dir.path().join("logger.csv");
    std::fs::copy(data("clean.csv"), &logger).expect("copy");
    let before = sha(&logger);
    let os = |s: &str| std::ffi::OsString::from(s);
    let cases: Vec<(Vec<std::ffi::OsString>, &str)> = vec![
        (
            vec![os("-o"), logger.clone().into()],
            "the same file as the logger file",
        ),
        // another spelling of the same path
        (
            vec![os("-o"), dir.path().join("sub/../logger.csv").into()],
            "the same file as the logger file",
        ),
        (
            vec![os("-o"), os("out.csv"), os("--daily"), os("out.csv")],
            "are the same file",
        ),
        (
            vec![os("-o"), os("out.csv"), os("--provenance"), logger.clone().into()],
            "the same file as the logger file",
        ),
        (
            vec![os("-o"), os("out.csv"), os("--provenance"), data("station.toml").into()],
            "the same file as the station file",
        ),
    ];
    std::fs::create_dir(dir.path().join("sub")).expect("mkdir");
    for (args, message) in cases {
        let refs: Vec<&std::ffi::OsStr> = args.iter().map(|a| a.as_os_str()).collect();
        convert_in(dir.path(), &logger, &refs)
            .code(2)
            .stderr(predicate::str::contains(message));
        assert_eq!(sha(&logger), before, "the logger file is untouched ({args:?})");
    }
    // a hard link to the logger is the logger
    let linked = dir.path().join("linked.csv");
    std::fs::hard_link(&logger, &linked).expect("link");
    convert_in(dir.path(), &logger, &[std::ffi::OsStr::new("-o"), linked.as_os_str()])
        .code(2)
        .stderr(predicate::str::contains("the same file as the logger file"));
    // rate -o onto its own station file
    let station = dir.path().join("st.toml");
    std::fs::copy(data("station.toml"), &station).expect("copy");
    let st_before = sha(&station);
    flumerate()
        .arg("rate")
        .arg(&station)
        .arg("-o")
        .arg(&station)
        .assert()
        .code(2)
        .stderr(predicate::str::contains("the same file as the station file"));
    assert_eq!(sha(&station), st_before);
    assert!(hidden_files(dir.path()).is_empty(), "{:?}", hidden_files(dir.path()));
}

#[test]
fn symbolic_link_outputs_are_refused_and_left_alone() {
    let dir = tempfile::tempdir().expect("tempdir");
    let target = dir.path().join("precious.csv");
    std::fs::write(&target, "keep me\n").expect("write");
    let link = dir.path().join("out.csv");
    std::os::unix::fs::symlink(&target, &link).expect("symlink");
    convert_in(
        dir.path(),
        &data("clean.csv"),
        &[std::ffi::OsStr::new("-o"), link.as_os_str()],
    )
    .code(2)
    .stderr(predicate::str::contains("is a symbolic link"));
    assert_eq!(std::fs::read_to_string(&target).expect("read"), "keep me\n");
    assert!(std::fs::symlink_metadata(&link).expect("meta").file_type().is_symlink());
}

#[test]
fn a_named_pipe_output_is_written_to_never_replaced() {
    use std::io::Read;
    let dir = tempfile::tempdir().expect("tempdir");
    let fifo = dir.path().join("sheet.fifo");
    let made = std::process::Command::new("mkfifo")
        .arg(&fifo)
        .status()
        .expect("mkfifo");
    assert!(made.success());
    let reader = {
        let fifo = fifo.clone();
        std::thread::spawn(move || {
            let mut s = String::new();
            std::fs::File::open(&fifo)
                .expect("open fifo")
                .read_to_string(&mut s)
                .expect("read");
            s
        })
    };
    flumerate()
        .arg("rate")
        .arg(data("station.toml"))
        .args(["--format", "csv", "-o"])
        .arg(&fifo)
        .assert()
        .success();
    let text = reader.join().expect("reader");
    assert!(text.starts_with("head_m,discharge_m3s"), "{text}");
    use std::os::unix::fs::FileTypeExt;
    assert!(
        std::fs::metadata(&fifo).expect("meta").file_type().is_fifo(),
        "still a pipe"
    );
    assert!(hidden_files(dir.path()).is_empty());
}

/// A failure before the outputs are renamed leaves the previous set as it was, and no
/// temporary behind.
#[test]
fn a_failed_run_leaves_the_previous_outputs_untouched() {
    let dir = tempfile::tempdir().expect("tempdir");
    let o = std::ffi::OsStr::new;
    convert_in(
        dir.path(),
        &data("clean.csv"),
        &[o("-o"), o("out.csv"), o("--daily"), o("daily.csv")],
    )
    .success();
    let names = ["out.csv", "daily.csv", "out.csv.provenance.json"];
    let before: Vec<String> = names.iter().map(|n| sha(&dir.path().join(n))).collect();
    // the plot's folder does not exist: the run fails after converting, before any rename
    convert_in(
        dir.path(),
        &data("messy.csv"),
        &[
            o("-o"),
            o("out.csv"),
            o("--daily"),
            o("daily.csv"),
            o("--plot"),
            o("missing/plot.png"),
        ],
    )
    .code(2)
    .stderr(predicate::str::contains("missing/plot.png"));
    let after: Vec<String> = names.iter().map(|n| sha(&dir.path().join(n))).collect();
    assert_eq!(before, after);
    assert!(hidden_files(dir.path()).is_empty(), "{:?}", hidden_files(dir.path()));
}

/// SIGTERM in the middle of a run: afterwards the outputs are either all of the previous run or
/// all of the new one (the provenance names the logger whose rows the series holds), and no
/// temporary file is left.
#[test]
fn a_terminated_run_leaves_one_consistent_set_and_no_temporaries() {
    let dir = tempfile::tempdir().expect("tempdir");
    let o = std::ffi::OsStr::new;
    convert_in(
        dir.path(),
        &data("clean.csv"),
        &[o("-o"), o("out.csv"), o("--daily"), o("daily.csv")],
    )
    .success();
    let old_rows = flags(&dir.path().join("out.csv")).len();
    // a longer export, so that the signal finds the run at work
    let big = dir.path().join("big.csv");
    let mut text = String::from("time,stage\n");
    for k in 0..200_000u32 {
        let (d, m) = (k / 96, k % 96);
        text.push_str(&format!(
            "{}-{:02}-{:02} {:02}:{:02},0.3\n",
            2020 + d / 360,
            1 + (d % 360) / 30,
            1 + d % 30,
            m / 4,
            (m % 4) * 15
        ));
    }
    std::fs::write(&big, text).expect("write");
    let bin = assert_cmd::cargo::cargo_bin!("flumerate");
    for delay_ms in [150u64, 400, 900] {
        let mut child = std::process::Command::new(bin)
            .current_dir(dir.path())
            .arg("convert")
            .arg(&big)
            .arg("--station")
            .arg(data("station.toml"))
            .args(["-o", "out.csv", "--daily", "daily.csv"])
            .stdout(std::process::Stdio::null())
            .stderr(std::process::Stdio::null())
            .spawn()
            .expect("spawn");
        std::thread::sleep(std::time::Duration::from_millis(delay_ms));
        let _ = std::process::Command::new("kill")
            .args(["-TERM", &child.id().to_string()])
            .status();
        let _ = child.wait();
        let prov: serde_json::Value =
            serde_json::from_slice(&std::fs::read(dir.path().join("out.csv.provenance.json")).expect("provenance"))
                .expect("json");
        let rows = flags(&dir.path().join("out.csv")).len();
        let logger_hash = prov["logger"]["sha256"].as_str().expect("hash").to_string();
        let want = if logger_hash == sha(&big) { 200_000 } else { old_rows };
        assert!(logger_hash == sha(&data("clean.csv")) || logger_hash == sha(&big));
        assert_eq!(
            rows, want,
            "the series belongs to the provenance (killed after {delay_ms} ms)"
        );
        assert_eq!(prov["rows"]["output_rows"], want);
        assert!(hidden_files(dir.path()).is_empty(), "{:?}", hidden_files(dir.path()));
    }
}

#[test]
fn hostile_sizes_are_refused_before_any_allocation() {
    let st = data("station.toml");
    for (args, message) in [
        (
            vec!["--uncertainty", "mc", "--draws", "1000000000000"],
            "--draws 2000000 or fewer",
        ),
        (
            vec!["--uncertainty", "mc", "--threads", "0"],
            "give 1 to 256 (--threads)",
        ),
        (
            vec!["--uncertainty", "mc", "--threads", "100000"],
            "give 1 to 256 (--threads)",
        ),
        (vec!["--step", "0.0000001"], "rows"),
    ] {
        flumerate()
            .arg("rate")
            .arg(&st)
            .args(&args)
            .assert()
            .code(2)
            .stderr(predicate::str::contains(message));
    }
}

#[test]
fn a_600_point_survey_is_accepted_and_too_many_points_named() {
    let dir = tempfile::tempdir().expect("tempdir");
    let section = |n: usize| -> String {
        (0..n)
            .map(|i| {
                let x = -3.0 + 6.0 * i as f64 / (n - 1) as f64;
                format!("[{x:.5}, {:.5}]", 0.8 * (x / 3.0).powi(2))
            })
            .collect::<Vec<_>>()
            .join(", ")
    };
    let text = |n: usize| {
        format!(
            "name = \"survey\"\nlength_unit = \"m\"\n[control]\nshape = \"points\"\npoints = [{}]\nlength = 2.0\n[approach]\nshape = \"rectangle\"\nwidth = 8.0\nsill_height = 0.5\n[range]\nmin_head = 0.1\nmax_head = 0.7\n",
            section(n)
        )
    };
    let ok = dir.path().join("p600.toml");
    std::fs::write(&ok, text(600)).expect("write");
    flumerate().arg("rate").arg(&ok).assert().success();
    let many = dir.path().join("p20000.toml");
    std::fs::write(&many, text(20_000)).expect("write");
    flumerate()
        .arg("check")
        .arg(&many)
        .assert()
        .code(2)
        .stderr(predicate::str::contains("p20000.toml:5:").and(predicate::str::contains("more than the 10000")));
}

#[test]
fn remaining_hostile_cases_get_clear_errors() {
    let dir = tempfile::tempdir().expect("tempdir");
    let st = data("station.toml");
    // an unknown strftime directive, on the command line and in the station file
    flumerate()
        .arg("convert")
        .arg(data("clean.csv"))
        .arg("--station")
        .arg(&st)
        .args(["--time-format", "%Y-%m-%d %Q", "-o"])
        .arg(dir.path().join("o.csv"))
        .assert()
        .code(2)
        .stderr(predicate::str::contains("--time-format").and(predicate::str::contains("%Q")));
    let bad_format = dir.path().join("fmt.toml");
    let text = std::fs::read_to_string(&st).expect("read").replace(
        "time_format = [\"%Y-%m-%d %H:%M\", \"%Y-%m-%d %H:%M:%S\"]",
        "time_format = \"%Y-%m-%d %K\"",
    );
    std::fs::write(&bad_format, text).expect("write");
    flumerate()
        .arg("check")
        .arg(&bad_format)
        .assert()
        .code(2)
        .stderr(predicate::str::contains("logger.time_format").and(predicate::str::contains("%K")));
    // a station file that is not UTF-8 (Latin-1 é at byte 20 of line 1)
    let latin = dir.path().join("latin.toml");
    let mut bytes = b"name = \"Moulin de l'\xe9cluse\"\n".to_vec();
    bytes.extend_from_slice(
        std::fs::read(&st)
            .expect("read")
            .split(|b| *b == b'\n')
            .skip(2)
            .collect::<Vec<_>>()
            .join(&b'\n')
            .as_slice(),
    );
    std::fs::write(&latin, bytes).expect("write");
    flumerate()
        .arg("check")
        .arg(&latin)
        .assert()
        .code(2)
        .stderr(predicate::str::contains(
            ":1: station files are UTF-8 text, but byte 20 (0xe9)",
        ));
    // not a finite number; a negative step named by its option
    flumerate()
        .args([
            "convert",
            "tests/data/convert/clean.csv",
            "--station",
            "tests/data/convert/station.toml",
            "-o",
        ])
        .arg(dir.path().join("o.csv"))
        .args(["--zero", "nan"])
        .assert()
        .code(2)
        .stderr(predicate::str::contains("--zero").and(predicate::str::contains("not a finite number")));
    flumerate()
        .arg("rate")
        .arg(&st)
        .args(["--step", "-0.01"])
        .assert()
        .code(2)
        .stderr(predicate::str::contains("--step must be a number greater than zero"));
    // an absurd dimension, shown as written
    let huge = dir.path().join("huge.toml");
    std::fs::write(
        &huge,
        std::fs::read_to_string(&st)
            .expect("read")
            .replacen("width = 0.5", "width = 1.7e308", 1),
    )
    .expect("write");
    flumerate()
        .arg("rate")
        .arg(&huge)
        .assert()
        .code(2)
        .stderr(predicate::str::contains(
            "control.width: 1.7e308 m is longer than any measuring structure",
        ));
    // terminal control characters in a name are shown escaped, never sent to the terminal
    let ctl = dir.path().join("ctl.toml");
    std::fs::write(
        &ctl,
        std::fs::read_to_string(&st)
            .expect("read")
            .replace("name = \"conversion test flume\"", "name = \"evil \\u001b[2J name\""),
    )
    .expect("write");
    let out = flumerate().arg("check").arg(&ctl).output().expect("run");
    let text = String::from_utf8_lossy(&out.stdout);
    assert!(text.contains("evil \\u{1b}[2J name"), "{text}");
    assert!(!text.contains('\u{1b}'));
    // a bare carriage return as a line end
    let cr = dir.path().join("cr.csv");
    std::fs::write(&cr, "time,stage\r2026-05-01 00:00,0.4\r2026-05-01 00:15,0.4\r").expect("write");
    flumerate()
        .arg("convert")
        .arg(&cr)
        .arg("--station")
        .arg(&st)
        .arg("-o")
        .arg(dir.path().join("o.csv"))
        .assert()
        .code(2)
        .stderr(predicate::str::contains("bare \\r").and(predicate::str::contains("fix:")));
}
