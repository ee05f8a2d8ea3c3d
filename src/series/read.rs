//! Reading a logger export with polars, block by block, without losing a line.
//!
//! The file is read in blocks of whole lines; polars splits each block into fields (every column
//! as text, quoting off, ragged lines tolerated), and flumerate parses the few columns it needs.
//! With quoting off, polars returns exactly one row per line, so row *i* of a block is line
//! *first + i* of the file; flumerate checks that count for every block and stops with an error
//! rather than misalign rows. Blank lines are not records: they are counted and listed, not
//! converted. Every other line becomes one row; a line whose time or value cannot be read becomes
//! a row without them, and its line number is kept.

use std::io::{Cursor, Read};
use std::path::Path;
use std::sync::Arc;

use polars::prelude::*;

use super::time::{parse_any, TimeFormat, NO_TIME};

/// Bytes per block handed to polars.
const BLOCK_BYTES: usize = 32 << 20;

/// A column chosen by name or by 1-based position.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum ColumnRef {
    /// By header name.
    Name(String),
    /// By 1-based position.
    Position(usize),
}

impl ColumnRef {
    /// `"3"` is the third column; anything else is a name.
    pub fn parse(s: &str) -> Self {
        match s.trim().parse::<usize>() {
            Ok(n) if n > 0 => ColumnRef::Position(n),
            _ => ColumnRef::Name(s.trim().to_string()),
        }
    }
}

impl std::fmt::Display for ColumnRef {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            ColumnRef::Name(n) => write!(f, "\"{n}\""),
            ColumnRef::Position(p) => write!(f, "#{p}"),
        }
    }
}

/// How to read the file.
#[derive(Debug, Clone, PartialEq)]
pub struct ReadSettings {
    /// Field separator.
    pub separator: u8,
    /// Numbers use a decimal comma.
    pub decimal_comma: bool,
    /// Lines to skip before the header (logger preamble).
    pub skip_lines: usize,
    /// Whether a header line names the columns.
    pub has_header: bool,
    /// The time column.
    pub time: ColumnRef,
    /// Accepted time formats, tried in order.
    pub formats: Vec<TimeFormat>,
    /// Numeric columns to read (stage or pressure first, then any others).
    pub values: Vec<ColumnRef>,
    /// Texts meaning "no value".
    pub missing: Vec<String>,
}

/// Why a row's field could not be used.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum FieldState {
    /// Read.
    Ok,
    /// Empty field.
    Empty,
    /// A missing-value sentinel.
    Sentinel,
    /// Text that is not a value.
    Unreadable,
}

/// What was read: one entry per non-blank line, in file order.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct RawSeries {
    /// Column names of the header (or `column 1`, … without one).
    pub header: Vec<String>,
    /// Source line number of each row (1-based).
    pub lines: Vec<u32>,
    /// Local wall-clock time (ms), `i64::MIN` where it could not be read.
    pub wall_ms: Vec<i64>,
    /// Per requested value column, the values (NaN where missing).
    pub values: Vec<Vec<f64>>,
    /// Lines that are blank (not rows).
    pub blank_lines: Vec<u32>,
    /// Rows whose time or a value could not be read: (line, what).
    pub unreadable: Vec<(u32, String)>,
    /// Per value column: fields empty, sentinels.
    pub empty_fields: Vec<usize>,
    /// Per value column: sentinel fields.
    pub sentinel_fields: Vec<usize>,
    /// Rows whose time field was empty.
    pub empty_times: usize,
    /// SHA-256 of the file's bytes, hex.
    pub sha256: String,
}

/// The file could not be read at all.
#[derive(Debug, thiserror::Error)]
#[non_exhaustive]
pub enum ReadError {
    /// I/O.
    #[error("cannot read {path}: {source}")]
    Io {
        /// File.
        path: String,
        /// Cause.
        source: std::io::Error,
    },
    /// A column asked for is not there.
    #[error("{path}: no column {column}; the header has {available}\n  fix: name the column as in the header (or by 1-based position) with the matching [logger] key or flag")]
    NoColumn {
        /// File.
        path: String,
        /// The column asked for.
        column: String,
        /// The columns found.
        available: String,
    },
    /// Nothing to convert.
    #[error("{path}: no data rows after line {after}\n  fix: check skip_lines and the header setting")]
    NoRows {
        /// File.
        path: String,
        /// Last line before the data.
        after: usize,
    },
    /// polars failed on a block.
    #[error("{path}: lines {from} to {to} could not be split into fields: {message}")]
    Polars {
        /// File.
        path: String,
        /// First line of the block.
        from: usize,
        /// Last line of the block.
        to: usize,
        /// polars' message.
        message: String,
    },
}

fn split_header(line: &str, sep: u8) -> Vec<String> {
    line.trim_end_matches(['\r', '\n'])
        .split(sep as char)
        .map(|s| s.trim().trim_matches('"').to_string())
        .collect()
}

fn resolve(col: &ColumnRef, header: &[String], path: &str) -> Result<usize, ReadError> {
    let found = match col {
        ColumnRef::Name(n) => header.iter().position(|h| h == n),
        ColumnRef::Position(p) => (*p <= header.len()).then(|| p - 1),
    };
    found.ok_or_else(|| ReadError::NoColumn {
        path: path.to_string(),
        column: col.to_string(),
        available: header
            .iter()
            .enumerate()
            .map(|(i, h)| format!("#{} \"{h}\"", i + 1))
            .collect::<Vec<_>>()
            .join(", "),
    })
}

/// Parses one numeric field.
fn parse_value(s: &str, decimal_comma: bool, missing: &[String]) -> (f64, FieldState) {
    let t = s.trim();
    if t.is_empty() {
        return (f64::NAN, FieldState::Empty);
    }
    if missing.iter().any(|m| m.trim() == t) {
        return (f64::NAN, FieldState::Sentinel);
    }
    let parsed = if decimal_comma {
        t.replace(',', ".").parse::<f64>()
    } else {
        t.parse::<f64>()
    };
    match parsed {
        Ok(v) if v.is_finite() => (v, FieldState::Ok),
        _ => (f64::NAN, FieldState::Unreadable),
    }
}

/// Reads the logger file. `progress` is called with the bytes consumed so far.
pub fn read_logger(path: &Path, s: &ReadSettings, mut progress: impl FnMut(u64)) -> Result<RawSeries, ReadError> {
    let p = path.display().to_string();
    let io = |source| ReadError::Io {
        path: p.clone(),
        source,
    };
    let mut file = std::fs::File::open(path).map_err(io)?;

    // preamble and header: read the first lines byte by byte from a small buffer
    let mut buf: Vec<u8> = Vec::with_capacity(BLOCK_BYTES + 4096);
    let mut eof = false;
    let mut consumed: u64 = 0;
    // the file's hash is computed by a second reader in parallel (the page cache serves both)
    let hash_path = path.to_path_buf();
    let hashing = std::thread::spawn(move || -> std::io::Result<String> {
        use sha2::Digest;
        let mut f = std::fs::File::open(hash_path)?;
        let mut h = sha2::Sha256::new();
        let mut b = vec![0u8; 1 << 20];
        loop {
            let n = f.read(&mut b)?;
            if n == 0 {
                break;
            }
            h.update(&b[..n]);
        }
        Ok(format!("{:x}", h.finalize()))
    });
    let mut fill = |buf: &mut Vec<u8>, eof: &mut bool| -> Result<(), ReadError> {
        while !*eof && buf.len() < BLOCK_BYTES {
            let len = buf.len();
            buf.resize(len + BLOCK_BYTES, 0);
            let n = file.read(&mut buf[len..]).map_err(|source| ReadError::Io {
                path: p.clone(),
                source,
            })?;
            buf.truncate(len + n);
            if n == 0 {
                *eof = true;
            }
        }
        Ok(())
    };
    fill(&mut buf, &mut eof)?;
    let mut line_no: usize = 0;
    let mut start = 0;
    let take_line = |buf: &[u8], start: &mut usize| -> Option<String> {
        if *start >= buf.len() {
            return None;
        }
        let end = memchr::memchr(b'\n', &buf[*start..]).map_or(buf.len(), |i| *start + i + 1);
        let line = String::from_utf8_lossy(&buf[*start..end]).to_string();
        *start = end;
        Some(line)
    };
    for _ in 0..s.skip_lines {
        if take_line(&buf, &mut start).is_some() {
            line_no += 1;
        }
    }
    let header: Vec<String> = if s.has_header {
        match take_line(&buf, &mut start) {
            Some(l) => {
                line_no += 1;
                split_header(l.trim_start_matches('\u{feff}'), s.separator)
            }
            None => {
                return Err(ReadError::NoRows {
                    path: p.clone(),
                    after: line_no,
                })
            }
        }
    } else {
        // without a header the first data line tells how many columns there are
        let first = buf[start..].split(|b| *b == b'\n').next().unwrap_or_default();
        let n = String::from_utf8_lossy(first).split(s.separator as char).count();
        (1..=n).map(|i| format!("column {i}")).collect()
    };
    let time_idx = resolve(&s.time, &header, &p)?;
    let value_idx: Vec<usize> = s
        .values
        .iter()
        .map(|c| resolve(c, &header, &p))
        .collect::<Result<_, _>>()?;
    let mut projection: Vec<usize> = std::iter::once(time_idx).chain(value_idx.iter().copied()).collect();
    projection.sort_unstable();
    projection.dedup();
    let schema = Arc::new(Schema::from_iter(
        (0..header.len()).map(|i| Field::new(format!("c{i}").into(), DataType::String)),
    ));

    let mut out = RawSeries {
        header: header.clone(),
        values: vec![Vec::new(); value_idx.len()],
        empty_fields: vec![0; value_idx.len()],
        sentinel_fields: vec![0; value_idx.len()],
        ..Default::default()
    };
    buf.drain(..start);
    consumed += start as u64;
    let total_bytes = std::fs::metadata(path).map_or(0, |m| m.len());
    loop {
        fill(&mut buf, &mut eof)?;
        if buf.is_empty() {
            break;
        }
        // a block ends at its last newline (or at the end of the file)
        let end = if eof {
            buf.len()
        } else {
            match memchr::memrchr(b'\n', &buf) {
                Some(i) => i + 1,
                None => buf.len(),
            }
        };
        let block = &buf[..end];
        let first_line = line_no + 1;
        let n_lines = memchr::memchr_iter(b'\n', block).count() + usize::from(block.last() != Some(&b'\n'));
        let df = CsvReadOptions::default()
            .with_has_header(false)
            .with_schema(Some(schema.clone()))
            .with_projection(Some(Arc::new(projection.clone())))
            .map_parse_options(|o| {
                o.with_separator(s.separator)
                    .with_quote_char(None)
                    .with_missing_is_null(false)
                    .with_truncate_ragged_lines(true)
                    .with_encoding(CsvEncoding::LossyUtf8)
            })
            .into_reader_with_file_handle(Cursor::new(block))
            .finish()
            .map_err(|e| ReadError::Polars {
                path: p.clone(),
                from: first_line,
                to: first_line + n_lines.saturating_sub(1),
                message: e.to_string(),
            })?;
        if df.height() != n_lines {
            return Err(ReadError::Polars {
                path: p.clone(),
                from: first_line,
                to: first_line + n_lines.saturating_sub(1),
                message: format!(
                    "{} rows for {} lines; refusing to guess which line is which",
                    df.height(),
                    n_lines
                ),
            });
        }
        let col = |idx: usize| -> Result<Chunks, ReadError> {
            df.column(&format!("c{idx}"))
                .and_then(|c| c.str().cloned())
                .map(|c| Chunks::new(&c))
                .map_err(|e| ReadError::Polars {
                    path: p.clone(),
                    from: first_line,
                    to: first_line + n_lines,
                    message: e.to_string(),
                })
        };
        let times = col(time_idx)?;
        let vals: Vec<Chunks> = value_idx.iter().map(|&i| col(i)).collect::<Result<_, _>>()?;
        if out.lines.is_empty() && total_bytes > end as u64 {
            // reserve for the whole file from the first block's bytes per line
            let estimate = (total_bytes as f64 / end as f64 * n_lines as f64 * 1.02) as usize;
            out.lines.reserve(estimate);
            out.wall_ms.reserve(estimate);
            for v in out.values.iter_mut() {
                v.reserve(estimate);
            }
        }
        let rows: Vec<u32> = (0..n_lines as u32).collect();
        let base = out.lines.len();
        out.lines.extend(rows.iter().map(|k| first_line as u32 + k));
        out.wall_ms.resize(base + n_lines, NO_TIME);
        for v in out.values.iter_mut() {
            v.resize(base + n_lines, f64::NAN);
        }
        let tally = parse_block(
            &rows,
            &times,
            &vals,
            s,
            &mut out.wall_ms[base..],
            out.values.iter_mut().map(|v| &mut v[base..]).collect(),
        );
        let mut candidates: Vec<u32> = Vec::new();
        for t in tally {
            out.empty_times += t.empty_times;
            for c in 0..value_idx.len() {
                out.empty_fields[c] += t.empty[c];
                out.sentinel_fields[c] += t.sentinel[c];
            }
            out.unreadable
                .extend(t.problems.into_iter().map(|(k, p)| (first_line as u32 + k, p)));
            candidates.extend(t.all_empty);
        }
        // a row whose fields are all white space may be a blank line: look at its bytes, and
        // take blank lines out (they are not records; they are counted)
        if !candidates.is_empty() {
            let mut starts = Vec::with_capacity(n_lines + 1);
            starts.push(0);
            starts.extend(memchr::memchr_iter(b'\n', block).map(|i| i + 1));
            starts.push(block.len() + 1);
            let mut remove = vec![false; n_lines];
            for &k in &candidates {
                let k = k as usize;
                let line = &block[starts[k]..starts[k + 1].saturating_sub(1).max(starts[k])];
                if line.iter().all(|b| b.is_ascii_whitespace()) {
                    remove[k] = true;
                    out.blank_lines.push((first_line + k) as u32);
                }
            }
            if remove.iter().any(|r| *r) {
                keep_vec(&mut out.lines, base, &remove);
                keep_vec(&mut out.wall_ms, base, &remove);
                for v in out.values.iter_mut() {
                    keep_vec(v, base, &remove);
                }
            }
        }
        line_no += n_lines;
        consumed += end as u64;
        progress(consumed);
        buf.drain(..end);
        if eof && buf.is_empty() {
            break;
        }
    }
    out.sha256 = hashing
        .join()
        .map_err(|_| ReadError::Io {
            path: p.clone(),
            source: std::io::Error::other("hashing thread failed"),
        })?
        .map_err(|source| ReadError::Io {
            path: p.clone(),
            source,
        })?;
    if out.lines.is_empty() {
        return Err(ReadError::NoRows {
            path: p.clone(),
            after: line_no,
        });
    }
    Ok(out)
}

/// Drops the entries at `base + i` for every `remove[i]`.
fn keep_vec<T>(v: &mut Vec<T>, base: usize, remove: &[bool]) {
    let mut i = 0;
    v.retain(|_| {
        let keep = i < base || !remove[i - base];
        i += 1;
        keep
    });
}

/// A text column of a block as polars returned it (possibly in several chunks), read by row.
struct Chunks {
    arrays: Vec<polars_arrow::array::Utf8ViewArray>,
    /// Row index at which each array starts, and the total at the end.
    starts: Vec<usize>,
}

impl Chunks {
    fn new(ca: &StringChunked) -> Self {
        let arrays: Vec<_> = ca.downcast_iter().cloned().collect();
        let mut starts = Vec::with_capacity(arrays.len() + 1);
        let mut at = 0;
        for a in &arrays {
            starts.push(at);
            at += polars_arrow::array::Array::len(a);
        }
        starts.push(at);
        Self { arrays, starts }
    }

    /// The text of row `k` ("" for a null).
    fn get(&self, k: usize) -> &str {
        let c = self.starts.partition_point(|&s| s <= k) - 1;
        let a = &self.arrays[c];
        let i = k - self.starts[c];
        if polars_arrow::array::Array::is_null(a, i) {
            ""
        } else {
            a.value(i)
        }
    }
}

/// Counts and problems of one thread's share of a block.
#[derive(Default)]
struct Tally {
    empty_times: usize,
    empty: Vec<usize>,
    sentinel: Vec<usize>,
    problems: Vec<(u32, String)>,
    /// Rows whose time and values are all empty or white space (blank-line candidates).
    all_empty: Vec<u32>,
}

/// Parses the rows of a block (indices `rows`, already without blank lines) into `wall` and
/// `values` (one slice per value column, each `rows.len()` long), on all cores.
fn parse_block(
    rows: &[u32],
    times: &Chunks,
    vals: &[Chunks],
    s: &ReadSettings,
    wall: &mut [i64],
    values: Vec<&mut [f64]>,
) -> Vec<Tally> {
    let (tarr, varrs) = (times, vals);
    let threads = std::thread::available_parallelism().map_or(1, |n| n.get()).clamp(1, 8);
    let parallel = threads > 1 && rows.len() >= 50_000;
    let per = if parallel {
        rows.len().div_ceil(threads)
    } else {
        rows.len()
    }
    .max(1);
    // split every output slice into the same per-thread pieces
    let mut value_parts: Vec<Vec<&mut [f64]>> = (0..rows.len().div_ceil(per)).map(|_| Vec::new()).collect();
    for v in values {
        for (i, piece) in v.chunks_mut(per).enumerate() {
            value_parts[i].push(piece);
        }
    }
    let work = |rows: &[u32], wall: &mut [i64], mut vs: Vec<&mut [f64]>| -> Tally {
        let mut t = Tally {
            empty: vec![0; varrs.len()],
            sentinel: vec![0; varrs.len()],
            ..Default::default()
        };
        for (j, &k) in rows.iter().enumerate() {
            let k = k as usize;
            let text = tarr.get(k);
            let parsed = parse_any(&s.formats, text);
            let empty_time = text.trim().is_empty();
            t.empty_times += usize::from(empty_time);
            wall[j] = parsed.unwrap_or(NO_TIME);
            let mut bad: Option<String> = None;
            let mut all_empty = empty_time;
            for (c, arr) in varrs.iter().enumerate() {
                let raw = arr.get(k);
                let (v, st) = parse_value(raw, s.decimal_comma, &s.missing);
                vs[c][j] = v;
                match st {
                    FieldState::Empty => t.empty[c] += 1,
                    FieldState::Sentinel => t.sentinel[c] += 1,
                    FieldState::Unreadable => {
                        let msg = format!("value #{} \"{}\" is not a number", c + 1, raw.trim());
                        bad = Some(bad.map_or(msg.clone(), |b| format!("{b}; {msg}")));
                    }
                    FieldState::Ok => {}
                }
                all_empty &= st == FieldState::Empty;
            }
            if all_empty {
                t.all_empty.push(k as u32);
            }
            if parsed.is_none() && !all_empty {
                let msg = if empty_time {
                    "empty time".to_string()
                } else {
                    format!("time \"{}\" matches no format", text.trim())
                };
                bad = Some(bad.map_or(msg.clone(), |b| format!("{msg}; {b}")));
            }
            if let Some(b) = bad {
                t.problems.push((k as u32, b));
            }
        }
        t
    };
    if !parallel {
        let vs: Vec<&mut [f64]> = value_parts.into_iter().flatten().collect();
        return vec![work(rows, wall, vs)];
    }
    std::thread::scope(|scope| {
        let handles: Vec<_> = rows
            .chunks(per)
            .zip(wall.chunks_mut(per))
            .zip(value_parts)
            .map(|((r, w), vs)| scope.spawn(move || work(r, w, vs)))
            .collect();
        handles
            .into_iter()
            .map(|h| h.join().expect("row parsing does not panic"))
            .collect()
    })
}
