//! How a logger export reads: the station's `[logger]` table with the caller's overrides (the
//! command line's flags) laid over it, checked once before any row is read.

use super::correct::{metres_per, pascals_per};
use super::read::{ColumnRef, ReadSettings};
use super::time::{TimeFormat, Zone};
use crate::station::LoggerSpec;

/// Time formats tried, in order, when neither the station nor the caller gives one.
pub const DEFAULT_FORMATS: [&str; 4] = [
    "%Y-%m-%d %H:%M:%S",
    "%Y-%m-%d %H:%M",
    "%Y-%m-%dT%H:%M:%S",
    "%Y-%m-%dT%H:%M",
];

/// Overrides of the station's `[logger]` table; `None` (or empty, or false) keeps the station's.
/// Columns are names or 1-based positions written as digits.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct LoggerOverrides {
    /// Time column.
    pub time_column: Option<String>,
    /// Time formats, tried in order (replace the station's).
    pub time_formats: Vec<String>,
    /// The logger's clock: IANA name or fixed offset.
    pub timezone: Option<String>,
    /// Stage column.
    pub stage_column: Option<String>,
    /// Stage unit: m, cm, mm, ft, in.
    pub stage_unit: Option<String>,
    /// Logger stage with the water level with the crest, in the stage unit.
    pub zero: Option<f64>,
    /// Field separator (one character; `\t` for tab).
    pub separator: Option<String>,
    /// Numbers use a decimal comma (adds to the station's setting).
    pub decimal_comma: bool,
    /// Lines to skip before the header.
    pub skip_lines: Option<u32>,
    /// The file has no header line.
    pub no_header: bool,
    /// More texts meaning "no value" (added to the station's).
    pub missing: Vec<String>,
    /// Logged tailwater column.
    pub tailwater_column: Option<String>,
    /// Tailwater logger reading with the tailwater level with the crest.
    pub tailwater_zero: Option<f64>,
    /// Absolute-pressure column, instead of a stage column.
    pub pressure_column: Option<String>,
    /// Pressure unit of the logger and barometric file.
    pub pressure_unit: Option<String>,
    /// Logged water-temperature column (°C).
    pub temperature_column: Option<String>,
    /// Water temperature (°C) where none is logged.
    pub water_temperature: Option<f64>,
}

/// A setting that cannot be used, in words, with its fix.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[error("{0}")]
pub struct SettingsError(pub String);

/// The settings of one conversion, checked.
#[derive(Debug, Clone, PartialEq)]
pub struct LoggerSettings {
    /// How the file is read.
    pub read: ReadSettings,
    /// The logger's clock.
    pub zone: Zone,
    /// The clock as given.
    pub zone_text: String,
    /// Stage unit (also of `zero` and `tailwater_zero`).
    pub stage_unit: String,
    /// Logger stage with the water level with the crest, in the stage unit.
    pub zero: f64,
    /// Pressure unit when the logger reads absolute pressure.
    pub pressure_unit: Option<String>,
    /// Water temperature (°C) where none is logged.
    pub water_temperature: f64,
    /// Tailwater logger reading with the tailwater level with the crest.
    pub tailwater_zero: Option<f64>,
    /// Value-column index of a logged temperature.
    pub temperature_index: Option<usize>,
    /// Value-column index of a logged tailwater.
    pub tailwater_index: Option<usize>,
    /// The sensor's dry reading, in the stage unit.
    pub dry_reading: Option<f64>,
    /// The most water over the sensor, in the stage unit.
    pub max_depth: Option<f64>,
}

impl LoggerSettings {
    /// The station's `[logger]` with `o` laid over it; `has_baro` says whether a barometric
    /// series is given (a pressure logger needs one).
    pub fn resolve(l: &LoggerSpec, o: &LoggerOverrides, has_baro: bool) -> Result<Self, SettingsError> {
        let bad = |m: String| SettingsError(m);
        let pick = |flag: &Option<String>, file: &Option<String>| flag.clone().or_else(|| file.clone());
        let tz = pick(&o.timezone, &l.timezone).ok_or_else(|| bad(
            "no time zone for the logger's clock: add [logger] timezone to the station file or give --timezone (an IANA name such as Europe/Berlin, or a fixed offset such as +01:00); flumerate never guesses it".into(),
        ))?;
        let zone = Zone::parse(&tz).map_err(|e| bad(format!("--timezone: {e}")))?;
        let zero = o.zero.or(l.zero).ok_or_else(|| {
            bad("no gauge zero: add [logger] zero (the logger stage with the water level with the crest) or give --zero".into())
        })?;
        let stage_unit = pick(&o.stage_unit, &l.stage_unit).unwrap_or_else(|| "m".into());
        if metres_per(&stage_unit).is_none() {
            return Err(bad(format!("--stage-unit {stage_unit}: use m, cm, mm, ft or in")));
        }
        let separator = match pick(&o.separator, &l.separator).as_deref() {
            None => b',',
            Some("\\t") | Some("\t") => b'\t',
            Some(s) if s.len() == 1 && s.is_ascii() => s.as_bytes()[0],
            Some(s) => return Err(bad(format!("--separator \"{s}\": give one character"))),
        };
        let formats = Self::formats(l, o)?;
        let (values, tailwater_index, temperature_index, pressure) = Self::value_columns(l, o);
        let pressure_unit = pick(&o.pressure_unit, &l.pressure_unit);
        if pressure.is_some() {
            let unit = pressure_unit.as_deref().unwrap_or("kPa");
            if pascals_per(unit).is_none() {
                return Err(bad(format!(
                    "--pressure-unit {unit}: use kPa, hPa, mbar, bar, Pa or psi"
                )));
            }
            if !has_baro {
                return Err(bad(
                    "a pressure column needs a barometric series: give --baro FILE (CSV with time and pressure)".into(),
                ));
            }
        }
        let tailwater_zero = o.tailwater_zero.or(l.tailwater_zero);
        if tailwater_index.is_some() && tailwater_zero.is_none() {
            return Err(bad("a tailwater column needs its zero: add [logger] tailwater_zero (the tailwater logger reading with the water level with the crest) or give --tailwater-zero".into()));
        }
        let mut missing = l.missing.clone();
        missing.extend(o.missing.iter().cloned());
        Ok(Self {
            read: ReadSettings {
                separator,
                // a decimal comma with a comma separator reads only from quoted fields: the
                // reader decides
                decimal_comma: o.decimal_comma || l.decimal_comma,
                skip_lines: o.skip_lines.unwrap_or(l.skip_lines) as usize,
                has_header: !o.no_header && l.header.unwrap_or(true),
                time: ColumnRef::parse(&pick(&o.time_column, &l.time_column).unwrap_or_else(|| "time".into())),
                formats: formats.iter().map(|f| TimeFormat::new(f)).collect(),
                values,
                missing,
            },
            zone,
            zone_text: tz,
            stage_unit,
            zero,
            pressure_unit: pressure.map(|_| pressure_unit.unwrap_or_else(|| "kPa".into())),
            water_temperature: o.water_temperature.or(l.water_temperature).unwrap_or(10.0),
            tailwater_zero,
            temperature_index,
            tailwater_index,
            dry_reading: l.dry_reading,
            max_depth: l.max_depth,
        })
    }

    /// The caller's formats, else the station's, else [`DEFAULT_FORMATS`]; the caller's are
    /// checked here (the station's were checked when it loaded).
    fn formats(l: &LoggerSpec, o: &LoggerOverrides) -> Result<Vec<String>, SettingsError> {
        for f in &o.time_formats {
            TimeFormat::check(f).map_err(|e| {
                SettingsError(format!(
                    "--time-format: {e}\n  fix: use strftime directives such as %Y %m %d %H %M %S"
                ))
            })?;
        }
        Ok(if !o.time_formats.is_empty() {
            o.time_formats.clone()
        } else if !l.time_formats.is_empty() {
            l.time_formats.clone()
        } else {
            DEFAULT_FORMATS.iter().map(|s| s.to_string()).collect()
        })
    }

    /// The value columns to read: stage or pressure first, then a logged tailwater and a
    /// temperature (a level logger's temperature is read and checked like any other column,
    /// but not used: only a pressure logger needs the density of water). Returns the columns,
    /// the tailwater's and the temperature's indices, and the pressure column if any.
    fn value_columns(
        l: &LoggerSpec,
        o: &LoggerOverrides,
    ) -> (Vec<ColumnRef>, Option<usize>, Option<usize>, Option<String>) {
        let pick = |flag: &Option<String>, file: &Option<String>| flag.clone().or_else(|| file.clone());
        let pressure = pick(&o.pressure_column, &l.pressure_column);
        let mut values = vec![match &pressure {
            Some(p) => ColumnRef::parse(p),
            None => ColumnRef::parse(&pick(&o.stage_column, &l.stage_column).unwrap_or_else(|| "stage".into())),
        }];
        let mut tailwater_index = None;
        if let Some(tw) = pick(&o.tailwater_column, &l.tailwater_column) {
            tailwater_index = Some(values.len());
            values.push(ColumnRef::parse(&tw));
        }
        let mut temperature_index = None;
        if let Some(t) = pick(&o.temperature_column, &l.temperature_column) {
            temperature_index = Some(values.len());
            values.push(ColumnRef::parse(&t));
        }
        (values, tailwater_index, temperature_index, pressure)
    }

    /// Metres per stage unit.
    pub fn metres_per_unit(&self) -> f64 {
        metres_per(&self.stage_unit).expect("checked when resolved")
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn spec() -> LoggerSpec {
        LoggerSpec {
            timezone: Some("Europe/Berlin".into()),
            zero: Some(0.1),
            missing: vec!["-9999".into()],
            ..Default::default()
        }
    }

    #[test]
    fn overrides_lie_over_the_station() {
        let s = LoggerSettings::resolve(&spec(), &LoggerOverrides::default(), false).expect("ok");
        assert_eq!(s.zone_text, "Europe/Berlin");
        assert_eq!(s.read.formats.len(), DEFAULT_FORMATS.len());
        let o = LoggerOverrides {
            timezone: Some("+01:00".into()),
            zero: Some(0.2),
            missing: vec!["ERR".into()],
            separator: Some(";".into()),
            ..Default::default()
        };
        let s = LoggerSettings::resolve(&spec(), &o, false).expect("ok");
        assert_eq!(s.zone, Zone::Fixed(3600));
        assert!((s.zero - 0.2).abs() < 1e-15);
        assert_eq!(s.read.missing, vec!["-9999".to_string(), "ERR".to_string()]);
        assert_eq!(s.read.separator, b';');
    }

    #[test]
    fn missing_and_bad_settings_are_named() {
        let no_zone = LoggerSpec {
            timezone: None,
            ..spec()
        };
        let e = LoggerSettings::resolve(&no_zone, &LoggerOverrides::default(), false).expect_err("no zone");
        assert!(e.0.contains("never guesses"));
        let o = LoggerOverrides {
            pressure_column: Some("p".into()),
            ..Default::default()
        };
        let e = LoggerSettings::resolve(&spec(), &o, false).expect_err("no baro");
        assert!(e.0.contains("--baro"));
        let o = LoggerOverrides {
            time_formats: vec!["%Y %Q".into()],
            ..Default::default()
        };
        assert!(LoggerSettings::resolve(&spec(), &o, false).is_err());
        let o = LoggerOverrides {
            tailwater_column: Some("tw".into()),
            ..Default::default()
        };
        let e = LoggerSettings::resolve(&spec(), &o, false).expect_err("no tailwater zero");
        assert!(e.0.contains("tailwater_zero"));
    }
}
