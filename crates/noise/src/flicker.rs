//! Flicker (1/f) noise: one Gaussian per sample through a pinking filter.
//!
//! Target (docs/reference/front-end-and-noise.md#f2): one-sided PSD S(f) = S_w·f_c/f, so that white
//! noise of density² = S_w plus this generator gives S_w·(1 + f_c/f), with f_c the corner.
//!
//! Method: unit white noise w is filtered by a cascade of first-order pole–zero
//! (shelving) sections whose poles p_k = f_lowest·r^k and zeros z_k = p_k·√r
//! interleave on a log grid, r = 10^(1/2) (two sections per decade). Between its
//! pole and its zero a section falls at 20 dB/decade in power and it is flat
//! elsewhere; falling over half of each grid step, the cascade falls at
//! 10 dB/decade on average: 1/f power, 1/√f amplitude. This is the classic
//! rational approximation of a half-order integrator (Keshner, "1/f noise",
//! Proc. IEEE 70(3):212–218, 1982; Corsini & Saletti, "A 1/f^γ power spectrum
//! noise sequence generator", IEEE Trans. Instrum. Meas. 37(4):615–619, 1988;
//! both from memory). At two sections per decade the ripple in the middle of
//! the band is 0.15 % peak to peak [computed here].
//!
//! Each section is discretised by the matched-z transform, pole ρ = e^{−2π p/f_s}
//! and zero ζ = e^{−2π z/f_s}; the grid runs on until a zero reaches f_s (sections
//! above f_s/2 still tilt the response near Nyquist). The sampled response of
//! the bare grid leaves 1/f near Nyquist (+28 % at 0.38·f_s), and the flattening
//! below f_lowest pulls 4·f_lowest down by 1.4 %. So the coefficients of the
//! lowest section and of the sections with p > f_s/100 are refined once, at
//! construction, by a Levenberg–Marquardt least-squares fit of ln PSD to ln(1/f)
//! on 64 log-spaced points from 4·f_lowest to 0.45·f_s (Marquardt, SIAM J. Appl.
//! Math. 11(2):431–441, 1963, from memory); the gain comes out of the same fit.
//! The result holds 1/f within ±1 % from 4·f_lowest to 0.4·f_s (unit tests: ±0.7 %
//! at common rates, ±1.3 % over f_s = 100 Hz … 1 MHz, f_lowest = 1 mHz … f_s/20);
//! between 0.4·f_s and f_s/2 it is up to 7 % high; below `lowest_hz` it flattens
//! (finite power). Construction takes a few tenths of a millisecond.
//!
//! The designed transfer function is run in parallel form (partial fractions,
//! common practice): Π_k (1 − ζ_k q⁻¹)/(1 − ρ_k q⁻¹) = 1 + Σ_k e_k q⁻¹/(1 − ρ_k q⁻¹),
//! i.e. y[n] = G·(w[n] + Σ_k e_k s_k[n]) with s_k[n+1] = ρ_k s_k[n] + w[n]. Why
//! not the cascade itself: (1) the states are independent recursions, with no
//! serial chain through the sections in each sample, about twice as fast here;
//! (2) their joint stationary law has a closed form, E[s_j s_k] =
//! Σ_m (ρ_jρ_k)^m = 1/(1 − ρ_jρ_k), so the states are drawn from it (through its
//! Cholesky factor, from the same seed stream) at construction, and the noise
//! is stationary from the first sample with no warm-up and no burn-in. The
//! terms barely cancel (the "noise gain" (1 + Σ|e_k|σ_k)/σ_y stays below 3 in
//! the tests), so the parallel sum loses no precision; a fit that made it
//! exceed 100 would be dropped for the bare grid.
//!
//! Kasdin's fractional-difference filter ([`kasdin_taps`]) is the exact
//! alternative, but as an FIR it needs on the order of f_s/f_lowest taps
//! (320 000 at 16 kHz and 0.05 Hz) per output sample; the filter here costs one
//! Gaussian draw and two multiply-adds per section.

use rand_chacha::ChaCha8Rng;
use rand_distr::{Distribution, StandardNormal};
use std::f64::consts::TAU;

use crate::error::{non_negative, refuse, sample_rate, ParamError};
use crate::{rng_from_seed, AdditiveNoise};

/// Default lowest frequency of the 1/f region, Hz: below it the PSD flattens.
/// Trials last minutes, so slower wander is the DC drift's job.
pub const DEFAULT_FLICKER_LOWEST_HZ: f64 = 0.05;

/// Two pole–zero sections per decade: ripple 0.15 % peak to peak.
const SECTIONS_PER_DECADE: f64 = 2.0;
/// The grid stops at the first zero at or above this multiple of f_s.
const GRID_TOP_FRACTION: f64 = 1.0;
/// Largest tolerated [`parallel_noise_gain`]: beyond it the fitted design is
/// dropped for the bare grid. Fitted designs stay below 3.
const MAX_PARALLEL_NOISE_GAIN: f64 = 100.0;
/// Sections whose pole lies above this fraction of f_s are refined by the fit.
const REFINED_ABOVE_FRACTION: f64 = 0.01;
/// Points of the log grid on which the design is fitted.
const FIT_POINTS: usize = 64;
/// Levenberg–Marquardt iterations at most.
const FIT_MAX_ITERATIONS: usize = 400;
/// The fit also stops once the r.m.s. error of ln PSD on its grid is below
/// this (0.07 %; the ripple of the fixed mid-band sections alone is ≈ 0.05 % r.m.s.).
const FIT_TARGET_RMS: f64 = 7e-4;
/// The fit stops when the cosine between the residual and every column of the
/// Jacobian is below this: a stationary point of the squared error.
const FIT_COSINE_TOLERANCE: f64 = 1e-4;
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

/// One first-order section (1 − ζ q⁻¹)/(1 − ρ q⁻¹) of the designed cascade.
#[derive(Debug, Clone, Copy)]
struct Shelf {
    pole: f64,
    zero: f64,
}

/// A designed cascade and its parallel form, before the output gain.
#[derive(Debug)]
struct Design {
    shelves: Vec<Shelf>,
    log_gain: f64,
    residues: Vec<f64>,
}

/// Designs kept per (lowest frequency, sample rate): the fit takes a few tenths
/// of a millisecond and every trial of a scene asks for the same one. The
/// design is a pure function of the two numbers, so a cached copy is the same
/// bits as a fresh one.
type DesignCache = std::sync::Mutex<std::collections::HashMap<(u64, u64), std::sync::Arc<Design>>>;

/// Distinct designs kept at most (a suite has a handful; the cap bounds memory).
const MAX_CACHED_DESIGNS: usize = 64;

fn cached_design(lowest_hz: f64, fs: f64) -> std::sync::Arc<Design> {
    static CACHE: std::sync::OnceLock<DesignCache> = std::sync::OnceLock::new();
    let cache = CACHE.get_or_init(Default::default);
    let key = (lowest_hz.to_bits(), fs.to_bits());
    // A poisoned lock only means another thread panicked mid-insert of a whole
    // `Arc`; the map itself is intact.
    let lookup = |cache: &DesignCache| {
        cache
            .lock()
            .unwrap_or_else(|poisoned| poisoned.into_inner())
            .get(&key)
            .cloned()
    };
    if let Some(design) = lookup(cache) {
        return design;
    }
    let (shelves, log_gain) = design_shelves(lowest_hz, fs);
    let residues = parallel_residues(&shelves);
    let design = std::sync::Arc::new(Design {
        shelves,
        log_gain,
        residues,
    });
    let mut map = cache
        .lock()
        .unwrap_or_else(|poisoned| poisoned.into_inner());
    if map.len() >= MAX_CACHED_DESIGNS {
        map.clear();
    }
    map.insert(key, design.clone());
    design
}

/// Flicker noise with one-sided PSD S_w·f_c/f between `lowest_hz` and ≈ 0.4·f_s.
#[derive(Debug, Clone)]
pub struct FlickerNoise {
    /// The designed cascade (what [`FlickerNoise::model_psd_v2_per_hz`] evaluates).
    shelves: Vec<Shelf>,
    /// Output scale G, V per unit of the unit-variance drive.
    gain_v: f64,
    /// Parallel form: pole ρ_k of each state.
    poles: Vec<f64>,
    /// Parallel form: G·e_k, V per unit state.
    residues_v: Vec<f64>,
    /// Parallel form: s_k, the past drive filtered by 1/(1 − ρ_k q⁻¹).
    states: Vec<f64>,
    sample_rate_hz: f64,
    rng: ChaCha8Rng,
    /// The block's drive and output sums (scratch, reused across blocks).
    drive: Vec<f64>,
    sum_v: Vec<f64>,
}

impl FlickerNoise {
    /// Designs the filter and draws its stationary initial state.
    ///
    /// The seed stream gives first one normal per section (the initial state),
    /// then one per output sample.
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
    /// assert!((psd_10hz / (1e-12 * 1000.0 / 10.0) - 1.0).abs() < 0.01);
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
            return Err(refuse(
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
        let mut flicker = FlickerNoise {
            shelves: Vec::new(),
            gain_v: 0.0,
            poles: Vec::new(),
            residues_v: Vec::new(),
            states: Vec::new(),
            sample_rate_hz: fs,
            rng: rng.clone(),
            drive: Vec::new(),
            sum_v: Vec::new(),
        };
        if power_per_neper_v2 <= 0.0 {
            return Ok(flicker);
        }
        let design = cached_design(lowest_hz, fs);
        let shelves = design.shelves.clone();
        // Unit white noise has the one-sided PSD 2/f_s, and the fit makes
        // e^g·|H|² ≈ 1/f, so G²·(2/f_s)·|H|² = S_w f_c / f needs G² = S_w f_c e^g f_s/2.
        let gain_v = (power_per_neper_v2 * design.log_gain.exp() * fs / 2.0).sqrt();
        let poles: Vec<f64> = shelves.iter().map(|s| s.pole).collect();
        let residues_v = design.residues.iter().map(|e| gain_v * e).collect();
        let states = stationary_states(&poles, &mut rng);
        flicker.shelves = shelves;
        flicker.gain_v = gain_v;
        flicker.poles = poles;
        flicker.residues_v = residues_v;
        flicker.states = states;
        flicker.rng = rng;
        Ok(flicker)
    }

    /// The exact one-sided PSD of the sampled process at `f_hz`, V²/Hz:
    /// (2/f_s)·G²·|H(e^{jω})|² of the designed cascade. This is what the
    /// generator realizes; compare it with S_w·f_c/f to see the design error.
    pub fn model_psd_v2_per_hz(&self, f_hz: f64) -> f64 {
        if self.shelves.is_empty() {
            return 0.0;
        }
        let half_angle_sin = (std::f64::consts::PI * f_hz / self.sample_rate_hz).sin();
        let sin2 = half_angle_sin * half_angle_sin;
        let shape: f64 = self
            .shelves
            .iter()
            .map(|s| first_order_power(s.zero, sin2) / first_order_power(s.pole, sin2))
            .product();
        2.0 / self.sample_rate_hz * self.gain_v * self.gain_v * shape
    }

    /// Number of first-order pole–zero sections (0 when the flicker power is zero).
    pub fn section_count(&self) -> usize {
        self.shelves.len()
    }
}

impl AdditiveNoise for FlickerNoise {
    fn add_to(&mut self, out: &mut [f64]) {
        if self.states.is_empty() {
            return;
        }
        // The drive first (the same draws, in the same order), then the states
        // up to sixteen at a time (all of them, at any usual rate) with their
        // values in registers: each state's recursion is a chain of one
        // multiply and one add per sample, so the more of them in one pass the
        // more overlap in the pipeline, and each sample's sum still adds G·w,
        // then state 1, 2, … in order, as one sample at a time would.
        let n = out.len();
        self.drive.clear();
        self.drive
            .extend((0..n).map(|_| -> f64 { StandardNormal.sample(&mut self.rng) }));
        self.sum_v.clear();
        self.sum_v
            .extend(self.drive.iter().map(|&drive| self.gain_v * drive));
        let groups = self
            .states
            .chunks_mut(STATES_PER_PASS)
            .zip(self.poles.chunks(STATES_PER_PASS))
            .zip(self.residues_v.chunks(STATES_PER_PASS));
        for ((states, poles), residues) in groups {
            let (drive, sum) = (&self.drive, &mut self.sum_v);
            macro_rules! run {
                ($($n:literal)*) => {
                    match states.len() {
                        $($n => run_states::<$n>(states, poles, residues, drive, sum),)*
                        _ => unreachable!("chunks of at most {STATES_PER_PASS}"),
                    }
                };
            }
            run!(1 2 3 4 5 6 7 8 9 10 11 12 13 14 15 16);
        }
        for (sample, sum) in out.iter_mut().zip(&self.sum_v) {
            *sample += sum;
        }
    }
}

/// States advanced together in one pass over a block (see `add_to`).
const STATES_PER_PASS: usize = 16;

/// Adds `N` states' contributions to `sum_v` and advances them over `drive`.
fn run_states<const N: usize>(
    states: &mut [f64],
    poles: &[f64],
    residues_v: &[f64],
    drive: &[f64],
    sum_v: &mut [f64],
) {
    let mut state: [f64; N] = std::array::from_fn(|j| states[j]);
    let pole: [f64; N] = std::array::from_fn(|j| poles[j]);
    let residue: [f64; N] = std::array::from_fn(|j| residues_v[j]);
    for (sum, &w) in sum_v.iter_mut().zip(drive) {
        for j in 0..N {
            *sum += residue[j] * state[j];
            state[j] = pole[j] * state[j] + w;
        }
    }
    states.copy_from_slice(&state);
}

/// |1 − c·e^{−jω}|² = (1 − c)² + 4c·sin²(ω/2), written so that it stays
/// accurate when c → 1 and ω → 0 (no 1 − 2c cos ω + c² cancellation).
#[inline]
fn first_order_power(coefficient: f64, sin2_half_angle: f64) -> f64 {
    let distance = 1.0 - coefficient;
    distance * distance + 4.0 * coefficient * sin2_half_angle
}

/// ∂ ln|1 − c·e^{−jω}|² / ∂c.
#[inline]
fn first_order_log_power_slope(coefficient: f64, sin2_half_angle: f64) -> f64 {
    (4.0 * sin2_half_angle - 2.0 * (1.0 - coefficient))
        / first_order_power(coefficient, sin2_half_angle)
}

/// The log grid of shelves, matched-z mapped and refined by the fit; also the
/// fitted log gain g with e^g·|H(e^{j2πf/f_s})|² ≈ 1/f (f in Hz). Should the
/// refined design make a poorly conditioned parallel form (never seen over
/// f_s = 100 Hz … 1 MHz; unit test), the bare grid is used instead.
fn design_shelves(lowest_hz: f64, fs: f64) -> (Vec<Shelf>, f64) {
    let ratio = 10f64.powf(1.0 / SECTIONS_PER_DECADE);
    let mut pole_hz = Vec::new();
    let mut grid = Vec::new();
    for k in 0.. {
        let pole = lowest_hz * ratio.powi(k);
        let zero = pole * ratio.sqrt();
        pole_hz.push(pole);
        grid.push(pole);
        grid.push(zero);
        if zero >= GRID_TOP_FRACTION * fs {
            break;
        }
    }
    // Matched z, in the falling order ρ_0 > ζ_0 > ρ_1 > ζ_1 > … .
    let grid: Vec<f64> = grid.iter().map(|f| (-TAU * f / fs).exp()).collect();
    let pair_up = |sequence: &[f64]| -> Vec<Shelf> {
        sequence
            .chunks_exact(2)
            .map(|pair| Shelf {
                pole: pair[0],
                zero: pair[1],
            })
            .collect()
    };
    let free: Vec<bool> = (0..grid.len())
        .map(|i| i / 2 == 0 || pole_hz[i / 2] > REFINED_ABOVE_FRACTION * fs)
        .collect();
    let mut refined = grid.clone();
    let log_gain = refine(&mut refined, &free, lowest_hz, fs);
    let shelves = pair_up(&refined);
    if parallel_noise_gain(&shelves) <= MAX_PARALLEL_NOISE_GAIN {
        return (shelves, log_gain);
    }
    let mut bare = grid;
    let log_gain = refine(&mut bare, &vec![false; free.len()], lowest_hz, fs);
    (pair_up(&bare), log_gain)
}

/// Levenberg–Marquardt on r_j = ln|H(f_j)|² + g + ln f_j over the fit grid
/// (Marquardt 1963; damping on the diagonal of JᵀJ), for the `free` entries of
/// the coefficient sequence ρ_0, ζ_0, ρ_1, ζ_1, … (even entries poles, odd
/// entries zeros) and the log gain g. Each free entry is c = tanh x, which keeps
/// it inside the unit circle. Stops at a stationary point, or once the r.m.s.
/// error is below [`FIT_TARGET_RMS`]. Returns g; `sequence` is updated in place.
fn refine(sequence: &mut [f64], free: &[bool], lowest_hz: f64, fs: f64) -> f64 {
    let low = FIT_LOW_FACTOR * lowest_hz;
    let high = FIT_HIGH_FRACTION * fs;
    let grid: Vec<f64> = (0..FIT_POINTS)
        .map(|j| low * (high / low).powf(j as f64 / (FIT_POINTS - 1) as f64))
        .collect();
    let sin2: Vec<f64> = grid
        .iter()
        .map(|f| (std::f64::consts::PI * f / fs).sin().powi(2))
        .collect();
    // A pole (even position) divides the PSD, a zero (odd position) multiplies it.
    let sign = |i: usize| if i.is_multiple_of(2) { -1.0 } else { 1.0 };
    // ln f plus the log PSD of the fixed entries (the target is −ln f).
    let fixed: Vec<f64> = grid
        .iter()
        .zip(&sin2)
        .map(|(f, &s2)| {
            f.ln()
                + (0..sequence.len())
                    .filter(|&i| !free[i])
                    .map(|i| sign(i) * first_order_power(sequence[i], s2).ln())
                    .sum::<f64>()
        })
        .collect();
    let positions: Vec<usize> = (0..sequence.len()).filter(|&i| free[i]).collect();
    let free_count = positions.len();
    let unknowns = free_count + 1;
    let residuals = |coefs: &[f64], log_gain: f64, out: &mut [f64]| {
        for ((r, &s2), fixed_j) in out.iter_mut().zip(&sin2).zip(&fixed) {
            let mut value = fixed_j + log_gain;
            for (c, &position) in coefs.iter().zip(&positions) {
                value += sign(position) * first_order_power(*c, s2).ln();
            }
            *r = value;
        }
    };
    let cost = |r: &[f64]| r.iter().map(|v| v * v).sum::<f64>();

    let mut params: Vec<f64> = positions.iter().map(|&i| sequence[i].atanh()).collect();
    params.push(0.0);
    let mut coefs: Vec<f64> = positions.iter().map(|&i| sequence[i]).collect();
    let mut r = vec![0.0; FIT_POINTS];
    residuals(&coefs, 0.0, &mut r);
    params[free_count] = -r.iter().sum::<f64>() / FIT_POINTS as f64;
    residuals(&coefs, params[free_count], &mut r);
    let mut current_cost = cost(&r);

    let mut jacobian = vec![0.0; FIT_POINTS * unknowns];
    let mut normal = vec![0.0; unknowns * unknowns];
    let mut damped = vec![0.0; unknowns * unknowns];
    let mut gradient = vec![0.0; unknowns];
    let mut trial = vec![0.0; unknowns];
    let mut trial_coefs = vec![0.0; free_count];
    let mut trial_r = vec![0.0; FIT_POINTS];
    let mut damping = 1e-2;
    for _ in 0..FIT_MAX_ITERATIONS {
        for (row, &s2) in jacobian.chunks_exact_mut(unknowns).zip(&sin2) {
            for (k, (c, &position)) in coefs.iter().zip(&positions).enumerate() {
                row[k] = sign(position) * first_order_log_power_slope(*c, s2) * (1.0 - c * c);
            }
            row[free_count] = 1.0;
        }
        gradient.iter_mut().for_each(|v| *v = 0.0);
        normal.iter_mut().for_each(|v| *v = 0.0);
        for (row, r_j) in jacobian.chunks_exact(unknowns).zip(&r) {
            for a in 0..unknowns {
                gradient[a] += row[a] * r_j;
                for b in 0..=a {
                    normal[a * unknowns + b] += row[a] * row[b];
                }
            }
        }
        for a in 0..unknowns {
            for b in 0..a {
                normal[b * unknowns + a] = normal[a * unknowns + b];
            }
        }
        // Converged when the residual is orthogonal to every column of J (its
        // cosine with each column is below the tolerance): no direction lowers
        // the squared error to first order.
        let residual_norm = current_cost.sqrt();
        let stationary = (0..unknowns).all(|a| {
            gradient[a].abs()
                <= FIT_COSINE_TOLERANCE * normal[a * unknowns + a].sqrt() * residual_norm
        });
        let good_enough = current_cost < FIT_POINTS as f64 * FIT_TARGET_RMS * FIT_TARGET_RMS;
        if stationary || good_enough || damping > 1e12 {
            break;
        }
        damped.copy_from_slice(&normal);
        for a in 0..unknowns {
            damped[a * unknowns + a] *= 1.0 + damping;
        }
        let mut accepted = false;
        if let Some(step) = solve_positive_definite(&damped, &gradient) {
            for a in 0..unknowns {
                trial[a] = params[a] - step[a];
            }
            for (c, x) in trial_coefs.iter_mut().zip(&trial) {
                *c = x.tanh();
            }
            if trial_coefs.iter().all(|c| c.abs() < 1.0) {
                residuals(&trial_coefs, trial[free_count], &mut trial_r);
                let trial_cost = cost(&trial_r);
                if trial_cost.is_finite() && trial_cost < current_cost {
                    params.copy_from_slice(&trial);
                    coefs.copy_from_slice(&trial_coefs);
                    r.copy_from_slice(&trial_r);
                    current_cost = trial_cost;
                    accepted = true;
                }
            }
        }
        damping = if accepted {
            (damping / 3.0).max(1e-12)
        } else {
            damping * 4.0
        };
    }
    for (c, &position) in coefs.iter().zip(&positions) {
        sequence[position] = *c;
    }
    params[free_count]
}

/// How much the parallel form's terms can cancel: (1 + Σ_k |e_k|·σ_k)/σ_y, with
/// σ_k = 1/√(1 − ρ_k²) the r.m.s. of state k and σ_y² = 1 + Σ_jk e_j e_k/(1 − ρ_jρ_k)
/// the output variance (unit drive). 1 means no cancellation; rounding errors
/// grow in proportion. Infinite for coincident poles.
fn parallel_noise_gain(shelves: &[Shelf]) -> f64 {
    let residues = parallel_residues(shelves);
    let mut variance = 1.0;
    let mut spread = 1.0;
    for j in 0..shelves.len() {
        let pole_j = shelves[j].pole;
        spread += residues[j].abs() / (1.0 - pole_j * pole_j).sqrt();
        for k in 0..shelves.len() {
            let pole_k = shelves[k].pole;
            variance += residues[j] * residues[k] / ((1.0 - pole_j) + pole_j * (1.0 - pole_k));
        }
    }
    let gain = spread / variance.sqrt();
    if gain.is_finite() {
        gain
    } else {
        f64::INFINITY
    }
}

/// Partial fractions of Π_k (1 − ζ_k x)/(1 − ρ_k x) = 1 + Σ_k e_k x/(1 − ρ_k x)
/// (x = q⁻¹; the constant is 1 because the product is 1 at x = 0):
/// e_k = Π_j (ρ_k − ζ_j) / Π_{j≠k} (ρ_k − ρ_j), formed as a product of ratios
/// so that nothing under- or overflows.
fn parallel_residues(shelves: &[Shelf]) -> Vec<f64> {
    shelves
        .iter()
        .enumerate()
        .map(|(k, own)| {
            let mut residue = own.pole - own.zero;
            for (j, other) in shelves.iter().enumerate() {
                if j != k {
                    residue *= (own.pole - other.zero) / (own.pole - other.pole);
                }
            }
            residue
        })
        .collect()
}

/// Draws the parallel-form states from their joint stationary law
/// N(0, C), C_jk = 1/(1 − ρ_jρ_k) (unit drive), as L·z with C = L·Lᵀ.
/// 1 − ρ_jρ_k is formed as (1 − ρ_j) + ρ_j(1 − ρ_k) to keep its digits when
/// both poles are close to 1. A non-positive pivot (only from rounding) drops
/// that direction rather than failing.
fn stationary_states(poles: &[f64], rng: &mut ChaCha8Rng) -> Vec<f64> {
    let n = poles.len();
    let mut factor = vec![0.0; n * n];
    for i in 0..n {
        for j in 0..=i {
            let covariance = 1.0 / ((1.0 - poles[i]) + poles[i] * (1.0 - poles[j]));
            let projected: f64 = (0..j).map(|k| factor[i * n + k] * factor[j * n + k]).sum();
            let value = covariance - projected;
            factor[i * n + j] = if i == j {
                if value > 0.0 {
                    value.sqrt()
                } else {
                    0.0
                }
            } else if factor[j * n + j] > 0.0 {
                value / factor[j * n + j]
            } else {
                0.0
            };
        }
    }
    let normals: Vec<f64> = (0..n).map(|_| StandardNormal.sample(rng)).collect();
    (0..n)
        .map(|i| (0..=i).map(|k| factor[i * n + k] * normals[k]).sum())
        .collect()
}

/// Solves A·x = b for a small symmetric positive-definite A (row-major) by
/// Cholesky; `None` when A is not numerically positive definite.
fn solve_positive_definite(matrix: &[f64], rhs: &[f64]) -> Option<Vec<f64>> {
    let n = rhs.len();
    let mut factor = vec![0.0; n * n];
    for i in 0..n {
        for j in 0..=i {
            let projected: f64 = (0..j).map(|k| factor[i * n + k] * factor[j * n + k]).sum();
            let value = matrix[i * n + j] - projected;
            if i == j {
                if value.is_nan() || value <= 0.0 {
                    return None;
                }
                factor[i * n + i] = value.sqrt();
            } else {
                factor[i * n + j] = value / factor[j * n + j];
            }
        }
    }
    let mut y = vec![0.0; n];
    for i in 0..n {
        let projected: f64 = (0..i).map(|k| factor[i * n + k] * y[k]).sum();
        y[i] = (rhs[i] - projected) / factor[i * n + i];
    }
    let mut x = vec![0.0; n];
    for i in (0..n).rev() {
        let projected: f64 = (i + 1..n).map(|k| factor[k * n + i] * x[k]).sum();
        x[i] = (y[i] - projected) / factor[i * n + i];
    }
    Some(x)
}

/// Kasdin's fractional-integration filter for 1/f^α noise: h_0 = 1,
/// h_k = h_{k−1}·(k − 1 + α/2)/k (Kasdin, Proc. IEEE 83(5):802–827, 1995;
/// docs/reference/front-end-and-noise.md#f2).
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
        return Err(refuse("alpha", alpha, "must be in [0, 2]"));
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

    fn params(lowest_hz: f64) -> FlickerParams {
        FlickerParams {
            white_density_v_per_rt_hz: 2e-6,
            corner_hz: 500.0,
            lowest_hz,
        }
    }

    /// Sample rates and lowest frequencies the design must cope with: round
    /// and odd rates, the default lowest frequency, odd ones, and the largest
    /// allowed (f_s/20), which leaves a band of only 0.2–0.4·f_s.
    fn design_cases() -> Vec<(f64, f64)> {
        let mut cases = Vec::new();
        for fs in [1000.0, 1300.0, 2000.0, 4000.0, 16_000.0, 44_100.0, 96_000.0] {
            for lowest in [0.01, 0.05, 0.0731, 0.5, 3.3, fs / 200.0, fs / 20.0] {
                cases.push((fs, lowest));
            }
        }
        cases
    }

    /// The design realizes S_w f_c / f within ±1 % from 4·f_lowest to 0.4·f_s
    /// and within −1 % … +8 % up to f_s/2, for every case (the cascade's exact
    /// sampled spectrum, no noise).
    #[test]
    fn designed_psd_follows_one_over_f() {
        for (fs, lowest) in design_cases() {
            let flicker = FlickerNoise::new(&params(lowest), fs, [0; 32]).unwrap();
            let target = |f: f64| 4e-12 * 500.0 / f;
            let low = 4.0 * lowest;
            for i in 0..=400 {
                let f = low * (0.4 * fs / low).powf(i as f64 / 400.0);
                let ratio = flicker.model_psd_v2_per_hz(f) / target(f);
                assert!(
                    (ratio - 1.0).abs() < 0.01,
                    "fs {fs} lowest {lowest} f {f}: ratio {ratio}"
                );
            }
            for i in 0..=50 {
                let f = fs * (0.4 + 0.1 * i as f64 / 50.0);
                let ratio = flicker.model_psd_v2_per_hz(f) / target(f);
                assert!(
                    ratio > 0.99 && ratio < 1.08,
                    "fs {fs} lowest {lowest} f {f}: ratio {ratio} near Nyquist"
                );
            }
        }
    }

    /// A wider sweep, f_s = 100 Hz … 1 MHz and f_lowest = 1 mHz … f_s/20: the
    /// fitted design is kept (the bare grid would be off by +28 % near 0.4·f_s)
    /// and its parallel form has a noise gain below 4 (no cancellation to speak of).
    #[test]
    fn design_holds_over_a_wide_sweep() {
        for a in 0..12 {
            let fs = 100.0 * 10f64.powf(4.0 * a as f64 / 11.0);
            for b in 0..8 {
                let lowest = 1e-3 * (fs / 20.0 / 1e-3f64).powf(b as f64 / 7.0);
                let (shelves, _) = design_shelves(lowest, fs);
                let noise_gain = parallel_noise_gain(&shelves);
                assert!(noise_gain < 4.0, "fs {fs} lowest {lowest}: {noise_gain}");
                let flicker = FlickerNoise::new(&params(lowest), fs, [0; 32]).unwrap();
                let low = 4.0 * lowest;
                for i in 0..=100 {
                    let f = low * (0.4 * fs / low).powf(i as f64 / 100.0);
                    let ratio = flicker.model_psd_v2_per_hz(f) * f / (4e-12 * 500.0);
                    assert!(
                        (ratio - 1.0).abs() < 0.015,
                        "fs {fs} lowest {lowest} f {f}: ratio {ratio}"
                    );
                }
            }
        }
    }

    /// Two sections per decade from `lowest_hz` until a zero reaches f_s.
    #[test]
    fn section_count_follows_the_grid() {
        let flicker = FlickerNoise::new(&params(0.05), 16_000.0, [0; 32]).unwrap();
        // Zeros at 0.05·10^(k/2 + 1/4): the first ≥ 16 kHz is k = 11.
        assert_eq!(flicker.section_count(), 12);
        let flicker = FlickerNoise::new(&params(50.0), 1000.0, [0; 32]).unwrap();
        // 50·10^(k/2 + 1/4) ≥ 1000 first at k = 3.
        assert_eq!(flicker.section_count(), 4);
    }

    /// Parseval: the variance of the realized parallel form,
    /// G²·(1 + Σ e_j e_k/(1 − ρ_jρ_k)), equals ∫_0^{f_s/2} S(f) df of the
    /// cascade's model PSD (integrated numerically in ln f). This ties the
    /// gain, residues and stationary covariance to the spectrum.
    #[test]
    fn variance_matches_integrated_psd() {
        for (fs, lowest) in [(16_000.0, 0.05), (2000.0, 0.05), (1000.0, 50.0)] {
            let flicker = FlickerNoise::new(&params(lowest), fs, [0; 32]).unwrap();
            let residues = parallel_residues(&flicker.shelves);
            let mut unit_variance = 1.0;
            for (e_j, rho_j) in residues.iter().zip(&flicker.poles) {
                for (e_k, rho_k) in residues.iter().zip(&flicker.poles) {
                    unit_variance += e_j * e_k / (1.0 - rho_j * rho_k);
                }
            }
            let variance = flicker.gain_v * flicker.gain_v * unit_variance;
            // Below 10⁻⁴·f_lowest the PSD is flat: a rectangle; above, the
            // trapezoid rule in ln f on 200 000 points.
            let start = 1e-4 * lowest;
            let mut integral = flicker.model_psd_v2_per_hz(start) * start;
            let steps = 200_000;
            let ln_span = (fs / 2.0 / start).ln();
            let mut previous = flicker.model_psd_v2_per_hz(start) * start;
            for i in 1..=steps {
                let f = start * (ln_span * i as f64 / steps as f64).exp();
                let value = flicker.model_psd_v2_per_hz(f) * f;
                integral += 0.5 * (previous + value) * ln_span / steps as f64;
                previous = value;
            }
            assert!(
                (integral / variance - 1.0).abs() < 1e-6,
                "fs {fs}: {integral} vs {variance}"
            );
        }
    }

    /// The parallel form run by `add_to` has the same transfer function as the
    /// designed cascade: 1 + Σ e_k x/(1 − ρ_k x) = Π (1 − ζ_k x)/(1 − ρ_k x) at
    /// points x = e^{−jω} on the unit circle (complex arithmetic by hand).
    #[test]
    fn parallel_form_equals_cascade() {
        for (fs, lowest) in [(16_000.0, 0.05), (1000.0, 50.0), (96_000.0, 0.01)] {
            let (shelves, _) = design_shelves(lowest, fs);
            let residues = parallel_residues(&shelves);
            for f in [0.0, 0.01, 0.3, 7.0, 0.1 * fs, 0.33 * fs, 0.5 * fs] {
                let omega = TAU * f / fs;
                let x = (omega.cos(), -omega.sin());
                let mul =
                    |a: (f64, f64), b: (f64, f64)| (a.0 * b.0 - a.1 * b.1, a.0 * b.1 + a.1 * b.0);
                let div = |a: (f64, f64), b: (f64, f64)| {
                    let d = b.0 * b.0 + b.1 * b.1;
                    ((a.0 * b.0 + a.1 * b.1) / d, (a.1 * b.0 - a.0 * b.1) / d)
                };
                let one_minus = |c: f64| (1.0 - c * x.0, -c * x.1);
                let mut cascade = (1.0, 0.0);
                let mut parallel = (1.0, 0.0);
                for (shelf, e) in shelves.iter().zip(&residues) {
                    cascade = mul(cascade, div(one_minus(shelf.zero), one_minus(shelf.pole)));
                    let term = div((e * x.0, e * x.1), one_minus(shelf.pole));
                    parallel = (parallel.0 + term.0, parallel.1 + term.1);
                }
                let error = ((cascade.0 - parallel.0).powi(2) + (cascade.1 - parallel.1).powi(2))
                    .sqrt()
                    / (cascade.0.powi(2) + cascade.1.powi(2)).sqrt();
                assert!(error < 1e-9, "fs {fs} f {f}: relative error {error}");
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
        assert_eq!(flicker.model_psd_v2_per_hz(10.0), 0.0);
        let mut block = [0.0; 8];
        flicker.add_to(&mut block);
        assert_eq!(block, [0.0; 8]);
    }
}
