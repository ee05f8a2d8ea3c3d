//! flumerate's integration tests: one test binary (every test target links the whole crate),
//! with one module per area. Values checked against outside sources name the source beside them.

mod common;
mod integration {
    pub mod cli;
    pub mod convert;
    pub mod field_trial;
    pub mod fuzz;
    pub mod gaugings;
    pub mod hostile;
    pub mod malformed;
    pub mod network;
    pub mod order;
    pub mod periods;
    pub mod properties;
    pub mod references;
    pub mod screening;
    pub mod sheet;
    pub mod standard;
    pub mod tables;
    pub mod tailwater;
    pub mod uncertainty;
}
