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
use super::time::{civil_from_days, date_string, local_day_start_utc, TimeNote, Zone, NO_TIME};
use super::timeline::Timeline;
use crate::station::HeadRange;
use crate::tailwater::{submerged_estimate, NoEstimate, Tailwater};
use crate::uncertainty::{BandWeights, GumModel, Inputs, PeriodAccumulator, SeriesReading};

/// One flag per row, most severe first.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub enum Flag {
    /// No usable time or head.
    Missing,
    /// The tailwater drowns the control: the rating reads high.
    Submerged,
    /// Head above the station's range: computed by the model beyond the rated range.
    AboveRange,
    /// Head above the crest but below the station's range.
    BelowRange,
    /// Head in the station's range, but outside the method's limits of application.
    BeyondLimits,
    /// Head at or below the crest: no flow over the control.
    Dry,
    /// Within everything.
    Ok,
}

impl Flag {
    /// All flags, most severe first.
    pub const ALL: [Flag; 7] = [
        Flag::Missing,
        Flag::Submerged,
        Flag::AboveRange,
        Flag::BelowRange,
        Flag::BeyondLimits,
        Flag::Dry,
        Flag::Ok,
    ];

    /// The word written to the output.
    pub fn as_str(self) -> &'static str {
        match self {
            Flag::Missing => "missing",
            Flag::Submerged => "submerged",
            Flag::AboveRange => "above-range",
            Flag::BelowRange => "below-range",
            Flag::BeyondLimits => "beyond-limits",
            Flag::Dry => "dry",
            Flag::Ok => "ok",
        }
    }

    /// Whether the row counts in volumes and means.
    pub fn counted(self) -> bool {
        matches!(self, Flag::Ok | Flag::Dry)
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
}

/// Counts for the report.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Counts {
    /// Rows per flag, in [`Flag::ALL`] order.
    pub per_flag: [usize; 7],
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
    }
}

/// Running statistics of one summary period.
#[derive(Debug, Clone, Copy, PartialEq)]
struct Acc {
    rows: usize,
    counted: usize,
    min_q: f64,
    max_q: f64,
    period: PeriodAccumulator,
}

impl Default for Acc {
    fn default() -> Self {
        Self {
            rows: 0,
            counted: 0,
            min_q: f64::INFINITY,
            max_q: f64::NEG_INFINITY,
            period: PeriodAccumulator::default(),
        }
    }
}

impl Acc {
    fn add(&mut self, counted: bool, q: f64, r: Option<&SeriesReading>) {
        self.rows += 1;
        if counted {
            self.counted += 1;
            self.min_q = self.min_q.min(q);
            self.max_q = self.max_q.max(q);
        }
        if let Some(r) = r {
            self.period.push(r);
        }
    }

    fn merge(&mut self, o: &Acc) {
        self.rows += o.rows;
        self.counted += o.counted;
        self.min_q = self.min_q.min(o.min_q);
        self.max_q = self.max_q.max(o.max_q);
        self.period.merge(&o.period);
    }
}

/// One summary row.
#[derive(Debug, Clone, PartialEq)]
pub struct PeriodRow {
    /// `YYYY-MM-DD` or `YYYY-MM` on the local clock.
    pub label: String,
    /// Rows in the period.
    pub rows: usize,
    /// Rows counted (`ok` or `dry`, not repeating another row's instant).
    pub rows_counted: usize,
    /// Mean discharge over the time covered by counted rows (m³/s).
    pub mean_m3s: f64,
    /// Smallest counted discharge (m³/s).
    pub min_m3s: f64,
    /// Largest counted discharge (m³/s).
    pub max_m3s: f64,
    /// Volume of the counted rows (m³).
    pub volume_m3: f64,
    /// Expanded (k = 2) uncertainty of the volume, systematic and random combined (m³).
    pub volume_u95_m3: f64,
    /// Standard uncertainty from the systematic inputs (m³).
    pub volume_u_systematic_m3: f64,
    /// Standard uncertainty from reading noise (m³).
    pub volume_u_random_m3: f64,
    /// Hours covered by counted rows.
    pub covered_h: f64,
}

/// Daily and monthly summaries. Consecutive rows of the same day are gathered in a running
/// accumulator before they reach the maps, so long series cost one map update per day.
#[derive(Debug, Clone, Default)]
pub struct Summaries {
    days: BTreeMap<i64, Acc>,
    current: Option<(i64, Acc)>,
}

impl Summaries {
    fn add(&mut self, day: i64, counted: bool, q: f64, r: Option<&SeriesReading>) {
        self.acc(day).add(counted, q, r);
    }

    /// The rest of a reading's time that runs into a later day: time and volume, no row.
    fn add_spill(&mut self, day: i64, r: &SeriesReading) {
        self.acc(day).period.push(r);
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

    fn months(&self) -> BTreeMap<(i64, u32), Acc> {
        let mut m: BTreeMap<(i64, u32), Acc> = BTreeMap::new();
        for (d, acc) in &self.days {
            let (y, mo, _) = civil_from_days(*d);
            m.entry((y, mo)).or_default().merge(acc);
        }
        m
    }

    fn rows<K: Ord + Copy>(map: &BTreeMap<K, Acc>, label: impl Fn(K) -> String, inputs: &Inputs) -> Vec<PeriodRow> {
        map.iter()
            .map(|(k, a)| {
                let p = a.period.finish(inputs);
                let sys = (p.u_coefficient_m3.powi(2) + p.u_dimension_m3.powi(2) + p.u_zero_m3.powi(2)).sqrt();
                let counted = a.counted > 0;
                PeriodRow {
                    label: label(*k),
                    rows: a.rows,
                    rows_counted: a.counted,
                    mean_m3s: if counted && p.covered_s > 0.0 {
                        p.volume_m3 / p.covered_s
                    } else {
                        f64::NAN
                    },
                    min_m3s: if counted { a.min_q } else { f64::NAN },
                    max_m3s: if counted { a.max_q } else { f64::NAN },
                    volume_m3: p.volume_m3,
                    volume_u95_m3: p.expanded_m3(),
                    volume_u_systematic_m3: sys,
                    volume_u_random_m3: p.u_random_m3,
                    covered_h: p.covered_s / 3600.0,
                }
            })
            .collect()
    }

    /// One row per local calendar day.
    pub fn daily(&mut self, inputs: &Inputs) -> Vec<PeriodRow> {
        self.flush();
        Self::rows(&self.days, date_string, inputs)
    }

    /// One row per local calendar month.
    pub fn monthly(&mut self, inputs: &Inputs) -> Vec<PeriodRow> {
        self.flush();
        Self::rows(&self.months(), |(y, m)| format!("{y:04}-{m:02}"), inputs)
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

    /// Converts rows `order` (indices into the arrays) into a chunk, updating counts and
    /// summaries: the stage and head of every row, then the rating and band of every head in a
    /// tight loop, then each row's flag, its rare cases and its share of the summaries.
    #[allow(clippy::too_many_arguments)]
    pub fn convert_rows(
        &self,
        order: &[usize],
        utc: &[i64],
        days: &[i32],
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
                let duration_ms = self.timeline.duration_ms(i, utc);
                let row = (c.time_ms[k], i64::from(days[i]), c.discharge_m3s[k]);
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
        };
        for &i in order {
            let t = utc[i];
            let (stage, no_baro, fallback) = self.stage_of(t, values, i);
            counts.no_baro += usize::from(no_baro);
            counts.temperature_fallback += usize::from(fallback);
            let drift = if t == NO_TIME {
                0.0
            } else {
                drift_at_usable(&self.drift, t)
            };
            let impossible = if matches!(self.stage, StageSource::Pressure { .. }) && values[0][i] < 0.0 {
                Some(Impossible::NegativePressure)
            } else if stage < self.plausible.min_stage_m {
                Some(Impossible::BelowSensor)
            } else if stage > self.plausible.max_stage_m {
                Some(Impossible::AboveMaxDepth)
            } else {
                None
            };
            if let Some(why) = impossible {
                counts.impossible.push((lines[i], why));
            }
            c.time_ms.push(t);
            c.stage_m.push(stage);
            c.head_m.push(if impossible.is_some() {
                f64::NAN
            } else {
                stage - self.zero_m + drift
            });
            c.line.push(lines[i]);
            c.counted_line.push(self.timeline.counted_line(i).unwrap_or(0));
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
    /// (above the table: the model itself; drowned: the flag and, where asked and applicable,
    /// the drowned-flow estimate) and the reading it adds to the summaries.
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
    ) -> (Flag, Option<SeriesReading>) {
        let (t, head) = (c.time_ms[k], c.head_m[k]);
        if t == NO_TIME || !head.is_finite() {
            return (Flag::Missing, None);
        }
        if head <= 0.0 {
            c.discharge_m3s[k] = 0.0;
            c.low_m3s[k] = 0.0;
            c.high_m3s[k] = 0.0;
            return (Flag::Dry, Some(reading_of([0.0; 4], 0.0, true)));
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
            return (Flag::Missing, None);
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
        let [dcd, db, dh] = sens[k];
        (
            flag,
            Some(reading_of([c.discharge_m3s[k], dcd, db, dh], 0.0, flag.counted())),
        )
    }

    /// Whether the logged tailwater `level` (m above the crest) drowns row `k`; if so, the
    /// drowned-flow estimate replaces its discharge where asked and applicable, and the counts
    /// say why not elsewhere.
    fn drowned(&self, k: usize, level: f64, r: &RatedHead, c: &mut Chunk, counts: &mut Counts) -> bool {
        let q = c.discharge_m3s[k];
        let v2 = self.tailwater.map_or(0.0, |t| t.velocity_m_s(q, level));
        let s = (level + v2 * v2 / (2.0 * self.gravity_m_s2)) / r.energy_head_m;
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
    reading: Option<SeriesReading>,
    duration_ms: i64,
) {
    let Some(mut r) = reading else {
        summaries.add(day, false, q, None);
        return;
    };
    let end = day_end.of(day);
    let own = duration_ms.min((end - t).max(0));
    r.duration_s = own as f64 / 1000.0;
    summaries.add(day, true, q, Some(&r));
    let (mut rest, mut d, mut from) = (duration_ms - own, day, end);
    while rest > 0 {
        d += 1;
        let part = rest.min(day_end.of(d) - from).max(1);
        r.duration_s = part as f64 / 1000.0;
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
