//! Cross-sections in station files: the shape keys shared by `[control]`, `[approach]` and
//! `[tailwater]`, checked into a [`Section`] in metres. Each shape allows its own keys; a key of
//! another shape is an error that says which shape it belongs to.

use std::ops::Range;

use toml::Spanned;

use super::raw::{Num, Text};
use super::{Ctx, LengthUnit, StationError, MAX_POINTS};
use crate::hydraulics::{PointsSection, Section};

/// The shape keys shared by `[control]`, `[approach]` and `[tailwater]`.
pub(super) struct ShapeKeys<'a> {
    pub table: &'static str,
    pub span: Range<usize>,
    pub shape: Option<&'a Text>,
    pub width: Option<&'a Num>,
    pub side_slope: Option<&'a Num>,
    pub diameter: Option<&'a Num>,
    pub points: Option<&'a Spanned<Vec<Vec<f64>>>>,
}

/// The keys each shape takes, and for each key it does not take, the hint in its error.
fn allowed(shape: &str) -> Option<&'static [&'static str]> {
    Some(match shape {
        "rectangle" => &["width"],
        "trapezoid" => &["width", "side_slope"],
        "triangle" => &["side_slope"],
        "circle" | "u-shape" => &["diameter"],
        "points" => &["points"],
        _ => return None,
    })
}

/// What to do instead when `key` is given for `shape`, which does not take it.
fn hint(shape: &str, key: &str) -> &'static str {
    match (shape, key) {
        ("rectangle", "side_slope") => "use shape = \"trapezoid\"",
        ("triangle", "width") => "use shape = \"trapezoid\" for a flat bed",
        ("u-shape", "width") => "give only diameter (the walls stand one diameter apart)",
        ("circle" | "u-shape", _) => "give only diameter",
        ("points", _) => "describe the section by its points only",
        (_, "diameter") => "use shape = \"circle\"",
        (_, "points") => "use shape = \"points\"",
        _ => "remove it",
    }
}

impl Ctx<'_> {
    /// The section a table's shape keys describe, in metres.
    pub(super) fn section(&self, k: ShapeKeys, unit: LengthUnit) -> Result<Section, StationError> {
        let key = |name: &str| format!("{}.{name}", k.table);
        let Some(shape) = k.shape else {
            return Err(self.missing(
                k.span.clone(),
                &key("shape"),
                "add shape = \"rectangle\", \"trapezoid\", \"triangle\", \"circle\", \"u-shape\" or \"points\"",
            ));
        };
        let name = shape.get_ref().as_str();
        let Some(keys) = allowed(name) else {
            return Err(self.err(
                shape.span(),
                &key("shape"),
                format!("unknown shape \"{name}\""),
                "use one of \"rectangle\", \"trapezoid\", \"triangle\", \"circle\", \"u-shape\", \"points\"",
            ));
        };
        let given: [(&str, Option<Range<usize>>); 4] = [
            ("width", k.width.map(|v| v.span())),
            ("side_slope", k.side_slope.map(|v| v.span())),
            ("diameter", k.diameter.map(|v| v.span())),
            ("points", k.points.map(|v| v.span())),
        ];
        for (what, span) in given {
            if let (Some(span), false) = (span, keys.contains(&what)) {
                return Err(self.err(
                    span,
                    &key(what),
                    format!("`{what}` is not used by shape \"{name}\""),
                    format!("remove it, or {}", hint(name, what)),
                ));
            }
        }
        let need = |v: Option<&Num>, what: &str, fix: &str| -> Result<f64, StationError> {
            match v {
                Some(n) => self.positive_length(n, &key(what), unit, fix),
                None => Err(self.missing(k.span.clone(), &key(what), fix)),
            }
        };
        Ok(match name {
            "rectangle" => Section::Rectangle {
                width_m: need(k.width, "width", "give the width between the walls, e.g. width = 0.60")?,
            },
            "trapezoid" => Section::Trapezoid {
                bottom_width_m: need(k.width, "width", "give the bed (bottom) width, e.g. width = 0.60")?,
                side_slope: self.side_slope(&k, true)?,
            },
            "triangle" => Section::Triangle {
                side_slope: self.side_slope(&k, false)?,
            },
            "circle" => Section::Circle {
                diameter_m: need(k.diameter, "diameter", "give the inside diameter, e.g. diameter = 0.45")?,
            },
            "u-shape" => Section::UShape {
                diameter_m: need(
                    k.diameter,
                    "diameter",
                    "give the diameter of the semicircular bottom, e.g. diameter = 0.45",
                )?,
            },
            _ => {
                let Some(pts) = k.points else {
                    return Err(self.missing(
                        k.span.clone(),
                        &key("points"),
                        "give points = [[offset, height], ...] from left bank to right bank, heights above the lowest point",
                    ));
                };
                self.points(pts, &key("points"), unit)?
            }
        })
    }

    /// A side slope (horizontal per 1 vertical): zero allowed for a trapezoid (a rectangle), not
    /// for a triangle.
    fn side_slope(&self, k: &ShapeKeys, allow_zero: bool) -> Result<f64, StationError> {
        let key = format!("{}.side_slope", k.table);
        let fix = "give the side slope as horizontal per 1 vertical, e.g. side_slope = 1.5";
        let Some(n) = k.side_slope else {
            return Err(self.missing(k.span.clone(), &key, fix));
        };
        let s = self.number(n, &key)?;
        if s > 0.0 || (allow_zero && s == 0.0) {
            return Ok(s);
        }
        let rule = if allow_zero {
            "zero or more"
        } else {
            "greater than zero"
        };
        Err(self.err(n.span(), &key, format!("side slope {s} must be {rule}"), fix))
    }

    fn points(&self, pts: &Spanned<Vec<Vec<f64>>>, key: &str, unit: LengthUnit) -> Result<Section, StationError> {
        let span = pts.span();
        let list = self.pairs(pts, key, "give each point as [offset, height]")?;
        if list.len() > MAX_POINTS {
            return Err(self.err(
                span,
                key,
                format!(
                    "{} points are more than the {MAX_POINTS} a section may have",
                    list.len()
                ),
                "thin the survey: points closer than a centimetre or on a straight line add nothing",
            ));
        }
        if list.len() < 3 {
            return Err(self.err(
                span,
                key,
                format!(
                    "{} point(s) cannot describe a section: at least 3 are needed",
                    list.len()
                ),
                "list the left bank top, the bed points and the right bank top",
            ));
        }
        for (i, p) in list.iter().enumerate() {
            if !(p[0].is_finite() && p[1].is_finite()) {
                return Err(self.err(
                    span,
                    key,
                    format!("point {} is not finite", i + 1),
                    "give ordinary numbers",
                ));
            }
            if i > 0 && p[0] < list[i - 1][0] {
                return Err(self.err(
                    span,
                    key,
                    format!(
                        "point {} has offset {} after offset {}: offsets must not decrease",
                        i + 1,
                        p[0],
                        list[i - 1][0]
                    ),
                    "order the points from the left bank to the right bank; a vertical wall repeats an offset",
                ));
            }
        }
        let lowest = list.iter().map(|p| p[1]).fold(f64::INFINITY, f64::min);
        if lowest.abs() > 1e-9 {
            return Err(self.err(
                span,
                key,
                format!("the lowest point has height {lowest}, but heights are measured above the crest"),
                format!("subtract {lowest} from every height so the lowest point is at 0"),
            ));
        }
        let m = unit.metres();
        let scaled: Vec<(f64, f64)> = list.iter().map(|p| (p[0] * m, p[1] * m)).collect();
        PointsSection::new(&scaled)
            .map(Section::Points)
            .map_err(|e| self.err(span, key, e.to_string(), "check the surveyed points"))
    }
}
