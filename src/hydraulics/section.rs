//! Cross-section geometry: flow area, top width and wetted perimeter as functions of depth.
//!
//! Depths are measured from the lowest point of the section (the crest or invert). Formulas:
//! rectangle, trapezoid and triangle are elementary geometry (Chow 1959, *Open-Channel
//! Hydraulics*, table 2-1); the circle uses the central angle θ of the wetted arc,
//! A = D²(θ − sin θ)/8, T = D·sin(θ/2), P = D·θ/2, y = (D/2)(1 − cos(θ/2)) (Chow 1959 table 2-1);
//! a surveyed `points` section is integrated exactly piece by piece, since between two vertex
//! heights its top width varies linearly with depth.

use std::f64::consts::PI;

/// A surveyed section given as (offset, height) vertices could not be used.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum GeometryError {
    /// Fewer than three distinct vertices.
    #[error("a surveyed section needs at least 3 points (two banks and a bed); got {count}")]
    TooFewPoints {
        /// Number of points given.
        count: usize,
    },
    /// A coordinate is NaN or infinite.
    #[error("point {index} is not a finite number")]
    NotFinite {
        /// Zero-based index of the point.
        index: usize,
    },
    /// Offsets must not decrease from one point to the next (equal offsets make a vertical wall).
    #[error(
        "point {index} has offset {offset} below the previous offset {previous}: offsets must not decrease from left bank to right bank"
    )]
    OffsetDecreases {
        /// Zero-based index of the offending point.
        index: usize,
        /// Its offset.
        offset: f64,
        /// The offset of the point before it.
        previous: f64,
    },
    /// The section has no width at any depth.
    #[error("the section has no width: all points share one offset")]
    NoWidth,
    /// A dimension that must be positive is not.
    #[error("{what} must be greater than zero (got {value})")]
    NotPositive {
        /// Which dimension.
        what: &'static str,
        /// The value given.
        value: f64,
    },
    /// Moving the boundary inward by the boundary-layer displacement thickness left no section.
    #[error(
        "the boundary-layer displacement thickness {thickness_m} m leaves no flow section: the control is too small for this method"
    )]
    OffsetTooLarge {
        /// Displacement thickness in metres.
        thickness_m: f64,
    },
}

/// One horizontal slice of a `points` section between two consecutive vertex heights, in which
/// top width and wetted perimeter vary linearly with depth.
#[derive(Debug, Clone, Copy, PartialEq)]
struct Band {
    /// Depth at the bottom of the slice (m).
    y0: f64,
    /// Depth at the top of the slice (m); infinite for the last one.
    y1: f64,
    /// Flow area at `y0` (m²).
    a0: f64,
    /// Top width just above `y0` (m).
    t0: f64,
    /// dT/dy inside the slice.
    kt: f64,
    /// Wetted perimeter just above `y0` (m).
    p0: f64,
    /// dP/dy inside the slice.
    kp: f64,
}

/// A surveyed cross-section: (offset, height) vertices from the left bank to the right bank,
/// open at the top. Above the lower of the two end points the section is continued with vertical
/// walls at the end offsets, and [`PointsSection::surveyed_top_m`] tells how far the survey goes.
#[derive(Debug, Clone, PartialEq)]
pub struct PointsSection {
    points: Vec<(f64, f64)>,
    bands: Vec<Band>,
    surveyed_top_m: f64,
}

/// The slice of a surveyed section starting at height `y0` (a vertex height): top width `t0`
/// and wetted perimeter `p0` at `y0`, and their growth per metre of depth `kt`, `kp` within the
/// slice. `ends` are the heights of the two end points, above which vertical walls continue the
/// section.
fn slice_at(pts: &[(f64, f64)], ends: [f64; 2], y0: f64) -> (f64, f64, f64, f64) {
    let (mut t0, mut kt, mut p0, mut kp) = (0.0, 0.0, 0.0, 0.0);
    for s in pts.windows(2) {
        let ((x1, z1), (x2, z2)) = (s[0], s[1]);
        let dx = x2 - x1;
        let len = dx.hypot(z2 - z1);
        let (zlo, zhi) = (z1.min(z2), z1.max(z2));
        if zhi <= y0 {
            // wholly below the slice (a flat segment at y0 is wet just above y0)
            t0 += dx;
            p0 += len;
        } else if zlo <= y0 {
            // crosses the whole slice: vertex heights are slice boundaries
            let frac = (y0 - zlo) / (zhi - zlo);
            t0 += dx * frac;
            p0 += len * frac;
            kt += dx / (zhi - zlo);
            kp += len / (zhi - zlo);
        }
    }
    // vertical walls continue the section above each end point
    for end in ends {
        if end <= y0 {
            p0 += y0 - end;
            kp += 1.0;
        }
    }
    (t0, kt, p0, kp)
}

impl PointsSection {
    /// Builds the section from (offset, height) pairs in metres. Heights are taken relative to the
    /// lowest point, so depth 0 is the lowest vertex.
    pub fn new(points: &[(f64, f64)]) -> Result<Self, GeometryError> {
        let pts = Self::checked_vertices(points)?;
        let (first, last) = (pts[0], pts[pts.len() - 1]);
        let zmin = pts.iter().map(|p| p.1).fold(f64::INFINITY, f64::min);
        let pts: Vec<(f64, f64)> = pts.iter().map(|&(x, z)| (x, z - zmin)).collect();
        let ends = [first.1 - zmin, last.1 - zmin];

        let mut heights: Vec<f64> = pts.iter().map(|p| p.1).collect();
        heights.sort_by(f64::total_cmp);
        heights.dedup();
        let mut bands = Vec::with_capacity(heights.len());
        let mut area = 0.0;
        for (i, &y0) in heights.iter().enumerate() {
            let y1 = heights.get(i + 1).copied().unwrap_or(f64::INFINITY);
            let (t0, kt, p0, kp) = slice_at(&pts, ends, y0);
            bands.push(Band {
                y0,
                y1,
                a0: area,
                t0,
                kt,
                p0,
                kp,
            });
            if y1.is_finite() {
                let du = y1 - y0;
                area += t0 * du + 0.5 * kt * du * du;
            }
        }
        Ok(Self {
            surveyed_top_m: ends[0].min(ends[1]),
            points: pts,
            bands,
        })
    }

    /// The surveyed vertices, finite, left to right, repeats removed, at least three and with
    /// some width.
    fn checked_vertices(points: &[(f64, f64)]) -> Result<Vec<(f64, f64)>, GeometryError> {
        for (index, &(x, z)) in points.iter().enumerate() {
            if !x.is_finite() || !z.is_finite() {
                return Err(GeometryError::NotFinite { index });
            }
        }
        for (index, w) in points.windows(2).enumerate() {
            if w[1].0 < w[0].0 {
                return Err(GeometryError::OffsetDecreases {
                    index: index + 1,
                    offset: w[1].0,
                    previous: w[0].0,
                });
            }
        }
        // Repeated vertices add nothing and would give zero-length segments.
        let mut pts: Vec<(f64, f64)> = Vec::with_capacity(points.len());
        for &p in points {
            if pts.last() != Some(&p) {
                pts.push(p);
            }
        }
        if pts.len() < 3 {
            return Err(GeometryError::TooFewPoints { count: pts.len() });
        }
        if pts[pts.len() - 1].0 - pts[0].0 <= 0.0 {
            return Err(GeometryError::NoWidth);
        }
        Ok(pts)
    }

    /// The vertices, with heights measured from the lowest one (m).
    pub fn points(&self) -> &[(f64, f64)] {
        &self.points
    }

    /// Depth up to which the survey defines the section: the lower of the two end points (m).
    pub fn surveyed_top_m(&self) -> f64 {
        self.surveyed_top_m
    }

    fn band(&self, depth_m: f64) -> &Band {
        let i = self.bands.partition_point(|b| b.y0 <= depth_m);
        &self.bands[i.saturating_sub(1)]
    }

    fn area_m2(&self, y: f64) -> f64 {
        let b = self.band(y);
        let u = y - b.y0;
        b.a0 + b.t0 * u + 0.5 * b.kt * u * u
    }

    fn top_width_m(&self, y: f64) -> f64 {
        let b = self.band(y);
        b.t0 + b.kt * (y - b.y0)
    }

    fn wetted_perimeter_m(&self, y: f64) -> f64 {
        let b = self.band(y);
        b.p0 + b.kp * (y - b.y0)
    }

    /// The slices as `(y0, y1, a0, t0, kt)`: flow area `a0` and top width `t0` at `y0`, and the
    /// rate `kt` at which the top width grows inside the slice.
    pub(crate) fn slices(&self) -> impl Iterator<Item = (f64, f64, f64, f64, f64)> + '_ {
        self.bands.iter().map(|b| (b.y0, b.y1, b.a0, b.t0, b.kt))
    }

    /// The section whose boundary lies `thickness_m` further into the water along every wetted
    /// segment (mitred at the vertices), and the height of its lowest point above the original one.
    fn offset_inward(&self, thickness_m: f64) -> Result<(Section, f64), GeometryError> {
        let pts = &self.points;
        // unit normals pointing into the water: the segment direction turned +90°
        let normals: Vec<(f64, f64)> = pts
            .windows(2)
            .map(|s| {
                let (dx, dz) = (s[1].0 - s[0].0, s[1].1 - s[0].1);
                let len = dx.hypot(dz);
                (-dz / len, dx / len)
            })
            .collect();
        let mut out = Vec::with_capacity(pts.len());
        for (i, &(x, z)) in pts.iter().enumerate() {
            let (nx, nz) = if i == 0 {
                normals[0]
            } else if i == pts.len() - 1 {
                normals[i - 1]
            } else {
                let (a, b) = (normals[i - 1], normals[i]);
                let cos = a.0 * b.0 + a.1 * b.1;
                if cos <= -0.999 {
                    return Err(GeometryError::OffsetTooLarge { thickness_m });
                }
                ((a.0 + b.0) / (1.0 + cos), (a.1 + b.1) / (1.0 + cos))
            };
            out.push((x + thickness_m * nx, z + thickness_m * nz));
        }
        let rise = out.iter().map(|p| p.1).fold(f64::INFINITY, f64::min);
        let section = PointsSection::new(&out).map_err(|_| GeometryError::OffsetTooLarge { thickness_m })?;
        Ok((Section::Points(section), rise))
    }
}

/// A channel or control cross-section. All dimensions in metres.
#[derive(Debug, Clone, PartialEq)]
#[non_exhaustive]
pub enum Section {
    /// Vertical walls, flat bed.
    Rectangle {
        /// Bed width (m).
        width_m: f64,
    },
    /// Flat bed with equal side slopes.
    Trapezoid {
        /// Bed width (m).
        bottom_width_m: f64,
        /// Horizontal per 1 vertical.
        side_slope: f64,
    },
    /// A V-section with equal side slopes.
    Triangle {
        /// Horizontal per 1 vertical.
        side_slope: f64,
    },
    /// A circular pipe, at any fill up to full (below half full it is also a U-throat).
    Circle {
        /// Internal diameter (m).
        diameter_m: f64,
    },
    /// A U-shaped throat (ISO 4359): a semicircular bottom of diameter D continued upward by
    /// vertical walls D apart.
    UShape {
        /// Diameter of the bottom and distance between the walls (m).
        diameter_m: f64,
    },
    /// A surveyed section.
    Points(PointsSection),
}

impl Section {
    /// Checks that the dimensions describe a real section.
    pub fn validate(&self) -> Result<(), GeometryError> {
        let positive = |what, value: f64| {
            if value.is_finite() && value > 0.0 {
                Ok(())
            } else {
                Err(GeometryError::NotPositive { what, value })
            }
        };
        match *self {
            Section::Rectangle { width_m } => positive("width", width_m),
            Section::Trapezoid {
                bottom_width_m,
                side_slope,
            } => {
                if !(bottom_width_m.is_finite() && bottom_width_m >= 0.0) {
                    return Err(GeometryError::NotPositive {
                        what: "bottom width",
                        value: bottom_width_m,
                    });
                }
                if !(side_slope.is_finite() && side_slope >= 0.0) || bottom_width_m + side_slope <= 0.0 {
                    return Err(GeometryError::NotPositive {
                        what: "side slope",
                        value: side_slope,
                    });
                }
                Ok(())
            }
            Section::Triangle { side_slope } => positive("side slope", side_slope),
            Section::Circle { diameter_m } | Section::UShape { diameter_m } => positive("diameter", diameter_m),
            Section::Points(_) => Ok(()),
        }
    }

    /// Flow area (m²) at `depth_m` above the lowest point.
    pub fn area_m2(&self, depth_m: f64) -> f64 {
        if depth_m <= 0.0 {
            return 0.0;
        }
        let y = depth_m;
        match self {
            Section::Rectangle { width_m } => width_m * y,
            Section::Trapezoid {
                bottom_width_m,
                side_slope,
            } => (bottom_width_m + side_slope * y) * y,
            Section::Triangle { side_slope } => side_slope * y * y,
            Section::Circle { diameter_m } => {
                let d = *diameter_m;
                if y >= d {
                    PI * d * d / 4.0
                } else {
                    let theta = circle_angle(y, d);
                    d * d * (theta - theta.sin()) / 8.0
                }
            }
            Section::UShape { diameter_m } => {
                let (d, r) = (*diameter_m, 0.5 * diameter_m);
                if y <= r {
                    let theta = circle_angle(y, d);
                    d * d * (theta - theta.sin()) / 8.0
                } else {
                    PI * r * r / 2.0 + d * (y - r)
                }
            }
            Section::Points(p) => p.area_m2(y),
        }
    }

    /// Width of the water surface (m) at `depth_m`; zero for a full pipe.
    pub fn top_width_m(&self, depth_m: f64) -> f64 {
        if depth_m <= 0.0 {
            return match self {
                Section::Rectangle { width_m } => *width_m,
                Section::Trapezoid { bottom_width_m, .. } => *bottom_width_m,
                Section::Points(p) => p.top_width_m(0.0),
                _ => 0.0,
            };
        }
        let y = depth_m;
        match self {
            Section::Rectangle { width_m } => *width_m,
            Section::Trapezoid {
                bottom_width_m,
                side_slope,
            } => bottom_width_m + 2.0 * side_slope * y,
            Section::Triangle { side_slope } => 2.0 * side_slope * y,
            Section::Circle { diameter_m } => {
                if y >= *diameter_m {
                    0.0
                } else {
                    diameter_m * (circle_angle(y, *diameter_m) / 2.0).sin()
                }
            }
            Section::UShape { diameter_m } => {
                if y >= 0.5 * diameter_m {
                    *diameter_m
                } else {
                    diameter_m * (circle_angle(y, *diameter_m) / 2.0).sin()
                }
            }
            Section::Points(p) => p.top_width_m(y),
        }
    }

    /// Wetted perimeter (m) at `depth_m`.
    pub fn wetted_perimeter_m(&self, depth_m: f64) -> f64 {
        if depth_m <= 0.0 {
            return 0.0;
        }
        let y = depth_m;
        match self {
            Section::Rectangle { width_m } => width_m + 2.0 * y,
            Section::Trapezoid {
                bottom_width_m,
                side_slope,
            } => bottom_width_m + 2.0 * y * (1.0 + side_slope * side_slope).sqrt(),
            Section::Triangle { side_slope } => 2.0 * y * (1.0 + side_slope * side_slope).sqrt(),
            Section::Circle { diameter_m } => {
                if y >= *diameter_m {
                    PI * diameter_m
                } else {
                    diameter_m * circle_angle(y, *diameter_m) / 2.0
                }
            }
            Section::UShape { diameter_m } => {
                let r = 0.5 * diameter_m;
                if y <= r {
                    diameter_m * circle_angle(y, *diameter_m) / 2.0
                } else {
                    PI * r + 2.0 * (y - r)
                }
            }
            Section::Points(p) => p.wetted_perimeter_m(y),
        }
    }

    /// Hydraulic radius A/P (m).
    pub fn hydraulic_radius_m(&self, depth_m: f64) -> f64 {
        let p = self.wetted_perimeter_m(depth_m);
        if p > 0.0 {
            self.area_m2(depth_m) / p
        } else {
            0.0
        }
    }

    /// The depth above which the section is closed (a full pipe), if any.
    pub fn full_depth_m(&self) -> Option<f64> {
        match self {
            Section::Circle { diameter_m } => Some(*diameter_m),
            _ => None,
        }
    }

    /// The depth up to which the section is defined by the survey, if it is a surveyed section.
    pub fn surveyed_top_m(&self) -> Option<f64> {
        match self {
            Section::Points(p) => Some(p.surveyed_top_m()),
            _ => None,
        }
    }

    /// The width that governs the boundary-layer reduction and the width limits: bed width for a
    /// rectangle or trapezoid, diameter for a circle, top width at the survey top otherwise (m).
    pub fn characteristic_width_m(&self) -> f64 {
        match self {
            Section::Rectangle { width_m } => *width_m,
            Section::Trapezoid { bottom_width_m, .. } => *bottom_width_m,
            Section::Triangle { .. } => 0.0,
            Section::Circle { diameter_m } | Section::UShape { diameter_m } => *diameter_m,
            Section::Points(p) => p.top_width_m(p.surveyed_top_m()),
        }
    }

    /// The effective section of the boundary-layer method: every wetted boundary moved into the
    /// water by the displacement thickness δ* (ISO 4359 applies δ* to the throat width and depth;
    /// Ackers, White, Perkins & Harrison 1978, *Weirs and Flumes for Flow Measurement*). Returns
    /// the section and the height of its lowest point above the original crest.
    ///
    /// For a trapezoid of bed width b and side slope m this gives b_e = b − 2δ*(√(1+m²) − m) with
    /// the same side slope, raised by δ* (geometry; for m = 0 it is ISO 4359's b − 2δ*).
    pub fn offset_inward(&self, thickness_m: f64) -> Result<(Section, f64), GeometryError> {
        let d = thickness_m;
        let too_large = GeometryError::OffsetTooLarge { thickness_m };
        let (section, rise) = match self {
            Section::Rectangle { width_m } => (
                Section::Rectangle {
                    width_m: width_m - 2.0 * d,
                },
                d,
            ),
            Section::Trapezoid {
                bottom_width_m,
                side_slope: m,
            } => {
                let b = bottom_width_m - 2.0 * d * ((1.0 + m * m).sqrt() - m);
                if b < 0.0 {
                    return Err(too_large);
                }
                (
                    Section::Trapezoid {
                        bottom_width_m: b,
                        side_slope: *m,
                    },
                    d,
                )
            }
            Section::Triangle { side_slope: m } => (Section::Triangle { side_slope: *m }, d * (1.0 + m * m).sqrt() / m),
            Section::Circle { diameter_m } => (
                Section::Circle {
                    diameter_m: diameter_m - 2.0 * d,
                },
                d,
            ),
            Section::UShape { diameter_m } => (
                Section::UShape {
                    diameter_m: diameter_m - 2.0 * d,
                },
                d,
            ),
            Section::Points(p) => return p.offset_inward(d),
        };
        section.validate().map_err(|_| too_large)?;
        Ok((section, rise))
    }

    /// The section with its width scaled by `factor`: the width of a rectangle, the bed width of
    /// a trapezoid, the side slope of a triangle (its width at any depth), the diameter of a
    /// circle, the offsets of a surveyed section. Used to propagate a width uncertainty.
    pub fn scaled_width(&self, factor: f64) -> Section {
        match self {
            Section::Rectangle { width_m } => Section::Rectangle {
                width_m: width_m * factor,
            },
            Section::Trapezoid {
                bottom_width_m,
                side_slope,
            } => Section::Trapezoid {
                bottom_width_m: bottom_width_m * factor,
                side_slope: *side_slope,
            },
            Section::Triangle { side_slope } => Section::Triangle {
                side_slope: side_slope * factor,
            },
            Section::Circle { diameter_m } => Section::Circle {
                diameter_m: diameter_m * factor,
            },
            Section::UShape { diameter_m } => Section::UShape {
                diameter_m: diameter_m * factor,
            },
            Section::Points(p) => {
                let pts: Vec<(f64, f64)> = p.points().iter().map(|&(x, z)| (x * factor, z)).collect();
                Section::Points(PointsSection::new(&pts).expect("scaling offsets keeps a valid section valid"))
            }
        }
    }

    /// A short human description, with dimensions in the given length unit.
    pub fn describe(&self, unit: &str, per_m: f64) -> String {
        let l = |v: f64| format!("{:.4} {unit}", v * per_m);
        match self {
            Section::Rectangle { width_m } => format!("rectangle, width {}", l(*width_m)),
            Section::Trapezoid {
                bottom_width_m,
                side_slope,
            } => format!(
                "trapezoid, bed width {}, side slope {side_slope}:1 (H:V)",
                l(*bottom_width_m)
            ),
            Section::Triangle { side_slope } => format!("triangle (V), side slope {side_slope}:1 (H:V)"),
            Section::Circle { diameter_m } => format!("circle, diameter {}", l(*diameter_m)),
            Section::UShape { diameter_m } => format!("U-shape, diameter {}", l(*diameter_m)),
            Section::Points(p) => format!(
                "surveyed section, {} points, surveyed to {} above the lowest point",
                p.points().len(),
                l(p.surveyed_top_m())
            ),
        }
    }
}

/// Central angle θ (rad) of the wetted arc of a circle of diameter `d` filled to depth `y`:
/// y = (D/2)(1 − cos(θ/2)).
fn circle_angle(y: f64, d: f64) -> f64 {
    2.0 * (1.0 - 2.0 * y / d).clamp(-1.0, 1.0).acos()
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn circle_matches_closed_form_at_half_and_full() {
        // analytic: half-full circle A = πD²/8, T = D, P = πD/2
        let c = Section::Circle { diameter_m: 2.0 };
        assert_relative_eq!(c.area_m2(1.0), PI / 2.0, max_relative = 1e-14);
        assert_relative_eq!(c.top_width_m(1.0), 2.0, max_relative = 1e-14);
        assert_relative_eq!(c.wetted_perimeter_m(1.0), PI, max_relative = 1e-14);
        assert_relative_eq!(c.area_m2(2.0), PI, max_relative = 1e-14);
        assert!(c.top_width_m(2.0).abs() < 1e-12);
    }

    #[test]
    fn circle_matches_reference_critical_section() {
        // docs/references.md C1 (independent computation): D = 1 m, y_c = 0.3988767311 m → A_c = 0.2922695 m², T_c = 0.9793346 m
        let c = Section::Circle { diameter_m: 1.0 };
        assert_relative_eq!(c.area_m2(0.3988767311), 0.2922695, max_relative = 1e-6);
        assert_relative_eq!(c.top_width_m(0.3988767311), 0.9793346, max_relative = 1e-6);
    }

    #[test]
    fn points_trapezoid_equals_built_in_trapezoid() {
        let p =
            Section::Points(PointsSection::new(&[(-2.0, 1.0), (-1.0, 0.0), (1.0, 0.0), (2.0, 1.0)]).expect("valid"));
        let t = Section::Trapezoid {
            bottom_width_m: 2.0,
            side_slope: 1.0,
        };
        for y in [0.01, 0.3, 0.99, 1.0, 1.7] {
            let (a, b) = if y <= 1.0 {
                (p.area_m2(y), t.area_m2(y))
            } else {
                // above the survey the points section continues with vertical walls
                (p.area_m2(y), t.area_m2(1.0) + 4.0 * (y - 1.0))
            };
            assert_relative_eq!(a, b, max_relative = 1e-14);
        }
        assert_relative_eq!(p.top_width_m(0.5), t.top_width_m(0.5), max_relative = 1e-14);
        assert_relative_eq!(
            p.wetted_perimeter_m(0.5),
            t.wetted_perimeter_m(0.5),
            max_relative = 1e-14
        );
    }

    #[test]
    fn points_compound_section_with_flat_berm() {
        // main channel 2 m wide, 1 m deep, berms 3 m each side at height 1, banks vertical to 2 m
        let p = PointsSection::new(&[
            (-4.0, 2.0),
            (-4.0, 1.0),
            (-1.0, 1.0),
            (-1.0, 0.0),
            (1.0, 0.0),
            (1.0, 1.0),
            (4.0, 1.0),
            (4.0, 2.0),
        ])
        .expect("valid");
        let s = Section::Points(p);
        assert_relative_eq!(s.top_width_m(0.5), 2.0, max_relative = 1e-14);
        assert_relative_eq!(s.top_width_m(1.5), 8.0, max_relative = 1e-14);
        assert_relative_eq!(s.area_m2(1.5), 2.0 + 8.0 * 0.5, max_relative = 1e-14);
        assert_relative_eq!(s.wetted_perimeter_m(1.5), 2.0 + 2.0 + 6.0 + 1.0, max_relative = 1e-14);
    }

    #[test]
    fn points_reject_decreasing_offsets() {
        let err = PointsSection::new(&[(0.0, 1.0), (1.0, 0.0), (0.5, 1.0)]).unwrap_err();
        assert!(matches!(err, GeometryError::OffsetDecreases { index: 2, .. }));
    }

    #[test]
    fn offset_rectangle_drawn_as_points_matches_rectangle_offset() {
        let pts = PointsSection::new(&[(-0.25, 0.8), (-0.25, 0.0), (0.25, 0.0), (0.25, 0.8)]).expect("valid");
        let (eff, rise) = Section::Points(pts).offset_inward(0.003).expect("offset");
        assert_relative_eq!(rise, 0.003, max_relative = 1e-12);
        assert_relative_eq!(eff.top_width_m(0.2), 0.494, max_relative = 1e-12);
    }
}
