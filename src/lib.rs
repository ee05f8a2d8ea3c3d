//! flumerate: head→discharge ratings for broad-crested weirs and long-throated flumes.
pub mod hydraulics;
pub mod rating;
pub mod report;
pub mod series;
pub mod station;
pub mod tailwater;
pub mod uncertainty;
pub mod units;
