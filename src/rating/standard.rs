//! Structures built to a standard with a published rating: thin-plate weirs (ISO 1438), Parshall
//! flumes (ASTM D1941 / ISO 9826), the square-edged broad-crested weir (ISO 3846) and the
//! triangular-profile weir (ISO 4360). Pure functions on SI values; the tables carry their
//! sources, and values recalled rather than read in the standard say "from memory".
//!
//! The square-edged and triangular-profile weirs are rated like the critical-flow controls, with
//! the standard's coefficient of the gauged head in place of the boundary layer, so the
//! approach-velocity coefficient is solved exactly by the model
//! ([`crate::rating::RatingModel`]); the thin-plate weirs and Parshall flumes have empirical
//! equations of the gauged head that carry the approach velocity in their coefficients.

/// Standard gravity used by the published thin-plate equations (m/s²).
const G: f64 = crate::hydraulics::STANDARD_GRAVITY_M_S2;

/// One foot (m), exactly.
pub const FOOT_M: f64 = 0.3048;
/// One cubic foot per second (m³/s), exactly.
pub const CFS_M3S: f64 = 0.028_316_846_592;

/// A structure rated by a standard's own equation.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum StandardRule {
    /// Rectangular thin-plate weir, Kindsvater–Carter (ISO 1438 §9), any width ratio b/B.
    RectangularPlate,
    /// Triangular (V-notch) thin-plate weir, Kindsvater–Shen (ISO 1438 §10), fully contracted.
    VNotch {
        /// Notch angle θ (degrees).
        angle_deg: f64,
    },
    /// Trapezoidal thin-plate weir with 1:4 side slopes (Cipoletti).
    Cipoletti,
    /// A Parshall flume of a standard size.
    Parshall(ParshallSize),
    /// Square-edged (rectangular-profile) broad-crested weir, ISO 3846.
    SquareEdged,
    /// Triangular-profile (1:2 / 1:5) weir, ISO 4360.
    TriangularProfile,
}

// ---------------------------------------------------------------------------------------------
// Thin-plate weirs

/// Kindsvater–Carter coefficient lines Ce = a + c·h/p by width ratio b/B (ISO 1438:2017 §9.6.3;
/// Bos 1989 §5.1.2), from memory; the a and c of b/B = 0.2 and 0.4 to 1.0 agree within 0.001
/// with USBR *Water Measurement Manual* (3rd ed. 2001) ch. 7 §6's US-unit lines divided by
/// (2/3)·√(2g). The width correction kb (m) by b/B is read off ISO 1438's figure from memory,
/// except kb = −0.001 m at b/B = 1 (the full-width weir as coded in the `fluids` library,
/// `Q_weir_rectangular_full_Kindsvater_Carter`). Columns: b/B, a, c, kb (m).
pub const KC_LINES: [(f64, f64, f64, f64); 11] = [
    (0.0, 0.587, -0.0023, 0.0024),
    (0.1, 0.588, -0.0021, 0.0024),
    (0.2, 0.589, -0.0018, 0.0024),
    (0.3, 0.590, 0.0020, 0.0025),
    (0.4, 0.591, 0.0058, 0.0027),
    (0.5, 0.592, 0.011, 0.0030),
    (0.6, 0.593, 0.018, 0.0032),
    (0.7, 0.595, 0.030, 0.0035),
    (0.8, 0.597, 0.045, 0.0037),
    (0.9, 0.599, 0.064, 0.0030),
    (1.0, 0.602, 0.075, -0.0010),
];

/// Kindsvater–Carter head correction kh (m): 0.001 m for every width ratio (ISO 1438 §9.6.1;
/// USBR WMM ch. 7: 0.003 ft).
pub const KC_KH_M: f64 = 0.001;

/// Linear interpolation in a table of (x, y…) rows by column `col`, clamped at the ends.
fn interp<const N: usize, const M: usize>(table: &[[f64; M]; N], x: f64, col: usize) -> f64 {
    if x <= table[0][0] {
        return table[0][col];
    }
    for w in table.windows(2) {
        let (a, b) = (&w[0], &w[1]);
        if x <= b[0] {
            let t = (x - a[0]) / (b[0] - a[0]);
            return a[col] + t * (b[col] - a[col]);
        }
    }
    table[N - 1][col]
}

fn kc_table() -> [[f64; 4]; 11] {
    KC_LINES.map(|(r, a, c, kb)| [r, a, c, kb])
}

/// The Kindsvater–Carter effective coefficient Ce and width correction kb (m) for width ratio
/// `ratio` = b/B and head ratio h/p, interpolated linearly in b/B between the lines of
/// [`KC_LINES`].
pub fn kindsvater_carter_coefficients(ratio: f64, head_over_height: f64) -> (f64, f64) {
    let t = kc_table();
    let a = interp(&t, ratio, 1);
    let c = interp(&t, ratio, 2);
    (a + c * head_over_height, interp(&t, ratio, 3))
}

/// Discharge (m³/s) of a rectangular thin-plate weir by Kindsvater–Carter (ISO 1438 §9.6.1):
/// Q = Ce·(2/3)·√(2g)·(b + kb)·(h + kh)^1.5 with Ce and kb from b/B and h/p.
pub fn rectangular_plate_m3s(head_m: f64, width_m: f64, channel_width_m: f64, plate_height_m: f64) -> (f64, f64) {
    let (ce, kb) = kindsvater_carter_coefficients(width_m / channel_width_m, head_m / plate_height_m);
    let q = ce * (2.0 / 3.0) * (2.0 * G).sqrt() * (width_m + kb) * (head_m + KC_KH_M).powf(1.5);
    (q, ce)
}

/// Kindsvater–Shen coefficients of a fully contracted V-notch by notch angle (ISO 1438:2017
/// §10.5, figures of Ce and kh; USBR WMM ch. 7 Fig. 7-6): columns θ (degrees), Ce, kh (m). The
/// 90° values (Ce = 0.578, kh = 0.85 mm) are those published for the common notch (USBR WMM
/// ch. 7; Ponce, San Diego State University V-notch laboratory note); the others are read off
/// the curves, from memory.
pub const KS_TABLE: [[f64; 3]; 6] = [
    [20.0, 0.590, 0.0028],
    [40.0, 0.580, 0.0017],
    [60.0, 0.575, 0.0012],
    [80.0, 0.575, 0.0010],
    [90.0, 0.578, 0.00085],
    [100.0, 0.580, 0.0010],
];

/// The smallest and largest notch angles Kindsvater–Shen covers (degrees): 20° to 100°
/// (ISO 1438:2017 §10.5, π/9 to 5π/9 rad).
pub const V_NOTCH_ANGLE_RANGE_DEG: (f64, f64) = (20.0, 100.0);

/// Kindsvater–Shen Ce and kh (m) for notch angle `angle_deg`.
pub fn kindsvater_shen_coefficients(angle_deg: f64) -> (f64, f64) {
    (interp(&KS_TABLE, angle_deg, 1), interp(&KS_TABLE, angle_deg, 2))
}

/// Discharge (m³/s) of a fully contracted V-notch by Kindsvater–Shen (ISO 1438 §10.5):
/// Q = Ce·(8/15)·√(2g)·tan(θ/2)·(h + kh)^2.5.
pub fn v_notch_m3s(head_m: f64, angle_deg: f64) -> (f64, f64) {
    let (ce, kh) = kindsvater_shen_coefficients(angle_deg);
    let q = ce * (8.0 / 15.0) * (2.0 * G).sqrt() * (angle_deg.to_radians() / 2.0).tan() * (head_m + kh).powf(2.5);
    (q, ce)
}

/// Cipoletti weir coefficient in SI (Q = 1.859·b·h^1.5, m and m³/s), the exact conversion of
/// USBR WMM ch. 7's 3.367·L·h^1.5 (ft, ft³/s): 3.367·0.3048^{-1.5}·0.0283168… = 1.8590.
pub const CIPOLETTI_US: f64 = 3.367;

/// Discharge (m³/s) of a Cipoletti weir of crest width `width_m` (USBR WMM ch. 7, §7.12 (from
/// memory): Q = 3.367·L·h^1.5 in ft and ft³/s), with the coefficient as its effective Ce.
pub fn cipoletti_m3s(head_m: f64, width_m: f64) -> (f64, f64) {
    let k_si = CIPOLETTI_US * FOOT_M.powf(-1.5) * CFS_M3S / FOOT_M;
    let q = k_si * width_m * head_m.powf(1.5);
    (q, k_si / ((2.0 / 3.0) * (2.0 * G).sqrt()))
}

// ---------------------------------------------------------------------------------------------
// Parshall flumes

/// One standard Parshall size: free-flow Q = C·Ha^n in feet and ft³/s (ASTM D1941; USBR WMM
/// ch. 8 Table 8-x; ISO 9826), the transition submergence Hb/Ha above which the flow is
/// submerged, the free-flow head range (ft) and the standard dimensions (ft).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ParshallSpec {
    /// Our name of the size, e.g. `9in`, `1.5ft` (as in the station file's `size`).
    pub name: &'static str,
    /// Throat width W (ft).
    pub throat_ft: f64,
    /// C of Q = C·Ha^n (ft, ft³/s).
    pub coefficient_us: f64,
    /// n of Q = C·Ha^n.
    pub exponent: f64,
    /// Transition submergence Hb/Ha.
    pub transition: f64,
    /// Lowest and highest head Ha of the published free-flow range (ft).
    pub head_range_ft: (f64, f64),
    /// Standard dimensions (ft): A (converging wall length), 2/3·A (gauge point along the wall),
    /// B (axial length of the converging section), C (outlet width), D (entrance width), E
    /// (wall depth), F (throat length), G (diverging length), K (crest above outlet floor), N
    /// (throat floor drop).
    pub dims_ft: ParshallDims,
}

/// The standard dimensions of a Parshall size (ft); see [`ParshallSpec::dims_ft`].
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ParshallDims {
    /// Length of the converging wall, A.
    pub a: f64,
    /// Distance of the head gauge from the crest along the wall, 2/3·A.
    pub gauge: f64,
    /// Axial length of the converging section, B.
    pub b: f64,
    /// Outlet width, C.
    pub c: f64,
    /// Entrance width, D.
    pub d: f64,
    /// Wall depth in the converging section, E.
    pub e: f64,
    /// Throat length, F.
    pub f: f64,
    /// Diverging section length, G.
    pub g: f64,
    /// Lower end of the flume below the crest, K.
    pub k: f64,
    /// Depth of the throat floor below the crest, N.
    pub n: f64,
}

macro_rules! dims {
    ($a:expr, $g:expr, $b:expr, $c:expr, $d:expr, $e:expr, $f:expr, $gg:expr, $k:expr, $n:expr) => {
        ParshallDims {
            a: $a,
            gauge: $g,
            b: $b,
            c: $c,
            d: $d,
            e: $e,
            f: $f,
            g: $gg,
            k: $k,
            n: $n,
        }
    };
}

/// in → ft.
const fn inch(v: f64) -> f64 {
    v / 12.0
}

/// The 22 standard sizes, 1 in to 50 ft. Free-flow equations: ASTM D1941-91 and USBR WMM ch. 8
/// (1 to 8 ft: C = 4·W, n = 1.522·W^0.026; 10 to 50 ft: C = 3.6875·W + 2.5, n = 1.6).
/// Transition submergence: USBR WMM ch. 8 (0.50 for 1–3 in, 0.60 for 6–9 in, 0.70 for 1–8 ft,
/// 0.80 for 10–50 ft). Head ranges and dimensions: USBR WMM ch. 8 tables of free-flow capacity
/// and of dimensions (from memory where docs/references.md S18 says so).
#[rustfmt::skip]
pub const PARSHALL_SIZES: [ParshallSpec; 22] = [
    parshall("1in", inch(1.0), 0.338, 1.55, 0.50, (0.07, 0.60), dims!(inch(14.31), inch(9.56), inch(14.0), inch(3.69), inch(6.38), inch(9.0), inch(3.0), inch(8.0), inch(0.75), inch(1.12))),
    parshall("2in", inch(2.0), 0.676, 1.55, 0.50, (0.07, 0.60), dims!(inch(16.31), inch(10.88), inch(16.0), inch(5.31), inch(8.38), inch(9.0), inch(4.5), inch(10.0), inch(0.88), inch(1.69))),
    parshall("3in", inch(3.0), 0.992, 1.547, 0.50, (0.10, 1.50), dims!(inch(18.38), inch(12.25), inch(18.0), inch(7.0), inch(10.19), inch(24.0), inch(6.0), inch(12.0), inch(1.0), inch(2.25))),
    parshall("6in", inch(6.0), 2.06, 1.58, 0.60, (0.10, 1.50), dims!(inch(24.44), inch(16.31), inch(24.0), inch(15.5), inch(15.69), inch(24.0), inch(12.0), inch(24.0), inch(3.0), inch(4.5))),
    parshall("9in", inch(9.0), 3.07, 1.53, 0.60, (0.10, 2.00), dims!(inch(34.62), inch(23.12), inch(34.0), inch(15.0), inch(22.62), inch(30.0), inch(12.0), inch(18.0), inch(3.0), inch(4.5))),
    big("1ft", 1.0, (0.10, 2.50), dims!(4.5, 3.0, 4.406, 2.0, 2.771, 3.0, 2.0, 3.0, inch(3.0), inch(9.0))),
    big("1.5ft", 1.5, (0.10, 2.50), dims!(4.75, 3.167, 4.656, 2.5, 3.396, 3.0, 2.0, 3.0, inch(3.0), inch(9.0))),
    big("2ft", 2.0, (0.15, 2.50), dims!(5.0, 3.333, 4.906, 3.0, 4.031, 3.0, 2.0, 3.0, inch(3.0), inch(9.0))),
    big("3ft", 3.0, (0.15, 2.50), dims!(5.5, 3.667, 5.396, 4.0, 5.302, 3.0, 2.0, 3.0, inch(3.0), inch(9.0))),
    big("4ft", 4.0, (0.20, 2.50), dims!(6.0, 4.0, 5.885, 5.0, 6.563, 3.0, 2.0, 3.0, inch(3.0), inch(9.0))),
    big("5ft", 5.0, (0.20, 2.50), dims!(6.5, 4.333, 6.375, 6.0, 7.833, 3.0, 2.0, 3.0, inch(3.0), inch(9.0))),
    big("6ft", 6.0, (0.25, 2.50), dims!(7.0, 4.667, 6.865, 7.0, 9.104, 3.0, 2.0, 3.0, inch(3.0), inch(9.0))),
    big("7ft", 7.0, (0.25, 2.50), dims!(7.5, 5.0, 7.354, 8.0, 10.375, 3.0, 2.0, 3.0, inch(3.0), inch(9.0))),
    big("8ft", 8.0, (0.25, 2.50), dims!(8.0, 5.333, 7.844, 9.0, 11.646, 3.0, 2.0, 3.0, inch(3.0), inch(9.0))),
    huge("10ft", 10.0, (0.30, 3.50), dims!(f64::NAN, 6.0, 14.0, 12.0, 15.6, 4.0, 3.0, 6.0, inch(6.0), inch(13.5))),
    huge("12ft", 12.0, (0.33, 4.50), dims!(f64::NAN, 6.667, 16.0, 14.667, 18.396, 5.0, 3.0, 8.0, inch(6.0), inch(13.5))),
    huge("15ft", 15.0, (0.33, 5.70), dims!(f64::NAN, 7.667, 25.0, 18.333, 25.0, 6.0, 4.0, 10.0, inch(9.0), inch(20.25))),
    huge("20ft", 20.0, (0.33, 5.70), dims!(f64::NAN, 9.333, 25.0, 24.0, 30.0, 7.0, 6.0, 12.0, inch(12.0), inch(27.0))),
    huge("25ft", 25.0, (0.33, 5.70), dims!(f64::NAN, 11.0, 25.0, 29.333, 35.0, 7.0, 6.0, 13.0, inch(12.0), inch(27.0))),
    huge("30ft", 30.0, (0.33, 5.70), dims!(f64::NAN, 12.667, 26.0, 34.667, 40.396, 7.0, 6.0, 14.0, inch(12.0), inch(27.0))),
    huge("40ft", 40.0, (0.50, 5.70), dims!(f64::NAN, 16.0, 27.0, 45.333, 50.792, 7.0, 6.0, 16.0, inch(12.0), inch(27.0))),
    huge("50ft", 50.0, (0.50, 5.70), dims!(f64::NAN, 19.333, 27.0, 56.667, 60.792, 7.0, 6.0, 20.0, inch(12.0), inch(27.0))),
];

const fn parshall(
    name: &'static str,
    throat_ft: f64,
    c: f64,
    n: f64,
    st: f64,
    head_range_ft: (f64, f64),
    dims_ft: ParshallDims,
) -> ParshallSpec {
    ParshallSpec {
        name,
        throat_ft,
        coefficient_us: c,
        exponent: n,
        transition: st,
        head_range_ft,
        dims_ft,
    }
}

/// 1 to 8 ft: C = 4·W, n = 1.522·W^0.026 (the exponent is filled in by [`ParshallSize::spec`]).
const fn big(name: &'static str, w: f64, range: (f64, f64), dims: ParshallDims) -> ParshallSpec {
    parshall(name, w, 4.0 * w, f64::NAN, 0.70, range, dims)
}

/// 10 to 50 ft: C = 3.6875·W + 2.5, n = 1.6.
const fn huge(name: &'static str, w: f64, range: (f64, f64), dims: ParshallDims) -> ParshallSpec {
    parshall(name, w, 3.6875 * w + 2.5, 1.6, 0.80, range, dims)
}

/// A standard Parshall size, by its index in [`PARSHALL_SIZES`].
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct ParshallSize(usize);

impl ParshallSize {
    /// The size named `name` (`9in`, `1.5ft`, also `9-in`, `9 in`, `1.5 ft`, case-insensitive).
    pub fn from_name(name: &str) -> Option<Self> {
        let key: String = name
            .chars()
            .filter(|c| !c.is_whitespace() && *c != '-' && *c != '_')
            .collect::<String>()
            .to_ascii_lowercase();
        let key = key.strip_prefix("parshall").unwrap_or(&key).to_string();
        PARSHALL_SIZES.iter().position(|s| s.name == key).map(Self)
    }

    /// Every standard size, smallest first.
    pub fn all() -> impl Iterator<Item = Self> {
        (0..PARSHALL_SIZES.len()).map(Self)
    }

    /// The size's published values, with the exponent of 1–8 ft flumes computed from W.
    pub fn spec(self) -> ParshallSpec {
        let mut s = PARSHALL_SIZES[self.0];
        if s.exponent.is_nan() {
            s.exponent = 1.522 * s.throat_ft.powf(0.026);
        }
        s
    }

    /// Free-flow discharge (m³/s) at head `head_m` (Ha at the standard gauge point): the
    /// published Q = C·Ha^n in feet and ft³/s, converted exactly.
    pub fn discharge_m3s(self, head_m: f64) -> f64 {
        let s = self.spec();
        s.coefficient_us * (head_m / FOOT_M).powf(s.exponent) * CFS_M3S
    }

    /// The published free-flow head range (m).
    pub fn head_range_m(self) -> (f64, f64) {
        let (lo, hi) = self.spec().head_range_ft;
        (lo * FOOT_M, hi * FOOT_M)
    }

    /// The throat width W (m).
    pub fn throat_m(self) -> f64 {
        self.spec().throat_ft * FOOT_M
    }
}

// ---------------------------------------------------------------------------------------------
// Square-edged and triangular-profile weirs

/// ISO 3846 (from memory; Ackers, White, Perkins & Harrison 1978, *Weirs and Flumes for Flow
/// Measurement*, ch. 6): C = 0.848 while critical flow is established on a long crest,
/// 0.08 ≤ h/L ≤ 0.33.
pub const SQUARE_EDGED_C: f64 = 0.848;

/// The discharge coefficient of a square-edged broad-crested weir (ISO 3846, from memory) at
/// gauged head `head_m`: 0.848 wherever critical flow is established on the crest
/// (0.08 ≤ h/L ≤ 0.33). The standard's correction for a short crest (h/L above 0.33) was not
/// available to us, so rows there keep 0.848 and are marked outside the limits (`h1/L<=0.33`),
/// never rated with an invented factor.
pub fn square_edged_cd(_head_m: f64) -> f64 {
    SQUARE_EDGED_C
}

/// The discharge coefficient of a triangular-profile weir (ISO 4360, from memory; White 1971,
/// "The performance of two-dimensional and flat-V triangular profile weirs", Proc. ICE Suppl.):
/// Cd = 1.163·(1 − 0.0003/h)^1.5 with h the gauged head in metres.
pub fn triangular_profile_cd(head_m: f64) -> f64 {
    1.163 * (1.0 - 0.0003 / head_m).max(0.0).powf(1.5)
}

// ---------------------------------------------------------------------------------------------
// What every rule states

impl StandardRule {
    /// The family's name in words.
    pub fn name(&self) -> String {
        match self {
            StandardRule::RectangularPlate => "rectangular thin-plate weir".into(),
            StandardRule::VNotch { angle_deg } => format!("{angle_deg}° V-notch thin-plate weir"),
            StandardRule::Cipoletti => "Cipoletti (trapezoidal 1:4) thin-plate weir".into(),
            StandardRule::Parshall(s) => format!("Parshall flume, {} throat", s.spec().name),
            StandardRule::SquareEdged => "square-edged broad-crested weir".into(),
            StandardRule::TriangularProfile => "triangular-profile (1:2/1:5) weir".into(),
        }
    }

    /// The method and its published source.
    pub fn method(&self) -> &'static str {
        match self {
            StandardRule::RectangularPlate => "Kindsvater–Carter, ISO 1438:2017 §9.6.1 (Ce and kb from memory)",
            StandardRule::VNotch { .. } => {
                "Kindsvater–Shen, ISO 1438:2017 §10.5 (Ce and kh from memory; 90°: USBR Water Measurement Manual ch. 7)"
            }
            StandardRule::Cipoletti => {
                "Q = 3.367·L·h^1.5 (ft, ft³/s), USBR Water Measurement Manual ch. 7 (from memory)"
            }
            StandardRule::Parshall(_) => {
                "Q = C·Ha^n per size, ASTM D1941 / ISO 9826 / USBR Water Measurement Manual ch. 8"
            }
            StandardRule::SquareEdged => "C = 0.848 for 0.08 ≤ h1/L ≤ 0.33, ISO 3846 (from memory), Cv solved exactly",
            StandardRule::TriangularProfile => {
                "Cd = 1.163·(1 − 0.0003/h)^1.5, ISO 4360 (from memory), Cv solved exactly"
            }
        }
    }

    /// The standard's own uncertainty of the coefficient at 95 % (%), with its source.
    pub fn coefficient_u95(&self) -> (f64, &'static str) {
        match self {
            StandardRule::RectangularPlate => (1.5, "default: ISO 1438, about ±1.5 % for Kindsvater–Carter within its limits (from memory)"),
            StandardRule::VNotch { .. } => (1.0, "default: ISO 1438, about ±1 % for a fully contracted V-notch (from memory)"),
            StandardRule::Cipoletti => (5.0, "default: about ±5 % for a Cipoletti weir (common practice, no source)"),
            StandardRule::Parshall(_) => (5.0, "default: USBR Water Measurement Manual ch. 8, about ±5 % for a Parshall flume in free flow (from memory)"),
            StandardRule::SquareEdged => (3.0, "default: ISO 3846, about ±3 % (from memory)"),
            StandardRule::TriangularProfile => (1.0, "default: ISO 4360, about ±1 % (from memory)"),
        }
    }

    /// The modular limit: the largest tailwater-to-upstream ratio at which the rating holds,
    /// with its source. Thin-plate weirs need the tailwater below the crest (an aerated nappe).
    pub fn modular_limit(&self) -> (f64, &'static str) {
        match self {
            StandardRule::RectangularPlate | StandardRule::VNotch { .. } | StandardRule::Cipoletti => (
                0.0,
                "ISO 1438: the nappe must spring clear and be aerated, with the tailwater below the crest (USBR WMM ch. 7 asks for 0.2 ft below)",
            ),
            StandardRule::Parshall(s) => (
                s.spec().transition,
                "transition submergence Hb/Ha of the size, USBR Water Measurement Manual ch. 8",
            ),
            StandardRule::SquareEdged => (0.66, "ISO 8368:2019: weirs drown when the downstream level exceeds 0.66 to 0.75 of the upstream head; the lower value for a square-edged weir with a vertical downstream face"),
            StandardRule::TriangularProfile => (0.75, "ISO 4360, H2/H1 = 0.75 in total heads (from memory; ISO 8368:2019 gives 0.66 to 0.75 for weirs)"),
        }
    }

    /// The heads the standard's limits allow (m), for a station without `[range]`: the same
    /// bounds as the limits of application ([`crate::rating::limits::STANDARD_LIMITS`]).
    pub fn default_head_range_m(&self, s: &crate::rating::Structure) -> (f64, f64) {
        let p = s.sill_height_m;
        let b = s.control.characteristic_width_m();
        let big_b = s.approach.characteristic_width_m();
        match self {
            StandardRule::RectangularPlate => (0.03, 2.5 * p),
            StandardRule::VNotch { .. } => (0.05, 0.38f64.min(0.4 * p).min(0.2 * big_b)),
            StandardRule::Cipoletti => (0.06, (b / 3.0).min(p / 2.0)),
            StandardRule::Parshall(size) => size.head_range_m(),
            StandardRule::SquareEdged => {
                let l = s.control_length_m;
                (0.06f64.max(0.08 * l), (0.33 * l).min(1.6 * p))
            }
            StandardRule::TriangularProfile => (0.03, (3.0 * p).min(b / 2.0)),
        }
    }

    /// The exponent of head in the free-flow equation (Villemonte's n for a drowned estimate).
    pub fn head_exponent(&self) -> f64 {
        match self {
            StandardRule::VNotch { .. } => 2.5,
            StandardRule::Parshall(s) => s.spec().exponent,
            _ => 1.5,
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn parshall_sizes_parse_and_cover_the_standard() {
        assert_eq!(ParshallSize::all().count(), 22);
        for name in ["9in", "9 in", "9-in", "Parshall-9in", "1.5FT"] {
            assert!(ParshallSize::from_name(name).is_some(), "{name}");
        }
        assert!(ParshallSize::from_name("11in").is_none());
        for s in ParshallSize::all() {
            let spec = s.spec();
            assert!(spec.exponent > 1.5 && spec.exponent < 1.61, "{}", spec.name);
            assert!(spec.head_range_ft.0 < spec.head_range_ft.1);
        }
    }

    #[test]
    fn interpolation_reaches_the_table_rows() {
        let (ce, kb) = kindsvater_carter_coefficients(1.0, 0.5);
        assert_relative_eq!(ce, 0.602 + 0.075 * 0.5, max_relative = 1e-12);
        assert_relative_eq!(kb, -0.001, max_relative = 1e-12);
        let (ce, kh) = kindsvater_shen_coefficients(90.0);
        assert_relative_eq!(ce, 0.578, max_relative = 1e-12);
        assert_relative_eq!(kh, 0.00085, max_relative = 1e-12);
        assert_relative_eq!(square_edged_cd(0.2), 0.848, max_relative = 1e-12);
    }
}
