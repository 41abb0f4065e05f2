//! One self-contained HTML report of an echobench run, for the product team that must pick a
//! detector: which detectors meet their false-alarm target, with what detection probability,
//! range and latency, and at what cost.
//!
//! [`RunFolder::load`] reads a run folder (`summary.json`, `tallies.json`, and when present
//! `timing.json` and `suite.yaml`); [`render_html`] turns it, with an optional baseline run and
//! any extra sections, into one HTML page. The page holds, in order: the run's facts (suite,
//! seed, trials, hours of test signal, alarm logic, event tolerance); the cautions; the extra
//! sections; a ranking of the detectors that meet each target false-alarm rate (and why the
//! others do not); the event-level ROC (Pd against false alarms per hour on a log axis, from
//! the grid-threshold tallies pooled as in `roc.csv`, with the target rates and operating
//! points); the trial-level ROC of the maximum score with AUC ± SE; detection (or false alarms)
//! against each swept scene value with intervals; the latency distribution; false alarms by
//! nuisance; measured and declared cost; CFAR nominal against measured per-frame Pfa; the
//! comparison with the baseline; failures; and the suite text with each detector's parameters.
//!
//! **Design decision: the SVG is written by hand ([`plot`]), not with plotters.** The report
//! must be byte-identical for the same inputs, open offline with no font files, and let a
//! browser check that every plot drew data. Hand-written SVG gives all three directly: the
//! output is a pure function of the numbers (fixed decimal places, no generated ids), text is
//! left to the viewer's generic `sans-serif` font instead of being measured with a font file
//! at build time, and every data element carries `class="data"` for the self-check. What it
//! costs — axes, ticks, a legend, a bar chart — is a few hundred lines, tested below.
#![deny(missing_docs)]

mod data;
mod gate_section;
mod html;
pub mod plot;
mod run_folder;

pub use data::{fold_back_cut, grid_roc, trial_roc, GridRocPoint, TrialRoc};
pub use gate_section::gate_section;
pub use html::{render_html, Section};
pub use run_folder::{ReportError, RunFolder};
