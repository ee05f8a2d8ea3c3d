//! A mutation fuzzer for the station loader and the logger reader, run as an ordinary test.
//!
//! Seeds are the repository's own station and logger files (`ratings/`, `tests/data/`,
//! `tests/fuzz/corpus/`). Each case takes a seed and mutates it with a seeded generator: bytes
//! flipped, inserted, deleted or repeated, numbers replaced by awkward ones (`1e308`, `nan`,
//! `-0`, `-9999`, …), separators, quotes, carriage returns, byte-order marks and multi-byte
//! characters thrown in, lines spliced from another seed, the file cut short. Every case must
//! end in a value or an error, never a panic; a whole `convert` run on a mutated pair must
//! never exit with a panic (code 101) or hang.
//!
//! `cargo test fuzz` runs a short pass (CI). A long run:
//! `FLUMERATE_FUZZ_SECONDS=3600 cargo test --release fuzz -- --nocapture`; `FLUMERATE_FUZZ_SEED`
//! starts it elsewhere; `FLUMERATE_BIN` names a copy of the binary to run (so that the tree can
//! be rebuilt during a long run). A case that fails is written to `target/fuzz-failures/`; once fixed, it
//! goes to `tests/fuzz/regressions/`, which every run replays first.

use std::panic::{catch_unwind, AssertUnwindSafe};
use std::path::{Path, PathBuf};
use std::time::{Duration, Instant};

use flumerate::rating::{head_sequence, RatingModel, RatingTable};
use flumerate::series::read::{read_logger, ColumnRef, ReadSettings};
use flumerate::series::time::{resolve_in_place, TimeFormat, Zone};
use flumerate::series::timeline::Timeline;
use flumerate::station::Station;

/// A small, fast random generator (SplitMix64, Steele, Lea & Flood 2014): the fuzzer needs
/// repeatable streams, not cryptographic ones.
struct Rng(u64);

impl Rng {
    fn next(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }
    fn below(&mut self, n: usize) -> usize {
        (self.next() % n.max(1) as u64) as usize
    }
}

const TOKENS: &[&str] = &[
    "1e308",
    "-1e308",
    "1.7e308",
    "nan",
    "NaN",
    "inf",
    "-inf",
    "-0",
    "0",
    "0.0",
    "1e-300",
    "-9999",
    "-9999.00",
    "-9.999e3",
    "99999999999999999999",
    "0x10",
    "1_000",
    "\"",
    "\"\"",
    ",",
    ";",
    "\t",
    "\r",
    "\r\n",
    "\n\n",
    "\u{feff}",
    "é",
    "\u{1b}[2J",
    "\0",
    "=",
    "[",
    "]",
    "[[",
    "{",
    "}",
    "true",
    "\"rectangle\"",
    "\"points\"",
    "\"circle\"",
    "\"trapezoid\"",
    "\"triangle\"",
    "\"weir\"",
    "\"flume\"",
    "[[0,0],[0,0],[0,0]]",
    "2026-10-25 02:30",
    "2026-03-29 02:30",
    "24:00",
    "2026-02-30 00:00",
    "%Q",
    "Europe/Berlin",
    "+14:00",
    "-12:00",
    "999999",
];

fn mutate(seed: &[u8], other: &[u8], rng: &mut Rng) -> Vec<u8> {
    let mut v = seed.to_vec();
    for _ in 0..1 + rng.below(6) {
        let at = rng.below(v.len() + 1);
        match rng.below(9) {
            0 if !v.is_empty() => {
                let i = rng.below(v.len());
                v[i] ^= 1 << rng.below(8);
            }
            1 => {
                let t = TOKENS[rng.below(TOKENS.len())].as_bytes();
                v.splice(at..at, t.iter().copied());
            }
            2 if !v.is_empty() => {
                let end = (at + 1 + rng.below(16)).min(v.len());
                v.drain(at.min(end)..end);
            }
            3 if !v.is_empty() => {
                let from = rng.below(v.len());
                let end = (from + 1 + rng.below(64)).min(v.len());
                let piece = v[from..end].to_vec();
                v.splice(at..at, piece);
            }
            4 => {
                // replace a number with an awkward one
                let starts: Vec<usize> = (0..v.len())
                    .filter(|&i| v[i].is_ascii_digit() && (i == 0 || !v[i - 1].is_ascii_digit()))
                    .collect();
                if !starts.is_empty() {
                    let s = starts[rng.below(starts.len())];
                    let mut e = s;
                    while e < v.len() && (v[e].is_ascii_digit() || v[e] == b'.') {
                        e += 1;
                    }
                    let t = TOKENS[rng.below(15)].as_bytes();
                    v.splice(s..e, t.iter().copied());
                }
            }
            5 if !other.is_empty() => {
                let from = rng.below(other.len());
                let end = (from + 1 + rng.below(200)).min(other.len());
                v.splice(at..at, other[from..end].iter().copied());
            }
            6 => v.truncate(at),
            7 => {
                // repeat a line many times
                let lines: Vec<&[u8]> = v.split(|b| *b == b'\n').collect();
                if !lines.is_empty() {
                    let l = lines[rng.below(lines.len())].to_vec();
                    for _ in 0..rng.below(50) {
                        v.extend_from_slice(&l);
                        v.push(b'\n');
                    }
                }
            }
            _ => {
                let b = [0u8, b'\r', b'"', b',', b';', 0xff, 0xc3, b'\n'][rng.below(8)];
                v.insert(at, b);
            }
        }
    }
    v
}

fn files(dir: &Path, ext: &str) -> Vec<PathBuf> {
    let mut out: Vec<PathBuf> = std::fs::read_dir(dir)
        .map(|d| {
            d.filter_map(|e| e.ok())
                .map(|e| e.path())
                .filter(|p| p.extension().is_some_and(|e| e == ext))
                .collect()
        })
        .unwrap_or_default();
    out.sort();
    out
}

fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

fn station_seeds() -> Vec<Vec<u8>> {
    let r = root();
    [
        r.join("ratings"),
        r.join("tests/data/bad"),
        r.join("tests/data/convert"),
        r.join("tests/fuzz/corpus/station"),
    ]
    .iter()
    .flat_map(|d| files(d, "toml"))
    .filter_map(|p| std::fs::read(p).ok())
    .collect()
}

fn logger_seeds() -> Vec<Vec<u8>> {
    let r = root();
    let mut seeds: Vec<Vec<u8>> = [r.join("tests/data/convert"), r.join("tests/fuzz/corpus/logger")]
        .iter()
        .flat_map(|d| files(d, "csv"))
        .filter_map(|p| std::fs::read(p).ok())
        .collect();
    // the head of the demo export (preamble, header, a day of readings)
    if let Ok(demo) = std::fs::read_to_string(r.join("examples/ridgeway-logger.csv")) {
        seeds.push(demo.lines().take(120).collect::<Vec<_>>().join("\n").into_bytes());
    }
    seeds
}

/// Loads a station text and, when it loads, rates it across its range.
fn station_case(bytes: &[u8]) {
    let Ok(text) = std::str::from_utf8(bytes) else { return };
    let Ok(station) = Station::from_toml_str(text, "fuzz.toml") else {
        return;
    };
    let Ok(model) = RatingModel::new(station.structure.clone()) else {
        return;
    };
    let r = station.range;
    if let Ok(heads) = head_sequence(
        r.min_head_m,
        r.max_head_m,
        (r.max_head_m - r.min_head_m).max(1e-6) / 20.0,
    ) {
        let _ = RatingTable::compute(&model, &heads);
    }
    for h in [0.0, 1e-9, r.min_head_m, r.max_head_m, 2.0 * r.max_head_m] {
        let _ = model.discharge_m3s(h);
    }
}

/// Reads a logger text with one of a few settings, then resolves its times and orders them.
fn logger_case(bytes: &[u8], dir: &Path, variant: usize) {
    let path = dir.join("fuzz.csv");
    std::fs::write(&path, bytes).expect("write case");
    let (separator, decimal_comma) = [(b',', false), (b';', true), (b'\t', false), (b',', true)][variant % 4];
    let s = ReadSettings {
        separator,
        decimal_comma,
        skip_lines: variant / 4 % 3,
        has_header: !variant.is_multiple_of(7),
        time: ColumnRef::parse(if variant.is_multiple_of(5) { "1" } else { "time" }),
        formats: ["%Y-%m-%d %H:%M", "%Y-%m-%d %H:%M:%S", "%d.%m.%Y %H:%M"]
            .iter()
            .map(|f| TimeFormat::new(f))
            .collect(),
        values: vec![ColumnRef::parse(if variant.is_multiple_of(3) { "2" } else { "stage" })],
        missing: vec!["-9999".into(), String::new(), "ERR".into()],
    };
    let Ok(mut raw) = read_logger(&path, &s, |_| {}) else {
        return;
    };
    let zone = if variant.is_multiple_of(2) {
        Zone::parse("Europe/Berlin").expect("zone")
    } else {
        Zone::Fixed(3600)
    };
    let mut utc = std::mem::take(&mut raw.wall_ms);
    let _ = resolve_in_place(&zone, &mut utc);
    let _ = Timeline::new(&utc, &raw.values, &raw.lines);
}

/// Runs `convert` on a mutated station and logger; a panic (exit 101), a signal or a hang over
/// `limit` is a failure.
fn convert_case(station: &[u8], logger: &[u8], dir: &Path, limit: Duration) -> Result<(), String> {
    let (st, lg) = (dir.join("st.toml"), dir.join("lg.csv"));
    std::fs::write(&st, station).expect("write");
    std::fs::write(&lg, logger).expect("write");
    // FLUMERATE_BIN: a copy of the binary for long runs, so that rebuilding meanwhile is safe
    let bin = std::env::var_os("FLUMERATE_BIN")
        .map(PathBuf::from)
        .unwrap_or_else(|| PathBuf::from(assert_cmd::cargo::cargo_bin!("flumerate")));
    let mut child = std::process::Command::new(bin)
        .current_dir(dir)
        .arg("convert")
        .arg(&lg)
        .arg("--station")
        .arg(&st)
        .args(["-o", "out.csv", "--daily", "d.csv", "--plot", "p.png"])
        .stdout(std::process::Stdio::null())
        .stderr(std::process::Stdio::null())
        .spawn()
        .expect("spawn");
    let start = Instant::now();
    loop {
        if let Some(status) = child.try_wait().expect("wait") {
            return match status.code() {
                Some(0..=2) => Ok(()),
                Some(c) => Err(format!("exit code {c}")),
                None => Err("killed by a signal".into()),
            };
        }
        if start.elapsed() > limit {
            let _ = child.kill();
            let _ = child.wait();
            return Err(format!("no answer within {} s", limit.as_secs()));
        }
        std::thread::sleep(Duration::from_millis(5));
    }
}

fn save_failure(name: &str, bytes: &[&[u8]]) -> PathBuf {
    let dir = root().join("target/fuzz-failures");
    std::fs::create_dir_all(&dir).expect("mkdir");
    for (k, b) in bytes.iter().enumerate() {
        std::fs::write(dir.join(format!("{name}.{k}")), b).expect("write failure");
    }
    dir.join(name)
}

#[test]
fn fuzz_station_loader_logger_reader_and_conversion() {
    let seconds: Option<u64> = std::env::var("FLUMERATE_FUZZ_SECONDS")
        .ok()
        .and_then(|s| s.parse().ok());
    let start_seed: u64 = std::env::var("FLUMERATE_FUZZ_SEED")
        .ok()
        .and_then(|s| s.parse().ok())
        .unwrap_or(20_261_202);
    let deadline = seconds.map(|s| Instant::now() + Duration::from_secs(s));
    // the short pass: a fixed number of cases of each kind
    let (short_lib, short_bin) = (400usize, 12usize);
    let stations = station_seeds();
    let loggers = logger_seeds();
    assert!(stations.len() > 40 && loggers.len() > 5, "seeds found");
    let dir = tempfile::tempdir().expect("tempdir");
    let quiet = std::panic::take_hook();
    std::panic::set_hook(Box::new(|_| {}));
    let mut failures: Vec<String> = Vec::new();

    // regressions first: every file there must load or be refused without a panic
    for p in files(&root().join("tests/fuzz/regressions"), "toml") {
        let b = std::fs::read(&p).expect("read");
        if catch_unwind(|| station_case(&b)).is_err() {
            failures.push(format!("regression {} panics", p.display()));
        }
    }
    for p in files(&root().join("tests/fuzz/regressions"), "csv") {
        let b = std::fs::read(&p).expect("read");
        for v in 0..12 {
            if catch_unwind(AssertUnwindSafe(|| logger_case(&b, dir.path(), v))).is_err() {
                failures.push(format!("regression {} panics (variant {v})", p.display()));
            }
        }
    }

    let mut rng = Rng(start_seed);
    let (mut lib_cases, mut bin_cases, mut slowest) = (0usize, 0usize, Duration::ZERO);
    loop {
        let more = match deadline {
            Some(d) => Instant::now() < d,
            None => lib_cases < short_lib || bin_cases < short_bin,
        };
        if !more {
            break;
        }
        let case_seed = rng.next();
        let mut r = Rng(case_seed);
        let t0 = Instant::now();
        // nine library cases (station and logger by turns) for each whole conversion
        if lib_cases % 10 != 9 || (deadline.is_none() && bin_cases >= short_bin) {
            if lib_cases.is_multiple_of(2) {
                let s = mutate(
                    &stations[r.below(stations.len())],
                    &stations[r.below(stations.len())],
                    &mut r,
                );
                if catch_unwind(|| station_case(&s)).is_err() {
                    let p = save_failure(&format!("station-{case_seed}"), &[&s]);
                    failures.push(format!("station loader panics on {}.0", p.display()));
                }
            } else {
                let l = mutate(
                    &loggers[r.below(loggers.len())],
                    &loggers[r.below(loggers.len())],
                    &mut r,
                );
                let v = r.below(12);
                if catch_unwind(AssertUnwindSafe(|| logger_case(&l, dir.path(), v))).is_err() {
                    let p = save_failure(&format!("logger-{case_seed}-v{v}"), &[&l]);
                    failures.push(format!("logger reader panics on {}.0 (variant {v})", p.display()));
                }
            }
        } else {
            // a station from the demo or test files, lightly mutated, with a mutated logger
            let base = &stations[r.below(stations.len())];
            let s = if r.below(3) == 0 {
                mutate(base, base, &mut r)
            } else {
                base.clone()
            };
            let l = mutate(
                &loggers[r.below(loggers.len())],
                &loggers[r.below(loggers.len())],
                &mut r,
            );
            if let Err(why) = convert_case(&s, &l, dir.path(), Duration::from_secs(60)) {
                let p = save_failure(&format!("convert-{case_seed}"), &[&s, &l]);
                failures.push(format!("convert {why} on {}.0 (station) and .1 (logger)", p.display()));
            }
            bin_cases += 1;
        }
        lib_cases += 1;
        slowest = slowest.max(t0.elapsed());
        if slowest > Duration::from_secs(30) {
            failures.push(format!("case {case_seed} took {} s", slowest.as_secs()));
            break;
        }
    }
    std::panic::set_hook(quiet);
    eprintln!(
        "fuzz: {lib_cases} cases ({bin_cases} whole conversions) from seed {start_seed}; slowest {:.2} s; {} failure(s)",
        slowest.as_secs_f64(),
        failures.len()
    );
    assert!(failures.is_empty(), "{}", failures.join("\n"));
}
