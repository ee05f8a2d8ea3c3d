//! The converted series as standard-style CSV, formatted by flumerate itself: each chunk
//! formatted into a buffer on the thread that converted it, the buffers written in order. The bytes are exactly
//! those of polars' CSV writer with the options flumerate gives it (tested against it): floats
//! by the same formatter (zmij, shortest round-trip digits), non-finite values and missing
//! times as empty fields, times as chrono's `%Y-%m-%dT%H:%M:%S%:z` in the output zone (years
//! outside 1–9999 and offsets with seconds are handed to chrono itself), integers by itoa.

use crate::files::WriteBehind;
use std::io::{BufWriter, Write};

use super::time::{civil_from_days, Zone, NO_TIME};

/// The output zone of the time column: the zone polars is given (UTC where a fixed offset is
/// not a whole number of hours: `Zone::polars_name`).
#[derive(Debug, Clone, Copy)]
pub enum OutZone {
    /// UTC.
    Utc,
    /// The logger's zone.
    Zone(Zone),
}

impl OutZone {
    /// The zone the series' time column is written in.
    pub fn of(zone: &Zone) -> Self {
        match zone.polars_name() {
            None => OutZone::Utc,
            Some(n) if n == "UTC" => OutZone::Utc,
            Some(_) => OutZone::Zone(*zone),
        }
    }

    #[inline]
    fn offset_s(&self, t_ms: i64) -> i32 {
        match self {
            OutZone::Utc => 0,
            OutZone::Zone(z) => z.offset_at_utc(t_ms),
        }
    }
}

/// One chunk's columns as written, in output order.
pub struct CsvColumns<'a> {
    /// UTC ms ([`NO_TIME`]: empty).
    pub time_ms: &'a [i64],
    /// The float columns in output order, the first five before `flag`, the rest after
    /// `counted_line` (non-finite: empty).
    pub floats: &'a [Vec<f64>],
    /// Flag words.
    pub flags: Vec<&'static str>,
    /// Line numbers.
    pub line: &'a [u32],
    /// Counted lines (0: empty).
    pub counted_line: &'a [u32],
}

/// Floats written before the flag column.
const MAIN_FLOATS: usize = 5;

/// Formats rows `rows` of `c` into `buf`.
fn format_rows(c: &CsvColumns, rows: std::ops::Range<usize>, zone: OutZone, buf: &mut Vec<u8>) {
    let mut itoa = itoa::Buffer::new();
    let mut floats = zmij::Buffer::new();
    let mut day_cache: (i64, [u8; 10]) = (i64::MIN, [0; 10]);
    let mut off_cache: (i32, [u8; 6]) = (i32::MIN, [0; 6]);
    for k in rows {
        let t = c.time_ms[k];
        if t != NO_TIME {
            write_time(t, zone, buf, &mut day_cache, &mut off_cache);
        }
        let mut float = |buf: &mut Vec<u8>, v: f64| {
            buf.push(b',');
            if v.is_finite() {
                buf.extend_from_slice(floats.format(v).as_bytes());
            }
        };
        for col in &c.floats[..MAIN_FLOATS] {
            float(buf, col[k]);
        }
        buf.push(b',');
        buf.extend_from_slice(c.flags[k].as_bytes());
        buf.push(b',');
        buf.extend_from_slice(itoa.format(c.line[k]).as_bytes());
        buf.push(b',');
        if c.counted_line[k] != 0 {
            buf.extend_from_slice(itoa.format(c.counted_line[k]).as_bytes());
        }
        for col in &c.floats[MAIN_FLOATS..] {
            float(buf, col[k]);
        }
        buf.push(b'\n');
    }
}

#[inline]
fn two(v: u32, out: &mut [u8]) {
    out[0] = b'0' + (v / 10) as u8;
    out[1] = b'0' + (v % 10) as u8;
}

/// `YYYY-MM-DDTHH:MM:SS+HH:MM` of UTC ms `t` in `zone`.
fn write_time(t: i64, zone: OutZone, buf: &mut Vec<u8>, day: &mut (i64, [u8; 10]), off: &mut (i32, [u8; 6])) {
    let offset = zone.offset_s(t);
    let local = t.div_euclid(1000) + i64::from(offset);
    let days = local.div_euclid(86_400);
    let sod = local.rem_euclid(86_400) as u32;
    if day.0 != days {
        let (y, m, d) = civil_from_days(days);
        if !(1..=9999).contains(&y) || offset % 60 != 0 {
            chrono_time(t, zone, buf);
            return;
        }
        let y = y as u32;
        let b = &mut day.1;
        two(y / 100, &mut b[0..2]);
        two(y % 100, &mut b[2..4]);
        b[4] = b'-';
        two(m, &mut b[5..7]);
        b[7] = b'-';
        two(d, &mut b[8..10]);
        day.0 = days;
    } else if offset % 60 != 0 {
        chrono_time(t, zone, buf);
        return;
    }
    if off.0 != offset {
        let a = offset.unsigned_abs() / 60;
        off.1[0] = if offset < 0 { b'-' } else { b'+' };
        two(a / 60, &mut off.1[1..3]);
        off.1[3] = b':';
        two(a % 60, &mut off.1[4..6]);
        off.0 = offset;
    }
    let mut hms = [b'T', 0, 0, b':', 0, 0, b':', 0, 0];
    two(sod / 3600, &mut hms[1..3]);
    two(sod / 60 % 60, &mut hms[4..6]);
    two(sod % 60, &mut hms[7..9]);
    buf.extend_from_slice(&day.1);
    buf.extend_from_slice(&hms);
    buf.extend_from_slice(&off.1);
}

/// The rare cases, by chrono itself (as polars formats them).
fn chrono_time(t: i64, zone: OutZone, buf: &mut Vec<u8>) {
    const FORMAT: &str = "%Y-%m-%dT%H:%M:%S%:z";
    let Some(utc) = chrono::DateTime::from_timestamp_millis(t) else {
        return;
    };
    let text = match zone {
        OutZone::Utc => utc.with_timezone(&chrono_tz::UTC).format(FORMAT).to_string(),
        OutZone::Zone(Zone::Iana(tz)) => utc.with_timezone(&tz).format(FORMAT).to_string(),
        OutZone::Zone(Zone::Fixed(s)) => match chrono::FixedOffset::east_opt(s) {
            Some(o) => utc.with_timezone(&o).format(FORMAT).to_string(),
            None => return,
        },
    };
    buf.extend_from_slice(text.as_bytes());
}

/// Formats all rows of `c` as CSV lines (the chunk's share of the file, formatted on the
/// thread that converted it).
pub fn format_chunk(c: &CsvColumns, zone: OutZone) -> Vec<u8> {
    let n = c.time_ms.len();
    let mut buf = Vec::with_capacity(n * 128);
    format_rows(c, 0..n, zone, &mut buf);
    buf
}

/// A CSV file of converted rows in the standard style: the header, then the chunks formatted
/// by [`format_chunk`], in order.
pub struct FastCsv {
    out: BufWriter<WriteBehind>,
}

impl FastCsv {
    /// A writer into `file` with the header `names`.
    pub fn new(file: WriteBehind, names: &[String]) -> std::io::Result<Self> {
        let mut out = BufWriter::with_capacity(1 << 20, file);
        out.write_all(names.join(",").as_bytes())?;
        out.write_all(b"\n")?;
        Ok(Self { out })
    }

    /// Writes formatted rows.
    pub fn write(&mut self, rows: &[u8]) -> std::io::Result<()> {
        self.out.write_all(rows)
    }

    /// Writes what is buffered and waits for the flushes behind the writing.
    pub fn finish(self) -> std::io::Result<()> {
        self.out
            .into_inner()
            .map_err(std::io::IntoInnerError::into_error)?
            .finish()?;
        Ok(())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn civil_dates_match_chrono() {
        // time::civil_from_days, which the formatter uses, against chrono's calendar as the reference (a general-purpose library), every 997th day over
        // 1600–2400 and the edges of the Gregorian cycle
        for days in (-135_000..160_000i64)
            .step_by(997)
            .chain([-719_468, 0, 59, 60, 11_016, 2_932_896])
        {
            let (y, m, d) = civil_from_days(days);
            let c = chrono::NaiveDate::from_ymd_opt(1970, 1, 1).expect("epoch") + chrono::Duration::days(days);
            use chrono::Datelike;
            assert_eq!((y, m, d), (i64::from(c.year()), c.month(), c.day()), "{days}");
        }
    }
}
