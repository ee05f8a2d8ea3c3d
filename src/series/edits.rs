//! Edits from a log (`convert --edits FILE.csv`): the hydrographer's own record of what happened
//! at the station, applied to the conversion and written to its provenance with each reason.
//!
//! The file is CSV with a header; columns `start`, `end`, `action`, `reason`, and `value_mm` for
//! the actions that need a number. Times are ISO 8601 (with an offset, or on the logger's clock
//! without one) or in the logger's own formats. A window runs from `start` to `end`, both
//! included; an empty `end` runs to the end of the record.
//!
//! | action     | rows in the window                                                  |
//! |------------|---------------------------------------------------------------------|
//! | `exclude`  | flagged `excluded`, no discharge (a later gap fill may fill them)     |
//! | `fill`     | head interpolated in time between the readings either side, `filled` |
//! | `offset`   | `value_mm` added to the head (a known step in the sensor)            |
//! | `set-zero` | the logger's zero is `value_mm` (mm of stage) instead of the station's |
//!
//! Two `exclude`/`fill` windows may not overlap, nor two `set-zero` windows: the file would not
//! say which applies. Offsets add up.

use std::path::Path;

use super::side::side_time;
use super::time::{TimeFormat, Zone, NO_TIME};

/// What an edit does.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum EditAction {
    /// No discharge for the rows in the window.
    Exclude,
    /// The head interpolated across the window.
    Fill,
    /// Added to the head (m).
    Offset {
        /// The amount (m).
        head_m: f64,
    },
    /// The logger's zero for the window (m of stage).
    SetZero {
        /// The zero (m).
        zero_m: f64,
    },
}

impl EditAction {
    /// The word used in the file.
    pub fn as_str(self) -> &'static str {
        match self {
            EditAction::Exclude => "exclude",
            EditAction::Fill => "fill",
            EditAction::Offset { .. } => "offset",
            EditAction::SetZero { .. } => "set-zero",
        }
    }

    /// Whether it replaces or removes readings (as opposed to correcting them).
    fn replaces(self) -> bool {
        matches!(self, EditAction::Exclude | EditAction::Fill)
    }
}

/// One edit as read.
#[derive(Debug, Clone, PartialEq)]
pub struct Edit {
    /// Line in the edits file.
    pub line: usize,
    /// Window start (UTC ms), included.
    pub start_ms: i64,
    /// Window end (UTC ms), included; `i64::MAX` for an open end.
    pub end_ms: i64,
    /// The start and end as written.
    pub written: (String, String),
    /// What it does.
    pub action: EditAction,
    /// Why, as written.
    pub reason: String,
}

impl Edit {
    /// Whether instant `t` (UTC ms) lies in the window.
    #[inline]
    pub fn covers(&self, t: i64) -> bool {
        t != NO_TIME && self.start_ms <= t && t <= self.end_ms
    }
}

/// An edits file cannot be used: where and why, with the fix.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[error("{path}{}: {problem}", line.map_or(String::new(), |l| format!(":{l}")))]
pub struct EditsError {
    /// The file.
    pub path: String,
    /// The line at fault, when one is.
    pub line: Option<usize>,
    /// What is wrong, and the fix.
    pub problem: String,
}

/// The edits of a conversion, in file order, with the SHA-256 of the file.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Edits {
    /// The edits.
    pub edits: Vec<Edit>,
    /// SHA-256 of the file, hex (empty without a file).
    pub sha256: String,
}

impl Edits {
    /// Reads an edits file; times in the logger's `formats` are on the logger's clock `zone`.
    pub fn read(path: &Path, formats: &[TimeFormat], zone: &Zone) -> Result<Self, EditsError> {
        let err = |line: Option<usize>, problem: String| EditsError {
            path: path.display().to_string(),
            line,
            problem,
        };
        let (text, sha256) = crate::files::read_text_hashed(path).map_err(|p| err(None, p))?;
        let mut edits = Self::parse(&text, formats, zone).map_err(|(line, problem)| err(line, problem))?;
        edits.sha256 = sha256;
        Ok(edits)
    }

    /// Parses the text of an edits file; errors carry the line.
    pub fn parse(text: &str, formats: &[TimeFormat], zone: &Zone) -> Result<Self, (Option<usize>, String)> {
        let mut r = csv::ReaderBuilder::new()
            .flexible(true)
            .trim(csv::Trim::All)
            .from_reader(text.as_bytes());
        let headers = r
            .headers()
            .map_err(|_| (Some(1), "no header line".to_string()))?
            .clone();
        let col = |name: &str| headers.iter().position(|h| h == name);
        let need = |name: &str| {
            col(name).ok_or_else(|| {
                (
                    Some(1),
                    format!(
                        "no `{name}` column (the header is: {})\n  fix: the header must be start,end,action,reason (and value_mm for offset and set-zero)",
                        headers.iter().collect::<Vec<_>>().join(", ")
                    ),
                )
            })
        };
        let columns = Columns {
            start: need("start")?,
            end: need("end")?,
            action: need("action")?,
            reason: need("reason")?,
            value: col("value_mm"),
        };
        let mut edits = Vec::new();
        for (k, rec) in r.records().enumerate() {
            let line = k + 2;
            let rec = rec.map_err(|e| (Some(line), format!("unreadable record: {e}")))?;
            if rec.iter().all(str::is_empty) {
                continue;
            }
            let field = |i: usize| rec.get(i).unwrap_or("").to_string();
            edits.push(Self::edit(line, &field, &columns, formats, zone)?);
        }
        check_overlaps(&edits)?;
        Ok(Self {
            edits,
            sha256: String::new(),
        })
    }

    /// One record of the file (line `line`) as an edit.
    fn edit(
        line: usize,
        field: &dyn Fn(usize) -> String,
        c: &Columns,
        formats: &[TimeFormat],
        zone: &Zone,
    ) -> Result<Edit, (Option<usize>, String)> {
        let time = |text: &str, what: &str| -> Result<i64, (Option<usize>, String)> {
            match side_time(formats, zone, text) {
                Some(t) if t != NO_TIME => Ok(t),
                Some(_) => Err((
                    Some(line),
                    format!("{what} \"{text}\" does not exist on the logger's clock (daylight-saving gap)\n  fix: give it with its UTC offset, e.g. 2026-03-29T03:30:00+02:00"),
                )),
                None => Err((
                    Some(line),
                    format!("{what} \"{text}\" is neither ISO 8601 nor in the logger's formats\n  fix: write it as 2026-10-12T10:00 (logger's clock) or 2026-10-12T10:00:00+02:00"),
                )),
            }
        };
        let (start_text, end_text) = (field(c.start), field(c.end));
        if start_text.is_empty() {
            return Err((Some(line), "no start time: every edit needs one".into()));
        }
        let start_ms = time(&start_text, "start")?;
        let end_ms = if end_text.is_empty() {
            i64::MAX
        } else {
            time(&end_text, "end")?
        };
        if end_ms < start_ms {
            return Err((
                Some(line),
                format!("the window ends ({end_text}) before it starts ({start_text})\n  fix: swap them"),
            ));
        }
        let action = Self::action(line, &field(c.action), &c.value.map(field).unwrap_or_default())?;
        let reason = field(c.reason);
        if reason.is_empty() {
            return Err((
                Some(line),
                "no reason: every edit is written to the provenance record with its reason\n  fix: say why (e.g. \"logger lifted for cleaning\")".into(),
            ));
        }
        Ok(Edit {
            line,
            start_ms,
            end_ms,
            written: (start_text, end_text),
            action,
            reason,
        })
    }

    /// The action named `text`, with its amount `value_mm` where it needs one.
    fn action(line: usize, text: &str, value_mm: &str) -> Result<EditAction, (Option<usize>, String)> {
        let value = || -> Result<f64, (Option<usize>, String)> {
            let v: f64 = value_mm.parse().map_err(|_| {
                (
                    Some(line),
                    format!("this action needs a number in the value_mm column (got \"{value_mm}\")\n  fix: add a value_mm column and give the amount in mm"),
                )
            })?;
            if v.is_finite() && v.abs() <= 1.0e5 {
                Ok(v)
            } else {
                Err((Some(line), format!("value_mm {v} is not a usable amount in mm")))
            }
        };
        Ok(match text {
            "exclude" => EditAction::Exclude,
            "fill" => EditAction::Fill,
            "offset" => EditAction::Offset {
                head_m: value()? / 1000.0,
            },
            "set-zero" => EditAction::SetZero {
                zero_m: value()? / 1000.0,
            },
            other => {
                return Err((
                    Some(line),
                    format!("unknown action \"{other}\"\n  fix: use exclude, fill, offset or set-zero"),
                ))
            }
        })
    }

    /// Whether there are none.
    pub fn is_empty(&self) -> bool {
        self.edits.is_empty()
    }

    /// The logger zero (m) at `t`: a `set-zero` window's, or `station_zero_m`.
    #[inline]
    pub fn zero_at(&self, t: i64, station_zero_m: f64) -> f64 {
        self.edits
            .iter()
            .find_map(|e| match e.action {
                EditAction::SetZero { zero_m } if e.covers(t) => Some(zero_m),
                _ => None,
            })
            .unwrap_or(station_zero_m)
    }

    /// The sum of the offsets (m) whose windows hold `t`.
    #[inline]
    pub fn offset_at(&self, t: i64) -> f64 {
        self.edits
            .iter()
            .filter_map(|e| match e.action {
                EditAction::Offset { head_m } if e.covers(t) => Some(head_m),
                _ => None,
            })
            .sum()
    }

    /// The `exclude` or `fill` edit whose window holds `t`, as its index.
    #[inline]
    pub fn replacing_at(&self, t: i64) -> Option<usize> {
        self.edits.iter().position(|e| e.action.replaces() && e.covers(t))
    }
}

/// Where the edits file's columns are.
struct Columns {
    start: usize,
    end: usize,
    action: usize,
    reason: usize,
    value: Option<usize>,
}

/// Two replacing windows, or two set-zero windows, that overlap.
fn check_overlaps(edits: &[Edit]) -> Result<(), (Option<usize>, String)> {
    for (i, a) in edits.iter().enumerate() {
        for b in &edits[i + 1..] {
            let overlap = a.start_ms <= b.end_ms && b.start_ms <= a.end_ms;
            let clash = (a.action.replaces() && b.action.replaces())
                || (matches!(a.action, EditAction::SetZero { .. }) && matches!(b.action, EditAction::SetZero { .. }));
            if overlap && clash {
                return Err((
                    Some(b.line),
                    format!(
                        "this {} window overlaps the {} window on line {}: the file does not say which applies\n  fix: make the windows meet without overlapping",
                        b.action.as_str(),
                        a.action.as_str(),
                        a.line
                    ),
                ));
            }
        }
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    fn parse(text: &str) -> Result<Edits, (Option<usize>, String)> {
        Edits::parse(text, &[TimeFormat::new("%Y-%m-%d %H:%M")], &Zone::Fixed(3600))
    }

    #[test]
    fn edits_read_with_their_windows_on_the_loggers_clock() {
        let e = parse(
            "start,end,action,reason,value_mm\n\
             2026-05-01 10:00,2026-05-01 10:45,exclude,logger lifted for cleaning,\n\
             2026-05-02 00:00,,offset,sensor re-hung 12 mm low,12\n\
             2026-05-03T00:00:00Z,2026-05-04T00:00:00Z,set-zero,new zero after survey,415\n",
        )
        .expect("reads");
        assert_eq!(e.edits.len(), 3);
        // 10:00 at UTC+01:00 is 09:00Z (fixed offset, analytic)
        let start = chrono::DateTime::parse_from_rfc3339("2026-05-01T09:00:00Z")
            .expect("time")
            .timestamp_millis();
        assert_eq!(e.edits[0].start_ms, start);
        assert!(e.edits[0].covers(start) && e.edits[0].covers(start + 45 * 60_000));
        assert!(!e.edits[0].covers(start + 46 * 60_000));
        assert_eq!(e.replacing_at(start + 60_000), Some(0));
        assert_eq!(e.edits[1].end_ms, i64::MAX);
        assert!((e.offset_at(start + 2 * 86_400_000) - 0.012).abs() < 1e-12);
        assert!(e.offset_at(start).abs() < 1e-12);
        let in_zero = chrono::DateTime::parse_from_rfc3339("2026-05-03T12:00:00Z")
            .expect("time")
            .timestamp_millis();
        assert!((e.zero_at(in_zero, 0.4) - 0.415).abs() < 1e-12);
        assert!((e.zero_at(start, 0.4) - 0.4).abs() < 1e-12);
    }

    #[test]
    fn bad_edits_name_their_line_and_the_fix() {
        let (line, m) = parse("start,end,action,reason\n2026-05-01 10:00,2026-05-01 11:00,delete,x\n").unwrap_err();
        assert_eq!(line, Some(2));
        assert!(m.contains("unknown action") && m.contains("fix"), "{m}");
        let (line, m) = parse("start,end,action,reason\n2026-05-01 10:00,2026-05-01 09:00,exclude,x\n").unwrap_err();
        assert_eq!(line, Some(2));
        assert!(m.contains("before it starts"), "{m}");
        let (line, m) = parse("start,end,action,reason\n2026-05-01 10:00,2026-05-01 11:00,offset,x\n").unwrap_err();
        assert_eq!(line, Some(2));
        assert!(m.contains("value_mm"), "{m}");
        let (line, m) = parse("start,end,action,reason\n2026-05-01 10:00,2026-05-01 11:00,exclude,\n").unwrap_err();
        assert_eq!(line, Some(2));
        assert!(m.contains("no reason"), "{m}");
        let (line, m) = parse(
            "start,end,action,reason\n2026-05-01 10:00,2026-05-01 11:00,exclude,a\n2026-05-01 10:30,2026-05-01 12:00,fill,b\n",
        )
        .unwrap_err();
        assert_eq!(line, Some(3));
        assert!(m.contains("line 2"), "{m}");
        let (line, _) = parse("begin,end,action,reason\n").unwrap_err();
        assert_eq!(line, Some(1));
    }
}
