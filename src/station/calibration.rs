//! `[calibration]`: a calibration against field gaugings, as `flumerate gaugings
//! --write-calibration` writes it. Q = factor · Q_rating(h + zero_offset); the zero offset is in
//! the file's length unit.

use toml::Spanned;

use super::raw::{self, Num, Text};
use super::{Ctx, LengthUnit, StationError};
use crate::rating::Calibration;

impl Ctx<'_> {
    pub(super) fn calibration(
        &self,
        t: &Spanned<raw::RawCalibration>,
        unit: LengthUnit,
    ) -> Result<Calibration, StationError> {
        let span = t.span();
        let c = t.get_ref();
        let need = |n: &Option<Num>, key: &str, lo: f64, hi: f64, why: &str| -> Result<f64, StationError> {
            match n {
                Some(n) => self.bounded(n, key, lo, hi, false, why),
                None => Err(self.missing(
                    span.clone(),
                    key,
                    "the calibration needs factor, factor_u95_pct, zero_offset and zero_offset_u95: let `flumerate gaugings --write-calibration` write the table",
                )),
            }
        };
        let text = |t: &Option<Text>| t.as_ref().map(|t| t.get_ref().trim().to_string()).unwrap_or_default();
        let m = unit.metres();
        let factor = need(
            &c.factor,
            "calibration.factor",
            0.5,
            1.5,
            "give the coefficient factor f of Q = f · Q_rating(h + zero_offset), near 1",
        )?;
        let gaugings = self.gauging_count(&c.gaugings)?;
        let optional = |n: &Option<Num>, key: &str| n.as_ref().map(|n| self.number(n, key)).transpose();
        Ok(Calibration {
            factor,
            factor_u95_pct: need(
                &c.factor_u95_pct,
                "calibration.factor_u95_pct",
                0.0,
                50.0,
                "give the factor's expanded uncertainty in %",
            )?,
            zero_offset_m: m * need(
                &c.zero_offset,
                "calibration.zero_offset",
                -1.0 / m,
                1.0 / m,
                "give the gauge-zero correction in the length unit (added to every gauged head)",
            )?,
            zero_offset_u95_m: m * need(
                &c.zero_offset_u95,
                "calibration.zero_offset_u95",
                0.0,
                1.0 / m,
                "give the zero correction's expanded uncertainty in the length unit",
            )?,
            gaugings,
            from: text(&c.from),
            to: text(&c.to),
            source_sha256: text(&c.source_sha256),
            factor_zero_correlation: match &c.factor_zero_correlation {
                Some(n) => self.bounded(
                    n,
                    "calibration.factor_zero_correlation",
                    -1.0,
                    1.0,
                    false,
                    "give the fit's correlation, -1 to 1",
                )?,
                None => 0.0,
            },
            mean_deviation_pct: optional(&c.mean_deviation_pct, "calibration.mean_deviation_pct")?,
            mean_deviation_u95_pct: optional(&c.mean_deviation_u95_pct, "calibration.mean_deviation_u95_pct")?,
        })
    }

    /// How many gaugings a calibration rests on (0 when the file does not say).
    fn gauging_count(&self, n: &Option<Spanned<i64>>) -> Result<usize, StationError> {
        match n {
            Some(n) if *n.get_ref() >= 1 => Ok(*n.get_ref() as usize),
            Some(n) => Err(self.err(
                n.span(),
                "calibration.gaugings",
                "a calibration rests on at least one gauging",
                "give how many gaugings it rests on",
            )),
            None => Ok(0),
        }
    }
}
