//! The station file exactly as written: serde structs with source spans, before any checking or
//! unit conversion. Every key is optional here so that a missing key gets our own message (with
//! its fix) instead of serde's.

use serde::Deserialize;
use toml::Spanned;

/// A number that may be given with a span.
pub type Num = Spanned<f64>;
/// A string with its span.
pub type Text = Spanned<String>;

/// `coefficient = "boundary-layer"` or `coefficient = 0.98`.
#[derive(Debug, Clone, Deserialize)]
#[serde(untagged)]
pub enum RawCoefficient {
    /// A fixed discharge coefficient.
    Number(f64),
    /// A method name.
    Text(String),
}

/// The top level of a station file.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawStation {
    pub name: Option<Text>,
    pub datum: Option<Text>,
    pub length_unit: Option<Text>,
    pub gravity_m_s2: Option<Num>,
    pub control: Option<Spanned<RawControl>>,
    pub approach: Option<Spanned<RawApproach>>,
    pub exit: Option<Spanned<RawExit>>,
    pub tailwater: Option<Spanned<RawTailwater>>,
    pub range: Option<Spanned<RawRange>>,
    pub uncertainty: Option<Spanned<RawUncertainty>>,
    pub logger: Option<Spanned<RawLogger>>,
    pub screening: Option<Spanned<RawScreening>>,
    pub calibration: Option<Spanned<RawCalibration>>,
    pub rating_id: Option<Text>,
    pub status: Option<Text>,
    pub approved_by: Option<Text>,
    pub approved_on: Option<Text>,
    pub period: Option<Vec<Spanned<RawPeriod>>>,
    pub staff: Option<Spanned<RawStaff>>,
}

/// `[staff]`: the staff gauge, where it does not read zero at crest level.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawStaff {
    pub crest_reading: Option<Num>,
    pub datum: Option<Text>,
}

/// `[[period]]`: a later rating period, with only the tables and keys that change.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawPeriod {
    pub valid_from: Option<Text>,
    pub rating_id: Option<Text>,
    pub status: Option<Text>,
    pub approved_by: Option<Text>,
    pub approved_on: Option<Text>,
    pub control: Option<Spanned<RawControl>>,
    pub approach: Option<Spanned<RawApproach>>,
    pub exit: Option<Spanned<RawExit>>,
    pub tailwater: Option<Spanned<RawTailwater>>,
    pub range: Option<Spanned<RawRange>>,
    pub uncertainty: Option<Spanned<RawUncertainty>>,
    pub logger: Option<Spanned<RawLogger>>,
    pub screening: Option<Spanned<RawScreening>>,
    pub calibration: Option<Spanned<RawCalibration>>,
}

/// `[calibration]`
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawCalibration {
    pub factor: Option<Num>,
    pub factor_u95_pct: Option<Num>,
    pub zero_offset: Option<Num>,
    pub zero_offset_u95: Option<Num>,
    pub gaugings: Option<Spanned<i64>>,
    pub from: Option<Text>,
    pub to: Option<Text>,
    pub source_sha256: Option<Text>,
    pub mean_deviation_pct: Option<Num>,
    pub mean_deviation_u95_pct: Option<Num>,
    pub factor_zero_correlation: Option<Num>,
}

/// `[screening]`
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawScreening {
    pub enabled: Option<Spanned<bool>>,
    pub spike_rise: Option<Num>,
    pub spike_return: Option<Spanned<i64>>,
    pub flat_hours: Option<Num>,
    pub out_of_water_tolerance: Option<Num>,
    pub fill_max_hours: Option<Num>,
}

/// `[control]`
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawControl {
    pub shape: Option<Text>,
    pub width: Option<Num>,
    pub side_slope: Option<Num>,
    pub diameter: Option<Num>,
    pub points: Option<Spanned<Vec<Vec<f64>>>>,
    pub length: Option<Num>,
    pub coefficient: Option<Spanned<RawCoefficient>>,
    pub displacement_ratio: Option<Num>,
    pub roughness: Option<Num>,
    pub structure: Option<Text>,
    pub upstream_edge: Option<Text>,
    pub notch_angle_deg: Option<Num>,
    pub plate_height: Option<Num>,
    pub size: Option<Text>,
}

/// `[approach]`
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawApproach {
    pub shape: Option<Text>,
    pub width: Option<Num>,
    pub side_slope: Option<Num>,
    pub diameter: Option<Num>,
    pub points: Option<Spanned<Vec<Vec<f64>>>>,
    pub sill_height: Option<Num>,
    pub alpha: Option<Num>,
}

/// `[exit]`
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawExit {
    pub expansion: Option<Num>,
    pub modular_limit: Option<Num>,
}

/// `[tailwater]`
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawTailwater {
    pub bed_below_crest: Option<Num>,
    pub shape: Option<Text>,
    pub width: Option<Num>,
    pub side_slope: Option<Num>,
    pub diameter: Option<Num>,
    pub points: Option<Spanned<Vec<Vec<f64>>>>,
    pub manning_n: Option<Num>,
    pub bed_slope: Option<Num>,
    pub table: Option<Spanned<Vec<Vec<f64>>>>,
}

/// `[range]`
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawRange {
    pub min_head: Option<Num>,
    pub max_head: Option<Num>,
}

/// `[uncertainty]`
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawUncertainty {
    pub coefficient_pct: Option<Num>,
    pub zero_mm: Option<Num>,
    pub dimension_pct: Option<Num>,
    pub head_mm: Option<Num>,
    pub coefficient_distribution: Option<Text>,
    pub zero_distribution: Option<Text>,
    pub dimension_distribution: Option<Text>,
    pub head_distribution: Option<Text>,
    pub coverage_factor: Option<Num>,
}

/// A column by name (`"stage"`) or 1-based position (`2`).
#[derive(Debug, Clone, Deserialize)]
#[serde(untagged)]
pub enum RawColumn {
    /// By position.
    Position(i64),
    /// By name.
    Name(String),
}

/// One format or a list of them.
#[derive(Debug, Clone, Deserialize)]
#[serde(untagged)]
pub enum RawFormats {
    /// One.
    One(String),
    /// Several, tried in order.
    Many(Vec<String>),
}

/// `[logger]`
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawLogger {
    pub time_column: Option<Spanned<RawColumn>>,
    pub time_format: Option<Spanned<RawFormats>>,
    pub timezone: Option<Text>,
    pub stage_column: Option<Spanned<RawColumn>>,
    pub stage_unit: Option<Text>,
    pub zero: Option<Num>,
    pub tailwater_column: Option<Spanned<RawColumn>>,
    pub tailwater_zero: Option<Num>,
    pub missing: Option<Spanned<Vec<String>>>,
    pub separator: Option<Text>,
    pub decimal_comma: Option<Spanned<bool>>,
    pub skip_lines: Option<Spanned<u32>>,
    pub header: Option<Spanned<bool>>,
    pub pressure_column: Option<Spanned<RawColumn>>,
    pub pressure_unit: Option<Text>,
    pub temperature_column: Option<Spanned<RawColumn>>,
    pub water_temperature: Option<Num>,
    pub dry_reading: Option<Num>,
    pub max_depth: Option<Num>,
}

/// Key by key, the keys `over` gives replace those of `base`.
pub trait Overlay: Clone {
    /// `base` with the keys of `over`.
    fn overlay(&self, over: &Self) -> Self;
}

/// `impl Overlay` for a table: each key `over` gives replaces the base's.
macro_rules! overlay_keys {
    ($t:ty; $($f:ident),+) => {
        impl Overlay for $t {
            fn overlay(&self, over: &Self) -> Self {
                let mut b = self.clone();
                $(
                    if over.$f.is_some() {
                        b.$f = over.$f.clone();
                    }
                )+
                b
            }
        }
    };
}

/// A table of a period over the same table of the station before it.
pub fn overlay_table<T: Overlay>(base: &Option<Spanned<T>>, over: &Option<Spanned<T>>) -> Option<Spanned<T>> {
    match (base, over) {
        (Some(b), Some(o)) => Some(Spanned::new(o.span(), b.get_ref().overlay(o.get_ref()))),
        (None, Some(o)) => Some(o.clone()),
        (b, None) => b.clone(),
    }
}

overlay_keys!(RawCalibration; factor, factor_u95_pct, zero_offset, zero_offset_u95, gaugings, from, to, source_sha256, mean_deviation_pct, mean_deviation_u95_pct, factor_zero_correlation);

overlay_keys!(RawScreening; enabled, spike_rise, spike_return, flat_hours, out_of_water_tolerance, fill_max_hours);

overlay_keys!(RawControl; shape, width, side_slope, diameter, points, length, coefficient, displacement_ratio, roughness, structure, upstream_edge, notch_angle_deg, plate_height, size);

overlay_keys!(RawApproach; shape, width, side_slope, diameter, points, sill_height, alpha);

overlay_keys!(RawExit; expansion, modular_limit);

overlay_keys!(RawTailwater; bed_below_crest, shape, width, side_slope, diameter, points, manning_n, bed_slope, table);

overlay_keys!(RawRange; min_head, max_head);

overlay_keys!(RawUncertainty; coefficient_pct, zero_mm, dimension_pct, head_mm, coefficient_distribution, zero_distribution, dimension_distribution, head_distribution, coverage_factor);

overlay_keys!(RawLogger; time_column, time_format, timezone, stage_column, stage_unit, zero, tailwater_column, tailwater_zero, missing, separator, decimal_comma, skip_lines, header, pressure_column, pressure_unit, temperature_column, water_temperature, dry_reading, max_depth);
