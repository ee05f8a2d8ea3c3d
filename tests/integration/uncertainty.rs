//! Uncertainty propagation against docs/references.md C4 and C5 (computed by an independent numpy/scipy
//! program from the same model: the rectangular ISO 4359-style flume of §2.2 with its Cd held as
//! an input, Cv solved from the approach velocity).

use flumerate::rating::Perturbation;
use flumerate::rating::RatingModel;
use flumerate::station::Station;
use flumerate::uncertainty::{monte_carlo, period_uncertainty, Emulator, GumModel, Inputs, McOptions, SeriesReading};

/// The §8.2 flume: b = 0.5 m, L = 1.0 m, B = 1.0 m, p = 0.1 m, Cd fixed at the ISO 4359 value
/// for h = 0.2 m (0.9658535721, docs/references.md C3); u(Cd) = 1 % (±2 % at k = 2), u(b) = 0.5 mm
/// (±0.2 % at k = 2), gauge zero ±1 mm rectangular, one reading u = 1 mm (±2 mm at k = 2).
const FLUME_8_2: &str = r#"
name = "docs/references.md C4 flume"
length_unit = "m"
[control]
shape = "rectangle"
width = 0.5
length = 1.0
coefficient = 0.9658535721
[approach]
shape = "rectangle"
width = 1.0
sill_height = 0.1
[range]
min_head = 0.05
max_head = 0.3
[uncertainty]
coefficient_pct = 2.0
dimension_pct = 0.2
zero_mm = 1.0
zero_distribution = "rectangular"
head_mm = 2.0
"#;

fn setup(text: &str) -> (RatingModel, Inputs) {
    let st = Station::from_toml_str(text, "test.toml").expect("valid station");
    let inputs = Inputs::from_station(&st.uncertainty, &st.structure);
    (RatingModel::new(st.structure).expect("model"), inputs)
}

#[test]
fn sensitivities_and_gum_uncertainty_of_the_reference_flume() {
    let (model, inputs) = setup(FLUME_8_2);
    let gum = GumModel::new(&model, inputs).expect("gum");
    let p = gum.point(0.2).expect("point");
    // docs/references.md C3/C4 (independent computation): Q0 = 0.0754155493 m³/s
    assert!(
        (p.discharge_m3s / 0.0754155493 - 1.0).abs() < 1e-9,
        "{}",
        p.discharge_m3s
    );
    // docs/references.md C4 (independent computation): c_Cd = c_b = 1.04994, c_h = 1.51665 (not 1 and 1.5)
    assert!(
        (p.sensitivity_coefficient() - 1.04994).abs() < 1e-4,
        "{}",
        p.sensitivity_coefficient()
    );
    assert!(
        (p.sensitivity_dimension() - 1.04994).abs() < 1e-4,
        "{}",
        p.sensitivity_dimension()
    );
    assert!(
        (p.sensitivity_head(0.2) - 1.51665).abs() < 1e-4,
        "{}",
        p.sensitivity_head(0.2)
    );
    // docs/references.md C4 (independent computation): GUM u_c(Q)/Q = 1.3712 %, U95 = 2.742 %
    assert!((p.u_rel * 100.0 - 1.3712).abs() < 1e-4, "{}", p.u_rel * 100.0);
    assert!((p.u95_pct() - 2.742).abs() < 1e-3);
    let shares: f64 = p.shares.iter().sum();
    assert!((shares - 1.0).abs() < 1e-12);
}

#[test]
fn monte_carlo_agrees_with_the_reference_run() {
    let (model, inputs) = setup(FLUME_8_2);
    let opts = McOptions {
        draws: 200_000,
        seed: 7,
        threads: 2,
    };
    let row = monte_carlo(&model, &inputs, &[0.2], &opts).expect("mc")[0].expect("finite");
    // docs/references.md C4 (independent computation, 400 000 draws, seed 20240601): relative standard deviation
    // 1.3675 %, 95 % interval [0.0734036, 0.0774448] m³/s. Our draws differ, so allow the sampling
    // error of a 200 000-draw run.
    let rel_sd = row.sd_m3s / row.mean_m3s * 100.0;
    assert!((rel_sd - 1.3675).abs() < 0.02, "MC relative sd {rel_sd} %");
    assert!((row.low_m3s / 0.0734036 - 1.0).abs() < 1.5e-3, "{}", row.low_m3s);
    assert!((row.high_m3s / 0.0774448 - 1.0).abs() < 1.5e-3, "{}", row.high_m3s);
}

#[test]
fn iso_form_is_recovered_when_the_approach_velocity_vanishes() {
    // docs/references.md C4: X_C = 2 %, X_b = 0.2 %, X_h = 1 mm / 0.2 m = 0.5 % gives
    // X_Q = √(2² + 0.2² + (1.5·0.5)²) = 2.1453 % (ISO 5168 form, sensitivities 1, 1, 1.5). A very
    // large, deep approach makes Cv = 1 so the model reduces to that form.
    let text = FLUME_8_2
        .replace("width = 1.0\nsill_height = 0.1", "width = 1000.0\nsill_height = 100.0")
        .replace("zero_mm = 1.0\nzero_distribution = \"rectangular\"", "zero_mm = 0.0")
        .replace("head_mm = 2.0", "head_mm = 1.0");
    let (model, inputs) = setup(&text);
    let p = GumModel::new(&model, inputs).expect("gum").point(0.2).expect("point");
    assert!((p.u95_pct() - 2.1453).abs() < 1e-4, "X_Q = {}", p.u95_pct());
}

#[test]
fn a_day_of_readings_keeps_systematic_and_random_parts_apart() {
    // docs/references.md C5 (independent computation): 96 readings at 15 min, h = 0.15 + 0.05·sin(2πi/96), on the
    // §8.2 flume; u(Cd) = 1 %, gauge zero ±1 mm rectangular, reading u = 1 mm; no width term.
    let text = FLUME_8_2.replace("dimension_pct = 0.2", "dimension_pct = 0.0");
    let (model, inputs) = setup(&text);
    let gum = GumModel::new(&model, inputs.clone()).expect("gum");
    let readings: Vec<SeriesReading> = (0..96)
        .map(|i| {
            let h = 0.15 + 0.05 * (2.0 * std::f64::consts::PI * i as f64 / 96.0).sin();
            SeriesReading::from_point(&gum.point(h).expect("point"), 900.0, true)
        })
        .collect();
    let p = period_uncertainty(&inputs, &readings);
    let close = |got: f64, want: f64, tol: f64| assert!((got - want).abs() <= tol, "{got} vs {want}");
    close(p.volume_m3, 4304.77, 0.005);
    close(p.u_coefficient_m3, 44.85, 0.005);
    close(p.u_zero_m3, 24.40, 0.005);
    close(p.u_random_m3, 4.35, 0.005);
    close(p.u_total_m3(), 51.25, 0.005);
    close(p.u_total_m3() / p.volume_m3 * 100.0, 1.19, 0.005);
    // treating the reading noise as correlated would overstate it about √96-fold
    let ratio = p.u_random_if_correlated_m3 / p.u_random_m3;
    assert!(
        ratio > 0.97 * 96f64.sqrt() && ratio <= 96f64.sqrt() + 1e-9,
        "ratio {ratio}"
    );
}

#[test]
fn gaps_and_flagged_rows_add_neither_volume_nor_uncertainty() {
    let (model, inputs) = setup(FLUME_8_2);
    let gum = GumModel::new(&model, inputs.clone()).expect("gum");
    let pt = gum.point(0.2).expect("point");
    let all: Vec<SeriesReading> = (0..10).map(|_| SeriesReading::from_point(&pt, 60.0, true)).collect();
    let mut gappy = all.clone();
    gappy[3].included = false;
    gappy[7].included = false;
    let (a, b) = (period_uncertainty(&inputs, &all), period_uncertainty(&inputs, &gappy));
    assert_eq!((b.readings, b.excluded), (8, 2));
    assert!((b.excluded_s - 120.0).abs() < 1e-12);
    assert!((b.volume_m3 / a.volume_m3 - 0.8).abs() < 1e-12);
    assert!((b.mean_discharge_m3s() / a.mean_discharge_m3s() - 1.0).abs() < 1e-12);
}

#[test]
fn monte_carlo_repeats_exactly_for_a_seed_on_one_or_two_threads() {
    let (model, inputs) = setup(FLUME_8_2);
    let heads: Vec<f64> = (1..=20).map(|i| 0.015 * i as f64).collect();
    let run = |threads: usize, seed: u64| {
        monte_carlo(
            &model,
            &inputs,
            &heads,
            &McOptions {
                draws: 5000,
                seed,
                threads,
            },
        )
        .expect("mc")
    };
    let (a, b, c) = (run(1, 11), run(2, 11), run(2, 11));
    assert_eq!(a, b, "1 and 2 threads differ");
    assert_eq!(b, c, "two runs differ");
    assert_ne!(run(2, 12), a, "a different seed gives different draws");
}

#[test]
fn emulator_matches_the_exact_model() {
    // the Monte Carlo emulator against exact solves within ±3 standard uncertainties
    for file in [
        "ridgeway-canal-flume",
        "mill-lane-effluent-flume",
        "fernhill-drain-survey",
        "alder-brook-weir",
    ] {
        let st = Station::load(std::path::Path::new(&format!(
            "{}/ratings/{file}.toml",
            env!("CARGO_MANIFEST_DIR")
        )))
        .expect("demo station");
        let inputs = Inputs::from_station(&st.uncertainty, &st.structure);
        let model = RatingModel::new(st.structure.clone()).expect("model");
        let emu = Emulator::new(&model, &inputs, st.range.min_head_m, st.range.max_head_m).expect("emulator");
        let (uc, ub) = (inputs.coefficient.standard, inputs.dimension.standard);
        let mut worst: f64 = 0.0;
        for (i, (fc, fb)) in [(-3.0, 2.0), (1.0, -3.0), (2.5, 2.5), (0.0, 0.0), (-1.3, 0.7)]
            .iter()
            .enumerate()
        {
            let exact = model
                .perturbed(&Perturbation {
                    cd_factor: 1.0 + fc * uc,
                    width_factor: 1.0 + fb * ub,
                })
                .expect("perturbed");
            let w = emu.weights(fc * uc, fb * ub);
            for k in 0..25 {
                let h = st.range.min_head_m
                    + (st.range.max_head_m - st.range.min_head_m) * (k as f64 + 0.37 * i as f64) / 25.0;
                let q = exact.discharge_m3s(h).expect("q");
                worst = worst.max((emu.eval(&w, h) / q - 1.0).abs());
            }
        }
        assert!(worst < 1e-6, "{file}: emulator error {worst:e}");
    }
}
