//! Logger series: reading exports, correcting heads, converting to discharge, summarising.
pub mod convert;
pub mod correct;
pub mod csv_fast;
pub mod dense;
pub mod edits;
pub mod output;
pub mod parallel;
pub mod pipeline;
pub mod read;
pub mod screen;
pub mod settings;
pub mod side;
pub mod time;
pub mod timeline;
