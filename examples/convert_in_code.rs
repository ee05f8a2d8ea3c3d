//! flumerate as a library: rate a station and convert a small series of logger readings in code,
//! with no files. The station and the readings are invented for this example.
//!
//! Run: `cargo run --example convert_in_code`

use flumerate::rating::RatingModel;
use flumerate::series::pipeline::{ConvertOptions, Pipeline};
use flumerate::series::settings::LoggerOverrides;
use flumerate::station::Station;

/// An invented rectangular flume whose logger reads the depth over its sensor, in metres, on
/// UTC; the sensor reads 0.120 m with the water level with the crest.
const STATION: &str = r#"
name = "Example flume (invented)"
length_unit = "m"
[control]
shape = "rectangle"
width = 0.5
length = 1.0
[approach]
shape = "rectangle"
width = 1.0
sill_height = 0.15
[range]
min_head = 0.07
max_head = 0.5
[logger]
timezone = "UTC"
time_format = "%Y-%m-%d %H:%M"
zero = 0.120
"#;

fn main() -> Result<(), Box<dyn std::error::Error>> {
    let station = Station::from_toml_str(STATION, "example.toml")?;

    // a few rows of the rating
    let model = RatingModel::new(station.structure.clone())?;
    println!("rating of {}:", station.name);
    for head_m in [0.1, 0.2, 0.3, 0.4] {
        let p = model.point(head_m)?;
        println!(
            "  h1 = {head_m:.2} m  →  Q = {:.5} m³/s (Cd {:.4}, Cv {:.4})",
            p.discharge_m3s, p.cd, p.cv
        );
    }

    // a day of hourly readings, one of them failed (-9999 would be a sentinel in a file; here NaN)
    let times: Vec<String> = (0..24).map(|h| format!("2026-05-01 {h:02}:00")).collect();
    let times: Vec<&str> = times.iter().map(String::as_str).collect();
    let stages: Vec<f64> = (0..24)
        .map(|h| {
            if h == 13 {
                f64::NAN
            } else {
                0.32 + 0.05 * (h as f64 / 24.0 * std::f64::consts::TAU).sin()
            }
        })
        .collect();
    let options = ConvertOptions::new(&station, &LoggerOverrides::default(), None, None)?;
    let converted = Pipeline::new(&station, options)?.convert_readings(&times, vec![stages])?;

    println!("\nconverted:");
    for k in [0, 6, 13, 18] {
        let r = &converted.rows;
        println!(
            "  line {:>2}: head {:.3} m, Q {:.5} m³/s (95 %: {:.5} to {:.5}), {}",
            r.line[k],
            r.head_m[k],
            r.discharge_m3s[k],
            r.low_m3s[k],
            r.high_m3s[k],
            r.flag[k].as_str()
        );
    }
    let day = &converted.daily[0];
    println!(
        "\n{}: volume {:.1} m³ ± {:.1} m³ (95 %), {:.1} h of 24 covered by readings flagged ok or dry",
        day.label, day.volume_m3, day.volume_u95_m3, day.covered_h
    );
    println!("\nComputed ratings must be confirmed by field gaugings.");
    Ok(())
}
