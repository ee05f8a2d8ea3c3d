//! Writing converted series and summaries with polars (CSV or Parquet), chunk by chunk, into a
//! file the caller opened (a temporary of [`crate::files::OutputSet`], renamed into place only
//! when the whole run has succeeded).

use std::fs::File;
use std::io::{BufWriter, Write};
use std::path::Path;

use polars::prelude::*;
use polars_arrow::array::{Array, DictionaryArray, PrimitiveArray, Utf8ViewArray};
use polars_arrow::bitmap::Bitmap;
use polars_arrow::datatypes::{
    ArrowDataType, ArrowSchema, Field as ArrowField, IntegerType, TimeUnit as ArrowTimeUnit,
};
use polars_parquet::parquet::error::ParquetError;
use polars_parquet::parquet::fallible_streaming_iterator;
use polars_parquet::write::{
    array_to_columns, to_parquet_type, CompressedPage, CompressionOptions, Compressor, DynIter, DynStreamingIterator,
    Encoding, FileWriter, ParquetType, Version, WriteOptions,
};

use super::convert::{Chunk, Flag, PeriodRow};
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

enum Inner {
    Csv(polars::io::csv::write::BatchedWriter<File>),
    Parquet(Box<ParquetSink>),
}

/// Writes converted chunks.
pub struct SeriesWriter {
    inner: Inner,
    tz: Option<TimeZone>,
}

/// The float columns of a converted series, in output order (design.md): `time` comes before
/// them, `flag` and `line` after.
const FLOAT_COLUMNS: [&str; 5] = [
    "stage_m",
    "head_m",
    "discharge_m3s",
    "discharge_low_m3s",
    "discharge_high_m3s",
];

/// A chunk's float columns, in the order of [`FLOAT_COLUMNS`].
fn float_columns(c: &mut Chunk) -> [Vec<f64>; 5] {
    [
        std::mem::take(&mut c.stage_m),
        std::mem::take(&mut c.head_m),
        std::mem::take(&mut c.discharge_m3s),
        std::mem::take(&mut c.low_m3s),
        std::mem::take(&mut c.high_m3s),
    ]
}

fn series_schema(tz: Option<TimeZone>) -> Schema {
    let time = Field::new("time".into(), DataType::Datetime(TimeUnit::Milliseconds, tz));
    let floats = FLOAT_COLUMNS.map(|n| Field::new(n.into(), DataType::Float64));
    let rest = [
        Field::new("flag".into(), DataType::String),
        Field::new("line".into(), DataType::UInt32),
        Field::new("counted_line".into(), DataType::UInt32),
    ];
    Schema::from_iter(std::iter::once(time).chain(floats).chain(rest))
}

/// Validity of a float column: non-finite values become nulls (`None` when there are none).
fn finite_validity(v: &[f64]) -> Option<Bitmap> {
    if v.iter().all(|x| x.is_finite()) {
        return None;
    }
    let valid: Bitmap = v.iter().map(|x| x.is_finite()).collect();
    (valid.unset_bits() > 0).then_some(valid)
}

/// Validity of the counted-line column: rows that hold their instant alone have none (`None`
/// when no row has one).
fn line_validity(l: &[u32]) -> Option<Bitmap> {
    l.iter()
        .any(|l| *l != 0)
        .then(|| l.iter().map(|l| *l != 0).collect::<Bitmap>())
}

/// Validity of a time column: rows without a time become nulls (`None` when all have one).
fn time_validity(t: &[i64]) -> Option<Bitmap> {
    t.contains(&NO_TIME)
        .then(|| t.iter().map(|t| *t != NO_TIME).collect::<Bitmap>())
}

/// A float column taking ownership of `v`; non-finite values become nulls (empty in CSV).
fn opt(name: &str, v: Vec<f64>) -> Column {
    let validity = finite_validity(&v);
    Float64Chunked::from_vec_validity(name.into(), v, validity).into_column()
}

/// The Parquet side: each chunk becomes one row group, its columns encoded on two threads
/// with encodings chosen for the data (polars-parquet does the encoding):
/// times and line numbers as deltas (they mostly step by a constant), the flag through a
/// six-word dictionary, floats plain. No compression and no column statistics: on a logger
/// series they shrink the file by a few per cent at several times the cost.
struct ParquetSink {
    writer: FileWriter<BufWriter<File>>,
    types: Vec<ParquetType>,
    options: WriteOptions,
    time_type: ArrowDataType,
    flag_words: Utf8ViewArray,
}

/// Encodings of the nine columns, in schema order.
const PARQUET_ENCODINGS: [Encoding; 9] = [
    Encoding::DeltaBinaryPacked,
    Encoding::Plain,
    Encoding::Plain,
    Encoding::Plain,
    Encoding::Plain,
    Encoding::Plain,
    Encoding::RleDictionary,
    Encoding::DeltaBinaryPacked,
    Encoding::Plain,
];

impl ParquetSink {
    fn new(file: File, tz: Option<&TimeZone>) -> PolarsResult<Self> {
        let time_type = ArrowDataType::Timestamp(ArrowTimeUnit::Millisecond, tz.map(|z| z.as_str().into()));
        let mut fields = vec![ArrowField::new("time".into(), time_type.clone(), true)];
        for name in FLOAT_COLUMNS {
            fields.push(ArrowField::new(name.into(), ArrowDataType::Float64, true));
        }
        fields.push(ArrowField::new("flag".into(), ArrowDataType::Utf8View, false));
        fields.push(ArrowField::new("line".into(), ArrowDataType::UInt32, false));
        fields.push(ArrowField::new("counted_line".into(), ArrowDataType::UInt32, true));
        let types = fields.iter().map(to_parquet_type).collect::<PolarsResult<Vec<_>>>()?;
        let options = WriteOptions {
            statistics: StatisticsOptions::empty(),
            version: Version::V1,
            compression: CompressionOptions::Uncompressed,
            data_page_size: None,
        };
        let schema = ArrowSchema::from_iter(fields);
        let writer = FileWriter::try_new(BufWriter::with_capacity(1 << 20, file), schema, options)?;
        Ok(Self {
            writer,
            types,
            options,
            time_type,
            flag_words: Utf8ViewArray::from_slice_values(Flag::ALL.map(Flag::as_str)),
        })
    }

    /// Encodes one column into finished pages.
    fn encode(&self, array: &dyn Array, column: usize) -> PolarsResult<Vec<CompressedPage>> {
        let mut out = Vec::new();
        for pages in array_to_columns(
            array,
            self.types[column].clone(),
            self.options,
            &[PARQUET_ENCODINGS[column]],
        )? {
            let pages = pages.map(|p| p.map_err(|e| ParquetError::FeatureNotSupported(e.to_string())));
            for page in Compressor::new(pages, self.options.compression, Vec::new()) {
                out.push(page.map_err(PolarsError::from)?);
            }
        }
        Ok(out)
    }

    fn write(&mut self, mut c: Chunk) -> PolarsResult<()> {
        let height = c.line.len();
        let floats = float_columns(&mut c);
        let time_valid = time_validity(&c.time_ms);
        let float = |v: Vec<f64>| -> Box<dyn Array> {
            let validity = finite_validity(&v);
            Box::new(PrimitiveArray::<f64>::from_vec(v).with_validity(validity))
        };
        // a flag's discriminant is its place in Flag::ALL, the dictionary's order
        let keys: Vec<u8> = c.flag.iter().map(|f| *f as u8).collect();
        let flags = DictionaryArray::<u8>::try_new(
            ArrowDataType::Dictionary(IntegerType::UInt8, Box::new(ArrowDataType::Utf8View), false),
            PrimitiveArray::<u8>::from_vec(keys),
            self.flag_words.clone().boxed(),
        )?;
        let mut arrays: Vec<Box<dyn Array>> = vec![Box::new(
            PrimitiveArray::<i64>::from_vec(c.time_ms)
                .to(self.time_type.clone())
                .with_validity(time_valid),
        )];
        arrays.extend(floats.map(float));
        arrays.push(Box::new(flags));
        arrays.push(Box::new(PrimitiveArray::<u32>::from_vec(c.line)));
        let counted_valid = line_validity(&c.counted_line);
        arrays.push(Box::new(
            PrimitiveArray::<u32>::from_vec(c.counted_line).with_validity(counted_valid),
        ));
        // columns 0–3 on this thread, 4–8 on a helper: about the same bytes each
        let this = &*self;
        let pages: Vec<Vec<CompressedPage>> = std::thread::scope(|scope| {
            let helper = scope.spawn(|| {
                (4..9)
                    .map(|k| this.encode(arrays[k].as_ref(), k))
                    .collect::<PolarsResult<Vec<_>>>()
            });
            let mut pages = (0..4)
                .map(|k| this.encode(arrays[k].as_ref(), k))
                .collect::<PolarsResult<Vec<_>>>()?;
            pages.extend(helper.join().expect("page encoding does not panic")?);
            PolarsResult::Ok(pages)
        })?;
        let group = DynIter::new(pages.iter().map(|col| {
            Ok(DynStreamingIterator::new(fallible_streaming_iterator::convert(
                col.iter().map(PolarsResult::Ok),
            )))
        }));
        self.writer.write(height as u64, group)
    }

    fn finish(mut self) -> PolarsResult<()> {
        self.writer.end(None)?;
        let mut file = self.writer.into_inner();
        file.flush()?;
        Ok(())
    }
}

impl SeriesWriter {
    /// A writer into `file` in `format`; `zone` names the time zone of the output's time
    /// column (UTC when `None`).
    pub fn new(file: File, format: TableFile, zone: Option<&str>) -> PolarsResult<Self> {
        let tz = TimeZone::opt_try_new(Some(zone.unwrap_or("UTC")))?;
        let inner = match format {
            TableFile::Csv => Inner::Csv(
                CsvWriter::new(file)
                    .include_header(true)
                    .with_datetime_format(Some("%Y-%m-%dT%H:%M:%S%:z".into()))
                    .with_float_scientific(None)
                    .batched(&series_schema(tz.clone()))?,
            ),
            TableFile::Parquet => Inner::Parquet(Box::new(ParquetSink::new(file, tz.as_ref())?)),
        };
        Ok(Self { inner, tz })
    }

    /// Appends one chunk (taking its columns without copying them).
    pub fn write(&mut self, mut c: Chunk) -> PolarsResult<()> {
        let w = match &mut self.inner {
            Inner::Csv(w) => w,
            Inner::Parquet(p) => return p.write(c),
        };
        let height = c.line.len();
        let floats = float_columns(&mut c);
        let validity = time_validity(&c.time_ms);
        let time = Int64Chunked::from_vec_validity("time".into(), c.time_ms, validity)
            .into_datetime(TimeUnit::Milliseconds, self.tz.clone());
        let flag: StringChunked = c.flag.iter().map(|f| Some(f.as_str())).collect();
        let mut cols = vec![time.into_series().with_name("time".into()).into_column()];
        cols.extend(FLOAT_COLUMNS.into_iter().zip(floats).map(|(name, v)| opt(name, v)));
        cols.push(flag.into_series().with_name("flag".into()).into_column());
        cols.push(
            UInt32Chunked::from_vec("line".into(), c.line)
                .into_series()
                .into_column(),
        );
        let counted_valid = line_validity(&c.counted_line);
        cols.push(
            UInt32Chunked::from_vec_validity("counted_line".into(), c.counted_line, counted_valid)
                .into_series()
                .into_column(),
        );
        w.write_batch(&DataFrame::new(height, cols)?)
    }

    /// Finishes the file.
    pub fn finish(self) -> PolarsResult<()> {
        match self.inner {
            Inner::Csv(mut w) => w.finish()?,
            Inner::Parquet(p) => p.finish()?,
        }
        Ok(())
    }
}

/// Writes summary rows to `file` as CSV or Parquet. `key` names the period column.
pub fn write_summary(file: File, format: TableFile, key: &str, rows: &[PeriodRow]) -> PolarsResult<()> {
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
        named(f(|r| r.rows_measured as f64 / r.rows.max(1) as f64), "share_ok"),
        named(f(|r| r.mean_m3s), "mean_discharge_m3s"),
        named(f(|r| r.min_m3s), "min_discharge_m3s"),
        named(f(|r| r.max_m3s), "max_discharge_m3s"),
        named(f(|r| r.volume_m3), "volume_m3"),
        named(f(|r| r.volume_measured_m3), "volume_measured_m3"),
        named(f(|r| r.volume_estimated_m3), "volume_estimated_m3"),
        named(f(|r| r.volume_u95_m3), "volume_u95_m3"),
        named(f(|r| r.volume_u_systematic_m3), "volume_u_systematic_m3"),
        named(f(|r| r.volume_u_random_m3), "volume_u_random_m3"),
        named(f(|r| r.covered_h), "covered_h"),
        named(f(|r| r.measured_h), "measured_h"),
        named(f(|r| r.estimated_h), "estimated_h"),
        named(f(|r| r.missing_h), "missing_h"),
        named(f(|r| r.complete_pct), "complete_pct"),
    ];
    let mut df = DataFrame::new(rows.len(), cols)?;
    match format {
        TableFile::Csv => CsvWriter::new(file).include_header(true).finish(&mut df)?,
        TableFile::Parquet => {
            ParquetWriter::new(file).finish(&mut df)?;
        }
    }
    Ok(())
}
