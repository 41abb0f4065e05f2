//! A fan: N rigid blades on a rotor, plus the hub/housing.
//!
//! Blade k of a rotor turning at Ω = 2π·f_rot returns (Chen & Ling,
//! *Time-Frequency Transforms for Radar Imaging and Signal Analysis*, Artech
//! 2002, eq. 8.19, docs/reference/nuisances.md#n2):
//!
//! ```text
//! s_k(t) = (r₂−r₁)·exp(−j(4π/λ)·r̄·ℓ_k)·sinc((4π/λ)·((r₂−r₁)/2)·ℓ_k),   sinc x = sin x / x
//! ```
//!
//! with r̄ = (r₁+r₂)/2 and ℓ_k = cosβ·sinψ_k the component of the blade's unit
//! direction along the line of sight. That is the exact far-field integral of
//! a thin line scatterer from r₁ to r₂. Here it becomes one echo per blade at
//! the blade centre (whose range gives the exponential) with the signed
//! amplitude √σ_blade·sinc(…), where σ_blade is the blade's broadside
//! ("flash") RCS and ℓ_k is computed from the actual geometry (any rotor axis,
//! any sensor position). Because the sinc amplitude carries the Doppler spread
//! of the whole blade, [`MotionModel::max_speed_mps`] reports the tip speed,
//! not the slower speed of the blade centres.
//!
//! A blade flashes when it is broadside to the line of sight (ℓ_k = 0); the
//! flash lasts ≈ λ/(L·Ω·cosβ), L = r₂ − r₁. Opposite blades of an even rotor
//! flash together, so there are N flashes per revolution for even N and 2N for
//! odd N (from memory, Chen, *The Micro-Doppler Effect in Radar*, 2011).
//!
//! `blade_tilt_rad` cones the blades out of the rotor plane towards the axis.
//! Blade pitch (twist about the blade's own axis) does not enter the thin-line
//! model and is not modelled. The hub echo whirls in the rotor plane at f_rot
//! (imbalance) and vibrates along the axis at 2·f_mains (motor
//! magnetostriction), both from memory
//! (docs/reference/nuisances.md#n2); the whole rotor moves
//! with the hub.
//!
//! # Switching on and off
//!
//! A fan runs at constant speed unless it is switched: from `switch_on_s`
//! the rotor spins up over `spin_up_s`, and from `switch_off_s` it coasts
//! down over `spin_down_s`, each with a raised-cosine rate profile
//! Ω(t) = Ω₀·R(u), R(u) = (1 − cos πu)/2 (and 1 − R on the way down), so
//! the rotor angle is Ω₀ times a running time g(t) with g' = R: no jump in
//! speed or acceleration. The raised cosine stands in for the motor's torque
//! curve and the coast-down of the blades (no source for the shape); the
//! default durations (3 s up, 8 s down for a desk fan) are from memory. The
//! housing's whirl follows the rotor; its mains vibration scales with the
//! speed fraction (the motor current falls with it; no source).

use crate::reflector::{
    add, cross, hermite_node_rate_hz, scale, Check, ParamError, MIN_NODE_RATE_HZ, NODES_PER_CYCLE,
};
use crate::{dot, norm, sub, Echo, Flash, MotionModel, Vec3, Vibration, MAX_VIBRATION_PHASE_RAD};
use echobench_core::fastmath::sin_cos;
use std::f64::consts::PI;

/// Nodes per blade flash (the sinc main lobe), so that linear interpolation of
/// the amplitude follows the flash to a few per cent (common practice).
pub const NODES_PER_FLASH: f64 = 10.0;

/// Parameters of a fan.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FanParams {
    /// Hub centre, m.
    pub hub_m: Vec3,
    /// Rotor axis, normal to the rotor plane (normalised by the constructor).
    pub axis: Vec3,
    /// Number of blades, ≥ 1.
    pub blade_count: usize,
    /// Distance from the axis to the blade root, m.
    pub root_radius_m: f64,
    /// Distance from the axis to the blade tip, m (> root).
    pub tip_radius_m: f64,
    /// Rotation rate, revolutions per second; positive turns right-handed about `axis`.
    pub revolutions_per_s: f64,
    /// Coning of the blades out of the rotor plane towards `axis`, rad, in (−π/2, π/2).
    pub blade_tilt_rad: f64,
    /// Angle of blade 0 at t = 0 in the rotor plane, rad.
    pub initial_angle_rad: f64,
    /// Broadside (flash) RCS of one blade, m².
    pub blade_rcs_m2: f64,
    /// RCS of the hub/housing/grille echo, m².
    pub hub_rcs_m2: f64,
    /// Radius of the hub's whirl at the rotation rate (imbalance), m.
    pub imbalance_whirl_m: f64,
    /// Amplitude of the hub's axial vibration at twice the mains frequency, m.
    pub mains_vibration_m: f64,
    /// Mains frequency, Hz (50 or 60).
    pub mains_hz: f64,
    /// When the fan is switched on, s (`f64::NEG_INFINITY`: running from before the trial).
    pub switch_on_s: f64,
    /// When it is switched off, s (`f64::INFINITY`: never).
    pub switch_off_s: f64,
    /// Spin-up time after switching on, s (> 0).
    pub spin_up_s: f64,
    /// Coast-down time after switching off, s (> 0).
    pub spin_down_s: f64,
}

/// Default spin-up time of a desk fan, s (from memory).
pub const DEFAULT_SPIN_UP_S: f64 = 3.0;

/// Default coast-down time of a desk fan, s (from memory).
pub const DEFAULT_SPIN_DOWN_S: f64 = 8.0;

impl FanParams {
    /// A rotor without hub echo or vibration; set the other fields with struct update syntax.
    pub fn rotor(
        hub_m: Vec3,
        axis: Vec3,
        blade_count: usize,
        root_radius_m: f64,
        tip_radius_m: f64,
        revolutions_per_s: f64,
        blade_rcs_m2: f64,
    ) -> FanParams {
        FanParams {
            hub_m,
            axis,
            blade_count,
            root_radius_m,
            tip_radius_m,
            revolutions_per_s,
            blade_tilt_rad: 0.0,
            initial_angle_rad: 0.0,
            blade_rcs_m2,
            hub_rcs_m2: 0.0,
            imbalance_whirl_m: 0.0,
            mains_vibration_m: 0.0,
            mains_hz: 50.0,
            switch_on_s: f64::NEG_INFINITY,
            switch_off_s: f64::INFINITY,
            spin_up_s: DEFAULT_SPIN_UP_S,
            spin_down_s: DEFAULT_SPIN_DOWN_S,
        }
    }
}

/// A fan.
#[derive(Debug, Clone)]
pub struct Fan {
    params: FanParams,
    wavelength_m: f64,
    /// Orthonormal basis of the rotor plane; `in_plane_u × in_plane_v = axis`.
    in_plane_u: Vec3,
    /// (sin, cos) of the blade tilt and of the angle between blades, 2π/B.
    blade_tilt: (f64, f64),
    blade_step: (f64, f64),
    in_plane_v: Vec3,
    /// The renderer may take the axial hum per sample (see [`Fan::vibration`]).
    vibration_per_sample: bool,
}

/// sin x / x, 1 at 0.
pub fn sinc(x: f64) -> f64 {
    if x.abs() < 1e-8 {
        1.0 - x * x / 6.0
    } else {
        sin_cos(x).0 / x
    }
}

impl Fan {
    /// Checks the parameters and builds the model for carrier wavelength
    /// `wavelength_m` (the blade sinc depends on it).
    ///
    /// # Errors
    /// A [`ParamError`] naming the first bad field.
    ///
    /// # Example
    /// ```
    /// use echobench_motion::fan::{Fan, FanParams};
    /// use echobench_motion::MotionModel;
    ///
    /// // Desk fan, 3 blades to r = 0.15 m, 1200 rpm, at 5.8 GHz
    /// // (docs/reference/check-values.md#pc18).
    /// let lambda = 299_792_458.0 / 5.8e9;
    /// let params = FanParams::rotor([0.0, 0.0, 1.0], [1.0, 0.0, 0.0], 3, 0.03, 0.15, 20.0, 0.01);
    /// let fan = Fan::new(params, lambda)?;
    /// let max_doppler_hz = 2.0 * fan.max_speed_mps() / lambda;
    /// assert!((max_doppler_hz - 729.4).abs() < 0.1);
    /// assert_eq!(fan.echo_count(), 4); // three blades and the hub
    /// # Ok::<(), echobench_motion::reflector::ParamError>(())
    /// ```
    pub fn new(params: FanParams, wavelength_m: f64) -> Result<Fan, ParamError> {
        let check = Check { model: "fan" };
        let mut params = params;
        check.finite_vec("hub_m", params.hub_m)?;
        let axis = check.direction("axis", params.axis)?;
        params.axis = axis;
        if params.blade_count == 0 {
            return Err(check.error("blade_count", 0.0, "at least 1 blade"));
        }
        check.non_negative("root_radius_m", params.root_radius_m)?;
        let tip = check.positive("tip_radius_m", params.tip_radius_m)?;
        if tip <= params.root_radius_m {
            return Err(check.error("tip_radius_m", tip, "a radius > root_radius_m"));
        }
        check.finite("revolutions_per_s", params.revolutions_per_s)?;
        check.strictly_within("blade_tilt_rad", params.blade_tilt_rad, -PI / 2.0, PI / 2.0)?;
        check.finite("initial_angle_rad", params.initial_angle_rad)?;
        check.non_negative("blade_rcs_m2", params.blade_rcs_m2)?;
        check.non_negative("hub_rcs_m2", params.hub_rcs_m2)?;
        check.non_negative("imbalance_whirl_m", params.imbalance_whirl_m)?;
        check.non_negative("mains_vibration_m", params.mains_vibration_m)?;
        check.positive("mains_hz", params.mains_hz)?;
        check.positive("spin_up_s", params.spin_up_s)?;
        check.positive("spin_down_s", params.spin_down_s)?;
        if params.switch_on_s.is_nan() || params.switch_on_s == f64::INFINITY {
            return Err(check.error(
                "switch_on_s",
                params.switch_on_s,
                "a time (or negative infinity)",
            ));
        }
        if params.switch_off_s.is_nan()
            || params.switch_off_s < params.switch_on_s + params.spin_up_s
        {
            return Err(check.error(
                "switch_off_s",
                params.switch_off_s,
                "a time at or after switch_on_s + spin_up_s (or infinity)",
            ));
        }
        let wavelength_m = check.positive("wavelength_m", wavelength_m)?;
        // Any unit vector across the axis starts the in-plane basis.
        let helper = if axis[2].abs() < 0.9 {
            [0.0, 0.0, 1.0]
        } else {
            [1.0, 0.0, 0.0]
        };
        let u = cross(helper, axis);
        let in_plane_u = scale(u, 1.0 / norm(u));
        let in_plane_v = cross(axis, in_plane_u);
        Ok(Fan {
            params,
            wavelength_m,
            in_plane_u,
            blade_tilt: params.blade_tilt_rad.sin_cos(),
            blade_step: (2.0 * PI / params.blade_count as f64).sin_cos(),
            in_plane_v,
            vibration_per_sample: true,
        })
    }

    /// The parameters (axis normalised).
    pub fn params(&self) -> &FanParams {
        &self.params
    }

    /// Angular rate Ω, rad/s (signed).
    pub fn angular_rate_rad_s(&self) -> f64 {
        2.0 * PI * self.params.revolutions_per_s
    }

    /// Tip speed Ω·r₂·cos(tilt), m/s: the largest speed of any point of a blade.
    pub fn tip_speed_mps(&self) -> f64 {
        self.angular_rate_rad_s().abs()
            * self.params.tip_radius_m
            * self.params.blade_tilt_rad.cos()
    }

    /// Shortest blade flash, λ/(L·|Ω|·cos(tilt)) s (sensor in the rotor plane,
    /// where the flash is shortest); infinite for a rotor at rest.
    pub fn flash_duration_s(&self) -> f64 {
        let blade_length_m = self.params.tip_radius_m - self.params.root_radius_m;
        self.wavelength_m
            / (blade_length_m * self.angular_rate_rad_s().abs() * self.params.blade_tilt_rad.cos())
    }

    /// Running time g(t) (the rotor angle is Ω₀·g + initial angle), the speed
    /// fraction g' in [0, 1] and its rate g'' (1/s), at `t_s`.
    pub fn running(&self, t_s: f64) -> (f64, f64, f64) {
        let p = &self.params;
        if p.switch_on_s == f64::NEG_INFINITY && p.switch_off_s == f64::INFINITY {
            return (t_s, 1.0, 0.0);
        }
        // Up: ∫₀ᵘ R = u/2 − sin(πu)/2π; down: ∫₀ᵘ (1 − R) = u/2 + sin(πu)/2π.
        let on = p.switch_on_s;
        let (up, down) = (p.spin_up_s, p.spin_down_s);
        let at_off = |off: f64| -> f64 {
            if on == f64::NEG_INFINITY {
                off
            } else {
                off - on - 0.5 * up
            }
        };
        if t_s >= p.switch_off_s {
            let g_off = at_off(p.switch_off_s);
            let u = (t_s - p.switch_off_s) / down;
            if u >= 1.0 {
                return (g_off + 0.5 * down, 0.0, 0.0);
            }
            let (s, c) = (PI * u).sin_cos();
            return (
                g_off + down * (0.5 * u + s / (2.0 * PI)),
                0.5 + 0.5 * c,
                -0.5 * PI * s / down,
            );
        }
        if on == f64::NEG_INFINITY {
            return (t_s, 1.0, 0.0);
        }
        if t_s <= on {
            return (0.0, 0.0, 0.0);
        }
        let u = (t_s - on) / up;
        if u >= 1.0 {
            return (at_off(t_s), 1.0, 0.0);
        }
        let (s, c) = (PI * u).sin_cos();
        (
            up * (0.5 * u - s / (2.0 * PI)),
            0.5 - 0.5 * c,
            0.5 * PI * s / up,
        )
    }

    /// Hub displacement and velocity at `t_s`, given the rotor angle's (sin, cos)
    /// and the speed fraction f and its rate.
    /// Without `mains` the axial vibration is left out (the renderer adds it per sample).
    fn hub_motion(
        &self,
        t_s: f64,
        rotor: (f64, f64),
        fraction: (f64, f64),
        mains: bool,
    ) -> (Vec3, Vec3) {
        let p = &self.params;
        let mains_m = if mains { p.mains_vibration_m } else { 0.0 };
        if p.imbalance_whirl_m == 0.0 && mains_m == 0.0 {
            return ([0.0; 3], [0.0; 3]);
        }
        let (f, f_rate) = fraction;
        let omega = self.angular_rate_rad_s() * f;
        let (s, c) = rotor;
        let radial = add(scale(self.in_plane_u, c), scale(self.in_plane_v, s));
        let tangential = add(scale(self.in_plane_u, -s), scale(self.in_plane_v, c));
        let omega_mains = 2.0 * PI * 2.0 * p.mains_hz;
        let (sm, cm) = sin_cos(omega_mains * t_s);
        let displacement = add(
            scale(radial, p.imbalance_whirl_m),
            scale(p.axis, f * mains_m * sm),
        );
        let velocity = add(
            scale(tangential, p.imbalance_whirl_m * omega),
            scale(
                p.axis,
                f * mains_m * omega_mains * cm + f_rate * mains_m * sm,
            ),
        );
        (displacement, velocity)
    }
}

impl Fan {
    /// The echoes at `t_s`; with `flashes`, the blades' sinc factors are left
    /// out of their amplitudes and given there instead (with their rates), and
    /// so is the axial vibration when it is rendered per sample ([`Fan::vibration`]).
    fn echoes_into(
        &self,
        t_s: f64,
        sensor_m: Vec3,
        out: &mut Vec<Echo>,
        mut flashes: Option<&mut Vec<Flash>>,
    ) {
        let p = self.params;
        let (running_s, fraction, fraction_rate) = self.running(t_s);
        let omega_full = self.angular_rate_rad_s();
        let omega = omega_full * fraction;
        // The rotor angle of blade 0 (the whirl turns with it); the other
        // blades by rotating its (sin, cos) through 2π/B, one turn each.
        let rotor = sin_cos(omega_full * running_s + p.initial_angle_rad);
        let mains = flashes.is_none() || self.vibration().is_none();
        let (hub_shift, hub_velocity) =
            self.hub_motion(t_s, rotor, (fraction, fraction_rate), mains);
        let hub = add(p.hub_m, hub_shift);
        let centre_radius_m = 0.5 * (p.root_radius_m + p.tip_radius_m);
        let blade_length_m = p.tip_radius_m - p.root_radius_m;
        let (tilt_s, tilt_c) = self.blade_tilt;
        let (step_s, step_c) = self.blade_step;
        let blade_amplitude_m = p.blade_rcs_m2.sqrt();
        let wavenumber = 4.0 * PI / self.wavelength_m;
        let (mut s, mut c) = rotor;
        for _ in 0..p.blade_count {
            let radial = add(scale(self.in_plane_u, c), scale(self.in_plane_v, s));
            let tangential = add(scale(self.in_plane_u, -s), scale(self.in_plane_v, c));
            let direction = add(scale(radial, tilt_c), scale(p.axis, tilt_s));
            let centre = add(hub, scale(direction, centre_radius_m));
            let velocity = add(
                hub_velocity,
                scale(tangential, centre_radius_m * tilt_c * omega),
            );
            let line_of_sight = sub(centre, sensor_m);
            let distance = norm(line_of_sight);
            let along = if distance > 1e-12 {
                dot(direction, line_of_sight) / distance
            } else {
                0.0
            };
            let argument = wavenumber * 0.5 * blade_length_m * along;
            match flashes.as_deref_mut() {
                None => out.push(Echo {
                    position_m: centre,
                    velocity_mps: velocity,
                    amplitude_m: blade_amplitude_m * sinc(argument),
                }),
                Some(flashes) => {
                    // d(along)/dt for along = d·l/|l|, with the blade direction d
                    // turning at ω (d' = ω·cos(tilt)·tangential) and l' the centre's velocity.
                    let along_rate = if distance > 1e-12 {
                        let turning = scale(tangential, tilt_c * omega);
                        (dot(turning, line_of_sight) + dot(direction, velocity)) / distance
                            - along * dot(line_of_sight, velocity) / (distance * distance)
                    } else {
                        0.0
                    };
                    out.push(Echo {
                        position_m: centre,
                        velocity_mps: velocity,
                        amplitude_m: blade_amplitude_m,
                    });
                    flashes.push(Flash {
                        argument_rad: argument,
                        argument_rate_rad_s: wavenumber * 0.5 * blade_length_m * along_rate,
                    });
                }
            }
            (s, c) = (s * step_c + c * step_s, c * step_c - s * step_s);
        }
        out.push(Echo {
            position_m: hub,
            velocity_mps: hub_velocity,
            amplitude_m: p.hub_rcs_m2.sqrt(),
        });
        if let Some(flashes) = flashes {
            flashes.push(Flash::NONE);
        }
    }

    /// Node rate for the ranges alone (Hermite phase error, eight nodes per
    /// revolution and, with `mains`, per mains vibration cycle), without the flashes.
    fn range_node_rate_hz(&self, wavelength_m: f64, mains: bool) -> f64 {
        let p = &self.params;
        let omega = self.angular_rate_rad_s().abs();
        let omega_mains = 2.0 * PI * 2.0 * p.mains_hz;
        let centre_radius_m = 0.5 * (p.root_radius_m + p.tip_radius_m);
        // Circular motion of radius r has |d⁴p/dt⁴| = rΩ⁴.
        let fourth = (centre_radius_m * p.blade_tilt_rad.cos() + p.imbalance_whirl_m)
            * omega.powi(4)
            + if mains {
                p.mains_vibration_m * omega_mains.powi(4)
            } else {
                0.0
            };
        let mut rate = MIN_NODE_RATE_HZ
            .max(NODES_PER_CYCLE * p.revolutions_per_s.abs())
            .max(hermite_node_rate_hz(fourth, wavelength_m));
        if mains && p.mains_vibration_m > 0.0 {
            rate = rate.max(NODES_PER_CYCLE * 2.0 * p.mains_hz);
        }
        rate
    }
}

impl MotionModel for Fan {
    fn echoes(&mut self, t_s: f64, sensor_m: Vec3, out: &mut Vec<Echo>) {
        self.echoes_into(t_s, sensor_m, out, None);
    }

    /// The rotor turns steadily and spins up and down with raised-cosine
    /// rate profiles: no velocity steps.
    fn band_limited(&self) -> bool {
        true
    }

    fn echoes_with_flashes(
        &mut self,
        t_s: f64,
        sensor_m: Vec3,
        out: &mut Vec<Echo>,
        flashes: &mut Vec<Flash>,
    ) {
        self.echoes_into(t_s, sensor_m, out, Some(flashes));
    }

    /// The axial hum at 2·f_mains, when its phase excursion is small enough
    /// for the renderer to add it per sample: then the nodes need not follow
    /// it (eight nodes per hum cycle, 800 per second at 50 Hz, were most of a
    /// desk fan's cost).
    fn vibration(&self) -> Option<Vibration> {
        let p = &self.params;
        let excursion_rad = 4.0 * PI / self.wavelength_m * p.mains_vibration_m;
        let small = p.mains_vibration_m > 0.0 && excursion_rad <= MAX_VIBRATION_PHASE_RAD;
        (self.vibration_per_sample && small).then_some(Vibration {
            direction: p.axis,
            angular_rate_rad_s: 2.0 * PI * 2.0 * p.mains_hz,
            phase_rad: 0.0,
            max_amplitude_m: p.mains_vibration_m,
        })
    }

    fn set_vibration_per_sample(&mut self, per_sample: bool) {
        self.vibration_per_sample = per_sample;
    }

    /// The hum scales with the speed fraction (see the module doc).
    fn vibration_amplitude_m(&self, t_s: f64) -> f64 {
        self.running(t_s).1 * self.params.mains_vibration_m
    }

    /// The ranges' rate, and the same Hermite criterion for the flash argument
    /// x = (4π/λ)·(L/2)·ℓ: as if (L/2)·ℓ were a range, whose fourth derivative
    /// is at most (L/2)·cos(tilt)·Ω⁴ for a blade direction turning at Ω (far
    /// sensor), so x is interpolated within the phase tolerance (in radians of x).
    fn flash_node_rate_hz(&self, wavelength_m: f64) -> f64 {
        let p = &self.params;
        let half_length_m = 0.5 * (p.tip_radius_m - p.root_radius_m);
        let fourth = half_length_m * p.blade_tilt_rad.cos() * self.angular_rate_rad_s().powi(4);
        // The blades' sinc arguments are scaled by the wavelength given at construction.
        self.range_node_rate_hz(wavelength_m, self.vibration().is_none())
            .max(hermite_node_rate_hz(fourth, self.wavelength_m))
    }

    fn echo_count(&self) -> usize {
        self.params.blade_count + 1
    }

    fn node_rate_hz(&self, wavelength_m: f64) -> f64 {
        let p = &self.params;
        let omega = self.angular_rate_rad_s().abs();
        let mut rate = self.range_node_rate_hz(wavelength_m, true);
        // The blade amplitudes depend on the wavelength given at construction.
        let blade_length_m = p.tip_radius_m - p.root_radius_m;
        if omega > 0.0 && p.blade_rcs_m2 > 0.0 {
            let flash_s = self.wavelength_m / (blade_length_m * omega * p.blade_tilt_rad.cos());
            rate = rate.max(NODES_PER_FLASH / flash_s);
        }
        rate
    }

    /// Tip speed plus hub vibration speeds: a bound on the Doppler content of
    /// the blade returns (whose sinc amplitudes spread the centre's Doppler up
    /// to the tip's) and on every echo's speed.
    fn max_speed_mps(&self) -> f64 {
        let p = &self.params;
        // The coast-down's rate of change of the vibration amplitude, π/(2·T).
        let switching = if p.switch_on_s.is_finite() || p.switch_off_s.is_finite() {
            p.mains_vibration_m * 0.5 * PI / p.spin_up_s.min(p.spin_down_s)
        } else {
            0.0
        };
        self.tip_speed_mps()
            + p.imbalance_whirl_m * self.angular_rate_rad_s().abs()
            + p.mains_vibration_m * 2.0 * PI * 2.0 * p.mains_hz
            + switching
    }

    /// The tip Doppler plus the housing's vibration rates (Carson's rule for
    /// the sidebands of a vibrating echo; Chen, Li, Ho, Wechsler, IEEE T-AES 42(1), 2006).
    fn max_doppler_hz(&self, wavelength_m: f64) -> f64 {
        let p = &self.params;
        let vibration_hz = if p.mains_vibration_m > 0.0 {
            2.0 * p.mains_hz
        } else {
            0.0
        };
        2.0 * self.max_speed_mps() / wavelength_m + vibration_hz + p.revolutions_per_s.abs()
    }

    /// From switching on to the end of the coast-down (the whole trial for a fan always on).
    fn active_intervals(&self, duration_s: f64) -> Vec<(f64, f64)> {
        let p = &self.params;
        let moves = p.revolutions_per_s != 0.0 || p.mains_vibration_m > 0.0;
        let start = p.switch_on_s.max(0.0);
        let end = (p.switch_off_s + p.spin_down_s).min(duration_s);
        if moves && end > start {
            vec![(start, end)]
        } else {
            Vec::new()
        }
    }

    /// Blade-tip speed Ω(t)·r₂·cos(tilt).
    fn motion_speed_mps(&mut self, t_s: f64) -> f64 {
        self.tip_speed_mps() * self.running(t_s).1
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::reflector::test_support::*;
    use crate::reflector::NODE_PHASE_TOLERANCE_RAD;
    use rustfft::{num_complex::Complex, FftPlanner};

    const C: f64 = 299_792_458.0;

    /// A desk fan of docs/reference/check-values.md#pc18: r₂ = 0.15 m, 1200 rpm; axis along +x,
    /// hub 1 m above the floor.
    fn desk_fan(blades: usize) -> FanParams {
        FanParams::rotor(
            [0.0, 0.0, 1.0],
            [1.0, 0.0, 0.0],
            blades,
            0.03,
            0.15,
            20.0,
            0.01,
        )
    }

    /// A sensor at `distance_m` from the hub, seen at elevation `beta_rad`
    /// above the rotor plane (the plane is y–z; elevation towards +x).
    fn sensor_at(distance_m: f64, beta_rad: f64) -> Vec3 {
        [
            distance_m * beta_rad.sin(),
            distance_m * beta_rad.cos(),
            1.0,
        ]
    }

    #[test]
    fn tip_doppler_bound_matches_check_18() {
        // docs/reference/check-values.md#pc18 [C]: 0.15 m, 1200 rpm, 5.8 GHz → tip 18.85 m/s →
        // 729.4 Hz; bound ±2Ωr₂cosβ/λ (Chen & Ling 2002).
        let lambda = C / 5.8e9;
        let fan = Fan::new(desk_fan(3), lambda).unwrap();
        assert!((fan.tip_speed_mps() - 18.85).abs() < 0.005);
        let doppler = 2.0 * fan.max_speed_mps() / lambda;
        assert!((doppler - 729.4).abs() < 0.1, "{doppler}");
        // Other bands of the same check: 308 / 1324 / 3034 Hz.
        for (f0, expected) in [(2.45e9, 308.0), (10.525e9, 1324.0), (24.125e9, 3034.0)] {
            let l = C / f0;
            let d = 2.0 * Fan::new(desk_fan(3), l).unwrap().max_speed_mps() / l;
            assert!((d - expected).abs() < 1.0, "{d} vs {expected}");
        }
        // Flash duration 2.7 ms at 5.8 GHz for a 0.15 m blade
        // (docs/reference/nuisances.md#n2 [C]).
        let full_blade = Fan::new(
            FanParams {
                root_radius_m: 0.0,
                ..desk_fan(3)
            },
            lambda,
        )
        .unwrap();
        assert!((full_blade.flash_duration_s() - 2.7e-3).abs() < 0.05e-3);
    }

    /// Complex baseband of the blade echoes, radar-agnostic (no R⁻² law):
    /// Σ a_k·exp(−j4π(R_k − R_hub)/λ).
    fn baseband(fan: &mut Fan, times: &[f64], sensor: Vec3, lambda: f64) -> Vec<Complex<f64>> {
        let hub_range = norm(sub(fan.params.hub_m, sensor));
        let mut out = Vec::new();
        times
            .iter()
            .map(|&t| {
                out.clear();
                fan.echoes(t, sensor, &mut out);
                out[..fan.params.blade_count]
                    .iter()
                    .map(|e| {
                        let r = norm(sub(e.position_m, sensor)) - hub_range;
                        Complex::from_polar(e.amplitude_m, -4.0 * PI * r / lambda)
                    })
                    .sum()
            })
            .collect()
    }

    #[test]
    fn blade_echo_equals_the_line_integral_of_eq_8_19_in_the_far_field() {
        // Test against the slow, obvious version: 4000 points along each blade,
        // each weighted √σ/(r₂−r₁)·dr, summed with their exact ranges.
        let lambda = C / 5.8e9;
        let sensor = sensor_at(1000.0, 0.5);
        let mut fan = Fan::new(desk_fan(3), lambda).unwrap();
        let hub_range = norm(sub(fan.params.hub_m, sensor));
        let times: Vec<f64> = (0..500).map(|i| i as f64 * 1e-4).collect();
        let fast = baseband(&mut fan, &times, sensor, lambda);
        let p = fan.params;
        let points = 4000;
        let dr = (p.tip_radius_m - p.root_radius_m) / points as f64;
        for (i, &t) in times.iter().enumerate() {
            let mut slow = Complex::new(0.0, 0.0);
            for k in 0..p.blade_count {
                let psi = fan.angular_rate_rad_s() * t + 2.0 * PI * k as f64 / p.blade_count as f64;
                let radial = add(
                    scale(fan.in_plane_u, psi.cos()),
                    scale(fan.in_plane_v, psi.sin()),
                );
                for j in 0..points {
                    let r = p.root_radius_m + (j as f64 + 0.5) * dr;
                    let point = add(p.hub_m, scale(radial, r));
                    let range = norm(sub(point, sensor)) - hub_range;
                    slow += Complex::from_polar(
                        p.blade_rcs_m2.sqrt() * dr / (p.tip_radius_m - p.root_radius_m),
                        -4.0 * PI * range / lambda,
                    );
                }
            }
            assert!(
                (fast[i] - slow).norm() < 5e-3 * p.blade_rcs_m2.sqrt(),
                "t {t}: {} vs {}",
                fast[i],
                slow
            );
        }
    }

    #[test]
    fn spectrum_reaches_but_does_not_pass_the_tip_doppler() {
        // Max micro-Doppler ±2Ωr₂cosβ/λ (Chen & Ling 2002): at β = 30° and
        // 5.8 GHz, 729.4·cos 30° = 631.7 Hz. One revolution at 40 kHz, far field.
        let lambda = C / 5.8e9;
        let beta = 30f64.to_radians();
        let sensor = sensor_at(1000.0, beta);
        let mut fan = Fan::new(desk_fan(3), lambda).unwrap();
        let tip_hz = 2.0 * fan.tip_speed_mps() * beta.cos() / lambda;
        let rate = 40_000.0;
        let n = 2000; // 0.05 s = one revolution
        let times: Vec<f64> = (0..n).map(|i| i as f64 / rate).collect();
        let mut signal = baseband(&mut fan, &times, sensor, lambda);
        FftPlanner::new().plan_fft_forward(n).process(&mut signal);
        let bin_hz = rate / n as f64;
        let energy = |lo_hz: f64, hi_hz: f64| -> f64 {
            signal
                .iter()
                .enumerate()
                .filter(|(k, _)| {
                    let f = if *k <= n / 2 {
                        *k as f64
                    } else {
                        *k as f64 - n as f64
                    } * bin_hz;
                    f.abs() >= lo_hz && f.abs() < hi_hz
                })
                .map(|(_, c)| c.norm_sqr())
                .sum()
        };
        let total = energy(0.0, f64::INFINITY);
        let beyond = energy(1.1 * tip_hz, f64::INFINITY);
        let near_tip = energy(0.8 * tip_hz, 1.1 * tip_hz);
        assert!(beyond / total < 1e-3, "beyond the tip: {}", beyond / total);
        assert!(
            near_tip / total > 0.02,
            "near the tip: {}",
            near_tip / total
        );
    }

    /// Flashes per revolution: contiguous runs where some blade's |amplitude|
    /// exceeds half its broadside value, counted on a circular time axis.
    fn flashes_per_revolution(blades: usize, sensor: Vec3) -> usize {
        let lambda = C / 5.8e9;
        let mut fan = Fan::new(
            FanParams {
                initial_angle_rad: 0.1234,
                ..desk_fan(blades)
            },
            lambda,
        )
        .unwrap();
        let n = 20_000;
        let times: Vec<f64> = (0..n).map(|i| i as f64 * 0.05 / n as f64).collect();
        let samples = sample(&mut fan, &times, sensor);
        let full = fan.params.blade_rcs_m2.sqrt();
        let lit: Vec<bool> = samples
            .iter()
            .map(|e| e[..blades].iter().any(|b| b.amplitude_m.abs() > 0.5 * full))
            .collect();
        (0..n).filter(|&i| lit[i] && !lit[(i + n - 1) % n]).count()
    }

    #[test]
    fn flashes_per_revolution_are_n_for_even_and_2n_for_odd_blade_counts() {
        // From memory (Chen 2011), docs/reference/nuisances.md#n2 [M]: N flashes per revolution
        // for even N, 2N for odd N.
        for sensor in [sensor_at(3.0, 0.0), sensor_at(3.0, 0.6)] {
            for blades in 2..=7 {
                let expected = if blades % 2 == 0 { blades } else { 2 * blades };
                assert_eq!(
                    flashes_per_revolution(blades, sensor),
                    expected,
                    "{blades} blades"
                );
            }
        }
    }

    #[test]
    fn hub_whirls_at_the_rotation_rate_and_hums_at_twice_mains() {
        let lambda = C / 24.125e9;
        let params = FanParams {
            hub_rcs_m2: 0.05,
            imbalance_whirl_m: 20e-6,
            mains_vibration_m: 5e-6,
            mains_hz: 50.0,
            ..desk_fan(3)
        };
        let mut fan = Fan::new(params, lambda).unwrap();
        let sensor = sensor_at(3.0, 0.3);
        // Project the hub displacement on the axis and on the rotor plane over
        // one second (20 revolutions, 100 hum cycles).
        let n = 100_000;
        let (mut hum_s, mut whirl_c) = (0.0, 0.0);
        let mut out = Vec::new();
        for i in 0..n {
            let t = i as f64 / n as f64;
            out.clear();
            fan.echoes(t, sensor, &mut out);
            let d = sub(out[3].position_m, params.hub_m);
            hum_s += d[0] * (2.0 * PI * 100.0 * t).sin() * 2.0 / n as f64;
            let psi = 2.0 * PI * 20.0 * t;
            whirl_c += dot(
                d,
                add(
                    scale(fan.in_plane_u, psi.cos()),
                    scale(fan.in_plane_v, psi.sin()),
                ),
            ) / n as f64;
        }
        assert!((hum_s - 5e-6).abs() < 1e-9, "{hum_s}");
        assert!((whirl_c - 20e-6).abs() < 1e-9, "{whirl_c}");
        assert!((out[3].amplitude_m - 0.05f64.sqrt()).abs() < 1e-12);
    }

    #[test]
    fn speeds_stay_below_the_bound_and_velocity_is_consistent() {
        let lambda = C / 10.525e9;
        let params = FanParams {
            imbalance_whirl_m: 1e-4,
            mains_vibration_m: 1e-5,
            blade_tilt_rad: 0.2,
            ..desk_fan(5)
        };
        let mut fan = Fan::new(params, lambda).unwrap();
        let sensor = sensor_at(2.0, 0.4);
        let times: Vec<f64> = (0..20_000).map(|i| i as f64 * 1e-5).collect();
        let samples = sample(&mut fan, &times, sensor);
        assert!(largest_speed(&samples) <= fan.max_speed_mps());
        let mut fan = Fan::new(params, lambda).unwrap();
        assert_velocity_is_the_derivative(&mut fan, &[0.0123, 0.031, 0.047], sensor, 1e-7, 1e-5);
    }

    #[test]
    fn node_rate_resolves_flashes_and_ranges() {
        // At 24.125 GHz the flash of the desk fan lasts λ/(LΩ) = 0.69 ms.
        let lambda = C / 24.125e9;
        let fan = Fan::new(desk_fan(3), lambda).unwrap();
        let rate = fan.node_rate_hz(lambda);
        assert!(rate * fan.flash_duration_s() >= NODES_PER_FLASH - 1e-9);
        let make = || -> Box<dyn MotionModel> { Box::new(Fan::new(desk_fan(3), lambda).unwrap()) };
        let error =
            worst_interpolation_phase_error(&make, lambda, 0.0, 0.1, sensor_at(3.0, 0.3), 0.1);
        assert!(error <= NODE_PHASE_TOLERANCE_RAD, "{error}");
        // Linear interpolation of the flash amplitude between nodes stays within 5 %.
        let h = 1.0 / rate;
        let sensor = sensor_at(3.0, 0.0);
        let times: Vec<f64> = (0..2000).map(|i| i as f64 * h / 2.0).collect();
        let samples = sample(&mut Fan::new(desk_fan(3), lambda).unwrap(), &times, sensor);
        let full = 0.1;
        for i in (1..times.len() - 1).step_by(2) {
            for (k, middle) in samples[i][..3].iter().enumerate() {
                let linear = 0.5 * (samples[i - 1][k].amplitude_m + samples[i + 1][k].amplitude_m);
                assert!((linear - middle.amplitude_m).abs() < 0.05 * full);
            }
        }
    }

    /// Echoes and flashes of the rendering split at `t`.
    fn split_at(fan: &mut Fan, t: f64, sensor: Vec3) -> (Vec<Echo>, Vec<Flash>) {
        let (mut echoes, mut flashes) = (Vec::new(), Vec::new());
        fan.echoes_with_flashes(t, sensor, &mut echoes, &mut flashes);
        (echoes, flashes)
    }

    #[test]
    fn the_split_echoes_times_their_sinc_are_the_echoes() {
        // The rendering split is the same model: slow amplitude × sinc(x) gives
        // back the full amplitude (eq. 8.19), positions and velocities unchanged.
        let lambda = C / 24.125e9;
        let params = FanParams {
            imbalance_whirl_m: 1e-4,
            mains_vibration_m: 1e-5,
            blade_tilt_rad: 0.2,
            switch_on_s: 0.01,
            ..desk_fan(3)
        };
        let sensor = sensor_at(2.0, 0.4);
        let mut whole = Fan::new(params, lambda).unwrap();
        let mut split = Fan::new(params, lambda).unwrap();
        // The hum stays in the echoes here (its own split is tested below).
        split.set_vibration_per_sample(false);
        assert_eq!(split.vibration(), None);
        for i in 0..3000 {
            let t = i as f64 * 1.7e-5;
            let mut full = Vec::new();
            whole.echoes(t, sensor, &mut full);
            let (echoes, flashes) = split_at(&mut split, t, sensor);
            assert_eq!((echoes.len(), flashes.len()), (full.len(), full.len()));
            for ((e, f), exact) in echoes.iter().zip(&flashes).zip(&full) {
                assert_eq!(e.position_m, exact.position_m);
                assert_eq!(e.velocity_mps, exact.velocity_mps);
                assert_eq!(e.amplitude_m * sinc(f.argument_rad), exact.amplitude_m);
            }
            assert_eq!(
                *flashes.last().unwrap(),
                Flash::NONE,
                "the hub has no flash"
            );
        }
    }

    #[test]
    fn the_hum_left_to_the_renderer_is_the_displacement_the_echoes_lose() {
        // With the hum rendered per sample, every echo of the split misses
        // exactly A(t)·sin(ωt)·axis and its derivative, A = f(t)·a from the
        // switching profile; `echoes` keeps it. Spinning up, so A changes too.
        let lambda = C / 24.125e9;
        let params = FanParams {
            imbalance_whirl_m: 1e-4,
            mains_vibration_m: 1e-5,
            switch_on_s: 0.0,
            spin_up_s: 0.5,
            ..desk_fan(3)
        };
        let sensor = sensor_at(2.0, 0.4);
        let mut whole = Fan::new(params, lambda).unwrap();
        let mut split = Fan::new(params, lambda).unwrap();
        let vibration = split.vibration().expect("a small hum goes per sample");
        assert_eq!(vibration.direction, split.params().axis);
        assert_eq!(vibration.angular_rate_rad_s, 2.0 * PI * 100.0);
        for i in 0..2000 {
            let t = i as f64 * 3.1e-4;
            let mut full = Vec::new();
            whole.echoes(t, sensor, &mut full);
            let (echoes, _) = split_at(&mut split, t, sensor);
            let (_, fraction, fraction_rate) = split.running(t);
            let omega = vibration.angular_rate_rad_s;
            let amplitude = split.vibration_amplitude_m(t);
            assert_eq!(amplitude, fraction * 1e-5);
            let (sin, cos) = (omega * t).sin_cos();
            let shift = amplitude * sin;
            let speed = amplitude * omega * cos + fraction_rate * 1e-5 * sin;
            for (e, exact) in echoes.iter().zip(&full) {
                for k in 0..3 {
                    let axis = vibration.direction[k];
                    let position = e.position_m[k] + shift * axis;
                    assert!((position - exact.position_m[k]).abs() < 1e-13, "t {t}");
                    let velocity = e.velocity_mps[k] + speed * axis;
                    assert!((velocity - exact.velocity_mps[k]).abs() < 1e-12, "t {t}");
                }
            }
        }
        // Past MAX_VIBRATION_PHASE_RAD the hum stays in the echoes and nodes.
        let loud = FanParams {
            mains_vibration_m: 1.1 * MAX_VIBRATION_PHASE_RAD * lambda / (4.0 * PI),
            ..params
        };
        let loud = Fan::new(loud, lambda).unwrap();
        assert_eq!(loud.vibration(), None);
        assert_eq!(loud.flash_node_rate_hz(lambda), {
            let mut kept = Fan::new(loud.params, lambda).unwrap();
            kept.set_vibration_per_sample(false);
            kept.flash_node_rate_hz(lambda)
        });
        // Rendered per sample, the hum no longer sets eight nodes per cycle (800 Hz).
        let mut kept = Fan::new(params, lambda).unwrap();
        kept.set_vibration_per_sample(false);
        assert!(kept.flash_node_rate_hz(lambda) >= 800.0);
        assert!(split.flash_node_rate_hz(lambda) < 400.0);
    }

    #[test]
    fn the_flash_argument_rate_is_its_derivative() {
        // Central differences of x against the analytic ẋ, spinning up (ω varying),
        // tilted blades, a whirling and humming hub, a near sensor.
        let lambda = C / 24.125e9;
        let params = FanParams {
            imbalance_whirl_m: 1e-4,
            mains_vibration_m: 1e-5,
            blade_tilt_rad: -0.3,
            switch_on_s: 0.0,
            spin_up_s: 0.5,
            ..desk_fan(3)
        };
        let sensor = sensor_at(0.6, 0.2);
        let mut fan = Fan::new(params, lambda).unwrap();
        let dt = 1e-7;
        for t in [0.1, 0.2371, 0.41, 0.9] {
            let before = split_at(&mut fan, t - dt, sensor).1;
            let now = split_at(&mut fan, t, sensor).1;
            let after = split_at(&mut fan, t + dt, sensor).1;
            for k in 0..3 {
                let numeric = (after[k].argument_rad - before[k].argument_rad) / (2.0 * dt);
                let rate = now[k].argument_rate_rad_s;
                assert!(
                    (numeric - rate).abs() <= 1e-5 * rate.abs().max(1.0),
                    "t {t} blade {k}: {numeric} vs {rate}"
                );
            }
        }
    }

    #[test]
    fn flash_nodes_follow_the_flashes_far_fewer_than_the_amplitude_nodes() {
        // Rendering nodes at `flash_node_rate_hz`: cubic Hermite x between
        // nodes stays within the phase tolerance in radians of x (the criterion
        // the rate is set by), so sinc(x) per sample is within 0.44·0.01 of
        // the exact factor (|sinc'| ≤ 0.44), where linear interpolation of the
        // amplitude needed ten nodes per flash.
        // Without a humming housing the rate is the Hermite one alone (no
        // eight-per-mains-cycle floor), the hardest case for x.
        for (f0, vibration_m) in [(2.45e9, 1e-5), (24.125e9, 1e-5), (24.125e9, 0.0)] {
            let lambda = C / f0;
            let params = FanParams {
                mains_vibration_m: vibration_m,
                imbalance_whirl_m: vibration_m,
                ..desk_fan(3)
            };
            // A fan keeps no state between calls, so its times may be visited in any order.
            let mut fan = Fan::new(params, lambda).unwrap();
            let rate = fan.flash_node_rate_hz(lambda);
            assert!(rate < fan.node_rate_hz(lambda), "{f0}: {rate}");
            let sensor = sensor_at(3.0, 0.3);
            let h = 1.0 / rate;
            let mut worst: f64 = 0.0;
            for node in 0..200 {
                let t0 = node as f64 * h;
                let a = split_at(&mut fan, t0, sensor).1;
                let b = split_at(&mut fan, t0 + h, sensor).1;
                for j in 1..8 {
                    let u = j as f64 / 8.0;
                    let exact = split_at(&mut fan, t0 + u * h, sensor).1;
                    for k in 0..3 {
                        let (x0, x1) = (a[k].argument_rad, b[k].argument_rad);
                        let (m0, m1) = (h * a[k].argument_rate_rad_s, h * b[k].argument_rate_rad_s);
                        let x = x0
                            + u * (m0
                                + u * ((3.0 * (x1 - x0) - 2.0 * m0 - m1)
                                    + u * (m0 + m1 - 2.0 * (x1 - x0))));
                        worst = worst.max((x - exact[k].argument_rad).abs());
                    }
                }
            }
            assert!(
                worst <= NODE_PHASE_TOLERANCE_RAD,
                "{f0}: {rate} Hz, {worst}"
            );
        }
    }

    #[test]
    fn bad_parameters_are_named() {
        let lambda = C / 5.8e9;
        let bad = |p: FanParams| Fan::new(p, lambda).unwrap_err().param;
        assert_eq!(
            bad(FanParams {
                blade_count: 0,
                ..desk_fan(3)
            }),
            "blade_count"
        );
        assert_eq!(
            bad(FanParams {
                tip_radius_m: 0.02,
                ..desk_fan(3)
            }),
            "tip_radius_m"
        );
        assert_eq!(
            bad(FanParams {
                axis: [0.0; 3],
                ..desk_fan(3)
            }),
            "axis"
        );
        assert_eq!(
            bad(FanParams {
                revolutions_per_s: f64::INFINITY,
                ..desk_fan(3)
            }),
            "revolutions_per_s"
        );
        assert_eq!(
            Fan::new(desk_fan(3), 0.0).unwrap_err().param,
            "wavelength_m"
        );
    }

    #[test]
    fn switching_spins_up_and_coasts_down_without_jumps() {
        // Switched on at 1 s (3 s spin-up), off at 6 s (5 s coast-down).
        let params = FanParams {
            switch_on_s: 1.0,
            switch_off_s: 6.0,
            spin_up_s: 3.0,
            spin_down_s: 5.0,
            mains_vibration_m: 2e-5,
            imbalance_whirl_m: 1e-4,
            ..desk_fan(3)
        };
        let fan = Fan::new(params, C / 5.8e9).unwrap();
        // Running time: 0 before, half the ramp lost over the spin-up
        // (∫R = T/2), half the coast-down gained after switching off.
        assert_eq!(fan.running(0.5), (0.0, 0.0, 0.0));
        let (g, f, _) = fan.running(5.0);
        assert!((g - (5.0 - 1.0 - 1.5)).abs() < 1e-12 && f == 1.0);
        let (g_end, f_end, _) = fan.running(20.0);
        assert!((g_end - (6.0 - 1.0 - 1.5 + 2.5)).abs() < 1e-12 && f_end == 0.0);
        // The speed fraction is the derivative of the running time, and
        // both are continuous (no jump in angle or speed).
        let h = 1e-6;
        for i in 0..2200 {
            let t = 0.5 + i as f64 * 0.005;
            let (a, fa, _) = fan.running(t - h);
            let (b, fb, _) = fan.running(t + h);
            let (_, f, rate) = fan.running(t);
            assert!(((b - a) / (2.0 * h) - f).abs() < 1e-6, "{t}");
            assert!(((fb - fa) / (2.0 * h) - rate).abs() < 1e-4, "{t}");
        }
        // The echo velocities stay within the declared bound through the switching.
        let mut model = fan.clone();
        let bound = model.max_speed_mps();
        let mut out = Vec::new();
        for i in 0..12_000 {
            out.clear();
            model.echoes(i as f64 * 1e-3, [3.0, 0.0, 1.0], &mut out);
            for e in &out {
                assert!(crate::norm(e.velocity_mps) <= bound);
            }
        }
        // Always on: the rotor angle is Ω·t exactly, as before switching existed.
        let steady = Fan::new(desk_fan(3), C / 5.8e9).unwrap();
        assert_eq!(steady.running(2.5), (2.5, 1.0, 0.0));
        let mut model = fan;
        assert_eq!(model.motion_speed_mps(0.5), 0.0);
        assert!((model.motion_speed_mps(5.0) - model.tip_speed_mps()).abs() < 1e-12);
        assert_eq!(model.active_intervals(30.0), vec![(1.0, 11.0)]);
        let bad = FanParams {
            switch_on_s: 2.0,
            switch_off_s: 3.0,
            ..params
        };
        assert_eq!(Fan::new(bad, 0.05).unwrap_err().param, "switch_off_s");
    }
}
