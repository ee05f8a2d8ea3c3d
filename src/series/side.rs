//! Side files of a conversion: field visits (staff-gauge heads, for the drift correction) and a
//! barometric series (for absolute-pressure loggers). Small CSV files with a `time` column and one
//! value column; their times may be ISO 8601 (with or without an offset) or in the logger's
//! formats, on the logger's clock.

use std::path::Path;

use super::time::{parse_any, resolve, TimeFormat, Zone, NO_TIME};

/// A side file as read: points (UTC ms, value), the value column's unit suffix (`head_mm` →
/// `mm`), and the SHA-256 of the bytes parsed (for the provenance).
#[derive(Debug, Clone, PartialEq)]
pub struct SideFile {
    /// (UTC ms, value) in file order.
    pub points: Vec<(i64, f64)>,
    /// The value column's unit suffix, empty when it has none.
    pub unit: String,
    /// SHA-256 of the file, hex.
    pub sha256: String,
}

/// A side file cannot be read: where and why, with the fix.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[error("{path}{}: {problem}", line.map_or(String::new(), |l| format!(":{l}")))]
pub struct SideError {
    /// The file.
    pub path: String,
    /// The line, when one is at fault.
    pub line: Option<usize>,
    /// What is wrong, and the fix.
    pub problem: String,
}

/// Reads a side file whose value column's name starts with `prefix` (`head`, `pressure`),
/// hashing the same bytes it parses.
pub fn read_side_file(path: &Path, prefix: &str, formats: &[TimeFormat], zone: &Zone) -> Result<SideFile, SideError> {
    let err = |line: Option<usize>, problem: String| SideError {
        path: path.display().to_string(),
        line,
        problem,
    };
    let (bytes, sha256) = crate::files::read_hashed(path).map_err(|p| err(None, p))?;
    let mut r = csv::ReaderBuilder::new().flexible(true).from_reader(&bytes[..]);
    let headers = r.headers().map_err(|_| err(Some(1), "no header line".into()))?.clone();
    let ti = headers.iter().position(|h| h.trim() == "time").ok_or_else(|| {
        err(
            Some(1),
            format!(
                "no `time` column (the header is: {})",
                headers.iter().collect::<Vec<_>>().join(", ")
            ),
        )
    })?;
    let (vi, name) = headers
        .iter()
        .enumerate()
        .find(|(_, h)| h.trim().starts_with(prefix))
        .map(|(i, h)| (i, h.trim().to_string()))
        .ok_or_else(|| err(Some(1), format!("no `{prefix}…` column")))?;
    let unit = name.trim_start_matches(prefix).trim_start_matches('_').to_string();
    let mut points = Vec::new();
    for (k, rec) in r.records().enumerate() {
        let line = k + 2;
        let rec = rec.map_err(|_| err(Some(line), "unreadable record".into()))?;
        let t = rec.get(ti).unwrap_or("");
        let v = rec.get(vi).unwrap_or("");
        let utc = side_time(formats, zone, t.trim()).ok_or_else(|| {
            err(
                Some(line),
                format!(
                    "time \"{t}\" is neither ISO 8601 nor in the logger's formats ({})\n  fix: write times as 2026-10-12T10:00 (on the logger's clock) or 2026-10-12T10:00:00+02:00 (with its offset), or as the logger writes them",
                    formats.iter().map(|f| f.as_str()).collect::<Vec<_>>().join(", ")
                ),
            )
        })?;
        if utc == NO_TIME {
            return Err(err(
                Some(line),
                format!("time \"{t}\" does not exist on the logger's clock (daylight-saving gap)\n  fix: give the time with its UTC offset, e.g. 2026-03-29T03:30:00+02:00"),
            ));
        }
        let v: f64 = v
            .trim()
            .parse()
            .map_err(|_| err(Some(line), format!("\"{v}\" is not a number")))?;
        points.push((utc, v));
    }
    Ok(SideFile { points, unit, sha256 })
}

/// The instant (UTC ms) of a side-file time: ISO 8601 with an offset (`…+02:00`, `…Z`) as it
/// says; ISO 8601 without one, or any of the logger's formats, on the logger's clock;
/// [`NO_TIME`] for a local time the clock skipped; `None` when nothing reads it.
pub fn side_time(formats: &[TimeFormat], zone: &Zone, t: &str) -> Option<i64> {
    if let Ok(dt) = chrono::DateTime::parse_from_rfc3339(t) {
        return Some(dt.timestamp_millis());
    }
    for f in [
        "%Y-%m-%dT%H:%M:%S%:z",
        "%Y-%m-%dT%H:%M%:z",
        "%Y-%m-%d %H:%M:%S%:z",
        "%Y-%m-%d %H:%M%:z",
    ] {
        if let Ok(dt) = chrono::DateTime::parse_from_str(t, f) {
            return Some(dt.timestamp_millis());
        }
    }
    let iso: Vec<TimeFormat> = [
        "%Y-%m-%dT%H:%M:%S%.f",
        "%Y-%m-%dT%H:%M",
        "%Y-%m-%d %H:%M:%S%.f",
        "%Y-%m-%d %H:%M",
    ]
    .iter()
    .map(|f| TimeFormat::new(f))
    .collect();
    let wall = parse_any(formats, t).or_else(|| parse_any(&iso, t))?;
    Some(resolve(zone, &[wall]).0[0])
}

#[cfg(test)]
mod tests {
    use super::*;

    /// ISO 8601 with an offset is an instant as written; without one, and in the logger's own
    /// format, it is read on the logger's clock (Europe/Berlin in June is UTC+02:00, IANA tz
    /// database).
    #[test]
    fn side_times_read_iso_and_the_loggers_formats() {
        let zone = Zone::parse("Europe/Berlin").expect("zone");
        let f = [TimeFormat::new("%d.%m.%Y %H:%M")];
        let utc = side_time(&f, &zone, "2026-06-01T10:00:00Z").expect("iso utc");
        assert_eq!(side_time(&f, &zone, "2026-06-01T12:00:00+02:00"), Some(utc));
        assert_eq!(side_time(&f, &zone, "2026-06-01T12:00"), Some(utc));
        assert_eq!(side_time(&f, &zone, "01.06.2026 12:00"), Some(utc));
        assert_eq!(side_time(&f, &zone, "noon"), None);
    }

    #[test]
    fn a_bad_line_is_named() {
        let dir = tempfile::tempdir().expect("tempdir");
        let p = dir.path().join("v.csv");
        std::fs::write(&p, "time,head_mm\n2026-06-01 00:00,300\n2026-06-01 12:00,abc\n").expect("write");
        let e = read_side_file(&p, "head", &[], &Zone::Fixed(0)).expect_err("bad value");
        assert_eq!(e.line, Some(3));
        std::fs::write(&p, "time,head_mm\n2026-06-01 00:00,300\n").expect("write");
        let s = read_side_file(&p, "head", &[], &Zone::Fixed(0)).expect("reads");
        assert_eq!(s.unit, "mm");
        assert_eq!(s.points.len(), 1);
    }
}
