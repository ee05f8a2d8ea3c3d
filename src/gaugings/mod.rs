//! Field gaugings: a station's rating checked against measured discharges, and calibrated from
//! them. [`read`] reads a gaugings file, [`analysis`] checks the rating and fits the coefficient
//! factor and the gauge-zero error, [`fit`] holds the statistics as pure functions.

pub mod analysis;
pub mod fit;
pub mod read;

pub use analysis::{CheckRow, FitOutcome, GaugingCheck, Status};
pub use read::{Gauging, GaugingsError, GaugingsFile, Refused};
