//! `flumerate sheet STATION.toml -o SHEET.html`: the printable field sheet.

use std::path::PathBuf;
use std::process::ExitCode;

use anyhow::{bail, Context};
use clap::{Args, ValueEnum};
use flumerate::rating::{RatingEquation, RatingTable, StructureKind};
use flumerate::report::plot::{xy_chart_sized, ImageFormat};
use flumerate::report::rating::RatingReport;
use flumerate::report::sheet::{Paper, Sheet, SheetCell, SheetRow};
use flumerate::report::sig;
use flumerate::tailwater::{modular_limit_at, Exit, Tailwater};
use flumerate::uncertainty::{GumModel, Inputs};
use flumerate::units::Units;

use super::output::emit;
use super::UnitsArg;

/// Largest number of grid rows before a coarser step is chosen (one printed page).
const MAX_ROWS: usize = 45;

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
}

pub fn run(a: SheetArgs) -> anyhow::Result<ExitCode> {
    super::output::check(&[("station file", &a.station)], &[("-o", Some(&a.output))])?;
    let (station, model) = super::rate::load_model(&a.station)?;
    let units: Units = a.units.into();
    let per_unit = units.length_to_si(1.0);
    let (lo_u, hi_u) = (
        units.length_from_si(station.range.min_head_m),
        units.length_from_si(station.range.max_head_m),
    );
    let candidates: &[f64] = match units {
        Units::Si => &[0.01, 0.02, 0.05, 0.1, 0.2, 0.5],
        Units::Us => &[0.1, 0.2, 0.5, 1.0, 2.0],
    };
    let rows_for = |c: f64| ((hi_u / c).floor() - (lo_u / c).floor()) as usize + 1;
    let coarse = match a.step {
        Some(s) if s.is_finite() && s > 0.0 => s,
        Some(s) => bail!("--step {s}: give a positive head step"),
        None => candidates
            .iter()
            .copied()
            .find(|c| rows_for(*c) <= MAX_ROWS)
            .unwrap_or(candidates[candidates.len() - 1]),
    };
    if rows_for(coarse) > 200 {
        bail!("--step {coarse} gives {} rows: use a larger step", rows_for(coarse));
    }
    let fine = coarse / 10.0;
    // exact multiples of the fine step, so labels and heads do not drift
    let first = (lo_u / coarse + 1e-9).floor() as i64 * 10;
    let last = (hi_u / coarse + 1e-9).floor() as i64 * 10 + 9;
    let eps = 1e-9;
    let heads_si: Vec<f64> = (first..=last).map(|k| k as f64 * fine * per_unit).collect();
    let in_range = |h: f64| h >= station.range.min_head_m * (1.0 - eps) && h <= station.range.max_head_m * (1.0 + eps);
    let rated: Vec<f64> = heads_si.iter().copied().filter(|h| in_range(*h)).collect();
    let table = RatingTable::compute(&model, &rated);
    let exit = Exit::from(&station.exit);
    let tailwater = station
        .tailwater
        .clone()
        .map(|t| Tailwater::new(t, station.structure.gravity_m_s2));
    let mut rows = Vec::new();
    let mut it = table.rows.iter();
    for r in 0..((last - first + 1) / 10) {
        let mut cells = Vec::new();
        let mut broken: Vec<String> = Vec::new();
        let mut tw = None;
        for j in 0..10 {
            let h = heads_si[(r * 10 + j) as usize];
            if !in_range(h) {
                cells.push(SheetCell {
                    head_m: h,
                    discharge_m3s: None,
                    valid: true,
                });
                continue;
            }
            let row = it.next().context("rating table shorter than the grid")?;
            if let Some(p) = row.point {
                if tw.is_none() {
                    tw = Some(modular_limit_at(&model, &exit, tailwater.as_ref(), &p).2);
                }
            }
            for n in &row.notes {
                let id = n.trim_start_matches("outside ").to_string();
                if !broken.contains(&id) {
                    broken.push(id);
                }
            }
            cells.push(SheetCell {
                head_m: h,
                discharge_m3s: row.point.map(|p| p.discharge_m3s),
                valid: row.valid,
            });
        }
        let base = (first + r * 10) as f64 * fine;
        let label = match units {
            Units::Si => format!("{}", (base * 100.0).round()),
            Units::Us => format!("{base:.1}"),
        };
        // a row with no head in the rated range carries nothing to read
        if cells.iter().any(|c| c.discharge_m3s.is_some()) {
            rows.push(SheetRow {
                label,
                cells,
                max_tailwater_m: tw,
                broken,
            });
        }
    }
    let columns: Vec<String> = (0..10)
        .map(|j| match units {
            Units::Si => format!("+{} mm", (j as f64 * fine * 1000.0).round()),
            Units::Us => format!("+{:.2}", j as f64 * fine),
        })
        .collect();

    let rating_equation = RatingEquation::for_range(&model, station.range.min_head_m, station.range.max_head_m);
    let report = RatingReport::new(
        &station.name,
        &station.source,
        &model,
        &table,
        rating_equation.as_ref(),
        units,
    );
    // the curve is the rating report's chart, without the title and caption the sheet prints itself
    let mut chart = report.chart();
    chart.title.clear();
    chart.caption.clear();
    let svg = String::from_utf8(xy_chart_sized(&chart, ImageFormat::Svg, (480, 300), 0.62)?)?;
    // inline SVG in HTML needs no namespace declaration; dropping it keeps the file free of URLs
    let svg = svg.replace(" xmlns=\"http://www.w3.org/2000/svg\"", "");

    let inputs = Inputs::from_station(&station.uncertainty, &station.structure);
    let gum = GumModel::new(&model, inputs)?;
    let r = station.range;
    let uncertainty: Vec<(String, f64)> = [0.0, 1.0 / 3.0, 2.0 / 3.0, 1.0]
        .iter()
        .filter_map(|f| {
            let h = r.min_head_m + f * (r.max_head_m - r.min_head_m);
            gum.point(h)
                .ok()
                .map(|p| (sig(units.length_from_si(h), 3), p.u95_pct()))
        })
        .collect();
    let equation = match &rating_equation {
        Some(eq) => eq.printed(units).sentence(units),
        None => "not fitted (fewer than 3 valid rows in the station's range)".into(),
    };
    let zero = match station
        .logger
        .as_ref()
        .and_then(|l| l.zero.map(|z| (z, l.stage_unit.clone())))
    {
        Some((z, u)) => format!(
            "Gauge zero: the staff gauge reads 0 at crest level; the logger reads {z} {} there.",
            u.unwrap_or_else(|| "m".into())
        ),
        None => "Gauge zero: the staff gauge reads 0 at crest level.".into(),
    };
    let kind = match station.structure.kind {
        StructureKind::Flume => "flume",
        StructureKind::Weir => "weir",
    };
    let sheet = Sheet {
        name: station.name.clone(),
        datum: station.datum.clone(),
        source: station.source.clone(),
        sha256: station.sha256.clone(),
        generated: a
            .date
            .clone()
            .unwrap_or_else(|| chrono::Utc::now().format("%Y-%m-%d %H:%M UTC").to_string()),
        structure: report
            .structure_lines()
            .into_iter()
            .map(|l| l.replace("structure:", &format!("{kind}:")))
            .collect(),
        zero,
        units,
        paper: match a.paper {
            PaperArg::A4 => Paper::A4,
            PaperArg::Letter => Paper::Letter,
        },
        row_unit: match units {
            Units::Si => "cm".into(),
            Units::Us => "ft".into(),
        },
        columns,
        rows,
        equation,
        uncertainty,
        svg,
        figures: 4,
        limits: flumerate::rating::limits::LIMITS
            .iter()
            .map(|l| {
                let rule = match units {
                    Units::Si => l.rule.to_string(),
                    Units::Us => flumerate::report::with_feet(l.rule),
                };
                (l.id.to_string(), format!("{}: {rule} ({})", l.id, l.source))
            })
            .collect(),
    };
    if a.output.extension().and_then(|e| e.to_str()) != Some("html") {
        bail!("-o {}: the sheet is an .html file", a.output.display());
    }
    emit(sheet.to_html().as_bytes(), Some(&a.output))?;
    println!("field sheet written: {}", a.output.display());
    Ok(ExitCode::SUCCESS)
}
