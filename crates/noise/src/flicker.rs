//! Flicker (1/f) noise as a sum of log-spaced first-order (Ornstein–Uhlenbeck) sections.
//!
//! Target (physics.md §4): one-sided PSD S(f) = S_w·f_c/f, so that white noise of
//! density² = S_w plus this generator gives S_w·(1 + f_c/f), with f_c the corner.
//!
//! Method: a Lorentzian g/(1 + (f/f_k)²) with g ∝ 1/f_k, summed over corners f_k
//! spaced by a ratio r on a log axis, approximates 1/f; in the continuum limit
//! Σ_k (C/f_k)/(1 + (f/f_k)²) → π·C/(2·f·ln r) (the integral of 1/(1+u²)). A
//! Lorentzian of corner f_k and variance σ² has g = 2σ²/(π f_k), so every section
//! carries the same variance σ² = S_w·f_c·ln r: equal power per octave, as 1/f
//! requires. With two sections per decade the continuum sum ripples by less than
//! 0.01 dB [computed here]. This is the classic "sum of relaxation processes"
//! picture of 1/f noise (common practice; physics.md §4 names it as an option).
//!
//! Each section is sampled exactly (an AR(1) with pole ρ = e^{−2π f_k/f_s}) and
//! starts from its stationary distribution, so the noise is stationary from the
//! first sample: no warm-up. Sampled sections near f_s/2 alias, which would lift
//! the PSD near Nyquist by up to +80 %; the section variances therefore start at
//! the continuum value and are refined once, at construction, by a non-negative
//! least-squares fit (multiplicative updates) of the exact sampled PSDs to 1/f on
//! a log grid from 4·f_lowest to 0.45·f_s. The result holds 1/f within ±6 % from
//! 4·f_lowest to 0.4·f_s (unit test below); below `lowest_hz` the PSD flattens
//! (finite power), and close to f_s/2 it rises by up to ≈ 10 %.
//!
//! Kasdin's fractional-difference filter ([`kasdin_taps`]) is the exact
//! alternative, but as an FIR it needs on the order of f_s/f_lowest taps
//! (320 000 at 16 kHz and 0.05 Hz) per output sample; the sections cost a dozen
//! multiply-adds and Gaussian draws.

use rand_chacha::ChaCha8Rng;
use rand_distr::{Distribution, StandardNormal};
use std::f64::consts::{LN_10, TAU};

use crate::error::{non_negative, sample_rate, ParamError};
use crate::{rng_from_seed, AdditiveNoise};

/// Default lowest frequency of the 1/f region, Hz: below it the PSD flattens.
/// Trials last minutes, so slower wander is the DC drift's job.
pub const DEFAULT_FLICKER_LOWEST_HZ: f64 = 0.05;

/// Two sections per decade: ripple of the continuum sum < 0.01 dB.
const SECTIONS_PER_DECADE: f64 = 2.0;
/// Points of the log grid on which the section variances are fitted.
const FIT_POINTS: usize = 64;
/// Multiplicative-update iterations of the non-negative least-squares fit.
const FIT_ITERATIONS: usize = 400;
/// The fit grid starts this many times above `lowest_hz`…
const FIT_LOW_FACTOR: f64 = 4.0;
/// …and ends at this fraction of the sample rate.
const FIT_HIGH_FRACTION: f64 = 0.45;
/// `lowest_hz` may be at most this fraction of the sample rate, so that the
/// 1/f band spans at least about a decade.
const MAX_LOWEST_FRACTION: f64 = 1.0 / 20.0;

/// Parameters of [`FlickerNoise`].
#[derive(Debug, Clone, PartialEq)]
pub struct FlickerParams {
    /// One-sided white-noise density √S_w, V/√Hz, that this flicker is referred to.
    pub white_density_v_per_rt_hz: f64,
    /// Corner frequency f_c where the flicker PSD equals S_w, Hz (0 disables).
    pub corner_hz: f64,
    /// Lowest frequency of the 1/f region, Hz (see [`DEFAULT_FLICKER_LOWEST_HZ`]).
    pub lowest_hz: f64,
}

#[derive(Debug, Clone)]
struct Section {
    /// AR(1) pole ρ = e^{−2π f_k / f_s}.
    pole: f64,
    /// Innovation scale σ_k·√(1 − ρ²), V.
    drive_v: f64,
    /// Stationary standard deviation σ_k, V.
    sigma_v: f64,
    state_v: f64,
}

/// Flicker noise with one-sided PSD S_w·f_c/f between `lowest_hz` and ≈ 0.4·f_s.
#[derive(Debug, Clone)]
pub struct FlickerNoise {
    sections: Vec<Section>,
    sample_rate_hz: f64,
    rng: ChaCha8Rng,
}

impl FlickerNoise {
    /// Designs the sections and draws their stationary initial states.
    ///
    /// # Errors
    /// When a density or corner is negative or not finite, `lowest_hz` is not
    /// in (0, sample_rate_hz/20], or the sample rate is not finite and positive.
    ///
    /// ```
    /// use echobench_noise::{AdditiveNoise, FlickerNoise, FlickerParams};
    /// let params = FlickerParams {
    ///     white_density_v_per_rt_hz: 1e-6,
    ///     corner_hz: 1000.0,
    ///     lowest_hz: 0.05,
    /// };
    /// let mut flicker = FlickerNoise::new(&params, 16_000.0, [1; 32]).unwrap();
    /// let psd_10hz = flicker.model_psd_v2_per_hz(10.0);
    /// assert!((psd_10hz / (1e-12 * 1000.0 / 10.0) - 1.0).abs() < 0.05);
    /// let mut block = vec![0.0; 64];
    /// flicker.add_to(&mut block);
    /// ```
    pub fn new(
        params: &FlickerParams,
        sample_rate_hz: f64,
        seed: [u8; 32],
    ) -> Result<Self, ParamError> {
        let fs = sample_rate(sample_rate_hz)?;
        let density = non_negative(
            "white_density_v_per_rt_hz",
            params.white_density_v_per_rt_hz,
        )?;
        let corner_hz = non_negative("corner_hz", params.corner_hz)?;
        let lowest_hz = params.lowest_hz;
        if !(lowest_hz.is_finite() && lowest_hz > 0.0 && lowest_hz <= fs * MAX_LOWEST_FRACTION) {
            return Err(ParamError::new(
                "lowest_hz",
                lowest_hz,
                format!(
                    "must be > 0 and at most sample_rate_hz/20 = {} Hz",
                    fs * MAX_LOWEST_FRACTION
                ),
            ));
        }
        let mut rng = rng_from_seed(seed);
        // Flicker power per unit ln f: ∫ S_w f_c / f df = S_w f_c ln(f2/f1).
        let power_per_neper_v2 = density * density * corner_hz;
        let mut sections = Vec::new();
        if power_per_neper_v2 > 0.0 {
            let corners_hz = section_corners_hz(lowest_hz, fs);
            let weights = fit_weights(&corners_hz, lowest_hz, fs);
            let ln_ratio = LN_10 / SECTIONS_PER_DECADE;
            for (corner, weight) in corners_hz.iter().zip(&weights) {
                let pole = (-TAU * corner / fs).exp();
                let sigma_v = (weight * power_per_neper_v2 * ln_ratio).sqrt();
                let z: f64 = StandardNormal.sample(&mut rng);
                sections.push(Section {
                    pole,
                    drive_v: sigma_v * (1.0 - pole * pole).sqrt(),
                    sigma_v,
                    state_v: sigma_v * z,
                });
            }
        }
        Ok(FlickerNoise {
            sections,
            sample_rate_hz: fs,
            rng,
        })
    }

    /// The exact one-sided PSD of the sampled process at `f_hz`, V²/Hz: the sum of
    /// the sections' AR(1) spectra. This is what the generator realizes; compare
    /// it with S_w·f_c/f to see the design error.
    pub fn model_psd_v2_per_hz(&self, f_hz: f64) -> f64 {
        let omega = TAU * f_hz / self.sample_rate_hz;
        self.sections
            .iter()
            .map(|s| ar1_psd(s.pole, s.sigma_v * s.sigma_v, omega, self.sample_rate_hz))
            .sum()
    }

    /// Number of first-order sections (0 when the flicker power is zero).
    pub fn section_count(&self) -> usize {
        self.sections.len()
    }
}

impl AdditiveNoise for FlickerNoise {
    fn add_to(&mut self, out: &mut [f64]) {
        if self.sections.is_empty() {
            return;
        }
        for sample in out.iter_mut() {
            let mut sum_v = 0.0;
            for section in self.sections.iter_mut() {
                sum_v += section.state_v;
                let z: f64 = StandardNormal.sample(&mut self.rng);
                section.state_v = section.pole * section.state_v + section.drive_v * z;
            }
            *sample += sum_v;
        }
    }
}

/// Corners f_k = lowest·r^k, r = 10^(1/2), up to and including the first ≥ f_s/2.
fn section_corners_hz(lowest_hz: f64, fs: f64) -> Vec<f64> {
    let ratio = 10f64.powf(1.0 / SECTIONS_PER_DECADE);
    let mut corners = Vec::new();
    let mut k = 0;
    loop {
        let corner = lowest_hz * ratio.powi(k);
        corners.push(corner);
        if corner >= fs / 2.0 {
            return corners;
        }
        k += 1;
    }
}

/// One-sided PSD of an AR(1) x[n+1] = ρx[n] + e[n] of stationary variance σ²:
/// (2/f_s)·σ²(1 − ρ²)/(1 − 2ρ cos ω + ρ²).
fn ar1_psd(pole: f64, variance: f64, omega: f64, fs: f64) -> f64 {
    2.0 / fs * variance * (1.0 - pole * pole) / (1.0 - 2.0 * pole * omega.cos() + pole * pole)
}

/// Non-negative least squares, min ‖A w − 1‖², where A[j][k] is the PSD of
/// section k with the continuum variance, times f_j (so the target is 1), by
/// Lee–Seung multiplicative updates w ← w·(Aᵀ1)/(AᵀA w), which keep w ≥ 0 and
/// decrease the residual monotonically. Starts from w = 1 (the continuum design).
fn fit_weights(corners_hz: &[f64], lowest_hz: f64, fs: f64) -> Vec<f64> {
    let ln_ratio = LN_10 / SECTIONS_PER_DECADE;
    let low = FIT_LOW_FACTOR * lowest_hz;
    let high = FIT_HIGH_FRACTION * fs;
    let n = corners_hz.len();
    let mut design = vec![0.0; FIT_POINTS * n];
    for j in 0..FIT_POINTS {
        let f = low * (high / low).powf(j as f64 / (FIT_POINTS - 1) as f64);
        let omega = TAU * f / fs;
        for (k, corner) in corners_hz.iter().enumerate() {
            let pole = (-TAU * corner / fs).exp();
            design[j * n + k] = ar1_psd(pole, ln_ratio, omega, fs) * f;
        }
    }
    let mut at_target = vec![0.0; n];
    let mut gram = vec![0.0; n * n];
    for j in 0..FIT_POINTS {
        let row = &design[j * n..(j + 1) * n];
        for k in 0..n {
            at_target[k] += row[k];
            for l in 0..n {
                gram[k * n + l] += row[k] * row[l];
            }
        }
    }
    let mut weights = vec![1.0; n];
    let mut next = vec![0.0; n];
    for _ in 0..FIT_ITERATIONS {
        for k in 0..n {
            let denominator: f64 = (0..n).map(|l| gram[k * n + l] * weights[l]).sum();
            next[k] = if denominator > 0.0 {
                weights[k] * at_target[k] / denominator
            } else {
                0.0
            };
        }
        weights.copy_from_slice(&next);
    }
    weights
}

/// Kasdin's fractional-integration filter for 1/f^α noise: h_0 = 1,
/// h_k = h_{k−1}·(k − 1 + α/2)/k (Kasdin, Proc. IEEE 83(5):802–827, 1995; recursion as quoted in physics.md §4).
/// Filtering unit white noise with these taps gives PSD ∝ 1/f^α; α = 1 gives
/// 1, 0.5, 0.375, 0.3125, 0.2734375, …; α = 2 gives all ones (a random walk).
///
/// # Errors
/// When `alpha` is not finite or outside [0, 2].
///
/// ```
/// let taps = echobench_noise::kasdin_taps(1.0, 3).unwrap();
/// assert_eq!(taps, vec![1.0, 0.5, 0.375]);
/// ```
pub fn kasdin_taps(alpha: f64, count: usize) -> Result<Vec<f64>, ParamError> {
    if !(alpha.is_finite() && (0.0..=2.0).contains(&alpha)) {
        return Err(ParamError::new("alpha", alpha, "must be in [0, 2]"));
    }
    let mut taps = Vec::with_capacity(count);
    let mut tap = 1.0;
    for k in 0..count {
        if k > 0 {
            tap *= (k as f64 - 1.0 + alpha / 2.0) / k as f64;
        }
        taps.push(tap);
    }
    Ok(taps)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The fitted design realizes S_w f_c / f within ±6 % from 4·f_lowest to 0.4·f_s,
    /// at several sample rates (the sections' exact AR(1) spectra, no noise).
    #[test]
    fn designed_psd_follows_one_over_f() {
        for fs in [1000.0, 1300.0, 4000.0, 16_000.0, 96_000.0] {
            let params = FlickerParams {
                white_density_v_per_rt_hz: 2e-6,
                corner_hz: 500.0,
                lowest_hz: DEFAULT_FLICKER_LOWEST_HZ,
            };
            let flicker = FlickerNoise::new(&params, fs, [0; 32]).unwrap();
            let target = |f: f64| 4e-12 * 500.0 / f;
            for i in 0..=100 {
                let f = 0.2 * (0.4 * fs / 0.2f64).powf(i as f64 / 100.0);
                let ratio = flicker.model_psd_v2_per_hz(f) / target(f);
                assert!((ratio - 1.0).abs() < 0.06, "fs {fs} f {f}: ratio {ratio}");
            }
        }
    }

    #[test]
    fn zero_corner_gives_silence() {
        let params = FlickerParams {
            white_density_v_per_rt_hz: 1e-6,
            corner_hz: 0.0,
            lowest_hz: 0.05,
        };
        let mut flicker = FlickerNoise::new(&params, 1000.0, [0; 32]).unwrap();
        assert_eq!(flicker.section_count(), 0);
        let mut block = [0.0; 8];
        flicker.add_to(&mut block);
        assert_eq!(block, [0.0; 8]);
    }
}
