//! The stages of a conversion, each a function of its own: times, the rating, the corrections,
//! and the conversion of the rows chunk by chunk.

use super::super::convert::{Chunk, Conversion, Counts, Plausible, StageSource, Summaries};
use super::super::correct::{drift_points, drift_warnings, pascals_per, usable_drift, DriftPoint, TimeSeries};
use super::super::dense::DenseRating;
use super::super::parallel::{cores, for_parts};
use super::super::read::RawSeries;
use super::super::screen::{Heads, Rows, Screened, ScreeningSpec, Sensor};
use super::super::settings::LoggerSettings;
use super::super::side::{read_side_file, SideError};
use super::super::time::{resolve_in_place, LocalDays, TimeNote, NO_TIME};
use super::super::timeline::{Timeline, TimelineError};
use crate::rating::limits::invalid_head_bands;
use crate::rating::{RatingEquation, RatingError, RatingModel};
use crate::report::hydrograph::{BucketRow, HydroBuckets, RowKind};
use crate::station::Station;
use crate::tailwater::{Exit, Tailwater};
use crate::uncertainty::{GumModel, Inputs};

/// Rows per chunk converted, prepared and written at a time.
pub const CHUNK_ROWS: usize = 1 << 16;

/// The rows' times: instants, local days, notes and the time order.
#[derive(Debug, Clone)]
pub struct Times {
    /// UTC ms per row ([`NO_TIME`] where none).
    pub utc: Vec<i64>,
    /// Local calendar day per row.
    pub days: LocalDays,
    /// Rows whose time needed a note.
    pub notes: Vec<(usize, TimeNote)>,
    /// The rows in time order.
    pub timeline: Timeline,
}

/// Stage 2: the rows' wall-clock times to instants (daylight-saving rule of
/// [`super::super::time`]) and the time order ([`Timeline`]). Takes the wall times out of `raw`.
pub fn times(raw: &mut RawSeries, settings: &LoggerSettings) -> Result<Times, TimelineError> {
    let mut utc = std::mem::take(&mut raw.wall_ms);
    let (days, notes) = resolve_in_place(&settings.zone, &mut utc);
    let timeline = Timeline::new(&utc, &raw.values, &raw.lines)?;
    Ok(Times {
        utc,
        days,
        notes,
        timeline,
    })
}

/// The rating as the conversion uses it.
#[derive(Debug, Clone)]
pub struct RatingStage {
    /// The uncertainty inputs.
    pub inputs: Inputs,
    /// The model with its sensitivities.
    pub gum: GumModel,
    /// The exit, for the modular limit.
    pub exit: Exit,
    /// The tailwater channel, if any.
    pub tailwater: Option<Tailwater>,
    /// The dense table up to 1.5 × the range's top.
    pub table: DenseRating,
    /// The station's rating equation, as every output prints it.
    pub equation: Option<RatingEquation>,
    /// Its exponent, for the drowned-flow estimate (1.5, a rectangle's, without an equation).
    pub exponent: f64,
    /// Heads where the method breaks a limit of application.
    pub invalid_bands: Vec<(f64, f64)>,
}

/// Stage 3: the rating tabulated densely with its uncertainty, the rating equation and the heads
/// outside the limits of application.
pub fn rating(station: &Station, model: &RatingModel) -> Result<RatingStage, RatingError> {
    let inputs = Inputs::from_station(&station.uncertainty, &station.structure);
    let gum = GumModel::new(model, inputs.clone())?;
    let exit = Exit::from(&station.exit);
    let tailwater = station
        .tailwater
        .clone()
        .map(|t| Tailwater::new(t, station.structure.gravity_m_s2));
    let r = station.range;
    let table = DenseRating::new(&gum, &exit, tailwater.as_ref(), 1.5 * r.max_head_m, r.min_head_m)?;
    let equation = RatingEquation::for_range(model, r.min_head_m, r.max_head_m);
    let exponent = equation.as_ref().map_or(1.5, |e| e.fit.u);
    Ok(RatingStage {
        inputs,
        gum,
        exit,
        tailwater,
        table,
        equation,
        exponent,
        invalid_bands: invalid_head_bands(model, r.max_head_m),
    })
}

/// The corrections as found: the drift record, its warnings and the side files' hashes.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Corrections {
    /// One entry per field visit.
    pub drift_record: Vec<DriftPoint>,
    /// Warnings about the drift.
    pub drift_warnings: Vec<String>,
    /// SHA-256 of the visits file.
    pub visits_sha256: Option<String>,
    /// SHA-256 of the barometric file.
    pub baro_sha256: Option<String>,
}

/// Where the stage comes from: the logged stage, or pressure minus a barometric series read from
/// `baro` (stage 4a). Returns the source and the barometric file's hash.
pub fn stage_source(
    settings: &LoggerSettings,
    baro: Option<&std::path::Path>,
    interval_ms: i64,
) -> Result<(StageSource, Option<String>), SideError> {
    let Some(unit) = &settings.pressure_unit else {
        return Ok((
            StageSource::Level {
                metres_per_unit: settings.metres_per_unit(),
            },
            None,
        ));
    };
    let path = baro.expect("a pressure logger's settings require a barometric file");
    let side = read_side_file(path, "pressure", &settings.read.formats, &settings.zone)?;
    let pa = pascals_per(unit).expect("checked when resolved");
    let source = StageSource::Pressure {
        pascals_per_unit: pa,
        baro_pa: TimeSeries::new(side.points.into_iter().map(|(t, v)| (t, v * pa)).collect()),
        // barometric pressure is interpolated across gaps (and held beyond its ends) up to 3 h,
        // or three logging intervals for slower loggers
        baro_max_gap_ms: (3 * 3_600_000).max(3 * interval_ms),
        water_temperature_c: settings.water_temperature,
        temperature_column: settings.temperature_index,
    };
    Ok((source, Some(side.sha256)))
}

/// The stages the logger can physically read, from its settings and the station's range.
pub fn plausible(settings: &LoggerSettings, station: &Station) -> Plausible {
    let m_per = settings.metres_per_unit();
    let dry_m = settings.dry_reading.unwrap_or(0.0) * m_per;
    let max_depth_m = settings.max_depth.map_or_else(
        || Plausible::default_max_depth_m(settings.zero * m_per - dry_m, station.range.max_head_m),
        |d| d * m_per,
    );
    Plausible::new(dry_m, max_depth_m)
}

/// Stage 4b: the drift from field visits: staff head minus the logger's head (before drift) at
/// each visit, from the readings nearest in time within three intervals (at least an hour).
pub fn drift(
    conv: &Conversion,
    utc: &[i64],
    interval_ms: i64,
    raw: &RawSeries,
    visits: &std::path::Path,
    settings: &LoggerSettings,
) -> Result<(Vec<DriftPoint>, String), SideError> {
    let side = read_side_file(visits, "head", &settings.read.formats, &settings.zone)?;
    let unit = if side.unit.is_empty() { "m" } else { &side.unit };
    let per = super::super::correct::metres_per(unit).ok_or_else(|| SideError {
        path: visits.display().to_string(),
        line: Some(1),
        problem: format!("head unit \"{unit}\": name the column head_m, head_cm, head_mm or head_ft"),
    })?;
    let max_gap = (3 * interval_ms).max(3_600_000);
    let mut near: Vec<(i64, f64)> = Vec::new();
    for &(tv, _) in &side.points {
        let mut before: Option<(i64, f64)> = None;
        let mut after: Option<(i64, f64)> = None;
        for (i, &t) in utc.iter().enumerate() {
            if t == NO_TIME || (t - tv).abs() > max_gap {
                continue;
            }
            let h = conv.head_before_drift(t, conv.stage_of(t, &raw.values, i).0);
            if !h.is_finite() {
                continue;
            }
            if t <= tv && before.is_none_or(|b| t > b.0) {
                before = Some((t, h));
            }
            if t >= tv && after.is_none_or(|b| t < b.0) {
                after = Some((t, h));
            }
        }
        near.extend(before);
        near.extend(after);
    }
    let staff: Vec<(i64, f64)> = side.points.iter().map(|&(t, v)| (t, v * per)).collect();
    Ok((drift_points(&staff, &TimeSeries::new(near), max_gap), side.sha256))
}

/// Applies a drift record to the conversion; returns its warnings.
pub fn apply_drift(conv: &mut Conversion, record: &[DriftPoint]) -> Vec<String> {
    conv.drift = usable_drift(record);
    drift_warnings(&conv.drift)
}

/// What converting every row gave besides the chunks.
#[derive(Debug, Clone)]
pub struct Converted {
    /// Counts per flag and per case.
    pub counts: Counts,
    /// Daily and monthly accumulators.
    pub summaries: Summaries,
    /// The hydrograph's buckets.
    pub buckets: HydroBuckets,
}

/// The order rows are written in: file order, or by time then line with `sort`. Rows inserted
/// into filled gaps follow the row before them in time (in file order) or take their place in
/// time (sorted). `None` for plain file order.
pub fn write_order(times: &Times, raw: &RawSeries, conv: &Conversion, sort: bool) -> Option<Vec<u32>> {
    let inserted = &conv.screened.inserted;
    if sort {
        let mut o: Vec<u32> = (0..raw.lines.len() as u32).collect();
        o.sort_by_key(|&i| {
            let t = times.utc[i as usize];
            (if t == NO_TIME { i64::MAX } else { t }, raw.lines[i as usize])
        });
        return Some(o);
    }
    if inserted.is_empty() {
        return None;
    }
    // inserted rows are in time order; group them by the row they follow
    let mut after: Vec<(u32, u32)> = inserted
        .iter()
        .enumerate()
        .map(|(k, r)| (r.after_row, (conv.input_rows + k) as u32))
        .collect();
    after.sort_by_key(|&(row, _)| row);
    let mut o = Vec::with_capacity(raw.lines.len());
    let mut next = 0;
    for i in 0..conv.input_rows as u32 {
        o.push(i);
        while next < after.len() && after[next].0 == i {
            o.push(after[next].1);
            next += 1;
        }
    }
    Some(o)
}

/// The sensor's dry reading and whether it sits below the crest, from the logger's settings.
pub fn sensor(settings: &LoggerSettings, spec: &ScreeningSpec) -> Sensor {
    let m_per = settings.metres_per_unit();
    let dry_m = settings.dry_reading.unwrap_or(0.0) * m_per;
    Sensor {
        dry_m,
        below_crest: dry_m < settings.zero * m_per - spec.out_of_water_tolerance_m,
    }
}

/// Stage 4c: screening, edits and gap filling over the rows that stand for time, in time
/// order ([`super::super::screen`]). Every row's head is computed once, on all cores.
pub fn screen(conv: &Conversion, utc: &[i64], raw: &RawSeries, spec: &ScreeningSpec, sensor: Sensor) -> Screened {
    let n = raw.lines.len();
    // nothing but the zero applies to the stage: heads worked out as screening needs them
    let simple = match conv.stage {
        StageSource::Level { metres_per_unit } if conv.edits.is_empty() && conv.drift.is_empty() => {
            Some(Heads::FromStage {
                stage: &raw.values[0],
                utc,
                metres_per_unit,
                zero_m: conv.zero_m,
                min_m: conv.plausible.min_stage_m,
                max_m: conv.plausible.max_stage_m,
            })
        }
        _ => None,
    };
    let mut head = if simple.is_some() {
        Vec::new()
    } else {
        vec![f64::NAN; n]
    };
    let mut air = vec![0u8; n];
    if simple.is_some() {
        for_parts(&mut air, |from, part| {
            for (j, a) in part.iter_mut().enumerate() {
                let i = from + j;
                if utc[i] != NO_TIME {
                    *a = sensor.air_bits(conv.level(i, utc[i], &raw.values).stage_m, spec);
                }
            }
        });
    } else {
        let per = n.div_ceil(cores()).max(1);
        std::thread::scope(|scope| {
            for (k, (h, a)) in head.chunks_mut(per).zip(air.chunks_mut(per)).enumerate() {
                scope.spawn(move || {
                    for (j, (h, a)) in h.iter_mut().zip(a.iter_mut()).enumerate() {
                        let i = k * per + j;
                        if utc[i] == NO_TIME {
                            continue;
                        }
                        let lv = conv.level(i, utc[i], &raw.values);
                        *h = lv.head_m;
                        *a = sensor.air_bits(lv.stage_m, spec);
                    }
                });
            }
        });
    }
    let order = conv.timeline.sorted_order();
    let rows = Rows {
        order,
        utc,
        raw: &raw.values[0],
        head: simple.unwrap_or(Heads::Stored(&head)),
        air: &air,
        interval_ms: conv.timeline.interval_ms,
    };
    super::super::screen::screen(&rows, n, &conv.edits, spec)
}

/// Adds the rows inserted into filled gaps to the arrays: their instants and local days, no
/// values, line 0.
pub fn add_inserted(conv: &Conversion, utc: &mut Vec<i64>, days: &mut LocalDays, raw: &mut RawSeries) {
    let inserted = &conv.screened.inserted;
    if inserted.is_empty() {
        return;
    }
    for r in inserted {
        utc.push(r.time_ms);
        days.push(r.time_ms, conv.zone.offset_at_utc(r.time_ms));
        raw.lines.push(0);
        for v in &mut raw.values {
            v.push(f64::NAN);
        }
    }
}

/// One core's share of a chunk: the rows converted, with their own counts, summaries and
/// hydrograph buckets (merged by the caller in order; filled only when `buckets` is given).
fn convert_part(
    conv: &Conversion,
    times: &Times,
    raw: &RawSeries,
    inputs: &Inputs,
    part: &[usize],
    mut buckets: Option<HydroBuckets>,
) -> (Chunk, Counts, Summaries, Option<HydroBuckets>) {
    let (mut c, mut sm) = (Counts::default(), Summaries::default());
    let chunk = conv.convert_rows_in_force(
        part,
        &times.utc,
        &times.days,
        &raw.values,
        &raw.lines,
        inputs,
        &mut c,
        &mut sm,
    );
    let Some(b) = buckets.as_mut() else {
        return (chunk, c, sm, buckets);
    };
    b.add_rows(chunk.time_ms.len(), |k| BucketRow {
        t_ms: chunk.time_ms[k],
        q: chunk.discharge_m3s[k],
        lo: chunk.low_m3s[k],
        hi: chunk.high_m3s[k],
        head: chunk.head_m[k],
        kind: if chunk.flag[k].measured() {
            RowKind::Measured
        } else if chunk.flag[k].estimated() {
            RowKind::Estimated
        } else {
            RowKind::NoDischarge
        },
    });
    (chunk, c, sm, buckets)
}

/// Stage 5: converts every row, [`CHUNK_ROWS`] at a time, and hands every chunk, made ready by
/// `prepare`, to `emit` in output order (which returns false to stop: a writer that failed);
/// reports progress in rows emitted. The chunks are shared out to the cores as they come free:
/// each converts a chunk and prepares it (formats or encodes it for the file), so no core waits
/// for another at a chunk's end, and at most two chunks per core are on hand at once, which
/// keeps memory flat. Counts and summaries are merged in chunk order, so the result does not
/// depend on the number of cores. The hydrograph's buckets are filled only when `hydrograph`
/// is asked for (they stay empty otherwise).
#[allow(clippy::too_many_arguments)]
pub fn convert_all<P: Send>(
    conv: &Conversion,
    times: &Times,
    raw: &RawSeries,
    inputs: &Inputs,
    order: Option<&[u32]>,
    hydrograph: bool,
    prepare: impl Fn(Chunk) -> P + Sync,
    emit: impl FnMut(P) -> bool,
    progress: impl FnMut(u64),
) -> Converted {
    let rows = (conv, times, raw, inputs, order);
    convert_on(cores(), rows, hydrograph, prepare, emit, progress)
}

/// What [`convert_all`] converts: the conversion, the times, the rows, the rating's inputs and
/// the write order.
type ToConvert<'a, 'c> = (
    &'a Conversion<'c>,
    &'a Times,
    &'a RawSeries,
    &'a Inputs,
    Option<&'a [u32]>,
);

/// [`convert_all`] on at most `cores` threads besides this one (none for one chunk or one core).
fn convert_on<P: Send>(
    cores: usize,
    (conv, times, raw, inputs, order): ToConvert,
    hydrograph: bool,
    prepare: impl Fn(Chunk) -> P + Sync,
    mut emit: impl FnMut(P) -> bool,
    mut progress: impl FnMut(u64),
) -> Converted {
    let n = raw.lines.len();
    let (t_min, t_max) = times
        .utc
        .iter()
        .filter(|t| **t != NO_TIME)
        .fold((i64::MAX, i64::MIN), |(lo, hi), &t| (lo.min(t), hi.max(t)));
    let empty = HydroBuckets::new(t_min, t_max, 1100);
    let mut out = Converted {
        counts: Counts::default(),
        summaries: Summaries::default(),
        buckets: empty.clone(),
    };
    let chunks = n.div_ceil(CHUNK_ROWS);
    let end_of = |k: usize| ((k + 1) * CHUNK_ROWS).min(n);
    // chunk k: its rows' indices, converted and prepared
    let work = |k: usize| {
        let rows = k * CHUNK_ROWS..end_of(k);
        let idx: Vec<usize> = match order {
            Some(o) => o[rows].iter().map(|&i| i as usize).collect(),
            None => rows.collect(),
        };
        let (chunk, c, sm, b) = convert_part(conv, times, raw, inputs, &idx, hydrograph.then(|| empty.clone()));
        (prepare(chunk), c, sm, b)
    };
    // chunk k, the next in order: merged, emitted and reported
    let mut take = |k: usize, (ready, c, sm, b): (P, Counts, Summaries, Option<HydroBuckets>)| {
        out.counts.merge(c);
        out.summaries.merge(sm);
        if let Some(b) = b {
            out.buckets.merge(&b);
        }
        let go_on = emit(ready);
        progress(end_of(k) as u64);
        go_on
    };
    let workers = cores.min(chunks);
    if workers <= 1 {
        for k in 0..chunks {
            if !take(k, work(k)) {
                break;
            }
        }
        return out;
    }
    let next = std::sync::atomic::AtomicUsize::new(0);
    // chunks emitted so far, and whether to stop; a worker waits while it is too far ahead
    let gate = (std::sync::Mutex::new((0usize, false)), std::sync::Condvar::new());
    let ahead = 2 * workers;
    std::thread::scope(|scope| {
        let (tx, rx) = std::sync::mpsc::channel();
        for _ in 0..workers {
            let (tx, next, gate, work) = (tx.clone(), &next, &gate, &work);
            scope.spawn(move || loop {
                let k = next.fetch_add(1, std::sync::atomic::Ordering::Relaxed);
                if k >= chunks {
                    break;
                }
                {
                    let mut g = gate.0.lock().expect("the gate is not poisoned");
                    while k >= g.0 + ahead && !g.1 {
                        g = gate.1.wait(g).expect("the gate is not poisoned");
                    }
                    if g.1 {
                        break;
                    }
                }
                if tx.send((k, work(k))).is_err() {
                    break;
                }
            });
        }
        drop(tx);
        // this thread takes the chunks in order as they arrive; after a failed write it only
        // lets the workers finish what they hold
        let mut waiting = std::collections::BTreeMap::new();
        let (mut due, mut stopped) = (0, false);
        for (k, done) in rx {
            if stopped {
                continue;
            }
            waiting.insert(k, done);
            while let Some(done) = waiting.remove(&due) {
                stopped = !take(due, done);
                due += 1;
                let mut g = gate.0.lock().expect("the gate is not poisoned");
                *g = (due, stopped);
                gate.1.notify_all();
                if stopped {
                    waiting.clear();
                    break;
                }
            }
        }
    });
    out
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::series::convert::Flag;
    use crate::series::settings::{LoggerOverrides, LoggerSettings};
    use crate::series::time::TimeFormat;

    /// A rectangular test flume on a logger at UTC, zero 0.1 m (invented).
    fn station() -> Station {
        Station::from_toml_str(
            "name = \"stage test\"\nlength_unit = \"m\"\n[control]\nshape = \"rectangle\"\nwidth = 0.5\nlength = 1.0\n[approach]\nshape = \"rectangle\"\nwidth = 1.0\nsill_height = 0.15\n[range]\nmin_head = 0.07\nmax_head = 0.5\n[logger]\ntimezone = \"UTC\"\nzero = 0.1\n",
            "test.toml",
        )
        .expect("station")
    }

    fn settings(st: &Station) -> LoggerSettings {
        LoggerSettings::resolve(st.logger.as_ref().expect("logger"), &LoggerOverrides::default(), false)
            .expect("settings")
    }

    fn raw(times: &[&str], stages: &[f64]) -> RawSeries {
        RawSeries::from_readings(times, &[TimeFormat::new("%Y-%m-%d %H:%M")], vec![stages.to_vec()])
    }

    #[test]
    fn times_resolve_and_order_the_rows() {
        let st = station();
        let mut r = raw(
            &["2026-01-01 00:30", "2026-01-01 00:15", "bad", "2026-01-01 00:00"],
            &[0.3, 0.3, 0.3, 0.3],
        );
        let t = times(&mut r, &settings(&st)).expect("times");
        assert!(r.wall_ms.is_empty(), "the wall times are taken");
        assert_eq!(
            t.utc[3], 1_767_225_600_000,
            "2026-01-01T00:00Z (chrono's epoch arithmetic)"
        );
        assert_eq!(t.utc[2], NO_TIME);
        assert!(t.timeline.newest_first);
        assert_eq!(t.timeline.interval_ms, 900_000);
    }

    #[test]
    fn rating_stage_tabulates_within_its_stated_error() {
        let st = station();
        let model = RatingModel::new(st.structure.clone()).expect("model");
        let r = rating(&st, &model).expect("rating");
        assert!(r.table.max_relative_error < 1e-4);
        assert!((r.table.top_m() - 0.75).abs() < 1e-12, "1.5 × the range's top");
        let q = model.discharge_m3s(0.3).expect("q");
        assert!((r.table.eval(0.3).expect("in table").discharge_m3s / q - 1.0).abs() < 1e-4);
        assert!(r.equation.is_some() && (1.4..1.7).contains(&r.exponent));
    }

    #[test]
    fn a_level_logger_needs_no_side_file_and_a_plausible_range_follows_its_zero() {
        let st = station();
        let s = settings(&st);
        let (source, sha) = stage_source(&s, None, 900_000).expect("level");
        assert_eq!(source, StageSource::Level { metres_per_unit: 1.0 });
        assert!(sha.is_none());
        let p = plausible(&s, &st);
        assert!((p.min_stage_m + 0.10).abs() < 1e-12);
        // 10 × (0.1 + 0.5) = 6 m: above the 5 m floor
        assert!((p.max_stage_m - 6.0).abs() < 1e-12);
    }

    /// The conversion set-up of the tests: the station's rating and range, zero 0.1 m, no
    /// drift, edits or tailwater.
    fn test_conversion<'a>(
        rt: &'a RatingStage,
        st: &Station,
        s: &LoggerSettings,
        t: &'a Times,
        source: StageSource,
        rows: usize,
    ) -> Conversion<'a> {
        Conversion {
            gum: &rt.gum,
            table: &rt.table,
            range: st.range,
            stage: source,
            zero_m: 0.1,
            plausible: plausible(s, st),
            invalid_bands: rt.invalid_bands.clone(),
            drift: Vec::new(),
            tailwater_column: None,
            tailwater: None,
            submerged_estimate: false,
            exponent: rt.exponent,
            timeline: &t.timeline,
            zone: s.zone,
            gravity_m_s2: 9.80665,
            edits: Default::default(),
            screened: Default::default(),
            input_rows: rows,
            temperature_column: None,
            earlier: Vec::new(),
        }
    }

    /// The test station with its logger settings and its rating stage.
    fn rated_station() -> (Station, LoggerSettings, RatingStage) {
        let st = station();
        let s = settings(&st);
        let model = RatingModel::new(st.structure.clone()).expect("model");
        let rt = rating(&st, &model).expect("rating");
        (st, s, rt)
    }

    #[test]
    fn heads_from_the_stage_equal_the_conversions_bit_for_bit() {
        let (st, s, rt) = rated_station();
        // awkward stages: at the zero (a zero head), −0.0, missing, below and above what the
        // logger can read, tiny and ordinary steps
        let stages = [
            0.1,
            -0.0,
            f64::NAN,
            -5.0,
            1e9,
            0.1 + 1e-17,
            0.30000000000000004,
            0.4,
            0.0999999,
            0.35,
        ];
        let texts: Vec<String> = (0..stages.len()).map(|k| format!("2026-01-01 {:02}:00", k)).collect();
        let mut refs: Vec<&str> = texts.iter().map(String::as_str).collect();
        refs[3] = "not a time";
        let mut r = raw(&refs, &stages);
        let t = times(&mut r, &s).expect("times");
        let (source, _) = stage_source(&s, None, t.timeline.interval_ms).expect("source");
        let StageSource::Level { metres_per_unit } = source else {
            panic!("a stage logger")
        };
        let conv = test_conversion(&rt, &st, &s, &t, source, stages.len());
        let heads = Heads::FromStage {
            stage: &r.values[0],
            utc: &t.utc,
            metres_per_unit,
            zero_m: conv.zero_m,
            min_m: conv.plausible.min_stage_m,
            max_m: conv.plausible.max_stage_m,
        };
        for (i, stage) in stages.iter().enumerate() {
            let want = if t.utc[i] == NO_TIME {
                f64::NAN
            } else {
                conv.level(i, t.utc[i], &r.values).head_m
            };
            assert_eq!(heads.get(i).to_bits(), want.to_bits(), "row {i}: stage {stage}");
        }
    }

    /// The drift at a visit is staff minus logger at the nearest readings; converting every row
    /// with it gives the same rows whatever the write order.
    #[test]
    fn drift_and_conversion_of_every_row() {
        let (st, s, rt) = rated_station();
        let texts: Vec<String> = (0..8).map(|k| format!("2026-01-01 {:02}:00", k)).collect();
        let refs: Vec<&str> = texts.iter().map(String::as_str).collect();
        let mut r = raw(&refs, &[0.4; 8]);
        let t = times(&mut r, &s).expect("times");
        let (source, _) = stage_source(&s, None, t.timeline.interval_ms).expect("source");
        let mut conv = test_conversion(&rt, &st, &s, &t, source, 8);
        let dir = tempfile::tempdir().expect("tempdir");
        let visits = dir.path().join("v.csv");
        // logger head 0.300 m; the staff reads 0.304 m at 03:00: +4 mm
        std::fs::write(&visits, "time,head_m\n2026-01-01T03:00:00Z,0.304\n").expect("write");
        let (record, sha) = drift(&conv, &t.utc, t.timeline.interval_ms, &r, &visits, &s).expect("drift");
        assert_eq!(sha.len(), 64);
        assert!((record[0].drift_m().expect("drift") - 0.004).abs() < 1e-12);
        assert!(apply_drift(&mut conv, &record).is_empty(), "4 mm is not warned about");
        let mut rows = Chunk::default();
        let c = convert_all(
            &conv,
            &t,
            &r,
            &rt.inputs,
            None,
            false,
            |ch| ch,
            |ch| {
                rows.append(ch);
                true
            },
            |_| {},
        );
        assert_eq!(c.counts.per_flag[Flag::Ok as usize], 8, "all ok");
        assert!(rows.head_m.iter().all(|h| (h - 0.304).abs() < 1e-12));
        let order = write_order(&t, &r, &conv, true).expect("order");
        let mut sorted = Chunk::default();
        convert_all(
            &conv,
            &t,
            &r,
            &rt.inputs,
            Some(&order),
            false,
            |ch| ch,
            |ch| {
                sorted.append(ch);
                true
            },
            |_| {},
        );
        assert_eq!(rows.discharge_m3s, sorted.discharge_m3s, "already in time order");
    }

    /// Three and a half chunks of 15-minute rows (invented): stages swinging through the
    /// range, below the crest and above the table, with gaps and a missing time.
    fn long_record() -> (Station, LoggerSettings, RatingStage, RawSeries) {
        let (st, s, rt) = rated_station();
        let n = CHUNK_ROWS * 7 / 2;
        let start = chrono::NaiveDate::from_ymd_opt(2020, 1, 1)
            .and_then(|d| d.and_hms_opt(0, 0, 0))
            .expect("date");
        let texts: Vec<String> = (0..n)
            .map(|k| match k {
                77_777 => "not a time".to_string(),
                k => (start + chrono::Duration::minutes(15 * k as i64))
                    .format("%Y-%m-%d %H:%M")
                    .to_string(),
            })
            .collect();
        let refs: Vec<&str> = texts.iter().map(String::as_str).collect();
        let stages: Vec<f64> = (0..n)
            .map(|k| match k % 997 {
                0 => f64::NAN,
                _ => 0.05 + 0.5 * (1.0 + (k as f64 / 700.0).sin()),
            })
            .collect();
        let r = raw(&refs, &stages);
        (st, s, rt, r)
    }

    /// Runs `f` on the conversion of [`long_record`] with its times, rows, rating and settings.
    fn on_long_record(f: impl FnOnce(&Conversion, &Times, &RawSeries, &RatingStage, &LoggerSettings)) {
        let (st, s, rt, mut r) = long_record();
        let t = times(&mut r, &s).expect("times");
        let (source, _) = stage_source(&s, None, t.timeline.interval_ms).expect("source");
        let conv = test_conversion(&rt, &st, &s, &t, source, r.lines.len());
        f(&conv, &t, &r, &rt, &s);
    }

    #[test]
    fn chunks_shared_over_threads_give_what_one_thread_gives() {
        on_long_record(|conv, t, r, rt, s| {
            let run = |cores: usize| {
                let (mut rows, mut done) = (Chunk::default(), Vec::new());
                let mut c = convert_on(
                    cores,
                    (conv, t, r, &rt.inputs, None),
                    true,
                    |ch| ch,
                    |ch| {
                        rows.append(ch);
                        true
                    },
                    |d| done.push(d),
                );
                let daily = c.summaries.daily(&s.zone, &rt.inputs);
                (format!("{rows:?}"), c.counts, format!("{daily:?}"), done, c.buckets)
            };
            let one = run(1);
            for cores in [2, 3] {
                let many = run(cores);
                assert!(one.0 == many.0, "the rows, bit for bit, on {cores} threads");
                assert_eq!(one.1, many.1, "the counts on {cores} threads");
                assert!(one.2 == many.2, "the daily summaries on {cores} threads");
                assert_eq!(one.3, many.3, "progress in rows, in order");
                assert_eq!(format!("{:?}", one.4), format!("{:?}", many.4), "the buckets");
            }
            let n = r.lines.len() as u64;
            assert_eq!(one.3.last(), Some(&n), "every row reported");
            let rows_flagged = |f: Flag| one.1.per_flag[f as usize];
            assert!(
                [Flag::Missing, Flag::Ok, Flag::Dry, Flag::AboveRange, Flag::BelowRange]
                    .map(rows_flagged)
                    .iter()
                    .all(|&k| k > 0),
                "the record is a mixed one: {:?}",
                one.1.per_flag
            );
        });
    }

    #[test]
    fn a_failed_write_stops_the_conversion_without_another_chunk() {
        on_long_record(|conv, t, r, rt, _| {
            for cores in [1, 2] {
                let (mut emitted, mut done) = (0, Vec::new());
                convert_on(
                    cores,
                    (conv, t, r, &rt.inputs, None),
                    false,
                    |ch| ch.line.len(),
                    |_| {
                        emitted += 1;
                        emitted < 2
                    },
                    |d| done.push(d),
                );
                assert_eq!(emitted, 2, "{cores} threads: the writer failed on the second chunk");
                assert_eq!(done, [CHUNK_ROWS as u64, 2 * CHUNK_ROWS as u64]);
            }
        });
    }
}
