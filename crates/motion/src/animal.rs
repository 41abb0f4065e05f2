//! A small quadruped (cat, dog) trotting along a [`Path`].
//!
//! Five echoes: the body (at the path position, at body height) and four legs.
//!
//! * **Stride frequency** from body mass, f = 1.62·M^−0.15 Hz (preferred-gait
//!   stride frequency of mammals, Sci. Rep. 6:28825, 2016, Fig. 2 fit;
//!   docs/reference/nuisances.md#n5), unless given.
//! * **Body RCS** from mass, unless given: RCS roughly proportional to body
//!   mass, as Schultz, Burgener & King (Proc. IRE 46, 1958) observed for men,
//!   extrapolated down to pets — σ = 0.5 m² × M / 90.7 kg (0.5 m² the scenario
//!   default for a person, docs/reference/radar-physics.md#r7; 90.7 kg = the 200 lb subject). This
//!   is an extrapolation, not a measurement; it gives 0.022 m² for a 4 kg cat
//!   and 0.11 m² for a 20 kg dog, inside the ranges of
//!   docs/reference/nuisances.md#n5.
//! * **Legs** (no source for the kinematics): a trot, diagonal pairs in phase
//!   (left fore with right hind). Each paw moves fore-aft relative to its hip
//!   as A·sin(2πφ), A = v/(2π f), so that in the backward half of the cycle its
//!   speed over the ground falls to zero (stance) and in the forward half it
//!   peaks at 2v (swing); during the swing the paw lifts by
//!   h·cos²(2πφ), h = 15 % of the hip height. The leg echo sits 3/4 of the way
//!   from hip to paw. Hips and shoulders are at body height, half a body
//!   length ahead of and behind the body centre, a fifth of a body length to
//!   either side. Each leg gets a tenth of the body RCS by default.
//! * The gait phase advances with the path's moving time, so legs freeze
//!   (mid-step) during pauses, and amplitudes follow the path's presence ramp.
//!
//! Default sizes scale with mass by geometric similarity (lengths ∝ M^⅓) from
//! a 4 kg cat with body (hip) height 0.25 m and 0.40 m between fore and hind
//! legs (from memory).

use crate::path::Path;
use crate::reflector::{
    hermite_node_rate_hz, knot_node_rate_hz, Check, ParamError, MIN_NODE_RATE_HZ, NODES_PER_CYCLE,
};
use crate::{Echo, MotionModel, Vec3};
use std::f64::consts::PI;

/// Preferred-gait stride frequency of a mammal of `mass_kg`: f = 1.62·M^−0.15 Hz
/// (Sci. Rep. 6:28825, 2016, Fig. 2 fit).
pub fn stride_frequency_hz(mass_kg: f64) -> f64 {
    1.62 * mass_kg.powf(-0.15)
}

/// Body RCS extrapolated from mass, m²: 0.5 m² × M / 90.7 kg (proportionality
/// after Schultz et al. 1958, an extrapolation — see the module doc).
pub fn body_rcs_from_mass_m2(mass_kg: f64) -> f64 {
    0.5 * mass_kg / 90.7
}

/// Paw lift as a fraction of hip height (no source).
const PAW_LIFT_FRACTION: f64 = 0.15;

/// Where the leg echo sits between hip (0) and paw (1) (no source).
const LEG_ECHO_FRACTION: f64 = 0.75;

/// Parameters of a small quadruped.
#[derive(Debug, Clone, PartialEq)]
pub struct AnimalParams {
    /// Where it goes.
    pub path: Path,
    /// Body mass, kg.
    pub mass_kg: f64,
    /// Stride frequency, Hz (`None`: from mass, [`stride_frequency_hz`]).
    pub stride_frequency_hz: Option<f64>,
    /// Body RCS, m² (`None`: from mass, [`body_rcs_from_mass_m2`]).
    pub body_rcs_m2: Option<f64>,
    /// RCS of each leg, m² (`None`: a tenth of the body RCS, no source).
    pub leg_rcs_m2: Option<f64>,
    /// Height of the body centre and of the hips, m.
    pub body_height_m: f64,
    /// Distance between fore and hind legs, m.
    pub body_length_m: f64,
}

impl AnimalParams {
    /// An animal of `mass_kg` on `path`, sizes scaled from a 4 kg cat (see the module doc).
    pub fn from_mass(path: Path, mass_kg: f64) -> AnimalParams {
        let scale = (mass_kg / 4.0).cbrt();
        AnimalParams {
            path,
            mass_kg,
            stride_frequency_hz: None,
            body_rcs_m2: None,
            leg_rcs_m2: None,
            body_height_m: 0.25 * scale,
            body_length_m: 0.40 * scale,
        }
    }
}

/// A trotting quadruped.
#[derive(Debug, Clone)]
pub struct Animal {
    params: AnimalParams,
    stride_hz: f64,
    body_amplitude_m: f64,
    leg_amplitude_m: f64,
    /// Fore-aft paw excursion A, m.
    excursion_m: f64,
    lift_m: f64,
}

/// Legs as (fore/aft sign, left/right sign, phase offset in cycles): a trot.
const LEGS: [(f64, f64, f64); 4] = [
    (1.0, 1.0, 0.0),   // left fore
    (-1.0, -1.0, 0.0), // right hind
    (1.0, -1.0, 0.5),  // right fore
    (-1.0, 1.0, 0.5),  // left hind
];

impl Animal {
    /// Checks the parameters and builds the model.
    ///
    /// # Errors
    /// A [`ParamError`] naming the first bad field.
    ///
    /// # Example
    /// ```
    /// use echobench_motion::animal::{Animal, AnimalParams};
    /// use echobench_motion::path::Path;
    /// use echobench_motion::MotionModel;
    ///
    /// // A 4 kg cat crossing the room at 1 m/s from t = 1 s to 6 s.
    /// let path = Path::straight([-2.0, 1.0], 0.0, 1.0, 1.0, 6.0, vec![]);
    /// let cat = Animal::new(AnimalParams::from_mass(path, 4.0))?;
    /// assert!((cat.stride_hz() - 1.32).abs() < 0.005); // 1.62·M^−0.15
    /// assert_eq!(cat.echo_count(), 5);
    /// # Ok::<(), echobench_motion::reflector::ParamError>(())
    /// ```
    pub fn new(params: AnimalParams) -> Result<Animal, ParamError> {
        let check = Check { model: "animal" };
        check.positive("mass_kg", params.mass_kg)?;
        let stride_hz = match params.stride_frequency_hz {
            Some(f) => check.positive("stride_frequency_hz", f)?,
            None => stride_frequency_hz(params.mass_kg),
        };
        let body_rcs = match params.body_rcs_m2 {
            Some(s) => check.non_negative("body_rcs_m2", s)?,
            None => body_rcs_from_mass_m2(params.mass_kg),
        };
        let leg_rcs = match params.leg_rcs_m2 {
            Some(s) => check.non_negative("leg_rcs_m2", s)?,
            None => 0.1 * body_rcs,
        };
        check.positive("body_height_m", params.body_height_m)?;
        check.positive("body_length_m", params.body_length_m)?;
        let excursion_m = params.path.speed_mps() / (2.0 * PI * stride_hz);
        Ok(Animal {
            stride_hz,
            body_amplitude_m: body_rcs.sqrt(),
            leg_amplitude_m: leg_rcs.sqrt(),
            excursion_m,
            lift_m: PAW_LIFT_FRACTION * params.body_height_m,
            params,
        })
    }

    /// Stride frequency in use, Hz.
    pub fn stride_hz(&self) -> f64 {
        self.stride_hz
    }

    /// Body RCS in use, m².
    pub fn body_rcs_m2(&self) -> f64 {
        self.body_amplitude_m * self.body_amplitude_m
    }
}

impl MotionModel for Animal {
    fn echoes(&mut self, t_s: f64, _sensor_m: Vec3, out: &mut Vec<Echo>) {
        let p = &self.params;
        let state = p.path.state(t_s);
        let [hx, hy] = state.heading;
        let (x, y) = (state.position_m[0], state.position_m[1]);
        let body_velocity = [hx * state.speed_mps, hy * state.speed_mps, 0.0];
        out.push(Echo {
            position_m: [x, y, p.body_height_m],
            velocity_mps: body_velocity,
            amplitude_m: state.presence * self.body_amplitude_m,
        });
        let walking = state.speed_mps > 0.0;
        let omega = 2.0 * PI * self.stride_hz;
        for &(fore, left, offset) in &LEGS {
            let phase = 2.0 * PI * (self.stride_hz * state.moving_time_s + offset);
            let (s, c) = phase.sin_cos();
            let rate = if walking { omega } else { 0.0 };
            // Paw relative to its hip: forward A·sin φ, up h·cos²φ in the swing half.
            let forward = LEG_ECHO_FRACTION * self.excursion_m * s;
            let forward_rate = LEG_ECHO_FRACTION * self.excursion_m * c * rate;
            let (up, up_rate) = if c > 0.0 {
                (
                    LEG_ECHO_FRACTION * self.lift_m * c * c,
                    -LEG_ECHO_FRACTION * self.lift_m * 2.0 * c * s * rate,
                )
            } else {
                (0.0, 0.0)
            };
            let along = fore * 0.5 * p.body_length_m + forward;
            let across = left * 0.2 * p.body_length_m;
            let height = p.body_height_m * (1.0 - LEG_ECHO_FRACTION) + up;
            out.push(Echo {
                position_m: [
                    x + along * hx - across * hy,
                    y + along * hy + across * hx,
                    height,
                ],
                velocity_mps: [
                    body_velocity[0] + forward_rate * hx,
                    body_velocity[1] + forward_rate * hy,
                    up_rate,
                ],
                amplitude_m: state.presence * self.leg_amplitude_m,
            });
        }
    }

    fn echo_count(&self) -> usize {
        5
    }

    fn node_rate_hz(&self, wavelength_m: f64) -> f64 {
        let omega = 2.0 * PI * self.stride_hz;
        // Fore-aft A·sin φ: Aω⁴; lift h·cos²φ = h(1 + cos 2φ)/2: 8hω⁴.
        let fourth = LEG_ECHO_FRACTION * (self.excursion_m + 8.0 * self.lift_m) * omega.powi(4);
        // The lift's acceleration jumps by 2hω² (at the leg echo, 3/4 of it)
        // where the paw lifts off and touches down.
        let jump = LEG_ECHO_FRACTION * 2.0 * self.lift_m * omega * omega;
        MIN_NODE_RATE_HZ
            .max(NODES_PER_CYCLE * self.stride_hz)
            .max(hermite_node_rate_hz(fourth, wavelength_m))
            .max(knot_node_rate_hz(jump, wavelength_m))
    }

    /// Path speed plus the legs' fore-aft (Aω) and lift (hω) speeds at the leg echo.
    fn max_speed_mps(&self) -> f64 {
        let omega = 2.0 * PI * self.stride_hz;
        self.params.path.speed_mps() + LEG_ECHO_FRACTION * (self.excursion_m + self.lift_m) * omega
    }

    fn active_intervals(&self, duration_s: f64) -> Vec<(f64, f64)> {
        self.params.path.walking_intervals(duration_s)
    }

    /// The body's speed along its path (the legs swing only while it walks),
    /// from entry to leaving, both included.
    fn motion_speed_mps(&mut self, t_s: f64) -> f64 {
        let path = &self.params.path;
        let leave = path.leave_s();
        let walking = path.is_walking(t_s)
            || (t_s == leave && path.is_walking(leave - 1e-9 * leave.abs().max(1.0)));
        if walking {
            path.speed_mps()
        } else {
            0.0
        }
    }

    fn body_presence_intervals(&self, duration_s: f64) -> Vec<(f64, f64)> {
        let path = &self.params.path;
        let (start, end) = (path.enter_s().max(0.0), path.leave_s().min(duration_s));
        if end > start {
            vec![(start, end)]
        } else {
            Vec::new()
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::path::Pause;
    use crate::reflector::test_support::*;
    use crate::reflector::NODE_PHASE_TOLERANCE_RAD;

    const SENSOR: Vec3 = [0.0, -2.0, 2.2];

    fn cat() -> AnimalParams {
        let path = Path::straight(
            [-3.0, 0.0],
            0.0,
            1.0,
            1.0,
            20.0,
            vec![Pause {
                at_s: 8.0,
                duration_s: 2.0,
            }],
        );
        AnimalParams::from_mass(path, 4.0)
    }

    #[test]
    fn stride_law_matches_the_reference_values() {
        // f = 1.62·M^−0.15 (Sci. Rep. 6:28825, 2016) → 1.32 / 1.15 / 0.97 Hz at
        // 4 / 10 / 30 kg (docs/reference/nuisances.md#n5 [C]).
        for (mass, expected) in [(4.0, 1.32), (10.0, 1.15), (30.0, 0.97)] {
            assert!(
                (stride_frequency_hz(mass) - expected).abs() < 0.005,
                "{mass} kg"
            );
        }
        let model = Animal::new(cat()).unwrap();
        assert!((model.stride_hz() - 1.316).abs() < 0.001);
        let given = Animal::new(AnimalParams {
            stride_frequency_hz: Some(2.0),
            ..cat()
        })
        .unwrap();
        assert_eq!(given.stride_hz(), 2.0);
    }

    #[test]
    fn default_rcs_falls_in_the_suggested_pet_ranges() {
        // docs/reference/nuisances.md#n5 (extrapolation, no measurement): cat 4 kg ≈ 0.02–0.05 m²,
        // dog 20 kg ≈ 0.1–0.3 m².
        assert!((0.02..=0.05).contains(&body_rcs_from_mass_m2(4.0)));
        assert!((0.1..=0.3).contains(&body_rcs_from_mass_m2(20.0)));
        let model = Animal::new(cat()).unwrap();
        assert!((model.body_rcs_m2() - 0.5 * 4.0 / 90.7).abs() < 1e-12);
    }

    #[test]
    fn legs_repeat_every_stride_and_trot_in_diagonal_pairs() {
        let mut model = Animal::new(cat()).unwrap();
        let period = 1.0 / model.stride_hz();
        let t0 = 3.0;
        let samples = sample(&mut model, &[t0, t0 + period], SENSOR);
        for leg in 1..5 {
            // Relative to the body, each leg repeats after one stride.
            let rel = |i: usize| crate::sub(samples[i][leg].position_m, samples[i][0].position_m);
            let (a, b) = (rel(0), rel(1));
            for axis in 0..3 {
                assert!((a[axis] - b[axis]).abs() < 1e-9, "leg {leg}");
            }
        }
        // Left fore and right hind in phase: same fore-aft offset from their hips.
        let body = samples[0][0].position_m[0];
        let lf = samples[0][1].position_m[0] - body - 0.2;
        let rh = samples[0][2].position_m[0] - body + 0.2;
        let rf = samples[0][3].position_m[0] - body - 0.2;
        assert!((lf - rh).abs() < 1e-12);
        assert!(
            (lf + rf).abs() < 1e-12,
            "the other pair runs half a stride later"
        );
    }

    #[test]
    fn paws_rest_during_stance() {
        // With A = v/(2πf) the paw's ground speed falls to zero once per stride
        // (extrapolated from the leg echo at 3/4 of the leg: forward ground
        // speed v + (3/4)·Aω·cos φ never drops below v/4).
        let mut model = Animal::new(cat()).unwrap();
        let times: Vec<f64> = (0..2000).map(|i| 2.0 + i as f64 * 1e-3).collect();
        let samples = sample(&mut model, &times, SENSOR);
        let slowest = samples
            .iter()
            .map(|e| e[1].velocity_mps[0])
            .fold(f64::INFINITY, f64::min);
        assert!((slowest - 0.25).abs() < 1e-3, "{slowest}");
    }

    #[test]
    fn body_follows_the_path_and_legs_freeze_in_pauses() {
        let mut model = Animal::new(cat()).unwrap();
        let samples = sample(&mut model, &[0.5, 4.0, 8.5, 9.5, 12.0], SENSOR);
        assert!(samples[0].iter().all(|e| e.amplitude_m == 0.0));
        assert!((samples[1][0].position_m[0] - 0.0).abs() < 1e-12);
        assert!((samples[1][0].position_m[2] - 0.25).abs() < 1e-12);
        for (paused, later) in samples[2].iter().zip(&samples[3]) {
            assert_eq!(paused.position_m, later.position_m);
            assert_eq!(later.velocity_mps, [0.0; 3]);
        }
        assert!((samples[4][0].position_m[0] - 6.0).abs() < 1e-12);
        assert_eq!(model.active_intervals(30.0), vec![(1.0, 8.0), (10.0, 20.0)]);
    }

    #[test]
    fn speeds_stay_below_the_bound_and_velocity_is_consistent() {
        let mut model = Animal::new(cat()).unwrap();
        let times: Vec<f64> = (0..20_000).map(|i| 1.0 + i as f64 * 1e-3).collect();
        let samples = sample(&mut model, &times, SENSOR);
        let largest = largest_speed(&samples);
        assert!(largest <= model.max_speed_mps() + 1e-12);
        assert!(largest > 0.8 * model.max_speed_mps());
        let mut model = Animal::new(cat()).unwrap();
        assert_velocity_is_the_derivative(&mut model, &[2.1, 3.33, 5.7, 12.05], SENSOR, 1e-6, 1e-5);
    }

    #[test]
    fn node_rate_keeps_interpolated_phase_accurate() {
        let lambda = 299_792_458.0 / 24.125e9;
        let dog = || -> Box<dyn MotionModel> {
            let path = Path::straight([-3.0, 0.0], 0.0, 2.0, 0.0, 20.0, vec![]);
            Box::new(Animal::new(AnimalParams::from_mass(path, 30.0)).unwrap())
        };
        // Away from the presence ramps (which the path owns).
        let error = worst_interpolation_phase_error(&dog, lambda, 1.0, 4.0, SENSOR, 0.01);
        assert!(error <= NODE_PHASE_TOLERANCE_RAD, "{error}");
    }

    #[test]
    fn bad_parameters_are_named() {
        let bad = |p: AnimalParams| Animal::new(p).unwrap_err().param;
        assert_eq!(
            bad(AnimalParams {
                mass_kg: 0.0,
                ..cat()
            }),
            "mass_kg"
        );
        assert_eq!(
            bad(AnimalParams {
                stride_frequency_hz: Some(f64::NAN),
                ..cat()
            }),
            "stride_frequency_hz"
        );
        assert_eq!(
            bad(AnimalParams {
                body_rcs_m2: Some(-1.0),
                ..cat()
            }),
            "body_rcs_m2"
        );
        assert_eq!(
            bad(AnimalParams {
                body_height_m: 0.0,
                ..cat()
            }),
            "body_height_m"
        );
    }
}
