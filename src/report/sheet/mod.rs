//! The field sheet: the rating on one printed page for the gauge house, as one self-contained HTML
//! file (no external assets, no scripts, no network references; the rating curve is inline SVG).
//!
//! Layout (our own, designed for reading in poor light): a header with the station and how the
//! sheet was made; the rating curve and the facts a reader needs beside it; then the grid — one
//! row per coarse head step, one column per fine step, the discharge in each cell in bold tabular
//! figures, and beside each row the highest tailwater reading at which the structure still
//! measures. Rows outside the method's limits are hatched and carry the numbers of the limits
//! they break, explained in a key under the grid (so no note can widen the page). Nothing is
//! told by colour alone: hatching and struck-through values say "outside the limits" on a
//! monochrome printer too, and the text names columns by their headings.

mod build;

pub use build::{SheetError, SheetOptions, MAX_ROWS};

use super::CAUTIONS;
use crate::units::Units;

/// Paper size for the print style.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Paper {
    /// ISO A4, 210 × 297 mm.
    A4,
    /// US Letter, 8.5 × 11 in.
    Letter,
}

/// One cell of the grid.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SheetCell {
    /// Head above the crest (m).
    pub head_m: f64,
    /// Discharge (m³/s), `None` outside the station's range or where there is none.
    pub discharge_m3s: Option<f64>,
    /// Within every limit of application.
    pub valid: bool,
}

/// One row of the grid.
#[derive(Debug, Clone, PartialEq)]
pub struct SheetRow {
    /// The row's label in display units (e.g. `12` for 12 cm).
    pub label: String,
    /// The cells, one per fine step.
    pub cells: Vec<SheetCell>,
    /// Largest tailwater level above the crest (m) for modular flow at the row's first head.
    pub max_tailwater_m: Option<f64>,
    /// Limits some cell of the row breaks (identifiers).
    pub broken: Vec<String>,
}

/// Everything on the sheet.
#[derive(Debug, Clone)]
pub struct Sheet {
    /// Station name.
    pub name: String,
    /// Datum text, if the station file gives one.
    pub datum: Option<String>,
    /// Station file.
    pub source: String,
    /// SHA-256 of the station file.
    pub sha256: String,
    /// When the sheet was made (text).
    pub generated: String,
    /// Structure and method lines.
    pub structure: Vec<String>,
    /// Gauge zero line.
    pub zero: String,
    /// Output units.
    pub units: Units,
    /// Paper.
    pub paper: Paper,
    /// Unit of the row labels (`cm`, `ft`).
    pub row_unit: String,
    /// Tabulated by staff reading: the staff reading at crest level, in the output length unit
    /// (`None`: by head above the crest).
    pub by_staff: Option<f64>,
    /// Column headings (fine steps).
    pub columns: Vec<String>,
    /// Grid rows.
    pub rows: Vec<SheetRow>,
    /// The rating equation, as text.
    pub equation: String,
    /// (head in display units, u95 %) at a few heads.
    pub uncertainty: Vec<(String, f64)>,
    /// The rating curve (inline SVG, no external references).
    pub svg: String,
    /// Significant figures of the discharge in the grid.
    pub figures: usize,
    /// Limits of application that rows may name: (identifier, rule and source in words).
    pub limits: Vec<(String, String)>,
}

use super::html_escape as esc;

impl Sheet {
    /// The page as HTML.
    pub fn to_html(&self) -> String {
        let mut h = String::with_capacity(64 * 1024);
        self.head_html(&mut h);
        self.header_html(&mut h);
        self.facts_html(&mut h);
        self.grid_html(&mut h);
        h.push_str(&format!(
            "<footer><b>{}</b></footer>\n</div>\n</body>\n</html>\n",
            esc(CAUTIONS)
        ));
        h
    }

    /// The document's head: title and the print style for the paper.
    fn head_html(&self, h: &mut String) {
        let page = match self.paper {
            Paper::A4 => "A4 portrait",
            Paper::Letter => "letter portrait",
        };
        h.push_str("<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n");
        h.push_str(&format!("<title>Field sheet: {}</title>\n", esc(&self.name)));
        h.push_str("<style>\n");
        h.push_str(&format!("@page {{ size: {page}; margin: 8mm; }}\n"));
        h.push_str(
            r#"* { box-sizing: border-box; }
html { -webkit-print-color-adjust: exact; print-color-adjust: exact; }
body { margin: 0; font-family: "DejaVu Sans", "Liberation Sans", Arial, sans-serif; color: #000; font-size: 8pt; line-height: 1.2; }
.sheet { width: 194mm; margin: 0 auto; }
header { border-bottom: 1.2mm solid #000; padding-bottom: 1mm; margin-bottom: 1.5mm; }
header h1 { font-size: 14pt; margin: 0 0 0.5mm 0; }
header p { margin: 0; font-size: 7pt; }
.top { display: flex; gap: 3mm; margin-bottom: 1.5mm; }
.facts { flex: 1 1 auto; font-size: 7.4pt; }
.facts p { margin: 0 0 0.8mm 0; }
.facts .field { border: 0.4mm solid #000; padding: 0.8mm 1.2mm; font-weight: bold; }
.curve { flex: 0 0 80mm; }
.curve svg { width: 80mm; height: auto; display: block; }
table.grid { border-collapse: collapse; width: 100%; font-variant-numeric: tabular-nums; }
table.grid th, table.grid td { border: 0.2mm solid #555; padding: 0.15mm 0.8mm; text-align: right; white-space: nowrap; }
table.grid thead th { background: #000; color: #fff; font-size: 7.5pt; }
table.grid tbody th { background: #e6e6e6; font-size: 8.5pt; }
table.grid td { font-size: 8.3pt; font-weight: bold; }
table.grid td.none { color: #999; font-weight: normal; }
table.grid td.tw { background: #eef3ff; }
table.grid tr.outside td, table.grid tr.outside th { background: repeating-linear-gradient(45deg, #fff, #fff 1.2mm, #d6d6d6 1.2mm, #d6d6d6 2.4mm); }
table.grid td.bad { font-style: italic; font-weight: normal; text-decoration: line-through; }
table.grid td.why { text-align: left; font-size: 7pt; font-weight: normal; white-space: normal; }
table.grid caption { caption-side: top; text-align: left; font-size: 7.5pt; font-weight: bold; padding-bottom: 0.5mm; }
p.key { font-size: 6.8pt; margin: 0.8mm 0 0 0; }
.unc { border-collapse: collapse; margin: 0.5mm 0; }
.unc td, .unc th { border: 0.2mm solid #777; padding: 0 1mm; font-size: 7pt; }
footer { margin-top: 1.2mm; font-size: 6.8pt; border-top: 0.4mm solid #000; padding-top: 0.8mm; }
@media screen { body { background: #ccc; } .sheet { background: #fff; padding: 8mm; margin: 5mm auto; } }
</style>
</head>
<body>
<div class="sheet">
"#,
        );
    }

    /// The grid's discharge unit and its factor on the output unit: below 1 m³/s the grid is in
    /// L/s (SI only), so that its discharges (four figures, never more than 999.9) stay short
    /// enough to fit the page.
    fn grid_unit<'a>(&self, output_unit: &'a str) -> (&'a str, f64) {
        let largest = self
            .rows
            .iter()
            .flat_map(|r| r.cells.iter().filter_map(|c| c.discharge_m3s))
            .fold(0.0f64, f64::max);
        if matches!(self.units, Units::Si) && largest < 1.0 {
            ("L/s", 1000.0)
        } else {
            (output_unit, 1.0)
        }
    }

    /// The station, how the sheet was made, units and datum.
    fn header_html(&self, h: &mut String) {
        let (lu, qu) = self.units.symbols();
        let (qu, _) = self.grid_unit(qu);
        h.push_str(&format!("<header>\n<h1>{}</h1>\n", esc(&self.name)));
        for line in &self.structure {
            h.push_str(&format!("<p>{}</p>\n", esc(line)));
        }
        h.push_str(&format!(
            "<p>{}{} Heads h1 in {lu} above the crest, discharge Q in {qu}.</p>\n",
            esc(&self.zero),
            self.datum
                .as_ref()
                .map_or(String::new(), |d| format!(" Datum: {}.", esc(d)))
        ));
        h.push_str(&format!(
            "<p>Generated {} by flumerate {} from {} (SHA-256 {}).</p>\n</header>\n",
            esc(&self.generated),
            env!("CARGO_PKG_VERSION"),
            esc(&self.source),
            esc(&self.sha256)
        ));
    }

    /// The facts beside the curve: equation, uncertainty, the tailwater instruction, the curve.
    fn facts_html(&self, h: &mut String) {
        let lu = self.units.symbols().0;
        h.push_str("<section class=\"top\">\n<div class=\"facts\">\n");
        h.push_str(&format!("<p><b>Rating equation</b>: {}</p>\n", esc(&self.equation)));
        h.push_str("<table class=\"unc\"><tr><th>h1</th>");
        for (head, _) in &self.uncertainty {
            h.push_str(&format!("<td>{} {lu}</td>", esc(head)));
        }
        h.push_str("</tr><tr><th>U95 of Q</th>");
        for (_, u) in &self.uncertainty {
            h.push_str(&format!("<td>±{u:.1} %</td>"));
        }
        h.push_str("</tr></table>\n");
        h.push_str("<p>U95: expanded uncertainty of one reading (k = 2): coefficient, width, gauge zero and reading error.</p>\n");
        h.push_str(&format!(
            "<p class=\"field\">Tailwater check: read the tailwater gauge (zero at crest level). If it reads higher than the “max tail {lu}” column for the present head, the structure is drowned and this table reads high.</p>\n",
        ));
        h.push_str(
            "<p>Hatched rows with struck-through values break a limit of application (its number in the “limits” column, explained under the table); their values are computed but not reliable. A dot marks a head outside the station's rated range.</p>\n",
        );
        h.push_str("</div>\n<div class=\"curve\">\n");
        h.push_str(&self.svg);
        h.push_str("\n</div>\n</section>\n");
    }

    /// The grid of discharges, the largest modular tailwater per row, and the key to the
    /// limits rows break.
    fn grid_html(&self, h: &mut String) {
        let (lu, qu) = self.units.symbols();
        // the limits rows break, numbered in order of first appearance
        let mut keys: Vec<&str> = Vec::new();
        for row in &self.rows {
            for id in &row.broken {
                if !keys.contains(&id.as_str()) {
                    keys.push(id);
                }
            }
        }
        let key_of = |id: &str| keys.iter().position(|k| *k == id).map_or(0, |p| p + 1);

        let (qu, q_scale) = self.grid_unit(qu);

        // the grid
        h.push_str(&format!(
            "<table class=\"grid\">\n<caption>Discharge Q in {qu} at {}</caption>\n<thead><tr>",
            match self.by_staff {
                Some(z) => format!(
                    "staff reading = row + column (head h1 = staff reading − {} {lu})",
                    super::sig(z, 4)
                ),
                None => "head h1 = row + column".into(),
            }
        ));
        let row_head = if self.by_staff.is_some() { "staff" } else { "h1" };
        h.push_str(&format!("<th>{row_head} {}</th>", esc(&self.row_unit)));
        for c in &self.columns {
            h.push_str(&format!("<th>{}</th>", esc(c)));
        }
        h.push_str(&format!(
            "<th>max tail {lu}</th><th>limits</th></tr></thead>\n<tbody>\n"
        ));
        for row in &self.rows {
            let outside = !row.broken.is_empty();
            h.push_str(&format!(
                "<tr class=\"{}\"><th>{}</th>",
                if outside { "outside" } else { "ok" },
                esc(&row.label)
            ));
            for cell in &row.cells {
                match cell.discharge_m3s {
                    Some(q) => {
                        let shown = super::sig(q_scale * self.units.discharge_from_si(q), self.figures);
                        h.push_str(&format!(
                            "<td class=\"{}\" data-head-m=\"{}\" data-q-m3s=\"{}\">{}</td>",
                            if cell.valid { "q" } else { "q bad" },
                            cell.head_m,
                            q,
                            shown
                        ));
                    }
                    None => h.push_str(&format!("<td class=\"none\" data-head-m=\"{}\">·</td>", cell.head_m)),
                }
            }
            let tw = row
                .max_tailwater_m
                .filter(|v| v.is_finite())
                .map_or("–".to_string(), |v| format!("{:.3}", self.units.length_from_si(v)));
            let nums: Vec<String> = row.broken.iter().map(|id| key_of(id).to_string()).collect();
            h.push_str(&format!(
                "<td class=\"tw\">{tw}</td><td class=\"why\">{}</td></tr>\n",
                nums.join(" ")
            ));
        }
        h.push_str("</tbody>\n</table>\n");
        self.limits_key_html(&keys, h);
    }

    /// The key to the limits the grid's rows break, numbered as in its `limits` column.
    fn limits_key_html(&self, keys: &[&str], h: &mut String) {
        if !keys.is_empty() {
            h.push_str("<p class=\"key\"><b>Limits:</b> ");
            let parts: Vec<String> = keys
                .iter()
                .enumerate()
                .map(|(k, id)| {
                    let text = self
                        .limits
                        .iter()
                        .find(|(i, _)| i == id)
                        .map_or(id.to_string(), |(_, t)| t.clone());
                    format!("<b>{}</b> {}", k + 1, esc(&text))
                })
                .collect();
            h.push_str(&parts.join("; "));
            h.push_str("</p>\n");
        }
    }
}
