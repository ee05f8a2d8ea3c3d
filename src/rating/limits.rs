//! Limits of application of the critical-flow rating, each with its source.
//!
//! A rating row outside any limit is kept and marked `valid = false`, with the broken limits
//! named in its note. The numeric bounds are recalled from the standards named beside them
//! (marked "from memory" where the value was not read in the standard itself); see
//! docs/references.md S3, S4 and S5 for what was and was not read in the sources.

use super::model::{LossMethod, RatingPoint, Structure, StructureKind};
use super::standard::StandardRule;
use crate::hydraulics::Section;

/// What a limit is evaluated on.
#[derive(Debug, Clone, Copy)]
pub struct LimitContext<'a> {
    /// The structure.
    pub structure: &'a Structure,
    /// The computed point.
    pub point: &'a RatingPoint,
}

/// One limit of application.
#[derive(Debug, Clone, Copy)]
pub struct Limit {
    /// Short identifier used in notes, e.g. `H1/L<=0.7`.
    pub id: &'static str,
    /// The rule in words.
    pub rule: &'static str,
    /// Where it comes from.
    pub source: &'static str,
    /// Which structures it applies to (`None`: all).
    pub kind: Option<StructureKind>,
    /// True when the point satisfies the limit; `None` when the limit does not apply.
    pub holds: fn(&LimitContext) -> Option<bool>,
}

fn rectangular(s: &Structure) -> bool {
    matches!(s.control, Section::Rectangle { .. })
}

fn width_m(s: &Structure) -> Option<f64> {
    match s.control {
        Section::Triangle { .. } => None,
        _ => Some(s.control.characteristic_width_m()),
    }
}

/// Every limit flumerate knows, in the order they are reported.
pub const LIMITS: &[Limit] = &[
    Limit {
        id: "h1>=0.05m",
        rule: "gauged head h1 at least 0.05 m (surface tension and reading error grow below it)",
        source: "ISO 4359 (from memory)",
        kind: Some(StructureKind::Flume),
        holds: |c| Some(c.point.head_m >= 0.05 - 1e-12),
    },
    Limit {
        id: "h1>=0.06m",
        rule: "gauged head h1 at least 0.06 m",
        source: "ISO 4374 / Bos 1989 §4.1 (from memory)",
        kind: Some(StructureKind::Weir),
        holds: |c| Some(c.point.head_m >= 0.06 - 1e-12),
    },
    Limit {
        id: "H1/L>=0.07",
        rule: "H1/L at least 0.07 (below it friction along the throat dominates and the theory loses accuracy)",
        source: "Clemmens, Wahl, Bos & Replogle 2001, ILRI Publ. 58 (bounds from memory)",
        kind: None,
        holds: |c| Some(c.point.energy_head_m / c.structure.control_length_m >= 0.07 - 1e-12),
    },
    Limit {
        id: "H1/L<=0.7",
        rule: "H1/L at most 0.7 (above it streamlines at the control are curved, not parallel)",
        source: "Clemmens, Wahl, Bos & Replogle 2001, ILRI Publ. 58 (bounds from memory)",
        kind: Some(StructureKind::Flume),
        holds: |c| Some(c.point.energy_head_m / c.structure.control_length_m <= 0.7 + 1e-12),
    },
    Limit {
        id: "h1/L<=0.57",
        rule: "h1/L at most 0.57",
        source: "ISO 4374 (from memory)",
        kind: Some(StructureKind::Weir),
        holds: |c| Some(c.point.head_m / c.structure.control_length_m <= 0.57 + 1e-12),
    },
    Limit {
        id: "Fr1<=0.5",
        rule: "approach Froude number at most 0.5 (a stable, readable water surface at the gauge)",
        source: "Clemmens et al. 2001 §5.2 and ISO 4359 (from memory)",
        kind: None,
        holds: |c| Some(c.point.froude_approach <= 0.5 + 1e-12),
    },
    Limit {
        id: "b>=0.10m",
        rule: "control width (bed width, or diameter) at least 0.10 m",
        source: "ISO 4359 (from memory)",
        kind: Some(StructureKind::Flume),
        holds: |c| width_m(c.structure).map(|b| b >= 0.10 - 1e-12),
    },
    Limit {
        id: "h1/b<=3",
        rule: "h1/b at most 3 for a rectangular throat",
        source: "ISO 4359 (from memory)",
        kind: Some(StructureKind::Flume),
        holds: |c| {
            rectangular(c.structure)
                .then(|| c.point.head_m / c.structure.control.characteristic_width_m() <= 3.0 + 1e-12)
        },
    },
    Limit {
        id: "b>=0.30m",
        rule: "crest width at least 0.30 m",
        source: "ISO 4374 / Bos 1989 §4.1 (from memory)",
        kind: Some(StructureKind::Weir),
        holds: |c| width_m(c.structure).map(|b| b >= 0.30 - 1e-12),
    },
    Limit {
        id: "p1>=0.15m",
        rule: "crest at least 0.15 m above the approach bed",
        source: "ISO 4374 / Bos 1989 §4.1 (from memory)",
        kind: Some(StructureKind::Weir),
        holds: |c| Some(c.structure.sill_height_m >= 0.15 - 1e-12),
    },
    Limit {
        id: "h1/p1<=1.5",
        rule: "h1/p1 at most 1.5",
        source: "ISO 4374 / Bos 1989 §4.1 (from memory)",
        kind: Some(StructureKind::Weir),
        holds: |c| {
            let p = c.structure.sill_height_m;
            Some(p > 0.0 && c.point.head_m / p <= 1.5 + 1e-12)
        },
    },
    Limit {
        id: "Cd>=0.90",
        rule: "discharge coefficient at least 0.90 (below it the boundary layer takes so much of a narrow or long throat that the method's stated uncertainty no longer holds)",
        source: "Bos 1989 and Clemmens et al. 2001: within their limits long-throated flumes and round-nosed broad-crested weirs have Cd of about 0.90 to 1.0 (from memory)",
        kind: None,
        holds: |c| match c.structure.loss {
            LossMethod::FixedCd(_) | LossMethod::Standard(_) => None,
            _ => Some(c.point.cd >= 0.90 - 1e-12),
        },
    },
    Limit {
        id: "surveyed",
        rule: "water level within the surveyed control section (above it the section is continued with vertical walls, an assumption)",
        source: "geometry",
        kind: None,
        holds: |c| {
            c.structure
                .control
                .surveyed_top_m()
                .map(|top| c.point.head_m <= top + 1e-12)
        },
    },
    Limit {
        id: "below-crown",
        rule: "upstream water level below the crown of a circular control (above it the entrance can run full)",
        source: "geometry",
        kind: None,
        holds: |c| c.structure.control.full_depth_m().map(|d| c.point.energy_head_m < d),
    },
    Limit {
        id: "one-critical-depth",
        rule: "a single critical depth in the control (a compound section with several can switch between them)",
        source: "critical-flow theory (Henderson 1966 §2.3): the rating assumes one control",
        kind: None,
        holds: |c| Some(c.point.control_critical_states <= 1),
    },
];

/// `test` when the structure is rated by `which`, else not applicable.
fn when(s: &Structure, which: fn(&StandardRule) -> bool, test: impl FnOnce() -> bool) -> Option<bool> {
    s.standard().filter(which).map(|_| test())
}

fn is_rect_plate(r: &StandardRule) -> bool {
    matches!(r, StandardRule::RectangularPlate)
}

fn is_v_notch(r: &StandardRule) -> bool {
    matches!(r, StandardRule::VNotch { .. })
}

fn is_cipoletti(r: &StandardRule) -> bool {
    matches!(r, StandardRule::Cipoletti)
}

/// The channel width B at the plate (m).
fn channel_width_m(s: &Structure) -> f64 {
    s.approach.characteristic_width_m()
}

/// Slack for the comparisons of the limits below (m or ratio).
const EPS: f64 = 1e-12;

/// The limits of the standard structures, each with its source (ISO 1438 values from memory,
/// docs/references.md S17–S19).
pub const STANDARD_LIMITS: &[Limit] = &[
    Limit {
        id: "h>=0.03m",
        rule: "head at least 0.03 m (Kindsvater–Carter rectangular weir)",
        source: "ISO 1438:2017 §9.6.4 (from memory)",
        kind: Some(StructureKind::ThinPlateWeir),
        holds: |c| when(c.structure, is_rect_plate, || c.point.head_m >= 0.03 - EPS),
    },
    Limit {
        id: "h/p<=2.5",
        rule: "head at most 2.5 times the plate height",
        source: "ISO 1438:2017 §9.6.4 (from memory)",
        kind: Some(StructureKind::ThinPlateWeir),
        holds: |c| when(c.structure, is_rect_plate, || c.point.head_m <= 2.5 * c.structure.sill_height_m + EPS),
    },
    Limit {
        id: "b>=0.15m",
        rule: "notch width at least 0.15 m",
        source: "ISO 1438:2017 §9.6.4 (from memory)",
        kind: Some(StructureKind::ThinPlateWeir),
        holds: |c| when(c.structure, is_rect_plate, || c.structure.control.characteristic_width_m() >= 0.15 - EPS),
    },
    Limit {
        id: "p>=0.10m",
        rule: "plate height at least 0.10 m",
        source: "ISO 1438:2017 §9.6.4 (from memory)",
        kind: Some(StructureKind::ThinPlateWeir),
        holds: |c| when(c.structure, is_rect_plate, || c.structure.sill_height_m >= 0.10 - EPS),
    },
    Limit {
        id: "(B-b)/2>=0.10m",
        rule: "each side contraction at least 0.10 m wide, unless the notch spans the channel (b = B)",
        source: "ISO 1438:2017 §9.6.4 (from memory)",
        kind: Some(StructureKind::ThinPlateWeir),
        holds: |c| {
            when(c.structure, is_rect_plate, || {
                let side = (channel_width_m(c.structure) - c.structure.control.characteristic_width_m()) / 2.0;
                side <= 1e-6 || side >= 0.10 - EPS
            })
        },
    },
    Limit {
        id: "0.05m<=h<=0.38m",
        rule: "head between 0.05 m and 0.38 m (fully contracted V-notch)",
        source: "ISO 1438:2017 §10 (from memory)",
        kind: Some(StructureKind::ThinPlateWeir),
        holds: |c| when(c.structure, is_v_notch, || (0.05 - EPS..=0.38 + EPS).contains(&c.point.head_m)),
    },
    Limit {
        id: "h/p<=0.4",
        rule: "head at most 0.4 times the vertex height (fully contracted)",
        source: "ISO 1438:2017 §10 (from memory)",
        kind: Some(StructureKind::ThinPlateWeir),
        holds: |c| when(c.structure, is_v_notch, || c.point.head_m <= 0.4 * c.structure.sill_height_m + EPS),
    },
    Limit {
        id: "h/B<=0.2",
        rule: "head at most 0.2 times the channel width (fully contracted)",
        source: "ISO 1438:2017 §10 (from memory); Ponce, SDSU V-notch note",
        kind: Some(StructureKind::ThinPlateWeir),
        holds: |c| when(c.structure, is_v_notch, || c.point.head_m <= 0.2 * channel_width_m(c.structure) + EPS),
    },
    Limit {
        id: "p>=0.45m",
        rule: "vertex at least 0.45 m above the approach bed (fully contracted)",
        source: "ISO 1438:2017 §10 (from memory)",
        kind: Some(StructureKind::ThinPlateWeir),
        holds: |c| when(c.structure, is_v_notch, || c.structure.sill_height_m >= 0.45 - EPS),
    },
    Limit {
        id: "B>=0.90m",
        rule: "approach channel at least 0.90 m wide (fully contracted)",
        source: "ISO 1438:2017 §10 (from memory)",
        kind: Some(StructureKind::ThinPlateWeir),
        holds: |c| when(c.structure, is_v_notch, || channel_width_m(c.structure) >= 0.90 - EPS),
    },
    Limit {
        id: "h>=0.06m",
        rule: "head at least 0.06 m (0.2 ft)",
        source: "USBR Water Measurement Manual ch. 7 (from memory)",
        kind: Some(StructureKind::ThinPlateWeir),
        holds: |c| when(c.structure, is_cipoletti, || c.point.head_m >= 0.06 - EPS),
    },
    Limit {
        id: "h<=b/3",
        rule: "head at most a third of the crest width",
        source: "USBR Water Measurement Manual ch. 7 (from memory)",
        kind: Some(StructureKind::ThinPlateWeir),
        holds: |c| {
            when(c.structure, is_cipoletti, || {
                c.point.head_m <= c.structure.control.characteristic_width_m() / 3.0 + EPS
            })
        },
    },
    Limit {
        id: "p>=2h",
        rule: "crest at least twice the head above the approach bed",
        source: "USBR Water Measurement Manual ch. 7 (from memory)",
        kind: Some(StructureKind::ThinPlateWeir),
        holds: |c| when(c.structure, is_cipoletti, || c.structure.sill_height_m >= 2.0 * c.point.head_m - EPS),
    },
    Limit {
        id: "Ha-in-range",
        rule: "head Ha within the size's published free-flow range",
        source: "USBR Water Measurement Manual ch. 8, free-flow capacities of the standard sizes (from memory)",
        kind: Some(StructureKind::Parshall),
        holds: |c| match c.structure.standard() {
            Some(StandardRule::Parshall(size)) => {
                let (lo, hi) = size.head_range_m();
                Some((lo - EPS..=hi + EPS).contains(&c.point.head_m))
            }
            _ => None,
        },
    },
    Limit {
        id: "h1>=0.06m",
        rule: "gauged head h1 at least 0.06 m",
        source: "ISO 3846 (from memory)",
        kind: Some(StructureKind::SquareEdgedWeir),
        holds: |c| Some(c.point.head_m >= 0.06 - EPS),
    },
    Limit {
        id: "0.08<=h1/L<=0.33",
        rule: "h1/L between 0.08 and 0.33, where critical flow is established on the crest and C = 0.848 (the standard's short-crest correction above 0.33 is not in flumerate)",
        source: "ISO 3846 (from memory)",
        kind: Some(StructureKind::SquareEdgedWeir),
        holds: |c| {
            let r = c.point.head_m / c.structure.control_length_m;
            Some((0.08 - EPS..=0.33 + EPS).contains(&r))
        },
    },
    Limit {
        id: "h1/p<=1.6",
        rule: "gauged head at most 1.6 times the weir height",
        source: "ISO 3846 (from memory)",
        kind: Some(StructureKind::SquareEdgedWeir),
        holds: |c| Some(c.point.head_m <= 1.6 * c.structure.sill_height_m + EPS),
    },
    Limit {
        id: "p>=0.15m",
        rule: "weir height p at least 0.15 m",
        source: "ISO 3846 (from memory)",
        kind: Some(StructureKind::SquareEdgedWeir),
        holds: |c| Some(c.structure.sill_height_m >= 0.15 - EPS),
    },
    Limit {
        id: "b>=0.30m",
        rule: "crest width at least 0.30 m",
        source: "ISO 3846 (from memory)",
        kind: Some(StructureKind::SquareEdgedWeir),
        holds: |c| Some(c.structure.control.characteristic_width_m() >= 0.30 - EPS),
    },
    Limit {
        id: "0.15<=p/L<=4",
        rule: "weir height between 0.15 and 4 times the crest length",
        source: "ISO 3846 (from memory)",
        kind: Some(StructureKind::SquareEdgedWeir),
        holds: |c| {
            let r = c.structure.sill_height_m / c.structure.control_length_m;
            Some((0.15 - EPS..=4.0 + EPS).contains(&r))
        },
    },
    Limit {
        id: "h1>=0.03m",
        rule: "gauged head at least 0.03 m (a smooth metal crest; 0.06 m for concrete)",
        source: "ISO 4360 (from memory)",
        kind: Some(StructureKind::TriangularProfileWeir),
        holds: |c| Some(c.point.head_m >= 0.03 - EPS),
    },
    Limit {
        id: "h1/p<=3.0",
        rule: "gauged head at most 3 times the weir height",
        source: "ISO 4360 (from memory)",
        kind: Some(StructureKind::TriangularProfileWeir),
        holds: |c| Some(c.point.head_m <= 3.0 * c.structure.sill_height_m + EPS),
    },
    Limit {
        id: "p>=0.06m",
        rule: "weir height at least 0.06 m",
        source: "ISO 4360 (from memory)",
        kind: Some(StructureKind::TriangularProfileWeir),
        holds: |c| Some(c.structure.sill_height_m >= 0.06 - EPS),
    },
    Limit {
        id: "b>=0.30m",
        rule: "crest width at least 0.30 m",
        source: "ISO 4360 (from memory)",
        kind: Some(StructureKind::TriangularProfileWeir),
        holds: |c| Some(c.structure.control.characteristic_width_m() >= 0.30 - EPS),
    },
    Limit {
        id: "b/h1>=2",
        rule: "crest width at least twice the gauged head",
        source: "ISO 4360 (from memory)",
        kind: Some(StructureKind::TriangularProfileWeir),
        holds: |c| Some(c.structure.control.characteristic_width_m() >= 2.0 * c.point.head_m - EPS),
    },
];

/// The limits that apply to a structure of this kind.
pub fn limits_for(kind: StructureKind) -> impl Iterator<Item = &'static Limit> {
    // the general limits belong to the critical-flow method; a standard structure has its own
    let list = if kind.critical_flow() { LIMITS } else { STANDARD_LIMITS };
    list.iter().filter(move |l| l.kind.is_none_or(|k| k == kind))
}

/// The identifiers of the limits a point breaks (empty when it is within all of them).
pub fn broken_limits(structure: &Structure, point: &RatingPoint) -> Vec<&'static Limit> {
    let ctx = LimitContext { structure, point };
    limits_for(structure.kind)
        .filter(|l| (l.holds)(&ctx) == Some(false))
        .collect()
}

/// Heads scanned for [`invalid_head_bands`].
const BAND_SCAN: usize = 2000;

/// The bands of heads in `(0, top_m]` where the model breaks some limit of application (or has
/// no value), as (from, to) in metres, each edge found by bisection to 1e-9 m between scanned
/// heads: what `rate` marks `valid = false`, in a form a long series can look up cheaply.
pub fn invalid_head_bands(model: &super::RatingModel, top_m: f64) -> Vec<(f64, f64)> {
    let invalid = |h: f64| match model.point(h) {
        Ok(p) => !broken_limits(model.structure(), &p).is_empty(),
        Err(_) => true,
    };
    let edge = |mut lo: f64, mut hi: f64, bad_lo: bool| {
        while hi - lo > 1e-9 {
            let mid = 0.5 * (lo + hi);
            if invalid(mid) == bad_lo {
                lo = mid;
            } else {
                hi = mid;
            }
        }
        if bad_lo {
            lo
        } else {
            hi
        }
    };
    let mut bands = Vec::new();
    let mut open: Option<f64> = None;
    let mut prev: Option<(f64, bool)> = None;
    for k in 1..=BAND_SCAN {
        let h = top_m * k as f64 / BAND_SCAN as f64;
        let bad = invalid(h);
        match (prev, bad) {
            (None, true) => open = Some(0.0),
            (Some((hp, false)), true) => open = Some(edge(hp, h, false)),
            (Some((hp, true)), false) => {
                if let Some(start) = open.take() {
                    bands.push((start, edge(hp, h, true)));
                }
            }
            _ => {}
        }
        prev = Some((h, bad));
    }
    if let Some(start) = open {
        bands.push((start, f64::INFINITY));
    }
    bands
}

/// Whether `head_m` lies in one of `bands` (from [`invalid_head_bands`]).
#[inline]
pub fn in_bands(bands: &[(f64, f64)], head_m: f64) -> bool {
    bands.iter().any(|&(lo, hi)| head_m >= lo && head_m <= hi)
}
