//! Volumes do not depend on the order of the rows: the demo export converted as written, newest
//! first, shuffled, and joined with an overlapping second download gives the same daily and
//! monthly volumes (to 1e-9 relative), and no day is covered for longer than it lasts.

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

use crate::common::flumerate;
use proptest::prelude::*;

/// The demo export: its preamble and header lines, and its data lines (every line after the
/// header, blank ones too).
fn demo_export() -> (Vec<String>, Vec<String>) {
    let text = std::fs::read_to_string(Path::new(env!("CARGO_MANIFEST_DIR")).join("examples/ridgeway-logger.csv"))
        .expect("demo export");
    let lines: Vec<String> = text.lines().map(str::to_string).collect();
    // two preamble lines, then the header (ratings/ridgeway-canal-flume.toml: skip_lines = 2)
    let (head, data) = lines.split_at(3);
    (
        head.to_vec(),
        data.iter().filter(|l| !l.trim().is_empty()).cloned().collect(),
    )
}

/// Summary rows by period label: (volume_m3, covered_h).
type Volumes = BTreeMap<String, (f64, f64)>;

fn summary(path: &Path, key: &str) -> Volumes {
    let mut r = csv::Reader::from_path(path).expect("summary csv");
    let h = r.headers().expect("header").clone();
    let col = |n: &str| h.iter().position(|c| c == n).unwrap_or_else(|| panic!("column {n}"));
    let (k, v, c) = (col(key), col("volume_m3"), col("covered_h"));
    r.records()
        .map(|rec| {
            let rec = rec.expect("record");
            let num = |i: usize| rec[i].parse::<f64>().unwrap_or(0.0);
            (rec[k].to_string(), (num(v), num(c)))
        })
        .collect()
}

/// Converts the given data lines of the demo export; returns daily and monthly volumes.
fn convert(dir: &Path, name: &str, data: &[String]) -> (Volumes, Volumes) {
    let (head, _) = demo_export();
    let logger: PathBuf = dir.join(format!("{name}.csv"));
    let mut text = head.join("\n");
    text.push('\n');
    text.push_str(&data.join("\n"));
    text.push('\n');
    std::fs::write(&logger, text).expect("write variant");
    let (daily, monthly) = (
        dir.join(format!("{name}-daily.csv")),
        dir.join(format!("{name}-monthly.csv")),
    );
    let out = flumerate()
        .arg("convert")
        .arg(&logger)
        .args(["--station", "ratings/ridgeway-canal-flume.toml"])
        .args(["--baro", "examples/ridgeway-baro.csv"])
        .args(["--visits", "examples/ridgeway-visits.csv"])
        .arg("-o")
        .arg(dir.join(format!("{name}-series.csv")))
        .arg("--daily")
        .arg(&daily)
        .arg("--monthly")
        .arg(&monthly)
        .output()
        .expect("run");
    assert!(out.status.success(), "{name}: {}", String::from_utf8_lossy(&out.stderr));
    (summary(&daily, "date"), summary(&monthly, "month"))
}

fn assert_same(a: &Volumes, b: &Volumes, what: &str) {
    assert_eq!(
        a.keys().collect::<Vec<_>>(),
        b.keys().collect::<Vec<_>>(),
        "{what}: the same periods"
    );
    for (k, (va, ca)) in a {
        let (vb, cb) = b[k];
        assert!(
            (va - vb).abs() <= 1e-9 * va.abs().max(1e-12),
            "{what} {k}: volume {vb} against {va}"
        );
        assert!((ca - cb).abs() < 1e-9, "{what} {k}: covered {cb} h against {ca} h");
    }
}

/// The reference conversion, made once.
fn reference() -> &'static (Volumes, Volumes) {
    static REF: std::sync::OnceLock<(Volumes, Volumes)> = std::sync::OnceLock::new();
    REF.get_or_init(|| {
        let dir = tempfile::tempdir().expect("tempdir");
        convert(dir.path(), "as-written", &demo_export().1)
    })
}

#[test]
fn newest_first_export_gives_the_same_volumes() {
    let dir = tempfile::tempdir().expect("tempdir");
    let mut data = demo_export().1;
    data.reverse();
    let (daily, monthly) = convert(dir.path(), "reversed", &data);
    assert_same(&reference().0, &daily, "daily, newest first");
    assert_same(&reference().1, &monthly, "monthly, newest first");
}

#[test]
fn overlapping_downloads_joined_count_each_instant_once() {
    // a second download that starts two days before the first one ended (and so repeats the
    // October clock change's hour too), joined after it
    let dir = tempfile::tempdir().expect("tempdir");
    let data = demo_export().1;
    let cut = data.len() / 2;
    let mut joined: Vec<String> = data[..cut].to_vec();
    joined.extend_from_slice(&data[cut - 192..]);
    let (daily, monthly) = convert(dir.path(), "joined", &joined);
    assert_same(&reference().0, &daily, "daily, joined downloads");
    assert_same(&reference().1, &monthly, "monthly, joined downloads");
}

#[test]
fn no_day_is_covered_longer_than_it_lasts() {
    // Europe/Berlin (IANA tz database): 2026-10-25 has 25 hours, every other day of the export 24
    for (day, (_, covered)) in &reference().0 {
        let length = if day == "2026-10-25" { 25.0 } else { 24.0 };
        assert!(*covered <= length + 1e-9, "{day}: covered {covered} h");
    }
    // the demo logs every 15 minutes; a whole day without gaps is covered for all of it
    assert!((reference().0["2026-10-20"].1 - 24.0).abs() < 1e-9);
    assert!((reference().0["2026-10-25"].1 - 25.0).abs() < 1e-9, "the 25-hour day");
}

/// A seeded permutation of `n` rows: Fisher–Yates with a 64-bit LCG (Knuth's MMIX constants).
fn permutation(n: usize, seed: u64) -> Vec<usize> {
    let mut p: Vec<usize> = (0..n).collect();
    let mut x = seed;
    for i in (1..n).rev() {
        x = x.wrapping_mul(6364136223846793005).wrapping_add(1442695040888963407);
        p.swap(i, ((x >> 33) % (i as u64 + 1)) as usize);
    }
    p
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 4, ..ProptestConfig::default() })]

    /// Shuffled rows give the same volumes. The two copies of a local time in the October clock
    /// change's repeated hour carry nothing but their order to tell summer time from standard
    /// time; a shuffle keeps their order relative to each other (and only that), as a merge of
    /// whole files does. Everything else is shuffled freely.
    #[test]
    fn shuffled_export_gives_the_same_volumes(seed in any::<u64>()) {
        let dir = tempfile::tempdir().expect("tempdir");
        let data = demo_export().1;
        let time_of = |l: &String| l.split(',').next().unwrap_or_default().to_string();
        let mut shuffled: Vec<String> = permutation(data.len(), seed).into_iter().map(|k| data[k].clone()).collect();
        // put each repeated local time's copies back in their original relative order
        let mut copies: BTreeMap<String, Vec<String>> = BTreeMap::new();
        for l in &data {
            copies.entry(time_of(l)).or_default().push(l.clone());
        }
        let mut taken: BTreeMap<String, usize> = BTreeMap::new();
        for l in shuffled.iter_mut() {
            let c = &copies[&time_of(l)];
            if c.len() > 1 {
                let k = taken.entry(time_of(l)).or_insert(0);
                *l = c[*k].clone();
                *k += 1;
            }
        }
        let (daily, monthly) = convert(dir.path(), "shuffled", &shuffled);
        assert_same(&reference().0, &daily, "daily, shuffled");
        assert_same(&reference().1, &monthly, "monthly, shuffled");
    }

    /// On a fixed-offset clock, with every row shuffled freely and a quarter of them doubled
    /// (one copy with a different value), the volumes equal those of the rows in time order:
    /// which copy of an instant counts does not depend on the order.
    #[test]
    fn repeats_in_any_order_give_the_same_volumes(seed in any::<u64>()) {
        let dir = tempfile::tempdir().expect("tempdir");
        let data = demo_export().1;
        let mut doubled = data.clone();
        for (k, l) in data.iter().enumerate().filter(|(k, _)| k % 4 == 1) {
            // a second copy, its pressure 1 kPa higher
            let mut f: Vec<String> = l.split(',').map(str::to_string).collect();
            if let Ok(p) = f[1].parse::<f64>() {
                f[1] = format!("{:.3}", p + 1.0 + k as f64 * 1e-6);
            }
            doubled.push(f.join(","));
        }
        let run = |name: &str, rows: &[String]| {
            let (head, _) = demo_export();
            let logger = dir.path().join(format!("{name}.csv"));
            std::fs::write(&logger, format!("{}\n{}\n", head.join("\n"), rows.join("\n"))).expect("write");
            let daily = dir.path().join(format!("{name}-daily.csv"));
            let out = flumerate()
                .arg("convert")
                .arg(&logger)
                .args(["--station", "ratings/ridgeway-canal-flume.toml", "--timezone", "+01:00"])
                .args(["--baro", "examples/ridgeway-baro.csv"])
                .arg("-o")
                .arg(dir.path().join(format!("{name}-series.csv")))
                .arg("--daily")
                .arg(&daily)
                .output()
                .expect("run");
            assert!(out.status.success(), "{name}: {}", String::from_utf8_lossy(&out.stderr));
            summary(&daily, "date")
        };
        let in_order = run("in-order", &doubled);
        let shuffled: Vec<String> = permutation(doubled.len(), seed).into_iter().map(|k| doubled[k].clone()).collect();
        assert_same(&in_order, &run("shuffled", &shuffled), "daily, doubled and shuffled");
    }
}
