//! `flumerate section`: one cross-section's critical depth and energy, Froude number at a depth,
//! alternate depths at a specific energy and normal depth. Inputs and outputs in the chosen unit
//! system; the computation is SI inside.

use std::process::ExitCode;

use anyhow::{bail, Context};
use clap::{Args, ValueEnum};
use flumerate::hydraulics::{
    alternate_depths_m, critical_depths_m, froude_number, normal_depths_m, specific_energy_m, PointsSection, Section,
    STANDARD_GRAVITY_M_S2,
};
use flumerate::report::sig;
use flumerate::units::Units;
use serde_json::{json, Map, Value};

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
    let g = STANDARD_GRAVITY_M_S2;
    if !(a.alpha.is_finite() && (1.0..=2.0).contains(&a.alpha)) {
        bail!(
            "--alpha {} is out of range: the Coriolis coefficient is between 1.0 and 2.0",
            a.alpha
        );
    }
    let section = build_section(&a, units)?;
    let q = units.discharge_to_si(a.discharge);
    if !(q.is_finite() && q > 0.0) {
        bail!("--discharge must be greater than zero (got {})", a.discharge);
    }
    let (l, d, ar, v) = (
        units.length_suffix(),
        units.discharge_suffix(),
        units.area_suffix(),
        units.velocity_suffix(),
    );
    let depths = critical_depths_m(&section, q, a.alpha, g)?;
    let mut warnings: Vec<String> = Vec::new();
    let mut doc = Map::new();
    doc.insert("shape".into(), json!(format!("{:?}", a.shape).to_lowercase()));
    doc.insert(
        "units".into(),
        json!(match units {
            Units::Si => "si",
            Units::Us => "us",
        }),
    );
    doc.insert(format!("discharge_{d}"), json!(a.discharge));
    let len_out = |m: f64| json!(units.length_from_si(m));
    if depths.len() == 1 {
        let yc = depths[0];
        let area = section.area_m2(yc);
        doc.insert(format!("critical_depth_{l}"), len_out(yc));
        doc.insert(
            format!("critical_energy_{l}"),
            len_out(specific_energy_m(&section, yc, q, a.alpha, g)),
        );
        doc.insert(format!("critical_area_{ar}"), json!(units.area_from_si(area)));
        doc.insert(format!("critical_top_width_{l}"), len_out(section.top_width_m(yc)));
        doc.insert(format!("critical_velocity_{v}"), len_out(q / area));
    } else {
        warnings.push(format!(
            "this compound section has {} critical depths for this discharge ({}): the control can switch between them; none is picked",
            depths.len(),
            depths
                .iter()
                .map(|y| format!("{} {}", sig(units.length_from_si(*y), 6), units.symbols().0))
                .collect::<Vec<_>>()
                .join(", ")
        ));
        doc.insert(format!("critical_depth_{l}"), Value::Null);
        let e_min = depths
            .iter()
            .map(|&y| specific_energy_m(&section, y, q, a.alpha, g))
            .fold(f64::INFINITY, f64::min);
        doc.insert(format!("critical_energy_{l}"), len_out(e_min));
    }
    doc.insert(
        format!("critical_depths_{l}"),
        Value::Array(depths.iter().map(|&y| len_out(y)).collect()),
    );
    if let Some(depth) = a.depth {
        let y = units.length_to_si(depth);
        if !(y.is_finite() && y > 0.0) {
            bail!("--depth must be greater than zero (got {depth})");
        }
        if let Some(full) = section.full_depth_m() {
            if y >= full {
                bail!(
                    "--depth {depth} is at or above the crown of the pipe ({} {}): the pipe flows full there and has no free surface, so no Froude number or specific energy\n  fix: give a depth below the crown",
                    sig(units.length_from_si(full), 6),
                    units.symbols().0
                );
            }
        }
        doc.insert(format!("depth_{l}"), json!(depth));
        doc.insert("froude".into(), json!(froude_number(&section, y, q, g)));
        doc.insert(
            format!("specific_energy_{l}"),
            len_out(specific_energy_m(&section, y, q, a.alpha, g)),
        );
    }
    if let Some(energy) = a.energy {
        let e = units.length_to_si(energy);
        let alt = alternate_depths_m(&section, e, q, a.alpha, g)
            .with_context(|| format!("alternate depths at --energy {energy}"))?;
        doc.insert(format!("energy_{l}"), json!(energy));
        doc.insert(
            format!("alternate_depths_{l}"),
            json!({
                "subcritical": units.length_from_si(alt.subcritical_m),
                "supercritical": units.length_from_si(alt.supercritical_m),
            }),
        );
    }
    match (a.manning_n, a.slope) {
        (Some(n), Some(s)) => {
            let yn = normal_depths_m(&section, q, n, s).context("normal depth")?;
            doc.insert(format!("normal_depth_{l}"), len_out(yn[0]));
            doc.insert(
                format!("normal_depths_{l}"),
                Value::Array(yn.iter().map(|&y| len_out(y)).collect()),
            );
            if yn.len() > 1 {
                warnings.push(format!(
                    "the pipe carries this discharge in uniform flow at two depths, {} and {} {}: near full, flow can switch between them (and the pipe may surcharge)",
                    sig(units.length_from_si(yn[0]), 6),
                    sig(units.length_from_si(yn[1]), 6),
                    units.symbols().0
                ));
            }
        }
        (None, None) => {}
        _ => bail!("the normal depth needs both --manning-n and --slope"),
    }
    doc.insert("warnings".into(), json!(warnings));

    let bytes = match a.format {
        ReportFormat::Json => {
            let mut b = serde_json::to_vec_pretty(&Value::Object(doc))?;
            b.push(b'\n');
            b
        }
        ReportFormat::Text => text(&doc, units).into_bytes(),
    };
    emit(&bytes, a.out.output.as_deref())?;
    Ok(if warnings.is_empty() {
        ExitCode::SUCCESS
    } else {
        ExitCode::from(1)
    })
}

/// Readable rendering of the JSON document: one `key: value` line each, numbers to 6 figures.
fn text(doc: &Map<String, Value>, units: Units) -> String {
    let (lu, qu) = units.symbols();
    let mut s = format!("flumerate section (lengths in {lu}, discharge in {qu}, g = {STANDARD_GRAVITY_M_S2} m/s²)\n");
    for (k, v) in doc {
        let shown = match v {
            Value::Number(n) => sig(n.as_f64().unwrap_or(f64::NAN), 6),
            Value::Array(items) if k != "warnings" => items
                .iter()
                .map(|i| sig(i.as_f64().unwrap_or(f64::NAN), 6))
                .collect::<Vec<_>>()
                .join(", "),
            Value::Array(items) => {
                if items.is_empty() {
                    continue;
                }
                items.iter().filter_map(|i| i.as_str()).collect::<Vec<_>>().join("\n  ")
            }
            Value::Object(o) => o
                .iter()
                .map(|(k, v)| format!("{k} {}", sig(v.as_f64().unwrap_or(f64::NAN), 6)))
                .collect::<Vec<_>>()
                .join(", "),
            Value::String(t) => t.clone(),
            Value::Null => "(see warnings)".into(),
            Value::Bool(b) => b.to_string(),
        };
        s.push_str(&format!("{k:<28} {shown}\n"));
    }
    s
}
