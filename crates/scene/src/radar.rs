//! Radar relations: wavelength, Doppler, the range equation and the antenna pattern.

/// Speed of light in vacuum, m/s (exact by the SI definition).
pub const SPEED_OF_LIGHT_MPS: f64 = 299_792_458.0;

/// Wavelength λ = c / f0, m.
pub fn wavelength_m(carrier_hz: f64) -> f64 {
    SPEED_OF_LIGHT_MPS / carrier_hz
}

/// Doppler shift of a radial speed, Hz: f_d = 2 v / λ (Skolnik, *Introduction to Radar Systems*, ch. 3).
pub fn doppler_hz(radial_speed_mps: f64, carrier_hz: f64) -> f64 {
    2.0 * radial_speed_mps / wavelength_m(carrier_hz)
}

/// Received power by the radar range equation, W:
/// P_r = P_t G_t G_r λ² σ / ((4π)³ R⁴) (Skolnik, ch. 2).
pub fn received_power_w(
    tx_power_w: f64,
    gain_tx: f64,
    gain_rx: f64,
    wavelength_m: f64,
    rcs_m2: f64,
    range_m: f64,
) -> f64 {
    let four_pi_cubed = (4.0 * std::f64::consts::PI).powi(3);
    tx_power_w * gain_tx * gain_rx * wavelength_m * wavelength_m * rcs_m2
        / (four_pi_cubed * range_m.powi(4))
}

/// dBm to watts.
pub fn dbm_to_w(dbm: f64) -> f64 {
    1e-3 * 10f64.powf(dbm / 10.0)
}

/// The transmit and mixer figures that set the IF amplitude of an echo.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LinkBudget {
    /// Transmit power, dBm.
    pub tx_power_dbm: f64,
    /// Boresight gain of each antenna (TX = RX), dBi.
    pub antenna_gain_dbi: f64,
    /// Mixer conversion loss from RF to IF, dB.
    pub conversion_loss_db: f64,
    /// Impedance the received power develops its voltage across, Ω.
    pub load_ohm: f64,
}

impl LinkBudget {
    /// IF peak amplitude (V) of a 1 m² echo at 1 m on boresight.
    ///
    /// In its small-signal regime the mixer's IF voltage is proportional to the
    /// received RF voltage, √(2 P_r R_load), less the conversion loss; every
    /// echo then scales as √σ / R² times the two-way pattern (docs/reference/radar-physics.md#r4,
    /// common practice).
    pub fn amplitude_v_at_1m_1m2(&self, wavelength_m: f64) -> f64 {
        let gain = 10f64.powf(self.antenna_gain_dbi / 10.0);
        let power = received_power_w(
            dbm_to_w(self.tx_power_dbm),
            gain,
            gain,
            wavelength_m,
            1.0,
            1.0,
        );
        (2.0 * power * self.load_ohm).sqrt() * 10f64.powf(-self.conversion_loss_db / 20.0)
    }
}

/// A cosⁿ beam with separate azimuth and elevation widths and a floor for the
/// side and back lobes.
///
/// One-way power gain G(θ)/G0 = cosⁿθ with n = ln 0.5 / ln cos(θ₃dB/2)
/// (docs/reference/radar-physics.md#r5, common practice); the two-way amplitude pattern of equal
/// TX and RX antennas is the same number.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Beam {
    /// n/2 and m/2: the pattern is evaluated from squared cosines (no square roots).
    half_exponent_azimuth: f64,
    half_exponent_elevation: f64,
    floor: f64,
}

/// The cosⁿ exponent that puts the one-way −3 dB points at ±width/2.
pub fn cos_exponent_for_width(width_3db_deg: f64) -> f64 {
    0.5f64.ln() / (0.5 * width_3db_deg).to_radians().cos().ln()
}

impl Beam {
    /// A beam with the given full −3 dB widths (degrees, in (0, 180)) and a lobe floor in dB (< 0).
    pub fn new(azimuth_3db_deg: f64, elevation_3db_deg: f64, floor_db: f64) -> Beam {
        Beam {
            half_exponent_azimuth: 0.5 * cos_exponent_for_width(azimuth_3db_deg),
            half_exponent_elevation: 0.5 * cos_exponent_for_width(elevation_3db_deg),
            floor: 10f64.powf(floor_db / 10.0),
        }
    }

    /// Two-way amplitude pattern for a direction given in the antenna frame
    /// (`forward` along boresight, `left`, `up`, not necessarily normalised).
    ///
    /// cosⁿ(az)·cosᵐ(el) = exp(n/2·ln cos² az + m/2·ln cos² el) with the
    /// branch-free logarithm and exponential of echobench-core, so that a loop
    /// over a node's echoes vectorises (this runs for every echo at every
    /// node). The squared cosines are ratios of sums of squares, so no square
    /// root is taken (that halved the pattern's cost); the result is the
    /// square-root form's to 1e-13 relative (tested).
    #[inline(always)]
    pub fn gain(&self, forward: f64, left: f64, up: f64) -> f64 {
        // Behind the antenna only the floor remains; the clamp keeps the
        // logarithms finite there, the select below discards their value.
        let ahead = forward.max(1e-150);
        let ahead2 = ahead * ahead;
        let horizontal2 = ahead2 + left * left;
        let range2 = horizontal2 + up * up;
        let log_gain = self.half_exponent_azimuth
            * echobench_core::fastmath::ln(ahead2 / horizontal2)
            + self.half_exponent_elevation * echobench_core::fastmath::ln(horizontal2 / range2);
        let gain = echobench_core::fastmath::exp(log_gain).max(self.floor);
        if forward > 0.0 {
            gain
        } else {
            self.floor
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn wavelengths_and_doppler_match_reference_table() {
        // docs/reference/check-values.md#pc1 to #pc3 [C, c exact; formula Skolnik].
        for (f0, lambda_mm, fd) in [
            (2.45e9, 122.364, 16.345),
            (5.8e9, 51.688, 38.693),
            (10.525e9, 28.484, 70.215),
            (24.125e9, 12.427, 160.945),
        ] {
            assert!((wavelength_m(f0) * 1e3 - lambda_mm).abs() < 1e-3);
            assert!((doppler_hz(1.0, f0) - fd).abs() < 1e-3);
        }
        assert!((doppler_hz(0.44704, 10.525e9) - 31.39).abs() < 0.01); // 1 mph, check 3
    }

    #[test]
    fn range_equation_example() {
        // docs/reference/check-values.md#pc7 [C from Skolnik's range equation]: 10 dBm,
        // 6 dBi × 2, 1 m², 5 m, 5.8 GHz → −64.67 dBm.
        let g = 10f64.powf(0.6);
        let p = received_power_w(dbm_to_w(10.0), g, g, wavelength_m(5.8e9), 1.0, 5.0);
        let dbm = 10.0 * (p / 1e-3).log10();
        assert!((dbm - (-64.67)).abs() < 0.01, "{dbm}");
    }

    #[test]
    fn a_round_beam_is_the_product_of_its_two_cuts() {
        // The one-power shortcut for equal widths against cosⁿ(az)·cosⁿ(el)
        // (docs/reference/radar-physics.md#r5).
        let beam = Beam::new(80.0, 80.0, -30.0);
        let n = cos_exponent_for_width(80.0);
        for (f, l, u) in [
            (1.0, 0.0, 0.0),
            (2.0, 0.7, -0.4),
            (0.3, -0.2, 0.25),
            (5.0, 1.0, 3.0),
        ] {
            let h = f64::hypot(f, l);
            let product = (f / h).powf(n) * (h / (f * f + l * l + u * u).sqrt()).powf(n);
            let expected = product.max(10f64.powf(-3.0));
            assert!(
                (beam.gain(f, l, u) - expected).abs() <= 1e-12 * expected,
                "{f} {l} {u}"
            );
        }
    }

    /// The pattern as it was computed before the squared form: cosines from
    /// square roots, exp(n·ln cos az + m·ln cos el).
    fn gain_with_square_roots(beam: &Beam, forward: f64, left: f64, up: f64) -> f64 {
        use echobench_core::fastmath::{exp, ln};
        let ahead = forward.max(1e-300);
        let horizontal = (ahead * ahead + left * left).sqrt();
        let range = (horizontal * horizontal + up * up).sqrt();
        let log_gain = 2.0 * beam.half_exponent_azimuth * ln(ahead / horizontal)
            + 2.0 * beam.half_exponent_elevation * ln(horizontal / range);
        let gain = exp(log_gain).max(beam.floor);
        if forward > 0.0 {
            gain
        } else {
            beam.floor
        }
    }

    #[test]
    fn the_squared_form_is_the_square_root_form_within_1e_13() {
        // Stated tolerance of the rewrite: 1e-13 relative (measured 7e-14), over directions all
        // around the antenna (a grid of azimuths and elevations, three ranges).
        let beam = Beam::new(80.0, 60.0, -25.0);
        let mut worst: f64 = 0.0;
        for az in (-179..=180).step_by(3) {
            for el in (-89..=89).step_by(2) {
                for range in [0.3, 4.0, 50.0] {
                    let (az, el) = (f64::from(az).to_radians(), f64::from(el).to_radians());
                    let (f, l, u) = (
                        range * el.cos() * az.cos(),
                        range * el.cos() * az.sin(),
                        range * el.sin(),
                    );
                    let old = gain_with_square_roots(&beam, f, l, u);
                    worst = worst.max((beam.gain(f, l, u) - old).abs() / old);
                }
            }
        }
        assert!(worst <= 1e-13, "{worst:e}");
    }

    #[test]
    fn beam_exponent_and_half_power_points() {
        // docs/reference/check-values.md#pc28 [C]: 80° HPBW → n = 2.601; 60° → 4.82.
        assert!((cos_exponent_for_width(80.0) - 2.601).abs() < 1e-3);
        assert!((cos_exponent_for_width(60.0) - 4.82).abs() < 1e-2);
        let beam = Beam::new(80.0, 40.0, -30.0);
        let az = 40f64.to_radians();
        assert!((beam.gain(az.cos(), az.sin(), 0.0) - 0.5).abs() < 1e-12);
        let el = 20f64.to_radians();
        assert!((beam.gain(el.cos(), 0.0, el.sin()) - 0.5).abs() < 1e-12);
        assert_eq!(beam.gain(-1.0, 0.0, 0.0), 1e-3);
    }
}
