//! ROC curves and AUC from scored trials.
//!
//! Inputs are the scores of trials whose truth is known: `positives` (H1, a target present)
//! and `negatives` (H0, noise or nuisance only). A detector alarms when `score >= threshold`,
//! the scikit-learn `roc_curve` convention (`docs/reference/detectors.md#d1`).
//!
//! NaN scores have no place in an ordering, so any NaN makes the AUC NaN and the ROC empty;
//! infinite scores are ordinary (largest or smallest) values.

use std::cmp::Ordering;

/// One ROC vertex: `(pfa, pd, threshold)`, the empirical false-alarm and detection
/// probabilities of the rule `score >= threshold`.
pub type RocPoint = (f64, f64, f64);

fn has_nan(scores: &[f64]) -> bool {
    scores.iter().any(|s| s.is_nan())
}

/// Orders two scores known not to be NaN. `-0.0` and `0.0` compare equal, as the decision
/// rule `score >= threshold` treats them.
fn by_score(a: f64, b: f64) -> Ordering {
    a.partial_cmp(&b).unwrap_or(Ordering::Equal)
}

/// Pools both classes as `(score, is_positive)` sorted by ascending score.
fn pooled_ascending(positives: &[f64], negatives: &[f64]) -> Vec<(f64, bool)> {
    let mut pooled: Vec<(f64, bool)> = positives
        .iter()
        .map(|&s| (s, true))
        .chain(negatives.iter().map(|&s| (s, false)))
        .collect();
    pooled.sort_by(|a, b| by_score(a.0, b.0));
    pooled
}

/// Mann–Whitney statistic `U = Σ_{i∈H1} Σ_{j∈H0} [1(p_i > n_j) + ½·1(p_i = n_j)]`.
///
/// Computed in O(n log n) from midranks, `U = R₁ − n₁(n₁+1)/2` with `R₁` the sum of the
/// positives' ranks in the pooled sample and tied scores sharing the mean of their ranks
/// (Mann & Whitney 1947). Returns NaN if either class is empty or any score is NaN.
///
/// ```
/// let u = echobench_stats::mann_whitney_u(&[3.0, 2.0], &[2.0, 1.0]);
/// assert_eq!(u, 3.5); // 3>2, 3>1, 2=2 (half), 2>1
/// ```
pub fn mann_whitney_u(positives: &[f64], negatives: &[f64]) -> f64 {
    if positives.is_empty() || negatives.is_empty() || has_nan(positives) || has_nan(negatives) {
        return f64::NAN;
    }
    let pooled = pooled_ascending(positives, negatives);
    let mut positive_rank_sum = 0.0;
    let mut start = 0;
    while start < pooled.len() {
        let mut end = start + 1;
        while end < pooled.len() && pooled[end].0 == pooled[start].0 {
            end += 1;
        }
        // Ranks start+1 ..= end share their mean; sums of half-integers stay exact in f64
        // far beyond any trial count echobench will run.
        let midrank = (start + 1 + end) as f64 / 2.0;
        let positives_in_group = pooled[start..end].iter().filter(|p| p.1).count();
        positive_rank_sum += midrank * positives_in_group as f64;
        start = end;
    }
    let n1 = positives.len() as f64;
    positive_rank_sum - n1 * (n1 + 1.0) / 2.0
}

/// Area under the ROC curve, `AUC = U/(n₁n₀)`: the probability that a random positive
/// trial outscores a random negative one, ties counting one half (Bamber 1975;
/// Hanley & McNeil 1982). Equals the trapezoidal area under [`roc_points`].
///
/// Returns NaN if either class is empty or any score is NaN.
pub fn auc_mann_whitney(positives: &[f64], negatives: &[f64]) -> f64 {
    let u = mann_whitney_u(positives, negatives);
    u / (positives.len() as f64 * negatives.len() as f64)
}

/// Empirical ROC curve, one vertex per distinct score (Fawcett 2006, algorithm 2).
///
/// Scores are swept from the highest down; at each distinct score all trials tied at it are
/// moved at once, so ties give a diagonal segment. The first vertex is `(0, 0, +∞)` ("never
/// alarm"; exact unless a score is itself +∞), the last is `(1, 1, min score)`. Vertices are
/// ordered by non-decreasing Pfa and Pd and strictly decreasing threshold; each vertex's
/// `(pfa, pd)` is that of the rule `score >= threshold`.
///
/// Returns an empty vector if either class is empty or any score is NaN.
pub fn roc_points(positives: &[f64], negatives: &[f64]) -> Vec<RocPoint> {
    if positives.is_empty() || negatives.is_empty() || has_nan(positives) || has_nan(negatives) {
        return Vec::new();
    }
    let pooled = pooled_ascending(positives, negatives);
    let n1 = positives.len() as f64;
    let n0 = negatives.len() as f64;
    let mut points = vec![(0.0, 0.0, f64::INFINITY)];
    let (mut true_alarms, mut false_alarms) = (0usize, 0usize);
    let mut end = pooled.len();
    while end > 0 {
        let score = pooled[end - 1].0;
        let mut start = end - 1;
        while start > 0 && pooled[start - 1].0 == score {
            start -= 1;
        }
        for &(_, is_positive) in &pooled[start..end] {
            if is_positive {
                true_alarms += 1;
            } else {
                false_alarms += 1;
            }
        }
        points.push((false_alarms as f64 / n0, true_alarms as f64 / n1, score));
        end = start;
    }
    points
}

/// Trapezoidal area under a polyline of ROC vertices ordered by Pfa (as [`roc_points`] gives).
/// For an empirical ROC it equals [`auc_mann_whitney`]. Returns 0 for fewer than two points.
pub fn roc_area(roc: &[RocPoint]) -> f64 {
    roc.windows(2)
        .map(|w| (w[1].0 - w[0].0) * (w[0].1 + w[1].1) / 2.0)
        .sum()
}

/// How many leading vertices of an event-level ROC keep the meaning of a ROC curve: given
/// `(detected, false_alarms)` counts per threshold ordered **from the highest threshold
/// down**, the length of the first run in which both counts never fall.
///
/// A trial-level ROC ([`roc_points`]) is monotone by construction. An event-level one is not:
/// at low thresholds an alarm that never switches off has fewer onsets, so both the detected
/// events and the false alarms *fall* as the threshold falls, and the curve folds back
/// towards the origin. Past the first such fall "up and to the left is better" no longer
/// reads true, so echobench draws only this leading run (a ROC of a scored rule is a
/// monotone staircase in the threshold, Fawcett 2006; cutting at the first fall is
/// echobench's choice). With the same events and exposure
/// at every threshold, monotone counts are monotone Pd and false-alarm rate.
///
/// ```
/// // Thresholds high → low: detection and false alarms grow, then the alarm sticks on.
/// let counts = [(3, 0), (7, 1), (9, 4), (9, 6), (8, 6), (5, 2)];
/// assert_eq!(echobench_stats::event_roc_monotone_len(&counts), 4);
/// ```
pub fn event_roc_monotone_len(counts_high_to_low: &[(u64, u64)]) -> usize {
    counts_high_to_low
        .windows(2)
        .position(|w| w[1].0 < w[0].0 || w[1].1 < w[0].1)
        .map_or(counts_high_to_low.len(), |i| i + 1)
}

/// Index of the last vertex with `pfa <= target`, if any. Relies on non-decreasing Pfa.
fn last_at_or_below(roc: &[RocPoint], target_pfa: f64) -> Option<usize> {
    roc.partition_point(|p| p.0 <= target_pfa).checked_sub(1)
}

/// Pd at a target Pfa, conservative and achievable (`docs/reference/statistics.md#s3`, (a)): the
/// vertex of the lowest threshold whose empirical Pfa does not exceed `target_pfa`. Returns that
/// whole vertex `(pfa, pd, threshold)` so the caller can report the threshold and the Pfa achieved.
///
/// Returns `None` if `roc` is empty, `target_pfa` is NaN or no vertex has `pfa <= target_pfa`
/// (never the case for a curve from [`roc_points`] and a target `>= 0`).
pub fn pd_at_pfa_conservative(roc: &[RocPoint], target_pfa: f64) -> Option<RocPoint> {
    if target_pfa.is_nan() {
        return None;
    }
    last_at_or_below(roc, target_pfa).map(|i| roc[i])
}

/// Pd at a target Pfa by linear interpolation between adjacent ROC vertices
/// (`docs/reference/statistics.md#s3`, (b); the same as `np.interp(target, fpr, tpr)`): the Pd of a
/// randomised mix of two thresholds, legitimate on the ROC convex hull (Provost & Fawcett 2001). At
/// a Pfa where the curve rises vertically the top of the rise is returned.
///
/// Returns `None` if `target_pfa` is outside `[0, 1]` or NaN, or `roc` has no vertex at or
/// below it.
pub fn pd_at_pfa_interpolated(roc: &[RocPoint], target_pfa: f64) -> Option<f64> {
    if !(0.0..=1.0).contains(&target_pfa) {
        return None;
    }
    let j = last_at_or_below(roc, target_pfa)?;
    let (pfa_low, pd_low, _) = roc[j];
    match roc.get(j + 1) {
        None => Some(pd_low),
        // pfa_high > target >= pfa_low, so the division is by a positive width.
        Some(&(pfa_high, pd_high, _)) => {
            Some(pd_low + (target_pfa - pfa_low) / (pfa_high - pfa_low) * (pd_high - pd_low))
        }
    }
}

/// Raw partial AUC, `pAUC(f₀) = ∫₀^{f₀} ROC(pfa) dpfa`, trapezoidal over the vertices with
/// `pfa <= max_pfa` and closed by the linearly interpolated point at `max_pfa` (as in
/// `roc_auc_score(max_fpr=…)` before standardisation). Lies in `[0, max_pfa]`.
///
/// Returns `None` if `max_pfa` is not in `(0, 1]` or `roc` has no vertex at or below it.
pub fn partial_auc(roc: &[RocPoint], max_pfa: f64) -> Option<f64> {
    if !(max_pfa > 0.0 && max_pfa <= 1.0) {
        return None;
    }
    let j = last_at_or_below(roc, max_pfa)?;
    let closing_pd = pd_at_pfa_interpolated(roc, max_pfa)?;
    let (pfa_j, pd_j, _) = roc[j];
    Some(roc_area(&roc[..=j]) + (max_pfa - pfa_j) * (pd_j + closing_pd) / 2.0)
}

/// McClish (1989) standardised partial AUC,
/// `½·(1 + (pAUC − f₀²/2)/(f₀ − f₀²/2))`: 0.5 for a chance-level curve and 1 for a perfect
/// one over `[0, f₀]`; with `f₀ = 1` it is the full AUC. This is what scikit-learn's
/// `roc_auc_score(y, s, max_fpr=f₀)` returns.
///
/// Returns `None` under the same conditions as [`partial_auc`].
pub fn partial_auc_mcclish(roc: &[RocPoint], max_pfa: f64) -> Option<f64> {
    let raw = partial_auc(roc, max_pfa)?;
    let chance_area = max_pfa * max_pfa / 2.0;
    Some(0.5 * (1.0 + (raw - chance_area) / (max_pfa - chance_area)))
}

/// Standard error of an AUC estimate from `n_positives` and `n_negatives` trials
/// (Hanley & McNeil 1982):
/// `SE² = [A(1−A) + (n₁−1)(Q₁−A²) + (n₀−1)(Q₂−A²)]/(n₁n₀)`, `Q₁ = A/(2−A)`, `Q₂ = 2A²/(1+A)`.
/// The Q terms assume exponential-like score distributions; the authors show the formula is
/// insensitive to that choice.
///
/// Returns `None` if either count is zero or `auc` is outside `[0, 1]` or NaN.
pub fn auc_standard_error_hanley_mcneil(
    auc: f64,
    n_positives: usize,
    n_negatives: usize,
) -> Option<f64> {
    if n_positives == 0 || n_negatives == 0 || !(0.0..=1.0).contains(&auc) {
        return None;
    }
    let (n1, n0) = (n_positives as f64, n_negatives as f64);
    let q1 = auc / (2.0 - auc);
    let q2 = 2.0 * auc * auc / (1.0 + auc);
    let variance =
        (auc * (1.0 - auc) + (n1 - 1.0) * (q1 - auc * auc) + (n0 - 1.0) * (q2 - auc * auc))
            / (n1 * n0);
    // Rounding can leave a tiny negative variance at A = 0 or 1, where the SE is 0.
    Some(variance.max(0.0).sqrt())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn monotone_run_stops_at_the_first_fall_of_either_count() {
        assert_eq!(event_roc_monotone_len(&[]), 0);
        assert_eq!(event_roc_monotone_len(&[(4, 2)]), 1);
        // Ties keep going: a flat step is still monotone.
        assert_eq!(event_roc_monotone_len(&[(1, 0), (1, 0), (2, 3)]), 3);
        // Only the false alarms fall: cut there, even though detection still rises.
        assert_eq!(event_roc_monotone_len(&[(1, 5), (2, 4), (3, 9)]), 1);
        // A fall and a later rise: everything from the first fall on is cut.
        assert_eq!(event_roc_monotone_len(&[(1, 1), (2, 2), (1, 2), (5, 9)]), 2);
    }
    use rand::{Rng, SeedableRng};
    use rand_chacha::ChaCha8Rng;

    /// The slow, obvious version: count every (positive, negative) pair.
    fn u_pairwise(positives: &[f64], negatives: &[f64]) -> f64 {
        let mut u = 0.0;
        for &p in positives {
            for &n in negatives {
                if p > n {
                    u += 1.0;
                } else if p == n {
                    u += 0.5;
                }
            }
        }
        u
    }

    /// The slow, obvious ROC: for each candidate threshold count alarms with `>=`.
    fn roc_by_threshold(positives: &[f64], negatives: &[f64], threshold: f64) -> (f64, f64) {
        let pd =
            positives.iter().filter(|&&s| s >= threshold).count() as f64 / positives.len() as f64;
        let pfa =
            negatives.iter().filter(|&&s| s >= threshold).count() as f64 / negatives.len() as f64;
        (pfa, pd)
    }

    fn random_scores(rng: &mut ChaCha8Rng, n: usize, shift: f64, levels: f64) -> Vec<f64> {
        // Quantising to a few levels makes ties common, the case midranks must get right.
        (0..n)
            .map(|_| ((rng.random::<f64>() + shift) * levels).floor())
            .collect()
    }

    #[test]
    fn auc_matches_pairwise_count_on_random_tied_data() {
        let mut rng = ChaCha8Rng::from_seed([7; 32]);
        for trial in 0..200 {
            let n1 = rng.random_range(1..60);
            let n0 = rng.random_range(1..60);
            let levels = [3.0, 10.0, 1e6][trial % 3];
            let pos = random_scores(&mut rng, n1, 0.3, levels);
            let neg = random_scores(&mut rng, n0, 0.0, levels);
            let slow = u_pairwise(&pos, &neg);
            assert_eq!(mann_whitney_u(&pos, &neg), slow, "trial {trial}");
            let auc = auc_mann_whitney(&pos, &neg);
            assert!((auc - slow / (n1 * n0) as f64).abs() < 1e-12);
            let roc = roc_points(&pos, &neg);
            assert!((roc_area(&roc) - auc).abs() < 1e-12, "trial {trial}");
            // Every vertex is the operating point of `score >= threshold`.
            for &(pfa, pd, threshold) in &roc[1..] {
                assert_eq!((pfa, pd), roc_by_threshold(&pos, &neg, threshold));
            }
            assert_eq!(roc.last().map(|p| (p.0, p.1)), Some((1.0, 1.0)));
        }
    }

    #[test]
    fn signed_zeros_are_one_score() {
        assert_eq!(mann_whitney_u(&[0.0], &[-0.0]), 0.5);
        assert_eq!(roc_points(&[0.0], &[-0.0]).len(), 2);
    }

    #[test]
    fn empty_or_nan_inputs_give_documented_results() {
        assert!(auc_mann_whitney(&[], &[1.0]).is_nan());
        assert!(auc_mann_whitney(&[1.0], &[]).is_nan());
        assert!(auc_mann_whitney(&[f64::NAN], &[1.0]).is_nan());
        assert!(roc_points(&[1.0], &[]).is_empty());
        assert!(roc_points(&[1.0], &[f64::NAN]).is_empty());
        assert_eq!(pd_at_pfa_conservative(&[], 0.1), None);
        assert_eq!(pd_at_pfa_interpolated(&[], 0.1), None);
        assert_eq!(partial_auc(&[], 0.1), None);
        let roc = roc_points(&[1.0, 2.0], &[0.0, 1.5]);
        assert_eq!(pd_at_pfa_interpolated(&roc, f64::NAN), None);
        assert_eq!(pd_at_pfa_interpolated(&roc, 1.5), None);
        assert_eq!(pd_at_pfa_conservative(&roc, f64::NAN), None);
        assert_eq!(partial_auc(&roc, 0.0), None);
        assert_eq!(partial_auc_mcclish(&roc, 1.1), None);
        assert_eq!(auc_standard_error_hanley_mcneil(0.9, 0, 10), None);
        assert_eq!(auc_standard_error_hanley_mcneil(f64::NAN, 10, 10), None);
        assert_eq!(auc_standard_error_hanley_mcneil(1.0, 10, 10), Some(0.0));
        assert_eq!(roc_area(&[]), 0.0);
    }

    #[test]
    fn full_range_partial_auc_is_the_auc() {
        // McClish's standardisation is the identity at f0 = 1 (McClish 1989).
        let pos = [0.9, 0.4, 0.35, 0.8];
        let neg = [0.1, 0.4, 0.5, 0.2, 0.3];
        let roc = roc_points(&pos, &neg);
        let auc = auc_mann_whitney(&pos, &neg);
        assert!((partial_auc(&roc, 1.0).unwrap_or(f64::NAN) - auc).abs() < 1e-12);
        assert!((partial_auc_mcclish(&roc, 1.0).unwrap_or(f64::NAN) - auc).abs() < 1e-12);
    }
}
