//! A gaugings file: one field gauging per row, `time`, the head above the crest (`head_m`,
//! `head_cm`, `head_mm`, `head_ft`) or a logger `stage` (turned into head with the station's
//! `[logger]` zero and stage unit), the gauged discharge (`discharge_m3s`, `discharge_ls`,
//! `discharge_cfs`), and optionally `u95_pct`, `method` and `note`. Rows that cannot be used are
//! refused with their line and reason; nothing is dropped silently.

use std::path::Path;

use crate::series::side::side_time;
use crate::series::time::{TimeFormat, Zone, NO_TIME};
use crate::station::Station;

/// A typical expanded uncertainty (%) of a gauging by `method`, with its source; `None` for a
/// method flumerate does not know.
pub fn method_u95(method: &str) -> Option<(f64, &'static str)> {
    match method.trim().to_ascii_lowercase().replace(['_', ' '], "-").as_str() {
        "current-meter" => Some((
            5.0,
            "current meter: ±5 % typical of a velocity-area gauging (ISO 748, from memory)",
        )),
        "adcp" => Some((
            5.0,
            "ADCP: ±5 % typical of a moving-boat gauging (ISO 24578, from memory)",
        )),
        "volumetric" => Some((
            2.0,
            "volumetric: ±2 % typical of a container-and-stopwatch gauging in the field (from memory)",
        )),
        "dilution" => Some((
            3.0,
            "dilution: ±3 % typical of a constant-rate or integration gauging (ISO 9555-1, from memory)",
        )),
        _ => None,
    }
}

/// The uncertainty used when neither `u95_pct` nor `method` is given.
pub const DEFAULT_U95: (f64, &str) = (
    5.0,
    "no method given: ±5 %, typical of a current-meter gauging (ISO 748, from memory)",
);

/// One usable gauging.
#[derive(Debug, Clone, PartialEq)]
pub struct Gauging {
    /// Line in the file.
    pub line: usize,
    /// The time as written.
    pub time_text: String,
    /// The instant (UTC ms).
    pub time_ms: i64,
    /// Head above the crest (m).
    pub head_m: f64,
    /// Gauged discharge (m³/s).
    pub discharge_m3s: f64,
    /// Expanded (k = 2) uncertainty of the gauging (%).
    pub u95_pct: f64,
    /// Where the uncertainty comes from.
    pub u95_source: String,
    /// The method, as written (may be empty).
    pub method: String,
    /// The note, as written.
    pub note: String,
}

/// A row refused, with why.
#[derive(Debug, Clone, PartialEq)]
pub struct Refused {
    /// Line in the file.
    pub line: usize,
    /// Why, with the fix.
    pub reason: String,
}

/// A gaugings file as read.
#[derive(Debug, Clone, PartialEq)]
pub struct GaugingsFile {
    /// The usable gaugings, in file order.
    pub gaugings: Vec<Gauging>,
    /// The refused rows.
    pub refused: Vec<Refused>,
    /// SHA-256 of the file.
    pub sha256: String,
    /// The head column's name.
    pub head_column: String,
    /// The discharge column's name.
    pub discharge_column: String,
    /// How times without an offset were read.
    pub clock: String,
}

/// The gaugings file cannot be read at all.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[error("{path}{}: {problem}", line.map_or(String::new(), |l| format!(":{l}")))]
pub struct GaugingsError {
    /// The file.
    pub path: String,
    /// The line at fault.
    pub line: Option<usize>,
    /// What is wrong, and the fix.
    pub problem: String,
}

/// How the head is read.
enum HeadColumn {
    Head { index: usize, per_m: f64 },
    Stage { index: usize, per_m: f64, zero_m: f64 },
}

impl GaugingsFile {
    /// Reads `path` for `station`.
    pub fn read(path: &Path, station: &Station) -> Result<Self, GaugingsError> {
        let err = |line: Option<usize>, problem: String| GaugingsError {
            path: path.display().to_string(),
            line,
            problem,
        };
        let (text, sha256) = crate::files::read_text_hashed(path).map_err(|p| err(None, p))?;
        let mut file = Self::parse(&text, station).map_err(|(line, problem)| err(line, problem))?;
        file.sha256 = sha256;
        Ok(file)
    }

    /// Parses the text of a gaugings file.
    pub fn parse(text: &str, station: &Station) -> Result<Self, (Option<usize>, String)> {
        let mut r = csv::ReaderBuilder::new()
            .flexible(true)
            .trim(csv::Trim::All)
            .from_reader(text.as_bytes());
        let headers = r
            .headers()
            .map_err(|_| (Some(1), "no header line".to_string()))?
            .clone();
        let find = |name: &str| headers.iter().position(|h| h == name);
        let listed = || headers.iter().collect::<Vec<_>>().join(", ");
        let time_index =
            find("time").ok_or_else(|| (Some(1), format!("no `time` column (the header is: {})", listed())))?;
        let (head, head_column) = Self::head_column(&headers, station)?;
        let (q_index, q_per_m3s, discharge_column) = [
            ("discharge_m3s", 1.0),
            ("discharge_ls", 1.0e-3),
            ("discharge_cfs", crate::units::M3_PER_FT3),
        ]
        .into_iter()
        .find_map(|(name, per)| find(name).map(|i| (i, per, name.to_string())))
        .ok_or_else(|| {
            (
                Some(1),
                format!(
                    "no discharge column: name it discharge_m3s, discharge_ls or discharge_cfs (the header is: {})",
                    listed()
                ),
            )
        })?;
        let (u_index, method_index, note_index) = (find("u95_pct"), find("method"), find("note"));
        let (formats, zone, clock) = Self::clock(station);
        let mut out = GaugingsFile {
            gaugings: Vec::new(),
            refused: Vec::new(),
            sha256: String::new(),
            head_column,
            discharge_column,
            clock,
        };
        for (k, rec) in r.records().enumerate() {
            let line = k + 2;
            let rec = rec.map_err(|e| (Some(line), format!("unreadable record: {e}")))?;
            if rec.iter().all(str::is_empty) {
                continue;
            }
            let field = |i: Option<usize>| i.and_then(|i| rec.get(i)).unwrap_or("").to_string();
            match Self::row(
                line,
                &field,
                time_index,
                &head,
                q_index,
                q_per_m3s,
                (u_index, method_index, note_index),
                &formats,
                &zone,
            ) {
                Ok(g) => out.gaugings.push(g),
                Err(reason) => out.refused.push(Refused { line, reason }),
            }
        }
        Ok(out)
    }

    fn head_column(
        headers: &csv::StringRecord,
        station: &Station,
    ) -> Result<(HeadColumn, String), (Option<usize>, String)> {
        let find = |name: &str| headers.iter().position(|h| h == name);
        for (name, per_m) in [
            ("head_m", 1.0),
            ("head_cm", 0.01),
            ("head_mm", 0.001),
            ("head_ft", crate::units::M_PER_FT),
        ] {
            if let Some(index) = find(name) {
                return Ok((HeadColumn::Head { index, per_m }, name.to_string()));
            }
        }
        let Some(index) = find("stage") else {
            return Err((
                Some(1),
                "no head column: name it head_m, head_cm, head_mm or head_ft (head above the crest), or give the logger's `stage` with a [logger] zero in the station file".into(),
            ));
        };
        let logger = station.logger.as_ref();
        let zero = logger.and_then(|l| l.zero).ok_or_else(|| {
            (
                Some(1),
                "a `stage` column needs the station's [logger] zero (the stage with the water level with the crest)"
                    .to_string(),
            )
        })?;
        let unit = logger.and_then(|l| l.stage_unit.clone()).unwrap_or_else(|| "m".into());
        let per_m = crate::series::correct::metres_per(&unit)
            .ok_or_else(|| (Some(1), format!("the station's stage unit \"{unit}\" is unknown")))?;
        Ok((
            HeadColumn::Stage {
                index,
                per_m,
                zero_m: zero * per_m,
            },
            format!("stage ({unit}, zero {zero})"),
        ))
    }

    /// The time formats and clock of the station's logger, or ISO 8601 on UTC.
    fn clock(station: &Station) -> (Vec<TimeFormat>, Zone, String) {
        let logger = station.logger.as_ref();
        let formats: Vec<TimeFormat> = logger
            .map(|l| l.time_formats.iter().map(|f| TimeFormat::new(f)).collect())
            .unwrap_or_default();
        match logger
            .and_then(|l| l.timezone.as_deref())
            .and_then(|z| Zone::parse(z).ok().map(|p| (z, p)))
        {
            Some((name, zone)) => (
                formats,
                zone,
                format!("times without an offset are on the logger's clock ({name})"),
            ),
            None => (
                formats,
                Zone::Fixed(0),
                "times without an offset are read as UTC (the station has no [logger] timezone)".into(),
            ),
        }
    }

    #[allow(clippy::too_many_arguments)]
    fn row(
        line: usize,
        field: &dyn Fn(Option<usize>) -> String,
        time_index: usize,
        head: &HeadColumn,
        q_index: usize,
        q_per_m3s: f64,
        (u_index, method_index, note_index): (Option<usize>, Option<usize>, Option<usize>),
        formats: &[TimeFormat],
        zone: &Zone,
    ) -> Result<Gauging, String> {
        let number = |i: usize, what: &str| -> Result<f64, String> {
            let t = field(Some(i));
            t.parse::<f64>()
                .ok()
                .filter(|v| v.is_finite())
                .ok_or_else(|| format!("{what} \"{t}\" is not a number"))
        };
        let time_text = field(Some(time_index));
        let time_ms = match side_time(formats, zone, &time_text) {
            Some(t) if t != NO_TIME => t,
            Some(_) => {
                return Err(format!(
                    "time \"{time_text}\" does not exist on the clock (daylight-saving gap): give it with its offset"
                ))
            }
            None => {
                return Err(format!(
                    "time \"{time_text}\" is neither ISO 8601 nor in the logger's formats"
                ))
            }
        };
        let head_m = match head {
            HeadColumn::Head { index, per_m } => number(*index, "head")? * per_m,
            HeadColumn::Stage { index, per_m, zero_m } => number(*index, "stage")? * per_m - zero_m,
        };
        if head_m <= 0.0 {
            return Err(format!(
                "head {head_m:.4} m is at or below the crest: no flow over the control to compare"
            ));
        }
        let discharge_m3s = number(q_index, "discharge")? * q_per_m3s;
        if discharge_m3s <= 0.0 {
            return Err("the discharge is not positive: a gauging measures a flow".into());
        }
        let method = field(method_index);
        let (u95_pct, u95_source) = match field(u_index).as_str() {
            "" if method.is_empty() => (DEFAULT_U95.0, DEFAULT_U95.1.to_string()),
            "" => match method_u95(&method) {
                Some((u, s)) => (u, s.to_string()),
                None => {
                    return Err(format!(
                    "method \"{method}\" is unknown: use current-meter, adcp, volumetric or dilution, or give u95_pct"
                ))
                }
            },
            text => {
                let u: f64 = text
                    .parse()
                    .map_err(|_| format!("u95_pct \"{text}\" is not a number"))?;
                if !(u > 0.0 && u <= 100.0) {
                    return Err(format!("u95_pct {u} must be above 0 and at most 100"));
                }
                (u, "given in the gaugings file".to_string())
            }
        };
        Ok(Gauging {
            line,
            time_text,
            time_ms,
            head_m,
            discharge_m3s,
            u95_pct,
            u95_source,
            method,
            note: field(note_index),
        })
    }
}
