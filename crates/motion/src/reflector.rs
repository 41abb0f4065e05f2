//! The bench target: one point reflector (a flat plate or a corner reflector of
//! known RCS) that moves on a straight line, vibrates on a shaker, or both.
//!
//! Position at time t (room coordinates, metres):
//!
//! ```text
//! p(t) = start + û·v·(clamp(t, t_start, t_stop) − t_start) + ŝ·a·sin(2πf·t + φ)
//! ```
//!
//! with û the travel direction, v the speed, ŝ the shaker direction, a the
//! shaker amplitude and f its frequency. The line motion is an ideal stage:
//! constant speed between `move_start_s` and `move_stop_s`, at rest before and
//! after (the speed steps, as a stage with negligible acceleration time does).
//! The shaker runs for the whole trial. Velocities are the exact derivatives.
//!
//! # Groups and articulated targets
//!
//! A group target is a `Vec<Reflector>`: every member is its own
//! [`MotionModel`], and the scene adds each one to its list
//! of actors; the synthesizer sums their echoes. Rigidly linked parts share
//! the same line motion (same `travel_direction`, `speed_mps` and start/stop
//! times) with different `start_m` offsets; a part that vibrates on the moving
//! carriage adds its own shaker terms. Two reflectors on one carriage, a
//! "limb" on a shaker riding a linear stage, or a reference reflector beside a
//! moving one are all built this way. Rotations are not offered here; use the
//! door or fan models for rotating parts.
//!
//! This file also holds what the other motion models share: the parameter
//! error type [`ParamError`] and the node-rate rule [`hermite_node_rate_hz`].

use crate::{MotionModel, Vec3};
use std::f64::consts::PI;

pub use echobench_core::param_error::ParamError;
use echobench_core::param_error::ParamOwner;

/// Parameter checks shared by the models of this crate; each returns the
/// (possibly normalised) value or a [`ParamError`] owned by the model
/// (`ParamOwner::Motion`) and naming the field.
#[derive(Debug, Clone, Copy)]
pub(crate) struct Check {
    pub(crate) model: &'static str,
}

impl Check {
    pub(crate) fn error(&self, field: &'static str, value: f64, expected: &str) -> ParamError {
        ParamOwner::Motion(self.model).error(field, value, format!("must be {expected}"))
    }

    pub(crate) fn finite(&self, field: &'static str, value: f64) -> Result<f64, ParamError> {
        if value.is_finite() {
            Ok(value)
        } else {
            Err(self.error(field, value, "a finite number"))
        }
    }

    pub(crate) fn positive(&self, field: &'static str, value: f64) -> Result<f64, ParamError> {
        if value.is_finite() && value > 0.0 {
            Ok(value)
        } else {
            Err(self.error(field, value, "a finite number > 0"))
        }
    }

    pub(crate) fn non_negative(&self, field: &'static str, value: f64) -> Result<f64, ParamError> {
        if value.is_finite() && value >= 0.0 {
            Ok(value)
        } else {
            Err(self.error(field, value, "a finite number >= 0"))
        }
    }

    /// `lo <= value <= hi`.
    pub(crate) fn within(
        &self,
        field: &'static str,
        value: f64,
        lo: f64,
        hi: f64,
    ) -> Result<f64, ParamError> {
        if value.is_finite() && value >= lo && value <= hi {
            Ok(value)
        } else {
            Err(self.error(field, value, &format!("a number in [{lo}, {hi}]")))
        }
    }

    /// `lo < value < hi`.
    pub(crate) fn strictly_within(
        &self,
        field: &'static str,
        value: f64,
        lo: f64,
        hi: f64,
    ) -> Result<f64, ParamError> {
        if value.is_finite() && value > lo && value < hi {
            Ok(value)
        } else {
            Err(self.error(field, value, &format!("a number in ({lo}, {hi})")))
        }
    }

    pub(crate) fn finite_vec(&self, field: &'static str, value: Vec3) -> Result<Vec3, ParamError> {
        if value.iter().all(|c| c.is_finite()) {
            Ok(value)
        } else {
            Err(self.error(field, crate::norm(value), "a vector of finite numbers"))
        }
    }

    /// A finite, non-zero vector, returned normalised to unit length.
    pub(crate) fn direction(&self, field: &'static str, value: Vec3) -> Result<Vec3, ParamError> {
        let length = crate::norm(value);
        if value.iter().all(|c| c.is_finite()) && length > 1e-12 && length.is_finite() {
            Ok(scale(value, 1.0 / length))
        } else {
            Err(self.error(field, length, "a finite, non-zero direction vector"))
        }
    }
}

/// Round-trip phase error (rad) that node interpolation may add; small
/// against the phase noise of any real module (common practice).
pub const NODE_PHASE_TOLERANCE_RAD: f64 = 0.01;

/// The node rate (Hz) at which cubic Hermite interpolation of a range whose
/// fourth time derivative is bounded by `fourth_derivative_bound_mps4` (m/s⁴)
/// keeps the round-trip phase error 4π·e/λ below [`NODE_PHASE_TOLERANCE_RAD`].
///
/// The Hermite error on a node interval h is f⁽⁴⁾(ξ)/4!·(t−t₀)²(t−t₁)² ≤
/// h⁴·M₄/384 (standard Hermite interpolation error theorem, e.g. Burden &
/// Faires, *Numerical Analysis*, §3.4), so h ≤ (384·tol·λ/(4π·M₄))^¼.
/// Returns 0 when the bound or the wavelength is not positive and finite (the
/// criterion then does not apply; each model adds its own floor).
pub fn hermite_node_rate_hz(fourth_derivative_bound_mps4: f64, wavelength_m: f64) -> f64 {
    let usable = |x: f64| x.is_finite() && x > 0.0;
    if !usable(fourth_derivative_bound_mps4) || !usable(wavelength_m) {
        return 0.0;
    }
    (4.0 * PI * fourth_derivative_bound_mps4 / (384.0 * NODE_PHASE_TOLERANCE_RAD * wavelength_m))
        .powf(0.25)
}

/// The node rate (Hz) at which cubic Hermite interpolation across an isolated
/// jump of `acceleration_jump_mps2` (m/s²) in the range's second derivative
/// keeps the round-trip phase error below [`NODE_PHASE_TOLERANCE_RAD`].
///
/// With exact values and slopes at the nodes, the worst error over a node
/// interval h holding such a jump J is J·h²/61.9 (computed here: the maximum
/// over the jump's position of the Hermite error of J/2·(t−c)₊²), so
/// h ≤ √(61.9·tol·λ/(4π·J)). Models whose motion is only C¹ (piecewise
/// profiles that start and stop with zero speed) need it. Returns 0 when the
/// jump or the wavelength is not positive and finite.
pub fn knot_node_rate_hz(acceleration_jump_mps2: f64, wavelength_m: f64) -> f64 {
    let usable = |x: f64| x.is_finite() && x > 0.0;
    if !usable(acceleration_jump_mps2) || !usable(wavelength_m) {
        return 0.0;
    }
    (4.0 * PI * acceleration_jump_mps2 / (61.9 * NODE_PHASE_TOLERANCE_RAD * wavelength_m)).sqrt()
}

/// Fewest nodes per cycle of any periodic motion (common practice: a cubic
/// through 8 points per cycle follows a sinusoid to about 0.1 % of its amplitude).
pub const NODES_PER_CYCLE: f64 = 8.0;

/// Lowest node rate any model asks for, Hz (keeps slow models' amplitude ramps smooth).
pub const MIN_NODE_RATE_HZ: f64 = 20.0;

pub(crate) fn scale(v: Vec3, k: f64) -> Vec3 {
    [v[0] * k, v[1] * k, v[2] * k]
}

pub(crate) fn add(a: Vec3, b: Vec3) -> Vec3 {
    [a[0] + b[0], a[1] + b[1], a[2] + b[2]]
}

pub(crate) fn cross(a: Vec3, b: Vec3) -> Vec3 {
    [
        a[1] * b[2] - a[2] * b[1],
        a[2] * b[0] - a[0] * b[2],
        a[0] * b[1] - a[1] * b[0],
    ]
}

/// Parameters of a bench reflector.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ReflectorParams {
    /// RCS of the reflector, m² (plate or corner reflector; taken as aspect-independent).
    pub rcs_m2: f64,
    /// Position at rest before the line motion starts, m.
    pub start_m: Vec3,
    /// Direction of the line motion (normalised by the constructor; any finite
    /// vector when `speed_mps` is 0).
    pub travel_direction: Vec3,
    /// Speed along the line, m/s (0: no line motion).
    pub speed_mps: f64,
    /// When the line motion starts, s.
    pub move_start_s: f64,
    /// When it stops, s (`f64::INFINITY` for never).
    pub move_stop_s: f64,
    /// Shaker displacement amplitude (half peak-to-peak), m (0: no shaker).
    pub shaker_amplitude_m: f64,
    /// Shaker frequency, Hz.
    pub shaker_frequency_hz: f64,
    /// Direction of the shaker displacement (normalised by the constructor).
    pub shaker_direction: Vec3,
    /// Shaker phase at t = 0, rad.
    pub shaker_phase_rad: f64,
}

impl ReflectorParams {
    /// A reflector standing still at `position_m`; set the line or shaker
    /// fields (struct update syntax) to make it move.
    pub fn stationary(position_m: Vec3, rcs_m2: f64) -> ReflectorParams {
        ReflectorParams {
            rcs_m2,
            start_m: position_m,
            travel_direction: [1.0, 0.0, 0.0],
            speed_mps: 0.0,
            move_start_s: 0.0,
            move_stop_s: 0.0,
            shaker_amplitude_m: 0.0,
            shaker_frequency_hz: 0.0,
            shaker_direction: [1.0, 0.0, 0.0],
            shaker_phase_rad: 0.0,
        }
    }
}

/// A point reflector on a linear stage and/or a shaker.
#[derive(Debug, Clone)]
pub struct Reflector {
    params: ReflectorParams,
    amplitude_m: f64,
    line_moves: bool,
    shaker_moves: bool,
}

impl Reflector {
    /// Checks the parameters and builds the model.
    ///
    /// # Errors
    /// A [`ParamError`] naming the first field that is not finite, negative
    /// where it must not be, a zero direction for a motion that is used, or a
    /// stop time before the start time.
    ///
    /// # Example
    /// ```
    /// use echobench_motion::reflector::{Reflector, ReflectorParams};
    /// use echobench_motion::MotionModel;
    ///
    /// // A 1 m² plate carried along +x at 0.5 m/s from t = 0 to 4 s.
    /// let params = ReflectorParams {
    ///     speed_mps: 0.5,
    ///     move_stop_s: 4.0,
    ///     ..ReflectorParams::stationary([2.0, 0.0, 1.0], 1.0)
    /// };
    /// let mut plate = Reflector::new(params)?;
    /// let mut echoes = Vec::new();
    /// plate.echoes(2.0, [0.0, 0.0, 1.0], &mut echoes);
    /// assert_eq!(echoes[0].position_m, [3.0, 0.0, 1.0]);
    /// assert_eq!(echoes[0].amplitude_m, 1.0);
    /// let bad = Reflector::new(ReflectorParams { rcs_m2: -1.0, ..params });
    /// assert_eq!(bad.unwrap_err().param, "rcs_m2");
    /// # Ok::<(), echobench_motion::reflector::ParamError>(())
    /// ```
    pub fn new(params: ReflectorParams) -> Result<Reflector, ParamError> {
        let check = Check { model: "reflector" };
        let mut params = params;
        check.non_negative("rcs_m2", params.rcs_m2)?;
        check.finite_vec("start_m", params.start_m)?;
        check.non_negative("speed_mps", params.speed_mps)?;
        check.finite("move_start_s", params.move_start_s)?;
        if params.move_stop_s.is_nan() || params.move_stop_s < params.move_start_s {
            return Err(check.error(
                "move_stop_s",
                params.move_stop_s,
                "a time >= move_start_s (or infinity)",
            ));
        }
        let line_moves = params.speed_mps > 0.0 && params.move_stop_s > params.move_start_s;
        if line_moves {
            params.travel_direction =
                check.direction("travel_direction", params.travel_direction)?;
        }
        check.non_negative("shaker_amplitude_m", params.shaker_amplitude_m)?;
        check.non_negative("shaker_frequency_hz", params.shaker_frequency_hz)?;
        check.finite("shaker_phase_rad", params.shaker_phase_rad)?;
        let shaker_moves = params.shaker_amplitude_m > 0.0 && params.shaker_frequency_hz > 0.0;
        if shaker_moves {
            params.shaker_direction =
                check.direction("shaker_direction", params.shaker_direction)?;
        }
        Ok(Reflector {
            amplitude_m: params.rcs_m2.sqrt(),
            params,
            line_moves,
            shaker_moves,
        })
    }

    /// The parameters (directions normalised).
    pub fn params(&self) -> &ReflectorParams {
        &self.params
    }

    /// Exact position (m) and velocity (m/s) at `t_s`.
    pub fn state(&self, t_s: f64) -> (Vec3, Vec3) {
        let p = &self.params;
        let mut position = p.start_m;
        let mut velocity = [0.0; 3];
        if self.line_moves {
            let travelled_s = t_s.clamp(p.move_start_s, p.move_stop_s) - p.move_start_s;
            position = add(
                position,
                scale(p.travel_direction, p.speed_mps * travelled_s),
            );
            if t_s >= p.move_start_s && t_s < p.move_stop_s {
                velocity = scale(p.travel_direction, p.speed_mps);
            }
        }
        if self.shaker_moves {
            let omega = 2.0 * PI * p.shaker_frequency_hz;
            let (s, c) = (omega * t_s + p.shaker_phase_rad).sin_cos();
            position = add(
                position,
                scale(p.shaker_direction, p.shaker_amplitude_m * s),
            );
            velocity = add(
                velocity,
                scale(p.shaker_direction, p.shaker_amplitude_m * omega * c),
            );
        }
        (position, velocity)
    }
}

impl MotionModel for Reflector {
    /// Line speed while on the line, plus the shaker's velocity amplitude 2πf·a
    /// (an oscillation counts by its amplitude; see the crate doc).
    fn motion_speed_mps(&mut self, t_s: f64) -> f64 {
        let p = &self.params;
        let mut speed = 0.0;
        if self.line_moves && t_s >= p.move_start_s && t_s < p.move_stop_s {
            speed += p.speed_mps;
        }
        if self.shaker_moves {
            speed += 2.0 * PI * p.shaker_frequency_hz * p.shaker_amplitude_m;
        }
        speed
    }

    fn echoes(&mut self, t_s: f64, _sensor_m: Vec3, out: &mut Vec<crate::Echo>) {
        let (position_m, velocity_mps) = self.state(t_s);
        out.push(crate::Echo {
            position_m,
            velocity_mps,
            amplitude_m: self.amplitude_m,
        });
    }

    fn echo_count(&self) -> usize {
        1
    }

    fn node_rate_hz(&self, wavelength_m: f64) -> f64 {
        let p = &self.params;
        let mut rate = MIN_NODE_RATE_HZ;
        if self.shaker_moves {
            let omega = 2.0 * PI * p.shaker_frequency_hz;
            rate = rate
                .max(NODES_PER_CYCLE * p.shaker_frequency_hz)
                .max(hermite_node_rate_hz(
                    p.shaker_amplitude_m * omega.powi(4),
                    wavelength_m,
                ));
        }
        if self.line_moves && wavelength_m.is_finite() && wavelength_m > 0.0 {
            // The speed steps at start and stop; with 4 nodes per Doppler cycle
            // (2v/λ) the Hermite error over the one node interval holding a
            // step stays below π/8 rad of round-trip phase (error ≤ Δv·h/4).
            rate = rate.max(4.0 * 2.0 * p.speed_mps / wavelength_m);
        }
        rate
    }

    fn max_speed_mps(&self) -> f64 {
        let p = &self.params;
        let line = if self.line_moves { p.speed_mps } else { 0.0 };
        let shaker = if self.shaker_moves {
            2.0 * PI * p.shaker_frequency_hz * p.shaker_amplitude_m
        } else {
            0.0
        };
        line + shaker
    }

    /// The peak Doppler plus the shaker frequency: a vibrating reflector's
    /// spectrum has lines at n·f_v weighted by J_n(4πa/λ) (Chen, Li, Ho,
    /// Wechsler, IEEE T-AES 42(1), 2006), reaching about 2v/λ + f_v (Carson's rule).
    fn max_doppler_hz(&self, wavelength_m: f64) -> f64 {
        let shaker_hz = if self.shaker_moves {
            self.params.shaker_frequency_hz
        } else {
            0.0
        };
        2.0 * self.max_speed_mps() / wavelength_m + shaker_hz
    }

    fn active_intervals(&self, duration_s: f64) -> Vec<(f64, f64)> {
        if duration_s.is_nan() || duration_s <= 0.0 {
            return Vec::new();
        }
        if self.shaker_moves {
            return vec![(0.0, duration_s)];
        }
        if self.line_moves {
            let start = self.params.move_start_s.max(0.0);
            let stop = self.params.move_stop_s.min(duration_s);
            if stop > start {
                return vec![(start, stop)];
            }
        }
        Vec::new()
    }
}

/// Test helpers shared by the model tests of this crate.
#[cfg(test)]
pub(crate) mod test_support {
    use crate::{dot, norm, sub, Echo, MotionModel, Vec3};

    /// Evaluates `model` at `times`, one echo list per time (checks the echo count).
    pub(crate) fn sample(
        model: &mut dyn MotionModel,
        times: &[f64],
        sensor: Vec3,
    ) -> Vec<Vec<Echo>> {
        times
            .iter()
            .map(|&t| {
                let mut out = Vec::new();
                model.echoes(t, sensor, &mut out);
                assert_eq!(out.len(), model.echo_count(), "echo count at t = {t}");
                out
            })
            .collect()
    }

    /// Largest speed of any echo over the samples.
    pub(crate) fn largest_speed(samples: &[Vec<Echo>]) -> f64 {
        samples
            .iter()
            .flatten()
            .map(|e| norm(e.velocity_mps))
            .fold(0.0, f64::max)
    }

    /// Asserts that every echo's velocity is the central difference of its
    /// position (step `dt_s`) at each of the increasing `times`, within `tolerance_mps`.
    pub(crate) fn assert_velocity_is_the_derivative(
        model: &mut dyn MotionModel,
        times: &[f64],
        sensor: Vec3,
        dt_s: f64,
        tolerance_mps: f64,
    ) {
        for &t in times {
            let around = sample(model, &[t - dt_s, t, t + dt_s], sensor);
            for (e, echo) in around[1].iter().enumerate() {
                let before = around[0][e].position_m;
                let after = around[2][e].position_m;
                for axis in 0..3 {
                    let numeric = (after[axis] - before[axis]) / (2.0 * dt_s);
                    assert!(
                        (numeric - echo.velocity_mps[axis]).abs() < tolerance_mps,
                        "t {t}, echo {e}, axis {axis}: {numeric} vs {}",
                        echo.velocity_mps[axis]
                    );
                }
            }
        }
    }

    /// Range and range rate of an echo seen from `sensor`.
    pub(crate) fn range_and_rate(echo: &Echo, sensor: Vec3) -> (f64, f64) {
        let d = sub(echo.position_m, sensor);
        let r = norm(d);
        (r, dot(d, echo.velocity_mps) / r)
    }

    /// The synthesizer's interpolation, done slowly: nodes at the model's node
    /// rate, cubic Hermite range between them, compared with the model
    /// evaluated directly at 8 points inside each node interval. Returns the
    /// worst round-trip phase error (rad), weighting each echo by its
    /// amplitude relative to `reference_amplitude_m` (capped at 1) so that
    /// silent echoes do not count.
    pub(crate) fn worst_interpolation_phase_error(
        make: &dyn Fn() -> Box<dyn MotionModel>,
        wavelength_m: f64,
        t0_s: f64,
        t1_s: f64,
        sensor: Vec3,
        reference_amplitude_m: f64,
    ) -> f64 {
        let mut nodes_model = make();
        let h = 1.0 / nodes_model.node_rate_hz(wavelength_m);
        let steps = ((t1_s - t0_s) / h).ceil() as usize;
        let node_times: Vec<f64> = (0..=steps).map(|i| t0_s + i as f64 * h).collect();
        let nodes = sample(nodes_model.as_mut(), &node_times, sensor);
        let dense_times: Vec<f64> = node_times[..steps]
            .iter()
            .flat_map(|&t| (1..8).map(move |j| t + h * j as f64 / 8.0))
            .collect();
        let mut dense_model = make();
        let dense = sample(dense_model.as_mut(), &dense_times, sensor);
        let mut worst: f64 = 0.0;
        for (k, echoes) in dense.iter().enumerate() {
            let i = k / 7;
            let s = ((k % 7) + 1) as f64 / 8.0;
            for (e, exact) in echoes.iter().enumerate() {
                let (r0, v0) = range_and_rate(&nodes[i][e], sensor);
                let (r1, v1) = range_and_rate(&nodes[i + 1][e], sensor);
                let h00 = 2.0 * s * s * s - 3.0 * s * s + 1.0;
                let h10 = s * s * s - 2.0 * s * s + s;
                let h01 = -2.0 * s * s * s + 3.0 * s * s;
                let h11 = s * s * s - s * s;
                let r = h00 * r0 + h10 * h * v0 + h01 * r1 + h11 * h * v1;
                let (r_exact, _) = range_and_rate(exact, sensor);
                let weight = (exact.amplitude_m.abs() / reference_amplitude_m).min(1.0);
                let phase = 4.0 * std::f64::consts::PI * (r - r_exact).abs() / wavelength_m;
                worst = worst.max(weight * phase);
            }
        }
        worst
    }
}

#[cfg(test)]
mod tests {
    use super::test_support::*;
    use super::*;

    const SENSOR: Vec3 = [0.0, 0.0, 1.0];

    fn both() -> ReflectorParams {
        ReflectorParams {
            travel_direction: [3.0, 4.0, 0.0],
            speed_mps: 0.5,
            move_start_s: 1.0,
            move_stop_s: 5.0,
            shaker_amplitude_m: 0.002,
            shaker_frequency_hz: 10.0,
            shaker_direction: [0.0, 0.0, 2.0],
            shaker_phase_rad: 0.3,
            ..ReflectorParams::stationary([1.0, 2.0, 1.0], 1.0)
        }
    }

    #[test]
    fn line_and_shaker_positions_and_velocities_are_exact() {
        // Kinematics by definition: p = start + û·v·(t − t_start) + ŝ·a·sin(ωt + φ).
        let model = Reflector::new(both()).unwrap();
        let omega = 2.0 * PI * 10.0;
        for &t in &[0.0, 0.5, 1.0, 2.25, 4.99, 5.0, 7.0] {
            let (p, v) = model.state(t);
            let travelled = 0.5 * (t.clamp(1.0, 5.0) - 1.0);
            let moving = (1.0..5.0).contains(&t);
            let shake = 0.002 * (omega * t + 0.3).sin();
            let shake_v = 0.002 * omega * (omega * t + 0.3).cos();
            let expected_p = [1.0 + 0.6 * travelled, 2.0 + 0.8 * travelled, 1.0 + shake];
            let line_v = if moving { 0.5 } else { 0.0 };
            let expected_v = [0.6 * line_v, 0.8 * line_v, shake_v];
            for axis in 0..3 {
                assert!((p[axis] - expected_p[axis]).abs() < 1e-12, "t {t} p {p:?}");
                assert!((v[axis] - expected_v[axis]).abs() < 1e-12, "t {t} v {v:?}");
            }
        }
    }

    #[test]
    fn velocity_is_the_derivative_of_position() {
        let model = Reflector::new(both()).unwrap();
        let dt = 1e-6;
        for &t in &[0.3, 1.7, 3.3] {
            let (p0, _) = model.state(t - dt);
            let (p1, _) = model.state(t + dt);
            let (_, v) = model.state(t);
            for axis in 0..3 {
                let numeric = (p1[axis] - p0[axis]) / (2.0 * dt);
                assert!((numeric - v[axis]).abs() < 1e-6, "{numeric} vs {}", v[axis]);
            }
        }
    }

    #[test]
    fn amplitude_is_the_root_of_the_rcs_and_speed_bound_holds() {
        let mut model = Reflector::new(ReflectorParams {
            rcs_m2: 0.25,
            ..both()
        })
        .unwrap();
        let times: Vec<f64> = (0..6000).map(|i| i as f64 * 1e-3).collect();
        let samples = sample(&mut model, &times, SENSOR);
        assert!(samples.iter().all(|e| e[0].amplitude_m == 0.5));
        let bound = model.max_speed_mps();
        assert!((bound - (0.5 + 0.002 * 2.0 * PI * 10.0)).abs() < 1e-12);
        assert!(largest_speed(&samples) <= bound + 1e-12);
    }

    #[test]
    fn node_rate_keeps_interpolated_phase_accurate() {
        // 24.125 GHz (λ = 12.427 mm, docs/reference/check-values.md#pc1), shaker at 1 mm, 10 Hz:
        // Hermite nodes at the declared rate stay within the phase tolerance
        // except across the speed steps, bounded by π/8 rad.
        let lambda = 299_792_458.0 / 24.125e9;
        let shaker_only = || -> Box<dyn MotionModel> {
            Box::new(
                Reflector::new(ReflectorParams {
                    shaker_amplitude_m: 0.001,
                    shaker_frequency_hz: 10.0,
                    shaker_direction: [1.0, 0.0, 0.0],
                    ..ReflectorParams::stationary([2.0, 0.0, 1.0], 1.0)
                })
                .unwrap(),
            )
        };
        let error = worst_interpolation_phase_error(&shaker_only, lambda, 0.0, 1.0, SENSOR, 1.0);
        assert!(error <= NODE_PHASE_TOLERANCE_RAD, "{error}");
        let with_steps = || -> Box<dyn MotionModel> { Box::new(Reflector::new(both()).unwrap()) };
        let error = worst_interpolation_phase_error(&with_steps, lambda, 0.0, 6.0, SENSOR, 1.0);
        assert!(error <= PI / 8.0, "{error}");
    }

    #[test]
    fn active_intervals_cover_the_motion() {
        let line_only = Reflector::new(ReflectorParams {
            shaker_amplitude_m: 0.0,
            ..both()
        })
        .unwrap();
        assert_eq!(line_only.active_intervals(10.0), vec![(1.0, 5.0)]);
        assert_eq!(line_only.active_intervals(3.0), vec![(1.0, 3.0)]);
        assert_eq!(
            Reflector::new(both()).unwrap().active_intervals(10.0),
            vec![(0.0, 10.0)]
        );
        let still = Reflector::new(ReflectorParams::stationary([1.0, 0.0, 0.0], 1.0)).unwrap();
        assert!(still.active_intervals(10.0).is_empty());
        assert_eq!(still.max_speed_mps(), 0.0);
    }

    #[test]
    fn a_group_is_several_models_summed_by_the_scene() {
        // Two reflectors on one carriage: same line motion, different offsets.
        let lead = both();
        let trailing = ReflectorParams {
            start_m: [0.5, 2.0, 1.0],
            shaker_amplitude_m: 0.0,
            ..lead
        };
        let mut group: Vec<Box<dyn MotionModel>> = vec![
            Box::new(Reflector::new(lead).unwrap()),
            Box::new(Reflector::new(trailing).unwrap()),
        ];
        let mut out = Vec::new();
        for model in group.iter_mut() {
            model.echoes(3.0, SENSOR, &mut out);
        }
        assert_eq!(out.len(), 2);
        // The carriage offset stays rigid along the line motion.
        assert!((out[0].position_m[0] - out[1].position_m[0] - 0.5).abs() < 1e-12);
    }

    #[test]
    fn bad_parameters_are_named() {
        let err = Reflector::new(ReflectorParams {
            rcs_m2: f64::NAN,
            ..both()
        })
        .unwrap_err();
        assert_eq!(err.param, "rcs_m2");
        let err = Reflector::new(ReflectorParams {
            travel_direction: [0.0; 3],
            ..both()
        })
        .unwrap_err();
        assert_eq!(err.param, "travel_direction");
        let err = Reflector::new(ReflectorParams {
            move_stop_s: 0.5,
            ..both()
        })
        .unwrap_err();
        assert_eq!(err.param, "move_stop_s");
        assert!(err.to_string().contains("move_stop_s"));
        let err = Reflector::new(ReflectorParams {
            shaker_direction: [f64::INFINITY, 0.0, 0.0],
            ..both()
        })
        .unwrap_err();
        assert_eq!(err.param, "shaker_direction");
    }

    #[test]
    fn hermite_rate_follows_the_error_bound() {
        // A sinusoid a·sin ωt has M₄ = aω⁴; with a = λ/(4π)·(384·tol) the bound
        // gives h = 1/ω exactly: rate = ω.
        let lambda = 0.05;
        let omega: f64 = 30.0;
        let a = lambda / (4.0 * PI) * 384.0 * NODE_PHASE_TOLERANCE_RAD;
        let rate = hermite_node_rate_hz(a * omega.powi(4), lambda);
        assert!((rate - omega).abs() < 1e-9, "{rate}");
        assert_eq!(hermite_node_rate_hz(f64::NAN, lambda), 0.0);
        assert_eq!(hermite_node_rate_hz(1.0, 0.0), 0.0);
    }

    #[test]
    fn knot_rate_bounds_the_error_across_an_acceleration_jump() {
        // f(t) = J/2·(t − c)₊² interpolated on nodes at the knot rate: the worst
        // error over the jump position stays within the range tolerance and
        // comes within 1 % of it (the bound is tight).
        let (lambda, jump) = (0.0124, 3.0);
        let h = 1.0 / knot_node_rate_hz(jump, lambda);
        let tolerance_m = NODE_PHASE_TOLERANCE_RAD * lambda / (4.0 * PI);
        let mut worst: f64 = 0.0;
        for i in 1..200 {
            let c = h * i as f64 / 200.0;
            let (y1, d1) = (0.5 * jump * (h - c).powi(2), jump * (h - c));
            for j in 0..=400 {
                let t = h * j as f64 / 400.0;
                let s = t / h;
                let exact = if t > c {
                    0.5 * jump * (t - c).powi(2)
                } else {
                    0.0
                };
                let hermite = (-2.0 * s.powi(3) + 3.0 * s * s) * y1 + (s.powi(3) - s * s) * h * d1;
                worst = worst.max((exact - hermite).abs());
            }
        }
        assert!(
            worst <= tolerance_m && worst > 0.99 * tolerance_m,
            "{worst} vs {tolerance_m}"
        );
    }
}
