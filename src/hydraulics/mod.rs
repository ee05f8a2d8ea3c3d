//! The hydraulics core: pure functions on SI values (metres, seconds, m³/s).
//!
//! Nothing here reads files or prints. Section geometry is in [`section`], open-channel flow
//! relations (specific energy, critical flow, alternate depths, Froude number, Manning normal
//! depth) in [`flow`], and the bracketing root finders they share in [`roots`].

pub mod flow;
pub mod roots;
pub mod section;

pub use flow::{
    alternate_depths_m, critical_at_energy, critical_depths_m, froude_number, normal_depth_m, normal_depths_m,
    specific_energy_m, AlternateDepths, CriticalState, FlowError, STANDARD_GRAVITY_M_S2,
};
pub use section::{GeometryError, PointsSection, Section};
