//! The four uncertain inputs of a rating and their standard uncertainties.
//!
//! Conventions (JCGM 100:2008, the GUM): a value given for a normal input is an expanded
//! uncertainty U = k·u (k from the station file, default 2); a value given for a rectangular input
//! is the half-width a, so u = a/√3 (GUM §4.3.7). The coefficient and the dimension are systematic
//! and relative; the gauge zero is systematic and absolute; one head reading is random and
//! absolute.

use crate::rating::{LossMethod, Structure, StructureKind};
use crate::station::{InputDistribution, UncertaintySpec};

/// One uncertain input.
#[derive(Debug, Clone, PartialEq)]
pub struct Input {
    /// Standard uncertainty: a fraction for relative inputs, metres for heads.
    pub standard: f64,
    /// Its distribution.
    pub distribution: InputDistribution,
    /// The value as the user would say it, e.g. "±2 % (k = 2, normal)".
    pub stated: String,
    /// Where the value comes from: the station file, or a named default.
    pub source: String,
    /// The value as given (display unit).
    value: f64,
    /// The display unit: "%" or "mm".
    unit: &'static str,
    /// The coverage factor it was given at (normal inputs).
    k: f64,
}

impl Input {
    /// Builds an input from the file's value (or a default) in display units; `scale` converts
    /// the display unit to the internal one (0.01 for %, 0.001 for mm).
    fn new(
        value: f64,
        unit: &'static str,
        scale: f64,
        distribution: InputDistribution,
        k: f64,
        source: String,
    ) -> Self {
        let (standard, stated) = match distribution {
            InputDistribution::Normal => (value * scale / k, format!("±{value} {unit} (k = {k}, normal)")),
            InputDistribution::Rectangular => (
                value * scale / 3f64.sqrt(),
                format!("±{value} {unit} (rectangular half-width)"),
            ),
        };
        Self {
            standard,
            distribution,
            stated,
            source,
            value,
            unit,
            k,
        }
    }

    /// The value as the user would say it, in the output's units: a length input in US units
    /// reads "±0.0066 ft (2 mm, k = 2, normal)".
    pub fn stated_in(&self, units: crate::units::Units) -> String {
        if self.unit != "mm" || matches!(units, crate::units::Units::Si) {
            return self.stated.clone();
        }
        let ft = crate::report::sig(units.length_from_si(self.value * 0.001), 2);
        match self.distribution {
            InputDistribution::Normal => format!("±{ft} ft ({} mm, k = {}, normal)", self.value, self.k),
            InputDistribution::Rectangular => format!("±{ft} ft ({} mm, rectangular half-width)", self.value),
        }
    }

    /// Half-width of the support of a rectangular input (internal units), or `None`.
    pub fn half_width(&self) -> Option<f64> {
        match self.distribution {
            InputDistribution::Rectangular => Some(self.standard * 3f64.sqrt()),
            InputDistribution::Normal => None,
        }
    }
}

/// The inputs of a rating's uncertainty, as standard uncertainties.
#[derive(Debug, Clone, PartialEq)]
pub struct Inputs {
    /// Discharge coefficient, relative (systematic).
    pub coefficient: Input,
    /// Control width or diameter, relative (systematic).
    pub dimension: Input,
    /// Gauge zero, metres (systematic).
    pub zero: Input,
    /// One head reading, metres (random, independent between readings).
    pub reading: Input,
}

/// The coefficient's and the zero's expanded uncertainty (% and mm) from a calibration, with
/// their sources.
fn calibration_inputs(cal: &crate::rating::Calibration) -> ((f64, String), (f64, String)) {
    let from = format!(
        "calibration against {} gauging(s) ({} to {})",
        cal.gaugings, cal.from, cal.to
    );
    (
        (cal.factor_u95_pct, format!("{from}: the factor's uncertainty")),
        (
            cal.zero_offset_u95_m * 1000.0,
            format!("{from}: the zero correction's uncertainty"),
        ),
    )
}

/// Names of the inputs in output order.
pub const INPUT_NAMES: [&str; 4] = ["coefficient", "dimension", "zero", "reading"];

impl Inputs {
    /// The inputs from a station's `[uncertainty]`, with documented defaults for missing values:
    ///
    /// - coefficient: ±2 % for a rectangular-throated flume and ±3 % for trapezoidal and U
    ///   throats (ISO 4359, from memory); ±3 % for a broad-crested weir
    ///   (Bos 1989 §4.1, from memory); ±3 % for a fixed Cd, the upper end of
    ///   the ±2–3 % typical of ISO flumes and broad-crested weirs (ISO 4359, ISO 4374 and Bos 1989 typical values, from memory);
    /// - dimension: ±0.2 %, the upper end of the typical ±0.1–0.2 % (ISO 4359, ISO 4374 and Bos 1989 typical values, from memory);
    /// - gauge zero: ±2 mm, the middle of the typical ±1–3 mm (ISO 4359, ISO 4374 and Bos 1989 typical values, from memory);
    /// - one head reading: ±2 mm (common practice, no source).
    ///
    /// All defaults are expanded values at k = 2, normal.
    pub fn from_station(spec: &UncertaintySpec, structure: &Structure) -> Self {
        let k = spec.coverage_factor;
        let [dc, dd, dz, dh] = spec.distributions;
        let given = || "station file".to_string();
        let rectangular = matches!(structure.control, crate::hydraulics::Section::Rectangle { .. });
        let (cd_default, cd_source) = match (structure.loss, structure.kind) {
            (LossMethod::FixedCd(_), _) => (
                3.0,
                "default: upper end of ±2–3 % typical of ISO flumes and broad-crested weirs (ISO 4359, ISO 4374 and Bos 1989 typical values, from memory)",
            ),
            (LossMethod::Standard(rule), _) => rule.coefficient_u95(),
            (_, StructureKind::Weir) => (3.0, "default: Bos 1989 §4.1, about 3 % (from memory)"),
            (_, StructureKind::Flume) if rectangular => (2.0, "default: ISO 4359, ±2 % for rectangular throats (from memory)"),
            (_, StructureKind::Flume) => (3.0, "default: ISO 4359, ±3 % for trapezoidal and U throats (from memory)"),
            // standard families always carry LossMethod::Standard
            (_, _) => (5.0, "default: ±5 % (common practice, no source)"),
        };
        let pick = |v: Option<f64>, default: f64, source: &str| match v {
            Some(v) => (v, given()),
            None => (default, source.to_string()),
        };
        let (mut c, mut cs) = pick(spec.coefficient_pct, cd_default, cd_source);
        let (d, ds) = pick(
            spec.dimension_pct,
            0.2,
            "default: upper end of the typical ±0.1–0.2 % (ISO 4359, ISO 4374 and Bos 1989 typical values, from memory)",
        );
        let (mut z, mut zs) = pick(
            spec.zero_mm,
            2.0,
            "default: middle of the typical ±1–3 mm (ISO 4359, ISO 4374 and Bos 1989 typical values, from memory)",
        );
        // a calibration against gaugings replaces the coefficient's and the zero's uncertainty
        // by what the gaugings gave (normal, k = 2)
        let calibrated = structure.calibration.as_ref();
        if let Some(cal) = calibrated {
            ((c, cs), (z, zs)) = calibration_inputs(cal);
        }
        let (h, hs) = pick(
            spec.head_mm,
            2.0,
            "default: ±2 mm per reading (common practice, no source)",
        );
        // a default is always normal at k = 2; a given value follows the file
        let dist = |given: bool, d: InputDistribution| if given { d } else { InputDistribution::Normal };
        let kk = |given: bool| if given { k } else { 2.0 };
        Self {
            coefficient: Input::new(
                c,
                "%",
                0.01,
                dist(spec.coefficient_pct.is_some() && calibrated.is_none(), dc),
                kk(spec.coefficient_pct.is_some() && calibrated.is_none()),
                cs,
            ),
            dimension: Input::new(
                d,
                "%",
                0.01,
                dist(spec.dimension_pct.is_some(), dd),
                kk(spec.dimension_pct.is_some()),
                ds,
            ),
            zero: Input::new(
                z,
                "mm",
                0.001,
                dist(spec.zero_mm.is_some() && calibrated.is_none(), dz),
                kk(spec.zero_mm.is_some() && calibrated.is_none()),
                zs,
            ),
            reading: Input::new(
                h,
                "mm",
                0.001,
                dist(spec.head_mm.is_some(), dh),
                kk(spec.head_mm.is_some()),
                hs,
            ),
        }
    }

    /// The inputs in output order.
    pub fn all(&self) -> [&Input; 4] {
        [&self.coefficient, &self.dimension, &self.zero, &self.reading]
    }

    /// Standard uncertainty of one head reading including the gauge zero (m).
    pub fn head_standard_m(&self) -> f64 {
        self.zero.standard.hypot(self.reading.standard)
    }
}
