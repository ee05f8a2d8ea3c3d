//! The smaller tables of a station file, each checked by a function of its own: the name, unit
//! and gravity at the top, `[approach]`, `[range]`, `[exit]` and `[uncertainty]`.

use super::raw::{Num, RawApproach, RawStation, Text};
use super::shape::ShapeKeys;
use super::{
    escape_controls, Ctx, ExitSpec, HeadRange, InputDistribution, LengthUnit, RangeSource, StationError,
    UncertaintySpec,
};
use crate::hydraulics::{Section, STANDARD_GRAVITY_M_S2};
use toml::Spanned;

impl Ctx<'_> {
    /// The top of the file: the station's name, the length unit and gravity.
    pub(super) fn header(&self, raw: &RawStation) -> Result<(String, LengthUnit, f64), StationError> {
        let doc = 0..0;
        let name = match &raw.name {
            Some(n) if !n.get_ref().trim().is_empty() => escape_controls(n.get_ref().trim()),
            Some(n) => {
                return Err(self.err(
                    n.span(),
                    "name",
                    "the name is empty",
                    "give the station a name shown on outputs",
                ))
            }
            None => return Err(self.missing(doc, "name", "add name = \"...\" at the top of the file")),
        };
        let unit = match &raw.length_unit {
            Some(u) => LengthUnit::parse(u.get_ref()).ok_or_else(|| {
                self.err(
                    u.span(),
                    "length_unit",
                    format!("unknown length unit \"{}\"", u.get_ref()),
                    "use \"m\", \"cm\", \"mm\", \"ft\" or \"in\"",
                )
            })?,
            None => {
                return Err(self.missing(
                    0..0,
                    "length_unit",
                    "add length_unit = \"m\" (or \"mm\", \"ft\", \"in\")",
                ));
            }
        };
        let gravity = match &raw.gravity_m_s2 {
            Some(g) => self.bounded(
                g,
                "gravity_m_s2",
                9.7,
                9.9,
                false,
                "give local gravity in m/s² (9.78 to 9.84 on Earth), or remove the key for 9.80665",
            )?,
            None => STANDARD_GRAVITY_M_S2,
        };
        Ok((name, unit, gravity))
    }

    /// `[approach]`: the channel at the head-measurement section, the crest's height above its
    /// bed, and α.
    pub(super) fn approach(&self, raw: &RawStation, unit: LengthUnit) -> Result<(Section, f64, f64), StationError> {
        let Some(approach) = &raw.approach else {
            return Err(self.missing(
                0..0,
                "[approach]",
                "add an [approach] table: the channel at the head-measurement section, with its shape and sill_height",
            ));
        };
        let aspan = approach.span();
        let a = approach.get_ref();
        let (approach_section, alpha) = self.approach_section(approach, unit)?;
        let sill_height_m = match &a.sill_height {
            Some(p) => {
                let v = self.number(p, "approach.sill_height")?;
                if v < 0.0 {
                    return Err(self.err(
                        p.span(),
                        "approach.sill_height",
                        format!("{v} {} would put the crest below the approach bed", unit.symbol()),
                        "give the height of the crest above the approach bed (0 for a flume with no hump)",
                    ));
                }
                v * unit.metres()
            }
            None => {
                return Err(self.missing(
                    aspan,
                    "approach.sill_height",
                    "add sill_height = height of the crest above the approach bed (p1); 0 if level",
                ))
            }
        };
        Ok((approach_section, sill_height_m, alpha))
    }

    /// The approach section of `[approach]` and its Coriolis coefficient α (default 1).
    pub(super) fn approach_section(
        &self,
        approach: &Spanned<RawApproach>,
        unit: LengthUnit,
    ) -> Result<(Section, f64), StationError> {
        let aspan = approach.span();
        let a = approach.get_ref();
        let approach_section = self.section(
            ShapeKeys {
                table: "approach",
                span: aspan.clone(),
                shape: a.shape.as_ref(),
                width: a.width.as_ref(),
                side_slope: a.side_slope.as_ref(),
                diameter: a.diameter.as_ref(),
                points: a.points.as_ref(),
            },
            unit,
        )?;
        let alpha = match &a.alpha {
            Some(n) => self.bounded(
                n,
                "approach.alpha",
                1.0,
                2.0,
                false,
                "the Coriolis coefficient is 1.0 for uniform velocity and rarely above 1.2 in an approach channel",
            )?,
            None => 1.0,
        };
        Ok((approach_section, alpha))
    }

    /// `[range]`: optional; `None` when the file has none (the caller takes the heads the
    /// limits of application allow).
    pub(super) fn range(&self, raw: &RawStation, unit: LengthUnit) -> Result<Option<HeadRange>, StationError> {
        let given_range = match &raw.range {
            None => None,
            Some(range) => {
                let r = range.get_ref();
                let min_head_m = match &r.min_head {
                    Some(n) => self.positive_length(
                        n,
                        "range.min_head",
                        unit,
                        "heads are measured above the crest: give the lowest head the rating must serve",
                    )?,
                    None => {
                        return Err(self.missing(
                            range.span(),
                            "range.min_head",
                            "add min_head = the lowest head the rating must serve",
                        ))
                    }
                };
                let max_head_m = match &r.max_head {
                    Some(n) => {
                        let v = self.positive_length(
                            n,
                            "range.max_head",
                            unit,
                            "give the highest head the rating must serve",
                        )?;
                        if v <= min_head_m {
                            return Err(self.err(
                                n.span(),
                                "range.max_head",
                                "max_head must be above min_head",
                                "swap the two values or correct one of them",
                            ));
                        }
                        v
                    }
                    None => {
                        return Err(self.missing(
                            range.span(),
                            "range.max_head",
                            "add max_head = the highest head the rating must serve",
                        ))
                    }
                };
                Some(HeadRange {
                    min_head_m,
                    max_head_m,
                    source: RangeSource::Given,
                })
            }
        };
        Ok(given_range)
    }

    /// `[exit]`: the expansion behind the control and an optional modular limit.
    pub(super) fn exit(&self, raw: &RawStation) -> Result<ExitSpec, StationError> {
        let exit = match &raw.exit {
            None => ExitSpec {
                expansion: 0.0,
                modular_limit: None,
            },
            Some(e) => {
                let e = e.get_ref();
                ExitSpec {
                    expansion: match &e.expansion {
                        Some(n) => self.bounded(
                            n,
                            "exit.expansion",
                            0.0,
                            50.0,
                            false,
                            "give N of a 1:N diverging transition (e.g. 6), or 0 for an abrupt exit",
                        )?,
                        None => 0.0,
                    },
                    modular_limit: match &e.modular_limit {
                        Some(n) => Some(self.bounded(
                            n,
                            "exit.modular_limit",
                            0.0,
                            1.0,
                            true,
                            "give the modular limit as a ratio H2/H1 between 0 and 1, e.g. 0.8",
                        )?),
                        None => None,
                    },
                }
            }
        };
        Ok(exit)
    }

    /// `[uncertainty]`: the four inputs' expanded values and distributions.
    pub(super) fn uncertainty(&self, raw: &RawStation) -> Result<UncertaintySpec, StationError> {
        let uncertainty = match &raw.uncertainty {
            None => UncertaintySpec::default(),
            Some(u) => {
                let u = u.get_ref();
                let pct = |n: &Option<Num>, key: &str| -> Result<Option<f64>, StationError> {
                    n.as_ref()
                        .map(|n| {
                            self.bounded(
                                n,
                                key,
                                0.0,
                                100.0,
                                false,
                                "give an expanded (95 %) uncertainty, zero or more",
                            )
                        })
                        .transpose()
                };
                let dist = |t: &Option<Text>, key: &str| -> Result<InputDistribution, StationError> {
                    match t.as_ref().map(|t| (t.get_ref().as_str(), t.span())) {
                        None | Some(("normal", _)) => Ok(InputDistribution::Normal),
                        Some(("rectangular", _)) => Ok(InputDistribution::Rectangular),
                        Some((other, span)) => Err(self.err(
                            span,
                            key,
                            format!("unknown distribution \"{other}\""),
                            "use \"normal\" (value is expanded, U = k·u) or \"rectangular\" (value is the half-width)",
                        )),
                    }
                };
                UncertaintySpec {
                    coefficient_pct: pct(&u.coefficient_pct, "uncertainty.coefficient_pct")?,
                    zero_mm: pct(&u.zero_mm, "uncertainty.zero_mm")?,
                    dimension_pct: pct(&u.dimension_pct, "uncertainty.dimension_pct")?,
                    head_mm: pct(&u.head_mm, "uncertainty.head_mm")?,
                    distributions: [
                        dist(&u.coefficient_distribution, "uncertainty.coefficient_distribution")?,
                        dist(&u.dimension_distribution, "uncertainty.dimension_distribution")?,
                        dist(&u.zero_distribution, "uncertainty.zero_distribution")?,
                        dist(&u.head_distribution, "uncertainty.head_distribution")?,
                    ],
                    coverage_factor: match &u.coverage_factor {
                        Some(k) => self.bounded(
                            k,
                            "uncertainty.coverage_factor",
                            1.0,
                            4.0,
                            false,
                            "give the coverage factor k of the expanded values, usually 2 (about 95 %)",
                        )?,
                        None => 2.0,
                    },
                }
            }
        };
        Ok(uncertainty)
    }
}
