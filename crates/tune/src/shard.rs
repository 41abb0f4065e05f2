//! Tuning split across machines: shard K of N tunes every N-th detector entry of the suite
//! (its search, its judging and its rooms left out), and the parts merge into the summary of
//! one unsharded tuning.
//!
//! **Key design decision: split by detector entry, not by trial.** Successive halving needs a
//! rung's every trial before it can choose the survivors, so splitting a rung's trials would
//! need a merge between rungs. Entries, though, never meet: each configuration's tallies are
//! its own (the runner feeds every detector the same trial and keeps their counts apart), an
//! entry's Sobol points are scrambled by its own label, and its survivors are chosen among its
//! own configurations. So the entries of a part are searched, judged and left out exactly as
//! in the whole tuning, and the merge only puts the parts' rows back in suite order (tested:
//! bit-identical). The one figure shared by entries, whether a rung's calibration resolves the
//! target, is compared across parts, and a difference is refused rather than hidden.

use crate::{TuneError, TuneSummary};
use echobench_harness::runner::Shard;
use echobench_suite::Suite;

/// The suite with only shard `shard`'s detector entries: entry `i` (0-based, in suite
/// order) belongs to shard `i mod N + 1`.
pub fn entries_of_shard(suite: &Suite, shard: Shard) -> Suite {
    let mut part = suite.clone();
    part.detectors = suite
        .detectors
        .iter()
        .enumerate()
        .filter(|(i, _)| (*i as u64) % shard.count == shard.index - 1)
        .map(|(_, d)| d.clone())
        .collect();
    part
}

/// The summaries of every shard of one split, merged into the summary of the whole tuning of
/// `suite`.
///
/// # Errors
/// Parts of another suite, seed or settings, a shard missing or given twice, or parts whose
/// rungs differ in anything but the number of configurations run.
pub fn merge_parts(suite: &Suite, parts: Vec<TuneSummary>) -> Result<TuneSummary, TuneError> {
    let Some(first) = parts.first() else {
        return Err(TuneError::new("no parts to merge"));
    };
    let count = first.shards.first().map_or(0, |s| s.count);
    let mut indices: Vec<u64> = Vec::new();
    for part in &parts {
        let same = part.suite == first.suite
            && part.suite_seed == first.suite_seed
            && part.tuning_seed == first.tuning_seed
            && part.settings == first.settings
            && part.target_per_hour.to_bits() == first.target_per_hour.to_bits();
        if !same {
            return Err(TuneError::new(
                "the parts are of different suites, seeds or settings: merge the parts of one split",
            ));
        }
        match part.shards.as_slice() {
            [s] if s.count == count => indices.push(s.index),
            _ => {
                return Err(TuneError::new(
                    "a part is not one shard of the same split (tune with --shard K/N)",
                ))
            }
        }
    }
    if first.suite != suite.name {
        return Err(TuneError::new(format!(
            "the parts tuned suite `{}`, not `{}`",
            first.suite, suite.name
        )));
    }
    indices.sort_unstable();
    if !indices.iter().copied().eq(1..=count) {
        let have: Vec<String> = indices.iter().map(|k| format!("{k}/{count}")).collect();
        return Err(TuneError::new(format!(
            "the parts hold shards [{}]: give every shard of the split once",
            have.join(", ")
        )));
    }
    let mut merged = first.clone();
    merged.shards.clear();
    for (k, rung) in merged.rungs.iter_mut().enumerate() {
        rung.configurations = 0;
        for part in &parts {
            let other = part.rungs.get(k).ok_or_else(|| {
                TuneError::new("the parts ran different numbers of rungs: tune without shards")
            })?;
            let agree = other.index == rung.index
                && other.share.to_bits() == rung.share.to_bits()
                && other.test_trials == rung.test_trials
                && other.criterion == rung.criterion
                && other.resolved == rung.resolved;
            if !agree {
                return Err(TuneError::new(format!(
                    "the parts ranked rung {} differently (criterion or resolution): tune without shards",
                    k + 1
                )));
            }
            rung.configurations += other.configurations;
        }
    }
    // Rows back in the order one tuning writes them: entries in suite order; the history by
    // rung, the configurations a plugin refused first; rooms left out by product and room.
    let entry = |label: &str| {
        suite
            .detectors
            .iter()
            .position(|d| d.label == label)
            .unwrap_or(usize::MAX)
    };
    let scene = |id: &str| suite.scenes.iter().position(|s| s.id == id);
    let product = |name: &str| suite.products.iter().position(|p| p.name == name);
    merged.detectors = parts.iter().flat_map(|p| p.detectors.clone()).collect();
    merged.detectors.sort_by_key(|d| entry(&d.label));
    merged.history = parts.iter().flat_map(|p| p.history.clone()).collect();
    merged
        .history
        .sort_by_key(|h| (h.rung, h.refused.is_none(), entry(&h.detector)));
    merged.left_out = parts.iter().flat_map(|p| p.left_out.clone()).collect();
    merged
        .left_out
        .sort_by_key(|r| (product(&r.product), scene(&r.room), entry(&r.detector)));
    Ok(merged)
}
