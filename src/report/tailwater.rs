//! The tailwater check as text, CSV, JSON and a chart.

use serde_json::{json, Map, Value};

use super::plot::{Line, XyChart};
use super::{sig, wrap, CAUTIONS};
use crate::station::ExitSpec;
use crate::tailwater::{DrownedBand, Exit, RowKind, TailwaterCheck, TailwaterRow, Verdict};
use crate::units::Units;
use plotters::style::RGBColor;

/// How the modular limit is obtained, in words for the report's header: the value given in
/// `[exit]`, or the energy balance over the exit with its expansion and loss coefficient.
/// A standard structure without a given value states its standard's modular limit.
pub fn exit_method(spec: &ExitSpec, exit: &Exit, structure: &crate::rating::Structure) -> String {
    let standard = structure.standard().map(|rule| rule.modular_limit());
    match (exit.fixed_modular_limit, standard) {
        (Some(ml), _) => format!("{ml} as given in [exit] modular_limit"),
        (None, Some((0.0, source))) => format!("tailwater below the crest: {source}"),
        (None, Some((ml, source))) => format!("{ml}: {source}"),
        (None, None) => format!(
            "energy balance over the exit (Bos & Reinink 1981): {} with loss coefficient {} (from memory), throat friction beyond the control (smooth flat plate)",
            if spec.expansion > 0.0 {
                format!("a 1:{} expansion", spec.expansion)
            } else {
                "an abrupt exit".to_string()
            },
            exit.loss_coefficient
        ),
    }
}

/// Everything the tailwater report shows.
#[derive(Debug, Clone, Copy)]
pub struct TailwaterReport<'a> {
    /// Station name.
    pub name: &'a str,
    /// Station file.
    pub source: &'a str,
    /// How the modular limit was obtained, for the header.
    pub method: &'a str,
    /// The rating's calibration against gaugings, in words, when it has one.
    pub calibration: Option<&'a str>,
    /// The check.
    pub check: &'a TailwaterCheck,
    /// Output units.
    pub units: Units,
}

impl TailwaterReport<'_> {
    /// Column names (design.md's six first).
    pub fn headers(&self) -> Vec<String> {
        let (l, q) = (self.units.length_suffix(), self.units.discharge_suffix());
        vec![
            format!("discharge_{q}"),
            format!("head_{l}"),
            format!("tailwater_{l}"),
            "submergence".into(),
            "modular_limit".into(),
            "modular".into(),
            format!("max_tailwater_{l}"),
            format!("energy_head_{l}"),
            format!("tailwater_energy_{l}"),
            "note".into(),
        ]
    }

    fn values(&self, row: &TailwaterRow) -> [f64; 9] {
        let u = self.units;
        [
            u.discharge_from_si(row.discharge_m3s),
            u.length_from_si(row.head_m),
            u.length_from_si(row.tailwater_m),
            row.submergence,
            row.modular_limit,
            if row.modular { 1.0 } else { 0.0 },
            u.length_from_si(row.max_tailwater_m),
            u.length_from_si(row.energy_head_m),
            u.length_from_si(row.tailwater_energy_m),
        ]
    }

    /// The top discharge of the range checked (m³/s).
    fn top_m3s(&self) -> f64 {
        self.check
            .rows
            .iter()
            .filter_map(|(_, _, r)| r.as_ref().ok())
            .map(|r| r.discharge_m3s)
            .fold(f64::NAN, f64::max)
    }

    /// One band in words: "drowned from Q (h1 = h) to Q (h1 = h)", "… upward" only when it
    /// reaches the top of the range checked.
    pub fn band_words(&self, b: &DrownedBand) -> String {
        let (lu, qu) = self.units.symbols();
        let q = |v: f64| sig(self.units.discharge_from_si(v), 4);
        let h = |v: f64| sig(self.units.length_from_si(v), 4);
        let from = if b.from_bottom {
            format!(
                "already at the bottom of the range checked, {} {qu} (h1 = {} {lu})",
                q(b.from_m3s),
                h(b.from_head_m)
            )
        } else {
            format!("from {} {qu} (h1 = {} {lu})", q(b.from_m3s), h(b.from_head_m))
        };
        let to = if b.to_top {
            format!("upward, to the top of the range checked ({} {qu})", q(b.to_m3s))
        } else {
            format!("to {} {qu} (h1 = {} {lu})", q(b.to_m3s), h(b.to_head_m))
        };
        format!("drowned {from} {to}")
    }

    /// The verdict in one sentence, in output units.
    pub fn verdict_line(&self) -> String {
        match self.units {
            Units::Si => self.verdict_words(),
            Units::Us => super::with_feet(&self.verdict_words()),
        }
    }

    fn verdict_words(&self) -> String {
        let (lu, qu) = self.units.symbols();
        let top = self.top_m3s();
        match &self.check.verdict {
            Verdict::Modular => format!(
                "verdict: modular across the range checked (up to {} {qu}); drowning looked for at {} heads and between them by root finding to 0.1 mm",
                sig(self.units.discharge_from_si(top), 4),
                crate::tailwater::SCAN_POINTS
            ),
            Verdict::Drowns { bands, crest_raise_m } => {
                let fix = match crest_raise_m {
                    Some(r) => format!(
                        "raising the crest by {} {lu} (approach bed and tailwater channel unchanged) would keep it modular up to {} {qu}",
                        sig(self.units.length_from_si(*r), 3),
                        sig(self.units.discharge_from_si(top), 4)
                    ),
                    None => "no crest raise up to 2 m keeps it modular: lower the tailwater or redesign the exit".into(),
                };
                let words: Vec<String> = bands.iter().map(|b| self.band_words(b)).collect();
                format!(
                    "verdict: DROWNED: {}; while drowned the rating reads high. {fix}",
                    words.join("; and ")
                )
            }
        }
    }

    /// The note of a row: a band edge, a tailwater above the upstream energy, or why the row has
    /// no value.
    fn note(&self, kind: RowKind, row: Option<&TailwaterRow>) -> String {
        let mut notes: Vec<&str> = Vec::new();
        match kind {
            RowKind::Table => {}
            RowKind::DrownsFrom => {
                notes.push("drowning starts just above this head (root between table rows, to 0.1 mm)")
            }
            RowKind::ModularFrom => notes.push("modular again from this head (root between table rows, to 0.1 mm)"),
        }
        if row.is_some_and(|r| r.submergence > 1.0) {
            notes.push("tailwater energy above the upstream energy: the structure no longer controls the flow");
        }
        notes.join("; ")
    }

    /// CSV, full precision; `modular` as true/false. The band edges are rows of their own, noted.
    pub fn to_csv(&self) -> Result<Vec<u8>, csv::Error> {
        let mut w = csv::Writer::from_writer(Vec::new());
        w.write_record(self.headers())?;
        for (h, kind, r) in &self.check.rows {
            let rec: Vec<String> = match r {
                Ok(row) => {
                    let v = self.values(row);
                    let mut rec: Vec<String> = v.iter().map(|x| format!("{x}")).collect();
                    rec[5] = row.modular.to_string();
                    rec.push(self.note(*kind, Some(row)));
                    rec
                }
                Err(e) => {
                    let mut rec = vec![String::new(); 9];
                    rec[1] = format!("{}", self.units.length_from_si(*h));
                    rec.push(e.clone());
                    rec
                }
            };
            w.write_record(&rec)?;
        }
        w.flush()?;
        Ok(w.into_inner().map_err(|e| e.into_error())?)
    }

    /// The drowned bands as JSON objects (design.md: `from_discharge_m3s`, `to_discharge_m3s`,
    /// `from_head_m`, `to_head_m`; `_cfs`/`_ft` in US units).
    pub fn bands_json(&self) -> Vec<Value> {
        let (l, q) = (self.units.length_suffix(), self.units.discharge_suffix());
        self.check
            .bands()
            .iter()
            .map(|b| {
                json!({
                    format!("from_discharge_{q}"): self.units.discharge_from_si(b.from_m3s),
                    format!("to_discharge_{q}"): self.units.discharge_from_si(b.to_m3s),
                    format!("from_head_{l}"): self.units.length_from_si(b.from_head_m),
                    format!("to_head_{l}"): self.units.length_from_si(b.to_head_m),
                    "from_bottom_of_range": b.from_bottom,
                    "to_top_of_range": b.to_top,
                    "text": self.band_words(b),
                })
            })
            .collect()
    }

    /// JSON document with rows, drowned bands, verdict and cautions.
    pub fn to_json(&self) -> Result<Vec<u8>, serde_json::Error> {
        let headers = self.headers();
        let rows: Vec<Value> = self
            .check
            .rows
            .iter()
            .map(|(h, kind, r)| {
                let mut m = Map::new();
                match r {
                    Ok(row) => {
                        for (k, v) in headers.iter().zip(self.values(row)) {
                            m.insert(k.clone(), json!(v));
                        }
                        m.insert("modular".into(), json!(row.modular));
                        m.insert("note".into(), json!(self.note(*kind, Some(row))));
                    }
                    Err(e) => {
                        m.insert(headers[1].clone(), json!(self.units.length_from_si(*h)));
                        m.insert("note".into(), json!(e));
                    }
                }
                Value::Object(m)
            })
            .collect();
        let verdict = match &self.check.verdict {
            Verdict::Modular => json!({"modular": true}),
            Verdict::Drowns { crest_raise_m, .. } => json!({
                "modular": false,
                format!("crest_raise_{}", self.units.length_suffix()): crest_raise_m.map(|r| self.units.length_from_si(r)),
            }),
        };
        let mut out = serde_json::to_vec_pretty(&json!({
            "station": self.name,
            "station_file": self.source,
            "units": match self.units { Units::Si => "si", Units::Us => "us" },
            "modular_limit_method": self.method,
            "calibration": self.calibration,
            "drowned_bands": self.bands_json(),
            "rows": rows,
            "verdict": verdict,
            "verdict_text": self.verdict_line(),
            "cautions": CAUTIONS,
        }))?;
        out.push(b'\n');
        Ok(out)
    }

    /// Readable table with verdict and cautions.
    pub fn to_text(&self) -> Vec<u8> {
        let u = self.units;
        let (lu, qu) = u.symbols();
        let mut s = format!(
            "flumerate tailwater check: {}\nstation file: {}\nmodular limit: {}\n{}levels in {lu} above the crest (negative: below it), discharge in {qu}; submergence = H2/H1 (energy heads); ML = modular limit\n\n",
            self.name,
            self.source,
            self.method,
            self.calibration.map_or(String::new(), |c| format!("rating: {c}\n"))
        );
        s.push_str(&format!(
            "{:>12} {:>8} {:>10} {:>7} {:>7} {:>12} {:>8}  note\n",
            format!("Q {qu}"),
            format!("h1 {lu}"),
            format!("tail {lu}"),
            "H2/H1",
            "ML",
            format!("max tail {lu}"),
            "modular"
        ));
        for (h, kind, r) in &self.check.rows {
            match r {
                Ok(row) => s.push_str(&format!(
                    "{:>12} {:>8.4} {:>10.4} {:>7} {:>7.3} {:>12.4} {:>8}  {}\n",
                    sig(u.discharge_from_si(row.discharge_m3s), 4),
                    u.length_from_si(row.head_m),
                    u.length_from_si(row.tailwater_m),
                    if row.submergence > 1.0 {
                        "> 1".to_string()
                    } else {
                        format!("{:.3}", row.submergence)
                    },
                    row.modular_limit,
                    u.length_from_si(row.max_tailwater_m),
                    if row.modular { "yes" } else { "DROWNED" },
                    self.note(*kind, Some(row))
                )),
                Err(e) => s.push_str(&format!(
                    "{:>12} {:>8.4} {:>10} {:>7} {:>7} {:>12} {:>8}  {e}\n",
                    "-",
                    u.length_from_si(*h),
                    "-",
                    "-",
                    "-",
                    "-",
                    "-"
                )),
            }
        }
        s.push('\n');
        s.push_str(&wrap(&self.verdict_line(), 100));
        s.push_str(&format!(
            "\n\nIn the field: read the tailwater gauge (zero at crest level) and compare it with the \"max tail {lu}\" column for the discharge read upstream; above it the structure is drowned and the rating reads high.\n\n"
        ));
        s.push_str(&wrap(CAUTIONS, 100));
        s.push('\n');
        s.into_bytes()
    }

    /// Head, tailwater and modular tailwater levels against discharge, drowned range shaded.
    pub fn chart(&self) -> XyChart {
        let u = self.units;
        let (lu, qu) = u.symbols();
        let ok: Vec<&TailwaterRow> = self.check.rows.iter().filter_map(|(_, _, r)| r.as_ref().ok()).collect();
        let pts = |f: &dyn Fn(&TailwaterRow) -> f64| -> Vec<(f64, f64)> {
            ok.iter()
                .map(|r| (u.discharge_from_si(r.discharge_m3s), u.length_from_si(f(r))))
                .collect()
        };
        // drowned stretches, each end where the excess changes sign (root finding)
        let shaded: Vec<(f64, f64)> = self
            .check
            .bands()
            .iter()
            .map(|b| (u.discharge_from_si(b.from_m3s), u.discharge_from_si(b.to_m3s)))
            .collect();
        XyChart {
            title: format!("{}: tailwater check", self.name),
            x_label: format!("discharge Q ({qu})"),
            y_label: format!("level above the crest ({lu})"),
            lines: vec![
                Line {
                    label: "upstream head h1".into(),
                    points: pts(&|r| r.head_m),
                    color: RGBColor(20, 70, 160),
                    dashed: false,
                },
                Line {
                    label: "tailwater level".into(),
                    points: pts(&|r| r.tailwater_m),
                    color: RGBColor(30, 140, 60),
                    dashed: false,
                },
                Line {
                    label: "largest tailwater level for modular flow".into(),
                    points: pts(&|r| r.max_tailwater_m),
                    color: RGBColor(200, 40, 40),
                    dashed: true,
                },
            ],
            shaded,
            shaded_label: "drowned: the rating reads high".into(),
            caption: "levels referred to the crest; modular limit as stated in the report. Computed, not gauged: confirm in the field.".into(),
        }
    }
}
