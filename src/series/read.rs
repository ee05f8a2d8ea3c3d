//! Reading a logger export, block by block, without losing a line.
//!
//! The file is read in blocks of whole lines. A block of an unquoted file with a decimal point
//! whose every line has the header's number of fields (the usual export) is split by flumerate
//! itself, times and values read in the same pass (src/series/read/plain.rs). Any other block
//! goes to polars, which splits it into fields (quoting off, ragged lines tolerated), reads the
//! value columns as numbers and hands the time column over as text, which flumerate parses with
//! the station's formats. With quoting off, polars returns exactly one row per line, so row *i*
//! of a block is line *first + i* of the file; flumerate checks that count for every block and
//! stops with an error rather than misalign rows.
//!
//! Wherever either path has no finite number for a value (an empty field, a sentinel, text, or a
//! number equal to a sentinel's), flumerate reads that field again from the line's own bytes with
//! its own rule ([`parse_value`]), so every field is judged the same way whichever path it took.
//! A missing-value marker matches by text and, when it is a number, by value (`-9999` also
//! catches `-9999.00` and `-9.999e3`).
//!
//! Fields may be quoted (`"…"`, with `""` for a quote inside): a file whose header or first data
//! line holds a quote is read with quoting on. A decimal comma with a comma separator can only
//! be read when the fields are quoted; otherwise the file is refused. A line with more fields
//! than the header (beyond empty trailing ones) is not cut to fit: its row is kept, without
//! values, and listed as unreadable with its line. Line ends are `\n` or `\r\n`; a file whose
//! lines end in a bare `\r` is refused with the fix.
//! Blank lines are not records: they are counted and listed, not converted. Every other line
//! becomes one row; a line whose time or value cannot be read becomes a row without them, and its
//! line number is kept. The file's SHA-256 is computed on another thread from the same bytes.

use std::io::{Cursor, Read};
use std::path::Path;
use std::sync::Arc;

use polars::prelude::*;
use polars_arrow::array::{Array as _, PrimitiveArray, Utf8ViewArray};

use super::time::{parse_any_cached, DayCache, TimeFormat, NO_TIME};

mod plain;

/// Bytes read from the file per block handed to polars. Small blocks stay in the processor's cache
/// between polars and the parsing that follows: 2 MiB measured best here (1–4 MiB alike, 16 MiB
/// 10 % slower and 60 MiB more memory). 1 KiB in unit tests, so that their files cross blocks.
const BLOCK_BYTES: usize = if cfg!(test) { 1 << 10 } else { 2 << 20 };

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

impl RawSeries {
    /// Readings held in memory, as if read from a file with no preamble: line `k + 2` is
    /// reading `k` (line 1 the header). `times` are parsed with `formats` (a time none reads has
    /// none); `values` are the value columns, stage or pressure first (NaN for no value).
    pub fn from_readings(times: &[&str], formats: &[TimeFormat], values: Vec<Vec<f64>>) -> Self {
        let n = times.len();
        let mut unreadable = Vec::new();
        let wall_ms = times
            .iter()
            .enumerate()
            .map(|(k, t)| {
                super::time::parse_any(formats, t).unwrap_or_else(|| {
                    unreadable.push((k as u32 + 2, format!("time \"{t}\" matches no format")));
                    NO_TIME
                })
            })
            .collect();
        let columns = values.len();
        Self {
            header: (1..=columns + 1).map(|i| format!("column {i}")).collect(),
            lines: (2..n as u32 + 2).collect(),
            wall_ms,
            values: values
                .into_iter()
                .map(|mut v| {
                    v.resize(n, f64::NAN);
                    v
                })
                .collect(),
            blank_lines: Vec::new(),
            unreadable,
            empty_fields: vec![0; columns],
            sentinel_fields: vec![0; columns],
            empty_times: 0,
            sha256: String::new(),
        }
    }
}

/// The file could not be read at all.
#[derive(Debug, thiserror::Error)]
#[non_exhaustive]
pub enum ReadError {
    /// I/O.
    #[error("cannot read logger file {path}")]
    Io {
        /// File.
        path: String,
        /// Cause.
        source: std::io::Error,
    },
    /// A column asked for is not there.
    #[error("{path}: no column {column}; {header_at}, which has {available}\n  fix: name the column as in the header (or by 1-based position) with the matching [logger] key or flag; if that line is not the header, set the lines to skip before it (--skip-lines or [logger] skip_lines)")]
    NoColumn {
        /// File.
        path: String,
        /// The column asked for.
        column: String,
        /// The columns found.
        available: String,
        /// Which line was read as the header, after how many skipped.
        header_at: String,
    },
    /// A decimal comma with a comma separator and unquoted fields.
    #[error("{path}: numbers with a decimal comma cannot be told apart from fields when the separator is a comma too (\"12,5\" would be two fields)\n  fix: give the separator the file uses (--separator \";\" or [logger] separator), or export the file with quoted fields or a decimal point")]
    DecimalCommaSeparator {
        /// File.
        path: String,
    },
    /// A quote does not close on its line.
    #[error("{path}:{line}: a quote (\") opens a field that does not close on this line: quoted fields must close on the line they open\n  fix: remove the stray quote or close the field; a line break inside a quoted field is not read")]
    UnmatchedQuote {
        /// File.
        path: String,
        /// The line.
        line: usize,
    },
    /// Lines end in a bare carriage return.
    #[error("{path}: line {line} holds a carriage return (\\r) that does not end a line: the file's lines seem to end in a bare \\r (an old Mac text file), which flumerate does not read as line ends\n  fix: convert the line ends first, e.g. tr '\\r' '\\n' < {path} > fixed.csv")]
    BareCarriageReturn {
        /// File.
        path: String,
        /// The line (1-based, counting \n line ends) that holds it.
        line: usize,
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
    let line = line.trim_end_matches(['\r', '\n']);
    fields(line.as_bytes(), sep, line.contains('"'))
        .map(|f| String::from_utf8_lossy(&unquote(f)).trim().to_string())
        .collect()
}

/// The fields of one line (no line end), split at `sep`; with `quoted`, a separator inside
/// `"…"` does not split. Fields are returned as written (quotes kept; see [`unquote`]).
pub fn fields(line: &[u8], sep: u8, quoted: bool) -> impl Iterator<Item = &[u8]> {
    let mut start = 0;
    let mut done = false;
    std::iter::from_fn(move || {
        if done {
            return None;
        }
        let mut in_quotes = false;
        let mut i = start;
        while i < line.len() {
            let b = line[i];
            if quoted && b == b'"' {
                in_quotes = !in_quotes;
            } else if b == sep && !in_quotes {
                let f = &line[start..i];
                start = i + 1;
                return Some(f);
            }
            i += 1;
        }
        done = true;
        Some(&line[start..])
    })
}

/// A field without its surrounding quotes (white space around them ignored), `""` read as `"`.
pub fn unquote(field: &[u8]) -> std::borrow::Cow<'_, [u8]> {
    let t = field.trim_ascii();
    match t.strip_prefix(b"\"").and_then(|r| r.strip_suffix(b"\"")) {
        Some(inner) if inner.windows(2).any(|w| w == b"\"\"") => {
            let mut out = Vec::with_capacity(inner.len());
            let mut i = 0;
            while i < inner.len() {
                out.push(inner[i]);
                i += if inner[i] == b'"' && inner.get(i + 1) == Some(&b'"') {
                    2
                } else {
                    1
                };
            }
            std::borrow::Cow::Owned(out)
        }
        Some(inner) => std::borrow::Cow::Borrowed(inner),
        None => std::borrow::Cow::Borrowed(field),
    }
}

fn resolve(col: &ColumnRef, header: &[String], path: &str, s: &ReadSettings) -> Result<usize, ReadError> {
    let found = match col {
        ColumnRef::Name(n) => header.iter().position(|h| h == n),
        ColumnRef::Position(p) => (*p <= header.len()).then(|| p - 1),
    };
    found.ok_or_else(|| ReadError::NoColumn {
        path: path.to_string(),
        column: col.to_string(),
        header_at: if s.has_header {
            format!(
                "line {} was read as the header (after skipping {} line(s))",
                s.skip_lines + 1,
                s.skip_lines
            )
        } else {
            format!(
                "without a header, line {} (after skipping {} line(s)) sets the columns",
                s.skip_lines + 1,
                s.skip_lines
            )
        },
        available: header
            .iter()
            .enumerate()
            .map(|(i, h)| format!("#{} \"{h}\"", i + 1))
            .collect::<Vec<_>>()
            .join(", "),
    })
}

/// Parses one numeric field: white space and quotes around it ignored; empty, a missing-value
/// marker (by its text, or by its value when it is a number: `-9999` matches `-9999.00` and
/// `-9.999e3`), or a finite decimal number (a decimal comma when asked); anything else is
/// unreadable.
pub fn parse_value(s: &str, decimal_comma: bool, missing: &[String]) -> (f64, FieldState) {
    let t = s.trim();
    let t = t
        .strip_prefix('"')
        .and_then(|r| r.strip_suffix('"'))
        .map_or(t, str::trim);
    if t.is_empty() {
        return (f64::NAN, FieldState::Empty);
    }
    if missing.iter().any(|m| m.trim() == t) {
        return (f64::NAN, FieldState::Sentinel);
    }
    let number = |x: &str| -> Option<f64> {
        let parsed = if decimal_comma {
            x.replace(',', ".").parse::<f64>()
        } else {
            x.parse::<f64>()
        };
        parsed.ok().filter(|v| v.is_finite())
    };
    match number(t) {
        Some(v)
            if missing
                .iter()
                .any(|m| number(m.trim()).is_some_and(|mv| mv.total_cmp(&v).is_eq())) =>
        {
            (f64::NAN, FieldState::Sentinel)
        }
        Some(v) => (v, FieldState::Ok),
        None => (f64::NAN, FieldState::Unreadable),
    }
}

/// Reads until `buf` holds `want` more bytes or the file ends; returns whether it ended.
fn fill(file: &mut std::fs::File, buf: &mut Vec<u8>, want: usize) -> std::io::Result<bool> {
    let target = buf.len() + want;
    while buf.len() < target {
        let len = buf.len();
        buf.resize(target, 0);
        match file.read(&mut buf[len..]) {
            Ok(0) => {
                buf.truncate(len);
                return Ok(true);
            }
            Ok(n) => buf.truncate(len + n),
            Err(e) if e.kind() == std::io::ErrorKind::Interrupted => buf.truncate(len),
            Err(e) => {
                buf.truncate(len);
                return Err(e);
            }
        }
    }
    Ok(false)
}

/// The columns of the file that are read, and how polars is asked to read them.
#[derive(Debug, Clone)]
struct Layout {
    time_idx: usize,
    value_idx: Vec<usize>,
    schema: Arc<Schema>,
    projection: Arc<Vec<usize>>,
    /// Sentinels that are numbers: a value equal to one is looked at again as text.
    sentinel_values: Vec<f64>,
    /// Fields may be quoted.
    quoted: bool,
    /// Fields in the header: a line with more (beyond empty trailing ones) is not read.
    header_fields: usize,
}

impl Layout {
    /// Whether a value polars read stands as it is: finite and not equal to a sentinel. Any
    /// other field is read again from the line's bytes.
    #[inline]
    fn settled(&self, v: f64) -> bool {
        v.is_finite() && !self.sentinel_values.contains(&v)
    }
}

/// A block of the file as read: `bytes[..end]` are whole lines to parse; `bytes[end..]` open the
/// next block. `at` is the file offset just past `end`.
struct Block {
    bytes: Arc<Vec<u8>>,
    end: usize,
    at: u64,
    eof: bool,
}

/// Reads the file block by block on its own thread, a block ahead of the parsing, and hashes
/// every byte once, in file order, as it goes.
fn spawn_reader(
    mut file: std::fs::File,
) -> (
    std::sync::mpsc::Receiver<std::io::Result<Block>>,
    std::thread::JoinHandle<String>,
) {
    let (tx, rx) = std::sync::mpsc::sync_channel::<std::io::Result<Block>>(1);
    let handle = std::thread::spawn(move || {
        use sha2::Digest;
        let mut hash = sha2::Sha256::new();
        let mut carry: Vec<u8> = Vec::new();
        let mut at: u64 = 0;
        loop {
            let mut buf = Vec::with_capacity(carry.len() + BLOCK_BYTES);
            buf.extend_from_slice(&carry);
            let fresh = buf.len();
            let eof = match fill(&mut file, &mut buf, BLOCK_BYTES) {
                Ok(eof) => eof,
                Err(e) => {
                    let _ = tx.send(Err(e));
                    break;
                }
            };
            at += (buf.len() - fresh) as u64;
            let end = if eof {
                buf.len()
            } else {
                match memchr::memrchr(b'\n', &buf) {
                    Some(i) => i + 1,
                    None => {
                        // one line longer than a block: read on
                        hash.update(&buf[fresh..]);
                        carry = buf;
                        continue;
                    }
                }
            };
            let bytes = Arc::new(buf);
            let block = Block {
                bytes: bytes.clone(),
                end,
                at: at - (bytes.len() - end) as u64,
                eof,
            };
            if tx.send(Ok(block)).is_err() {
                break; // the parser stopped on an error
            }
            hash.update(&bytes[fresh..]);
            if eof {
                break;
            }
            carry = bytes[end..].to_vec();
        }
        format!("{:x}", hash.finalize())
    });
    (rx, handle)
}

/// polars prints a warning of its own when a block does not split into one row per line;
/// flumerate then stops with an error that names the lines, so the warning only confuses. The
/// reader silences polars' warnings once, for the process.
fn silence_polars_warnings() {
    static ONCE: std::sync::Once = std::sync::Once::new();
    ONCE.call_once(|| polars_error::set_warning_function(|_, _| {}));
}

/// Reads the logger file. `progress` is called with the bytes consumed so far.
pub fn read_logger(path: &Path, s: &ReadSettings, progress: impl FnMut(u64)) -> Result<RawSeries, ReadError> {
    read_logger_by(path, s, progress, true)
}

/// [`read_logger`], with the plain path ([`plain`]) allowed or not (the unit tests read every
/// file both ways).
fn read_logger_by(
    path: &Path,
    s: &ReadSettings,
    mut progress: impl FnMut(u64),
    plain_allowed: bool,
) -> Result<RawSeries, ReadError> {
    silence_polars_warnings();
    let p = path.display().to_string();
    let io = |source| ReadError::Io {
        path: p.clone(),
        source,
    };
    let file = std::fs::File::open(path).map_err(io)?;
    let total_bytes = file.metadata().map_or(0, |m| m.len());
    let (blocks, reading) = spawn_reader(file);
    let mut out = RawSeries {
        values: vec![Vec::new(); s.values.len()],
        empty_fields: vec![0; s.values.len()],
        sentinel_fields: vec![0; s.values.len()],
        ..Default::default()
    };
    let mut filled: usize = 0;
    let Some((layout, head, start, at, mut line_no)) = read_header(&blocks, s, &p, total_bytes, &mut out)? else {
        return Err(ReadError::NoRows {
            path: p.clone(),
            after: 0,
        });
    };
    let plain = plain_allowed && plain::eligible(&layout, s);
    let take = |block: &[u8], split: Option<_>, before, out: &mut RawSeries, filled: &mut usize| {
        // a plain block is taken by the plain path unless a line of it is not plain
        let split = match split {
            Some(split) => split,
            None => match plain.then(|| take_plain_block(block, before, &layout, s, out, filled)) {
                Some(Some(last)) => return Ok(last),
                _ => split_block(block, &layout, s),
            },
        };
        take_block(block, split, before, &layout, s, &p, out, filled)
    };
    if head.len() > start {
        line_no = take(&head[start..], None, line_no, &mut out, &mut filled)?;
    }
    drop(head);
    progress(at);

    // the rest: polars splits the next block on its own thread (unless the file is plain) while
    // this one is taken in
    let (split_tx, splits) =
        std::sync::mpsc::sync_channel::<std::io::Result<(Block, Option<(usize, Result<Split, SplitFailure>)>)>>(1);
    let splitting = {
        let (layout, s) = (layout.clone(), s.clone());
        std::thread::spawn(move || {
            for block in blocks {
                let item = block.map(|b| {
                    let split = (!plain).then(|| split_block(&b.bytes[..b.end], &layout, &s));
                    (b, split)
                });
                let failed = item.is_err();
                if split_tx.send(item).is_err() || failed {
                    break;
                }
            }
        })
    };
    for item in &splits {
        let (block, split) = item.map_err(io)?;
        line_no = take(&block.bytes[..block.end], split, line_no, &mut out, &mut filled)?;
        progress(block.at);
    }
    drop(splits);
    let _ = splitting.join();
    out.sha256 = reading.join().map_err(|_| ReadError::Io {
        path: p.clone(),
        source: std::io::Error::other("reading thread failed"),
    })?;
    finish(out, filled, &p, line_no)
}

/// The header and layout, from the first block(s): returns the layout, the bytes read so far,
/// where the data start in them, the file offset reached and the lines taken; `None` when the
/// file ends before its header. Sizes `out`'s row storage for the whole file.
#[allow(clippy::type_complexity)]
fn read_header(
    blocks: &std::sync::mpsc::Receiver<std::io::Result<Block>>,
    s: &ReadSettings,
    p: &str,
    total_bytes: u64,
    out: &mut RawSeries,
) -> Result<Option<(Layout, Vec<u8>, usize, u64, usize)>, ReadError> {
    let mut head: Vec<u8> = Vec::new();
    for block in blocks {
        let block = block.map_err(|source| ReadError::Io {
            path: p.to_string(),
            source,
        })?;
        head.extend_from_slice(&block.bytes[..block.end]);
        if !block.eof && memchr::memchr_iter(b'\n', &head).count() <= s.skip_lines + usize::from(s.has_header) {
            continue; // not even the header yet: read on
        }
        if let Some(line) = bare_carriage_return(&head) {
            return Err(ReadError::BareCarriageReturn {
                path: p.to_string(),
                line,
            });
        }
        let mut line_no = 0;
        let (header, start) = header_of(&head, s, p, &mut line_no)?;
        // quoting is on when the header or the first data line holds a quote
        let first_data = head[start..].split(|b| *b == b'\n').next().unwrap_or_default();
        let quoted = head[..start].contains(&b'"') || first_data.contains(&b'"');
        if s.decimal_comma && s.separator == b',' && !quoted {
            return Err(ReadError::DecimalCommaSeparator { path: p.to_string() });
        }
        let layout = make_layout(&header, s, p, quoted)?;
        out.header = header;
        // room for the whole file, from the first block's bytes per line; zeroed memory is
        // mapped lazily, so the parsing threads touch it first, in parallel
        let lines = memchr::memchr_iter(b'\n', &head[start..]).count().max(1);
        let per_line = (head.len() - start).max(1) as f64 / lines as f64;
        let estimate = ((total_bytes as f64 / per_line) * 1.02) as usize + 16;
        out.lines = vec![0; estimate];
        out.wall_ms = vec![0; estimate];
        for v in out.values.iter_mut() {
            *v = vec![0.0; estimate];
        }
        return Ok(Some((layout, head, start, block.at, line_no)));
    }
    Ok(None)
}

/// The rows read: unreadable rows in line order, storage cut to the rows filled; an error when
/// there are none.
fn finish(mut out: RawSeries, filled: usize, p: &str, line_no: usize) -> Result<RawSeries, ReadError> {
    out.unreadable.sort_by_key(|u| u.0);
    out.lines.truncate(filled);
    out.wall_ms.truncate(filled);
    for v in out.values.iter_mut() {
        v.truncate(filled);
    }
    if out.lines.is_empty() {
        return Err(ReadError::NoRows {
            path: p.to_string(),
            after: line_no,
        });
    }
    Ok(out)
}

/// The column names from the first lines of the file (after `skip_lines`), and where the data
/// start; counts the lines taken in `line_no`.
fn header_of(bytes: &[u8], s: &ReadSettings, p: &str, line_no: &mut usize) -> Result<(Vec<String>, usize), ReadError> {
    let mut start = 0;
    let mut take_line = || -> Option<String> {
        if start >= bytes.len() {
            return None;
        }
        let end = memchr::memchr(b'\n', &bytes[start..]).map_or(bytes.len(), |i| start + i + 1);
        let line = String::from_utf8_lossy(&bytes[start..end]).to_string();
        start = end;
        Some(line)
    };
    for _ in 0..s.skip_lines {
        if take_line().is_some() {
            *line_no += 1;
        }
    }
    let header: Vec<String> = if s.has_header {
        match take_line() {
            Some(l) => {
                *line_no += 1;
                split_header(l.trim_start_matches('\u{feff}'), s.separator)
            }
            None => {
                return Err(ReadError::NoRows {
                    path: p.to_string(),
                    after: *line_no,
                })
            }
        }
    } else {
        // without a header the first data line tells how many columns there are
        let first = bytes[start..].split(|b| *b == b'\n').next().unwrap_or_default();
        let n = String::from_utf8_lossy(first).split(s.separator as char).count();
        (1..=n).map(|i| format!("column {i}")).collect()
    };
    Ok((header, start))
}

/// The line (1-based) of the first carriage return in `bytes` that is not followed by a line
/// feed, if any (the end of `bytes` counts as a line feed).
fn bare_carriage_return(bytes: &[u8]) -> Option<usize> {
    let at = memchr::memchr_iter(b'\r', bytes).find(|&i| i + 1 < bytes.len() && bytes[i + 1] != b'\n')?;
    Some(memchr::memchr_iter(b'\n', &bytes[..at]).count() + 1)
}

fn make_layout(header: &[String], s: &ReadSettings, p: &str, quoted: bool) -> Result<Layout, ReadError> {
    let time_idx = resolve(&s.time, header, p, s)?;
    let value_idx: Vec<usize> = s
        .values
        .iter()
        .map(|c| resolve(c, header, p, s))
        .collect::<Result<_, _>>()?;
    let mut projection: Vec<usize> = std::iter::once(time_idx).chain(value_idx.iter().copied()).collect();
    projection.sort_unstable();
    projection.dedup();
    let schema = Arc::new(Schema::from_iter((0..header.len()).map(|i| {
        let numeric = value_idx.contains(&i) && i != time_idx;
        Field::new(
            format!("c{i}").into(),
            if numeric { DataType::Float64 } else { DataType::String },
        )
    })));
    let sentinel_values = s
        .missing
        .iter()
        .filter_map(|m| match parse_value(m, s.decimal_comma, &[]) {
            (v, FieldState::Ok) => Some(v),
            _ => None,
        })
        .collect();
    Ok(Layout {
        time_idx,
        value_idx,
        schema,
        projection: Arc::new(projection),
        sentinel_values,
        quoted,
        header_fields: header.len(),
    })
}

/// What one thread found in its share of a block's rows (indices within the block).
#[derive(Default)]
struct Share {
    empty_times: usize,
    /// Rows whose time did not parse.
    time_failed: Vec<u32>,
    /// Rows with a value polars did not give as a finite, non-sentinel number.
    recheck: Vec<u32>,
}

/// A block of whole lines as polars split it: the time texts and the value columns, and the
/// lines (indices within the block) with more fields than the header.
struct Split {
    times: Vec<Utf8ViewArray>,
    values: Vec<Vec<PrimitiveArray<f64>>>,
    long: Vec<(u32, usize)>,
}

/// Lines of a block (indices within it, with their number of fields) that have more fields than
/// `header_fields`, not counting empty trailing ones.
fn long_lines(block: &[u8], sep: u8, quoted: bool, header_fields: usize) -> Vec<(u32, usize)> {
    let mut out = Vec::new();
    let mut push_if_long = |k: usize, line: &[u8]| {
        let line = line.strip_suffix(b"\r").unwrap_or(line);
        let n = fields(line, sep, quoted)
            .enumerate()
            .filter(|(i, f)| *i < header_fields || !f.trim_ascii().is_empty())
            .count();
        if n > header_fields {
            let all = fields(line, sep, quoted).count();
            out.push((k as u32, all));
        }
    };
    if quoted {
        for (k, line) in block.split(|b| *b == b'\n').enumerate() {
            push_if_long(k, line);
        }
        return out;
    }
    // unquoted: count separators per line; only lines with too many are looked at again
    let (mut k, mut start, mut seps) = (0usize, 0usize, 0usize);
    for i in memchr::memchr2_iter(b'\n', sep, block) {
        if block[i] == b'\n' {
            if seps >= header_fields {
                push_if_long(k, &block[start..i]);
            }
            k += 1;
            start = i + 1;
            seps = 0;
        } else {
            seps += 1;
        }
    }
    if start < block.len() && seps >= header_fields {
        push_if_long(k, &block[start..]);
    }
    out
}

/// Lets polars split a block of whole lines into fields; the error is polars' message.
fn split_block(block: &[u8], layout: &Layout, s: &ReadSettings) -> (usize, Result<Split, SplitFailure>) {
    let n_lines = line_count(block);
    if n_lines == 0 {
        // the file ended right after the last block's last line
        let values = vec![Vec::new(); layout.value_idx.len()];
        return (
            0,
            Ok(Split {
                times: Vec::new(),
                values,
                long: Vec::new(),
            }),
        );
    }
    if layout.quoted {
        // a quote that does not close on its line would join lines into one field: refuse it
        // here, naming the line, before polars sees it
        if let Some(k) = block
            .split(|b| *b == b'\n')
            .position(|l| l.iter().filter(|b| **b == b'"').count() % 2 == 1)
        {
            return (n_lines, Err(SplitFailure::UnmatchedQuote(k)));
        }
    }
    // polars should never panic on a block; if it does, the block is refused like any other
    // that cannot be split, never allowed to stop the program
    let split = std::panic::catch_unwind(std::panic::AssertUnwindSafe(|| {
        split_with_polars(block, n_lines, layout, s)
    }))
    .unwrap_or_else(|_| Err("polars stopped on these lines".into()))
    .map_err(SplitFailure::Polars);
    (n_lines, split)
}

/// Why a block could not be split into fields.
enum SplitFailure {
    /// polars' message.
    Polars(String),
    /// The block's line (0-based) with a quote that does not close.
    UnmatchedQuote(usize),
}

/// Lets polars split a block of `n_lines` whole lines; the error is polars' message.
fn split_with_polars(block: &[u8], n_lines: usize, layout: &Layout, s: &ReadSettings) -> Result<Split, String> {
    {
        let df = CsvReadOptions::default()
            .with_has_header(false)
            .with_schema(Some(layout.schema.clone()))
            .with_projection(Some(layout.projection.clone()))
            .with_ignore_errors(true)
            .map_parse_options(|o| {
                o.with_separator(s.separator)
                    .with_quote_char(layout.quoted.then_some(b'"'))
                    .with_missing_is_null(false)
                    .with_truncate_ragged_lines(true)
                    // quoted decimal commas with a comma separator are read by flumerate's
                    // own rule (every such value is looked at again)
                    .with_decimal_comma(s.decimal_comma && s.separator != b',')
                    .with_encoding(CsvEncoding::LossyUtf8)
            })
            .into_reader_with_file_handle(Cursor::new(block))
            .finish()
            .map_err(|e| e.to_string())?;
        if df.height() != n_lines {
            return Err(format!(
                "{} rows for {} lines; refusing to guess which line is which",
                df.height(),
                n_lines
            ));
        }
        let column = |idx: usize| df.column(&format!("c{idx}")).map_err(|e| e.to_string());
        let times: Vec<Utf8ViewArray> = column(layout.time_idx)?
            .str()
            .map_err(|e| e.to_string())?
            .downcast_iter()
            .cloned()
            .collect();
        let values: Vec<Vec<PrimitiveArray<f64>>> = layout
            .value_idx
            .iter()
            .map(|&i| {
                let c = column(i)?;
                let ca = c.f64().map_err(|e| e.to_string())?;
                Ok(ca.downcast_iter().cloned().collect())
            })
            .collect::<Result<_, String>>()?;
        let long = long_lines(block, s.separator, layout.quoted, layout.header_fields);
        Ok(Split { times, values, long })
    }
}

/// Takes one block of whole lines (the first is line `before + 1`), as polars split it, into
/// `out`; returns the number of the block's last line.
#[allow(clippy::too_many_arguments)]
fn take_block(
    block: &[u8],
    split: (usize, Result<Split, SplitFailure>),
    before: usize,
    layout: &Layout,
    s: &ReadSettings,
    p: &str,
    out: &mut RawSeries,
    filled: &mut usize,
) -> Result<usize, ReadError> {
    let first_line = before + 1;
    let (n_lines, split) = split;
    let Split { times, values, long } = split.map_err(|f| split_error(f, p, first_line, n_lines))?;
    let base = *filled;
    let top = base + n_lines;
    ensure_room(out, top);
    let shares = {
        let lines = &mut out.lines[base..top];
        let wall = &mut out.wall_ms[base..top];
        let vals: Vec<&mut [f64]> = out.values.iter_mut().map(|v| &mut v[base..top]).collect();
        parse_rows(&times, &values, layout, s, first_line as u32, lines, wall, vals)
    };
    *filled = top;
    settle_block(block, n_lines, shares, &long, before, layout, s, out, filled);
    Ok(before + n_lines)
}

/// Takes one block of whole lines (the first is line `before + 1`) by the plain path
/// ([`plain`]); returns the number of the block's last line, or `None` when a line is not plain
/// (nothing is taken; the block goes to polars).
fn take_plain_block(
    block: &[u8],
    before: usize,
    layout: &Layout,
    s: &ReadSettings,
    out: &mut RawSeries,
    filled: &mut usize,
) -> Option<usize> {
    let pieces = plain::Pieces::of(block);
    let n_lines = pieces.rows();
    let base = *filled;
    let top = base + n_lines;
    ensure_room(out, top);
    let rows = plain::Rows {
        lines: &mut out.lines[base..top],
        wall: &mut out.wall_ms[base..top],
        values: out.values.iter_mut().map(|v| &mut v[base..top]).collect(),
    };
    let shares = plain::parse_block(&pieces, layout, s, (before + 1) as u32, rows)?;
    *filled = top;
    settle_block(block, n_lines, shares, &[], before, layout, s, out, filled);
    Some(before + n_lines)
}

/// The lines of a block of whole lines (the last may lack its line end).
fn line_count(block: &[u8]) -> usize {
    memchr::memchr_iter(b'\n', block).count() + usize::from(!block.is_empty() && block.last() != Some(&b'\n'))
}

/// What is common to both paths once a block's `n_lines` rows are parsed into `out` from row
/// `*filled - n_lines`: the threads' findings counted, lines with too many fields marked, and
/// rows with a time or value not settled read again from the line's bytes (blank lines removed).
#[allow(clippy::too_many_arguments)]
fn settle_block(
    block: &[u8],
    n_lines: usize,
    shares: Vec<Share>,
    long: &[(u32, usize)],
    before: usize,
    layout: &Layout,
    s: &ReadSettings,
    out: &mut RawSeries,
    filled: &mut usize,
) {
    let first_line = before + 1;
    let top = *filled;
    let base = top - n_lines;
    // rows either path could not settle: read their fields again from the line's bytes
    let mut time_failed: Vec<u32> = Vec::new();
    let mut recheck: Vec<u32> = Vec::new();
    for sh in shares {
        out.empty_times += sh.empty_times;
        time_failed.extend(sh.time_failed);
        recheck.extend(sh.recheck);
    }
    mark_long_lines(out, long, base, first_line, layout.header_fields);
    let long_rows: Vec<u32> = long.iter().map(|l| l.0).collect();
    time_failed.retain(|k| long_rows.binary_search(k).is_err());
    recheck.retain(|k| long_rows.binary_search(k).is_err());
    if time_failed.is_empty() && recheck.is_empty() {
        return;
    }
    let again = Recheck::new(block, n_lines, layout, s, first_line, base);
    let mut rows: Vec<u32> = time_failed.iter().chain(&recheck).copied().collect();
    rows.sort_unstable();
    rows.dedup();
    let mut remove = vec![false; 0];
    for &k in &rows {
        let time_bad = time_failed.binary_search(&k).is_ok();
        if again.row(k as usize, time_bad, out) {
            if remove.is_empty() {
                remove = vec![false; n_lines];
            }
            remove[k as usize] = true;
        }
    }
    if !remove.is_empty() {
        let kept = compact(&mut out.lines[base..top], &remove);
        compact(&mut out.wall_ms[base..top], &remove);
        for v in out.values.iter_mut() {
            compact(&mut v[base..top], &remove);
        }
        *filled = base + kept;
    }
}

/// The read error of a block that could not be split.
fn split_error(failure: SplitFailure, p: &str, first_line: usize, n_lines: usize) -> ReadError {
    match failure {
        SplitFailure::Polars(message) => ReadError::Polars {
            path: p.to_string(),
            from: first_line,
            to: first_line + n_lines.saturating_sub(1),
            message,
        },
        SplitFailure::UnmatchedQuote(k) => ReadError::UnmatchedQuote {
            path: p.to_string(),
            line: first_line + k,
        },
    }
}

/// Room for `top` rows: more lines than estimated grow the storage by a quarter.
fn ensure_room(out: &mut RawSeries, top: usize) {
    if out.lines.len() < top {
        let len = top.max(out.lines.len() + out.lines.len() / 4);
        out.lines.resize(len, 0);
        out.wall_ms.resize(len, 0);
        for v in out.values.iter_mut() {
            v.resize(len, 0.0);
        }
    }
}

/// Lines with more fields than the header: no field of theirs is trusted, and each is listed.
fn mark_long_lines(out: &mut RawSeries, long: &[(u32, usize)], base: usize, first_line: usize, header_fields: usize) {
    for &(k, n) in long {
        for v in out.values.iter_mut() {
            v[base + k as usize] = f64::NAN;
        }
        out.unreadable.push((
            first_line as u32 + k,
            format!("{n} fields where the header has {header_fields}: not read (is the separator or the decimal mark right?)"),
        ));
    }
}

/// Reading fields of a block's lines again from their bytes, with flumerate's own rule.
struct Recheck<'a> {
    block: &'a [u8],
    starts: Vec<usize>,
    layout: &'a Layout,
    s: &'a ReadSettings,
    first_line: usize,
    base: usize,
}

impl<'a> Recheck<'a> {
    fn new(
        block: &'a [u8],
        n_lines: usize,
        layout: &'a Layout,
        s: &'a ReadSettings,
        first_line: usize,
        base: usize,
    ) -> Self {
        let mut starts = Vec::with_capacity(n_lines + 1);
        starts.push(0);
        starts.extend(memchr::memchr_iter(b'\n', block).map(|i| i + 1));
        if starts.len() == n_lines {
            starts.push(block.len());
        }
        Self {
            block,
            starts,
            layout,
            s,
            first_line,
            base,
        }
    }

    /// Line `k` of the block without its line end.
    fn line_text(&self, k: usize) -> &'a [u8] {
        let l = &self.block[self.starts[k]..self.starts[k + 1]];
        let l = l.strip_suffix(b"\n").unwrap_or(l);
        l.strip_suffix(b"\r").unwrap_or(l)
    }

    /// Field `idx` of line `k`, unquoted.
    fn field(&self, k: usize, idx: usize) -> String {
        let text = fields(self.line_text(k), self.s.separator, self.layout.quoted)
            .nth(idx)
            .unwrap_or_default();
        String::from_utf8_lossy(&unquote(text)).into_owned()
    }

    /// Reads row `k`'s values again where polars did not settle them; returns what is wrong
    /// with them, and whether every value is empty.
    fn values(&self, k: usize, out: &mut RawSeries, all_empty: bool) -> (Option<String>, bool) {
        let (mut bad, mut all_empty): (Option<String>, bool) = (None, all_empty);
        for (c, &idx) in self.layout.value_idx.iter().enumerate() {
            let st = if self.layout.settled(out.values[c][self.base + k]) {
                FieldState::Ok
            } else {
                let raw = self.field(k, idx);
                let (v, st) = parse_value(&raw, self.s.decimal_comma, &self.s.missing);
                out.values[c][self.base + k] = v;
                match st {
                    FieldState::Empty => out.empty_fields[c] += 1,
                    FieldState::Sentinel => out.sentinel_fields[c] += 1,
                    FieldState::Unreadable => {
                        let msg = format!("value #{} \"{}\" is not a number", c + 1, raw.trim());
                        bad = Some(bad.map_or(msg.clone(), |b| format!("{b}; {msg}")));
                    }
                    FieldState::Ok => {}
                }
                st
            };
            all_empty &= st == FieldState::Empty;
        }
        (bad, all_empty)
    }

    /// Reads row `k` again (its time too when `time_bad`) and lists what is unreadable; returns
    /// true when the row is a blank line (not a record), to be removed.
    fn row(&self, k: usize, time_bad: bool, out: &mut RawSeries) -> bool {
        let time_text = if time_bad {
            self.field(k, self.layout.time_idx)
        } else {
            String::new()
        };
        let empty_time = time_bad && time_text.trim().is_empty();
        let (mut bad, all_empty) = self.values(k, out, empty_time);
        // a row whose fields are all empty may be a blank line: blank lines are not records
        if all_empty && self.line_text(k).iter().all(|b| b.is_ascii_whitespace()) {
            out.blank_lines.push((self.first_line + k) as u32);
            // a blank line was counted as a row with an empty time and empty values: undo
            out.empty_times -= 1;
            for c in 0..self.layout.value_idx.len() {
                out.empty_fields[c] -= 1;
            }
            return true;
        }
        if time_bad && !all_empty {
            let msg = if empty_time {
                "empty time".to_string()
            } else {
                format!("time \"{}\" matches no format", time_text.trim())
            };
            bad = Some(bad.map_or(msg.clone(), |b| format!("{msg}; {b}")));
        }
        if let Some(b) = bad {
            out.unreadable.push(((self.first_line + k) as u32, b));
        }
        false
    }
}

/// Moves the entries not marked in `remove` to the front of `v`, in order; returns how many.
fn compact<T: Copy>(v: &mut [T], remove: &[bool]) -> usize {
    let mut kept = 0;
    for i in 0..v.len() {
        if !remove[i] {
            v[kept] = v[i];
            kept += 1;
        }
    }
    kept
}

/// Rows `from..to` of a column that polars returned in several arrays, in order.
fn rows_of<A: polars_arrow::array::Array + Clone>(
    arrays: &[A],
    from: usize,
    to: usize,
) -> impl Iterator<Item = (A, usize, usize)> + '_ {
    let mut at = 0;
    arrays.iter().filter_map(move |a| {
        let len = a.len();
        let (lo, hi) = (from.max(at), to.min(at + len));
        let start = at;
        at += len;
        (lo < hi).then(|| (a.clone(), lo - start, hi - start))
    })
}

/// Parses the time texts and takes over the values of a block's rows into `wall` and `values`
/// (one slice per value column), numbering them from `first_line` in `lines`, on all cores;
/// returns what each thread found.
#[allow(clippy::too_many_arguments)]
fn parse_rows(
    times: &[Utf8ViewArray],
    values: &[Vec<PrimitiveArray<f64>>],
    layout: &Layout,
    s: &ReadSettings,
    first_line: u32,
    lines: &mut [u32],
    wall: &mut [i64],
    values_out: Vec<&mut [f64]>,
) -> Vec<Share> {
    let n = wall.len();
    let threads = super::parallel::cores();
    let per = if threads > 1 && n >= 20_000 {
        n.div_ceil(threads)
    } else {
        n
    }
    .max(1);
    let mut value_parts: Vec<Vec<&mut [f64]>> = (0..n.div_ceil(per)).map(|_| Vec::new()).collect();
    for v in values_out {
        for (i, piece) in v.chunks_mut(per).enumerate() {
            value_parts[i].push(piece);
        }
    }
    let block = BlockColumns {
        times,
        values,
        layout,
        s,
        first_line,
    };
    if per >= n {
        let vs: Vec<&mut [f64]> = value_parts.into_iter().flatten().collect();
        return vec![block.parse_share(0, lines, wall, vs)];
    }
    std::thread::scope(|scope| {
        let block = &block;
        let handles: Vec<_> = lines
            .chunks_mut(per)
            .zip(wall.chunks_mut(per))
            .zip(value_parts)
            .enumerate()
            .map(|(i, ((l, w), vs))| scope.spawn(move || block.parse_share(i * per, l, w, vs)))
            .collect();
        handles
            .into_iter()
            .map(|h| h.join().expect("row parsing does not panic"))
            .collect()
    })
}

/// A block's columns as polars split them, with what reading them needs.
struct BlockColumns<'a> {
    times: &'a [Utf8ViewArray],
    values: &'a [Vec<PrimitiveArray<f64>>],
    layout: &'a Layout,
    s: &'a ReadSettings,
    first_line: u32,
}

impl BlockColumns<'_> {
    /// One thread's share of the rows, from row `from`: line numbers, times parsed (a day cache
    /// per format) and values taken over; rows whose fields polars did not settle are noted.
    fn parse_share(&self, from: usize, lines: &mut [u32], wall: &mut [i64], mut vs: Vec<&mut [f64]>) -> Share {
        let to = from + wall.len();
        for (k, l) in lines.iter_mut().enumerate() {
            *l = self.first_line + (from + k) as u32;
        }
        let mut sh = Share::default();
        let mut caches = vec![DayCache::default(); self.s.formats.len()];
        let mut j = 0;
        for (a, lo, hi) in rows_of(self.times, from, to) {
            for i in lo..hi {
                let text = if a.is_valid(i) { a.value(i) } else { "" };
                match parse_any_cached(&self.s.formats, text, &mut caches) {
                    Some(w) => wall[j] = w,
                    None => {
                        wall[j] = NO_TIME;
                        sh.empty_times += usize::from(text.trim().is_empty());
                        sh.time_failed.push((from + j) as u32);
                    }
                }
                j += 1;
            }
        }
        for (c, arrays) in self.values.iter().enumerate() {
            let out = &mut vs[c];
            let mut j = 0;
            for (a, lo, hi) in rows_of(arrays, from, to) {
                let vals = &a.values()[lo..hi];
                match a.validity() {
                    None => out[j..j + vals.len()].copy_from_slice(vals),
                    Some(valid) => {
                        for (k, &v) in vals.iter().enumerate() {
                            out[j + k] = if valid.get_bit(lo + k) { v } else { f64::NAN };
                        }
                    }
                }
                j += vals.len();
            }
            for (k, &v) in out.iter().enumerate() {
                if !self.layout.settled(v) {
                    sh.recheck.push((from + k) as u32);
                }
            }
        }
        sh.recheck.sort_unstable();
        sh.recheck.dedup();
        sh
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn settings(sep: u8, decimal_comma: bool) -> ReadSettings {
        ReadSettings {
            separator: sep,
            decimal_comma,
            skip_lines: 1,
            has_header: true,
            time: ColumnRef::Name("time".into()),
            formats: vec![TimeFormat::new("%Y-%m-%d %H:%M")],
            values: vec![ColumnRef::Name("stage".into()), ColumnRef::Position(3)],
            missing: vec!["-9999".into(), "ERR".into()],
        }
    }

    /// A file read by the plain path where it can and by polars alone give the same rows, the same
    /// lists and counts, and the same errors: 300 mutated files of 400 lines (common practice, no
    /// source: the reader's own contract, see [`plain`]).
    #[test]
    fn the_plain_path_reads_every_line_as_polars_does() {
        let values = [
            "0.35",
            "",
            " 0.35",
            "0.35 ",
            "-9999",
            "-9999.0",
            "-9.999e3",
            "ERR",
            "inf",
            "NaN",
            "-0",
            "+.5",
            "1e-1",
            "12abc",
            "0x10",
            "1_0",
            "\u{a0}0.3",
            "\"0.4\"",
            "0,5",
            ".",
            "-",
            "1e400",
            "5e-324",
        ];
        let times = [
            " 2026-01-01 00:05",
            "",
            "  ",
            "garbage",
            "2026-13-01 00:00",
            "2026-01-01 00:05 ",
            "\u{a0}",
            "2026-1-1 0:5",
        ];
        let dir = tempfile::tempdir().expect("tempdir");
        let path = dir.path().join("logger.csv");
        let mut seed: u64 = 20_261_202;
        let mut next = move |n: usize| {
            seed = seed.wrapping_mul(6364136223846793005).wrapping_add(1442695040888963407);
            ((seed >> 33) as usize) % n
        };
        for case in 0..300 {
            let mut bytes: Vec<u8> = b"preamble\ntime,stage,temp\n".to_vec();
            let rate = [0, 2, 10, 50][case % 4];
            for k in 0..400 {
                let mut time = format!("2026-01-{:02} {:02}:{:02}", 1 + k / 1440, k / 60 % 24, k % 60);
                let mut stage = format!("{:.4}", 0.3 + (k % 17) as f64 * 0.01);
                let mut temp = "12.5".to_string();
                let mut end = "\n".to_string();
                if next(100) < rate {
                    match next(9) {
                        0 => stage = values[next(values.len())].to_string(),
                        1 => temp = values[next(values.len())].to_string(),
                        2 => time = times[next(times.len())].to_string(),
                        3 => end = ["\r\n", ",\n", ",,\n", "\n\n", "\n \n", ",x\n"][next(6)].to_string(),
                        4 => temp = format!("{temp}\r1"),
                        5 => stage.push('\u{fffd}'),
                        6 => {
                            bytes.extend_from_slice(&time.as_bytes()[..next(time.len())]);
                            bytes.push(b'\n');
                        }
                        7 => {
                            bytes.extend_from_slice(format!("{time},{stage}\n").as_bytes());
                            continue;
                        }
                        _ => {
                            bytes.extend_from_slice(format!("{time},{stage},").as_bytes());
                            bytes.push(0xff);
                            bytes.push(b'\n');
                            continue;
                        }
                    }
                }
                bytes.extend_from_slice(format!("{time},{stage},{temp}{end}").as_bytes());
            }
            if next(2) == 0 {
                bytes.pop(); // no line end at the end of the file
            }
            std::fs::write(&path, &bytes).expect("write");
            let s = settings(b',', false);
            let plain = read_logger_by(&path, &s, |_| {}, true);
            let polars = read_logger_by(&path, &s, |_| {}, false);
            match (plain, polars) {
                (Ok(a), Ok(b)) => {
                    let bits = |r: &RawSeries| -> Vec<Vec<u64>> {
                        r.values
                            .iter()
                            .map(|v| v.iter().map(|x| x.to_bits()).collect())
                            .collect()
                    };
                    assert_eq!(bits(&a), bits(&b), "case {case}: values");
                    let strip = |mut r: RawSeries| {
                        r.values.clear();
                        r
                    };
                    assert_eq!(strip(a), strip(b), "case {case}");
                }
                (a, b) => assert_eq!(
                    a.map(|_| ()).map_err(|e| e.to_string()),
                    b.map(|_| ()).map_err(|e| e.to_string()),
                    "case {case}"
                ),
            }
        }
    }

    fn read_text(text: &str, s: &ReadSettings) -> RawSeries {
        let dir = tempfile::tempdir().expect("tempdir");
        let path = dir.path().join("logger.csv");
        std::fs::write(&path, text).expect("write");
        read_logger(&path, s, |_| {}).expect("reads")
    }

    /// Every field is judged by `parse_value`, whether polars read it as a number or not: the
    /// same text gives the same value and state on both paths (common practice, no source: the
    /// reader's own contract).
    #[test]
    fn fields_polars_cannot_settle_are_judged_by_the_same_rule() {
        let fields = [
            "0.35", " 0.35", "0.35 ", "-9999", " -9999 ", "-9999.0", "ERR", "", "  ", "inf", "NaN", "12abc", "1e-1",
            "+.5",
        ];
        let mut text = String::from("preamble line\ntime,stage,temp\n");
        for (k, f) in fields.iter().enumerate() {
            text.push_str(&format!("2026-01-01 00:{k:02},{f},{f}\n"));
        }
        let raw = read_text(&text, &settings(b',', false));
        assert_eq!(raw.lines.len(), fields.len());
        let mut unreadable = 0;
        for (k, f) in fields.iter().enumerate() {
            let (want, state) = parse_value(f, false, &["-9999".into(), "ERR".into()]);
            for c in 0..2 {
                let got = raw.values[c][k];
                assert!(
                    got.to_bits() == want.to_bits() || (got.is_nan() && want.is_nan()),
                    "field {f:?} column {c}: {got} vs {want}"
                );
            }
            unreadable += usize::from(state == FieldState::Unreadable);
            assert_eq!(raw.lines[k], k as u32 + 3, "line numbers count the preamble and header");
        }
        // " -9999 " is the sentinel by its text, "-9999.0" by its value
        assert!(raw.values[0][5].is_nan());
        assert!(raw.values[0][4].is_nan());
        assert_eq!(raw.sentinel_fields, vec![4, 4]);
        assert_eq!(raw.empty_fields, vec![2, 2]);
        assert_eq!(raw.unreadable.len(), unreadable);
        assert!(raw
            .unreadable
            .iter()
            .any(|(l, m)| *l == 14 && m.contains("\"12abc\" is not a number")));
    }

    /// Many blocks (1 KiB each in unit tests), blank lines, CRLF, ragged and garbage lines: every
    /// line is either a row or a listed blank line, in order, and the hash is the file's SHA-256
    /// (FIPS 180-4, computed here independently with the sha2 crate over the whole file).
    #[test]
    fn rows_survive_block_boundaries_and_blank_lines_are_listed() {
        use sha2::Digest;
        let mut text = String::from("skip me\ntime;stage;temp\r\n");
        let mut expected_blank = Vec::new();
        for k in 0..600u32 {
            let line = k + 3;
            match k % 97 {
                5 => {
                    text.push_str("   \r\n");
                    expected_blank.push(line);
                }
                6 => text.push_str("garbage without separators\n"),
                7 => text.push_str("2026-01-01 00:00\n"),
                _ => text.push_str(&format!(
                    "2026-01-{:02} {:02}:{:02};{},{:03};4,5\r\n",
                    1 + k / 1440,
                    (k / 60) % 24,
                    k % 60,
                    k / 1000,
                    k % 1000
                )),
            }
        }
        let s = ReadSettings {
            separator: b';',
            ..settings(b';', true)
        };
        let raw = read_text(&text, &s);
        assert!(text.len() > 8 * BLOCK_BYTES, "the file spans many blocks");
        assert_eq!(raw.blank_lines, expected_blank);
        assert_eq!(raw.lines.len() + raw.blank_lines.len(), 600);
        let mut all: Vec<u32> = raw.lines.iter().chain(&raw.blank_lines).copied().collect();
        all.sort_unstable();
        assert_eq!(all, (3..603).collect::<Vec<u32>>());
        assert!(raw.lines.windows(2).all(|w| w[0] < w[1]), "rows keep file order");
        for (i, &line) in raw.lines.iter().enumerate() {
            let k = line - 3;
            match k % 97 {
                6 => assert!(raw.wall_ms[i] == NO_TIME && raw.values[0][i].is_nan()),
                7 => assert!(raw.wall_ms[i] != NO_TIME && raw.values[0][i].is_nan()),
                _ => {
                    assert!((raw.values[0][i] - f64::from(k) / 1000.0).abs() < 1e-12, "line {line}");
                    assert!((raw.values[1][i] - 4.5).abs() < 1e-12);
                }
            }
        }
        assert_eq!(raw.sha256, format!("{:x}", sha2::Sha256::digest(text.as_bytes())));
    }

    /// A missing-value marker matches by value as well as by text (issue: `-9999` must also
    /// catch `-9999.00` and `-9.999e3`; common practice, no source).
    #[test]
    fn sentinels_match_by_value() {
        let m = vec!["-9999".to_string()];
        for t in ["-9999", "-9999.00", "-9.999e3", " -9999.0 ", "\"-9999\""] {
            assert_eq!(parse_value(t, false, &m).1, FieldState::Sentinel, "{t}");
        }
        assert_eq!(parse_value("-9999,00", true, &m).1, FieldState::Sentinel);
        assert_eq!(parse_value("-9998", false, &m).1, FieldState::Ok);
        let text =
            "x\ntime,stage,temp\n2026-01-01 00:00,-9999.00,1\n2026-01-01 00:15,-9.999e3,1\n2026-01-01 00:30,0.5,1\n";
        let raw = read_text(text, &settings(b',', false));
        assert!(raw.values[0][0].is_nan() && raw.values[0][1].is_nan());
        assert_eq!(raw.sentinel_fields[0], 2);
        assert!((raw.values[0][2] - 0.5).abs() < 1e-12);
    }

    /// A line with more fields than the header keeps its row (without values) and is listed
    /// with its line; empty trailing fields are not more fields.
    #[test]
    fn long_lines_are_listed_not_cut() {
        let text = "x\ntime,stage,temp\n2026-01-01 00:00,0.5,1\n2026-01-01 00:15,0,5,1\n2026-01-01 00:30,0.5,1,,\r\n2026-01-01 00:45,0.6,1";
        let raw = read_text(text, &settings(b',', false));
        assert_eq!(raw.lines, vec![3, 4, 5, 6]);
        assert!(raw.values[0][1].is_nan(), "the long line gives no value");
        assert!((raw.values[0][2] - 0.5).abs() < 1e-12, "empty trailing fields are fine");
        assert_eq!(raw.unreadable.len(), 1);
        assert_eq!(raw.unreadable[0].0, 4);
        assert!(
            raw.unreadable[0].1.contains("4 fields where the header has 3"),
            "{:?}",
            raw.unreadable
        );
        // across many blocks too (1 KiB blocks in unit tests)
        let mut text = String::from("x\ntime,stage,temp\n");
        for k in 0..300 {
            let extra = if k % 50 == 7 { ",9" } else { "" };
            text.push_str(&format!("2026-01-01 {:02}:{:02},0.5,1{extra}\n", k / 60, k % 60));
        }
        let raw = read_text(&text, &settings(b',', false));
        let listed: Vec<u32> = raw.unreadable.iter().map(|u| u.0).collect();
        assert_eq!(listed, vec![10, 60, 110, 160, 210, 260]);
    }

    /// Quoted fields: separators inside quotes do not split; a decimal comma with a comma
    /// separator reads only when quoted.
    #[test]
    fn quoted_fields_and_decimal_commas() {
        let text = "\"logger\"\n\"time\",\"stage\",\"temp\"\n\"2026-01-01 00:00\",\"0,5\",\"1,25\"\n\"2026-01-01 00:15\",\"0,75\",\"-9999\"\n";
        let raw = read_text(text, &settings(b',', true));
        assert_eq!(raw.header, vec!["time", "stage", "temp"]);
        assert!((raw.values[0][0] - 0.5).abs() < 1e-12);
        assert!((raw.values[1][0] - 1.25).abs() < 1e-12);
        assert!((raw.values[0][1] - 0.75).abs() < 1e-12);
        assert!(raw.values[1][1].is_nan());
        assert!(raw.wall_ms.iter().all(|w| *w != NO_TIME));
        // quoted with a point: fully quoted CSV
        let text = "x\n\"time\",\"stage\",\"temp\"\n\"2026-01-01 00:00\",\"0.5\",\"1\"\n";
        let raw = read_text(text, &settings(b',', false));
        assert!((raw.values[0][0] - 0.5).abs() < 1e-12);
        // unquoted: refused, with the fix
        let dir = tempfile::tempdir().expect("tempdir");
        let path = dir.path().join("l.csv");
        std::fs::write(&path, "x\ntime,stage,temp\n2026-01-01 00:00,0,5,1\n").expect("write");
        let e = read_logger(&path, &settings(b',', true), |_| {})
            .expect_err("refused")
            .to_string();
        assert!(e.contains("decimal comma") && e.contains("fix:"), "{e}");
    }

    /// A quote that does not close on its line is refused with its line, before polars sees it
    /// (found by the fuzzer: polars 0.55.2 panicked on a lone quote at the end of a block).
    #[test]
    fn an_unmatched_quote_is_refused_with_its_line() {
        let dir = tempfile::tempdir().expect("tempdir");
        let path = dir.path().join("q.csv");
        for text in [
            "x\n\"time\",\"stage\",\"temp\"\n\"2026-01-01 00:00\",\"0.5\",\"1\"\n\"2026-01-01 00:15\",\"",
            "x\n\"time\",\"stage\",\"temp\"\n\"2026-01-01 00:00\",\"0.5\",\"1\"\n\"2026-01-01 00:15\",\"0.5,1\n",
        ] {
            std::fs::write(&path, text).expect("write");
            let e = read_logger(&path, &settings(b',', false), |_| {})
                .expect_err("refused")
                .to_string();
            assert!(e.contains("q.csv:4: a quote"), "{e}");
        }
    }

    /// Lines ending in a bare carriage return are refused with the line and the fix.
    #[test]
    fn bare_carriage_returns_are_refused() {
        let dir = tempfile::tempdir().expect("tempdir");
        let path = dir.path().join("l.csv");
        std::fs::write(&path, "x\rtime,stage,temp\r2026-01-01 00:00,0.5,1\r").expect("write");
        let e = read_logger(&path, &settings(b',', false), |_| {})
            .expect_err("refused")
            .to_string();
        assert!(e.contains("carriage return") && e.contains("fix:"), "{e}");
    }

    /// A preamble longer than a block and a line longer than a block: still one row per line,
    /// and the hash covers every byte once (FIPS 180-4 via the sha2 crate over the whole file).
    #[test]
    fn long_preamble_and_long_lines_cross_blocks() {
        use sha2::Digest;
        let mut text = String::new();
        for k in 0..40 {
            text.push_str(&format!("# logger note {k}: {}\n", "x".repeat(60)));
        }
        text.push_str("time,stage,temp\n");
        text.push_str("2026-01-01 00:00,0.5,1\n");
        text.push_str(&format!("2026-01-01 00:01,0.{},1\n", "1".repeat(3 * BLOCK_BYTES)));
        text.push_str("2026-01-01 00:02,0.25,1");
        let s = ReadSettings {
            skip_lines: 40,
            ..settings(b',', false)
        };
        let raw = read_text(&text, &s);
        assert!(text.len() > 4 * BLOCK_BYTES);
        assert_eq!(raw.lines, vec![42, 43, 44]);
        assert!((raw.values[0][0] - 0.5).abs() < 1e-12);
        assert!(
            (raw.values[0][1] - 1.0 / 9.0).abs() < 1e-12,
            "a long number is still a number"
        );
        assert!(
            (raw.values[0][2] - 0.25).abs() < 1e-12,
            "a last line without a newline reads"
        );
        assert_eq!(raw.sha256, format!("{:x}", sha2::Sha256::digest(text.as_bytes())));
    }
}
