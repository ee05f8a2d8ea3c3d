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

/// A table of a period over the same table of the station before it.
pub fn overlay_table<T: Overlay>(base: &Option<Spanned<T>>, over: &Option<Spanned<T>>) -> Option<Spanned<T>> {
    match (base, over) {
        (Some(b), Some(o)) => Some(Spanned::new(o.span(), b.get_ref().overlay(o.get_ref()))),
        (None, Some(o)) => Some(o.clone()),
        (b, None) => b.clone(),
    }
}

impl Overlay for RawCalibration {
    fn overlay(&self, over: &Self) -> Self {
        let mut b = self.clone();
        if over.factor.is_some() {
            b.factor = over.factor.clone();
        }
        if over.factor_u95_pct.is_some() {
            b.factor_u95_pct = over.factor_u95_pct.clone();
        }
        if over.zero_offset.is_some() {
            b.zero_offset = over.zero_offset.clone();
        }
        if over.zero_offset_u95.is_some() {
            b.zero_offset_u95 = over.zero_offset_u95.clone();
        }
        if over.gaugings.is_some() {
            b.gaugings = over.gaugings.clone();
        }
        if over.from.is_some() {
            b.from = over.from.clone();
        }
        if over.to.is_some() {
            b.to = over.to.clone();
        }
        if over.source_sha256.is_some() {
            b.source_sha256 = over.source_sha256.clone();
        }
        if over.mean_deviation_pct.is_some() {
            b.mean_deviation_pct = over.mean_deviation_pct.clone();
        }
        if over.mean_deviation_u95_pct.is_some() {
            b.mean_deviation_u95_pct = over.mean_deviation_u95_pct.clone();
        }
        if over.factor_zero_correlation.is_some() {
            b.factor_zero_correlation = over.factor_zero_correlation.clone();
        }
        b
    }
}

impl Overlay for RawScreening {
    fn overlay(&self, over: &Self) -> Self {
        let mut b = self.clone();
        if over.enabled.is_some() {
            b.enabled = over.enabled.clone();
        }
        if over.spike_rise.is_some() {
            b.spike_rise = over.spike_rise.clone();
        }
        if over.spike_return.is_some() {
            b.spike_return = over.spike_return.clone();
        }
        if over.flat_hours.is_some() {
            b.flat_hours = over.flat_hours.clone();
        }
        if over.out_of_water_tolerance.is_some() {
            b.out_of_water_tolerance = over.out_of_water_tolerance.clone();
        }
        if over.fill_max_hours.is_some() {
            b.fill_max_hours = over.fill_max_hours.clone();
        }
        b
    }
}

impl Overlay for RawControl {
    fn overlay(&self, over: &Self) -> Self {
        let mut b = self.clone();
        if over.shape.is_some() {
            b.shape = over.shape.clone();
        }
        if over.width.is_some() {
            b.width = over.width.clone();
        }
        if over.side_slope.is_some() {
            b.side_slope = over.side_slope.clone();
        }
        if over.diameter.is_some() {
            b.diameter = over.diameter.clone();
        }
        if over.points.is_some() {
            b.points = over.points.clone();
        }
        if over.length.is_some() {
            b.length = over.length.clone();
        }
        if over.coefficient.is_some() {
            b.coefficient = over.coefficient.clone();
        }
        if over.displacement_ratio.is_some() {
            b.displacement_ratio = over.displacement_ratio.clone();
        }
        if over.roughness.is_some() {
            b.roughness = over.roughness.clone();
        }
        if over.structure.is_some() {
            b.structure = over.structure.clone();
        }
        if over.upstream_edge.is_some() {
            b.upstream_edge = over.upstream_edge.clone();
        }
        if over.notch_angle_deg.is_some() {
            b.notch_angle_deg = over.notch_angle_deg.clone();
        }
        if over.plate_height.is_some() {
            b.plate_height = over.plate_height.clone();
        }
        if over.size.is_some() {
            b.size = over.size.clone();
        }
        b
    }
}

impl Overlay for RawApproach {
    fn overlay(&self, over: &Self) -> Self {
        let mut b = self.clone();
        if over.shape.is_some() {
            b.shape = over.shape.clone();
        }
        if over.width.is_some() {
            b.width = over.width.clone();
        }
        if over.side_slope.is_some() {
            b.side_slope = over.side_slope.clone();
        }
        if over.diameter.is_some() {
            b.diameter = over.diameter.clone();
        }
        if over.points.is_some() {
            b.points = over.points.clone();
        }
        if over.sill_height.is_some() {
            b.sill_height = over.sill_height.clone();
        }
        if over.alpha.is_some() {
            b.alpha = over.alpha.clone();
        }
        b
    }
}

impl Overlay for RawExit {
    fn overlay(&self, over: &Self) -> Self {
        let mut b = self.clone();
        if over.expansion.is_some() {
            b.expansion = over.expansion.clone();
        }
        if over.modular_limit.is_some() {
            b.modular_limit = over.modular_limit.clone();
        }
        b
    }
}

impl Overlay for RawTailwater {
    fn overlay(&self, over: &Self) -> Self {
        let mut b = self.clone();
        if over.bed_below_crest.is_some() {
            b.bed_below_crest = over.bed_below_crest.clone();
        }
        if over.shape.is_some() {
            b.shape = over.shape.clone();
        }
        if over.width.is_some() {
            b.width = over.width.clone();
        }
        if over.side_slope.is_some() {
            b.side_slope = over.side_slope.clone();
        }
        if over.diameter.is_some() {
            b.diameter = over.diameter.clone();
        }
        if over.points.is_some() {
            b.points = over.points.clone();
        }
        if over.manning_n.is_some() {
            b.manning_n = over.manning_n.clone();
        }
        if over.bed_slope.is_some() {
            b.bed_slope = over.bed_slope.clone();
        }
        if over.table.is_some() {
            b.table = over.table.clone();
        }
        b
    }
}

impl Overlay for RawRange {
    fn overlay(&self, over: &Self) -> Self {
        let mut b = self.clone();
        if over.min_head.is_some() {
            b.min_head = over.min_head.clone();
        }
        if over.max_head.is_some() {
            b.max_head = over.max_head.clone();
        }
        b
    }
}

impl Overlay for RawUncertainty {
    fn overlay(&self, over: &Self) -> Self {
        let mut b = self.clone();
        if over.coefficient_pct.is_some() {
            b.coefficient_pct = over.coefficient_pct.clone();
        }
        if over.zero_mm.is_some() {
            b.zero_mm = over.zero_mm.clone();
        }
        if over.dimension_pct.is_some() {
            b.dimension_pct = over.dimension_pct.clone();
        }
        if over.head_mm.is_some() {
            b.head_mm = over.head_mm.clone();
        }
        if over.coefficient_distribution.is_some() {
            b.coefficient_distribution = over.coefficient_distribution.clone();
        }
        if over.zero_distribution.is_some() {
            b.zero_distribution = over.zero_distribution.clone();
        }
        if over.dimension_distribution.is_some() {
            b.dimension_distribution = over.dimension_distribution.clone();
        }
        if over.head_distribution.is_some() {
            b.head_distribution = over.head_distribution.clone();
        }
        if over.coverage_factor.is_some() {
            b.coverage_factor = over.coverage_factor.clone();
        }
        b
    }
}

impl Overlay for RawLogger {
    fn overlay(&self, over: &Self) -> Self {
        let mut b = self.clone();
        if over.time_column.is_some() {
            b.time_column = over.time_column.clone();
        }
        if over.time_format.is_some() {
            b.time_format = over.time_format.clone();
        }
        if over.timezone.is_some() {
            b.timezone = over.timezone.clone();
        }
        if over.stage_column.is_some() {
            b.stage_column = over.stage_column.clone();
        }
        if over.stage_unit.is_some() {
            b.stage_unit = over.stage_unit.clone();
        }
        if over.zero.is_some() {
            b.zero = over.zero.clone();
        }
        if over.tailwater_column.is_some() {
            b.tailwater_column = over.tailwater_column.clone();
        }
        if over.tailwater_zero.is_some() {
            b.tailwater_zero = over.tailwater_zero.clone();
        }
        if over.missing.is_some() {
            b.missing = over.missing.clone();
        }
        if over.separator.is_some() {
            b.separator = over.separator.clone();
        }
        if over.decimal_comma.is_some() {
            b.decimal_comma = over.decimal_comma.clone();
        }
        if over.skip_lines.is_some() {
            b.skip_lines = over.skip_lines.clone();
        }
        if over.header.is_some() {
            b.header = over.header.clone();
        }
        if over.pressure_column.is_some() {
            b.pressure_column = over.pressure_column.clone();
        }
        if over.pressure_unit.is_some() {
            b.pressure_unit = over.pressure_unit.clone();
        }
        if over.temperature_column.is_some() {
            b.temperature_column = over.temperature_column.clone();
        }
        if over.water_temperature.is_some() {
            b.water_temperature = over.water_temperature.clone();
        }
        if over.dry_reading.is_some() {
            b.dry_reading = over.dry_reading.clone();
        }
        if over.max_depth.is_some() {
            b.max_depth = over.max_depth.clone();
        }
        b
    }
}
