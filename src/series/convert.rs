//! From read rows to discharge with a band and a flag per row, plus daily and monthly summaries.
//!
//! Per row: stage (or pressure minus barometric pressure, turned into depth) → head = stage − zero
//! → plus the drift correction → rating (dense table, or the exact model above it) → 95 % band
//! from the uncertainty inputs → one flag, most severe first: `missing`, `submerged`,
//! `above-range`, `below-range`, `beyond-limits`, `dry`, `ok` (design.md). `beyond-limits` marks
//! heads inside the station's range where the method breaks a limit of application, exactly as
//! `rate` marks them `valid = false`.
//!
//! Summaries count the rows flagged `ok` or `dry`; each stands for the time to the next reading,
//! at most the nominal logging interval, and a row that repeats another's instant stands for no
//! time ([`super::timeline`]). A reading whose time runs past the end of its local day gives the
//! rest to the next day, so a day is never covered for more than its length. Other rows are
//! counted as flagged and add neither volume nor uncertainty. Volume uncertainties keep
//! systematic parts (coefficient, width, gauge zero) fully correlated and reading noise
//! independent ([`crate::uncertainty::series`]).

use std::collections::BTreeMap;

use super::correct::{depth_from_pressure_m, drift_at_usable, TimeSeries};
use super::dense::{DenseRating, RatedHead};
use super::edits::Edits;
use super::screen::{Fill, Screen, Screened};
use super::time::{
    civil_from_days, date_string, days_from_civil, local_day_start_utc, LocalDays, TimeNote, Zone, NO_TIME,
};
use super::timeline::Timeline;
use crate::station::HeadRange;
use crate::tailwater::{submerged_estimate, NoEstimate, Tailwater};
use crate::uncertainty::{BandWeights, GumModel, Inputs, PeriodAccumulator, SeriesReading, COVERAGE_FACTOR};

/// One flag per row, most severe first (design.md, "Second round").
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub enum Flag {
    /// No usable time or head, and not filled.
    Missing,
    /// Inside an `exclude` edit, not filled.
    Excluded,
    /// The sensor was out of the water ([`super::screen`]), not filled.
    OutOfWater,
    /// A spike ([`super::screen`]), not filled.
    Spike,
    /// A flat line ([`super::screen`]), not filled.
    Flat,
    /// The tailwater drowns the control: the rating reads high (estimated).
    Submerged,
    /// Head above the station's range: computed by the model beyond the rated range (estimated).
    AboveRange,
    /// Head above the crest but below the station's range (estimated).
    BelowRange,
    /// Head in the station's range, but outside the method's limits of application (estimated).
    BeyondLimits,
    /// Head interpolated across a gap or an edit's window, then rated (estimated).
    Filled,
    /// Head at or below the crest: no flow over the control (measured).
    Dry,
    /// Within everything (measured).
    Ok,
}

impl Flag {
    /// All flags, most severe first.
    pub const ALL: [Flag; 12] = [
        Flag::Missing,
        Flag::Excluded,
        Flag::OutOfWater,
        Flag::Spike,
        Flag::Flat,
        Flag::Submerged,
        Flag::AboveRange,
        Flag::BelowRange,
        Flag::BeyondLimits,
        Flag::Filled,
        Flag::Dry,
        Flag::Ok,
    ];

    /// The word written to the output.
    pub fn as_str(self) -> &'static str {
        match self {
            Flag::Missing => "missing",
            Flag::Excluded => "excluded",
            Flag::OutOfWater => "out-of-water",
            Flag::Spike => "spike",
            Flag::Flat => "flat",
            Flag::Submerged => "submerged",
            Flag::AboveRange => "above-range",
            Flag::BelowRange => "below-range",
            Flag::BeyondLimits => "beyond-limits",
            Flag::Filled => "filled",
            Flag::Dry => "dry",
            Flag::Ok => "ok",
        }
    }

    /// Measured: the row's discharge comes from a reading within everything (`ok`, `dry`).
    pub fn measured(self) -> bool {
        matches!(self, Flag::Ok | Flag::Dry)
    }

    /// Estimated: the row has a discharge, but from beyond the rating's range or limits, a
    /// drowned control, or a filled head.
    pub fn estimated(self) -> bool {
        matches!(
            self,
            Flag::Submerged | Flag::AboveRange | Flag::BelowRange | Flag::BeyondLimits | Flag::Filled
        )
    }

    /// Whether the row has a discharge that counts in volumes (measured or estimated).
    pub fn counted(self) -> bool {
        self.measured() || self.estimated()
    }

    /// How many times the model's uncertainty an estimated row carries (common practice, no
    /// source: the band of a value the rating does not cover is stated, not known): 2 beyond the
    /// range or the limits and for a drowned control; 1 otherwise (a filled row adds its
    /// interpolation error instead).
    pub fn band_factor(self) -> f64 {
        match self {
            Flag::Submerged | Flag::AboveRange | Flag::BelowRange | Flag::BeyondLimits => 2.0,
            _ => 1.0,
        }
    }

    fn of_screen(code: Screen) -> Option<Flag> {
        match code {
            Screen::Excluded => Some(Flag::Excluded),
            Screen::OutOfWater => Some(Flag::OutOfWater),
            Screen::Spike => Some(Flag::Spike),
            Screen::Flat => Some(Flag::Flat),
            Screen::Kept | Screen::FillEdit => None,
        }
    }
}

/// Where the head comes from.
#[derive(Debug, Clone, PartialEq)]
pub enum StageSource {
    /// A logged stage in some unit.
    Level {
        /// Metres per logged unit.
        metres_per_unit: f64,
    },
    /// A logged absolute pressure, compensated with a barometric series.
    Pressure {
        /// Pascals per logged unit.
        pascals_per_unit: f64,
        /// The barometric series (Pa).
        baro_pa: TimeSeries,
        /// Longest gap (ms) across which the barometric series is interpolated.
        baro_max_gap_ms: i64,
        /// Water temperature (°C) used where no temperature is logged.
        water_temperature_c: f64,
        /// Value-column index of a logged temperature (°C), if any.
        temperature_column: Option<usize>,
    },
}

/// The stages a logger can physically read. A reading outside them is flagged `missing` and
/// listed, never rated (a logger lifted out of the water must not read as a dry channel, nor a
/// reading in the wrong unit as a flood).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Plausible {
    /// Lowest possible stage (m): [`Plausible::BELOW_DRY_M`] below the sensor's dry reading.
    pub min_stage_m: f64,
    /// Highest possible stage (m): the dry reading plus the most water over the sensor.
    pub max_stage_m: f64,
}

impl Plausible {
    /// How far below its dry reading a sensor may read before the reading is impossible (m):
    /// a sensor in air reads its dry value give or take its drift and the barometric noise,
    /// a few centimetres at most (common practice, no source).
    pub const BELOW_DRY_M: f64 = 0.10;

    /// From the sensor's dry reading and the most water it can have over it (m).
    pub fn new(dry_reading_m: f64, max_depth_m: f64) -> Self {
        Self {
            min_stage_m: dry_reading_m - Self::BELOW_DRY_M,
            max_stage_m: dry_reading_m + max_depth_m,
        }
    }

    /// The default most water over the sensor (m): ten times the water over it at the top of
    /// the rated range, at least 5 m (common practice, no source: far beyond any flood a
    /// structure passes, well below a reading in the wrong unit).
    pub fn default_max_depth_m(zero_m: f64, max_head_m: f64) -> f64 {
        (10.0 * (zero_m + max_head_m)).max(5.0)
    }
}

/// Why a reading is impossible.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord)]
pub enum Impossible {
    /// An absolute pressure below zero.
    NegativePressure,
    /// A stage far below the sensor's dry reading.
    BelowSensor,
    /// More water over the sensor than it can have.
    AboveMaxDepth,
}

impl Impossible {
    /// In words, for reports.
    pub fn as_str(self) -> &'static str {
        match self {
            Impossible::NegativePressure => "negative absolute pressure",
            Impossible::BelowSensor => "more than 0.10 m below the sensor's dry reading",
            Impossible::AboveMaxDepth => "more water over the sensor than [logger] max_depth",
        }
    }
}

/// A row's stage and head, before any fill.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Level {
    /// Stage (m), NaN where it cannot be had.
    pub stage_m: f64,
    /// Corrected head above the crest (m): zero, edits and drift applied; NaN where the reading
    /// is impossible or missing.
    pub head_m: f64,
    /// Why the reading is impossible, if it is.
    pub impossible: Option<Impossible>,
    /// The barometric series did not reach the row.
    pub no_baro: bool,
    /// The logged temperature was missing and the given one was used.
    pub temperature_fallback: bool,
}

/// Everything the conversion needs besides the rows.
#[derive(Debug, Clone)]
pub struct Conversion<'a> {
    /// The model (for values above the table and the drowned-flow estimate).
    pub gum: &'a GumModel,
    /// The dense table.
    pub table: &'a DenseRating,
    /// The station's head range.
    pub range: HeadRange,
    /// Stage source.
    pub stage: StageSource,
    /// Logger stage (m) with the water level with the crest.
    pub zero_m: f64,
    /// The stages the logger can physically read.
    pub plausible: Plausible,
    /// Heads where the method breaks a limit of application
    /// ([`crate::rating::limits::invalid_head_bands`]).
    pub invalid_bands: Vec<(f64, f64)>,
    /// Usable drift points (UTC ms, staff − logger m), sorted.
    pub drift: Vec<(i64, f64)>,
    /// A logged tailwater: value-column index, metres per unit, logger reading at crest level.
    pub tailwater_column: Option<(usize, f64, f64)>,
    /// The tailwater channel, for the tailwater velocity head (none for a table).
    pub tailwater: Option<&'a Tailwater>,
    /// Replace the discharge of drowned rows by the drowned-flow estimate where it applies.
    pub submerged_estimate: bool,
    /// Exponent n of the rating equation, for the drowned-flow estimate.
    pub exponent: f64,
    /// The rows in time order: the time each row stands for, and repeated instants.
    pub timeline: &'a Timeline,
    /// The logger's clock, for the ends of local days.
    pub zone: Zone,
    /// Gravity (m/s²).
    pub gravity_m_s2: f64,
    /// The edits from the hydrographer's log (zero and offset windows apply to the head).
    pub edits: Edits,
    /// Screening, edits and fills decided over the rows in time order ([`super::screen`]);
    /// empty until [`crate::series::pipeline::stages::screen`] has run.
    pub screened: Screened,
    /// Rows read from the file; rows past them are inserted into filled gaps
    /// ([`Screened::inserted`], in order).
    pub input_rows: usize,
    /// Value-column index of a logged water temperature (°C), written beside each row.
    pub temperature_column: Option<usize>,
    /// The station's earlier rating periods, oldest first: rows before `until_ms` (UTC ms) of
    /// the first period not yet ended are converted with its rating (empty for one period).
    pub earlier: Vec<EarlierPeriod<'a>>,
}

/// An earlier rating period of the station, as the conversion applies it.
#[derive(Debug, Clone)]
pub struct EarlierPeriod<'a> {
    /// The period ends (the next one starts) at this instant (UTC ms).
    pub until_ms: i64,
    /// The conversion with this period's rating (its own `earlier` is empty).
    pub conv: Conversion<'a>,
    /// Its input uncertainties, for the band.
    pub inputs: &'a Inputs,
}

/// The converted rows of one output chunk (columns).
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Chunk {
    /// UTC ms, [`NO_TIME`] where unknown.
    pub time_ms: Vec<i64>,
    /// Stage (m), NaN where unknown.
    pub stage_m: Vec<f64>,
    /// Corrected head above the crest (m).
    pub head_m: Vec<f64>,
    /// Discharge (m³/s).
    pub discharge_m3s: Vec<f64>,
    /// Lower end of the 95 % band.
    pub low_m3s: Vec<f64>,
    /// Upper end of the 95 % band.
    pub high_m3s: Vec<f64>,
    /// Flag.
    pub flag: Vec<Flag>,
    /// Source line.
    pub line: Vec<u32>,
    /// For rows whose instant other rows hold too: the line of the row that counts for it
    /// (0 where the row holds its instant alone).
    pub counted_line: Vec<u32>,
    /// The logged tailwater level above the crest (m), when the logger logs one (else empty).
    pub tailwater_m: Vec<f64>,
    /// The submergence H2/H1 where a logged tailwater and a rated head give one (else NaN;
    /// empty without a logged tailwater).
    pub submergence: Vec<f64>,
    /// The logged water temperature (°C), when the logger logs one (else empty).
    pub temperature_c: Vec<f64>,
}

/// Counts for the report.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Counts {
    /// Rows per flag, in [`Flag::ALL`] order.
    pub per_flag: [usize; 12],
    /// Drowned rows whose discharge was replaced by the estimate.
    pub submerged_estimated: usize,
    /// Drowned rows for which no estimate applies (discharge left as the free-flow rating).
    pub submerged_not_estimated: usize,
    /// Of those: the structure is not a weir.
    pub submerged_not_a_weir: usize,
    /// Of those: submergence above 0.90.
    pub submerged_too_drowned: usize,
    /// Of those: no estimate was asked for.
    pub submerged_not_asked: usize,
    /// Rows above the dense table, computed exactly.
    pub above_table: usize,
    /// Rows where the barometric series did not reach.
    pub no_baro: usize,
    /// Rows where the logged temperature was missing and the given one was used.
    pub temperature_fallback: usize,
    /// Rows where the model had no discharge (listed by line).
    pub unrated_lines: Vec<u32>,
    /// Rows with an impossible reading (line, why), flagged `missing`.
    pub impossible: Vec<(u32, Impossible)>,
}

impl Counts {
    /// Adds another set of counts.
    pub fn merge(&mut self, o: Counts) {
        for (a, b) in self.per_flag.iter_mut().zip(o.per_flag) {
            *a += b;
        }
        self.submerged_estimated += o.submerged_estimated;
        self.submerged_not_estimated += o.submerged_not_estimated;
        self.submerged_not_a_weir += o.submerged_not_a_weir;
        self.submerged_too_drowned += o.submerged_too_drowned;
        self.submerged_not_asked += o.submerged_not_asked;
        self.above_table += o.above_table;
        self.no_baro += o.no_baro;
        self.temperature_fallback += o.temperature_fallback;
        self.unrated_lines.extend(o.unrated_lines);
        self.impossible.extend(o.impossible);
    }
}

impl Chunk {
    /// Appends another chunk's rows.
    pub fn append(&mut self, o: Chunk) {
        self.time_ms.extend(o.time_ms);
        self.stage_m.extend(o.stage_m);
        self.head_m.extend(o.head_m);
        self.discharge_m3s.extend(o.discharge_m3s);
        self.low_m3s.extend(o.low_m3s);
        self.high_m3s.extend(o.high_m3s);
        self.flag.extend(o.flag);
        self.line.extend(o.line);
        self.counted_line.extend(o.counted_line);
        self.tailwater_m.extend(o.tailwater_m);
        self.submergence.extend(o.submergence);
        self.temperature_c.extend(o.temperature_c);
    }
}

/// A row's discharge as it counts in the summaries: the reading, whether it is estimated, and
/// the widening of its uncertainty ([`Flag::band_factor`], and the interpolation error of a
/// filled head).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct CountedReading {
    /// The reading (its `duration_s` is set when it is added).
    pub reading: SeriesReading,
    /// Estimated rather than measured.
    pub estimated: bool,
    /// Times the model's uncertainty.
    pub factor: f64,
    /// Standard uncertainty of an interpolated head (m), 0 for a measured one.
    pub u_fill_m: f64,
}

/// Running statistics of one summary period.
#[derive(Debug, Clone, Copy, PartialEq)]
struct Acc {
    rows: usize,
    counted: usize,
    measured_rows: usize,
    min_q: f64,
    max_q: f64,
    measured: PeriodAccumulator,
    estimated: PeriodAccumulator,
}

impl Default for Acc {
    fn default() -> Self {
        Self {
            rows: 0,
            counted: 0,
            measured_rows: 0,
            min_q: f64::INFINITY,
            max_q: f64::NEG_INFINITY,
            measured: PeriodAccumulator::default(),
            estimated: PeriodAccumulator::default(),
        }
    }
}

impl Acc {
    fn add(&mut self, q: f64, r: Option<&CountedReading>) {
        self.rows += 1;
        if let Some(r) = r {
            self.counted += 1;
            self.measured_rows += usize::from(!r.estimated);
            self.min_q = self.min_q.min(q);
            self.max_q = self.max_q.max(q);
            self.push(r);
        }
    }

    fn push(&mut self, r: &CountedReading) {
        if r.estimated {
            self.estimated.push_estimated(&r.reading, r.factor, r.u_fill_m);
        } else {
            self.measured.push(&r.reading);
        }
    }

    fn merge(&mut self, o: &Acc) {
        self.rows += o.rows;
        self.counted += o.counted;
        self.measured_rows += o.measured_rows;
        self.min_q = self.min_q.min(o.min_q);
        self.max_q = self.max_q.max(o.max_q);
        self.measured.merge(&o.measured);
        self.estimated.merge(&o.estimated);
    }
}

/// One summary row. Every period is accounted for: its length is measured, estimated or
/// missing time.
#[derive(Debug, Clone, PartialEq)]
pub struct PeriodRow {
    /// `YYYY-MM-DD` or `YYYY-MM` on the local clock.
    pub label: String,
    /// Rows in the period (inserted rows included).
    pub rows: usize,
    /// Rows whose discharge counts (measured or estimated, not repeating another row's instant).
    pub rows_counted: usize,
    /// Of those, measured (`ok` or `dry`).
    pub rows_measured: usize,
    /// Mean discharge over the time covered by counted rows (m³/s).
    pub mean_m3s: f64,
    /// Smallest counted discharge (m³/s).
    pub min_m3s: f64,
    /// Largest counted discharge (m³/s).
    pub max_m3s: f64,
    /// Volume of the counted rows, measured plus estimated (m³).
    pub volume_m3: f64,
    /// Volume of the measured rows (m³).
    pub volume_measured_m3: f64,
    /// Volume of the estimated rows (m³).
    pub volume_estimated_m3: f64,
    /// Expanded (k = 2) uncertainty of the volume, every part combined (m³).
    pub volume_u95_m3: f64,
    /// Standard uncertainty from the systematic inputs and the interpolation of filled heads
    /// (m³).
    pub volume_u_systematic_m3: f64,
    /// Standard uncertainty from reading noise (m³).
    pub volume_u_random_m3: f64,
    /// Hours covered by counted rows (measured plus estimated).
    pub covered_h: f64,
    /// Hours covered by measured rows.
    pub measured_h: f64,
    /// Hours covered by estimated rows.
    pub estimated_h: f64,
    /// Hours of the period with no discharge: the period's length less the covered hours.
    pub missing_h: f64,
    /// The period's length on the local clock (h): 24, or 23 or 25 on a clock-change day.
    pub period_h: f64,
    /// Covered share of the period (%).
    pub complete_pct: f64,
}

/// Daily and monthly summaries. Consecutive rows of the same day are gathered in a running
/// accumulator before they reach the maps, so long series cost one map update per day.
#[derive(Debug, Clone, Default)]
pub struct Summaries {
    days: BTreeMap<i64, Acc>,
    current: Option<(i64, Acc)>,
}

impl Summaries {
    fn add(&mut self, day: i64, q: f64, r: Option<&CountedReading>) {
        self.acc(day).add(q, r);
    }

    /// The rest of a reading's time that runs into a later day: time and volume, no row.
    fn add_spill(&mut self, day: i64, r: &CountedReading) {
        self.acc(day).push(r);
    }

    fn acc(&mut self, day: i64) -> &mut Acc {
        if !matches!(&self.current, Some((d, _)) if *d == day) {
            self.flush();
            self.current = Some((day, Acc::default()));
        }
        &mut self.current.as_mut().expect("set above").1
    }

    fn flush(&mut self) {
        if let Some((d, acc)) = self.current.take() {
            self.days.entry(d).or_default().merge(&acc);
        }
    }

    /// Adds another set of summaries (from rows converted elsewhere).
    pub fn merge(&mut self, mut other: Summaries) {
        self.flush();
        other.flush();
        for (d, acc) in other.days {
            self.days.entry(d).or_default().merge(&acc);
        }
    }

    /// Every day from the first to the last, those without a row included.
    fn all_days(&self) -> BTreeMap<i64, Acc> {
        let mut all = self.days.clone();
        if let (Some(first), Some(last)) = (self.days.keys().next(), self.days.keys().next_back()) {
            for d in *first..=*last {
                all.entry(d).or_default();
            }
        }
        all
    }

    fn months(days: &BTreeMap<i64, Acc>) -> BTreeMap<(i64, u32), Acc> {
        let mut m: BTreeMap<(i64, u32), Acc> = BTreeMap::new();
        for (d, acc) in days {
            let (y, mo, _) = civil_from_days(*d);
            m.entry((y, mo)).or_default().merge(acc);
        }
        m
    }

    fn row(label: String, a: &Acc, period_s: f64, inputs: &Inputs) -> PeriodRow {
        let mut all = a.measured;
        all.merge(&a.estimated);
        let p = all.finish(inputs);
        let (m, e) = (a.measured.finish(inputs), a.estimated.finish(inputs));
        let sys =
            (p.u_coefficient_m3.powi(2) + p.u_dimension_m3.powi(2) + p.u_zero_m3.powi(2) + p.u_fill_m3.powi(2)).sqrt();
        let counted = a.counted > 0;
        PeriodRow {
            label,
            rows: a.rows,
            rows_counted: a.counted,
            rows_measured: a.measured_rows,
            mean_m3s: if counted && p.covered_s > 0.0 {
                p.volume_m3 / p.covered_s
            } else {
                f64::NAN
            },
            min_m3s: if counted { a.min_q } else { f64::NAN },
            max_m3s: if counted { a.max_q } else { f64::NAN },
            volume_m3: m.volume_m3 + e.volume_m3,
            volume_measured_m3: m.volume_m3,
            volume_estimated_m3: e.volume_m3,
            volume_u95_m3: p.expanded_m3(),
            volume_u_systematic_m3: sys,
            volume_u_random_m3: p.u_random_m3,
            covered_h: p.covered_s / 3600.0,
            measured_h: m.covered_s / 3600.0,
            estimated_h: e.covered_s / 3600.0,
            missing_h: ((period_s - p.covered_s) / 3600.0).max(0.0),
            period_h: period_s / 3600.0,
            complete_pct: if period_s > 0.0 {
                (100.0 * p.covered_s / period_s).min(100.0)
            } else {
                f64::NAN
            },
        }
    }

    /// One row per local calendar day, every day from the first to the last.
    pub fn daily(&mut self, zone: &Zone, inputs: &Inputs) -> Vec<PeriodRow> {
        self.flush();
        let mut ends = DayEnds::new(*zone);
        self.all_days()
            .iter()
            .map(|(d, a)| {
                let len_ms = ends.of(*d) - local_day_start_utc(zone, *d);
                Self::row(date_string(*d), a, len_ms as f64 / 1000.0, inputs)
            })
            .collect()
    }

    /// One row per local calendar month.
    pub fn monthly(&mut self, zone: &Zone, inputs: &Inputs) -> Vec<PeriodRow> {
        self.flush();
        Self::months(&self.all_days())
            .iter()
            .map(|(&(y, m), a)| {
                let first = days_from_civil(y, m, 1);
                let next = if m == 12 {
                    days_from_civil(y + 1, 1, 1)
                } else {
                    days_from_civil(y, m + 1, 1)
                };
                let len_ms = local_day_start_utc(zone, next) - local_day_start_utc(zone, first);
                Self::row(format!("{y:04}-{m:02}"), a, len_ms as f64 / 1000.0, inputs)
            })
            .collect()
    }
}

impl Conversion<'_> {
    /// Stage (m) of row `i` at instant `t`: the logged stage, or the depth from pressure minus the
    /// barometric pressure; NaN when it cannot be had. Returns also whether the barometric series
    /// was missing and whether the temperature fell back to the given value.
    pub fn stage_of(&self, t: i64, values: &[Vec<f64>], i: usize) -> (f64, bool, bool) {
        let raw = values[0][i];
        match &self.stage {
            StageSource::Level { metres_per_unit } => (raw * metres_per_unit, false, false),
            StageSource::Pressure {
                pascals_per_unit,
                baro_pa,
                baro_max_gap_ms,
                water_temperature_c,
                temperature_column,
            } => {
                let baro = if t == NO_TIME {
                    None
                } else {
                    baro_pa.at(t, *baro_max_gap_ms)
                };
                match baro {
                    None => (f64::NAN, raw.is_finite() && t != NO_TIME, false),
                    Some(b) => {
                        let (temp, fallback) = match temperature_column.map(|k| values[k][i]) {
                            Some(v) if v.is_finite() => (v, false),
                            Some(_) => (*water_temperature_c, true),
                            None => (*water_temperature_c, false),
                        };
                        (
                            depth_from_pressure_m(raw * pascals_per_unit, b, temp, self.gravity_m_s2),
                            false,
                            fallback,
                        )
                    }
                }
            }
        }
    }

    /// The head (m) before drift of a stage read at `t`: the stage less the logger's zero (a
    /// `set-zero` edit's where one holds `t`), plus any `offset` edits.
    #[inline]
    pub fn head_before_drift(&self, t: i64, stage_m: f64) -> f64 {
        stage_m - self.edits.zero_at(t, self.zero_m) + self.edits.offset_at(t)
    }

    /// Row `i`'s stage and head at instant `t`, before any fill: the impossible readings get no
    /// head.
    pub fn level(&self, i: usize, t: i64, values: &[Vec<f64>]) -> Level {
        let (stage_m, no_baro, temperature_fallback) = self.stage_of(t, values, i);
        let drift = if t == NO_TIME {
            0.0
        } else {
            drift_at_usable(&self.drift, t)
        };
        let impossible = if matches!(self.stage, StageSource::Pressure { .. }) && values[0][i] < 0.0 {
            Some(Impossible::NegativePressure)
        } else if stage_m < self.plausible.min_stage_m {
            Some(Impossible::BelowSensor)
        } else if stage_m > self.plausible.max_stage_m {
            Some(Impossible::AboveMaxDepth)
        } else {
            None
        };
        Level {
            stage_m,
            head_m: if impossible.is_some() {
                f64::NAN
            } else {
                self.head_before_drift(t, stage_m) + drift
            },
            impossible,
            no_baro,
            temperature_fallback,
        }
    }

    /// The screening decision for row `i` (inserted rows have none).
    #[inline]
    fn screen_of(&self, i: usize) -> Screen {
        if i >= self.input_rows {
            Screen::Kept
        } else {
            self.screened.code(i)
        }
    }

    /// The filled head of row `i`, if it has one (every inserted row does).
    #[inline]
    fn fill_of(&self, i: usize) -> Option<Fill> {
        if i >= self.input_rows {
            self.screened.inserted.get(i - self.input_rows).map(|r| r.fill)
        } else {
            self.screened.fill(i)
        }
    }

    /// The time (ms) row `i` stands for.
    #[inline]
    fn duration_of(&self, i: usize, utc: &[i64]) -> i64 {
        if i >= self.input_rows {
            self.screened
                .inserted
                .get(i - self.input_rows)
                .map_or(0, |r| i64::from(r.duration_ms))
        } else {
            self.timeline.duration_ms(i, utc)
        }
    }

    fn rated(&self, head: f64, counts: &mut Counts, line: u32) -> Option<RatedHead> {
        if let Some(r) = self.table.eval(head) {
            return Some(r);
        }
        counts.above_table += 1;
        let g = self.gum.point(head).ok();
        let p = self.gum.model().point(head).ok();
        match (g, p) {
            (Some(g), Some(p)) => Some(RatedHead {
                discharge_m3s: g.discharge_m3s,
                dq_dcoefficient: g.dq_dcoefficient,
                dq_ddimension: g.dq_ddimension,
                dq_dhead: g.dq_dhead,
                energy_head_m: p.energy_head_m,
                modular_limit: self
                    .table
                    .eval(self.table.top_m())
                    .map_or(f64::NAN, |r| r.modular_limit),
            }),
            _ => {
                counts.unrated_lines.push(line);
                None
            }
        }
    }

    /// [`Self::convert_rows`] with each row converted by the rating period in force at its
    /// instant: runs of rows of one period are converted together and joined in order (rows with
    /// no time take the latest period; they have no discharge anyway).
    #[allow(clippy::too_many_arguments)]
    pub fn convert_rows_in_force(
        &self,
        order: &[usize],
        utc: &[i64],
        days: &LocalDays,
        values: &[Vec<f64>],
        lines: &[u32],
        inputs: &Inputs,
        counts: &mut Counts,
        summaries: &mut Summaries,
    ) -> Chunk {
        if self.earlier.is_empty() {
            return self.convert_rows(order, utc, days, values, lines, inputs, counts, summaries);
        }
        let period = |i: usize| {
            let t = utc[i];
            if t == NO_TIME {
                return self.earlier.len();
            }
            self.earlier
                .iter()
                .position(|p| t < p.until_ms)
                .unwrap_or(self.earlier.len())
        };
        let mut out = Chunk::default();
        let mut start = 0;
        while start < order.len() {
            let k = period(order[start]);
            let mut end = start + 1;
            while end < order.len() && period(order[end]) == k {
                end += 1;
            }
            let run = &order[start..end];
            let chunk = match self.earlier.get(k) {
                Some(p) => p
                    .conv
                    .convert_rows(run, utc, days, values, lines, p.inputs, counts, summaries),
                None => self.convert_rows(run, utc, days, values, lines, inputs, counts, summaries),
            };
            out.append(chunk);
            start = end;
        }
        out
    }

    /// Converts rows `order` (indices into the arrays) into a chunk, updating counts and
    /// summaries: the stage and head of every row, then the rating and band of every head in a
    /// tight loop, then each row's flag, its rare cases and its share of the summaries.
    #[allow(clippy::too_many_arguments)]
    pub fn convert_rows(
        &self,
        order: &[usize],
        utc: &[i64],
        days: &LocalDays,
        values: &[Vec<f64>],
        lines: &[u32],
        inputs: &Inputs,
        counts: &mut Counts,
        summaries: &mut Summaries,
    ) -> Chunk {
        let weights = BandWeights::new(inputs);
        let mut c = self.heads(order, utc, values, lines, counts);
        let (mut sens, rated) = self.rate_heads(&mut c, &weights);
        let mut day_end = DayEnds::new(self.zone);
        for (k, &i) in order.iter().enumerate() {
            let (flag, reading) = self.flag_row(k, i, values, &mut c, &mut sens, &rated, &weights, counts);
            counts.per_flag[flag as usize] += 1;
            if c.time_ms[k] != NO_TIME {
                let counted = flag.counted() && !self.timeline.is_repeat(i, c.line[k]);
                let duration_ms = self.duration_of(i, utc);
                let row = (c.time_ms[k], days.day(i, c.time_ms[k]), c.discharge_m3s[k]);
                add_to_summaries(summaries, &mut day_end, row, reading.filter(|_| counted), duration_ms);
            }
            c.flag.push(flag);
        }
        c
    }

    /// Stage 1 of [`Self::convert_rows`]: the time, stage and head of every row (impossible
    /// readings get no head and are listed).
    fn heads(&self, order: &[usize], utc: &[i64], values: &[Vec<f64>], lines: &[u32], counts: &mut Counts) -> Chunk {
        let n = order.len();
        let mut c = Chunk {
            time_ms: Vec::with_capacity(n),
            stage_m: Vec::with_capacity(n),
            head_m: Vec::with_capacity(n),
            discharge_m3s: Vec::with_capacity(n),
            low_m3s: Vec::with_capacity(n),
            high_m3s: Vec::with_capacity(n),
            flag: Vec::with_capacity(n),
            line: Vec::with_capacity(n),
            counted_line: Vec::with_capacity(n),
            ..Chunk::default()
        };
        for &i in order {
            let t = utc[i];
            let lv = self.level(i, t, values);
            counts.no_baro += usize::from(lv.no_baro);
            counts.temperature_fallback += usize::from(lv.temperature_fallback);
            if let Some(why) = lv.impossible {
                counts.impossible.push((lines[i], why));
            }
            c.time_ms.push(t);
            c.stage_m.push(lv.stage_m);
            c.head_m.push(self.fill_of(i).map_or(lv.head_m, |f| f.head_m));
            c.line.push(lines[i]);
            c.counted_line.push(self.timeline.counted_line(i).unwrap_or(0));
            if let Some((col, per, zero)) = self.tailwater_column {
                c.tailwater_m.push(values[col][i] * per - zero);
                c.submergence.push(f64::NAN);
            }
            if let Some(col) = self.temperature_column {
                c.temperature_c.push(values[col][i]);
            }
        }
        c
    }

    /// Stage 2 of [`Self::convert_rows`]: the rating and band of every head above the crest
    /// from the dense table, in a tight loop over rows that do not depend on each other (so that
    /// the processor overlaps them). Returns the sensitivities and whether the table rated it.
    fn rate_heads(&self, c: &mut Chunk, weights: &BandWeights) -> (Vec<[f64; 3]>, Vec<bool>) {
        let n = c.time_ms.len();
        let mut sens: Vec<[f64; 3]> = Vec::with_capacity(n);
        let mut rated: Vec<bool> = Vec::with_capacity(n);
        for k in 0..n {
            let (t, head) = (c.time_ms[k], c.head_m[k]);
            let r = if t != NO_TIME && head.is_finite() && head > 0.0 {
                self.table.eval_core(head)
            } else {
                None
            };
            let (q, s3, band, ok) = match r {
                Some(r) => (r[0], [r[1], r[2], r[3]], band_of(weights, r), true),
                None => (f64::NAN, [f64::NAN; 3], (f64::NAN, f64::NAN), false),
            };
            c.discharge_m3s.push(q);
            c.low_m3s.push(band.0);
            c.high_m3s.push(band.1);
            sens.push(s3);
            rated.push(ok);
        }
        (sens, rated)
    }

    /// Stage 3 of [`Self::convert_rows`] for row `k` (input row `i`): its flag, the rare cases
    /// (screened rows: no discharge; above the table: the model itself; drowned: the flag and,
    /// where asked and applicable, the drowned-flow estimate), the widened band of an estimated
    /// row and the reading it adds to the summaries.
    #[allow(clippy::too_many_arguments)]
    fn flag_row(
        &self,
        k: usize,
        i: usize,
        values: &[Vec<f64>],
        c: &mut Chunk,
        sens: &mut [[f64; 3]],
        rated: &[bool],
        weights: &BandWeights,
        counts: &mut Counts,
    ) -> (Flag, Option<CountedReading>) {
        let (t, head) = (c.time_ms[k], c.head_m[k]);
        if t == NO_TIME || !head.is_finite() {
            return (Flag::Missing, None);
        }
        let fill = self.fill_of(i);
        if fill.is_none() {
            if let Some(flag) = Flag::of_screen(self.screen_of(i)) {
                c.discharge_m3s[k] = f64::NAN;
                c.low_m3s[k] = f64::NAN;
                c.high_m3s[k] = f64::NAN;
                return (flag, None);
            }
        }
        let Some(mut flag) = self.flow_flag(k, i, values, c, sens, rated, weights, counts) else {
            return (Flag::Missing, None);
        };
        if fill.is_some() && flag.measured() {
            flag = Flag::Filled;
        }
        let factor = flag.band_factor();
        let u_fill_m = fill.map_or(0.0, |f| f.u_m);
        let [dcd, db, dh] = sens[k];
        if factor > 1.0 || u_fill_m > 0.0 {
            let q = c.discharge_m3s[k];
            let u_model = factor * (c.high_m3s[k] - q) / COVERAGE_FACTOR;
            let half = COVERAGE_FACTOR * u_model.hypot(dh * u_fill_m);
            c.low_m3s[k] = (q - half).max(0.0);
            c.high_m3s[k] = q + half;
        }
        let reading = reading_of([c.discharge_m3s[k], dcd, db, dh], 0.0, true);
        (
            flag,
            Some(CountedReading {
                reading,
                estimated: flag.estimated(),
                factor,
                u_fill_m,
            }),
        )
    }

    /// The flag of a row with a head, from the flow: dry, or rated (the model itself above the
    /// table) and placed against the range, the limits and the tailwater. `None` where the
    /// model has no discharge.
    #[allow(clippy::too_many_arguments)]
    fn flow_flag(
        &self,
        k: usize,
        i: usize,
        values: &[Vec<f64>],
        c: &mut Chunk,
        sens: &mut [[f64; 3]],
        rated: &[bool],
        weights: &BandWeights,
        counts: &mut Counts,
    ) -> Option<Flag> {
        let head = c.head_m[k];
        if head <= 0.0 {
            c.discharge_m3s[k] = 0.0;
            c.low_m3s[k] = 0.0;
            c.high_m3s[k] = 0.0;
            sens[k] = [0.0; 3];
            return Some(Flag::Dry);
        }
        let exact = if rated[k] {
            None
        } else {
            self.rated(head, counts, c.line[k])
        };
        if let Some(r) = exact {
            // above the dense table: the model itself
            let v = [r.discharge_m3s, r.dq_dcoefficient, r.dq_ddimension, r.dq_dhead];
            (c.low_m3s[k], c.high_m3s[k]) = band_of(weights, v);
            c.discharge_m3s[k] = r.discharge_m3s;
            sens[k] = [v[1], v[2], v[3]];
        }
        if !rated[k] && exact.is_none() {
            return None;
        }
        let mut flag = if head > self.range.max_head_m {
            Flag::AboveRange
        } else if head < self.range.min_head_m {
            Flag::BelowRange
        } else if crate::rating::limits::in_bands(&self.invalid_bands, head) {
            Flag::BeyondLimits
        } else {
            Flag::Ok
        };
        if let Some((col, per, zero)) = self.tailwater_column {
            let r = exact.or_else(|| self.table.eval(head));
            if let (true, Some(r)) = (values[col][i].is_finite(), r) {
                let level = values[col][i] * per - zero;
                if self.drowned(k, level, &r, c, counts) {
                    flag = Flag::Submerged;
                }
            }
        }
        Some(flag)
    }

    /// Whether the logged tailwater `level` (m above the crest) drowns row `k`; if so, the
    /// drowned-flow estimate replaces its discharge where asked and applicable, and the counts
    /// say why not elsewhere.
    fn drowned(&self, k: usize, level: f64, r: &RatedHead, c: &mut Chunk, counts: &mut Counts) -> bool {
        let q = c.discharge_m3s[k];
        let v2 = self.tailwater.map_or(0.0, |t| t.velocity_m_s(q, level));
        let s = (level + v2 * v2 / (2.0 * self.gravity_m_s2)) / r.energy_head_m;
        c.submergence[k] = s;
        if s <= r.modular_limit {
            return false;
        }
        match submerged_estimate(self.gum.model(), q, s, r.modular_limit, self.exponent) {
            Ok(e) if self.submerged_estimate => {
                let ratio = e / q;
                c.low_m3s[k] *= ratio;
                c.high_m3s[k] *= ratio;
                c.discharge_m3s[k] = e;
                counts.submerged_estimated += 1;
            }
            other => {
                counts.submerged_not_estimated += 1;
                match other {
                    Err(NoEstimate::NotAWeir) => counts.submerged_not_a_weir += 1,
                    Err(NoEstimate::TooDrowned) => counts.submerged_too_drowned += 1,
                    _ => counts.submerged_not_asked += 1,
                }
            }
        }
        true
    }
}

/// A reading from [Q, ∂Q/∂f_Cd, ∂Q/∂f_b, ∂Q/∂h].
fn reading_of(v: [f64; 4], duration_s: f64, included: bool) -> SeriesReading {
    SeriesReading {
        discharge_m3s: v[0],
        dq_dcoefficient: v[1],
        dq_ddimension: v[2],
        dq_dhead: v[3],
        duration_s,
        included,
    }
}

/// The 95 % band of a reading from [Q, ∂Q/∂f_Cd, ∂Q/∂f_b, ∂Q/∂h], never below 0.
#[inline]
fn band_of(weights: &BandWeights, v: [f64; 4]) -> (f64, f64) {
    let (lo, hi) = weights.band(&reading_of(v, 0.0, false));
    (lo.max(0.0), hi)
}

/// Adds a row (instant, local day, discharge) to the summaries: a counted reading stands for
/// `duration_ms`, the part within its own day there and any rest in the days after; any other
/// row adds to its day's row count only.
fn add_to_summaries(
    summaries: &mut Summaries,
    day_end: &mut DayEnds,
    (t, day, q): (i64, i64, f64),
    reading: Option<CountedReading>,
    duration_ms: i64,
) {
    let Some(mut r) = reading else {
        summaries.add(day, q, None);
        return;
    };
    let end = day_end.of(day);
    let own = duration_ms.min((end - t).max(0));
    r.reading.duration_s = own as f64 / 1000.0;
    summaries.add(day, q, Some(&r));
    let (mut rest, mut d, mut from) = (duration_ms - own, day, end);
    while rest > 0 {
        d += 1;
        let part = rest.min(day_end.of(d) - from).max(1);
        r.reading.duration_s = part as f64 / 1000.0;
        summaries.add_spill(d, &r);
        rest -= part;
        from += part;
    }
}

/// The end (UTC ms) of local days, remembering the last one asked for.
struct DayEnds {
    zone: Zone,
    last: Option<(i64, i64)>,
}

impl DayEnds {
    fn new(zone: Zone) -> Self {
        Self { zone, last: None }
    }

    fn of(&mut self, day: i64) -> i64 {
        match self.last {
            Some((d, end)) if d == day => end,
            _ => {
                let end = local_day_start_utc(&self.zone, day + 1);
                self.last = Some((day, end));
                end
            }
        }
    }
}

/// Rows of the times: counts of each [`TimeNote`] with the lines of the notable ones.
pub fn time_note_lines(notes: &[(usize, TimeNote)], lines: &[u32]) -> BTreeMap<&'static str, Vec<u32>> {
    let mut m: BTreeMap<&'static str, Vec<u32>> = BTreeMap::new();
    for (n, l) in notes.iter().map(|(i, n)| (n, &lines[*i])) {
        let key = match n {
            TimeNote::Ok => continue,
            TimeNote::Unparsed => "unparsed",
            TimeNote::Nonexistent => "nonexistent (spring clock change)",
            TimeNote::AmbiguousEarlier => "repeated hour, taken as summer time",
            TimeNote::AmbiguousLater => "repeated hour, taken as standard time",
        };
        m.entry(key).or_default().push(*l);
    }
    m
}
