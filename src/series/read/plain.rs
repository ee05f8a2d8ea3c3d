//! The plain path: a block of an unquoted file with a decimal point, whose every line has exactly
//! the header's number of fields and ends in `\n` or `\r\n`, is split into fields by flumerate
//! itself, and its times and values are read in the same pass, on all cores. polars' split of such
//! a block is a plain cut at each separator, so both paths give the same fields; this one skips
//! building polars' columns and reading them over again.
//!
//! A value is taken as read when Rust's `f64` parser reads the whole field as a finite number that
//! is not a sentinel; every other field goes to the same second look as on the polars path
//! ([`super::parse_value`]). Any other line (too few or too many fields, a blank line, a carriage
//! return inside it) sends the whole block to polars, so the two paths never judge a line
//! differently. A unit test reads mutated files both ways and compares every row.

use super::{Layout, ReadSettings, Share};
use crate::series::time::{parse_any_cached, DayCache, NO_TIME};

/// Whether blocks of this file may take the plain path: fields unquoted, a decimal point, and the
/// time column not also a value column.
pub(super) fn eligible(layout: &Layout, s: &ReadSettings) -> bool {
    !layout.quoted && !s.decimal_comma && layout.header_fields >= 2 && !layout.value_idx.contains(&layout.time_idx)
}

/// The rows' storage a block is parsed into: line numbers, wall-clock times and one slice per
/// value column, each as long as the block has lines.
pub(super) struct Rows<'a> {
    pub lines: &'a mut [u32],
    pub wall: &'a mut [i64],
    pub values: Vec<&'a mut [f64]>,
}

/// A block of whole lines cut into pieces of whole lines, about equal in bytes, each with the
/// block's row it starts at; the lines are counted once, here.
pub(super) struct Pieces<'b> {
    pieces: Vec<(&'b [u8], usize)>,
    rows: usize,
}

impl<'b> Pieces<'b> {
    /// Pieces of at least 64 KiB (64 bytes in unit tests, so that their blocks are split), four
    /// per core: a thread slowed by the file's reading and hashing takes fewer of them.
    pub(super) fn of(block: &'b [u8]) -> Self {
        let min_piece = if cfg!(test) { 64 } else { 64 << 10 };
        let n_pieces = (block.len() / min_piece).clamp(1, 4 * crate::series::parallel::cores());
        let mut pieces: Vec<(&[u8], usize)> = Vec::with_capacity(n_pieces);
        let (mut at, mut row) = (0usize, 0usize);
        for i in 1..=n_pieces {
            let end = if i == n_pieces {
                block.len()
            } else {
                let target = (block.len() * i / n_pieces).max(at);
                memchr::memchr(b'\n', &block[target..]).map_or(block.len(), |k| target + k + 1)
            };
            if end > at {
                let piece = &block[at..end];
                pieces.push((piece, row));
                row += memchr::memchr_iter(b'\n', piece).count() + usize::from(piece.last() != Some(&b'\n'));
            }
            at = end;
        }
        Self { pieces, rows: row }
    }

    /// The block's lines.
    pub(super) fn rows(&self) -> usize {
        self.rows
    }
}

/// Parses a block's `pieces` (its first line is line `first_line`) into `rows`, on all cores;
/// returns what each piece found, in order, or `None` when a line is not plain (the block then
/// goes to polars; `rows` holds nothing of use).
pub(super) fn parse_block(
    pieces: &Pieces<'_>,
    layout: &Layout,
    s: &ReadSettings,
    first_line: u32,
    rows: Rows<'_>,
) -> Option<Vec<Share>> {
    let (row, pieces) = (pieces.rows, &pieces.pieces);
    assert_eq!(row, rows.wall.len(), "a block's rows are its lines");
    let threads = crate::series::parallel::cores().min(pieces.len());
    let Rows {
        mut lines,
        mut wall,
        mut values,
    } = rows;
    let mut jobs = Vec::with_capacity(pieces.len());
    for (k, &(piece, from)) in pieces.iter().enumerate() {
        let n = pieces.get(k + 1).map_or(row, |p| p.1) - from;
        let (l, l_rest) = std::mem::take(&mut lines).split_at_mut(n);
        let (w, w_rest) = std::mem::take(&mut wall).split_at_mut(n);
        let mut vs = Vec::with_capacity(values.len());
        for v in values.iter_mut() {
            let (head, rest) = std::mem::take(v).split_at_mut(n);
            vs.push(head);
            *v = rest;
        }
        (lines, wall) = (l_rest, w_rest);
        jobs.push((
            k,
            piece,
            from,
            Rows {
                lines: l,
                wall: w,
                values: vs,
            },
        ));
    }
    let run = |(k, piece, from, rows)| (k, parse_piece(piece, from, layout, s, first_line, rows));
    let mut done: Vec<(usize, Option<Share>)> = if threads == 1 {
        jobs.into_iter().map(run).collect()
    } else {
        // each thread takes the next piece left until none is
        jobs.reverse();
        let jobs = std::sync::Mutex::new(jobs);
        let next = || jobs.lock().unwrap_or_else(std::sync::PoisonError::into_inner).pop();
        std::thread::scope(|scope| {
            let handles: Vec<_> = (0..threads)
                .map(|_| {
                    scope.spawn(|| {
                        let mut out = Vec::new();
                        while let Some(job) = next() {
                            out.push(run(job));
                        }
                        out
                    })
                })
                .collect();
            handles
                .into_iter()
                .flat_map(|h| h.join().expect("plain parsing does not panic"))
                .collect()
        })
    };
    // the pieces' findings in file order (the rows they list are then in order)
    done.sort_unstable_by_key(|d| d.0);
    done.into_iter().map(|d| d.1).collect()
}

/// One thread's piece of whole lines, its first row being row `from` of the block.
fn parse_piece(
    piece: &[u8],
    from: usize,
    layout: &Layout,
    s: &ReadSettings,
    first_line: u32,
    rows: Rows<'_>,
) -> Option<Share> {
    let separators = layout.header_fields - 1;
    let mut bounds = vec![(0usize, 0usize); layout.header_fields];
    let mut caches = vec![DayCache::default(); s.formats.len()];
    let mut line = LineReader {
        piece,
        from,
        layout,
        s,
        first_line,
        rows,
        caches: &mut caches,
        share: Share::default(),
    };
    let (mut start, mut field, mut k) = (0usize, 0usize, 0usize);
    let mut cr_at = usize::MAX;
    for i in memchr::memchr3_iter(s.separator, b'\n', b'\r', piece) {
        match piece[i] {
            b'\n' => {
                let end = if cr_at.wrapping_add(1) == i { cr_at } else { i };
                if field != separators {
                    return None;
                }
                bounds[field] = (start, end);
                line.row(k, &bounds);
                (start, field, k) = (i + 1, 0, k + 1);
            }
            b'\r' => {
                if piece.get(i + 1) != Some(&b'\n') {
                    return None;
                }
                cr_at = i;
            }
            _ => {
                if field == separators {
                    return None;
                }
                bounds[field] = (start, i);
                (start, field) = (i + 1, field + 1);
            }
        }
    }
    if start < piece.len() {
        // the file's last line, without a line end
        if field != separators {
            return None;
        }
        bounds[field] = (start, piece.len());
        line.row(k, &bounds);
    }
    Some(line.share)
}

/// Reads lines of one piece into its rows.
struct LineReader<'a, 'c> {
    piece: &'a [u8],
    from: usize,
    layout: &'a Layout,
    s: &'a ReadSettings,
    first_line: u32,
    rows: Rows<'a>,
    caches: &'c mut [DayCache],
    share: Share,
}

impl LineReader<'_, '_> {
    /// Row `k` of the piece, its fields at `bounds`.
    #[inline]
    fn row(&mut self, k: usize, bounds: &[(usize, usize)]) {
        let at = (self.from + k) as u32;
        self.rows.lines[k] = self.first_line + at;
        let (a, b) = bounds[self.layout.time_idx];
        // as polars hands it over: invalid bytes replaced
        let bytes = &self.piece[a..b];
        let text = match std::str::from_utf8(bytes) {
            Ok(t) => std::borrow::Cow::Borrowed(t),
            Err(_) => String::from_utf8_lossy(bytes),
        };
        let wall = parse_any_cached(&self.s.formats, &text, self.caches);
        self.rows.wall[k] = wall.unwrap_or_else(|| {
            self.share.empty_times += usize::from(text.trim().is_empty());
            self.share.time_failed.push(at);
            NO_TIME
        });
        let mut settled = true;
        for (c, &idx) in self.layout.value_idx.iter().enumerate() {
            let (a, b) = bounds[idx];
            let v = std::str::from_utf8(&self.piece[a..b])
                .ok()
                .and_then(|t| t.parse::<f64>().ok())
                .unwrap_or(f64::NAN);
            self.rows.values[c][k] = v;
            settled &= self.layout.settled(v);
        }
        if !settled {
            self.share.recheck.push(at);
        }
    }
}
