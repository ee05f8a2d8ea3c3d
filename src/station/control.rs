//! `[control]`: the section where the flow passes critical depth, its length, how losses enter
//! (the coefficient method) and the structure family. Adding a structure family means adding a
//! function here that validates that family's keys, not editing a long one.

use std::ops::Range;

use super::raw::{RawCoefficient, RawControl, RawStation};
use super::shape::ShapeKeys;
use super::standard::Family;
use super::{Ctx, LengthUnit, StationError, ISO_4359_DISPLACEMENT_RATIO};
use crate::hydraulics::Section;
use crate::rating::{LossMethod, StructureKind};

/// What `[control]` gives the structure.
pub(super) struct ControlPart {
    pub section: Section,
    pub length_m: f64,
    pub loss: LossMethod,
    pub kind: StructureKind,
    /// A thin-plate weir's plate height p (m), which stands in for `[approach] sill_height`.
    pub plate_height_m: Option<f64>,
}

impl Ctx<'_> {
    /// Checks `[control]`.
    pub(super) fn control(&self, raw: &RawStation, unit: LengthUnit) -> Result<ControlPart, StationError> {
        let Some(control) = &raw.control else {
            return Err(self.missing(
                0..0,
                "[control]",
                "add a [control] table describing the throat or crest",
            ));
        };
        let span = control.span();
        let c = control.get_ref();
        match self.family(c)? {
            Family::CriticalFlow => {}
            Family::ThinPlate => return self.thin_plate(c, span, unit),
            Family::Parshall => return Ok(self.parshall(c, span)?.0),
            f @ (Family::SquareEdged | Family::TriangularProfile) => return self.standard_weir(c, span, unit, f),
        }
        let section = self.section(
            ShapeKeys {
                table: "control",
                span: span.clone(),
                shape: c.shape.as_ref(),
                width: c.width.as_ref(),
                side_slope: c.side_slope.as_ref(),
                diameter: c.diameter.as_ref(),
                points: c.points.as_ref(),
            },
            unit,
        )?;
        let length_m = match &c.length {
            Some(l) => self.positive_length(
                l,
                "control.length",
                unit,
                "give the crest or throat length in the flow direction",
            )?,
            None => return Err(self.missing(
                span,
                "control.length",
                "add length = the crest or throat length in the flow direction (needed for the losses and the limits)",
            )),
        };
        if let Some(r) = &c.roughness {
            return Err(self.err(
                r.span(),
                "control.roughness",
                "computing the boundary layer from a roughness height is not supported yet (its relations are not yet cited in flumerate)",
                "remove roughness and give displacement_ratio = δ*/L instead (0.003 for a well-finished throat, ISO 4359)",
            ));
        }
        let loss = self.loss(c, &section, length_m)?;
        let kind = self.structure_kind(c, &span)?;
        Ok(ControlPart {
            section,
            length_m,
            loss,
            kind,
            plate_height_m: None,
        })
    }

    /// `coefficient`: the boundary-layer method after ISO 4359 (default), ISO 4359's own
    /// formulas, or a fixed discharge coefficient.
    fn loss(&self, c: &RawControl, section: &Section, length_m: f64) -> Result<LossMethod, StationError> {
        match c.coefficient.as_ref().map(|s| (s.get_ref(), s.span())) {
            None => self.boundary_layer(c, length_m),
            Some((RawCoefficient::Text(t), _)) if t == "boundary-layer" => self.boundary_layer(c, length_m),
            Some((RawCoefficient::Text(t), span)) if t == "iso-4359" => self.iso_4359(c, span, section, length_m),
            Some((RawCoefficient::Text(t), span)) => Err(self.err(
                span,
                "control.coefficient",
                format!("unknown coefficient method \"{t}\""),
                "use coefficient = \"boundary-layer\" (default), \"iso-4359\" or a fixed discharge coefficient such as coefficient = 0.98",
            )),
            Some((RawCoefficient::Number(cd), span)) => self.fixed_cd(c, *cd, span),
        }
    }

    /// The boundary-layer method with δ*/L from `displacement_ratio` (default ISO 4359's 0.003).
    fn boundary_layer(&self, c: &RawControl, length_m: f64) -> Result<LossMethod, StationError> {
        let ratio = match &c.displacement_ratio {
            Some(d) => self.bounded(
                d,
                "control.displacement_ratio",
                0.0,
                0.02,
                false,
                "give δ*/L between 0 and 0.02; ISO 4359 uses 0.003 for a well-finished throat",
            )?,
            None => ISO_4359_DISPLACEMENT_RATIO,
        };
        Ok(LossMethod::BoundaryLayer {
            displacement_thickness_m: ratio * length_m,
        })
    }

    /// ISO 4359's own formulas: a flume with a rectangular, trapezoidal or U-shaped throat and
    /// the standard's δ* = 0.003·L.
    fn iso_4359(
        &self,
        c: &RawControl,
        span: Range<usize>,
        section: &Section,
        length_m: f64,
    ) -> Result<LossMethod, StationError> {
        if let Some(d) = &c.displacement_ratio {
            return Err(self.err(
                d.span(),
                "control.displacement_ratio",
                "ISO 4359's formula fixes δ* = 0.003·L; another displacement_ratio would no longer be the standard's",
                "remove displacement_ratio, or use coefficient = \"boundary-layer\" with it",
            ));
        }
        if c.structure.as_ref().is_some_and(|s| s.get_ref() == "weir") {
            return Err(self.err(
                span,
                "control.coefficient",
                "ISO 4359 covers flumes, not broad-crested weirs",
                "use coefficient = \"boundary-layer\" for a round-nosed weir (ISO 4374 uses the same δ* = 0.003·L, from memory)",
            ));
        }
        if !matches!(
            section,
            Section::Rectangle { .. } | Section::Trapezoid { .. } | Section::UShape { .. }
        ) {
            return Err(self.err(
                span,
                "control.coefficient",
                "ISO 4359's own formulas cover rectangular, trapezoidal and U-shaped throats only",
                "use coefficient = \"boundary-layer\" (the general method after ISO 4359) for this shape, or shape = \"u-shape\" for a U-throat",
            ));
        }
        Ok(LossMethod::Iso4359 {
            displacement_thickness_m: ISO_4359_DISPLACEMENT_RATIO * length_m,
        })
    }

    /// A fixed discharge coefficient in (0, 1.5].
    fn fixed_cd(&self, c: &RawControl, cd: f64, span: Range<usize>) -> Result<LossMethod, StationError> {
        if !(cd.is_finite() && cd > 0.0 && cd <= 1.5) {
            return Err(self.err(
                span,
                "control.coefficient",
                format!("a discharge coefficient of {cd} is out of range: it must be greater than 0 and at most 1.5"),
                "give Cd as a plain ratio, e.g. 0.98 (not a percentage)",
            ));
        }
        if let Some(d) = &c.displacement_ratio {
            return Err(self.err(
                d.span(),
                "control.displacement_ratio",
                "displacement_ratio belongs to the boundary-layer method, but coefficient is a fixed number",
                "remove displacement_ratio, or set coefficient = \"boundary-layer\"",
            ));
        }
        Ok(LossMethod::FixedCd(cd))
    }

    /// `structure`: a long-throated flume (default) or a broad-crested weir, which must say its
    /// upstream edge.
    fn structure_kind(&self, c: &RawControl, span: &Range<usize>) -> Result<StructureKind, StationError> {
        let kind = match &c.structure {
            None => StructureKind::Flume,
            Some(s) => match s.get_ref().as_str() {
                "flume" => StructureKind::Flume,
                "weir" => StructureKind::Weir,
                other => {
                    return Err(self.err(
                        s.span(),
                        "control.structure",
                        format!("unknown structure \"{other}\""),
                        "use structure = \"flume\" (long-throated flume), \"weir\" (broad-crested weir), \"thin-plate-weir\", \"parshall\" or \"triangular-profile-weir\"",
                    ))
                }
            },
        };
        self.upstream_edge(kind, c, span)?;
        Ok(kind)
    }

    /// A broad-crested weir must say its upstream edge: the critical-flow method serves a rounded
    /// nose only (Bos 1989 §4.1; ISO 4374); a square edge separates the flow and reads about 15 %
    /// lower, which needs its own coefficients (ISO 3846).
    fn upstream_edge(&self, kind: StructureKind, c: &RawControl, span: &Range<usize>) -> Result<(), StationError> {
        match (kind, &c.upstream_edge) {
            (StructureKind::Weir, None) => Err(self.missing(
                span.clone(),
                "control.upstream_edge",
                "add upstream_edge = \"rounded\" (a rounded nose, ISO 4374) or \"square\" (a square upstream corner, ISO 3846)",
            )),
            (StructureKind::Weir, Some(e)) => match e.get_ref().as_str() {
                // "square" is the ISO 3846 family, checked in standard.rs
                "rounded" | "square" => Ok(()),
                other => Err(self.err(
                    e.span(),
                    "control.upstream_edge",
                    format!("unknown upstream edge \"{other}\""),
                    "use upstream_edge = \"rounded\" or \"square\"",
                )),
            },
            (StructureKind::Flume, Some(e)) => Err(self.err(
                e.span(),
                "control.upstream_edge",
                "upstream_edge describes a broad-crested weir's crest, not a flume",
                "remove it, or set structure = \"weir\"",
            )),
            (_, _) => Ok(()),
        }
    }
}
