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

use super::time::{parse_any, TimeFormat};

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
    let mut chunk = vec![0u8; BLOCK_BYTES];
    let mut eof = false;
    let mut consumed: u64 = 0;
    let mut hasher = <sha2::Sha256 as sha2::Digest>::new();
    let mut fill = |buf: &mut Vec<u8>, eof: &mut bool, hasher: &mut sha2::Sha256| -> Result<(), ReadError> {
        while !*eof && buf.len() < BLOCK_BYTES {
            let n = file.read(&mut chunk).map_err(|source| ReadError::Io {
                path: p.clone(),
                source,
            })?;
            if n == 0 {
                *eof = true;
            }
            sha2::Digest::update(hasher, &chunk[..n]);
            buf.extend_from_slice(&chunk[..n]);
        }
        Ok(())
    };
    fill(&mut buf, &mut eof, &mut hasher)?;
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
    loop {
        fill(&mut buf, &mut eof, &mut hasher)?;
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
        // line starts and blank lines of the block
        let mut blank_in_block = Vec::new();
        let mut n_lines = 0usize;
        for (k, l) in block.split(|b| *b == b'\n').enumerate() {
            n_lines = k + 1;
            if l.iter().all(|b| b.is_ascii_whitespace()) {
                blank_in_block.push(k);
            }
        }
        if block.last() == Some(&b'\n') {
            // split() yields an empty piece after the final newline: not a line
            n_lines -= 1;
            blank_in_block.pop();
        }
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
        let col = |idx: usize| -> Result<StringChunked, ReadError> {
            df.column(&format!("c{idx}"))
                .and_then(|c| c.str().cloned())
                .map(|c| c.rechunk().into_owned())
                .map_err(|e| ReadError::Polars {
                    path: p.clone(),
                    from: first_line,
                    to: first_line + n_lines,
                    message: e.to_string(),
                })
        };
        let times = col(time_idx)?;
        let vals: Vec<StringChunked> = value_idx.iter().map(|&i| col(i)).collect::<Result<_, _>>()?;
        let mut blank_iter = blank_in_block.iter().peekable();
        // parse the block's rows on all cores; rows keep their order
        let rows: Vec<usize> = (0..n_lines)
            .filter(|k| {
                if blank_iter.peek() == Some(&k) {
                    blank_iter.next();
                    false
                } else {
                    true
                }
            })
            .collect();
        for k in &blank_in_block {
            out.blank_lines.push((first_line + k) as u32);
        }
        let parsed = parse_rows(&rows, &times, &vals, s);
        for (k, (wall, vs, problems, empty_time)) in rows.iter().zip(parsed) {
            let line = (first_line + k) as u32;
            out.lines.push(line);
            out.wall_ms.push(wall.unwrap_or(i64::MIN));
            if empty_time {
                out.empty_times += 1;
            }
            for (c, (v, st)) in vs.into_iter().enumerate() {
                out.values[c].push(v);
                match st {
                    FieldState::Empty => out.empty_fields[c] += 1,
                    FieldState::Sentinel => out.sentinel_fields[c] += 1,
                    _ => {}
                }
            }
            if let Some(pr) = problems {
                out.unreadable.push((line, pr));
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
    out.sha256 = format!("{:x}", sha2::Digest::finalize(hasher));
    if out.lines.is_empty() {
        return Err(ReadError::NoRows {
            path: p.clone(),
            after: line_no,
        });
    }
    Ok(out)
}

type ParsedRow = (Option<i64>, Vec<(f64, FieldState)>, Option<String>, bool);

fn parse_rows(rows: &[usize], times: &StringChunked, vals: &[StringChunked], s: &ReadSettings) -> Vec<ParsedRow> {
    let one = |k: usize| -> ParsedRow {
        let t = times.get(k).unwrap_or("");
        let wall = parse_any(&s.formats, t);
        let mut problems = Vec::new();
        let empty_time = t.trim().is_empty();
        if wall.is_none() {
            problems.push(if empty_time {
                "empty time".to_string()
            } else {
                format!("time \"{}\" matches no format", t.trim())
            });
        }
        let vs: Vec<(f64, FieldState)> = vals
            .iter()
            .enumerate()
            .map(|(c, col)| {
                let raw = col.get(k).unwrap_or("");
                let r = parse_value(raw, s.decimal_comma, &s.missing);
                if r.1 == FieldState::Unreadable {
                    problems.push(format!("value #{} \"{}\" is not a number", c + 1, raw.trim()));
                }
                r
            })
            .collect();
        let problems = (!(problems.is_empty() || empty_time && problems.len() == 1 && is_blankish(times, vals, k)))
            .then(|| problems.join("; "));
        (wall, vs, problems, empty_time)
    };
    let threads = std::thread::available_parallelism().map_or(1, |n| n.get()).clamp(1, 8);
    if rows.len() < 50_000 || threads == 1 {
        return rows.iter().map(|&k| one(k)).collect();
    }
    let per = rows.len().div_ceil(threads);
    let mut parts: Vec<Vec<ParsedRow>> = Vec::new();
    std::thread::scope(|scope| {
        let handles: Vec<_> = rows
            .chunks(per)
            .map(|part| scope.spawn(move || part.iter().map(|&k| one(k)).collect::<Vec<_>>()))
            .collect();
        for h in handles {
            parts.push(h.join().expect("row parsing does not panic"));
        }
    });
    parts.into_iter().flatten().collect()
}

/// A row whose time and values are all empty (a line of separators only).
fn is_blankish(times: &StringChunked, vals: &[StringChunked], k: usize) -> bool {
    times.get(k).unwrap_or("").trim().is_empty() && vals.iter().all(|v| v.get(k).unwrap_or("").trim().is_empty())
}
