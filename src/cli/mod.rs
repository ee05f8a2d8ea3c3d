//! Command-line arguments (clap derive) and one module per command. No physics here: each
//! command turns its arguments into library calls and writes what they return.

mod check;
mod convert;
mod gaugings;
mod network;
mod output;
mod rate;
mod section;
mod sheet;
mod structures;
mod tailwater;
mod verify;

use std::path::PathBuf;
use std::process::ExitCode;

use clap::{Parser, Subcommand, ValueEnum};

/// Head→discharge ratings for broad-crested weirs and long-throated flumes, from surveyed
/// dimensions, by critical-flow theory; and for thin-plate weirs, Parshall flumes, square-edged
/// and triangular-profile weirs, by their standards' published ratings.
///
/// Computed ratings must be confirmed by field gaugings; follow local codes and licensed
/// professional practice where flows are used for compliance, billing or water rights.
#[derive(Debug, Parser)]
#[command(name = "flumerate", version, about, long_about)]
pub struct Cli {
    #[command(subcommand)]
    command: Command,
}

#[derive(Debug, Subcommand)]
enum Command {
    /// One cross-section: critical depth and energy, Froude number at a depth, alternate depths
    /// at a specific energy, normal depth
    Section(section::SectionArgs),
    /// Head→discharge rating table for a station file
    Rate(rate::RateArgs),
    /// Validate a station file and report the limits of application of its method
    Check(check::CheckArgs),
    /// Modular limit and tailwater check over the discharge range
    Tailwater(tailwater::TailwaterArgs),
    /// Logger stage records to discharge with a 95 % band and a flag per row
    Convert(Box<convert::ConvertArgs>),
    /// Printable one-page field sheet of the rating (HTML)
    Sheet(sheet::SheetArgs),
    /// Check the rating against field gaugings; fit the coefficient factor and the gauge zero
    Gaugings(gaugings::GaugingsArgs),
    /// Run the built-in checks against published reference values
    Verify(verify::VerifyArgs),
    /// The structure families and standard sizes, with their sources; one in detail
    Structures(structures::StructuresArgs),
    /// Convert every station of a network file at once: one dataset, one summary, one overview
    Network(network::NetworkArgs),
}

/// Output unit system.
#[derive(Debug, Clone, Copy, ValueEnum, Default)]
pub enum UnitsArg {
    /// metres, m³/s
    #[default]
    Si,
    /// feet, ft³/s
    Us,
}

impl From<UnitsArg> for flumerate::units::Units {
    fn from(u: UnitsArg) -> Self {
        match u {
            UnitsArg::Si => Self::Si,
            UnitsArg::Us => Self::Us,
        }
    }
}

/// The heads a table covers, in the output unit.
#[derive(Debug, Clone, clap::Args)]
pub struct HeadArgs {
    /// First head above the crest, in the output unit [default: the station's range.min_head]
    #[arg(long, value_parser = finite_number, allow_hyphen_values = true)]
    pub from: Option<f64>,
    /// Last head above the crest, in the output unit [default: the station's range.max_head]
    #[arg(long, value_parser = finite_number, allow_hyphen_values = true)]
    pub to: Option<f64>,
    /// Head increment, in the output unit [default: from the 1-2-5 series, 50 to 100 rows]
    #[arg(long, value_parser = finite_number, allow_hyphen_values = true)]
    pub step: Option<f64>,
}

impl HeadArgs {
    /// The heads (m): the flags, or the station's range at a sensible step.
    pub fn heads_m(
        &self,
        range: &flumerate::station::HeadRange,
        units: flumerate::units::Units,
    ) -> anyhow::Result<Vec<f64>> {
        let from = self.from.unwrap_or(units.length_from_si(range.min_head_m));
        let to = self.to.unwrap_or(units.length_from_si(range.max_head_m));
        let step = self.step.unwrap_or_else(|| flumerate::rating::sensible_step(to - from));
        Ok(flumerate::rating::head_sequence(from, to, step)?
            .into_iter()
            .map(|h| units.length_to_si(h))
            .collect())
    }
}

/// Where output goes.
#[derive(Debug, Clone, clap::Args)]
pub struct OutputArgs {
    /// Write to FILE instead of standard output (written whole, then renamed into place)
    #[arg(short = 'o', long = "output", value_name = "FILE")]
    pub output: Option<PathBuf>,
}

/// The station file at `path`, in the rating period in force at `at` (RFC 3339 with its zone;
/// default: the latest period).
pub fn station_at(path: &std::path::Path, at: Option<&str>) -> anyhow::Result<flumerate::station::Station> {
    let station = flumerate::station::Station::load(path)?;
    let Some(at) = at else {
        return Ok(station);
    };
    let t = chrono::DateTime::parse_from_rfc3339(at.trim()).map_err(|e| {
        anyhow::anyhow!(
            "--at \"{at}\" is not a time with its zone ({e})\n  fix: write it as RFC 3339, e.g. --at 2025-06-01T12:00:00+01:00 or --at 2025-06-01T11:00:00Z"
        )
    })?;
    Ok(station.at(t.timestamp_millis()).clone())
}

/// A number given on the command line: finite (not `nan` or `inf`). Clap names the option in
/// the error.
pub fn finite_number(s: &str) -> Result<f64, String> {
    let v: f64 = s.trim().parse().map_err(|_| format!("\"{s}\" is not a number"))?;
    if v.is_finite() {
        Ok(v)
    } else {
        Err(format!(
            "\"{s}\" is not a finite number: give an ordinary decimal number"
        ))
    }
}

/// Runs one command and returns the exit code.
pub fn run(cli: Cli) -> anyhow::Result<ExitCode> {
    match cli.command {
        Command::Section(a) => section::run(a),
        Command::Rate(a) => rate::run(a),
        Command::Check(a) => check::run(a),
        Command::Tailwater(a) => tailwater::run(a),
        Command::Convert(a) => convert::run(*a),
        Command::Sheet(a) => sheet::run(a),
        Command::Gaugings(a) => gaugings::run(a),
        Command::Structures(a) => structures::run(a),
        Command::Network(a) => network::run(a),
        Command::Verify(a) => verify::run(a),
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use clap::CommandFactory;

    #[test]
    fn verify_cli() {
        Cli::command().debug_assert();
    }
}
