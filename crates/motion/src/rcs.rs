//! Radar cross-sections of simple shapes.

/// Geometric-optics RCS of an ellipsoid with semi-axes `a`, `b` (across) and
/// `c` (along its axis), seen at angle `theta` between the line of sight and
/// the c axis and azimuth `phi` about that axis:
///
/// σ = π a²b²c² / (a² sin²θ cos²φ + b² sin²θ sin²φ + c² cos²θ)²
///
/// Source: Chen, *The Micro-Doppler Effect in Radar* (Artech 2011), ch. 4, as
/// used there per body segment; formula after Trott, IEEE AWPL 6, 2007.
pub fn ellipsoid_rcs_m2(a_m: f64, b_m: f64, c_m: f64, theta_rad: f64, phi_rad: f64) -> f64 {
    let (st, ct) = theta_rad.sin_cos();
    let (sp, cp) = phi_rad.sin_cos();
    let denom = a_m * a_m * st * st * cp * cp + b_m * b_m * st * st * sp * sp + c_m * c_m * ct * ct;
    std::f64::consts::PI * (a_m * b_m * c_m).powi(2) / (denom * denom)
}

/// √σ of a body of revolution seen at `cos_theta` from its axis: the factor an
/// echo's amplitude carries. With a = b the ellipsoid formula needs only
/// cos²θ and sin²θ = 1 − cos²θ, and its square root is
/// √π·a²·c / (a² sin²θ + c² cos²θ): no angle and no square root are formed
/// (this runs for every segment at every node). `cos_theta` is clamped to [−1, 1].
pub fn segment_root_rcs_m(radius_m: f64, half_length_m: f64, cos_theta: f64) -> f64 {
    let cos_theta = cos_theta.clamp(-1.0, 1.0);
    let cos2 = cos_theta * cos_theta;
    let (a2, c2) = (radius_m * radius_m, half_length_m * half_length_m);
    let denom = a2 * (1.0 - cos2) + c2 * cos2;
    std::f64::consts::PI.sqrt() * a2 * half_length_m.abs() / denom
}

/// Peak (normal-incidence) RCS of a flat plate of area `area_m2`: σ = 4πA²/λ²
/// (Skolnik, *Introduction to Radar Systems*, 3rd ed.; Knott).
pub fn flat_plate_peak_rcs_m2(area_m2: f64, wavelength_m: f64) -> f64 {
    4.0 * std::f64::consts::PI * area_m2 * area_m2 / (wavelength_m * wavelength_m)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn torso_ellipsoid_matches_reference_check_values() {
        // docs/reference/check-values.md#pc10 [C]: a = b = 0.15 m, c = 0.259 m: broadside
        // 0.2111 m², end-on 0.02367 m².
        let broadside = ellipsoid_rcs_m2(0.15, 0.15, 0.259, std::f64::consts::FRAC_PI_2, 0.0);
        let end_on = ellipsoid_rcs_m2(0.15, 0.15, 0.259, 0.0, 0.0);
        assert!((broadside - 0.2111).abs() < 5e-4, "{broadside}");
        assert!((end_on - 0.02367).abs() < 5e-5, "{end_on}");
        // For a = b: broadside = πc², end-on = πa⁴/c² (Chen 2011).
        assert!((broadside - std::f64::consts::PI * 0.259f64.powi(2)).abs() < 1e-12);
    }

    #[test]
    fn segment_rcs_is_the_ellipsoid_of_revolution_at_the_aspect_angle() {
        for theta_deg in [0.0f64, 10.0, 33.0, 60.0, 89.0, 90.0, 135.0, 180.0] {
            let theta = theta_deg.to_radians();
            let segment = segment_root_rcs_m(0.07, 0.22, theta.cos()).powi(2);
            let ellipsoid = ellipsoid_rcs_m2(0.07, 0.07, 0.22, theta, 0.0);
            assert!(
                (segment - ellipsoid).abs() <= 1e-12 * ellipsoid,
                "{theta_deg}°"
            );
        }
    }

    #[test]
    fn door_plate_peak_rcs_matches_reference() {
        // docs/reference/nuisances.md#n6 [C]: 0.9 × 2.0 m door at 2.45 GHz → 34.3 dBsm.
        let lambda = 299_792_458.0 / 2.45e9;
        let db = 10.0 * flat_plate_peak_rcs_m2(1.8, lambda).log10();
        assert!((db - 34.3).abs() < 0.05, "{db}");
    }
}
