//! A door: a rigid plate turning about a vertical hinge
//! (docs/reference/nuisances.md#n6).
//!
//! Points at distance r along the width sit at
//! p(t) = hinge + r·(cos ψ(t), sin ψ(t)), at mid-height. The opening angle
//! moves from ψ₀ (closed) to ψ₁ (open) over `open_duration_s` from
//! `open_start_s`, and optionally back again, with a raised-cosine profile
//! ψ = ψ₀ + (ψ₁−ψ₀)·(1 − cos πu)/2, u ∈ [0, 1]: zero speed at both ends, and a
//! peak angular rate π/2 times the mean. (A 0.9 m door opened by 90° in 1.5 s
//! has a mean edge speed of 0.94 m/s, docs/reference/nuisances.md#n6; the peak here is 1.48 m/s.)
//!
//! Echoes:
//! * [`DOOR_EDGE_POINTS`] points at r = w/4, w/2, 3w/4 and w carry the edge,
//!   corner and hardware scattering that dominates most of the time; the
//!   `edge_rcs_m2` is split equally among them (no source for the split).
//! * One specular echo at the plate centre carries the flat-plate flash. Its
//!   amplitude is √σ_peak·sinc((2πw/λ)·sin θ), σ_peak = 4πA²/λ² (Skolnik;
//!   Knott), θ the horizontal angle between the line of sight and the plate
//!   normal: the far-field pattern of a plate of width w, kept only inside its
//!   main lobe |sin θ| < λ/(2w), an angular window ≈ λ/w
//!   (docs/reference/nuisances.md#n6), and
//!   zero outside. Vertically the plate is treated as near-field: the flash
//!   exists only if the sensor height lies within the door's height (the
//!   mirror point is then on the plate), and its level is capped at the
//!   far-field peak. Both are simplifications: a real door at a few metres is
//!   in the near field of its width too (2w²/λ ≈ 31 m at 5.8 GHz), where the
//!   flash is broader and weaker than this upper bound.

use crate::fan::sinc;
use crate::reflector::{
    hermite_node_rate_hz, knot_node_rate_hz, Check, ParamError, MIN_NODE_RATE_HZ,
};
use crate::{Echo, MotionModel, Vec3};
use std::f64::consts::PI;

/// Number of edge/corner points along the width.
pub const DOOR_EDGE_POINTS: usize = 4;

/// Nodes per specular flash (common practice, as for fan blades).
pub const NODES_PER_DOOR_FLASH: f64 = 10.0;

/// Parameters of a door.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct DoorParams {
    /// Floor position (x, y) of the hinge line, m.
    pub hinge_m: [f64; 2],
    /// Width of the leaf (hinge to free edge), m.
    pub width_m: f64,
    /// Height of the leaf (bottom at the floor), m.
    pub height_m: f64,
    /// Direction of the leaf from the hinge when closed, rad from +x towards +y.
    pub closed_angle_rad: f64,
    /// Direction of the leaf when open, rad.
    pub open_angle_rad: f64,
    /// When the opening starts, s.
    pub open_start_s: f64,
    /// How long the opening takes, s.
    pub open_duration_s: f64,
    /// When it closes again, s (`f64::INFINITY`: stays open).
    pub close_start_s: f64,
    /// How long the closing takes, s.
    pub close_duration_s: f64,
    /// Total edge/corner RCS, m², split among the edge points. (A straight edge
    /// of length L seen perpendicularly scatters up to about L²/π, from memory
    /// after Knott, *Radar Cross Section*; elevated sensors see far less.)
    pub edge_rcs_m2: f64,
}

/// A door.
#[derive(Debug, Clone)]
pub struct Door {
    params: DoorParams,
    wavelength_m: f64,
    peak_rcs_m2: f64,
}

impl Door {
    /// Checks the parameters and builds the model for carrier wavelength
    /// `wavelength_m` (the specular flash depends on it).
    ///
    /// # Errors
    /// A [`ParamError`] naming the first bad field (closing before the
    /// opening ends, non-positive sizes or durations, non-finite numbers).
    ///
    /// # Example
    /// ```
    /// use echobench_motion::door::{Door, DoorParams};
    /// use echobench_motion::MotionModel;
    ///
    /// // A 0.9 × 2 m door opening by 90° in 1.5 s from t = 2 s, staying open.
    /// let params = DoorParams {
    ///     hinge_m: [0.0, 0.0],
    ///     width_m: 0.9,
    ///     height_m: 2.0,
    ///     closed_angle_rad: 0.0,
    ///     open_angle_rad: std::f64::consts::FRAC_PI_2,
    ///     open_start_s: 2.0,
    ///     open_duration_s: 1.5,
    ///     close_start_s: f64::INFINITY,
    ///     close_duration_s: 0.0,
    ///     edge_rcs_m2: 0.2,
    /// };
    /// let door = Door::new(params, 299_792_458.0 / 5.8e9)?;
    /// assert_eq!(door.active_intervals(10.0), vec![(2.0, 3.5)]);
    /// // Raised-cosine profile: peak edge speed π/2 × the 0.94 m/s mean.
    /// assert!((door.max_speed_mps() - 1.4804).abs() < 1e-4);
    /// # Ok::<(), echobench_motion::reflector::ParamError>(())
    /// ```
    pub fn new(params: DoorParams, wavelength_m: f64) -> Result<Door, ParamError> {
        let check = Check { model: "door" };
        check.finite("hinge_m[0]", params.hinge_m[0])?;
        check.finite("hinge_m[1]", params.hinge_m[1])?;
        check.positive("width_m", params.width_m)?;
        check.positive("height_m", params.height_m)?;
        check.finite("closed_angle_rad", params.closed_angle_rad)?;
        check.finite("open_angle_rad", params.open_angle_rad)?;
        check.finite("open_start_s", params.open_start_s)?;
        check.positive("open_duration_s", params.open_duration_s)?;
        let opened_s = params.open_start_s + params.open_duration_s;
        if params.close_start_s.is_nan() || params.close_start_s < opened_s {
            return Err(check.error(
                "close_start_s",
                params.close_start_s,
                "a time >= open_start_s + open_duration_s (or infinity)",
            ));
        }
        if params.close_start_s.is_finite() {
            check.positive("close_duration_s", params.close_duration_s)?;
        }
        check.non_negative("edge_rcs_m2", params.edge_rcs_m2)?;
        let wavelength_m = check.positive("wavelength_m", wavelength_m)?;
        Ok(Door {
            peak_rcs_m2: crate::rcs::flat_plate_peak_rcs_m2(
                params.width_m * params.height_m,
                wavelength_m,
            ),
            params,
            wavelength_m,
        })
    }

    /// The parameters.
    pub fn params(&self) -> &DoorParams {
        &self.params
    }

    /// Normal-incidence RCS of the leaf, 4πA²/λ², m².
    pub fn peak_rcs_m2(&self) -> f64 {
        self.peak_rcs_m2
    }

    /// Leaf angle ψ (rad) and angular rate (rad/s) at `t_s`.
    pub fn angle(&self, t_s: f64) -> (f64, f64) {
        let p = &self.params;
        let swing = p.open_angle_rad - p.closed_angle_rad;
        let ramp = |start_s: f64, duration_s: f64| -> (f64, f64) {
            let u = (t_s - start_s) / duration_s;
            if u <= 0.0 {
                (0.0, 0.0)
            } else if u >= 1.0 {
                (1.0, 0.0)
            } else {
                (
                    0.5 - 0.5 * (PI * u).cos(),
                    0.5 * PI / duration_s * (PI * u).sin(),
                )
            }
        };
        let (open, open_rate) = ramp(p.open_start_s, p.open_duration_s);
        let (close, close_rate) = if p.close_start_s.is_finite() {
            ramp(p.close_start_s, p.close_duration_s)
        } else {
            (0.0, 0.0)
        };
        (
            p.closed_angle_rad + swing * (open - close),
            swing * (open_rate - close_rate),
        )
    }

    /// Peak angular rate, rad/s.
    fn peak_angular_rate(&self) -> f64 {
        let p = &self.params;
        let swing = (p.open_angle_rad - p.closed_angle_rad).abs();
        let mut shortest = p.open_duration_s;
        if p.close_start_s.is_finite() {
            shortest = shortest.min(p.close_duration_s);
        }
        0.5 * PI * swing / shortest
    }

    fn point(&self, radius_m: f64, psi: f64, rate: f64) -> (Vec3, Vec3) {
        let p = &self.params;
        let (s, c) = psi.sin_cos();
        (
            [
                p.hinge_m[0] + radius_m * c,
                p.hinge_m[1] + radius_m * s,
                0.5 * p.height_m,
            ],
            [-radius_m * s * rate, radius_m * c * rate, 0.0],
        )
    }
}

impl MotionModel for Door {
    /// Speed of the leaf's free edge, |ψ'|·w.
    fn motion_speed_mps(&mut self, t_s: f64) -> f64 {
        self.angle(t_s).1.abs() * self.params.width_m
    }

    fn echoes(&mut self, t_s: f64, sensor_m: Vec3, out: &mut Vec<Echo>) {
        let p = self.params;
        let (psi, rate) = self.angle(t_s);
        let edge_amplitude_m = (p.edge_rcs_m2 / DOOR_EDGE_POINTS as f64).sqrt();
        for k in 1..=DOOR_EDGE_POINTS {
            let r = p.width_m * k as f64 / DOOR_EDGE_POINTS as f64;
            let (position_m, velocity_mps) = self.point(r, psi, rate);
            out.push(Echo {
                position_m,
                velocity_mps,
                amplitude_m: edge_amplitude_m,
            });
        }
        let (centre, centre_velocity) = self.point(0.5 * p.width_m, psi, rate);
        // Horizontal line of sight from the plate centre to the sensor; its
        // component along the leaf's width direction is sin θ.
        let dx = sensor_m[0] - centre[0];
        let dy = sensor_m[1] - centre[1];
        let horizontal = (dx * dx + dy * dy).sqrt();
        let in_height = sensor_m[2] >= 0.0 && sensor_m[2] <= p.height_m;
        let amplitude_m = if in_height && horizontal > 1e-9 {
            let sin_theta = (dx * psi.cos() + dy * psi.sin()) / horizontal;
            let x = 2.0 * PI * p.width_m / self.wavelength_m * sin_theta;
            if x.abs() < PI {
                self.peak_rcs_m2.sqrt() * sinc(x)
            } else {
                0.0
            }
        } else {
            0.0
        };
        out.push(Echo {
            position_m: centre,
            velocity_mps: centre_velocity,
            amplitude_m,
        });
    }

    fn echo_count(&self) -> usize {
        DOOR_EDGE_POINTS + 1
    }

    fn node_rate_hz(&self, wavelength_m: f64) -> f64 {
        let p = &self.params;
        let omega = self.peak_angular_rate();
        if omega == 0.0 {
            return MIN_NODE_RATE_HZ;
        }
        // ψ's derivatives are bounded by (Δψ/2)(π/T)ⁿ; the fourth derivative of
        // w·(cos ψ, sin ψ) is bounded by w·(ψ⁗ + 4|ψ'||ψ'''| + 3ψ''² + 6ψ'²|ψ''| + ψ'⁴).
        let mut fourth: f64 = 0.0;
        // The raised cosine starts and stops with an acceleration jump w·(Δψ/2)(π/T)².
        let mut jump: f64 = 0.0;
        let swing = (p.open_angle_rad - p.closed_angle_rad).abs();
        let mut durations = vec![p.open_duration_s];
        if p.close_start_s.is_finite() {
            durations.push(p.close_duration_s);
        }
        for duration in durations {
            let d = |n: i32| 0.5 * swing * (PI / duration).powi(n);
            let (d1, d2, d3, d4) = (d(1), d(2), d(3), d(4));
            jump = jump.max(p.width_m * d2);
            fourth = fourth.max(
                p.width_m * (d4 + 4.0 * d1 * d3 + 3.0 * d2 * d2 + 6.0 * d1 * d1 * d2 + d1.powi(4)),
            );
        }
        // The flash: the main lobe spans Δ(sin θ) = λ/w, crossed at up to ω.
        let flash_s = self.wavelength_m / (p.width_m * omega);
        MIN_NODE_RATE_HZ
            .max(NODES_PER_DOOR_FLASH / flash_s)
            .max(hermite_node_rate_hz(fourth, wavelength_m))
            .max(knot_node_rate_hz(jump, wavelength_m))
    }

    /// Peak speed of the free edge: w·(π/2)·|ψ₁−ψ₀|/T for the shorter swing.
    fn max_speed_mps(&self) -> f64 {
        self.params.width_m * self.peak_angular_rate()
    }

    fn active_intervals(&self, duration_s: f64) -> Vec<(f64, f64)> {
        let p = &self.params;
        if p.open_angle_rad == p.closed_angle_rad {
            return Vec::new();
        }
        let mut swings = vec![(p.open_start_s, p.open_start_s + p.open_duration_s)];
        if p.close_start_s.is_finite() {
            swings.push((p.close_start_s, p.close_start_s + p.close_duration_s));
        }
        swings
            .into_iter()
            .map(|(a, b)| (a.max(0.0), b.min(duration_s)))
            .filter(|(a, b)| b > a)
            .collect()
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::reflector::test_support::*;
    use crate::reflector::NODE_PHASE_TOLERANCE_RAD;

    const C: f64 = 299_792_458.0;

    /// 0.9 × 2.0 m door, hinge at the origin, closed along +x, opening to +y
    /// by 90° in 1.5 s from t = 1 s, closing at 5 s in 2 s.
    fn door() -> DoorParams {
        DoorParams {
            hinge_m: [0.0, 0.0],
            width_m: 0.9,
            height_m: 2.0,
            closed_angle_rad: 0.0,
            open_angle_rad: PI / 2.0,
            open_start_s: 1.0,
            open_duration_s: 1.5,
            close_start_s: 5.0,
            close_duration_s: 2.0,
            edge_rcs_m2: 0.2,
        }
    }

    #[test]
    fn edge_speed_matches_the_reference_and_the_stated_profile() {
        // docs/reference/nuisances.md#n6 [C]: 0.9 m door, 90° in 1.5 s → mean edge speed 0.94 m/s
        // (= w·Δψ/T, profile-independent). Raised-cosine profile: peak = π/2 × mean.
        let lambda = C / 5.8e9;
        let mut model = Door::new(door(), lambda).unwrap();
        let n = 15_000;
        let dt = 1.5 / n as f64;
        let times: Vec<f64> = (0..=n).map(|i| 1.0 + i as f64 * dt).collect();
        let samples = sample(&mut model, &times, [3.0, 3.0, 1.0]);
        let edge = DOOR_EDGE_POINTS - 1;
        let path_m: f64 = samples
            .windows(2)
            .map(|w| norm3(sub3(w[1][edge].position_m, w[0][edge].position_m)))
            .sum();
        let mean = path_m / 1.5;
        assert!((mean - 0.94).abs() < 0.005, "{mean}");
        assert!((mean - 0.9 * PI / 2.0 / 1.5).abs() < 1e-6);
        let peak = largest_speed(&samples);
        assert!((peak - mean * PI / 2.0).abs() < 1e-4, "{peak}");
        assert!((model.max_speed_mps() - peak).abs() < 1e-4);
        assert!(samples.last().unwrap()[edge].position_m[1] > 0.9 - 1e-9);
    }

    fn norm3(v: Vec3) -> f64 {
        crate::norm(v)
    }

    fn sub3(a: Vec3, b: Vec3) -> Vec3 {
        crate::sub(a, b)
    }

    #[test]
    fn the_door_opens_and_closes_on_schedule() {
        let model = Door::new(door(), 0.05).unwrap();
        assert_eq!(model.angle(0.5), (0.0, 0.0));
        assert!((model.angle(1.75).0 - PI / 4.0).abs() < 1e-12);
        assert_eq!(model.angle(3.0).0, PI / 2.0);
        assert!((model.angle(6.0).0 - PI / 4.0).abs() < 1e-12);
        assert!(model.angle(6.0).1 < 0.0);
        assert_eq!(model.angle(8.0).0, 0.0);
        assert_eq!(model.active_intervals(10.0), vec![(1.0, 2.5), (5.0, 7.0)]);
        assert_eq!(model.active_intervals(6.0), vec![(1.0, 2.5), (5.0, 6.0)]);
    }

    /// Specular amplitude over the opening, sensor at mid-height along the
    /// normal of the leaf at 45°, 4 m from the hinge.
    fn flash(lambda: f64) -> (Door, Vec<(f64, f64)>) {
        let mut model = Door::new(door(), lambda).unwrap();
        let normal = [-(PI / 4.0).sin(), (PI / 4.0).cos()];
        let centre = [0.45 * (PI / 4.0).cos(), 0.45 * (PI / 4.0).sin()];
        let sensor = [
            centre[0] + 4.0 * normal[0],
            centre[1] + 4.0 * normal[1],
            1.0,
        ];
        let n = 150_000;
        let times: Vec<f64> = (0..=n).map(|i| 1.0 + 1.5 * i as f64 / n as f64).collect();
        let samples = sample(&mut model, &times, sensor);
        let trace = times
            .iter()
            .zip(&samples)
            .map(|(&t, e)| (model.angle(t).0, e[DOOR_EDGE_POINTS].amplitude_m))
            .collect();
        (model, trace)
    }

    #[test]
    fn specular_flash_reaches_the_plate_peak_only_near_normal_incidence() {
        // σ = 4πA²/λ² (Skolnik; Knott): 0.9 × 2.0 m at 2.45 GHz → 34.3 dBsm,
        // at 5.8 GHz → 41.8 dBsm (docs/reference/nuisances.md#n6 [C]); window ≈ λ/w (same
        // section).
        for (f0, peak_dbsm) in [(2.45e9, 34.3), (5.8e9, 41.8)] {
            let lambda = C / f0;
            let (model, trace) = flash(lambda);
            let best = trace.iter().map(|(_, a)| a * a).fold(0.0, f64::max);
            assert!(
                (10.0 * best.log10() - peak_dbsm).abs() < 0.05,
                "{}",
                10.0 * best.log10()
            );
            assert!((10.0 * model.peak_rcs_m2().log10() - peak_dbsm).abs() < 0.05);
            let lit: Vec<f64> = trace
                .iter()
                .filter(|(_, a)| *a != 0.0)
                .map(|(psi, _)| *psi)
                .collect();
            let window = lit.iter().cloned().fold(f64::MIN, f64::max)
                - lit.iter().cloned().fold(f64::MAX, f64::min);
            let expected = 2.0 * (lambda / (2.0 * 0.9)).asin();
            assert!(
                (window / expected - 1.0).abs() < 0.02,
                "{window} vs {expected}"
            );
            assert!((expected / (lambda / 0.9) - 1.0).abs() < 0.01);
            // Centred on the normal to the sensor, at ψ = 45°.
            let middle = 0.5 * (lit[0] + lit[lit.len() - 1]);
            assert!((middle - PI / 4.0).abs() < 0.01 * expected, "{middle}");
        }
    }

    #[test]
    fn no_flash_for_a_sensor_above_the_leaf() {
        let mut model = Door::new(door(), C / 5.8e9).unwrap();
        let times: Vec<f64> = (0..3000).map(|i| i as f64 * 1e-3).collect();
        let samples = sample(&mut model, &times, [-2.0, 2.0, 2.4]);
        assert!(samples
            .iter()
            .all(|e| e[DOOR_EDGE_POINTS].amplitude_m == 0.0));
        assert!(samples
            .iter()
            .all(|e| (e[0].amplitude_m - 0.05f64.sqrt()).abs() < 1e-12));
    }

    #[test]
    fn node_rate_resolves_the_flash_and_the_swing() {
        let lambda = C / 24.125e9;
        let sensor = [-2.5, 2.5, 1.2];
        let make = || -> Box<dyn MotionModel> { Box::new(Door::new(door(), lambda).unwrap()) };
        let error = worst_interpolation_phase_error(&make, lambda, 0.5, 7.5, sensor, 0.1);
        assert!(error <= NODE_PHASE_TOLERANCE_RAD, "{error}");
        let model = Door::new(door(), lambda).unwrap();
        let flash_s = lambda / (0.9 * model.peak_angular_rate());
        assert!(model.node_rate_hz(lambda) * flash_s >= NODES_PER_DOOR_FLASH - 1e-9);
    }

    #[test]
    fn bad_parameters_are_named() {
        let bad = |p: DoorParams| Door::new(p, 0.05).unwrap_err().param;
        assert_eq!(
            bad(DoorParams {
                width_m: 0.0,
                ..door()
            }),
            "width_m"
        );
        assert_eq!(
            bad(DoorParams {
                close_start_s: 2.0,
                ..door()
            }),
            "close_start_s"
        );
        assert_eq!(
            bad(DoorParams {
                open_duration_s: f64::NAN,
                ..door()
            }),
            "open_duration_s"
        );
        assert_eq!(Door::new(door(), -1.0).unwrap_err().param, "wavelength_m");
        let open_forever = Door::new(
            DoorParams {
                close_start_s: f64::INFINITY,
                close_duration_s: f64::NAN,
                ..door()
            },
            0.05,
        )
        .unwrap();
        assert_eq!(open_forever.active_intervals(10.0), vec![(1.0, 2.5)]);
    }
}
