//! Simple generators shared by the tests (no detector crates: the closed forms are built
//! here from their definitions).
#![allow(dead_code)]

use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;

/// A generator for test `name`, seed `seed` (a fixed stream per test and seed).
pub fn rng(name: &str, seed: u64) -> ChaCha8Rng {
    let mut h: u64 = 0xcbf2_9ce4_8422_2325;
    for b in name.bytes() {
        h = (h ^ b as u64).wrapping_mul(0x0100_0000_01b3);
    }
    ChaCha8Rng::seed_from_u64(h ^ seed.wrapping_mul(0x9e37_79b9_7f4a_7c15))
}

/// A uniform draw in (0, 1].
pub fn open_uniform(rng: &mut ChaCha8Rng) -> f64 {
    1.0 - rng.random::<f64>()
}

/// A GPD(ξ, σ) draw by inversion: `σ/ξ (U^(−ξ) − 1)`, `−σ ln U` at ξ = 0.
pub fn gpd_draw(rng: &mut ChaCha8Rng, xi: f64, sigma: f64) -> f64 {
    let u = open_uniform(rng);
    if xi == 0.0 {
        -sigma * u.ln()
    } else {
        sigma * (-xi * u.ln()).exp_m1() / xi
    }
}

/// `n` GPD(ξ, σ) draws.
pub fn gpd_sample(rng: &mut ChaCha8Rng, n: usize, xi: f64, sigma: f64) -> Vec<f64> {
    (0..n).map(|_| gpd_draw(rng, xi, sigma)).collect()
}

/// A Poisson(mean) draw by counting unit-rate exponential arrivals (fine for the means used
/// here, a few hundred at most).
pub fn poisson(rng: &mut ChaCha8Rng, mean: f64) -> usize {
    let mut t = 0.0;
    let mut k = 0;
    loop {
        t += -open_uniform(rng).ln();
        if t > mean {
            return k;
        }
        k += 1;
    }
}

/// A standard normal draw (Box–Muller; one of the pair is enough here).
pub fn normal(rng: &mut ChaCha8Rng) -> f64 {
    let u1 = open_uniform(rng);
    let u2 = rng.random::<f64>();
    (-2.0 * u1.ln()).sqrt() * (std::f64::consts::TAU * u2).cos()
}
