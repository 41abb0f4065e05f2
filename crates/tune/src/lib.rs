//! Tuning: every detector searched the same way on trials of its own, then judged on fresh ones.
//!
//! Only thresholds are calibrated by an ordinary run; every other parameter stays at its
//! default, so a detector whose defaults happen to suit the suite wins. Here each detector's
//! tunable parameters (those its table marks with a `TuneRange`, read from `plugin.params()`,
//! so any plugin takes part without this crate knowing it) are searched on **tuning trials**
//! (the suite's scenes under a seed derived from the suite's seed with [`TUNING_SEED_SALT`]),
//! and the chosen configurations are **judged** in an ordinary run on the suite's own seed,
//! beside the defaults on the very same trials. The gap between a detector's Pd on the tuning
//! trials and on the held-out trials is the optimism of tuning.
//!
//! **Key design decision: the search is the runner, not a second runner.** Every
//! configuration of one rung is a separate detector entry (`energy#7`) of one `run_suite`
//! call on a copy of the suite with the rung's seed and trial counts, so all configurations
//! of a rung are scored on the same synthesized trials (common random numbers: their
//! differences are not trial luck), thresholds are cut on the runner's calibration trials and
//! Pd is counted on its test trials (never the same trials), and the result is bit-identical
//! for any thread count, as every run is. The search is a low-discrepancy sample of each
//! detector's space (Owen-scrambled Sobol points, `sobol_burley`) plus its default
//! configuration, cut by successive halving (Jamieson & Talwalkar 2016): each rung runs more
//! trials for fewer survivors (`docs/reference/tuning.md#t1`).
//!
//! The last rung is judged on the objective, Pd at the suite's first false-alarm target (the
//! product's operating point), as is any rung whose calibration time resolves that rate in
//! every room (`harness::summary::resolves`); the others on the trial AUC (Mann–Whitney),
//! where Pd at a rare rate is mostly noise. The summary says which rung used which. The
//! default configuration is carried to the last rung, so the choice is never worse than the
//! default on the tuning trials' objective. A suite's detector entries are shared by its products, so one
//! configuration is chosen per entry, maximising the mean over products.
//!
//! **Sharded by detector entry** (`shard`): entries never meet in the search, so shard K of N
//! tunes every N-th entry and the parts merge into the whole tuning's summary, bit for bit.
//!
//! **Leave one room out**: for each nuisance room in turn the search is repeated without it,
//! the thresholds are cut on the other rooms, and the configuration found is scored on that
//! room's fresh trials at those thresholds (pinned, as the gate pins a baseline's). A
//! detector tuned to the rooms it saw and failing in a new one shows up there.
#![deny(missing_docs)]

mod judge;
mod render;
mod search;
mod shard;
mod space;
pub mod suite_file;

pub use judge::{judge, leave_one_out, tuned_suite, JudgedFigure, LeftOutRoom, DEFAULT_SUFFIX};
pub use render::{history_svg, markdown, summary_json, tuning_table};
pub use search::{search, Criterion, HistoryRow, ProductPd, RungInfo, SearchResult};
pub use shard::{entries_of_shard, merge_parts};
pub use space::{configurations, tuning_space, Configuration, Space, TunedParam};

use echobench_core::detector::DetectorPlugin;
use echobench_harness::summary::Estimate;
use echobench_suite::Suite;
use serde::{Deserialize, Serialize};
use std::collections::BTreeMap;
use std::sync::Arc;

/// Version of the tuning summary's JSON.
pub const TUNE_SCHEMA_VERSION: u32 = 1;

/// The name mixed with the suite's seed to give the tuning trials' seed, so tuning trials
/// are other trials than the judging run's (which uses the suite's own seed).
pub const TUNING_SEED_SALT: &str = "echobench-tune/tuning-trials";

/// The seed of the tuning trials for a suite seed (`TUNING_SEED_SALT` hashed with it).
pub fn tuning_seed(suite_seed: u64) -> u64 {
    echobench_core::seed::hash_bytes(suite_seed, TUNING_SEED_SALT.as_bytes())
}

/// How much searching, and on what.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct TuneSettings {
    /// Sampled configurations per detector at the first rung (the default configuration is
    /// tried beside them); a power of two keeps the Sobol points balanced.
    pub configs: usize,
    /// After each rung, one configuration in this many goes on (rounded up, at least one).
    pub keep_one_in: usize,
    /// Rungs of successive halving (1: the sample alone, judged at the last rung's size).
    pub rungs: usize,
    /// The last rung's trial counts as a share of the suite's own (1: as many as the
    /// judging run); rung `k` of `R` runs `share / keep_one_in^(R-1-k)` of them.
    pub last_rung_share: f64,
    /// Seed of the tuning trials; `None`: [`tuning_seed`] of the suite's seed.
    pub tuning_seed: Option<u64>,
    /// A configuration whose median latency at the operating point exceeds this in any
    /// product is ranked below every one that keeps it, s.
    pub latency_limit_s: Option<f64>,
    /// Repeat the search once per nuisance room left out and score it there.
    pub leave_one_out: bool,
}

impl Default for TuneSettings {
    fn default() -> Self {
        TuneSettings {
            configs: 16,
            keep_one_in: 3,
            rungs: 3,
            last_rung_share: 1.0,
            tuning_seed: None,
            latency_limit_s: None,
            leave_one_out: true,
        }
    }
}

impl TuneSettings {
    /// The share of the suite's trial counts rung `k` runs.
    pub fn rung_share(&self, k: usize) -> f64 {
        let above = self.rungs.saturating_sub(1).saturating_sub(k) as i32;
        self.last_rung_share / (self.keep_one_in.max(1) as f64).powi(above)
    }

    /// The seed of the tuning trials for `suite`.
    pub fn seed_for(&self, suite: &Suite) -> u64 {
        self.tuning_seed.unwrap_or_else(|| tuning_seed(suite.seed))
    }

    /// Refuses settings that cannot run.
    ///
    /// # Errors
    /// No configurations, no rungs, a keep ratio below 2 with several rungs, or a share
    /// outside (0, 1].
    pub fn check(&self) -> Result<(), TuneError> {
        if self.configs == 0 || self.rungs == 0 {
            return Err(TuneError::new(
                "give at least one configuration and one rung",
            ));
        }
        if self.rungs > 1 && self.keep_one_in < 2 {
            return Err(TuneError::new(
                "with several rungs, keep one configuration in 2 or more",
            ));
        }
        if !(self.last_rung_share > 0.0 && self.last_rung_share <= 1.0) {
            return Err(TuneError::new("the last rung's share must be in (0, 1]"));
        }
        if self.configs > 4096 {
            return Err(TuneError::new("at most 4096 configurations per detector"));
        }
        Ok(())
    }
}

/// Why tuning could not be done.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[error("{0}")]
pub struct TuneError(pub String);

impl TuneError {
    /// An error with this message.
    pub fn new(message: impl Into<String>) -> TuneError {
        TuneError(message.into())
    }
}

/// One detector's tuning, from its defaults to its held-out verdict.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct DetectorTuning {
    /// Label in the suite (kept in the tuned suite).
    pub label: String,
    /// Plugin id.
    pub plugin: String,
    /// The parameters searched, with their ranges and scales.
    pub searched: Vec<TunedParam>,
    /// Tunable parameters not searched, and why (set by the suite, or at odds with it).
    pub not_searched: Vec<String>,
    /// The parameters as the suite gives them (the default configuration).
    pub default_params: BTreeMap<String, String>,
    /// The chosen configuration's searched values.
    pub tuned_params: BTreeMap<String, String>,
    /// Which configuration was chosen (0: the default).
    pub chosen: usize,
    /// Per product, the chosen configuration at the last rung (tuning trials).
    pub tuning: Vec<ProductPd>,
    /// Per product, the chosen configuration on the held-out trials (the judging run).
    pub held_out: Vec<ProductPd>,
    /// Per product, the default configuration on the same held-out trials.
    pub default_held_out: Vec<ProductPd>,
}

/// Everything a tuning produced: what the summary files show.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct TuneSummary {
    /// [`TUNE_SCHEMA_VERSION`].
    pub schema: u32,
    /// Suite name.
    pub suite: String,
    /// The suite's seed: the judging run's trials.
    pub suite_seed: u64,
    /// The tuning trials' seed.
    pub tuning_seed: u64,
    /// The settings used.
    pub settings: TuneSettings,
    /// The rungs: share of trials, test trials, criterion.
    pub rungs: Vec<RungInfo>,
    /// Per detector entry.
    pub detectors: Vec<DetectorTuning>,
    /// Every configuration at every rung.
    pub history: Vec<HistoryRow>,
    /// Leave one room out: per (room, detector).
    pub left_out: Vec<LeftOutRoom>,
    /// The false-alarm target the search and the verdict are at, per hour.
    pub target_per_hour: f64,
    /// The shard this summary is a part of (`tune --shard K/N`); empty for a whole tuning,
    /// merged parts included ([`merge_parts`]).
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub shards: Vec<echobench_harness::runner::Shard>,
}

/// Searches, judges and (when asked) leaves each room out: the whole of `echobench tune`
/// except writing files. `note` hears what stage is running.
///
/// # Errors
/// Bad settings, a detector with no plugin, or a run the runner refuses.
pub fn tune(
    suite: &Suite,
    plugins: &[Arc<dyn DetectorPlugin>],
    settings: &TuneSettings,
    note: &(dyn Fn(&str) + Sync),
) -> Result<(TuneSummary, Suite), TuneError> {
    settings.check()?;
    let found = search(suite, plugins, settings, note)?;
    note("judging the tuned detectors on the suite's own trials");
    let (tuned_suite, detectors) = judge(suite, plugins, &found)?;
    let left_out = if settings.leave_one_out {
        leave_one_out(suite, plugins, settings, note)?
    } else {
        Vec::new()
    };
    Ok((
        TuneSummary {
            schema: TUNE_SCHEMA_VERSION,
            suite: suite.name.clone(),
            suite_seed: suite.seed,
            tuning_seed: settings.seed_for(suite),
            settings: settings.clone(),
            rungs: found.rungs.clone(),
            detectors,
            history: found.history.clone(),
            left_out,
            target_per_hour: found.target_per_hour,
            shards: Vec::new(),
        },
        tuned_suite,
    ))
}

/// A [`ProductPd`]'s Pd as text: `0.83 [0.71, 0.91]`, or `–`.
pub fn pd_text(pd: &Estimate) -> String {
    match (pd.value, pd.low, pd.high) {
        (Some(v), Some(l), Some(h)) => format!("{v:.2} [{l:.2}, {h:.2}]"),
        (Some(v), _, _) => format!("{v:.2}"),
        _ => "–".to_string(),
    }
}

/// The tuned suite's file name in the output folder.
pub const TUNED_SUITE_FILE: &str = "tuned-suite.yaml";
/// The summary as JSON.
pub const SUMMARY_JSON_FILE: &str = "tune-summary.json";
/// The summary as Markdown.
pub const SUMMARY_MD_FILE: &str = "tune-summary.md";
/// The search history plot.
pub const HISTORY_SVG_FILE: &str = "tune-history.svg";

/// Writes the tuning's files into `dir` (a staged output folder), each atomically: the tuned
/// suite, the summary as JSON and Markdown, the history plot, and `scene_files` (name,
/// text) the tuned suite names beside it.
///
/// # Errors
/// An I/O error, or a summary that cannot be encoded.
pub fn write_outputs(
    dir: &std::path::Path,
    summary: &TuneSummary,
    tuned_yaml: &str,
    scene_files: &[(String, String)],
) -> std::io::Result<()> {
    use echobench_core::atomic::write_atomically;
    use std::io::Write;
    let json = summary_json(summary).map_err(std::io::Error::other)?;
    let files: Vec<(String, String)> = [
        (TUNED_SUITE_FILE.to_string(), tuned_yaml.to_string()),
        (SUMMARY_JSON_FILE.to_string(), json + "\n"),
        (SUMMARY_MD_FILE.to_string(), markdown(summary)),
        (HISTORY_SVG_FILE.to_string(), history_svg(summary)),
    ]
    .into_iter()
    .chain(scene_files.iter().cloned())
    .collect();
    for (name, text) in files {
        write_atomically(&dir.join(&name), |w| w.write_all(text.as_bytes()))?;
    }
    Ok(())
}

/// Reads a tuning's summary back from its JSON (`tune-summary.json` of an output folder),
/// for the report.
///
/// # Errors
/// Unreadable or not a tuning summary of this schema.
pub fn read_summary(path: &std::path::Path) -> Result<TuneSummary, TuneError> {
    let text = std::fs::read_to_string(path)
        .map_err(|e| TuneError::new(format!("{}: {e}", path.display())))?;
    let summary: TuneSummary = serde_json::from_str(&text)
        .map_err(|e| TuneError::new(format!("{}: {e}", path.display())))?;
    if summary.schema != TUNE_SCHEMA_VERSION {
        return Err(TuneError::new(format!(
            "{}: tuning summary schema {} (this echobench reads {TUNE_SCHEMA_VERSION})",
            path.display(),
            summary.schema
        )));
    }
    Ok(summary)
}
