//! Threshold choice: the stability table a report plots, and an automatic rule.
//!
//! # The table (Coles 2001, §4.3.1 and §4.3.4)
//!
//! For each candidate threshold `u` (clusters re-formed at each `u`): the number of cluster
//! maxima above it; the shape ξ with its profile-likelihood interval; the *modified scale*
//! `σ* = σ_u − ξ u`, which does not depend on `u` once the GPD holds (Coles 2001, §4.3.4),
//! with a delta-method interval from the observed information
//! (`Var σ* = Var σ − 2u Cov(σ, ξ) + u² Var ξ`, ibid.); the mean excess `mean(max − u)`
//! with a normal interval (Coles 2001, §4.3.1: above a valid threshold it is linear in `u`,
//! `(σ_u0 + ξ (u − u0))/(1 − ξ)` for ξ < 1); and the goodness-of-fit test at that `u`.
//!
//! # The automatic rule
//!
//! Coles (2001, §4.3.4) picks the lowest threshold above which the GPD holds, checked by
//! *threshold stability*: if GPD(ξ, σ) describes the excesses over `u`, then the excesses over
//! any `v > u` are GPD(ξ, σ + ξ (v − u)) — same shape, modified scale σ* unchanged. Automated
//! here ([`choose_threshold`]): the lowest candidate with at least `min_exceedances` cluster
//! maxima whose fit is regular and not rejected by the Anderson–Darling test, and whose fitted
//! GPD, carried up to every higher candidate as above, is not rejected there by a
//! likelihood-ratio test (the higher candidate's own fit against the carried-up model, χ² with
//! 2 degrees of freedom, at the table's confidence). The joint test matters: ξ and σ* are
//! strongly correlated, so checking each against its own interval (the plot's view) lets a
//! slowly drifting shape through — as with a Gaussian-like score, whose GPD shape at moderate
//! thresholds is clearly negative and creeps towards 0 higher up (the penultimate
//! approximation), which a low threshold turns into a false endpoint and a rate of 0 far out.
//! The minimum count is a rule of thumb of the trade (common practice; with fewer than a few
//! dozen exceedances the ξ interval spans several tail types).
//!
//! # The shape floor (default ξ ≥ 0)
//!
//! Every fit of the table and the chosen fit are constrained to `ξ >= shape_floor`, by
//! default 0 ([`ThresholdRule::LIGHT_TAIL_FLOOR`]): no upper endpoint. A detector statistic
//! built from unbounded noise (square-law energy, a ratio of energies, a filtered Gaussian
//! signal) has no endpoint, so ξ < 0 at the levels a short run reaches is the finite-level
//! (penultimate) shape of a light tail, not a real bound, and extrapolating with it puts a
//! false endpoint below the target level: a rate of 0 where alarms do happen. The test
//! `brute_force.rs` shows exactly that on a correlated Gaussian score (a free-shape rule's
//! upper end was below the long run's rate in 14 of 20 seeds). With the floor, the
//! goodness-of-fit test rejects the low thresholds where the tail still bends down, the rule
//! moves up to where it is close to exponential, and a tail lighter than exponential beyond
//! that is over-estimated: the error is on the safe side (a threshold too high, never too
//! low). A statistic that really is bounded (a saturating score, a fraction) should use
//! [`crate::NO_SHAPE_FLOOR`].
//!
//! **Limits.** Nested candidates share data, so the test is lenient (a drift shows only when
//! it is large against the higher candidates' sampling error), and it tests against several
//! higher candidates, each at the table's level, so it errs towards higher thresholds (wider
//! intervals, less bias). The rule can only be as good as the grid's low end (a grid that
//! starts above the bias region cannot show it) and as the high end's power (few exceedances
//! up there cannot reject much). It is a screening step: the table is there to be looked at,
//! and the goodness-of-fit test is the guard that remains.

use crate::alarm::TailAccumulator;
use crate::error::{check_confidence, parameter, TailError};
use crate::fit::{Estimate, TailFit, Verdict};
use crate::gof::GoodnessOfFit;
use crate::gpd::log_likelihood;
use statrs::distribution::{ContinuousCDF, Normal};

/// One candidate threshold of the stability table.
#[derive(Debug, Clone, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct StabilityRow {
    /// The candidate threshold u.
    pub threshold: f64,
    /// Cluster maxima strictly above u.
    pub exceedances: usize,
    /// Mean excess of the cluster maxima over u, with a normal interval (`None` below two
    /// exceedances).
    pub mean_excess: Option<Estimate>,
    /// ξ with its profile-likelihood interval (`None` when too few exceedances to fit).
    pub xi: Option<Estimate>,
    /// σ* = σ − ξ u with its delta-method interval (`None` when the fit or its information
    /// matrix is unavailable).
    pub modified_scale: Option<Estimate>,
    /// The goodness-of-fit test (`None` without a fit).
    pub goodness_of_fit: Option<GoodnessOfFit>,
    /// The fit's verdict at the table's level (`None` without a fit).
    pub verdict: Option<Verdict>,
    /// Whether the GPD fitted here also describes the excesses over every higher candidate
    /// (module doc: the likelihood-ratio check of threshold stability); `None` without a fit.
    pub consistent_above: Option<bool>,
}

/// The automatic threshold rule's settings (module doc).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ThresholdRule {
    /// The fewest cluster maxima above a threshold it may choose.
    pub min_exceedances: usize,
    /// Confidence of the ξ and σ* intervals.
    pub confidence: f64,
    /// Significance level of the goodness-of-fit test.
    pub gof_level: f64,
    /// Every fit is constrained to `ξ >= shape_floor` ([`crate::NO_SHAPE_FLOOR`]: none).
    pub shape_floor: f64,
}

impl ThresholdRule {
    /// ξ >= 0: no upper endpoint. The default (module doc, "The shape floor").
    pub const LIGHT_TAIL_FLOOR: f64 = 0.0;
}

impl Default for ThresholdRule {
    /// 30 exceedances (common practice), 95 % intervals, a 5 % test, and the shape floor
    /// [`ThresholdRule::LIGHT_TAIL_FLOOR`] (module doc).
    fn default() -> Self {
        ThresholdRule {
            min_exceedances: 30,
            confidence: 0.95,
            gof_level: 0.05,
            shape_floor: ThresholdRule::LIGHT_TAIL_FLOOR,
        }
    }
}

/// Up to `count` candidate thresholds, ascending, each with at least `min_exceedances`
/// cluster maxima above it, spread over the range where that holds.
///
/// Levels are probed at `4 · count` kept-frame statistics whose ranks fall geometrically from
/// all kept frames to `min_exceedances`, and the clusters are counted at each level (at its
/// own clustering): the count is not monotone in the level, since near the floor frames above
/// it come so often that whole stretches merge into one cluster. The probes with enough
/// cluster maxima are thinned evenly to `count`.
///
/// # Errors
/// When `count < 2`, `min_exceedances < crate::MIN_EXCESSES`, or no level has enough
/// cluster maxima ([`TailError::TooFewExceedances`], with the most found).
pub fn candidate_thresholds(
    acc: &TailAccumulator,
    count: usize,
    min_exceedances: usize,
) -> Result<Vec<f64>, TailError> {
    if count < 2 {
        return Err(parameter("count", count as f64, ">= 2"));
    }
    if min_exceedances < crate::MIN_EXCESSES {
        return Err(parameter(
            "min_exceedances",
            min_exceedances as f64,
            ">= MIN_EXCESSES",
        ));
    }
    let values = acc.kept_statistics();
    let total = values.len();
    if total <= min_exceedances {
        return Err(TailError::TooFewExceedances {
            found: total,
            needed: min_exceedances + 1,
        });
    }
    let probes = 4 * count;
    let hi = (total - 1) as f64;
    let lo = min_exceedances as f64;
    let mut levels: Vec<f64> = (0..probes)
        .map(|i| {
            let f = i as f64 / (probes - 1) as f64;
            values[((hi * (lo / hi).powf(f)).round() as usize).min(total - 1)]
        })
        .collect();
    levels.sort_by(f64::total_cmp);
    levels.dedup();
    let mut most = 0;
    let mut usable = Vec::new();
    for &u in &levels {
        let n = acc.excesses(u)?.len();
        most = most.max(n);
        if n >= min_exceedances {
            usable.push(u);
        }
    }
    if usable.is_empty() {
        return Err(TailError::TooFewExceedances {
            found: most,
            needed: min_exceedances,
        });
    }
    if usable.len() <= count {
        return Ok(usable);
    }
    let last = usable.len() - 1;
    let mut out: Vec<f64> = (0..count)
        .map(|j| usable[(j * last + (count - 1) / 2) / (count - 1)])
        .collect();
    out.dedup();
    Ok(out)
}

/// The stability table over `thresholds` (module doc), with `rule`'s confidence, test level
/// and shape floor.
///
/// # Errors
/// When `confidence` or `gof_level` is not in (0, 1), or a threshold is below the
/// accumulator's floor.
pub fn stability_table(
    acc: &TailAccumulator,
    thresholds: &[f64],
    rule: &ThresholdRule,
) -> Result<Vec<StabilityRow>, TailError> {
    let confidence = check_confidence(rule.confidence)?;
    let gof_level = rule.gof_level;
    if !(gof_level > 0.0 && gof_level < 1.0) {
        return Err(parameter(
            "gof_level",
            gof_level,
            "strictly between 0 and 1",
        ));
    }
    let z = Normal::standard().inverse_cdf(0.5 * (1.0 + confidence));
    let mut rows: Vec<StabilityRow> = Vec::with_capacity(thresholds.len());
    let mut fits: Vec<Option<TailFit>> = Vec::with_capacity(thresholds.len());
    for &u in thresholds {
        let excesses = acc.excesses(u)?;
        let n = excesses.len();
        let mean_excess = (n >= 2).then(|| {
            let mean = excesses.iter().sum::<f64>() / n as f64;
            let var = excesses.iter().map(|e| (e - mean).powi(2)).sum::<f64>() / (n - 1) as f64;
            let half = z * (var / n as f64).sqrt();
            Estimate {
                value: mean,
                lower: mean - half,
                upper: mean + half,
            }
        });
        let mut row = StabilityRow {
            threshold: u,
            exceedances: n,
            mean_excess,
            xi: None,
            modified_scale: None,
            goodness_of_fit: None,
            verdict: None,
            consistent_above: None,
        };
        if let Ok(fit) = TailFit::from_excesses(u, &excesses, acc.exposure_h(), rule.shape_floor) {
            let g = fit.gpd();
            let (lo, hi) = fit.gpd_fit().xi_interval(confidence)?;
            row.xi = Some(Estimate {
                value: g.xi(),
                lower: lo,
                upper: hi,
            });
            row.modified_scale = fit.gpd_fit().covariance().map(|[vs, c, vx]| {
                let value = g.sigma() - g.xi() * u;
                let var = vs - 2.0 * u * c + u * u * vx;
                let half = z * var.max(0.0).sqrt();
                Estimate {
                    value,
                    lower: value - half,
                    upper: value + half,
                }
            });
            row.goodness_of_fit = Some(fit.goodness_of_fit());
            row.verdict = Some(fit.verdict(gof_level));
            fits.push(Some(fit));
        } else {
            fits.push(None);
        }
        rows.push(row);
    }
    // Threshold stability (Coles 2001, §4.3.4): if GPD(ξ, σ) holds above u_i, the excesses
    // over u_j > u_i are GPD(ξ, σ + ξ (u_j − u_i)). Each higher fit is tested against that
    // fully specified model by its likelihood ratio, χ² with 2 degrees of freedom
    // (quantile −2 ln(1 − confidence)).
    let lr_cut = -2.0 * (1.0 - confidence).ln();
    for i in 0..rows.len() {
        let Some(fi) = &fits[i] else { continue };
        let (xi, sigma, ui) = (fi.gpd().xi(), fi.gpd().sigma(), rows[i].threshold);
        let consistent = fits[i + 1..].iter().zip(&rows[i + 1..]).all(|(fj, rj)| {
            let Some(fj) = fj else { return true };
            if fj.gpd_fit().at_boundary() {
                return true;
            }
            let sigma_j = sigma + xi * (rj.threshold - ui);
            let null = if sigma_j > 0.0 {
                log_likelihood(xi, sigma_j, fj.gpd_fit().excesses())
            } else {
                f64::NEG_INFINITY
            };
            2.0 * (fj.gpd_fit().log_likelihood() - null) <= lr_cut
        });
        rows[i].consistent_above = Some(consistent);
    }
    Ok(rows)
}

/// The index of the threshold the automatic rule chooses in `table` (ascending thresholds),
/// or `None` when no candidate qualifies: then extrapolation is not supported by the data
/// and the caller falls back to the brute-force bound.
pub fn choose_threshold(table: &[StabilityRow], rule: &ThresholdRule) -> Option<usize> {
    let regular = |r: &StabilityRow| r.xi.is_some() && r.verdict != Some(Verdict::Boundary);
    for (i, row) in table.iter().enumerate() {
        if row.exceedances < rule.min_exceedances || !regular(row) {
            continue;
        }
        if row.verdict != Some(Verdict::Usable) {
            continue;
        }
        if row.consistent_above == Some(true) {
            return Some(i);
        }
    }
    None
}

/// Builds the stability table over `thresholds` with `rule`'s confidence and test level and
/// applies [`choose_threshold`]: the table for the report and the chosen index.
///
/// # Errors
/// As [`stability_table`].
pub fn choose_from(
    acc: &TailAccumulator,
    thresholds: &[f64],
    rule: &ThresholdRule,
) -> Result<(Vec<StabilityRow>, Option<usize>), TailError> {
    let table = stability_table(acc, thresholds, rule)?;
    let chosen = choose_threshold(&table, rule);
    Ok((table, chosen))
}
