//! What a conversion tells: the report printed for the user and the provenance record, both from
//! the same facts.

use serde_json::{json, Value};

use super::super::convert::{time_note_lines, Conversion, Flag, Impossible, PeriodRow, Plausible};
use super::super::read::RawSeries;
use super::super::screen::{Screen, MIN_FILL_HALF_WIDTH_M};
use super::super::settings::LoggerSettings;
use super::stages::{Converted, Corrections, RatingStage, Times};
use crate::report::{sig, wrap, CAUTIONS};
use crate::station::Station;

/// At most this many line numbers are listed per kind in the provenance record (with the total).
pub const MAX_LISTED_LINES: usize = 1000;

/// A list of lines for the provenance record: the total and the first [`MAX_LISTED_LINES`].
fn bounded_lines(lines: &[u32]) -> Value {
    json!({ "total": lines.len(), "first": &lines[..lines.len().min(MAX_LISTED_LINES)] })
}

/// Up to `max` line numbers, and how many more there are.
fn lines_text(lines: &[u32], max: usize) -> String {
    let mut s: Vec<String> = lines.iter().take(max).map(|l| l.to_string()).collect();
    if lines.len() > max {
        s.push(format!("… ({} more in the provenance file)", lines.len() - max));
    }
    s.join(", ")
}

/// Where things are, for the report and the provenance.
#[derive(Debug, Clone)]
pub struct Paths {
    /// The logger file.
    pub logger: String,
    /// The station file.
    pub station: String,
    /// The converted series.
    pub output: String,
    /// The provenance record.
    pub provenance: String,
    /// The visits file, if any.
    pub visits: Option<String>,
    /// The barometric file, if any.
    pub baro: Option<String>,
}

/// Everything a conversion found, for its report and provenance.
pub struct Facts<'a> {
    /// Where things are.
    pub paths: &'a Paths,
    /// The logger file's size (bytes).
    pub logger_bytes: u64,
    /// The station.
    pub station: &'a Station,
    /// The settings used.
    pub settings: &'a LoggerSettings,
    /// Rows written sorted by time.
    pub sort: bool,
    /// The drowned-flow estimate was asked for.
    pub submerged_estimate: bool,
    /// The rows as read.
    pub raw: &'a RawSeries,
    /// Their times.
    pub times: &'a Times,
    /// The rating.
    pub rating: &'a RatingStage,
    /// The conversion set-up.
    pub conv: &'a Conversion<'a>,
    /// The corrections found.
    pub corrections: &'a Corrections,
    /// What converting gave.
    pub converted: &'a Converted,
    /// The daily summaries (their totals are the record's).
    pub daily: &'a [PeriodRow],
    /// The edits file, if any.
    pub edits_path: Option<String>,
    /// The screening thresholds used.
    pub screening: super::super::screen::ScreeningSpec,
}

/// The record's totals over its daily summaries.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct Totals {
    /// Days.
    pub days: usize,
    /// Volume, measured plus estimated (m³).
    pub volume_m3: f64,
    /// Measured volume (m³).
    pub measured_m3: f64,
    /// Estimated volume (m³).
    pub estimated_m3: f64,
    /// Hours measured.
    pub measured_h: f64,
    /// Hours estimated.
    pub estimated_h: f64,
    /// Hours missing.
    pub missing_h: f64,
    /// Hours in the days.
    pub period_h: f64,
}

impl Totals {
    /// Sums daily rows.
    pub fn of(daily: &[PeriodRow]) -> Self {
        let mut t = Totals {
            days: daily.len(),
            ..Default::default()
        };
        for d in daily {
            t.volume_m3 += d.volume_m3;
            t.measured_m3 += d.volume_measured_m3;
            t.estimated_m3 += d.volume_estimated_m3;
            t.measured_h += d.measured_h;
            t.estimated_h += d.estimated_h;
            t.missing_h += d.missing_h;
            t.period_h += d.period_h;
        }
        t
    }

    /// Covered share of the days (%).
    pub fn complete_pct(&self) -> f64 {
        if self.period_h > 0.0 {
            100.0 * (self.measured_h + self.estimated_h) / self.period_h
        } else {
            f64::NAN
        }
    }
}

impl Facts<'_> {
    /// The provenance record.
    pub fn provenance(&self) -> Value {
        json!({
            "flumerate_version": env!("CARGO_PKG_VERSION"),
            "station": { "path": self.paths.station, "sha256": self.station.sha256, "name": self.station.name },
            "rating_periods": self.station.periods().map(|p| json!({
                "rating_id": p.period.rating_id,
                "valid_from": p.period.valid_from,
                "status": p.period.status,
                "approved_by": p.period.approved_by,
                "approved_on": p.period.approved_on,
                "applied_to": "rows at or after valid_from and before the next period's (the latest: to the end)",
            })).collect::<Vec<_>>(),
            "logger": { "path": self.paths.logger, "sha256": self.raw.sha256, "bytes": self.logger_bytes },
            "settings": self.settings_json(),
            "corrections": self.corrections_json(),
            "rating": self.rating_json(),
            "rows": self.rows_json(),
            "screening": self.screening_json(),
            "edits": self.edits_json(),
            "gap_filling": self.filling_json(),
            "volumes": self.volumes_json(),
            "nominal_interval_s": self.times.timeline.interval_ms as f64 / 1000.0,
            "cautions": CAUTIONS,
        })
    }

    fn settings_json(&self) -> Value {
        let s = self.settings;
        json!({
            "time_formats": s.read.formats.iter().map(|f| f.as_str()).collect::<Vec<_>>(),
            "timezone": s.zone_text,
            "daylight_saving_rule": "nonexistent local times: no time, flag missing; repeated local times: summer time until the clock steps back within the repeated hour, standard time after (from the end of a newest-first file; by occurrence in a file out of order)",
            "stage_unit": s.stage_unit,
            "temperature_column": s.temperature_index.map(|_| if s.pressure_unit.is_some() {
                "read: the density of water for the barometric compensation"
            } else {
                "read, not used: a level logger's stage needs no water density"
            }),
            "separator": (s.read.separator as char).to_string(),
            "decimal_comma": s.read.decimal_comma,
            "missing_values": s.read.missing,
            "sorted_by_time": self.sort,
            "submerged_estimate": self.submerged_estimate,
        })
    }

    fn corrections_json(&self) -> Value {
        let (s, k) = (self.settings, self.corrections);
        let c = &self.converted.counts;
        json!({
            "gauge_zero": { "zero": s.zero, "unit": s.stage_unit, "zero_m": self.conv.zero_m, "rule": "head = stage - zero" },
            "drift": self.paths.visits.as_ref().map(|p| json!({
                "visits_file": p,
                "visits_sha256": k.visits_sha256,
                "rule": "staff minus logger at each visit, linear in time between visits, constant outside",
                "warnings": k.drift_warnings,
                "visits": k.drift_record.iter().map(|d| json!({
                    "time_utc_ms": d.time_ms,
                    "staff_head_m": d.staff_head_m,
                    "logger_head_m": d.logger_head_m,
                    "drift_m": d.drift_m(),
                })).collect::<Vec<_>>(),
            })),
            "barometric": s.pressure_unit.as_ref().map(|u| json!({
                "baro_file": self.paths.baro,
                "baro_sha256": k.baro_sha256,
                "pressure_unit": u,
                "rule": "depth = (p_logger - p_baro) / (rho(T) g), baro interpolated linearly in time, held up to 3 h beyond its ends, rho by Kell (1975)",
                "water_temperature_c": s.water_temperature,
                "rows_without_baro": c.no_baro,
                "rows_with_given_temperature": c.temperature_fallback,
            })),
        })
    }

    fn rating_json(&self) -> Value {
        let r = self.rating;
        let si = crate::units::Units::Si;
        json!({
            "calibration": self.station.structure.calibration.as_ref().map(|c| c.sentence("m", 1.0)),
            "dense_table_max_relative_error": r.table.max_relative_error,
            "dense_table_top_m": r.table.top_m(),
            "rows_above_table_computed_exactly": self.converted.counts.above_table,
            "rows_without_discharge": bounded_lines(&self.converted.counts.unrated_lines),
            "rating_equation": r.equation.as_ref().map(|e| e.printed(si).sentence(si)),
            "rating_equation_exponent": r.exponent,
            "heads_beyond_limits_m": r.invalid_bands.iter()
                .map(|(a, b)| json!([a, if b.is_finite() { json!(b) } else { json!("top") }]))
                .collect::<Vec<_>>(),
        })
    }

    fn rows_json(&self) -> Value {
        let (raw, t, c) = (self.raw, &self.times.timeline, &self.converted.counts);
        let per_flag: serde_json::Map<String, Value> = Flag::ALL
            .iter()
            .zip(c.per_flag)
            .map(|(f, n)| (f.as_str().to_string(), json!(n)))
            .collect();
        let p = self.conv.plausible;
        json!({
            "input_rows": self.conv.input_rows,
            "inserted_rows": self.conv.screened.inserted.len(),
            "output_rows": c.per_flag.iter().sum::<usize>(),
            "blank_lines": bounded_lines(&raw.blank_lines),
            "per_flag": per_flag,
            "unreadable": {
                "total": raw.unreadable.len(),
                "first": raw.unreadable.iter().take(MAX_LISTED_LINES).map(|(l, w)| json!({"line": l, "problem": w})).collect::<Vec<_>>(),
            },
            "impossible_readings": {
                "rule": format!(
                    "stage below the sensor's dry reading by more than {} m, above it by more than {} m of water, or a negative absolute pressure: flag missing",
                    Plausible::BELOW_DRY_M,
                    p.max_stage_m - p.min_stage_m - Plausible::BELOW_DRY_M
                ),
                "total": c.impossible.len(),
                "first": c.impossible.iter().take(MAX_LISTED_LINES).map(|(l, w)| json!({"line": l, "problem": w.as_str()})).collect::<Vec<_>>(),
            },
            "empty_stage_fields": raw.empty_fields.first().copied().unwrap_or(0),
            "sentinel_stage_fields": raw.sentinel_fields.first().copied().unwrap_or(0),
            "backward_time_steps": t.backward_steps,
            "newest_first": t.newest_first,
            "repeated_instants": t.repeated_instants,
            "repeat_rows_not_counted": t.repeat_rows,
            "repeated_instants_with_differing_values": { "total": t.differing_total, "lines": t.differing },
            "time_notes": time_note_lines(&self.times.notes, &raw.lines)
                .iter()
                .map(|(k, ls)| (k.to_string(), bounded_lines(ls)))
                .collect::<serde_json::Map<_, _>>(),
            "submerged_estimated": c.submerged_estimated,
            "submerged_not_estimated": {
                "total": c.submerged_not_estimated,
                "flume_not_weir": c.submerged_not_a_weir,
                "submergence_above_0_90": c.submerged_too_drowned,
                "estimate_not_asked_for": c.submerged_not_asked,
            },
        })
    }

    fn screening_json(&self) -> Value {
        let spec = self.station_screening();
        let sc = &self.conv.screened;
        json!({
            "enabled": spec.enabled,
            "source": "common practice, no source (thresholds from the station's [screening] table or the defaults)",
            "rules": {
                "out_of_water": format!("stage at or below the sensor's dry reading with the sensor below the crest, or a sudden drop from flowing water to within {} m of the dry reading and every reading after it until the stage rises above that again", spec.out_of_water_tolerance_m),
                "spike": format!("a jump of more than {} m from the reading before that comes back within half of it within {} reading(s)", spec.spike_rise_m, spec.spike_return),
                "flat": format!("the same logged value for {} h or longer while the head is above the crest", spec.flat_hours),
            },
            "rows": {
                "out_of_water": sc.screened[Screen::OutOfWater as usize],
                "spike": sc.screened[Screen::Spike as usize],
                "flat": sc.screened[Screen::Flat as usize],
            },
        })
    }

    fn station_screening(&self) -> super::super::screen::ScreeningSpec {
        self.screening
    }

    fn edits_json(&self) -> Value {
        let e = &self.conv.edits;
        let Some(path) = &self.edits_path else {
            return Value::Null;
        };
        json!({
            "file": path,
            "sha256": e.sha256,
            "applied": e.edits.iter().zip(&self.conv.screened.edit_rows).map(|(e, rows)| json!({
                "line": e.line,
                "start": e.written.0,
                "end": e.written.1,
                "action": e.action.as_str(),
                "value_mm": match e.action {
                    super::super::edits::EditAction::Offset { head_m } => json!(head_m * 1000.0),
                    super::super::edits::EditAction::SetZero { zero_m } => json!(zero_m * 1000.0),
                    _ => Value::Null,
                },
                "reason": e.reason,
                "rows": rows,
            })).collect::<Vec<_>>(),
            "fill_edits_without_a_reading_on_one_side": self.conv.screened.fill_edits_failed,
        })
    }

    fn filling_json(&self) -> Value {
        let sc = &self.conv.screened;
        let spec = self.station_screening();
        let from = |code: Screen| sc.filled_from[code as usize];
        json!({
            "rule": format!("gaps (rows without a usable head, or time without rows) between usable readings at most {} h apart: head interpolated linearly in time, then rated; rows inserted at the nominal interval where the logger wrote none; interpolation uncertainty: half the change in head across the gap, at least {} m, as the half-width of a rectangular distribution (JCGM 100 §4.3.7), fully correlated within a period", spec.fill_max_hours, MIN_FILL_HALF_WIDTH_M),
            "fill_max_hours": spec.fill_max_hours,
            "gaps_filled": sc.gaps_total,
            "rows_filled": {
                "no_usable_head": from(Screen::Kept),
                "excluded": from(Screen::Excluded),
                "out_of_water": from(Screen::OutOfWater),
                "spike": from(Screen::Spike),
                "flat": from(Screen::Flat),
                "fill_edit": from(Screen::FillEdit),
            },
            "rows_inserted": sc.inserted.len(),
            "gaps_left_missing": { "total": sc.unfilled.0, "hours": sc.unfilled.1 },
            "gaps": sc.gaps.iter().map(|g| json!({
                "from_utc_ms": g.from_ms,
                "to_utc_ms": g.to_ms,
                "rows_filled": g.rows,
                "rows_inserted": g.inserted,
                "fill_edit_line": g.edit_line,
            })).collect::<Vec<_>>(),
        })
    }

    fn volumes_json(&self) -> Value {
        let t = Totals::of(self.daily);
        json!({
            "days": t.days,
            "volume_m3": t.volume_m3,
            "volume_measured_m3": t.measured_m3,
            "volume_estimated_m3": t.estimated_m3,
            "measured_h": t.measured_h,
            "estimated_h": t.estimated_h,
            "missing_h": t.missing_h,
            "period_h": t.period_h,
            "complete_pct": t.complete_pct(),
            "measured_flags": ["ok", "dry"],
            "estimated_flags": ["submerged", "above-range", "below-range", "beyond-limits", "filled"],
            "estimated_band": "twice the model's uncertainty beyond the range or the limits and for a drowned control; the interpolation error added for filled heads (common practice, no source)",
        })
    }

    /// The report printed for the user.
    pub fn text(&self) -> String {
        let mut r = self.summary_text();
        r.push_str(&self.anomaly_text());
        r.push_str(&self.order_text());
        r.push_str(&self.correction_text());
        r.push_str(&self.screening_text());
        let t = Totals::of(self.daily);
        r.push_str(&format!(
            "volume over {} day(s): {} m³ = {} m³ measured + {} m³ estimated\ntime: {:.2} h measured, {:.2} h estimated, {:.2} h missing of {:.2} h ({:.1} % complete)\nprovenance: {}\n\n",
            t.days,
            sig(t.volume_m3, 6),
            sig(t.measured_m3, 6),
            sig(t.estimated_m3, 6),
            t.measured_h,
            t.estimated_h,
            t.missing_h,
            t.period_h,
            t.complete_pct(),
            self.paths.provenance
        ));
        r.push_str(&wrap(CAUTIONS, 100));
        r.push('\n');
        r
    }

    fn summary_text(&self) -> String {
        let (raw, c) = (self.raw, &self.converted.counts);
        let flags: Vec<String> = Flag::ALL
            .iter()
            .zip(c.per_flag)
            .map(|(f, n)| format!("{} {n}", f.as_str()))
            .collect();
        format!(
            "flumerate convert: {} → {}\nstation: {} ({})\nrows: {} in, {} out{}; {} blank line(s) skipped; nominal interval {} s\nflags: {}\n",
            self.paths.logger,
            self.paths.output,
            self.station.name,
            self.paths.station,
            self.conv.input_rows,
            c.per_flag.iter().sum::<usize>(),
            match self.conv.screened.inserted.len() {
                0 => String::new(),
                n => format!(" ({n} inserted into filled gaps, line 0)"),
            },
            raw.blank_lines.len(),
            self.times.timeline.interval_ms as f64 / 1000.0,
            flags.join(", ")
        )
    }

    fn anomaly_text(&self) -> String {
        let mut r = String::new();
        if !self.raw.unreadable.is_empty() {
            let ls: Vec<u32> = self.raw.unreadable.iter().map(|u| u.0).collect();
            r.push_str(&format!(
                "unreadable rows (no head: missing, or filled in a short gap), lines: {}\n",
                lines_text(&ls, 20)
            ));
        }
        let mut impossible = self.converted.counts.impossible.clone();
        impossible.sort_unstable();
        for why in [
            Impossible::NegativePressure,
            Impossible::BelowSensor,
            Impossible::AboveMaxDepth,
        ] {
            let ls: Vec<u32> = impossible.iter().filter(|i| i.1 == why).map(|i| i.0).collect();
            if !ls.is_empty() {
                r.push_str(&format!(
                    "impossible readings, {} (no head: missing, or filled in a short gap): {} row(s), lines {}\n",
                    why.as_str(),
                    ls.len(),
                    lines_text(&ls, 10)
                ));
            }
        }
        r
    }

    fn order_text(&self) -> String {
        let t = &self.times.timeline;
        let mut r = String::new();
        if t.backward_steps > 0 {
            let how = if t.newest_first {
                "newest first".to_string()
            } else if t.shuffled {
                format!("out of time order ({} step(s) back in time; a repeated clock-change hour is told apart by the order of its copies in the file alone)", t.backward_steps)
            } else {
                format!("{} step(s) back in time", t.backward_steps)
            };
            let written = if self.sort {
                "rows written sorted by time"
            } else {
                "rows written in file order (--sort to sort)"
            };
            r.push_str(&format!("order: {how}; converted in time order, {written}\n"));
        }
        if t.repeated_instants > 0 {
            r.push_str(&format!(
                "repeated instants: {} instant(s) held by more than one row; {} repeat row(s) written but not counted in volumes (column counted_line names the row that counts)\n",
                t.repeated_instants, t.repeat_rows
            ));
        }
        if t.differing_total > 0 {
            let shown: Vec<String> = t
                .differing
                .iter()
                .take(10)
                .map(|g| g.iter().map(|l| l.to_string()).collect::<Vec<_>>().join("/"))
                .collect();
            let more = if t.differing_total > shown.len() {
                format!(
                    " … ({} more; the provenance lists up to {})",
                    t.differing_total - shown.len(),
                    super::super::timeline::MAX_LISTED
                )
            } else {
                String::new()
            };
            r.push_str(&format!(
                "repeated instants whose values differ: {} (the row with the middle value counts), lines {}{more}\n",
                t.differing_total,
                shown.join(", ")
            ));
        }
        for (what, ls) in &time_note_lines(&self.times.notes, &self.raw.lines) {
            r.push_str(&format!(
                "times {what}: {} row(s), lines {}\n",
                ls.len(),
                lines_text(ls, 10)
            ));
        }
        r
    }

    fn screening_text(&self) -> String {
        let sc = &self.conv.screened;
        let spec = self.station_screening();
        let mut r = String::new();
        if spec.enabled {
            r.push_str(&format!(
                "screening: {} out-of-water, {} spike, {} flat row(s) before filling (rules in the provenance)\n",
                sc.screened[Screen::OutOfWater as usize],
                sc.screened[Screen::Spike as usize],
                sc.screened[Screen::Flat as usize]
            ));
        } else {
            r.push_str("screening: off\n");
        }
        for (e, rows) in self.conv.edits.edits.iter().zip(&sc.edit_rows) {
            let value = match e.action {
                super::super::edits::EditAction::Offset { head_m } => format!(" {:+} mm", head_m * 1000.0),
                super::super::edits::EditAction::SetZero { zero_m } => format!(" {} mm", zero_m * 1000.0),
                _ => String::new(),
            };
            let end = if e.written.1.is_empty() {
                "end of record"
            } else {
                &e.written.1
            };
            r.push_str(&format!(
                "edit (line {}): {}{value} from {} to {end}, {rows} row(s): {}\n",
                e.line,
                e.action.as_str(),
                e.written.0,
                e.reason
            ));
            if *rows == 0 {
                r.push_str(&format!(
                    "WARNING: the edit on line {} touched no rows: check its times and the logger's time zone\n",
                    e.line
                ));
            }
        }
        for line in &sc.fill_edits_failed {
            r.push_str(&format!(
                "WARNING: the fill edit on line {line} has no usable reading on one side: its rows are kept as read\n"
            ));
        }
        let filled: usize = sc.filled_from.iter().sum();
        if sc.gaps_total > 0 || sc.unfilled.0 > 0 {
            r.push_str(&format!(
                "gaps: {} filled ({} row(s) interpolated, {} inserted; up to {} h), {} longer left missing ({:.2} h)\n",
                sc.gaps_total,
                filled,
                sc.inserted.len(),
                spec.fill_max_hours,
                sc.unfilled.0,
                sc.unfilled.1
            ));
        }
        r
    }

    fn correction_text(&self) -> String {
        let (s, c) = (self.settings, &self.converted.counts);
        let mut r = format!("gauge zero: head = stage − {} {}\n", s.zero, s.stage_unit);
        if let Some(c) = &self.station.structure.calibration {
            r.push_str(&format!("rating: {}\n", c.sentence("m", 1.0)));
        }
        if s.temperature_index.is_some() && s.pressure_unit.is_none() {
            r.push_str("temperature column: read, not used (a level logger's stage needs no water density)\n");
        }
        if c.no_baro > 0 {
            r.push_str(&format!(
                "rows without barometric pressure within reach (no head: missing, or filled in a short gap): {}\n",
                c.no_baro
            ));
        }
        if c.temperature_fallback > 0 {
            r.push_str(&format!(
                "rows without a logged temperature (the given {} °C used): {}\n",
                s.water_temperature, c.temperature_fallback
            ));
        }
        for d in &self.corrections.drift_record {
            let when = chrono::DateTime::from_timestamp_millis(d.time_ms)
                .map_or_else(|| d.time_ms.to_string(), |t| t.format("%Y-%m-%d %H:%M UTC").to_string());
            let what = d.drift_m().map_or(
                "logger had no reading near the visit: visit not used".to_string(),
                |v| {
                    format!(
                        "staff − logger = {:+.1} mm, applied linearly between visits",
                        v * 1000.0
                    )
                },
            );
            r.push_str(&format!("drift at visit {when}: {what}\n"));
        }
        for w in &self.corrections.drift_warnings {
            r.push_str(&format!("WARNING: {w}\n"));
        }
        if c.submerged_not_estimated + c.submerged_estimated > 0 {
            r.push_str(&format!(
                "submerged rows: {} with the drowned-flow estimate (Villemonte 1947, an estimate), {} left at the free-flow rating (reads high): {} because the structure is a flume (Villemonte's relation is for weirs), {} drowned beyond 0.90 (no correction is practical), {} without --submerged-estimate\n",
                c.submerged_estimated, c.submerged_not_estimated, c.submerged_not_a_weir, c.submerged_too_drowned, c.submerged_not_asked
            ));
        }
        r
    }
}
