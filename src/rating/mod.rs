//! Ratings of critical-flow controls: the head→discharge model ([`model`]), its limits of
//! application ([`limits`]), rating tables ([`table`]), the fitted rating equation ([`fit`]) and
//! the calibration against field gaugings ([`calibration`]).

pub mod breakpoints;
pub mod calibration;
pub mod equation;
pub mod fit;
pub mod limits;
pub mod model;
pub mod standard;
pub mod table;

pub use calibration::Calibration;
pub use equation::{PrintedEquation, RatingEquation};
pub use fit::{fit_power_law, PowerLaw};
pub use model::{LossMethod, Perturbation, RatingError, RatingModel, RatingPoint, Structure, StructureKind};
pub use standard::{ParshallSize, StandardRule};
pub use table::{head_sequence, sensible_step, HeadRangeError, RatingRow, RatingTable};
