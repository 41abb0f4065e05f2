//! Running and scoring a loaded suite: the parallel runner (calibration, then test trials
//! into integer tallies that merge exactly), each trial's signal (synthesized or recorded),
//! event scoring of alarms, the summary with its miss reasons, the presence verdict, the
//! rare-rate tail fits, rare events, and the regression gate's statistics.
//!
//! **Key design decision: a run keeps counts, never trials.** Everything a reader sees is a
//! pure function of [`runner::Tallies`] (integer counts and nanoseconds), so shards add up
//! bit for bit and any thread count gives the same result. Suites come in loaded and
//! checked (`echobench-suite`), with each detector's parameters already resolved; this
//! crate reads no suite file and writes no output (`echobench-render` renders its results,
//! `echobench-run-files` places them).
#![deny(missing_docs)]

pub mod events;
pub mod gate;
mod planned;
pub mod presence_summary;
pub mod rare_events;
pub mod rare_rates;
pub mod runner;
pub mod signal;
pub mod summary;
pub mod zone_walks;
