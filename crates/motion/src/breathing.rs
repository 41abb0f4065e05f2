//! A person sitting still and breathing: chest-wall motion, optional
//! heartbeat, optional fidgets.
//!
//! Two echoes: the chest (the front of the torso, at chest height) and one
//! arm/hand, which rests until a fidget moves it.
//!
//! * **Breathing** moves the chest along the facing axis with a non-sinusoidal
//!   periodic waveform: a half-cosine rise over the inhale fraction of the
//!   cycle and a half-cosine fall over the rest. The inhale fraction ≈ 0.4 is
//!   from memory (docs/reference/people.md#p6); with fraction 0.5 the waveform is an
//!   exact sinusoid. Resting rate 12–20 breaths/min (clinical norm, common
//!   practice); chest-wall displacement 4–12 mm peak-to-peak (from memory,
//!   after Droitcour et al., IEEE T-MTT 52(3), 2004).
//! * **Heartbeat** adds a sinusoidal chest displacement, 0.2–0.5 mm at
//!   1.0–1.7 Hz (from memory, docs/reference/people.md#p6).
//! * **Fidgets** (no source): smooth out-and-back displacements of the torso or
//!   of the arm/hand (equally likely), 1–5 cm over 0.5–2 s, along a random
//!   direction, with a sin² profile. A person does one such movement at a
//!   time: the idle gaps between fidgets are exponential with the given rate,
//!   so the mean event rate is 1/(1/rate + mean duration).
//!
//! * **Standing up** (optional, `stand_up_at_s`): the chest rises to the
//!   standing chest height and moves forward over `stand_up_s` along a
//!   minimum-jerk profile x(u) = D·(10u³ − 15u⁴ + 6u⁵), the smoothest
//!   point-to-point human movement (Flash & Hogan, J. Neurosci. 5(7), 1985);
//!   peak speed 1.875·D/T. A sit-to-stand takes about 1.5–2.5 s in healthy
//!   adults and moves the trunk forward a few tens of centimetres (from
//!   memory); the defaults are 2 s, a standing chest height of 1.3 m and
//!   0.25 m forward. The hand moves with the chest. Once up, the person keeps
//!   breathing and also sways as a standing person does
//!   ([`StandingMotion`], blended in with the same profile). A person who then
//!   walks away is a second actor, a walker whose path starts with a pause
//!   at that place (see the scene documentation).
//!
//! A seated person is given no postural sway: sitting sways less than
//! standing (García-Massó et al., Percept. Mot. Skills 121, 2015), and
//! breathing and heartbeat are its residual motion here.
//!
//! The random draws (initial breathing and heartbeat phases, then the fidget
//! sequence in order) come from a ChaCha8 generator seeded by the caller; the
//! fidget sequence is drawn event by event in time order, so the motion does
//! not depend on the times at which the model is asked.

use crate::reflector::{
    add, hermite_node_rate_hz, knot_node_rate_hz, scale, Check, ParamError, MIN_NODE_RATE_HZ,
    NODES_PER_CYCLE,
};
use crate::standing::{StandingMotion, COM_HEIGHT_FRACTION};
use crate::{Echo, MotionModel, Vec3};
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use rand_distr::{Distribution, Exp, StandardNormal};
use std::f64::consts::PI;

/// Parameters of a sitting, breathing person.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct BreathingParams {
    /// Floor position (x, y) of the chest surface at mid-breath, m.
    pub position_m: [f64; 2],
    /// Height of the chest echo above the floor, m.
    pub chest_height_m: f64,
    /// Facing direction on the floor, rad from +x towards +y; the chest moves along it.
    pub facing_rad: f64,
    /// Breathing rate, breaths per minute.
    pub rate_per_min: f64,
    /// Chest-wall displacement, peak-to-peak, m.
    pub peak_to_peak_m: f64,
    /// Fraction of the breathing cycle spent inhaling, in (0, 1) (≈ 0.4, from memory).
    pub inhale_fraction: f64,
    /// RCS of the chest, m².
    pub chest_rcs_m2: f64,
    /// Heart rate, Hz (used when `heart_amplitude_m` > 0).
    pub heart_rate_hz: f64,
    /// Chest displacement by the heartbeat, half peak-to-peak, m (0: none).
    pub heart_amplitude_m: f64,
    /// Mean rate of fidgets in the idle time, per minute (0: none).
    pub fidget_rate_per_min: f64,
    /// Smallest fidget displacement, m.
    pub fidget_min_displacement_m: f64,
    /// Largest fidget displacement, m.
    pub fidget_max_displacement_m: f64,
    /// Shortest fidget, s.
    pub fidget_min_duration_s: f64,
    /// Longest fidget, s.
    pub fidget_max_duration_s: f64,
    /// RCS of the arm/hand echo, m² (0.005–0.05 m², from memory / no source).
    pub arm_rcs_m2: f64,
    /// Rest position of the hand relative to the chest echo, in the person's
    /// frame (forward, left, up), m.
    pub arm_rest_offset_m: Vec3,
    /// When the person is there from, s (`f64::NEG_INFINITY`: already there at the start).
    pub present_from_s: f64,
    /// Until when, s (`f64::INFINITY`: for the whole trial).
    pub present_until_s: f64,
    /// When the person starts to stand up, s (`f64::INFINITY`: stays seated).
    pub stand_up_at_s: f64,
    /// How long standing up takes, s.
    pub stand_up_s: f64,
    /// Chest height once standing, m.
    pub standing_chest_height_m: f64,
    /// How far the chest moves forward while standing up, m.
    pub stand_up_forward_m: f64,
}

/// Default sit-to-stand duration, s (from memory: 1.5–2.5 s in healthy adults).
pub const DEFAULT_STAND_UP_S: f64 = 2.0;

/// Default standing chest height, m (about 0.74 of a 1.75 m body, from memory).
pub const DEFAULT_STANDING_CHEST_HEIGHT_M: f64 = 1.3;

/// Default forward travel of the chest while standing up, m (from memory).
pub const DEFAULT_STAND_UP_FORWARD_M: f64 = 0.25;

/// Minimum-jerk profile (Flash & Hogan 1985) x(u), x'(u) for u in [0, 1], clamped outside.
fn minimum_jerk(u: f64) -> (f64, f64) {
    if u <= 0.0 {
        return (0.0, 0.0);
    }
    if u >= 1.0 {
        return (1.0, 0.0);
    }
    let u2 = u * u;
    let v = 1.0 - u;
    (u2 * u * (10.0 - 15.0 * u + 6.0 * u2), 30.0 * u2 * v * v)
}

impl BreathingParams {
    /// A seated adult breathing quietly at 15 breaths/min (middle of the
    /// 12–20 /min norm), 8 mm peak-to-peak (middle of 4–12 mm, from memory),
    /// inhale fraction 0.4 (from memory), heartbeat 0.3 mm at 1.2 Hz (inside
    /// the 0.2–0.5 mm, 1.0–1.7 Hz ranges, from memory), no fidgets (set
    /// `fidget_rate_per_min` to enable them; the 1–5 cm, 0.5–2 s ranges have no
    /// source). Chest RCS 0.211 m²: the broadside ellipsoid torso of a 1.8 m
    /// person (docs/reference/check-values.md#pc10, Chen 2011). Hand resting 0.3 m in front of
    /// and 0.3 m below the chest, σ = 0.02 m² (no source). Present throughout.
    pub fn seated_adult(position_m: [f64; 2], chest_height_m: f64, facing_rad: f64) -> Self {
        BreathingParams {
            position_m,
            chest_height_m,
            facing_rad,
            rate_per_min: 15.0,
            peak_to_peak_m: 0.008,
            inhale_fraction: 0.4,
            chest_rcs_m2: crate::rcs::ellipsoid_rcs_m2(
                0.15,
                0.15,
                0.288 * 1.8 / 2.0,
                PI / 2.0,
                0.0,
            ),
            heart_rate_hz: 1.2,
            heart_amplitude_m: 0.0003,
            fidget_rate_per_min: 0.0,
            fidget_min_displacement_m: 0.01,
            fidget_max_displacement_m: 0.05,
            fidget_min_duration_s: 0.5,
            fidget_max_duration_s: 2.0,
            arm_rcs_m2: 0.02,
            arm_rest_offset_m: [0.3, 0.0, -0.3],
            present_from_s: f64::NEG_INFINITY,
            present_until_s: f64::INFINITY,
            stand_up_at_s: f64::INFINITY,
            stand_up_s: DEFAULT_STAND_UP_S,
            standing_chest_height_m: DEFAULT_STANDING_CHEST_HEIGHT_M,
            stand_up_forward_m: DEFAULT_STAND_UP_FORWARD_M,
        }
    }
}

/// Which echo a fidget moves.
#[derive(Debug, Clone, Copy, PartialEq)]
enum FidgetPart {
    Torso,
    Arm,
}

/// One fidget: a sin² out-and-back displacement.
#[derive(Debug, Clone, Copy, PartialEq)]
struct Fidget {
    onset_s: f64,
    duration_s: f64,
    displacement_m: f64,
    direction: Vec3,
    part: FidgetPart,
}

impl Fidget {
    /// Displacement and velocity at `t_s` (zero outside the event).
    fn at(&self, t_s: f64) -> (Vec3, Vec3) {
        let u = (t_s - self.onset_s) / self.duration_s;
        if !(0.0..1.0).contains(&u) {
            return ([0.0; 3], [0.0; 3]);
        }
        let size = self.displacement_m * (PI * u).sin().powi(2);
        let speed = self.displacement_m * PI / self.duration_s * (2.0 * PI * u).sin();
        (scale(self.direction, size), scale(self.direction, speed))
    }
}

/// A sitting, breathing person.
#[derive(Debug, Clone)]
pub struct Breathing {
    params: BreathingParams,
    facing: Vec3,
    breath_phase0: f64,
    heart_phase0: f64,
    rng: ChaCha8Rng,
    idle_gap: Option<Exp<f64>>,
    /// The current or next fidget (events are drawn in time order).
    upcoming: Option<Fidget>,
    /// Sway and breathing once standing (breathing is the model's own; only the sway is used).
    standing: StandingMotion,
}

impl Breathing {
    /// Checks the parameters and builds the model with its random draws seeded by `seed`.
    ///
    /// # Errors
    /// A [`ParamError`] naming the first bad field (non-finite or out of range
    /// numbers, an empty presence window, a minimum above its maximum).
    ///
    /// # Example
    /// ```
    /// use echobench_motion::breathing::{Breathing, BreathingParams};
    /// use echobench_motion::MotionModel;
    ///
    /// let params = BreathingParams {
    ///     fidget_rate_per_min: 2.0,
    ///     ..BreathingParams::seated_adult([1.0, 2.0], 1.1, 0.0)
    /// };
    /// let mut person = Breathing::new(params, [7; 32])?;
    /// let mut echoes = Vec::new();
    /// person.echoes(1.0, [0.0, 0.0, 2.0], &mut echoes);
    /// assert_eq!(echoes.len(), person.echo_count()); // chest and hand
    /// assert_eq!(person.active_intervals(60.0), vec![(0.0, 60.0)]);
    /// # Ok::<(), echobench_motion::reflector::ParamError>(())
    /// ```
    pub fn new(params: BreathingParams, seed: [u8; 32]) -> Result<Breathing, ParamError> {
        let check = Check { model: "breathing" };
        for (i, c) in params.position_m.iter().enumerate() {
            check.finite(
                if i == 0 {
                    "position_m[0]"
                } else {
                    "position_m[1]"
                },
                *c,
            )?;
        }
        check.finite("chest_height_m", params.chest_height_m)?;
        check.finite("facing_rad", params.facing_rad)?;
        check.positive("rate_per_min", params.rate_per_min)?;
        check.non_negative("peak_to_peak_m", params.peak_to_peak_m)?;
        check.strictly_within("inhale_fraction", params.inhale_fraction, 0.0, 1.0)?;
        check.non_negative("chest_rcs_m2", params.chest_rcs_m2)?;
        check.non_negative("heart_amplitude_m", params.heart_amplitude_m)?;
        if params.heart_amplitude_m > 0.0 {
            check.positive("heart_rate_hz", params.heart_rate_hz)?;
        }
        check.non_negative("fidget_rate_per_min", params.fidget_rate_per_min)?;
        check.non_negative("arm_rcs_m2", params.arm_rcs_m2)?;
        check.finite_vec("arm_rest_offset_m", params.arm_rest_offset_m)?;
        if params.fidget_rate_per_min > 0.0 {
            check.non_negative(
                "fidget_min_displacement_m",
                params.fidget_min_displacement_m,
            )?;
            let max_d = check.finite(
                "fidget_max_displacement_m",
                params.fidget_max_displacement_m,
            )?;
            if max_d < params.fidget_min_displacement_m {
                return Err(check.error(
                    "fidget_max_displacement_m",
                    max_d,
                    "a displacement >= fidget_min_displacement_m",
                ));
            }
            check.positive("fidget_min_duration_s", params.fidget_min_duration_s)?;
            let max_t = check.finite("fidget_max_duration_s", params.fidget_max_duration_s)?;
            if max_t < params.fidget_min_duration_s {
                return Err(check.error(
                    "fidget_max_duration_s",
                    max_t,
                    "a duration >= fidget_min_duration_s",
                ));
            }
        }
        if params.present_from_s.is_nan() || params.present_from_s == f64::INFINITY {
            return Err(check.error(
                "present_from_s",
                params.present_from_s,
                "a time (or negative infinity)",
            ));
        }
        if params.present_until_s.is_nan() || params.present_until_s <= params.present_from_s {
            return Err(check.error(
                "present_until_s",
                params.present_until_s,
                "a time > present_from_s (or infinity)",
            ));
        }
        if params.stand_up_at_s.is_nan() {
            return Err(check.error(
                "stand_up_at_s",
                params.stand_up_at_s,
                "a time (or infinity: stays seated)",
            ));
        }
        check.positive("stand_up_s", params.stand_up_s)?;
        check.finite("standing_chest_height_m", params.standing_chest_height_m)?;
        check.finite("stand_up_forward_m", params.stand_up_forward_m)?;
        let mut rng = ChaCha8Rng::from_seed(seed);
        let breath_phase0 = rng.random::<f64>();
        let heart_phase0 = rng.random::<f64>();
        // Drawn only for a person who stands up, so that the fidgets of a
        // person who stays seated keep their draws.
        let standing = if params.stand_up_at_s.is_finite() {
            StandingMotion::quiet_adult(rng.random())
        } else {
            StandingMotion::none()
        };
        let idle_gap = if params.fidget_rate_per_min > 0.0 {
            Exp::new(params.fidget_rate_per_min / 60.0).ok()
        } else {
            None
        };
        let (s, c) = params.facing_rad.sin_cos();
        let mut model = Breathing {
            params,
            facing: [c, s, 0.0],
            breath_phase0,
            heart_phase0,
            rng,
            idle_gap,
            upcoming: None,
            standing,
        };
        // Fidgets start once the person is there (from t = 0 if already there).
        let origin_s = if params.present_from_s.is_finite() {
            params.present_from_s
        } else {
            0.0
        };
        model.upcoming = model.draw_fidget(origin_s);
        Ok(model)
    }

    /// The next fidget after an idle gap starting at `idle_from_s`.
    fn draw_fidget(&mut self, idle_from_s: f64) -> Option<Fidget> {
        let gap = self.idle_gap?;
        let p = self.params;
        let onset_s = idle_from_s + gap.sample(&mut self.rng);
        let duration_s = p.fidget_min_duration_s
            + (p.fidget_max_duration_s - p.fidget_min_duration_s) * self.rng.random::<f64>();
        let displacement_m = p.fidget_min_displacement_m
            + (p.fidget_max_displacement_m - p.fidget_min_displacement_m)
                * self.rng.random::<f64>();
        // Uniform direction on the sphere: a normalised Gaussian vector.
        let mut direction = [0.0; 3];
        loop {
            for c in direction.iter_mut() {
                *c = self.rng.sample(StandardNormal);
            }
            let length = crate::norm(direction);
            if length > 1e-9 {
                direction = scale(direction, 1.0 / length);
                break;
            }
        }
        let part = if self.rng.random::<bool>() {
            FidgetPart::Torso
        } else {
            FidgetPart::Arm
        };
        Some(Fidget {
            onset_s,
            duration_s,
            displacement_m,
            direction,
            part,
        })
    }

    /// The fidget in progress at `t_s`, if any (advances the event sequence).
    fn fidget_at(&mut self, t_s: f64) -> Option<Fidget> {
        while let Some(f) = self.upcoming {
            if f.onset_s + f.duration_s <= t_s {
                self.upcoming = self.draw_fidget(f.onset_s + f.duration_s);
            } else {
                return (f.onset_s <= t_s).then_some(f);
            }
        }
        None
    }

    /// Breathing displacement along the facing axis (m, centred on zero) and its rate (m/s).
    pub fn breath_displacement(&self, t_s: f64) -> (f64, f64) {
        let p = &self.params;
        let period_s = 60.0 / p.rate_per_min;
        let half = 0.5 * p.peak_to_peak_m;
        let fi = p.inhale_fraction;
        let phase = (self.breath_phase0 + t_s / period_s).rem_euclid(1.0);
        if phase < fi {
            let arg = PI * phase / fi;
            (-half * arg.cos(), half * PI / (fi * period_s) * arg.sin())
        } else {
            let arg = PI * (phase - fi) / (1.0 - fi);
            (
                half * arg.cos(),
                -half * PI / ((1.0 - fi) * period_s) * arg.sin(),
            )
        }
    }

    /// Heartbeat displacement along the facing axis (m) and its rate (m/s).
    pub fn heart_displacement(&self, t_s: f64) -> (f64, f64) {
        let p = &self.params;
        if p.heart_amplitude_m <= 0.0 {
            return (0.0, 0.0);
        }
        let omega = 2.0 * PI * p.heart_rate_hz;
        let arg = 2.0 * PI * self.heart_phase0 + omega * t_s;
        (
            p.heart_amplitude_m * arg.sin(),
            p.heart_amplitude_m * omega * arg.cos(),
        )
    }

    /// Displacement of the chest by standing up and by the standing sway (m)
    /// and its velocity (m/s), at `t_s`.
    pub fn stand_up_shift(&self, t_s: f64) -> (Vec3, Vec3) {
        let p = &self.params;
        if !p.stand_up_at_s.is_finite() || t_s <= p.stand_up_at_s {
            return ([0.0; 3], [0.0; 3]);
        }
        let (x, rate) = minimum_jerk((t_s - p.stand_up_at_s) / p.stand_up_s);
        let rate = rate / p.stand_up_s;
        let rise = p.standing_chest_height_m - p.chest_height_m;
        let forward = p.stand_up_forward_m;
        // Sway of the chest, an inverted pendulum about the ankles, faded in
        // with the rise: the chest (about 0.74 of the body height, as the
        // default standing chest height) sways 0.74/0.55 times the centre of mass.
        let lever = 0.74 / COM_HEIGHT_FRACTION;
        let ([sf, ss], [vf, vs]) = self.standing.sway(t_s);
        let (f, l) = (self.facing, [-self.facing[1], self.facing[0], 0.0]);
        let along = forward * x + lever * x * sf;
        let along_rate = forward * rate + lever * (x * vf + rate * sf);
        let side = lever * x * ss;
        let side_rate = lever * (x * vs + rate * ss);
        (
            add(add(scale(f, along), scale(l, side)), [0.0, 0.0, rise * x]),
            add(
                add(scale(f, along_rate), scale(l, side_rate)),
                [0.0, 0.0, rise * rate],
            ),
        )
    }

    /// Presence weight: 1 inside the window, raised-cosine ramps of
    /// [`PRESENCE_RAMP_S`](crate::path::PRESENCE_RAMP_S) at finite edges.
    pub fn presence(&self, t_s: f64) -> f64 {
        let (from, until) = (self.params.present_from_s, self.params.present_until_s);
        if t_s < from || t_s > until {
            return 0.0;
        }
        let ramp = crate::path::PRESENCE_RAMP_S.min(0.5 * (until - from));
        let edge = ((t_s - from).min(until - t_s) / ramp).min(1.0);
        0.5 - 0.5 * (PI * edge).cos()
    }

    /// Heartbeat amplitude (m) and angular rate (rad/s), both 0 when disabled
    /// (the rate is then not checked and may be anything).
    fn heart_terms(&self) -> (f64, f64) {
        let p = &self.params;
        if p.heart_amplitude_m > 0.0 {
            (p.heart_amplitude_m, 2.0 * PI * p.heart_rate_hz)
        } else {
            (0.0, 0.0)
        }
    }

    fn fidget_speed_bound_mps(&self) -> f64 {
        let p = &self.params;
        if p.fidget_rate_per_min > 0.0 {
            // d/dt of D·sin²(πu) peaks at D·π/T.
            p.fidget_max_displacement_m * PI / p.fidget_min_duration_s
        } else {
            0.0
        }
    }
}

impl MotionModel for Breathing {
    fn echoes(&mut self, t_s: f64, _sensor_m: Vec3, out: &mut Vec<Echo>) {
        let presence = self.presence(t_s);
        let p = self.params;
        let (breath, breath_rate) = self.breath_displacement(t_s);
        let (heart, heart_rate) = self.heart_displacement(t_s);
        let fidget = if presence > 0.0 {
            self.fidget_at(t_s)
        } else {
            None
        };
        let (shift, shift_rate) = fidget.map_or(([0.0; 3], [0.0; 3]), |f| f.at(t_s));
        let part = fidget.map(|f| f.part);
        let torso_shift = if part == Some(FidgetPart::Torso) {
            (shift, shift_rate)
        } else {
            ([0.0; 3], [0.0; 3])
        };
        let arm_shift = if part == Some(FidgetPart::Arm) {
            (shift, shift_rate)
        } else {
            ([0.0; 3], [0.0; 3])
        };
        let (rise, rise_rate) = self.stand_up_shift(t_s);
        let base = [p.position_m[0], p.position_m[1], p.chest_height_m];
        let chest = add(
            add(add(base, scale(self.facing, breath + heart)), torso_shift.0),
            rise,
        );
        let chest_velocity = add(
            add(scale(self.facing, breath_rate + heart_rate), torso_shift.1),
            rise_rate,
        );
        out.push(Echo {
            position_m: chest,
            velocity_mps: chest_velocity,
            amplitude_m: presence * p.chest_rcs_m2.sqrt(),
        });
        // The hand rests in the person's frame (forward, left, up).
        let [forward, left, up] = p.arm_rest_offset_m;
        let rest = [
            base[0] + forward * self.facing[0] - left * self.facing[1],
            base[1] + forward * self.facing[1] + left * self.facing[0],
            base[2] + up,
        ];
        out.push(Echo {
            position_m: add(add(rest, arm_shift.0), rise),
            velocity_mps: add(arm_shift.1, rise_rate),
            amplitude_m: presence * p.arm_rcs_m2.sqrt(),
        });
    }

    fn echo_count(&self) -> usize {
        2
    }

    fn node_rate_hz(&self, wavelength_m: f64) -> f64 {
        let p = &self.params;
        let period_s = 60.0 / p.rate_per_min;
        let shortest_half_s = p.inhale_fraction.min(1.0 - p.inhale_fraction) * period_s;
        let (heart_m, heart_rad_s) = self.heart_terms();
        // Fourth-derivative bounds: half-cosine of half amplitude D/2 over a
        // half-period τ: (D/2)(π/τ)⁴; sinusoid aω⁴; sin² bump D/2·(2π/T)⁴.
        let mut fourth =
            0.5 * p.peak_to_peak_m * (PI / shortest_half_s).powi(4) + heart_m * heart_rad_s.powi(4);
        // The waveforms are C¹: the acceleration jumps where inhale meets
        // exhale, by (D/2)π²·|1/τ_in² − 1/τ_ex²|, and where a fidget starts or
        // ends, by 2π²D/T².
        let (inhale_s, exhale_s) = (
            p.inhale_fraction * period_s,
            (1.0 - p.inhale_fraction) * period_s,
        );
        let mut jump =
            0.5 * p.peak_to_peak_m * PI * PI * (inhale_s.powi(-2) - exhale_s.powi(-2)).abs();
        let mut rate = MIN_NODE_RATE_HZ.max(NODES_PER_CYCLE / (2.0 * shortest_half_s));
        if p.heart_amplitude_m > 0.0 {
            rate = rate.max(NODES_PER_CYCLE * p.heart_rate_hz);
        }
        if p.fidget_rate_per_min > 0.0 {
            fourth +=
                0.5 * p.fidget_max_displacement_m * (2.0 * PI / p.fidget_min_duration_s).powi(4);
            jump += 2.0 * PI * PI * p.fidget_max_displacement_m / p.fidget_min_duration_s.powi(2);
            rate = rate.max(NODES_PER_CYCLE / p.fidget_min_duration_s);
        }
        if p.stand_up_at_s.is_finite() {
            // Minimum jerk: |x''''| ≤ 360·D/T⁴, no acceleration jump at the ends;
            // the sway adds its fourth derivative (aω⁴ per tone, below 1 Hz).
            let travel = (p.standing_chest_height_m - p.chest_height_m).hypot(p.stand_up_forward_m);
            fourth += 360.0 * travel / p.stand_up_s.powi(4)
                + self.standing.max_speed_mps(2.0) * (2.0 * PI).powi(3);
            rate = rate.max(NODES_PER_CYCLE / p.stand_up_s);
        }
        rate.max(hermite_node_rate_hz(fourth, wavelength_m))
            .max(knot_node_rate_hz(jump, wavelength_m))
    }

    fn max_speed_mps(&self) -> f64 {
        let p = &self.params;
        let period_s = 60.0 / p.rate_per_min;
        let shortest_half_s = p.inhale_fraction.min(1.0 - p.inhale_fraction) * period_s;
        let breath = 0.5 * p.peak_to_peak_m * PI / shortest_half_s;
        let (heart_m, heart_rad_s) = self.heart_terms();
        let heart = heart_m * heart_rad_s;
        let stand_up = if p.stand_up_at_s.is_finite() {
            let travel = (p.standing_chest_height_m - p.chest_height_m).hypot(p.stand_up_forward_m);
            // Peak minimum-jerk speed 1.875·D/T, and the faded-in sway.
            1.875 * travel / p.stand_up_s
                + self.standing.max_speed_mps(2.0)
                + 1.875 / p.stand_up_s * self.standing.max_displacement_m(2.0)
        } else {
            0.0
        };
        breath + heart + self.fidget_speed_bound_mps() + stand_up
    }

    /// Speed of the chest echo (breathing, heartbeat, a torso fidget, standing up).
    fn motion_speed_mps(&mut self, t_s: f64) -> f64 {
        let p = &self.params;
        if !(t_s >= p.present_from_s && t_s <= p.present_until_s) {
            return 0.0;
        }
        let (_, breath_rate) = self.breath_displacement(t_s);
        let (_, heart_rate) = self.heart_displacement(t_s);
        let fidget = self.fidget_at(t_s);
        let torso_rate = match fidget {
            Some(f) if f.part == FidgetPart::Torso => f.at(t_s).1,
            _ => [0.0; 3],
        };
        let (_, rise_rate) = self.stand_up_shift(t_s);
        crate::norm(add(
            add(scale(self.facing, breath_rate + heart_rate), torso_rate),
            rise_rate,
        ))
    }

    fn body_presence_intervals(&self, duration_s: f64) -> Vec<(f64, f64)> {
        self.active_intervals(duration_s)
    }

    fn active_intervals(&self, duration_s: f64) -> Vec<(f64, f64)> {
        let start = self.params.present_from_s.max(0.0);
        let end = self.params.present_until_s.min(duration_s);
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
    use crate::reflector::test_support::*;
    use crate::reflector::NODE_PHASE_TOLERANCE_RAD;

    const SENSOR: Vec3 = [2.0, 0.0, 1.5];

    fn quiet() -> BreathingParams {
        BreathingParams::seated_adult([0.0, 0.0], 1.1, 0.0)
    }

    fn fidgety() -> BreathingParams {
        BreathingParams {
            fidget_rate_per_min: 6.0,
            ..quiet()
        }
    }

    #[test]
    fn inhale_takes_the_given_fraction_of_the_cycle() {
        // Inhale ≈ 40 % of the cycle (docs/reference/people.md#p6, from memory): time from
        // the displacement minimum to the maximum is 0.4 of the period.
        let model = Breathing::new(quiet(), [1; 32]).unwrap();
        let period = 4.0;
        let dt = 1e-4;
        let times: Vec<f64> = (0..(period / dt) as usize * 2)
            .map(|i| i as f64 * dt)
            .collect();
        let x: Vec<f64> = times
            .iter()
            .map(|&t| model.breath_displacement(t).0)
            .collect();
        let first_period = (period / dt) as usize;
        let i_min = (0..first_period)
            .min_by(|&a, &b| x[a].total_cmp(&x[b]))
            .unwrap();
        let i_max = (i_min..i_min + first_period)
            .max_by(|&a, &b| x[a].total_cmp(&x[b]))
            .unwrap();
        let inhale = (i_max - i_min) as f64 * dt / period;
        assert!((inhale - 0.4).abs() < 1e-3, "{inhale}");
        let peak_to_peak = x[i_max] - x[i_min];
        assert!((peak_to_peak - 0.008).abs() < 1e-9, "{peak_to_peak}");
        // Periodic at 15 breaths/min.
        let (a, _) = model.breath_displacement(1.234);
        let (b, _) = model.breath_displacement(1.234 + period);
        assert!((a - b).abs() < 1e-12);
    }

    #[test]
    fn even_split_is_the_sinusoid_of_the_reference_check() {
        // docs/reference/people.md#p6 check [C]: 5 mm p-p at 0.25 Hz (sinusoid) → peak
        // velocity 3.93 mm/s → peak |f_d| 0.632 Hz at 24.125 GHz.
        let params = BreathingParams {
            rate_per_min: 15.0,
            peak_to_peak_m: 0.005,
            inhale_fraction: 0.5,
            heart_amplitude_m: 0.0,
            ..quiet()
        };
        let model = Breathing::new(params, [2; 32]).unwrap();
        let omega = 2.0 * PI * 0.25;
        let mut peak_velocity: f64 = 0.0;
        for i in 0..4000 {
            let t = i as f64 * 1e-3;
            let (x, v) = model.breath_displacement(t);
            let phase = omega * t + 2.0 * PI * model.breath_phase0;
            assert!((x + 0.0025 * phase.cos()).abs() < 1e-12, "t {t}");
            peak_velocity = peak_velocity.max(v.abs());
        }
        assert!((peak_velocity - 3.93e-3).abs() < 0.01e-3, "{peak_velocity}");
        let lambda = 299_792_458.0 / 24.125e9;
        let doppler = 2.0 * peak_velocity / lambda;
        assert!((doppler - 0.632).abs() < 0.002, "{doppler}");
        assert!((model.max_speed_mps() - 3.93e-3).abs() < 0.01e-3);
    }

    #[test]
    fn heartbeat_adds_a_line_at_the_heart_rate() {
        // Project the chest displacement on sin/cos at the heart rate over whole
        // breathing and heart cycles: the heart amplitude comes out, the
        // breathing waveform (harmonics of 0.25 Hz) does not leak into 1.2 Hz.
        let mut model = Breathing::new(quiet(), [3; 32]).unwrap();
        let n = 200_000;
        let dt = 20.0 / n as f64; // 20 s = 5 breaths, 24 heartbeats
        let omega = 2.0 * PI * 1.2;
        let (mut s, mut c) = (0.0, 0.0);
        let mut out = Vec::new();
        for i in 0..n {
            let t = i as f64 * dt;
            out.clear();
            model.echoes(t, SENSOR, &mut out);
            let x = out[0].position_m[0];
            s += x * (omega * t).sin() * dt * 2.0 / 20.0;
            c += x * (omega * t).cos() * dt * 2.0 / 20.0;
        }
        let amplitude = (s * s + c * c).sqrt();
        assert!((amplitude - 0.0003).abs() < 1e-6, "{amplitude}");
    }

    #[test]
    fn fidgets_have_the_stated_size_duration_and_rate() {
        let mut model = Breathing::new(fidgety(), [4; 32]).unwrap();
        let mut events = Vec::new();
        let mut t = 0.0;
        while t < 6000.0 {
            if let Some(f) = model.fidget_at(t) {
                if events.last() != Some(&f) {
                    events.push(f);
                }
            }
            t += 0.01;
        }
        for f in &events {
            assert!((0.01..=0.05).contains(&f.displacement_m));
            assert!((0.5..=2.0).contains(&f.duration_s));
        }
        for pair in events.windows(2) {
            assert!(pair[1].onset_s >= pair[0].onset_s + pair[0].duration_s);
        }
        // Mean rate 1/(1/r + mean T) = 1/(10 s + 1.25 s) per second (renewal process);
        // over 6000 s ≈ 533 events, Poisson-like spread ≈ ±23: allow 4 sigma.
        let expected = 6000.0 / (10.0 + 1.25);
        let count = events.len() as f64;
        assert!(
            (count - expected).abs() < 4.0 * expected.sqrt(),
            "{count} vs {expected}"
        );
        let torso = events
            .iter()
            .filter(|f| f.part == FidgetPart::Torso)
            .count() as f64;
        assert!((torso / count - 0.5).abs() < 4.0 * 0.5 / count.sqrt());
    }

    #[test]
    fn motion_does_not_depend_on_the_call_pattern() {
        let mut coarse = Breathing::new(fidgety(), [5; 32]).unwrap();
        let mut fine = Breathing::new(fidgety(), [5; 32]).unwrap();
        let mut a = Vec::new();
        let mut b = Vec::new();
        for i in 0..3000 {
            let t = i as f64 * 0.2;
            fine.echoes(t - 0.1, SENSOR, &mut Vec::new());
            a.clear();
            b.clear();
            coarse.echoes(t, SENSOR, &mut a);
            fine.echoes(t, SENSOR, &mut b);
            assert_eq!(a, b, "t = {t}");
        }
        let mut other = Breathing::new(fidgety(), [6; 32]).unwrap();
        let mut c = Vec::new();
        other.echoes(599.8, SENSOR, &mut c);
        assert_ne!(a, c, "a different seed gives a different person");
    }

    #[test]
    fn speeds_stay_below_the_bound_and_presence_ramps() {
        let params = BreathingParams {
            present_from_s: 10.0,
            present_until_s: 300.0,
            fidget_rate_per_min: 20.0,
            ..quiet()
        };
        let mut model = Breathing::new(params, [7; 32]).unwrap();
        let times: Vec<f64> = (0..31_000).map(|i| i as f64 * 0.01).collect();
        let samples = sample(&mut model, &times, SENSOR);
        assert!(largest_speed(&samples) <= model.max_speed_mps());
        assert!(largest_speed(&samples) > 0.5 * model.max_speed_mps());
        assert_eq!(samples[500][0].amplitude_m, 0.0);
        assert!(samples[1010][0].amplitude_m > 0.0 && samples[1010][0].amplitude_m < 0.4);
        assert!((samples[2000][0].amplitude_m - params.chest_rcs_m2.sqrt()).abs() < 1e-12);
        assert_eq!(samples[30_500][1].amplitude_m, 0.0);
        assert_eq!(model.active_intervals(100.0), vec![(10.0, 100.0)]);
        assert_eq!(model.active_intervals(600.0), vec![(10.0, 300.0)]);
    }

    #[test]
    fn velocity_is_the_derivative_of_position() {
        let mut model = Breathing::new(fidgety(), [8; 32]).unwrap();
        let times: Vec<f64> = (0..1552).map(|i| 0.05 + i as f64 * 0.0773).collect();
        assert_velocity_is_the_derivative(&mut model, &times, SENSOR, 1e-5, 1e-5);
    }

    #[test]
    fn node_rate_keeps_interpolated_phase_accurate() {
        // At 24.125 GHz, where breathing spans several IF cycles (m = 2.5 rad,
        // docs/reference/check-values.md#pc15), fidgets included.
        let lambda = 299_792_458.0 / 24.125e9;
        let make = || -> Box<dyn MotionModel> {
            Box::new(
                Breathing::new(
                    BreathingParams {
                        fidget_rate_per_min: 30.0,
                        ..quiet()
                    },
                    [9; 32],
                )
                .unwrap(),
            )
        };
        let error = worst_interpolation_phase_error(&make, lambda, 0.0, 60.0, SENSOR, 0.1);
        assert!(error <= NODE_PHASE_TOLERANCE_RAD, "{error}");
    }

    #[test]
    fn bad_parameters_are_named() {
        let bad = |p: BreathingParams| Breathing::new(p, [0; 32]).unwrap_err().param;
        assert_eq!(
            bad(BreathingParams {
                rate_per_min: 0.0,
                ..quiet()
            }),
            "rate_per_min"
        );
        assert_eq!(
            bad(BreathingParams {
                inhale_fraction: 1.0,
                ..quiet()
            }),
            "inhale_fraction"
        );
        assert_eq!(
            bad(BreathingParams {
                fidget_min_duration_s: 3.0,
                ..fidgety()
            }),
            "fidget_max_duration_s"
        );
        assert_eq!(
            bad(BreathingParams {
                present_until_s: -1.0,
                present_from_s: 0.0,
                ..quiet()
            }),
            "present_until_s"
        );
        assert_eq!(
            bad(BreathingParams {
                chest_height_m: f64::NAN,
                ..quiet()
            }),
            "chest_height_m"
        );
        // A disabled heartbeat does not need a rate.
        let no_heart = Breathing::new(
            BreathingParams {
                heart_amplitude_m: 0.0,
                heart_rate_hz: f64::NAN,
                ..quiet()
            },
            [0; 32],
        )
        .unwrap();
        assert!(no_heart.max_speed_mps().is_finite());
        assert!(no_heart.node_rate_hz(0.0124).is_finite());
    }

    #[test]
    fn standing_up_follows_the_minimum_jerk_profile() {
        // Flash & Hogan 1985: x(u) = D(10u³ − 15u⁴ + 6u⁵), peak speed 1.875·D/T at u = 1/2.
        let params = BreathingParams {
            stand_up_at_s: 4.0,
            stand_up_s: 2.0,
            standing_chest_height_m: 1.35,
            stand_up_forward_m: 0.25,
            ..quiet()
        };
        let mut model = Breathing::new(params, [5; 32]).unwrap();
        let travel = (1.35f64 - 1.1).hypot(0.25);
        let (shift, _) = model.stand_up_shift(3.9);
        assert_eq!(shift, [0.0; 3]);
        let (mid, mid_rate) = model.stand_up_shift(5.0);
        assert!((mid[2] - 0.5 * 0.25).abs() < 0.005, "{mid:?}");
        // Half way the speed is the profile's peak (the sway adds mm/s).
        let peak = 1.875 * travel / 2.0;
        assert!((crate::norm(mid_rate) - peak).abs() < 0.02 * peak);
        let (up, _) = model.stand_up_shift(6.5);
        assert!((up[2] - 0.25).abs() < 1e-12);
        // Facing +x: the chest went forward by 0.25 m (give or take the sway).
        assert!((up[0] - 0.25).abs() < 0.02, "{up:?}");
        // The motion speed: below the moving level seated and once up, above it mid-way.
        assert!(model.motion_speed_mps(2.0) < crate::MOVING_SPEED_MPS);
        assert!(model.motion_speed_mps(5.0) > 3.0 * crate::MOVING_SPEED_MPS);
        assert!(model.motion_speed_mps(8.0) < crate::MOVING_SPEED_MPS);
        // Velocities are the derivatives of the positions, within the speed bound.
        let bound = model.max_speed_mps();
        let h = 1e-5;
        for i in 0..500 {
            let t = 3.5 + i as f64 * 0.01;
            let (a, _) = model.stand_up_shift(t - h);
            let (b, _) = model.stand_up_shift(t + h);
            let (_, v) = model.stand_up_shift(t);
            for k in 0..3 {
                assert!(((b[k] - a[k]) / (2.0 * h) - v[k]).abs() < 1e-6, "{t}");
            }
            assert!(crate::norm(v) <= bound);
        }
    }
}
