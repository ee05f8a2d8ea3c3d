//! `[screening]`: the thresholds of the automatic screening of logger records and the longest
//! gap filled by interpolation ([`crate::series::screen`]). Every key is optional.

use toml::Spanned;

use super::raw::{self, Num};
use super::{Ctx, LengthUnit, StationError};
use crate::series::screen::ScreeningSpec;

impl Ctx<'_> {
    pub(super) fn screening(
        &self,
        t: &Spanned<raw::RawScreening>,
        unit: LengthUnit,
    ) -> Result<ScreeningSpec, StationError> {
        let t = t.get_ref();
        let d = ScreeningSpec::default();
        let bounded = |n: &Option<Num>, key: &str, lo: f64, hi: f64, open_lo: bool, why: &str, default: f64| {
            n.as_ref()
                .map_or(Ok(default), |n| self.bounded(n, key, lo, hi, open_lo, why))
        };
        let m = unit.metres();
        let spike_return = match &t.spike_return {
            None => d.spike_return,
            Some(n) if (1..=100).contains(n.get_ref()) => *n.get_ref() as usize,
            Some(n) => {
                return Err(self.err(
                    n.span(),
                    "screening.spike_return",
                    format!("{} readings is out of range", n.get_ref()),
                    "give how many readings a spike may last before it comes back, 1 to 100 (default 3)",
                ))
            }
        };
        Ok(ScreeningSpec {
            enabled: t.enabled.as_ref().map_or(d.enabled, |e| *e.get_ref()),
            spike_rise_m: m * bounded(
                &t.spike_rise,
                "screening.spike_rise",
                0.0,
                1.0e4,
                true,
                "give the smallest jump from one reading to the next that may be a spike, in the length unit",
                d.spike_rise_m / m,
            )?,
            spike_return,
            flat_hours: bounded(
                &t.flat_hours,
                "screening.flat_hours",
                0.0,
                1.0e5,
                true,
                "give how many hours of the same reading while flowing make a flat line (default 12)",
                d.flat_hours,
            )?,
            out_of_water_tolerance_m: m * bounded(
                &t.out_of_water_tolerance,
                "screening.out_of_water_tolerance",
                0.0,
                1.0e4,
                false,
                "give how close to the dry reading a stage counts as out of the water, in the length unit",
                d.out_of_water_tolerance_m / m,
            )?,
            fill_max_hours: bounded(
                &t.fill_max_hours,
                "screening.fill_max_hours",
                0.0,
                1.0e5,
                false,
                "give the longest gap (h) to fill by interpolation; 0 fills none (default 2)",
                d.fill_max_hours,
            )?,
        })
    }
}
