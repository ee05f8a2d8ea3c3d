//! `flumerate check STATION.toml`: validates the file and reports, limit by limit, where in the
//! station's head range the method applies. Exit 0 when every head in `[range]` is within every
//! limit, 1 when some are not, 2 when the file is invalid.

use std::path::PathBuf;
use std::process::ExitCode;

use anyhow::Context;
use clap::Args;
use flumerate::report::check::CheckReport;

use super::{output::emit, OutputArgs, UnitsArg};

#[derive(Debug, Args)]
pub struct CheckArgs {
    /// Station file (TOML)
    pub station: PathBuf,
    /// Rate the period in force at this time (RFC 3339 with its zone) [default: the latest]
    #[arg(long, value_name = "TIME")]
    pub at: Option<String>,
    /// Unit system of the report
    #[arg(long, value_enum, default_value_t)]
    pub units: UnitsArg,
    #[command(flatten)]
    pub out: OutputArgs,
}

pub fn run(a: CheckArgs) -> anyhow::Result<ExitCode> {
    super::output::check(&[("station file", &a.station)], &[("-o", a.out.output.as_deref())])?;
    let station = super::station_at(&a.station, a.at.as_deref())?;
    let report = CheckReport::for_station(&station, a.units.into())
        .with_context(|| format!("{}: the control cannot be rated", a.station.display()))?;
    emit(report.text.as_bytes(), a.out.output.as_deref())?;
    Ok(if report.failures == 0 {
        ExitCode::SUCCESS
    } else {
        ExitCode::from(1)
    })
}
