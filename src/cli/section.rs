//! `flumerate section`: builds one cross-section from its arguments and prints its report
//! ([`flumerate::report::section`]: critical depth and energy, Froude number at a depth, alternate
//! depths at a specific energy, normal depth) where `--output` says.

use std::process::ExitCode;

use anyhow::{bail, Context};
use clap::{Args, ValueEnum};
use flumerate::hydraulics::{PointsSection, Section};
use flumerate::report::section::{SectionError, SectionQuery, SectionReport};
use flumerate::units::Units;

use super::{output::emit, OutputArgs, UnitsArg};

#[derive(Debug, Clone, Copy, ValueEnum)]
pub enum ShapeArg {
    Rectangle,
    Trapezoid,
    Triangle,
    Circle,
    /// semicircular bottom with vertical walls (ISO 4359 U-throat)
    UShape,
    Points,
}

#[derive(Debug, Clone, Copy, ValueEnum, Default)]
pub enum ReportFormat {
    /// readable
    #[default]
    Text,
    /// one JSON object, full precision
    Json,
}

#[derive(Debug, Args)]
pub struct SectionArgs {
    /// Section shape
    #[arg(long, value_enum)]
    pub shape: ShapeArg,
    /// Width (rectangle) or bed width (trapezoid)
    #[arg(long, value_parser = super::finite_number, allow_hyphen_values = true)]
    pub width: Option<f64>,
    /// Side slope, horizontal per 1 vertical (trapezoid, triangle)
    #[arg(long = "side-slope", value_parser = super::finite_number, allow_hyphen_values = true)]
    pub side_slope: Option<f64>,
    /// Inside diameter (circle)
    #[arg(long, value_parser = super::finite_number, allow_hyphen_values = true)]
    pub diameter: Option<f64>,
    /// Surveyed points "offset,height offset,height ..." from left to right (points)
    #[arg(long, allow_hyphen_values = true)]
    pub points: Option<String>,
    /// Discharge (m³/s, or ft³/s with --units us)
    #[arg(long, value_parser = super::finite_number, allow_hyphen_values = true)]
    pub discharge: f64,
    /// A depth at which to report the Froude number and specific energy
    #[arg(long, value_parser = super::finite_number, allow_hyphen_values = true)]
    pub depth: Option<f64>,
    /// A specific energy at which to report both alternate depths
    #[arg(long, value_parser = super::finite_number, allow_hyphen_values = true)]
    pub energy: Option<f64>,
    /// Manning's n (SI, s/m^(1/3)) for the normal depth; needs --slope
    #[arg(long = "manning-n", value_parser = super::finite_number, allow_hyphen_values = true)]
    pub manning_n: Option<f64>,
    /// Bed slope (m/m) for the normal depth; needs --manning-n
    #[arg(long, value_parser = super::finite_number, allow_hyphen_values = true)]
    pub slope: Option<f64>,
    /// Velocity-distribution (Coriolis) coefficient
    #[arg(long, default_value_t = 1.0, value_parser = super::finite_number, allow_hyphen_values = true)]
    pub alpha: f64,
    /// Unit system of inputs and outputs
    #[arg(long, value_enum, default_value_t)]
    pub units: UnitsArg,
    /// Output format
    #[arg(long, value_enum, default_value_t)]
    pub format: ReportFormat,
    #[command(flatten)]
    pub out: OutputArgs,
}

fn need(v: Option<f64>, flag: &str, shape: &str) -> anyhow::Result<f64> {
    v.with_context(|| format!("--shape {shape} needs {flag}; add it (in the chosen --units)"))
}

fn parse_points(text: &str, units: Units) -> anyhow::Result<Vec<(f64, f64)>> {
    text.split(|c: char| c.is_whitespace() || c == ';')
        .filter(|s| !s.is_empty())
        .enumerate()
        .map(|(i, pair)| {
            let (x, z) = pair
                .split_once(',')
                .with_context(|| format!("--points: item {} \"{pair}\" is not \"offset,height\"", i + 1))?;
            let parse = |s: &str| {
                s.trim()
                    .parse::<f64>()
                    .with_context(|| format!("--points: item {} \"{pair}\": \"{s}\" is not a number", i + 1))
            };
            Ok((units.length_to_si(parse(x)?), units.length_to_si(parse(z)?)))
        })
        .collect()
}

fn build_section(a: &SectionArgs, units: Units) -> anyhow::Result<Section> {
    let len = |v: f64| units.length_to_si(v);
    let section = match a.shape {
        ShapeArg::Rectangle => Section::Rectangle {
            width_m: len(need(a.width, "--width", "rectangle")?),
        },
        ShapeArg::Trapezoid => Section::Trapezoid {
            bottom_width_m: len(need(a.width, "--width", "trapezoid")?),
            side_slope: need(a.side_slope, "--side-slope", "trapezoid")?,
        },
        ShapeArg::Triangle => Section::Triangle {
            side_slope: need(a.side_slope, "--side-slope", "triangle")?,
        },
        ShapeArg::Circle => Section::Circle {
            diameter_m: len(need(a.diameter, "--diameter", "circle")?),
        },
        ShapeArg::UShape => Section::UShape {
            diameter_m: len(need(a.diameter, "--diameter", "u-shape")?),
        },
        ShapeArg::Points => {
            let text = a
                .points
                .as_deref()
                .context("--shape points needs --points \"offset,height offset,height ...\"")?;
            let pts = parse_points(text, units)?;
            let lowest = pts.iter().map(|p| p.1).fold(f64::INFINITY, f64::min);
            let shifted: Vec<(f64, f64)> = pts.iter().map(|&(x, z)| (x, z - lowest)).collect();
            Section::Points(PointsSection::new(&shifted).context("--points")?)
        }
    };
    section
        .validate()
        .with_context(|| format!("the {:?} section is not valid", a.shape).to_lowercase())?;
    Ok(section)
}

pub fn run(a: SectionArgs) -> anyhow::Result<ExitCode> {
    let units: Units = a.units.into();
    let manning = match (a.manning_n, a.slope) {
        (Some(n), Some(s)) => Some((n, s)),
        (None, None) => None,
        _ => bail!("the normal depth needs both --manning-n and --slope"),
    };
    let query = SectionQuery {
        discharge: a.discharge,
        alpha: a.alpha,
        depth: a.depth,
        energy: a.energy,
        manning,
    };
    if !(a.alpha.is_finite() && (1.0..=2.0).contains(&a.alpha)) {
        // checked before the section is built, so a bad --alpha is named first
        return Err(SectionError::Alpha(a.alpha).into());
    }
    let section = build_section(&a, units)?;
    let shape = format!("{:?}", a.shape).to_lowercase();
    let report = SectionReport::compute(&section, &shape, &query, units)?;
    let bytes = match a.format {
        ReportFormat::Json => report.to_json()?,
        ReportFormat::Text => report.to_text().into_bytes(),
    };
    emit(&bytes, a.out.output.as_deref())?;
    Ok(if report.warnings.is_empty() {
        ExitCode::SUCCESS
    } else {
        ExitCode::from(1)
    })
}
