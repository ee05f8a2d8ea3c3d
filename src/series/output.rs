//! Writing converted series and summaries with polars (CSV or Parquet), chunk by chunk, into a
//! file the caller opened (a temporary of [`crate::files::OutputSet`], renamed into place only
//! when the whole run has succeeded).

use std::fs::File;
use std::io::BufWriter;
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
use super::time::{Zone, NO_TIME};
use crate::files::WriteBehind;
use crate::units::{FlowUnit, VolumeUnit};

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
    /// The standard CSV style, formatted by flumerate on all cores (the same bytes).
    FastCsv(super::csv_fast::FastCsv),
    Parquet(Box<ParquetSink>),
}

/// How the series and summaries are laid out: the units people report in, the CSV style and
/// the evidence columns.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Layout {
    /// Discharge unit of the series and the summaries.
    pub flow: FlowUnit,
    /// Volume unit of the summaries.
    pub volume: VolumeUnit,
    /// CSV style (Parquet files are always standard).
    pub style: CsvStyle,
    /// The logger's clock, for the local time column of the spreadsheet style.
    pub zone: Zone,
    /// Write the logged tailwater and the submergence.
    pub tailwater: bool,
    /// Write the logged water temperature.
    pub temperature: bool,
}

impl Default for Layout {
    fn default() -> Self {
        Self {
            flow: FlowUnit::default(),
            volume: VolumeUnit::default(),
            style: CsvStyle::Standard,
            zone: Zone::Fixed(0),
            tailwater: false,
            temperature: false,
        }
    }
}

/// The style of CSV outputs.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum CsvStyle {
    /// Full precision, ISO 8601 times with their offset, comma separated.
    #[default]
    Standard,
    /// For spreadsheets: `time_utc` and `time_local` (the logger's clock, without offset)
    /// columns, values rounded to what the measurement supports ([`Rounding`]); with
    /// `decimal_comma`, a decimal comma and semicolons between fields.
    Spreadsheet {
        /// Decimal comma and semicolon separator.
        decimal_comma: bool,
    },
}

/// Rounding of the spreadsheet style (common practice, no source): stage, head and tailwater
/// to 1 mm (a water-level record rarely resolves less), discharges to 3 significant figures,
/// volumes to 4, submergence to 0.001, temperature to 0.1 °C, hours and percentages to 0.01.
#[derive(Debug, Clone, Copy)]
pub struct Rounding;

impl Rounding {
    /// `v` to `decimals` decimals.
    pub fn decimals(v: f64, decimals: i32) -> f64 {
        if !v.is_finite() {
            return v;
        }
        let f = 10f64.powi(decimals);
        (v * f).round() / f + 0.0
    }

    /// `v` to `figures` significant figures.
    pub fn figures(v: f64, figures: i32) -> f64 {
        if !v.is_finite() || v == 0.0 {
            return v;
        }
        let magnitude = v.abs().log10().floor() as i32;
        Self::decimals(v, figures - 1 - magnitude)
    }
}

/// The float columns before `flag`; the rest are evidence columns after `counted_line`.
const MAIN_FLOATS: usize = 5;

/// What a float column holds, for its unit and rounding.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Kind {
    Length,
    Discharge,
    Ratio,
    Temperature,
}

/// Writes converted chunks.
pub struct SeriesWriter {
    inner: Inner,
    /// Makes chunks ready; holds the layout.
    preparer: Preparer,
    tz: Option<TimeZone>,
    /// Float columns: name and kind, in output order.
    floats: Vec<(String, Kind)>,
}

/// The float columns of a converted series, in output order (design.md): `time` comes before
/// the first five, then `flag`, `line` and `counted_line`, then the evidence columns (the rest).
fn float_names(layout: &Layout) -> Vec<(String, Kind)> {
    let q = layout.flow.suffix();
    let mut v = vec![
        ("stage_m".to_string(), Kind::Length),
        ("head_m".to_string(), Kind::Length),
        (format!("discharge_{q}"), Kind::Discharge),
        (format!("discharge_low_{q}"), Kind::Discharge),
        (format!("discharge_high_{q}"), Kind::Discharge),
    ];
    if layout.tailwater {
        v.push(("tailwater_m".to_string(), Kind::Length));
        v.push(("submergence".to_string(), Kind::Ratio));
    }
    if layout.temperature {
        v.push(("temperature_c".to_string(), Kind::Temperature));
    }
    v
}

/// A chunk's float columns in the order of [`float_names`], in the layout's units (rounded in
/// the spreadsheet style).
fn float_columns(c: &mut Chunk, layout: &Layout) -> Vec<Vec<f64>> {
    let mut cols = vec![
        std::mem::take(&mut c.stage_m),
        std::mem::take(&mut c.head_m),
        std::mem::take(&mut c.discharge_m3s),
        std::mem::take(&mut c.low_m3s),
        std::mem::take(&mut c.high_m3s),
    ];
    let mut kinds = vec![
        Kind::Length,
        Kind::Length,
        Kind::Discharge,
        Kind::Discharge,
        Kind::Discharge,
    ];
    if layout.tailwater {
        cols.push(std::mem::take(&mut c.tailwater_m));
        cols.push(std::mem::take(&mut c.submergence));
        kinds.extend([Kind::Length, Kind::Ratio]);
    }
    if layout.temperature {
        cols.push(std::mem::take(&mut c.temperature_c));
        kinds.push(Kind::Temperature);
    }
    let spreadsheet = matches!(layout.style, CsvStyle::Spreadsheet { .. });
    for (col, kind) in cols.iter_mut().zip(kinds) {
        if kind == Kind::Discharge && layout.flow != FlowUnit::CubicMetresPerSecond {
            col.iter_mut().for_each(|v| *v = layout.flow.from_si(*v));
        }
        if spreadsheet {
            match kind {
                Kind::Length => col.iter_mut().for_each(|v| *v = Rounding::decimals(*v, 3)),
                Kind::Discharge => col.iter_mut().for_each(|v| *v = Rounding::figures(*v, 3)),
                Kind::Ratio => col.iter_mut().for_each(|v| *v = Rounding::decimals(*v, 3)),
                Kind::Temperature => col.iter_mut().for_each(|v| *v = Rounding::decimals(*v, 1)),
            }
        }
    }
    cols
}

fn series_schema(tz: Option<TimeZone>, layout: &Layout) -> Schema {
    let mut fields = match layout.style {
        CsvStyle::Standard => vec![Field::new(
            "time".into(),
            DataType::Datetime(TimeUnit::Milliseconds, tz),
        )],
        CsvStyle::Spreadsheet { .. } => vec![
            Field::new(
                "time_utc".into(),
                DataType::Datetime(TimeUnit::Milliseconds, Some(TimeZone::UTC)),
            ),
            Field::new("time_local".into(), DataType::Datetime(TimeUnit::Milliseconds, None)),
        ],
    };
    let floats = float_names(layout);
    for (name, _) in &floats[..MAIN_FLOATS] {
        fields.push(Field::new(name.into(), DataType::Float64));
    }
    fields.extend([
        Field::new("flag".into(), DataType::String),
        Field::new("line".into(), DataType::UInt32),
        Field::new("counted_line".into(), DataType::UInt32),
    ]);
    for (name, _) in &floats[MAIN_FLOATS..] {
        fields.push(Field::new(name.into(), DataType::Float64));
    }
    Schema::from_iter(fields)
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
    Some(l.iter().map(|l| *l != 0).collect::<Bitmap>())
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

/// The Parquet side: each chunk becomes one row group, its columns encoded into pages by the
/// thread that converted it ([`ParquetPages`]) and written in order by [`ParquetSink`].
struct ParquetSink {
    writer: FileWriter<BufWriter<WriteBehind>>,
}

/// How a chunk's columns become Parquet pages, with encodings chosen for the data
/// (polars-parquet does the encoding): times and line numbers as deltas (they mostly step by a
/// constant), the flag through a twelve-word dictionary, floats plain. No compression and no
/// column statistics: on a logger series they shrink the file by a few per cent at several
/// times the cost.
#[derive(Clone)]
struct ParquetPages {
    types: Vec<ParquetType>,
    encodings: Vec<Encoding>,
    options: WriteOptions,
    time_type: ArrowDataType,
    flag_words: Utf8ViewArray,
}

impl ParquetSink {
    fn new(file: WriteBehind, tz: Option<&TimeZone>, layout: &Layout) -> PolarsResult<(Self, ParquetPages)> {
        let time_type = ArrowDataType::Timestamp(ArrowTimeUnit::Millisecond, tz.map(|z| z.as_str().into()));
        let mut fields = vec![ArrowField::new("time".into(), time_type.clone(), true)];
        let mut encodings = vec![Encoding::DeltaBinaryPacked];
        let floats = float_names(layout);
        for (name, _) in &floats[..MAIN_FLOATS] {
            fields.push(ArrowField::new(name.into(), ArrowDataType::Float64, true));
            encodings.push(Encoding::Plain);
        }
        fields.push(ArrowField::new("flag".into(), ArrowDataType::Utf8View, false));
        fields.push(ArrowField::new("line".into(), ArrowDataType::UInt32, false));
        fields.push(ArrowField::new("counted_line".into(), ArrowDataType::UInt32, true));
        encodings.extend([Encoding::RleDictionary, Encoding::DeltaBinaryPacked, Encoding::Plain]);
        for (name, _) in &floats[MAIN_FLOATS..] {
            fields.push(ArrowField::new(name.into(), ArrowDataType::Float64, true));
            encodings.push(Encoding::Plain);
        }
        let types = fields.iter().map(to_parquet_type).collect::<PolarsResult<Vec<_>>>()?;
        let options = WriteOptions {
            statistics: StatisticsOptions::empty(),
            version: Version::V1,
            compression: CompressionOptions::Uncompressed,
            data_page_size: None,
        };
        let schema = ArrowSchema::from_iter(fields);
        let writer = FileWriter::try_new(BufWriter::with_capacity(1 << 20, file), schema, options)?;
        let pages = ParquetPages {
            types,
            encodings,
            options,
            time_type,
            flag_words: Utf8ViewArray::from_slice_values(Flag::ALL.map(Flag::as_str)),
        };
        Ok((Self { writer }, pages))
    }

    /// Writes one chunk's pages as a row group.
    fn write(&mut self, height: usize, pages: &[Vec<CompressedPage>]) -> PolarsResult<()> {
        let group = DynIter::new(pages.iter().map(|col| {
            Ok(DynStreamingIterator::new(fallible_streaming_iterator::convert(
                col.iter().map(PolarsResult::Ok),
            )))
        }));
        self.writer.write(height as u64, group)
    }

    fn finish(mut self) -> PolarsResult<()> {
        self.writer.end(None)?;
        let file = self.writer.into_inner();
        file.into_inner()
            .map_err(std::io::IntoInnerError::into_error)?
            .finish()?;
        Ok(())
    }
}

impl ParquetPages {
    /// Encodes one column into finished pages.
    fn encode(&self, array: &dyn Array, column: usize) -> PolarsResult<Vec<CompressedPage>> {
        let mut out = Vec::new();
        for pages in array_to_columns(
            array,
            self.types[column].clone(),
            self.options,
            &[self.encodings[column]],
        )? {
            let pages = pages.map(|p| p.map_err(|e| ParquetError::FeatureNotSupported(e.to_string())));
            for page in Compressor::new(pages, self.options.compression, Vec::new()) {
                out.push(page.map_err(PolarsError::from)?);
            }
        }
        Ok(out)
    }

    /// The pages of every column of chunk `c`, in the file's column order.
    fn of_chunk(&self, mut c: Chunk, layout: &Layout) -> PolarsResult<Vec<Vec<CompressedPage>>> {
        let floats = float_columns(&mut c, layout);
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
        let mut floats = floats.into_iter();
        arrays.extend(floats.by_ref().take(MAIN_FLOATS).map(float));
        arrays.push(Box::new(flags));
        arrays.push(Box::new(PrimitiveArray::<u32>::from_vec(c.line)));
        let counted_valid = line_validity(&c.counted_line);
        arrays.push(Box::new(
            PrimitiveArray::<u32>::from_vec(c.counted_line).with_validity(counted_valid),
        ));
        arrays.extend(floats.map(float));
        arrays
            .iter()
            .enumerate()
            .map(|(k, a)| self.encode(a.as_ref(), k))
            .collect()
    }
}

/// A converted chunk made ready for the file by [`Preparer::prepare`]: formatted or encoded on
/// the thread that converted it, so that [`SeriesWriter::write_prepared`] only copies bytes.
pub struct Prepared(Ready);

enum Ready {
    /// CSV lines.
    Text(Vec<u8>),
    /// A Parquet row group: its height and each column's pages.
    Pages(usize, Vec<Vec<CompressedPage>>),
    /// The chunk itself, for polars' CSV writer (formats when writing).
    Rows(Box<Chunk>),
}

/// Makes chunks ready for a [`SeriesWriter`] on any thread (see [`SeriesWriter::preparer`]).
#[derive(Clone)]
pub struct Preparer {
    layout: Layout,
    how: Prepare,
}

#[derive(Clone)]
enum Prepare {
    Text(super::csv_fast::OutZone),
    Pages(Box<ParquetPages>),
    Rows,
}

impl Preparer {
    /// Formats (CSV) or encodes (Parquet) chunk `c`.
    pub fn prepare(&self, mut c: Chunk) -> PolarsResult<Prepared> {
        Ok(Prepared(match &self.how {
            Prepare::Text(zone) => {
                let floats = float_columns(&mut c, &self.layout);
                let cols = super::csv_fast::CsvColumns {
                    time_ms: &c.time_ms,
                    floats: &floats,
                    flags: c.flag.iter().map(|f| f.as_str()).collect(),
                    line: &c.line,
                    counted_line: &c.counted_line,
                };
                Ready::Text(super::csv_fast::format_chunk(&cols, *zone))
            }
            Prepare::Pages(p) => {
                let height = c.line.len();
                Ready::Pages(height, p.of_chunk(c, &self.layout)?)
            }
            Prepare::Rows => Ready::Rows(Box::new(c)),
        }))
    }
}

/// A CSV writer in `style`; `datetime` the format of its time columns.
fn csv_writer<W: std::io::Write>(file: W, style: CsvStyle, datetime: &str) -> CsvWriter<W> {
    let w = CsvWriter::new(file)
        .include_header(true)
        .with_datetime_format(Some(datetime.into()))
        .with_float_scientific(None);
    match style {
        CsvStyle::Spreadsheet { decimal_comma: true } => w.with_separator(b';').with_decimal_comma(true),
        _ => w,
    }
}

impl SeriesWriter {
    /// A writer into `file` in `format`; `zone` names the time zone of the output's time
    /// column (UTC when `None`); `layout` the units, style and evidence columns.
    pub fn new(file: File, format: TableFile, zone: Option<&str>, layout: Layout) -> PolarsResult<Self> {
        Self::with_formatter(file, format, zone, layout, true)
    }

    /// [`Self::new`], choosing for the standard CSV style between flumerate's own formatter
    /// (`fast`) and polars' CSV writer (the reference its bytes are tested against).
    pub fn with_formatter(
        file: File,
        format: TableFile,
        zone: Option<&str>,
        layout: Layout,
        fast: bool,
    ) -> PolarsResult<Self> {
        let tz = TimeZone::opt_try_new(Some(zone.unwrap_or("UTC")))?;
        let (inner, how) = match format {
            TableFile::Csv if fast && layout.style == CsvStyle::Standard => {
                let names: Vec<String> = series_schema(tz.clone(), &layout)
                    .iter_names()
                    .map(|n| n.to_string())
                    .collect();
                let zone = super::csv_fast::OutZone::of(&layout.zone);
                (
                    Inner::FastCsv(super::csv_fast::FastCsv::new(WriteBehind::new(file), &names)?),
                    Prepare::Text(zone),
                )
            }
            TableFile::Csv => {
                let datetime = match layout.style {
                    CsvStyle::Standard => "%Y-%m-%dT%H:%M:%S%:z",
                    CsvStyle::Spreadsheet { .. } => "%Y-%m-%d %H:%M:%S",
                };
                (
                    Inner::Csv(csv_writer(file, layout.style, datetime).batched(&series_schema(tz.clone(), &layout))?),
                    Prepare::Rows,
                )
            }
            TableFile::Parquet => {
                let (sink, pages) = ParquetSink::new(WriteBehind::new(file), tz.as_ref(), &layout)?;
                (Inner::Parquet(Box::new(sink)), Prepare::Pages(Box::new(pages)))
            }
        };
        Ok(Self {
            inner,
            floats: float_names(&layout),
            preparer: Preparer { layout, how },
            tz,
        })
    }

    /// What makes chunks ready for this writer, to be used on the threads that convert them.
    pub fn preparer(&self) -> &Preparer {
        &self.preparer
    }

    /// The time columns of a CSV chunk.
    fn time_columns(&self, time_ms: Vec<i64>) -> Vec<Column> {
        let validity = time_validity(&time_ms);
        match self.preparer.layout.style {
            CsvStyle::Standard => {
                let time = Int64Chunked::from_vec_validity("time".into(), time_ms, validity)
                    .into_datetime(TimeUnit::Milliseconds, self.tz.clone());
                vec![time.into_series().with_name("time".into()).into_column()]
            }
            CsvStyle::Spreadsheet { .. } => {
                let zone = self.preparer.layout.zone;
                let local: Vec<i64> = time_ms
                    .iter()
                    .map(|&t| {
                        if t == NO_TIME {
                            t
                        } else {
                            t + i64::from(zone.offset_at_utc(t)) * 1000
                        }
                    })
                    .collect();
                let utc = Int64Chunked::from_vec_validity("time_utc".into(), time_ms, validity.clone())
                    .into_datetime(TimeUnit::Milliseconds, Some(TimeZone::UTC));
                let local = Int64Chunked::from_vec_validity("time_local".into(), local, validity)
                    .into_datetime(TimeUnit::Milliseconds, None);
                vec![
                    utc.into_series().with_name("time_utc".into()).into_column(),
                    local.into_series().with_name("time_local".into()).into_column(),
                ]
            }
        }
    }

    /// Appends one chunk (taking its columns without copying them): [`Preparer::prepare`]
    /// then [`Self::write_prepared`] on this thread.
    pub fn write(&mut self, c: Chunk) -> PolarsResult<()> {
        let ready = self.preparer.prepare(c)?;
        self.write_prepared(ready)
    }

    /// Appends one chunk made ready by this writer's [`Preparer`].
    pub fn write_prepared(&mut self, ready: Prepared) -> PolarsResult<()> {
        let mut c = match (ready.0, &mut self.inner) {
            (Ready::Text(bytes), Inner::FastCsv(w)) => return Ok(w.write(&bytes)?),
            (Ready::Pages(height, pages), Inner::Parquet(p)) => return p.write(height, &pages),
            (Ready::Rows(c), Inner::Csv(_)) => *c,
            _ => {
                polars_bail!(InvalidOperation: "a chunk prepared for another kind of file (use this writer's preparer)")
            }
        };
        let layout = self.preparer.layout;
        let height = c.line.len();
        let floats = float_columns(&mut c, &layout);
        let mut cols = self.time_columns(std::mem::take(&mut c.time_ms));
        let flag: StringChunked = c.flag.iter().map(|f| Some(f.as_str())).collect();
        let mut named = self.floats.iter().zip(floats).map(|((name, _), v)| opt(name, v));
        cols.extend(named.by_ref().take(MAIN_FLOATS));
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
        cols.extend(named);
        match &mut self.inner {
            Inner::Csv(w) => w.write_batch(&DataFrame::new(height, cols)?),
            Inner::FastCsv(_) | Inner::Parquet(_) => unreachable!("handled above"),
        }
    }

    /// Finishes the file.
    pub fn finish(self) -> PolarsResult<()> {
        match self.inner {
            Inner::Csv(mut w) => w.finish()?,
            Inner::FastCsv(w) => w.finish()?,
            Inner::Parquet(p) => p.finish()?,
        }
        Ok(())
    }
}

/// Writes summary rows to `file` as CSV or Parquet. `key` names the period column; `layout`
/// gives the units of discharge and volume and the CSV style.
pub fn write_summary<W: std::io::Write>(
    file: W,
    format: TableFile,
    key: &str,
    rows: &[PeriodRow],
    layout: &Layout,
) -> PolarsResult<()> {
    let spreadsheet = matches!(layout.style, CsvStyle::Spreadsheet { .. }) && format == TableFile::Csv;
    let (flow, volume) = (layout.flow, layout.volume);
    let f = |g: &dyn Fn(&PeriodRow) -> f64, round: &dyn Fn(f64) -> f64| -> Float64Chunked {
        rows.iter()
            .map(|r| {
                let v = g(r);
                Some(if spreadsheet { round(v) } else { v }).filter(|v| v.is_finite())
            })
            .collect()
    };
    let named = |ca: Float64Chunked, n: &str| ca.into_series().with_name(n.into()).into_column();
    let q = |g: fn(&PeriodRow) -> f64| move |r: &PeriodRow| flow.from_si(g(r));
    let v = |g: fn(&PeriodRow) -> f64| move |r: &PeriodRow| volume.from_si(g(r));
    let (qs, vs) = (flow.suffix(), volume.suffix());
    let q3 = |x: f64| Rounding::figures(x, 3);
    let v4 = |x: f64| Rounding::figures(x, 4);
    let d2 = |x: f64| Rounding::decimals(x, 2);
    let label: StringChunked = rows.iter().map(|r| Some(r.label.as_str())).collect();
    let cols = vec![
        label.into_series().with_name(key.into()).into_column(),
        UInt32Chunked::from_vec("rows".into(), rows.iter().map(|r| r.rows as u32).collect()).into_column(),
        UInt32Chunked::from_vec(
            "rows_counted".into(),
            rows.iter().map(|r| r.rows_counted as u32).collect(),
        )
        .into_column(),
        named(
            f(&|r| r.rows_measured as f64 / r.rows.max(1) as f64, &|x| {
                Rounding::decimals(x, 4)
            }),
            "share_ok",
        ),
        named(f(&q(|r| r.mean_m3s), &q3), &format!("mean_discharge_{qs}")),
        named(f(&q(|r| r.min_m3s), &q3), &format!("min_discharge_{qs}")),
        named(f(&q(|r| r.max_m3s), &q3), &format!("max_discharge_{qs}")),
        named(f(&v(|r| r.volume_m3), &v4), &format!("volume_{vs}")),
        named(f(&v(|r| r.volume_measured_m3), &v4), &format!("volume_measured_{vs}")),
        named(f(&v(|r| r.volume_estimated_m3), &v4), &format!("volume_estimated_{vs}")),
        named(f(&v(|r| r.volume_u95_m3), &v4), &format!("volume_u95_{vs}")),
        named(
            f(&v(|r| r.volume_u_systematic_m3), &v4),
            &format!("volume_u_systematic_{vs}"),
        ),
        named(f(&v(|r| r.volume_u_random_m3), &v4), &format!("volume_u_random_{vs}")),
        named(f(&|r| r.covered_h, &d2), "covered_h"),
        named(f(&|r| r.measured_h, &d2), "measured_h"),
        named(f(&|r| r.estimated_h, &d2), "estimated_h"),
        named(f(&|r| r.missing_h, &d2), "missing_h"),
        named(f(&|r| r.complete_pct, &d2), "complete_pct"),
    ];
    let mut df = DataFrame::new(rows.len(), cols)?;
    match format {
        TableFile::Csv => {
            let style = if spreadsheet { layout.style } else { CsvStyle::Standard };
            csv_writer(file, style, "%Y-%m-%d").finish(&mut df)?
        }
        TableFile::Parquet => {
            ParquetWriter::new(file).finish(&mut df)?;
        }
    }
    Ok(())
}

#[cfg(test)]
mod fast_csv_tests {
    use super::*;
    use crate::series::convert::{Chunk, Flag};

    /// A chunk with the awkward cases: no time, daylight-saving changes, old and far years,
    /// non-finite and signed-zero floats, tiny and huge values, empty counted lines.
    fn chunk(evidence: bool) -> Chunk {
        let hour = 3_600_000i64;
        let mut times = vec![
            NO_TIME,
            1_774_746_000_000 - hour, // 2026-03-29 00:00 UTC, before the spring change in Berlin
            1_774_746_000_000,        // the change itself
            1_774_746_000_000 + 1_500,
            1_792_890_000_000 - 1, // just before the autumn change
            1_792_890_000_000,
            -2_208_988_800_000,                     // 1900-01-01
            -2_524_521_600_000 + 12_345,            // 1890: local mean time in Berlin (offset with seconds)
            4_102_444_799_999,                      // 2099-12-31 23:59:59.999 UTC
            -1,                                     // 1969-12-31 23:59:59.999 UTC
            253_402_300_799_000 + 86_400_000 * 400, // beyond year 9999
        ];
        let floats = [
            f64::NAN,
            f64::INFINITY,
            -0.0,
            0.0,
            1e-7,
            123_456_789.123,
            0.1 + 0.2,
            1e21,
            5e-324,
            -2.5,
            0.25049999999999994,
        ];
        for k in 0..5000 {
            times.push(1_760_000_000_000 + k * 60_000);
        }
        let n = times.len();
        let f = |shift: usize| -> Vec<f64> {
            (0..n)
                .map(|k| {
                    if k < floats.len() {
                        floats[(k + shift) % floats.len()]
                    } else {
                        (k as f64 * 0.37 + shift as f64).sin() / (1.0 + k as f64)
                    }
                })
                .collect()
        };
        Chunk {
            time_ms: times,
            stage_m: f(0),
            head_m: f(1),
            discharge_m3s: f(2),
            low_m3s: f(3),
            high_m3s: f(4),
            flag: (0..n).map(|k| Flag::ALL[k % Flag::ALL.len()]).collect(),
            line: (0..n as u32).map(|k| k * 7 + 1).collect(),
            counted_line: (0..n as u32).map(|k| if k % 3 == 0 { 0 } else { k }).collect(),
            tailwater_m: if evidence { f(5) } else { Vec::new() },
            submergence: if evidence { f(6) } else { Vec::new() },
            temperature_c: if evidence { f(7) } else { Vec::new() },
        }
    }

    fn written(zone: Zone, evidence: bool, fast: bool, dir: &std::path::Path) -> Vec<u8> {
        let path = dir.join(format!("{fast}.csv"));
        let layout = Layout {
            zone,
            tailwater: evidence,
            temperature: evidence,
            ..Layout::default()
        };
        let file = File::create(&path).expect("create");
        let name = zone.polars_name();
        let mut w = SeriesWriter::with_formatter(file, TableFile::Csv, name.as_deref(), layout, fast).expect("writer");
        w.write(chunk(evidence)).expect("write");
        w.write(chunk(evidence)).expect("write again");
        w.finish().expect("finish");
        std::fs::read(&path).expect("read")
    }

    #[test]
    fn the_same_bytes_as_polars_csv_writer() {
        // polars' CSV writer (a general-purpose library) is the reference, byte for byte
        let dir = tempfile::tempdir().expect("tempdir");
        let zones = [
            Zone::Fixed(0),
            Zone::Fixed(3600),
            Zone::Fixed(-7200),
            Zone::Fixed(19_800), // +05:30: written in UTC, as polars is given no zone for it
            Zone::parse("Europe/Berlin").expect("zone"),
            Zone::parse("America/St_Johns").expect("zone"),
            Zone::parse("Asia/Kolkata").expect("zone"),
            Zone::parse("Australia/Lord_Howe").expect("zone"),
        ];
        for zone in zones {
            for evidence in [false, true] {
                let ours = written(zone, evidence, true, dir.path());
                let polars = written(zone, evidence, false, dir.path());
                if ours != polars {
                    let (a, b) = (String::from_utf8_lossy(&ours), String::from_utf8_lossy(&polars));
                    for (x, y) in a.lines().zip(b.lines()) {
                        assert_eq!(x, y, "{zone:?}, evidence {evidence}");
                    }
                    panic!("{zone:?}: lengths {} and {}", ours.len(), polars.len());
                }
            }
        }
    }
}
