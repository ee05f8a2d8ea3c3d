//! `flumerate rate STATION.toml`: the head→discharge rating table.

use std::path::PathBuf;
use std::process::ExitCode;

use anyhow::Context;
use clap::{Args, ValueEnum};
use flumerate::rating::{RatingEquation, RatingModel, RatingTable};
use flumerate::report::rating::{RatingReport, UncertaintyColumns};
use flumerate::station::Station;
use flumerate::tailwater::{modular_limit_at, Exit, Tailwater};
use flumerate::uncertainty::{departure_from_gum, monte_carlo, GumModel, Inputs, McOptions};
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

/// A Monte Carlo interval departing from the GUM one by more than this fraction of its width is
/// reported (issue 3; JCGM 101 §8 compares the two intervals' end points).
const MC_DEPARTURE_WARNING: f64 = 0.05;

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
    let (station, model) = load_model(&a.station)?;
    let units: Units = a.units.into();
    let heads: Vec<f64> = a.heads.heads_m(&station.range, units)?;
    let mut table = RatingTable::compute(&model, &heads);

    let inputs = Inputs::from_station(&station.uncertainty, &station.structure);
    let gum = GumModel::new(&model, inputs.clone()).context("preparing the uncertainty analysis")?;
    let points: Vec<_> = table
        .rows
        .iter()
        .map(|r| r.point.and_then(|_| gum.point(r.head_m).ok()))
        .collect();
    let monte = if a.uncertainty == UncertaintyMethod::Mc {
        let opts = McOptions {
            draws: a.draws,
            seed: a.seed,
            threads: a.threads.unwrap_or(McOptions::default().threads),
        };
        let rows = monte_carlo(&model, &inputs, &heads, &opts)?;
        for ((row, mc), gp) in table.rows.iter_mut().zip(&rows).zip(&points) {
            if let (Some(mc), Some(gp)) = (mc, gp) {
                let d = departure_from_gum(mc, gp.discharge_m3s, gp.u_rel * gp.discharge_m3s);
                if d > MC_DEPARTURE_WARNING {
                    row.notes.push(format!(
                        "Monte Carlo interval departs from GUM by {:.0} % of its width",
                        d * 100.0
                    ));
                }
            }
        }
        Some((rows, opts.draws, opts.seed))
    } else {
        None
    };
    let columns = UncertaintyColumns {
        inputs,
        u95_pct: points.iter().map(|p| p.map_or(f64::NAN, |p| p.u95_pct())).collect(),
        shares: a
            .budget
            .then(|| points.iter().map(|p| p.map_or([f64::NAN; 4], |p| p.shares)).collect()),
        monte_carlo: monte,
    };
    let equation = RatingEquation::for_range(&model, station.range.min_head_m, station.range.max_head_m);
    let exit = Exit::from(&station.exit);
    let tailwater = station
        .tailwater
        .clone()
        .map(|t| Tailwater::new(t, station.structure.gravity_m_s2));
    let modular: Vec<(f64, f64)> = table
        .rows
        .iter()
        .map(|r| match r.point {
            Some(p) if p.discharge_m3s > 0.0 => {
                let (ml, _, level) = modular_limit_at(&model, &exit, tailwater.as_ref(), &p);
                (ml, level)
            }
            _ => (f64::NAN, f64::NAN),
        })
        .collect();
    let report = RatingReport {
        uncertainty: Some(&columns),
        modular: Some(&modular),
        ..RatingReport::new(&station.name, &station.source, &model, &table, equation.as_ref(), units)
    };
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
    Ok(if a.strict && table.invalid_rows() > 0 {
        ExitCode::from(1)
    } else {
        ExitCode::SUCCESS
    })
}
