//! Screening, edits and gap filling: which readings a conversion may trust, which it replaces,
//! and which stretches it fills, decided once over the rows in time order before any row is
//! converted. Nothing here deletes a row; every decision becomes a flag word and a count.
//!
//! Screening rules (each can be tuned in the station's `[screening]` table; the defaults are
//! common practice, no source):
//! - **out of water**: a stage at or below the sensor's dry reading when the sensor sits below
//!   the crest (there is then no water over it, so it is not measuring), or a sudden drop from
//!   flowing water to within a tolerance of the dry reading, and every reading after it until the
//!   stage rises above that tolerance again (a logger lifted out for maintenance);
//! - **spike**: a jump of more than `spike_rise` from the reading before that comes back to
//!   within half of it within `spike_return` readings;
//! - **flat**: the same logged value, to the last bit, for `flat_hours` or longer while the head
//!   is above the crest (a stuck sensor or a frozen well).
//!
//! Gap filling: a stretch of readings that have no usable head (missing, excluded, screened)
//! or of time with no readings at all, between two usable readings at most `fill_max_hours`
//! apart, is filled by linear interpolation of the head in time; where the logger wrote no rows,
//! rows are inserted at the nominal interval. The rating, not interpolated discharge, gives the
//! filled discharge. The interpolation carries an extra standard uncertainty of half the change
//! in head across the gap (at least [`MIN_FILL_HALF_WIDTH_M`]) taken as the half-width of a
//! rectangular distribution (JCGM 100 §4.3.7), the same for every row of the gap.

use std::collections::HashMap;

use super::edits::{EditAction, Edits};
use super::parallel::{for_parts, for_ranges};
use super::time::NO_TIME;

/// The smallest half-width (m) of the interpolation error of a filled head: a few millimetres
/// even across a gap whose ends read the same (common practice, no source).
pub const MIN_FILL_HALF_WIDTH_M: f64 = 0.005;

/// The screening thresholds, SI.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ScreeningSpec {
    /// Whether the automatic screening runs (edits and gap filling always do).
    pub enabled: bool,
    /// A jump larger than this (m) from one reading to the next may be a spike.
    pub spike_rise_m: f64,
    /// A spike comes back within this many readings.
    pub spike_return: usize,
    /// The same value for this long (h) while flowing is a flat line.
    pub flat_hours: f64,
    /// "Near the dry reading" (m).
    pub out_of_water_tolerance_m: f64,
    /// Gaps up to this long (h) are filled; 0 fills none.
    pub fill_max_hours: f64,
}

impl Default for ScreeningSpec {
    /// Common practice, no source: a 0.10 m jump that returns within 3 readings, 12 h of the
    /// same value, 0.02 m from the dry reading, gaps up to 2 h filled.
    fn default() -> Self {
        Self {
            enabled: true,
            spike_rise_m: 0.10,
            spike_return: 3,
            flat_hours: 12.0,
            out_of_water_tolerance_m: 0.02,
            fill_max_hours: 2.0,
        }
    }
}

/// What screening or an edit decided for a row, before any fill.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
#[repr(u8)]
pub enum Screen {
    /// Nothing.
    Kept = 0,
    /// Inside an `exclude` edit.
    Excluded = 1,
    /// The sensor was out of the water.
    OutOfWater = 2,
    /// A spike.
    Spike = 3,
    /// A flat line.
    Flat = 4,
    /// Inside a `fill` edit.
    FillEdit = 5,
}

impl Screen {
    fn from_u8(v: u8) -> Self {
        match v {
            1 => Screen::Excluded,
            2 => Screen::OutOfWater,
            3 => Screen::Spike,
            4 => Screen::Flat,
            5 => Screen::FillEdit,
            _ => Screen::Kept,
        }
    }
}

/// A filled head.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Fill {
    /// The interpolated head (m).
    pub head_m: f64,
    /// The standard uncertainty of the interpolation (m).
    pub u_m: f64,
}

/// A row inserted into a filled gap where the logger wrote none.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Inserted {
    /// The input row it follows in time.
    pub after_row: u32,
    /// Its instant (UTC ms).
    pub time_ms: i64,
    /// The time it stands for (ms).
    pub duration_ms: u32,
    /// Its head.
    pub fill: Fill,
}

/// One filled gap, for the provenance record.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FilledGap {
    /// The usable readings either side (UTC ms).
    pub from_ms: i64,
    /// See `from_ms`.
    pub to_ms: i64,
    /// Input rows filled.
    pub rows: usize,
    /// Rows inserted.
    pub inserted: usize,
    /// Filled because a `fill` edit asked (line), rather than by the gap rule.
    pub edit_line: Option<usize>,
}

/// The decisions for every row.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Screened {
    codes: Vec<u8>,
    /// Filled heads of input rows (row → fill).
    pub fills: HashMap<u32, Fill>,
    /// Rows inserted into filled gaps, in time order.
    pub inserted: Vec<Inserted>,
    /// Rows per screening decision, in [`Screen`] order (before filling).
    pub screened: [usize; 6],
    /// Of the filled input rows: how many per decision (0: no usable head).
    pub filled_from: [usize; 6],
    /// The filled gaps (at most [`MAX_LISTED_GAPS`] listed; `gaps_total` counts all).
    pub gaps: Vec<FilledGap>,
    /// How many gaps were filled.
    pub gaps_total: usize,
    /// Gaps longer than the fill limit left missing (count, hours).
    pub unfilled: (usize, f64),
    /// Rows each edit touched, in edit order.
    pub edit_rows: Vec<usize>,
    /// `fill` edits that could not be filled (no usable reading on one side), by line.
    pub fill_edits_failed: Vec<usize>,
}

/// At most this many filled gaps are listed in the provenance record.
pub const MAX_LISTED_GAPS: usize = 200;

impl Screened {
    /// The decision for input row `i`.
    #[inline]
    pub fn code(&self, i: usize) -> Screen {
        self.codes.get(i).map_or(Screen::Kept, |c| Screen::from_u8(*c))
    }

    /// The filled head of input row `i`, if it was filled.
    #[inline]
    pub fn fill(&self, i: usize) -> Option<Fill> {
        if self.fills.is_empty() {
            None
        } else {
            self.fills.get(&(i as u32)).copied()
        }
    }
}

/// What the screening needs to know of the rows, all indexed by row.
#[derive(Debug, Clone, Copy)]
pub struct Rows<'a> {
    /// The rows that stand for time (one per instant) in time order; `None` when the rows in
    /// file order are in time order (every row with a time stands for its instant).
    pub order: Option<&'a [u32]>,
    /// Instants (UTC ms).
    pub utc: &'a [i64],
    /// The logged value (stage or pressure, as logged).
    pub raw: &'a [f64],
    /// Head (m): zero, edits and drift applied; NaN where there is none (no time, no reading, an
    /// impossible one).
    pub head: Heads<'a>,
    /// [`AIR`] where the stage is at or below the sensor's dry reading, [`NEAR_DRY`] where it is
    /// within the out-of-water tolerance of it (both bits when at or below).
    pub air: &'a [u8],
    /// The nominal interval (ms).
    pub interval_ms: i64,
}

/// The rows' heads for the screening: stored, or worked out from the logged stage when nothing
/// but the logger's zero applies to it (no edits, no drift, a stage logger), which saves a whole
/// column of memory on long files. Both give the same value, bit for bit, as
/// `Conversion::level` (tested).
#[derive(Debug, Clone, Copy)]
pub enum Heads<'a> {
    /// One head per row.
    Stored(&'a [f64]),
    /// head = stage × `metres_per_unit` − `zero_m` (NaN without a time or outside the readable
    /// range `min_m..=max_m`).
    FromStage {
        /// The logged stage, as logged.
        stage: &'a [f64],
        /// The rows' instants ([`crate::series::time::NO_TIME`]: no head).
        utc: &'a [i64],
        /// Metres per logged unit.
        metres_per_unit: f64,
        /// The logger's zero (m).
        zero_m: f64,
        /// The lowest and highest stage the logger can read (m).
        min_m: f64,
        /// See `min_m`.
        max_m: f64,
    },
}

impl<'a> Heads<'a> {
    /// The heads of rows `r` as rows of their own.
    fn segment(&self, r: std::ops::Range<usize>) -> Heads<'a> {
        let mut part = *self;
        match &mut part {
            Heads::Stored(h) => {
                let all: &'a [f64] = h;
                *h = &all[r];
            }
            Heads::FromStage { stage, utc, .. } => {
                let (all_stage, all_utc): (&'a [f64], &'a [i64]) = (stage, utc);
                *stage = &all_stage[r.clone()];
                *utc = &all_utc[r];
            }
        }
        part
    }

    /// The head of row `i` (m).
    #[inline]
    pub fn get(&self, i: usize) -> f64 {
        match *self {
            Heads::Stored(h) => h[i],
            Heads::FromStage {
                stage,
                utc,
                metres_per_unit,
                zero_m,
                min_m,
                max_m,
            } => {
                if utc[i] == crate::series::time::NO_TIME {
                    return f64::NAN;
                }
                let s = stage[i] * metres_per_unit;
                if s < min_m || s > max_m {
                    return f64::NAN;
                }
                // as `Conversion::level` forms it: stage − zero + the (empty) sum of offsets +
                // no drift, so that even the sign of a zero head is the same
                let no_offsets: f64 = std::iter::empty::<f64>().sum();
                s - zero_m + no_offsets + 0.0
            }
        }
    }
}

/// [`Rows::air`]: the stage is at or below the sensor's dry reading.
pub const AIR: u8 = 1;
/// [`Rows::air`]: the stage is within the out-of-water tolerance of the dry reading.
pub const NEAR_DRY: u8 = 2;

impl<'a> Rows<'a> {
    /// Rows `r` of a file in time order (`order` is `None`) as rows of their own: position `p`
    /// of the segment is row `r.start + p`, and the rows end at `r.end`.
    fn segment(&self, r: std::ops::Range<usize>) -> Rows<'a> {
        debug_assert!(self.order.is_none(), "only a file in time order is cut into segments");
        Rows {
            order: None,
            utc: &self.utc[r.clone()],
            raw: &self.raw[r.clone()],
            head: self.head.segment(r.clone()),
            air: &self.air[r],
            interval_ms: self.interval_ms,
        }
    }

    /// Positions in time order.
    fn len(&self) -> usize {
        self.order.map_or(self.utc.len(), <[u32]>::len)
    }

    /// The row at position `p`.
    #[inline]
    fn row(&self, p: usize) -> usize {
        self.order.map_or(p, |o| o[p] as usize)
    }

    /// Whether the row at position `p` can be screened and anchor a fill: kept so far, with a
    /// head (rows without one carry [`NO_HEAD`] while screening runs).
    #[inline]
    fn usable(&self, codes: &[u8], p: usize) -> bool {
        codes[self.row(p)] == 0
    }

    /// The first usable position at or after `p`.
    #[inline]
    fn next_usable(&self, codes: &[u8], mut p: usize) -> Option<usize> {
        let n = self.len();
        while p < n {
            if self.usable(codes, p) {
                return Some(p);
            }
            p += 1;
        }
        None
    }
}

/// Whether a sensor sits below the crest (its dry reading below the zero by more than the
/// tolerance): then a reading at or below its dry reading means it is in air.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Sensor {
    /// The stage the logger reads with its sensor in air (m).
    pub dry_m: f64,
    /// Whether the sensor sits below the crest.
    pub below_crest: bool,
}

impl Sensor {
    /// The [`Rows::air`] bits of a stage (m).
    #[inline]
    pub fn air_bits(&self, stage_m: f64, spec: &ScreeningSpec) -> u8 {
        let mut bits = 0;
        if self.below_crest && stage_m <= self.dry_m {
            bits |= AIR;
        }
        if stage_m <= self.dry_m + spec.out_of_water_tolerance_m {
            bits |= NEAR_DRY;
        }
        bits
    }
}

/// A row without a head, while screening runs (the code is cleared before it ends).
const NO_HEAD: u8 = 255;

/// Screens, applies the edits and fills the gaps. `n` is the number of input rows.
pub fn screen(rows: &Rows<'_>, n: usize, edits: &Edits, spec: &ScreeningSpec) -> Screened {
    let halves = if rows.order.is_none() && super::parallel::worth_sharing(n) {
        Halves::From(n / 2)
    } else {
        Halves::Off
    };
    screen_in(rows, n, edits, spec, halves)
}

/// Whether the walks in time order run in two halves at once, the second from the first row at
/// or after the given position where the walk starts afresh (see [`in_halves`]).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Halves {
    /// One pass.
    Off,
    /// Two halves, split at or after this position.
    From(usize),
}

impl Halves {
    /// Where to cut `rows` (a file in time order): the row `find` gives at or after the
    /// position, when it leaves rows on both sides.
    fn cut(self, rows: &Rows<'_>, find: impl FnOnce(usize) -> Option<usize>) -> Option<usize> {
        match self {
            Halves::From(from) if rows.order.is_none() => find(from).filter(|&q| q > 0 && q < rows.len()),
            _ => None,
        }
    }
}

/// [`screen`], its walks split as `halves` says.
fn screen_in(rows: &Rows<'_>, n: usize, edits: &Edits, spec: &ScreeningSpec, halves: Halves) -> Screened {
    let mut s = Screened {
        codes: vec![0; n],
        edit_rows: vec![0; edits.edits.len()],
        ..Default::default()
    };
    for_parts(&mut s.codes, |from, part| {
        for (j, c) in part.iter_mut().enumerate() {
            if !rows.head.get(from + j).is_finite() {
                *c = NO_HEAD;
            }
        }
    });
    apply_edits(rows.utc, edits, &mut s);
    if spec.enabled {
        in_halves(rows, &mut s.codes, halves, oow_split, |r, c| out_of_water(r, spec, c));
        let spike_cut = |r: &Rows<'_>, c: &[u8], p| spike_split(r, c, p, spec);
        in_halves(rows, &mut s.codes, halves, spike_cut, |r, c| spikes(r, spec, c));
        in_halves(rows, &mut s.codes, halves, flat_split, |r, c| flat(r, spec, c));
    }
    fill_gaps(rows, edits, spec, &mut s, halves);
    for_parts(&mut s.codes, |_, part| {
        for c in part {
            if *c == NO_HEAD {
                *c = 0;
            }
        }
    });
    // rows per decision, counted by position on all cores
    let codes = &s.codes;
    let counts = std::sync::Mutex::new([0usize; 6]);
    for_ranges(rows.len(), |range| {
        let mut mine = [0usize; 6];
        for p in range {
            let i = rows.row(p);
            if rows.utc[i] != NO_TIME {
                mine[usize::from(codes[i])] += 1;
            }
        }
        let mut all = counts.lock().unwrap_or_else(std::sync::PoisonError::into_inner);
        for (a, m) in all.iter_mut().zip(mine) {
            *a += m;
        }
    });
    s.screened = counts.into_inner().unwrap_or_else(std::sync::PoisonError::into_inner);
    s
}

/// Runs `walk` over the rows in time order: in one pass, or (`halves`, a file in time order) in
/// two halves at once, cut at the row `split` finds at or after the given position. `split`
/// must find a row at which the walk starts afresh, whatever came before, and up to which the
/// walk's decisions look at no later row: then the two halves give exactly what one pass gives
/// (tested for every cut). Without such a row the walk runs in one pass.
fn in_halves(
    rows: &Rows<'_>,
    codes: &mut [u8],
    halves: Halves,
    split: impl Fn(&Rows<'_>, &[u8], usize) -> Option<usize>,
    walk: impl Fn(&Rows<'_>, &mut [u8]) + Sync,
) {
    let Some(q) = halves.cut(rows, |from| split(rows, codes, from)) else {
        walk(rows, codes);
        return;
    };
    let (first, second) = (rows.segment(0..q), rows.segment(q..rows.len()));
    let (a, b) = codes.split_at_mut(q);
    std::thread::scope(|scope| {
        let walk = &walk;
        scope.spawn(move || walk(&second, b));
        walk(&first, a);
    });
}

/// Out of water starts afresh at a usable row clear of the dry reading (it sets the state
/// whatever came before, and the walk never looks ahead).
fn oow_split(rows: &Rows<'_>, codes: &[u8], from: usize) -> Option<usize> {
    (from..rows.len()).find(|&p| rows.usable(codes, p) && rows.air[rows.row(p)] == 0)
}

/// Flat lines start afresh at a usable row whose logged value differs from the usable row
/// before it (a run ends there).
fn flat_split(rows: &Rows<'_>, codes: &[u8], from: usize) -> Option<usize> {
    let mut before = (0..from.min(rows.len())).rev().find(|&p| rows.usable(codes, p));
    for p in from..rows.len() {
        if !rows.usable(codes, p) {
            continue;
        }
        let bits = rows.raw[rows.row(p)].to_bits();
        if before.is_some_and(|b| rows.raw[rows.row(b)].to_bits() != bits) {
            return Some(p);
        }
        before = Some(p);
    }
    None
}

/// Spikes start afresh at a usable row `q` that, with the `spike_return + 1` usable rows before
/// it, spans no more than half the rise. No jump can then be found among those rows (a jump
/// into the first of them from further back finds no way back, since all are more than half
/// the rise from where it came), so `q` is a reading before for the walk in one pass, and no
/// jump before `q` looks at `q` or beyond (a jump looks `spike_return` usable rows ahead).
fn spike_split(rows: &Rows<'_>, codes: &[u8], from: usize, spec: &ScreeningSpec) -> Option<usize> {
    let need = spec.spike_return + 1;
    let half = spec.spike_rise_m / 2.0;
    let mut window: std::collections::VecDeque<f64> = (0..from.min(rows.len()))
        .rev()
        .filter(|&p| rows.usable(codes, p))
        .take(need)
        .map(|p| rows.head.get(rows.row(p)))
        .collect();
    window.make_contiguous().reverse();
    for p in from..rows.len() {
        if !rows.usable(codes, p) {
            continue;
        }
        let h = rows.head.get(rows.row(p));
        if window.len() == need {
            let (lo, hi) = window.iter().fold((h, h), |(lo, hi), &x| (lo.min(x), hi.max(x)));
            if hi - lo <= half {
                return Some(p);
            }
            window.pop_front();
        }
        window.push_back(h);
    }
    None
}

/// `exclude` and `fill` windows mark their rows; every edit counts the rows it touches.
fn apply_edits(utc: &[i64], edits: &Edits, s: &mut Screened) {
    if edits.is_empty() {
        return;
    }
    for (i, &t) in utc.iter().enumerate() {
        if t == NO_TIME {
            continue;
        }
        for (k, e) in edits.edits.iter().enumerate() {
            if e.covers(t) {
                s.edit_rows[k] += 1;
                match e.action {
                    EditAction::Exclude => s.codes[i] = Screen::Excluded as u8,
                    EditAction::Fill => s.codes[i] = Screen::FillEdit as u8,
                    _ => {}
                }
            }
        }
    }
}

/// In air (sensor below the crest, stage at or below its dry reading), or a drop from flowing
/// water to near the dry reading and every reading after it while it stays near.
fn out_of_water(rows: &Rows<'_>, spec: &ScreeningSpec, codes: &mut [u8]) {
    let mut flowing_before = false;
    let mut in_episode = false;
    for p in 0..rows.len() {
        if !rows.usable(codes, p) {
            continue;
        }
        let i = rows.row(p);
        let air = rows.air[i];
        let dropped = air & NEAR_DRY != 0 && (in_episode || flowing_before);
        if air & AIR != 0 || dropped {
            codes[i] = Screen::OutOfWater as u8;
            in_episode |= dropped;
        } else {
            in_episode = false;
            flowing_before = rows.head.get(i) > spec.out_of_water_tolerance_m;
        }
    }
}

/// A jump of more than the rise from the reading before that comes back within half of it
/// within `spike_return` readings.
fn spikes(rows: &Rows<'_>, spec: &ScreeningSpec, codes: &mut [u8]) {
    let rise = spec.spike_rise_m;
    let Some(mut before) = rows.next_usable(codes, 0) else {
        return;
    };
    let mut k = rows.next_usable(codes, before + 1);
    let mut ahead: Vec<usize> = Vec::with_capacity(spec.spike_return + 1);
    while let Some(pk) = k {
        let (ib, ik) = (rows.row(before), rows.row(pk));
        let h0 = rows.head.get(ib);
        let consecutive = rows.utc[ik] - rows.utc[ib] <= 2 * rows.interval_ms;
        if !(consecutive && (rows.head.get(ik) - h0).abs() > rise) {
            before = pk;
            k = rows.next_usable(codes, pk + 1);
            continue;
        }
        // the usable readings after the jump, up to spike_return of them and one more
        ahead.clear();
        ahead.push(pk);
        while ahead.len() <= spec.spike_return {
            match rows.next_usable(codes, ahead[ahead.len() - 1] + 1) {
                Some(q) => ahead.push(q),
                None => break,
            }
        }
        let back = (1..ahead.len()).find(|&m| (rows.head.get(rows.row(ahead[m])) - h0).abs() <= rise / 2.0);
        match back {
            Some(m) => {
                for &q in &ahead[..m] {
                    codes[rows.row(q)] = Screen::Spike as u8;
                }
                // the reading back is the next one before
                before = ahead[m];
                k = rows.next_usable(codes, before + 1);
            }
            None => {
                before = pk;
                k = rows.next_usable(codes, pk + 1);
            }
        }
    }
}

/// The same logged value for `flat_hours` or longer while flowing.
fn flat(rows: &Rows<'_>, spec: &ScreeningSpec, codes: &mut [u8]) {
    let min_ms = (spec.flat_hours * 3_600_000.0) as i64;
    let mut p = rows.next_usable(codes, 0);
    while let Some(start) = p {
        let i0 = rows.row(start);
        let bits = rows.raw[i0].to_bits();
        let (mut end, mut count) = (start, 1usize);
        let mut next = rows.next_usable(codes, start + 1);
        while let Some(q) = next {
            if rows.raw[rows.row(q)].to_bits() != bits {
                break;
            }
            end = q;
            count += 1;
            next = rows.next_usable(codes, q + 1);
        }
        let long = rows.utc[rows.row(end)] - rows.utc[i0] >= min_ms;
        if count > 1 && rows.head.get(i0) > 0.0 && long {
            for q in start..=end {
                let i = rows.row(q);
                if codes[i] == 0 && rows.raw[i].to_bits() == bits {
                    codes[i] = Screen::Flat as u8;
                }
            }
        }
        p = next;
    }
}

/// Fills gaps between usable readings (and the windows of `fill` edits): in one pass, or
/// (`halves`, a file in time order) in two halves at once that share a usable row, the end of
/// the first half's last gap and the start of the second's first (gaps are independent of each
/// other, so the halves give exactly what one pass gives; tested for every cut).
fn fill_gaps(rows: &Rows<'_>, edits: &Edits, spec: &ScreeningSpec, s: &mut Screened, halves: Halves) {
    let n = rows.len();
    let cut = halves.cut(rows, |from| (from..n).find(|&p| rows.usable(&s.codes, p)));
    let parts: Vec<(usize, FillPart)> = match cut.filter(|&q| q + 1 < n) {
        Some(q) => {
            let (first, second) = (rows.segment(0..q + 1), rows.segment(q..n));
            let codes = &s.codes;
            std::thread::scope(|scope| {
                let later = scope.spawn(move || fill_walk(&second, &codes[q..], edits, spec));
                let early = fill_walk(&first, &codes[..=q], edits, spec);
                vec![(0, early), (q, later.join().expect("filling does not panic"))]
            })
        }
        None => vec![(0, fill_walk(rows, &s.codes, edits, spec))],
    };
    let (mut failed, mut trailing) = (Vec::new(), Vec::new());
    let (mut unfilled, mut unfilled_ms) = (0, 0i64);
    for (off, part) in parts {
        let shift = off as u32;
        s.fills.extend(part.fills.into_iter().map(|(r, f)| (r + shift, f)));
        s.inserted.extend(part.inserted.into_iter().map(|mut r| {
            r.after_row += shift;
            r
        }));
        for (all, k) in s.filled_from.iter_mut().zip(part.filled_from) {
            *all += k;
        }
        let room = MAX_LISTED_GAPS.saturating_sub(s.gaps.len());
        s.gaps.extend(part.gaps.into_iter().take(room));
        s.gaps_total += part.gaps_total;
        unfilled += part.unfilled.0;
        unfilled_ms += part.unfilled.1;
        failed.extend(part.failed.into_iter().map(|i| i + off));
        trailing = part.trailing.into_iter().map(|r| r as usize + off).collect();
    }
    s.unfilled = (unfilled, unfilled_ms as f64 / 3_600_000.0);
    failed.extend(trailing.into_iter().filter(|&i| s.codes[i] == Screen::FillEdit as u8));
    s.fill_edits_failed = failed
        .into_iter()
        .filter_map(|i| {
            edits
                .edits
                .iter()
                .find(|e| e.action == EditAction::Fill && e.covers(rows.utc[i]))
        })
        .map(|e| e.line)
        .collect();
    s.fill_edits_failed.dedup();
}

/// What filling found in rows of their own (row numbers counted from their first row).
#[derive(Debug, Default)]
struct FillPart {
    /// Filled heads of input rows.
    fills: Vec<(u32, Fill)>,
    /// Rows inserted into filled gaps, in time order.
    inserted: Vec<Inserted>,
    /// Of the filled input rows: how many per decision.
    filled_from: [usize; 6],
    /// The filled gaps (at most [`MAX_LISTED_GAPS`]).
    gaps: Vec<FilledGap>,
    /// How many gaps were filled.
    gaps_total: usize,
    /// Gaps longer than the fill limit (count, ms).
    unfilled: (usize, i64),
    /// Rows of `fill` edits before the first usable row.
    failed: Vec<usize>,
    /// Rows after the last usable row.
    trailing: Vec<u32>,
}

/// Fills the gaps between the usable rows of `rows` (one pass, in time order).
fn fill_walk(rows: &Rows<'_>, codes: &[u8], edits: &Edits, spec: &ScreeningSpec) -> FillPart {
    let max_ms = (spec.fill_max_hours * 3_600_000.0).round() as i64;
    let edit_line = |t: i64| {
        edits
            .edits
            .iter()
            .find(|e| e.action == EditAction::Fill && e.covers(t))
            .map(|e| e.line)
    };
    let mut out = FillPart::default();
    let mut anchor: Option<usize> = None;
    // rows after the anchor without a usable head
    let mut between: Vec<u32> = Vec::new();
    for p in 0..rows.len() {
        let i = rows.row(p);
        if rows.utc[i] == NO_TIME {
            continue;
        }
        if !rows.usable(codes, p) {
            let fill_edit = codes[i] == Screen::FillEdit as u8;
            match anchor {
                None if fill_edit => out.failed.push(i),
                None => {}
                Some(_) => between.push(i as u32),
            }
            continue;
        }
        if let Some(a) = anchor {
            let gap = (a, std::mem::take(&mut between), i);
            fill_one_gap(rows, edits, codes, gap, max_ms, &edit_line, &mut out);
        }
        anchor = Some(i);
    }
    out.trailing = between;
    out
}

/// One gap between usable rows `a` and `b` with the rows `between` them that may be filled.
fn fill_one_gap(
    rows: &Rows<'_>,
    edits: &Edits,
    codes: &[u8],
    (a, between, b): (usize, Vec<u32>, usize),
    max_ms: i64,
    edit_line: &dyn Fn(i64) -> Option<usize>,
    s: &mut FillPart,
) {
    let (ta, tb) = (rows.utc[a], rows.utc[b]);
    let no_rows_gap = tb - ta > rows.interval_ms + rows.interval_ms / 10;
    if between.is_empty() && !no_rows_gap {
        return;
    }
    let by_rule = tb - ta <= max_ms;
    let wanted: Vec<u32> = between
        .iter()
        .copied()
        .filter(|&r| by_rule || codes[r as usize] == Screen::FillEdit as u8)
        .collect();
    let (ha, hb) = (rows.head.get(a), rows.head.get(b));
    let fill_at = |t: i64| Fill {
        head_m: ha + (hb - ha) * ((t - ta) as f64 / (tb - ta) as f64),
        u_m: ((hb - ha).abs() / 2.0).max(MIN_FILL_HALF_WIDTH_M) / 3f64.sqrt(),
    };
    for &r in &wanted {
        let i = r as usize;
        let code = if codes[i] == NO_HEAD { 0 } else { codes[i] };
        s.filled_from[usize::from(code)] += 1;
        s.fills.push((r, fill_at(rows.utc[i])));
    }
    let first_inserted = s.inserted.len();
    if by_rule || fill_edit_within(edits, ta, tb) {
        insert_rows(rows, a, &between, b, by_rule, edit_line, &fill_at, &mut s.inserted);
    }
    let inserted = s.inserted.len() - first_inserted;
    if !by_rule {
        // longer than the limit: missing, except what fill edits asked for
        s.unfilled.0 += 1;
        s.unfilled.1 += tb - ta;
    }
    if wanted.is_empty() && inserted == 0 {
        return;
    }
    let first_time = wanted
        .first()
        .map(|&r| rows.utc[r as usize])
        .or_else(|| s.inserted.get(first_inserted).map(|r| r.time_ms));
    s.gaps_total += 1;
    if s.gaps.len() < MAX_LISTED_GAPS {
        s.gaps.push(FilledGap {
            from_ms: ta,
            to_ms: tb,
            rows: wanted.len(),
            inserted,
            edit_line: if by_rule { None } else { first_time.and_then(edit_line) },
        });
    }
}

/// Whether a fill edit's window overlaps `(ta, tb)`.
fn fill_edit_within(edits: &Edits, ta: i64, tb: i64) -> bool {
    edits
        .edits
        .iter()
        .any(|e| e.action == EditAction::Fill && e.start_ms < tb && e.end_ms > ta)
}

/// Rows inserted where the logger wrote none between `a` and `b` (with `between` the rows it did
/// write): at the nominal interval after each instant while the next instant is more than 1.1
/// intervals away, so an inserted row starts where the row before it stops standing for time.
/// Only where the gap rule fills (`by_rule`) or a `fill` edit covers the time.
#[allow(clippy::too_many_arguments)]
fn insert_rows(
    rows: &Rows<'_>,
    a: usize,
    between: &[u32],
    b: usize,
    by_rule: bool,
    edit_line: &dyn Fn(i64) -> Option<usize>,
    fill_at: &dyn Fn(i64) -> Fill,
    out: &mut Vec<Inserted>,
) {
    let step = rows.interval_ms;
    if step <= 0 {
        return;
    }
    let mut after = a;
    let mut cur = rows.utc[a];
    for next in between.iter().map(|&r| r as usize).chain(std::iter::once(b)) {
        let tn = rows.utc[next];
        let mut run: Vec<i64> = Vec::new();
        while tn - cur > step + step / 10 {
            cur += step;
            run.push(cur);
        }
        for (k, &t) in run.iter().enumerate() {
            if !(by_rule || edit_line(t).is_some()) {
                continue;
            }
            let end = run.get(k + 1).copied().unwrap_or(tn);
            out.push(Inserted {
                after_row: after as u32,
                time_ms: t,
                duration_ms: (end - t).clamp(0, step) as u32,
                fill: fill_at(t),
            });
        }
        after = next;
        cur = tn;
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    const MIN: i64 = 60_000;

    /// Readings every 15 min from t = 0: heads as given (stage = head + 0.1, zero 0.1 m).
    fn run(heads: &[f64], spec: &ScreeningSpec, edits: &Edits) -> Screened {
        let utc: Vec<i64> = (0..heads.len() as i64).map(|k| k * 15 * MIN).collect();
        run_at(&utc, heads, spec, edits)
    }

    fn run_at(utc: &[i64], heads: &[f64], spec: &ScreeningSpec, edits: &Edits) -> Screened {
        with_rows(utc, heads, spec, |rows| screen(rows, heads.len(), edits, spec))
    }

    /// Runs `f` on readings at `utc` in time order (stage = head + 0.1 m, zero 0.1 m, 15-minute
    /// interval) from a logger whose sensor sits below the crest, dry at stage 0.
    fn with_rows<R>(utc: &[i64], heads: &[f64], spec: &ScreeningSpec, f: impl FnOnce(&Rows<'_>) -> R) -> R {
        with_rows_as(false, utc, heads, spec, f)
    }

    /// [`with_rows`], the heads worked out from the stage as screening needs them
    /// (`from_stage`) or stored.
    fn with_rows_as<R>(
        from_stage: bool,
        utc: &[i64],
        heads: &[f64],
        spec: &ScreeningSpec,
        f: impl FnOnce(&Rows<'_>) -> R,
    ) -> R {
        // a row without a time keeps its logged stage, but has no head
        let raw: Vec<f64> = heads
            .iter()
            .zip(utc)
            .map(|(h, &t)| if t == NO_TIME { 0.4 } else { h + 0.1 })
            .collect();
        let sensor = Sensor {
            dry_m: 0.0,
            below_crest: true,
        };
        let air: Vec<u8> = raw.iter().map(|&stage| sensor.air_bits(stage, spec)).collect();
        let head = if from_stage {
            Heads::FromStage {
                stage: &raw,
                utc,
                metres_per_unit: 1.0,
                zero_m: 0.1,
                min_m: -1.0,
                max_m: 10.0,
            }
        } else {
            Heads::Stored(heads)
        };
        let rows = Rows {
            order: None,
            utc,
            raw: &raw,
            head,
            air: &air,
            interval_ms: 15 * MIN,
        };
        f(&rows)
    }

    fn codes(s: &Screened, n: usize) -> Vec<Screen> {
        (0..n).map(|i| s.code(i)).collect()
    }

    #[test]
    fn a_spike_that_returns_is_screened_and_a_rise_that_stays_is_not() {
        let spec = ScreeningSpec::default();
        let h = [0.20, 0.21, 0.55, 0.21, 0.22, 0.40, 0.52, 0.53, 0.52];
        let s = run(&h, &spec, &Edits::default());
        let c = codes(&s, h.len());
        assert_eq!(c[2], Screen::Spike);
        assert!(c.iter().enumerate().all(|(i, c)| i == 2 || *c == Screen::Kept), "{c:?}");
        // the spike's row is filled from its neighbours: 0.21 both sides
        let f = s.fill(2).expect("filled");
        assert!((f.head_m - 0.21).abs() < 1e-12);
        assert!((f.u_m - MIN_FILL_HALF_WIDTH_M / 3f64.sqrt()).abs() < 1e-15);
    }

    #[test]
    fn a_spike_on_top_of_a_real_rise_is_found() {
        let spec = ScreeningSpec {
            fill_max_hours: 0.0,
            ..ScreeningSpec::default()
        };
        // a real rise 0.2 → 0.4 m that stays, then one reading at 0.9 m that comes back
        let h = [0.2, 0.2, 0.4, 0.9, 0.4, 0.41, 0.4];
        let c = codes(&run(&h, &spec, &Edits::default()), h.len());
        assert_eq!(c[3], Screen::Spike, "{c:?}");
        assert!(c.iter().enumerate().all(|(i, c)| i == 3 || *c == Screen::Kept), "{c:?}");
    }

    #[test]
    fn a_lift_out_is_out_of_water_until_the_sensor_is_back() {
        let spec = ScreeningSpec::default();
        // flowing at 0.25 m, lifted out (stage ≈ 0.005, in air), back in
        let h = [0.25, 0.25, -0.095, -0.098, -0.096, 0.24, 0.24];
        let s = run(&h, &spec, &Edits::default());
        let c = codes(&s, h.len());
        assert_eq!(&c[2..5], &[Screen::OutOfWater; 3]);
        assert_eq!(c[5], Screen::Kept);
        // 45 min between the usable readings: filled by interpolation of head
        for i in 2..5 {
            let f = s.fill(i).expect("filled");
            let expect = 0.25 + (0.24 - 0.25) * ((i - 1) as f64 / 4.0);
            assert!((f.head_m - expect).abs() < 1e-12, "{i}: {}", f.head_m);
        }
        assert_eq!(s.filled_from[Screen::OutOfWater as usize], 3);
    }

    #[test]
    fn a_flat_line_while_flowing_is_screened_and_not_filled_when_long() {
        let spec = ScreeningSpec {
            flat_hours: 2.0,
            ..ScreeningSpec::default()
        };
        let mut h = vec![0.30, 0.31];
        h.extend(std::iter::repeat_n(0.333, 12)); // 11 steps of 15 min = 2.75 h
        h.extend([0.34, 0.35]);
        let s = run(&h, &spec, &Edits::default());
        let c = codes(&s, h.len());
        assert!(c[2..14].iter().all(|c| *c == Screen::Flat), "{c:?}");
        assert_eq!(c[14], Screen::Kept);
        // 3.25 h between usable readings: longer than the 2 h limit, left missing
        assert!(s.fill(5).is_none());
        assert_eq!(s.unfilled.0, 1);
        // the same value at no flow is not a flat line
        let dry = vec![-0.05; 20];
        let s = run(&dry, &spec, &Edits::default());
        assert!(codes(&s, 20).iter().all(|c| *c == Screen::Kept));
    }

    #[test]
    fn a_gap_without_rows_gets_rows_at_the_interval_up_to_the_limit() {
        let spec = ScreeningSpec::default();
        // 90 min without rows between 00:15 and 01:45
        let utc = [0, 15 * MIN, 105 * MIN, 120 * MIN];
        let h = [0.2, 0.2, 0.5, 0.5];
        let s = run_at(&utc, &h, &spec, &Edits::default());
        let times: Vec<i64> = s.inserted.iter().map(|r| r.time_ms / MIN).collect();
        assert_eq!(times, [30, 45, 60, 75, 90]);
        assert!(s
            .inserted
            .iter()
            .all(|r| r.after_row == 1 && r.duration_ms == 15 * 60_000));
        assert!((s.inserted[2].fill.head_m - 0.35).abs() < 1e-12, "halfway");
        // 6 h without rows: left missing
        let utc = [0, 15 * MIN, 375 * MIN, 390 * MIN];
        let s = run_at(&utc, &h, &spec, &Edits::default());
        assert!(s.inserted.is_empty());
        assert_eq!(s.unfilled.0, 1);
        assert!((s.unfilled.1 - 6.0).abs() < 1e-12);
    }

    #[test]
    fn edits_exclude_and_fill_their_windows() {
        let spec = ScreeningSpec {
            enabled: false,
            fill_max_hours: 0.0,
            ..ScreeningSpec::default()
        };
        let edits = Edits::parse(
            "start,end,action,reason\n1970-01-01T00:30:00Z,1970-01-01T00:45:00Z,exclude,cleaning\n1970-01-01T01:30:00Z,1970-01-01T01:30:00Z,fill,bird on the float\n",
            &[],
            &super::super::time::Zone::Fixed(0),
        )
        .expect("edits");
        let h = [0.2, 0.2, 0.2, 0.2, 0.2, 0.2, 0.9, 0.2, 0.2];
        let s = run(&h, &spec, &edits);
        let c = codes(&s, h.len());
        assert_eq!(&c[2..4], &[Screen::Excluded; 2]);
        assert_eq!(c[6], Screen::FillEdit);
        assert_eq!(s.edit_rows, [2, 1]);
        assert!(s.fill(2).is_none(), "excluded and no gap filling asked");
        assert!((s.fill(6).expect("filled by the edit").head_m - 0.2).abs() < 1e-12);
    }

    /// Screens readings at `utc` ([`with_rows`]) in one pass and in two halves cut at or after
    /// every row, with the heads stored and worked out from the stage; asserts that the halves
    /// give what one pass gives and returns the pass with stored heads.
    fn halves_agree(utc: &[i64], heads: &[f64], edits: &Edits, spec: &ScreeningSpec) -> Screened {
        let check = |rows: &Rows<'_>| {
            let n = heads.len();
            let one = screen_in(rows, n, edits, spec, Halves::Off);
            for from in 0..=n {
                let two = screen_in(rows, n, edits, spec, Halves::From(from));
                assert!(two == one, "cut at or after row {from}: {heads:?}");
            }
            one
        };
        with_rows_as(true, utc, heads, spec, check);
        with_rows(utc, heads, spec, check)
    }

    /// A record with every kind of decision (invented): a slow swing, spikes of one to four
    /// readings (some coming back, some not), a lift-out, flat lines long and short, missing
    /// readings and times, gaps without rows short and long, an exclude edit and fill edits.
    fn mixed_record() -> (Vec<i64>, Vec<f64>, Edits) {
        let n = 600;
        let mut utc: Vec<i64> = (0..n as i64)
            .map(|k| k * 15 * MIN + if k >= 100 { 45 * MIN } else { 0 } + if k >= 300 { 300 * MIN } else { 0 })
            .collect();
        let no_time = [150, 450, 451];
        let heads: Vec<f64> = (0..n)
            .map(|k| {
                let base = 0.3 + 0.1 * (k as f64 / 40.0).sin();
                match k {
                    k if no_time.contains(&k) => f64::NAN,
                    50 => base + 0.5,
                    120..=122 => base + 0.4,
                    200..=209 => base + 0.3,
                    230 => base - 0.25,
                    250 => -0.09,
                    251..=258 => -0.085,
                    330..=333 => base + 0.2,
                    400..=460 => 0.35,
                    470..=475 => 0.33,
                    500 | 501 | 520 => f64::NAN,
                    _ => base,
                }
            })
            .collect();
        let at = |k: usize| {
            chrono::DateTime::from_timestamp_millis(utc[k])
                .expect("time")
                .to_rfc3339_opts(chrono::SecondsFormat::Secs, true)
        };
        let text = format!(
            "start,end,action,reason\n{},{},exclude,cleaning\n{},{},fill,bird on the float\n{},{},fill,weed\n",
            at(530),
            at(535),
            at(540),
            at(540),
            at(0),
            at(1)
        );
        let edits = Edits::parse(&text, &[], &super::super::time::Zone::Fixed(0)).expect("edits");
        for k in no_time {
            utc[k] = NO_TIME;
        }
        (utc, heads, edits)
    }

    /// The walks in two halves give what one pass gives, wherever the cut falls.
    #[test]
    fn halves_give_what_one_pass_gives_for_every_cut() {
        let (utc, heads, edits) = mixed_record();
        let spec = ScreeningSpec::default();
        let one = halves_agree(&utc, &heads, &edits, &spec);
        let n = heads.len();
        let c = codes(&one, n);
        for want in [
            Screen::Spike,
            Screen::OutOfWater,
            Screen::Flat,
            Screen::Excluded,
            Screen::FillEdit,
        ] {
            assert!(c.contains(&want), "the record has {want:?} rows");
        }
        assert!(
            one.gaps_total > 3 && one.unfilled.0 > 0 && !one.inserted.is_empty(),
            "{one:?}"
        );
        assert_eq!(
            one.fill_edits_failed,
            [4],
            "the fill edit before the first usable reading (line 4)"
        );
        // the cuts the finders give on the record before any walk
        let start: Vec<u8> = heads.iter().map(|h| if h.is_finite() { 0 } else { NO_HEAD }).collect();
        let cut = with_rows(&utc, &heads, &spec, |rows| {
            let mut cut = [0; 4];
            for from in 0..=n {
                let found = [
                    oow_split(rows, &start, from),
                    spike_split(rows, &start, from, &spec),
                    flat_split(rows, &start, from),
                    (from..n).find(|&p| rows.usable(&start, p)),
                ];
                for (k, q) in found.iter().enumerate() {
                    cut[k] += usize::from(q.is_some_and(|q| q > 0 && q + 1 < n));
                }
            }
            cut
        });
        assert!(cut.iter().all(|&k| k > n / 2), "most positions give a cut: {cut:?}");
    }

    /// The same on random records (a fixed linear congruential generator, Knuth's MMIX
    /// constants): steps, jumps that come back or stay, repeated values, missing readings,
    /// drops to the dry reading and gaps in time, with a spike rise of 0.05 m coming back within
    /// two readings and flat lines of an hour.
    #[test]
    fn halves_give_what_one_pass_gives_on_random_records() {
        let spec = ScreeningSpec {
            spike_rise_m: 0.05,
            spike_return: 2,
            flat_hours: 1.0,
            ..ScreeningSpec::default()
        };
        let mut x: u64 = 7;
        let mut next = move |m: u64| {
            x = x
                .wrapping_mul(6_364_136_223_846_793_005)
                .wrapping_add(1_442_695_040_888_963_407);
            (x >> 33) % m
        };
        for _ in 0..12 {
            let n = 240;
            let (mut t, mut h) = (0i64, 0.3f64);
            // an excursion under way: readings left, the level it left, where it goes
            let (mut left, mut level, mut height) = (0u64, 0.3f64, 0.0f64);
            let (mut utc, mut heads) = (Vec::new(), Vec::new());
            for _ in 0..n {
                t += 15 * MIN * if next(25) == 0 { 1 + next(12) as i64 } else { 1 };
                let small = (next(21) as f64 - 10.0) * 0.002;
                h = if left > 0 {
                    left -= 1;
                    // back to near the level (within half the rise or not), or still away
                    if left == 0 {
                        level + small * 2.0
                    } else {
                        level + height + small
                    }
                } else {
                    match next(40) {
                        0 => f64::NAN,
                        1 => -0.09,
                        2..=4 => h,
                        _ if h.is_nan() || h < 0.0 => 0.3,
                        5 | 6 => h + 0.2,
                        7 | 8 => h - 0.2,
                        9..=14 => {
                            (left, level) = (1 + next(4), h);
                            height = (next(9) as f64 - 4.0) * 0.03;
                            h + height
                        }
                        _ => h + small,
                    }
                };
                utc.push(t);
                heads.push(h);
            }
            halves_agree(&utc, &heads, &Edits::default(), &spec);
        }
    }
}
