//! What a person who stands still still does: postural sway and breathing.
//!
//! Nobody stands perfectly still. Two motions remain, both far below the
//! [`MOVING_SPEED_MPS`](crate::MOVING_SPEED_MPS) level, both visible to a
//! Doppler sensor at short range:
//!
//! * **Postural sway.** Quiet standing is an inverted pendulum about the
//!   ankles (Winter, *Human balance and posture control during standing and
//!   walking*, Gait & Posture 3(4), 1995): a point at height z moves by
//!   z/h_c times the centre of mass, h_c ≈ 0.55·H (centre of mass height,
//!   common practice in anthropometry). The centre of pressure moves a few
//!   millimetres RMS, its power almost all below 1 Hz with a mean frequency
//!   of a few tenths of a hertz, and the centre of mass a little less (Prieto
//!   et al., IEEE T-BME 43(9), 1996; Winter 1995; values from memory). Here
//!   the centre of mass sways 4 mm RMS forward-backward and 2.5 mm RMS to the
//!   side (from memory), each a sum of three sinusoids near 0.12, 0.27 and
//!   0.45 Hz with amplitudes in the ratio 1 : 1/2 : 1/4 (the sway spectrum
//!   falls steeply with frequency), frequencies spread by ±15 % and phases
//!   drawn per person. A sum of sinusoids is a stand-in for the measured broadband
//!   spectrum that keeps the motion smooth, bounded and cheap to evaluate at
//!   any time (no state).
//! * **Breathing.** The chest wall moves along the facing direction, 8 mm
//!   peak to peak at 15 breaths/min by default (4–12 mm and 12–20 /min, from
//!   memory after Droitcour et al., IEEE T-MTT 52(3), 2004, as in
//!   [`crate::breathing`]), as a sinusoid (the inhale fraction 0.5 of the
//!   seated model's waveform). The rate is drawn per person in 12–20 /min.
//!
//! The centre of mass then moves at about 5 mm/s RMS; the largest speeds
//! are under 25 mm/s for the head and about 6 mm/s for the chest wall, well
//! below the moving level.

use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use std::f64::consts::PI;

/// Centre-of-mass height as a fraction of body height (common practice).
pub const COM_HEIGHT_FRACTION: f64 = 0.55;

/// Forward-backward sway of the centre of mass, RMS, m (from memory, see the module doc).
pub const SWAY_RMS_FORWARD_M: f64 = 0.004;

/// Side-to-side sway of the centre of mass, RMS, m (from memory).
pub const SWAY_RMS_SIDE_M: f64 = 0.0025;

/// Centre frequencies of the three sway components, Hz (below 1 Hz, see the module doc).
pub const SWAY_FREQUENCIES_HZ: [f64; 3] = [0.12, 0.27, 0.45];

/// Relative amplitudes of the three sway components.
pub const SWAY_WEIGHTS: [f64; 3] = [1.0, 0.5, 0.25];

/// Default chest-wall breathing displacement, peak to peak, m (from memory).
pub const BREATH_PEAK_TO_PEAK_M: f64 = 0.008;

/// One sinusoid: amplitude (m), angular frequency (rad/s), phase (rad).
#[derive(Debug, Clone, Copy, PartialEq)]
struct Tone {
    amplitude_m: f64,
    omega_rad_s: f64,
    phase_rad: f64,
}

impl Tone {
    fn at(&self, t_s: f64) -> (f64, f64) {
        let (s, c) = (self.omega_rad_s * t_s + self.phase_rad).sin_cos();
        (
            self.amplitude_m * s,
            self.amplitude_m * self.omega_rad_s * c,
        )
    }

    fn peak_speed_mps(&self) -> f64 {
        self.amplitude_m * self.omega_rad_s
    }
}

/// The residual motion of one standing person.
#[derive(Debug, Clone, PartialEq)]
pub struct StandingMotion {
    forward: [Tone; 3],
    side: [Tone; 3],
    breath: Tone,
}

impl StandingMotion {
    /// A quiet adult: the module doc's sway and breathing, with frequencies,
    /// phases and the breathing rate drawn from `seed`.
    pub fn quiet_adult(seed: [u8; 32]) -> StandingMotion {
        let mut rng = ChaCha8Rng::from_seed(seed);
        let tones = |rms_m: f64, rng: &mut ChaCha8Rng| -> [Tone; 3] {
            // Sinusoids of amplitudes a·wₖ have RMS a·√(Σwₖ²/2).
            let norm = (SWAY_WEIGHTS.iter().map(|w| w * w).sum::<f64>() / 2.0).sqrt();
            std::array::from_fn(|k| Tone {
                amplitude_m: rms_m * SWAY_WEIGHTS[k] / norm,
                omega_rad_s: 2.0 * PI * SWAY_FREQUENCIES_HZ[k] * (0.85 + 0.3 * rng.random::<f64>()),
                phase_rad: 2.0 * PI * rng.random::<f64>(),
            })
        };
        let forward = tones(SWAY_RMS_FORWARD_M, &mut rng);
        let side = tones(SWAY_RMS_SIDE_M, &mut rng);
        let rate_per_min = 12.0 + 8.0 * rng.random::<f64>();
        let breath = Tone {
            amplitude_m: 0.5 * BREATH_PEAK_TO_PEAK_M,
            omega_rad_s: 2.0 * PI * rate_per_min / 60.0,
            phase_rad: 2.0 * PI * rng.random::<f64>(),
        };
        StandingMotion {
            forward,
            side,
            breath,
        }
    }

    /// No residual motion at all (for tests that need an exactly still body).
    pub fn none() -> StandingMotion {
        let zero = Tone {
            amplitude_m: 0.0,
            omega_rad_s: 0.0,
            phase_rad: 0.0,
        };
        StandingMotion {
            forward: [zero; 3],
            side: [zero; 3],
            breath: zero,
        }
    }

    /// Centre-of-mass sway at `t_s` in the body frame: displacement (forward,
    /// left) in m and its rate in m/s.
    pub fn sway(&self, t_s: f64) -> ([f64; 2], [f64; 2]) {
        let sum = |tones: &[Tone; 3]| {
            tones.iter().fold((0.0, 0.0), |(x, v), tone| {
                let (dx, dv) = tone.at(t_s);
                (x + dx, v + dv)
            })
        };
        let (forward, forward_rate) = sum(&self.forward);
        let (side, side_rate) = sum(&self.side);
        ([forward, side], [forward_rate, side_rate])
    }

    /// Chest-wall displacement along the facing direction (m) and its rate (m/s).
    pub fn breath(&self, t_s: f64) -> (f64, f64) {
        self.breath.at(t_s)
    }

    /// Largest displacement of a point at `lever` times the centre-of-mass
    /// height, chest wall included, m (a bound, for blending speeds).
    pub fn max_displacement_m(&self, lever: f64) -> f64 {
        let sum = |tones: &[Tone; 3]| tones.iter().map(|t| t.amplitude_m).sum::<f64>();
        lever * sum(&self.forward).hypot(sum(&self.side)) + self.breath.amplitude_m
    }

    /// Largest speed of a point at `lever` times the centre-of-mass height,
    /// chest wall included, m/s.
    pub fn max_speed_mps(&self, lever: f64) -> f64 {
        let sum = |tones: &[Tone; 3]| tones.iter().map(Tone::peak_speed_mps).sum::<f64>();
        lever * sum(&self.forward).hypot(sum(&self.side)) + self.breath.peak_speed_mps()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn sway_and_breathing_have_the_stated_sizes_and_stay_below_the_moving_level() {
        let motion = StandingMotion::quiet_adult([3; 32]);
        // Long average: the RMS of a sum of sinusoids is √(Σa²/2).
        let dt = 0.01;
        let n = 200_000;
        let (mut forward2, mut side2, mut breath2) = (0.0, 0.0, 0.0);
        let mut fastest: f64 = 0.0;
        for i in 0..n {
            let t = i as f64 * dt;
            let ([f, s], [vf, vs]) = motion.sway(t);
            let (b, vb) = motion.breath(t);
            forward2 += f * f;
            side2 += s * s;
            breath2 += b * b;
            // The head of a 1.8 m person: lever 1.8/(0.55·1.8) = 1.82.
            fastest = fastest.max((1.82 * vf).hypot(1.82 * vs));
            fastest = fastest.max(vb.abs());
        }
        let rms = |x: f64| (x / n as f64).sqrt();
        assert!((rms(forward2) - SWAY_RMS_FORWARD_M).abs() < 0.1 * SWAY_RMS_FORWARD_M);
        assert!((rms(side2) - SWAY_RMS_SIDE_M).abs() < 0.1 * SWAY_RMS_SIDE_M);
        // A sinusoid of peak-to-peak D has RMS D/(2√2).
        let breath_rms = BREATH_PEAK_TO_PEAK_M / (2.0 * 2f64.sqrt());
        assert!((rms(breath2) - breath_rms).abs() < 0.05 * breath_rms);
        assert!(fastest < 0.25 * crate::MOVING_SPEED_MPS, "{fastest}");
        assert!(fastest <= motion.max_speed_mps(1.82));
        // Velocities are the derivatives of the displacements.
        let t = 3.7;
        let h = 1e-6;
        let (a, _) = motion.sway(t - h);
        let (b, _) = motion.sway(t + h);
        let (_, v) = motion.sway(t);
        assert!(((b[0] - a[0]) / (2.0 * h) - v[0]).abs() < 1e-8);
        assert!(StandingMotion::none().max_speed_mps(2.0) == 0.0);
    }
}
