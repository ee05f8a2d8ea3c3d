//! Writing converted series and summaries with polars (CSV or Parquet), chunk by chunk, into a
//! temporary file that is renamed into place only when complete.

use std::fs::File;
use std::path::{Path, PathBuf};

use polars::prelude::*;

use super::convert::{Chunk, PeriodRow};
use super::time::NO_TIME;

/// Output file formats.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum TableFile {
    /// Comma-separated text.
    Csv,
    /// Apache Parquet.
    Parquet,
}

impl TableFile {
    /// From the file extension.
    pub fn from_path(p: &Path) -> Option<Self> {
        match p.extension()?.to_str()?.to_ascii_lowercase().as_str() {
            "csv" => Some(Self::Csv),
            "parquet" => Some(Self::Parquet),
            _ => None,
        }
    }
}

/// A temporary sibling of `path`, renamed over it by [`commit`].
pub fn temp_path(path: &Path) -> PathBuf {
    let name = path
        .file_name()
        .map_or("out".into(), |n| n.to_string_lossy().to_string());
    let dir = path
        .parent()
        .filter(|d| !d.as_os_str().is_empty())
        .unwrap_or(Path::new("."));
    dir.join(format!(".{name}.{}.tmp", std::process::id()))
}

/// Moves a finished temporary file into place.
pub fn commit(tmp: &Path, path: &Path) -> std::io::Result<()> {
    std::fs::rename(tmp, path)
}

enum Inner {
    Csv(polars::io::csv::write::BatchedWriter<File>),
    Parquet(Box<polars::io::parquet::write::BatchedWriter<File>>),
}

/// Writes converted chunks.
pub struct SeriesWriter {
    inner: Inner,
    tmp: PathBuf,
    path: PathBuf,
    tz: Option<TimeZone>,
}

fn series_schema(tz: Option<TimeZone>) -> Schema {
    Schema::from_iter([
        Field::new("time".into(), DataType::Datetime(TimeUnit::Milliseconds, tz)),
        Field::new("stage_m".into(), DataType::Float64),
        Field::new("head_m".into(), DataType::Float64),
        Field::new("discharge_m3s".into(), DataType::Float64),
        Field::new("discharge_low_m3s".into(), DataType::Float64),
        Field::new("discharge_high_m3s".into(), DataType::Float64),
        Field::new("flag".into(), DataType::String),
        Field::new("line".into(), DataType::UInt32),
    ])
}

fn opt(v: &[f64]) -> Float64Chunked {
    v.iter().map(|x| x.is_finite().then_some(*x)).collect()
}

impl SeriesWriter {
    /// Opens a writer for `path` (format from its extension); `zone` names the time zone of the
    /// output's time column (UTC when `None`).
    pub fn create(path: &Path, zone: Option<&str>) -> PolarsResult<Self> {
        let format = TableFile::from_path(path)
            .ok_or_else(|| polars_err!(ComputeError: "output {} must end in .csv or .parquet", path.display()))?;
        let tz = TimeZone::opt_try_new(Some(zone.unwrap_or("UTC")))?;
        let tmp = temp_path(path);
        let file = File::create(&tmp)?;
        let schema = series_schema(tz.clone());
        let inner = match format {
            TableFile::Csv => Inner::Csv(
                CsvWriter::new(file)
                    .include_header(true)
                    .with_datetime_format(Some("%Y-%m-%dT%H:%M:%S%:z".into()))
                    .with_float_scientific(None)
                    .batched(&schema)?,
            ),
            TableFile::Parquet => Inner::Parquet(Box::new(
                ParquetWriter::new(file)
                    .with_compression(ParquetCompression::Snappy)
                    .batched(&schema)?,
            )),
        };
        Ok(Self {
            inner,
            tmp,
            path: path.to_path_buf(),
            tz,
        })
    }

    /// Appends one chunk.
    pub fn write(&mut self, c: &Chunk) -> PolarsResult<()> {
        let time: Int64Chunked = c.time_ms.iter().map(|t| (*t != NO_TIME).then_some(*t)).collect();
        let time = time.into_datetime(TimeUnit::Milliseconds, self.tz.clone());
        let mut flag: StringChunked = c.flag.iter().map(|f| Some(f.as_str())).collect();
        flag.rename("flag".into());
        let cols = vec![
            time.into_series().with_name("time".into()).into_column(),
            opt(&c.stage_m).into_series().with_name("stage_m".into()).into_column(),
            opt(&c.head_m).into_series().with_name("head_m".into()).into_column(),
            opt(&c.discharge_m3s)
                .into_series()
                .with_name("discharge_m3s".into())
                .into_column(),
            opt(&c.low_m3s)
                .into_series()
                .with_name("discharge_low_m3s".into())
                .into_column(),
            opt(&c.high_m3s)
                .into_series()
                .with_name("discharge_high_m3s".into())
                .into_column(),
            flag.into_series().into_column(),
            UInt32Chunked::from_vec("line".into(), c.line.clone())
                .into_series()
                .into_column(),
        ];
        let df = DataFrame::new(c.line.len(), cols)?;
        match &mut self.inner {
            Inner::Csv(w) => w.write_batch(&df),
            Inner::Parquet(w) => w.write_batch(&df),
        }
    }

    /// Finishes the file and moves it into place.
    pub fn finish(self) -> PolarsResult<()> {
        match self.inner {
            Inner::Csv(mut w) => w.finish()?,
            Inner::Parquet(w) => {
                w.finish()?;
            }
        }
        commit(&self.tmp, &self.path)?;
        Ok(())
    }

    /// Gives up: removes the temporary file.
    pub fn abandon(self) {
        let _ = std::fs::remove_file(&self.tmp);
    }
}

/// Writes summary rows to CSV or Parquet (atomically). `key` names the period column.
pub fn write_summary(path: &Path, key: &str, rows: &[PeriodRow]) -> PolarsResult<()> {
    let format = TableFile::from_path(path)
        .ok_or_else(|| polars_err!(ComputeError: "summary {} must end in .csv or .parquet", path.display()))?;
    let f = |g: fn(&PeriodRow) -> f64| -> Float64Chunked {
        rows.iter().map(|r| Some(g(r)).filter(|v| v.is_finite())).collect()
    };
    let named = |ca: Float64Chunked, n: &str| ca.into_series().with_name(n.into()).into_column();
    let label: StringChunked = rows.iter().map(|r| Some(r.label.as_str())).collect();
    let cols = vec![
        label.into_series().with_name(key.into()).into_column(),
        UInt32Chunked::from_vec("rows".into(), rows.iter().map(|r| r.rows as u32).collect()).into_column(),
        UInt32Chunked::from_vec(
            "rows_counted".into(),
            rows.iter().map(|r| r.rows_counted as u32).collect(),
        )
        .into_column(),
        named(f(|r| r.rows_counted as f64 / r.rows.max(1) as f64), "share_ok"),
        named(f(|r| r.mean_m3s), "mean_discharge_m3s"),
        named(f(|r| r.min_m3s), "min_discharge_m3s"),
        named(f(|r| r.max_m3s), "max_discharge_m3s"),
        named(f(|r| r.volume_m3), "volume_m3"),
        named(f(|r| r.volume_u95_m3), "volume_u95_m3"),
        named(f(|r| r.volume_u_systematic_m3), "volume_u_systematic_m3"),
        named(f(|r| r.volume_u_random_m3), "volume_u_random_m3"),
        named(f(|r| r.covered_h), "covered_h"),
    ];
    let mut df = DataFrame::new(rows.len(), cols)?;
    let tmp = temp_path(path);
    let result = (|| -> PolarsResult<()> {
        let file = File::create(&tmp)?;
        match format {
            TableFile::Csv => CsvWriter::new(file).include_header(true).finish(&mut df)?,
            TableFile::Parquet => {
                ParquetWriter::new(file).finish(&mut df)?;
            }
        }
        commit(&tmp, path)?;
        Ok(())
    })();
    if result.is_err() {
        let _ = std::fs::remove_file(&tmp);
    }
    result
}
