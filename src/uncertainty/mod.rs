//! Uncertainty of ratings, readings and volumes: the inputs and their defaults ([`inputs`]),
//! first-order GUM propagation through the whole rating model ([`gum`]), Monte Carlo per JCGM 101
//! ([`mc`]), and series, periods and volumes with systematic and random parts kept apart
//! ([`series`]).
//!
//! References: JCGM 100:2008 (GUM); JCGM 101:2008 (Monte Carlo supplement); ISO 5168:2005 for
//! the hydrometric form of the same rules; docs/references.md C4 and C5 for the check values.

pub mod gum;
pub mod inputs;
pub mod mc;
pub mod series;

pub use gum::{GumModel, GumPoint, COVERAGE_FACTOR};
pub use inputs::{Input, Inputs, INPUT_NAMES};
pub use mc::{departure_from_gum, monte_carlo, Emulator, McError, McOptions, McRow};
pub use series::{period_uncertainty, reading_band, BandWeights, PeriodAccumulator, PeriodUncertainty, SeriesReading};
