//! White Gaussian noise from a one-sided voltage density.

use rand_chacha::ChaCha8Rng;
use rand_distr::{Distribution, StandardNormal};

use crate::error::{non_negative, sample_rate, ParamError};
use crate::{rng_from_seed, AdditiveNoise};

/// Zero-mean white Gaussian noise with a flat one-sided PSD.
///
/// A one-sided density `d` (V/√Hz) spread over 0 … f_s/2 has variance
/// σ² = d²·f_s/2, so each sample is σ·N(0, 1) with σ = d·√(f_s/2).
#[derive(Debug, Clone)]
pub struct WhiteNoise {
    sigma_v: f64,
    rng: ChaCha8Rng,
}

impl WhiteNoise {
    /// Makes a white-noise generator.
    ///
    /// # Errors
    /// When `density_v_per_rt_hz` is negative or not finite, or `sample_rate_hz`
    /// is not finite and positive.
    ///
    /// ```
    /// use echobench_noise::{AdditiveNoise, WhiteNoise};
    /// let mut noise = WhiteNoise::new(1e-6, 2000.0, [7; 32]).unwrap();
    /// assert!((noise.sigma_v() - 1e-6 * 1000f64.sqrt()).abs() < 1e-18);
    /// let mut block = [0.0; 16];
    /// noise.add_to(&mut block);
    /// assert!(WhiteNoise::new(-1.0, 2000.0, [7; 32]).is_err());
    /// ```
    pub fn new(
        density_v_per_rt_hz: f64,
        sample_rate_hz: f64,
        seed: [u8; 32],
    ) -> Result<Self, ParamError> {
        let density = non_negative("density_v_per_rt_hz", density_v_per_rt_hz)?;
        let fs = sample_rate(sample_rate_hz)?;
        Ok(WhiteNoise {
            sigma_v: density * (fs / 2.0).sqrt(),
            rng: rng_from_seed(seed),
        })
    }

    /// Standard deviation of one sample, V.
    pub fn sigma_v(&self) -> f64 {
        self.sigma_v
    }
}

impl AdditiveNoise for WhiteNoise {
    fn add_to(&mut self, out: &mut [f64]) {
        for sample in out.iter_mut() {
            let z: f64 = StandardNormal.sample(&mut self.rng);
            *sample += self.sigma_v * z;
        }
    }
}
