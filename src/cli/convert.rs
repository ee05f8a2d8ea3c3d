//! `flumerate convert LOGGER.csv --station STATION.toml -o OUT.csv|OUT.parquet`: logger stage
//! records to discharge with a 95 % band and a flag per row, daily and monthly summaries, a
//! hydrograph and a provenance record. Every non-blank input line gives exactly one output row.

use std::io::IsTerminal;
use std::path::PathBuf;
use std::process::ExitCode;

use clap::Args;
use flumerate::files::FileError;
use flumerate::series::output::CsvStyle;
use flumerate::series::pipeline::{ConvertOptions, OutputPaths, Pipeline, Progress};
use flumerate::series::settings::LoggerOverrides;
use flumerate::station::Station;
use flumerate::units::{FlowUnit, VolumeUnit};

use super::output::print;

#[derive(Debug, Args)]
pub struct ConvertArgs {
    /// Logger export (delimited text)
    pub logger: PathBuf,
    /// Station file (TOML); its [logger] table says how the export reads
    #[arg(long)]
    pub station: PathBuf,
    /// Converted series: OUT.csv or OUT.parquet
    #[arg(short = 'o', long = "output", value_name = "OUT")]
    pub output: PathBuf,
    /// Daily summary: FILE.csv or FILE.parquet
    #[arg(long, value_name = "FILE")]
    pub daily: Option<PathBuf>,
    /// Monthly summary: FILE.csv or FILE.parquet
    #[arg(long, value_name = "FILE")]
    pub monthly: Option<PathBuf>,
    /// Hydrograph with the 95 % band: FILE.png or FILE.svg
    #[arg(long, value_name = "FILE")]
    pub plot: Option<PathBuf>,
    /// Add a panel of the head below the hydrograph
    #[arg(long = "plot-stage", requires = "plot")]
    pub plot_stage: bool,
    /// Provenance record [default: OUT.provenance.json]
    #[arg(long, value_name = "FILE")]
    pub provenance: Option<PathBuf>,
    /// Field visits: CSV with `time` and `head_m` (or head_cm, head_mm, head_ft), staff-gauge head
    /// above the crest, for drift correction
    #[arg(long, value_name = "FILE")]
    pub visits: Option<PathBuf>,
    /// Barometric pressure: CSV with `time` and `pressure`, in the logger's pressure unit
    #[arg(long, value_name = "FILE")]
    pub baro: Option<PathBuf>,
    /// Edits log: CSV with start,end,action,reason (and value_mm); actions exclude, fill,
    /// offset, set-zero
    #[arg(long, value_name = "FILE")]
    pub edits: Option<PathBuf>,
    /// Turn the automatic screening (out of water, spikes, flat lines) off
    #[arg(long = "no-screening")]
    pub no_screening: bool,
    /// Longest gap filled by interpolation of head, e.g. 2h, 90min, 0 for none [default: the
    /// station's [screening] fill_max_hours, or 2h]
    #[arg(long = "fill-max", value_name = "DURATION", value_parser = hours)]
    pub fill_max: Option<f64>,
    /// Discharge unit of the series and summaries: m3/s, L/s, m3/h, ML/d, cfs, gpm, Mgal/d
    #[arg(long = "flow-unit", value_name = "UNIT", default_value = "m3/s", value_parser = |s: &str| s.parse::<FlowUnit>())]
    pub flow_unit: FlowUnit,
    /// Volume unit of the summaries: m3, ML, acre-ft, Mgal
    #[arg(long = "volume-unit", value_name = "UNIT", default_value = "m3", value_parser = |s: &str| s.parse::<VolumeUnit>())]
    pub volume_unit: VolumeUnit,
    /// CSV style: standard (full precision, ISO 8601 times with offset), spreadsheet (UTC and
    /// local time columns, values rounded to what the measurement supports), spreadsheet-comma
    /// (the same with decimal commas and semicolons)
    #[arg(long = "csv-style", value_enum, default_value_t = StyleArg::Standard)]
    pub csv_style: StyleArg,
    /// Write rows sorted by time (then by line) instead of in input order
    #[arg(long)]
    pub sort: bool,
    /// For rows flagged submerged, give the drowned-flow estimate where its source applies
    #[arg(long = "submerged-estimate")]
    pub submerged_estimate: bool,
    /// Exit with code 1 when any row is flagged other than ok or dry (beyond-limits included)
    #[arg(long)]
    pub strict: bool,
    /// Time column (name, or 1-based position)
    #[arg(long = "time-column")]
    pub time_column: Option<String>,
    /// Time format (strftime style); repeat for several, tried in order
    #[arg(long = "time-format")]
    pub time_format: Vec<String>,
    /// Time zone of the logger's clock: IANA name or fixed offset such as +01:00
    #[arg(long)]
    pub timezone: Option<String>,
    /// Stage column (name, or 1-based position)
    #[arg(long = "stage-column")]
    pub stage_column: Option<String>,
    /// Stage unit: m, cm, mm, ft, in
    #[arg(long = "stage-unit")]
    pub stage_unit: Option<String>,
    /// Logger stage with the water level with the crest, in the stage unit
    #[arg(long, allow_hyphen_values = true, value_parser = super::finite_number)]
    pub zero: Option<f64>,
    /// Field separator (one character; `\t` for tab)
    #[arg(long)]
    pub separator: Option<String>,
    /// Numbers use a decimal comma
    #[arg(long = "decimal-comma")]
    pub decimal_comma: bool,
    /// Lines to skip before the header
    #[arg(long = "skip-lines")]
    pub skip_lines: Option<u32>,
    /// The file has no header line (columns by position)
    #[arg(long = "no-header")]
    pub no_header: bool,
    /// A text meaning "no value"; repeat for several
    #[arg(long, allow_hyphen_values = true)]
    pub missing: Vec<String>,
    /// Logged tailwater column (name or position), in the stage unit
    #[arg(long = "tailwater-column")]
    pub tailwater_column: Option<String>,
    /// Tailwater logger reading with the tailwater level with the crest, in the stage unit
    #[arg(long = "tailwater-zero", allow_hyphen_values = true, value_parser = super::finite_number)]
    pub tailwater_zero: Option<f64>,
    /// Absolute-pressure column (name or position), instead of a stage column
    #[arg(long = "pressure-column")]
    pub pressure_column: Option<String>,
    /// Pressure unit of the logger and barometric file: kPa, hPa, mbar, bar, Pa, psi
    #[arg(long = "pressure-unit")]
    pub pressure_unit: Option<String>,
    /// Logged water-temperature column (°C)
    #[arg(long = "temperature-column")]
    pub temperature_column: Option<String>,
    /// Water temperature (°C) where none is logged [default: 10]
    #[arg(long = "water-temperature", value_parser = super::finite_number, allow_hyphen_values = true)]
    pub water_temperature: Option<f64>,
}

/// `--csv-style`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum StyleArg {
    /// full precision, ISO 8601 times with their offset
    Standard,
    /// UTC and local time columns, rounded values
    Spreadsheet,
    /// spreadsheet, with decimal commas and semicolons
    SpreadsheetComma,
}

impl From<StyleArg> for CsvStyle {
    fn from(s: StyleArg) -> Self {
        match s {
            StyleArg::Standard => CsvStyle::Standard,
            StyleArg::Spreadsheet => CsvStyle::Spreadsheet { decimal_comma: false },
            StyleArg::SpreadsheetComma => CsvStyle::Spreadsheet { decimal_comma: true },
        }
    }
}

impl ConvertArgs {
    /// The flags that override the station's [logger].
    fn overrides(&self) -> LoggerOverrides {
        LoggerOverrides {
            time_column: self.time_column.clone(),
            time_formats: self.time_format.clone(),
            timezone: self.timezone.clone(),
            stage_column: self.stage_column.clone(),
            stage_unit: self.stage_unit.clone(),
            zero: self.zero,
            separator: self.separator.clone(),
            decimal_comma: self.decimal_comma,
            skip_lines: self.skip_lines,
            no_header: self.no_header,
            missing: self.missing.clone(),
            tailwater_column: self.tailwater_column.clone(),
            tailwater_zero: self.tailwater_zero,
            pressure_column: self.pressure_column.clone(),
            pressure_unit: self.pressure_unit.clone(),
            temperature_column: self.temperature_column.clone(),
            water_temperature: self.water_temperature,
        }
    }

    /// Where the outputs go.
    fn outputs(&self) -> OutputPaths {
        OutputPaths {
            series: self.output.clone(),
            daily: self.daily.clone(),
            monthly: self.monthly.clone(),
            plot: self.plot.clone(),
            provenance: self
                .provenance
                .clone()
                .unwrap_or_else(|| PathBuf::from(format!("{}.provenance.json", self.output.display()))),
        }
    }

    /// No output may be an input or another output (checked before any work).
    fn check_paths(&self, out: &OutputPaths) -> Result<(), FileError> {
        let mut inputs = vec![
            ("logger file", self.logger.as_path()),
            ("station file", self.station.as_path()),
        ];
        inputs.extend(self.visits.as_deref().map(|v| ("visits file", v)));
        inputs.extend(self.baro.as_deref().map(|b| ("barometric file", b)));
        inputs.extend(self.edits.as_deref().map(|e| ("edits file", e)));
        let mut outputs = vec![("-o", out.series.as_path()), ("--provenance", out.provenance.as_path())];
        outputs.extend(out.daily.as_deref().map(|p| ("--daily", p)));
        outputs.extend(out.monthly.as_deref().map(|p| ("--monthly", p)));
        outputs.extend(out.plot.as_deref().map(|p| ("--plot", p)));
        flumerate::files::check_paths(&inputs, &outputs)
    }
}

/// A duration such as `2h`, `90min`, `45m`, `3600s` or `0`, in hours.
fn hours(text: &str) -> Result<f64, String> {
    let t = text.trim();
    if t == "0" {
        return Ok(0.0);
    }
    let split = t
        .find(|c: char| c.is_ascii_alphabetic())
        .ok_or_else(|| format!("\"{text}\" has no unit: write e.g. 2h, 90min or 0"))?;
    let (number, unit) = t.split_at(split);
    let v: f64 = number
        .trim()
        .parse()
        .map_err(|_| format!("\"{number}\" is not a number"))?;
    let per_hour = match unit.trim() {
        "h" | "hr" | "hours" => 1.0,
        "min" | "m" | "minutes" => 60.0,
        "s" | "seconds" => 3600.0,
        "d" | "days" => 1.0 / 24.0,
        other => return Err(format!("unknown unit \"{other}\": use h, min, s or d")),
    };
    let h = v / per_hour;
    if h.is_finite() && (0.0..=1.0e5).contains(&h) {
        Ok(h)
    } else {
        Err(format!("{text} is not a usable duration"))
    }
}

/// A progress bar on standard error when it is a terminal.
struct Bar(indicatif::ProgressBar);

impl Bar {
    fn new() -> Self {
        Self(if std::io::stderr().is_terminal() {
            indicatif::ProgressBar::new(0)
        } else {
            indicatif::ProgressBar::hidden()
        })
    }

    fn style(&self, template: &str, message: &'static str, total: u64) {
        if self.0.length() != Some(total) || self.0.message() != message {
            if let Ok(style) = indicatif::ProgressStyle::with_template(template) {
                self.0.set_style(style);
            }
            self.0.set_message(message);
            self.0.set_length(total);
        }
    }
}

impl Progress for Bar {
    fn reading(&self, done: u64, total: u64) {
        self.style("{msg} [{bar:40}] {bytes}/{total_bytes} {eta}", "reading", total);
        self.0.set_position(done);
    }
    fn converting(&self, done: u64, total: u64) {
        self.style("{msg} [{bar:40}] {pos}/{len} rows {eta}", "converting", total);
        self.0.set_position(done);
    }
    fn finished(&self) {
        self.0.finish_and_clear();
    }
}

pub fn run(a: ConvertArgs) -> anyhow::Result<ExitCode> {
    let out = a.outputs();
    a.check_paths(&out)?;
    let station = Station::load(&a.station)?;
    let mut options = ConvertOptions::new(&station, &a.overrides(), a.visits.clone(), a.baro.clone())?;
    options.sort = a.sort;
    options.edits = a.edits.clone();
    options.flow_unit = a.flow_unit;
    options.volume_unit = a.volume_unit;
    options.csv_style = a.csv_style.into();
    options.plot_stage = a.plot_stage;
    if a.no_screening {
        options.screening.enabled = false;
    }
    if let Some(h) = a.fill_max {
        options.screening.fill_max_hours = h;
    }
    options.submerged_estimate = a.submerged_estimate;
    let pipeline = Pipeline::new(&station, options)?;
    let bar = Bar::new();
    let report = pipeline.run(&a.logger, &out, &bar)?;
    bar.finished();
    print(report.text.as_bytes())?;
    Ok(if a.strict && report.flagged_rows > 0 {
        ExitCode::from(1)
    } else {
        ExitCode::SUCCESS
    })
}
