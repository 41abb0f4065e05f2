//! A run's results as the text people and tools read: the run folder's CSV tables and JSON
//! files, the console verdict, and the gate's terminal table, Markdown and JUnit XML.
//!
//! **Key design decision: rendering is pure and goes through encoders that escape.** Every
//! function here takes values the harness computed (tallies, summary, gate report) and
//! writes into any `io::Write` or returns a `String`; it computes no statistic and places no
//! file (`echobench-run-files` writes the run folder atomically, the command line prints and
//! places the gate's files). CSV goes through serde row structs and the `csv` crate (a label
//! with a comma or a quote is quoted, never shifting a column), JSON through `serde_json`,
//! JUnit XML through `quick-xml`'s writer; only the console and Markdown tables are laid out
//! by hand. It sits beside `echobench-run-files`, not inside it, because the console and the
//! gate's files are rendered where no run folder is written (a gate against a bare
//! `tallies.json`, `--markdown PATH`), and the report takes its calibration sentences from
//! here too.
#![deny(missing_docs)]

pub mod console;
pub mod csv_files;
pub mod gate;
pub mod json;
