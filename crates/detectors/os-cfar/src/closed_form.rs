//! The OS-CFAR statistic on a slice of cells and its closed-form false-alarm law.

use std::cmp::Ordering;

/// Smallest noise estimate a ratio divides by (power units: V² for volts in).
///
/// Only silence comes near it: the quantisation noise of a 12-bit ADC (LSB
/// 50 µV) alone gives Hann-windowed 256-point bin powers around 2e-8 V². It
/// keeps 0/0 at 0 and x/0 finite: the largest power an f32 input can make
/// (|x| ≤ 3.4e38, N ≤ 65 536) is below 1e87, so ratios stay below 1e117.
pub const NOISE_FLOOR: f64 = 1e-30;

/// The OS-CFAR statistic of one cell: `cut_power / x_(rank)`, where x_(rank)
/// is the `rank`-th smallest (1-based) of `training_cells`.
///
/// Thresholding it at T is Rohling's ordered-statistic test (Rohling 1983;
/// Richards 2014 §6.5.6). The cells are reordered in place by a selection
/// (`select_nth_unstable_by`, linear time on average), not sorted. The order
/// statistic is floored at [`NOISE_FLOOR`]. Returns NaN when `rank` is not in
/// `1..=training_cells.len()`.
///
/// ```
/// use echobench_detector_os_cfar::os_ratio;
/// let mut cells = [4.0, 1.0, 3.0, 2.0];
/// assert_eq!(os_ratio(9.0, &mut cells, 3), 3.0);
/// ```
pub fn os_ratio(cut_power: f64, training_cells: &mut [f64], rank: usize) -> f64 {
    if rank == 0 || rank > training_cells.len() {
        return f64::NAN;
    }
    let (_, order_statistic, _) = training_cells
        .select_nth_unstable_by(rank - 1, |a: &f64, b: &f64| -> Ordering { a.total_cmp(b) });
    cut_power / order_statistic.max(NOISE_FLOOR)
}

/// ln Pfa = −Σ_{i<k} ln(1 + T/(N − i)): the product form in logarithms, for
/// the root finder (no underflow however small Pfa gets).
fn ln_os_pfa(n: usize, k: usize, t: f64) -> f64 {
    -(0..k).map(|i| (t / (n - i) as f64).ln_1p()).sum::<f64>()
}

/// False-alarm probability of the OS-CFAR test at multiplier `t` on the
/// `k`-th smallest of `n` independent unit-mean exponential cells:
/// Pfa = k·C(N,k)·Γ(k)·Γ(N−k+1+T)/Γ(N+1+T) = Π_{i=0}^{k−1} (N−i)/(N−i+T)
/// (Rohling 1983; Richards 2014 §6.5.6), evaluated in the stable product form.
///
/// Returns 1 for `t ≤ 0`, NaN when `k` is not in `1..=n` or `t` is NaN.
///
/// ```
/// use echobench_detector_os_cfar::os_pfa;
/// // docs/reference/check-values.md#cv12 (Richards 2014 §6.5.6: N = 20, k = 15, α = 6.857).
/// assert!((os_pfa(20, 15, 6.857) - 9.98724e-4).abs() < 1e-9);
/// ```
pub fn os_pfa(n: usize, k: usize, t: f64) -> f64 {
    if k == 0 || k > n || t.is_nan() {
        return f64::NAN;
    }
    if t <= 0.0 {
        return 1.0;
    }
    (0..k)
        .map(|i| {
            let cells_left = (n - i) as f64;
            cells_left / (cells_left + t)
        })
        .product()
}

/// Multiplier T on the `k`-th smallest of `n` independent unit-mean
/// exponential cells that gives false-alarm probability `pfa`: the root of
/// [`os_pfa`]`(n, k, T) = pfa`, found by bisection on ln Pfa (monotone in T)
/// after bracketing by doubling, to the last bit.
///
/// Returns 0 for `pfa = 1`, +∞ when T would exceed the f64 range (k = 1 and a
/// vanishing Pfa), NaN when `k` is not in `1..=n` or `pfa` not in (0, 1].
///
/// ```
/// use echobench_detector_os_cfar::os_multiplier;
/// // docs/reference/check-values.md#cv11: N = 24, k = 18, Pfa = 1e-3.
/// assert!((os_multiplier(24, 18, 1e-3) - 6.502431).abs() < 1e-6);
/// ```
pub fn os_multiplier(n: usize, k: usize, pfa: f64) -> f64 {
    if k == 0 || k > n || !(pfa > 0.0 && pfa <= 1.0) {
        return f64::NAN;
    }
    if pfa == 1.0 {
        return 0.0;
    }
    let target = pfa.ln();
    let (mut low, mut high) = (0.0f64, 1.0f64);
    while ln_os_pfa(n, k, high) > target {
        low = high;
        high *= 2.0;
        if !high.is_finite() {
            return f64::INFINITY;
        }
    }
    // ln Pfa falls as T grows: keep ln Pfa(low) > target ≥ ln Pfa(high).
    loop {
        let middle = 0.5 * (low + high);
        if middle <= low || middle >= high {
            return high;
        }
        if ln_os_pfa(n, k, middle) > target {
            low = middle;
        } else {
            high = middle;
        }
    }
}
