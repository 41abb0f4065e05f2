//! The CA-CFAR statistic on a slice of cells and its closed-form false-alarm law.

/// Smallest noise estimate a ratio divides by (power units: V² for volts in).
///
/// Only silence or a spectrum with empty training cells comes near it: the
/// quantisation noise of a 12-bit ADC (LSB 50 µV) alone gives Hann-windowed
/// 256-point bin powers around 2e-8 V². It keeps 0/0 at 0 and x/0 finite: the largest power an f32
/// input can make (|x| ≤ 3.4e38, N ≤ 65 536) is below 1e87, so ratios stay
/// below 1e117.
pub const NOISE_FLOOR: f64 = 1e-30;

/// The CA-CFAR statistic of one cell: `cut_power / mean(training_cells)`.
///
/// Thresholding it at α is the cell-averaging test (Finn & Johnson 1968;
/// Richards 2014 §6.5.3): alarm when `cut_power ≥ α · mean`. The mean is
/// floored at [`NOISE_FLOOR`]; cells are powers (finite, ≥ 0). Returns NaN
/// for an empty training slice (there is no estimate to divide by).
///
/// ```
/// use echobench_detector_ca_cfar::ca_ratio;
/// assert_eq!(ca_ratio(6.0, &[1.0, 2.0, 3.0]), 3.0);
/// assert_eq!(ca_ratio(0.0, &[0.0; 4]), 0.0);
/// ```
pub fn ca_ratio(cut_power: f64, training_cells: &[f64]) -> f64 {
    if training_cells.is_empty() {
        return f64::NAN;
    }
    ratio_to_mean(cut_power, training_cells.iter().sum(), training_cells.len())
}

/// `cut / max(sum / n, NOISE_FLOOR)`: the one place the detector and
/// [`ca_ratio`] divide, so both give the same bits.
pub(crate) fn ratio_to_mean(cut_power: f64, training_sum: f64, cells: usize) -> f64 {
    let mean = training_sum / cells as f64;
    cut_power / mean.max(NOISE_FLOOR)
}

/// Multiplier α on the training **mean** that gives false-alarm probability
/// `pfa` with `n` independent unit-mean exponential training cells:
/// α = N (Pfa^(−1/N) − 1) (Richards 2014 eqs. 6.134–6.135).
///
/// Returns NaN when `n` is 0 or `pfa` is not in (0, 1].
///
/// ```
/// use echobench_detector_ca_cfar::ca_multiplier;
/// // docs/reference/check-values.md#cv7.
/// assert!((ca_multiplier(16, 1e-3) - 8.638824).abs() < 1e-6);
/// ```
pub fn ca_multiplier(n: usize, pfa: f64) -> f64 {
    if n == 0 || !(pfa > 0.0 && pfa <= 1.0) {
        return f64::NAN;
    }
    let n = n as f64;
    // Pfa^(−1/N) − 1 = expm1(−ln Pfa / N): no cancellation when N is large.
    n * (-pfa.ln() / n).exp_m1()
}

/// False-alarm probability of the CA-CFAR test at multiplier `alpha` on the
/// mean of `n` independent unit-mean exponential cells: Pfa = (1 + α/N)^(−N)
/// (Richards 2014 eq. 6.134). It does not depend on the noise power: the
/// constant false-alarm rate property.
///
/// Returns 1 for α ≤ 0 (the ratio is never negative), NaN when `n` is 0 or
/// `alpha` is NaN.
pub fn ca_pfa(n: usize, alpha: f64) -> f64 {
    if n == 0 || alpha.is_nan() {
        return f64::NAN;
    }
    if alpha <= 0.0 {
        return 1.0;
    }
    let n = n as f64;
    (-n * (alpha / n).ln_1p()).exp()
}
