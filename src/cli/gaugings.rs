//! `flumerate gaugings STATION.toml GAUGINGS.csv`: the station's rating checked against field
//! gaugings, the coefficient factor and gauge-zero error they point to, charts, and the
//! `[calibration]` table (into a copy of the station file with `--write-calibration`). Exit 0
//! when the rating agrees with the gaugings, 1 when it departs or rows were refused, 2 on bad
//! input.

use std::path::PathBuf;
use std::process::ExitCode;

use anyhow::{bail, Context};
use clap::Args;
use flumerate::gaugings::{GaugingCheck, GaugingsFile};
use flumerate::rating::RatingModel;
use flumerate::report::gaugings::{with_calibration, GaugingsReport};
use flumerate::station::Station;
use flumerate::uncertainty::COVERAGE_FACTOR;

use super::output::{emit_all, plot_format};
use super::rate::TableFormat;
use super::OutputArgs;

#[derive(Debug, Args)]
pub struct GaugingsArgs {
    /// Station file (TOML)
    pub station: PathBuf,
    /// Gaugings: CSV with time, head_m (or head_cm, head_mm, head_ft, or stage), discharge_m3s
    /// (or discharge_ls, discharge_cfs), and optionally u95_pct, method, note
    pub gaugings: PathBuf,
    /// Output format
    #[arg(long, value_enum, default_value_t)]
    pub format: TableFormat,
    /// The rating curve with the gaugings and their error bars: FILE.png or FILE.svg
    #[arg(long, value_name = "FILE")]
    pub plot: Option<PathBuf>,
    /// Deviation against head and against time: FILE.png or FILE.svg
    #[arg(long = "plot-deviation", value_name = "FILE")]
    pub plot_deviation: Option<PathBuf>,
    /// Write a copy of the station file with the [calibration] table these gaugings support
    #[arg(long = "write-calibration", value_name = "FILE")]
    pub write_calibration: Option<PathBuf>,
    #[command(flatten)]
    pub out: OutputArgs,
}

pub fn run(a: GaugingsArgs) -> anyhow::Result<ExitCode> {
    super::output::check(
        &[("station file", &a.station), ("gaugings file", &a.gaugings)],
        &[
            ("-o", a.out.output.as_deref()),
            ("--plot", a.plot.as_deref()),
            ("--plot-deviation", a.plot_deviation.as_deref()),
            ("--write-calibration", a.write_calibration.as_deref()),
        ],
    )?;
    let (curve_format, deviation_format) = (
        plot_format(a.plot.as_deref())?,
        plot_format(a.plot_deviation.as_deref())?,
    );
    let station = Station::load(&a.station)?;
    let file = GaugingsFile::read(&a.gaugings, &station)?;
    let check = GaugingCheck::compute(&station, &file).with_context(|| {
        format!(
            "{}: the rating cannot be computed at a gauged head",
            a.station.display()
        )
    })?;
    let shown = a.gaugings.display().to_string();
    let report = GaugingsReport {
        station: &station,
        file: &shown,
        sha256: &file.sha256,
        clock: &file.clock,
        check: &check,
    };
    let bytes = match a.format {
        TableFormat::Text => report.to_text().into_bytes(),
        TableFormat::Csv => report.to_csv(),
        TableFormat::Json => report.to_json()?,
    };
    let model = RatingModel::new(station.structure.clone())?;
    let mut outputs: Vec<(Option<&std::path::Path>, Vec<u8>)> = Vec::new();
    if let (Some(p), Some(f)) = (&a.plot, curve_format) {
        outputs.push((Some(p), report.curve_chart(&model, f)?));
    }
    if let (Some(p), Some(f)) = (&a.plot_deviation, deviation_format) {
        outputs.push((Some(p), report.deviation_chart(f)?));
    }
    if let Some(p) = &a.write_calibration {
        let Some(table) = report.calibration_toml() else {
            bail!("--write-calibration: these gaugings support no calibration (no gauging in the rated range)");
        };
        let text = std::fs::read_to_string(&a.station).with_context(|| format!("reading {}", a.station.display()))?;
        let copy = with_calibration(&text, &table);
        // the copy must load as a station file before it is written
        Station::from_toml_str(&copy, &p.display().to_string())
            .context("the station file with its new [calibration] table does not load (a bug: please report it)")?;
        outputs.push((Some(p), copy.into_bytes()));
    }
    outputs.push((a.out.output.as_deref(), bytes));
    emit_all(outputs.iter().map(|(p, b)| (*p, &b[..])).collect())?;
    let departs = check
        .mean
        .is_some_and(|m| m.mean.abs() > COVERAGE_FACTOR * m.u_scaled());
    Ok(if departs || !check.refused.is_empty() {
        ExitCode::from(1)
    } else {
        ExitCode::SUCCESS
    })
}
