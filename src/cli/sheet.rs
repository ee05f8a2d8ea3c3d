//! `flumerate sheet STATION.toml -o SHEET.html`: the printable field sheet. The library builds
//! the page ([`flumerate::report::sheet::Sheet::for_station`]); this command picks its options
//! and where it goes.

use std::path::PathBuf;
use std::process::ExitCode;

use anyhow::bail;
use clap::{Args, ValueEnum};
use flumerate::report::sheet::{Paper, Sheet, SheetOptions};

use super::output::emit;
use super::UnitsArg;

#[derive(Debug, Clone, Copy, ValueEnum, Default)]
pub enum PaperArg {
    /// ISO A4
    #[default]
    A4,
    /// US Letter
    Letter,
}

#[derive(Debug, Args)]
pub struct SheetArgs {
    /// Station file (TOML)
    pub station: PathBuf,
    /// Rate the period in force at this time (RFC 3339 with its zone) [default: the latest]
    #[arg(long, value_name = "TIME")]
    pub at: Option<String>,
    /// The sheet: FILE.html
    #[arg(short = 'o', long = "output", value_name = "FILE")]
    pub output: PathBuf,
    /// Unit system
    #[arg(long, value_enum, default_value_t)]
    pub units: UnitsArg,
    /// Coarse head step between rows, in the output unit (columns are tenths of it)
    /// [default: 0.01 m or 0.1 ft, coarser if the range needs more than 45 rows]
    #[arg(long, value_parser = super::finite_number, allow_hyphen_values = true)]
    pub step: Option<f64>,
    /// Paper the print style is laid out for
    #[arg(long, value_enum, default_value_t)]
    pub paper: PaperArg,
    /// The "generated" time printed on the sheet [default: now, UTC]
    #[arg(long)]
    pub date: Option<String>,
    /// Tabulate by head above the crest, or by staff-gauge reading (the station's [staff]
    /// crest_reading added to every head)
    #[arg(long, value_enum, default_value_t)]
    pub by: ByArg,
}

/// What the sheet's rows are read by.
#[derive(Debug, Clone, Copy, clap::ValueEnum, Default)]
pub enum ByArg {
    /// head above the crest
    #[default]
    Head,
    /// staff-gauge reading
    Staff,
}

pub fn run(a: SheetArgs) -> anyhow::Result<ExitCode> {
    super::output::check(&[("station file", &a.station)], &[("-o", Some(&a.output))])?;
    if a.output.extension().and_then(|e| e.to_str()) != Some("html") {
        bail!("-o {}: the sheet is an .html file", a.output.display());
    }
    let station = super::station_at(&a.station, a.at.as_deref())?;
    let options = SheetOptions {
        units: a.units.into(),
        step: a.step,
        paper: match a.paper {
            PaperArg::A4 => Paper::A4,
            PaperArg::Letter => Paper::Letter,
        },
        generated: a
            .date
            .clone()
            .unwrap_or_else(|| chrono::Utc::now().format("%Y-%m-%d %H:%M UTC").to_string()),
        by_staff: matches!(a.by, ByArg::Staff),
    };
    let sheet = Sheet::for_station(&station, &options)?;
    emit(sheet.to_html().as_bytes(), Some(&a.output))?;
    println!("field sheet written: {}", a.output.display());
    Ok(ExitCode::SUCCESS)
}
