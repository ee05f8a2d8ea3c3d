//! `flumerate tailwater STATION.toml`: modular limit and tailwater check over the rating range.
//! Exit 0 when modular throughout, 1 when any part of the range is drowned, 2 on bad input.

use std::path::PathBuf;
use std::process::ExitCode;

use anyhow::{bail, Context};
use clap::Args;
use flumerate::report::plot::xy_chart;
use flumerate::report::tailwater::{exit_method, TailwaterReport};
use flumerate::tailwater::{check, Exit, Tailwater, Verdict};
use flumerate::units::Units;

use super::output::emit_all;
use super::rate::TableFormat;
use super::{OutputArgs, UnitsArg};

#[derive(Debug, Args)]
pub struct TailwaterArgs {
    /// Station file (TOML) with a [tailwater] table
    pub station: PathBuf,
    #[command(flatten)]
    pub heads: super::HeadArgs,
    /// Unit system
    #[arg(long, value_enum, default_value_t)]
    pub units: UnitsArg,
    /// Output format
    #[arg(long, value_enum, default_value_t)]
    pub format: TableFormat,
    /// Also draw head and tailwater against discharge to FILE.png or FILE.svg
    #[arg(long, value_name = "FILE")]
    pub plot: Option<PathBuf>,
    #[command(flatten)]
    pub out: OutputArgs,
}

pub fn run(a: TailwaterArgs) -> anyhow::Result<ExitCode> {
    super::output::check(
        &[("station file", &a.station)],
        &[("-o", a.out.output.as_deref()), ("--plot", a.plot.as_deref())],
    )?;
    let (station, model) = super::rate::load_model(&a.station)?;
    let Some(spec) = station.tailwater.clone() else {
        bail!(
            "{}: no [tailwater] table: add the tailwater channel (bed_below_crest, shape, manning_n, bed_slope) or a table of [discharge, level]",
            a.station.display()
        );
    };
    let plot_format = super::output::plot_format(a.plot.as_deref())?;
    let units: Units = a.units.into();
    let heads: Vec<f64> = a.heads.heads_m(&station.range, units)?;
    let exit = Exit::from(&station.exit);
    let tailwater = Tailwater::new(spec, station.structure.gravity_m_s2);
    let result = check(&model, &exit, &tailwater, &heads)
        .with_context(|| format!("{}: tailwater check", a.station.display()))?;
    let method = exit_method(&station.exit, &exit, &station.structure);
    let calibration = station.structure.calibration.as_ref().map(|c| {
        let (lu, _) = units.symbols();
        c.sentence(lu, units.length_from_si(1.0))
    });
    let report = TailwaterReport {
        calibration: calibration.as_deref(),
        name: &station.name,
        source: &station.source,
        method: &method,
        check: &result,
        units,
    };
    let bytes = match a.format {
        TableFormat::Text => report.to_text(),
        TableFormat::Csv => report.to_csv()?,
        TableFormat::Json => report.to_json()?,
    };
    let img = match (&a.plot, plot_format) {
        (Some(path), Some(fmt)) => Some((path, xy_chart(&report.chart(), fmt)?)),
        _ => None,
    };
    let mut outputs = vec![(a.out.output.as_deref(), &bytes[..])];
    if let Some((path, img)) = &img {
        outputs.push((Some(path.as_path()), &img[..]));
    }
    emit_all(outputs)?;
    Ok(match result.verdict {
        Verdict::Modular => ExitCode::SUCCESS,
        Verdict::Drowns { .. } => ExitCode::from(1),
    })
}
