//! Field gaugings: the fit against an independent scipy computation, recovery of a known factor
//! and zero over many seeds, bad rows named by line, and a calibration that every output
//! applies and names.

use std::path::Path;

use crate::common::{flumerate, read_csv};
use flumerate::gaugings::fit::{fit_factor, fit_factor_zero};
use flumerate::gaugings::{FitOutcome, GaugingCheck, GaugingsFile, Status};
use flumerate::rating::RatingModel;
use flumerate::station::Station;
use rand::{RngExt, SeedableRng};
use statrs::distribution::Normal;

fn data(name: &str) -> std::path::PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/data/gaugings")
        .join(name)
}

#[test]
fn the_fit_and_its_covariance_equal_scipy() {
    // tests/data/gaugings/fit_fixture.py: scipy.optimize.curve_fit (absolute sigma, analytic
    // Jacobian) on invented data from q = 1.7 h^1.55
    let rows = read_csv(&data("fit_data.csv"), b',');
    let col = |k: &str| -> Vec<f64> { rows.iter().map(|r| r[k].parse().expect("number")).collect() };
    let (h, q, s) = (col("head_m"), col("discharge_m3s"), col("sigma_m3s"));
    let rating = |h: f64| (h > 0.0).then(|| 1.7 * h.powf(1.55));
    let slope = |h: f64| (h > 0.0).then(|| 1.7 * 1.55 * h.powf(0.55));
    let fit = fit_factor_zero(&h, &q, &s, &rating, &slope).expect("fit");
    let e = &read_csv(&data("fit_expected.csv"), b',')[0];
    let v = |k: &str| -> f64 { e[k].parse().expect("number") };
    let close = |a: f64, b: f64| (a - b).abs() <= 1e-8 * b.abs();
    assert!(close(fit.factor, v("factor")), "{} vs {}", fit.factor, v("factor"));
    assert!(close(fit.zero_m, v("zero_m")), "{} vs {}", fit.zero_m, v("zero_m"));
    assert!(close(fit.covariance[0][0], v("var_factor")));
    assert!(close(fit.covariance[0][1], v("cov_factor_zero")));
    assert!(close(fit.covariance[1][1], v("var_zero")));
    assert!(close(fit.chi2, v("chi2")));
}

/// A rectangular test flume (invented) with the gaugings' uncertainty defaults.
fn station() -> Station {
    Station::from_toml_str(
        "name = \"gauging test flume (invented)\"\nlength_unit = \"m\"\n[control]\nshape = \"rectangle\"\nwidth = 0.5\nlength = 1.2\n[approach]\nshape = \"rectangle\"\nwidth = 1.2\nsill_height = 0.25\n[range]\nmin_head = 0.09\nmax_head = 0.5\n",
        "test.toml",
    )
    .expect("station")
}

#[test]
fn a_known_factor_and_zero_are_recovered_within_their_uncertainty() {
    let st = station();
    let model = RatingModel::new(st.structure.clone()).expect("model");
    let (mut within2, mut within4, mut both, seeds) = ([0usize; 2], [0usize; 2], 0usize, 200u64);
    let (mut f_only_within2, mut f_only) = (0usize, 0usize);
    for seed in 0..seeds {
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(seed);
        let f_true = rng.random_range(0.95..1.05);
        let dz_true = rng.random_range(-0.006..0.006);
        let noise = Normal::new(0.0, 0.025).expect("normal"); // 5 % at k = 2, as stated below
        let mut text = String::from("time,head_m,discharge_m3s,u95_pct\n");
        for k in 0..12 {
            let h = 0.10 + 0.035 * f64::from(k) + rng.random_range(0.0..0.01);
            let q = f_true * model.discharge_m3s(h + dz_true).expect("q") * (1.0 + rng.sample(noise));
            text.push_str(&format!("2026-0{}-1{k}T10:00:00Z,{h},{q},5\n", 1 + k % 9));
        }
        let file = GaugingsFile::parse(&text, &st).expect("parse");
        let check = GaugingCheck::compute(&st, &file).expect("check");
        if let FitOutcome::Both(fit) = &check.fit {
            both += 1;
            let (uf, uz) = fit.u_scaled();
            for (i, (err, u)) in [((fit.factor - f_true).abs(), uf), ((fit.zero_m - dz_true).abs(), uz)]
                .into_iter()
                .enumerate()
            {
                within2[i] += usize::from(err <= 2.0 * u);
                within4[i] += usize::from(err <= 4.0 * u);
            }
        }
        // with the zero right (dz = 0), the factor alone: linear least squares
        let heads: Vec<f64> = (0..12).map(|k| 0.1 + 0.035 * f64::from(k)).collect();
        let rated: Vec<f64> = heads.iter().map(|&h| model.discharge_m3s(h).expect("q")).collect();
        let gauged: Vec<f64> = rated.iter().map(|q| f_true * q * (1.0 + rng.sample(noise))).collect();
        let sigma: Vec<f64> = gauged.iter().map(|g| 0.025 * g).collect();
        let (f, u, _, _) = fit_factor(&gauged, &rated, &sigma).expect("factor");
        f_only += 1;
        f_only_within2 += usize::from((f - f_true).abs() <= 2.0 * u);
    }
    eprintln!("within 2u: {within2:?}, 4u: {within4:?}, factor alone: {f_only_within2} of {f_only}");
    // gaugings across the whole range separate f from dz every time
    assert_eq!(both, seeds as usize, "factor and zero told apart");
    // a 95 % interval holds the truth about 95 times in 100 (Binomial(200, 0.95): 190 ± 3)
    for i in 0..2 {
        assert!(within2[i] >= 180, "within 2u: {within2:?} of {seeds}");
        assert_eq!(within4[i], seeds as usize, "within 4u: {within4:?}");
    }
    assert!(f_only_within2 * 100 >= 90 * f_only, "{f_only_within2} of {f_only}");
}

#[test]
fn bad_rows_are_named_by_line_and_never_dropped_silently() {
    let st = station();
    let text = "time,head_m,discharge_m3s,method,note\n\
        2026-05-01T10:00:00Z,0.20,0.085,current-meter,fine\n\
        2026-05-02T10:00:00Z,-0.01,0.01,current-meter,below the crest\n\
        2026-05-03T10:00:00Z,0.25,0,current-meter,no flow\n\
        2026-05-04T10:00:00Z,0.65,0.40,adcp,above the range\n\
        2026-05-01T10:00:00Z,0.21,0.09,current-meter,same time as line 2\n\
        yesterday,0.3,0.15,current-meter,bad time\n\
        2026-05-06T10:00:00Z,0.3,0.15,echo-sounder,unknown method\n";
    let file = GaugingsFile::parse(text, &st).expect("parse");
    let refused: Vec<(usize, &str)> = file.refused.iter().map(|r| (r.line, r.reason.as_str())).collect();
    assert_eq!(refused.iter().map(|r| r.0).collect::<Vec<_>>(), [3, 4, 7, 8]);
    assert!(refused[0].1.contains("below the crest"), "{refused:?}");
    assert!(refused[1].1.contains("not positive"), "{refused:?}");
    assert!(refused[2].1.contains("yesterday"), "{refused:?}");
    assert!(refused[3].1.contains("echo-sounder"), "{refused:?}");
    let check = GaugingCheck::compute(&st, &file).expect("check");
    let status: Vec<(usize, Status)> = check.rows.iter().map(|r| (r.gauging.line, r.status)).collect();
    assert_eq!(
        status,
        [(2, Status::Used), (5, Status::OutsideRange), (6, Status::DuplicateTime)]
    );
    // every line of the file is either a row or refused
    assert_eq!(check.rows.len() + check.refused.len(), 7);
    // one usable gauging: only the factor, and the report says why
    assert!(matches!(check.fit, FitOutcome::FactorOnly { .. }));
    assert!(
        check.advice.iter().any(|a| a.contains("at least 3")),
        "{:?}",
        check.advice
    );
}

#[test]
fn a_written_calibration_loads_and_every_output_applies_and_names_it() {
    let dir = tempfile::tempdir().expect("tempdir");
    let calibrated = dir.path().join("ridgeway-calibrated.toml");
    let out = flumerate()
        .args([
            "gaugings",
            "ratings/ridgeway-canal-flume.toml",
            "examples/ridgeway-gaugings.csv",
            "--format",
            "json",
        ])
        .arg("--write-calibration")
        .arg(&calibrated)
        .output()
        .expect("run");
    // the invented gaugings depart from the rating (the demo flume reads low): exit 1
    assert_eq!(out.status.code(), Some(1), "{}", String::from_utf8_lossy(&out.stderr));
    let doc: serde_json::Value = serde_json::from_slice(&out.stdout).expect("json");
    for key in [
        "factor",
        "factor_u95_pct",
        "zero_offset_m",
        "zero_offset_u95_m",
        "mean_deviation_pct",
        "mean_deviation_u95_pct",
    ] {
        assert!(doc[key].is_number(), "{key}");
    }
    assert!(doc["gaugings"][0]["deviation_pct"].is_number());
    // examples/make_gaugings.py made them with f = 0.975 and dz = +4 mm: recovered within U95
    let (f, uf) = (
        doc["factor"].as_f64().expect("f"),
        doc["factor_u95_pct"].as_f64().expect("u"),
    );
    assert!((f - 0.975).abs() <= f * uf / 100.0, "{f} ± {uf} %");
    let (dz, uz) = (
        doc["zero_offset_m"].as_f64().expect("dz"),
        doc["zero_offset_u95_m"].as_f64().expect("u"),
    );
    assert!((dz - 0.004).abs() <= uz, "{dz} ± {uz}");
    let st = Station::load(&calibrated).expect("the copy loads");
    let c = st.structure.calibration.as_ref().expect("calibration");
    assert!((c.factor - f).abs() < 1e-6 && (c.zero_offset_m - dz).abs() < 1e-6);
    // the model applies Q = f · Q(h + dz)
    let plain = RatingModel::new(
        Station::load(Path::new("ratings/ridgeway-canal-flume.toml"))
            .expect("st")
            .structure,
    )
    .expect("model");
    let model = RatingModel::new(st.structure.clone()).expect("model");
    let q = model.discharge_m3s(0.3).expect("q");
    assert!((q - c.factor * plain.discharge_m3s(0.3 + c.zero_offset_m).expect("q")).abs() < 1e-12);
    // rate, tailwater and convert say so
    for args in [vec!["rate"], vec!["tailwater"]] {
        let o = flumerate().args(&args).arg(&calibrated).output().expect("run");
        let text = String::from_utf8_lossy(&o.stdout);
        assert!(
            text.contains("calibrated against 12 field gauging(s)"),
            "{args:?}: {text}"
        );
    }
    let series = dir.path().join("s.csv");
    let o = flumerate()
        .args(["convert", "examples/ridgeway-logger.csv", "--station"])
        .arg(&calibrated)
        .args(["--baro", "examples/ridgeway-baro.csv", "-o"])
        .arg(&series)
        .output()
        .expect("run");
    assert!(String::from_utf8_lossy(&o.stdout).contains("rating: calibrated against 12"));
    // the field sheet names it and still fits one A4 page
    let sheet = dir.path().join("sheet.html");
    flumerate()
        .arg("sheet")
        .arg(&calibrated)
        .args(["--date", "2026-12-02", "-o"])
        .arg(&sheet)
        .assert()
        .success();
    let html = std::fs::read_to_string(&sheet).expect("html");
    assert!(html.contains("calibrated against 12 field gauging(s)"));
    if let Some(chrome) = crate::integration::sheet::chromium() {
        let pdf = crate::integration::sheet::print_pdf(&chrome, &sheet, dir.path());
        let text = std::process::Command::new("pdftotext")
            .arg(&pdf)
            .arg("-")
            .output()
            .expect("pdftotext");
        let text = String::from_utf8_lossy(&text.stdout);
        assert_eq!(text.matches('\u{c}').count(), 1, "one page");
        assert!(text.contains("mean deviation"), "the last check on the sheet: {text}");
    }
}

#[test]
fn the_charts_show_the_gaugings_and_their_bars() {
    let dir = tempfile::tempdir().expect("tempdir");
    let (curve, dev) = (dir.path().join("c.svg"), dir.path().join("d.svg"));
    flumerate()
        .args([
            "gaugings",
            "ratings/ridgeway-canal-flume.toml",
            "examples/ridgeway-gaugings.csv",
            "--plot",
        ])
        .arg(&curve)
        .arg("--plot-deviation")
        .arg(&dev)
        .output()
        .expect("run");
    let c = std::fs::read_to_string(&curve).expect("curve");
    for words in [
        "rating from the dimensions",
        "calibrated: f · Q(h + dz)",
        "gauging with its 95 % bar",
        "head h1 (m above the crest)",
    ] {
        assert!(c.contains(words), "{words}");
    }
    let d = std::fs::read_to_string(&dev).expect("deviation");
    for words in [
        "mean deviation with its 95 % band",
        "days since the first gauging",
        "deviation (gauged",
    ] {
        assert!(d.contains(words), "{words}");
    }
    // twelve gaugings: twelve markers in each panel of the deviation chart
    assert_eq!(d.matches("<circle").count(), 24 + 2, "markers and the two legend marks");
}
