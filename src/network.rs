//! A network of stations converted at once: the network file (stations with their logger,
//! visits, barometric and edits files), the conversions run in parallel with one failing station
//! reported and the others carried on, one Parquet dataset partitioned by station, one summary
//! table (station × day) and a one-page HTML overview of each station's months.
//!
//! ```toml
//! name = "Harrow Vale WUA (demo, invented)"
//! [[station]]
//! id = "ridgeway"                              # letters, digits, '-' and '_'
//! station = "ratings/ridgeway-canal-flume.toml" # paths relative to the network file
//! logger = "examples/ridgeway-logger.csv"
//! baro = "examples/ridgeway-baro.csv"           # optional, as are visits and edits
//! ```

use std::fmt::Write as _;
use std::path::{Path, PathBuf};

use serde::Deserialize;

use crate::series::convert::{Flag, PeriodRow};
use crate::series::pipeline::{ConversionReport, ConvertOptions, NoProgress, OutputPaths, Pipeline, RatingCache};
use crate::series::settings::LoggerOverrides;
use crate::station::Station;

/// One station of a network, its paths resolved against the network file's folder.
#[derive(Debug, Clone, PartialEq)]
pub struct NetworkStation {
    /// Our name for it in the outputs (`station=ID`).
    pub id: String,
    /// Station file.
    pub station: PathBuf,
    /// Logger export.
    pub logger: PathBuf,
    /// Staff-gauge visits, if any.
    pub visits: Option<PathBuf>,
    /// Barometric record, if any.
    pub baro: Option<PathBuf>,
    /// Edits log, if any.
    pub edits: Option<PathBuf>,
}

/// A network file.
#[derive(Debug, Clone, PartialEq)]
pub struct Network {
    /// Its name.
    pub name: String,
    /// Where it was read from.
    pub source: String,
    /// The stations, in file order.
    pub stations: Vec<NetworkStation>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct RawNetwork {
    name: String,
    station: Vec<RawNetworkStation>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct RawNetworkStation {
    id: String,
    station: PathBuf,
    logger: PathBuf,
    visits: Option<PathBuf>,
    baro: Option<PathBuf>,
    edits: Option<PathBuf>,
}

/// Why a network file cannot be used.
#[derive(Debug, thiserror::Error)]
#[error("{path}: {problem}\n  fix: {fix}")]
pub struct NetworkError {
    /// The network file.
    pub path: String,
    /// What is wrong.
    pub problem: String,
    /// How to put it right.
    pub fix: String,
}

impl Network {
    /// Reads and checks a network file.
    pub fn load(path: &Path) -> Result<Self, NetworkError> {
        let err = |problem: String, fix: &str| NetworkError {
            path: path.display().to_string(),
            problem,
            fix: fix.into(),
        };
        let text = std::fs::read_to_string(path).map_err(|e| err(format!("cannot read it: {e}"), "check the path"))?;
        let raw: RawNetwork = toml::from_str(&text).map_err(|e| {
            let line = e
                .span()
                .map_or(0, |s| text[..s.start.min(text.len())].matches('\n').count() + 1);
            err(
                format!("line {line}: {}", e.message().trim_end()),
                "each [[station]] needs id, station and logger; visits, baro and edits are optional",
            )
        })?;
        let dir = path.parent().unwrap_or(Path::new("."));
        let resolve = |p: &Path| if p.is_absolute() { p.to_path_buf() } else { dir.join(p) };
        let mut stations: Vec<NetworkStation> = Vec::new();
        for s in raw.station {
            let ok = !s.id.is_empty()
                && s.id.len() <= 64
                && s.id.chars().all(|c| c.is_ascii_alphanumeric() || c == '-' || c == '_');
            if !ok {
                return Err(err(
                    format!("station id \"{}\" cannot name a folder", s.id.escape_debug()),
                    "use 1 to 64 letters, digits, '-' or '_'",
                ));
            }
            if stations.iter().any(|o| o.id == s.id) {
                return Err(err(
                    format!("station id \"{}\" appears twice", s.id),
                    "give every station its own id",
                ));
            }
            stations.push(NetworkStation {
                id: s.id,
                station: resolve(&s.station),
                logger: resolve(&s.logger),
                visits: s.visits.as_deref().map(resolve),
                baro: s.baro.as_deref().map(resolve),
                edits: s.edits.as_deref().map(resolve),
            });
        }
        if stations.is_empty() {
            return Err(err(
                "no [[station]] tables".into(),
                "add one [[station]] table per station",
            ));
        }
        Ok(Self {
            name: crate::station::escape_controls(raw.name.trim()),
            source: path.display().to_string(),
            stations,
        })
    }
}

/// How one station of the network came out.
#[derive(Debug, Clone)]
pub struct Outcome {
    /// Its id.
    pub id: String,
    /// Its name (from the station file), or the id where the file could not be read.
    pub name: String,
    /// The conversion's report, or why it failed.
    pub result: Result<ConversionReport, String>,
}

/// Where station `id`'s outputs go under `out_dir`: its part of the Parquet dataset and its
/// provenance, in `series/station=ID/`.
pub fn station_paths(out_dir: &Path, id: &str) -> OutputPaths {
    let dir = out_dir.join("series").join(format!("station={id}"));
    OutputPaths {
        series: dir.join("part-0.parquet"),
        daily: None,
        monthly: None,
        plot: None,
        provenance: dir.join("provenance.json"),
    }
}

/// Converts one station into its part of the dataset.
fn convert_one(
    s: &NetworkStation,
    out_dir: &Path,
    ratings: &RatingCache,
) -> (String, Result<ConversionReport, String>) {
    let station = match Station::load(&s.station) {
        Ok(st) => st,
        Err(e) => return (s.id.clone(), Err(e.to_string())),
    };
    let name = station.name.clone();
    let run = || -> Result<ConversionReport, String> {
        let mut options = ConvertOptions::new(&station, &LoggerOverrides::default(), s.visits.clone(), s.baro.clone())
            .map_err(|e| e.to_string())?;
        options.edits = s.edits.clone();
        let pipeline = Pipeline::new(&station, options)
            .map_err(|e| e.to_string())?
            .with_ratings(ratings);
        let paths = station_paths(out_dir, &s.id);
        let dir = paths.series.parent().unwrap_or(out_dir).to_path_buf();
        let created = !dir.exists();
        std::fs::create_dir_all(&dir).map_err(|e| format!("{}: {e}", dir.display()))?;
        let result = pipeline.run(&s.logger, &paths, &NoProgress).map_err(|e| e.to_string());
        if result.is_err() && created {
            // the folder made for this station, still empty: no partition without data
            let _ = std::fs::remove_dir(&dir);
        }
        result
    };
    (name, run())
}

/// Converts every station on `threads` worker threads, each taking the next station from a
/// shared queue as it finishes one (so at most `threads` stations are in memory at once; each
/// conversion also splits its rows over the cores), calling `done` as each finishes. A station
/// that fails is reported in its [`Outcome`]; the others carry on. Results are in file order.
///
/// Plain scoped threads rather than a work-stealing pool: a pool's worker that waits on the
/// conversion's own parallel reader would start further stations meanwhile, holding them all in
/// memory at once.
pub fn convert_all(net: &Network, out_dir: &Path, threads: usize, done: &(dyn Fn(&Outcome) + Sync)) -> Vec<Outcome> {
    use std::sync::atomic::{AtomicUsize, Ordering};
    use std::sync::Mutex;
    let next = AtomicUsize::new(0);
    let ratings = RatingCache::default();
    let results: Mutex<Vec<Option<Outcome>>> = Mutex::new(vec![None; net.stations.len()]);
    std::thread::scope(|scope| {
        for _ in 0..threads.clamp(1, net.stations.len().max(1)) {
            scope.spawn(|| loop {
                let k = next.fetch_add(1, Ordering::Relaxed);
                let Some(s) = net.stations.get(k) else { break };
                let (name, result) = convert_one(s, out_dir, &ratings);
                let o = Outcome {
                    id: s.id.clone(),
                    name,
                    result,
                };
                done(&o);
                if let Ok(mut r) = results.lock() {
                    r[k] = Some(o);
                }
            });
        }
    });
    results
        .into_inner()
        .unwrap_or_default()
        .into_iter()
        .zip(&net.stations)
        .map(|(o, s)| {
            o.unwrap_or_else(|| Outcome {
                id: s.id.clone(),
                name: s.id.clone(),
                result: Err("the conversion stopped unexpectedly".into()),
            })
        })
        .collect()
}

/// The summary table: one row per station and day, a `station` column before the daily
/// summary's own columns (as `convert --daily` writes them).
pub fn summary_csv(outcomes: &[Outcome]) -> polars::prelude::PolarsResult<Vec<u8>> {
    use crate::series::output::{write_summary, Layout, TableFile};
    let mut out: Vec<u8> = Vec::new();
    for o in outcomes {
        let Ok(r) = &o.result else { continue };
        let mut one = Vec::new();
        write_summary(&mut one, TableFile::Csv, "date", &r.daily, &Layout::default())?;
        let mut lines = one.split(|b| *b == b'\n').filter(|l| !l.is_empty());
        let header = lines.next().unwrap_or_default();
        if out.is_empty() {
            out.extend_from_slice(b"station,");
            out.extend_from_slice(header);
            out.push(b'\n');
        }
        for l in lines {
            out.extend_from_slice(o.id.as_bytes());
            out.push(b',');
            out.extend_from_slice(l);
            out.push(b'\n');
        }
    }
    Ok(out)
}

use crate::report::html_escape as esc;

/// A month's cell of the overview: volume, completeness, measured share.
fn month_cell(m: &PeriodRow) -> String {
    let share = if m.volume_m3 > 0.0 {
        100.0 * m.volume_measured_m3 / m.volume_m3
    } else {
        f64::NAN
    };
    format!(
        "<td><b>{}</b> m³<br>{}% complete<br>{}</td>",
        crate::report::sig(m.volume_m3, 4),
        crate::report::sig(m.complete_pct, 3),
        if share.is_finite() {
            format!("{}% measured", crate::report::sig(share, 3))
        } else {
            "no flow".into()
        }
    )
}

/// The one-page HTML overview: each station's months (volume, completeness, measured share),
/// its flags, and the stations that failed with why.
pub fn overview_html(net: &Network, outcomes: &[Outcome], generated: &str) -> String {
    let months: std::collections::BTreeSet<String> = outcomes
        .iter()
        .filter_map(|o| o.result.as_ref().ok())
        .flat_map(|r| r.monthly.iter().map(|m| m.label.clone()))
        .collect();
    let mut h = String::from("<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\"><title>");
    h.push_str(&esc(&net.name));
    h.push_str("</title><style>@page{size:A4 landscape;margin:12mm}body{font-family:sans-serif;font-size:9pt}table{border-collapse:collapse;width:100%}td,th{border:1px solid #444;padding:3px;vertical-align:top}th{background:#eee}.failed{background:#fdd}p.c{font-size:8pt}</style></head><body>\n");
    let _ = writeln!(h, "<h1>{}</h1>", esc(&net.name));
    let ok = outcomes.iter().filter(|o| o.result.is_ok()).count();
    let _ = writeln!(
        h,
        "<p>Network file {} — {} stations, {ok} converted, {} failed. Generated {} by flumerate {}. Volumes in m³ per month; completeness is the share of the month's time with a discharge; measured is the share of the volume from rows flagged ok or dry (the rest estimated).</p>",
        esc(&net.source),
        outcomes.len(),
        outcomes.len() - ok,
        esc(generated),
        env!("CARGO_PKG_VERSION")
    );
    h.push_str("<table><thead><tr><th>station</th>");
    for m in &months {
        let _ = write!(h, "<th>{}</th>", esc(m));
    }
    h.push_str("<th>rows flagged (not ok or dry)</th></tr></thead><tbody>\n");
    for o in outcomes {
        match &o.result {
            Ok(r) => {
                let _ = write!(h, "<tr><td><b>{}</b><br>{}</td>", esc(&o.id), esc(&o.name));
                for m in &months {
                    match r.monthly.iter().find(|x| &x.label == m) {
                        Some(row) => h.push_str(&month_cell(row)),
                        None => h.push_str("<td>—</td>"),
                    }
                }
                let flags: Vec<String> = Flag::ALL
                    .iter()
                    .zip(r.counts.per_flag)
                    .filter(|(f, n)| *n > 0 && !f.measured())
                    .map(|(f, n)| format!("{} {n}", f.as_str()))
                    .collect();
                let _ = writeln!(
                    h,
                    "<td>{}</td></tr>",
                    if flags.is_empty() {
                        "none".into()
                    } else {
                        flags.join(", ")
                    }
                );
            }
            Err(e) => {
                let _ = writeln!(
                    h,
                    "<tr class=\"failed\"><td><b>{}</b><br>{}</td><td colspan=\"{}\">FAILED: {}</td></tr>",
                    esc(&o.id),
                    esc(&o.name),
                    months.len() + 1,
                    esc(e)
                );
            }
        }
    }
    h.push_str("</tbody></table>\n<p class=\"c\">");
    h.push_str(&esc(crate::report::CAUTIONS));
    h.push_str("</p>\n</body></html>\n");
    h
}
