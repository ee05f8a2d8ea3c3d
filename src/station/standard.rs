//! `[control]` of the structures built to a standard (thin-plate weirs, Parshall flumes, the
//! square-edged and triangular-profile weirs): which family a table describes, the keys each
//! family takes (a key of another family is an error naming both), and one checking function per
//! family.

use std::ops::Range;

use super::control::ControlPart;
use super::raw::{Num, RawControl, RawStation};
use super::{Ctx, LengthUnit, StationError};
use crate::hydraulics::Section;
use crate::rating::standard::V_NOTCH_ANGLE_RANGE_DEG;
use crate::rating::{LossMethod, ParshallSize, StandardRule, StructureKind};

/// The families a `[control]` table can describe.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(super) enum Family {
    /// Long-throated flume or round-nosed weir, rated by critical-flow theory.
    CriticalFlow,
    /// ISO 3846.
    SquareEdged,
    /// ISO 1438.
    ThinPlate,
    /// ASTM D1941 / ISO 9826.
    Parshall,
    /// ISO 4360.
    TriangularProfile,
}

impl Family {
    fn words(self) -> &'static str {
        match self {
            Family::CriticalFlow => "a flume or round-nosed weir rated by critical-flow theory",
            Family::SquareEdged => "a square-edged broad-crested weir (ISO 3846)",
            Family::ThinPlate => "a thin-plate weir (structure = \"thin-plate-weir\")",
            Family::Parshall => "a Parshall flume (structure = \"parshall\")",
            Family::TriangularProfile => "a triangular-profile weir (structure = \"triangular-profile-weir\")",
        }
    }

    /// The `[control]` keys this family takes besides `structure`.
    fn keys(self) -> &'static [&'static str] {
        match self {
            Family::CriticalFlow => &[
                "shape",
                "width",
                "side_slope",
                "diameter",
                "points",
                "length",
                "coefficient",
                "displacement_ratio",
                "roughness",
                "upstream_edge",
            ],
            Family::SquareEdged => &["shape", "width", "length", "upstream_edge"],
            Family::ThinPlate => &["shape", "width", "notch_angle_deg", "plate_height"],
            Family::Parshall => &["size"],
            Family::TriangularProfile => &["shape", "width"],
        }
    }
}

/// Where a key that a family does not take belongs, for the error.
fn home_of(key: &str) -> &'static str {
    match key {
        "notch_angle_deg" | "plate_height" => "thin-plate weirs (structure = \"thin-plate-weir\")",
        "size" => "Parshall flumes (structure = \"parshall\"), whose dimensions the size fixes",
        "upstream_edge" => "broad-crested weirs (structure = \"weir\")",
        "length" => "flumes and broad-crested weirs (the throat or crest length)",
        "coefficient" | "displacement_ratio" | "roughness" => {
            "the critical-flow method of flumes and round-nosed weirs (a standard structure uses its standard's coefficient)"
        }
        "side_slope" | "diameter" | "points" => "the throat shapes of flumes rated by critical-flow theory",
        _ => "other structures (a Parshall flume's dimensions come from its size)",
    }
}

/// The keys given in `[control]` (besides `structure`), with their spans.
fn given_keys(c: &RawControl) -> Vec<(&'static str, Range<usize>)> {
    let mut v = Vec::new();
    let mut add = |name: &'static str, span: Option<Range<usize>>| {
        if let Some(s) = span {
            v.push((name, s));
        }
    };
    add("shape", c.shape.as_ref().map(|x| x.span()));
    add("width", c.width.as_ref().map(|x| x.span()));
    add("side_slope", c.side_slope.as_ref().map(|x| x.span()));
    add("diameter", c.diameter.as_ref().map(|x| x.span()));
    add("points", c.points.as_ref().map(|x| x.span()));
    add("length", c.length.as_ref().map(|x| x.span()));
    add("coefficient", c.coefficient.as_ref().map(|x| x.span()));
    add("displacement_ratio", c.displacement_ratio.as_ref().map(|x| x.span()));
    add("roughness", c.roughness.as_ref().map(|x| x.span()));
    add("upstream_edge", c.upstream_edge.as_ref().map(|x| x.span()));
    add("notch_angle_deg", c.notch_angle_deg.as_ref().map(|x| x.span()));
    add("plate_height", c.plate_height.as_ref().map(|x| x.span()));
    add("size", c.size.as_ref().map(|x| x.span()));
    v
}

impl Ctx<'_> {
    /// Which family `[control]` describes, from `structure` (and a weir's `upstream_edge`); every
    /// other key must belong to that family.
    pub(super) fn family(&self, c: &RawControl) -> Result<Family, StationError> {
        let family = match c.structure.as_ref().map(|s| (s.get_ref().as_str(), s.span())) {
            None | Some(("flume", _)) => Family::CriticalFlow,
            Some(("weir", _)) => match c.upstream_edge.as_ref().map(|e| e.get_ref().as_str()) {
                Some("square") => Family::SquareEdged,
                _ => Family::CriticalFlow,
            },
            Some(("thin-plate-weir", _)) => Family::ThinPlate,
            Some(("parshall", _)) => Family::Parshall,
            Some(("triangular-profile-weir", _)) => Family::TriangularProfile,
            Some((other, span)) => {
                return Err(self.err(
                    span,
                    "control.structure",
                    format!("unknown structure \"{other}\""),
                    "use structure = \"flume\" (long-throated flume), \"weir\" (broad-crested weir), \"thin-plate-weir\", \"parshall\" or \"triangular-profile-weir\"",
                ))
            }
        };
        for (key, span) in given_keys(c) {
            if !family.keys().contains(&key) {
                return Err(self.err(
                    span,
                    &format!("control.{key}"),
                    format!(
                        "{key} belongs to {}, but this [control] describes {}",
                        home_of(key),
                        family.words()
                    ),
                    format!("remove {key}, or change structure to the family it belongs to"),
                ));
            }
        }
        Ok(family)
    }

    /// A thin-plate weir (ISO 1438): `shape` = "triangle" (V-notch, `notch_angle_deg`),
    /// "rectangle" (`width`) or "cipoletti" (`width`, 1:4 sides), and `plate_height`.
    pub(super) fn thin_plate(
        &self,
        c: &RawControl,
        span: Range<usize>,
        unit: LengthUnit,
    ) -> Result<ControlPart, StationError> {
        let Some(shape) = &c.shape else {
            return Err(self.missing(
                span,
                "control.shape",
                "add shape = \"triangle\" (a V-notch), \"rectangle\" or \"cipoletti\" (trapezoidal, 1:4 sides)",
            ));
        };
        let width = |what: &str| -> Result<f64, StationError> {
            match &c.width {
                Some(w) => self.positive_length(w, "control.width", unit, what),
                None => Err(self.missing(span.clone(), "control.width", what)),
            }
        };
        let (section, rule) = match shape.get_ref().as_str() {
            "triangle" => {
                if let Some(w) = &c.width {
                    return Err(self.err(
                        w.span(),
                        "control.width",
                        "a V-notch is described by its angle, not a width",
                        "remove width and give notch_angle_deg (90 for the common notch)",
                    ));
                }
                let angle = self.notch_angle(c, &span)?;
                let section = Section::Triangle {
                    side_slope: (angle.to_radians() / 2.0).tan(),
                };
                (section, StandardRule::VNotch { angle_deg: angle })
            }
            "rectangle" => {
                let b = width("give the notch width b (the crest length across the flow)")?;
                (Section::Rectangle { width_m: b }, StandardRule::RectangularPlate)
            }
            "cipoletti" => {
                let b = width("give the crest width b at the bottom of the trapezoidal notch")?;
                let section = Section::Trapezoid {
                    bottom_width_m: b,
                    side_slope: 0.25,
                };
                (section, StandardRule::Cipoletti)
            }
            other => {
                return Err(self.err(
                    shape.span(),
                    "control.shape",
                    format!("a thin-plate weir has no shape \"{other}\""),
                    "use shape = \"triangle\" (a V-notch), \"rectangle\" or \"cipoletti\"",
                ))
            }
        };
        if let (Some(a), StandardRule::RectangularPlate | StandardRule::Cipoletti) = (&c.notch_angle_deg, rule) {
            return Err(self.err(
                a.span(),
                "control.notch_angle_deg",
                "notch_angle_deg describes a V-notch, but shape is not \"triangle\"",
                "remove notch_angle_deg, or set shape = \"triangle\"",
            ));
        }
        let plate = self.plate_height(c, span, unit)?;
        Ok(ControlPart {
            section,
            length_m: 0.0,
            loss: LossMethod::Standard(rule),
            kind: StructureKind::ThinPlateWeir,
            plate_height_m: Some(plate),
        })
    }

    /// `plate_height`: the crest's (or the vertex's) height above the approach bed, greater than
    /// zero (a thin-plate weir needs a pool below its crest).
    fn plate_height(&self, c: &RawControl, span: Range<usize>, unit: LengthUnit) -> Result<f64, StationError> {
        match &c.plate_height {
            Some(p) => self.positive_length(
                p,
                "control.plate_height",
                unit,
                "give the height p of the crest (or the notch's vertex) above the approach bed",
            ),
            None => Err(self.missing(
                span,
                "control.plate_height",
                "add plate_height = the height p of the crest (or the notch's vertex) above the approach bed",
            )),
        }
    }

    /// `notch_angle_deg`, within Kindsvater–Shen's 20° to 100° (ISO 1438 §10.5).
    fn notch_angle(&self, c: &RawControl, span: &Range<usize>) -> Result<f64, StationError> {
        let Some(a) = &c.notch_angle_deg else {
            return Err(self.missing(
                span.clone(),
                "control.notch_angle_deg",
                "add notch_angle_deg = the angle between the notch's sides (90 for the common notch)",
            ));
        };
        let (lo, hi) = V_NOTCH_ANGLE_RANGE_DEG;
        let v = self.number(a, "control.notch_angle_deg")?;
        if !(lo..=hi).contains(&v) {
            return Err(self.err(
                a.span(),
                "control.notch_angle_deg",
                format!("a notch angle of {v}° is outside the Kindsvater–Shen method of ISO 1438 (§10.5), which covers {lo}° to {hi}°"),
                "check the angle (degrees, between the notch's sides); a notch outside 20°–100° needs a calibration in place",
            ));
        }
        Ok(v)
    }

    /// A Parshall flume: `size`, one of the 22 standard throat widths.
    pub(super) fn parshall(
        &self,
        c: &RawControl,
        span: Range<usize>,
    ) -> Result<(ControlPart, ParshallSize), StationError> {
        let names = || {
            ParshallSize::all()
                .map(|s| s.spec().name)
                .collect::<Vec<_>>()
                .join(", ")
        };
        let Some(size) = &c.size else {
            return Err(self.missing(
                span,
                "control.size",
                &format!("add size = the standard throat width, one of {}", names()),
            ));
        };
        let Some(s) = ParshallSize::from_name(size.get_ref()) else {
            return Err(self.err(
                size.span(),
                "control.size",
                format!(
                    "\"{}\" is not a standard Parshall throat width: the published ratings (ASTM D1941, ISO 9826) cover only the standard sizes",
                    size.get_ref()
                ),
                format!(
                    "use one of {}; a non-standard flume needs its own calibration (rate it from gaugings)",
                    names()
                ),
            ));
        };
        let spec = s.spec();
        Ok((
            ControlPart {
                section: Section::Rectangle { width_m: s.throat_m() },
                length_m: spec.dims_ft.f * crate::rating::standard::FOOT_M,
                loss: LossMethod::Standard(StandardRule::Parshall(s)),
                kind: StructureKind::Parshall,
                plate_height_m: None,
            },
            s,
        ))
    }

    /// A rectangular crest `width` wide: the triangular-profile weir (ISO 4360) or, with
    /// `length`, the square-edged broad-crested weir (ISO 3846).
    pub(super) fn standard_weir(
        &self,
        c: &RawControl,
        span: Range<usize>,
        unit: LengthUnit,
        family: Family,
    ) -> Result<ControlPart, StationError> {
        if let Some(shape) = &c.shape {
            if shape.get_ref() != "rectangle" {
                return Err(self.err(
                    shape.span(),
                    "control.shape",
                    format!(
                        "{} has a rectangular crest, not \"{}\"",
                        family.words(),
                        shape.get_ref()
                    ),
                    "use shape = \"rectangle\" (or leave shape out)",
                ));
            }
        }
        let width_m = match &c.width {
            Some(w) => self.positive_length(w, "control.width", unit, "give the crest width b")?,
            None => return Err(self.missing(span, "control.width", "add width = the crest width b")),
        };
        let (length_m, rule, kind) = match family {
            Family::SquareEdged => {
                let l = self.required_length(c.length.as_ref(), &span, unit)?;
                (l, StandardRule::SquareEdged, StructureKind::SquareEdgedWeir)
            }
            _ => (
                0.0,
                StandardRule::TriangularProfile,
                StructureKind::TriangularProfileWeir,
            ),
        };
        Ok(ControlPart {
            section: Section::Rectangle { width_m },
            length_m,
            loss: LossMethod::Standard(rule),
            kind,
            plate_height_m: None,
        })
    }

    fn required_length(&self, l: Option<&Num>, span: &Range<usize>, unit: LengthUnit) -> Result<f64, StationError> {
        match l {
            Some(l) => self.positive_length(l, "control.length", unit, "give the crest length L in the flow direction"),
            None => Err(self.missing(
                span.clone(),
                "control.length",
                "add length = the crest length L in the flow direction (ISO 3846's coefficient holds for 0.08 ≤ h1/L ≤ 0.33)",
            )),
        }
    }

    /// The approach of a thin-plate weir: `[approach]` with its shape and width (B), the plate
    /// height coming from `[control] plate_height`.
    pub(super) fn plate_approach(
        &self,
        raw: &RawStation,
        unit: LengthUnit,
        plate_m: f64,
    ) -> Result<(Section, f64, f64), StationError> {
        let Some(approach) = &raw.approach else {
            return Err(self.missing(
                0..0,
                "[approach]",
                "add an [approach] table: shape = \"rectangle\" and width = the channel width B at the plate",
            ));
        };
        if let Some(p) = &approach.get_ref().sill_height {
            return Err(self.err(
                p.span(),
                "approach.sill_height",
                "a thin-plate weir's crest height is [control] plate_height; approach.sill_height would give it twice",
                "remove approach.sill_height",
            ));
        }
        let (section, alpha) = self.approach_section(approach, unit)?;
        Ok((section, plate_m, alpha))
    }

    /// A Parshall flume's approach: its own entrance (width D, floor at the crest), from the
    /// standard dimensions; an `[approach]` table would contradict them.
    pub(super) fn parshall_approach(
        &self,
        raw: &RawStation,
        size: ParshallSize,
    ) -> Result<(Section, f64, f64), StationError> {
        if let Some(a) = &raw.approach {
            return Err(self.err(
                a.span(),
                "[approach]",
                "a Parshall flume's rating includes its own converging entrance: an [approach] table does not apply",
                "remove the [approach] table",
            ));
        }
        let d = size.spec().dims_ft.d * crate::rating::standard::FOOT_M;
        Ok((Section::Rectangle { width_m: d }, 0.0, 1.0))
    }
}
