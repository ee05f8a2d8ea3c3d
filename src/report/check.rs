//! The station check: the file is valid, its structure in words, and, limit by limit, where in
//! the station's range the method applies (`flumerate check`).

use std::fmt::Write as _;

use super::rating::RatingReport;
use super::{sig, with_feet, wrap, CAUTIONS};
use crate::rating::limits::{limits_for, Limit, LimitContext};
use crate::rating::{head_sequence, RatingError, RatingModel, RatingPoint, RatingTable};
use crate::station::{RangeSource, Station};
use crate::units::Units;

/// Heads evaluated across the station's range.
pub const CHECK_POINTS: usize = 201;

/// A station checked against the limits of application of its method.
#[derive(Debug, Clone)]
pub struct CheckReport {
    /// The report's text.
    pub text: String,
    /// Limits broken inside the range (and 1 when some heads have no rating).
    pub failures: usize,
}

impl CheckReport {
    /// Checks `station` at [`CHECK_POINTS`] heads across its range.
    pub fn for_station(station: &Station, units: Units) -> Result<Self, RatingError> {
        let model = RatingModel::new(station.structure.clone())?;
        let r = station.range;
        let step = (r.max_head_m - r.min_head_m) / (CHECK_POINTS - 1) as f64;
        let heads =
            head_sequence(r.min_head_m, r.max_head_m, step).unwrap_or_else(|_| vec![r.min_head_m, r.max_head_m]);
        let points: Vec<(f64, Result<RatingPoint, RatingError>)> = heads.iter().map(|&h| (h, model.point(h))).collect();
        let show = |m: f64| format!("{} {}", sig(units.length_from_si(m), 4), units.symbols().0);
        let mut s = header(station, &model, units, heads.len());
        let mut failures = 0;
        let unsolved: Vec<f64> = points.iter().filter(|(_, p)| p.is_err()).map(|(h, _)| *h).collect();
        if let Some((_, Err(e))) = points.iter().find(|(_, p)| p.is_err()) {
            failures += 1;
            let _ = writeln!(
                s,
                "[FAIL] no rating at {} of the heads ({} to {}): {e}",
                unsolved.len(),
                show(unsolved[0]),
                show(unsolved[unsolved.len() - 1])
            );
        }
        let _ = writeln!(s, "limits of application:");
        for limit in limits_for(model.structure().kind) {
            if let Some(broken) = limit_lines(&mut s, limit, &model, &points, units) {
                failures += usize::from(broken);
            }
        }
        let _ = writeln!(s);
        if failures == 0 {
            let _ = writeln!(s, "verdict: every head in [range] is within the limits of application");
        } else {
            let _ = writeln!(
                s,
                "verdict: {failures} limit(s) broken inside [range]; rows there are computed but marked valid = false by `flumerate rate`"
            );
        }
        let _ = writeln!(s, "\n{}", wrap(CAUTIONS, 100));
        Ok(Self { text: s, failures })
    }
}

/// The first lines: the file is valid, the structure, the range.
fn header(station: &Station, model: &RatingModel, units: Units, n: usize) -> String {
    let mut s = format!("station file OK: {} ({})\n", station.source, station.name);
    let table = RatingTable { rows: Vec::new() };
    for line in RatingReport::new(&station.name, &station.source, model, &table, None, units)
        .with_period(station.period.line.as_deref())
        .structure_lines()
    {
        let _ = writeln!(s, "{line}");
    }
    let show = |m: f64| format!("{} {}", sig(units.length_from_si(m), 4), units.symbols().0);
    let r = station.range;
    let _ = writeln!(
        s,
        "range: {} to {} above the crest{}, checked at {n} heads\n",
        show(r.min_head_m),
        show(r.max_head_m),
        match r.source {
            RangeSource::Given => "",
            RangeSource::Limits =>
                " (no [range] in the file: the heads the limits of application allow, to first order)",
        },
    );
    s
}

/// One limit's lines, if it applies to the structure: returns whether it is broken somewhere.
fn limit_lines(
    s: &mut String,
    limit: &Limit,
    model: &RatingModel,
    points: &[(f64, Result<RatingPoint, RatingError>)],
    units: Units,
) -> Option<bool> {
    let mut applies = false;
    let broken: Vec<f64> = points
        .iter()
        .filter_map(|(h, p)| p.as_ref().ok().map(|p| (*h, p)))
        .filter(|(_, p)| {
            let res = (limit.holds)(&LimitContext {
                structure: model.structure(),
                point: p,
            });
            applies |= res.is_some();
            res == Some(false)
        })
        .map(|(h, _)| h)
        .collect();
    if !applies {
        return None;
    }
    let show = |m: f64| format!("{} {}", sig(units.length_from_si(m), 4), units.symbols().0);
    let status = if broken.is_empty() { "[ok]  " } else { "[FAIL]" };
    let rule = match units {
        Units::Si => limit.rule.to_string(),
        Units::Us => with_feet(limit.rule),
    };
    let _ = writeln!(s, "{status} {:<18} {rule}", limit.id);
    let _ = writeln!(s, "       {:<18} source: {}", "", limit.source);
    if !broken.is_empty() {
        let _ = writeln!(
            s,
            "       {:<18} broken at {} of {} heads, from {} to {}",
            "",
            broken.len(),
            points.len(),
            show(broken[0]),
            show(broken[broken.len() - 1])
        );
    }
    Some(!broken.is_empty())
}
