//! Scores on a lattice: when the cluster maxima a fit uses are too coarse for a continuous
//! tail.
//!
//! A detector computing in fixed point, or squaring ADC codes, puts its statistic on a lattice
//! of step Δ (the 12-bit ADC and a 256-sample mean of squares: Δ = (3.3 V/4096)²/256 ≈ 2.5e-9
//! V²). Its cluster maxima are then known only to a cell of width Δ, and ties appear. The
//! continuous GPD likelihood treats them as exact, which is harmless while Δ is small against
//! the scale: for an exponential excess the rounding shifts every value by at most Δ, so the
//! scale estimate moves by about Δ/2 (relative Δ/(2σ)), far below its sampling error
//! `σ/√n` whenever `Δ/σ < 1/√n`. The exact treatment is the likelihood of interval-censored
//! data, each maximum contributing `F(cell end) − F(cell start)` (J. P. Klein,
//! M. L. Moeschberger, *Survival Analysis*, 2nd ed., Springer 2003, §3.5; from memory), needed
//! only beyond that and not built here: the default suite's statistics sit far below the
//! limit (the 24 GHz `energy-c` has Δ/σ ≈ 2e-4).
//!
//! This module detects the step from the data and says when a fit cannot be trusted: fewer
//! than [`MIN_DISTINCT`] distinct excesses, or a step above [`MAX_STEP_TO_SCALE`] of the
//! fitted scale. Such a fit gets [`crate::Verdict::Coarse`] and the caller falls back to the
//! brute-force bound, with a warning that names the step, instead of an interval made narrow
//! by ties (docs/reference/statistics.md#s14).

/// The fewest distinct excesses a fit accepts (the automatic rule's minimum count of
/// exceedances, common practice: with fewer, the shape interval spans several tail types).
pub const MIN_DISTINCT: usize = 30;

/// The largest lattice step, as a fraction of the fitted scale σ, at which the continuous
/// likelihood is used: the rounding bias of σ̂ (about Δ/2) is then at most 2.5 % of σ, below
/// the sampling error `σ/√n` of the fits the rule accepts (n of a few hundred: 4–6 %).
pub const MAX_STEP_TO_SCALE: f64 = 0.05;

/// How far a gap may sit from a whole number of steps, in steps: float rounding of the
/// scores (a float32 mean of squares is off by about 1e-3 of the step above) must not hide
/// the lattice.
const STEP_TOLERANCE: f64 = 0.05;

/// Gaps below this fraction of the median gap between distinct values are rounding noise
/// (two scores of one cell computed in different orders), not steps of the lattice.
const NOISE_GAP: f64 = 0.01;

/// The gaps between neighbouring distinct values, without those that are rounding noise.
fn cell_gaps(values: &[f64]) -> Vec<f64> {
    let mut v: Vec<f64> = values.iter().copied().filter(|x| x.is_finite()).collect();
    v.sort_by(f64::total_cmp);
    v.dedup();
    let mut gaps: Vec<f64> = v.windows(2).map(|w| w[1] - w[0]).collect();
    if gaps.is_empty() {
        return gaps;
    }
    let mut sorted = gaps.clone();
    sorted.sort_by(f64::total_cmp);
    let noise = NOISE_GAP * sorted[sorted.len() / 2];
    gaps.retain(|&g| g > noise);
    gaps
}

/// The lattice step of `values` (any order): the smallest gap between distinct values (gaps
/// of rounding noise set aside), if every gap is a whole number of it within
/// [`STEP_TOLERANCE`]; `None` for continuous values or fewer than three distinct ones.
pub fn lattice_step(values: &[f64]) -> Option<f64> {
    let gaps = cell_gaps(values);
    if gaps.len() < 2 {
        return None;
    }
    let step = gaps.iter().copied().fold(f64::INFINITY, f64::min);
    gaps.iter()
        .all(|&g| {
            let k = g / step;
            (k - k.round()).abs() <= STEP_TOLERANCE
        })
        .then_some(step)
}

/// The number of distinct values (values apart by rounding noise only count once).
pub fn distinct(values: &[f64]) -> usize {
    if values.iter().all(|x| !x.is_finite()) {
        return 0;
    }
    cell_gaps(values).len() + 1
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn finds_the_step_of_rounded_values_and_none_for_continuous_ones() {
        // Multiples of 0.25 with float noise of 1e-4 steps: step 0.25.
        let rounded = [0.25, 0.5 + 2.5e-5, 1.25, 0.5, 2.0 - 2.5e-5, 3.0];
        let step = lattice_step(&rounded).unwrap();
        assert!((step - 0.25).abs() < 1e-4);
        assert_eq!(distinct(&[1.0, 1.0, 2.0]), 2);
        // Irrational gaps: no lattice.
        let continuous: Vec<f64> = (1..40).map(|i| (i as f64).sqrt()).collect();
        assert_eq!(lattice_step(&continuous), None);
        assert_eq!(lattice_step(&[1.0, 2.0]), None);
    }
}
