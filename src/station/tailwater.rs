//! `[tailwater]`: the channel below the structure (Manning) or a table of tailwater levels, for
//! the modular-limit check.

use toml::Spanned;

use super::raw;
use super::shape::ShapeKeys;
use super::{Ctx, LengthUnit, StationError, TailwaterSpec};

impl Ctx<'_> {
    pub(super) fn tailwater(
        &self,
        t: &Spanned<raw::RawTailwater>,
        unit: LengthUnit,
    ) -> Result<TailwaterSpec, StationError> {
        let span = t.span();
        let t = t.get_ref();
        if let Some(table) = &t.table {
            return self.tailwater_table(t, table, unit);
        }
        let section = self.section(
            ShapeKeys {
                table: "tailwater",
                span: span.clone(),
                shape: t.shape.as_ref(),
                width: t.width.as_ref(),
                side_slope: t.side_slope.as_ref(),
                diameter: t.diameter.as_ref(),
                points: t.points.as_ref(),
            },
            unit,
        )?;
        let bed = match &t.bed_below_crest {
            Some(n) => self.number(n, "tailwater.bed_below_crest")? * unit.metres(),
            None => {
                return Err(self.missing(
                    span,
                    "tailwater.bed_below_crest",
                    "add bed_below_crest = how far the tailwater channel bed lies below the crest",
                ))
            }
        };
        let n = match &t.manning_n {
            Some(n) => self.bounded(
                n,
                "tailwater.manning_n",
                0.0,
                0.5,
                true,
                "Manning's n is greater than 0 (0.012 concrete to about 0.1 weedy channels)",
            )?,
            None => {
                return Err(self.missing(
                    span,
                    "tailwater.manning_n",
                    "add manning_n = roughness of the tailwater channel, e.g. 0.030",
                ))
            }
        };
        let s = match &t.bed_slope {
            Some(n) => self.bounded(
                n,
                "tailwater.bed_slope",
                0.0,
                0.5,
                true,
                "give the bed slope as a positive ratio, e.g. 0.0008 (m per m)",
            )?,
            None => {
                return Err(self.missing(
                    span,
                    "tailwater.bed_slope",
                    "add bed_slope = slope of the tailwater channel bed, e.g. 0.0008",
                ))
            }
        };
        Ok(TailwaterSpec::Channel {
            bed_below_crest_m: bed,
            section,
            manning_n: n,
            bed_slope: s,
        })
    }

    /// A tailwater table of [discharge, level above the crest]: no channel keys beside it, at
    /// least two rows, discharge rising and the level not falling.
    fn tailwater_table(
        &self,
        t: &raw::RawTailwater,
        table: &Spanned<Vec<Vec<f64>>>,
        unit: LengthUnit,
    ) -> Result<TailwaterSpec, StationError> {
        for (v, key) in [
            (t.shape.as_ref().map(|s| s.span()), "tailwater.shape"),
            (t.manning_n.as_ref().map(|s| s.span()), "tailwater.manning_n"),
            (t.bed_slope.as_ref().map(|s| s.span()), "tailwater.bed_slope"),
        ] {
            if let Some(sp) = v {
                return Err(self.err(
                    sp,
                    key,
                    "a tailwater table and a tailwater channel are given together",
                    "keep either table = [[discharge, level], ...] or the channel keys, not both",
                ));
            }
        }
        let rows = self.pairs(
            table,
            "tailwater.table",
            "give each row as [discharge m³/s, level above the crest]",
        )?;
        if rows.len() < 2 {
            return Err(self.err(
                table.span(),
                "tailwater.table",
                "a tailwater table needs at least 2 rows",
                "give [discharge m³/s, tailwater level above the crest] pairs covering the rating's discharges",
            ));
        }
        for (i, w) in rows.windows(2).enumerate() {
            let finite = w[1][0].is_finite() && w[1][1].is_finite();
            if !finite || w[1][0] <= w[0][0] || w[1][1] < w[0][1] {
                return Err(self.err(
                    table.span(),
                    "tailwater.table",
                    format!(
                        "rows {} and {} are not monotone: discharge must rise and the level must not fall",
                        i + 1,
                        i + 2
                    ),
                    "sort the rows by discharge and check the levels",
                ));
            }
        }
        if rows[0][0] < 0.0 {
            return Err(self.err(
                table.span(),
                "tailwater.table",
                "a discharge in the table is negative",
                "give discharges in m³/s, zero or more",
            ));
        }
        Ok(TailwaterSpec::Table(
            rows.iter().map(|r| (r[0], r[1] * unit.metres())).collect(),
        ))
    }
}
