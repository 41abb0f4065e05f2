//! Test helpers shared by the front-end tests.
#![allow(dead_code)]
// Index loops read as the textbook elimination they implement.
#![allow(clippy::needless_range_loop)]

/// Least-squares fit y ≈ a cos + b sin + c; returns √(a² + b²).
pub fn fitted_amplitude(rows: &[(f64, f64, f64)]) -> f64 {
    let mut m = [[0.0f64; 3]; 3];
    let mut v = [0.0f64; 3];
    for &(c, s, y) in rows {
        let basis = [c, s, 1.0];
        for i in 0..3 {
            v[i] += basis[i] * y;
            for j in 0..3 {
                m[i][j] += basis[i] * basis[j];
            }
        }
    }
    // Gaussian elimination on the 3×3 normal equations.
    for col in 0..3 {
        let pivot = m[col][col];
        for row in col + 1..3 {
            let factor = m[row][col] / pivot;
            for k in col..3 {
                m[row][k] -= factor * m[col][k];
            }
            v[row] -= factor * v[col];
        }
    }
    let mut x = [0.0; 3];
    for row in (0..3).rev() {
        let tail: f64 = (row + 1..3).map(|k| m[row][k] * x[k]).sum();
        x[row] = (v[row] - tail) / m[row][row];
    }
    x[0].hypot(x[1])
}

/// Amplitude of the component at `f_hz` in `signal` (sampled at `fs`), by the
/// least-squares fit above.
pub fn tone_amplitude(signal: &[f64], fs: f64, f_hz: f64) -> f64 {
    let rows: Vec<(f64, f64, f64)> = signal
        .iter()
        .enumerate()
        .map(|(n, &y)| {
            let phase = 2.0 * std::f64::consts::PI * f_hz * n as f64 / fs;
            (phase.cos(), phase.sin(), y)
        })
        .collect();
    fitted_amplitude(&rows)
}

/// Deterministic uniform test input in [low, high).
pub fn uniform_input(count: usize, low: f64, high: f64, seed: u8) -> Vec<f64> {
    use rand::{Rng, SeedableRng};
    let mut rng = rand_chacha::ChaCha8Rng::from_seed([seed; 32]);
    (0..count)
        .map(|_| low + (high - low) * rng.random::<f64>())
        .collect()
}
