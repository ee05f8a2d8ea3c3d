//! The field sheet: one self-contained page, values equal to the rating, SI and US units.

use std::path::{Path, PathBuf};

use crate::common::{flumerate, rel};
use flumerate::rating::RatingModel;
use flumerate::report::sig;
use flumerate::station::Station;

fn make_sheet(station: &Path, dir: &Path, units: &str) -> (PathBuf, String) {
    let out = dir.join(format!(
        "{}-{units}.html",
        station.file_stem().expect("name").to_string_lossy()
    ));
    flumerate()
        .arg("sheet")
        .arg(station)
        .args(["--units", units, "--date", "2026-12-02", "-o"])
        .arg(&out)
        .assert()
        .success();
    let html = std::fs::read_to_string(&out).expect("sheet written");
    (out, html)
}

fn demo_stations() -> Vec<PathBuf> {
    let mut v: Vec<PathBuf> = std::fs::read_dir(concat!(env!("CARGO_MANIFEST_DIR"), "/ratings"))
        .expect("ratings/")
        .map(|e| e.expect("entry").path())
        .collect();
    v.sort();
    v
}

/// (head m, discharge m³/s, shown text) of every grid cell with a value.
fn cells(html: &str) -> Vec<(f64, f64, String)> {
    html.split("<td class=\"q")
        .skip(1)
        .map(|part| {
            let attr = |name: &str| -> &str {
                let start = part.find(&format!("{name}=\"")).expect("attribute") + name.len() + 2;
                &part[start..start + part[start..].find('"').expect("closing quote")]
            };
            let shown = &part[part.find('>').expect("cell text") + 1..part.find("</td>").expect("cell end")];
            (
                attr("data-head-m").parse().expect("head"),
                attr("data-q-m3s").parse().expect("q"),
                shown.to_string(),
            )
        })
        .collect()
}

pub(crate) fn chromium() -> Option<PathBuf> {
    ["chromium", "chromium-browser"].iter().find_map(|name| {
        std::env::var_os("PATH").and_then(|paths| {
            std::env::split_paths(&paths)
                .map(|d| d.join(name))
                .find(|p| p.is_file())
        })
    })
}

/// Prints `html` to PDF with headless Chromium; returns the PDF's path.
pub(crate) fn print_pdf(chrome: &Path, html: &Path, dir: &Path) -> PathBuf {
    let pdf = dir.join(format!("{}.pdf", html.file_stem().expect("stem").to_string_lossy()));
    let profile = tempfile::tempdir().expect("profile dir");
    let status = std::process::Command::new(chrome)
        .args([
            "--headless",
            "--no-sandbox",
            "--disable-gpu",
            "--disable-quic",
            "--no-first-run",
            "--disable-background-networking",
            "--disable-component-update",
            "--disable-sync",
            "--no-pdf-header-footer",
        ])
        .arg(format!("--user-data-dir={}", profile.path().display()))
        .arg(format!("--print-to-pdf={}", pdf.display()))
        .arg(html)
        .stdout(std::process::Stdio::null())
        .stderr(std::process::Stdio::null())
        .status()
        .expect("chromium runs");
    assert!(status.success(), "chromium failed on {}", html.display());
    pdf
}

fn pdf_pages(chrome: &Path, html: &Path, dir: &Path) -> usize {
    let pdf = print_pdf(chrome, html, dir);
    let bytes = std::fs::read(&pdf).expect("pdf written");
    // count page objects: "/Type /Page" not followed by "s" (that would be the /Pages tree)
    let text = String::from_utf8_lossy(&bytes);
    text.match_indices("/Type /Page")
        .chain(text.match_indices("/Type/Page"))
        .filter(|(i, m)| !text[i + m.len()..].starts_with('s'))
        .count()
}

#[test]
fn every_demo_sheet_is_one_self_contained_page_in_si_and_us_units() {
    let dir = tempfile::tempdir().expect("tempdir");
    let chrome = chromium();
    if chrome.is_none() {
        eprintln!("chromium not installed: page counts not checked here (.ci/run installs it)");
    }
    for station in demo_stations() {
        for units in ["si", "us"] {
            let (path, html) = make_sheet(&station, dir.path(), units);
            for bad in [
                "http://", "https://", "src=", "url(", "@import", "<link", "<script", "<img",
            ] {
                assert!(!html.contains(bad), "{}: contains {bad}", path.display());
            }
            assert!(html.contains("<svg"), "inline rating curve");
            assert!(html.contains("field gaugings"), "cautions");
            assert!(html.contains("SHA-256"), "station file hash");
            assert!(html.contains("max tail"), "largest modular tailwater column");
            // a small structure's grid is in L/s
            assert!(if units == "si" {
                html.contains("Discharge Q in m³/s") || html.contains("Discharge Q in L/s")
            } else {
                html.contains("Discharge Q in ft³/s")
            });
            assert!(html.contains(if units == "si" { "h1 cm" } else { "h1 ft" }));
            if let Some(c) = &chrome {
                assert_eq!(
                    pdf_pages(c, &path, dir.path()),
                    1,
                    "{} prints to one A4 page",
                    path.display()
                );
            }
        }
    }
}

#[test]
fn grid_values_equal_the_rating_at_the_same_heads() {
    let dir = tempfile::tempdir().expect("tempdir");
    for station in demo_stations() {
        let st = Station::load(&station).expect("station");
        let model = RatingModel::new(st.structure).expect("model");
        for units in ["si", "us"] {
            let (_, html) = make_sheet(&station, dir.path(), units);
            let cells = cells(&html);
            assert!(cells.len() >= 40, "{}: {} cells", station.display(), cells.len());
            for (h, q, shown) in &cells {
                let exact = model.discharge_m3s(*h).expect("rated");
                assert!(rel(*q, exact) < 1e-12, "{} h = {h}", station.display());
                let in_units = match units {
                    "si" if html.contains("Discharge Q in L/s") => exact * 1000.0,
                    "si" => exact,
                    _ => exact / 0.028316846592,
                };
                assert_eq!(shown, &sig(in_units, 4), "{} h = {h}", station.display());
            }
        }
    }
    // one cell against the rate command itself
    let station = Path::new("ratings/ridgeway-canal-flume.toml");
    let (_, html) = make_sheet(station, dir.path(), "si");
    let (h, q, _) = cells(&html)[17].clone();
    let hs = format!("{h}");
    let doc = crate::common::rate_json(station, &["--from", &hs, "--to", &hs, "--step", "1"]);
    assert!(rel(q, doc["rows"][0]["discharge_m3s"].as_f64().expect("q")) < 1e-12);
}

#[test]
fn rows_outside_the_limits_are_hatched_and_named() {
    let dir = tempfile::tempdir().expect("tempdir");
    // a short throat rated high: H1/L > 0.7 at the top (Clemmens et al. 2001, from memory)
    let st = crate::common::short_throat_station(dir.path());
    let (_, html) = make_sheet(&st, dir.path(), "si");
    assert!(html.contains("<tr class=\"outside\">"));
    assert!(html.contains("H1/L&lt;=0.7"));
    assert!(html.contains("<tr class=\"ok\">"));
    assert!(
        html.contains("<td class=\"why\">1</td>"),
        "the limits column holds the key number"
    );
}

/// The words of the grid and of its key, as the HTML has them (tags dropped, entities read).
fn grid_words(html: &str) -> Vec<String> {
    let start = html.find("<table class=\"grid\">").expect("grid");
    let end = html[start..].find("</footer>").expect("footer") + start;
    let mut text = String::new();
    let mut in_tag = false;
    for c in html[start..end].chars() {
        match c {
            '<' => in_tag = true,
            '>' => {
                in_tag = false;
                text.push(' ');
            }
            _ if !in_tag => text.push(c),
            _ => {}
        }
    }
    let text = text
        .replace("&lt;", "<")
        .replace("&gt;", ">")
        .replace("&quot;", "\"")
        .replace("&amp;", "&");
    text.split_whitespace().map(str::to_string).collect()
}

/// The sheet fits A4 and US Letter with nothing clipped: printed with headless Chromium on both
/// papers, for a station whose rows break limits and for the demo canal flume, every word of the
/// grid and its key appears whole in the PDF's text (pdftotext), on one page.
#[test]
fn the_sheet_fits_a4_and_letter_with_nothing_clipped() {
    let Some(chrome) = chromium() else {
        eprintln!("chromium not installed: printing not checked here (.ci/run installs it)");
        return;
    };
    let dir = tempfile::tempdir().expect("tempdir");
    let short = crate::common::short_throat_station(dir.path());
    for station in [
        short.as_path(),
        Path::new("ratings/ridgeway-canal-flume.toml"),
        Path::new("ratings/mill-lane-outfall-vnotch.toml"),
        Path::new("ratings/kestrel-lateral-parshall.toml"),
    ] {
        for paper in ["a4", "letter"] {
            for units in ["si", "us"] {
                let stem = station.file_stem().expect("name").to_string_lossy();
                let out = dir.path().join(format!("sheet-{stem}-{paper}-{units}.html"));
                flumerate()
                    .arg("sheet")
                    .arg(station)
                    .args(["--paper", paper, "--units", units, "--date", "2026-12-02", "-o"])
                    .arg(&out)
                    .assert()
                    .success();
                let html = std::fs::read_to_string(&out).expect("html");
                let pdf = print_pdf(&chrome, &out, dir.path());
                let text = std::process::Command::new("pdftotext")
                    .arg(&pdf)
                    .arg("-")
                    .output()
                    .expect("pdftotext runs (poppler-utils; .ci/run installs it)");
                let text = String::from_utf8_lossy(&text.stdout).to_string();
                assert_eq!(text.matches('\u{c}').count(), 1, "{paper} {units}: one page");
                let printed: std::collections::HashSet<&str> = text.split_whitespace().collect();
                let missing: Vec<String> = grid_words(&html)
                    .into_iter()
                    .filter(|w| !printed.contains(w.as_str()))
                    .collect();
                assert!(
                    missing.is_empty(),
                    "{} on {paper} ({units}): words of the grid missing from the PDF: {missing:?}",
                    station.display()
                );
                let size = if paper == "a4" {
                    "A4 portrait"
                } else {
                    "letter portrait"
                };
                assert!(html.contains(size));
            }
        }
    }
}

/// No meaning by colour alone: the tailwater instruction names its column by its heading, and
/// rows outside the limits are hatched and struck through, not only tinted.
#[test]
fn the_sheet_says_in_words_what_its_shading_means() {
    let dir = tempfile::tempdir().expect("tempdir");
    let (_, html) = make_sheet(Path::new("ratings/ridgeway-canal-flume.toml"), dir.path(), "si");
    assert!(!html.contains("blue"), "no instruction by tint");
    assert!(html.contains("than the “max tail m” column"));
    assert!(html.contains("<th>max tail m</th>"));
    let short = crate::common::short_throat_station(dir.path());
    let (_, html) = make_sheet(&short, dir.path(), "si");
    assert!(html.contains("text-decoration: line-through"));
    assert!(html.contains("<b>Limits:</b> <b>1</b> H1/L&lt;=0.7"));
}

#[test]
fn a_sheet_by_staff_reading_rates_the_head_below_each_reading() {
    let dir = tempfile::tempdir().expect("tempdir");
    let text = std::fs::read_to_string("ratings/ridgeway-canal-flume.toml")
        .expect("demo")
        .replacen("[control]", "[staff]\ncrest_reading = 0.150\n\n[control]", 1);
    let station = crate::common::station_file(dir.path(), "staff.toml", &text);
    let out = dir.path().join("staff.html");
    flumerate()
        .arg("sheet")
        .arg(&station)
        .args(["--by", "staff", "--date", "2026-12-02", "-o"])
        .arg(&out)
        .assert()
        .success();
    let html = std::fs::read_to_string(&out).expect("sheet");
    assert!(html.contains("staff reading = row + column (head h1 = staff reading − 0.1500 m)"));
    assert!(html.contains("<th>staff cm</th>"));
    assert!(html.contains("the staff gauge reads 0.1500 m at crest level"));
    let model = RatingModel::new(Station::load(&station).expect("station").structure).expect("model");
    // every row: its label (staff cm) plus the column (mm) less 0.150 m is the cell's head
    for row in html.split("<tr class=\"").skip(1) {
        let label: f64 = row[row.find("<th>").expect("label") + 4..row.find("</th>").expect("end")]
            .parse()
            .expect("staff cm");
        for (h, q, _) in cells(row) {
            let (h, q) = (&h, &q);
            assert!(
                *h > label / 100.0 - 0.150 - 1e-9 && *h < label / 100.0 - 0.150 + 0.02,
                "{label}: {h}"
            );
            assert!(rel(*q, model.discharge_m3s(*h).expect("rated")) < 1e-12);
        }
    }
    assert!(cells(&html).len() >= 40);
}
