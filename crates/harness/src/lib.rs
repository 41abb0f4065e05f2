//! Suites, the parallel runner, scoring and aggregation.
#![deny(missing_docs)]

pub mod events;
pub mod gate;
pub mod presence_summary;
pub mod rare_events;
pub mod rare_rates;
pub mod runner;
pub mod signal;
pub mod suite;
pub mod suite_file;
pub mod summary;
