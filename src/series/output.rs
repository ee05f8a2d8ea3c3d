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

/// A float column taking ownership of `v`; non-finite values become nulls (empty in CSV).
fn opt(name: &str, v: Vec<f64>) -> Column {
    let valid: polars_arrow::bitmap::Bitmap = v.iter().map(|x| x.is_finite()).collect();
    let validity = (valid.unset_bits() > 0).then_some(valid);
    Float64Chunked::from_vec_validity(name.into(), v, validity).into_column()
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
                    // column statistics cost a third of the writing time and serve no reader here
                    .with_statistics(StatisticsOptions::empty())
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

    /// Appends one chunk (taking its columns without copying them).
    pub fn write(&mut self, c: Chunk) -> PolarsResult<()> {
        let height = c.line.len();
        let valid: polars_arrow::bitmap::Bitmap = c.time_ms.iter().map(|t| *t != NO_TIME).collect();
        let validity = (valid.unset_bits() > 0).then_some(valid);
        let time = Int64Chunked::from_vec_validity("time".into(), c.time_ms, validity)
            .into_datetime(TimeUnit::Milliseconds, self.tz.clone());
        let flag: StringChunked = c.flag.iter().map(|f| Some(f.as_str())).collect();
        let cols = vec![
            time.into_series().with_name("time".into()).into_column(),
            opt("stage_m", c.stage_m),
            opt("head_m", c.head_m),
            opt("discharge_m3s", c.discharge_m3s),
            opt("discharge_low_m3s", c.low_m3s),
            opt("discharge_high_m3s", c.high_m3s),
            flag.into_series().with_name("flag".into()).into_column(),
            UInt32Chunked::from_vec("line".into(), c.line)
                .into_series()
                .into_column(),
        ];
        let df = DataFrame::new(height, cols)?;
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
