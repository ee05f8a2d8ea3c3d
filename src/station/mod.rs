//! Station files: TOML describing one gauging structure, loaded, checked and converted to SI.
//!
//! Parsing ([`Station::from_toml_str`]) is kept apart from reading the file ([`Station::load`]) so
//! tests need no files. Every error names the file, the line and column, the key, the rule broken
//! and the fix. The keys are listed in the README's station-file reference and in design.md.

mod raw;

use std::ops::Range;
use std::path::Path;

use raw::{Num, RawCoefficient, RawStation, Text};
use toml::Spanned;

use crate::hydraulics::{PointsSection, Section, STANDARD_GRAVITY_M_S2};
use crate::rating::{LossMethod, Structure, StructureKind};

/// ISO 4359's boundary-layer displacement thickness for a well-finished throat, δ*/L = 0.003
/// (ISO 4359, docs/references.md S3; the exact clause from memory).
pub const ISO_4359_DISPLACEMENT_RATIO: f64 = 0.003;

/// A length unit a station file may use.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum LengthUnit {
    /// metre
    Metre,
    /// millimetre
    Millimetre,
    /// centimetre
    Centimetre,
    /// international foot, 0.3048 m exactly
    Foot,
    /// inch, 0.0254 m exactly
    Inch,
}

impl LengthUnit {
    /// Parses `m`, `cm`, `mm`, `ft` or `in`.
    pub fn parse(s: &str) -> Option<Self> {
        match s {
            "m" => Some(Self::Metre),
            "cm" => Some(Self::Centimetre),
            "mm" => Some(Self::Millimetre),
            "ft" => Some(Self::Foot),
            "in" => Some(Self::Inch),
            _ => None,
        }
    }

    /// Metres per unit (exact by definition for ft and in).
    pub fn metres(self) -> f64 {
        match self {
            Self::Metre => 1.0,
            Self::Millimetre => 0.001,
            Self::Centimetre => 0.01,
            Self::Foot => 0.3048,
            Self::Inch => 0.0254,
        }
    }

    /// The unit's symbol.
    pub fn symbol(self) -> &'static str {
        match self {
            Self::Metre => "m",
            Self::Millimetre => "mm",
            Self::Centimetre => "cm",
            Self::Foot => "ft",
            Self::Inch => "in",
        }
    }
}

/// A station file is wrong: where, what and how to fix it.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[error("{file}:{line}:{column}: {key}: {problem}\n  fix: {fix}")]
pub struct StationError {
    /// The file (or `<string>` when parsed from text).
    pub file: String,
    /// 1-based line.
    pub line: usize,
    /// 1-based column.
    pub column: usize,
    /// The key, as a dotted path (`control.width`), or the table.
    pub key: String,
    /// The rule broken.
    pub problem: String,
    /// How to fix it.
    pub fix: String,
}

/// Heads the rating must serve (m above the crest).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct HeadRange {
    /// Lowest head (m).
    pub min_head_m: f64,
    /// Highest head (m).
    pub max_head_m: f64,
    /// Where the range comes from.
    pub source: RangeSource,
}

/// Where a station's head range comes from.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum RangeSource {
    /// The station file's `[range]`.
    Given,
    /// No `[range]`: the heads the method's limits of application allow, to first order
    /// ([`HeadRange::from_limits`]).
    Limits,
}

impl HeadRange {
    /// A range from the limits of application when the station gives none: for a flume
    /// max(0.05 m, 0.07·L) to 0.7·L (no more than 3·b for a rectangular throat); for a weir
    /// max(0.06 m, 0.07·L) to min(0.57·L, 1.5·p1) (ISO 4359, ISO 4374, Clemmens et al. 2001; the
    /// bounds from memory, docs/references.md S3–S5). The limits are judged on the energy head,
    /// which these gauged heads approach from below, so rows at the very top may still be marked.
    pub fn from_limits(structure: &crate::rating::Structure) -> Option<Self> {
        let l = structure.control_length_m;
        let (lo, hi) = match structure.kind {
            crate::rating::StructureKind::Flume => {
                let mut hi = 0.7 * l;
                if let Section::Rectangle { width_m } = structure.control {
                    hi = hi.min(3.0 * width_m);
                }
                (0.05f64.max(0.07 * l), hi)
            }
            crate::rating::StructureKind::Weir => {
                (0.06f64.max(0.07 * l), (0.57 * l).min(1.5 * structure.sill_height_m))
            }
        };
        (lo < hi).then_some(Self {
            min_head_m: lo,
            max_head_m: hi,
            source: RangeSource::Limits,
        })
    }
}

/// The exit of the structure (used by the modular-limit check).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ExitSpec {
    /// Diverging transition 1:N; 0 for an abrupt exit.
    pub expansion: f64,
    /// A modular limit given in the file, overriding the computed one.
    pub modular_limit: Option<f64>,
}

/// The channel or table that sets the tailwater level.
#[derive(Debug, Clone, PartialEq)]
pub enum TailwaterSpec {
    /// A channel in uniform flow.
    Channel {
        /// Tailwater channel bed below the crest (m; negative when above).
        bed_below_crest_m: f64,
        /// Its cross-section.
        section: Section,
        /// Manning's n (s/m^(1/3)).
        manning_n: f64,
        /// Bed slope (m/m).
        bed_slope: f64,
    },
    /// Measured (discharge m³/s, tailwater level above the crest m) pairs, discharge ascending.
    Table(Vec<(f64, f64)>),
}

/// The probability distribution of an input's error.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum InputDistribution {
    /// Gaussian; the value given is an expanded uncertainty U = k·u.
    #[default]
    Normal,
    /// Uniform; the value given is the half-width a, so u = a/√3 (JCGM 100 §4.3.7).
    Rectangular,
}

/// Input uncertainties as given in the file; `None` where not given (defaults then apply, see
/// [`crate::uncertainty::Inputs::from_station`]).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct UncertaintySpec {
    /// Systematic, relative, on the discharge coefficient (%).
    pub coefficient_pct: Option<f64>,
    /// Systematic, gauge zero (mm).
    pub zero_mm: Option<f64>,
    /// Systematic, relative, on the control width (%).
    pub dimension_pct: Option<f64>,
    /// Random, one head reading (mm).
    pub head_mm: Option<f64>,
    /// Distribution of each input, in the order coefficient, dimension, zero, head.
    pub distributions: [InputDistribution; 4],
    /// Coverage factor k of the values given for normal inputs (default 2, about 95 %).
    pub coverage_factor: f64,
}

impl Default for UncertaintySpec {
    fn default() -> Self {
        Self {
            coefficient_pct: None,
            zero_mm: None,
            dimension_pct: None,
            head_mm: None,
            distributions: [InputDistribution::Normal; 4],
            coverage_factor: 2.0,
        }
    }
}

/// How the station's logger export reads. Columns are names, or 1-based positions written as
/// digits.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct LoggerSpec {
    /// The time column.
    pub time_column: Option<String>,
    /// strftime-style formats of the time column, tried in order.
    pub time_formats: Vec<String>,
    /// IANA zone name or fixed offset.
    pub timezone: Option<String>,
    /// The stage column.
    pub stage_column: Option<String>,
    /// Unit of the stage column (and of `zero` and `tailwater_zero`).
    pub stage_unit: Option<String>,
    /// Logger stage when the water is level with the crest, in the stage unit.
    pub zero: Option<f64>,
    /// A logged tailwater column.
    pub tailwater_column: Option<String>,
    /// Tailwater logger reading with the tailwater level with the crest, in the stage unit.
    pub tailwater_zero: Option<f64>,
    /// Strings that mean "no value".
    pub missing: Vec<String>,
    /// Field separator.
    pub separator: Option<String>,
    /// Decimal comma in numbers.
    pub decimal_comma: bool,
    /// Lines to skip before the header.
    pub skip_lines: u32,
    /// Whether the file has a header line (default true).
    pub header: Option<bool>,
    /// An absolute-pressure column (instead of a stage column).
    pub pressure_column: Option<String>,
    /// Unit of the pressure column and the barometric file: Pa, hPa, mbar, kPa, bar, psi.
    pub pressure_unit: Option<String>,
    /// A logged water-temperature column (°C).
    pub temperature_column: Option<String>,
    /// Water temperature (°C) where none is logged.
    pub water_temperature: Option<f64>,
    /// The logger's stage with its sensor out of the water, in the stage unit (default 0: the
    /// logger reads the depth over its sensor). A reading more than 0.10 m below it is
    /// impossible.
    pub dry_reading: Option<f64>,
    /// The most water the sensor can have over it, in the stage unit (default: 10 × (zero +
    /// the range's top head), at least 5 m). A reading more than this above the dry reading is
    /// impossible.
    pub max_depth: Option<f64>,
}

/// A loaded, checked station in SI units.
#[derive(Debug, Clone, PartialEq)]
pub struct Station {
    /// Free text shown on every output.
    pub name: String,
    /// Free text on the gauge datum (e.g. the crest's surveyed level), shown on the field sheet.
    pub datum: Option<String>,
    /// Where it was read from.
    pub source: String,
    /// SHA-256 of the station file's text, hex (for provenance and the field sheet).
    pub sha256: String,
    /// The file's length unit.
    pub length_unit: LengthUnit,
    /// The structure, ready for [`crate::rating::RatingModel::new`].
    pub structure: Structure,
    /// Heads the rating must serve.
    pub range: HeadRange,
    /// The exit.
    pub exit: ExitSpec,
    /// The tailwater, if given.
    pub tailwater: Option<TailwaterSpec>,
    /// Input uncertainties.
    pub uncertainty: UncertaintySpec,
    /// Logger settings, if given.
    pub logger: Option<LoggerSpec>,
}

impl Station {
    /// Reads and checks a station file.
    pub fn load(path: &Path) -> Result<Self, LoadError> {
        let bytes = std::fs::read(path).map_err(|cause| LoadError::Read {
            path: path.display().to_string(),
            cause,
        })?;
        let text = std::str::from_utf8(&bytes).map_err(|e| {
            let at = e.valid_up_to();
            LoadError::NotUtf8 {
                path: path.display().to_string(),
                offset: at,
                line: bytes[..at].iter().filter(|b| **b == b'\n').count() + 1,
                byte: bytes[at],
            }
        })?;
        Ok(Self::from_toml_str(text, &path.display().to_string())?)
    }

    /// Parses and checks station-file text; `file` names it in errors.
    pub fn from_toml_str(text: &str, file: &str) -> Result<Self, StationError> {
        let ctx = Ctx { file, text };
        let raw: RawStation = toml::from_str(text).map_err(|e| {
            let span = e.span().unwrap_or(0..0);
            let msg = e.message().to_string();
            let fix = if msg.contains("unknown field") {
                "check the spelling against the station-file reference in README.md; keys are lower case with underscores"
            } else if msg.contains("invalid type") {
                "give numbers without quotes (width = 0.6) and names in quotes (shape = \"rectangle\")"
            } else if msg.contains("invalid length") {
                "write each point or table row as a pair [a, b]"
            } else {
                "correct the TOML syntax at this place (see README.md for an example station file)"
            };
            let key = ctx.key_at(span.start).unwrap_or_else(|| "TOML".to_string());
            ctx.err(span, &key, msg.trim_end(), fix)
        })?;
        ctx.build(raw)
    }
}

/// Reading a station file failed.
#[derive(Debug, thiserror::Error)]
#[non_exhaustive]
pub enum LoadError {
    /// The file could not be read.
    #[error("cannot read station file {path}: {cause}\n  fix: check the path; station files usually live in ratings/")]
    Read {
        /// The path.
        path: String,
        /// The I/O error (shown in the message, not chained).
        cause: std::io::Error,
    },
    /// The file is not UTF-8 text.
    #[error("{path}:{line}: station files are UTF-8 text, but byte {offset} (0x{byte:02x}) is not UTF-8: the file was saved in another encoding (Latin-1 or Windows-1252?)\n  fix: save the file as UTF-8 (in most editors: Save as… → encoding UTF-8), or convert it: iconv -f WINDOWS-1252 -t UTF-8 {path} > fixed.toml")]
    NotUtf8 {
        /// The path.
        path: String,
        /// Byte offset of the first byte that is not UTF-8 (0-based).
        offset: usize,
        /// Its line.
        line: usize,
        /// The byte.
        byte: u8,
    },
    /// The file is not a valid station file.
    #[error(transparent)]
    Invalid(#[from] StationError),
}

/// Text with its control characters (escape sequences that would drive a terminal, line
/// breaks inside a name) written as `\u{1b}`, so that a name is shown as it is, never obeyed.
pub fn escape_controls(s: &str) -> String {
    if !s.chars().any(char::is_control) {
        return s.to_string();
    }
    s.chars()
        .map(|c| {
            if c.is_control() {
                format!("\\u{{{:x}}}", c as u32)
            } else {
                c.to_string()
            }
        })
        .collect()
}

/// A number as a person reads it: huge and tiny ones in exponent notation (`1.7e308`), not
/// three hundred digits.
fn shown(v: f64) -> String {
    if v != 0.0 && !(1e-4..1e6).contains(&v.abs()) {
        format!("{v:e}")
    } else {
        v.to_string()
    }
}

/// The most points a surveyed section may have.
pub const MAX_POINTS: usize = 10_000;

/// The longest dimension a station file may give (m): no measuring structure is a kilometre
/// wide, and a larger number is a typing or unit error.
pub const MAX_LENGTH_M: f64 = 1000.0;

struct Ctx<'a> {
    file: &'a str,
    text: &'a str,
}

/// The shape keys shared by `[control]`, `[approach]` and `[tailwater]`.
struct ShapeKeys<'a> {
    table: &'static str,
    span: Range<usize>,
    shape: Option<&'a Text>,
    width: Option<&'a Num>,
    side_slope: Option<&'a Num>,
    diameter: Option<&'a Num>,
    points: Option<&'a Spanned<Vec<Vec<f64>>>>,
}

impl Ctx<'_> {
    fn err(&self, span: Range<usize>, key: &str, problem: impl Into<String>, fix: impl Into<String>) -> StationError {
        let upto = &self.text[..span.start.min(self.text.len())];
        let line = upto.matches('\n').count() + 1;
        let column = upto.rsplit('\n').next().map_or(0, |l| l.chars().count()) + 1;
        StationError {
            file: self.file.to_string(),
            line,
            column,
            key: key.to_string(),
            problem: problem.into(),
            fix: fix.into(),
        }
    }

    fn missing(&self, span: Range<usize>, key: &str, fix: &str) -> StationError {
        self.err(span, key, "this key is required here but missing", fix)
    }

    /// A finite number.
    fn number(&self, n: &Num, key: &str) -> Result<f64, StationError> {
        let v = *n.get_ref();
        if v.is_finite() {
            Ok(v)
        } else {
            Err(self.err(
                n.span(),
                key,
                format!("{v} is not a finite number"),
                "give an ordinary decimal number",
            ))
        }
    }

    /// A number within `[lo, hi]` (bounds inclusive unless `open_lo`).
    fn bounded(&self, n: &Num, key: &str, lo: f64, hi: f64, open_lo: bool, why: &str) -> Result<f64, StationError> {
        let v = self.number(n, key)?;
        let ok = if open_lo { v > lo } else { v >= lo } && v <= hi;
        if ok {
            Ok(v)
        } else {
            let lo_word = if open_lo { "greater than" } else { "at least" };
            Err(self.err(
                n.span(),
                key,
                format!(
                    "{} is out of range: it must be {lo_word} {lo} and at most {hi}",
                    shown(v)
                ),
                why.to_string(),
            ))
        }
    }

    /// A length > 0 in the file's unit, at most [`MAX_LENGTH_M`], returned in metres.
    fn positive_length(&self, n: &Num, key: &str, unit: LengthUnit, fix: &str) -> Result<f64, StationError> {
        let v = self.number(n, key)?;
        if v * unit.metres() > MAX_LENGTH_M {
            Err(self.err(
                n.span(),
                key,
                format!(
                    "{} {} is longer than any measuring structure ({MAX_LENGTH_M} m at most)",
                    shown(v),
                    unit.symbol()
                ),
                "check the number and the file's length_unit",
            ))
        } else if v > 0.0 {
            Ok(v * unit.metres())
        } else {
            Err(self.err(
                n.span(),
                key,
                format!(
                    "{v} {} is not a usable dimension: it must be greater than zero",
                    unit.symbol()
                ),
                fix.to_string(),
            ))
        }
    }

    fn forbid<T>(&self, v: Option<&Spanned<T>>, key: &str, shape: &str, hint: &str) -> Result<(), StationError> {
        match v {
            Some(s) => Err(self.err(
                s.span(),
                key,
                format!(
                    "`{}` is not used by shape \"{shape}\"",
                    key.rsplit('.').next().unwrap_or(key)
                ),
                format!("remove it, or {hint}"),
            )),
            None => Ok(()),
        }
    }

    fn section(&self, k: ShapeKeys, unit: LengthUnit) -> Result<Section, StationError> {
        let t = k.table;
        let key = |name: &str| format!("{t}.{name}");
        let Some(shape) = k.shape else {
            return Err(self.missing(
                k.span.clone(),
                &key("shape"),
                "add shape = \"rectangle\", \"trapezoid\", \"triangle\", \"circle\" or \"points\"",
            ));
        };
        let name = shape.get_ref().as_str();
        let need = |v: Option<&Num>, what: &str, fix: &str| -> Result<f64, StationError> {
            match v {
                Some(n) => self.positive_length(n, &key(what), unit, fix),
                None => Err(self.missing(k.span.clone(), &key(what), fix)),
            }
        };
        let slope = |v: Option<&Num>, allow_zero: bool| -> Result<f64, StationError> {
            let fix = "give the side slope as horizontal per 1 vertical, e.g. side_slope = 1.5";
            match v {
                Some(n) => {
                    let s = self.number(n, &key("side_slope"))?;
                    if s > 0.0 || (allow_zero && s == 0.0) {
                        Ok(s)
                    } else {
                        Err(self.err(
                            n.span(),
                            &key("side_slope"),
                            format!(
                                "side slope {s} must be {}",
                                if allow_zero {
                                    "zero or more"
                                } else {
                                    "greater than zero"
                                }
                            ),
                            fix,
                        ))
                    }
                }
                None => Err(self.missing(k.span.clone(), &key("side_slope"), fix)),
            }
        };
        let section = match name {
            "rectangle" => {
                self.forbid(k.side_slope, &key("side_slope"), name, "use shape = \"trapezoid\"")?;
                self.forbid(k.diameter, &key("diameter"), name, "use shape = \"circle\"")?;
                self.forbid(k.points, &key("points"), name, "use shape = \"points\"")?;
                Section::Rectangle {
                    width_m: need(k.width, "width", "give the width between the walls, e.g. width = 0.60")?,
                }
            }
            "trapezoid" => {
                self.forbid(k.diameter, &key("diameter"), name, "use shape = \"circle\"")?;
                self.forbid(k.points, &key("points"), name, "use shape = \"points\"")?;
                Section::Trapezoid {
                    bottom_width_m: need(k.width, "width", "give the bed (bottom) width, e.g. width = 0.60")?,
                    side_slope: slope(k.side_slope, true)?,
                }
            }
            "triangle" => {
                self.forbid(k.width, &key("width"), name, "use shape = \"trapezoid\" for a flat bed")?;
                self.forbid(k.diameter, &key("diameter"), name, "use shape = \"circle\"")?;
                self.forbid(k.points, &key("points"), name, "use shape = \"points\"")?;
                Section::Triangle {
                    side_slope: slope(k.side_slope, false)?,
                }
            }
            "circle" => {
                self.forbid(k.width, &key("width"), name, "give only diameter")?;
                self.forbid(k.side_slope, &key("side_slope"), name, "give only diameter")?;
                self.forbid(k.points, &key("points"), name, "use shape = \"points\"")?;
                Section::Circle {
                    diameter_m: need(k.diameter, "diameter", "give the inside diameter, e.g. diameter = 0.45")?,
                }
            }
            "u-shape" => {
                self.forbid(
                    k.width,
                    &key("width"),
                    name,
                    "give only diameter (the walls stand one diameter apart)",
                )?;
                self.forbid(k.side_slope, &key("side_slope"), name, "give only diameter")?;
                self.forbid(k.points, &key("points"), name, "use shape = \"points\"")?;
                Section::UShape {
                    diameter_m: need(
                        k.diameter,
                        "diameter",
                        "give the diameter of the semicircular bottom, e.g. diameter = 0.45",
                    )?,
                }
            }
            "points" => {
                self.forbid(k.width, &key("width"), name, "describe the section by its points only")?;
                self.forbid(
                    k.side_slope,
                    &key("side_slope"),
                    name,
                    "describe the section by its points only",
                )?;
                self.forbid(
                    k.diameter,
                    &key("diameter"),
                    name,
                    "describe the section by its points only",
                )?;
                let Some(pts) = k.points else {
                    return Err(self.missing(
                        k.span.clone(),
                        &key("points"),
                        "give points = [[offset, height], ...] from left bank to right bank, heights above the lowest point",
                    ));
                };
                self.points(pts, &key("points"), unit)?
            }
            other => {
                return Err(self.err(
                    shape.span(),
                    &key("shape"),
                    format!("unknown shape \"{other}\""),
                    "use one of \"rectangle\", \"trapezoid\", \"triangle\", \"circle\", \"u-shape\", \"points\"",
                ))
            }
        };
        Ok(section)
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

    /// Checks that every row of a list is a pair of numbers.
    fn pairs(&self, rows: &Spanned<Vec<Vec<f64>>>, key: &str, fix: &str) -> Result<Vec<[f64; 2]>, StationError> {
        rows.get_ref()
            .iter()
            .enumerate()
            .map(|(i, r)| match r.as_slice() {
                [a, b] => Ok([*a, *b]),
                _ => Err(self.err(
                    rows.span(),
                    key,
                    format!("entry {} has {} numbers, not 2", i + 1, r.len()),
                    fix.to_string(),
                )),
            })
            .collect()
    }

    /// The dotted key written at byte `offset`: the `name =` on that line, prefixed with the
    /// nearest `[table]` header above it.
    fn key_at(&self, offset: usize) -> Option<String> {
        let upto = &self.text[..offset.min(self.text.len())];
        let line_start = upto.rfind('\n').map_or(0, |i| i + 1);
        let line = self.text[line_start..].lines().next().unwrap_or("");
        let (name, _) = line.split_once('=')?;
        let name = name.trim();
        if name.is_empty() || name.starts_with('#') || name.starts_with('[') {
            return None;
        }
        let table = upto[..line_start].lines().rev().find_map(|l| {
            let t = l.trim();
            t.strip_prefix('[').and_then(|t| t.split(']').next()).map(str::trim)
        });
        Some(match table {
            Some(t) => format!("{t}.{name}"),
            None => name.to_string(),
        })
    }

    fn build(&self, raw: RawStation) -> Result<Station, StationError> {
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

        // [control]
        let Some(control) = &raw.control else {
            return Err(self.missing(
                0..0,
                "[control]",
                "add a [control] table describing the throat or crest",
            ));
        };
        let cspan = control.span();
        let c = control.get_ref();
        let control_section = self.section(
            ShapeKeys {
                table: "control",
                span: cspan.clone(),
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
                cspan,
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
        let loss = match c.coefficient.as_ref().map(|s| (s.get_ref(), s.span())) {
            None => None,
            Some((RawCoefficient::Text(t), _)) if t == "boundary-layer" => None,
            Some((RawCoefficient::Text(t), span)) if t == "iso-4359" => {
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
                    control_section,
                    Section::Rectangle { .. } | Section::Trapezoid { .. } | Section::UShape { .. }
                ) {
                    return Err(self.err(
                        span,
                        "control.coefficient",
                        "ISO 4359's own formulas cover rectangular, trapezoidal and U-shaped throats only",
                        "use coefficient = \"boundary-layer\" (the general method after ISO 4359) for this shape, or shape = \"u-shape\" for a U-throat",
                    ));
                }
                Some(LossMethod::Iso4359 {
                    displacement_thickness_m: ISO_4359_DISPLACEMENT_RATIO * length_m,
                })
            }
            Some((RawCoefficient::Text(t), span)) => {
                return Err(self.err(
                    span,
                    "control.coefficient",
                    format!("unknown coefficient method \"{t}\""),
                    "use coefficient = \"boundary-layer\" (default), \"iso-4359\" or a fixed discharge coefficient such as coefficient = 0.98",
                ))
            }
            Some((RawCoefficient::Number(cd), span)) => {
                if !(cd.is_finite() && *cd > 0.0 && *cd <= 1.5) {
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
                Some(LossMethod::FixedCd(*cd))
            }
        };
        let loss = match loss {
            Some(l) => l,
            None => {
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
                LossMethod::BoundaryLayer {
                    displacement_thickness_m: ratio * length_m,
                }
            }
        };
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
                        "use structure = \"flume\" (long-throated flume) or \"weir\" (broad-crested weir)",
                    ))
                }
            },
        };
        // a broad-crested weir must say its upstream edge: the critical-flow method serves a
        // rounded nose only (Bos 1989 §4.1; ISO 4374); a square edge separates the flow and
        // reads about 15 % lower, which needs its own coefficients (ISO 3846)
        match (kind, &c.upstream_edge) {
            (StructureKind::Weir, None) => {
                return Err(self.missing(
                    cspan.clone(),
                    "control.upstream_edge",
                    "add upstream_edge = \"rounded\" (a rounded nose, ISO 4374) or \"square\" (a square upstream corner, ISO 3846)",
                ))
            }
            (StructureKind::Weir, Some(e)) => match e.get_ref().as_str() {
                "rounded" => {}
                "square" => {
                    return Err(self.err(
                        e.span(),
                        "control.upstream_edge",
                        "a square-edged broad-crested weir separates the flow at its upstream corner; the critical-flow method (rounded noses only) would rate it about 15 % high, and flumerate has no method for it yet",
                        "rate it with the coefficients of ISO 3846 by hand, or round the nose (radius at least 0.2·h1max, ISO 4374) and rate it as \"rounded\"",
                    ))
                }
                other => {
                    return Err(self.err(
                        e.span(),
                        "control.upstream_edge",
                        format!("unknown upstream edge \"{other}\""),
                        "use upstream_edge = \"rounded\" or \"square\"",
                    ))
                }
            },
            (StructureKind::Flume, Some(e)) => {
                return Err(self.err(
                    e.span(),
                    "control.upstream_edge",
                    "upstream_edge describes a broad-crested weir's crest, not a flume",
                    "remove it, or set structure = \"weir\"",
                ))
            }
            (StructureKind::Flume, None) => {}
        }

        // [approach]
        let Some(approach) = &raw.approach else {
            return Err(self.missing(
                0..0,
                "[approach]",
                "add an [approach] table: the channel at the head-measurement section, with its shape and sill_height",
            ));
        };
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

        // [range]: optional; without it, the heads the limits of application allow
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

        // [exit]
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

        let tailwater = match &raw.tailwater {
            None => None,
            Some(t) => Some(self.tailwater(t, unit)?),
        };

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

        let logger = match &raw.logger {
            None => None,
            Some(l) => Some(self.logger(l)?),
        };

        let structure = Structure {
            control: control_section,
            control_length_m: length_m,
            approach: approach_section,
            sill_height_m,
            approach_alpha: alpha,
            loss,
            kind,
            gravity_m_s2: gravity,
        };
        let range = match given_range {
            Some(r) => r,
            None => HeadRange::from_limits(&structure).ok_or_else(|| {
                self.missing(
                    0..0,
                    "[range]",
                    "the limits of application leave no heads for this structure: add a [range] table with min_head and max_head",
                )
            })?,
        };
        Ok(Station {
            name,
            datum: raw.datum.as_ref().map(|d| escape_controls(d.get_ref().trim())),
            source: escape_controls(self.file),
            sha256: {
                use sha2::Digest;
                format!("{:x}", sha2::Sha256::digest(self.text.as_bytes()))
            },
            length_unit: unit,
            structure,
            range,
            exit,
            tailwater,
            uncertainty,
            logger,
        })
    }

    fn tailwater(&self, t: &Spanned<raw::RawTailwater>, unit: LengthUnit) -> Result<TailwaterSpec, StationError> {
        let span = t.span();
        let t = t.get_ref();
        if let Some(table) = &t.table {
            for (v, key) in [
                (t.shape.as_ref().map(|s| s.span()), "tailwater.shape"),
                (t.manning_n.as_ref().map(|s| s.span()), "tailwater.manning_n"),
                (t.bed_slope.as_ref().map(|s| s.span()), "tailwater.bed_slope"),
            ] {
                if let Some(sp) = v {
                    return Err(self.err(
                        sp,
                        key,
                        "a tailwater table and a tailwater channel are given together",
                        "keep either table = [[discharge, level], ...] or the channel keys, not both",
                    ));
                }
            }
            let rows = self.pairs(
                table,
                "tailwater.table",
                "give each row as [discharge m³/s, level above the crest]",
            )?;
            if rows.len() < 2 {
                return Err(self.err(
                    table.span(),
                    "tailwater.table",
                    "a tailwater table needs at least 2 rows",
                    "give [discharge m³/s, tailwater level above the crest] pairs covering the rating's discharges",
                ));
            }
            for (i, w) in rows.windows(2).enumerate() {
                let finite = w[1][0].is_finite() && w[1][1].is_finite();
                if !finite || w[1][0] <= w[0][0] || w[1][1] < w[0][1] {
                    return Err(self.err(
                        table.span(),
                        "tailwater.table",
                        format!(
                            "rows {} and {} are not monotone: discharge must rise and the level must not fall",
                            i + 1,
                            i + 2
                        ),
                        "sort the rows by discharge and check the levels",
                    ));
                }
            }
            if rows[0][0] < 0.0 {
                return Err(self.err(
                    table.span(),
                    "tailwater.table",
                    "a discharge in the table is negative",
                    "give discharges in m³/s, zero or more",
                ));
            }
            return Ok(TailwaterSpec::Table(
                rows.iter().map(|r| (r[0], r[1] * unit.metres())).collect(),
            ));
        }
        let section = self.section(
            ShapeKeys {
                table: "tailwater",
                span: span.clone(),
                shape: t.shape.as_ref(),
                width: t.width.as_ref(),
                side_slope: t.side_slope.as_ref(),
                diameter: t.diameter.as_ref(),
                points: t.points.as_ref(),
            },
            unit,
        )?;
        let bed = match &t.bed_below_crest {
            Some(n) => self.number(n, "tailwater.bed_below_crest")? * unit.metres(),
            None => {
                return Err(self.missing(
                    span,
                    "tailwater.bed_below_crest",
                    "add bed_below_crest = how far the tailwater channel bed lies below the crest",
                ))
            }
        };
        let n = match &t.manning_n {
            Some(n) => self.bounded(
                n,
                "tailwater.manning_n",
                0.0,
                0.5,
                true,
                "Manning's n is greater than 0 (0.012 concrete to about 0.1 weedy channels)",
            )?,
            None => {
                return Err(self.missing(
                    span,
                    "tailwater.manning_n",
                    "add manning_n = roughness of the tailwater channel, e.g. 0.030",
                ))
            }
        };
        let s = match &t.bed_slope {
            Some(n) => self.bounded(
                n,
                "tailwater.bed_slope",
                0.0,
                0.5,
                true,
                "give the bed slope as a positive ratio, e.g. 0.0008 (m per m)",
            )?,
            None => {
                return Err(self.missing(
                    span,
                    "tailwater.bed_slope",
                    "add bed_slope = slope of the tailwater channel bed, e.g. 0.0008",
                ))
            }
        };
        Ok(TailwaterSpec::Channel {
            bed_below_crest_m: bed,
            section,
            manning_n: n,
            bed_slope: s,
        })
    }

    fn logger(&self, l: &Spanned<raw::RawLogger>) -> Result<LoggerSpec, StationError> {
        let l = l.get_ref();
        let s = |t: &Option<Text>| t.as_ref().map(|t| t.get_ref().clone());
        let column = |c: &Option<Spanned<raw::RawColumn>>, key: &str| -> Result<Option<String>, StationError> {
            match c.as_ref().map(|c| (c.get_ref(), c.span())) {
                None => Ok(None),
                Some((raw::RawColumn::Name(n), _)) => Ok(Some(n.clone())),
                Some((raw::RawColumn::Position(p), _)) if *p >= 1 => Ok(Some(p.to_string())),
                Some((raw::RawColumn::Position(p), span)) => Err(self.err(
                    span,
                    key,
                    format!("column position {p} is not valid: positions start at 1"),
                    "give the column's name in quotes, or its position counting from 1",
                )),
            }
        };
        if let Some(u) = &l.stage_unit {
            if !["m", "cm", "mm", "ft", "in"].contains(&u.get_ref().as_str()) {
                return Err(self.err(
                    u.span(),
                    "logger.stage_unit",
                    format!("unknown stage unit \"{}\"", u.get_ref()),
                    "use \"m\", \"cm\", \"mm\", \"ft\" or \"in\"",
                ));
            }
        }
        if let Some(u) = &l.pressure_unit {
            if crate::series::correct::pascals_per(u.get_ref()).is_none() {
                return Err(self.err(
                    u.span(),
                    "logger.pressure_unit",
                    format!("unknown pressure unit \"{}\"", u.get_ref()),
                    "use \"kPa\", \"hPa\", \"mbar\", \"bar\", \"Pa\" or \"psi\"",
                ));
            }
        }
        if let Some(z) = &l.timezone {
            if let Err(e) = crate::series::time::Zone::parse(z.get_ref()) {
                return Err(self.err(
                    z.span(),
                    "logger.timezone",
                    e,
                    "give an IANA name such as \"Europe/Berlin\" or a fixed offset such as \"+01:00\"",
                ));
            }
        }
        if let Some(sep) = &l.separator {
            if sep.get_ref().chars().count() != 1 || !sep.get_ref().is_ascii() {
                return Err(self.err(
                    sep.span(),
                    "logger.separator",
                    "the separator must be a single character",
                    "use separator = \",\" or \";\" or \"\\t\"",
                ));
            }
        }
        let formats = match l.time_format.as_ref().map(|f| f.get_ref()) {
            None => Vec::new(),
            Some(raw::RawFormats::One(f)) => vec![f.clone()],
            Some(raw::RawFormats::Many(v)) => v.clone(),
        };
        if let Some(span) = l.time_format.as_ref().map(|f| f.span()) {
            for f in &formats {
                if let Err(e) = crate::series::time::TimeFormat::check(f) {
                    return Err(self.err(
                        span.clone(),
                        "logger.time_format",
                        e,
                        "use strftime directives such as %Y %m %d %H %M %S (e.g. \"%Y-%m-%d %H:%M\")",
                    ));
                }
            }
        }
        let temperature = l
            .water_temperature
            .as_ref()
            .map(|t| {
                self.bounded(
                    t,
                    "logger.water_temperature",
                    0.0,
                    40.0,
                    false,
                    "give the water temperature in °C (0 to 40)",
                )
            })
            .transpose()?;
        Ok(LoggerSpec {
            time_column: column(&l.time_column, "logger.time_column")?,
            time_formats: formats,
            timezone: s(&l.timezone),
            stage_column: column(&l.stage_column, "logger.stage_column")?,
            stage_unit: s(&l.stage_unit),
            zero: l.zero.as_ref().map(|z| self.number(z, "logger.zero")).transpose()?,
            tailwater_column: column(&l.tailwater_column, "logger.tailwater_column")?,
            tailwater_zero: l
                .tailwater_zero
                .as_ref()
                .map(|z| self.number(z, "logger.tailwater_zero"))
                .transpose()?,
            missing: l.missing.as_ref().map(|m| m.get_ref().clone()).unwrap_or_default(),
            separator: s(&l.separator),
            decimal_comma: l.decimal_comma.as_ref().is_some_and(|d| *d.get_ref()),
            skip_lines: l.skip_lines.as_ref().map_or(0, |d| *d.get_ref()),
            header: l.header.as_ref().map(|h| *h.get_ref()),
            pressure_column: column(&l.pressure_column, "logger.pressure_column")?,
            pressure_unit: s(&l.pressure_unit),
            temperature_column: column(&l.temperature_column, "logger.temperature_column")?,
            water_temperature: temperature,
            dry_reading: l
                .dry_reading
                .as_ref()
                .map(|z| self.number(z, "logger.dry_reading"))
                .transpose()?,
            max_depth: l
                .max_depth
                .as_ref()
                .map(|d| {
                    self.bounded(
                        d,
                        "logger.max_depth",
                        0.0,
                        1.0e4,
                        true,
                        "give the most water the sensor can have over it, in the stage unit",
                    )
                })
                .transpose()?,
        })
    }
}
