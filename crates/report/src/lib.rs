//! One self-contained HTML report of an echobench run, for the product team that must pick a
//! detector: which detectors meet their false-alarm target, with what detection probability,
//! range and latency, and at what cost.
//!
//! [`RunFolder::load`] (from `echobench-run-files`, the one reader of run folders) reads a
//! run folder (`summary.json`, `tallies.json`, and when present `timing.json` and
//! `suite.yaml`); [`render_html`] turns it, with an optional baseline run and
//! any extra sections, into one HTML page. The page holds the run's facts (suite, seed, trials,
//! hours of test signal, alarm logic, event tolerance, products) and the cautions, the extra
//! sections about the whole run, then **one part per product**, then the suite text.
//!
//! **Design decision: a product is the unit of the page.** A product is one sensor module
//! with its own scenes and its own thresholds, so nothing is pooled across products: each
//! part opens with the product's module, scenes, rooms, threshold rule and what its
//! calibration resolved (the console's statements), and every section inside it is computed
//! on that product's detectors alone, keyed by (product, label): a ranking per target rate;
//! the **detection table** (target scene variants × detectors: Pd with its interval, count
//! and median latency; Pd 0 stands out; each cell below Pd 0.5 carries the harness's computed
//! miss reason); the **false-alarm table** (rooms × detectors: the room's test rate with its
//! interval, its calibration rate at the operating threshold, the room that set the
//! threshold marked); the product's extra sections (a gallery); the event-level ROC (drawn
//! over its monotone part); the trial-level ROC with AUC ± SE; detection against each swept
//! value; latency; false alarms by nuisance; cost; CFAR nominal against measured per-frame
//! Pfa; the comparison with the baseline; failures; the detectors' parameters. Text from
//! user files (product names, scene ids, reasons) is escaped by default (the private `markup` module: text and attribute values are escaped, markup must be a literal or go through its one named raw method).
//!
//! **Design decision: the SVG is written through `echobench_svg` ([`plot`]), not a plotting
//! library.** The report must be byte-identical for the same inputs, open offline with no font
//! files, and let a browser check that every plot drew data. An SVG writer gives all three
//! directly: the output is a pure function of the numbers (fixed decimal places, no generated
//! ids), text is left to the viewer's generic `sans-serif` font instead of being measured with
//! a font file at build time, every text and attribute value is escaped by the writer, and
//! every data element carries `class="data"` for the self-check. The spectrogram and the
//! explanation pictures draw through the same crate.
#![deny(missing_docs)]

mod data;
mod events_part;
mod gate_section;
mod html;
mod markup;
pub mod plot;
mod presence_part;
mod product_part;
mod rare_part;
mod tuning_section;
mod zone_part;

pub use data::{fold_back_cut, grid_roc, trial_roc, GridRocPoint, TrialRoc};
pub use echobench_run_files::{RunFileError, RunFolder};
pub use gate_section::gate_section;
pub use html::{render_html, Section};
pub use tuning_section::tuning_section;
