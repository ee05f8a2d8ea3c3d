//! `[logger]`: how the station's logger export reads (columns, formats, clock, units, zero,
//! missing-value markers, the sensor's dry reading and depth range).

use toml::Spanned;

use super::raw::{self, Text};
use super::{Ctx, LoggerSpec, StationError};

impl Ctx<'_> {
    pub(super) fn logger(&self, l: &Spanned<raw::RawLogger>) -> Result<LoggerSpec, StationError> {
        let l = l.get_ref();
        let s = |t: &Option<Text>| t.as_ref().map(|t| t.get_ref().clone());
        self.logger_units_and_clock(l)?;
        let formats = self.time_formats(l)?;
        let temperature = l
            .water_temperature
            .as_ref()
            .map(|t| {
                self.bounded(
                    t,
                    "logger.water_temperature",
                    0.0,
                    40.0,
                    false,
                    "give the water temperature in °C (0 to 40)",
                )
            })
            .transpose()?;
        let number = |v: &Option<Spanned<f64>>, key: &str| v.as_ref().map(|z| self.number(z, key)).transpose();
        Ok(LoggerSpec {
            time_column: self.column(&l.time_column, "logger.time_column")?,
            time_formats: formats,
            timezone: s(&l.timezone),
            stage_column: self.column(&l.stage_column, "logger.stage_column")?,
            stage_unit: s(&l.stage_unit),
            zero: number(&l.zero, "logger.zero")?,
            tailwater_column: self.column(&l.tailwater_column, "logger.tailwater_column")?,
            tailwater_zero: number(&l.tailwater_zero, "logger.tailwater_zero")?,
            missing: l.missing.as_ref().map(|m| m.get_ref().clone()).unwrap_or_default(),
            separator: s(&l.separator),
            decimal_comma: l.decimal_comma.as_ref().is_some_and(|d| *d.get_ref()),
            skip_lines: l.skip_lines.as_ref().map_or(0, |d| *d.get_ref()),
            header: l.header.as_ref().map(|h| *h.get_ref()),
            pressure_column: self.column(&l.pressure_column, "logger.pressure_column")?,
            pressure_unit: s(&l.pressure_unit),
            temperature_column: self.column(&l.temperature_column, "logger.temperature_column")?,
            water_temperature: temperature,
            dry_reading: number(&l.dry_reading, "logger.dry_reading")?,
            max_depth: l
                .max_depth
                .as_ref()
                .map(|d| {
                    self.bounded(
                        d,
                        "logger.max_depth",
                        0.0,
                        1.0e4,
                        true,
                        "give the most water the sensor can have over it, in the stage unit",
                    )
                })
                .transpose()?,
        })
    }

    /// A column named in quotes or given by position (from 1).
    fn column(&self, c: &Option<Spanned<raw::RawColumn>>, key: &str) -> Result<Option<String>, StationError> {
        match c.as_ref().map(|c| (c.get_ref(), c.span())) {
            None => Ok(None),
            Some((raw::RawColumn::Name(n), _)) => Ok(Some(n.clone())),
            Some((raw::RawColumn::Position(p), _)) if *p >= 1 => Ok(Some(p.to_string())),
            Some((raw::RawColumn::Position(p), span)) => Err(self.err(
                span,
                key,
                format!("column position {p} is not valid: positions start at 1"),
                "give the column's name in quotes, or its position counting from 1",
            )),
        }
    }

    /// The stage and pressure units, the time zone and the separator are ones flumerate knows.
    fn logger_units_and_clock(&self, l: &raw::RawLogger) -> Result<(), StationError> {
        if let Some(u) = &l.stage_unit {
            if !["m", "cm", "mm", "ft", "in"].contains(&u.get_ref().as_str()) {
                return Err(self.err(
                    u.span(),
                    "logger.stage_unit",
                    format!("unknown stage unit \"{}\"", u.get_ref()),
                    "use \"m\", \"cm\", \"mm\", \"ft\" or \"in\"",
                ));
            }
        }
        if let Some(u) = &l.pressure_unit {
            if crate::series::correct::pascals_per(u.get_ref()).is_none() {
                return Err(self.err(
                    u.span(),
                    "logger.pressure_unit",
                    format!("unknown pressure unit \"{}\"", u.get_ref()),
                    "use \"kPa\", \"hPa\", \"mbar\", \"bar\", \"Pa\" or \"psi\"",
                ));
            }
        }
        if let Some(z) = &l.timezone {
            if let Err(e) = crate::series::time::Zone::parse(z.get_ref()) {
                return Err(self.err(
                    z.span(),
                    "logger.timezone",
                    e,
                    "give an IANA name such as \"Europe/Berlin\" or a fixed offset such as \"+01:00\"",
                ));
            }
        }
        if let Some(sep) = &l.separator {
            if sep.get_ref().chars().count() != 1 || !sep.get_ref().is_ascii() {
                return Err(self.err(
                    sep.span(),
                    "logger.separator",
                    "the separator must be a single character",
                    "use separator = \",\" or \";\" or \"\\t\"",
                ));
            }
        }
        Ok(())
    }

    /// `time_format`: one format or a list, each with directives flumerate knows.
    fn time_formats(&self, l: &raw::RawLogger) -> Result<Vec<String>, StationError> {
        let formats = match l.time_format.as_ref().map(|f| f.get_ref()) {
            None => Vec::new(),
            Some(raw::RawFormats::One(f)) => vec![f.clone()],
            Some(raw::RawFormats::Many(v)) => v.clone(),
        };
        if let Some(span) = l.time_format.as_ref().map(|f| f.span()) {
            for f in &formats {
                if let Err(e) = crate::series::time::TimeFormat::check(f) {
                    return Err(self.err(
                        span.clone(),
                        "logger.time_format",
                        e,
                        "use strftime directives such as %Y %m %d %H %M %S (e.g. \"%Y-%m-%d %H:%M\")",
                    ));
                }
            }
        }
        Ok(formats)
    }
}
