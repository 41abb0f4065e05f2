//! One call for a runner: candidates, stability table, automatic threshold, fit, the
//! thresholds for target rates, and the fitted rate curve with its band for a report.

use crate::alarm::TailAccumulator;
use crate::error::TailError;
use crate::fit::{Estimate, TailFit, Verdict};
use crate::threshold::{candidate_thresholds, choose_from, StabilityRow, ThresholdRule};

/// How an extrapolation ended.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub enum Status {
    /// A threshold was chosen and its fit passed the goodness-of-fit test.
    Fitted,
    /// Too few clusters above the floor for the rule's minimum: use the brute-force bound.
    TooFewClusters,
    /// No candidate threshold satisfied the rule (unstable estimates, or every fit rejected,
    /// untestable or on the boundary): use the brute-force bound.
    NoStableThreshold,
    /// No candidate qualified and the lowest one with enough clusters was too coarse for a
    /// continuous tail ([`Verdict::Coarse`], [`crate::lattice`]): use the brute-force bound
    /// and say why.
    CoarseScores {
        /// The lattice step of its excesses, if one was found.
        step: Option<f64>,
        /// Its distinct excesses.
        distinct: usize,
    },
}

/// The threshold for one target rate.
#[derive(Debug, Clone, PartialEq)]
pub struct TargetThreshold {
    /// The target false-alarm rate, per hour.
    pub rate_per_h: f64,
    /// The threshold with its interval, or why there is none (a rate at or above the
    /// exceedance rate at u is read from the counts, not the tail).
    pub threshold: Result<Estimate, TailError>,
}

/// Everything a report needs about one detector on one noise scene.
#[derive(Debug, Clone)]
pub struct Extrapolation {
    /// How it ended.
    pub status: Status,
    /// The stability table (empty with [`Status::TooFewClusters`]).
    pub table: Vec<StabilityRow>,
    /// The chosen row of the table.
    pub chosen: Option<usize>,
    /// The fit at the chosen threshold.
    pub fit: Option<TailFit>,
    /// One entry per target rate (empty unless [`Status::Fitted`]).
    pub targets: Vec<TargetThreshold>,
}

/// Chooses a threshold among `candidate_count` candidates by `rule`, fits there, and finds
/// the threshold of every rate in `target_rates_per_h` at `rule.confidence`.
///
/// # Errors
/// Only for bad arguments (a confidence or level out of range, `candidate_count < 2`,
/// `rule.min_exceedances` below [`crate::MIN_EXCESSES`]); a tail that cannot be extrapolated
/// is an `Ok` with a fall-back [`Status`].
pub fn extrapolate(
    acc: &TailAccumulator,
    rule: &ThresholdRule,
    candidate_count: usize,
    target_rates_per_h: &[f64],
) -> Result<Extrapolation, TailError> {
    let candidates = match candidate_thresholds(acc, candidate_count, rule.min_exceedances) {
        Ok(c) => c,
        Err(TailError::TooFewExceedances { .. }) => {
            return Ok(Extrapolation {
                status: Status::TooFewClusters,
                table: Vec::new(),
                chosen: None,
                fit: None,
                targets: Vec::new(),
            })
        }
        Err(e) => return Err(e),
    };
    let (table, chosen) = choose_from(acc, &candidates, rule)?;
    let Some(i) = chosen else {
        let coarse = table
            .iter()
            .find(|r| r.exceedances >= rule.min_exceedances && r.verdict.is_some())
            .and_then(|r| match r.verdict {
                Some(Verdict::Coarse { step, distinct }) => {
                    Some(Status::CoarseScores { step, distinct })
                }
                _ => None,
            });
        return Ok(Extrapolation {
            status: coarse.unwrap_or(Status::NoStableThreshold),
            table,
            chosen,
            fit: None,
            targets: Vec::new(),
        });
    };
    let fit = TailFit::from_accumulator(acc, table[i].threshold, rule.shape_floor)?;
    debug_assert_eq!(fit.verdict(rule.gof_level), Verdict::Usable);
    let targets = target_rates_per_h
        .iter()
        .map(|&rate_per_h| TargetThreshold {
            rate_per_h,
            threshold: fit.threshold_for_rate(rate_per_h, rule.confidence),
        })
        .collect();
    Ok(Extrapolation {
        status: Status::Fitted,
        table,
        chosen,
        fit: Some(fit),
        targets,
    })
}

impl Extrapolation {
    /// The fitted rate per hour at each of `levels` (those at or above the fit threshold)
    /// with its interval: the curve and band a report draws over the brute-force points.
    /// Empty without a fit. Each point costs one joint profile (tens of milliseconds for a
    /// few hundred exceedances).
    ///
    /// # Errors
    /// When `confidence` is not in (0, 1).
    pub fn rate_band(
        &self,
        levels: &[f64],
        confidence: f64,
    ) -> Result<Vec<(f64, Estimate)>, TailError> {
        let Some(fit) = &self.fit else {
            return Ok(Vec::new());
        };
        levels
            .iter()
            .filter(|&&x| x >= fit.threshold())
            .map(|&x| Ok((x, fit.rate_interval(x, confidence)?)))
            .collect()
    }
}
