//! flumerate: head→discharge ratings for broad-crested weirs and long-throated flumes, computed
//! from a structure's surveyed dimensions by critical-flow theory, with their limits of
//! application and uncertainty, the tailwater (modular-limit) check, a printable field sheet, and
//! the conversion of logger stage records into discharge, volumes and plots. Physics is pure
//! functions on SI values ([`hydraulics`], [`rating`], [`uncertainty`], [`tailwater`]); files and
//! formats are at the edges ([`station`], [`series`], [`report`]).
//!
//! Computed ratings must be confirmed by field gaugings; follow local codes and licensed
//! professional practice where flows are used for compliance, billing or water rights.
//!
//! # Example
//!
//! ```
//! use flumerate::rating::RatingModel;
//! use flumerate::station::Station;
//!
//! let text = r#"
//! name = "example flume"
//! length_unit = "m"
//! [control]
//! shape = "rectangle"
//! width = 0.5
//! length = 1.0
//! [approach]
//! shape = "rectangle"
//! width = 1.0
//! sill_height = 0.1
//! [range]
//! min_head = 0.05
//! max_head = 0.4
//! "#;
//! let station = Station::from_toml_str(text, "example.toml")?;
//! let model = RatingModel::new(station.structure)?;
//! let q = model.discharge_m3s(0.2)?;
//! // ISO 4359 rectangular throat, δ* = 0.003 L (docs/references.md C3): 0.0754 m³/s within 0.15 %
//! assert!((q / 0.0754155493 - 1.0).abs() < 1.5e-3);
//! # Ok::<(), Box<dyn std::error::Error>>(())
//! ```
//!
//! Converting a small series of logger readings in code, without files (the station's
//! `[logger]` says how the readings read; [`series::pipeline`] also converts whole files):
//!
//! ```
//! use flumerate::series::pipeline::{ConvertOptions, Pipeline};
//! use flumerate::series::settings::LoggerOverrides;
//! use flumerate::station::Station;
//!
//! let text = "name = \"example flume\"\nlength_unit = \"m\"\n\
//!     [control]\nshape = \"rectangle\"\nwidth = 0.5\nlength = 1.0\n\
//!     [approach]\nshape = \"rectangle\"\nwidth = 1.0\nsill_height = 0.1\n\
//!     [range]\nmin_head = 0.05\nmax_head = 0.4\n\
//!     [logger]\ntimezone = \"UTC\"\nzero = 0.1\n";
//! let station = Station::from_toml_str(text, "example.toml")?;
//! let options = ConvertOptions::new(&station, &LoggerOverrides::default(), None, None)?;
//! let times = ["2026-05-01 00:00", "2026-05-01 00:15", "2026-05-01 00:30"];
//! let stages = vec![0.30, 0.31, -0.5]; // the last one far below the sensor: impossible
//! let out = Pipeline::new(&station, options)?.convert_readings(&times, vec![stages])?;
//! assert_eq!(out.rows.flag[0].as_str(), "ok");
//! assert_eq!(out.rows.flag[2].as_str(), "missing");
//! // two readings of 15 minutes each count in the day's volume
//! assert!((out.daily[0].covered_h - 0.5).abs() < 1e-12);
//! # Ok::<(), Box<dyn std::error::Error>>(())
//! ```

#![warn(missing_docs)]

pub mod files;
pub mod gaugings;
pub mod hydraulics;
pub mod interp;
pub mod network;
pub mod rating;
pub mod report;
pub mod series;
pub mod station;
pub mod tailwater;
pub mod uncertainty;
pub mod units;
pub mod verify;
