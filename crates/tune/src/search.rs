//! Successive halving over the sampled configurations (Jamieson & Talwalkar 2016).
//!
//! Rung `k` of `R` runs every surviving configuration of every entry as one detector entry
//! (`label#index`) of one `run_suite` call, on the suite with the tuning seed and
//! `share_k = last_rung_share / keep_one_in^(R-1-k)` of each scene's trial counts (rounded,
//! at least one). So the configurations of a rung share every trial (common random numbers),
//! and rung `k + 1` re-runs the first trials of rung `k` and more (same seed, same keys): the
//! survivors are ranked on more evidence, never on other luck. After each rung but the last,
//! each entry keeps the best `ceil(n / keep_one_in)` of its `n` configurations, and its
//! default configuration besides (a smoother criterion must not cut the one the objective
//! may prefer).
//!
//! Ranking (`docs/reference/tuning.md#t2`): first the configurations that keep the
//! latency limit; then the rung's criterion, the mean over products of either Pd at the
//! suite's first false-alarm target (at the last rung, and wherever every product's
//! calibration rooms resolve that rate at the rung's size) or the trial AUC; then the other
//! criterion; then the lower configuration index (the default first), so ties resolve the
//! same way everywhere.

use crate::space::{configurations, tuning_space, Configuration, Space};
use crate::{TuneError, TuneSettings};
use echobench_harness::runner::{run_suite, RunDetector, Tallies};
use echobench_harness::summary::{summarise, DetectorSummary, Estimate, Summary};
use echobench_suite::Suite;
use serde::{Deserialize, Serialize};
use std::collections::BTreeMap;

/// What a rung was judged on.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Criterion {
    /// Mean over products of the trial AUC (max score per trial, targets against rooms).
    TrialAuc,
    /// Mean over products of Pd at the false-alarm target.
    PdAtTarget,
}

impl Criterion {
    /// For tables.
    pub fn name(self) -> &'static str {
        match self {
            Criterion::TrialAuc => "trial AUC",
            Criterion::PdAtTarget => "Pd at target",
        }
    }
}

/// One rung.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct RungInfo {
    /// 0, 1, ...
    pub index: usize,
    /// Share of the suite's trial counts.
    pub share: f64,
    /// Test trials the rung ran (every configuration saw all of them).
    pub test_trials: u64,
    /// What it was ranked on.
    pub criterion: Criterion,
    /// Whether every product's calibration rooms resolved the target rate at this size
    /// (when not, the operating threshold is stricter than the target).
    pub resolved: bool,
    /// Configurations run (all entries).
    pub configurations: usize,
}

/// One configuration at one rung.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct HistoryRow {
    /// Rung index.
    pub rung: usize,
    /// Entry label.
    pub detector: String,
    /// Configuration index (0: the default).
    pub config: usize,
    /// Its searched values.
    pub params: BTreeMap<String, String>,
    /// Mean trial AUC over products.
    pub auc: Option<f64>,
    /// Mean Pd at the target over products.
    pub pd: Option<f64>,
    /// The rung criterion's value (`None` when it was not run).
    pub value: Option<f64>,
    /// Whether it keeps the latency limit (always, without one).
    pub within_latency: bool,
    /// Whether it went on to the next rung (at the last rung: whether it was chosen).
    pub kept: bool,
    /// Why it was not run (the plugin refused it); `None` when it ran.
    pub refused: Option<String>,
}

/// Per product, Pd at the operating point with its interval, and the median latency.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ProductPd {
    /// Product.
    pub product: String,
    /// Pd with its Wilson interval.
    pub pd: Estimate,
    /// Median latency at the operating point, s.
    pub latency_median_s: Option<f64>,
    /// The operating threshold.
    pub threshold: Option<f64>,
    /// Whether the calibration resolved the target rate.
    pub resolved: bool,
}

/// What the search found.
#[derive(Clone)]
pub struct SearchResult {
    /// Per entry, its space.
    pub spaces: Vec<Space>,
    /// Per entry, its configurations (index = configuration index).
    pub configurations: Vec<Vec<Configuration>>,
    /// Per entry, the chosen configuration's index.
    pub chosen: Vec<usize>,
    /// Per entry, the chosen configuration's figures at the last rung (tuning trials).
    pub tuning: Vec<Vec<ProductPd>>,
    /// The rungs.
    pub rungs: Vec<RungInfo>,
    /// Every configuration at every rung.
    pub history: Vec<HistoryRow>,
    /// The false-alarm target, per hour (the suite's first).
    pub target_per_hour: f64,
    /// The last rung's tallies (thresholds of every survivor, per product).
    pub last_tallies: Tallies,
}

/// The suite at `share` of its trial counts, with `seed`.
pub(crate) fn scaled(suite: &Suite, share: f64, seed: u64) -> Suite {
    let scale = |n: u64| {
        if n == 0 {
            0
        } else {
            ((n as f64 * share).round() as u64).max(1)
        }
    };
    let mut out = suite.clone();
    out.seed = seed;
    out.trials = scale(out.trials);
    out.calibration_trials = scale(out.calibration_trials);
    for scene in &mut out.scenes {
        // Recordings are cut into fixed trials; only synthetic scenes scale.
        if scene.capture.is_none() {
            scene.trials = scale(scene.trials);
            scene.calibration_trials = scale(scene.calibration_trials);
        }
    }
    out
}

/// The label of configuration `config` of `label` inside a rung's run.
pub(crate) fn rung_label(label: &str, config: usize) -> String {
    format!("{label}#{config}")
}

/// Per product, the figures of detector `label` in `summary`.
pub(crate) fn product_figures(summary: &Summary, label: &str) -> Vec<(ProductPd, Option<f64>)> {
    summary
        .detectors
        .iter()
        .filter(|d| d.label == label)
        .map(|d: &DetectorSummary| {
            let op = d.operating_points.first();
            (
                ProductPd {
                    product: d.product.clone(),
                    pd: op.map_or(
                        Estimate {
                            value: None,
                            low: None,
                            high: None,
                        },
                        |o| o.outcome.pd,
                    ),
                    latency_median_s: op.and_then(|o| o.latency_median_s),
                    threshold: op.map(|o| o.threshold),
                    resolved: op.is_some_and(|o| o.resolved),
                },
                d.trial_auc,
            )
        })
        .collect()
}

/// One configuration's standing in a rung, in ranking order of its fields.
struct Scored {
    /// Keeps the latency limit.
    within: bool,
    /// The rung's criterion.
    first: f64,
    /// The other criterion (breaks ties).
    second: f64,
    /// Configuration index (breaks the remaining ties, the default first).
    config: usize,
    auc: Option<f64>,
    pd: Option<f64>,
}

fn mean(values: impl Iterator<Item = f64>) -> Option<f64> {
    let (sum, n) = values.fold((0.0, 0usize), |(s, n), v| (s + v, n + 1));
    (n > 0).then(|| sum / n as f64)
}

/// Runs the search on `suite` (its tuning-seed copy) for every detector entry.
///
/// # Errors
/// A missing plugin, or a run the runner refuses.
pub fn search(
    suite: &Suite,
    plugins: &[std::sync::Arc<dyn echobench_core::detector::DetectorPlugin>],
    settings: &TuneSettings,
    note: &(dyn Fn(&str) + Sync),
) -> Result<SearchResult, TuneError> {
    settings.check()?;
    let seed = settings.seed_for(suite);
    let target_per_hour = suite
        .scoring
        .target_false_alarms_per_hour
        .first()
        .copied()
        .unwrap_or(1.0);
    let spaces = tuning_space(suite, plugins)?;
    let configs: Vec<Vec<Configuration>> = spaces
        .iter()
        .map(|s| configurations(s, suite, settings.configs, seed))
        .collect();
    let mut history = Vec::new();
    let mut rungs = Vec::new();
    // Refused configurations are listed once, at rung 0, and never run.
    let mut alive: Vec<Vec<usize>> = configs
        .iter()
        .enumerate()
        .map(|(e, list)| {
            list.iter()
                .filter_map(|c| match &c.resolved {
                    Ok(_) => Some(c.index),
                    Err(why) => {
                        history.push(HistoryRow {
                            rung: 0,
                            detector: spaces[e].entry.label.clone(),
                            config: c.index,
                            params: c.shown(),
                            auc: None,
                            pd: None,
                            value: None,
                            within_latency: false,
                            kept: false,
                            refused: Some(why.clone()),
                        });
                        None
                    }
                })
                .collect()
        })
        .collect();
    let mut last_tallies = None;
    let mut last_figures: Vec<BTreeMap<usize, Vec<ProductPd>>> =
        vec![BTreeMap::new(); spaces.len()];
    for k in 0..settings.rungs {
        let share = settings.rung_share(k);
        let rung_suite = scaled(suite, share, seed);
        let mut detectors = Vec::new();
        for (e, list) in alive.iter().enumerate() {
            for &c in list {
                let Ok(params) = &configs[e][c].resolved else {
                    continue;
                };
                detectors.push(RunDetector {
                    label: rung_label(&spaces[e].entry.label, c),
                    plugin: spaces[e].plugin.clone(),
                    params: params.clone(),
                    pinned: BTreeMap::new(),
                });
            }
        }
        note(&format!(
            "rung {} of {}: {} configurations on {:.3} of the suite's trials",
            k + 1,
            settings.rungs,
            detectors.len(),
            share
        ));
        let (tallies, _timing) = run_suite(&rung_suite, &detectors, None, &|_| {})
            .map_err(|e| TuneError::new(format!("rung {}: {e}", k + 1)))?;
        let summary = summarise(&tallies, &rung_suite);
        // The rung's criterion: Pd only where every product's calibration resolves the target.
        let resolved = summary
            .detectors
            .iter()
            .all(|d| d.operating_points.first().is_some_and(|o| o.resolved));
        // The last rung is ranked on the objective itself, whatever its size.
        let last = k + 1 == settings.rungs;
        let criterion = if resolved || last {
            Criterion::PdAtTarget
        } else {
            Criterion::TrialAuc
        };
        rungs.push(RungInfo {
            index: k,
            share,
            test_trials: tallies.test_trials,
            criterion,
            resolved,
            configurations: detectors.len(),
        });
        for (e, list) in alive.iter_mut().enumerate() {
            let mut scored: Vec<Scored> = list
                .iter()
                .map(|&c| {
                    let figures = product_figures(&summary, &rung_label(&spaces[e].entry.label, c));
                    let auc = mean(figures.iter().map(|(_, a)| a.unwrap_or(0.5)));
                    let pd = mean(figures.iter().map(|(p, _)| p.pd.value.unwrap_or(0.0)));
                    let within = settings.latency_limit_s.is_none_or(|limit| {
                        figures
                            .iter()
                            .all(|(p, _)| p.latency_median_s.is_none_or(|l| l <= limit))
                    });
                    let (first, second) = match criterion {
                        Criterion::PdAtTarget => (pd, auc),
                        Criterion::TrialAuc => (auc, pd),
                    };
                    last_figures[e].insert(c, figures.into_iter().map(|(p, _)| p).collect());
                    Scored {
                        within,
                        first: first.unwrap_or(0.0),
                        second: second.unwrap_or(0.0),
                        config: c,
                        auc,
                        pd,
                    }
                })
                .collect();
            scored.sort_by(|x, y| {
                y.within
                    .cmp(&x.within)
                    .then(y.first.total_cmp(&x.first))
                    .then(y.second.total_cmp(&x.second))
                    .then(x.config.cmp(&y.config))
            });
            let keep = if last {
                1
            } else {
                list.len().div_ceil(settings.keep_one_in.max(1)).max(1)
            };
            // The default goes on to every rung (never cut on a smoother criterion), so the
            // last rung weighs the search's best against it on the objective.
            let goes_on = |rank: usize, config: usize| rank < keep || (!last && config == 0);
            for (rank, s) in scored.iter().enumerate() {
                history.push(HistoryRow {
                    rung: k,
                    detector: spaces[e].entry.label.clone(),
                    config: s.config,
                    params: configs[e][s.config].shown(),
                    auc: s.auc,
                    pd: s.pd,
                    value: Some(s.first),
                    within_latency: s.within,
                    kept: goes_on(rank, s.config),
                    refused: None,
                });
            }
            *list = scored
                .iter()
                .enumerate()
                .filter(|(rank, s)| goes_on(*rank, s.config))
                .map(|(_, s)| s.config)
                .collect();
        }
        last_tallies = Some(tallies);
    }
    let chosen: Vec<usize> = alive
        .iter()
        .map(|l| l.first().copied().unwrap_or(0))
        .collect();
    let tuning = chosen
        .iter()
        .enumerate()
        .map(|(e, c)| last_figures[e].remove(c).unwrap_or_default())
        .collect();
    Ok(SearchResult {
        spaces,
        configurations: configs,
        chosen,
        tuning,
        rungs,
        history,
        target_per_hour,
        last_tallies: last_tallies.unwrap_or_else(|| Tallies {
            schema: echobench_harness::runner::SCHEMA_VERSION,
            suite: suite.name.clone(),
            seed,
            shards: Vec::new(),
            test_trials: 0,
            test_signal_ms: 0,
            detectors: Vec::new(),
        }),
    })
}
