//! `flumerate check STATION.toml`: validates the file and reports, limit by limit, where in the
//! station's head range the method applies. Exit 0 when every head in `[range]` is within every
//! limit, 1 when some are not, 2 when the file is invalid.

use std::fmt::Write as _;
use std::path::PathBuf;
use std::process::ExitCode;

use clap::Args;
use flumerate::rating::head_sequence;
use flumerate::rating::limits::{limits_for, LimitContext};
use flumerate::report::rating::RatingReport;
use flumerate::report::{sig, wrap, CAUTIONS};
use flumerate::units::Units;

use super::{output::emit, OutputArgs, UnitsArg};

/// Heads evaluated across the station's range.
const CHECK_POINTS: usize = 201;

#[derive(Debug, Args)]
pub struct CheckArgs {
    /// Station file (TOML)
    pub station: PathBuf,
    /// Unit system of the report
    #[arg(long, value_enum, default_value_t)]
    pub units: UnitsArg,
    #[command(flatten)]
    pub out: OutputArgs,
}

pub fn run(a: CheckArgs) -> anyhow::Result<ExitCode> {
    super::output::check(&[("station file", &a.station)], &[("-o", a.out.output.as_deref())])?;
    let (station, model) = super::rate::load_model(&a.station)?;
    let units: Units = a.units.into();
    let (lu, _) = units.symbols();
    let r = station.range;
    let step = (r.max_head_m - r.min_head_m) / (CHECK_POINTS - 1) as f64;
    let heads = head_sequence(r.min_head_m, r.max_head_m, step)?;
    let points: Vec<_> = heads.iter().map(|&h| (h, model.point(h))).collect();

    let mut s = String::new();
    let _ = writeln!(s, "station file OK: {} ({})", station.source, station.name);
    let table = flumerate::rating::RatingTable { rows: Vec::new() };
    let summary = RatingReport::new(&station.name, &station.source, &model, &table, None, units);
    for line in summary.structure_lines() {
        let _ = writeln!(s, "{line}");
    }
    let show = |m: f64| format!("{} {lu}", sig(units.length_from_si(m), 4));
    let _ = writeln!(
        s,
        "range: {} to {} above the crest{}, checked at {} heads\n",
        show(r.min_head_m),
        show(r.max_head_m),
        match r.source {
            flumerate::station::RangeSource::Given => "",
            flumerate::station::RangeSource::Limits =>
                " (no [range] in the file: the heads the limits of application allow, to first order)",
        },
        heads.len()
    );

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
        let mut applies = false;
        let broken: Vec<f64> = points
            .iter()
            .filter_map(|(h, p)| p.as_ref().ok().map(|p| (*h, p)))
            .filter(|(_, p)| {
                let ctx = LimitContext {
                    structure: model.structure(),
                    point: p,
                };
                let res = (limit.holds)(&ctx);
                applies |= res.is_some();
                res == Some(false)
            })
            .map(|(h, _)| h)
            .collect();
        if !applies {
            continue;
        }
        let status = if broken.is_empty() {
            "[ok]  ".to_string()
        } else {
            failures += 1;
            "[FAIL]".to_string()
        };
        let rule = match units {
            Units::Si => limit.rule.to_string(),
            Units::Us => flumerate::report::with_feet(limit.rule),
        };
        let _ = writeln!(s, "{status} {:<18} {rule}", limit.id);
        let _ = writeln!(s, "       {:<18} source: {}", "", limit.source);
        if !broken.is_empty() {
            let _ = writeln!(
                s,
                "       {:<18} broken at {} of {} heads, from {} to {}",
                "",
                broken.len(),
                heads.len(),
                show(broken[0]),
                show(broken[broken.len() - 1])
            );
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
    emit(s.as_bytes(), a.out.output.as_deref())?;
    Ok(if failures == 0 {
        ExitCode::SUCCESS
    } else {
        ExitCode::from(1)
    })
}
