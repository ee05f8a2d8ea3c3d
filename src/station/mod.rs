//! Station files: TOML describing one gauging structure, loaded, checked and converted to SI.
//!
//! Parsing ([`Station::from_toml_str`]) is kept apart from reading the file ([`Station::load`]) so
//! tests need no files. Every error names the file, the line and column, the key, the rule broken
//! and the fix. The keys are listed in the README's station-file reference and in design.md.

mod calibration;
mod control;
mod logger;
mod period;
mod raw;
mod screening;
mod shape;
mod standard;
mod tables;
mod tailwater;

use std::ops::Range;
use std::path::Path;

pub use period::PeriodInfo;
use raw::{Num, RawStation};
use toml::Spanned;

use crate::hydraulics::Section;
use crate::rating::Structure;

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
            _ => structure.standard()?.default_head_range_m(structure),
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
    /// Screening thresholds and the gap-fill limit (`[screening]`, defaults without one).
    pub screening: crate::series::screen::ScreeningSpec,
    /// The staff gauge (reads 0 at crest level unless `[staff]` says otherwise).
    pub staff: StaffGauge,
    /// Which rating period this is (empty for a file without rating keys).
    pub period: PeriodInfo,
    /// The earlier periods of the file, oldest first (empty for a single-period file); this
    /// station is the latest.
    pub history: Vec<Station>,
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
        ctx.build_periods(raw)
    }
}

/// The staff gauge at the structure.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct StaffGauge {
    /// The staff reading with the water level at the crest (m): head = staff reading − this.
    pub crest_reading_m: f64,
    /// Where the staff's zero lies (free text), if given.
    pub datum: Option<String>,
}

impl Ctx<'_> {
    /// `[staff]`: optional; the staff reads 0 at crest level without it.
    fn staff(&self, raw: &RawStation, unit: LengthUnit) -> Result<StaffGauge, StationError> {
        let Some(t) = &raw.staff else {
            return Ok(StaffGauge::default());
        };
        let s = t.get_ref();
        let crest_reading_m = match &s.crest_reading {
            Some(n) => {
                let v = self.number(n, "staff.crest_reading")? * unit.metres();
                if v.abs() > MAX_LENGTH_M {
                    return Err(self.err(
                        n.span(),
                        "staff.crest_reading",
                        "longer than any staff gauge",
                        "give the staff reading with the water level at the crest, in the file's length_unit",
                    ));
                }
                v
            }
            None => {
                return Err(self.missing(
                    t.span(),
                    "staff.crest_reading",
                    "add crest_reading = the staff reading with the water level at the crest (head = staff reading − crest_reading)",
                ))
            }
        };
        Ok(StaffGauge {
            crest_reading_m,
            datum: s.datum.as_ref().map(|d| escape_controls(d.get_ref().trim())),
        })
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

impl Ctx<'_> {
    /// Checks every table of a parsed station file, each by its own function, and assembles the
    /// station in SI units.
    fn build(&self, raw: RawStation) -> Result<Station, StationError> {
        let (name, unit, gravity) = self.header(&raw)?;
        let control = self.control(&raw, unit)?;
        let (approach, sill_height_m, approach_alpha) = match (control.loss, control.plate_height_m) {
            (crate::rating::LossMethod::Standard(crate::rating::StandardRule::Parshall(size)), _) => {
                self.parshall_approach(&raw, size)?
            }
            (_, Some(plate_m)) => self.plate_approach(&raw, unit, plate_m)?,
            _ => self.approach(&raw, unit)?,
        };
        let given_range = self.range(&raw, unit)?;
        let exit = self.exit(&raw)?;
        let tailwater = raw.tailwater.as_ref().map(|t| self.tailwater(t, unit)).transpose()?;
        let uncertainty = self.uncertainty(&raw)?;
        let logger = raw.logger.as_ref().map(|l| self.logger(l)).transpose()?;
        let screening = raw
            .screening
            .as_ref()
            .map(|t| self.screening(t, unit))
            .transpose()?
            .unwrap_or_default();
        let structure = Structure {
            control: control.section,
            control_length_m: control.length_m,
            approach,
            sill_height_m,
            approach_alpha,
            loss: control.loss,
            kind: control.kind,
            gravity_m_s2: gravity,
            calibration: raw
                .calibration
                .as_ref()
                .map(|c| self.calibration(c, unit))
                .transpose()?,
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
            screening,
            staff: self.staff(&raw, unit)?,
            period: PeriodInfo::default(),
            history: Vec::new(),
        })
    }

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
}
