//! `flumerate convert LOGGER.csv --station STATION.toml -o OUT.csv|OUT.parquet`: logger stage
//! records to discharge with a 95 % band and a flag per row, daily and monthly summaries, a
//! hydrograph and a provenance record. Every non-blank input line gives exactly one output row.

use std::io::IsTerminal;
use std::path::{Path, PathBuf};
use std::process::ExitCode;

use anyhow::{bail, Context};
use clap::Args;
use flumerate::rating::RatingEquation;
use flumerate::report::plot::{hydrograph, HydroBuckets};
use flumerate::report::{sig, wrap, CAUTIONS};
use flumerate::series::convert::{
    time_note_lines, Conversion, Counts, Flag, Impossible, Plausible, StageSource, Summaries,
};
use flumerate::series::correct::{
    drift_points, drift_warnings, metres_per, pascals_per, usable_drift, DriftPoint, TimeSeries,
};
use flumerate::series::dense::DenseRating;
use flumerate::series::output::{write_summary, SeriesWriter, TableFile};
use flumerate::series::read::{read_logger, ColumnRef, ReadSettings};
use flumerate::series::time::{parse_any, resolve, resolve_in_place, TimeFormat, Zone, NO_TIME};
use flumerate::series::timeline::Timeline;
use flumerate::station::LoggerSpec;
use flumerate::tailwater::{Exit, Tailwater};
use flumerate::uncertainty::{GumModel, Inputs};
use serde_json::json;

use super::output::emit;
use flumerate::files::OutputSet;

/// Rows per output chunk.
const CHUNK_ROWS: usize = 1 << 18;
/// Default time formats, tried in order.
const DEFAULT_FORMATS: [&str; 4] = [
    "%Y-%m-%d %H:%M:%S",
    "%Y-%m-%d %H:%M",
    "%Y-%m-%dT%H:%M:%S",
    "%Y-%m-%dT%H:%M",
];

#[derive(Debug, Args)]
pub struct ConvertArgs {
    /// Logger export (delimited text)
    pub logger: PathBuf,
    /// Station file (TOML); its [logger] table says how the export reads
    #[arg(long)]
    pub station: PathBuf,
    /// Converted series: OUT.csv or OUT.parquet
    #[arg(short = 'o', long = "output", value_name = "OUT")]
    pub output: PathBuf,
    /// Daily summary: FILE.csv or FILE.parquet
    #[arg(long, value_name = "FILE")]
    pub daily: Option<PathBuf>,
    /// Monthly summary: FILE.csv or FILE.parquet
    #[arg(long, value_name = "FILE")]
    pub monthly: Option<PathBuf>,
    /// Hydrograph with the 95 % band: FILE.png or FILE.svg
    #[arg(long, value_name = "FILE")]
    pub plot: Option<PathBuf>,
    /// Provenance record [default: OUT.provenance.json]
    #[arg(long, value_name = "FILE")]
    pub provenance: Option<PathBuf>,
    /// Field visits: CSV with `time` and `head_m` (or head_cm, head_mm, head_ft), staff-gauge head
    /// above the crest, for drift correction
    #[arg(long, value_name = "FILE")]
    pub visits: Option<PathBuf>,
    /// Barometric pressure: CSV with `time` and `pressure`, in the logger's pressure unit
    #[arg(long, value_name = "FILE")]
    pub baro: Option<PathBuf>,
    /// Write rows sorted by time (then by line) instead of in input order
    #[arg(long)]
    pub sort: bool,
    /// For rows flagged submerged, give the drowned-flow estimate where its source applies
    #[arg(long = "submerged-estimate")]
    pub submerged_estimate: bool,
    /// Exit with code 1 when any row is flagged other than ok or dry (beyond-limits included)
    #[arg(long)]
    pub strict: bool,
    /// Time column (name, or 1-based position)
    #[arg(long = "time-column")]
    pub time_column: Option<String>,
    /// Time format (strftime style); repeat for several, tried in order
    #[arg(long = "time-format")]
    pub time_format: Vec<String>,
    /// Time zone of the logger's clock: IANA name or fixed offset such as +01:00
    #[arg(long)]
    pub timezone: Option<String>,
    /// Stage column (name, or 1-based position)
    #[arg(long = "stage-column")]
    pub stage_column: Option<String>,
    /// Stage unit: m, cm, mm, ft, in
    #[arg(long = "stage-unit")]
    pub stage_unit: Option<String>,
    /// Logger stage with the water level with the crest, in the stage unit
    #[arg(long, allow_hyphen_values = true, value_parser = super::finite_number)]
    pub zero: Option<f64>,
    /// Field separator (one character; `\t` for tab)
    #[arg(long)]
    pub separator: Option<String>,
    /// Numbers use a decimal comma
    #[arg(long = "decimal-comma")]
    pub decimal_comma: bool,
    /// Lines to skip before the header
    #[arg(long = "skip-lines")]
    pub skip_lines: Option<u32>,
    /// The file has no header line (columns by position)
    #[arg(long = "no-header")]
    pub no_header: bool,
    /// A text meaning "no value"; repeat for several
    #[arg(long, allow_hyphen_values = true)]
    pub missing: Vec<String>,
    /// Logged tailwater column (name or position), in the stage unit
    #[arg(long = "tailwater-column")]
    pub tailwater_column: Option<String>,
    /// Tailwater logger reading with the tailwater level with the crest, in the stage unit
    #[arg(long = "tailwater-zero", allow_hyphen_values = true, value_parser = super::finite_number)]
    pub tailwater_zero: Option<f64>,
    /// Absolute-pressure column (name or position), instead of a stage column
    #[arg(long = "pressure-column")]
    pub pressure_column: Option<String>,
    /// Pressure unit of the logger and barometric file: kPa, hPa, mbar, bar, Pa, psi
    #[arg(long = "pressure-unit")]
    pub pressure_unit: Option<String>,
    /// Logged water-temperature column (°C)
    #[arg(long = "temperature-column")]
    pub temperature_column: Option<String>,
    /// Water temperature (°C) where none is logged [default: 10]
    #[arg(long = "water-temperature", value_parser = super::finite_number, allow_hyphen_values = true)]
    pub water_temperature: Option<f64>,
}

/// Settings after flags override the station's [logger].
struct Resolved {
    read: ReadSettings,
    zone: Zone,
    zone_text: String,
    stage_unit: String,
    zero: f64,
    pressure_unit: Option<String>,
    water_temperature: f64,
    tailwater_zero: Option<f64>,
    temperature_index: Option<usize>,
    tailwater_index: Option<usize>,
}

fn resolve_settings(a: &ConvertArgs, l: &LoggerSpec) -> anyhow::Result<Resolved> {
    let pick = |flag: &Option<String>, file: &Option<String>| flag.clone().or_else(|| file.clone());
    let tz = pick(&a.timezone, &l.timezone).context(
        "no time zone for the logger's clock: add [logger] timezone to the station file or give --timezone (an IANA name such as Europe/Berlin, or a fixed offset such as +01:00); flumerate never guesses it",
    )?;
    let zone = Zone::parse(&tz).map_err(|e| anyhow::anyhow!("--timezone: {e}"))?;
    let zero = a.zero.or(l.zero).context(
        "no gauge zero: add [logger] zero (the logger stage with the water level with the crest) or give --zero",
    )?;
    let stage_unit = pick(&a.stage_unit, &l.stage_unit).unwrap_or_else(|| "m".into());
    if metres_per(&stage_unit).is_none() {
        bail!("--stage-unit {stage_unit}: use m, cm, mm, ft or in");
    }
    let separator = match pick(&a.separator, &l.separator).as_deref() {
        None => b',',
        Some("\\t") | Some("\t") => b'\t',
        Some(s) if s.len() == 1 && s.is_ascii() => s.as_bytes()[0],
        Some(s) => bail!("--separator \"{s}\": give one character"),
    };
    // a decimal comma with a comma separator reads only from quoted fields: the reader decides
    let decimal_comma = a.decimal_comma || l.decimal_comma;
    let formats: Vec<String> = if !a.time_format.is_empty() {
        a.time_format.clone()
    } else if !l.time_formats.is_empty() {
        l.time_formats.clone()
    } else {
        DEFAULT_FORMATS.iter().map(|s| s.to_string()).collect()
    };
    for f in &a.time_format {
        TimeFormat::check(f).map_err(|e| {
            anyhow::anyhow!("--time-format: {e}\n  fix: use strftime directives such as %Y %m %d %H %M %S")
        })?;
    }
    let pressure = pick(&a.pressure_column, &l.pressure_column);
    let pressure_unit = pick(&a.pressure_unit, &l.pressure_unit);
    let mut values = vec![match &pressure {
        Some(p) => ColumnRef::parse(p),
        None => ColumnRef::parse(&pick(&a.stage_column, &l.stage_column).unwrap_or_else(|| "stage".into())),
    }];
    let mut tailwater_index = None;
    if let Some(tw) = pick(&a.tailwater_column, &l.tailwater_column) {
        tailwater_index = Some(values.len());
        values.push(ColumnRef::parse(&tw));
    }
    let mut temperature_index = None;
    // a level logger's temperature is read (its column must exist and is checked like any
    // other) but not used: only a pressure logger needs the density of water
    if let Some(t) = pick(&a.temperature_column, &l.temperature_column) {
        temperature_index = Some(values.len());
        values.push(ColumnRef::parse(&t));
    }
    if pressure.is_some() {
        let unit = pressure_unit.as_deref().unwrap_or("kPa");
        if pascals_per(unit).is_none() {
            bail!("--pressure-unit {unit}: use kPa, hPa, mbar, bar, Pa or psi");
        }
        if a.baro.is_none() {
            bail!("a pressure column needs a barometric series: give --baro FILE (CSV with time and pressure)");
        }
    }
    let mut missing = l.missing.clone();
    missing.extend(a.missing.iter().cloned());
    Ok(Resolved {
        read: ReadSettings {
            separator,
            decimal_comma,
            skip_lines: a.skip_lines.unwrap_or(l.skip_lines) as usize,
            has_header: !a.no_header && l.header.unwrap_or(true),
            time: ColumnRef::parse(&pick(&a.time_column, &l.time_column).unwrap_or_else(|| "time".into())),
            formats: formats.iter().map(|f| TimeFormat::new(f)).collect(),
            values,
            missing,
        },
        zone,
        zone_text: tz,
        stage_unit,
        zero,
        pressure_unit: pressure.map(|_| pressure_unit.unwrap_or_else(|| "kPa".into())),
        water_temperature: a.water_temperature.or(l.water_temperature).unwrap_or(10.0),
        tailwater_zero: a.tailwater_zero.or(l.tailwater_zero),
        temperature_index,
        tailwater_index,
    })
}

/// A side file as read: points (UTC ms, value), the value column's unit suffix, and the file's
/// SHA-256 for the provenance.
struct SideFile {
    points: Vec<(i64, f64)>,
    unit: String,
    sha256: String,
}

/// Reads a small side file (visits, barometric) with a `time` column and one value column whose
/// name starts with `prefix`, hashing the same bytes it parses.
fn side_file(path: &Path, prefix: &str, formats: &[TimeFormat], zone: &Zone) -> anyhow::Result<SideFile> {
    use sha2::Digest;
    let bytes = std::fs::read(path).with_context(|| format!("cannot read {}", path.display()))?;
    let sha256 = format!("{:x}", sha2::Sha256::digest(&bytes));
    let mut r = csv::ReaderBuilder::new().flexible(true).from_reader(&bytes[..]);
    let headers = r
        .headers()
        .with_context(|| format!("{}: no header line", path.display()))?
        .clone();
    let ti = headers.iter().position(|h| h.trim() == "time").with_context(|| {
        format!(
            "{}: no `time` column (the header is: {})",
            path.display(),
            headers.iter().collect::<Vec<_>>().join(", ")
        )
    })?;
    let (vi, name) = headers
        .iter()
        .enumerate()
        .find(|(_, h)| h.trim().starts_with(prefix))
        .map(|(i, h)| (i, h.trim().to_string()))
        .with_context(|| format!("{}: no `{prefix}…` column", path.display()))?;
    let unit = name.trim_start_matches(prefix).trim_start_matches('_').to_string();
    let mut out = Vec::new();
    for (k, rec) in r.records().enumerate() {
        let line = k + 2;
        let rec = rec.with_context(|| format!("{}:{line}: unreadable record", path.display()))?;
        let t = rec.get(ti).unwrap_or("");
        let v = rec.get(vi).unwrap_or("");
        let utc = match side_time(formats, zone, t.trim()) {
            Some(u) => u,
            None => bail!(
                "{}:{line}: time \"{t}\" is neither ISO 8601 nor in the logger's formats ({})\n  fix: write times as 2026-10-12T10:00 (on the logger's clock) or 2026-10-12T10:00:00+02:00 (with its offset), or as the logger writes them",
                path.display(),
                formats.iter().map(|f| f.as_str()).collect::<Vec<_>>().join(", ")
            ),
        };
        let utc = [utc];
        if utc[0] == NO_TIME {
            bail!(
                "{}:{line}: time \"{t}\" does not exist on the logger's clock (daylight-saving gap)\n  fix: give the time with its UTC offset, e.g. 2026-03-29T03:30:00+02:00",
                path.display()
            );
        }
        let v: f64 = v
            .trim()
            .parse()
            .with_context(|| format!("{}:{line}: \"{v}\" is not a number", path.display()))?;
        out.push((utc[0], v));
    }
    Ok(SideFile {
        points: out,
        unit,
        sha256,
    })
}

/// At most this many line numbers are listed per kind in the provenance record (with the total).
const MAX_LISTED_LINES: usize = 1000;

/// A list of lines for the provenance record: the total and the first [`MAX_LISTED_LINES`].
fn bounded_lines(lines: &[u32]) -> serde_json::Value {
    json!({ "total": lines.len(), "first": &lines[..lines.len().min(MAX_LISTED_LINES)] })
}

/// The instant (UTC ms) of a side-file time: ISO 8601 with an offset (`…+02:00`, `…Z`) as it
/// says; ISO 8601 without one, or any of the logger's formats, on the logger's clock;
/// [`NO_TIME`] for a local time the clock skipped; `None` when nothing reads it.
fn side_time(formats: &[TimeFormat], zone: &Zone, t: &str) -> Option<i64> {
    if let Ok(dt) = chrono::DateTime::parse_from_rfc3339(t) {
        return Some(dt.timestamp_millis());
    }
    for f in [
        "%Y-%m-%dT%H:%M:%S%:z",
        "%Y-%m-%dT%H:%M%:z",
        "%Y-%m-%d %H:%M:%S%:z",
        "%Y-%m-%d %H:%M%:z",
    ] {
        if let Ok(dt) = chrono::DateTime::parse_from_str(t, f) {
            return Some(dt.timestamp_millis());
        }
    }
    let iso: Vec<TimeFormat> = [
        "%Y-%m-%dT%H:%M:%S%.f",
        "%Y-%m-%dT%H:%M",
        "%Y-%m-%d %H:%M:%S%.f",
        "%Y-%m-%d %H:%M",
    ]
    .iter()
    .map(|f| TimeFormat::new(f))
    .collect();
    let wall = parse_any(formats, t).or_else(|| parse_any(&iso, t))?;
    Some(resolve(zone, &[wall]).0[0])
}

fn lines_text(lines: &[u32], max: usize) -> String {
    let mut s: Vec<String> = lines.iter().take(max).map(|l| l.to_string()).collect();
    if lines.len() > max {
        s.push(format!("… ({} more in the provenance file)", lines.len() - max));
    }
    s.join(", ")
}

/// Prints phase timings to standard error when the environment variable FLUMERATE_TIMING is set
/// (used when benchmarking; documented in DEVELOPERS.md).
struct Timer(Option<std::time::Instant>);

impl Timer {
    fn new() -> Self {
        Self(std::env::var_os("FLUMERATE_TIMING").map(|_| std::time::Instant::now()))
    }
    fn mark(&mut self, what: &str) {
        if let Some(t) = self.0 {
            eprintln!("timing: {what:<24} {:>8.3} s", t.elapsed().as_secs_f64());
            self.0 = Some(std::time::Instant::now());
        }
    }
}

pub fn run(a: ConvertArgs) -> anyhow::Result<ExitCode> {
    let mut timer = Timer::new();
    if TableFile::from_path(&a.output).is_none() {
        bail!("-o {}: the output must end in .csv or .parquet", a.output.display());
    }
    for (flag, p) in [("--daily", &a.daily), ("--monthly", &a.monthly)] {
        if let Some(p) = p {
            if TableFile::from_path(p).is_none() {
                bail!("{flag} {}: give a .csv or .parquet file", p.display());
            }
        }
    }
    let plot_format = super::output::plot_format(a.plot.as_deref())?;
    let prov_path = a
        .provenance
        .clone()
        .unwrap_or_else(|| PathBuf::from(format!("{}.provenance.json", a.output.display())));
    let mut inputs_named: Vec<(&str, &Path)> = vec![("logger file", &a.logger), ("station file", &a.station)];
    if let Some(v) = &a.visits {
        inputs_named.push(("visits file", v));
    }
    if let Some(b) = &a.baro {
        inputs_named.push(("barometric file", b));
    }
    super::output::check(
        &inputs_named,
        &[
            ("-o", Some(&a.output)),
            ("--daily", a.daily.as_deref()),
            ("--monthly", a.monthly.as_deref()),
            ("--plot", a.plot.as_deref()),
            ("--provenance", Some(&prov_path)),
        ],
    )?;
    // every output goes to a temporary first; all are renamed into place at the end, together
    let mut outputs = OutputSet::new();
    let (station, model) = super::rate::load_model(&a.station)?;
    let logger = station.logger.clone().unwrap_or_default();
    let s = resolve_settings(&a, &logger)?;
    let g = station.structure.gravity_m_s2;

    // 1. read (polars), block by block
    let size = std::fs::metadata(&a.logger)
        .with_context(|| format!("cannot read logger file {}", a.logger.display()))?
        .len();
    let bar = if std::io::stderr().is_terminal() {
        let b = indicatif::ProgressBar::new(size);
        if let Ok(style) = indicatif::ProgressStyle::with_template("{msg} [{bar:40}] {bytes}/{total_bytes} {eta}") {
            b.set_style(style);
        }
        b.set_message("reading");
        b
    } else {
        indicatif::ProgressBar::hidden()
    };
    let mut raw = read_logger(&a.logger, &s.read, |n| bar.set_position(n))?;
    timer.mark("read");
    bar.set_message("converting");
    if let Ok(style) = indicatif::ProgressStyle::with_template("{msg} [{bar:40}] {pos}/{len} rows {eta}") {
        bar.set_style(style);
    }
    bar.set_length(raw.lines.len() as u64);
    bar.set_position(0);

    // 2. times
    let mut utc = std::mem::take(&mut raw.wall_ms);
    let (days, notes) = resolve_in_place(&s.zone, &mut utc);
    let timeline = Timeline::new(&utc, &raw.values, &raw.lines)
        .with_context(|| format!("{}: cannot convert", a.logger.display()))?;
    let interval_ms = timeline.interval_ms;
    let interval_s = interval_ms as f64 / 1000.0;
    timer.mark("times");

    // 3. the rating, its uncertainty and the exit
    let inputs = Inputs::from_station(&station.uncertainty, &station.structure);
    let gum = GumModel::new(&model, inputs.clone())?;
    let exit = Exit::from(&station.exit);
    let tailwater = station.tailwater.clone().map(|t| Tailwater::new(t, g));
    let top = 1.5 * station.range.max_head_m;
    let table = DenseRating::new(&gum, &exit, tailwater.as_ref(), top, station.range.min_head_m)?;
    // the station's rating equation, as every other output prints it; its exponent serves the
    // drowned-flow estimate (1.5, the rectangular control's, when none can be fitted)
    let rating_equation = RatingEquation::for_range(&model, station.range.min_head_m, station.range.max_head_m);
    let exponent = rating_equation.as_ref().map_or(1.5, |e| e.fit.u);
    timer.mark("rating table");

    // 4. corrections
    let (mut baro_sha256, mut visits_sha256) = (None, None);
    let m_per = metres_per(&s.stage_unit).expect("checked");
    let stage = match &s.pressure_unit {
        None => StageSource::Level { metres_per_unit: m_per },
        Some(unit) => {
            let path = a.baro.as_ref().expect("checked");
            let baro = side_file(path, "pressure", &s.read.formats, &s.zone)?;
            baro_sha256 = Some(baro.sha256);
            let points = baro.points;
            let pa = pascals_per(unit).expect("checked");
            StageSource::Pressure {
                pascals_per_unit: pa,
                baro_pa: TimeSeries::new(points.into_iter().map(|(t, v)| (t, v * pa)).collect()),
                baro_max_gap_ms: (3 * 3_600_000).max(3 * interval_ms),
                water_temperature_c: s.water_temperature,
                temperature_column: s.temperature_index,
            }
        }
    };
    let mut conv = Conversion {
        gum: &gum,
        table: &table,
        range: station.range,
        stage,
        zero_m: s.zero * m_per,
        invalid_bands: flumerate::rating::limits::invalid_head_bands(&model, station.range.max_head_m),
        plausible: {
            let dry_m = logger.dry_reading.unwrap_or(0.0) * m_per;
            let max_depth_m = logger.max_depth.map_or_else(
                || Plausible::default_max_depth_m(s.zero * m_per - dry_m, station.range.max_head_m),
                |d| d * m_per,
            );
            Plausible::new(dry_m, max_depth_m)
        },
        drift: Vec::new(),
        tailwater_column: s
            .tailwater_index
            .map(|k| (k, m_per, s.tailwater_zero.unwrap_or(0.0) * m_per)),
        tailwater: tailwater.as_ref(),
        submerged_estimate: a.submerged_estimate,
        exponent,
        timeline: &timeline,
        zone: s.zone,
        gravity_m_s2: g,
    };
    if s.tailwater_index.is_some() && s.tailwater_zero.is_none() {
        bail!("a tailwater column needs its zero: add [logger] tailwater_zero (the tailwater logger reading with the water level with the crest) or give --tailwater-zero");
    }
    let mut drift_record: Vec<DriftPoint> = Vec::new();
    let mut drift_warns: Vec<String> = Vec::new();
    if let Some(path) = &a.visits {
        let side = side_file(path, "head", &s.read.formats, &s.zone)?;
        visits_sha256 = Some(side.sha256);
        let (visits, unit) = (side.points, side.unit);
        let per = metres_per(if unit.is_empty() { "m" } else { &unit }).with_context(|| {
            format!(
                "{}: head unit \"{unit}\": name the column head_m, head_cm, head_mm or head_ft",
                path.display()
            )
        })?;
        // logger heads (before drift) around each visit, from the readings nearest in time
        let max_gap = (3 * interval_ms).max(3_600_000);
        let mut near: Vec<(i64, f64)> = Vec::new();
        for &(tv, _) in &visits {
            let mut before: Option<(i64, f64)> = None;
            let mut after: Option<(i64, f64)> = None;
            for (i, &t) in utc.iter().enumerate() {
                if t == NO_TIME || (t - tv).abs() > max_gap {
                    continue;
                }
                let h = conv.stage_of(t, &raw.values, i).0 - conv.zero_m;
                if !h.is_finite() {
                    continue;
                }
                if t <= tv && before.is_none_or(|b| t > b.0) {
                    before = Some((t, h));
                }
                if t >= tv && after.is_none_or(|b| t < b.0) {
                    after = Some((t, h));
                }
            }
            near.extend(before);
            near.extend(after);
        }
        let series = TimeSeries::new(near);
        drift_record = drift_points(
            &visits.iter().map(|&(t, v)| (t, v * per)).collect::<Vec<_>>(),
            &series,
            max_gap,
        );
        conv.drift = usable_drift(&drift_record);
        drift_warns = drift_warnings(&conv.drift);
    }

    // 5. convert and write, chunk by chunk
    let n = raw.lines.len();
    // input order needs no index list; sorting keeps one (u32: 4 bytes a row)
    let sorted: Option<Vec<u32>> = a.sort.then(|| {
        let mut o: Vec<u32> = (0..n as u32).collect();
        o.sort_by_key(|&i| {
            let t = utc[i as usize];
            (if t == NO_TIME { i64::MAX } else { t }, raw.lines[i as usize])
        });
        o
    });
    let (t_min, t_max) = utc
        .iter()
        .filter(|t| **t != NO_TIME)
        .fold((i64::MAX, i64::MIN), |(lo, hi), &t| (lo.min(t), hi.max(t)));
    let mut buckets = HydroBuckets::new(t_min, t_max, 1100);
    let empty_buckets = buckets.clone();
    let mut counts = Counts::default();
    let mut summaries = Summaries::default();
    let series_file = outputs.create(&a.output)?;
    let writer = SeriesWriter::new(
        series_file,
        TableFile::from_path(&a.output).expect("checked"),
        s.zone.polars_name().as_deref(),
    )
    .with_context(|| format!("cannot write {}", a.output.display()))?;
    let threads = std::thread::available_parallelism().map_or(1, |t| t.get()).clamp(1, 8);
    // a writer thread encodes finished chunks while the next ones are converted; the bounded
    // queue keeps at most one chunk waiting, so memory stays flat
    let (tx, rx) = std::sync::mpsc::sync_channel::<flumerate::series::convert::Chunk>(1);
    let writing = std::thread::spawn(move || -> (SeriesWriter, polars::prelude::PolarsResult<()>) {
        let mut writer = writer;
        for chunk in rx {
            if let Err(e) = writer.write(chunk) {
                return (writer, Err(e));
            }
        }
        (writer, Ok(()))
    });
    let mut start = 0;
    while start < n {
        let end = (start + CHUNK_ROWS).min(n);
        let idx: Vec<usize> = match &sorted {
            Some(o) => o[start..end].iter().map(|&i| i as usize).collect(),
            None => (start..end).collect(),
        };
        // the chunk's rows are converted on all cores; each part keeps its own counts and
        // summaries, merged in order afterwards, so the result does not depend on the cores
        let per = idx.len().div_ceil(threads).max(1);
        let parts: Vec<(flumerate::series::convert::Chunk, Counts, Summaries, HydroBuckets)> =
            std::thread::scope(|scope| {
                let handles: Vec<_> = idx
                    .chunks(per)
                    .map(|part| {
                        let (conv, utc, days, raw, inputs) = (&conv, &utc, &days, &raw, &inputs);
                        let mut b = empty_buckets.clone();
                        scope.spawn(move || {
                            let (mut c, mut sm) = (Counts::default(), Summaries::default());
                            let chunk =
                                conv.convert_rows(part, utc, days, &raw.values, &raw.lines, inputs, &mut c, &mut sm);
                            b.add_rows(
                                &chunk.time_ms,
                                &chunk.discharge_m3s,
                                &chunk.low_m3s,
                                &chunk.high_m3s,
                                |k| !chunk.flag[k].counted(),
                            );
                            (chunk, c, sm, b)
                        })
                    })
                    .collect();
                handles
                    .into_iter()
                    .map(|h| h.join().expect("conversion does not panic"))
                    .collect()
            });
        timer.mark("  convert");
        let mut stopped = false;
        for (chunk, c, sm, b) in parts {
            counts.merge(c);
            summaries.merge(sm);
            buckets.merge(&b);
            // a closed queue means the writer stopped on an error, reported below
            stopped |= tx.send(chunk).is_err();
        }
        timer.mark("  send");
        bar.set_position(end as u64);
        if stopped {
            break;
        }
        start = end;
    }
    drop(tx);
    let (writer, written) = writing.join().expect("the writer thread does not panic");
    if let Err(e) = written {
        return Err(anyhow::Error::new(e).context(format!("writing {}", a.output.display())));
    }
    writer
        .finish()
        .with_context(|| format!("finishing {}", a.output.display()))?;
    bar.finish_and_clear();
    timer.mark("writer finished");
    let rows_out = counts.per_flag.iter().sum::<usize>();
    debug_assert_eq!(rows_out, n, "every row is written once");

    // 6. summaries, plot, provenance
    let daily = summaries.daily(&inputs);
    let monthly = summaries.monthly(&inputs);
    for (p, key, rows) in [(&a.daily, "date", &daily), (&a.monthly, "month", &monthly)] {
        if let Some(p) = p {
            let format = TableFile::from_path(p).expect("checked");
            write_summary(outputs.create(p)?, format, key, rows).with_context(|| format!("writing {}", p.display()))?;
        }
    }
    timer.mark("summaries");
    if let (Some(p), Some(fmt)) = (&a.plot, plot_format) {
        let offset = s.zone.offset_at_utc(t_min);
        let clock = format!(
            "UTC{}{:02}:{:02}",
            if offset < 0 { '-' } else { '+' },
            offset.abs() / 3600,
            (offset.abs() % 3600) / 60
        );
        let bytes = hydrograph(&buckets, &format!("{}: discharge", station.name), &clock, offset, fmt)?;
        outputs.write(p, &bytes)?;
    }
    timer.mark("plot");
    let flag_counts: serde_json::Map<String, serde_json::Value> = Flag::ALL
        .iter()
        .zip(counts.per_flag)
        .map(|(f, c)| (f.as_str().to_string(), json!(c)))
        .collect();
    let time_notes = time_note_lines(&notes, &raw.lines);
    let provenance = json!({
        "flumerate_version": env!("CARGO_PKG_VERSION"),
        "station": { "path": a.station.display().to_string(), "sha256": station.sha256, "name": station.name },
        "logger": { "path": a.logger.display().to_string(), "sha256": raw.sha256, "bytes": size },
        "settings": {
            "time_formats": s.read.formats.iter().map(|f| f.as_str()).collect::<Vec<_>>(),
            "timezone": s.zone_text,
            "daylight_saving_rule": "nonexistent local times: no time, flag missing; repeated local times: summer time until the clock steps back within the repeated hour, standard time after",
            "stage_unit": s.stage_unit,
            "temperature_column": s.temperature_index.map(|_| if s.pressure_unit.is_some() {
                "read: the density of water for the barometric compensation"
            } else {
                "read, not used: a level logger's stage needs no water density"
            }),
            "separator": (s.read.separator as char).to_string(),
            "decimal_comma": s.read.decimal_comma,
            "missing_values": s.read.missing,
            "sorted_by_time": a.sort,
            "submerged_estimate": a.submerged_estimate,
        },
        "corrections": {
            "gauge_zero": { "zero": s.zero, "unit": s.stage_unit, "zero_m": conv.zero_m, "rule": "head = stage - zero" },
            "drift": a.visits.as_ref().map(|p| json!({
                "visits_file": p.display().to_string(),
                "visits_sha256": visits_sha256,
                "rule": "staff minus logger at each visit, linear in time between visits, constant outside",
                "warnings": drift_warns,
                "visits": drift_record.iter().map(|d| json!({
                    "time_utc_ms": d.time_ms,
                    "staff_head_m": d.staff_head_m,
                    "logger_head_m": d.logger_head_m,
                    "drift_m": d.drift_m(),
                })).collect::<Vec<_>>(),
            })),
            "barometric": s.pressure_unit.as_ref().map(|u| json!({
                "baro_file": a.baro.as_ref().map(|p| p.display().to_string()),
                "baro_sha256": baro_sha256,
                "pressure_unit": u,
                "rule": "depth = (p_logger - p_baro) / (rho(T) g), baro interpolated linearly in time, rho by Kell (1975)",
                "water_temperature_c": s.water_temperature,
                "rows_without_baro": counts.no_baro,
                "rows_with_given_temperature": counts.temperature_fallback,
            })),
        },
        "rating": {
            "dense_table_max_relative_error": table.max_relative_error,
            "dense_table_top_m": table.top_m(),
            "rows_above_table_computed_exactly": counts.above_table,
            "rows_without_discharge": bounded_lines(&counts.unrated_lines),
            "rating_equation": rating_equation.as_ref().map(|e| e.printed(flumerate::units::Units::Si).sentence(flumerate::units::Units::Si)),
            "rating_equation_exponent": exponent,
            "heads_beyond_limits_m": conv.invalid_bands.iter().map(|(a, b)| json!([a, if b.is_finite() { json!(b) } else { json!("top") }])).collect::<Vec<_>>(),
        },
        "rows": {
            "input_rows": n,
            "output_rows": rows_out,
            "blank_lines": bounded_lines(&raw.blank_lines),
            "per_flag": flag_counts,
            "unreadable": {
                "total": raw.unreadable.len(),
                "first": raw.unreadable.iter().take(MAX_LISTED_LINES).map(|(l, w)| json!({"line": l, "problem": w})).collect::<Vec<_>>(),
            },
            "impossible_readings": {
                "rule": format!(
                    "stage below the sensor's dry reading by more than {} m, above it by more than {} m of water, or a negative absolute pressure: flag missing",
                    Plausible::BELOW_DRY_M,
                    conv.plausible.max_stage_m - conv.plausible.min_stage_m - Plausible::BELOW_DRY_M
                ),
                "total": counts.impossible.len(),
                "first": counts.impossible.iter().take(MAX_LISTED_LINES).map(|(l, w)| json!({"line": l, "problem": w.as_str()})).collect::<Vec<_>>(),
            },
            "empty_stage_fields": raw.empty_fields.first().copied().unwrap_or(0),
            "sentinel_stage_fields": raw.sentinel_fields.first().copied().unwrap_or(0),
            "backward_time_steps": timeline.backward_steps,
            "newest_first": timeline.newest_first,
            "repeated_instants": timeline.repeated_instants,
            "repeat_rows_not_counted": timeline.repeat_rows,
            "repeated_instants_with_differing_values": {
                "total": timeline.differing_total,
                "lines": timeline.differing,
            },
            "time_notes": time_notes.iter().map(|(k, ls)| (k.to_string(), bounded_lines(ls))).collect::<serde_json::Map<_, _>>(),
            "submerged_estimated": counts.submerged_estimated,
            "submerged_not_estimated": {
                "total": counts.submerged_not_estimated,
                "flume_not_weir": counts.submerged_not_a_weir,
                "submergence_above_0_90": counts.submerged_too_drowned,
                "estimate_not_asked_for": counts.submerged_not_asked,
            },
        },
        "nominal_interval_s": interval_s,
        "cautions": CAUTIONS,
    });
    let mut prov_bytes = serde_json::to_vec_pretty(&provenance)?;
    prov_bytes.push(b'\n');
    outputs.write(&prov_path, &prov_bytes)?;
    outputs.commit()?;

    timer.mark("provenance");
    // 7. the report
    let mut r = String::new();
    r.push_str(&format!(
        "flumerate convert: {} → {}\n",
        a.logger.display(),
        a.output.display()
    ));
    r.push_str(&format!("station: {} ({})\n", station.name, a.station.display()));
    r.push_str(&format!(
        "rows: {n} in, {rows_out} out; {} blank line(s) skipped; nominal interval {} s\n",
        raw.blank_lines.len(),
        interval_s
    ));
    r.push_str("flags: ");
    r.push_str(
        &Flag::ALL
            .iter()
            .zip(counts.per_flag)
            .map(|(f, c)| format!("{} {c}", f.as_str()))
            .collect::<Vec<_>>()
            .join(", "),
    );
    r.push('\n');
    if !raw.unreadable.is_empty() {
        let ls: Vec<u32> = raw.unreadable.iter().map(|u| u.0).collect();
        r.push_str(&format!(
            "unreadable rows (flag missing), lines: {}\n",
            lines_text(&ls, 20)
        ));
    }
    if !counts.impossible.is_empty() {
        counts.impossible.sort_unstable();
        for why in [
            Impossible::NegativePressure,
            Impossible::BelowSensor,
            Impossible::AboveMaxDepth,
        ] {
            let ls: Vec<u32> = counts.impossible.iter().filter(|i| i.1 == why).map(|i| i.0).collect();
            if !ls.is_empty() {
                r.push_str(&format!(
                    "impossible readings, {} (flag missing): {} row(s), lines {}\n",
                    why.as_str(),
                    ls.len(),
                    lines_text(&ls, 10)
                ));
            }
        }
    }
    if timeline.backward_steps > 0 {
        r.push_str(&format!(
            "order: {}; converted in time order, {}\n",
            if timeline.newest_first {
                "newest first".to_string()
            } else if timeline.shuffled {
                format!(
                    "out of time order ({} step(s) back in time; a repeated clock-change hour is told apart by the order of its copies in the file alone)",
                    timeline.backward_steps
                )
            } else {
                format!("{} step(s) back in time", timeline.backward_steps)
            },
            if a.sort {
                "rows written sorted by time"
            } else {
                "rows written in file order (--sort to sort)"
            }
        ));
    }
    if timeline.repeated_instants > 0 {
        r.push_str(&format!(
            "repeated instants: {} instant(s) held by more than one row; {} repeat row(s) written but not counted in volumes (column counted_line names the row that counts)\n",
            timeline.repeated_instants, timeline.repeat_rows
        ));
    }
    if timeline.differing_total > 0 {
        let shown: Vec<String> = timeline
            .differing
            .iter()
            .take(10)
            .map(|g| g.iter().map(|l| l.to_string()).collect::<Vec<_>>().join("/"))
            .collect();
        r.push_str(&format!(
            "repeated instants whose values differ: {} (the first row with a readable value counts), lines {}{}\n",
            timeline.differing_total,
            shown.join(", "),
            if timeline.differing_total > shown.len() {
                format!(
                    " … ({} more; the provenance lists up to {})",
                    timeline.differing_total - shown.len(),
                    flumerate::series::timeline::MAX_LISTED
                )
            } else {
                String::new()
            }
        ));
    }
    for (what, ls) in &time_notes {
        r.push_str(&format!(
            "times {what}: {} row(s), lines {}\n",
            ls.len(),
            lines_text(ls, 10)
        ));
    }
    r.push_str(&format!("gauge zero: head = stage − {} {}\n", s.zero, s.stage_unit));
    if s.temperature_index.is_some() && s.pressure_unit.is_none() {
        r.push_str("temperature column: read, not used (a level logger's stage needs no water density)\n");
    }
    if counts.no_baro > 0 {
        r.push_str(&format!(
            "rows without barometric pressure within reach (flag missing): {}\n",
            counts.no_baro
        ));
    }
    if counts.temperature_fallback > 0 {
        r.push_str(&format!(
            "rows without a logged temperature (the given {} °C used): {}\n",
            s.water_temperature, counts.temperature_fallback
        ));
    }
    if !drift_record.is_empty() {
        for d in &drift_record {
            let when = chrono::DateTime::from_timestamp_millis(d.time_ms)
                .map_or_else(|| d.time_ms.to_string(), |t| t.format("%Y-%m-%d %H:%M UTC").to_string());
            r.push_str(&format!(
                "drift at visit {when}: {}\n",
                d.drift_m().map_or(
                    "logger had no reading near the visit: visit not used".to_string(),
                    |v| format!(
                        "staff − logger = {:+.1} mm, applied linearly between visits",
                        v * 1000.0
                    )
                )
            ));
        }
    }
    for w in &drift_warns {
        r.push_str(&format!("WARNING: {w}\n"));
    }
    if counts.submerged_not_estimated + counts.submerged_estimated > 0 {
        r.push_str(&format!(
            "submerged rows: {} with the drowned-flow estimate (Villemonte 1947, an estimate), {} left at the free-flow rating (reads high): {} because the structure is a flume (Villemonte's relation is for weirs), {} drowned beyond 0.90 (no correction is practical), {} without --submerged-estimate\n",
            counts.submerged_estimated,
            counts.submerged_not_estimated,
            counts.submerged_not_a_weir,
            counts.submerged_too_drowned,
            counts.submerged_not_asked
        ));
    }
    let total: f64 = daily.iter().map(|d| d.volume_m3).sum();
    r.push_str(&format!(
        "volume of rows flagged ok or dry: {} m³ over {} day(s)\n",
        sig(total, 6),
        daily.len()
    ));
    r.push_str(&format!("provenance: {}\n\n", prov_path.display()));
    r.push_str(&wrap(CAUTIONS, 100));
    r.push('\n');
    emit(r.as_bytes(), None)?;
    let flagged: usize = Flag::ALL
        .iter()
        .zip(counts.per_flag)
        .filter(|(f, _)| !f.counted())
        .map(|(_, c)| c)
        .sum();
    Ok(if a.strict && flagged > 0 {
        ExitCode::from(1)
    } else {
        ExitCode::SUCCESS
    })
}
