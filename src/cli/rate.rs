//! `flumerate rate STATION.toml`: the head→discharge rating table.

use std::path::PathBuf;
use std::process::ExitCode;

use anyhow::Context;
use clap::{Args, ValueEnum};
use flumerate::rating::RatingModel;
use flumerate::report::rating::{RateOptions, Rated};
use flumerate::station::Station;
use flumerate::uncertainty::McOptions;
use flumerate::units::Units;

/// Uncertainty methods.
#[derive(Debug, Clone, Copy, ValueEnum, Default, PartialEq, Eq)]
pub enum UncertaintyMethod {
    /// first-order propagation (JCGM 100) only: the u95_pct column
    #[default]
    Gum,
    /// also Monte Carlo (JCGM 101): adds the mc_low and mc_high columns
    Mc,
}

use super::{output::emit_all, OutputArgs, UnitsArg};

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
    #[command(flatten)]
    pub heads: super::HeadArgs,
    /// Unit system of heads and discharges
    #[arg(long, value_enum, default_value_t)]
    pub units: UnitsArg,
    /// Output format
    #[arg(long, value_enum, default_value_t)]
    pub format: TableFormat,
    /// Exit with code 1 when any row lies outside the limits of application
    #[arg(long)]
    pub strict: bool,
    /// Uncertainty method: GUM always gives u95_pct; mc adds a Monte Carlo 95 % interval
    #[arg(long, value_enum, default_value_t)]
    pub uncertainty: UncertaintyMethod,
    /// Monte Carlo draws
    #[arg(long, default_value_t = 100_000)]
    pub draws: usize,
    /// Monte Carlo seed (the same seed gives the same result on any number of threads)
    #[arg(long, default_value_t = 1)]
    pub seed: u64,
    /// Worker threads for Monte Carlo [default: all cores]
    #[arg(long)]
    pub threads: Option<usize>,
    /// Also give each input's share of the variance at every head
    #[arg(long)]
    pub budget: bool,
    /// Also draw the rating curve with its 95 % band to FILE.png or FILE.svg
    #[arg(long, value_name = "FILE")]
    pub plot: Option<std::path::PathBuf>,
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
    super::output::check(
        &[("station file", &a.station)],
        &[("-o", a.out.output.as_deref()), ("--plot", a.plot.as_deref())],
    )?;
    let plot_format = super::output::plot_format(a.plot.as_deref())?;
    let station = Station::load(&a.station)?;
    let units: Units = a.units.into();
    let options = RateOptions {
        heads_m: a.heads.heads_m(&station.range, units)?,
        monte_carlo: (a.uncertainty == UncertaintyMethod::Mc).then(|| McOptions {
            draws: a.draws,
            seed: a.seed,
            threads: a.threads.unwrap_or(McOptions::default().threads),
        }),
        budget: a.budget,
    };
    let rated = Rated::compute(&station, &options).with_context(|| format!("{}: rating", a.station.display()))?;
    let report = rated.report(&station, units);
    let bytes = match a.format {
        TableFormat::Text => report.to_text(),
        TableFormat::Csv => report.to_csv()?,
        TableFormat::Json => report.to_json()?,
    };
    let img = match (&a.plot, plot_format) {
        (Some(path), Some(fmt)) => Some((path, flumerate::report::plot::xy_chart(&report.chart(), fmt)?)),
        _ => None,
    };
    let mut outputs = vec![(a.out.output.as_deref(), &bytes[..])];
    if let Some((path, img)) = &img {
        outputs.push((Some(path.as_path()), &img[..]));
    }
    emit_all(outputs)?;
    Ok(if a.strict && rated.table.invalid_rows() > 0 {
        ExitCode::from(1)
    } else {
        ExitCode::SUCCESS
    })
}
