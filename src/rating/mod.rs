//! Ratings of critical-flow controls: the head→discharge model ([`model`]), its limits of
//! application ([`limits`]), rating tables ([`table`]) and the fitted rating equation ([`fit`]).

pub mod equation;
pub mod fit;
pub mod limits;
pub mod model;
pub mod table;

pub use equation::{PrintedEquation, RatingEquation};
pub use fit::{fit_power_law, PowerLaw};
pub use model::{LossMethod, Perturbation, RatingError, RatingModel, RatingPoint, Structure, StructureKind};
pub use table::{head_sequence, sensible_step, HeadRangeError, RatingRow, RatingTable};
