//! Modular limit and tailwater check.

use crate::common::{flumerate, station_file};
use flumerate::hydraulics::{normal_depth_m, Section, STANDARD_GRAVITY_M_S2 as G};
use flumerate::station::TailwaterSpec;
use flumerate::tailwater::{max_tailwater_energy_m, villemonte_ratio, Tailwater};
use predicates::prelude::*;

const CANAL: &str = "ratings/ridgeway-canal-flume.toml";

#[test]
fn exit_loss_balance_reproduces_the_reference_table() {
    // docs/references.md C6 (independent computation, friction ignored): rectangular throat b = 0.5 m at H1 = 0.25 m,
    // v_j = v_c, tailwater channel 1.0 m wide with its bed 0.1 m below the crest
    let h1 = 0.25;
    let yc = 2.0 * h1 / 3.0;
    let vc = (G * yc).sqrt();
    let q = 0.5 * yc * vc;
    assert!((vc - 1.2785).abs() < 1e-4 && (q - 0.1065377).abs() < 1e-7);
    let tw = Tailwater::new(
        TailwaterSpec::Channel {
            bed_below_crest_m: 0.1,
            section: Section::Rectangle { width_m: 1.0 },
            manning_n: 0.03,
            bed_slope: 0.001,
        },
        G,
    );
    for (xi, ml) in [
        (1.2, 0.7957),
        (1.0, 0.8261),
        (0.8, 0.8580),
        (0.6, 0.8913),
        (0.4, 0.9261),
    ] {
        let h2 = max_tailwater_energy_m(h1, vc, xi, 0.0, q, Some(&tw), G);
        assert!(
            (h2 / h1 - ml).abs() < 1e-4,
            "ξ = {xi}: ML = {} (expected {ml})",
            h2 / h1
        );
    }
}

#[test]
fn villemonte_reproduces_the_reference_values() {
    // docs/references.md C7 (computed from Villemonte 1947, Qs/Qfree = [1 − S^n]^0.385)
    let table = [
        (0.3, 0.9332243, 0.9807258),
        (0.5, 0.8453860, 0.9278426),
        (0.7, 0.7123306, 0.8161846),
        (0.8, 0.6163070, 0.7210020),
        (0.9, 0.4769662, 0.5693773),
        (0.95, 0.3670941, 0.4425621),
    ];
    for (s, r15, r25) in table {
        assert!((villemonte_ratio(s, 1.5) - r15).abs() < 1e-6, "S = {s}, n = 1.5");
        assert!((villemonte_ratio(s, 2.5) - r25).abs() < 1e-6, "S = {s}, n = 2.5");
    }
}

#[test]
fn manning_normal_depth_against_hand_computation() {
    // analytic: Manning's formula Q = A·R^(2/3)·√S/n (Chow 1959 eq. 5-6) evaluated by hand at a
    // chosen depth; the solver must return that depth.
    let (n, s) = (0.025f64, 0.0009f64);
    // trapezoid b = 2 m, z = 1.5, y = 0.8 m: A = (2 + 1.5·0.8)·0.8 = 2.56 m²,
    // P = 2 + 2·0.8·√(1 + 1.5²) = 4.884441 m
    let (a, p) = (2.56f64, 2.0 + 1.6 * 3.25f64.sqrt());
    let q = a * (a / p).powf(2.0 / 3.0) * s.sqrt() / n;
    let trap = Section::Trapezoid {
        bottom_width_m: 2.0,
        side_slope: 1.5,
    };
    assert!((normal_depth_m(&trap, q, n, s).expect("depth") - 0.8).abs() < 1e-9);
    // circle D = 1 m half full: A = π/8, R = D/4 = 0.25 m
    let a = std::f64::consts::PI / 8.0;
    let q = a * 0.25f64.powf(2.0 / 3.0) * s.sqrt() / n;
    let pipe = Section::Circle { diameter_m: 1.0 };
    assert!((normal_depth_m(&pipe, q, n, s).expect("depth") - 0.5).abs() < 1e-9);
    // and a pipe asked for more than it can carry flowing part-full is an error, not a guess
    assert!(normal_depth_m(&pipe, 100.0 * q, n, s).is_err());
}

fn drowned_from(station: &std::path::Path) -> (Option<i32>, serde_json::Value) {
    let out = flumerate()
        .arg("tailwater")
        .arg(station)
        .args(["--format", "json", "--step", "0.01"])
        .output()
        .expect("run");
    let doc: serde_json::Value = serde_json::from_slice(&out.stdout).expect("json");
    (out.status.code(), doc)
}

#[test]
fn the_canal_flume_drowns_and_a_higher_crest_moves_the_limit_up() {
    let (code, doc) = drowned_from(std::path::Path::new(CANAL));
    assert_eq!(code, Some(1), "drowned range gives exit 1");
    let from = doc["drowned_bands"][0]["from_discharge_m3s"]
        .as_f64()
        .expect("drowned from");
    let raise = doc["verdict"]["crest_raise_m"].as_f64().expect("a crest raise exists");
    assert!(doc["verdict_text"]
        .as_str()
        .expect("text")
        .contains("DROWNED: drowned from"));
    assert!(raise > 0.0 && raise < 0.5, "{raise}");

    // raise the crest by 20 mm: the approach bed and tailwater bed stay where they are, so both
    // heights below the crest grow by 0.02 m
    let dir = tempfile::tempdir().expect("tempdir");
    let text = std::fs::read_to_string(CANAL)
        .expect("read")
        .replace("sill_height = 0.20", "sill_height = 0.22")
        .replace("bed_below_crest = 0.20", "bed_below_crest = 0.22");
    let raised = station_file(dir.path(), "raised.toml", &text);
    let (code, doc) = drowned_from(&raised);
    assert_eq!(code, Some(1));
    let from_raised = doc["drowned_bands"][0]["from_discharge_m3s"]
        .as_f64()
        .expect("still drowns at the top");
    assert!(
        from_raised > from,
        "raising the crest moves the drowning discharge up: {from} → {from_raised}"
    );

    // raising it by the amount the check asks for makes the whole range modular
    let r = raise + 0.001;
    let text = std::fs::read_to_string(CANAL)
        .expect("read")
        .replace("sill_height = 0.20", &format!("sill_height = {}", 0.20 + r))
        .replace("bed_below_crest = 0.20", &format!("bed_below_crest = {}", 0.20 + r));
    let fixed = station_file(dir.path(), "fixed.toml", &text);
    let (code, doc) = drowned_from(&fixed);
    assert_eq!(code, Some(0), "{}", doc["verdict_text"]);
    assert_eq!(doc["verdict"]["modular"], true);
}

#[test]
fn a_modular_station_exits_0_and_plots() {
    let dir = tempfile::tempdir().expect("tempdir");
    let (png, svg) = (dir.path().join("tw.png"), dir.path().join("tw.svg"));
    for p in [&png, &svg] {
        flumerate()
            .args(["tailwater", "ratings/alder-brook-weir.toml", "--plot"])
            .arg(p)
            .assert()
            .success()
            .stdout(predicate::str::contains("verdict: modular"));
    }
    let bytes = std::fs::read(&png).expect("png written");
    assert_eq!(&bytes[..8], b"\x89PNG\r\n\x1a\n");
    let text = std::fs::read_to_string(&svg).expect("svg written");
    assert!(text.contains("<svg") && text.contains("discharge Q (m³/s)"));
}

#[test]
fn tailwater_columns_follow_the_design() {
    let out = flumerate()
        .args(["tailwater", CANAL, "--format", "csv"])
        .output()
        .expect("run");
    let text = String::from_utf8(out.stdout).expect("utf-8");
    assert!(text.starts_with("discharge_m3s,head_m,tailwater_m,submergence,modular_limit,modular,max_tailwater_m"));
    // rate carries the largest modular tailwater level on every row
    let out = flumerate()
        .args(["rate", CANAL, "--format", "csv"])
        .output()
        .expect("run");
    let text = String::from_utf8(out.stdout).expect("utf-8");
    assert!(text.lines().next().expect("header").contains("max_tailwater_m"));
}

#[test]
fn bad_tailwater_inputs_are_clear_errors() {
    let dir = tempfile::tempdir().expect("tempdir");
    // a table that does not reach the top of the rating's discharges
    let text = std::fs::read_to_string("ratings/alder-brook-weir.toml").expect("read");
    let start = text.find("[tailwater]").expect("tailwater table");
    let end = text[start..].find("[range]").expect("range") + start;
    let short = format!(
        "{}[tailwater]\ntable = [[0.0, -0.4], [0.5, 0.1]]\n\n{}",
        &text[..start],
        &text[end..]
    );
    let st = station_file(dir.path(), "short.toml", &short);
    flumerate()
        .arg("tailwater")
        .arg(&st)
        .assert()
        .code(2)
        .stderr(predicate::str::contains("nothing is extrapolated"))
        .stderr(predicate::str::contains("extend [tailwater] table"));
    // no tailwater at all
    flumerate()
        .args(["tailwater", "ratings/mill-lane-effluent-flume.toml"])
        .assert()
        .code(2)
        .stderr(predicate::str::contains("no [tailwater]"));
    // n <= 0, slope <= 0 and a non-monotone table are rejected when the file is read
    for (file, key) in [
        ("tailwater-n-zero", "tailwater.manning_n"),
        ("tailwater-slope-negative", "tailwater.bed_slope"),
        ("tailwater-table-not-monotone", "tailwater.table"),
    ] {
        flumerate()
            .args(["tailwater", &format!("tests/data/bad/{file}.toml")])
            .assert()
            .code(2)
            .stderr(predicate::str::contains(key));
    }
}

#[test]
fn a_modular_limit_in_the_file_overrides_the_energy_balance() {
    let dir = tempfile::tempdir().expect("tempdir");
    let text = std::fs::read_to_string(CANAL)
        .expect("read")
        .replace("expansion = 6 ", "expansion = 6\nmodular_limit = 0.6 ");
    assert!(text.contains("modular_limit = 0.6"));
    let st = station_file(dir.path(), "ml.toml", &text);
    let (_, doc) = drowned_from(&st);
    for row in doc["rows"].as_array().expect("rows") {
        assert!((row["modular_limit"].as_f64().expect("ml") - 0.6).abs() < 1e-12);
    }
    let (_, base) = drowned_from(std::path::Path::new(CANAL));
    let (a, b) = (
        doc["drowned_bands"][0]["from_discharge_m3s"].as_f64().expect("drowns"),
        base["drowned_bands"][0]["from_discharge_m3s"].as_f64().expect("drowns"),
    );
    assert!(a < b, "a lower modular limit drowns earlier: {a} vs {b}");
}

#[test]
fn submerged_estimate_is_offered_only_where_villemonte_applies() {
    use flumerate::rating::RatingModel;
    use flumerate::station::Station;
    use flumerate::tailwater::submerged_discharge_estimate_m3s;
    let load = |f: &str| {
        let st = Station::load(std::path::Path::new(f)).expect("station");
        RatingModel::new(st.structure).expect("model")
    };
    let (weir, flume) = (load("ratings/alder-brook-weir.toml"), load(CANAL));
    // docs/references.md C7: S = 0.8, n = 1.5 gives 0.6163070
    let q = submerged_discharge_estimate_m3s(&weir, 1.0, 0.8, 0.7, 1.5).expect("weir, drowned, S <= 0.9");
    assert!((q - 0.6163070).abs() < 1e-6);
    assert!(
        submerged_discharge_estimate_m3s(&weir, 1.0, 0.6, 0.7, 1.5).is_none(),
        "modular: no estimate"
    );
    assert!(
        submerged_discharge_estimate_m3s(&weir, 1.0, 0.95, 0.7, 1.5).is_none(),
        "beyond 0.90"
    );
    assert!(
        submerged_discharge_estimate_m3s(&flume, 1.0, 0.8, 0.7, 1.5).is_none(),
        "not for flumes"
    );
}

fn tailwater_json(station: &std::path::Path, step: &str) -> serde_json::Value {
    let out = flumerate()
        .arg("tailwater")
        .arg(station)
        .args(["--format", "json", "--step", step])
        .output()
        .expect("run");
    serde_json::from_slice(&out.stdout).expect("json")
}

/// The drowning verdict comes from the crossing, found by root finding, never from a table row:
/// the demo canal flume gives the same band at three steps (to 0.1 mm of head), and its onset
/// lies between table rows, below the first drowned row of the coarsest table.
#[test]
fn the_drowning_onset_does_not_move_with_the_step() {
    let mut onsets = Vec::new();
    for step in ["0.005", "0.01", "0.03"] {
        let doc = tailwater_json(std::path::Path::new(CANAL), step);
        let bands = doc["drowned_bands"].as_array().expect("bands");
        assert_eq!(bands.len(), 1, "step {step}");
        assert_eq!(bands[0]["to_top_of_range"], true, "upward");
        onsets.push((
            bands[0]["from_head_m"].as_f64().expect("head"),
            bands[0]["from_discharge_m3s"].as_f64().expect("q"),
        ));
        // the onset row is in the table, noted, and the row just below it is modular
        let rows = doc["rows"].as_array().expect("rows");
        let k = rows
            .iter()
            .position(|r| {
                r["note"]
                    .as_str()
                    .unwrap_or("")
                    .starts_with("drowning starts just above")
            })
            .expect("onset row");
        assert_eq!(rows[k]["modular"], true, "the onset is given on the safe side");
        assert_eq!(rows[k + 1]["modular"], false);
        assert!(doc["verdict_text"].as_str().expect("text").contains("upward"));
    }
    for (h, q) in &onsets[1..] {
        assert!((h - onsets[0].0).abs() <= 1e-4, "onset {h} vs {}", onsets[0].0);
        assert!((q - onsets[0].1).abs() / onsets[0].1 < 1e-3);
    }
    // at a 0.03 m step the first drowned table row lies well above the onset
    let doc = tailwater_json(std::path::Path::new(CANAL), "0.03");
    let first_row = doc["rows"]
        .as_array()
        .expect("rows")
        .iter()
        .find(|r| r["modular"] == false && r["note"] == "")
        .and_then(|r| r["head_m"].as_f64())
        .expect("a drowned row");
    assert!(first_row > onsets[0].0 + 0.005, "{first_row} vs onset {}", onsets[0].0);
}

/// A tabulated tailwater that backs up only over middle discharges (a culvert that chokes and
/// then overtops a bypass, invented): one band in the middle, reported from–to, not "upward",
/// the same at three steps; and the crest-raise advice clears it.
#[test]
fn a_tabulated_tailwater_drowns_only_a_middle_band() {
    let dir = tempfile::tempdir().expect("tempdir");
    let text = std::fs::read_to_string(CANAL)
        .expect("read")
        .replace(
            "[tailwater]\nbed_below_crest = 0.20\nshape = \"trapezoid\"\nwidth = 0.60\nside_slope = 1.5\nmanning_n = 0.028\nbed_slope = 0.0004",
            "[tailwater]\ntable = [[0.0, -0.20], [0.08, 0.05], [0.12, 0.25], [0.30, 0.30], [0.60, 0.50]]",
        );
    assert!(
        text.contains("table = [[0.0"),
        "the demo's tailwater table was replaced"
    );
    let st = station_file(dir.path(), "middle.toml", &text);
    let mut first: Option<(f64, f64)> = None;
    for step in ["0.005", "0.01", "0.025"] {
        let doc = tailwater_json(&st, step);
        let bands = doc["drowned_bands"].as_array().expect("bands");
        assert_eq!(bands.len(), 1, "one band at step {step}: {bands:?}");
        let b = &bands[0];
        assert_eq!(b["to_top_of_range"], false);
        assert_eq!(b["from_bottom_of_range"], false);
        let (from, to) = (
            b["from_head_m"].as_f64().expect("from"),
            b["to_head_m"].as_f64().expect("to"),
        );
        assert!(from < to);
        let text = doc["verdict_text"].as_str().expect("text");
        assert!(
            text.contains("drowned from") && text.contains(" to ") && !text.contains("upward"),
            "{text}"
        );
        match first {
            None => first = Some((from, to)),
            Some((f0, t0)) => {
                assert!((from - f0).abs() <= 1e-4 && (to - t0).abs() <= 1e-4, "step {step}");
            }
        }
        assert!(doc["verdict"]["crest_raise_m"].as_f64().expect("raise") > 0.0);
    }
}

/// A tailwater energy above the upstream energy is said in words, not shown as a bare ratio.
#[test]
fn a_tailwater_above_the_upstream_energy_is_said_in_words() {
    let dir = tempfile::tempdir().expect("tempdir");
    let text = std::fs::read_to_string(CANAL).expect("read").replace(
        "[tailwater]\nbed_below_crest = 0.20\nshape = \"trapezoid\"\nwidth = 0.60\nside_slope = 1.5\nmanning_n = 0.028\nbed_slope = 0.0004",
        "[tailwater]\ntable = [[0.0, 0.50], [1.0, 0.90]]",
    );
    let st = station_file(dir.path(), "backed-up.toml", &text);
    let out = flumerate().arg("tailwater").arg(&st).output().expect("run");
    let text = String::from_utf8_lossy(&out.stdout);
    assert!(text.contains("> 1"), "{text}");
    assert!(text.contains("the structure no longer controls the flow"), "{text}");
    assert!(!text.lines().any(|l| l
        .split_whitespace()
        .nth(3)
        .is_some_and(|v| v.parse::<f64>().is_ok_and(|x| x > 1.0))));
}
