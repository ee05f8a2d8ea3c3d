//! Rating periods: a station file may hold several `[[period]]` tables after its top-level ones
//! (the first period). Each later period gives its `valid_from` time and only the tables and keys
//! that change; they are laid key by key over the period before it, and every period is checked
//! as a whole station. Which rating is in force, since when, with what status and who approved
//! it is carried by [`PeriodInfo`].

use super::raw::{overlay_table, RawPeriod, RawStation, Text};
use super::{Ctx, Station, StationError};

/// Which rating a period is, and who approved it.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct PeriodInfo {
    /// The rating's identifier (`rating_id`), if given.
    pub rating_id: Option<String>,
    /// When the period starts, as written (`None`: the first period, from the beginning).
    pub valid_from: Option<String>,
    /// The same instant, UTC milliseconds since 1970.
    pub valid_from_ms: Option<i64>,
    /// `draft` or `approved`, if given.
    pub status: Option<String>,
    /// Who approved it.
    pub approved_by: Option<String>,
    /// When it was approved (free text, usually a date).
    pub approved_on: Option<String>,
    /// [`PeriodInfo::sentence`], kept for report headers.
    pub line: Option<String>,
}

impl PeriodInfo {
    /// One line for report headers ("rating RW-2025-1, valid from …, approved by … on …"), or
    /// `None` when the file says nothing about its rating.
    pub fn sentence(&self) -> Option<String> {
        if *self == Self::default() {
            return None;
        }
        let mut parts = vec![format!(
            "rating {}",
            self.rating_id.as_deref().unwrap_or("(no rating_id)")
        )];
        parts.push(match &self.valid_from {
            Some(v) => format!("valid from {v}"),
            None => "valid from the start of the record".into(),
        });
        let on = self.approved_on.as_ref().map_or(String::new(), |d| format!(" on {d}"));
        match (&self.status, &self.approved_by) {
            (Some(s), Some(by)) if s == "approved" => parts.push(format!("approved by {by}{on}")),
            (Some(s), None) if s == "approved" => parts.push(format!("approved{on}")),
            (Some(s), by) => {
                parts.push(s.clone());
                if let Some(by) = by {
                    parts.push(format!("approved by {by}{on}"));
                }
            }
            (None, Some(by)) => parts.push(format!("approved by {by}{on}")),
            (None, None) => {}
        }
        Some(parts.join(", "))
    }
}

impl Ctx<'_> {
    /// Every period of the file, each checked as a station: the latest, holding the earlier ones
    /// in [`Station::history`] (oldest first).
    pub(super) fn build_periods(&self, mut raw: RawStation) -> Result<Station, StationError> {
        let periods = raw.period.take().unwrap_or_default();
        let first = PeriodInfo {
            rating_id: self.text_of(raw.rating_id.as_ref()),
            valid_from: None,
            valid_from_ms: None,
            status: self.status(raw.status.as_ref())?,
            approved_by: self.text_of(raw.approved_by.as_ref()),
            approved_on: self.text_of(raw.approved_on.as_ref()),
            line: None,
        };
        let mut station = self.build(raw.clone())?;
        station.period = PeriodInfo {
            line: first.sentence(),
            ..first
        };
        let mut history = Vec::new();
        let mut last_ms = i64::MIN;
        for p in &periods {
            let info = self.period_info(p.get_ref(), p.span(), last_ms)?;
            last_ms = info.valid_from_ms.unwrap_or(i64::MIN);
            raw = overlay(&raw, p.get_ref());
            let mut next = self.build(raw.clone())?;
            next.period = PeriodInfo {
                line: info.sentence(),
                ..info
            };
            history.push(std::mem::replace(&mut station, next));
        }
        station.history = history;
        Ok(station)
    }

    fn text_of(&self, t: Option<&Text>) -> Option<String> {
        t.map(|t| super::escape_controls(t.get_ref().trim()))
    }

    fn status(&self, t: Option<&Text>) -> Result<Option<String>, StationError> {
        match t {
            None => Ok(None),
            Some(s) if matches!(s.get_ref().as_str(), "draft" | "approved") => Ok(Some(s.get_ref().clone())),
            Some(s) => Err(self.err(
                s.span(),
                "status",
                format!("unknown status \"{}\"", s.get_ref()),
                "use status = \"draft\" or \"approved\"",
            )),
        }
    }

    /// A `[[period]]`'s own keys; its `valid_from` must be later than the period before.
    fn period_info(
        &self,
        p: &RawPeriod,
        span: std::ops::Range<usize>,
        after_ms: i64,
    ) -> Result<PeriodInfo, StationError> {
        for (table, given) in [
            ("period.logger", p.logger.as_ref().map(|t| t.span())),
            ("period.screening", p.screening.as_ref().map(|t| t.span())),
        ] {
            if let Some(at) = given {
                return Err(self.err(
                    at,
                    table,
                    "a rating period changes the rating, not the logger: one logger set-up serves the whole record",
                    "remove the table; a staff gauge or zero reset belongs in [period.calibration] zero_offset (or a set-zero edit), a new logger in a station file of its own",
                ));
            }
        }
        let Some(v) = &p.valid_from else {
            return Err(self.missing(
                span,
                "period.valid_from",
                "add valid_from = the instant the period starts, with its zone, e.g. \"2025-04-01T00:00:00+01:00\"",
            ));
        };
        let t = chrono::DateTime::parse_from_rfc3339(v.get_ref().trim()).map_err(|e| {
            self.err(
                v.span(),
                "period.valid_from",
                format!("\"{}\" is not a time with its zone ({e})", v.get_ref()),
                "write it as RFC 3339, e.g. \"2025-04-01T00:00:00+01:00\" or \"2025-04-01T00:00:00Z\"",
            )
        })?;
        let ms = t.timestamp_millis();
        if ms <= after_ms {
            return Err(self.err(
                v.span(),
                "period.valid_from",
                "periods must follow each other in time: this one does not start after the one before",
                "list the [[period]] tables oldest first, each with a later valid_from",
            ));
        }
        Ok(PeriodInfo {
            rating_id: self.text_of(p.rating_id.as_ref()),
            valid_from: Some(v.get_ref().trim().to_string()),
            valid_from_ms: Some(ms),
            status: self.status(p.status.as_ref())?,
            approved_by: self.text_of(p.approved_by.as_ref()),
            approved_on: self.text_of(p.approved_on.as_ref()),
            line: None,
        })
    }
}

/// The station of the period before, with the tables and keys of `p` laid over it.
fn overlay(base: &RawStation, p: &RawPeriod) -> RawStation {
    let mut r = base.clone();
    r.control = overlay_table(&base.control, &p.control);
    r.approach = overlay_table(&base.approach, &p.approach);
    r.exit = overlay_table(&base.exit, &p.exit);
    r.tailwater = overlay_table(&base.tailwater, &p.tailwater);
    r.range = overlay_table(&base.range, &p.range);
    r.uncertainty = overlay_table(&base.uncertainty, &p.uncertainty);
    r.logger = overlay_table(&base.logger, &p.logger);
    r.screening = overlay_table(&base.screening, &p.screening);
    r.calibration = overlay_table(&base.calibration, &p.calibration);
    r.period = None;
    r
}

impl Station {
    /// The period in force at `t_ms` (UTC ms): the latest whose `valid_from` is not after it.
    pub fn at(&self, t_ms: i64) -> &Station {
        std::iter::once(self)
            .chain(self.history.iter().rev())
            .find(|s| s.period.valid_from_ms.is_none_or(|v| v <= t_ms))
            .unwrap_or(self)
    }

    /// Every period, oldest first.
    pub fn periods(&self) -> impl Iterator<Item = &Station> {
        self.history.iter().chain(std::iter::once(self))
    }
}
