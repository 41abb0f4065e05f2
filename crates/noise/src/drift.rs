//! Slow DC drift (temperature) as a smooth second-order random process.
//!
//! Temperature drift moves the stationary-clutter phase and the mixer's DC level slowly
//! (docs/reference/front-end-and-noise.md#f3; the IF high-pass removes most of it). It is stated by
//! its RMS and its correlation time. A plain Ornstein–Uhlenbeck process with those two numbers has
//! a Lorentzian spectrum whose 1/f² tail would put tens of µV/√Hz of "drift" into the Hz band, far
//! above a module's noise floor; a temperature follows its heat source through a thermal lag, so
//! the drift here is an OU process passed through a first-order lag of the same time constant:
//! spectrum ∝ 1/(1 + (2πfτ)²)², autocorrelation (1 + |lag|/τ)·e^{−|lag|/τ} (common practice for a
//! thermally smoothed random walk).

use rand_chacha::ChaCha8Rng;
use rand_distr::{Distribution, StandardNormal};

use crate::error::{non_negative, positive, sample_rate, ParamError};
use crate::{rng_from_seed, AdditiveNoise};

/// A stationary Ornstein–Uhlenbeck process sampled exactly:
/// x[n+1] = ρ·x[n] + σ·√(1 − ρ²)·z, ρ = e^{−Δt/τ}, so that the autocorrelation
/// is σ²·e^{−|lag|/τ} at every lag, whatever Δt (exact discretization of the OU
/// SDE; Gillespie, Phys. Rev. E 54:2084, 1996 — from memory).
#[derive(Debug, Clone)]
pub(crate) struct OrnsteinUhlenbeck {
    pole: f64,
    drive: f64,
    state: f64,
}

impl OrnsteinUhlenbeck {
    /// Starts from the stationary distribution N(0, rms²).
    pub(crate) fn new(rms: f64, time_constant_s: f64, fs: f64, rng: &mut ChaCha8Rng) -> Self {
        let pole = (-1.0 / (time_constant_s * fs)).exp();
        let z: f64 = StandardNormal.sample(rng);
        OrnsteinUhlenbeck {
            pole,
            drive: rms * (1.0 - pole * pole).sqrt(),
            state: rms * z,
        }
    }

    /// The current value.
    pub(crate) fn value(&self) -> f64 {
        self.state
    }

    /// Advances one sample.
    pub(crate) fn advance(&mut self, rng: &mut ChaCha8Rng) {
        let z: f64 = StandardNormal.sample(rng);
        self.state = self.pole * self.state + self.drive * z;
    }
}

/// Parameters of [`DcDrift`].
#[derive(Debug, Clone, PartialEq)]
pub struct DcDriftParams {
    /// Standard deviation of the drift, V.
    pub rms_v: f64,
    /// Time constant τ of the process and of the thermal lag (autocorrelation (1 + lag/τ)·e^{−lag/τ}), s.
    pub time_constant_s: f64,
}

/// Slow zero-mean DC wander: an OU process through a first-order thermal lag.
#[derive(Debug, Clone)]
pub struct DcDrift {
    process: OrnsteinUhlenbeck,
    lag_pole: f64,
    lagged: f64,
    rng: ChaCha8Rng,
}

impl DcDrift {
    /// Makes the drift generator, starting from its stationary distribution.
    ///
    /// # Errors
    /// When `rms_v` is negative or not finite, or `time_constant_s` or the sample
    /// rate is not finite and positive.
    ///
    /// ```
    /// use echobench_noise::{AdditiveNoise, DcDrift, DcDriftParams};
    /// let params = DcDriftParams { rms_v: 0.01, time_constant_s: 60.0 };
    /// let mut drift = DcDrift::new(&params, 1000.0, [5; 32]).unwrap();
    /// let mut block = [0.0; 4];
    /// drift.add_to(&mut block);
    /// assert!(DcDrift::new(&DcDriftParams { time_constant_s: 0.0, ..params }, 1000.0, [5; 32]).is_err());
    /// ```
    pub fn new(
        params: &DcDriftParams,
        sample_rate_hz: f64,
        seed: [u8; 32],
    ) -> Result<Self, ParamError> {
        let fs = sample_rate(sample_rate_hz)?;
        let rms_v = non_negative("rms_v", params.rms_v)?;
        let time_constant_s = positive("time_constant_s", params.time_constant_s)?;
        let mut rng = rng_from_seed(seed);
        // A unit OU input through the lag 1/(1 + sτ) comes out with variance 1/2,
        // so the input carries √2·rms. Stationary start: the lagged state given the
        // input x is N(x/2, rms²/2) (their covariance is rms²).
        let process = OrnsteinUhlenbeck::new(
            std::f64::consts::SQRT_2 * rms_v,
            time_constant_s,
            fs,
            &mut rng,
        );
        let z: f64 = StandardNormal.sample(&mut rng);
        let lagged = 0.5 * process.value() + rms_v * std::f64::consts::FRAC_1_SQRT_2 * z;
        let lag_pole = (-1.0 / (time_constant_s * fs)).exp();
        Ok(DcDrift {
            process,
            lag_pole,
            lagged,
            rng,
        })
    }
}

impl AdditiveNoise for DcDrift {
    fn add_to(&mut self, out: &mut [f64]) {
        for sample in out.iter_mut() {
            *sample += self.lagged;
            self.lagged =
                self.lag_pole * self.lagged + (1.0 - self.lag_pole) * self.process.value();
            self.process.advance(&mut self.rng);
        }
    }
}
