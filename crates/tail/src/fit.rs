//! Peaks over threshold: the rate of cluster maxima above any level, with intervals, and the
//! level of a target rate.
//!
//! # Model (Coles 2001, §4.4 and §5.3; Smith 1989)
//!
//! Cluster maxima above the threshold `u` arrive as a Poisson process of rate `λ_u` per hour
//! (`n_u ~ Poisson(λ_u T)`), and their excesses are independent GPD(ξ, σ). So the rate of
//! clusters whose maximum exceeds `x >= u` is
//! `λ(x) = λ_u · (1 + ξ (x − u)/σ)^(−1/ξ)` (Coles 2001, eq. 4.13 with the exceedance
//! probability replaced by the Poisson rate). Estimates: `λ̂_u = n_u/T` and the GPD MLE.
//!
//! # Interval: one profile likelihood over the joint model
//!
//! The log-likelihood of `(λ_u, ξ, σ)` is `n_u ln λ_u − λ_u T + ℓ_GPD(ξ, σ)`. The interval
//! for `λ(x)` is the profile-likelihood interval of `c = ln λ(x)` in that joint model:
//! all `c` with `2 (ℓ̂ − ℓ_prof(c)) <= χ²₁(conf)` (Coles 2001, §2.6.6 and §4.3.3 for the
//! return level). Writing `w = ln P(Y > x − u)`, the constraint is `ln λ_u + w = c`, and the
//! likelihood splits, so `ℓ_prof(c) = max_w [ℓ_Pois(c − w) + ℓ*_GPD(w)]` where
//! `ℓ*_GPD(w)` profiles the GPD over ξ with σ set by `w` (`σ = ξ d / (e^{−ξ w} − 1)`,
//! `d = x − u`; Coles 2001, §4.3.3's reparameterisation by a tail quantity). Both maxima are
//! one-dimensional (grid, then Brent) over ranges that cannot cut off anything above the
//! cut: each part is at most its own maximum, so only `ξ` whose own profile is within the
//! cut and only `λ_u` whose own Poisson likelihood is within the cut can matter.
//!
//! **Why this combination.** The two uncertainties are of one kind (sampling) and the
//! likelihood already says how they trade off, so one likelihood-ratio interval accounts for
//! both with the right asymmetry, and it is invariant to the parameterisation: the interval
//! of the threshold for a target rate is the same set read the other way (below). Adding the
//! two parts' intervals (Bonferroni) would over-cover; a delta-method interval is symmetric in
//! `ln λ` and under-covers far in the tail, where the profile for the GPD part is known to be
//! strongly skewed (Coles 2001, §4.3.3, Fig. 4.5).
//!
//! **The threshold for a target rate `r`** is `x_r = u + σ/ξ · ((r/λ_u)^(−ξ) − 1)` (Coles
//! 2001, eq. 4.13 solved for the level). Its interval is every `x` at which the hypothesis
//! `λ(x) = r` is not rejected, i.e. `ℓ_prof(ln r; x) >= ℓ̂ − χ²₁/2`: the profile of the level
//! itself, since for every parameter value `λ(x)` decreases in `x`.

use crate::alarm::TailAccumulator;
use crate::dispersion::TrialDispersion;
use crate::error::{check_confidence, parameter, TailError};
use crate::gof::{anderson_darling, judge, GoodnessOfFit};
use crate::gpd::{
    chi2_1_quantile, crossing, excess_for_log_survival, log_likelihood, max_over_xi, Gpd, GpdFit,
    XI_MIN,
};
use crate::lattice::{MAX_STEP_TO_SCALE, MIN_DISTINCT};
use crate::solve::{brent_root, grid_then_brent_max};

/// A value with a two-sided interval.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct Estimate {
    /// The point estimate.
    pub value: f64,
    /// Lower end.
    pub lower: f64,
    /// Upper end (may be `+inf`).
    pub upper: f64,
}

impl Estimate {
    /// Whether `v` lies in `[lower, upper]`.
    pub fn contains(&self, v: f64) -> bool {
        self.lower <= v && v <= self.upper
    }
}

/// Whether a fit may be used to extrapolate, and if not, why not.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub enum Verdict {
    /// The goodness-of-fit test does not reject the fit at the level asked for.
    Usable,
    /// The Anderson–Darling test rejects the GPD at the level asked for: fall back to the
    /// brute-force bound.
    Rejected {
        /// The test's p-value (an upper bound when reported as `Below`).
        p_value: f64,
    },
    /// The fitted shape lies outside the goodness-of-fit table (ξ < −0.5, where the estimate
    /// is not regular, or ξ > 0.9): the fit cannot be checked, so do not use it.
    Untestable,
    /// The maximum lies on the edge of the searched shapes: not a regular fit.
    Boundary,
    /// The excesses are too coarse for a continuous tail: fewer than
    /// [`crate::lattice::MIN_DISTINCT`] distinct values, or on a lattice whose step exceeds
    /// [`crate::lattice::MAX_STEP_TO_SCALE`] of the fitted scale ([`crate::lattice`]). Do
    /// not use it; the report says why.
    Coarse {
        /// The lattice step of the excesses (`None`: no lattice found, too few distinct
        /// values).
        step: Option<f64>,
        /// Distinct excesses.
        distinct: usize,
    },
}

/// A peaks-over-threshold fit at threshold `u`: the exceedance rate and the GPD of the
/// excesses of cluster maxima (module doc).
#[derive(Debug, Clone)]
pub struct TailFit {
    threshold: f64,
    exposure_h: f64,
    fit: GpdFit,
    gof: GoodnessOfFit,
    dispersion: TrialDispersion,
}

/// Where a maximum over w or ξ found nothing (every candidate outside the support).
const IMPOSSIBLE: f64 = f64::NEG_INFINITY;

/// Tolerance of interval ends: in `ln λ` (so relative in the rate), and in units of σ̂ for
/// thresholds; far below any interval's width.
const ROOT_TOL: f64 = 1e-7;

/// Added to the cut when bounding the search ranges, so the bounds sit safely outside it.
const RANGE_MARGIN: f64 = 2.0;

impl TailFit {
    /// Fits the clusters of `acc` declustered at `u` (their maxima strictly above `u`), with
    /// the shape constrained to `ξ >= shape_floor` ([`crate::NO_SHAPE_FLOOR`]: none), and
    /// widens its intervals by the trial-to-trial over-dispersion of the cluster counts
    /// ([`TailAccumulator::trial_dispersion`], [`TailFit::with_dispersion`]).
    ///
    /// # Errors
    /// As [`TailAccumulator::excesses`] and [`TailFit::from_excesses`].
    pub fn from_accumulator(
        acc: &TailAccumulator,
        u: f64,
        shape_floor: f64,
    ) -> Result<Self, TailError> {
        TailFit::from_excesses(u, &acc.excesses(u)?, acc.exposure_h(), shape_floor)?
            .with_dispersion(acc.trial_dispersion(u)?)
    }

    /// The same fit with intervals widened by `dispersion.scale` (the log-likelihood cut
    /// multiplied by it: quasi-likelihood, [`crate::dispersion`]). Point estimates do not
    /// change. A fit made by [`TailFit::from_excesses`] assumes no over-dispersion until
    /// given one; one from [`TailFit::from_accumulator`] has its own.
    ///
    /// # Errors
    /// When the scale is not finite and >= 1.
    pub fn with_dispersion(mut self, dispersion: TrialDispersion) -> Result<Self, TailError> {
        if !(dispersion.scale.is_finite() && dispersion.scale >= 1.0) {
            return Err(parameter(
                "dispersion.scale",
                dispersion.scale,
                "finite and >= 1",
            ));
        }
        self.dispersion = dispersion;
        Ok(self)
    }

    /// The trial-to-trial dispersion the intervals are widened by.
    pub fn dispersion(&self) -> TrialDispersion {
        self.dispersion
    }

    /// Fits excesses over `u` observed in `exposure_h` hours, with the shape constrained to
    /// `ξ >= shape_floor` ([`crate::NO_SHAPE_FLOOR`]: none; see [`GpdFit::with_shape_floor`]).
    ///
    /// # Errors
    /// Fewer than [`crate::MIN_EXCESSES`] excesses, a bad excess, an exposure that is not
    /// finite and > 0, or a shape floor out of range.
    pub fn from_excesses(
        u: f64,
        excesses: &[f64],
        exposure_h: f64,
        shape_floor: f64,
    ) -> Result<Self, TailError> {
        if !u.is_finite() {
            return Err(parameter("u", u, "finite"));
        }
        if !(exposure_h.is_finite() && exposure_h > 0.0) {
            return Err(parameter("exposure_h", exposure_h, "finite and > 0"));
        }
        let fit = GpdFit::with_shape_floor(excesses, shape_floor)?;
        let g = fit.gpd();
        let a2 = anderson_darling(fit.excesses(), |y| g.cdf(y));
        let gof = judge(a2, g.xi());
        Ok(TailFit {
            threshold: u,
            exposure_h,
            fit,
            gof,
            dispersion: TrialDispersion::NONE,
        })
    }

    /// The threshold u.
    pub fn threshold(&self) -> f64 {
        self.threshold
    }

    /// Clusters with maximum above u (`n_u`).
    pub fn exceedances(&self) -> usize {
        self.fit.len()
    }

    /// Noise-only time, hours.
    pub fn exposure_h(&self) -> f64 {
        self.exposure_h
    }

    /// The fitted GPD of the excesses.
    pub fn gpd(&self) -> Gpd {
        self.fit.gpd()
    }

    /// The GPD fit (profile of ξ, covariance, the excesses).
    pub fn gpd_fit(&self) -> &GpdFit {
        &self.fit
    }

    /// The Anderson–Darling test of the fit.
    pub fn goodness_of_fit(&self) -> GoodnessOfFit {
        self.gof
    }

    /// Whether the fit may be used, judged at significance `level` (e.g. 0.05).
    pub fn verdict(&self, level: f64) -> Verdict {
        if self.fit.at_boundary() {
            return Verdict::Boundary;
        }
        if let Some(coarse) = self.coarseness() {
            return coarse;
        }
        match self.gof.rejects(level) {
            None => Verdict::Untestable,
            Some(true) => Verdict::Rejected {
                p_value: self.gof.p_value.map_or(f64::NAN, |p| p.value()),
            },
            Some(false) => Verdict::Usable,
        }
    }

    /// `Some(Verdict::Coarse { .. })` when the excesses are too coarse for the continuous
    /// likelihood ([`crate::lattice`]), else `None`.
    pub fn coarseness(&self) -> Option<Verdict> {
        let y = self.fit.excesses();
        let distinct = crate::lattice::distinct(y);
        let step = crate::lattice::lattice_step(y);
        let too_coarse = step.is_some_and(|s| s > MAX_STEP_TO_SCALE * self.gpd().sigma());
        (distinct < MIN_DISTINCT || too_coarse).then_some(Verdict::Coarse { step, distinct })
    }

    /// `n_u / T`, per hour.
    pub fn exceedance_rate_per_h(&self) -> f64 {
        self.fit.len() as f64 / self.exposure_h
    }

    /// The point estimate of `λ(x)`, per hour (0 beyond a fitted endpoint). For `x < u` this
    /// is not a tail estimate and the rate at `u` is returned.
    pub fn rate_per_h(&self, x: f64) -> f64 {
        self.exceedance_rate_per_h() * self.gpd().survival(x - self.threshold)
    }

    /// `λ(x)` with its profile-likelihood interval at `confidence` (module doc).
    ///
    /// # Errors
    /// When `x` is not finite or below `u`, or `confidence` is not in (0, 1).
    pub fn rate_interval(&self, x: f64, confidence: f64) -> Result<Estimate, TailError> {
        check_confidence(confidence)?;
        if !(x.is_finite() && x >= self.threshold) {
            return Err(parameter("x", x, "finite and >= the fit threshold"));
        }
        // Quasi-likelihood: log-likelihood differences divided by φ, i.e. the cut times φ.
        let q = chi2_1_quantile(confidence) * self.dispersion.scale;
        let profile = JointProfile::new(self, q);
        let d = x - self.threshold;
        let cut = profile.max - 0.5 * q;
        let mut h = |c: f64| profile.at(c, d) - cut;
        let a0 = profile.a0;
        let w_hat = self.gpd().log_survival(d);
        let c_hi_limit = a0 + profile.b_hi;
        let floor = a0 - 700.0;
        if w_hat.is_finite() {
            let c_hat = a0 + w_hat;
            let lower = crossing(&mut h, c_hat, -1.0, floor, 0.25, ROOT_TOL).map_or(0.0, f64::exp);
            let upper = crossing(&mut h, c_hat, 1.0, c_hi_limit, 0.25, ROOT_TOL)
                .map_or(c_hi_limit.exp(), f64::exp);
            Ok(Estimate {
                value: self.rate_per_h(x),
                lower,
                upper,
            })
        } else {
            // x lies beyond the fitted endpoint: the estimate is 0; the upper end is where the
            // profile, rising as c falls, first reaches the cut.
            let mut c = a0;
            let mut prev = c_hi_limit;
            let mut h_prev = h(prev);
            let mut step = 0.25;
            let mut upper = 0.0;
            while c > floor {
                let hc = h(c);
                if hc >= 0.0 {
                    upper = if h_prev < 0.0 {
                        brent_root(&mut h, c, prev, hc, h_prev, 1e-10).exp()
                    } else {
                        prev.exp()
                    };
                    break;
                }
                prev = c;
                h_prev = hc;
                c -= step;
                step *= 2.0;
            }
            Ok(Estimate {
                value: 0.0,
                lower: 0.0,
                upper,
            })
        }
    }

    /// The threshold whose rate is `rate_per_h`, with its profile-likelihood interval (module
    /// doc). The lower end is `u` when rates down to `u` are not rejected (read the
    /// brute-force counts there), the upper end `+inf` when no level is high enough to be
    /// rejected (a tail too uncertain to bound).
    ///
    /// # Errors
    /// When the rate is not finite and > 0, or not below the exceedance rate at u
    /// ([`TailError::RateAboveFitThreshold`]), or `confidence` is not in (0, 1).
    pub fn threshold_for_rate(
        &self,
        rate_per_h: f64,
        confidence: f64,
    ) -> Result<Estimate, TailError> {
        check_confidence(confidence)?;
        if !(rate_per_h.is_finite() && rate_per_h > 0.0) {
            return Err(parameter("rate_per_h", rate_per_h, "finite and > 0"));
        }
        let lambda_u = self.exceedance_rate_per_h();
        if rate_per_h >= lambda_u {
            return Err(TailError::RateAboveFitThreshold {
                rate_per_h,
                threshold_rate_per_h: lambda_u,
            });
        }
        let g = self.gpd();
        let x_hat = self.threshold
            + excess_for_log_survival(g.xi(), g.sigma(), (rate_per_h / lambda_u).ln());
        // Quasi-likelihood: log-likelihood differences divided by φ, i.e. the cut times φ.
        let q = chi2_1_quantile(confidence) * self.dispersion.scale;
        let profile = JointProfile::new(self, q);
        let cut = profile.max - 0.5 * q;
        let c = rate_per_h.ln();
        let u = self.threshold;
        let mut h = |x: f64| profile.at(c, x - u) - cut;
        let step = 0.25 * g.sigma();
        let lower = crossing(&mut h, x_hat, -1.0, u, step, ROOT_TOL * g.sigma()).unwrap_or(u);
        let upper = crossing(
            &mut h,
            x_hat,
            1.0,
            x_hat + g.sigma() * 1e9,
            step,
            ROOT_TOL * g.sigma(),
        )
        .unwrap_or(f64::INFINITY);
        Ok(Estimate {
            value: x_hat,
            lower,
            upper,
        })
    }
}

/// The joint profile likelihood of `ln λ(x)` (module doc), with its search ranges.
struct JointProfile<'a> {
    y: &'a [f64],
    n: f64,
    exposure_h: f64,
    /// ln(n/T), where the Poisson part peaks.
    a0: f64,
    /// The Poisson part's range of `ln λ_u − a0` that can matter.
    b_lo: f64,
    b_hi: f64,
    /// The ξ range that can matter.
    xi_lo: f64,
    xi_hi: f64,
    /// The joint maximum ℓ̂.
    max: f64,
    /// The GPD part's maximum and scale estimate.
    g_max: f64,
    sigma_hat: f64,
}

impl<'a> JointProfile<'a> {
    fn new(fit: &'a TailFit, q: f64) -> Self {
        let n = fit.fit.len() as f64;
        let t = fit.exposure_h;
        let a0 = (n / t).ln();
        let delta = 0.5 * q + RANGE_MARGIN;
        // n (b − e^b + 1) = −Δ on each side of 0 (the Poisson log-likelihood drop).
        let mut pois = |b: f64| n * (b - b.exp() + 1.0) + delta;
        let b_lo_end = -(delta / n) - 1.0;
        let b_hi_end = (2.0 * delta / n).sqrt();
        let b_lo = brent_root(
            &mut pois,
            b_lo_end,
            0.0,
            pois_at(n, delta, b_lo_end),
            delta,
            1e-12,
        );
        let b_hi = brent_root(
            &mut pois,
            0.0,
            b_hi_end,
            delta,
            pois_at(n, delta, b_hi_end),
            1e-12,
        );
        let g_max = fit.fit.log_likelihood();
        let (xi_lo, xi_hi) = fit.fit.xi_range_above(g_max - delta);
        let xi_hi = if xi_hi.is_finite() {
            xi_hi
        } else {
            crate::gpd::XI_MAX
        };
        let xi_lo = xi_lo.max(XI_MIN + 1e-9);
        let max = n * a0 - n + g_max;
        JointProfile {
            y: fit.fit.excesses(),
            n,
            exposure_h: t,
            a0,
            b_lo,
            b_hi,
            xi_lo,
            xi_hi,
            max,
            g_max,
            sigma_hat: fit.fit.gpd().sigma(),
        }
    }

    /// The Poisson log-likelihood at `a = ln λ_u`.
    fn poisson(&self, a: f64) -> f64 {
        self.n * a - self.exposure_h * a.exp()
    }

    /// `max_ξ ℓ(ξ, σ(ξ, w))` with σ set so that `ln P(Y > d) = w`.
    fn gpd_at_log_survival(&self, w: f64, d: f64) -> f64 {
        if w.is_nan() || w >= 0.0 {
            return IMPOSSIBLE;
        }
        let mut g = |xi: f64| {
            let sigma = if xi == 0.0 {
                -d / w
            } else {
                xi * d / (-xi * w).exp_m1()
            };
            log_likelihood(xi, sigma, self.y)
        };
        max_over_xi(&mut g, self.xi_lo, self.xi_hi)
    }

    /// ℓ_prof(c) at `d = x − u`.
    ///
    /// The maximum over `w` is searched in `ln(−w)`: for a level just above `u` the best `w`
    /// is about `−d/σ̂`, tiny, and a linear grid would step over it. The range is where the
    /// Poisson part can matter (`c − w` within `[a0 + b_lo, a0 + b_hi]`), cut below at
    /// `−w = 1e-6 d/σ̂` (a scale a million times the estimate, which the GPD likelihood
    /// rules out by far more than any cut).
    fn at(&self, c: f64, d: f64) -> f64 {
        if d <= 0.0 {
            // At u itself every GPD gives P(Y > 0) = 1: only the Poisson part is left.
            return self.poisson(c) + self.g_max;
        }
        let m_hi = self.a0 + self.b_hi - c;
        let m_lo = (self.a0 + self.b_lo - c).max(1e-6 * d / self.sigma_hat);
        if m_hi.is_nan() || m_hi <= m_lo {
            return IMPOSSIBLE;
        }
        let mut f = |v: f64| {
            let m = v.exp();
            self.poisson(c + m) + self.gpd_at_log_survival(-m, d)
        };
        grid_then_brent_max(&mut f, m_lo.ln(), m_hi.ln(), 9, 1e-6).1
    }
}

fn pois_at(n: f64, delta: f64, b: f64) -> f64 {
    n * (b - b.exp() + 1.0) + delta
}
