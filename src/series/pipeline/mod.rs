//! A logger conversion as a library call: read → times → rating → corrections → discharge, band
//! and flag per row → summaries → outputs, returning a report.
//!
//! ```no_run
//! use flumerate::series::pipeline::{ConvertOptions, NoProgress, OutputPaths, Pipeline};
//! use flumerate::series::settings::LoggerOverrides;
//! use flumerate::station::Station;
//!
//! let station = Station::load("ratings/ridgeway-canal-flume.toml".as_ref())?;
//! let options = ConvertOptions::new(&station, &LoggerOverrides::default(), None, Some("baro.csv".into()))?;
//! let pipeline = Pipeline::new(&station, options)?;
//! let report = pipeline.run("logger.csv".as_ref(), &OutputPaths::beside("series.parquet".into()), &NoProgress)?;
//! println!("{}", report.text);
//! # Ok::<(), Box<dyn std::error::Error>>(())
//! ```
//!
//! Each stage is a function of its own in [`stages`]; [`Pipeline::convert_readings`] runs the same
//! stages on readings held in memory, without files.

pub mod report;
pub mod stages;

use crate::series::convert::EarlierPeriod;
use crate::station::HeadRange;
use std::path::{Path, PathBuf};

use super::convert::{Chunk, Conversion, Counts, Flag, PeriodRow};
use super::edits::{Edits, EditsError};
use super::output::{write_summary, CsvStyle, Layout, SeriesWriter, TableFile};
use super::read::{read_logger, RawSeries, ReadError};
use super::screen::ScreeningSpec;
use super::settings::{LoggerOverrides, LoggerSettings, SettingsError};
use super::side::SideError;
use super::time::LocalDays;
use super::timeline::TimelineError;
use crate::files::{FileError, OutputSet};
use crate::rating::{RatingError, RatingModel};
use crate::report::hydrograph::{hydrograph, HydroChart};
use crate::report::plot::ImageFormat;
use crate::station::Station;
use crate::units::{FlowUnit, VolumeUnit};
use report::{Facts, Paths};
use stages::{Converted, Corrections, Times};

/// Why a conversion stopped.
#[derive(Debug, thiserror::Error)]
#[non_exhaustive]
pub enum PipelineError {
    /// The settings cannot be used.
    #[error(transparent)]
    Settings(#[from] SettingsError),
    /// The logger file cannot be read.
    #[error(transparent)]
    Read(#[from] ReadError),
    /// The rows' times give nothing to convert.
    #[error("{path}: cannot convert")]
    Times {
        /// The logger file.
        path: String,
        /// Why.
        source: TimelineError,
    },
    /// A side file cannot be read.
    #[error(transparent)]
    Side(#[from] SideError),
    /// The edits file cannot be used.
    #[error(transparent)]
    Edits(#[from] EditsError),
    /// The rating cannot be computed.
    #[error(transparent)]
    Rating(#[from] RatingError),
    /// An output cannot be written.
    #[error(transparent)]
    Files(#[from] FileError),
    /// An output cannot be encoded.
    #[error("writing {path}: {message}")]
    Output {
        /// The output.
        path: String,
        /// What went wrong.
        message: String,
    },
}

/// What the conversion does besides reading the logger's settings.
#[derive(Debug, Clone, PartialEq)]
pub struct ConvertOptions {
    /// How the export reads.
    pub settings: LoggerSettings,
    /// Write rows sorted by time (then line) instead of in file order.
    pub sort: bool,
    /// Replace a drowned row's discharge by the drowned-flow estimate where it applies.
    pub submerged_estimate: bool,
    /// Field visits (staff-gauge heads) for the drift correction.
    pub visits: Option<PathBuf>,
    /// Barometric series for an absolute-pressure logger.
    pub baro: Option<PathBuf>,
    /// The hydrographer's edits log ([`super::edits`]).
    pub edits: Option<PathBuf>,
    /// Screening thresholds and the gap-fill limit (the station's `[screening]` by default).
    pub screening: ScreeningSpec,
    /// Discharge unit of the series and summaries.
    pub flow_unit: FlowUnit,
    /// Volume unit of the summaries.
    pub volume_unit: VolumeUnit,
    /// Style of CSV outputs.
    pub csv_style: CsvStyle,
    /// A panel of the head below the hydrograph.
    pub plot_stage: bool,
}

impl ConvertOptions {
    /// The station's `[logger]` with `overrides` over it; no sorting, no drowned-flow estimate.
    pub fn new(
        station: &Station,
        overrides: &LoggerOverrides,
        visits: Option<PathBuf>,
        baro: Option<PathBuf>,
    ) -> Result<Self, SettingsError> {
        let spec = station.logger.clone().unwrap_or_default();
        Ok(Self {
            settings: LoggerSettings::resolve(&spec, overrides, baro.is_some())?,
            sort: false,
            submerged_estimate: false,
            visits,
            baro,
            edits: None,
            screening: station.screening,
            flow_unit: FlowUnit::default(),
            volume_unit: VolumeUnit::default(),
            csv_style: CsvStyle::Standard,
            plot_stage: false,
        })
    }
}

/// Where a conversion writes: the series (`.csv` or `.parquet`), the optional summaries and
/// hydrograph, and the provenance record.
#[derive(Debug, Clone, PartialEq)]
pub struct OutputPaths {
    /// The converted series.
    pub series: PathBuf,
    /// Daily summary (`.csv` or `.parquet`).
    pub daily: Option<PathBuf>,
    /// Monthly summary.
    pub monthly: Option<PathBuf>,
    /// Hydrograph (`.png` or `.svg`).
    pub plot: Option<PathBuf>,
    /// Provenance record.
    pub provenance: PathBuf,
}

impl OutputPaths {
    /// The series alone, with its provenance beside it (`SERIES.provenance.json`).
    pub fn beside(series: PathBuf) -> Self {
        Self {
            provenance: PathBuf::from(format!("{}.provenance.json", series.display())),
            series,
            daily: None,
            monthly: None,
            plot: None,
        }
    }
}

/// Progress of a long conversion (the command line draws a bar; a library user may ignore it).
pub trait Progress: Sync {
    /// Bytes of the logger file read so far, of `total`.
    fn reading(&self, _done: u64, _total: u64) {}
    /// Rows converted so far, of `total`.
    fn converting(&self, _done: u64, _total: u64) {}
    /// The work is done.
    fn finished(&self) {}
}

/// No progress shown.
#[derive(Debug, Clone, Copy, Default)]
pub struct NoProgress;

impl Progress for NoProgress {}

/// What a conversion gives back.
#[derive(Debug, Clone)]
pub struct ConversionReport {
    /// The report for the user.
    pub text: String,
    /// The provenance record (also written to its file).
    pub provenance: serde_json::Value,
    /// Counts per flag and per case.
    pub counts: Counts,
    /// Rows flagged other than `ok` or `dry`.
    pub flagged_rows: usize,
    /// Daily summary rows.
    pub daily: Vec<PeriodRow>,
    /// Monthly summary rows.
    pub monthly: Vec<PeriodRow>,
}

/// A conversion held in memory ([`Pipeline::convert_readings`]).
#[derive(Debug, Clone)]
pub struct InMemory {
    /// Every row, converted, in input order; rows inserted into filled gaps follow the row
    /// before them in time (their `line` is 0).
    pub rows: Chunk,
    /// Counts per flag and per case.
    pub counts: Counts,
    /// Daily summary rows.
    pub daily: Vec<PeriodRow>,
    /// Monthly summary rows.
    pub monthly: Vec<PeriodRow>,
}

/// A conversion ready to run for one station.
#[derive(Debug)]
pub struct Pipeline<'a> {
    station: &'a Station,
    model: RatingModel,
    options: ConvertOptions,
    ratings: Option<&'a RatingCache>,
}

/// Ratings shared between conversions (a network's stations): stations whose structure, range,
/// uncertainty, exit and tailwater are the same are tabulated once. The rating depends on
/// nothing else, so a shared one is the same value a station would compute for itself.
#[derive(Debug, Default)]
pub struct RatingCache(std::sync::Mutex<std::collections::HashMap<String, std::sync::Arc<stages::RatingStage>>>);

impl RatingCache {
    /// What the rating of `station` depends on, exactly (floats in their shortest round-trip form).
    fn key(station: &Station) -> String {
        format!(
            "{:?}|{:?}|{:?}|{:?}|{:?}",
            station.structure, station.range, station.uncertainty, station.exit, station.tailwater
        )
    }

    /// The rating of `station`, computed once per distinct key.
    fn get(&self, station: &Station, model: &RatingModel) -> Result<std::sync::Arc<stages::RatingStage>, RatingError> {
        let key = Self::key(station);
        if let Some(r) = self.0.lock().ok().and_then(|m| m.get(&key).cloned()) {
            return Ok(r);
        }
        let r = std::sync::Arc::new(stages::rating(station, model)?);
        if let Ok(mut m) = self.0.lock() {
            m.entry(key).or_insert_with(|| r.clone());
        }
        Ok(r)
    }

    /// Distinct ratings held.
    pub fn len(&self) -> usize {
        self.0.lock().map_or(0, |m| m.len())
    }

    /// True when none is held.
    pub fn is_empty(&self) -> bool {
        self.len() == 0
    }
}

/// Phase times on standard error when FLUMERATE_TIMING is set (for benchmarking; DEVELOPERS.md):
/// the wall time, the processor time of all threads (Linux; user and system), and the peak
/// resident memory so far (Linux).
struct Timer(Option<(std::time::Instant, [f64; 2])>);

impl Timer {
    fn new() -> Self {
        Self(std::env::var_os("FLUMERATE_TIMING").map(|_| (std::time::Instant::now(), Self::cpu_s())))
    }

    /// User and system processor time of the process so far, from /proc/self/stat (clock ticks
    /// of 1/100 s).
    fn cpu_s() -> [f64; 2] {
        let stat = std::fs::read_to_string("/proc/self/stat").unwrap_or_default();
        // fields after the command name, which is in parentheses: utime and stime are 12th and 13th
        let rest = stat.rsplit_once(')').map_or("", |r| r.1);
        let mut ticks = rest
            .split_whitespace()
            .skip(11)
            .map(|t| t.parse::<f64>().unwrap_or(0.0) / 100.0);
        [ticks.next().unwrap_or(0.0), ticks.next().unwrap_or(0.0)]
    }

    fn mark(&mut self, what: &str) {
        if let Some((t, cpu)) = self.0 {
            let peak = std::fs::read_to_string("/proc/self/status")
                .ok()
                .and_then(|s| {
                    s.lines()
                        .find(|l| l.starts_with("VmHWM:"))
                        .map(|l| l[6..].trim().to_string())
                })
                .unwrap_or_default();
            let now = Self::cpu_s();
            eprintln!(
                "timing: {what:<24} {:>8.3} s, cpu {:>5.2} s user + {:>5.2} s system  (peak so far {peak})",
                t.elapsed().as_secs_f64(),
                now[0] - cpu[0],
                now[1] - cpu[1]
            );
            self.0 = Some((std::time::Instant::now(), now));
        }
    }
}

impl<'a> Pipeline<'a> {
    /// A conversion for `station` with `options`.
    pub fn new(station: &'a Station, options: ConvertOptions) -> Result<Self, RatingError> {
        Ok(Self {
            model: RatingModel::new(station.structure.clone())?,
            station,
            options,
            ratings: None,
        })
    }

    /// The same conversion taking its ratings from `cache` (shared by several conversions).
    pub fn with_ratings(mut self, cache: &'a RatingCache) -> Self {
        self.ratings = Some(cache);
        self
    }

    /// Stage 3 for `station` (this one or an earlier period): from the cache when there is one.
    fn rating_of(
        &self,
        station: &Station,
        model: &RatingModel,
    ) -> Result<std::sync::Arc<stages::RatingStage>, RatingError> {
        match self.ratings {
            Some(c) => c.get(station, model),
            None => Ok(std::sync::Arc::new(stages::rating(station, model)?)),
        }
    }

    /// The options.
    pub fn options(&self) -> &ConvertOptions {
        &self.options
    }

    /// How the outputs are laid out.
    fn layout(&self) -> Layout {
        let s = &self.options.settings;
        Layout {
            flow: self.options.flow_unit,
            volume: self.options.volume_unit,
            style: self.options.csv_style,
            zone: s.zone,
            tailwater: s.tailwater_index.is_some(),
            temperature: s.temperature_index.is_some(),
        }
    }

    /// The conversion set-up for rows whose times are `times` (stage 4, before any drift).
    fn conversion<'s>(
        &'s self,
        rating: &'s stages::RatingStage,
        timeline: &'s super::timeline::Timeline,
        stage: super::convert::StageSource,
    ) -> Conversion<'s> {
        let s = &self.options.settings;
        let m_per = s.metres_per_unit();
        Conversion {
            gum: &rating.gum,
            table: &rating.table,
            range: self.station.range,
            stage,
            zero_m: s.zero * m_per,
            plausible: stages::plausible(s, self.station),
            invalid_bands: rating.invalid_bands.clone(),
            drift: Vec::new(),
            tailwater_column: s
                .tailwater_index
                .map(|k| (k, m_per, s.tailwater_zero.unwrap_or(0.0) * m_per)),
            tailwater: rating.tailwater.as_ref(),
            submerged_estimate: self.options.submerged_estimate,
            exponent: rating.exponent,
            timeline,
            zone: s.zone,
            gravity_m_s2: self.station.structure.gravity_m_s2,
            edits: Edits::default(),
            screened: Default::default(),
            input_rows: timeline.rows(),
            temperature_column: s.temperature_index,
            earlier: Vec::new(),
        }
    }

    /// Stage 3b: the rating of each earlier period of the station, with the instant it ends.
    fn earlier_ratings(&self) -> Result<Vec<(i64, std::sync::Arc<stages::RatingStage>, HeadRange)>, PipelineError> {
        let h = &self.station.history;
        h.iter()
            .enumerate()
            .map(|(k, st)| {
                let next = h.get(k + 1).unwrap_or(self.station);
                let until = next.period.valid_from_ms.unwrap_or(i64::MIN);
                let model = RatingModel::new(st.structure.clone())?;
                Ok((until, self.rating_of(st, &model)?, st.range))
            })
            .collect()
    }

    /// The conversion of each earlier period: `conv` (corrections, screening and edits done)
    /// with that period's rating, range, limits and tailwater.
    fn earlier_conversions<'s>(
        conv: &Conversion<'s>,
        earlier: &'s [(i64, std::sync::Arc<stages::RatingStage>, HeadRange)],
    ) -> Vec<EarlierPeriod<'s>> {
        earlier
            .iter()
            .map(|(until, r, range)| {
                let mut c = conv.clone();
                c.gum = &r.gum;
                c.table = &r.table;
                c.range = *range;
                c.invalid_bands = r.invalid_bands.clone();
                c.exponent = r.exponent;
                c.tailwater = r.tailwater.as_ref();
                EarlierPeriod {
                    until_ms: *until,
                    conv: c,
                    inputs: &r.inputs,
                }
            })
            .collect()
    }

    /// Stage 4: the stage source, the edits and the drift correction, with what they found.
    fn corrections<'s>(
        &'s self,
        rating: &'s stages::RatingStage,
        timeline: &'s super::timeline::Timeline,
        utc: &[i64],
        raw: &RawSeries,
    ) -> Result<(Conversion<'s>, Corrections), PipelineError> {
        let s = &self.options.settings;
        let (stage, baro_sha256) = stages::stage_source(s, self.options.baro.as_deref(), timeline.interval_ms)?;
        let mut conv = self.conversion(rating, timeline, stage);
        if let Some(path) = &self.options.edits {
            conv.edits = Edits::read(path, &s.read.formats, &s.zone)?;
        }
        let mut found = Corrections {
            baro_sha256,
            ..Default::default()
        };
        if let Some(visits) = &self.options.visits {
            let (record, sha) = stages::drift(&conv, utc, timeline.interval_ms, raw, visits, s)?;
            found.drift_warnings = stages::apply_drift(&mut conv, &record);
            found.drift_record = record;
            found.visits_sha256 = Some(sha);
        }
        Ok((conv, found))
    }

    /// Stage 4c: screening, edits and gap filling over the rows in time order; rows inserted
    /// into filled gaps are added to the arrays.
    fn screen(&self, conv: &mut Conversion, utc: &mut Vec<i64>, days: &mut LocalDays, raw: &mut RawSeries) {
        let sensor = stages::sensor(&self.options.settings, &self.options.screening);
        conv.screened = stages::screen(conv, utc, raw, &self.options.screening, sensor);
        stages::add_inserted(conv, utc, days, raw);
    }

    /// Runs the conversion of `logger` into `out`: every output is written to a temporary and
    /// all are renamed into place together at the end ([`crate::files`]).
    pub fn run(
        &self,
        logger: &Path,
        out: &OutputPaths,
        progress: &dyn Progress,
    ) -> Result<ConversionReport, PipelineError> {
        let mut timer = Timer::new();
        let formats = check_formats(out)?;
        if self.options.csv_style != CsvStyle::Standard && formats.0 == TableFile::Parquet {
            return Err(PipelineError::Output {
                path: out.series.display().to_string(),
                message: "the spreadsheet CSV style is for CSV files; the series is Parquet\n  fix: write the series to a .csv file, or leave the style out".into(),
            });
        }
        let size = std::fs::metadata(logger).map_or(0, |m| m.len());
        let mut raw = read_logger(logger, &self.options.settings.read, |n| progress.reading(n, size))?;
        timer.mark("read");
        let mut times = stages::times(&mut raw, &self.options.settings).map_err(|source| PipelineError::Times {
            path: logger.display().to_string(),
            source,
        })?;
        timer.mark("times");
        let rating = self.rating_of(self.station, &self.model)?;
        let earlier = self.earlier_ratings()?;
        timer.mark("rating");
        let (mut conv, corrections) = self.corrections(&rating, &times.timeline, &times.utc, &raw)?;
        timer.mark("corrections");
        self.screen(&mut conv, &mut times.utc, &mut times.days, &mut raw);
        conv.earlier = Self::earlier_conversions(&conv, &earlier);
        timer.mark("screening, edits, fills");
        let mut outputs = OutputSet::new();
        let mut converted = self.write_series(&conv, &times, &raw, &rating, out, formats.0, &mut outputs, progress)?;
        timer.mark("convert and write");
        let zone = self.options.settings.zone;
        let daily = converted.summaries.daily(&zone, &rating.inputs);
        let monthly = converted.summaries.monthly(&zone, &rating.inputs);
        self.write_summaries(out, &daily, &monthly, &mut outputs)?;
        if let (Some(p), Some(fmt)) = (&out.plot, formats.1) {
            let image = self
                .plot(&converted, &conv, &corrections, fmt)
                .map_err(|e| output_error(p, e))?;
            outputs.write(p, &image)?;
        }
        let paths = self.paths(logger, out);
        let facts = Facts {
            paths: &paths,
            logger_bytes: size,
            station: self.station,
            settings: &self.options.settings,
            sort: self.options.sort,
            submerged_estimate: self.options.submerged_estimate,
            raw: &raw,
            times: &times,
            rating: &rating,
            conv: &conv,
            corrections: &corrections,
            converted: &converted,
            daily: &daily,
            edits_path: self.options.edits.as_deref().map(|p| p.display().to_string()),
            screening: self.options.screening,
        };
        let provenance = facts.provenance();
        let mut bytes = serde_json::to_vec_pretty(&provenance).expect("JSON values serialise");
        bytes.push(b'\n');
        outputs.write(&out.provenance, &bytes)?;
        outputs.commit()?;
        timer.mark("summaries, plot, provenance");
        progress.finished();
        Ok(ConversionReport {
            text: facts.text(),
            provenance,
            flagged_rows: flagged(&converted.counts),
            counts: converted.counts.clone(),
            daily,
            monthly,
        })
    }

    /// The daily and monthly summaries, where asked for.
    fn write_summaries(
        &self,
        out: &OutputPaths,
        daily: &[PeriodRow],
        monthly: &[PeriodRow],
        outputs: &mut OutputSet,
    ) -> Result<(), PipelineError> {
        for (p, key, rows) in [(&out.daily, "date", daily), (&out.monthly, "month", monthly)] {
            if let Some(p) = p {
                let format = TableFile::from_path(p).expect("checked");
                write_summary(outputs.create(p)?, format, key, rows, &self.layout()).map_err(|e| output_error(p, e))?;
            }
        }
        Ok(())
    }

    /// Stage 5 with its output: converts every row and streams the chunks to the series file,
    /// each formatted or encoded by the thread that converted it and written here in order.
    #[allow(clippy::too_many_arguments)]
    fn write_series(
        &self,
        conv: &Conversion,
        times: &Times,
        raw: &RawSeries,
        rating: &stages::RatingStage,
        out: &OutputPaths,
        format: TableFile,
        outputs: &mut OutputSet,
        progress: &dyn Progress,
    ) -> Result<Converted, PipelineError> {
        let file = outputs.create(&out.series)?;
        let zone = self.options.settings.zone.polars_name();
        let mut writer = SeriesWriter::new(file, format, zone.as_deref(), self.layout())
            .map_err(|e| output_error(&out.series, e))?;
        let preparer = writer.preparer().clone();
        let mut failed = None;
        let order = stages::write_order(times, raw, conv, self.options.sort);
        let total = raw.lines.len() as u64;
        let converted = stages::convert_all(
            conv,
            times,
            raw,
            &rating.inputs,
            order.as_deref(),
            out.plot.is_some(),
            |chunk| preparer.prepare(chunk),
            // the first failure stops the conversion and is reported below
            |ready| match ready.and_then(|r| writer.write_prepared(r)) {
                Ok(()) => true,
                Err(e) => {
                    failed = Some(e);
                    false
                }
            },
            |done| progress.converting(done, total),
        );
        if let Some(e) = failed {
            return Err(output_error(&out.series, e));
        }
        writer.finish().map_err(|e| output_error(&out.series, e))?;
        Ok(converted)
    }

    /// The hydrograph, its clock the logger's at the start of the record.
    fn plot(
        &self,
        converted: &Converted,
        conv: &Conversion,
        corrections: &Corrections,
        fmt: ImageFormat,
    ) -> Result<Vec<u8>, crate::report::plot::PlotError> {
        let b = &converted.buckets;
        let offset = self.options.settings.zone.offset_at_utc(b.start_ms());
        let clock = format!(
            "UTC{}{:02}:{:02}",
            if offset < 0 { '-' } else { '+' },
            offset.abs() / 3600,
            (offset.abs() % 3600) / 60
        );
        let unit = self.options.flow_unit;
        let range = self.station.range;
        let chart = HydroChart {
            buckets: b,
            title: format!("{}: discharge", self.station.name),
            clock,
            offset_s: offset,
            flow: (format!("discharge Q ({})", unit.symbol()), 1.0 / unit.m3s_per_unit()),
            visits: corrections.drift_record.iter().map(|d| d.time_ms).collect(),
            edits: conv
                .edits
                .edits
                .iter()
                .map(|e| {
                    (
                        e.start_ms,
                        e.end_ms.min(b.end_ms()).max(e.start_ms + (3.0 * b.width_ms()) as i64),
                    )
                })
                .collect(),
            stage_panel: self.options.plot_stage.then_some((range.min_head_m, range.max_head_m)),
        };
        hydrograph(&chart, fmt)
    }

    fn paths(&self, logger: &Path, out: &OutputPaths) -> Paths {
        let shown = |p: &Path| p.display().to_string();
        Paths {
            logger: shown(logger),
            station: self.station.source.clone(),
            output: shown(&out.series),
            provenance: shown(&out.provenance),
            visits: self.options.visits.as_deref().map(shown),
            baro: self.options.baro.as_deref().map(shown),
        }
    }

    /// The same stages on readings held in memory, without files: `times` as the logger writes
    /// them (in its formats and on its clock), `values` its value columns (stage or pressure
    /// first). Every row comes back, converted, in input order (with any rows inserted into
    /// filled gaps after the row before them in time).
    pub fn convert_readings(&self, times_text: &[&str], values: Vec<Vec<f64>>) -> Result<InMemory, PipelineError> {
        let mut raw = RawSeries::from_readings(times_text, &self.options.settings.read.formats, values);
        let mut times = stages::times(&mut raw, &self.options.settings).map_err(|source| PipelineError::Times {
            path: "(readings in memory)".into(),
            source,
        })?;
        let rating = self.rating_of(self.station, &self.model)?;
        let earlier = self.earlier_ratings()?;
        let (mut conv, _) = self.corrections(&rating, &times.timeline, &times.utc, &raw)?;
        self.screen(&mut conv, &mut times.utc, &mut times.days, &mut raw);
        conv.earlier = Self::earlier_conversions(&conv, &earlier);
        let order = stages::write_order(&times, &raw, &conv, false);
        let mut rows = Chunk::default();
        let mut converted = stages::convert_all(
            &conv,
            &times,
            &raw,
            &rating.inputs,
            order.as_deref(),
            false,
            |chunk| chunk,
            |chunk| {
                rows.append(chunk);
                true
            },
            |_| {},
        );
        let zone = self.options.settings.zone;
        Ok(InMemory {
            rows,
            counts: converted.counts.clone(),
            daily: converted.summaries.daily(&zone, &rating.inputs),
            monthly: converted.summaries.monthly(&zone, &rating.inputs),
        })
    }
}

/// Rows flagged other than `ok` or `dry`.
fn flagged(counts: &Counts) -> usize {
    Flag::ALL
        .iter()
        .zip(counts.per_flag)
        .filter(|(f, _)| !f.measured())
        .map(|(_, c)| c)
        .sum()
}

fn output_error(path: &Path, e: impl std::fmt::Display) -> PipelineError {
    PipelineError::Output {
        path: path.display().to_string(),
        message: e.to_string(),
    }
}

/// The series' format and the plot's, checked before any work.
fn check_formats(out: &OutputPaths) -> Result<(TableFile, Option<ImageFormat>), PipelineError> {
    let bad = |p: &Path, what: &str| PipelineError::Output {
        path: p.display().to_string(),
        message: what.to_string(),
    };
    let series =
        TableFile::from_path(&out.series).ok_or_else(|| bad(&out.series, "the series must end in .csv or .parquet"))?;
    for p in [&out.daily, &out.monthly].into_iter().flatten() {
        TableFile::from_path(p).ok_or_else(|| bad(p, "a summary must end in .csv or .parquet"))?;
    }
    let plot = match &out.plot {
        Some(p) => Some(ImageFormat::from_path(p).ok_or_else(|| bad(p, "the plot must end in .png or .svg"))?),
        None => None,
    };
    Ok((series, plot))
}
