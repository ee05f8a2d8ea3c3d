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
    /// Rate the period in force at this time (RFC 3339 with its zone) [default: the latest]
    #[arg(long, value_name = "TIME")]
    pub at: Option<String>,
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
    /// Instead of the table: the best N-breakpoint head→discharge table for linear interpolation
    /// (a logger's or control system's table), with its largest error
    #[arg(long, value_name = "N", conflicts_with_all = ["max_error", "segments"])]
    pub breakpoints: Option<usize>,
    /// Instead of the table: the fewest breakpoints whose linear interpolation stays within PCT %
    #[arg(long, value_name = "PCT", value_parser = super::finite_number, conflicts_with = "segments")]
    pub max_error: Option<f64>,
    /// Instead of the table: a piecewise power-law equation of N segments, each with its largest
    /// deviation (text)
    #[arg(long, value_name = "N")]
    pub segments: Option<usize>,
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
    let station = super::station_at(&a.station, a.at.as_deref())?;
    let units: Units = a.units.into();
    if a.breakpoints.is_some() || a.max_error.is_some() || a.segments.is_some() {
        return short_table(&a, &station, units);
    }
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

/// `--breakpoints`, `--max-error`, `--segments`: the short table or the piecewise equation over
/// the station's range (or `--from`/`--to`).
fn short_table(a: &RateArgs, station: &Station, units: Units) -> anyhow::Result<ExitCode> {
    use flumerate::report::breakpoints::{segments_text, ShortTable};
    let model = RatingModel::new(station.structure.clone())
        .with_context(|| format!("{}: the control cannot be rated", a.station.display()))?;
    let heads = a.heads.heads_m(&station.range, units)?;
    let (lo, hi) = (heads[0], heads[heads.len() - 1]);
    if let Some(pct) = a.max_error {
        anyhow::ensure!(
            pct > 0.0 && pct <= 50.0,
            "--max-error {pct} is out of range\n  fix: give the largest interpolation error in per cent, e.g. --max-error 0.5"
        );
    }
    let bytes = match a.segments {
        Some(n) => {
            anyhow::ensure!((1..=50).contains(&n), "--segments {n}: give 1 to 50 segments");
            segments_text(&model, &station.name, lo, hi, n, units)
        }
        None => {
            let n = a.breakpoints.unwrap_or(0);
            anyhow::ensure!(
                a.max_error.is_some() || (2..=10_000).contains(&n),
                "--breakpoints {n}: give 2 to 10000 breakpoints"
            );
            let table = ShortTable::build(&model, lo, hi, a.max_error, n)
                .with_context(|| format!("{}: short table", a.station.display()))?;
            let format = match a.format {
                TableFormat::Text => "text",
                TableFormat::Csv => "csv",
                TableFormat::Json => "json",
            };
            table.render(&station.name, units, format)
        }
    };
    emit_all(vec![(a.out.output.as_deref(), &bytes[..])])?;
    Ok(ExitCode::SUCCESS)
}
