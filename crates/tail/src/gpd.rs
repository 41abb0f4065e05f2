//! The generalized Pareto distribution (location 0) and its maximum-likelihood fit.
//!
//! Parameterisation (Coles 2001, *An Introduction to Statistical Modeling of Extreme
//! Values*, eq. 4.2): for an excess `y > 0`,
//! `P(Y > y) = (1 + ξ y / σ)^(−1/ξ)` on `1 + ξ y/σ > 0`, and `exp(−y/σ)` at `ξ = 0`.
//! This is scipy's `genpareto` with shape `c = ξ`, `loc = 0`, `scale = σ`, and
//! Choulakian & Stephens' (2001) with `k = −ξ`, `a = σ`.
//!
//! # The fit
//!
//! The log-likelihood (Coles 2001, eq. 4.10) is
//! `ℓ(ξ, σ) = −n ln σ − (1 + 1/ξ) Σ ln(1 + ξ y_i/σ)` (and `−n ln σ − Σ y_i/σ` at `ξ = 0`).
//! It is maximised as a profile over `ξ`: for fixed `ξ > −1` the score equation in `σ`,
//! `(1/n) Σ y_i/(σ + ξ y_i) = 1/(1 + ξ)`, has a left side strictly decreasing in `σ`, so it
//! has exactly one root `σ̂(ξ)`, found by Brent's method inside a bracket from Jensen's
//! inequality (derived beside the code). The profile `ℓp(ξ) = ℓ(ξ, σ̂(ξ))` is then maximised over `ξ` on a grid
//! refined by a Brent root of its derivative (by the envelope theorem `dℓp/dξ = ∂ℓ/∂ξ` at
//! `σ̂(ξ)`), which gives the estimate to near machine precision. This is Grimshaw's (1993)
//! reduction to one dimension, taken over `ξ` instead of `θ = ξ/σ` so that the search
//! interval is the natural `(−1, ∞)` and `ξ = 0` (the exponential limit) is an ordinary
//! interior point: the score equation and the derivative are continuous there
//! (`σ̂(0)` is the sample mean) and are evaluated with series where `ξ y/σ` is small.
//!
//! **Boundary.** For `ξ < −1` the likelihood is unbounded (it grows without limit as the
//! endpoint `σ/|ξ|` approaches the largest excess; Smith 1985), so the search is confined to
//! `ξ ≥ −1`; the limit `ξ → −1` is the uniform distribution on `[0, y_max]` with
//! `ℓ = −n ln y_max`. A fit whose maximum lies on that boundary is reported as such
//! ([`GpdFit::at_boundary`]): its intervals are not the regular ones, and callers should not
//! extrapolate with it. For `−1 < ξ < −0.5` the estimate exists but is not regular (Smith
//! 1985), which the goodness-of-fit table does not cover either (it starts at ξ = −0.5).

use crate::error::{check_confidence, parameter, TailError};
use crate::solve::{brent_max, brent_root, grid_then_brent_max};
use statrs::distribution::{ContinuousCDF, Normal};

/// The fewest excesses a fit accepts. Below this the profile likelihood is too flat to
/// bracket anything useful; the automatic threshold rule asks for many more
/// ([`crate::ThresholdRule`]).
pub const MIN_EXCESSES: usize = 10;

/// The lowest shape the fit searches (the boundary; see the module doc).
pub const XI_MIN: f64 = -1.0;

/// The shape floor that constrains nothing (the fit searches down to [`XI_MIN`]).
pub const NO_SHAPE_FLOOR: f64 = XI_MIN;

/// The highest shape the fit searches. A tail heavier than this (infinite moments of every
/// order above 1/20) is not what a detector's noise statistic produces; a fit that runs into
/// it is flagged like the lower boundary.
pub const XI_MAX: f64 = 20.0;

/// A generalized Pareto distribution with location 0: shape `xi` (ξ), scale `sigma` (σ).
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct Gpd {
    xi: f64,
    sigma: f64,
}

impl Gpd {
    /// # Errors
    /// When `sigma` is not finite and positive or `xi` is not finite.
    pub fn new(xi: f64, sigma: f64) -> Result<Self, TailError> {
        if !xi.is_finite() {
            return Err(parameter("xi", xi, "finite"));
        }
        if !(sigma.is_finite() && sigma > 0.0) {
            return Err(parameter("sigma", sigma, "finite and > 0"));
        }
        Ok(Gpd { xi, sigma })
    }

    /// Shape ξ.
    pub fn xi(&self) -> f64 {
        self.xi
    }

    /// Scale σ, in the units of the excesses.
    pub fn sigma(&self) -> f64 {
        self.sigma
    }

    /// The upper endpoint `σ/|ξ|` when ξ < 0, else `None` (unbounded).
    pub fn endpoint(&self) -> Option<f64> {
        (self.xi < 0.0).then(|| self.sigma / -self.xi)
    }

    /// `ln P(Y > y)`: 0 for `y <= 0`, `-inf` at or beyond the endpoint.
    pub fn log_survival(&self, y: f64) -> f64 {
        if y <= 0.0 {
            return 0.0;
        }
        let a = self.xi * y / self.sigma;
        if self.xi == 0.0 {
            -y / self.sigma
        } else if a <= -1.0 {
            f64::NEG_INFINITY
        } else {
            -a.ln_1p() / self.xi
        }
    }

    /// `P(Y > y)`.
    pub fn survival(&self, y: f64) -> f64 {
        self.log_survival(y).exp()
    }

    /// `P(Y <= y)`, computed as `−expm1(ln P(Y > y))` so small probabilities keep their digits.
    pub fn cdf(&self, y: f64) -> f64 {
        -self.log_survival(y).exp_m1()
    }

    /// The excess `y` with `P(Y > y) = p`, for `0 < p <= 1`:
    /// `σ/ξ · (p^(−ξ) − 1)` (Coles 2001, eq. 4.12 solved for the level), `−σ ln p` at ξ = 0.
    ///
    /// # Errors
    /// When `p` is not in `(0, 1]`.
    pub fn excess_for_survival(&self, p: f64) -> Result<f64, TailError> {
        if !(p > 0.0 && p <= 1.0) {
            return Err(parameter("p", p, "in (0, 1]"));
        }
        Ok(excess_for_log_survival(self.xi, self.sigma, p.ln()))
    }
}

/// The excess with `ln P(Y > y) = w` (w <= 0), stable near ξ = 0 through `expm1`.
pub(crate) fn excess_for_log_survival(xi: f64, sigma: f64, w: f64) -> f64 {
    if xi == 0.0 {
        -sigma * w
    } else {
        sigma * (-xi * w).exp_m1() / xi
    }
}

/// The GPD log-likelihood of `y` (Coles 2001, eq. 4.10); `-inf` outside the support.
pub(crate) fn log_likelihood(xi: f64, sigma: f64, y: &[f64]) -> f64 {
    if !(sigma > 0.0 && sigma.is_finite()) {
        return f64::NEG_INFINITY;
    }
    let mut sum = 0.0;
    if xi == 0.0 {
        for &v in y {
            sum += v / sigma;
        }
    } else {
        for &v in y {
            let a = xi * v / sigma;
            if a <= -1.0 {
                return f64::NEG_INFINITY;
            }
            let l = a.ln_1p();
            sum += l / xi + l;
        }
    }
    -(y.len() as f64) * sigma.ln() - sum
}

/// Summary numbers of a sample of excesses, computed once.
#[derive(Debug, Clone, Copy)]
pub(crate) struct SampleStats {
    pub n: usize,
    pub mean: f64,
    pub max: f64,
}

impl SampleStats {
    pub(crate) fn of(y: &[f64]) -> Self {
        let n = y.len();
        let mean = y.iter().sum::<f64>() / n as f64;
        let max = y.iter().copied().fold(0.0, f64::max);
        SampleStats { n, mean, max }
    }
}

/// The σ that maximises ℓ(ξ, ·), for ξ > −1 (module doc). The bracket comes from Jensen's
/// inequality on `y ↦ y/(σ + ξ y)` (concave for ξ > 0, convex for ξ < 0) and from
/// replacing every `y` in the denominator by `y_max`:
/// ξ > 0: `σ̂ ∈ [max(0, (1+ξ)ȳ − ξ y_max), ȳ]`; ξ < 0: `σ̂ ∈ [max(ȳ, −ξ y_max), (1+ξ)ȳ − ξ y_max]`.
pub(crate) fn profile_sigma(xi: f64, y: &[f64], stats: &SampleStats) -> f64 {
    if xi == 0.0 {
        return stats.mean;
    }
    let target = 1.0 / (1.0 + xi);
    let n = stats.n as f64;
    let mut g = |sigma: f64| -> f64 {
        let mut s = 0.0;
        for &v in y {
            let den = sigma + xi * v;
            if den <= 0.0 {
                return f64::INFINITY;
            }
            s += v / den;
        }
        s / n - target
    };
    let (lo, hi) = if xi > 0.0 {
        let lo = ((1.0 + xi) * stats.mean - xi * stats.max).max(stats.mean * 1e-300);
        (lo, stats.mean)
    } else {
        let support = -xi * stats.max;
        let lo = stats.mean.max(support * (1.0 + 4.0 * f64::EPSILON));
        (lo, (1.0 + xi) * stats.mean - xi * stats.max)
    };
    if hi <= lo {
        return lo.max(hi);
    }
    let (glo, ghi) = (g(lo), g(hi));
    if glo <= 0.0 {
        return lo;
    }
    if ghi >= 0.0 {
        return hi;
    }
    brent_root(&mut g, lo, hi, glo, ghi, hi * 4.0 * f64::EPSILON)
}

/// `(ln(1+u) − u/(1+u)) / u²`, with its series `Σ_{k≥2} (−1)^k (k−1)/k · u^(k−2)` for small `u`
/// (the direct form cancels there).
fn log_gap_ratio(u: f64) -> f64 {
    if u.abs() < 0.05 {
        let mut term = 1.0;
        let mut sum = 0.0;
        for k in 2..20 {
            let kf = k as f64;
            sum += term * (kf - 1.0) / kf;
            term *= -u;
        }
        sum
    } else {
        (u.ln_1p() - u / (1.0 + u)) / (u * u)
    }
}

/// `dℓp/dξ` at ξ: `∂ℓ/∂ξ` at `σ̂(ξ)`, which is `Σ z² h(ξz) − Σ z/(1+ξz)` with `z = y/σ`
/// and `h` = [`log_gap_ratio`] (differentiating eq. 4.10 of Coles 2001 in ξ).
fn profile_slope(xi: f64, y: &[f64], stats: &SampleStats) -> f64 {
    let sigma = profile_sigma(xi, y, stats);
    let mut s = 0.0;
    for &v in y {
        let z = v / sigma;
        let u = xi * z;
        if u <= -1.0 {
            return f64::NAN;
        }
        s += z * z * log_gap_ratio(u) - z / (1.0 + u);
    }
    s
}

/// A maximum-likelihood GPD fit to a sample of positive excesses.
#[derive(Debug, Clone)]
pub struct GpdFit {
    gpd: Gpd,
    log_likelihood: f64,
    at_boundary: bool,
    shape_floor: f64,
    excesses: Vec<f64>,
    stats: SampleStats,
}

/// The profile log-likelihood of ξ: `max_σ ℓ(ξ, σ)`, with the ξ → −1 limit.
pub(crate) fn profile_log_likelihood(xi: f64, y: &[f64], stats: &SampleStats) -> f64 {
    if xi <= XI_MIN {
        return -(stats.n as f64) * stats.max.ln();
    }
    log_likelihood(xi, profile_sigma(xi, y, stats), y)
}

impl GpdFit {
    /// Fits a GPD (location 0) to `excesses` by maximum likelihood (module doc).
    ///
    /// # Errors
    /// Fewer than [`MIN_EXCESSES`] values, or a value that is not finite and > 0.
    pub fn new(excesses: &[f64]) -> Result<Self, TailError> {
        GpdFit::with_shape_floor(excesses, XI_MIN)
    }

    /// Fits with the shape constrained to `ξ >= shape_floor` (maximum likelihood over that
    /// part of the parameter space; `XI_MIN` is no constraint). A floor of 0 says "no upper
    /// endpoint": see `TAIL.md` for when that is the safe assumption.
    ///
    /// # Errors
    /// As [`GpdFit::new`]; also when `shape_floor` is not in `[XI_MIN, 1]`.
    pub fn with_shape_floor(excesses: &[f64], shape_floor: f64) -> Result<Self, TailError> {
        if !(XI_MIN..=1.0).contains(&shape_floor) {
            return Err(parameter("shape_floor", shape_floor, "in [-1, 1]"));
        }
        if excesses.len() < MIN_EXCESSES {
            return Err(TailError::TooFewExceedances {
                found: excesses.len(),
                needed: MIN_EXCESSES,
            });
        }
        if let Some(&bad) = excesses.iter().find(|v| !(v.is_finite() && **v > 0.0)) {
            return Err(parameter("excess", bad, "finite and > 0"));
        }
        let mut y = excesses.to_vec();
        y.sort_by(f64::total_cmp);
        let stats = SampleStats::of(&y);
        let lp = |xi: f64| profile_log_likelihood(xi, &y, &stats);
        let constrained = shape_floor > XI_MIN;

        // Grid over ξ: steps of 0.05 from the floor (or from −0.95 without one) to 1.5, then
        // coarser up to XI_MAX while the best point sits on the upper edge.
        let first = if constrained { shape_floor } else { -0.95 };
        let steps = (((1.5 - first) / 0.05).round() as usize).max(2);
        let mut grid: Vec<f64> = (0..=steps).map(|i| first + 0.05 * i as f64).collect();
        let mut values: Vec<f64> = grid.iter().map(|&x| lp(x)).collect();
        let mut best = argmax(&values);
        while best + 1 == grid.len() && grid[best] < XI_MAX {
            let next = (grid[best] * 1.5).min(XI_MAX);
            grid.push(next);
            values.push(lp(next));
            best = argmax(&values);
        }
        let lo = if best > 0 {
            grid[best - 1]
        } else if constrained {
            shape_floor
        } else {
            XI_MIN
        };
        let hi = if best + 1 == grid.len() {
            grid[best]
        } else {
            grid[best + 1]
        };
        let slope = |xi: f64| profile_slope(xi, &y, &stats);
        let (s_lo, s_hi) = (if lo <= XI_MIN { f64::NAN } else { slope(lo) }, slope(hi));
        let mut xi_hat = if constrained && lo == shape_floor && s_lo <= 0.0 {
            // The likelihood falls from the floor on: the constrained maximum is the floor.
            shape_floor
        } else if s_lo > 0.0 && s_hi < 0.0 {
            let mut f = |xi: f64| slope(xi);
            brent_root(&mut f, lo, hi, s_lo, s_hi, 1e-13)
        } else {
            let mut f = |xi: f64| lp(xi);
            let lo_open = if lo <= XI_MIN { XI_MIN + 1e-9 } else { lo };
            brent_max(&mut f, lo_open, hi, 1e-10).0
        };
        let mut ll = lp(xi_hat);
        let mut at_boundary = false;
        if !constrained {
            let boundary_ll = lp(XI_MIN);
            if boundary_ll >= ll {
                xi_hat = XI_MIN;
                ll = boundary_ll;
                at_boundary = true;
            }
        }
        if xi_hat >= XI_MAX * (1.0 - 1e-9) {
            at_boundary = true;
        }
        let sigma = if xi_hat <= XI_MIN {
            stats.max
        } else {
            profile_sigma(xi_hat, &y, &stats)
        };
        Ok(GpdFit {
            gpd: Gpd { xi: xi_hat, sigma },
            log_likelihood: ll,
            at_boundary,
            shape_floor,
            excesses: y,
            stats,
        })
    }

    /// The lowest shape the fit allowed (`XI_MIN`: unconstrained).
    pub fn shape_floor(&self) -> f64 {
        self.shape_floor
    }

    /// Whether a shape floor above `XI_MIN` was binding: the estimate sits on it.
    pub fn at_shape_floor(&self) -> bool {
        self.shape_floor > XI_MIN && self.gpd.xi == self.shape_floor
    }

    /// The fitted distribution.
    pub fn gpd(&self) -> Gpd {
        self.gpd
    }

    /// The maximised log-likelihood.
    pub fn log_likelihood(&self) -> f64 {
        self.log_likelihood
    }

    /// Whether the maximum lies on the edge of the searched shapes (ξ = −1, where the
    /// likelihood stops being bounded, or ξ = [`XI_MAX`]): the fit is then not regular and
    /// must not be extrapolated.
    pub fn at_boundary(&self) -> bool {
        self.at_boundary
    }

    /// The excesses, sorted ascending.
    pub fn excesses(&self) -> &[f64] {
        &self.excesses
    }

    /// The number of excesses.
    pub fn len(&self) -> usize {
        self.stats.n
    }

    /// Always false: a fit has at least [`MIN_EXCESSES`] excesses.
    pub fn is_empty(&self) -> bool {
        self.stats.n == 0
    }

    /// The profile log-likelihood of ξ.
    pub fn profile_log_likelihood(&self, xi: f64) -> f64 {
        profile_log_likelihood(xi, &self.excesses, &self.stats)
    }

    /// The profile-likelihood interval of ξ at `confidence`: the ξ whose profile
    /// log-likelihood is within `χ²₁(confidence)/2` of the maximum (Coles 2001, §2.6.6).
    /// The lower end is the shape floor (−1 without one) when the profile stays above the
    /// cut down to it; the upper end is `+inf` when it stays above up to [`XI_MAX`].
    ///
    /// # Errors
    /// When `confidence` is not in (0, 1).
    pub fn xi_interval(&self, confidence: f64) -> Result<(f64, f64), TailError> {
        let cut = self.log_likelihood - 0.5 * chi2_1_quantile(check_confidence(confidence)?);
        Ok(self.xi_range_above(cut))
    }

    /// The ξ range where the profile log-likelihood is at least `cut`.
    pub(crate) fn xi_range_above(&self, cut: f64) -> (f64, f64) {
        let mut f = |xi: f64| self.profile_log_likelihood(xi) - cut;
        let xi_hat = self.gpd.xi;
        let floor = self.shape_floor;
        let lower = if xi_hat <= floor {
            floor
        } else {
            crossing(&mut f, xi_hat, -1.0, floor, 0.05, 1e-10).unwrap_or(floor)
        };
        let upper = crossing(&mut f, xi_hat, 1.0, XI_MAX, 0.05, 1e-10).unwrap_or(f64::INFINITY);
        (lower, upper)
    }

    /// The observed-information covariance of `(σ, ξ)` (inverse of the negative Hessian of
    /// ℓ at the estimate, by central differences), as `[var σ, cov, var ξ]`; `None` at the
    /// boundary or where the Hessian is not negative definite.
    pub fn covariance(&self) -> Option<[f64; 3]> {
        if self.at_boundary {
            return None;
        }
        let (s0, x0) = (self.gpd.sigma, self.gpd.xi);
        let hs = s0 * 1e-4;
        let hx = 1e-4;
        let l = |s: f64, x: f64| log_likelihood(x, s, &self.excesses);
        let f0 = l(s0, x0);
        let dss = (l(s0 + hs, x0) - 2.0 * f0 + l(s0 - hs, x0)) / (hs * hs);
        let dxx = (l(s0, x0 + hx) - 2.0 * f0 + l(s0, x0 - hx)) / (hx * hx);
        let dsx = (l(s0 + hs, x0 + hx) - l(s0 + hs, x0 - hx) - l(s0 - hs, x0 + hx)
            + l(s0 - hs, x0 - hx))
            / (4.0 * hs * hx);
        // Information = −Hessian; invert the 2×2.
        let (a, b, c) = (-dss, -dsx, -dxx);
        let det = a * c - b * b;
        if !(a > 0.0 && det > 0.0 && det.is_finite()) {
            return None;
        }
        Some([c / det, -b / det, a / det])
    }
}

fn argmax(values: &[f64]) -> usize {
    let mut best = 0;
    for (i, v) in values.iter().enumerate() {
        if *v > values[best] {
            best = i;
        }
    }
    best
}

/// Where `f` (positive at `start`) first crosses zero walking from `start` in `direction`
/// with steps `step, 2·step, 4·step, …`, not past `limit`, to a tolerance `tol` in the
/// argument; `None` when it stays positive up to the limit.
pub(crate) fn crossing(
    f: &mut dyn FnMut(f64) -> f64,
    start: f64,
    direction: f64,
    limit: f64,
    step: f64,
    tol: f64,
) -> Option<f64> {
    let mut prev = start;
    let mut f_prev = f(start);
    if f_prev.is_nan() || f_prev <= 0.0 {
        return Some(start);
    }
    let mut d = step;
    loop {
        let mut next = start + direction * d;
        let last = (next - limit) * direction >= 0.0;
        if last {
            next = limit;
        }
        let f_next = f(next);
        if f_next <= 0.0 || f_next.is_nan() {
            let f_next = if f_next.is_nan() { -1.0 } else { f_next };
            return Some(brent_root(f, prev, next, f_prev, f_next, tol));
        }
        if last {
            return None;
        }
        prev = next;
        f_prev = f_next;
        d *= 2.0;
    }
}

/// The `confidence` quantile of χ² with one degree of freedom: `z²` with `z` the
/// `(1 + confidence)/2` normal quantile.
pub(crate) fn chi2_1_quantile(confidence: f64) -> f64 {
    let z = Normal::standard().inverse_cdf(0.5 * (1.0 + confidence));
    z * z
}

/// The largest of a profile over ξ of `g(ξ)` on `[lo, hi]` (grid then Brent).
pub(crate) fn max_over_xi(g: &mut dyn FnMut(f64) -> f64, lo: f64, hi: f64) -> f64 {
    grid_then_brent_max(g, lo, hi, 9, 1e-5 * (hi - lo).max(1e-3)).1
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn survival_and_excess_are_inverse_and_continuous_at_zero() {
        for xi in [-0.4, -1e-12, 0.0, 1e-12, 0.3] {
            let g = Gpd::new(xi, 2.0).unwrap();
            for p in [0.5, 1e-3, 1e-9] {
                let y = g.excess_for_survival(p).unwrap();
                assert!((g.survival(y) / p - 1.0).abs() < 1e-12, "xi {xi} p {p}");
            }
        }
        // ξ = 0 is the exponential: P(Y > y) = e^{−y/σ}.
        let e = Gpd::new(0.0, 2.0).unwrap();
        assert!((e.survival(3.0) - (-1.5f64).exp()).abs() < 1e-15);
        assert_eq!(Gpd::new(-0.5, 1.0).unwrap().endpoint(), Some(2.0));
    }

    #[test]
    fn slope_series_matches_the_direct_form_where_both_are_accurate() {
        for u in [-0.04, -0.01, 0.01, 0.049] {
            let direct = (f64::ln_1p(u) - u / (1.0 + u)) / (u * u);
            assert!((log_gap_ratio(u) - direct).abs() < 1e-10, "{u}");
        }
        assert_eq!(log_gap_ratio(0.0), 0.5);
    }

    #[test]
    fn exponential_sample_has_the_mean_as_scale_on_the_xi_zero_profile() {
        let y: Vec<f64> = (1..=20).map(|i| i as f64 * 0.37).collect();
        let s = SampleStats::of(&y);
        assert_eq!(profile_sigma(0.0, &y, &s), s.mean);
        // Continuity of σ̂(ξ) across 0.
        let near = profile_sigma(1e-9, &y, &s);
        assert!((near / s.mean - 1.0).abs() < 1e-6);
    }
}

#[cfg(test)]
mod degenerate_tests {
    use super::*;

    #[test]
    fn degenerate_samples_give_flagged_or_finite_fits_without_panicking() {
        // All excesses equal: the likelihood keeps rising towards ξ = −1 (a point mass is the
        // limit of ever narrower bounded tails), so the fit ends on the boundary.
        let same = vec![1.5; 20];
        let fit = GpdFit::new(&same).unwrap();
        assert!(fit.at_boundary());
        assert_eq!(fit.gpd().xi(), XI_MIN);
        // With the floor ξ ≥ 0 the same sample is exponential with σ = the mean.
        let floored = GpdFit::with_shape_floor(&same, 0.0).unwrap();
        assert_eq!(floored.gpd().xi(), 0.0);
        assert_eq!(floored.gpd().sigma(), 1.5);
        assert!(floored.at_shape_floor());
        // Twelve orders of magnitude between excesses: a very heavy tail, finite numbers.
        let wide: Vec<f64> = (0..30).map(|i| 10f64.powf(i as f64 * 0.4 - 6.0)).collect();
        let fit = GpdFit::new(&wide).unwrap();
        assert!(fit.gpd().xi() > 1.0 && fit.log_likelihood().is_finite());
        // Refused inputs.
        assert!(GpdFit::new(&[1.0; 5]).is_err());
        assert!(GpdFit::new(&[0.0; 20]).is_err());
        assert!(GpdFit::with_shape_floor(&same, 2.0).is_err());
    }
}
