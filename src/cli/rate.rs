//! `flumerate rate STATION.toml`: the head→discharge rating table.

use std::path::PathBuf;
use std::process::ExitCode;

use anyhow::Context;
use clap::{Args, ValueEnum};
use flumerate::rating::{head_sequence, sensible_step, RatingModel, RatingTable};
use flumerate::report::rating::RatingReport;
use flumerate::station::Station;
use flumerate::units::Units;

use super::{output::emit, OutputArgs, UnitsArg};

/// Table formats.
#[derive(Debug, Clone, Copy, ValueEnum, Default)]
pub enum TableFormat {
    /// rounded, readable, with the cautions
    #[default]
    Text,
    /// comma-separated, full precision
    Csv,
    /// one object per row, full precision
    Json,
}

#[derive(Debug, Args)]
pub struct RateArgs {
    /// Station file (TOML)
    pub station: PathBuf,
    /// First head above the crest, in the output unit [default: the station's range.min_head]
    #[arg(long)]
    pub from: Option<f64>,
    /// Last head above the crest, in the output unit [default: the station's range.max_head]
    #[arg(long)]
    pub to: Option<f64>,
    /// Head increment, in the output unit [default: from the 1-2-5 series, 50 to 100 rows]
    #[arg(long)]
    pub step: Option<f64>,
    /// Unit system of heads and discharges
    #[arg(long, value_enum, default_value_t)]
    pub units: UnitsArg,
    /// Output format
    #[arg(long, value_enum, default_value_t)]
    pub format: TableFormat,
    /// Exit with code 1 when any row lies outside the limits of application
    #[arg(long)]
    pub strict: bool,
    #[command(flatten)]
    pub out: OutputArgs,
}

/// Loads the station and builds its rating model; errors name the file.
pub fn load_model(path: &std::path::Path) -> anyhow::Result<(Station, RatingModel)> {
    let station = Station::load(path)?;
    let model = RatingModel::new(station.structure.clone())
        .with_context(|| format!("{}: the control cannot be rated", path.display()))?;
    Ok((station, model))
}

pub fn run(a: RateArgs) -> anyhow::Result<ExitCode> {
    let (station, model) = load_model(&a.station)?;
    let units: Units = a.units.into();
    let from = a.from.unwrap_or(units.length_from_si(station.range.min_head_m));
    let to = a.to.unwrap_or(units.length_from_si(station.range.max_head_m));
    let step = a.step.unwrap_or_else(|| sensible_step(to - from));
    let heads: Vec<f64> = head_sequence(from, to, step)?
        .into_iter()
        .map(|h| units.length_to_si(h))
        .collect();
    let table = RatingTable::compute(&model, &heads);
    let report = RatingReport {
        name: &station.name,
        source: &station.source,
        model: &model,
        table: &table,
        units,
    };
    let bytes = match a.format {
        TableFormat::Text => report.to_text(),
        TableFormat::Csv => report.to_csv()?,
        TableFormat::Json => report.to_json()?,
    };
    emit(&bytes, a.out.output.as_deref())?;
    Ok(if a.strict && table.invalid_rows() > 0 {
        ExitCode::from(1)
    } else {
        ExitCode::SUCCESS
    })
}
